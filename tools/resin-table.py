#!/usr/bin/env python3
"""Writes the invented resin table of the README's `knotpath verify` example.

usage: python3 tools/resin-table.py > resin.csv

The hardness of a cured resin against the cure temperature's excess t over
60 C (1.00 to 4.00 degrees, two decimals) and its powers t^2 .. t^9, written
as exact decimals: an ill-conditioned polynomial design on which double
precision loses the path. The rows come from integer arithmetic only (no
random generator), so every platform writes the same bytes.
"""

from fractions import Fraction


def decimal_power(hundredths: int, k: int) -> str:
    """(hundredths / 100)^k as its exact decimal text (2k decimals)."""
    digits = str(hundredths ** k).rjust(2 * k + 1, "0")
    return digits[: -2 * k] + "." + digits[-2 * k :]


def main() -> None:
    print("hardness," + ",".join(f"t{k}" for k in range(1, 10)))
    for i in range(60):
        c = 100 + (i * 37) % 301  # the excess in hundredths of a degree
        t = Fraction(c, 100)
        wobble = Fraction((i * 53) % 41 - 20, 10000)  # a small deterministic scatter
        hardness = (Fraction(715, 10) + 2 * t - Fraction(11, 10) * t**2
                    + Fraction(35, 100) * t**3 - Fraction(4, 100) * t**4 + wobble)
        print(f"{float(hardness):.4f}," + ",".join(decimal_power(c, k) for k in range(1, 10)))


if __name__ == "__main__":
    main()

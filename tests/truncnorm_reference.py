#!/usr/bin/python3
"""External reference for tests/test_adjusted_inference.cpp.

The tails of a truncated normal law and the equal-tailed confidence interval
for its mean, from SciPy's truncated normal distribution
(scipy.stats.truncnorm, Debian package python3-scipy): logcdf and logsf at
the point, and each end of the interval as the root in the mean of
logsf = log(alpha/2) (lower end) or logcdf = log(alpha/2) (upper end), by
scipy.optimize.brentq. Nothing here knows about the polyhedral lemma.

Usage: truncnorm_reference.py INPUT OUTPUT. INPUT: one case per line,
    x mean sd lower upper level
(limits may be inf / -inf). OUTPUT: one line per case,
    logcdf logsf interval_low interval_high
"""
import math
import sys

from scipy import optimize, stats


def tails(x, mean, sd, lower, upper):
    law = stats.truncnorm((lower - mean) / sd, (upper - mean) / sd, loc=mean, scale=sd)
    return float(law.logcdf(x)), float(law.logsf(x))


def end(x, sd, lower, upper, level, which):
    target = math.log((1.0 - level) / 2.0)

    def g(m):
        lc, ls = tails(x, m, sd, lower, upper)
        # increasing in m for both ends
        return (ls - target) if which == "low" else (target - lc)

    step = sd
    lo = hi = x
    while g(lo) > 0:
        lo -= step
        step *= 2
    step = sd
    while g(hi) < 0:
        hi += step
        step *= 2
    return optimize.brentq(g, lo, hi, xtol=1e-14 * max(sd, abs(lo), abs(hi)), rtol=1e-15, maxiter=500)


def main(argv):
    with open(argv[1]) as f, open(argv[2], "w") as out:
        for line in f:
            if not line.strip():
                continue
            x, mean, sd, lower, upper, level = (float(v) for v in line.split())
            lc, ls = tails(x, mean, sd, lower, upper)
            low = end(x, sd, lower, upper, level, "low")
            high = end(x, sd, lower, upper, level, "high")
            out.write("%.17g %.17g %.17g %.17g\n" % (lc, ls, low, high))


if __name__ == "__main__":
    main(sys.argv)

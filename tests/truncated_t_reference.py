#!/usr/bin/python3
"""External reference for tests/test_first_step_t.cpp.

The upper tail of a Student t law truncated to [lower, upper], from SciPy
(scipy.stats.t, Debian package python3-scipy): by its survival function
where that neither underflows nor cancels, else as the ratio of two
integrals of the density (each relative to logpdf at its left end) by
scipy.integrate.quad. Nothing
here knows about least-angle steps.

Usage: truncated_t_reference.py INPUT OUTPUT. INPUT: one case per line,
    t lower upper nu
(upper may be inf). OUTPUT: one line per case, the natural log of
P(T >= t | lower <= T <= upper).
"""
import math
import sys

from scipy import integrate, stats


def log_tail(t, lower, upper, nu):
    law = stats.t(nu)
    st, sl, su = law.sf(t), law.sf(lower), law.sf(upper)
    if sl > 1e-280 and (st - su) > 1e-3 * st and (sl - su) > 1e-3 * sl:
        return math.log(st - su) - math.log(sl - su)
    opts = dict(epsabs=0.0, epsrel=1e-13, limit=500)

    def log_integral(a, b):
        # log of the integral of the density over [a, b], relative to its value at a
        shift = law.logpdf(a)
        return shift + math.log(integrate.quad(lambda x: math.exp(law.logpdf(x) - shift), a, b, **opts)[0])

    return log_integral(t, upper) - log_integral(lower, upper)

def main(argv):
    with open(argv[1]) as f, open(argv[2], "w") as out:
        for line in f:
            if not line.strip():
                continue
            t, lower, upper, nu = (float(v) for v in line.split())
            out.write("%.17g\n" % log_tail(t, lower, upper, nu))


if __name__ == "__main__":
    main(sys.argv)

#!/usr/bin/python3
"""External reference for tests/test_qp_reference.cpp.

Solves, for each penalty lam in a list, the (elastic-net, sign-constrained)
lasso on a prepared design with a general-purpose convex QP solver: CVXOPT's
primal-dual interior-point method, cvxopt.solvers.qp (Debian package
python3-cvxopt). Nothing here knows about paths or knots.

The problem
    minimize 0.5 ||y - Z b||^2 + lam * sum_j f_j |b_j| + 0.5 * ridge * ||b||^2
    subject to b_j >= 0 (sign +1) or b_j <= 0 (sign -1)
is written as a QP in split variables b_j = b+_j - b-_j with b+_j, b-_j >= 0
(an unpenalized, unconstrained b_j stays a single free variable): with
b = T u,
    minimize 0.5 u^T (T^T H T) u + (lam c - T^T Z^T y)^T u,  H = Z^T Z + ridge I,
    c = f_j for both parts of b_j,
    subject to b+_j, b-_j >= 0, and b-_j <= 0 (sign +1) or b+_j <= 0 (sign -1).

Usage: qp_reference.py INPUT OUTPUT. INPUT (whitespace separated):
    n p ridge count
    Z (n rows of p numbers)
    y (n numbers)
    f (p numbers)
    signs (p integers: 0, +1, -1)
    penalties (count numbers)
OUTPUT: one line per penalty, "status b_1 ... b_p".
"""
import sys

import numpy as np
from cvxopt import matrix, solvers


def main(argv):
    tokens = open(argv[1]).read().split()
    pos = 0

    def take(k):
        nonlocal pos
        out = tokens[pos:pos + k]
        pos += k
        return out

    n, p = int(tokens[0]), int(tokens[1])
    ridge = float(tokens[2])
    count = int(tokens[3])
    pos = 4
    z = np.array([float(t) for t in take(n * p)]).reshape(n, p)
    y = np.array([float(t) for t in take(n)])
    f = np.array([float(t) for t in take(p)])
    signs = [int(t) for t in take(p)]
    penalties = [float(t) for t in take(count)]

    h = z.T @ z + ridge * np.eye(p)
    zy = z.T @ y
    # b = T u. A penalized coefficient is split into two nonnegative parts
    # (columns e_j and -e_j of T); an unpenalized one (f_j = 0) is a single
    # free variable, which keeps the QP's solution unique.
    columns, cost, bounded, sign_rows = [], [], [], []
    for j in range(p):
        if f[j] == 0.0 and signs[j] == 0:
            columns.append(np.eye(p)[:, j])
            cost.append(0.0)
            bounded.append(False)
            continue
        for part in (1.0, -1.0):
            columns.append(part * np.eye(p)[:, j])
            cost.append(f[j])
            bounded.append(True)
            # sign +1 forbids the negative part, sign -1 the positive part
            if signs[j] != 0 and part != signs[j]:
                sign_rows.append(len(columns) - 1)
    t = np.column_stack(columns)
    m = t.shape[1]
    cost = np.array(cost)
    big_p = t.T @ h @ t
    rows = [-np.eye(m)[i] for i in range(m) if bounded[i]]
    rows += [np.eye(m)[i] for i in sign_rows]
    g = np.vstack(rows)
    hvec = np.zeros(g.shape[0])

    solvers.options["show_progress"] = False
    solvers.options["abstol"] = 1e-12
    solvers.options["reltol"] = 1e-12
    solvers.options["feastol"] = 1e-12
    solvers.options["maxiters"] = 200
    with open(argv[2], "w") as out:
        for lam in penalties:
            q = lam * cost - t.T @ zy
            sol = solvers.qp(matrix(big_p), matrix(q), matrix(g), matrix(hvec))
            b = t @ np.array(sol["x"]).ravel()
            out.write(sol["status"].replace(" ", "_") + " " +
                      " ".join(repr(float(v)) for v in b) + "\n")


if __name__ == "__main__":
    main(sys.argv)

#!/usr/bin/env python3
"""Writes lstsq_fixture.csv: a small calibration design matrix, observations and the
least-squares solution by numpy.linalg.lstsq, with standard errors from
sigma^2 (X^T X)^-1 (numpy.linalg.inv), for the Rust test
plugins/calibration/tests/lstsq_fixture.rs.

Generated with numpy 2.4.6 (Python 3). Columns of X: offset (1), minus the crossings of
two materials (-k_a, -k_b), minus 10 log10(d). Rerun: python3 gen_lstsq_fixture.py
"""
import numpy as np

rng = np.random.default_rng(20240501)
n = 40
d = rng.uniform(3.0, 60.0, n)
ka = rng.integers(0, 4, n)
kb = rng.integers(0, 3, n)
X = np.column_stack([np.ones(n), -ka, -kb, -10.0 * np.log10(d)])
beta_true = np.array([2.5, 3.0, -1.5, 0.4])
y = X @ beta_true + rng.normal(0.0, 2.0, n)
beta, rss, rank, sv = np.linalg.lstsq(X, y, rcond=None)
dof = n - X.shape[1]
sigma2 = float(rss[0]) / dof
se = np.sqrt(np.diag(sigma2 * np.linalg.inv(X.T @ X)))

with open("lstsq_fixture.csv", "w") as f:
    f.write("# numpy %s numpy.linalg.lstsq; rows 'obs' hold x0..x3,y; 'beta' and 'se' hold the solution and its standard errors\n" % np.__version__)
    f.write("role,x0,x1,x2,x3,y\n")
    for i in range(n):
        f.write("obs," + ",".join("%.17g" % v for v in X[i]) + ",%.17g\n" % y[i])
    f.write("beta," + ",".join("%.17g" % v for v in beta) + ",\n")
    f.write("se," + ",".join("%.17g" % v for v in se) + ",\n")
    f.write("rss,%.17g,,,,\n" % float(rss[0]))

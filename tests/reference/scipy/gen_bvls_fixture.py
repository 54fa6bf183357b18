#!/usr/bin/env python3
"""Writes bvls_fixture.json: bounded linear least-squares problems and their solutions by
scipy.optimize.lsq_linear(A, b, bounds=(lb, ub), method="bvls") (scipy and numpy from PyPI;
versions are written into the fixture), for the Rust test
plugins/calibration/tests/bvls_fixture.rs.

Problems (all seeded, all float64):
- "constructed" cases: a chosen optimum x* with a chosen set of bounds active (none, one
  lower, one upper, lower and upper together, three, all). b = A x* + r with r built so that
  the Karush-Kuhn-Tucker conditions hold exactly at x*: A_F^T r = 0 on the free columns and
  a_j^T r of the right sign on the bound ones (Lawson & Hanson 1974, ch. 23; Stark & Parker
  1995). The script checks scipy's answer against x* before writing it, so each such case is
  checked twice (by construction and by scipy).
- calibration-shaped cases: columns offset (1), minus the crossings of a material (-k),
  minus 10 log10(d), Gaussian noise; one reproduces the pattern of the bounds issue (truth
  (-8.3, 7.3, -7.7), bounds [-3, 5], [-2, 4], [-2, 5]: two bounds bind and the third
  parameter ends inside its bounds, not at the bound clamping would pick).
- random cases with random bounds around the unbounded solution, scipy's answer as is.
- a parameter no row informs (a zero column), 0 inside its bounds: it stays at 0.
- one-sided bounds (null in the JSON = unbounded on that side).

Each case stores A (rows), b, lb, ub, scipy's x, its RSS = sum((A x - b)^2), scipy's
active_mask (-1 lower, 1 upper, 0 free), nit and status, and the KKT optimality.

Rerun from this folder: python3 gen_bvls_fixture.py
"""
import json

import numpy as np
import scipy
from scipy.optimize import lsq_linear

TOL = 1e-12
MAX_ITER = 1000


def solve(A, b, lb, ub):
    res = lsq_linear(A, b, bounds=(lb, ub), method="bvls", tol=TOL, max_iter=MAX_ITER)
    assert res.status > 0, res.message
    return res


def kkt_violation(A, b, x, lb, ub):
    """Largest violation of the bounded-least-squares KKT conditions, relative."""
    g = A.T @ (A @ x - b)  # gradient of 0.5 ||A x - b||^2
    scale = np.linalg.norm(A, axis=0) * max(np.linalg.norm(b), 1.0)
    v = 0.0
    for j in range(len(x)):
        if scale[j] == 0.0:
            continue  # a zero column: no row informs this parameter
        if x[j] <= lb[j]:
            v = max(v, -g[j] / scale[j])  # at lower: gradient must be >= 0
        elif x[j] >= ub[j]:
            v = max(v, g[j] / scale[j])  # at upper: gradient must be <= 0
        else:
            v = max(v, abs(g[j]) / scale[j])
    assert np.all(lb <= x) and np.all(x <= ub)
    return v


def constructed(rng, m, n, lower, upper):
    """A problem whose bounded optimum is known: `lower`/`upper` index the active bounds."""
    A = rng.normal(0.0, 1.0, (m, n))
    A[:, 0] = 1.0  # an offset column, as in calibration
    x_star = rng.uniform(-5.0, 5.0, n)
    act = list(lower) + list(upper)
    free = [j for j in range(n) if j not in act]
    noise = rng.normal(0.0, 1.5, m)
    r = noise - A @ np.linalg.lstsq(A, noise, rcond=None)[0]  # orthogonal to all columns
    if act:
        AS = A[:, act]
        if free:
            AF = A[:, free]
            QF, _ = np.linalg.qr(AF)
            PS = AS - QF @ (QF.T @ AS)  # (I - P_F) A_S
        else:
            PS = AS
        mu = np.array(
            [(-1.0 if j in lower else 1.0) * rng.uniform(5.0, 20.0) for j in act]
        )
        lam = np.linalg.solve(AS.T @ PS, mu)  # a_j^T r = mu_j for j active
        r = r + PS @ lam
    b = A @ x_star + r
    lb = x_star - rng.uniform(1.0, 4.0, n)
    ub = x_star + rng.uniform(1.0, 4.0, n)
    for j in lower:
        lb[j] = x_star[j]
    for j in upper:
        ub[j] = x_star[j]
    return A, b, lb, ub, x_star


def calibration_design(rng, m, with_distance):
    d = rng.uniform(3.0, 60.0, m)
    cols = [np.ones(m), -rng.integers(0, 4, m), -rng.integers(0, 3, m)]
    if with_distance:
        cols.append(-10.0 * np.log10(d))
    return np.column_stack(cols).astype(float)


def num(v):
    return None if not np.isfinite(v) else float(v)


def case(name, kind, A, b, lb, ub, x_star=None):
    res = solve(A, b, lb, ub)
    x = res.x
    if x_star is not None:
        dev = float(np.max(np.abs(x - x_star)))
        assert dev < 1e-8, (name, dev, x, x_star)
    kkt = kkt_violation(A, b, x, lb, ub)
    assert kkt < 1e-9, (name, kkt)
    rss = float(np.sum((A @ x - b) ** 2))
    active = [int(a) for a in res.active_mask]
    print(f"{name:28s} m={A.shape[0]:5d} n={A.shape[1]} active={active} nit={res.nit} rss={rss:.6g}")
    return {
        "name": name,
        "kind": kind,
        "a": [[float(v) for v in row] for row in A],
        "b": [float(v) for v in b],
        "lb": [num(v) for v in lb],
        "ub": [num(v) for v in ub],
        "x": [float(v) for v in x],
        "rss": rss,
        "active_mask": active,
        "nit": int(res.nit),
        "status": int(res.status),
        "kkt": kkt,
        "x_constructed": None if x_star is None else [float(v) for v in x_star],
    }


def main():
    cases = []
    rng = np.random.default_rng(20260115)
    for name, m, n, lower, upper in [
        ("constructed-none-active", 60, 4, [], []),
        ("constructed-one-lower", 40, 3, [1], []),
        ("constructed-one-upper", 120, 5, [], [3]),
        ("constructed-lower-and-upper", 80, 4, [2], [1]),
        ("constructed-three-active", 200, 6, [1, 4], [3]),
        ("constructed-all-active", 30, 2, [0], [1]),
        ("constructed-offset-at-bound", 500, 6, [0], [2, 5]),
    ]:
        A, b, lb, ub, xs = constructed(rng, m, n, lower, upper)
        cases.append(case(name, "constructed", A, b, lb, ub, xs))

    # The bounds issue's pattern: offset and two material changes.
    rng = np.random.default_rng(8)
    A = calibration_design(rng, 300, False)
    b = A @ np.array([-8.3, 7.3, -7.7]) + rng.normal(0.0, 2.0, 300)
    cases.append(
        case("issue-pattern", "calibration", A, b, np.array([-3.0, -2.0, -2.0]), np.array([5.0, 4.0, 5.0]))
    )
    # Calibration with a distance-exponent term, many rows, tight bounds.
    A = calibration_design(rng, 2000, True)
    b = A @ np.array([6.0, 4.5, -3.0, 0.8]) + rng.normal(0.0, 3.0, 2000)
    cases.append(
        case("calibration-distance-2000", "calibration", A, b,
             np.array([-2.0, -1.0, -1.0, -0.5]), np.array([2.0, 3.0, 5.0, 1.0]))
    )

    # Random problems, random bounds around the unbounded solution.
    rng = np.random.default_rng(77)
    for k in range(6):
        n = 2 + k % 5
        m = int(rng.integers(n + 5, 150))
        A = rng.normal(0.0, 1.0, (m, n)) * rng.uniform(0.2, 20.0, n)
        b = rng.normal(0.0, 10.0, m)
        xl = np.linalg.lstsq(A, b, rcond=None)[0]
        width = np.abs(xl) + 0.5
        lb = xl - rng.uniform(-0.8, 1.2, n) * width
        ub = np.maximum(lb + 0.05 * width, xl + rng.uniform(-0.8, 1.2, n) * width)
        cases.append(case(f"random-{k}", "random", A, b, lb, ub))

    # A parameter no row informs (zero column), 0 inside its bounds.
    rng = np.random.default_rng(5)
    A = calibration_design(rng, 50, False)
    A[:, 2] = 0.0
    b = A @ np.array([1.0, 6.0, 0.0]) + rng.normal(0.0, 2.0, 50)
    cases.append(case("uninformed-column", "rank-deficient", A, b,
                      np.array([-5.0, -2.0, -3.0]), np.array([5.0, 4.0, 3.0])))

    # One-sided bounds.
    rng = np.random.default_rng(6)
    A = rng.normal(0.0, 1.0, (70, 4))
    b = A @ np.array([3.0, -3.0, 1.0, 0.0]) + rng.normal(0.0, 1.0, 70)
    cases.append(case("one-sided", "random", A, b,
                      np.array([-np.inf, -1.0, -np.inf, -1.0]),
                      np.array([1.0, np.inf, np.inf, np.inf])))

    doc = {
        "source": f"scipy {scipy.__version__} scipy.optimize.lsq_linear(method='bvls', tol={TOL}, max_iter={MAX_ITER}); numpy {np.__version__}",
        "script": "tests/reference/scipy/gen_bvls_fixture.py",
        "rss": "sum((A x - b)^2) at scipy's x, numpy float64",
        "bounds": "null = unbounded on that side",
        "cases": cases,
    }
    with open("bvls_fixture.json", "w") as f:
        json.dump(doc, f, indent=None, separators=(",", ":"))
        f.write("\n")


if __name__ == "__main__":
    main()

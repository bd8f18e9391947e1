#!/usr/bin/env python3
"""Reference values for the least-squares fits of meshbound (tests/least_squares_reference.rs).

Source of the check values: scipy.optimize.least_squares (PyPI package scipy), an independent
general-purpose nonlinear least-squares solver, run with tight tolerances. The fits are those of
the project's method notes §4 (Eça & Hoekstra 2014, J. Comput. Phys. 262, 104-130; the rules are
from memory of the paper):

  free order        phi0 + alpha * h**p          (n_par = 3, p searched in the order range)
  first order       phi0 + a1 * h                (n_par = 2)
  second order      phi0 + a2 * h**2             (n_par = 2)
  first and second  phi0 + a1 * h + a2 * h**2    (n_par = 3)

each unweighted and weighted with w_i = (1/h_i) / sum_j (1/h_j); the weighted fits minimise
sum w_i r_i**2, here by scaling the residuals by sqrt(w_i).
sigma = sqrt(sum r**2 / (n - n_par)), weighted sqrt(n sum w r**2 / (n - n_par)).

The data sets below are noisy manufactured data: phi = phi0 + alpha h**p plus Gaussian noise
(seeded generator), rounded to 7 significant digits and written here as literal arrays, so the
script does not depend on any generator. They are test inputs, not measurements.

The free-order fit is started from many orders across the searched range (the default range of
meshbound's LsSettings, [-4, 8] without the band |p| < 0.05, searched as two bounded
intervals) and the lowest cost is kept; a dense scan checks that no lower minimum was missed.
The size is expressed as h / h_1 inside the solver (a reparameterisation only; alpha is
reported for h itself). The linear fits are checked against scipy.linalg.lstsq.

Run:  python3 tests/reference/least_squares_scipy.py   (writes least_squares_scipy.json)
"""
import json
import os
import sys

import numpy as np
import scipy
from scipy.linalg import lstsq
from scipy.optimize import least_squares

ORDER_MIN, ORDER_MAX, BAND = -4.0, 8.0, 0.05
TOL = dict(ftol=1e-15, xtol=1e-15, gtol=1e-15, max_nfev=100000)

# Noisy manufactured data (see the module docstring); sizes ascending, finest first.
CASES = [
    # phi = 0.91 - 0.004 h^1.7 + noise (sd 2e-5)
    ("five_meshes_order_1_7",
     [1.0, 1.3, 1.7, 2.2, 2.9],
     [0.9059958, 0.9037413, 0.9001442, 0.8946823, 0.8855637]),
    # phi = 62 + 3e5 h^2 + noise (sd 0.02), absolute sizes of order 1e-3
    ("six_meshes_small_sizes_order_2",
     [0.0012, 0.0015, 0.002, 0.0025, 0.0033, 0.0041],
     [62.42557, 62.66048, 63.20197, 63.83597, 65.26383, 67.02837]),
    # phi = 1 + 0.05 h^0.8 + noise (sd 3e-4), the fewest meshes allowed
    ("four_meshes_order_0_8",
     [1.0, 1.4, 1.9, 2.7],
     [1.050123, 1.065577, 1.083277, 1.110398]),
    # phi = -3.2 - 0.15 h^2.6 + noise (sd 4e-3)
    ("seven_meshes_order_2_6_negative",
     [0.5, 0.62, 0.8, 1.0, 1.25, 1.6, 2.0],
     [-3.230621, -3.246433, -3.282693, -3.346571, -3.467037, -3.708961, -4.1129]),
    # phi = 10 + 0.01 h^1.2 + noise (sd 0.02): scatter larger than the trend
    ("eight_meshes_heavy_scatter",
     [1.0, 1.15, 1.35, 1.6, 1.9, 2.25, 2.7, 3.2],
     [10.01392, 9.995512, 10.01913, 10.01353, 10.03872, 10.03051, 10.06031, 10.03222]),
    # phi = 5 + 0.4 h^0.3 + noise (sd 2e-3)
    ("five_meshes_order_0_3",
     [1.0, 1.5, 2.1, 3.0, 4.4],
     [5.401512, 5.452189, 5.503112, 5.552232, 5.625621]),
]


def weights(h):
    inv = 1.0 / h
    return inv / inv.sum()


def sigma(res, w, weighted, n_par):
    n = len(res)
    if weighted:
        return float(np.sqrt(n * np.sum(w * res**2) / (n - n_par)))
    return float(np.sqrt(np.sum(res**2) / (n - n_par)))


def free_projected_rss(x, y, sw, p):
    a = np.column_stack([np.ones_like(x), x**p]) * sw[:, None]
    c, *_ = lstsq(a, y * sw)
    r = (y - c[0] - c[1] * x**p) * sw
    return float(r @ r), c


def fit_free(h, y, weighted):
    w = weights(h)
    sw = np.sqrt(w) if weighted else np.ones_like(h)
    x = h / h[0]

    def resid(q):
        return (y - q[0] - q[1] * x ** q[2]) * sw

    def jac(q):
        xp = x ** q[2]
        return -np.column_stack([np.ones_like(x), xp, q[1] * xp * np.log(x)]) * sw[:, None]

    best = None
    for lo, hi in ((ORDER_MIN, -BAND), (BAND, ORDER_MAX)):
        for p0 in np.linspace(lo, hi, 40)[1:-1]:
            _, c = free_projected_rss(x, y, sw, p0)
            sol = least_squares(resid, [c[0], c[1], p0], jac=jac, method="trf",
                                bounds=([-np.inf, -np.inf, lo], [np.inf, np.inf, hi]),
                                x_scale="jac", **TOL)
            cost = float(sol.fun @ sol.fun)
            if best is None or cost < best[0]:
                best = (cost, sol.x, lo, hi)
    cost, q, lo, hi = best
    # a dense scan must not find a lower projected cost
    for lo_, hi_ in ((ORDER_MIN, -BAND), (BAND, ORDER_MAX)):
        scan = min(free_projected_rss(x, y, sw, p)[0] for p in np.linspace(lo_, hi_, 2000))
        assert cost <= scan * (1 + 1e-9) + 1e-300, (cost, scan)
    phi0, beta, p = (float(v) for v in q)
    res = y - phi0 - beta * x**p
    at_bound = min(abs(p - lo), abs(p - hi)) <= 1e-6 * max(1.0, abs(p))
    return dict(kind="free", weighted=weighted, phi0=phi0,
                coefficients=[beta / h[0] ** p], order=p,
                std_dev=sigma(res, w, weighted, 3), order_at_bound=bool(at_bound))


def fit_fixed(h, y, weighted, kind):
    w = weights(h)
    sw = np.sqrt(w) if weighted else np.ones_like(h)
    powers = {"first": [1], "second": [2], "first_second": [1, 2]}[kind]
    design = np.column_stack([np.ones_like(h)] + [h**k for k in powers])

    def resid(c):
        return (y - design @ c) * sw

    def jac(c):
        return -design * sw[:, None]

    sol = least_squares(resid, np.zeros(design.shape[1]), jac=jac, method="lm",
                        x_scale="jac", **TOL)
    c = sol.x
    # cross-check with a direct linear solve (columns scaled for conditioning)
    scale = np.abs(design).max(axis=0)
    c2, *_ = lstsq(design / scale * sw[:, None], y * sw)
    c2 = c2 / scale
    assert np.allclose(c, c2, rtol=1e-9, atol=1e-12 * np.abs(y).max()), (kind, c, c2)
    res = y - design @ c
    n_par = 1 + len(powers)
    order = {"first": 1.0, "second": 2.0, "first_second": None}[kind]
    return dict(kind=kind, weighted=weighted, phi0=float(c[0]),
                coefficients=[float(v) for v in c[1:]], order=order,
                std_dev=sigma(res, w, weighted, n_par))


def main():
    cases = []
    for name, h, phi in CASES:
        h = np.array(h, dtype=float)
        y = np.array(phi, dtype=float)
        fits = []
        for kind in ("free", "first", "second", "first_second"):
            for weighted in (False, True):
                if kind == "free":
                    fits.append(fit_free(h, y, weighted))
                else:
                    fits.append(fit_fixed(h, y, weighted, kind))
        cases.append(dict(name=name, h=h.tolist(), phi=y.tolist(), fits=fits))
    out = dict(
        source="scipy.optimize.least_squares (trf with bounds for the free order, lm for the "
               "fixed orders, analytic Jacobians), ftol = xtol = gtol = 1e-15; fits of Eca & Hoekstra 2014 "
               "(rules from memory); noisy manufactured data",
        scipy_version=scipy.__version__,
        numpy_version=np.__version__,
        order_range=[ORDER_MIN, ORDER_MAX],
        excluded_band=BAND,
        cases=cases,
    )
    path = sys.argv[1] if len(sys.argv) > 1 else os.path.join(
        os.path.dirname(os.path.abspath(__file__)), "least_squares_scipy.json")
    with open(path, "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()

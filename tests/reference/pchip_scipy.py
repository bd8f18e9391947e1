"""Reference values for meshbound's sweep interpolation, computed with scipy.

Evaluates scipy.interpolate.PchipInterpolator (values and first derivatives) and numpy.interp
(piecewise-linear) on manufactured data sets, and solves PCHIP threshold crossings with
scipy's PPoly.solve, then writes pchip_scipy.json beside this file. The data sets are literal
arrays made up for this test (monotone, with a hump, unevenly spaced, with flat segments,
with sign changes that trigger the end-point limiting). Points are stored in the order
written here (some descending or shuffled, as sweeps are recorded); scipy gets them sorted.

Every number is written as a string holding Python's shortest round-trip repr, so that the
reader gets the exact double back (a JSON number may be parsed one unit in the last place off).

Run from the crate root:  python3 tests/reference/pchip_scipy.py
"""

import json
import sys
import pathlib
import platform

import numpy as np
import scipy
from scipy.interpolate import PchipInterpolator

CASES = {
    "monotone_rising_uneven": (
        [0.0, 0.3, 0.35, 1.1, 1.2, 2.9, 3.0, 4.5],
        [0.1, 0.25, 0.31, 0.9, 1.4, 1.45, 2.8, 3.0],
    ),
    "efficiency_hump_descending": (
        [0.60, 0.50, 0.42, 0.35, 0.30, 0.26, 0.23, 0.20, 0.18, 0.16, 0.145, 0.13],
        [0.9102, 0.9104, 0.9101, 0.9106, 0.9113, 0.9121, 0.9124, 0.9110, 0.9072, 0.8985,
         0.8840, 0.8560],
    ),
    "uneven_clustered_oscillating": (
        [1e-3, 2e-3, 2.5e-3, 0.02, 0.021, 0.5, 0.9, 0.905, 2.0],
        [3.0, 2.5, 2.7, -1.0, -1.2, 4.0, 4.1, 3.9, 0.0],
    ),
    "flat_segments": (
        [0.0, 1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0],
        [1.0, 1.0, 1.0, 2.0, 2.0, 2.0, 0.5, 0.5, 3.0],
    ),
    "end_limit_three_m0": ([0.0, 1.0, 2.0], [0.0, 1.0, -4.0]),
    "end_wrong_sign": ([0.0, 1.0, 2.0], [0.0, 1.0, 7.0]),
    "both_end_rules": ([0.0, 0.5, 2.0, 2.2, 3.0], [0.0, 2.0, -3.0, -2.5, 10.0]),
    "two_points": ([0.2, 0.7], [5.0, 3.0]),
    "head_sweep_shuffled": (
        [0.22, 0.08, 0.40, 0.12, 0.30, 0.10, 0.16, 0.50, 0.09],
        [61.02, 55.10, 61.05, 60.31, 61.04, 58.90, 60.95, 61.05, 57.20],
    ),
    "large_offset": (
        [1000.0, 1000.5, 1001.7, 1002.0, 1004.0, 1004.1],
        [1.0e5, 1.00021e5, 1.00019e5, 1.00019e5, 0.99e5, 0.985e5],
    ),
}

# Breakdown readings: (case, reference rule, drop rule).
BREAKDOWNS = [
    ("efficiency_hump_descending", {"kind": "plateau", "from": 0.42},
     {"kind": "relative", "amount": 0.01}),
    ("efficiency_hump_descending", {"kind": "value", "value": 0.9103},
     {"kind": "absolute", "amount": 0.02}),
    ("head_sweep_shuffled", {"kind": "highest"}, {"kind": "relative", "amount": 0.03}),
    ("head_sweep_shuffled", {"kind": "plateau", "from": 0.3},
     {"kind": "relative", "amount": 0.01}),
]


def sorted_arrays(name):
    x, y = (np.asarray(a, dtype=float) for a in CASES[name])
    order = np.argsort(x)
    return x[order], y[order]


def queries(x, seed):
    rng = np.random.default_rng(seed)
    grid = np.linspace(x[0], x[-1], 129)
    rand = rng.uniform(x[0], x[-1], 100)
    q = np.concatenate([grid, x, rand])
    return np.clip(q, x[0], x[-1])


def exact(values):
    """Floats as round-trip strings."""
    return [repr(float(v)) for v in values]


def breakdown(name, ref, drop):
    x, y = sorted_arrays(name)
    if ref["kind"] == "plateau":
        on = y[x >= ref["from"]]
        reference = float(np.mean(on))
    elif ref["kind"] == "highest":
        reference = float(y[-1])
    else:
        reference = float(ref["value"])
    if drop["kind"] == "relative":
        threshold = reference * (1.0 - drop["amount"])
    else:
        threshold = reference - drop["amount"]
    below = [i for i in range(len(y)) if y[i] < threshold]
    i = max(below)  # first point below the threshold, scanning from high x downward
    a, b = x[i], x[i + 1]
    p = PchipInterpolator(x, y, extrapolate=False)
    roots = [r for r in p.solve(threshold, extrapolate=False) if a <= r <= b]
    if len(roots) != 1:
        raise SystemExit(f"{name}: expected one root in [{a}, {b}], got {roots}")
    return {
        "case": name,
        "reference": ref,
        "drop": drop,
        "reference_value": repr(reference),
        "threshold": repr(float(threshold)),
        "x": repr(float(roots[0])),
        "bracket": exact([a, b]),
    }


def main():
    out = {
        "generator": "tests/reference/pchip_scipy.py",
        "scipy_version": scipy.__version__,
        "numpy_version": np.__version__,
        "python_version": platform.python_version(),
        "cases": [],
        "breakdowns": [],
    }
    for seed, name in enumerate(CASES):
        x_given, y_given = CASES[name]
        x, y = sorted_arrays(name)
        p = PchipInterpolator(x, y, extrapolate=False)
        q = queries(x, 1000 + seed)
        out["cases"].append({
            "name": name,
            "x": exact(x_given),
            "y": exact(y_given),
            "queries": exact(q),
            "pchip": exact(p(q)),
            "pchip_derivative": exact(p(q, 1)),
            "linear": exact(np.interp(q, x, y)),
        })
    for name, ref, drop in BREAKDOWNS:
        out["breakdowns"].append(breakdown(name, ref, drop))
    path = (pathlib.Path(sys.argv[1]) if len(sys.argv) > 1
            else pathlib.Path(__file__).with_name("pchip_scipy.json"))
    path.write_text(json.dumps(out, indent=1) + "\n")
    print(f"wrote {path} (scipy {scipy.__version__})")


if __name__ == "__main__":
    main()

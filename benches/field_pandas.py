#!/usr/bin/env python3
"""Baseline for the field benchmark: the pointwise three-mesh estimate written the plain way,
with pandas and numpy (vectorised over all probes), for comparison with meshbound's streamed
field assessment (`benches/compare.sh`).

    python3 benches/field_pandas.py --sizes H1 H2 H3 --columns cp [--id probe] \
        --out points.csv FINE.csv MEDIUM.csv COARSE.csv
    python3 benches/field_pandas.py --agree RUST.csv PANDAS.csv --columns cp

The computation follows the published procedure (Celik et al. 2008, J. Fluids Eng. 130
078001; classes after Stern et al. 2001, J. Fluids Eng. 123 793) with meshbound's settings:
safety factor 1.25, order searched in [1e-6, 20], formal order 2 with safety factor 3 where
no observed order exists, differences below 16 ulps of the values counted as zero, and half
the range of an oscillation as the uncertainty where it exceeds the GCI.

Observed order: for equal refinement ratios p = ln|e32/e21| / ln r. For unequal ratios the
exact fit of phi0 + alpha h^p gives ln|e32/e21| = Y(p) with
Y(p) = p ln r32 + ln(1 - s r32^-p) - ln(1 - s r21^-p), s = sign(e32/e21), increasing in p;
it is solved by a vectorised Newton iteration kept inside a shrinking bracket (bisection
where a step leaves it). The rare oscillatory cases where meshbound's search finds a
second root of the absolute-value form are not reproduced (the agreement check counts them).

The per-point file has the columns of meshbound's: id, then per column c: c,
c_extrapolated, c_order, c_class, c_uncertainty (empty where a figure does not exist).
"""

import argparse
import sys
import time

import numpy as np
import pandas as pd

SAFETY = 1.25
ORDER_LO = 1e-6
ORDER_MAX = 20.0
FORMAL = 2.0
ROUNDOFF_ULPS = 16.0


def y_of_p(p, a, b, s):
    """Y(p) and dY/dp for the order equation, in forms free of overflow and cancellation."""
    if s > 0:
        ea = np.expm1(-a * p)
        eb = np.expm1(-b * p)
        y = b * p + np.log(-eb) - np.log(-ea)
        dy = b + b * (1.0 + eb) / (-eb) - a * (1.0 + ea) / (-ea)
    else:
        ea = np.exp(-a * p)
        eb = np.exp(-b * p)
        y = b * p + np.log1p(eb) - np.log1p(ea)
        dy = b - b * eb / (1.0 + eb) + a * ea / (1.0 + ea)
    return y, dy


def solve_order(y, a, b, s):
    """p with Y(p) = y for every element of y (all inside the bracket's range)."""
    lo = np.full_like(y, ORDER_LO)
    hi = np.full_like(y, ORDER_MAX)
    p = np.clip(y / b, ORDER_LO, ORDER_MAX)
    active = np.arange(y.size)
    for _ in range(100):
        if active.size == 0:
            break
        pa = p[active]
        f, dy = y_of_p(pa, a, b, s)
        f -= y[active]
        la, ha = lo[active], hi[active]
        la = np.where(f < 0, pa, la)
        ha = np.where(f > 0, pa, ha)
        nxt = pa - f / dy
        bad = ~np.isfinite(nxt) | (nxt <= la) | (nxt >= ha)
        nxt = np.where(bad, 0.5 * (la + ha), nxt)
        done = (f == 0) | (np.abs(nxt - pa) <= 4e-16 * np.abs(pa)) | (ha - la <= 4e-16 * ha)
        p[active] = np.where(f == 0, pa, nxt)
        lo[active], hi[active] = la, ha
        active = active[~done]
    return p


def estimate(phi1, phi2, phi3, h):
    """Classes, orders, extrapolated values and uncertainties for arrays of values."""
    r21, r32 = h[1] / h[0], h[2] / h[1]
    a, b = np.log(r21), np.log(r32)
    scale = np.maximum(np.maximum(np.abs(phi1), np.abs(phi2)), np.abs(phi3))
    tiny = ROUNDOFF_ULPS * np.finfo(float).eps * scale
    e21 = phi2 - phi1
    e32 = phi3 - phi2
    e21 = np.where(np.abs(e21) <= tiny, 0.0, e21)
    e32 = np.where(np.abs(e32) <= tiny, 0.0, e32)
    n = phi1.size
    cls = np.full(n, "divergent", dtype=object)
    no_change = (e21 == 0) & (e32 == 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        r = e21 / e32
        mono = (e32 != 0) & (r >= 0) & ((r == 0) | (1.0 / r > b / a))
        osc = (e32 != 0) & (r < 0) & (r > -1)
        cls[mono] = "monotonic"
        cls[osc] = "oscillatory"
        cls[no_change] = "no_change"

        p = np.full(n, np.nan)
        want = (mono | osc) & (e21 != 0)
        e = np.where(want, e32 / e21, 1.0)
        y = np.log(np.abs(e))
        for s, sel in ((1.0, want & (e > 0)), (-1.0, want & (e < 0))):
            if abs(r21 - r32) <= 1e-14 * r21:
                ps = np.abs(y[sel]) / a if s < 0 else y[sel] / a
                ok = (ps >= ORDER_LO) & (ps <= ORDER_MAX)
            else:
                ys = y[sel]
                y_lo = y_of_p(np.array([ORDER_LO]), a, b, s)[0][0]
                y_hi = y_of_p(np.array([ORDER_MAX]), a, b, s)[0][0]
                ok = (ys >= y_lo) & (ys <= y_hi)
                ps = np.full(ys.size, np.nan)
                ps[ok] = solve_order(ys[ok], a, b, s)
            idx = np.flatnonzero(sel)
            p[idx[ok]] = ps[ok]

        d = np.expm1(p * a)
        ext = phi1 - e21 / d
        u = SAFETY * np.abs(e21) / d
        half = 0.5 * (np.maximum(np.maximum(phi1, phi2), phi3) - np.minimum(np.minimum(phi1, phi2), phi3))
        u = np.where(osc & (half > u), half, u)
        fallback = 3.0 * np.maximum(np.abs(e21) / (r21**FORMAL - 1.0), np.abs(e32) / (r32**FORMAL - 1.0))
        no_order = (mono | osc) & np.isnan(p)
        u = np.where(no_order, fallback, u)
        ext = np.where(no_change, phi1, ext)
        u = np.where(no_change, 0.0, u)
        divergent = ~(mono | osc | no_change)
        ext[divergent] = np.nan
        u[divergent] = np.nan
    return cls, p, ext, u


def run(args):
    files = args.files
    if len(files) != 3:
        sys.exit("three probe files are needed, finest first")
    t0 = time.perf_counter()
    frames = [pd.read_csv(f, usecols=[args.id] + args.columns if args.id else None) for f in files]
    id_col = args.id or frames[0].columns[0]
    ids = frames[0][id_col]
    for f, df in zip(files[1:], frames[1:]):
        if len(df) != len(ids) or not (df[id_col].to_numpy() == ids.to_numpy()).all():
            sys.exit(f"{f}: the probes differ from those of {files[0]}")
    t1 = time.perf_counter()
    out = {"id": ids}
    for c in args.columns:
        phi = [df[c].to_numpy(dtype=float) for df in frames]
        cls, p, ext, u = estimate(phi[0], phi[1], phi[2], args.sizes)
        out[c] = phi[0]
        out[f"{c}_extrapolated"] = ext
        out[f"{c}_order"] = p
        out[f"{c}_class"] = cls
        out[f"{c}_uncertainty"] = u
    t2 = time.perf_counter()
    pd.DataFrame(out).to_csv(args.out, index=False)
    t3 = time.perf_counter()
    print(
        f"pandas: read {t1 - t0:.2f} s, estimate {t2 - t1:.2f} s, write {t3 - t2:.2f} s, "
        f"{len(ids)} points"
    )


def agree(args):
    """Compares two per-point files: classes exactly, orders to 1e-9 relative."""
    rust, base = args.agree
    a = pd.read_csv(rust, keep_default_na=False, dtype=str)
    b = pd.read_csv(base, keep_default_na=False, dtype=str)
    if len(a) != len(b):
        print(f"agreement: {len(a)} points against {len(b)}")
        return 1
    worst = 0
    for c in args.columns:
        same_class = (a[f"{c}_class"].to_numpy() == b[f"{c}_class"].to_numpy())
        pa = pd.to_numeric(a[f"{c}_order"].replace("", np.nan)).to_numpy(dtype=float)
        pb = pd.to_numeric(b[f"{c}_order"].replace("", np.nan)).to_numpy(dtype=float)
        both_none = np.isnan(pa) & np.isnan(pb)
        close = np.abs(pa - pb) <= 1e-9 * np.maximum(np.abs(pa), np.abs(pb))
        same_order = both_none | close
        n = len(a)
        counts = a[f"{c}_class"].value_counts().to_dict()
        print(
            f"agreement `{c}`: classes {same_class.sum()} of {n}, orders (1e-9 relative) "
            f"{same_order.sum()} of {n}; classes {counts}"
        )
        bad = np.flatnonzero(~(same_class & same_order))[:5]
        for i in bad:
            print(f"  differs at row {i + 1}: {list(a.iloc[i])} vs {list(b.iloc[i])}")
        worst = max(worst, n - int((same_class & same_order).sum()))
    return 0 if worst == 0 else 1


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("files", nargs="*", help="the three probe files, finest first")
    ap.add_argument("--sizes", nargs=3, type=float, help="mesh sizes, finest first")
    ap.add_argument("--columns", nargs="+", required=True, help="columns to estimate")
    ap.add_argument("--id", help="id column (default: the first column)")
    ap.add_argument("--out", help="per-point file to write")
    ap.add_argument("--agree", nargs=2, metavar=("RUST", "PANDAS"), help="compare two per-point files")
    args = ap.parse_args()
    if args.agree:
        sys.exit(agree(args))
    if not (args.sizes and args.out):
        ap.error("--sizes and --out are needed to run the estimate")
    run(args)


if __name__ == "__main__":
    main()

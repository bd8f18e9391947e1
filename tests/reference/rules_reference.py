#!/usr/bin/env python3
"""Independent reference values for the three-mesh uncertainty rules of meshbound.

Writes tests/reference/rules_reference.json (or the path given as the first argument): a few
dozen manufactured three-mesh cases, phi(h) = phi0 + a*h**p1 + b*h**p2, each with the observed
order and every rule's absolute uncertainty U. Only the Python standard library is used.

The observed order is solved here by bisection on the published equation of Celik et al.
(2008), J. Fluids Eng. 130(7) 078001, for same-sign differences (s = +1):
    p ln r21 = ln(eps32/eps21) + ln((r21**p - 1)/(r32**p - 1)),
independently of the Rust code. The rules (method notes sections 2, 10 and 13; all but the
first written from memory of the publications):
  celik_gci        Celik et al. (2008): U = 1.25 |eps21| / (r21**p - 1)
  roache_fs3       Roache (1998) / Oberkampf & Roy (2010) 8.6: |p - pf|/pf <= 0.1 -> Fs 1.25
                   with pf, else Fs 3 with min(max(0.5, p), pf)
  xing_stern       Xing & Stern (2010): P = p/pf, FS0 2.45, FS1 1.6, FS2 14.8, none for P >= 2
  stern_correction Stern et al. (2001): C = (r21**p - 1)/(r21**pf - 1), 9.6(1-C)^2 + 1.1 when
                   |1 - C| < 0.125, else 2|1 - C| + 1, times |delta_RE|
  two_mesh_gci     Roache (1998): U = 3 |eps21| / (r21**pf - 1)
Only monotonically converging cases with exactly one root in (0, 20] are kept, and cases
within 1e-6 of a rule's branch boundary are left out, so that the branch is not decided by
round-off.
"""
import json
import math
import os
import random
import sys

ORDER_LO, ORDER_HI = 1e-6, 20.0


def residual(p, r21, r32, ratio):
    """p ln r21 - ln(eps32/eps21) - q(p), q = ln((r21^p - 1)/(r32^p - 1)) (0 when r21 = r32)."""
    q = 0.0 if r21 == r32 else math.log((r21 ** p - 1.0) / (r32 ** p - 1.0))
    return p * math.log(r21) - math.log(ratio) - q


def observed_order(r21, r32, eps21, eps32):
    """Every sign change of the residual on a fine grid, each refined by bisection to the last
    bit. Returns the root when there is exactly one, else None."""
    ratio = eps32 / eps21
    if not ratio > 0.0:
        return None
    n = 4000
    grid = [ORDER_LO + (ORDER_HI - ORDER_LO) * k / n for k in range(n + 1)]
    vals = [residual(p, r21, r32, ratio) for p in grid]
    roots = []
    for k in range(n):
        fa, fb = vals[k], vals[k + 1]
        if fa == 0.0:
            roots.append(grid[k])
        elif (fa < 0.0) != (fb < 0.0) and fb != 0.0:
            a, b = grid[k], grid[k + 1]
            while True:
                m = 0.5 * (a + b)
                if m <= a or m >= b:
                    break
                fm = residual(m, r21, r32, ratio)
                if fm == 0.0:
                    a = b = m
                    break
                if (fm < 0.0) == (fa < 0.0):
                    a, fa = m, fm
                else:
                    b = m
            roots.append(0.5 * (a + b))
    return roots[0] if len(roots) == 1 else None


def rules(h, phi, pf):
    r21, r32 = h[1] / h[0], h[2] / h[1]
    e21, e32 = phi[1] - phi[0], phi[2] - phi[1]
    p = observed_order(r21, r32, e21, e32)
    if p is None:
        # Shrinking differences (0 < R < 1) that no power law with p > 0 fits: Roache's
        # fallback, the formal order with Fs = 3 on the larger pair difference, for every rule
        # that has one (Xing & Stern has none).
        if not (e32 != 0.0 and 0.0 < e21 / e32 < 1.0):
            return None
        fb = 3.0 * max(abs(e21) / (r21 ** pf - 1.0), abs(e32) / (r32 ** pf - 1.0))
        return None, {"celik_gci": fb, "roache_fs3": fb, "xing_stern": None,
                      "stern_correction": fb, "two_mesh_gci": 3.0 * abs(e21) / (r21 ** pf - 1.0)}
    delta = abs(e21) / (r21 ** p - 1.0)
    out = {"celik_gci": 1.25 * delta}
    # Roache / Oberkampf & Roy
    band = abs(p - pf) / pf
    if abs(band - 0.1) < 1e-6:
        return None
    if band <= 0.1:
        out["roache_fs3"] = 1.25 * abs(e21) / (r21 ** pf - 1.0)
    else:
        q = min(max(0.5, p), pf)
        out["roache_fs3"] = 3.0 * abs(e21) / (r21 ** q - 1.0)
    # Xing & Stern
    big_p = p / pf
    if abs(big_p - 1.0) < 1e-6 or abs(big_p - 2.0) < 1e-6:
        return None
    if 0.0 < big_p <= 1.0:
        out["xing_stern"] = (1.6 * big_p + 2.45 * (1.0 - big_p)) * delta
    elif 1.0 < big_p < 2.0:
        out["xing_stern"] = (1.6 * big_p + 14.8 * (big_p - 1.0)) * delta
    else:
        out["xing_stern"] = None
    # Stern et al.
    c = (r21 ** p - 1.0) / (r21 ** pf - 1.0)
    d = abs(1.0 - c)
    if abs(d - 0.125) < 1e-6:
        return None
    fs = 9.6 * (1.0 - c) ** 2 + 1.1 if d < 0.125 else 2.0 * d + 1.0
    out["stern_correction"] = fs * delta
    out["two_mesh_gci"] = 3.0 * abs(e21) / (r21 ** pf - 1.0)
    return p, out


def main():
    here = os.path.dirname(os.path.abspath(__file__))
    path = sys.argv[1] if len(sys.argv) > 1 else os.path.join(here, "rules_reference.json")
    rng = random.Random(20261202)
    cases = []
    # Single power laws (exact order p) and two-term data, formal orders 1 and 2.
    plans = []
    for pf in (1.0, 2.0):
        for p in (0.4, 0.8, 1.0, 1.3, 1.9, 2.0, 2.1, 2.6, 3.5, 4.5):
            plans.append(("power", pf, p, None))
    for pf, p2 in ((1.0, 2.0), (2.0, 3.0)):
        for _ in range(14):
            plans.append(("two_term", pf, pf, p2))
    for kind, pf, p1, p2 in plans:
        for _attempt in range(100):
            h1 = rng.uniform(0.05, 0.5)
            r21, r32 = rng.uniform(1.3, 2.0), rng.uniform(1.3, 2.0)
            a = rng.choice((-1.0, 1.0)) * rng.uniform(0.05, 1.0)
            b = rng.uniform(-1.0, 1.0) if p2 is not None else 0.0
            phi0 = rng.uniform(-2.0, 2.0)
            h = [h1, h1 * r21, h1 * r21 * r32]
            phi = [phi0 + a * x ** p1 + (b * x ** p2 if p2 is not None else 0.0) for x in h]
            e21, e32 = phi[1] - phi[0], phi[2] - phi[1]
            # monotonic convergence (Stern et al. 2001: 0 < R < 1), not near round-off
            if not (e32 != 0.0 and 0.0 < e21 / e32 < 1.0) or abs(e21) < 1e-8:
                continue
            if abs(phi[0]) < 1e-3:
                continue
            res = rules(h, phi, pf)
            if res is None:
                continue
            p, us = res
            cases.append({
                "name": f"{kind}_pf{pf:g}_p{p1:g}" + (f"_{p2:g}" if p2 else "") + f"_{len(cases)}",
                "h": h,
                "phi": phi,
                "formal_order": pf,
                "observed_order": p,
                "uncertainty": us,
            })
            break
    # Shrinking differences that no power law with p > 0 fits (unequal ratios, r32 > r21 and
    # 1 < eps32/eps21 < ln r32 / ln r21): every rule's fallback.
    for pf in (1.0, 2.0):
        for _ in range(3):
            h1 = rng.uniform(0.05, 0.5)
            r21, r32 = rng.uniform(1.3, 1.4), rng.uniform(1.8, 2.0)
            k = rng.uniform(1.05, 0.95 * math.log(r32) / math.log(r21))
            d = rng.choice((-1.0, 1.0)) * rng.uniform(0.01, 0.1)
            phi0 = rng.uniform(0.5, 2.0)
            h = [h1, h1 * r21, h1 * r21 * r32]
            phi = [phi0, phi0 + d, phi0 + d + k * d]
            p, us = rules(h, phi, pf)
            cases.append({
                "name": f"no_order_pf{pf:g}_{len(cases)}",
                "h": h,
                "phi": phi,
                "formal_order": pf,
                "observed_order": p,
                "uncertainty": us,
            })
    doc = {
        "written_by": "tests/reference/rules_reference.py (Python standard library, "
        + f"Python {sys.version.split()[0]})",
        "order_range": [ORDER_LO, ORDER_HI],
        "cases": cases,
    }
    with open(path, "w", encoding="utf-8") as f:
        json.dump(doc, f, indent=1)
        f.write("\n")
    print(f"wrote {len(cases)} cases to {path}")


if __name__ == "__main__":
    main()

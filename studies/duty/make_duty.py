"""Writes the invented sweeps of studies/pump-duty-curves.yaml (demo data, no measurement).

An invented end-suction pump model: at each of three flows the cavitation number sigma is
lowered step by step at fixed flow and speed on three meshes, and head and efficiency are
recorded. The curves are smooth made-up shapes (a non-cavitating value times one minus an
exponential drop), with mesh errors proportional to h^2 (h relative to the finest mesh), so
that the three-mesh estimates have something to find. Run: python3 studies/duty/make_duty.py
"""

import math
import os

HERE = os.path.dirname(os.path.abspath(__file__))
MESHES = {"M1": 1.0, "M2": 1.32, "M3": 1.75}  # relative sizes h (demo)
FLOWS = {"q085": 0.085, "q100": 0.100, "q115": 0.115}  # m3/s (demo)


def curves(q, h):
    head_nc = (34.0 - 600.0 * q * q) * (1.0 - 0.004 * h * h)
    eta_nc = (0.86 - 12.0 * (q - 0.1) ** 2) * (1.0 - 0.003 * h * h)
    sigma0 = (0.05 + 0.8 * (q - 0.1) + 4.0 * (q - 0.1) ** 2) * (1.0 + 0.04 * h * h)
    width = 0.012
    sig = []
    s = 0.30
    while s > sigma0 + 0.004:
        sig.append(round(s, 4))
        s -= 0.02 if s > sigma0 + 0.06 else 0.005
    rows = []
    for s in sig:
        drop_h = 0.45 * math.exp(-(s - sigma0) / width)
        drop_e = 0.50 * math.exp(-(s - sigma0 - 0.01) / width)
        rows.append((s, head_nc * (1.0 - drop_h), eta_nc * (1.0 - drop_e)))
    return rows


def main():
    for tag, q in FLOWS.items():
        for mesh, h in MESHES.items():
            path = os.path.join(HERE, f"{tag}_{mesh}.csv")
            with open(path, "w", encoding="utf-8") as f:
                f.write(f"# invented demo sweep: flow {q} m3/s, mesh {mesh}\n")
                f.write("sigma,head [m],efficiency\n")
                for s, hd, e in curves(q, h):
                    f.write(f"{s:.4f},{hd:.4f},{e:.5f}\n")


if __name__ == "__main__":
    main()

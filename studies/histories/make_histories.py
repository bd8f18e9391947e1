#!/usr/bin/env python3
"""Writes the demo monitor histories of studies/pump-turbine-histories.yaml (invented
scenario and numbers, fixed seed): per mesh, one monitor file in the layout a solver's
function objects write (`#` comment lines, the last one naming the columns, whitespace
columns), holding the iterations of a cavitation sweep run point after point at fixed flow and
speed: the operating point `sigma` held for a number of iterations, then lowered. Each point's
efficiency and head relax from the previous point's values towards the values of the demo
sweep files (studies/sweeps/L*.csv) with an exponential start-up, plus AR(1) noise, as a
monitor of a steady solver that does not settle fully would show.

Also writes one design-point history per mesh (efficiency of a steady run at σ = 0.4) for the
study's scalar quantity.

Standard library only: python3 studies/histories/make_histories.py
"""
import csv
import math
import os
import random

HERE = os.path.dirname(os.path.abspath(__file__))
SWEEPS = os.path.join(HERE, "..", "sweeps")
ITERATIONS_PER_POINT = 400
TAU = 40.0  # start-up time constant, iterations
PHI = 0.8  # AR(1) coefficient of the noise
NOISE = {"efficiency": 4e-4, "head": 0.03}  # innovation standard deviations


def read_sweep(mesh):
    with open(os.path.join(SWEEPS, f"{mesh}.csv"), newline="") as f:
        rows = [r for r in csv.reader(l for l in f if not l.startswith("#"))]
    head = rows[0]
    return [dict(zip(head, map(float, r))) for r in rows[1:]]


def write_sweep_history(mesh, rng):
    points = read_sweep(mesh)
    folder = os.path.join(HERE, mesh, "postProcessing", "pumpMonitor", "0")
    os.makedirs(folder, exist_ok=True)
    path = os.path.join(folder, "surfaceFieldValue.dat")
    it = 0
    state = {k: points[0][k] * (0.97 if k == "efficiency" else 0.95) for k in NOISE}
    noise = {k: 0.0 for k in NOISE}
    with open(path, "w") as f:
        f.write(f"# Pump monitor of mesh {mesh}: demo data (invented), cavitation sweep\n")
        f.write("# Region type : patch outlet\n")
        f.write("# Iteration\tsigma\tefficiency\thead\n")
        for p in points:
            start = dict(state)
            for k in range(ITERATIONS_PER_POINT):
                it += 1
                decay = math.exp(-k / TAU)
                row = [f"{it}", f"{p['sigma']:.6g}"]
                for q in ("efficiency", "head"):
                    noise[q] = PHI * noise[q] + rng.gauss(0.0, NOISE[q])
                    v = p[q] + (start[q] - p[q]) * decay + noise[q]
                    state[q] = p[q] + (start[q] - p[q]) * decay
                    row.append(f"{v:.8g}")
                f.write("\t".join(row) + "\n")


def write_design_history(mesh, value, rng):
    folder = os.path.join(HERE, mesh, "postProcessing", "efficiencyMonitor", "0")
    os.makedirs(folder, exist_ok=True)
    path = os.path.join(folder, "volFieldValue.dat")
    noise = 0.0
    with open(path, "w") as f:
        f.write(f"# Efficiency monitor of mesh {mesh}: demo data (invented), design point\n")
        f.write("# Time\tefficiency\n")
        for it in range(1, 3001):
            noise = PHI * noise + rng.gauss(0.0, 2e-5)
            v = value - 0.05 * math.exp(-it / 150.0) + noise
            f.write(f"{it}\t{v:.8g}\n")


def main():
    rng = random.Random(20261202)
    design = {"L1": 0.9093, "L2": 0.9071, "L3": 0.9033}
    for mesh in ("L1", "L2", "L3"):
        write_sweep_history(mesh, rng)
        write_design_history(mesh, design[mesh], rng)
    print("wrote the histories of L1, L2, L3 under", HERE)


if __name__ == "__main__":
    main()

#!/usr/bin/env python3
"""Writes the three probe files of the demo study ``studies/runner-blade-field.yaml``.

Invented demo data (no measured or published values): the pressure coefficient ``cp`` and the
wall shear ``wall_shear`` at 1500 probes along the suction side of a model runner blade, on
three meshes of relative sizes 1, 1.33 and 1.77 (``blade-L1.csv`` finest). The mesh dependence
is a manufactured power law (order about 1.9 for cp, 2.1 for the wall shear) with a small
oscillating disturbance near the leading edge, so that most probes converge monotonically and
a few do not.

Fixed parameters and seed: running ``python3 studies/probes/make_probes.py`` (from anywhere)
rewrites the committed files byte for byte. Uses only the Python standard library.
"""

import math
import os
import random

HERE = os.path.dirname(os.path.abspath(__file__))

# Relative mesh sizes, finest first.
SIZES = {"L1": 1.0, "L2": 1.33, "L3": 1.77}
# Probes along the chord, from the leading edge (x = 0) to the trailing edge (x = 1).
PROBES = 1500
# Seed of the generator (kept for the byte-for-byte reproduction, though no draw is made).
SEED = 7


def main():
    random.seed(SEED)
    n = PROBES
    for name, h in SIZES.items():
        path = os.path.join(HERE, f"blade-{name}.csv")
        with open(path, "w", newline="\n") as f:
            f.write("probe,chord,cp,wall_shear\n")
            for i in range(n):
                x = i / (n - 1)
                # Mesh-independent part of cp, and the amplitude of its mesh dependence (larger
                # near the leading edge).
                cp0 = 1.0 - 4.2 * x * (1 - x) + 0.3 * math.sin(6 * x)
                a = -0.012 * (1 + 2 * math.exp(-x / 0.05))
                # A disturbance over the first 8 % of the chord that changes with the mesh.
                noise = 0.0008 * math.sin(97 * x + 3 * h) * (x < 0.08)
                cp = cp0 + a * h**1.9 + noise
                tw = 2.1 + 0.8 * x + 0.05 * h**2.1 * (1 - x) + 0.004 * math.cos(53 * x * h)
                f.write(f"p{i:05d},{x:.6f},{cp:.6f},{tw:.5f}\n")


if __name__ == "__main__":
    main()

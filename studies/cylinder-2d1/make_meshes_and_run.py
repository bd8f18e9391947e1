#!/usr/bin/env python3
"""Makes the four meshes of the cylinder study and runs the solver on each.

Published benchmark, run by us: steady case 2D-1 of Schaefer & Turek (1996), "Benchmark
computations of laminar flow around a cylinder" (Re = 20). The geometry below is written from
memory: channel 2.2 m x 0.41 m, cylinder of diameter 0.1 m centred at (0.2, 0.2).

For every level the script
  1. copies ``case/`` (0/, constant/, system/) to ``run/<level>/`` beside this file,
  2. writes ``system/blockMeshDict`` for the level (also kept as ``<level>/system/blockMeshDict``),
  3. runs blockMesh, checkMesh and simpleFoam on one core (logs in ``run/<level>/log.*``),
  4. copies the solver's own output files, unchanged, to ``<level>/postProcessing/...``
     and writes ``<level>/run-info.txt`` (cell count, iterations, wall time of simpleFoam) and
     ``<level>/log.checkMesh``.

Mesh family: five blocks. A square box [0, 0.4] x [0, 0.41] around the cylinder is split into
four O-grid blocks (cylinder quarter arcs to the box sides), and one channel block runs from
x = 0.4 to the outlet. A level of multiplier m has 2m cells along each quarter of the cylinder
(and along each box side), 2m cells radially, and 6m cells along the channel block; the
multipliers 8, 12, 18, 27 give a constant refinement ratio of 1.5 in every direction. The
gradings are total expansion ratios that stay the same on every level, so all levels are
samples of one mapping and the family is systematic.

Usage: python3 make_meshes_and_run.py [--levels L4,L3] [--mesh-only]
Needs the executables blockMesh, checkMesh and simpleFoam of the Debian package `openfoam` on the
PATH (run here with its version 1912).
"""

import argparse
import math
import os
import re
import shutil
import subprocess
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))
CASE = os.path.join(HERE, "case")
RUN = os.path.join(HERE, "run")

# Level name -> multiplier m (finest first in names: L1 finest, L4 coarsest).
LEVELS = {"L4": 8, "L3": 12, "L2": 18, "L1": 27}

# Geometry of case 2D-1 (from memory), in metres.
LENGTH = 2.2
HEIGHT = 0.41
XC, YC = 0.2, 0.2
RADIUS = 0.05
# Downstream side of the O-grid box; the box spans the full channel height.
XBOX = 0.4
# One cell in z.
DEPTH = 0.01

# Total expansion ratios (last cell / first cell along the block direction), the same on every
# level. Radial: from the box side (first) to the cylinder (last), cells twenty times smaller at
# the cylinder (a fine wall spacing keeps small the first-order part of the wall pressure that a
# zero-gradient pressure condition leaves). Channel block: from x = 0.4 (first) to the outlet
# (last).
RADIAL_RATIO = 0.05
CHANNEL_RATIO = 4.0


def cells(m):
    """Cell counts (tangential per quarter, radial, channel block, total) of multiplier m."""
    nt, nr, nx = 2 * m, 2 * m, 6 * m
    return nt, nr, nx, 4 * nt * nr + nx * nt


def block_mesh_dict(m):
    nt, nr, nx, _ = cells(m)
    s = RADIUS / math.sqrt(2.0)
    pts2d = [
        (0.0, 0.0),  # 0 box corner, lower inlet
        (XBOX, 0.0),  # 1
        (XBOX, HEIGHT),  # 2
        (0.0, HEIGHT),  # 3 box corner, upper inlet
        (XC - s, YC - s),  # 4 cylinder at 225 degrees
        (XC + s, YC - s),  # 5 cylinder at 315 degrees
        (XC + s, YC + s),  # 6 cylinder at 45 degrees
        (XC - s, YC + s),  # 7 cylinder at 135 degrees
        (LENGTH, 0.0),  # 8 outlet, bottom
        (LENGTH, HEIGHT),  # 9 outlet, top
    ]
    n = len(pts2d)
    verts = [(x, y, 0.0) for x, y in pts2d] + [(x, y, DEPTH) for x, y in pts2d]

    def hexa(a, b, c, d):
        return (a, b, c, d, a + n, b + n, c + n, d + n)

    # O-grid blocks: first direction along the box side (tangential), second from the box side
    # to the cylinder (radial); all right-handed about +z.
    oblocks = [hexa(0, 1, 5, 4), hexa(1, 2, 6, 5), hexa(2, 3, 7, 6), hexa(3, 0, 4, 7)]
    channel = hexa(1, 8, 9, 2)

    # Midpoints of the cylinder arcs: bottom, right, top, left.
    arcs = [
        (4, 5, (XC, YC - RADIUS)),
        (5, 6, (XC + RADIUS, YC)),
        (6, 7, (XC, YC + RADIUS)),
        (7, 4, (XC - RADIUS, YC)),
    ]

    def fmt(v):
        return "(" + " ".join(repr(float(c)) for c in v) + ")"

    def ilist(v):
        return "(" + " ".join(str(i) for i in v) + ")"

    out = []
    out.append("FoamFile\n{\n    version     2.0;\n    format      ascii;\n")
    out.append("    class       dictionary;\n    object      blockMeshDict;\n}\n\n")
    out.append(f"// Written by make_meshes_and_run.py, multiplier m = {m}: {nt} cells per cylinder\n")
    out.append(f"// quarter, {nr} radial, {nx} along the channel block.\n\n")
    out.append("convertToMeters 1;\n\nvertices\n(\n")
    for i, v in enumerate(verts):
        out.append(f"    {fmt(v)} // {i}\n")
    out.append(");\n\nblocks\n(\n")
    for b in oblocks:
        out.append(f"    hex {ilist(b)} ({nt} {nr} 1) simpleGrading (1 {RADIAL_RATIO!r} 1)\n")
    out.append(f"    hex {ilist(channel)} ({nx} {nt} 1) simpleGrading ({CHANNEL_RATIO!r} 1 1)\n")
    out.append(");\n\nedges\n(\n")
    for a, b, (x, y) in arcs:
        out.append(f"    arc {a} {b} {fmt((x, y, 0.0))}\n")
        out.append(f"    arc {a + n} {b + n} {fmt((x, y, DEPTH))}\n")
    out.append(");\n\n")

    # Boundary faces, each ordered so that its normal points out of the fluid.
    patches = {
        "inlet": ("patch", [(0, 10, 13, 3)]),
        "outlet": ("patch", [(8, 9, 19, 18)]),
        "walls": ("wall", [(0, 1, 11, 10), (1, 8, 18, 11), (2, 3, 13, 12), (9, 2, 12, 19)]),
        "cylinder": ("wall", [(5, 4, 14, 15), (6, 5, 15, 16), (7, 6, 16, 17), (4, 7, 17, 14)]),
    }
    front_back = []
    for b in oblocks + [channel]:
        a0, a1, a2, a3 = b[:4]
        front_back.append((a0, a3, a2, a1))
        front_back.append(tuple(i + n for i in b[:4]))
    patches["frontAndBack"] = ("empty", front_back)

    out.append("boundary\n(\n")
    for name, (ptype, faces) in patches.items():
        out.append(f"    {name}\n    {{\n        type {ptype};\n        faces\n        (\n")
        for f in faces:
            out.append(f"            {ilist(f)}\n")
        out.append("        );\n    }\n")
    out.append(");\n\nmergePatchPairs\n(\n);\n")
    return "".join(out)


def run(cmd, cwd, log):
    env = dict(os.environ)
    # The Debian packages install the executables in /usr/bin and the etc/ files here; they
    # find them only through WM_PROJECT_DIR.
    if "WM_PROJECT_DIR" not in env and os.path.isdir("/usr/share/openfoam/etc"):
        env["WM_PROJECT_DIR"] = "/usr/share/openfoam"
    env["PWD"] = cwd
    with open(os.path.join(cwd, log), "w") as f:
        t0 = time.monotonic()
        rc = subprocess.call(cmd, cwd=cwd, stdout=f, stderr=subprocess.STDOUT, env=env)
        wall = time.monotonic() - t0
    if rc != 0:
        sys.exit(f"{cmd[0]} failed in {cwd} (exit {rc}); see {log}")
    return wall


def copy_outputs(level, work):
    dest = os.path.join(HERE, level)
    if os.path.isdir(os.path.join(dest, "postProcessing")):
        shutil.rmtree(os.path.join(dest, "postProcessing"))
    src = os.path.join(work, "postProcessing")
    copied = []
    for root, _dirs, files in os.walk(src):
        for name in sorted(files):
            rel = os.path.relpath(os.path.join(root, name), work)
            os.makedirs(os.path.join(dest, os.path.dirname(rel)), exist_ok=True)
            shutil.copy2(os.path.join(work, rel), os.path.join(dest, rel))
            copied.append(rel)
    shutil.copy2(os.path.join(work, "log.checkMesh"), os.path.join(dest, "log.checkMesh"))
    return sorted(copied)


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--levels", default=",".join(LEVELS), help="comma-separated level names")
    ap.add_argument("--mesh-only", action="store_true", help="stop after checkMesh")
    args = ap.parse_args()
    for level in args.levels.split(","):
        m = LEVELS[level]
        nt, nr, nx, total = cells(m)
        work = os.path.join(RUN, level)
        if os.path.isdir(work):
            shutil.rmtree(work)
        shutil.copytree(CASE, work)
        bmd = block_mesh_dict(m)
        with open(os.path.join(work, "system", "blockMeshDict"), "w") as f:
            f.write(bmd)
        os.makedirs(os.path.join(HERE, level, "system"), exist_ok=True)
        with open(os.path.join(HERE, level, "system", "blockMeshDict"), "w") as f:
            f.write(bmd)
        run(["blockMesh"], work, "log.blockMesh")
        run(["checkMesh"], work, "log.checkMesh")
        with open(os.path.join(work, "log.checkMesh")) as f:
            if "Mesh OK." not in f.read():
                sys.exit(f"checkMesh did not report 'Mesh OK.' for {level}")
        if args.mesh_only:
            print(f"{level}: m={m} cells={total} (mesh only)")
            continue
        wall = run(["simpleFoam"], work, "log.simpleFoam")
        with open(os.path.join(work, "log.simpleFoam")) as f:
            log = f.read()
        times = re.findall(r"^Time = (\d+)$", log, flags=re.M)
        iters = int(times[-1]) if times else 0
        converged = "SIMPLE solution converged in" in log
        copied = copy_outputs(level, work)
        with open(os.path.join(HERE, level, "run-info.txt"), "w") as f:
            f.write(f"level: {level}\n")
            f.write(f"multiplier: {m}\n")
            f.write(f"cells_per_cylinder_quarter: {nt}\n")
            f.write(f"cells_radial: {nr}\n")
            f.write(f"cells_channel_block: {nx}\n")
            f.write(f"cells_total: {total}\n")
            f.write(f"iterations: {iters}\n")
            f.write(f"residual_target_met: {'yes' if converged else 'no'}\n")
            f.write(f"simpleFoam_wall_seconds_1_core: {wall:.1f}\n")
            for rel in copied:
                f.write(f"output_file: {rel}\n")
        print(f"{level}: m={m} cells={total} iterations={iters} converged={converged} "
              f"wall={wall:.1f}s")


if __name__ == "__main__":
    main()

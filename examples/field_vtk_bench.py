"""Writes a large field study on meshes that share no points, for timing `meshbound assess`.

Manufactured data (no measurement): on the unit square, mesh k is a jittered n_k x n_k grid of
points split into triangles, with the field
    phi(x, y; h) = f(x, y) + alpha(x, y) * h**2,
    f = sin(2 pi x) cos(pi y),  alpha = 1 + x * y,
written as `.vtu` (binary, by meshio) with a point array `p` and a vector `U`.
The finest mesh has n_1**2 points (1 000 000 by default); each coarser one has its spacing
1.25 times larger. Then a study file `study.yaml` names them.

    python3 -m pip install numpy meshio
    python3 examples/field_vtk_bench.py --out /tmp/mb-field-bench --n 1000 --meshes 4
    /usr/bin/time -v target/release/meshbound assess /tmp/mb-field-bench/study.yaml
"""

import argparse
import os

import meshio
import numpy as np


def mesh(n, seed):
    rng = np.random.default_rng(seed)
    h = 1.0 / (n - 1)
    g = np.linspace(0.0, 1.0, n)
    x, y = np.meshgrid(g, g, indexing="ij")
    x = x.ravel().copy()
    y = y.ravel().copy()
    inner = (x > 0) & (x < 1) & (y > 0) & (y < 1)
    x[inner] += rng.uniform(-0.2, 0.2, inner.sum()) * h
    y[inner] += rng.uniform(-0.2, 0.2, inner.sum()) * h
    idx = np.arange(n * n).reshape(n, n)
    a = idx[:-1, :-1].ravel()
    b = idx[1:, :-1].ravel()
    c = idx[1:, 1:].ravel()
    d = idx[:-1, 1:].ravel()
    tri = np.concatenate([np.stack([a, b, c], 1), np.stack([a, c, d], 1)])
    return h, x, y, tri


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--out", default="/tmp/mb-field-bench")
    ap.add_argument("--n", type=int, default=1000)
    ap.add_argument("--meshes", type=int, default=4)
    ap.add_argument("--ratio", type=float, default=1.25)
    a = ap.parse_args()
    os.makedirs(os.path.join(a.out, "out"), exist_ok=True)
    names = []
    sizes = []
    for k in range(a.meshes):
        n = int(round((a.n - 1) / a.ratio**k)) + 1
        h, x, y, tri = mesh(n, 100 + k)
        f = np.sin(2 * np.pi * x) * np.cos(np.pi * y)
        alpha = 1.0 + x * y
        p = f + alpha * h**2 * 5000.0
        u = np.stack([p, -p * 0.5, np.zeros_like(p)], 1)
        pts = np.stack([x, y, np.zeros_like(x)], 1)
        name = f"L{k + 1}"
        meshio.write(
            os.path.join(a.out, f"{name}.vtu"),
            meshio.Mesh(pts, [("triangle", tri)], point_data={"p": p, "U": u}),
            binary=True,
        )
        names.append(name)
        sizes.append(h)
        print(f"{name}: {n * n} points, h = {h:.6g}")
    with open(os.path.join(a.out, "study.yaml"), "w", encoding="utf-8") as fh:
        fh.write("# manufactured field (examples/field_vtk_bench.py), for timing only\n")
        fh.write("format: 1\ntitle: Field timing on meshes that share no points\n")
        fh.write("dimension: 2\ndomain: general\nmeshes:\n")
        for name, h in zip(names, sizes):
            fh.write(f"  - {{name: {name}, size: {h!r}}}\n")
        fh.write("fields:\n  section:\n    columns: [p]\n    data: {")
        fh.write(", ".join(f"{n}: {n}.vtu" for n in names))
        fh.write("}\n    write: out/section.vtu\n")


if __name__ == "__main__":
    main()

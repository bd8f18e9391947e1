#!/usr/bin/env python3
"""Writes the four VTK files of the demo study ``studies/blade-section-vtk.yaml``.

Invented demo data (no measured or published values): a mid-span blade-to-blade section of a
model pump-turbine runner, flattened to the rectangle 0 <= x <= 1 (chord), 0 <= y <= 0.6
(pitch), meshed four times with triangles whose points do not coincide between meshes (a grid
of 40 x 24 cells and three coarser ones at ratio 1.3, interior points moved at random by up to
0.3 of a cell). Each mesh holds, as point data, the pressure coefficient ``cp`` and the
relative velocity ``W`` (a vector, z = 0), made from a manufactured power law in the mesh size
h (relative to the finest cell, 1/40):

    cp = 0.8 cos(pi x) exp(-2 y) - 0.3 x + 40 (1 + 0.5 sin(2 pi y)) (h/40)^1.9
    W  = (1 + 0.4 sin(pi x) y, 0.2 cos(pi x), 0) + 25 (1 + x) (h/40)^2.1 (1, 0, 0)

so that least squares recovers orders near 1.9 and 2.1 at most points. Meshes 1, 2 and 4 are
written as .vtu, mesh 3 as legacy .vtk. Needs numpy and meshio
(``python3 -m pip install numpy meshio``); running ``python3 studies/vtk/make_section.py``
rewrites the files with the same numbers (seed 11).
"""

import os

import meshio
import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
RATIO = 1.3
NX, NY = 40, 24


def mesh(nx, ny, rng):
    gx = np.linspace(0.0, 1.0, nx + 1)
    gy = np.linspace(0.0, 0.6, ny + 1)
    x, y = np.meshgrid(gx, gy)
    x = x.ravel()
    y = y.ravel()
    inner = (x > 0) & (x < 1) & (y > 0) & (y < 0.6)
    x[inner] += rng.uniform(-0.3, 0.3, inner.sum()) / nx
    y[inner] += rng.uniform(-0.3, 0.3, inner.sum()) * 0.6 / ny
    i, j = np.meshgrid(np.arange(nx), np.arange(ny))
    a = (j * (nx + 1) + i).ravel()
    tri = np.concatenate(
        [
            np.column_stack([a, a + 1, a + nx + 2]),
            np.column_stack([a, a + nx + 2, a + nx + 1]),
        ]
    )
    return np.column_stack([x, y, np.zeros_like(x)]), tri


def main():
    rng = np.random.default_rng(11)
    for k in range(4):
        rel = RATIO**k
        nx = round(NX / rel)
        ny = round(NY / rel)
        pts, tri = mesh(nx, ny, rng)
        x, y = pts[:, 0], pts[:, 1]
        h = rel / NX
        cp = (
            0.8 * np.cos(np.pi * x) * np.exp(-2.0 * y)
            - 0.3 * x
            + 40.0 * (1.0 + 0.5 * np.sin(2.0 * np.pi * y)) * h**1.9
        )
        w = np.column_stack(
            [
                1.0 + 0.4 * np.sin(np.pi * x) * y + 25.0 * (1.0 + x) * h**2.1,
                0.2 * np.cos(np.pi * x),
                np.zeros_like(x),
            ]
        )
        m = meshio.Mesh(pts, [("triangle", tri)], point_data={"cp": cp, "W": w})
        name = os.path.join(HERE, f"section-L{k + 1}." + ("vtk" if k == 2 else "vtu"))
        if k == 2:
            meshio.write(name, m, binary=True)
        else:
            meshio.write(name, m)
        print(f"wrote {name}: {len(pts)} points, sizes h = {h:.5f}")


if __name__ == "__main__":
    main()

"""Per-point estimates over fields: the vectorised call equals the point-by-point call bit for
bit, equals the command line's per-point file on the same probe files, and the summaries merge
exactly."""

import csv
import math
import pickle

import numpy as np
import pytest

import meshbound as mb
from conftest import bits, run_cli_json


def manufactured(h, n, seed):
    """Manufactured points (analytic power laws phi0 + a h^p with random p, a, phi0), mixed
    with diverging, oscillating, flat and missing points."""
    rng = np.random.default_rng(seed)
    h = np.asarray(h)
    p = rng.uniform(0.3, 3.3, n)[:, None]
    a = rng.uniform(-0.5, 0.5, n)[:, None]
    phi0 = rng.uniform(-5, 5, n)[:, None]
    phi = phi0 + a * h[None, :] ** p
    kind = rng.uniform(0, 1, n)
    sign = np.where(np.arange(len(h)) % 2 == 0, 1.0, -1.0)
    osc = kind < 0.1
    phi[osc] = phi0[osc] + a[osc] * h[None, :] ** p[osc] * sign
    div = (kind >= 0.1) & (kind < 0.2)
    phi[div] = phi0[div] + a[div] * (1.0 + np.arange(len(h)))[None, :]
    flat = (kind >= 0.2) & (kind < 0.25)
    phi[flat] = phi0[flat]
    miss = (kind >= 0.25) & (kind < 0.28)
    phi[miss, 1] = np.nan
    return phi


def same_bits(a, b):
    a = np.asarray(a, dtype=np.float64)
    b = np.asarray(b, dtype=np.float64)
    return a.shape == b.shape and np.array_equal(a.view(np.uint64), b.view(np.uint64))


@pytest.mark.parametrize(
    "meshes,settings",
    [
        (3, {}),
        (3, {"rule": "celik_gci"}),
        (3, {"noise_floor": 1e-3}),
        (4, {}),
        (5, {"floor": False}),
    ],
)
def test_vectorised_equals_point_by_point(meshes, settings):
    # Source of the check: the point-by-point call (the same library estimate, one point at a
    # time); manufactured data.
    h = [1.35**i for i in range(meshes)]
    phi = manufactured(h, 1500 if meshes == 3 else 400, seed=meshes)
    r = mb.estimate_points(h, phi, **settings)
    assert len(r) == len(phi)
    nan = float("nan")
    for i, row in enumerate(phi):
        p = mb.estimate_point(h, row, **settings)
        assert p.convergence == r.convergence[i]
        assert bits(nan if p.order is None else p.order) == bits(r.order[i])
        assert bits(nan if p.extrapolated is None else p.extrapolated) == bits(r.extrapolated[i])
        assert bits(nan if p.uncertainty is None else p.uncertainty) == bits(r.uncertainty[i])
        assert p.basis == mb.BASIS_LABELS[r.basis_code[i]]
        assert p.warning_bits == r.warning_bits[i]
        assert r.point(i) == p
    classes = set(r.convergence)
    assert {"monotonic", "divergent", "none"} <= classes


def test_three_meshes_recover_manufactured_orders_and_values():
    # Analytic: phi = phi0 + a h^p with a constant ratio gives order p and phi_ext = phi0.
    h = [1.0, 1.5, 2.25]
    rng = np.random.default_rng(7)
    p = rng.uniform(0.6, 2.9, 1000)
    phi0 = rng.uniform(1.0, 2.0, 1000)
    phi = phi0[:, None] + 0.3 * np.asarray(h)[None, :] ** p[:, None]
    r = mb.estimate_points(h, phi)
    np.testing.assert_allclose(r.order, p, rtol=1e-9)
    np.testing.assert_allclose(r.extrapolated, phi0, rtol=1e-12)
    # The fast per-point path agrees with the general three-mesh estimate (Celik et al. 2008
    # procedure solved by a bracketed root) to round-off.
    for i in range(0, 1000, 97):
        e = mb.three_mesh(h, phi[i])
        assert r.order[i] == pytest.approx(e.observed_order, rel=1e-12)
        assert r.uncertainty[i] == pytest.approx(e.uncertainty, rel=1e-12)


CELLS = (8.0e6, 2.4e6, 7.5e5, 2.2e5, 7.0e4)


def write_probe_study(folder, phi, ids, noise_floor=None):
    folder.mkdir(parents=True, exist_ok=True)
    m = phi.shape[1]
    names = [f"L{k + 1}" for k in range(m)]
    for k, name in enumerate(names):
        with open(folder / f"{name}.csv", "w", newline="") as f:
            w = csv.writer(f)
            w.writerow(["probe", "u"])
            for i, row in zip(ids, phi):
                v = row[k]
                w.writerow([i, "" if math.isnan(v) else repr(float(v))])
    (folder / "out").mkdir(exist_ok=True)
    (folder / "study.yaml").write_text(
        "format: 1\n"
        "title: Manufactured probe field (test)\n"
        "dimension: 3\n"
        "meshes:\n"
        + "".join(f"  - {{name: {n}, cells: {c}}}\n" for n, c in zip(names, CELLS))
        + "fields:\n"
        "  wall:\n"
        "    id: probe\n"
        "    columns: [u]\n"
        "    data: {" + ", ".join(f"{n}: {n}.csv" for n in names) + "}\n"
        "    write: out/points.csv\n"
        + ("" if noise_floor is None else f"    noise_floor: {noise_floor!r}\n")
    )
    return folder / "study.yaml"


@pytest.mark.parametrize(
    "meshes,n,noise_floor",
    [(3, 3000, None), (4, 800, None), (5, 500, None), (3, 1000, 1e-3)],
)
def test_vectorised_equals_the_command_lines_per_point_file(tmp_path, meshes, n, noise_floor):
    # Source of the check: the Rust library's field pipelines through the command line on the
    # same probe files (three meshes streamed, four or more in memory; manufactured data,
    # written with repr: every double exactly).
    h_rel = [(CELLS[0] / c) ** (1 / 3) for c in CELLS[:meshes]]
    phi = manufactured(h_rel, n, seed=11 + meshes)
    ids = [f"q{i:05d}" for i in range(n)]
    study = write_probe_study(tmp_path / "field", phi, ids, noise_floor)
    cli = run_cli_json(study)
    h = [m["size"] for m in cli["meshes"]]
    settings = {} if noise_floor is None else {"noise_floor": noise_floor}
    r = mb.estimate_points(h, phi, **settings)
    with open(tmp_path / "field" / "out" / "points.csv") as f:
        rows = [row for row in csv.reader(line for line in f if not line.startswith("#"))]
    header, rows = rows[0], rows[1:]
    col = {name: k for k, name in enumerate(header)}
    assert len(rows) == n

    def num(s):
        return float("nan") if s == "" else float(s)

    for i, row in enumerate(rows):
        assert row[0] == ids[i]
        assert bits(num(row[col["u_extrapolated"]])) == bits(r.extrapolated[i]), i
        assert bits(num(row[col["u_order"]])) == bits(r.order[i]), i
        assert bits(num(row[col["u_uncertainty"]])) == bits(r.uncertainty[i]), i
    # The summary: the same counts, first ids and warnings as the command line's field summary.
    s = mb.summarise_points(h, phi, name="u", ids=ids, **settings).to_dict()
    c = cli["fields"][0]["columns"][0]
    assert s["classes"] == c["classes"]
    assert s["order_points"] == c["order_points"]
    assert s["point_warnings"] == c["point_warnings"]
    assert bits(s["max_relative"]) == bits(c["max_relative"])
    if noise_floor is not None:
        assert s["noise_floor"] == c["noise_floor"]
    # Means: the command line's drivers sum in their chunk order, the mergeable summary
    # exactly; they agree to round-off.
    assert s["mean_order"] == pytest.approx(c["mean_order"], rel=1e-12)
    assert s["mean_relative"] == pytest.approx(c["mean_relative"], rel=1e-12)
    assert s["median_order"] == pytest.approx(c["median_order"], rel=1e-12)


def test_summary_sums_are_exactly_rounded_like_math_fsum():
    # Source of the check: Python's math.fsum (correctly rounded sum, standard library) over
    # the same per-point figures the vectorised call returns.
    h = [1.0, 1.4, 1.96, 2.744]
    phi = manufactured(h, 5000, seed=3)
    r = mb.estimate_points(h, phi)
    s = mb.summarise_points(h, phi).to_dict()
    nd = 1 << mb.POINT_CODES.index("convergence_not_demonstrated")
    use = ~np.isnan(r.order) & ((r.warning_bits & nd) == 0)
    orders = r.order[use]
    assert s["order_points"] == len(orders)
    assert bits(s["mean_order"]) == bits(math.fsum(orders) / len(orders))
    rel = r.uncertainty / np.abs(phi[:, 0])
    rel = rel[np.isfinite(rel)]
    assert bits(s["mean_relative"]) == bits(math.fsum(rel) / len(rel))
    assert bits(s["max_relative"]) == bits(rel.max())
    # The histogram median lies within one bin (order cap / 20000) of numpy's median.
    assert abs(s["median_order"] - np.median(orders)) <= 8.0 / 20000


def test_summaries_merge_exactly_in_any_split_and_order():
    # Source of the check: the one-pass summary over all points (the definition of a merge).
    h = [1.0, 1.3, 1.69]
    n = 20000
    phi = manufactured(h, n, seed=5)
    weights = np.random.default_rng(1).uniform(0.1, 2.0, n)
    whole = mb.summarise_points(h, phi, weights=weights, name="cp")
    cuts = [0, 17, 4000, 4001, 12345, n]
    parts = [
        mb.summarise_points(
            h, phi[a:b], weights=weights[a:b], offset=a, name="cp"
        )
        for a, b in zip(cuts, cuts[1:])
    ]
    for order in (parts, parts[::-1], parts[2:] + parts[:2]):
        merged = mb.Summary.merge_all(order)
        assert merged == whole
        assert merged.to_dict() == whole.to_dict()
    # Pickled (as Dask moves it between processes), a summary keeps every bit.
    back = pickle.loads(pickle.dumps(parts[1]))
    assert back == parts[1]
    assert mb.Summary.merge_all([parts[0], back] + parts[2:]) == whole
    shares = whole.to_dict()["class_shares"]
    assert math.fsum(shares.values()) == pytest.approx(1.0, rel=1e-15)


def test_a_vectorised_call_of_a_million_points_runs():
    # A size check, not a timing (figures are measured in examples/bench_points.py).
    h = [1.0, 1.5, 2.25]
    n = 1_000_000
    x = np.linspace(0.0, 1.0, n)
    phi = 1.0 + x[:, None] * np.asarray(h)[None, :] ** 2
    r = mb.estimate_points(h, phi)
    assert len(r) == n
    assert r.count("divergent") == 0


def test_any_memory_layout_gives_the_same_figures():
    # Source of the check: the C-ordered call; a Fortran-ordered or strided array holds the
    # same points.
    h = [1.0, 1.5, 2.25]
    phi = manufactured(h, 500, seed=2)
    a = mb.estimate_points(h, phi)
    for other in (np.asfortranarray(phi), np.hstack([phi, phi])[:, :3], phi[::-1][::-1]):
        b = mb._meshbound.estimate_points(
            mb._setup(h, 2.0, mb.DEFAULT_RULE, 20.0, 0.0, True, (-4.0, 8.0)), other
        )
        assert same_bits(a.extrapolated, b[2]) and same_bits(a.uncertainty, b[3])


def test_the_vectorised_call_releases_the_gil():
    # Another Python thread runs while a long call is under way: it records times in the middle
    # of the call, which it could not while the call held the GIL.
    import threading
    import time

    h = [1.0, 1.5, 2.25, 3.375]
    phi = manufactured(h, 200_000, seed=9)
    stamps = []
    stop = threading.Event()

    def spin():
        while not stop.is_set():
            stamps.append(time.perf_counter())
            time.sleep(0.0005)

    t = threading.Thread(target=spin)
    t.start()
    try:
        time.sleep(0.01)
        t0 = time.perf_counter()
        mb.estimate_points(h, phi)
        t1 = time.perf_counter()
    finally:
        stop.set()
        t.join()
    lo, hi = t0 + 0.25 * (t1 - t0), t0 + 0.75 * (t1 - t0)
    assert any(lo < s < hi for s in stamps), (t1 - t0, len(stamps))

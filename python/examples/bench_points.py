"""Measures (never asserts) a 1 M-point vectorised three-mesh call from Python against the same
field through the command line, and a Dask run on a local cluster.

    python python/examples/bench_points.py [POINTS] [--cli target/release/meshbound] [--dask]

Writes three probe CSV files of POINTS manufactured points (exact power laws per point) into
a temporary folder with a study file, then times, each several times with the median:
  * estimate_points on the array already in memory (the call alone);
  * reading the three CSV files with numpy and pandas, then estimate_points;
  * `meshbound assess STUDY` (the whole command: reading, estimating, summarising), without
    and with the per-point file;
and checks that the per-point figures are the same. With --dask: the same points as a Dask
dataframe of 8 partitions on a LocalCluster of 2 worker processes (map_partitions for the
per-point figures and the summaries, merged), timed and compared with one process.
"""

import argparse
import csv
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

import meshbound as mb

CELLS = (8.0e6, 2.4e6, 7.5e5)


def manufactured(n, seed=2026):
    h = np.array([(CELLS[0] / c) ** (1 / 3) for c in CELLS])
    rng = np.random.default_rng(seed)
    p = rng.uniform(0.5, 3.0, n)
    a = rng.uniform(-1, 1, n)
    phi0 = rng.uniform(-2, 2, n)
    return h, phi0[:, None] + a[:, None] * h[None, :] ** p[:, None]


def write(folder, phi):
    for k, name in enumerate(("L1", "L2", "L3")):
        with open(folder / f"{name}.csv", "w") as f:
            f.write("probe,u\n")
            f.writelines(f"q{i},{v!r}\n" for i, v in enumerate(phi[:, k].tolist()))
    (folder / "out").mkdir(exist_ok=True)
    body = (
        "format: 1\ntitle: benchmark field (manufactured)\ndimension: 3\nmeshes:\n"
        + "".join(f"  - {{name: L{i+1}, cells: {c}}}\n" for i, c in enumerate(CELLS))
        + "fields:\n  f:\n    id: probe\n    columns: [u]\n"
        "    data: {L1: L1.csv, L2: L2.csv, L3: L3.csv}\n"
    )
    (folder / "study.yaml").write_text(body)
    (folder / "study-write.yaml").write_text(body + "    write: out/points.csv\n")


def timed(f, runs):
    """Runs f `runs` times: its last result, the median wall time, every wall time, and the
    median CPU time (user + system, this process's threads and its finished children)."""
    import resource

    def cpu():
        s = resource.getrusage(resource.RUSAGE_SELF)
        c = resource.getrusage(resource.RUSAGE_CHILDREN)
        return s.ru_utime + s.ru_stime + c.ru_utime + c.ru_stime

    out, ts, cs = None, [], []
    for _ in range(runs):
        t, c = time.perf_counter(), cpu()
        out = f()
        ts.append(time.perf_counter() - t)
        cs.append(cpu() - c)
    timed.cpu = statistics.median(cs)
    return out, statistics.median(ts), ts


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("points", nargs="?", type=int, default=1_000_000)
    ap.add_argument("--cli", default=str(Path(__file__).resolve().parents[2] / "target/release/meshbound"))
    ap.add_argument("--runs", type=int, default=5)
    ap.add_argument("--dask", action="store_true")
    a = ap.parse_args()
    print("load average:", open("/proc/loadavg").read().strip(), "cores:", os.cpu_count())
    h_rel, phi = manufactured(a.points)
    with tempfile.TemporaryDirectory() as d:
        d = Path(d)
        write(d, phi)
        cli_json = subprocess.run([a.cli, "assess", str(d / "study.yaml"), "--format", "json"],
                                  capture_output=True, text=True, check=True).stdout
        import json
        h = [m["size"] for m in json.loads(cli_json)["meshes"]]
        r, t_call, ts = timed(lambda: mb.estimate_points(h, phi), a.runs)
        print(f"estimate_points, {a.points} points in memory: median {t_call:.3f} s  {['%.3f' % t for t in ts]}, CPU {timed.cpu:.3f} s")
        _, t_sum, ts = timed(lambda: mb.summarise_points(h, phi), a.runs)
        print(f"summarise_points (estimate + summary): median {t_sum:.3f} s  {['%.3f' % t for t in ts]}, CPU {timed.cpu:.3f} s")

        def from_files():
            import pandas as pd
            cols = [pd.read_csv(d / f"{n}.csv", usecols=["u"], engine="c")["u"].to_numpy() for n in ("L1", "L2", "L3")]
            return mb.estimate_points(h, np.column_stack(cols))

        _, t_files, ts = timed(from_files, a.runs)
        print(f"pandas.read_csv x3 + estimate_points: median {t_files:.3f} s  {['%.3f' % t for t in ts]}, CPU {timed.cpu:.3f} s")
        for study in ("study.yaml", "study-write.yaml"):
            _, t_cli, ts = timed(lambda: subprocess.run([a.cli, "assess", str(d / study), "--format", "json"],
                                                         capture_output=True, check=True), a.runs)
            print(f"meshbound assess {study} (whole process): median {t_cli:.3f} s  {['%.3f' % t for t in ts]}, CPU {timed.cpu:.3f} s")
        rows = list(csv.reader(line for line in open(d / "out" / "points.csv") if not line.startswith("#")))
        col = {k: i for i, k in enumerate(rows[0])}
        ext = np.array([float(x[col["u_extrapolated"]]) if x[col["u_extrapolated"]] else np.nan for x in rows[1:]])
        same = np.array_equal(ext.view(np.uint64), r.extrapolated.view(np.uint64))
        print("per-point extrapolated values identical to the command line's file:", same)
    if a.dask:
        import dask.dataframe as dd
        import distributed
        import pandas as pd

        df = pd.DataFrame(phi, columns=["m1", "m2", "m3"])
        one = mb.summarise_points(h, phi, name="u")
        with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                      dashboard_address=None) as cl, distributed.Client(cl):
            ddf = dd.from_pandas(df, npartitions=8).persist()

            def run():
                pts = ddf.map_partitions(lambda p: mb.estimate_points(h, p.to_numpy()).to_frame(index=p.index),
                                         meta=mb.estimate_points(h, phi[:1]).to_frame().iloc[:0]).compute()
                parts = ddf.map_partitions(lambda p: pd.Series([mb.summarise_points(h, p.to_numpy(), name="u",
                                                                                  offset=int(p.index[0]))]),
                                           meta=(None, "object")).compute()
                return pts, mb.Summary.merge_all(parts.tolist())

            (pts, merged), t_dask, ts = timed(run, a.runs)
        same_pts = np.array_equal(pts["extrapolated"].to_numpy().view(np.uint64), r.extrapolated.view(np.uint64))
        print(f"dask: 8 partitions, 2 workers x 1 thread: median {t_dask:.3f} s  {['%.3f' % t for t in ts]}, client CPU {timed.cpu:.3f} s; "
              f"per-point identical {same_pts}; merged summary identical {merged == one}")
    print("load average:", open("/proc/loadavg").read().strip())


if __name__ == "__main__":
    sys.exit(main())

"""A field split into Dask partitions on a local cluster of worker processes: the per-point
results and the merged summary equal those of one process, bit for bit."""

import numpy as np
import pytest

import meshbound as mb

dd = pytest.importorskip("dask.dataframe")
distributed = pytest.importorskip("distributed")
pd = pytest.importorskip("pandas")

H = [1.0, 1.3, 1.69]
MESHES = ["m1", "m2", "m3"]


def points_frame(n, seed):
    # Manufactured: phi = phi0 + a h^p per point (analytic power laws), some oscillating and
    # diverging points and a few missing values.
    rng = np.random.default_rng(seed)
    p = rng.uniform(0.4, 3.0, n)
    a = rng.uniform(-1.0, 1.0, n)
    phi0 = rng.uniform(-2.0, 2.0, n)
    h = np.asarray(H)
    phi = phi0[:, None] + a[:, None] * h[None, :] ** p[:, None]
    odd = rng.uniform(0, 1, n)
    phi[odd < 0.05, 1] += 0.5
    phi[(odd > 0.05) & (odd < 0.07), 2] = np.nan
    df = pd.DataFrame(phi, columns=MESHES)
    df["probe"] = [f"p{i:06d}" for i in range(n)]
    df["area"] = rng.uniform(0.5, 1.5, n)
    return df


def per_point(part):
    r = mb.estimate_points(H, part[MESHES].to_numpy())
    return r.to_frame(index=part.index)


def summary_of(part):
    # The partition's first row number places its points in the whole field.
    s = mb.summarise_points(
        H,
        part[MESHES].to_numpy(),
        name="cp",
        offset=int(part.index[0]) if len(part) else 0,
        ids=part["probe"].tolist(),
        weights=part["area"].to_numpy(),
    )
    return pd.Series([s])


# The frame is built in this process and shipped with the graph (a test's data).
@pytest.mark.filterwarnings("ignore:Sending large graph")
def test_partitioned_run_on_a_local_cluster_equals_one_process():
    n = 200_000
    df = points_frame(n, seed=19)
    one = mb.estimate_points(H, df[MESHES].to_numpy())
    one_summary = mb.summarise_points(
        H,
        df[MESHES].to_numpy(),
        name="cp",
        ids=df["probe"].tolist(),
        weights=df["area"].to_numpy(),
    )
    with distributed.LocalCluster(
        n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None
    ) as cluster, distributed.Client(cluster) as client:
        ddf = dd.from_pandas(df, npartitions=8)
        meta = pd.DataFrame(
            {
                "class_code": np.array([], dtype=np.uint8),
                "order": np.array([], dtype=np.float64),
                "extrapolated": np.array([], dtype=np.float64),
                "uncertainty": np.array([], dtype=np.float64),
                "basis_code": np.array([], dtype=np.uint8),
                "warning_bits": np.array([], dtype=np.uint16),
            }
        )
        points = ddf.map_partitions(per_point, meta=meta).compute()
        parts = ddf.map_partitions(summary_of, meta=(None, "object")).compute()
        assert len(client.scheduler_info()["workers"]) == 2
    assert len(parts) == 8
    merged = mb.Summary.merge_all(parts.tolist())
    for name, arr in one.to_dict().items():
        got = points[name].to_numpy()
        assert got.dtype == arr.dtype
        if arr.dtype == np.float64:
            assert np.array_equal(got.view(np.uint64), arr.view(np.uint64)), name
        else:
            assert np.array_equal(got, arr), name
    assert merged == one_summary
    assert merged.to_dict() == one_summary.to_dict()
    assert merged.points == n

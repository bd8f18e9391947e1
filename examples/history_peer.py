#!/usr/bin/env python3
"""Peers for the history benchmark: read the same monitor history with pandas or polars and
compute the plain mean of its `Cd` column, as `history_bench mean FILE` does.

    python3 examples/history_peer.py pandas FILE
    python3 examples/history_peer.py polars FILE

FILE is written by `cargo run --release --example history_bench -- generate N FILE`: `#`
comment lines, the last of them naming the columns, then tab-separated rows. Needs
`python3 -m pip install pandas polars`.
"""

import sys
import time

NAMES = ["Time", "Cm", "Cd", "Cl", "Cl(f)", "Cl(r)"]


def with_pandas(path):
    import pandas as pd

    frame = pd.read_csv(path, sep="\t", comment="#", header=None, names=NAMES)
    return len(frame), float(frame["Cd"].mean())


def with_polars(path):
    import polars as pl

    frame = pl.read_csv(
        path, separator="\t", comment_prefix="#", has_header=False, new_columns=NAMES
    )
    return frame.height, float(frame["Cd"].mean())


def main():
    if len(sys.argv) != 3 or sys.argv[1] not in ("pandas", "polars"):
        sys.exit(__doc__)
    start = time.perf_counter()
    rows, mean = (with_pandas if sys.argv[1] == "pandas" else with_polars)(sys.argv[2])
    print(f"rows {rows} mean {mean:.10e} in {time.perf_counter() - start:.3f} s")


if __name__ == "__main__":
    main()

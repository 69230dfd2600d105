"""Side by side (measured, not asserted): the Python package against the CLI.

    python bench/python_replay.py SAMPLES.csv STATION.toml [TENMIN_BIN]

1. replay of a pyarrow Table already in memory (no parsing) vs `tenmin replay
   -j 1` on the same samples as CSV, one core each;
2. the Dask path on a LocalCluster of 2 worker processes vs `tenmin replay -j 2`.

Run it on a quiet machine (30 days: `tenmin demo --days 30`, the samples
files joined); figures from a loaded machine say nothing. Prints seconds,
best of three.
"""

import subprocess
import sys
import time

import pandas as pd
import pyarrow as pa

import tenmin
import tenmin.dask


def best(f, n=3):
    ts = []
    for _ in range(n):
        t = time.perf_counter()
        f()
        ts.append(time.perf_counter() - t)
    return min(ts)


def main(samples, station, exe="target/release/tenmin"):
    st = tenmin.Station(station)
    df = pd.read_csv(samples, dtype={"time": str}, float_precision="round_trip", keep_default_na=False, na_values=[""])
    df["time"] = pd.to_datetime(df["time"], utc=True, format="ISO8601")
    tab = pa.Table.from_pandas(df, preserve_index=False)
    cli = lambda j: subprocess.run([exe, "replay", "-q", "-j", str(j), "-c", station, "-o", "/dev/null", samples], check=True)
    print(f"pyarrow Table, in-process : {best(lambda: tenmin.replay(tab, st)):.3f} s")
    print(f"CLI -j 1 on the CSV       : {best(lambda: cli(1)):.3f} s")
    import dask.dataframe as dd
    from dask.distributed import Client, LocalCluster

    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as c, Client(c) as client:
        ddf = dd.read_csv(samples, blocksize=16_000_000, dtype={"time": str}, float_precision="round_trip", keep_default_na=False, na_values=[""])
        print(f"Dask, 2 worker processes : {best(lambda: tenmin.dask.replay(ddf, st, client=client)):.3f} s")
    print(f"CLI -j 2 on the CSV       : {best(lambda: cli(2)):.3f} s")


if __name__ == "__main__":
    main(*sys.argv[1:])

"""Replays SAMPLES.csv on a local dask.distributed cluster of 2 worker
processes and writes OUT.csv, byte-identical to `tenmin replay`.

    python examples/dask_replay.py SAMPLES.csv STATION.toml OUT.csv
"""

import sys

import dask.dataframe as dd
from dask.distributed import Client, LocalCluster

import tenmin
import tenmin.dask


def main(argv):
    if len(argv) != 4:
        print(__doc__, file=sys.stderr)
        return 2
    samples, station, out = argv[1:]
    try:
        st = tenmin.Station(station)
        with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster, Client(cluster) as client:
            # Blocks of 256 kB: a 3-day demo makes a few dozen partitions.
            ddf = dd.read_csv(samples, blocksize=256_000, dtype={"time": str}, float_precision="round_trip",
                              keep_default_na=False, na_values=[""])
            recs = tenmin.dask.replay(ddf, st, client=client)
        recs.write_csv(out)
    except tenmin.TenminError as e:
        print(f"dask_replay: error: {e}", file=sys.stderr)
        return e.exit_code
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))

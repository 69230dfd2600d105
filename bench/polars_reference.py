#!/usr/bin/env python3
"""A plain polars replay of a samples CSV, for comparing speed with
`tenmin replay` (bench/compare.sh).

The same statistics as bench/pandas_reference.py, per interval and channel:
mean, population standard deviation (ddof=0), min, max, the gust as the
largest rolling mean over the gust window (in samples, within the interval,
no window over a missing sample), and for direction channels the unit-vector
mean direction and the Yamartino (1984) sigma-theta. Missing-value codes,
empty fields and NaN are missing; readings outside the channel's range are
dropped; raw counts become offset + slope * counts; directions get the
mounting offset, modulo 360. A yardstick, not a reference: none of tenmin's
time rules, screening or exact integer sums.

Usage: polars_reference.py STATION.toml SAMPLES.csv [--threads N] [-o OUT.csv] [--check RECORDS.csv]
Needs: polars (pip install polars; bench/compare.sh installs it into a venv),
Python 3.11+. `--threads` sets POLARS_MAX_THREADS before polars starts.
"""

import math
import os
import sys
import time

from peer_common import DEFAULT_RANGE, arguments, check, direction_stats, gust_window, load_station, write_rows


def replay(pl, station, samples):
    interval_s, rate, missing, channels = load_station(station)
    lf = pl.scan_csv(
        samples,
        schema_overrides={c["id"]: pl.Float64 for c in channels} | {"time": pl.String},
        null_values=[""],
    )
    key = (
        pl.col("time")
        .str.to_datetime("%Y-%m-%dT%H:%M:%SZ", time_unit="ms")
        .dt.truncate(f"{interval_s}s")
        .alias("start")
    )
    cleaned = []
    aggs = []
    for ch in channels:
        x = pl.col(ch["id"])
        x = pl.when(x.is_in(missing) | x.is_nan()).then(None).otherwise(x)
        if "slope" in ch:
            x = ch.get("offset", 0.0) + ch["slope"] * x
        lo, hi = ch.get("range", DEFAULT_RANGE[ch["kind"]])
        x = pl.when((x < lo) | (x > hi)).then(None).otherwise(x)
        i = ch["id"]
        if ch["kind"] == "direction":
            rad = ((x + ch.get("offset_deg", 0.0)) % 360.0).radians()
            cleaned += [rad.sin().alias(i + "~s"), rad.cos().alias(i + "~c")]
            aggs += [pl.col(i + "~s").mean(), pl.col(i + "~c").mean()]
        else:
            cleaned.append(x.alias(i))
            aggs += [
                pl.col(i).mean().alias(i + "~mean"),
                pl.col(i).std(ddof=0).alias(i + "~sd"),
                pl.col(i).min().alias(i + "~min"),
                pl.col(i).max().alias(i + "~max"),
            ]
            if ch["kind"] == "speed":
                w = gust_window(ch, rate)
                aggs.append(pl.col(i).rolling_mean(w, min_samples=w).max().alias(i + "~gust"))
    out = (
        lf.select([key] + cleaned)
        .group_by("start", maintain_order=True)
        .agg(aggs)
        .sort("start")
        .collect()
    )
    rows = {}
    for rec in out.iter_rows(named=True):
        start = rec["start"].strftime("%Y-%m-%dT%H:%M:%SZ")
        for ch in channels:
            i = ch["id"]
            if ch["kind"] == "direction":
                s, c = rec[i + "~s"], rec[i + "~c"]
                stats = {} if s is None else dict(zip(("mean", "sd"), direction_stats(s, c)))
            else:
                stats = {k: rec[i + "~" + k] for k in ("mean", "sd", "min", "max", "gust")
                         if i + "~" + k in rec}
            stats["_kind"] = ch["kind"]
            rows[(i, start)] = stats
    return rows


def main():
    a = arguments(__doc__)
    if a.threads:
        os.environ["POLARS_MAX_THREADS"] = str(a.threads)
    import polars as pl

    t0 = time.perf_counter()
    rows = replay(pl, a.station, a.samples)
    t1 = time.perf_counter()
    if a.output:
        write_rows(a.output, rows)
    print(f"polars_reference: {len(rows)} rows in {t1 - t0:.3f} s (read and compute, "
          f"polars {pl.__version__}, {pl.thread_pool_size()} threads)", file=sys.stderr)
    if a.check and not check(rows, a.check, "polars"):
        sys.exit(1)


if __name__ == "__main__":
    main()

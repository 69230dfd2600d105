#!/usr/bin/env python3
"""A plain DuckDB replay of a samples CSV, for comparing speed with
`tenmin replay` (bench/compare.sh).

The same statistics as bench/pandas_reference.py and
bench/polars_reference.py, in one SQL query: per interval and channel mean,
population standard deviation, min, max, the gust as the largest rolling mean
over the gust window (in samples, within the interval, no window over a
missing sample), and for direction channels the unit-vector mean direction and
the Yamartino (1984) sigma-theta (from the mean sine and cosine, in Python).
Missing-value codes, empty fields and NaN are missing; readings outside the
channel's range are dropped; raw counts become offset + slope * counts;
directions get the mounting offset, modulo 360. A yardstick, not a
reference: none of tenmin's time rules, screening or exact integer sums.

Usage: duckdb_reference.py STATION.toml SAMPLES.csv [--threads N] [-o OUT.csv] [--check RECORDS.csv]
Needs: duckdb (pip install duckdb; bench/compare.sh installs it into a venv),
Python 3.11+.
"""

import sys
import time

from peer_common import DEFAULT_RANGE, arguments, check, direction_stats, gust_window, load_station, write_rows


def sql_of(station, samples):
    interval_s, rate, missing, channels = load_station(station)
    codes = ", ".join(repr(float(m)) for m in missing)
    cols = ", ".join(f"'{c['id']}': 'DOUBLE'" for c in channels)
    cleaned, aggs, gusts, outer = [], [], [], []
    for ch in channels:
        i = ch["id"]
        x = f'"{i}"'
        x = f"CASE WHEN {x} IN ({codes}) OR isnan({x}) THEN NULL ELSE {x} END"
        if "slope" in ch:
            x = f"({ch.get('offset', 0.0)!r} + {ch['slope']!r} * ({x}))"
        lo, hi = ch.get("range", DEFAULT_RANGE[ch["kind"]])
        x = f"CASE WHEN {x} < {lo!r} OR {x} > {hi!r} THEN NULL ELSE {x} END"
        if ch["kind"] == "direction":
            rad = f"radians(({x} + {ch.get('offset_deg', 0.0)!r}) % 360.0)"
            cleaned += [f'sin({rad}) AS "{i}~s"', f'cos({rad}) AS "{i}~c"']
            aggs += [f'avg("{i}~s") AS "{i}~s"', f'avg("{i}~c") AS "{i}~c"']
        else:
            cleaned.append(f'{x} AS "{i}"')
            aggs += [
                f'avg("{i}") AS "{i}~mean"',
                f'stddev_pop("{i}") AS "{i}~sd"',
                f'min("{i}") AS "{i}~min"',
                f'max("{i}") AS "{i}~max"',
            ]
            if ch["kind"] == "speed":
                w = gust_window(ch, rate)
                frame = f"(PARTITION BY start ORDER BY rn ROWS BETWEEN {w - 1} PRECEDING AND CURRENT ROW)"
                gusts.append(
                    f'CASE WHEN count("{i}") OVER {frame} = {w} '
                    f'THEN avg("{i}") OVER {frame} END AS "{i}~g"'
                )
                aggs.append(f'max("{i}~g") AS "{i}~gust"')
                outer.append(f'"{i}~g"')
    return f"""
        WITH s AS (
            SELECT (epoch_ms(strptime("time", '%Y-%m-%dT%H:%M:%SZ')) // {interval_s * 1000})
                       * {interval_s} AS start,
                   row_number() OVER () AS rn,
                   {", ".join(cleaned)}
            FROM read_csv('{samples}', header = true, columns = {{'time': 'VARCHAR', {cols}}})
        ), g AS (
            SELECT *{"".join(", " + g for g in gusts)} FROM s
        )
        SELECT start, {", ".join(aggs)} FROM g GROUP BY start ORDER BY start
    """, channels


def replay(duckdb, station, samples, threads):
    con = duckdb.connect()
    if threads:
        con.execute(f"SET threads = {int(threads)}")
    sql, channels = sql_of(station, samples)
    cur = con.execute(sql)
    names = [d[0] for d in cur.description]
    rows = {}
    for rec in cur.fetchall():
        r = dict(zip(names, rec))
        start = time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime(r["start"]))
        for ch in channels:
            i = ch["id"]
            if ch["kind"] == "direction":
                s, c = r[i + "~s"], r[i + "~c"]
                stats = {} if s is None else dict(zip(("mean", "sd"), direction_stats(s, c)))
            else:
                stats = {k: r[i + "~" + k] for k in ("mean", "sd", "min", "max", "gust")
                         if i + "~" + k in r}
            stats["_kind"] = ch["kind"]
            rows[(i, start)] = stats
    threads_used = con.execute("SELECT current_setting('threads')").fetchone()[0]
    return rows, threads_used


def main():
    a = arguments(__doc__)
    import duckdb

    t0 = time.perf_counter()
    rows, threads = replay(duckdb, a.station, a.samples, a.threads)
    t1 = time.perf_counter()
    if a.output:
        write_rows(a.output, rows)
    print(f"duckdb_reference: {len(rows)} rows in {t1 - t0:.3f} s (read and compute, "
          f"duckdb {duckdb.__version__}, {threads} threads)", file=sys.stderr)
    if a.check and not check(rows, a.check, "duckdb"):
        sys.exit(1)


if __name__ == "__main__":
    main()

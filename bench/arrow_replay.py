"""Side by side (measured, not asserted): Arrow in memory and on disk against
the CLI on CSV, and the Dask example against `tenmin replay -j 2`.

    python bench/arrow_replay.py [DAYS] [TENMIN_BIN]     (default 30 days, target/release/tenmin)

Needs the package (`pip install ./python`) and pandas, pyarrow, dask[distributed]
(check.sh's virtual environment, target/pyvenv, has them). Writes `tenmin demo
--days DAYS` (an invented scenario) into a temporary folder, joins the daily
samples files into one CSV, then times, best of three, wall clock:

1. `tenmin.replay(table)` of a pyarrow Table already in memory (timestamp[ms]
   times, float64 values: read in place through the Arrow C stream interface,
   nothing to parse) against `tenmin replay -j 1` on the same samples as CSV;
   both on one core;
2. `tenmin replay -j 1` on the same samples as a Parquet file (`tenmin export
   -o samples.parquet`), and writing the records as Parquet;
3. `python/examples/dask_replay.py` (its own LocalCluster of 2 worker
   processes, started and stopped inside the time: the cost a user sees)
   against `tenmin replay -j 2`.

Every result is checked to be the CLI's records, byte for byte, before its
time is printed. Prints the machine's load (`os.getloadavg`) before and after:
figures from a loaded machine say little.
"""

import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import pyarrow as pa
import pyarrow.csv as pcsv

import tenmin

ROOT = Path(__file__).resolve().parents[1]


def best(f, n=3):
    ts = []
    out = None
    for _ in range(n):
        t = time.perf_counter()
        out = f()
        ts.append(time.perf_counter() - t)
    return min(ts), out


def main(days="30", exe=str(ROOT / "target/release/tenmin")):
    load0 = os.getloadavg()
    with tempfile.TemporaryDirectory() as d:
        d = Path(d)
        subprocess.run([exe, "demo", "-o", str(d / "demo"), "--days", days], check=True, capture_output=True)
        parts = sorted((d / "demo").glob("samples-*.csv"))
        samples = d / "all.csv"
        with open(samples, "wb") as out:
            for i, p in enumerate(parts):
                lines = p.read_bytes().splitlines(keepends=True)
                out.writelines(lines if i == 0 else lines[1:])
        station = str(d / "demo" / "station.toml")
        st = tenmin.Station(station)
        mb = samples.stat().st_size / 1e6

        def cli(j, src=samples, out="/dev/null", *extra):
            subprocess.run([exe, "replay", "-q", "-j", str(j), "-c", station, "-o", str(out), *extra, str(src)], check=True)

        subprocess.run([exe, "replay", "-q", "-j", "1", "-c", station, "-o", str(d / "cli.csv"), str(samples)], check=True)
        want = (d / "cli.csv").read_bytes()

        # The Table: parsed once, outside the time.
        types = {"time": pa.timestamp("ms", tz="UTC")} | {c: pa.float64() for c in st.ids}
        tab = pcsv.read_csv(samples, convert_options=pcsv.ConvertOptions(column_types=types))
        rows = tab.num_rows
        rows_out = []

        def row(what, secs):
            rows_out.append(f"| {what} | {secs:.3f} | {rows / secs / 1e6:.2f} | {mb / secs:.0f} |")

        t, recs = best(lambda: tenmin.replay(tab, st))
        assert recs.csv == want
        row("`tenmin.replay(pyarrow Table)`, in-process, 1 thread", t)
        t, _ = best(lambda: cli(1))
        row("`tenmin replay -j 1` on the CSV", t)
        # The same station without its [campaign] side files (sensor history,
        # exclusions, events), as bench/compare.sh: rows go through the core's
        # run path (Station::push_run) instead of one by one.
        text = Path(station).read_text()
        lines, skip = [], False
        for ln in text.splitlines():
            if ln.startswith("[campaign]"):
                skip = True
                continue
            if skip and ln.startswith("["):
                skip = False
            if not skip:
                lines.append(ln)
        plain = d / "demo" / "station-plain.toml"
        plain.write_text("\n".join(lines) + "\n")
        stp = tenmin.Station(str(plain))
        subprocess.run([exe, "replay", "-q", "-j", "1", "-c", str(plain), "-o", str(d / "plain.csv"), str(samples)], check=True)
        t, recs = best(lambda: tenmin.replay(tab, stp))
        assert recs.csv == (d / "plain.csv").read_bytes()
        row("same, station without its [campaign] files: `tenmin.replay(pyarrow Table)`", t)
        t, _ = best(lambda: subprocess.run([exe, "replay", "-q", "-j", "1", "-c", str(plain), "-o", "/dev/null", str(samples)], check=True))
        row("same, station without its [campaign] files: `tenmin replay -j 1` on the CSV", t)
        pq = d / "samples.parquet"
        subprocess.run([exe, "export", "-q", "-c", station, "-o", str(pq), str(samples)], check=True)
        t, _ = best(lambda: cli(1, pq, d / "p.csv"))
        assert (d / "p.csv").read_bytes() == want
        row(f"`tenmin replay -j 1` on the same samples as Parquet ({pq.stat().st_size / 1e6:.0f} MB)", t)
        t, _ = best(lambda: cli(1, samples, d / "r.parquet"))
        row("`tenmin replay -j 1` on the CSV, records written as Parquet (read back)", t)
        ex = ROOT / "python/examples/dask_replay.py"
        t, _ = best(lambda: subprocess.run([sys.executable, str(ex), str(samples), station, str(d / "dask.csv")], check=True, capture_output=True))
        assert (d / "dask.csv").read_bytes() == want
        row("`python/examples/dask_replay.py` (LocalCluster of 2 worker processes, started inside the time)", t)
        t, _ = best(lambda: cli(2))
        row("`tenmin replay -j 2` on the CSV", t)
    load1 = os.getloadavg()
    print(f"{days} days of 1 Hz samples, {len(st.ids)} channels: {rows:,} rows, {mb:.1f} MB of CSV; best of 3, wall clock")
    print(f"load average (1, 5, 15 min) before {load0[0]:.2f} {load0[1]:.2f} {load0[2]:.2f}, after {load1[0]:.2f} {load1[1]:.2f} {load1[2]:.2f}; {os.cpu_count()} cores")
    print()
    print("| run | s | M rows/s | MB/s of CSV |")
    print("|---|---|---|---|")
    print("\n".join(rows_out))


if __name__ == "__main__":
    main(*sys.argv[1:])

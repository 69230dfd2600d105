"""The Python package against the `tenmin` command on the same inputs.

The reference is the CLI's records CSV (the CLI is checked against numpy and
published values elsewhere, tests/ and host-cli/tests/); values are read back
with pandas (its `round_trip` float parser, pandas as installed by check.sh).
Demo data: `tenmin demo --days 3` (an invented scenario).
"""

import os
import random
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pyarrow as pa
import pytest

import tenmin

# pandas 3 deprecates `float_precision`; "round_trip" keeps older pandas exact too.
pytestmark = pytest.mark.filterwarnings("ignore:The 'float_precision' argument:FutureWarning", "ignore::DeprecationWarning")

ROOT = Path(__file__).resolve().parents[2]


def tenmin_bin():
    env = os.environ.get("TENMIN_BIN")
    if env:
        return env
    for p in (ROOT / "target/release/tenmin", ROOT / "target/debug/tenmin"):
        if p.exists():
            return str(p)
    pytest.skip("no tenmin binary: build it (cargo build --release -p host-cli) or set TENMIN_BIN")


def read_samples(path):
    return pd.read_csv(path, dtype={"time": str}, float_precision="round_trip", keep_default_na=False, na_values=[""])


@pytest.fixture(scope="session")
def demo(tmp_path_factory):
    d = tmp_path_factory.mktemp("demo")
    exe = tenmin_bin()
    subprocess.run([exe, "demo", "-o", str(d / "demo"), "--days", "3"], check=True, capture_output=True)
    parts = sorted((d / "demo").glob("samples-*.csv"))
    assert parts, "the demo wrote no samples"
    # One file: the header once, the days in order.
    with open(d / "all.csv", "wb") as out:
        for i, p in enumerate(parts):
            lines = p.read_bytes().splitlines(keepends=True)
            out.writelines(lines if i == 0 else lines[1:])
    station = d / "demo" / "station.toml"
    subprocess.run([exe, "replay", "-q", "-j", "1", "-c", str(station), "-o", str(d / "cli.csv"), str(d / "all.csv")], check=True)
    return {
        "dir": d,
        "samples": d / "all.csv",
        "station": station,
        "cli": (d / "cli.csv").read_bytes(),
        "df": read_samples(d / "all.csv"),
        "exe": exe,
    }


def test_files_equal_cli(demo):
    assert tenmin.replay(demo["samples"], demo["station"]).csv == demo["cli"]
    assert tenmin.replay([str(demo["samples"])], demo["station"], jobs=2).csv == demo["cli"]


@pytest.mark.parametrize("kind", ["pandas", "polars", "arrow", "stream"])
def test_frames_equal_cli_after_writing(demo, kind, tmp_path):
    df = demo["df"]
    if kind == "polars":
        import polars as pl

        data = pl.from_pandas(df)
    elif kind == "arrow":
        data = pa.Table.from_pandas(df, preserve_index=False)
    elif kind == "stream":
        tab = pa.Table.from_pandas(df, preserve_index=False)
        data = pa.RecordBatchReader.from_batches(tab.schema, tab.to_batches(max_chunksize=7_777))
    else:
        data = df
    recs = tenmin.replay(data, str(demo["station"]))
    recs.write_csv(tmp_path / "py.csv")
    assert (tmp_path / "py.csv").read_bytes() == demo["cli"]


def test_station_from_toml_text(demo):
    text = demo["station"].read_text()
    st = tenmin.Station(text, name=str(demo["station"]))
    assert tenmin.replay(demo["df"], st).csv == demo["cli"]


def assert_same_values(got: pd.DataFrame, want: pd.DataFrame):
    assert list(got.columns) == list(want.columns)
    assert len(got) == len(want)
    for c in want.columns:
        if c in ("start", "end"):
            w = pd.to_datetime(want[c], utc=True, format="ISO8601")
            g = got[c].dt.tz_convert("UTC").dt.as_unit("ms").astype("int64")
            assert (g == w.dt.as_unit("ms").astype("int64")).all(), c
        elif c in ("channel", "flags", "sensor_entries"):
            assert got[c].fillna("").tolist() == want[c].fillna("").tolist(), c
        else:
            g, w = got[c].astype("float64"), want[c].astype("float64")
            assert (g.isna() == w.isna()).all(), c
            assert (g[~g.isna()].to_numpy() == w[~w.isna()].to_numpy()).all(), c


def cli_frame(demo):
    import io

    return pd.read_csv(io.BytesIO(demo["cli"]), float_precision="round_trip", keep_default_na=False, na_values=[""], dtype={"channel": str, "flags": str, "sensor_entries": str})


def test_arrow_values_equal_csv(demo):
    assert_same_values(tenmin.replay(demo["df"], demo["station"]).to_pandas(), cli_frame(demo))


def test_parquet_round_trip(demo, tmp_path):
    import pyarrow.parquet as pq

    pq.write_table(tenmin.replay(demo["df"], demo["station"]).to_arrow(), tmp_path / "r.parquet")
    assert_same_values(pd.read_parquet(tmp_path / "r.parquet"), cli_frame(demo))


def random_tree_merge(rng, states, station):
    """Merges consecutive states in a random order, a random number at a time."""
    states = list(states)
    while len(states) > 1:
        i = rng.randrange(len(states) - 1)
        k = rng.randint(2, min(4, len(states) - i))
        states[i : i + k] = [tenmin.merge(states[i : i + k], station)]
    return states[0]


def test_random_splits_merge_exactly(demo):
    df, st = demo["df"], tenmin.Station(demo["station"])
    rng = random.Random(16)
    trials = int(os.environ.get("TENMIN_SPLIT_TRIALS", "12"))
    for trial in range(trials):
        k = rng.randint(2, 50)
        cuts = sorted(rng.sample(range(1, len(df)), k - 1))
        # Some cuts one sample apart, to land on interval edges and inside gust windows.
        bounds = [0] + cuts + [len(df)]
        states = [tenmin.chunk_state(df.iloc[a:b], st) for a, b in zip(bounds, bounds[1:]) if b > a]
        got = tenmin.finish(random_tree_merge(rng, states, st), st).csv
        assert got == demo["cli"], f"trial {trial}: {k} chunks at {cuts}"


def test_dask_example_equals_cli(demo, tmp_path):
    ex = Path(__file__).resolve().parents[1] / "examples" / "dask_replay.py"
    out = tmp_path / "dask.csv"
    subprocess.run([sys.executable, str(ex), str(demo["samples"]), str(demo["station"]), str(out)], check=True, timeout=600)
    assert out.read_bytes() == demo["cli"]


def test_error_messages_match_cli(demo, tmp_path):
    bad = tmp_path / "bad.toml"
    text = demo["station"].read_text().replace("sample_rate_hz", "sample_rate_hz_typo", 1)
    bad.write_text(text)
    cli = subprocess.run([demo["exe"], "replay", "-q", "-c", str(bad), str(demo["samples"])], capture_output=True, text=True)
    assert cli.returncode == 2
    with pytest.raises(tenmin.TenminError) as e:
        tenmin.replay(demo["samples"], bad)
    assert e.value.exit_code == 2
    assert cli.stderr.strip() == f"tenmin: error: {e.value}"
    assert str(bad) in str(e.value)
    # A bad row: the CLI's file and line.
    rows = demo["samples"].read_text().splitlines()
    rows[5] = rows[5].split(",")[0] + ",x" + "," * (rows[5].count(",") - 1)
    badrows = tmp_path / "badrows.csv"
    badrows.write_text("\n".join(rows) + "\n")
    cli = subprocess.run([demo["exe"], "replay", "-q", "-c", str(demo["station"]), str(badrows)], capture_output=True, text=True)
    with pytest.raises(tenmin.TenminError) as e:
        tenmin.replay(badrows, demo["station"])
    assert cli.stderr.strip() == f"tenmin: error: {e.value}"
    assert f"{badrows}:6" in str(e.value)


def test_unordered_frame_is_an_error(demo):
    df = demo["df"].iloc[[0, 2, 1]]
    with pytest.raises(tenmin.TenminError, match="strictly increasing"):
        tenmin.replay(df, demo["station"])


def test_verify_finds_the_logger_equal_and_a_changed_field(demo, tmp_path):
    logger = demo["dir"] / "demo" / "logger-records.csv"
    days = sorted((demo["dir"] / "demo").glob("samples-*.csv"))
    df = tenmin.verify(days, logger, demo["station"])
    assert df.attrs["total"] == 0 and df.attrs["rows_compared"] > 0 and len(df) == 0
    # One mean changed in the logger's file: found, named, as the CLI says it.
    lines = logger.read_text().splitlines()
    f = lines[1].split(",")
    f[5] = "123.5"
    lines[1] = ",".join(f)
    changed = tmp_path / "logger.csv"
    changed.write_text("\n".join(lines) + "\n")
    df = tenmin.verify(days, changed, demo["station"])
    assert df.attrs["total"] == 1
    assert (df.loc[0, "kind"], df.loc[0, "column"], df.loc[0, "logger"]) == ("field", "mean", "123.5")
    cli = subprocess.run([demo["exe"], "verify", "-q", "-c", str(demo["station"]), "--records", str(changed), "--samples"] + [str(d) for d in days], capture_output=True, text=True)
    assert cli.returncode == 1
    assert df.loc[0, "message"] in cli.stdout


def test_dask_list_of_files_equals_cli(demo):
    from dask.distributed import Client, LocalCluster

    import tenmin.dask

    days = sorted((demo["dir"] / "demo").glob("samples-*.csv"))
    cli = subprocess.run([demo["exe"], "replay", "-q", "-j", "1", "-c", str(demo["station"])] + [str(d) for d in days], capture_output=True, check=True).stdout
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as c, Client(c) as client:
        recs = tenmin.dask.replay([str(d) for d in days], demo["station"], client=client, split_every=2)
    assert recs.csv == cli


# --- Parquet and Arrow IPC in the CLI (host-cli/src/columnar.rs) -------------
# Reference: pandas' and pyarrow's own readers (versions as check.sh installs them).


@pytest.mark.parametrize("ext,jobs", [("parquet", 1), ("parquet", 2), ("arrow", 2)])
def test_cli_records_parquet_read_by_pandas_equal_csv_values(demo, tmp_path, ext, jobs):
    out = tmp_path / f"r.{ext}"
    subprocess.run([demo["exe"], "replay", "-q", "-j", str(jobs), "-c", str(demo["station"]), "-o", str(out), str(demo["samples"])], check=True)
    assert (tmp_path / f"r.{ext}.provenance.json").exists()
    got = pd.read_parquet(out, engine="pyarrow") if ext == "parquet" else pd.read_feather(out)
    want = cli_frame(demo)
    assert_same_values(got, want)
    # Types as CONTRACT.md says: counts int64, statistics float64, times UTC.
    assert str(got["n_valid"].dtype) == "int64" and str(got["mean"].dtype) == "float64"
    assert str(got["start"].dt.tz) == "UTC"
    # Field by field against the CSV's text parsed by Python's float()
    # (correctly rounded), independent of pandas' CSV parser.
    rows = demo["cli"].decode().splitlines()[1:]
    for c in ["mean", "sd", "min", "max", "gust", "ti", "resultant_direction"]:
        k = want.columns.get_loc(c)
        for r, v in zip(rows, got[c].tolist()):
            t = r.split(",")[k]
            assert (pd.isna(v) if t == "" else float(t) == v), (c, t, v)


@pytest.mark.parametrize(
    "how",
    ["pandas-parquet", "pyarrow-v2-pages", "pyarrow-dict-crc", "arrow-ipc", "arrow-stream", "export-parquet"],
)
def test_cli_replays_columnar_samples_as_csv(demo, tmp_path, how):
    import pyarrow.feather as feather
    import pyarrow.ipc as ipc
    import pyarrow.parquet as pq

    df = demo["df"].copy()
    df["time"] = pd.to_datetime(df["time"], utc=True, format="ISO8601")
    table = pa.Table.from_pandas(df, preserve_index=False)
    if how == "pandas-parquet":
        path = tmp_path / "s.parquet"
        df.to_parquet(path, engine="pyarrow", index=False)
    elif how == "pyarrow-v2-pages":
        # Data pages v2 of about 4 KiB (hundreds of pages a column), zstd,
        # statistics in every page header: the headers tenmin reads before
        # the parquet crate decodes the pages (host-cli/src/pagescan.rs).
        path = tmp_path / "s.parquet"
        pq.write_table(table, path, data_page_version="2.0", data_page_size=4096, compression="zstd", write_statistics=True)
    elif how == "pyarrow-dict-crc":
        # Dictionary pages, page checksums, a page index, row groups of 50,000 rows.
        path = tmp_path / "s.parquet"
        pq.write_table(table, path, use_dictionary=True, write_page_checksum=True, write_page_index=True, row_group_size=50_000, compression="snappy")
    elif how == "arrow-stream":
        path = tmp_path / "s.arrows"
        with ipc.new_stream(path, table.schema) as w:
            w.write_table(table, max_chunksize=10_000)
    elif how == "arrow-ipc":
        path = tmp_path / "s.arrow"
        feather.write_feather(pa.Table.from_pandas(df, preserve_index=False), path, compression="uncompressed")
    else:
        path = tmp_path / "s.parquet"
        subprocess.run([demo["exe"], "export", "-q", "-c", str(demo["station"]), "-o", str(path), str(demo["samples"])], check=True)
        back = pd.read_parquet(path)
        assert len(back) == len(df) and list(back.columns) == ["time"] + tenmin.Station(demo["station"]).ids
    for jobs in ("1", "2"):
        got = subprocess.run([demo["exe"], "replay", "-q", "-j", jobs, "-c", str(demo["station"]), str(path)], check=True, capture_output=True).stdout
        assert got == demo["cli"], (how, jobs)
    assert tenmin.replay(path, demo["station"]).csv == demo["cli"]


# --- Arrow frames in place (the Arrow C stream interface) ---------------------


def typed_table(demo):
    """The demo's samples as Arrow: timestamp[ms, UTC] times, float64 values."""
    df = demo["df"].copy()
    df["time"] = pd.to_datetime(df["time"], utc=True, format="ISO8601").dt.as_unit("ms")
    return pa.Table.from_pandas(df, preserve_index=False)


def test_arrow_table_is_read_in_place(demo):
    tab = typed_table(demo)
    assert pa.types.is_timestamp(tab.schema.types[0]) and pa.types.is_float64(tab.schema.types[1])
    # Every pyarrow allocation during the call goes through this pool: a cast,
    # a null fill or a copy of a column into one buffer would show here.
    pool = pa.proxy_memory_pool(pa.default_memory_pool())
    old = pa.default_memory_pool()
    pa.set_memory_pool(pool)
    try:
        csv = tenmin.replay(tab, demo["station"]).csv
        state = tenmin.chunk_state(tab, demo["station"])
    finally:
        pa.set_memory_pool(old)
    assert pool.max_memory() == 0, pool.max_memory()
    assert csv == demo["cli"]
    assert tenmin.finish(state, demo["station"]).csv == demo["cli"]


@pytest.mark.parametrize("kind", ["epoch-int", "epoch-float", "naive-us", "float32", "large-string"])
def test_other_column_types_read_as_the_csv(demo, kind):
    import pyarrow.compute as pc

    tab = typed_table(demo)
    t = tab.column("time")
    if kind == "epoch-int":
        tab = tab.set_column(0, "time", pc.divide(t.cast(pa.int64()), 1000))
    elif kind == "epoch-float":
        tab = tab.set_column(0, "time", pc.divide(t.cast(pa.int64()).cast(pa.float64()), 1000.0))
    elif kind == "naive-us":
        tab = tab.set_column(0, "time", t.cast(pa.timestamp("us")))
    elif kind == "large-string":
        tab = tab.set_column(0, "time", pa.chunked_array([demo["df"]["time"].astype(str).tolist()], pa.large_string()))
    else:
        # float32 is exact only for values a float32 holds: the CSV's values
        # rounded to float32 and back, written as CSV, are the reference.
        tab = tab.set_column(1, tab.schema.names[1], tab.column(1).cast(pa.float32()))
    got = tenmin.replay(tab, demo["station"]).csv
    if kind == "float32":
        df = demo["df"].copy()
        c = df.columns[1]
        df[c] = df[c].astype("float32").astype("float64")
        # (at a resolution of 0.01 the quanta may well be the CSV's again)
        assert tenmin.replay(df, demo["station"]).csv == got
    else:
        assert got == demo["cli"], kind


def test_bad_cell_in_a_frame_names_row_and_column(demo):
    df = demo["df"].iloc[:100].copy()
    df.loc[41, "time"] = "2025-01-20T00:00:99Z"
    with pytest.raises(tenmin.TenminError, match=r"frame: row 42 \(column time\)"):
        tenmin.replay(df, demo["station"])


# --- the report's tables and verify as DataFrames ----------------------------


def test_report_tables_equal_the_cli_files(demo, tmp_path):
    recs = demo["dir"] / "cli.csv"
    out = tmp_path / "report"
    subprocess.run([demo["exe"], "report", "-c", str(demo["station"]), "-o", str(out), "--sectors", "12", str(recs)], check=True, capture_output=True)
    tables = tenmin.report_tables(recs, demo["station"], sectors=12)
    files = sorted(p.stem for p in out.glob("*.csv"))
    assert sorted(tables) == files and len(files) >= 10
    for name, df in tables.items():
        text = (out / f"{name}.csv").read_text()
        assert df.attrs["csv"] == text, name
        want = pd.read_csv(out / f"{name}.csv", float_precision="round_trip", keep_default_na=False, na_values=[""])
        pd.testing.assert_frame_equal(df, want, check_exact=True)
    with pytest.raises(tenmin.TenminError, match="sectors must be 8, 12, 16 or 36"):
        tenmin.report_tables(recs, demo["station"], sectors=10)


def test_chunk_states_apply_a_re_scaling_sensor_history(demo, tmp_path):
    import shutil

    d = tmp_path / "st"
    shutil.copytree(demo["dir"] / "demo", d, ignore=shutil.ignore_patterns("samples-*", "logger*"))
    sensors = (d / "sensors.toml").read_text()
    # The first anemometer's logger programmed with a nominal transfer
    # function, not its certificate's: samples are re-scaled until the swap.
    changed = sensors.replace("logger = { slope = 0.04598, offset = 0.2087 }", "logger = { slope = 0.046, offset = 0.2 }", 1)
    assert changed != sensors
    (d / "sensors.toml").write_text(changed)
    station = d / "station.toml"
    cli = subprocess.run([demo["exe"], "replay", "-q", "-j", "1", "-c", str(station), str(demo["samples"])], check=True, capture_output=True).stdout
    assert cli != demo["cli"]
    df, st = demo["df"], tenmin.Station(station)
    rng = random.Random(4)
    for trial in range(3):
        cuts = sorted(rng.sample(range(1, len(df)), rng.randint(1, 20)))
        bounds = [0] + cuts + [len(df)]
        states = [tenmin.chunk_state(df.iloc[a:b], st) for a, b in zip(bounds, bounds[1:])]
        assert tenmin.finish(random_tree_merge(rng, states, st), st).csv == cli, cuts
    assert tenmin.replay(df, st).csv == cli


def test_state_path_refuses_a_clock_jump_as_replay_does(demo):
    """A sample six years ahead (a wrong logger clock): ``tenmin replay``
    refuses the jump (``--max-gap-days``, default 366); the exact-state path
    (``chunk_state``, ``merge``, ``finish``: what ``tenmin.dask`` runs)
    refused nothing and wrote every empty interval in between (1.9 million
    rows). Now it refuses the jump within a chunk with the replay's words,
    and between two chunks; a jump within the limit still gives the
    replay's records."""
    st = tenmin.Station(demo["station"])
    df = demo["df"].iloc[:1200]
    late = df.iloc[[-1]].copy()
    late["time"] = "2031-01-20T00:00:00Z"
    jumped = pd.concat([df, late], ignore_index=True)
    with pytest.raises(tenmin.TenminError) as replayed:
        tenmin.replay(jumped, st)
    with pytest.raises(tenmin.TenminError) as chunked:
        tenmin.chunk_state(jumped, st)
    assert str(chunked.value) == str(replayed.value)
    assert "more than --max-gap-days 366 allows" in str(chunked.value)
    a, b = tenmin.chunk_state(df, st), tenmin.chunk_state(late, st)
    with pytest.raises(tenmin.TenminError, match=r"^states: the time jumps forward 2191\.0 days"):
        tenmin.merge([a, b], st)
    # 300 days on: within the limit, the replay's records exactly.
    later = late.copy()
    later["time"] = "2025-11-16T00:00:00Z"
    near = pd.concat([df, later], ignore_index=True)
    want = tenmin.replay(near, st).csv
    assert tenmin.finish(tenmin.merge([a, tenmin.chunk_state(later, st)], st), st).csv == want
    assert tenmin.finish(tenmin.chunk_state(near, st), st).csv == want


def test_a_state_read_from_bytes_is_checked(demo):
    """A state is bytes a caller hands back; one changed since it was made
    (an interval that does not hold its samples, intervals out of order,
    a cut) is an error naming what is wrong, never records of it."""
    st = tenmin.Station(demo["station"])
    s = tenmin.chunk_state(demo["df"].iloc[:30], st)
    # The first item's interval: after the magic (8), the channel count
    # (1), the fingerprint (4), the item count (8) and the item's tag (1).
    at = 8 + 1 + 4 + 8 + 1
    index = int.from_bytes(s[at : at + 8], "little", signed=True)
    for moved, why in [(index + 5, "does not hold it"), (-(2**62), "outside the supported years")]:
        bad = s[:at] + moved.to_bytes(8, "little", signed=True) + s[at + 8 :]
        with pytest.raises(tenmin.TenminError, match=why):
            tenmin.finish(bad, st)
    with pytest.raises(tenmin.TenminError, match="cut short"):
        tenmin.finish(s[:-1], st)
    assert tenmin.finish(s, st).csv == tenmin.replay(demo["df"].iloc[:30], st).csv


def test_changed_state_bytes_raise_tenmin_errors_only(demo):
    """Random changes to a state's bytes (a byte set anywhere, eight bytes
    set, a cut, bytes added) give a TenminError or records, never another
    exception: a Rust panic would surface as pyo3's PanicException (a
    planted panic on a bad reading tag fails this). Fixed seed."""
    st = tenmin.Station(demo["station"])
    s = tenmin.chunk_state(demo["df"].iloc[550:1300], st)
    rng = random.Random(18)
    outcomes = {"error": 0, "records": 0}
    for trial in range(400):
        b = bytearray(s)
        how = trial % 4
        if how == 0:
            b[rng.randrange(len(b))] = rng.randrange(256)
        elif how == 1:
            at = rng.randrange(len(b))
            b[at : at + 8] = rng.randbytes(8)
        elif how == 2:
            del b[rng.randrange(len(b)) :]
        else:
            b[rng.randrange(len(b)) : 0] = rng.randbytes(rng.randrange(1, 16))
        try:
            tenmin.finish(bytes(b), st)
            outcomes["records"] += 1
        except tenmin.TenminError:
            outcomes["error"] += 1
    # Both happen: a changed reading's value still reads, a cut never does.
    assert outcomes["error"] > 50 and outcomes["records"] > 50, outcomes


@pytest.mark.parametrize("example", ["asos-ewr-hourly", "midc-1min", "surfrad-1min"])
def test_file_state_reads_a_declared_layout_as_replay_does(example):
    """A samples file's path as a chunk (what ``tenmin.dask.replay`` runs
    for a list of files) is read by the command's own readers, so a layout
    the station file declares (the repository's public field files: NOAA
    ASOS, NREL MIDC, NOAA SURFRAD; PROVENANCE.md beside each) gives the
    replay's records exactly; before, the files were read by pandas as
    tenmin's own CSV only."""
    d = ROOT / "examples" / "field-files" / example
    st = tenmin.Station(d / "station.toml")
    data = next(p for p in sorted(d.iterdir()) if p.name not in ("station.toml", "PROVENANCE.md"))
    want = tenmin.replay(data, st).csv
    assert tenmin.finish(tenmin.chunk_state(data, st), st).csv == want
    assert tenmin.finish(tenmin.chunk_state(str(data), st), st).csv == want


def test_file_state_errors_name_file_and_line_as_replay(demo, tmp_path):
    """A bad value in a file read as a chunk state: the replay's message,
    file and line."""
    rows = demo["samples"].read_text().splitlines()
    rows[5] = rows[5].split(",")[0] + ",x" + "," * (rows[5].count(",") - 1)
    bad = tmp_path / "bad.csv"
    bad.write_text("\n".join(rows) + "\n")
    with pytest.raises(tenmin.TenminError) as replayed:
        tenmin.replay(bad, demo["station"])
    with pytest.raises(tenmin.TenminError) as chunked:
        tenmin.chunk_state(bad, demo["station"])
    assert str(chunked.value) == str(replayed.value)
    assert f"{bad}:6" in str(chunked.value)

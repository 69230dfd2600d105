"""tenmin from Python: 10-minute statistics of wind measurements on the same
exact core as the ``tenmin`` command (``qc-core`` through ``host_cli``; no
second implementation).

    import tenmin
    st = tenmin.Station("station.toml")            # or the TOML text itself
    recs = tenmin.replay("samples.csv", st)        # files: any declared layout
    recs = tenmin.replay(df, st)                   # pandas / polars / pyarrow
    recs.to_arrow(); recs.to_pandas(); recs.write_csv("records.csv")

Exact states: ``chunk_state(part, st)`` for each time-ordered chunk,
``merge([a, b, ...], st)`` for consecutive states (any grouping), and
``finish(state, st)`` give the one-pass records bit for bit.
Errors raise :class:`TenminError` with the CLI's message (file, line, field)
and its exit code (``.exit_code``, 2).
"""

from __future__ import annotations

import io
import os
from typing import Iterable, Sequence

from . import _tenmin

__all__ = [
    "Station",
    "Records",
    "TenminError",
    "replay",
    "chunk_state",
    "merge",
    "finish",
    "verify",
    "report_tables",
]


class TenminError(Exception):
    """An error of tenmin: ``str(e)`` is the CLI's message, ``e.exit_code``
    the CLI's exit code for it (2)."""

    def __init__(self, message: str, exit_code: int = 2):
        super().__init__(message)
        self.exit_code = exit_code


def _call(f, *args, **kw):
    try:
        return f(*args, **kw)
    except _tenmin.TenminError as e:
        msg, code = e.args
        raise TenminError(msg, code) from None


class Station:
    """A station file, from a path or from TOML text (text holds a newline)."""

    def __init__(self, source: "str | os.PathLike[str]", name: str | None = None):
        if isinstance(source, Station):
            self.path, self.text, self.ids = source.path, source.text, source.ids
            return
        if isinstance(source, os.PathLike) or "\n" not in str(source):
            self.path = os.fspath(source)
            try:
                with open(self.path, encoding="utf-8") as f:
                    self.text = f.read()
            except OSError as e:
                raise TenminError(f"{self.path}: {e.strerror}") from None
        else:
            self.path, self.text = name, str(source)
        self.ids = _call(_tenmin.channel_ids, **self._kw())

    def _kw(self) -> dict:
        return {"station_path": self.path, "station_toml": self.text}

    def __reduce__(self):
        # To a worker as its text (and the name its messages use).
        return (_from_text, (self.path, self.text))


def _from_text(path, text):
    s = Station.__new__(Station)
    s.path, s.text = path, text
    s.ids = _call(_tenmin.channel_ids, **s._kw())
    return s


# Records CSV columns (host-cli/src/records.rs COLUMNS): text, counts, numbers.
_TEXT = ("channel", "flags", "sensor_entries")
_TIMES = ("start", "end")


class Records:
    """Records of a replay: the records CSV's bytes, as ``tenmin replay``
    writes them, and their Arrow / pandas views (same columns, same values)."""

    def __init__(self, csv: bytes):
        self.csv = csv

    def write_csv(self, path: "str | os.PathLike[str]") -> None:
        with open(path, "wb") as f:
            f.write(self.csv)

    def to_arrow(self):
        import pyarrow as pa
        import pyarrow.csv as pcsv

        header = self.csv.split(b"\n", 1)[0].decode().split(",")
        types = {}
        for c in header:
            if c in _TEXT:
                types[c] = pa.string()
            elif c in _TIMES:
                types[c] = pa.timestamp("ms", tz="UTC")
            elif c.startswith("n_"):
                types[c] = pa.int64()
            else:
                types[c] = pa.float64()
        return pcsv.read_csv(
            io.BytesIO(self.csv),
            convert_options=pcsv.ConvertOptions(
                column_types=types,
                strings_can_be_null=False,
                quoted_strings_can_be_null=False,
            ),
        )

    def to_pandas(self):
        return self.to_arrow().to_pandas()


def _table(data, time: str):
    """Any supported frame as a pyarrow Table (or RecordBatchReader)."""
    import pyarrow as pa

    if isinstance(data, (pa.Table, pa.RecordBatchReader)):
        return data
    if isinstance(data, pa.RecordBatch):
        return pa.Table.from_batches([data])
    mod = type(data).__module__.split(".")[0]
    if mod == "polars":
        return data.to_arrow()
    if mod == "pandas":
        return pa.Table.from_pandas(data, preserve_index=False)
    raise TypeError(f"cannot replay a {type(data).__name__}: give paths, a pandas or polars DataFrame, or a pyarrow Table / RecordBatch / RecordBatchReader")


def _frame(data, station: Station, time: str):
    """A frame as an Arrow table or stream of the columns `time` and the
    channel ids (selected and renamed without copying). It goes to Rust
    through the Arrow C stream interface (``__arrow_c_stream__``) as it is:
    float64 values and timestamp or integer times are read in place, other
    types (ints, float32, text times) as they come; nothing is converted
    here first."""
    import pyarrow as pa

    tab = _table(data, time)
    names = tab.schema.names
    if time not in names:
        raise TenminError(f"no time column '{time}' (columns: {', '.join(names)})")
    missing = [c for c in station.ids if c not in names]
    if missing:
        raise TenminError(f"{station.path or 'station'}: channel(s) {', '.join(missing)} have no column (columns: {', '.join(names)})")
    cols = [time] + station.ids
    new = ["time"] + station.ids
    if isinstance(tab, pa.RecordBatchReader):
        schema = pa.schema([tab.schema.field(c).with_name(n) for c, n in zip(cols, new)])
        return pa.RecordBatchReader.from_batches(
            schema, (pa.RecordBatch.from_arrays([b.column(c) for c in cols], schema=schema) for b in tab)
        )
    return tab.select(cols).rename_columns(new)


def chunk_state(data, station, *, time: str = "time") -> bytes:
    """The exact state of a chunk of samples (time-ordered; a DataFrame,
    pyarrow Table, RecordBatch or batch stream, or the path of a samples
    file in any layout the station file declares, read by the command's own
    readers), with its open intervals at both ends."""
    station = Station(station)
    if isinstance(data, (str, os.PathLike)):
        return _call(_tenmin.file_state, os.fspath(data), **station._kw())
    return _call(_tenmin.chunk_state, _frame(data, station, time), **station._kw())


def merge(states: Iterable[bytes], station) -> bytes:
    """Consecutive states, in time order, merged exactly into one (a jump of
    more than 366 days between two is an error, as in a replay)."""
    station = Station(station)
    return _call(_tenmin.merge_states, list(states), **station._kw())


def finish(state: bytes, station) -> Records:
    """Screens a state holding all the samples in time order: its records."""
    station = Station(station)
    return Records(_call(_tenmin.finish_state, state, **station._kw()))


def replay(
    data,
    station,
    *,
    time: str = "time",
    jobs: int = 1,
    skip_bad_rows: bool = False,
    allow_no_records: bool = False,
) -> Records:
    """Replays samples: file path(s) in any layout the station file declares
    (as ``tenmin replay``, with ``jobs`` threads), or a pandas / polars
    DataFrame, pyarrow Table / RecordBatch / RecordBatchReader with a time
    column ``time`` and one column per channel id."""
    station = Station(station)
    if isinstance(data, (str, os.PathLike)) or (
        isinstance(data, Sequence) and data and all(isinstance(p, (str, os.PathLike)) for p in data)
    ):
        paths = [data] if isinstance(data, (str, os.PathLike)) else list(data)
        csv = _call(
            _tenmin.replay_files,
            [os.fspath(p) for p in paths],
            jobs=jobs,
            skip_bad_rows=skip_bad_rows,
            allow_no_records=allow_no_records,
            **station._kw(),
        )
        return Records(csv)
    return Records(_call(_tenmin.replay_frame, _frame(data, station, time), **station._kw()))


def verify(samples, logger_records, station, *, jobs: int = 1, max_diffs: int = 1000):
    """Replays ``samples`` (path or paths) and compares with the logger's
    records file, as ``tenmin verify``: a pandas DataFrame of the first
    ``max_diffs`` differences (start, channel, kind, column, replay, logger,
    ulps, message), with ``.attrs`` total, rows_compared and replay_rows.
    No differences: an empty frame and ``attrs["total"] == 0``."""
    import pandas as pd

    station = Station(station)
    paths = [samples] if isinstance(samples, (str, os.PathLike)) else list(samples)
    total, compared, rows, shown = _call(
        _tenmin.verify_files,
        [os.fspath(p) for p in paths],
        os.fspath(logger_records),
        jobs=jobs,
        max_diffs=max_diffs,
        **station._kw(),
    )
    df = pd.DataFrame(shown, columns=["start", "channel", "kind", "column", "replay", "logger", "ulps", "message"])
    df.attrs.update(total=total, rows_compared=compared, replay_rows=rows)
    return df


def report_tables(records, station, *, sectors: int = 16, air_density: float = 1.225, reference: str | None = None):
    """The tables of ``tenmin report`` from records file(s) (as ``tenmin
    replay`` writes them), computed by the command's own code and written
    nowhere: a dict from table name (the CLI writes ``<name>.csv``) to a
    pandas DataFrame read from the same CSV text (``.attrs["csv"]`` holds
    it), in the report's order."""
    import pandas as pd

    station = Station(station)
    paths = [records] if isinstance(records, (str, os.PathLike)) else list(records)
    out = {}
    for name, text in _call(
        _tenmin.report_tables,
        [os.fspath(p) for p in paths],
        sectors=sectors,
        air_density=air_density,
        reference=reference,
        **station._kw(),
    ):
        df = pd.read_csv(io.StringIO(text), float_precision="round_trip", keep_default_na=False, na_values=[""])
        df.attrs["csv"] = text
        out[name] = df
    return out

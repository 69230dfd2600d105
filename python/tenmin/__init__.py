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


def _times_ms(col):
    """A time column as little-endian int64 ms since 1970 UTC."""
    import numpy as np
    import pyarrow as pa
    import pyarrow.compute as pc

    t = col.type
    if pa.types.is_timestamp(t):
        # A naive time is UTC, as in the samples CSV without an offset.
        ms = pc.cast(col, pa.timestamp("ms", tz=t.tz), safe=True).cast(pa.int64())
    elif pa.types.is_integer(t) or pa.types.is_floating(t):
        # Epoch seconds, as the samples CSV allows (decimal to ms).
        ms = pc.round(pc.multiply(pc.cast(col, pa.float64()), 1000.0)).cast(pa.int64())
    elif pa.types.is_string(t) or pa.types.is_large_string(t):
        import pandas as pd

        s = pd.to_datetime(col.to_pandas(), utc=True, format="ISO8601")
        return s.to_numpy(dtype="datetime64[ms]").astype("<i8").tobytes()
    else:
        raise TenminError(f"time column: type {t} is not a time, epoch seconds or RFC 3339 text")
    if ms.null_count:
        raise TenminError("time column: empty times")
    return np.ascontiguousarray(ms.to_numpy(zero_copy_only=False), dtype="<i8").tobytes()


def _state_of_table(tab, station: Station, time: str) -> bytes:
    import numpy as np
    import pyarrow as pa
    import pyarrow.compute as pc

    names = tab.schema.names
    if time not in names:
        raise TenminError(f"no time column '{time}' (columns: {', '.join(names)})")
    missing = [c for c in station.ids if c not in names]
    if missing:
        raise TenminError(f"{station.path or 'station'}: channel(s) {', '.join(missing)} have no column (columns: {', '.join(names)})")
    times = _times_ms(tab.column(time).combine_chunks() if isinstance(tab, pa.Table) else tab.column(time))
    cols = []
    for c in station.ids:
        v = tab.column(c)
        v = v.combine_chunks() if isinstance(v, pa.ChunkedArray) else v
        v = pc.fill_null(pc.cast(v, pa.float64()), float("nan"))
        cols.append(np.ascontiguousarray(v.to_numpy(zero_copy_only=False), dtype="<f8").tobytes())
    return _call(_tenmin.chunk_state, times, cols, **station._kw())


def chunk_state(data, station, *, time: str = "time") -> bytes:
    """The exact state of a chunk of samples (time-ordered; a DataFrame,
    pyarrow Table or RecordBatch), with its open intervals at both ends."""
    station = Station(station)
    tab = _table(data, time)
    if hasattr(tab, "read_next_batch"):  # a stream: batch by batch, merged
        return merge((_state_of_table(b, station, time) for b in tab), station)
    return _state_of_table(tab, station, time)


def merge(states: Iterable[bytes], station) -> bytes:
    """Consecutive states, in time order, merged exactly into one."""
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
    return finish(chunk_state(data, station, time=time), station)


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

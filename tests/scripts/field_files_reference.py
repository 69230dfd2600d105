#!/usr/bin/env python3
"""Reference statistics of the three field-file examples, computed with pandas and numpy.

Reads the ORIGINAL files of examples/field-files/ (each exactly as the
example ships it; see PROVENANCE.md in each folder) with pandas' own parsers
and writes tests/data/field-files-reference.csv, which
host-cli/tests/field_files.rs compares with what `tenmin replay` makes of the
same files. Run from anywhere:

    python3 tests/scripts/field_files_reference.py   # needs numpy and pandas

Nothing here runs or imports tenmin. The rules are written out below from the
station files' comments and the file formats, not from tenmin's code; the
script only reads each station.toml to check that the constants written here
(columns, units, ranges, resolutions, missing codes, intervals) still agree
with it, and stops if they do not.

Rules, per example:

- midc-1min: `pandas.read_csv` with its defaults. Time: Year, DOY and MST
  (HHMM without leading zeros, 5 = 00:05) in local standard time UTC-7 all
  year; each stamp opens its minute, so UTC = local + 7 h. Missing: -7999
  (written -7999 or -7999.0) in any value column. Station Pressure is in mbar,
  the channel in hPa: 1 mbar = 1 hPa, the value is unchanged.
- surfrad-1min: `pandas.read_csv(sep=r"\\s+", skiprows=2, header=None)`;
  columns below are 1-based as in the station file (pandas' are 0-based).
  Time: year, month, day, hour, minute (columns 1, 3, 4, 5, 6) in UTC.
  Missing: -9999.9. Every value is followed by a quality code; only code 0
  is good: a sample with another code is not valid.
- asos-ewr-hourly: `pandas.read_csv` with its defaults (which read "NA" as
  missing), then only rows with origin == "EWR". Time: `time_hour`, RFC 3339
  in UTC. Speeds are mph, converted to m/s by the exact definition
  1 mph = 0.44704 m/s (1 mile = 1609.344 m, international yard and pound
  agreement of 1959); temperature is degrees F, converted to degrees C by
  (F - 32) * 5/9.

Common to all three:

- A sample is valid when it is not missing, its quality code (if any) is good,
  and its value (after the unit conversion) lies in the channel's `range`,
  inclusive. Ranges not written in the station file are tenmin's documented
  defaults (host-cli/CONTRACT.md, "Station file"): speed 0 to 75, direction
  0 to 360, scalar -1e6 to 1e6.
- Quantization: tenmin's core keeps a speed or scalar value as a whole number
  of the channel's `resolution` and a direction as a whole number of 0.01
  degree, rounding half away from zero, before it sums anything. This script
  quantizes the same way (value * (1 / resolution), resp. value * 100, then
  round half away from zero; directions modulo 360 degrees), so that the
  Rust test can compare tightly: the statistics of the quantized values agree
  up to the order of floating-point summation.
- A row whose time is not after the last accepted row's time would be
  rejected (duplicate or backward); the script applies that rule too (none of
  the three files has such a row, which the script prints).
- Intervals are UTC-aligned: [k * L, (k + 1) * L) seconds since 1970-01-01
  UTC, L = 600 s for the 1-minute files and 86400 s for the hourly file. Every
  interval from the one of the first row to the one of the last row is listed,
  for every channel, also those without any valid sample (n_valid 0, empty
  statistics).
- Per interval and channel: the number of valid samples, and for speed and
  scalar channels their mean, minimum and maximum; for the direction channel
  the unit-vector mean direction atan2(mean sin, mean cos) in [0, 360)
  (US EPA-454/R-99-005 sec. 6.2.2), in the mean column, min and max empty.
"""

import math
import platform
import tomllib
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[2]
EXAMPLES = ROOT / "examples" / "field-files"
OUT = ROOT / "tests" / "data" / "field-files-reference.csv"

# Defaults of tenmin's station file (host-cli/CONTRACT.md, "Station file").
DEFAULT_RANGE = {"speed": (0.0, 75.0), "direction": (0.0, 360.0), "scalar": (-1e6, 1e6)}

MPH_TO_M_S = 0.44704  # exact by definition: 1 mile = 1609.344 m, 1 h = 3600 s


def f_to_c(f):
    """Degrees Fahrenheit to Celsius."""
    return (f - 32.0) * 5.0 / 9.0


def round_half_away(x):
    """Round to the nearest integer, halves away from zero (as C's round())."""
    r = np.trunc(x)
    frac = x - r  # exact for |x| < 2**52
    return r + np.where(frac >= 0.5, 1.0, 0.0) - np.where(frac <= -0.5, 1.0, 0.0)


class Channel:
    """One channel of an example, as its station file declares it."""

    def __init__(self, cid, kind, column, resolution=None, range_=None, source_unit=None,
                 quality=None):
        self.id = cid
        self.kind = kind
        self.column = column
        self.resolution = resolution
        self.range = range_
        self.source_unit = source_unit
        self.quality = quality  # (column, good codes as integers)

    def valid_range(self):
        return self.range if self.range is not None else DEFAULT_RANGE[self.kind]


class Example:
    def __init__(self, folder, data, interval_s, channels):
        self.folder = folder
        self.data = data
        self.interval_s = interval_s
        self.channels = channels


MIDC = Example(
    "midc-1min",
    "midc-uat-20181018-1min.csv",
    600,
    [
        Channel("ws", "speed", "Avg Wind Speed @ 3m [m/s]", resolution=0.001),
        Channel("wd", "direction", "Avg Wind Direction @ 3m [deg from N]"),
        Channel("t", "scalar", "Air Temperature [deg C]", resolution=0.01, range_=(-40, 60)),
        Channel("t_chp1", "scalar", "Temp CHP1 [deg C]", resolution=0.1, range_=(-500, 100)),
        Channel("p", "scalar", "Station Pressure [mBar]", resolution=0.001, range_=(500, 1100),
                source_unit="mbar"),
    ],
)

SURFRAD = Example(
    "surfrad-1min",
    "surfrad-alamosa-2016-001-1min.dat",
    600,
    [
        Channel("ws", "speed", 43, resolution=0.1, quality=(44, [0])),
        Channel("wd", "direction", 45, quality=(46, [0])),
        Channel("t", "scalar", 39, resolution=0.1, range_=(-50, 50), quality=(40, [0])),
        Channel("rh", "scalar", 41, resolution=0.1, range_=(0, 100), quality=(42, [0])),
        Channel("p", "scalar", 47, resolution=0.1, range_=(500, 1100), source_unit="mbar",
                quality=(48, [0])),
    ],
)

ASOS = Example(
    "asos-ewr-hourly",
    "asos-nyc-2013-hourly.csv",
    86400,
    [
        Channel("ws", "speed", "wind_speed", resolution=0.0001, range_=(0, 75), source_unit="mph"),
        Channel("wd", "direction", "wind_dir"),
        Channel("gust_reported", "speed", "wind_gust", resolution=0.0001, range_=(0, 100),
                source_unit="mph"),
        Channel("t", "scalar", "temp", resolution=0.0001, range_=(-50, 50), source_unit="degF"),
        Channel("p", "scalar", "pressure", resolution=0.1, range_=(900, 1100)),
    ],
)


def check_station_file(ex):
    """Stops if the constants above no longer match the example's station.toml."""
    with (EXAMPLES / ex.folder / "station.toml").open("rb") as f:
        st = tomllib.load(f)
    assert st["logging"]["interval_s"] == ex.interval_s, ex.folder
    chans = st["channel"]
    assert [c["id"] for c in chans] == [c.id for c in ex.channels], ex.folder
    for c, ours in zip(chans, ex.channels):
        where = f"{ex.folder} channel {ours.id}"
        assert c["kind"] == ours.kind, where
        assert c["column"] == ours.column, where
        assert c.get("resolution") == ours.resolution, where
        r = c.get("range")
        assert (tuple(r) if r is not None else None) == (
            tuple(ours.range) if ours.range is not None else None
        ), where
        assert c.get("source_unit") == ours.source_unit, where
        q = c.get("quality")
        if ours.quality is None:
            assert q is None, where
        else:
            assert q["column"] == ours.quality[0], where
            assert [int(g) for g in q["good"]] == ours.quality[1], where
        assert "offset_deg" not in c and "slope" not in c, where
    return st


def read_midc(ex):
    df = pd.read_csv(EXAMPLES / ex.folder / ex.data)
    hhmm = df["MST"].astype(np.int64)
    day = pd.to_datetime(df["Year"].astype(str) + "-" + df["DOY"].astype(str).str.zfill(3),
                         format="%Y-%j", utc=True)
    local_as_utc = day + pd.to_timedelta(hhmm // 100, unit="h") + pd.to_timedelta(hhmm % 100,
                                                                                   unit="m")
    utc = local_as_utc + pd.Timedelta(hours=7)  # UTC-7: UTC = local + 7 h
    values = {}
    usable = {}
    for c in ex.channels:
        v = df[c.column].astype(np.float64).to_numpy()
        usable[c.id] = ~np.isnan(v) & (v != -7999.0)
        # mbar -> hPa: 1 mbar = 1 hPa, nothing to change.
        values[c.id] = v
    return utc, values, usable


def read_surfrad(ex):
    df = pd.read_csv(EXAMPLES / ex.folder / ex.data, sep=r"\s+", skiprows=2, header=None)
    col = lambda p: df[p - 1]  # noqa: E731  (1-based, as in the station file)
    utc = pd.to_datetime(
        pd.DataFrame({"year": col(1), "month": col(3), "day": col(4), "hour": col(5),
                      "minute": col(6)}),
        utc=True,
    )
    # The day of the year (column 2) agrees with month and day.
    assert (utc.dt.day_of_year.to_numpy() == col(2).to_numpy()).all()
    values = {}
    usable = {}
    for c in ex.channels:
        v = col(c.column).astype(np.float64).to_numpy()
        flag = col(c.quality[0]).to_numpy()
        good = np.isin(flag, c.quality[1])
        usable[c.id] = ~np.isnan(v) & (v != -9999.9) & good
        values[c.id] = v  # mbar -> hPa: unchanged
    return utc, values, usable


def read_asos(ex):
    df = pd.read_csv(EXAMPLES / ex.folder / ex.data)
    df = df[df["origin"] == "EWR"].reset_index(drop=True)
    utc = pd.to_datetime(df["time_hour"], format="%Y-%m-%dT%H:%M:%SZ", utc=True)
    values = {}
    usable = {}
    for c in ex.channels:
        v = df[c.column].astype(np.float64).to_numpy()  # "NA" was read as NaN
        if c.source_unit == "mph":
            v = v * MPH_TO_M_S
        elif c.source_unit == "degF":
            v = f_to_c(v)
        else:
            assert c.source_unit is None
        usable[c.id] = ~np.isnan(v)
        values[c.id] = v
    return utc, values, usable


def rfc3339(seconds):
    return pd.Timestamp(int(seconds), unit="s", tz="UTC").strftime("%Y-%m-%dT%H:%M:%SZ")


def statistics(ex, utc, values, usable):
    t_ms = (utc - pd.Timestamp(0, tz="UTC")) // pd.Timedelta(milliseconds=1)
    t_ms = t_ms.to_numpy(dtype=np.int64)
    # A row not after the last accepted one is rejected (duplicate, backward).
    prev_max = np.concatenate([[np.iinfo(np.int64).min], np.maximum.accumulate(t_ms)[:-1]])
    accepted = t_ms > prev_max
    print(f"{ex.folder}: {len(t_ms)} rows, {int((~accepted).sum())} not after the last accepted")
    length_ms = ex.interval_s * 1000
    interval = t_ms // length_ms
    rows = []
    for k in range(int(interval[accepted].min()), int(interval[accepted].max()) + 1):
        in_k = accepted & (interval == k)
        start = rfc3339(k * ex.interval_s)
        for c in ex.channels:
            v = values[c.id]
            lo, hi = c.valid_range()
            # NaN compares false, so a missing value is never in range.
            valid = in_k & usable[c.id] & (v >= lo) & (v <= hi)
            n = int(valid.sum())
            mean = vmin = vmax = ""
            if n > 0 and c.kind == "direction":
                cd = np.mod(round_half_away(v[valid] * 100.0), 36000.0)
                rad = np.deg2rad(cd / 100.0)
                s, co = np.mean(np.sin(rad)), np.mean(np.cos(rad))
                if np.hypot(s, co) > 0.0:
                    d = float(np.mod(np.rad2deg(np.arctan2(s, co)), 360.0))
                    mean = repr(0.0 if d >= 360.0 else d)
            elif n > 0:
                inv = round(1.0 / c.resolution)
                assert math.isclose(inv * c.resolution, 1.0)
                q = round_half_away(v[valid] * inv)
                mean = repr(float(q.sum()) / (n * inv))  # exact sum of whole numbers
                vmin = repr(float(q.min()) / inv)
                vmax = repr(float(q.max()) / inv)
            rows.append(f"{ex.folder},{start},{c.id},{n},{mean},{vmin},{vmax}")
    return rows


def main():
    lines = [
        f"# Python {platform.python_version()}, numpy {np.__version__}, pandas {pd.__version__}: "
        "written by tests/scripts/field_files_reference.py from examples/field-files/ "
        "(values quantized to each channel's resolution, directions to 0.01 deg, "
        "half away from zero)",
        "example,interval_start_utc,channel,n_valid,mean,min,max",
    ]
    for ex, reader in ((MIDC, read_midc), (SURFRAD, read_surfrad), (ASOS, read_asos)):
        check_station_file(ex)
        lines.extend(statistics(ex, *reader(ex)))
    OUT.write_text("\n".join(lines) + "\n")
    print(f"wrote {OUT} ({len(lines) - 2} rows)")


if __name__ == "__main__":
    main()

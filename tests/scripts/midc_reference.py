#!/usr/bin/env python3
"""Per-10-minute reference statistics of one day of NREL MIDC station UAT data, with numpy.

Reads  tests/data/midc-uat-20181018-1min.csv  (1-minute rows; see PROVENANCE.md there)
writes tests/data/midc-uat-20181018-10min-numpy.csv, which tests/tests/open_data.rs
compares with qc-core. Run from anywhere:

    python3 tests/scripts/midc_reference.py      # needs numpy (pip install numpy)

Rules, the same the Rust test feeds to qc-core:
- time: Year, DOY and MST (HHMM, local standard time, UTC-7); UTC = MST + 7 h.
  Each 1-minute row is one sample; 10-minute intervals are UTC-aligned
  ([k * 600 s, (k + 1) * 600 s) since the epoch).
- missing: -7999 in a wind column (none occur in this day's wind columns).
- direction: the file's values carry up to 3 decimals (and float noise such as
  0.011000000000000001); qc-core keeps directions to 0.01 degree, rounding
  `value * 100` half away from zero, so this script quantizes identically before
  taking sines and cosines.
- unit-vector mean direction: atan2(mean sin, mean cos) in [0, 360)
  (US EPA-454/R-99-005 sec. 6.2.2); also the mean resultant length and, for
  comparison only, the arithmetic mean of the directions (which is wrong for
  wind direction when the values cross north).
- speed mean: the plain mean of the file's speeds.
"""

import csv
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
SRC = HERE.parent / "data" / "midc-uat-20181018-1min.csv"
OUT = HERE.parent / "data" / "midc-uat-20181018-10min-numpy.csv"

SPEED = "Avg Wind Speed @ 3m [m/s]"
DIRECTION = "Avg Wind Direction @ 3m [deg from N]"
MISSING = -7999.0
INTERVAL_MS = 600_000


def round_half_away(x):
    """Round to the nearest integer, halves away from zero (as C's round())."""
    r = np.trunc(x)
    frac = x - r  # exact for |x| < 2**52
    return r + np.where(frac >= 0.5, 1.0, 0.0) - np.where(frac <= -0.5, 1.0, 0.0)


def main():
    with SRC.open(newline="") as f:
        rows = list(csv.DictReader(f))
    year = np.array([int(r["Year"]) for r in rows])
    doy = np.array([int(r["DOY"]) for r in rows])
    mst = np.array([int(r["MST"]) for r in rows])
    speed = np.array([float(r[SPEED]) for r in rows])
    direction = np.array([float(r[DIRECTION]) for r in rows])

    jan1 = np.array([np.datetime64(f"{y:04d}-01-01", "ms") for y in year])
    utc = (
        jan1
        + (doy - 1) * np.timedelta64(1, "D")
        + (mst // 100) * np.timedelta64(1, "h")
        + (mst % 100) * np.timedelta64(1, "m")
        + np.timedelta64(7, "h")
    )
    t_ms = utc.astype("datetime64[ms]").astype(np.int64)
    interval = t_ms // INTERVAL_MS

    ok = (speed != MISSING) & (direction != MISSING)
    cd = np.mod(round_half_away(direction * 100.0), 36000.0)
    deg = cd / 100.0

    lines = [
        f"# numpy {np.__version__}: per-10-minute statistics of {SRC.name}",
        "# written by tests/scripts/midc_reference.py; direction quantized to 0.01 deg "
        "(half away from zero) as qc-core does",
        "interval_start_utc,samples,speed_mean_m_s,direction_unit_vector_mean_deg,"
        "resultant_length,direction_arithmetic_mean_deg",
    ]
    for k in np.unique(interval):
        sel = (interval == k) & ok
        rad = np.deg2rad(deg[sel])
        s, c = np.mean(np.sin(rad)), np.mean(np.cos(rad))
        mean_dir = np.mod(np.rad2deg(np.arctan2(s, c)), 360.0)
        if mean_dir >= 360.0:
            mean_dir = 0.0
        start = np.datetime64(int(k) * INTERVAL_MS, "ms").astype("datetime64[s]")
        lines.append(
            f"{start}Z,{int(sel.sum())},{float(np.mean(speed[sel]))!r},{float(mean_dir)!r},"
            f"{float(np.hypot(s, c))!r},{float(np.mean(deg[sel]))!r}"
        )
    OUT.write_text("\n".join(lines) + "\n")
    print(f"wrote {OUT} ({len(lines) - 3} intervals)")


if __name__ == "__main__":
    main()

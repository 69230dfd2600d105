#!/usr/bin/env python3
"""Reference statistics of examples/station-history, re-scaled with numpy.

Reads the example's samples (examples/station-history/samples-*.csv) with
numpy alone and writes tests/data/sensor-history-reference.csv, which
host-cli/tests/sensors.rs compares with what `tenmin replay` makes of the same
files with the example's sensor history. Run from anywhere:

    python3 tests/scripts/sensor_history_reference.py   # numpy 2.4.6

Nothing here runs or imports tenmin. The rules, written out from the
example's sensors.toml and the formula of the issue, not from tenmin's code:

- Re-calibration (common practice in wind resource assessment): a logged
  anemometer value is re-scaled to the certificate of the sensor mounted at
  the sample's time,
      v = (v_logged - offset_logger) / slope_logger * slope_cert + offset_cert
  evaluated in numpy float64 in that order (subtract, divide, multiply, add).
  The entries (time from which each is in force, logger transfer function,
  certificate) are copied below from sensors.toml, and the script checks that
  they still agree with it.
- Missing: the code -999 (logged, before re-scaling). Range: 0 to 75 m/s,
  inclusive, of the re-scaled value.
- Quantization: tenmin keeps a speed as a whole number of its resolution
  (0.01 m/s), rounding half away from zero, before it sums anything; this
  script quantizes the re-scaled values the same way, so the Rust test can
  compare tightly. It also writes the mean of the unquantized re-scaled
  values (`mean_exact`), which the test compares within half a quantum.
- Intervals: UTC-aligned 10 minutes. Statistics per interval of ws80a: the
  number of valid samples, mean, standard deviation (divisor N), min, max and
  the gust: the highest mean of 3 consecutive valid samples 1 s apart (the
  3-second gust, WMO-No. 8, part I, 5.8.3 (from memory)), within the interval.

Written with numpy 2.4.6 (checked at run time).
"""

import pathlib
import re
import sys

import numpy as np

NUMPY = "2.4.6"
ROOT = pathlib.Path(__file__).resolve().parents[2]
EXAMPLE = ROOT / "examples" / "station-history"
OUT = ROOT / "tests" / "data" / "sensor-history-reference.csv"

# From examples/station-history/sensors.toml (checked below).
ENTRIES = [
    # (in force from, logger slope, logger offset, certificate slope, certificate offset)
    ("2025-01-20T00:00:00", 0.0462, 0.21, 0.04581, 0.2214),
    ("2025-03-11T10:25:00", 0.0462, 0.21, 0.04627, 0.1952),
]
RESOLUTION_INV = 100.0  # 1 / 0.01 m/s
RANGE = (0.0, 75.0)
MISSING = -999.0
INTERVAL_S = 600
GUST_N = 3


def check_entries():
    text = (EXAMPLE / "sensors.toml").read_text()
    blocks = [b for b in text.split("[[entry]]")[1:] if 'channel = "ws80a"' in b]
    assert len(blocks) == len(ENTRIES), "sensors.toml changed: update ENTRIES"
    for b, (frm, ls, lo, cs, co) in zip(blocks, ENTRIES):
        assert f'from = "{frm}Z"' in b, (frm, b)
        assert f"logger = {{ slope = {ls}, offset = {lo} }}" in b, b
        assert re.search(rf"slope = {cs}, offset = {co}\b", b), b


def main():
    if np.__version__ != NUMPY:
        sys.exit(f"numpy {np.__version__}: this reference was written with numpy {NUMPY}")
    check_entries()
    times = []
    values = []
    for f in sorted(EXAMPLE.glob("samples-*.csv")):
        data = np.genfromtxt(f, delimiter=",", skip_header=1, dtype=None, encoding="utf-8",
                             usecols=(0, 1), names=("time", "ws80a"))
        times.append(np.array([t.rstrip("Z") for t in data["time"]], dtype="datetime64[s]"))
        values.append(data["ws80a"].astype(np.float64))
    t = np.concatenate(times).astype(np.int64)  # seconds since the epoch
    v = np.concatenate(values)
    assert np.all(np.diff(t) > 0), "samples in time order, no duplicates"

    starts = np.array([np.datetime64(e[0], "s").astype(np.int64) for e in ENTRIES])
    which = np.searchsorted(starts, t, side="right") - 1
    assert np.all(which >= 0)
    ls = np.array([e[1] for e in ENTRIES])[which]
    lo = np.array([e[2] for e in ENTRIES])[which]
    cs = np.array([e[3] for e in ENTRIES])[which]
    co = np.array([e[4] for e in ENTRIES])[which]

    missing = np.isnan(v) | (v == MISSING)
    w = (v - lo) / ls * cs + co
    valid = ~missing & (w >= RANGE[0]) & (w <= RANGE[1])
    x = w * RESOLUTION_INV
    q = np.sign(x) * np.floor(np.abs(x) + 0.5)  # half away from zero

    rows = []
    k = t // INTERVAL_S
    for interval in np.unique(k):
        sel = (k == interval) & valid
        qs = q[sel]
        ts = t[sel]
        n = int(sel.sum())
        mean = qs.sum() / n / RESOLUTION_INV
        sd = np.sqrt(((qs - qs.mean()) ** 2).mean()) / RESOLUTION_INV
        gust = -np.inf
        for i in range(n - GUST_N + 1):
            if ts[i + GUST_N - 1] - ts[i] == GUST_N - 1:
                gust = max(gust, qs[i:i + GUST_N].sum() / GUST_N / RESOLUTION_INV)
        start = np.datetime64(int(interval * INTERVAL_S), "s")
        rows.append((f"{start}Z", n, mean, sd, qs.min() / RESOLUTION_INV,
                     qs.max() / RESOLUTION_INV, gust, w[sel].mean()))

    with open(OUT, "w", newline="\n") as f:
        f.write(f"# numpy {np.__version__}; tests/scripts/sensor_history_reference.py\n")
        f.write("start,n_valid,mean,sd,min,max,gust,mean_exact\n")
        for r in rows:
            f.write(",".join([r[0], str(r[1])] + [repr(float(x)) for x in r[2:]]) + "\n")
    print(f"wrote {OUT} ({len(rows)} intervals)")


if __name__ == "__main__":
    main()

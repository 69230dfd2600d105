#!/usr/bin/env python3
"""A plain numpy/pandas replay of a samples CSV, for comparing speed with
`tenmin replay` (bench/run.sh).

It computes what a straightforward analysis script would, per interval and
channel: mean, population standard deviation (ddof=0), min, max, the gust as
the largest rolling mean over the gust window (in samples, within the
interval), and for direction channels the unit-vector mean direction and the
Yamartino (1984) sigma-theta. Missing-value codes, empty fields and NaN are
missing; readings outside the channel's range are dropped; raw counts become
offset + slope * counts; directions get the mounting offset, modulo 360.

It is a yardstick, not a reference: it has none of tenmin's time rules
(duplicate and backward rows are kept, gust runs do not break at gaps), no
screening and no exact integer sums. `--check RECORDS` prints how far its
means, sds, minima and maxima are from a records file of `tenmin replay` on
the same input, as a sanity check that both compute the same quantities.

Usage: pandas_reference.py STATION.toml SAMPLES.csv [-o OUT.csv] [--check RECORDS.csv]
Needs: numpy, pandas (pip install numpy pandas); Python 3.11+ (tomllib).
"""

import argparse
import sys
import time
import tomllib

import numpy as np
import pandas as pd

DEFAULT_RANGE = {"speed": (0.0, 75.0), "direction": (0.0, 360.0), "scalar": (-1e6, 1e6)}


def load_station(path):
    with open(path, "rb") as f:
        st = tomllib.load(f)
    logging = st.get("logging", {})
    interval_s = int(logging.get("interval_s", 600))
    rate = float(logging["sample_rate_hz"])
    missing = [float(v) for v in logging.get("missing_values", [-999, -9999])]
    return interval_s, rate, missing, st["channel"]


def replay(station, samples):
    interval_s, rate, missing, channels = load_station(station)
    df = pd.read_csv(samples, dtype={c["id"]: "float64" for c in channels}, na_values=[""])
    t = pd.to_datetime(df["time"], utc=True, format="ISO8601")
    # Interval starts as a plain (UTC, zone-free) datetime64 array: grouping on
    # zone-aware timestamps goes through Python objects and is slow.
    key = t.dt.tz_convert(None).dt.floor(f"{interval_s}s").to_numpy()
    out = {}
    for ch in channels:
        x = df[ch["id"]].to_numpy(dtype="float64", copy=True)
        x[np.isin(x, missing)] = np.nan
        if "slope" in ch:
            x = ch.get("offset", 0.0) + ch["slope"] * x
        lo, hi = ch.get("range", DEFAULT_RANGE[ch["kind"]])
        if ch["kind"] == "direction":
            x[(x < lo) | (x > hi)] = np.nan
            x = np.mod(x + ch.get("offset_deg", 0.0), 360.0)
            rad = np.deg2rad(x)
            g = pd.DataFrame({"s": np.sin(rad), "c": np.cos(rad)}).groupby(key)
            s, c = g["s"].mean(), g["c"].mean()
            mean = np.mod(np.rad2deg(np.arctan2(s, c)), 360.0)
            eps = np.sqrt(np.clip(1.0 - (s * s + c * c), 0.0, 1.0))
            sigma = np.rad2deg(np.arcsin(eps) * (1.0 + (2.0 / np.sqrt(3.0) - 1.0) * eps**3))
            out[ch["id"]] = pd.DataFrame({"mean": mean, "sd": sigma})
        else:
            x[(x < lo) | (x > hi)] = np.nan
            s = pd.Series(x)
            g = s.groupby(key)
            stats = pd.DataFrame(
                {"mean": g.mean(), "sd": g.std(ddof=0), "min": g.min(), "max": g.max()}
            )
            if ch["kind"] == "speed":
                w = int(round(float(ch.get("gust_window_s", 3)) * rate))
                rolled = g.rolling(w, min_periods=w).mean()
                stats["gust"] = rolled.groupby(level=0).max()
            out[ch["id"]] = stats
    return pd.concat(out, names=["channel", "start"])


def check(result, records):
    rec = pd.read_csv(records)
    rec["start"] = pd.to_datetime(rec["start"], utc=True).dt.tz_convert(None)
    rec = rec.set_index(["channel", "start"])
    for col in ["mean", "sd", "min", "max", "gust"]:
        if col not in result:
            continue
        joined = result[[col]].merge(
            rec[[col]], left_index=True, right_index=True, suffixes=("", "_tenmin")
        ).dropna()
        if joined.empty:
            continue
        d = (joined[col] - joined[col + "_tenmin"]).abs()
        by = d.groupby(level=0).max()
        print(f"check {col}: largest |pandas - tenmin| per channel: "
              + ", ".join(f"{c} {v:.3g}" for c, v in by.items()), file=sys.stderr)


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("station")
    ap.add_argument("samples")
    ap.add_argument("-o", "--output")
    ap.add_argument("--check")
    a = ap.parse_args()
    t0 = time.perf_counter()
    result = replay(a.station, a.samples)
    t1 = time.perf_counter()
    if a.output:
        result.to_csv(a.output)
    print(f"pandas_reference: {len(result)} rows in {t1 - t0:.3f} s (read and compute, "
          f"numpy {np.__version__}, pandas {pd.__version__})", file=sys.stderr)
    if a.check:
        check(result, a.check)


if __name__ == "__main__":
    main()

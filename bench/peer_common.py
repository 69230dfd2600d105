"""Shared by bench/polars_reference.py and bench/duckdb_reference.py: the
command line, the station file's channels, the output file, and the spot
check against tenmin's records.

Pure Python (tomllib, csv), so that each peer's own time is its library's.
"""

import argparse
import csv
import math
import sys
import tomllib

DEFAULT_RANGE = {"speed": (0.0, 75.0), "direction": (0.0, 360.0), "scalar": (-1e6, 1e6)}

# Yamartino (1984) sigma-theta from the mean unit vector (s, c), degrees, as
# bench/pandas_reference.py computes it.
YAMARTINO_B = 2.0 / math.sqrt(3.0) - 1.0


def arguments(doc):
    """The peers' command line (STATION SAMPLES [--threads N] [-o FILE]
    [--check RECORDS]), described by the first paragraph of `doc`."""
    ap = argparse.ArgumentParser(description=doc.split("\n\n")[0])
    ap.add_argument("station")
    ap.add_argument("samples")
    ap.add_argument("--threads", type=int)
    ap.add_argument("-o", "--output")
    ap.add_argument("--check")
    return ap.parse_args()


def write_rows(path, rows):
    """Writes `rows` {(channel, start): {stat: value}} as CSV: channel, start,
    mean, sd, min, max, gust (a missing statistic empty, floats by repr)."""
    with open(path, "w") as f:
        f.write("channel,start,mean,sd,min,max,gust\n")
        for (ch, start), st in rows.items():
            vals = ["" if st.get(k) is None else repr(st[k]) for k in ("mean", "sd", "min", "max", "gust")]
            f.write(f"{ch},{start}," + ",".join(vals) + "\n")


def load_station(path):
    """(interval_s, rate_hz, missing codes, channel tables) of a station file."""
    with open(path, "rb") as f:
        st = tomllib.load(f)
    logging = st.get("logging", {})
    interval_s = int(logging.get("interval_s", 600))
    rate = float(logging["sample_rate_hz"])
    missing = [float(v) for v in logging.get("missing_values", [-999, -9999])]
    return interval_s, rate, missing, st["channel"]


def gust_window(ch, rate):
    """The gust window in samples."""
    return int(round(float(ch.get("gust_window_s", 3)) * rate))


def direction_stats(s, c):
    """Mean direction (degrees, 0 to 360) and Yamartino sigma-theta of the
    mean unit vector (s, c)."""
    mean = math.degrees(math.atan2(s, c)) % 360.0
    eps = math.sqrt(min(max(1.0 - (s * s + c * c), 0.0), 1.0))
    sigma = math.degrees(math.asin(eps) * (1.0 + YAMARTINO_B * eps**3))
    return mean, sigma


def check(rows, records, name, tol=1e-9, tol_direction=1e-6):
    """Compares `rows` {(channel, start "YYYY-MM-DDTHH:MM:SSZ"): {stat: value}}
    with tenmin's records CSV; prints the largest differences per statistic
    and returns whether every one is within `tol` (directions: `tol_direction`
    degrees, as tenmin's unit vectors come from integer Q30 tables, about 1e-7
    degrees from the true mean, qc-core's crate docs)."""
    worst = {}
    kinds = {}
    n = 0
    with open(records, newline="") as f:
        for rec in csv.DictReader(f):
            key = (rec["channel"], rec["start"])
            mine = rows.get(key)
            if mine is None:
                continue
            for stat, v in mine.items():
                t = rec.get(stat, "")
                if t == "" or v is None or (isinstance(v, float) and math.isnan(v)):
                    continue
                d = abs(float(t) - v)
                if mine.get("_kind") == "direction" and stat == "mean":
                    d = min(d, 360.0 - d)
                k = (stat, rec["channel"])
                worst[k] = max(worst.get(k, 0.0), d)
                kinds[k] = mine.get("_kind", "")
                n += 1
    ok = n > 0
    by_stat = {}
    for (stat, ch), d in worst.items():
        limit = tol_direction if kinds[(stat, ch)] == "direction" else tol
        ok = ok and d <= limit
        by_stat[stat] = max(by_stat.get(stat, 0.0), d)
    print(f"{name} check against tenmin: {n} values compared; largest |difference| "
          + ", ".join(f"{s} {d:.2g}" for s, d in sorted(by_stat.items()))
          + (" (within 1e-9, directions 1e-6 deg)" if ok else " NOT WITHIN THE TOLERANCE"),
          file=sys.stderr)
    return ok

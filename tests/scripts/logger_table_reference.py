#!/usr/bin/env python3
"""Invented samples and the invented logger tables that check `tenmin verify`
of another logger's table, computed with numpy and pandas.

Written with numpy 2.4.6 and pandas 3.1.1 (Python's own `fractions` and
`decimal` for exact rounding). Nothing here runs or imports tenmin. Run from
anywhere:

    python3 tests/scripts/logger_table_reference.py

It writes:

- examples/logger-table/samples.csv: two hours of invented 1 Hz samples in
  UTC, columns `time,ws80a,wd78` (speed in m/s with 2 decimals, direction in
  degrees with 1 decimal; an empty field is a missing reading). No real
  place: the weather is made up, with planted intervals (only 4 valid speeds,
  1 valid speed, the logger's sensors down for a whole interval, a direction
  that averages just below north, a light wind that meanders);
- examples/logger-table/logger-table.csv: the table of a logger that writes
  exactly the layout of the issue ("time_end" local at UTC+01:00 without a
  zone, stamped at the interval's end; speed mean, min, max and gust with 2
  decimals; sd with divisor N-1 and 3 decimals; gust = the largest single
  sample; direction: unit-vector mean and Yamartino sigma-theta, 1 decimal,
  360 written as 0.0; an empty field where there is no value);
- tests/data/logger-tables/<name>.csv: the same samples as tables of other
  conventions, and tests/data/logger-tables/variants.csv listing each table's
  conventions, which host-cli/tests/logger_table.rs declares and infers.

The conventions, as this script computes them (from their definitions, not
from tenmin's code):

- A sample is valid when its field is not empty. Intervals are 10 minutes,
  aligned to UTC; an interval holds the samples stamped in [start, end).
- mean: numpy.mean of the valid speeds; computed exactly with
  fractions.Fraction from the written decimals before rounding.
- sd: numpy.std with ddof=0 (divisor N) or ddof=1 (divisor N-1; no value
  from fewer than 2 samples).
- min, max: of the valid samples (exact, from the written decimals).
- gust or max "running_mean": the largest mean of 3 consecutive valid samples
  (a missing sample breaks the run: windows never span it), numpy.convolve
  over each run; no value without a full window. "sample": the largest sample.
- direction mean "unit_vector": degrees(arctan2(mean sin, mean cos)) mod 360
  (EPA-454/R-99-005, 6.2.2); "speed_weighted": the same of speed times sin and
  cos, over the samples where both are valid.
- direction spread, from R = hypot(mean sin, mean cos): "yamartino"
  asin(eps) (1 + (2/sqrt(3) - 1) eps^3), eps = sqrt(1 - R^2) (Yamartino 1984,
  EPA-454/R-99-005, 6.2.1); "circular" sqrt(-2 ln R) (Mardia and Jupp 2000,
  2.3.11); "angular" sqrt(2 (1 - R)) (Batschelet 1981).
- rounding: "half_even" with Python's exact round() on a Fraction for the
  exact statistics and decimal.Decimal(float).quantize(ROUND_HALF_EVEN) for
  the others; "truncate" likewise with ROUND_DOWN.
- north: "0" writes a direction mean that rounds to 360 as 0; "360" writes
  one that rounds to 0 as 360.
"""

import math
import sys
from decimal import ROUND_DOWN, ROUND_HALF_EVEN, Decimal
from fractions import Fraction
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = ROOT / "examples" / "logger-table"
DATA = ROOT / "tests" / "data" / "logger-tables"

START = pd.Timestamp("2026-03-01T00:00:00Z")
SECONDS = 2 * 3600
INTERVAL = 600
W = 3  # gust window, samples (3 s at 1 Hz)
B = 2.0 / math.sqrt(3.0) - 1.0

# name, label, zone (hours east of UTC), speed decimals, sd decimals, direction
# decimals, divisor, gust, max, direction mean, spread, rounding, north, and
# the speed's min_samples (fewer valid speeds: every speed field left empty)
VARIANTS = [
    ("example", "end", 1, 2, 3, 1, "n-1", "sample", "sample", "unit_vector", "yamartino", "half_even", "0", 1),
    ("start-utc-1dec", "start", 0, 1, 1, 1, "n", "running_mean", "sample", "speed_weighted", "circular", "half_even", "0", 1),
    ("end-4dec", "end", 1, 4, 4, 4, "n-1", "running_mean", "running_mean", "unit_vector", "angular", "half_even", "0", 1),
    ("start-3dec-truncate", "start", 1, 3, 3, 3, "n", "sample", "sample", "speed_weighted", "yamartino", "truncate", "0", 1),
    ("end-utc-north360", "end", 0, 2, 2, 1, "n", "sample", "sample", "unit_vector", "angular", "half_even", "360", 1),
    ("end-min-samples-300", "end", 1, 2, 3, 1, "n-1", "sample", "sample", "unit_vector", "yamartino", "half_even", "0", 300),
]


def invent():
    """Two hours of 1 Hz speed and direction, as text, with planted intervals."""
    rng = np.random.default_rng(20260301)
    t = np.arange(SECONDS)
    k = t // INTERVAL
    # A slowly varying mean wind and direction, turbulence on top.
    mean_ws = 7.0 + 1.5 * np.sin(t / 1500.0)
    ws = mean_ws + rng.normal(0.0, 0.9, SECONDS) + 0.6 * np.sin(t / 7.0)
    wd = 250.0 + 8.0 * np.sin(t / 900.0) + rng.normal(0.0, 9.0, SECONDS)
    # Interval 4: a wind just west of north, averaging about 359.98 degrees.
    m4 = k == 4
    wd[m4] = np.where(rng.random(m4.sum()) < 0.6, 359.9, 0.1)
    # Interval 6: a light wind that meanders over a wide sector.
    m6 = k == 6
    ws[m6] = 1.2 + np.abs(rng.normal(0.0, 0.5, m6.sum()))
    wd[m6] = 180.0 + rng.normal(0.0, 70.0, m6.sum())
    ws = np.clip(ws, 0.0, 40.0)
    wd = np.mod(wd, 360.0)
    ws_txt = np.array([f"{v:.2f}" for v in ws], dtype=object)
    wd_txt = np.array([f"{v:.1f}" for v in wd], dtype=object)
    wd_txt[wd_txt == "360.0"] = "0.0"
    # Scattered missing readings (about 1 %).
    ws_txt[rng.random(SECONDS) < 0.01] = ""
    wd_txt[rng.random(SECONDS) < 0.01] = ""
    # Interval 2: only 4 valid speeds; interval 7: only 1.
    for kk, keep in ((2, 4), (7, 1)):
        idx = np.flatnonzero(k == kk)
        drop = idx[~np.isin(np.arange(idx.size), rng.choice(idx.size, keep, replace=False))]
        ws_txt[drop] = ""
    # Interval 5: the sensors are down (rows written, fields empty).
    ws_txt[k == 5] = ""
    wd_txt[k == 5] = ""
    times = [(START + pd.Timedelta(seconds=int(s))).strftime("%Y-%m-%dT%H:%M:%SZ") for s in t]
    return pd.DataFrame({"time": times, "ws80a": ws_txt, "wd78": wd_txt})


def runs(valid):
    """Index runs of consecutive True."""
    out, cur = [], []
    for i, v in enumerate(valid):
        if v:
            cur.append(i)
        elif cur:
            out.append(cur)
            cur = []
    if cur:
        out.append(cur)
    return out


def stats(ws_txt, wd_txt):
    """Every alternative of one interval: exact ones as Fractions, others as floats."""
    s = {}
    vmask = np.array([x != "" for x in ws_txt])
    exact = [Fraction(x) for x in ws_txt[vmask]]
    v = np.array([float(x) for x in ws_txt[vmask]])
    n = v.size
    if n:
        s["mean"] = sum(exact, Fraction(0)) / n
        s["min"] = min(exact)
        s["max sample"] = max(exact)
        s["sd n"] = float(np.std(v, ddof=0))
        if n >= 2:
            s["sd n-1"] = float(np.std(v, ddof=1))
        best = None
        allv = [Fraction(x) if x != "" else None for x in ws_txt]
        for r in runs(vmask):
            if len(r) >= W:
                f = np.convolve(np.array([float(allv[i]) for i in r]), np.ones(W), "valid")
                j = int(np.argmax(f))
                cand = sum((allv[i] for i in r[j : j + W]), Fraction(0)) / W
                best = cand if best is None else max(best, cand)
        if best is not None:
            s["max running_mean"] = best
    dmask = np.array([x != "" for x in wd_txt])
    d = np.array([float(x) for x in wd_txt[dmask]])
    if d.size:
        th = np.radians(d)
        sa, ca = np.mean(np.sin(th)), np.mean(np.cos(th))
        s["dir unit_vector"] = float(np.degrees(np.arctan2(sa, ca)) % 360.0)
        r = min(1.0, float(np.hypot(sa, ca)))
        eps = math.sqrt(max(0.0, 1.0 - r * r))
        s["spread yamartino"] = math.degrees(math.asin(eps) * (1.0 + B * eps**3))
        s["spread circular"] = math.degrees(math.sqrt(max(0.0, -2.0 * math.log(r))))
        s["spread angular"] = math.degrees(math.sqrt(2.0 * (1.0 - r)))
        both = vmask & dmask
        if both.any():
            u = np.array([float(x) for x in ws_txt[both]])
            tb = np.radians(np.array([float(x) for x in wd_txt[both]]))
            s["dir speed_weighted"] = float(
                np.degrees(np.arctan2(np.mean(u * np.sin(tb)), np.mean(u * np.cos(tb)))) % 360.0
            )
    return s


def rounded(x, d, rule):
    """x (Fraction or float) to d decimals under rule, as text."""
    if x is None:
        return ""
    if isinstance(x, Fraction):
        if rule == "half_even":
            q = round(x, d)
        else:
            q = Fraction(math.trunc(x * 10**d), 10**d)
        return f"{Decimal(q.numerator) / Decimal(q.denominator):.{d}f}"
    mode = ROUND_HALF_EVEN if rule == "half_even" else ROUND_DOWN
    return str(Decimal(x).quantize(Decimal(1).scaleb(-d), rounding=mode))


def north(text, d, rule):
    if rule == "0" and float(text) == 360.0:
        return f"{0:.{d}f}"
    if rule == "360" and text != "" and float(text) == 0.0:
        return f"{360:.{d}f}"
    return text


def table(samples, v):
    name, label, zone, ds, dsd, dd, divisor, gust, mx, dmean, spread, rule, nth, few = v
    col = "time_end" if label == "end" else "time_start"
    rows = []
    t = np.arange(SECONDS)
    k = t // INTERVAL
    for kk in range(SECONDS // INTERVAL):
        m = k == kk
        ws = samples["ws80a"].to_numpy()[m]
        s = stats(ws, samples["wd78"].to_numpy()[m])
        if sum(1 for x in ws if x != "") < few:
            for key in [x for x in s if not x.startswith(("dir", "spread"))]:
                del s[key]
        start = START + pd.Timedelta(seconds=int(kk * INTERVAL))
        stamp = start + pd.Timedelta(seconds=INTERVAL if label == "end" else 0)
        local = (stamp + pd.Timedelta(hours=zone)).strftime("%Y-%m-%d %H:%M:%S")
        dm = rounded(s.get(f"dir {dmean}"), dd, rule)
        rows.append(
            {
                col: local,
                "ws80a_mean": rounded(s.get("mean"), ds, rule),
                "ws80a_sd": rounded(s.get(f"sd {divisor}"), dsd, rule),
                "ws80a_min": rounded(s.get("min"), ds, rule),
                "ws80a_max": rounded(s.get(f"max {mx}"), ds, rule),
                "ws80a_gust": rounded(s.get(f"max {gust}"), ds, rule),
                "wd78_mean": north(dm, dd, nth) if dm else "",
                "wd78_sd": rounded(s.get(f"spread {spread}"), dd, rule),
            }
        )
    return pd.DataFrame(rows)


def main():
    samples = invent()
    EXAMPLE.mkdir(parents=True, exist_ok=True)
    DATA.mkdir(parents=True, exist_ok=True)
    samples.to_csv(EXAMPLE / "samples.csv", index=False, lineterminator="\n")
    manifest = []
    for v in VARIANTS:
        df = table(samples, v)
        path = EXAMPLE / "logger-table.csv" if v[0] == "example" else DATA / f"{v[0]}.csv"
        df.to_csv(path, index=False, lineterminator="\n")
        manifest.append(
            dict(
                zip(
                    ["name", "label", "zone_h", "speed_decimals", "sd_decimals", "direction_decimals",
                     "divisor", "gust", "max", "direction_mean", "spread", "rounding", "north",
                     "min_samples"],
                    v,
                )
            )
        )
        print(f"wrote {path.relative_to(ROOT)}", file=sys.stderr)
    pd.DataFrame(manifest).to_csv(DATA / "variants.csv", index=False, lineterminator="\n")


if __name__ == "__main__":
    main()

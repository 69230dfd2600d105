#!/usr/bin/env python3
"""Reference values for the site tables of `tenmin report`, computed with pandas
and numpy on the open ASOS JFK 2013 hourly winds already in tests/data.

Writes tests/data/report-site-reference.csv (first line: library versions).
host-cli/tests/report.rs turns the same file into records with the same rules,
runs `tenmin report` and compares its monthly, month-hour and redundant-pairs
tables with these values.

    python3 tests/scripts/report_site_reference.py      # pip install numpy pandas

Rules (the Rust test applies the same):
- each row of tests/data/report-asos-jfk-2013.csv is the hourly interval
  starting at time_hour (UTC); the grid runs from the first to the last
  time_hour; hours without a row, and rows whose value is NA, are missing.
- ws (m/s) = wind_speed (mph) * 0.44704; t (degC) = (temp (F) - 32) / 1.8.
- ws2, an invented redundant partner of ws: for the k-th row (0-based) with a
  speed, ws2 = 0.97 ws + 0.1 + 0.02 ((37 k) mod 11 - 5), written with three
  decimals ("%.3f"), so both sides read the same numbers.
- monthly: per channel and calendar month of the grid, the hours of the grid,
  the hours with a value, their mean and maximum (pandas groupby).
- month_hour: mean of ws by calendar month and UTC hour (pandas groupby).
- pair: numpy.polyfit(ws, ws2, 1) over rows with both, R^2 = corrcoef^2.
"""
import os
import sys

import numpy as np
import pandas as pd

here = os.path.dirname(os.path.abspath(__file__))
data = os.path.join(here, "..", "data")

raw = pd.read_csv(os.path.join(data, "report-asos-jfk-2013.csv"), na_values=["NA"])
raw["time"] = pd.to_datetime(raw["time_hour"], utc=True)
raw["ws"] = raw["wind_speed"] * 0.44704
raw["t"] = (raw["temp"] - 32.0) / 1.8
ws2 = []
for k, v in enumerate(raw["ws"]):
    if np.isnan(v):
        ws2.append(np.nan)
    else:
        ws2.append(float("%.3f" % (0.97 * v + 0.1 + 0.02 * ((37 * k) % 11 - 5))))
raw["ws2"] = ws2

grid = pd.date_range(raw["time"].min(), raw["time"].max(), freq="h", tz="UTC")
g = pd.DataFrame({"time": grid}).merge(raw[["time", "ws", "t", "ws2"]], on="time", how="left")
g["month"] = g["time"].dt.strftime("%Y-%m")
g["cal_month"] = g["time"].dt.month
g["hour"] = g["time"].dt.hour

rows = []
for ch in ("ws", "t", "ws2"):
    grp = g.groupby("month")[ch]
    for month, n in grp.size().items():
        rows.append(("monthly", f"{ch}|{month}|intervals", int(n)))
    for month, n in grp.count().items():
        rows.append(("monthly", f"{ch}|{month}|passing", int(n)))
    for month, m in grp.mean().items():
        rows.append(("monthly", f"{ch}|{month}|mean", repr(float(m))))
    for month, m in grp.max().items():
        rows.append(("monthly", f"{ch}|{month}|max_mean", repr(float(m))))
mh = g.groupby(["cal_month", "hour"])["ws"].mean()
for (m, h), v in mh.items():
    if not np.isnan(v):
        rows.append(("month_hour", f"ws|{m}|h{h:02d}", repr(float(v))))
both = g.dropna(subset=["ws", "ws2"])
slope, offset = np.polyfit(both["ws"].to_numpy(), both["ws2"].to_numpy(), 1)
r = np.corrcoef(both["ws"].to_numpy(), both["ws2"].to_numpy())[0, 1]
rows += [
    ("pair", "n", len(both)),
    ("pair", "slope", repr(float(slope))),
    ("pair", "offset", repr(float(offset))),
    ("pair", "r2", repr(float(r * r))),
]

out = os.path.join(data, "report-site-reference.csv")
with open(out, "w") as f:
    f.write(
        "# report_site_reference.py: python %s, numpy %s, pandas %s\n"
        % (sys.version.split()[0], np.__version__, pd.__version__)
    )
    f.write("check,key,value\n")
    for c, k, v in rows:
        f.write(f"{c},{k},{v}\n")
print(f"wrote {out} ({len(rows)} values)")

"""Writes the invented samples of examples/station-history (numpy 2.4.6).

The Tarnbeck Moor demo mast (invented; no real place), 2025-03-11, 10:00 to
12:00 UTC at 1 Hz: the values the logger recorded with its generic transfer
function. At the site visit the anemometer ws80a was swapped at 10:25:00
(disconnected from 10:23:30: missing-value code -999) and the vane wd78
re-aligned at 10:47:30. Run from this folder: python3 make_samples.py
"""

import numpy as np

rng = np.random.default_rng(20250311)
t0 = np.datetime64("2025-03-11T10:00:00")
n = 7200
t = t0 + np.arange(n).astype("timedelta64[s]")

def red(n, tau, sd):
    """First-order autoregressive noise, time constant tau samples."""
    a = np.exp(-1.0 / tau)
    e = rng.normal(0.0, sd * np.sqrt(1 - a * a), n)
    x = np.empty(n)
    x[0] = e[0]
    for i in range(1, n):
        x[i] = a * x[i - 1] + e[i]
    return x

base = 8.0 + 1.5 * np.sin(np.arange(n) / n * np.pi)
ws80a = np.clip(base + red(n, 8.0, 1.0), 0.0, None)
ws60 = np.clip(0.9 * base + red(n, 8.0, 0.9), 0.0, None)
wd78 = np.mod(248.0 + red(n, 30.0, 9.0), 360.0)

ws80a = np.round(ws80a, 2)
ws60 = np.round(ws60, 2)
wd78 = np.round(wd78, 1)
# The anemometer disconnected for the swap.
gap = (np.arange(n) >= 23 * 60 + 30) & (np.arange(n) < 25 * 60)
ws80a[gap] = -999

def write(name, lo, hi):
    with open(name, "w", newline="\n") as f:
        f.write("time,ws80a,ws60,wd78\n")
        for i in range(lo, hi):
            stamp = str(t[i]) + "Z"
            a = "-999" if ws80a[i] == -999 else f"{ws80a[i]:.2f}"
            f.write(f"{stamp},{a},{ws60[i]:.2f},{wd78[i]:.1f}\n")

write("samples-1.csv", 0, 3600)
write("samples-2.csv", 3600, 7200)

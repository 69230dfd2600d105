#!/usr/bin/env python3
"""Reference values for `tenmin report`, computed with numpy and scipy on open data.

Reads the shared open data (default /work/shared/data, or the folder given as the
first argument) and writes into tests/data:

- report-tmy3-723170-wind.csv: the wind columns of the TMY3 file for station
  723170, copied unchanged (Date, Time, Wdir, Wspd with their source flags);
- report-asos-jfk-2013.csv: the JFK rows of the 2013 ASOS hourly file, columns
  time_hour, temp (F), wind_dir, wind_speed (mph) copied unchanged ("NA" kept);
- report-reference.csv: the reference values, first line naming the library
  versions.

host-cli/tests/report.rs turns the two copies into records files with the rules
below, runs `tenmin report` on them and compares its tables with these values.

    python3 tests/scripts/report_reference.py [SHARED_DATA_DIR]   # pip install numpy scipy

Rules (the Rust test applies the same):
- TMY3: row k (0-based) is the hourly interval starting k hours after
  2001-01-01T00:00:00Z (a typical year is consecutive hours; its months come
  from different source years, so the file's own years are not used). One
  sample an interval, valid; speed channel `ws` (10 m), vane `wd` linked to it.
- ASOS JFK: each row is the hourly interval starting at time_hour (UTC). The grid
  runs from the first to the last time_hour; hours without a row are missing,
  and so is a row whose wind_speed is NA. Speed in m/s = mph * 0.44704;
  temperature in degC = (F - 32) / 1.8.
- Weibull fit: speeds above 0 (maximum likelihood leaves zeros out).
- Wind rose: calm when the speed is below 0.5 m/s (left out of the sectors);
  sector of direction d for n sectors: numpy.histogram of (d + w/2) mod 360 with
  bin edges 0, w, ..., 360, w = 360 / n (lower edge inclusive).
- Missing data vs hour of day / month / temperature: contingency table of bins x
  (present, missing), empty bins dropped; scipy.stats.chi2_contingency without
  continuity correction; G with lambda_="log-likelihood"; Cramer's V with
  scipy.stats.contingency.association(method="cramer"). Temperature bins are
  2 degC wide from floor(min / 2) * 2, over the hours whose temperature is present.
"""

import csv
import math
import platform
import sys
from datetime import datetime, timedelta, timezone
from pathlib import Path

import numpy as np
import scipy
from scipy import optimize, special, stats

ROOT = Path(__file__).resolve().parents[2]
DATA = ROOT / "tests" / "data"
RHO = 1.225
CALM = 0.5


def copy_tmy3(src: Path) -> Path:
    out = DATA / "report-tmy3-723170-wind.csv"
    with src.open(newline="") as f:
        rows = list(csv.reader(f))
    head = rows[1]
    keep = [head.index(c) for c in (
        "Date (MM/DD/YYYY)", "Time (HH:MM)", "Wdir (degrees)", "Wdir source",
        "Wspd (m/s)", "Wspd source")]
    with out.open("w", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        for r in rows[1:]:
            w.writerow([r[i] for i in keep])
    return out


def copy_asos(src: Path) -> Path:
    out = DATA / "report-asos-jfk-2013.csv"
    with src.open(newline="") as f:
        rows = list(csv.DictReader(f))
    with out.open("w", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["time_hour", "temp", "wind_dir", "wind_speed"])
        for r in rows:
            if r["origin"] == "JFK":
                w.writerow([r["time_hour"], r["temp"], r["wind_dir"], r["wind_speed"]])
    return out


def weibull_root(v):
    """The ML equation 1/k = sum(v^k ln v)/sum(v^k) - mean(ln v), solved tightly."""
    lv = np.log(v)
    vmax = v.max()

    def g(k):
        x = (v / vmax) ** k
        return (x * lv).sum() / x.sum() - lv.mean() - 1.0 / k

    k = optimize.brentq(g, 0.05, 50.0, xtol=1e-15, rtol=4 * np.finfo(float).eps)
    c = vmax * np.mean((v / vmax) ** k) ** (1.0 / k)
    return k, c


def table_tests(out, check, bins, missing):
    """bins, missing: per-interval arrays; writes the test of bins x (present, missing)."""
    keys = sorted(set(bins))
    t = np.array([[np.sum((bins == b) & ~missing), np.sum((bins == b) & missing)] for b in keys])
    t = t[t.sum(axis=1) > 0]
    chi2, p, dof, _ = stats.chi2_contingency(t, correction=False)
    g, pg, _, _ = stats.chi2_contingency(t, correction=False, lambda_="log-likelihood")
    v = stats.contingency.association(t, method="cramer", correction=False)
    src = "scipy.stats.chi2_contingency(correction=False)"
    out += [
        (check, "n_missing", int(t[:, 1].sum()), "count"),
        (check, "rows", len(t), "non-empty bins"),
        (check, "chi2", chi2, src),
        (check, "p_chi2", p, src),
        (check, "dof", dof, src),
        (check, "g", g, src + ', lambda_="log-likelihood"'),
        (check, "p_g", pg, src + ', lambda_="log-likelihood"'),
        (check, "cramers_v", v, 'scipy.stats.contingency.association(method="cramer")'),
    ]


def main():
    shared = Path(sys.argv[1]) if len(sys.argv) > 1 else Path("/work/shared/data")
    tmy = copy_tmy3(shared / "tmy3-723170-hourly.csv")
    asos = copy_asos(shared / "asos-nyc-2013-hourly.csv")
    out = []

    # TMY3: Weibull ML fit, histogram, wind rose.
    with tmy.open(newline="") as f:
        rows = list(csv.DictReader(f))
    d = np.array([float(r["Wdir (degrees)"]) for r in rows])
    v = np.array([float(r["Wspd (m/s)"]) for r in rows])
    pos = v[v > 0]
    k_fit, loc, c_fit = stats.weibull_min.fit(pos, floc=0)
    k, c = weibull_root(pos)
    out += [
        ("tmy3_weibull", "n_positive", len(pos), "count"),
        ("tmy3_weibull", "k_scipy_fit", k_fit, "scipy.stats.weibull_min.fit(floc=0)"),
        ("tmy3_weibull", "c_scipy_fit", c_fit, "scipy.stats.weibull_min.fit(floc=0)"),
        ("tmy3_weibull", "k_root", k, "scipy.optimize.brentq on the ML equation, xtol 1e-15"),
        ("tmy3_weibull", "c_root", c, "(mean v^k)^(1/k) at k_root"),
        ("tmy3_weibull", "mean_root", stats.weibull_min(k, scale=c).mean(),
         "scipy.stats.weibull_min(k_root, scale=c_root).mean()"),
        ("tmy3_weibull", "power_density_root", 0.5 * RHO * c**3 * special.gamma(1 + 3 / k),
         "0.5 rho c^3 scipy.special.gamma(1 + 3/k), rho 1.225"),
        ("tmy3_weibull", "mean", v.mean(), "numpy.mean of all speeds"),
    ]
    edges = np.arange(0, math.floor(v.max()) + 2)
    h, _ = np.histogram(v, bins=edges)
    for i, n in enumerate(h):
        out.append(("tmy3_histogram", f"count:{i}", int(n), "numpy.histogram, 1 m/s bins"))
    moving = v >= CALM
    out.append(("tmy3_rose", "calm", int((~moving).sum()), "count of speeds below 0.5 m/s"))
    for n in (16, 36):
        w = 360.0 / n
        sh = np.mod(d[moving] + w / 2, 360.0)
        counts, _ = np.histogram(sh, bins=np.linspace(0, 360, n + 1))
        idx = np.minimum((sh // w).astype(int), n - 1)
        sums = np.bincount(idx, weights=v[moving], minlength=n)
        cubes = np.bincount(idx, weights=v[moving] ** 3, minlength=n)
        for s in range(n):
            out.append((f"tmy3_rose{n}", f"count:{s}", int(counts[s]), "numpy.histogram"))
            if counts[s]:
                out.append((f"tmy3_rose{n}", f"mean_speed:{s}", sums[s] / counts[s],
                            "numpy.bincount(weights=v) / count"))
                out.append((f"tmy3_rose{n}", f"power_density:{s}", 0.5 * RHO * cubes[s] / counts[s],
                            "0.5 rho numpy.bincount(weights=v^3) / count"))

    # ASOS JFK: missingness against hour, month and temperature.
    with asos.open(newline="") as f:
        rows = list(csv.DictReader(f))
    parse = lambda s: datetime.strptime(s, "%Y-%m-%dT%H:%M:%SZ").replace(tzinfo=timezone.utc)
    by_time = {parse(r["time_hour"]): r for r in rows}
    t0, t1 = min(by_time), max(by_time)
    n = int((t1 - t0).total_seconds() // 3600) + 1
    grid = [t0 + timedelta(hours=i) for i in range(n)]
    missing = np.array([t not in by_time or by_time[t]["wind_speed"] == "NA" for t in grid])
    hours = np.array([t.hour for t in grid])
    months = np.array([t.month for t in grid])
    out.append(("asos_jfk", "intervals", n, "hours from first to last time_hour"))
    table_tests(out, "asos_jfk_hour", hours, missing)
    table_tests(out, "asos_jfk_month", months, missing)
    temp = np.array([
        (float(by_time[t]["temp"]) - 32.0) / 1.8 if t in by_time and by_time[t]["temp"] != "NA" else np.nan
        for t in grid])
    have = ~np.isnan(temp)
    lo = math.floor(np.nanmin(temp) / 2.0) * 2.0
    tbins = np.floor((temp[have] - lo) / 2.0).astype(int)
    table_tests(out, "asos_jfk_temperature", tbins, missing[have])

    ref = DATA / "report-reference.csv"
    with ref.open("w", newline="") as f:
        f.write(f"# report_reference.py: python {platform.python_version()}, numpy {np.__version__}, "
                f"scipy {scipy.__version__}\n")
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["check", "key", "value", "source"])
        for check, key, value, src in out:
            w.writerow([check, key, repr(float(value)) if isinstance(value, float) or hasattr(value, "dtype") and value.dtype.kind == "f" else value, src])
    print(f"wrote {tmy.relative_to(ROOT)}, {asos.relative_to(ROOT)}, {ref.relative_to(ROOT)} ({len(out)} values)")


if __name__ == "__main__":
    main()

//! The tables a campaign report carries beside the diagnostics: outages,
//! a monthly summary per channel, the month-by-hour mean speed, the screening
//! thresholds in force, the redundant-anemometer comparison and air density.
//!
//! Every mean here is a mean of 10-minute (interval) means that pass
//! screening ([`qc_core::screen::passes`]); a month or hour without such an
//! interval is empty, never zero.

use qc_core::{Kind, Month, Screen};

use super::data::Dataset;
use super::missing::is_temperature;
use super::stats::mean;
use super::table::{int, num, pct, text, Table};
use crate::outages::{self, Outage, Outages};
use crate::timefmt::Rfc3339;

/// The outages of the records ([`crate::outages`]): intervals that fail
/// screening, merged into runs per channel and across channels. A slot with
/// no records row is cause "no row"; `n_excluded` above 0 or the flag
/// `excluded` is "excluded".
pub fn outages(d: &Dataset) -> Vec<Outage> {
    let mut o = Outages::new(d.channels.len(), d.interval_ms);
    for i in 0..d.len {
        let causes: Vec<_> = d
            .channels
            .iter()
            .map(|s| match &s.rows[i] {
                None => (Some(outages::Cause::NoRow), qc_core::Flags::EMPTY),
                Some(r) => (
                    outages::cause_of(r.passed, r.tally.valid, r.n_excluded, r.flags),
                    r.flags,
                ),
            })
            .collect();
        o.interval(d.t0_ms + i as i64 * d.interval_ms, &causes);
    }
    o.finish()
}

fn channel_list(d: &Dataset, chans: &[usize]) -> String {
    if chans.len() == d.channels.len() && chans.len() > 1 {
        return "all channels".into();
    }
    chans
        .iter()
        .map(|&c| d.channels[c].id())
        .collect::<Vec<_>>()
        .join(" ")
}

/// The outage table.
pub fn outage_table(d: &Dataset, list: &[Outage]) -> Table {
    let mut t = Table::new(
        "outages",
        &[
            ("start", "start (UTC)"),
            ("end", "end (UTC)"),
            ("duration_min", "minutes"),
            ("duration", "duration"),
            ("channels", "channels"),
            ("cause", "cause"),
        ],
    );
    for o in list {
        t.push(vec![
            text(Rfc3339(o.start).to_string()),
            text(Rfc3339(o.end).to_string()),
            int((o.duration_ms() / 60_000).max(0) as u64),
            text(outages::duration_text(o.duration_ms())),
            text(channel_list(d, &o.channels)).class("wrapn"),
            text(o.cause_text()).class("wrapn"),
        ]);
    }
    t
}

/// Calendar months of the grid, in order.
pub fn months(d: &Dataset) -> Vec<Month> {
    let mut m: Vec<Month> = Vec::new();
    for i in 0..d.len {
        let x = d.start(i).month();
        if m.last() != Some(&x) {
            m.push(x);
        }
    }
    m
}

/// Monthly summary: per channel and calendar month, the intervals, those
/// passing screening, their share, the mean of the passing interval means
/// (not for vanes: a plain mean of angles is meaningless), the largest mean,
/// and for anemometers the largest gust. Speed channels carry their height.
pub fn monthly_table(d: &Dataset) -> Table {
    let mut t = Table::new(
        "monthly",
        &[
            ("channel", "channel"),
            ("height_m", "height (m)"),
            ("month", "month"),
            ("intervals", "intervals"),
            ("passing", "passing"),
            ("recovery", "interval recovery"),
            ("mean", "mean"),
            ("max_mean", "largest mean"),
            ("max_gust", "largest gust"),
            ("unit", "unit"),
        ],
    );
    let ms = months(d);
    for s in &d.channels {
        for (mi, m) in ms
            .iter()
            .chain(std::iter::once(&Month { year: 0, month: 0 }))
            .enumerate()
        {
            let all = mi == ms.len();
            let idx: Vec<usize> = (0..d.len)
                .filter(|&i| all || d.start(i).month() == *m)
                .collect();
            let vals: Vec<f64> = idx.iter().filter_map(|&i| s.value(i)).collect();
            let gust = idx
                .iter()
                .filter_map(|&i| s.gust(i))
                .fold(None, |a: Option<f64>, g| Some(a.map_or(g, |x| x.max(g))));
            let max = vals
                .iter()
                .copied()
                .fold(None, |a: Option<f64>, v| Some(a.map_or(v, |x| x.max(v))));
            let passing = idx.iter().filter(|&&i| s.passes(i)).count();
            let dir = s.spec.kind == Kind::Direction;
            t.push(vec![
                text(s.id()),
                num(s.height(), 1),
                text(if all {
                    "all".to_string()
                } else {
                    format!("{:04}-{:02}", m.year, m.month)
                }),
                int(idx.len() as u64),
                int(passing as u64),
                pct(
                    (!idx.is_empty()).then(|| passing as f64 / idx.len() as f64),
                    1,
                ),
                num(if dir { None } else { mean(&vals) }, 2),
                num(if dir { None } else { max }, 2),
                num(gust, 2),
                text(s.unit()),
            ]);
        }
    }
    t
}

/// Mean of the passing interval means of speed channel `c` by calendar month
/// (1-12, pooled over years) and hour of day (UTC): `[month][hour]`, with the
/// count of intervals in each cell.
pub fn month_hour(d: &Dataset, c: usize) -> [[(f64, u64); 24]; 12] {
    let mut acc = [[(0.0f64, 0u64); 24]; 12];
    let s = &d.channels[c];
    for i in 0..d.len {
        if let Some(v) = s.value(i) {
            let civ = d.start(i).civil();
            let cell = &mut acc[usize::from(civ.month) - 1][usize::from(civ.hour)];
            cell.0 += v;
            cell.1 += 1;
        }
    }
    for row in &mut acc {
        for cell in row.iter_mut() {
            if cell.1 > 0 {
                cell.0 /= cell.1 as f64;
            }
        }
    }
    acc
}

/// The 12 x 24 month-by-hour mean speed table of channel `c`: one row per
/// calendar month with data, one column per hour (UTC), and the month's mean.
pub fn month_hour_table(d: &Dataset, c: usize) -> Table {
    let hours: Vec<(String, String)> = (0..24)
        .map(|h| (format!("h{h:02}"), format!("{h:02}")))
        .collect();
    let mut cols: Vec<(&str, &str)> = vec![("channel", "channel"), ("month", "month")];
    cols.extend(hours.iter().map(|(a, b)| (a.as_str(), b.as_str())));
    cols.push(("all", "all hours"));
    // Column names need 'static lifetimes: the table keeps owned copies.
    let mut t = Table::new("month-hour", &[]);
    t.columns = cols
        .iter()
        .map(|(a, b)| ((*a).to_string(), (*b).to_string()))
        .collect();
    let mh = month_hour(d, c);
    let s = &d.channels[c];
    for (m, row) in mh.iter().enumerate() {
        if row.iter().all(|x| x.1 == 0) {
            continue;
        }
        let vals: Vec<f64> = (0..d.len)
            .filter(|&i| usize::from(d.start(i).civil().month) == m + 1)
            .filter_map(|i| s.value(i))
            .collect();
        let mut r = vec![text(s.id()), int(m as u64 + 1)];
        r.extend(row.iter().map(|x| num((x.1 > 0).then_some(x.0), 1)));
        r.push(num(mean(&vals), 2));
        t.push(r);
    }
    t
}

/// Diurnal profile: per speed channel, the mean of passing interval means by
/// hour of day (UTC) over the whole period.
pub fn diurnal(d: &Dataset) -> Vec<(usize, [Option<f64>; 24])> {
    d.channels
        .iter()
        .enumerate()
        .filter(|(_, s)| s.spec.kind == Kind::Speed)
        .map(|(c, s)| {
            let mut acc = [(0.0f64, 0u64); 24];
            for i in 0..d.len {
                if let Some(v) = s.value(i) {
                    let h = usize::from(d.start(i).civil().hour);
                    acc[h].0 += v;
                    acc[h].1 += 1;
                }
            }
            let mut out = [None; 24];
            for h in 0..24 {
                if acc[h].1 > 0 {
                    out[h] = Some(acc[h].0 / acc[h].1 as f64);
                }
            }
            (c, out)
        })
        .collect()
}

/// Where a screening default comes from (the core's `Screen::for_kind`
/// documents the same sources).
fn default_source(kind: Kind, test: &str) -> &'static str {
    match (kind, test) {
        (_, "min_recovery") => {
            "EPA-454/R-99-005 sec. 5.3.2 (90 %, there per quarter; per interval common practice)"
        }
        (Kind::Speed, "mean_range" | "sd_range" | "gust_max") => "NREL/SR-440-22223 tables 9.1-9.3",
        (Kind::Direction, "sd_range") => "NREL/SR-440-22223 tables 9.1-9.3",
        (_, "flat_span_s" | "flat_tolerance") => "EPA-454/R-99-005 sec. 8",
        (Kind::Speed, "step_limit") => "common practice",
        (_, "pair_mean_diff" | "pair_max_diff") => "NREL/SR-440-22223 relational tests",
        (_, "shear_tolerance") => "common practice",
        _ => "",
    }
}

fn range_text(r: Option<(f64, f64)>) -> Option<String> {
    r.map(|(a, b)| format!("{a} to {b}"))
}

/// The screening thresholds in force per channel: value, the core's default
/// for the kind, and whether the station file overrides it, with the
/// default's source.
pub fn thresholds_table(d: &Dataset) -> Table {
    let mut t = Table::new(
        "thresholds",
        &[
            ("channel", "channel"),
            ("test", "test"),
            ("flag", "flag"),
            ("in_force", "in force"),
            ("default", "default"),
            ("origin", "origin"),
            ("source", "source of the default"),
        ],
    );
    for s in &d.channels {
        let now: Screen = s.spec.core.screen;
        let def = Screen::for_kind(s.spec.kind);
        let name_of = |i: Option<u8>| {
            i.and_then(|i| d.channels.get(usize::from(i)))
                .map(|c| c.id().to_string())
        };
        let opt = |x: Option<f64>| x.map(|v| v.to_string());
        let rows: Vec<(&str, &str, Option<String>, Option<String>)> = vec![
            (
                "step_limit",
                "spike",
                opt(now.step_limit),
                opt(def.step_limit),
            ),
            (
                "mean_range",
                "implausible",
                range_text(now.mean_range),
                range_text(def.mean_range),
            ),
            (
                "sd_range",
                "implausible",
                range_text(now.sd_range),
                range_text(def.sd_range),
            ),
            (
                "gust_max",
                "implausible",
                opt(now.gust_max),
                opt(def.gust_max),
            ),
            (
                "min_recovery",
                "low_recovery",
                opt(now.min_recovery),
                opt(def.min_recovery),
            ),
            (
                "flat_span_s",
                "flatline",
                now.flat_span_s.map(|v| v.to_string()),
                def.flat_span_s.map(|v| v.to_string()),
            ),
            (
                "flat_tolerance",
                "flatline",
                now.flat_span_s.map(|_| now.flat_tolerance.to_string()),
                def.flat_span_s.map(|_| def.flat_tolerance.to_string()),
            ),
            ("partner", "pair_mismatch", name_of(now.partner), None),
            (
                "pair_mean_diff",
                "pair_mismatch",
                now.partner.map(|_| now.pair_mean_diff.to_string()),
                now.partner.map(|_| def.pair_mean_diff.to_string()),
            ),
            (
                "pair_max_diff",
                "pair_mismatch",
                now.partner.map(|_| now.pair_max_diff.to_string()),
                now.partner.map(|_| def.pair_max_diff.to_string()),
            ),
            ("above", "shear", name_of(now.above), None),
            (
                "shear_tolerance",
                "shear",
                now.above.map(|_| now.shear_tolerance.to_string()),
                now.above.map(|_| def.shear_tolerance.to_string()),
            ),
            (
                "icing",
                "icing",
                now.icing.map(|i| {
                    format!(
                        "{} <= {} and {} >= {}",
                        name_of(Some(i.temperature)).unwrap_or_default(),
                        i.max_temperature,
                        name_of(Some(i.humidity)).unwrap_or_default(),
                        i.min_humidity
                    )
                }),
                None,
            ),
        ];
        for (test, flag, inforce, default) in rows {
            if inforce.is_none() && default.is_none() {
                continue;
            }
            let origin = match (&inforce, &default) {
                (Some(a), Some(b)) if a == b => "default",
                (None, Some(_)) => "switched off in the station file",
                _ => "station file",
            };
            t.push(vec![
                text(s.id()),
                text(test),
                text(flag),
                text(inforce.clone().unwrap_or_else(|| "off".into())),
                text(default.clone().unwrap_or_else(|| "-".into())),
                text(origin),
                text(if default.is_some() {
                    default_source(s.spec.kind, test)
                } else {
                    ""
                })
                .class("wrapn"),
            ]);
        }
    }
    t
}

/// Least-squares line `y = slope x + offset` through `(x, y)` pairs, with the
/// coefficient of determination R^2 (the square of Pearson's r). `None` for
/// fewer than two points or no spread in x.
pub fn least_squares(pts: &[(f64, f64)]) -> Option<(f64, f64, f64)> {
    let n = pts.len() as f64;
    if pts.len() < 2 {
        return None;
    }
    let mx = pts.iter().map(|p| p.0).sum::<f64>() / n;
    let my = pts.iter().map(|p| p.1).sum::<f64>() / n;
    let (mut sxx, mut sxy, mut syy) = (0.0, 0.0, 0.0);
    for &(x, y) in pts {
        sxx += (x - mx) * (x - mx);
        sxy += (x - mx) * (y - my);
        syy += (y - my) * (y - my);
    }
    if sxx <= 0.0 {
        return None;
    }
    let slope = sxy / sxx;
    let r2 = if syy > 0.0 {
        sxy * sxy / (sxx * syy)
    } else {
        1.0
    };
    Some((slope, my - slope * mx, r2))
}

/// A redundant pair of anemometers (a `partner` in the station file).
#[derive(Clone, Debug)]
pub struct Pair {
    /// The channel whose screening names the partner (x).
    pub a: usize,
    /// The partner (y).
    pub b: usize,
    /// Interval means of both, where both have one and neither carries a flag
    /// but `partial`, `clock` or `pair_mismatch` (the disagreement itself is
    /// kept in the comparison).
    pub points: Vec<(f64, f64)>,
    /// Least squares of b on a: slope, offset, R^2.
    pub fit: Option<(f64, f64, f64)>,
    /// Intervals flagged `pair_mismatch` on either channel.
    pub mismatches: usize,
}

/// The redundant pairs of the station, each once.
pub fn pairs(d: &Dataset) -> Vec<Pair> {
    use qc_core::Flag;
    let mut out: Vec<Pair> = Vec::new();
    for (a, s) in d.channels.iter().enumerate() {
        let Some(b) = s.spec.core.screen.partner.map(usize::from) else {
            continue;
        };
        if b >= d.channels.len() || out.iter().any(|p| p.a == b && p.b == a) {
            continue;
        }
        let ok = |r: &super::data::Row| {
            r.flags
                .iter()
                .all(|f| matches!(f, Flag::Partial | Flag::Clock | Flag::PairMismatch))
                && r.tally.valid > 0
        };
        let mut points = Vec::new();
        let mut mismatches = 0;
        for i in 0..d.len {
            let (Some(ra), Some(rb)) = (&s.rows[i], &d.channels[b].rows[i]) else {
                continue;
            };
            if ra.flags.contains(Flag::PairMismatch) || rb.flags.contains(Flag::PairMismatch) {
                mismatches += 1;
            }
            if let (true, true, Some(x), Some(y)) = (ok(ra), ok(rb), ra.mean, rb.mean) {
                points.push((x, y));
            }
        }
        out.push(Pair {
            a,
            b,
            fit: least_squares(&points),
            points,
            mismatches,
        });
    }
    out
}

/// The redundant-pair table.
pub fn pair_table(d: &Dataset, ps: &[Pair]) -> Table {
    let mut t = Table::new(
        "redundant-pairs",
        &[
            ("x", "x channel"),
            ("y", "y channel"),
            ("n", "intervals"),
            ("slope", "slope"),
            ("offset", "offset"),
            ("r2", "R²"),
            ("mean_diff", "mean y - x"),
            ("pair_mismatch", "pair_mismatch intervals"),
        ],
    );
    for p in ps {
        let diff: Vec<f64> = p.points.iter().map(|(x, y)| y - x).collect();
        t.push(vec![
            text(d.channels[p.a].id()),
            text(d.channels[p.b].id()),
            int(p.points.len() as u64),
            num(p.fit.map(|f| f.0), 4),
            num(p.fit.map(|f| f.1), 3),
            num(p.fit.map(|f| f.2), 4),
            num(mean(&diff), 3),
            int(p.mismatches as u64),
        ]);
    }
    t
}

/// The specific gas constant of dry air, J/(kg K): 287.05, the value
/// IEC 61400-12-1 uses (from memory; common practice).
pub const R_DRY: f64 = 287.05;
/// The specific gas constant of water vapour, J/(kg K): 461.5 (IEC 61400-12-1,
/// from memory).
pub const R_VAPOUR: f64 = 461.5;

/// Air density, kg/m^3, from temperature `t_k` (K), pressure `p_pa` (Pa) and,
/// when known, relative humidity `rh` (0 to 1), as IEC 61400-12-1 (annex on
/// air density; from memory) writes it:
/// `rho = (1/T) (B/R0 - phi Pw (1/R0 - 1/Rw))`, with the vapour pressure
/// `Pw = 0.0000205 exp(0.0631846 T)` Pa. Without humidity, the dry-air ideal
/// gas law `rho = B / (R0 T)`.
pub fn air_density(t_k: f64, p_pa: f64, rh: Option<f64>) -> f64 {
    let dry = p_pa / R_DRY;
    match rh {
        Some(phi) => {
            let pw = 0.000_020_5 * (0.063_184_6 * t_k).exp();
            (dry - phi * pw * (1.0 / R_DRY - 1.0 / R_VAPOUR)) / t_k
        }
        None => dry / t_k,
    }
}

/// Pressure in pascals from a value in `unit` (hPa, mbar, kPa, Pa); `None`
/// for another unit.
fn pascals(unit: &str) -> Option<f64> {
    match unit.trim().to_ascii_lowercase().as_str() {
        "hpa" | "mbar" | "mb" => Some(100.0),
        "kpa" => Some(1000.0),
        "pa" => Some(1.0),
        _ => None,
    }
}

/// Kelvin from a temperature in `unit`; `None` for an unknown unit.
fn kelvin(v: f64, unit: &str) -> Option<f64> {
    match unit.trim().to_ascii_lowercase().as_str() {
        "degc" | "deg c" | "°c" | "c" | "celsius" => Some(v + 273.15),
        "k" | "kelvin" => Some(v),
        "degf" | "°f" => Some((v - 32.0) / 1.8 + 273.15),
        _ => None,
    }
}

/// Air density measured at the station: per interval where temperature and
/// pressure both pass screening (humidity used where it passes too).
#[derive(Clone, Debug)]
pub struct Density {
    /// Temperature, pressure and humidity channels.
    pub temperature: usize,
    /// Pressure channel.
    pub pressure: usize,
    /// Humidity channel, if any.
    pub humidity: Option<usize>,
    /// Density per interval (`None` where not measured).
    pub rho: Vec<Option<f64>>,
}

impl Density {
    /// Mean of the measured densities.
    pub fn mean(&self) -> Option<f64> {
        let v: Vec<f64> = self.rho.iter().flatten().copied().collect();
        mean(&v)
    }
}

/// Whether a channel measures relative humidity (unit `%`).
fn is_humidity(s: &super::data::Series) -> bool {
    s.spec.kind == Kind::Scalar && s.spec.unit.as_deref().is_some_and(|u| u.trim() == "%")
}

/// Measured air density, when the station has a temperature and a pressure
/// channel (unit hPa, mbar, kPa or Pa).
pub fn density(d: &Dataset) -> Option<Density> {
    let t = (0..d.channels.len()).find(|&c| is_temperature(&d.channels[c]))?;
    let p = (0..d.channels.len()).find(|&c| {
        d.channels[c].spec.kind == Kind::Scalar
            && d.channels[c]
                .spec
                .unit
                .as_deref()
                .and_then(pascals)
                .is_some()
    })?;
    let h = (0..d.channels.len()).find(|&c| is_humidity(&d.channels[c]));
    let pu = pascals(d.channels[p].unit())?;
    let tu = d.channels[t].unit().to_string();
    let rho = (0..d.len)
        .map(|i| {
            let tk = kelvin(d.channels[t].value(i)?, &tu)?;
            let pa = d.channels[p].value(i)? * pu;
            let rh = h
                .and_then(|h| d.channels[h].value(i))
                .map(|x| (x / 100.0).clamp(0.0, 1.0));
            (tk > 0.0 && pa > 0.0).then(|| air_density(tk, pa, rh))
        })
        .collect();
    Some(Density {
        temperature: t,
        pressure: p,
        humidity: h,
        rho,
    })
}

/// Power density of speed channel `c`, W/m^2: 0.5 mean(rho_i v_i^3) over the
/// intervals where both the speed and a measured density exist, and the
/// intervals used.
pub fn measured_power_density(d: &Dataset, c: usize, dens: &Density) -> Option<(f64, usize)> {
    let v: Vec<f64> = (0..d.len)
        .filter_map(|i| Some(0.5 * dens.rho[i]? * d.channels[c].value(i)?.powi(3)))
        .collect();
    Some((mean(&v)?, v.len()))
}

/// The air-density table: measured mean density, and power density of each
/// anemometer with the measured density and with the fixed one.
pub fn density_table(d: &Dataset, dens: Option<&Density>, rho_fixed: f64) -> Table {
    let mut t = Table::new(
        "air-density",
        &[
            ("channel", "anemometer"),
            ("rho_source", "density from"),
            ("rho_mean", "mean density (kg/m³)"),
            ("n", "intervals"),
            (
                "power_density_measured",
                "power density, measured density (W/m²)",
            ),
            ("power_density_fixed", "power density, fixed density (W/m²)"),
            ("rho_fixed", "fixed density (kg/m³)"),
        ],
    );
    for (c, s) in d.channels.iter().enumerate() {
        if s.spec.kind != Kind::Speed {
            continue;
        }
        let vals: Vec<f64> = (0..d.len).filter_map(|i| s.value(i)).collect();
        let fixed = super::stats::power_density(&vals, rho_fixed);
        let (src, rho, pd, n) = match dens {
            Some(x) => {
                let m = measured_power_density(d, c, x);
                (
                    format!(
                        "{} and {}{}",
                        d.channels[x.temperature].id(),
                        d.channels[x.pressure].id(),
                        x.humidity
                            .map(|h| format!(" and {}", d.channels[h].id()))
                            .unwrap_or_default()
                    ),
                    x.mean(),
                    m.map(|m| m.0),
                    m.map_or(0, |m| m.1),
                )
            }
            None => ("--air-density (no pressure channel)".into(), None, None, 0),
        };
        t.push(vec![
            text(s.id()),
            text(src),
            num(rho, 4),
            int(n as u64),
            num(pd, 1),
            num(fixed, 1),
            num(Some(rho_fixed), 4),
        ]);
    }
    t
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn air_density_by_hand() {
        // 15 degC, 1013.25 hPa, dry: 101325 / (287.05 * 288.15) = 1.2250 kg/m3,
        // the ISO standard atmosphere's sea-level density (ISO 2533; from
        // memory), worked by hand.
        let rho = air_density(288.15, 101_325.0, None);
        assert!((rho - 101_325.0 / (287.05 * 288.15)).abs() < 1e-12);
        assert!((rho - 1.2250).abs() < 1e-4, "{rho}");
        // Humid air is lighter: at 100 % RH and 288.15 K, Pw = 2.05e-5
        // exp(0.0631846 * 288.15) = 1655.0 Pa (by hand), and
        // rho = (101325/287.05 - 1672.6 (1/287.05 - 1/461.5)) / 288.15.
        let pw = 0.000_020_5 * (0.063_184_6f64 * 288.15).exp();
        assert!((pw - 1655.0).abs() < 0.5, "{pw}");
        let want = (101_325.0 / 287.05 - pw * (1.0 / 287.05 - 1.0 / 461.5)) / 288.15;
        let got = air_density(288.15, 101_325.0, Some(1.0));
        assert!((got - want).abs() < 1e-12 && got < rho, "{got}");
        assert!((got - 1.2174).abs() < 1e-4, "{got}");
    }

    #[test]
    fn least_squares_of_an_exact_line() {
        let pts: Vec<(f64, f64)> = (0..10).map(|i| (i as f64, 0.98 * i as f64 + 0.1)).collect();
        let (s, o, r2) = least_squares(&pts).unwrap();
        assert!((s - 0.98).abs() < 1e-12 && (o - 0.1).abs() < 1e-12 && (r2 - 1.0).abs() < 1e-12);
        assert!(least_squares(&[(1.0, 2.0)]).is_none());
        assert!(least_squares(&[(1.0, 2.0), (1.0, 3.0)]).is_none());
    }
}

//! Wind rose, speed distribution with Weibull fits, turbulence intensity by
//! speed bin, and power-law shear by sector and hour.
//!
//! Only intervals that pass screening are used. The fits, power density,
//! sectors, compass names, normal turbulence model and shear exponent are the
//! core's (`qc_core::analysis`).

use qc_core::analysis::{self, TurbulenceCategory, Weibull};
use qc_core::Kind;

use super::data::Dataset;
use super::recovery::vane_speed;
use super::stats::{mean, percentile, power_density, sd, Bins};
use super::table::{int, num, pct, text, Table};

/// Intervals whose mean speed is below this are calm: left out of the sectors
/// and counted apart (common practice).
pub const CALM: f64 = 0.5;
/// Shear is computed from intervals where both speeds reach this (common
/// practice: in light wind the ratio of speeds is erratic).
pub const SHEAR_MIN_SPEED: f64 = 3.0;
/// Turbulence bins with fewer intervals are listed but not drawn.
pub const TI_MIN_COUNT: usize = 10;

/// Sector label: a 16-point compass name where one applies, else the centre.
pub fn sector_label(i: u16, n: u16) -> String {
    match analysis::compass_name(i, n) {
        Some(s) => s.to_string(),
        None => format!("{}", f64::from(i) * 360.0 / f64::from(n)),
    }
}

/// The highest vane (first in file order among equals).
pub fn top_vane(d: &Dataset) -> Option<usize> {
    let mut best: Option<(usize, f64)> = None;
    for (i, s) in d.channels.iter().enumerate() {
        if s.spec.kind != Kind::Direction {
            continue;
        }
        let h = s.height().unwrap_or(f64::NEG_INFINITY);
        if best.is_none_or(|(_, bh)| h > bh) {
            best = Some((i, h));
        }
    }
    best.map(|(i, _)| i)
}

/// Wind rose of one vane with its anemometer.
#[derive(Clone, Debug)]
pub struct Rose {
    /// Vane.
    pub vane: usize,
    /// Anemometer.
    pub speed: usize,
    /// Sectors.
    pub sectors: u16,
    /// Intervals where both pass (calms included).
    pub total: u64,
    /// Calm intervals among them.
    pub calm: u64,
    /// Intervals per sector.
    pub counts: Vec<u64>,
    /// Mean speed per sector.
    pub mean_speed: Vec<Option<f64>>,
    /// Power density per sector, `0.5 rho mean(v^3)`, W/m^2.
    pub power: Vec<Option<f64>>,
    /// Speed bins of the frequency table.
    pub bins: Bins,
    /// Counts per speed bin and sector (`[bin][sector]`).
    pub table: Vec<Vec<u64>>,
    /// (direction, speed) of every joint interval, calms included.
    pub points: Vec<(f64, f64)>,
}

/// The rose of the highest vane, `sectors` sectors, air density `rho`.
pub fn rose(d: &Dataset, sectors: u16, rho: f64) -> Option<Rose> {
    let vane = top_vane(d)?;
    let speed = vane_speed(d, vane)?;
    let n = usize::from(sectors);
    let bins = Bins {
        lo: 0.0,
        width: 1.0,
        n: 26,
    };
    let mut counts = vec![0u64; n];
    let mut speeds: Vec<Vec<f64>> = vec![Vec::new(); n];
    let mut table = vec![vec![0u64; n]; bins.n];
    let mut points = Vec::new();
    let (mut total, mut calm) = (0u64, 0u64);
    for i in 0..d.len {
        let (Some(dir), Some(v)) = (d.channels[vane].value(i), d.channels[speed].value(i)) else {
            continue;
        };
        total += 1;
        points.push((dir, v));
        if v < CALM {
            calm += 1;
            continue;
        }
        let Some(s) = analysis::sector(dir, sectors) else {
            continue;
        };
        let s = usize::from(s);
        counts[s] += 1;
        speeds[s].push(v);
        table[bins.of(v)][s] += 1;
    }
    if total == 0 {
        return None;
    }
    Some(Rose {
        vane,
        speed,
        sectors,
        total,
        calm,
        counts,
        mean_speed: speeds.iter().map(|v| mean(v)).collect(),
        power: speeds.iter().map(|v| power_density(v, rho)).collect(),
        bins,
        table,
        points,
    })
}

/// Rose tables: per sector, and speed bin x sector.
pub fn rose_tables(r: &Rose) -> [Table; 2] {
    let mut t = Table::new(
        "rose",
        &[
            ("sector", "sector"),
            ("centre_deg", "centre (deg)"),
            ("from_deg", "from (deg)"),
            ("to_deg", "to (deg)"),
            ("count", "intervals"),
            ("frequency", "frequency"),
            ("mean_speed", "mean speed (m/s)"),
            ("power_density", "power density (W/m2)"),
        ],
    );
    let w = 360.0 / f64::from(r.sectors);
    for s in 0..r.sectors {
        let i = usize::from(s);
        let c = f64::from(s) * w;
        t.push(vec![
            text(sector_label(s, r.sectors)),
            num(Some(c), 1),
            num(Some((c - w / 2.0).rem_euclid(360.0)), 2),
            num(Some(c + w / 2.0), 2),
            int(r.counts[i]),
            pct(Some(r.counts[i] as f64 / r.total as f64), 1),
            num(r.mean_speed[i], 2),
            num(r.power[i], 0),
        ]);
    }
    t.push(vec![
        text("calm"),
        num(None, 0),
        num(None, 0),
        num(None, 0),
        int(r.calm),
        pct(Some(r.calm as f64 / r.total as f64), 1),
        num(None, 0),
        num(None, 0),
    ]);
    let mut cols: Vec<(String, String)> = vec![("speed_bin".into(), "speed (m/s)".into())];
    for s in 0..r.sectors {
        let l = sector_label(s, r.sectors);
        cols.push((l.clone(), l));
    }
    cols.push(("all".into(), "all sectors".into()));
    let mut f = Table {
        name: "rose-speed-sector",
        columns: cols,
        rows: Vec::new(),
    };
    for b in 0..r.bins.n {
        let row = &r.table[b];
        let all: u64 = row.iter().sum();
        let mut cells = vec![text(r.bins.label(b, true))];
        cells.extend(row.iter().map(|&c| pct(Some(c as f64 / r.total as f64), 2)));
        cells.push(pct(Some(all as f64 / r.total as f64), 2));
        f.push(cells);
    }
    [t, f]
}

/// Speed distribution of one anemometer.
#[derive(Clone, Debug)]
pub struct Distribution {
    /// Channel.
    pub channel: usize,
    /// Passing interval means.
    pub speeds: Vec<f64>,
    /// Mean.
    pub mean: Option<f64>,
    /// Standard deviation (divisor N).
    pub sd: Option<f64>,
    /// Maximum-likelihood Weibull fit.
    pub ml: Option<Weibull>,
    /// Moments (Justus) estimate.
    pub moments: Option<Weibull>,
    /// `0.5 rho mean(v^3)` of the interval means.
    pub power: Option<f64>,
}

/// Distributions of every anemometer.
pub fn distributions(d: &Dataset, rho: f64) -> Vec<Distribution> {
    d.channels
        .iter()
        .enumerate()
        .filter(|(_, s)| s.spec.kind == Kind::Speed)
        .map(|(c, s)| {
            let speeds: Vec<f64> = (0..d.len).filter_map(|i| s.value(i)).collect();
            let (m, sdv) = (mean(&speeds), sd(&speeds));
            Distribution {
                channel: c,
                ml: Weibull::fit_ml(&speeds),
                moments: m.zip(sdv).and_then(|(m, s)| Weibull::from_moments(m, s)),
                power: power_density(&speeds, rho),
                mean: m,
                sd: sdv,
                speeds,
            }
        })
        .collect()
}

/// The Weibull table.
pub fn weibull_table(d: &Dataset, ds: &[Distribution], rho: f64) -> Table {
    let mut t = Table::new(
        "weibull",
        &[
            ("channel", "anemometer"),
            ("height_m", "height (m)"),
            ("n", "intervals"),
            ("mean", "mean (m/s)"),
            ("sd", "sd (m/s)"),
            ("k_ml", "k (ML)"),
            ("c_ml", "c (ML, m/s)"),
            ("weibull_mean_ml", "mean (ML)"),
            ("power_density_ml", "W/m2 (ML)"),
            ("k_moments", "k (moments)"),
            ("c_moments", "c (moments)"),
            ("power_density_sample", "W/m2 (data)"),
            ("air_density", "rho (kg/m3)"),
        ],
    );
    for x in ds {
        t.push(vec![
            text(d.channels[x.channel].id()),
            num(d.channels[x.channel].height(), 1),
            int(x.speeds.len() as u64),
            num(x.mean, 2),
            num(x.sd, 2),
            num(x.ml.map(|w| w.k), 3),
            num(x.ml.map(|w| w.c), 3),
            num(x.ml.map(|w| w.mean()), 2),
            num(x.ml.map(|w| w.power_density(rho)), 1),
            num(x.moments.map(|w| w.k), 3),
            num(x.moments.map(|w| w.c), 3),
            num(x.power, 1),
            num(Some(rho), 3),
        ]);
    }
    t
}

/// 1 m/s histogram `[i, i+1)` of a distribution with the fitted frequencies.
pub fn histogram(x: &Distribution) -> (Bins, Vec<u64>) {
    let max = x.speeds.iter().copied().fold(0.0f64, f64::max);
    let bins = Bins {
        lo: 0.0,
        width: 1.0,
        n: (max.floor() as usize + 1).max(1),
    };
    let mut counts = vec![0u64; bins.n];
    for &v in &x.speeds {
        counts[bins.of(v)] += 1;
    }
    (bins, counts)
}

/// Weibull probability of `[a, b)`: `exp(-(a/c)^k) - exp(-(b/c)^k)`.
pub fn weibull_prob(w: &Weibull, a: f64, b: f64) -> f64 {
    let cdf = |v: f64| 1.0 - (-(v.max(0.0) / w.c).powf(w.k)).exp();
    cdf(b) - cdf(a)
}

/// Histogram table of the primary anemometer.
pub fn histogram_table(x: &Distribution) -> Table {
    let mut t = Table::new(
        "speed-histogram",
        &[
            ("from", "from (m/s)"),
            ("to", "to (m/s)"),
            ("count", "intervals"),
            ("frequency", "frequency"),
            ("weibull_frequency", "Weibull (ML)"),
        ],
    );
    let (bins, counts) = histogram(x);
    let n = x.speeds.len().max(1) as f64;
    for (i, c) in counts.iter().enumerate() {
        let a = bins.low(i);
        t.push(vec![
            num(Some(a), 0),
            num(Some(a + 1.0), 0),
            int(*c),
            pct(Some(*c as f64 / n), 2),
            pct(x.ml.map(|w| weibull_prob(&w, a, a + 1.0)), 2),
        ]);
    }
    t
}

/// Turbulence intensity in one speed bin.
#[derive(Clone, Debug)]
pub struct TiBin {
    /// Bin centre, m/s (bin `[centre - 0.5, centre + 0.5)`).
    pub centre: f64,
    /// Intervals.
    pub n: usize,
    /// Mean TI.
    pub mean: Option<f64>,
    /// 90th percentile (numpy's linear method).
    pub p90: Option<f64>,
}

/// TI by 1 m/s bin centred on whole speeds, for anemometer `c`.
pub fn turbulence(d: &Dataset, c: usize) -> Vec<TiBin> {
    let s = &d.channels[c];
    let mut by: Vec<Vec<f64>> = Vec::new();
    for i in 0..d.len {
        let (Some(v), Some(ti)) = (s.value(i), s.ti(i)) else {
            continue;
        };
        let b = (v + 0.5).floor();
        if b < 1.0 {
            continue;
        }
        let b = b as usize;
        if by.len() <= b {
            by.resize(b + 1, Vec::new());
        }
        by[b].push(ti);
    }
    by.into_iter()
        .enumerate()
        .skip(1)
        .filter(|(_, v)| !v.is_empty())
        .map(|(b, mut v)| TiBin {
            centre: b as f64,
            n: v.len(),
            mean: mean(&v),
            p90: percentile(&mut v, 90.0),
        })
        .collect()
}

/// Turbulence table with the normal turbulence model of each category.
pub fn turbulence_table(bins: &[TiBin]) -> Table {
    let mut t = Table::new(
        "turbulence",
        &[
            ("speed_bin", "speed bin (m/s)"),
            ("n", "intervals"),
            ("ti_mean", "mean TI"),
            ("ti_p90", "90th percentile TI"),
            ("ntm_a_plus", "NTM A+"),
            ("ntm_a", "NTM A"),
            ("ntm_b", "NTM B"),
            ("ntm_c", "NTM C"),
        ],
    );
    for b in bins {
        let mut row = vec![
            num(Some(b.centre), 0),
            int(b.n as u64),
            num(b.mean, 3),
            num(b.p90, 3),
        ];
        row.extend(
            TurbulenceCategory::ALL
                .iter()
                .map(|c| num(Some(c.ntm_ti(b.centre)), 3)),
        );
        t.push(row);
    }
    t
}

/// Shear exponent in one group of intervals.
#[derive(Clone, Debug)]
pub struct ShearBin {
    /// Label (sector or hour).
    pub label: String,
    /// Intervals.
    pub n: usize,
    /// Mean lower speed.
    pub low: Option<f64>,
    /// Mean upper speed.
    pub high: Option<f64>,
    /// Exponent from the mean speeds.
    pub alpha: Option<f64>,
}

/// Power-law shear between the lowest and the highest anemometer.
#[derive(Clone, Debug)]
pub struct Shear {
    /// Lower anemometer.
    pub low: usize,
    /// Upper anemometer.
    pub high: usize,
    /// All intervals.
    pub overall: ShearBin,
    /// By sector of the highest vane (empty without one).
    pub by_sector: Vec<ShearBin>,
    /// By hour of day, UTC.
    pub by_hour: Vec<ShearBin>,
    /// Every pair of anemometers at different heights: (low, high, overall).
    pub pairs: Vec<(usize, usize, ShearBin)>,
}

fn shear_bin(d: &Dataset, lo: usize, hi: usize, label: String, idx: &[usize]) -> ShearBin {
    let (a, b): (Vec<f64>, Vec<f64>) = idx
        .iter()
        .filter_map(|&i| Some((d.channels[lo].value(i)?, d.channels[hi].value(i)?)))
        .filter(|(x, y)| *x >= SHEAR_MIN_SPEED && *y >= SHEAR_MIN_SPEED)
        .unzip();
    let (ml, mh) = (mean(&a), mean(&b));
    let alpha = match (ml, mh, d.channels[lo].height(), d.channels[hi].height()) {
        (Some(v1), Some(v2), Some(z1), Some(z2)) => analysis::shear_exponent(v1, z1, v2, z2),
        _ => None,
    };
    ShearBin {
        label,
        n: a.len(),
        low: ml,
        high: mh,
        alpha,
    }
}

/// Shear figures, when two anemometers have different configured heights.
pub fn shear(d: &Dataset, sectors: u16) -> Option<Shear> {
    let speeds: Vec<(usize, f64)> = d
        .channels
        .iter()
        .enumerate()
        .filter(|(_, s)| s.spec.kind == Kind::Speed)
        .filter_map(|(i, s)| Some((i, s.height()?)))
        .collect();
    let low = speeds
        .iter()
        .copied()
        .reduce(|a, b| if b.1 < a.1 { b } else { a })?;
    let high = speeds
        .iter()
        .copied()
        .reduce(|a, b| if b.1 > a.1 { b } else { a })?;
    if high.1 <= low.1 {
        return None;
    }
    let all: Vec<usize> = (0..d.len).collect();
    let overall = shear_bin(d, low.0, high.0, "all".into(), &all);
    let by_sector = match top_vane(d) {
        Some(v) => (0..sectors)
            .map(|s| {
                let idx: Vec<usize> = (0..d.len)
                    .filter(|&i| {
                        d.channels[v]
                            .value(i)
                            .and_then(|x| analysis::sector(x, sectors))
                            == Some(s)
                    })
                    .collect();
                shear_bin(d, low.0, high.0, sector_label(s, sectors), &idx)
            })
            .collect(),
        None => Vec::new(),
    };
    let by_hour = (0..24u8)
        .map(|h| {
            let idx: Vec<usize> = (0..d.len)
                .filter(|&i| d.start(i).civil().hour == h)
                .collect();
            shear_bin(d, low.0, high.0, format!("{h:02}"), &idx)
        })
        .collect();
    let mut pairs = Vec::new();
    for &(a, za) in &speeds {
        for &(b, zb) in &speeds {
            if za < zb {
                pairs.push((a, b, shear_bin(d, a, b, "all".into(), &all)));
            }
        }
    }
    Some(Shear {
        low: low.0,
        high: high.0,
        overall,
        by_sector,
        by_hour,
        pairs,
    })
}

/// Shear tables: by sector and hour (one table, `group` column), and pairs.
pub fn shear_tables(d: &Dataset, s: &Shear) -> [Table; 2] {
    let mut t = Table::new(
        "shear",
        &[
            ("group", "by"),
            ("bin", "bin"),
            ("n", "intervals"),
            ("mean_low", "mean low (m/s)"),
            ("mean_high", "mean high (m/s)"),
            ("alpha", "shear exponent"),
        ],
    );
    let rows = std::iter::once(("all", &s.overall))
        .chain(s.by_sector.iter().map(|b| ("sector", b)))
        .chain(s.by_hour.iter().map(|b| ("hour", b)));
    for (g, b) in rows {
        t.push(vec![
            text(g),
            text(&b.label),
            int(b.n as u64),
            num(b.low, 2),
            num(b.high, 2),
            num(b.alpha, 3),
        ]);
    }
    let mut p = Table::new(
        "shear-pairs",
        &[
            ("low", "lower"),
            ("low_height_m", "height (m)"),
            ("high", "upper"),
            ("high_height_m", "height (m)"),
            ("n", "intervals"),
            ("mean_low", "mean low (m/s)"),
            ("mean_high", "mean high (m/s)"),
            ("alpha", "shear exponent"),
        ],
    );
    for (a, b, x) in &s.pairs {
        p.push(vec![
            text(d.channels[*a].id()),
            num(d.channels[*a].height(), 1),
            text(d.channels[*b].id()),
            num(d.channels[*b].height(), 1),
            int(x.n as u64),
            num(x.low, 2),
            num(x.high, 2),
            num(x.alpha, 3),
        ]);
    }
    [t, p]
}

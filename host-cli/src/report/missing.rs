//! Missing-data diagnostics: are a channel's gaps independent of hour of day,
//! month, wind speed, direction sector and temperature?
//!
//! An interval of a channel is *missing* when it has no valid samples or fails
//! screening ([`qc_core::screen::passes`]). Data missing at random leave the
//! statistics of what remains unbiased; data missing not at random, gaps that
//! depend on the measured quantity itself, bias them even at high recovery
//! (Rubin 1976, Biometrika 63(3), 581-592).
//!
//! For each factor the intervals are binned, and a contingency table of bins x
//! (present, missing) is tested for independence with Pearson's chi-square and
//! the G test ([`qc_core::analysis::independence`]). Two versions are kept:
//!
//! - *raw*: the bins as shown (what `scipy.stats.chi2_contingency` gives on the
//!   same table);
//! - *pooled*: neighbouring bins merged until every bin expects at least 5
//!   present and 5 missing intervals (Cochran's rule of thumb, common practice),
//!   then the statistic divided by the mean length of the runs of consecutive
//!   missing intervals before taking the p-value. Consecutive intervals are not
//!   independent draws: a gap of six intervals is one event, not six. Dividing by
//!   the mean run length is a rough design-effect allowance in the spirit of
//!   Rao and Scott (1981, J. Amer. Statist. Assoc. 76, 221-230; from memory).
//!
//! The verdict uses the pooled, adjusted test: "not random" when p < 0.001 and
//! Cramer's V >= 0.1 for some factor, "may depend" when p < 0.01 and V >= 0.1.
//! A tiny effect is significant in a long record, hence the effect-size floor;
//! V 0.1 is a "small" effect (Cohen 1988, from memory). The thresholds are our
//! choice, not a standard.
//!
//! "Random" is a claim that the data are safe to use, so it needs evidence, not
//! just the absence of a significant test (the power rule):
//!
//! - a large raw effect (pooled table before the run-length adjustment:
//!   p < 0.001 and V >= [`V_LARGE`]) that the adjusted test cannot confirm is
//!   "possible" with the reason "too short to confirm", never "random";
//! - "random" only when every tested factor had at least [`MIN_RUNS`] separate
//!   gaps and the adjusted test had 80 % power ([`POWER`]) at p < 0.01 to see a
//!   dependence of V = [`V_DETECT`] (Cohen's "medium" effect, from memory). The
//!   detectable V of a bins x 2 table is `sqrt(lambda / n_eff)`, where `n_eff`
//!   is the intervals divided by the mean gap run and `lambda` the
//!   non-centrality at which a non-central chi-square on the table's degrees of
//!   freedom exceeds the 1 % critical value with probability 0.8 (for a table
//!   with two columns, chi-square = n V^2). Otherwise the verdict is "too
//!   short" (grey): the record cannot tell.
//!
//! The bias of the mean is estimated on a reference channel: its mean over all
//! its passing intervals against its mean over those where the diagnosed
//! channel passes too. Without a reference anemometer, a speed channel is
//! compared with its own values next to gaps (each gap filled with the mean of
//! its neighbours), and its upper tail with the fitted Weibull's.

use qc_core::analysis::{self, chi2_upper_tail, Independence, Weibull};
use qc_core::Kind;

use super::data::{Dataset, Series};
use super::stats::{mean, trim, Bins};
use super::table::{int, num, pct, pval, text, Table};

/// p-value below which gaps are called not random.
pub const P_STRONG: f64 = 0.001;
/// p-value below which gaps may depend on a factor.
pub const P_WEAK: f64 = 0.01;
/// Smallest Cramer's V taken as an effect.
pub const V_MIN: f64 = 0.1;
/// Sectors used for the direction factor.
pub const SECTORS: u16 = 8;
/// Speed bin width of the speed factor, m/s.
pub const SPEED_BIN: f64 = 2.0;
/// Temperature bin width (channel units).
pub const TEMP_BIN: f64 = 2.0;
/// Fewest separate gaps (runs of consecutive missing intervals) for a verdict.
pub const MIN_RUNS: f64 = 5.0;
/// Power the adjusted test must have for a "random" verdict.
pub const POWER: f64 = 0.8;
/// Cramer's V the adjusted test must be able to detect for a "random" verdict
/// (Cohen's "medium" effect for a table with two columns, from memory).
pub const V_DETECT: f64 = 0.3;
/// A raw (unadjusted, pooled) effect this large with p < [`P_STRONG`] makes
/// the verdict at least "possible", even when the adjusted test cannot
/// confirm it.
pub const V_LARGE: f64 = 0.3;
/// Bias of a speed mean, m/s, above which the report marks it: about the
/// calibration uncertainty of a good cup anemometer (common practice; the
/// campaign's own sensor accuracy governs).
pub const BIAS_MARK: f64 = 0.1;

/// Upper-tail probability of a non-central chi-square with `dof` degrees of
/// freedom and non-centrality `lambda` above `x`: the Poisson mixture of
/// central chi-squares on `dof + 2 j` degrees of freedom (Johnson, Kotz and
/// Balakrishnan, Continuous Univariate Distributions vol. 2, ch. 29; from
/// memory), with [`chi2_upper_tail`] from the core.
pub fn ncx2_upper_tail(x: f64, dof: u32, lambda: f64) -> f64 {
    let h = 0.5 * lambda.max(0.0);
    let mut total = 0.0;
    // Poisson weights e^-h h^j / j!, summed until they are negligible.
    let mut log_w = -h;
    for j in 0..2000u32 {
        if j > 0 {
            log_w += h.ln() - f64::from(j).ln();
        }
        let w = log_w.exp();
        total += w * chi2_upper_tail(x, dof + 2 * j);
        if f64::from(j) > h && w < 1e-15 {
            break;
        }
    }
    total.min(1.0)
}

/// The critical value of a central chi-square on `dof` degrees of freedom at
/// upper-tail probability `alpha` (bisection on [`chi2_upper_tail`]).
pub fn chi2_critical(alpha: f64, dof: u32) -> f64 {
    let (mut lo, mut hi) = (0.0f64, 1.0f64);
    while chi2_upper_tail(hi, dof) > alpha && hi < 1e7 {
        hi *= 2.0;
    }
    for _ in 0..100 {
        let mid = 0.5 * (lo + hi);
        if chi2_upper_tail(mid, dof) > alpha {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

/// The non-centrality at which a chi-square test on `dof` degrees of freedom
/// at level `alpha` has power `power`.
pub fn noncentrality_for_power(alpha: f64, dof: u32, power: f64) -> f64 {
    let crit = chi2_critical(alpha, dof);
    let (mut lo, mut hi) = (0.0f64, 1.0f64);
    while ncx2_upper_tail(crit, dof, hi) < power && hi < 1e6 {
        hi *= 2.0;
    }
    for _ in 0..60 {
        let mid = 0.5 * (lo + hi);
        if ncx2_upper_tail(crit, dof, mid) < power {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

/// The smallest Cramer's V that the adjusted test of a bins x 2 table with
/// `n_eff` effective intervals and `dof` degrees of freedom detects with
/// [`POWER`] at p < [`P_WEAK`].
pub fn detectable_v(n_eff: f64, dof: u32) -> Option<f64> {
    (n_eff > 0.0 && dof > 0).then(|| (noncentrality_for_power(P_WEAK, dof, POWER) / n_eff).sqrt())
}

/// A bin of a factor: `from`..`to` (equal when a single point, `to` empty when
/// open above).
#[derive(Clone, Debug, PartialEq)]
pub struct Bin {
    /// First value or name.
    pub from: String,
    /// Last value or name; empty when open above.
    pub to: String,
}

impl Bin {
    fn merge(&self, later: &Bin) -> Bin {
        Bin {
            from: self.from.clone(),
            to: later.to.clone(),
        }
    }

    /// Printable label.
    pub fn label(&self) -> String {
        if self.to.is_empty() {
            format!(">= {}", self.from)
        } else if self.from == self.to {
            self.from.clone()
        } else {
            format!("{}-{}", self.from, self.to)
        }
    }
}

/// What a factor is.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum FactorKind {
    /// Hour of day, UTC.
    Hour,
    /// Calendar month.
    Month,
    /// Wind speed from a reference anemometer.
    Speed,
    /// Direction sector from a vane.
    Sector,
    /// Air temperature.
    Temperature,
    /// The channel's own speed, intervals next to a gap against the rest.
    NextToGap,
}

impl FactorKind {
    /// Key used in the tables.
    pub fn key(self) -> &'static str {
        match self {
            FactorKind::Hour => "hour",
            FactorKind::Month => "month",
            FactorKind::Speed => "speed",
            FactorKind::Sector => "sector",
            FactorKind::Temperature => "temperature",
            FactorKind::NextToGap => "next_to_gap",
        }
    }
}

/// One contingency table: bins x (present, missing).
#[derive(Clone, Debug)]
pub struct Tab {
    /// Bins.
    pub bins: Vec<Bin>,
    /// Intervals present (passing) per bin; for `NextToGap`, not next to a gap.
    pub present: Vec<u64>,
    /// Intervals missing per bin; for `NextToGap`, next to a gap.
    pub missing: Vec<u64>,
}

impl Tab {
    fn totals(&self) -> (u64, u64) {
        (self.present.iter().sum(), self.missing.iter().sum())
    }

    /// Row-major counts for `analysis::independence` (one row per bin).
    pub fn counts(&self) -> Vec<u64> {
        self.present
            .iter()
            .zip(&self.missing)
            .flat_map(|(p, m)| [*p, *m])
            .collect()
    }

    /// Independence test (`None` for fewer than two non-empty bins or columns).
    pub fn test(&self) -> Option<Independence> {
        analysis::independence(&self.counts(), self.bins.len(), 2)
    }

    /// Expected missing in bin `i` under independence.
    pub fn expected(&self, i: usize) -> f64 {
        let (p, m) = self.totals();
        let n = p + m;
        if n == 0 {
            return 0.0;
        }
        (self.present[i] + self.missing[i]) as f64 * m as f64 / n as f64
    }

    /// Observed / expected missing in bin `i`.
    pub fn ratio(&self, i: usize) -> Option<f64> {
        let e = self.expected(i);
        (e > 0.0).then(|| self.missing[i] as f64 / e)
    }

    /// Neighbouring bins merged until each expects at least 5 present and 5
    /// missing. `None` when fewer than two bins remain.
    pub fn pooled(&self) -> Option<Tab> {
        let (p, m) = self.totals();
        let n = p + m;
        if p == 0 || m == 0 {
            return None;
        }
        let rate = (m.min(p)) as f64 / n as f64;
        let need = 5.0 / rate;
        let mut out = Tab {
            bins: Vec::new(),
            present: Vec::new(),
            missing: Vec::new(),
        };
        let mut acc: Option<(Bin, u64, u64)> = None;
        for i in 0..self.bins.len() {
            let (b, pp, mm) = match acc.take() {
                Some((b, pp, mm)) => (
                    b.merge(&self.bins[i]),
                    pp + self.present[i],
                    mm + self.missing[i],
                ),
                None => (self.bins[i].clone(), self.present[i], self.missing[i]),
            };
            if (pp + mm) as f64 >= need {
                out.bins.push(b);
                out.present.push(pp);
                out.missing.push(mm);
            } else {
                acc = Some((b, pp, mm));
            }
        }
        if let Some((b, pp, mm)) = acc {
            if pp + mm > 0 {
                match out.bins.last_mut() {
                    Some(last) => {
                        *last = last.merge(&b);
                        *out.present.last_mut()? += pp;
                        *out.missing.last_mut()? += mm;
                    }
                    None => return None,
                }
            }
        }
        (out.bins.len() >= 2).then_some(out)
    }
}

/// The estimated bias of a mean.
#[derive(Clone, Copy, Debug)]
pub struct Bias {
    /// Channel whose mean is compared.
    pub reference: usize,
    /// Its mean over all its passing intervals (or, for a gap-filled estimate,
    /// with gaps filled).
    pub all: f64,
    /// Its mean where the diagnosed channel passes.
    pub when_valid: f64,
}

impl Bias {
    /// `when_valid - all`: negative when keeping only valid intervals reads low.
    pub fn diff(&self) -> f64 {
        self.when_valid - self.all
    }
}

/// One factor's test.
#[derive(Clone, Debug)]
pub struct Factor {
    /// What it is.
    pub kind: FactorKind,
    /// Channel the factor is read from (speed, sector, temperature, own speed).
    pub reference: Option<usize>,
    /// Description with unit.
    pub label: String,
    /// The table as binned.
    pub raw: Tab,
    /// Test on the raw table.
    pub raw_test: Option<Independence>,
    /// Pooled table and its test.
    pub pooled: Option<(Tab, Independence)>,
    /// Mean run length of the missing intervals in the table.
    pub mean_run: f64,
    /// p-value of the pooled statistic divided by `mean_run`.
    pub p_adjusted: Option<f64>,
    /// The smallest Cramer's V the adjusted test detects with [`POWER`] at
    /// p < [`P_WEAK`] ([`detectable_v`]).
    pub detectable_v: Option<f64>,
    /// Bias of the mean, for numeric factors.
    pub bias: Option<Bias>,
}

impl Factor {
    fn strength(&self) -> Option<(f64, f64)> {
        let (_, t) = self.pooled.as_ref()?;
        Some((self.p_adjusted?, t.cramers_v))
    }

    fn is_strong(&self) -> bool {
        self.strength()
            .is_some_and(|(p, v)| p < P_STRONG && v >= V_MIN)
    }

    fn is_weak(&self) -> bool {
        self.strength()
            .is_some_and(|(p, v)| p < P_WEAK && v >= V_MIN)
    }

    /// A large effect in the pooled table before the run-length adjustment.
    fn is_large_raw(&self) -> bool {
        self.pooled
            .as_ref()
            .is_some_and(|(_, t)| t.p_chi2 < P_STRONG && t.cramers_v >= V_LARGE)
    }

    /// Whether the adjusted test could see a dependence of [`V_DETECT`].
    fn is_powered(&self) -> bool {
        self.detectable_v.is_some_and(|v| v <= V_DETECT)
    }
}

/// Upper-tail check of a speed channel against its Weibull fit.
#[derive(Clone, Copy, Debug)]
pub struct Tail {
    /// Intervals fitted.
    pub n: usize,
    /// ML fit.
    pub fit: Weibull,
    /// Fitted 90th and 99th percentiles.
    pub q90: f64,
    /// 99th.
    pub q99: f64,
    /// Share of intervals above `q90` (0.10 expected).
    pub above_q90: f64,
    /// Share above `q99` (0.01 expected).
    pub above_q99: f64,
}

/// The verdict on a channel's gaps.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Verdict {
    /// No missing interval.
    NoGaps,
    /// Nothing passes screening.
    NoData,
    /// Too few gaps for any test.
    TooFew,
    /// No factor shows an effect.
    Random,
    /// Weak evidence of a dependence.
    Possible,
    /// Strong evidence: missing not at random.
    NotRandom,
    /// Gaps enough for the tests, but too few to see a dependence of the
    /// size that matters: the record cannot tell (the power rule).
    TooShort,
}

impl Verdict {
    /// Code in the tables.
    pub fn code(self) -> &'static str {
        match self {
            Verdict::NoGaps => "no_gaps",
            Verdict::NoData => "no_data",
            Verdict::TooFew => "too_few_gaps",
            Verdict::Random => "random",
            Verdict::Possible => "possible",
            Verdict::NotRandom => "not_random",
            Verdict::TooShort => "too_short",
        }
    }
}

/// Diagnostics of one channel.
#[derive(Clone, Debug)]
pub struct Diagnosis {
    /// Channel index.
    pub channel: usize,
    /// Intervals in the grid.
    pub intervals: usize,
    /// Intervals missing or failing screening.
    pub missing: usize,
    /// Runs of consecutive missing intervals.
    pub runs: usize,
    /// The factors tested.
    pub factors: Vec<Factor>,
    /// Upper tail against the Weibull fit (speed channels).
    pub tail: Option<Tail>,
    /// Why intervals are missing: `(cause, intervals)`, causes being "no row",
    /// "no valid samples" and flag names (an interval may carry several flags).
    pub causes: Vec<(String, usize)>,
    /// The bias estimate shown beside the verdict (speed factor, or the
    /// gap-filled estimate without a reference anemometer).
    pub bias: Option<Bias>,
    /// The verdict.
    pub verdict: Verdict,
    /// The verdict in plain language.
    pub text: String,
}

/// Flags set by comparing two channels: the other channel may be the one at fault.
const RELATIONAL: [qc_core::Flag; 2] = [qc_core::Flag::PairMismatch, qc_core::Flag::Shear];

fn causes(s: &Series) -> Vec<(String, usize)> {
    let mut absent = 0;
    let mut empty = 0;
    let mut by_flag = [0usize; qc_core::Flag::ALL.len()];
    for slot in &s.rows {
        match slot {
            None => absent += 1,
            Some(r) if r.passed => {}
            Some(r) if r.tally.valid == 0 => empty += 1,
            Some(r) => {
                for f in r.flags.iter() {
                    by_flag[f as usize] += 1;
                }
            }
        }
    }
    let mut v = vec![
        ("no row".to_string(), absent),
        ("no valid samples".to_string(), empty),
    ];
    v.extend(
        qc_core::Flag::ALL
            .iter()
            .map(|f| (f.name().to_string(), by_flag[*f as usize])),
    );
    v.retain(|c| c.1 > 0);
    v
}

fn causes_text(c: &[(String, usize)]) -> String {
    let parts: Vec<String> = c.iter().map(|(k, n)| format!("{k} {n}")).collect();
    let mut s = format!("; causes: {}", parts.join(", "));
    let shared: Vec<&str> = c
        .iter()
        .filter(|(k, _)| RELATIONAL.iter().any(|f| f.name() == k))
        .map(|(k, _)| k.as_str())
        .collect();
    if !shared.is_empty() {
        s.push_str(&format!(
            " ({} compare two channels: the other one may be at fault)",
            shared.join(", ")
        ));
    }
    s
}

/// Whether a unit names a temperature.
pub fn is_temperature(s: &Series) -> bool {
    s.spec.kind == Kind::Scalar
        && s.spec.unit.as_deref().is_some_and(|u| {
            let u = u.trim().to_ascii_lowercase();
            matches!(
                u.as_str(),
                "degc" | "deg c" | "°c" | "c" | "celsius" | "k" | "kelvin" | "degf" | "°f"
            )
        })
}

/// The speed reference of channel `c`: `chosen` when given and different from
/// `c`; else for a speed channel another speed channel at the same height, then
/// the nearest height; for a vane its linked anemometer; else the highest
/// anemometer.
pub fn speed_reference(d: &Dataset, c: usize, chosen: Option<usize>) -> Option<usize> {
    if let Some(r) = chosen.filter(|&r| r != c) {
        return Some(r);
    }
    let me = &d.channels[c];
    let speeds = || {
        d.channels
            .iter()
            .enumerate()
            .filter(move |(i, s)| *i != c && s.spec.kind == Kind::Speed)
    };
    match me.spec.kind {
        Kind::Speed => {
            // The anemometer that passes in most of this channel's missing
            // intervals (it can see them), then the nearest in height.
            let covers = |s: &Series| (0..d.len).filter(|&i| !me.passes(i) && s.passes(i)).count();
            let dist = |s: &Series| match (me.height(), s.height()) {
                (Some(x), Some(y)) => (x - y).abs(),
                _ => f64::MAX,
            };
            speeds()
                .map(|(i, s)| (i, covers(s), dist(s)))
                .min_by(|a, b| b.1.cmp(&a.1).then(a.2.total_cmp(&b.2)))
                .map(|(i, _, _)| i)
        }
        Kind::Direction => me
            .spec
            .core
            .speed_channel
            .map(usize::from)
            .or_else(|| top_speed(d)),
        Kind::Scalar => top_speed(d),
    }
}

/// The highest anemometer (first in file order among equals).
pub fn top_speed(d: &Dataset) -> Option<usize> {
    let mut best: Option<(usize, f64)> = None;
    for (i, s) in d.channels.iter().enumerate() {
        if s.spec.kind != Kind::Speed {
            continue;
        }
        let h = s.height().unwrap_or(f64::NEG_INFINITY);
        if best.is_none_or(|(_, bh)| h > bh) {
            best = Some((i, h));
        }
    }
    best.map(|(i, _)| i)
}

/// The vane used for the sector factor of channel `c`.
fn vane_for(d: &Dataset, c: usize) -> Option<usize> {
    let vanes = || {
        d.channels
            .iter()
            .enumerate()
            .filter(move |(i, s)| *i != c && s.spec.kind == Kind::Direction)
    };
    vanes()
        .find(|(_, s)| s.spec.core.speed_channel.map(usize::from) == Some(c))
        .or_else(|| vanes().next())
        .map(|(i, _)| i)
}

/// Mean length of the runs of `true` among `included` intervals (runs broken
/// where the grid index jumps).
fn mean_run(included: &[usize], ind: &[bool]) -> f64 {
    let (mut n, mut runs) = (0usize, 0usize);
    for (k, &i) in included.iter().enumerate() {
        if ind[i] {
            n += 1;
            let continues = k > 0 && included[k - 1] + 1 == i && ind[included[k - 1]];
            runs += usize::from(!continues);
        }
    }
    if runs == 0 {
        1.0
    } else {
        n as f64 / runs as f64
    }
}

struct Binned {
    bins: Vec<Bin>,
    /// Bin of each included interval.
    of: Vec<(usize, usize)>,
}

fn factor(
    kind: FactorKind,
    label: String,
    reference: Option<usize>,
    binned: Binned,
    ind: &[bool],
    bias: Option<Bias>,
) -> Factor {
    let nb = binned.bins.len();
    let mut raw = Tab {
        bins: binned.bins,
        present: vec![0; nb],
        missing: vec![0; nb],
    };
    for &(i, b) in &binned.of {
        if ind[i] {
            raw.missing[b] += 1;
        } else {
            raw.present[b] += 1;
        }
    }
    let included: Vec<usize> = binned.of.iter().map(|x| x.0).collect();
    let run = mean_run(&included, ind);
    let raw_test = raw.test();
    let pooled = raw.pooled().and_then(|t| {
        let test = t.test()?;
        Some((t, test))
    });
    let p_adjusted = pooled
        .as_ref()
        .map(|(_, t)| chi2_upper_tail(t.chi2 / run.max(1.0), t.dof));
    let n: u64 = raw.present.iter().chain(&raw.missing).sum();
    let detectable_v = pooled
        .as_ref()
        .and_then(|(_, t)| detectable_v(n as f64 / run.max(1.0), t.dof));
    Factor {
        kind,
        reference,
        label,
        raw,
        raw_test,
        pooled,
        mean_run: run,
        p_adjusted,
        detectable_v,
        bias,
    }
}

fn numeric_bins(d: &Dataset, r: usize, width: f64, cap: usize, open_top: bool) -> Option<Binned> {
    let s = &d.channels[r];
    let vals: Vec<(usize, f64)> = (0..d.len).filter_map(|i| Some((i, s.value(i)?))).collect();
    let b = Bins::covering(vals.iter().map(|x| x.1), width, cap)?;
    let bins = (0..b.n)
        .map(|i| Bin {
            from: trim(b.low(i)),
            to: if open_top && i + 1 == b.n && b.n > 1 {
                String::new()
            } else {
                trim(b.low(i) + width)
            },
        })
        .collect();
    Some(Binned {
        bins,
        of: vals.iter().map(|&(i, v)| (i, b.of(v))).collect(),
    })
}

fn reference_bias(d: &Dataset, r: usize, c: usize) -> Option<Bias> {
    let s = &d.channels[r];
    let all: Vec<f64> = (0..d.len).filter_map(|i| s.value(i)).collect();
    let when: Vec<f64> = (0..d.len)
        .filter(|&i| d.channels[c].passes(i))
        .filter_map(|i| s.value(i))
        .collect();
    Some(Bias {
        reference: r,
        all: mean(&all)?,
        when_valid: mean(&when)?,
    })
}

/// Mean of channel `c` with each run of missing intervals filled with the mean
/// of the passing values on either side, against its plain mean.
fn gap_filled_bias(d: &Dataset, c: usize) -> Option<Bias> {
    let s = &d.channels[c];
    let mut values: Vec<f64> = Vec::with_capacity(d.len);
    let mut i = 0;
    while i < d.len {
        if let Some(v) = s.value(i) {
            values.push(v);
            i += 1;
            continue;
        }
        let start = i;
        while i < d.len && s.value(i).is_none() {
            i += 1;
        }
        let before = start.checked_sub(1).and_then(|k| s.value(k));
        let after = s.value(i);
        let fill = match (before, after) {
            (Some(a), Some(b)) => Some(0.5 * (a + b)),
            (a, b) => a.or(b),
        };
        if let Some(f) = fill {
            values.extend(std::iter::repeat_n(f, i - start));
        }
    }
    let valid: Vec<f64> = (0..d.len).filter_map(|i| s.value(i)).collect();
    Some(Bias {
        reference: c,
        all: mean(&values)?,
        when_valid: mean(&valid)?,
    })
}

fn tail(d: &Dataset, c: usize) -> Option<Tail> {
    let s = &d.channels[c];
    let v: Vec<f64> = (0..d.len).filter_map(|i| s.value(i)).collect();
    let fit = Weibull::fit_ml(&v)?;
    let q = |p: f64| fit.c * (-(1.0 - p).ln()).powf(1.0 / fit.k);
    let (q90, q99) = (q(0.9), q(0.99));
    let share = |x: f64| v.iter().filter(|&&s| s > x).count() as f64 / v.len() as f64;
    Some(Tail {
        n: v.len(),
        fit,
        q90,
        q99,
        above_q90: share(q90),
        above_q99: share(q99),
    })
}

fn unit_of(d: &Dataset, c: usize) -> String {
    d.channels[c].unit().to_string()
}

/// Runs the diagnostics for channel `c`; `reference` is the `--reference` choice.
pub fn diagnose(d: &Dataset, c: usize, reference: Option<usize>) -> Diagnosis {
    let me = &d.channels[c];
    let ind: Vec<bool> = (0..d.len).map(|i| !me.passes(i)).collect();
    let missing = ind.iter().filter(|&&m| m).count();
    let all: Vec<usize> = (0..d.len).collect();
    let runs = {
        let r = mean_run(&all, &ind);
        if missing == 0 {
            0
        } else {
            (missing as f64 / r).round() as usize
        }
    };
    let mut factors = Vec::new();

    if d.interval_ms <= 3 * 3_600_000 {
        let bins = (0..24)
            .map(|h| Bin {
                from: format!("{h:02}"),
                to: format!("{:02}", h + 1),
            })
            .collect();
        let of = (0..d.len)
            .map(|i| (i, usize::from(d.start(i).civil().hour)))
            .collect();
        factors.push(factor(
            FactorKind::Hour,
            "hour of day (UTC)".into(),
            None,
            Binned { bins, of },
            &ind,
            None,
        ));
    }
    let months: Vec<qc_core::Month> = {
        let mut m: Vec<qc_core::Month> = (0..d.len).map(|i| d.start(i).month()).collect();
        m.dedup();
        m
    };
    if months.len() >= 2 {
        let bins = months
            .iter()
            .map(|m| {
                let s = format!("{:04}-{:02}", m.year, m.month);
                Bin {
                    from: s.clone(),
                    to: s,
                }
            })
            .collect();
        let of = (0..d.len)
            .map(|i| {
                let m = d.start(i).month();
                (i, months.iter().position(|x| *x == m).unwrap_or(0))
            })
            .collect();
        factors.push(factor(
            FactorKind::Month,
            "calendar month (UTC)".into(),
            None,
            Binned { bins, of },
            &ind,
            None,
        ));
    }
    match speed_reference(d, c, reference) {
        Some(r) => {
            if let Some(b) = numeric_bins(d, r, SPEED_BIN, 13, true) {
                factors.push(factor(
                    FactorKind::Speed,
                    format!("wind speed at {} ({})", d.channels[r].id(), unit_of(d, r)),
                    Some(r),
                    b,
                    &ind,
                    reference_bias(d, r, c),
                ));
            }
        }
        None if me.spec.kind == Kind::Speed => {
            // No other anemometer: own speeds next to a gap against the rest.
            let next: Vec<bool> = (0..d.len)
                .map(|i| me.passes(i) && ((i > 0 && ind[i - 1]) || (i + 1 < d.len && ind[i + 1])))
                .collect();
            if let Some(b) = numeric_bins(d, c, SPEED_BIN, 13, true) {
                factors.push(factor(
                    FactorKind::NextToGap,
                    format!("own speed next to gaps ({})", unit_of(d, c)),
                    Some(c),
                    b,
                    &next,
                    gap_filled_bias(d, c),
                ));
            }
        }
        None => {}
    }
    if let Some(v) = vane_for(d, c) {
        let s = &d.channels[v];
        let bins = (0..SECTORS)
            .map(|k| {
                let n = analysis::compass_name(k, SECTORS)
                    .unwrap_or("?")
                    .to_string();
                Bin {
                    from: n.clone(),
                    to: n,
                }
            })
            .collect();
        let of = (0..d.len)
            .filter_map(|i| Some((i, usize::from(analysis::sector(s.value(i)?, SECTORS)?))))
            .collect();
        factors.push(factor(
            FactorKind::Sector,
            format!("direction sector at {} ({SECTORS} sectors)", s.id()),
            Some(v),
            Binned { bins, of },
            &ind,
            None,
        ));
    }
    if let Some(t) = (0..d.channels.len()).find(|&t| t != c && is_temperature(&d.channels[t])) {
        if let Some(b) = numeric_bins(d, t, TEMP_BIN, 40, false) {
            factors.push(factor(
                FactorKind::Temperature,
                format!("temperature at {} ({})", d.channels[t].id(), unit_of(d, t)),
                Some(t),
                b,
                &ind,
                reference_bias(d, t, c),
            ));
        }
    }
    let tail = (me.spec.kind == Kind::Speed).then(|| tail(d, c)).flatten();
    let causes = causes(me);
    let (verdict, mut text) = verdict(d, runs, missing, &factors, tail.as_ref());
    if matches!(verdict, Verdict::NotRandom | Verdict::Possible) {
        text.push_str(&causes_text(&causes));
    }
    let bias = factors
        .iter()
        .find(|f| matches!(f.kind, FactorKind::Speed | FactorKind::NextToGap))
        .and_then(|f| f.bias);
    Diagnosis {
        channel: c,
        intervals: d.len,
        missing,
        runs,
        factors,
        tail,
        causes,
        bias,
        verdict,
        text,
    }
}

/// Where gaps concentrate: the raw bins around the one with the highest
/// missing share (among bins of at least 5 intervals), merged with their
/// neighbours while the share stays within 5 percentage points of it (hours
/// wrap around midnight).
#[derive(Clone, Debug, PartialEq)]
pub struct HotRange {
    /// The merged bins.
    pub bin: Bin,
    /// Whether the range holds the first or the last bin.
    pub first: bool,
    /// Whether it holds the last bin.
    pub last: bool,
    /// Missing intervals in it.
    pub missing: u64,
    /// Intervals in it.
    pub total: u64,
    /// Missing share in it over the missing share overall.
    pub ratio: f64,
}

/// The [`HotRange`] of a table; `wrap` joins the last bin to the first.
pub fn hot_range(t: &Tab, wrap: bool) -> Option<HotRange> {
    let n = t.bins.len();
    let tot = |i: usize| t.present[i] + t.missing[i];
    let share = |i: usize| t.missing[i] as f64 / tot(i).max(1) as f64;
    let (p, m) = t.totals();
    let overall = m as f64 / (p + m).max(1) as f64;
    let min_n = if (0..n).any(|i| tot(i) >= 5 && t.missing[i] > 0) {
        5
    } else {
        1
    };
    let peak = (0..n)
        .filter(|&i| tot(i) >= min_n && t.missing[i] > 0)
        .max_by(|&a, &b| {
            share(a)
                .total_cmp(&share(b))
                .then(t.missing[a].cmp(&t.missing[b]))
        })?;
    let top = share(peak);
    let same = |i: usize| tot(i) > 0 && (share(i) - top).abs() <= 0.05;
    let step = |i: usize, fwd: bool| -> Option<usize> {
        match (fwd, wrap) {
            (true, _) if i + 1 < n => Some(i + 1),
            (true, true) => Some(0),
            (false, _) if i > 0 => Some(i - 1),
            (false, true) => Some(n - 1),
            _ => None,
        }
    };
    let (mut lo, mut hi, mut count) = (peak, peak, 1);
    while count < n {
        match step(hi, true).filter(|&j| same(j)) {
            Some(j) => {
                hi = j;
                count += 1;
            }
            None => break,
        }
    }
    while count < n {
        match step(lo, false).filter(|&j| same(j)) {
            Some(j) => {
                lo = j;
                count += 1;
            }
            None => break,
        }
    }
    let (mut missing, mut total, mut first, mut last) = (0, 0, false, false);
    let mut i = lo;
    for _ in 0..count {
        missing += t.missing[i];
        total += tot(i);
        first |= i == 0;
        last |= i + 1 == n;
        i = step(i, true).unwrap_or(i);
    }
    Some(HotRange {
        bin: t.bins[lo].merge(&t.bins[hi]),
        first,
        last,
        missing,
        total,
        ratio: if overall > 0.0 {
            missing as f64 / total.max(1) as f64 / overall
        } else {
            0.0
        },
    })
}

fn describe(d: &Dataset, f: &Factor) -> String {
    let Some(h) = hot_range(&f.raw, f.kind == FactorKind::Hour && f.raw.bins.len() == 24) else {
        return f.label.clone();
    };
    let b = &h.bin;
    let (first, last) = (h.first, h.last);
    let share = format!(
        "{:.0} % missing, {} of {} intervals, {:.1} times the average rate",
        100.0 * h.missing as f64 / h.total.max(1) as f64,
        h.missing,
        h.total,
        h.ratio
    );
    let unit = f.reference.map(|r| unit_of(d, r)).unwrap_or_default();
    let rid = f
        .reference
        .map(|r| d.channels[r].id().to_string())
        .unwrap_or_default();
    match f.kind {
        FactorKind::Speed | FactorKind::NextToGap => {
            let (what, which) = if last {
                ("strong wind", b.label())
            } else if first {
                ("light wind", b.label())
            } else {
                ("moderate wind", b.label())
            };
            if f.kind == FactorKind::Speed {
                format!("gaps concentrate in {what} ({rid} {which} {unit}: {share})")
            } else {
                format!(
                    "values next to gaps lie in {what} more often than others ({which} {unit}: {} of {} intervals next to a gap)",
                    h.missing, h.total
                )
            }
        }
        FactorKind::Hour => format!("gaps concentrate at {} h UTC: {share}", b.label()),
        FactorKind::Month => format!("gaps concentrate in {} ({share})", b.label()),
        FactorKind::Sector => format!(
            "gaps concentrate with wind from {} at {rid} ({share})",
            b.label()
        ),
        FactorKind::Temperature => {
            let what = if last {
                "warm weather"
            } else if first {
                "cold weather"
            } else {
                "mid-range temperatures"
            };
            format!(
                "gaps concentrate in {what} ({rid} {} {unit}: {share})",
                b.label()
            )
        }
    }
}

fn bias_text(d: &Dataset, f: &Factor) -> Option<String> {
    let b = f.bias?;
    let diff = b.diff();
    let unit = unit_of(d, b.reference);
    let dir = if diff < 0.0 { "low" } else { "high" };
    Some(match f.kind {
        FactorKind::NextToGap => format!(
            "filling each gap with its neighbours' mean moves the mean from {:.2} to {:.2} {unit}: the mean is likely biased {dir} by about {:.2} {unit}",
            b.when_valid,
            b.all,
            diff.abs()
        ),
        _ => format!(
            "the mean is likely biased {dir} by about {:.2} {unit} ({} mean {:.2} {unit} over all its passing intervals, {:.2} where {} passes)",
            diff.abs(),
            d.channels[b.reference].id(),
            b.all,
            b.when_valid,
            "this channel"
        ),
    })
}

/// A small number for text: scientific notation with two significant digits
/// below 0.001, else three decimals.
pub fn sci(x: f64) -> String {
    if x != 0.0 && x.abs() < 1e-3 {
        format!("{x:.1e}")
    } else {
        format!("{x:.3}")
    }
}

fn verdict(
    d: &Dataset,
    runs: usize,
    missing: usize,
    factors: &[Factor],
    tail: Option<&Tail>,
) -> (Verdict, String) {
    if missing == 0 {
        return (
            Verdict::NoGaps,
            "no gaps: every interval passes screening".into(),
        );
    }
    if missing == d.len {
        return (
            Verdict::NoData,
            "no interval passes screening: nothing to compare".into(),
        );
    }
    let context = factors
        .iter()
        .find(|f| f.kind == FactorKind::Speed)
        .and_then(|f| {
            let b = f.bias?;
            Some(format!(
                "; {} mean {:.2} {u} over all its passing intervals, {:.2} {u} where this channel passes",
                d.channels[b.reference].id(),
                b.all,
                b.when_valid,
                u = unit_of(d, b.reference)
            ))
        })
        .unwrap_or_default();
    let runs_in = |f: &Factor| f.raw.totals().1 as f64 / f.mean_run.max(1.0);
    let testable: Vec<&Factor> = factors
        .iter()
        .filter(|f| f.pooled.is_some() && runs_in(f) >= MIN_RUNS)
        .collect();
    let untested: Vec<&str> = factors
        .iter()
        .filter(|f| !testable.iter().any(|t| t.kind == f.kind))
        .map(|f| f.kind.key())
        .collect();
    let wind_untested = factors.iter().any(|f| {
        matches!(f.kind, FactorKind::Speed | FactorKind::NextToGap)
            && untested.contains(&f.kind.key())
    });
    let large: Vec<&Factor> = factors.iter().filter(|f| f.is_large_raw()).collect();
    if testable.is_empty() && large.is_empty() {
        return (
            Verdict::TooFew,
            format!(
                "too few separate gaps to judge ({missing} missing intervals in {runs} runs; each test needs {MIN_RUNS}){context}"
            ),
        );
    }
    let untested_note = if untested.is_empty() {
        String::new()
    } else {
        format!("; too few separate gaps to test {}", untested.join(", "))
    };
    let by_v = |a: &&&Factor, b: &&&Factor| {
        let v = |f: &Factor| f.pooled.as_ref().map_or(0.0, |p| p.1.cramers_v);
        v(a).total_cmp(&v(b))
    };
    let numeric = |f: &&Factor| matches!(f.kind, FactorKind::Speed | FactorKind::NextToGap);
    let strong: Vec<&Factor> = testable.iter().copied().filter(|f| f.is_strong()).collect();
    let weak: Vec<&Factor> = testable
        .iter()
        .copied()
        .filter(|f| f.is_weak() && !f.is_strong())
        .collect();
    let tail_note = tail
        .filter(|_| factors.iter().any(|f| f.kind == FactorKind::NextToGap))
        .map(|t| {
            format!(
                "; upper tail: {:.1} % of intervals above the fitted 99th percentile (1 % expected)",
                100.0 * t.above_q99
            )
        })
        .unwrap_or_default();
    let lead = |set: &[&Factor]| -> Option<Factor> {
        set.iter()
            .copied()
            .find(numeric)
            .or_else(|| set.iter().max_by(by_v).copied())
            .cloned()
    };
    let others = |set: &[&Factor], lead: &Factor| -> String {
        let rest: Vec<String> = set
            .iter()
            .filter(|f| f.kind != lead.kind)
            .map(|f| {
                format!(
                    "{} (V {:.2})",
                    f.label,
                    f.pooled.as_ref().map_or(0.0, |p| p.1.cramers_v)
                )
            })
            .collect();
        if rest.is_empty() {
            String::new()
        } else {
            format!("; also linked to {}", rest.join(", "))
        }
    };
    if let Some(f) = lead(&strong) {
        let mut s = format!("NOT RANDOM: {}", describe(d, &f));
        if let Some(b) = bias_text(d, &f) {
            s.push_str("; ");
            s.push_str(&b);
        }
        s.push_str(&others(&strong, &f));
        s.push_str(&tail_note);
        return (Verdict::NotRandom, s);
    }
    if let Some(f) = lead(&weak) {
        let mut s = format!("gaps may depend on {}: {}", f.label, describe(d, &f));
        s.push_str(" (weak evidence)");
        s.push_str(&context);
        s.push_str(&others(&weak, &f));
        s.push_str(&tail_note);
        return (Verdict::Possible, s);
    }
    if let Some(f) = lead(&large) {
        let (p, v) = f
            .pooled
            .as_ref()
            .map_or((f64::NAN, f64::NAN), |(_, t)| (t.p_chi2, t.cramers_v));
        let mut s = format!(
            "POSSIBLE, too short to confirm: gaps may depend on {}: {}; the pooled table gives p {} and Cramer's V {v:.2}, but the gaps come in runs (mean {:.1} intervals), and the run-adjusted p {} does not confirm it",
            f.label,
            describe(d, &f),
            sci(p),
            f.mean_run,
            f.p_adjusted.map_or("-".into(), sci)
        );
        s.push_str(&context);
        s.push_str(&others(&large, &f));
        s.push_str(&tail_note);
        return (Verdict::Possible, s);
    }
    if testable.is_empty() {
        return (
            Verdict::TooFew,
            format!(
                "too few separate gaps to judge ({missing} missing intervals in {runs} runs; each test needs {MIN_RUNS}){context}"
            ),
        );
    }
    let names: Vec<&str> = testable.iter().map(|f| f.kind.key()).collect();
    let text = format!(
        "no link to {} (p >= {P_WEAK} or Cramer's V < {V_MIN}){untested_note}{context}{tail_note}",
        names.join(", ")
    );
    if wind_untested {
        // Randomness with respect to the wind itself, the main concern, is untested.
        return (
            Verdict::TooFew,
            format!("not enough gaps to judge against wind speed: {text}"),
        );
    }
    let weakest = testable
        .iter()
        .filter(|f| !f.is_powered())
        .filter_map(|f| Some((f.kind.key(), f.detectable_v?)))
        .max_by(|a, b| a.1.total_cmp(&b.1));
    let unpowered = testable.iter().any(|f| !f.is_powered());
    if unpowered {
        let (key, v) = weakest.unwrap_or(("?", f64::NAN));
        return (
            Verdict::TooShort,
            format!(
                "too short to call random: {text}; but the tests could only have seen a strong dependence ({key}: V >= {v:.2} at {:.0} % power, the rule asks {V_DETECT})",
                100.0 * POWER
            ),
        );
    }
    (Verdict::Random, format!("gaps look random: {text}"))
}

/// Tables: tests, bins, verdicts, tails.
pub fn tables(d: &Dataset, diags: &[Diagnosis]) -> [Table; 4] {
    let mut tests = Table::new(
        "missing-tests",
        &[
            ("channel", "channel"),
            ("factor", "factor"),
            ("reference", "read from"),
            ("n", "intervals"),
            ("n_missing", "missing"),
            ("bins", "bins"),
            ("chi2", "chi-square"),
            ("g", "G"),
            ("dof", "dof"),
            ("p_chi2", "p (chi-square)"),
            ("p_g", "p (G)"),
            ("cramers_v", "Cramer's V"),
            ("pooled_bins", "pooled bins"),
            ("pooled_chi2", "pooled chi-square"),
            ("pooled_dof", "pooled dof"),
            ("pooled_p_chi2", "pooled p"),
            ("pooled_cramers_v", "pooled V"),
            ("mean_run", "mean gap run"),
            ("p_adjusted", "adjusted p"),
            ("detectable_v", "detectable V (80 % power)"),
        ],
    );
    let mut bins = Table::new(
        "missing-bins",
        &[
            ("channel", "channel"),
            ("factor", "factor"),
            ("bin", "bin"),
            ("present", "present"),
            ("missing", "missing"),
            ("expected_missing", "expected missing"),
            ("ratio", "observed / expected"),
        ],
    );
    let mut verdicts = Table::new(
        "missing-verdicts",
        &[
            ("channel", "channel"),
            ("intervals", "intervals"),
            ("missing", "missing"),
            ("runs", "gap runs"),
            ("verdict", "verdict"),
            ("bias_reference", "bias read on"),
            ("mean_all", "mean, all"),
            ("mean_when_valid", "mean, channel valid"),
            ("bias", "bias"),
            ("bias_above_mark", "bias above mark"),
            ("causes", "causes"),
            ("text", "in words"),
        ],
    );
    let mut tails = Table::new(
        "missing-tail",
        &[
            ("channel", "channel"),
            ("n", "intervals"),
            ("k", "Weibull k"),
            ("c", "Weibull c"),
            ("q90", "fitted 90th percentile"),
            ("share_above_q90", "share above (10 % expected)"),
            ("q99", "fitted 99th percentile"),
            ("share_above_q99", "share above (1 % expected)"),
        ],
    );
    for g in diags {
        let id = d.channels[g.channel].id();
        for f in &g.factors {
            let (n_present, n_missing) = f.raw.totals();
            let r = f.raw_test;
            let p = f.pooled.as_ref();
            tests.push(vec![
                text(id),
                text(f.kind.key()),
                text(f.reference.map_or("", |r| d.channels[r].id())),
                int(n_present + n_missing),
                int(n_missing),
                int(f.raw.bins.len() as u64),
                num(r.map(|t| t.chi2), 2),
                num(r.map(|t| t.g), 2),
                num(r.map(|t| f64::from(t.dof)), 0),
                pval(r.map(|t| t.p_chi2)),
                pval(r.map(|t| t.p_g)),
                num(r.map(|t| t.cramers_v), 3),
                num(p.map(|x| x.0.bins.len() as f64), 0),
                num(p.map(|x| x.1.chi2), 2),
                num(p.map(|x| f64::from(x.1.dof)), 0),
                pval(p.map(|x| x.1.p_chi2)),
                num(p.map(|x| x.1.cramers_v), 3),
                num(Some(f.mean_run), 2),
                pval(f.p_adjusted),
                num(f.detectable_v, 2),
            ]);
            for i in 0..f.raw.bins.len() {
                if f.raw.present[i] + f.raw.missing[i] == 0 {
                    continue;
                }
                bins.push(vec![
                    text(id),
                    text(f.kind.key()),
                    text(f.raw.bins[i].label()),
                    int(f.raw.present[i]),
                    int(f.raw.missing[i]),
                    num(Some(f.raw.expected(i)), 2),
                    num(f.raw.ratio(i), 2),
                ]);
            }
        }
        let bias = g.bias;
        let class = match g.verdict {
            Verdict::NotRandom => "below",
            Verdict::Possible => "warn",
            _ => "ok",
        };
        verdicts.push(vec![
            text(id),
            int(g.intervals as u64),
            int(g.missing as u64),
            int(g.runs as u64),
            text(g.verdict.code()).class(class),
            text(bias.map_or("", |b| d.channels[b.reference].id())),
            num(bias.map(|b| b.all), 3),
            num(bias.map(|b| b.when_valid), 3),
            num(bias.map(|b| b.diff()), 3),
            text(bias.map_or("", |b| {
                if b.diff().abs() > BIAS_MARK {
                    "yes"
                } else {
                    "no"
                }
            })),
            text(
                g.causes
                    .iter()
                    .map(|(k, n)| format!("{k} {n}"))
                    .collect::<Vec<_>>()
                    .join("; "),
            )
            .class("wrapn"),
            text(&g.text).class("wrap"),
        ]);
        if let Some(t) = &g.tail {
            tails.push(vec![
                text(id),
                int(t.n as u64),
                num(Some(t.fit.k), 3),
                num(Some(t.fit.c), 3),
                num(Some(t.q90), 2),
                pct(Some(t.above_q90), 1),
                num(Some(t.q99), 2),
                pct(Some(t.above_q99), 2),
            ]);
        }
    }
    [tests, bins, verdicts, tails]
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tab(present: &[u64], missing: &[u64]) -> Tab {
        Tab {
            bins: (0..present.len())
                .map(|i| Bin {
                    from: i.to_string(),
                    to: (i + 1).to_string(),
                })
                .collect(),
            present: present.to_vec(),
            missing: missing.to_vec(),
        }
    }

    #[test]
    fn pooling_reaches_five_expected_per_cell() {
        // 10 missing of 100: each pooled bin needs 50 intervals to expect 5 missing.
        let t = tab(&[9, 9, 9, 9, 9, 9, 9, 9, 9, 9], &[1; 10]);
        let p = t.pooled().unwrap();
        assert_eq!(p.bins.len(), 2);
        assert_eq!(p.bins[0].label(), "0-5");
        assert_eq!(p.present, [45, 45]);
        assert_eq!(p.missing, [5, 5]);
        for i in 0..2 {
            assert!(p.expected(i) >= 5.0);
        }
        // Too few missing for two bins.
        assert!(tab(&[50, 50], &[1, 2]).pooled().is_none());
        // Leftover merges into the last bin; an open top bin stays open.
        let mut t = tab(&[70, 70, 3], &[6, 6, 0]);
        t.bins[2].to = String::new();
        let p = t.pooled().unwrap();
        assert_eq!(p.bins.len(), 2);
        assert_eq!(p.bins[1].label(), ">= 1");
        assert_eq!(p.present, [70, 73]);
    }

    #[test]
    fn power_of_the_chi_square_test() {
        // One degree of freedom: the non-central chi-square with lambda is the
        // square of a normal with mean sqrt(lambda), so the power at level
        // alpha is Phi(sqrt(lambda) - z) + Phi(-sqrt(lambda) - z) with z the
        // upper alpha/2 normal quantile; power 0.8 at alpha 0.01 needs
        // lambda = (2.5758 + 0.8416)^2 = 11.679 (normal quantiles from
        // memory; common practice in sample-size tables).
        let lambda = noncentrality_for_power(0.01, 1, 0.8);
        assert!((lambda - 11.679).abs() < 0.01, "{lambda}");
        // The 1 % critical value of chi-square on 1 dof is 2.5758^2 = 6.635.
        assert!((chi2_critical(0.01, 1) - 6.635).abs() < 1e-3);
        // lambda 0 is the central distribution.
        assert!((ncx2_upper_tail(6.635, 1, 0.0) - 0.01).abs() < 1e-4);
        // More degrees of freedom need a larger lambda for the same power.
        assert!(noncentrality_for_power(0.01, 4, 0.8) > lambda);
        // n_eff 100 on 1 dof detects V = sqrt(11.679 / 100) = 0.342.
        assert!((detectable_v(100.0, 1).unwrap() - 0.3417).abs() < 1e-3);
    }

    #[test]
    fn hot_ranges_merge_neighbours_with_the_same_excess() {
        // 24 hours, all present except 22-04 h where everything is missing:
        // one range across midnight.
        let mut present = vec![6u64; 24];
        let mut missing = vec![0u64; 24];
        for h in [22, 23, 0, 1, 2, 3] {
            present[h] = 0;
            missing[h] = 6;
        }
        let mut t = tab(&present, &missing);
        for h in 0..24 {
            t.bins[h] = Bin {
                from: format!("{h:02}"),
                to: format!("{:02}", h + 1),
            };
        }
        let h = hot_range(&t, true).unwrap();
        assert_eq!(h.bin.label(), "22-04");
        assert_eq!((h.missing, h.total), (36, 36));
        // Without wrapping, the range stops at the table's end.
        let h = hot_range(&t, false).unwrap();
        assert_eq!(h.bin.label(), "22-24");
        // A speed table: the top two bins both lose about 95 %.
        let t = tab(&[50, 50, 1, 1], &[0, 0, 19, 20]);
        let h = hot_range(&t, false).unwrap();
        assert_eq!(h.bin.label(), "2-4");
        assert!(h.last && !h.first);
    }

    #[test]
    fn run_lengths() {
        let ind = [false, true, true, false, true, false, true, true, true];
        let all: Vec<usize> = (0..ind.len()).collect();
        assert!((mean_run(&all, &ind) - 2.0).abs() < 1e-12);
        // Leaving index 7 out splits the last run.
        let some = [0, 1, 2, 3, 4, 5, 6, 8];
        assert!((mean_run(&some, &ind) - 5.0 / 4.0).abs() < 1e-12);
        assert_eq!(mean_run(&all, &[false; 9]), 1.0);
    }

    #[test]
    fn table_layout_for_the_core_test() {
        // [[10, 90], [30, 70]] as bins x (present, missing): the core's check
        // value chi2 12.5, dof 1 (scipy.stats.chi2_contingency, scipy 1.17:
        // CHECK-VALUES "derived").
        let t = tab(&[10, 30], &[90, 70]);
        let r = t.test().unwrap();
        assert!((r.chi2 - 12.5).abs() < 1e-9);
        assert_eq!(r.dof, 1);
        assert!((t.expected(0) - 80.0).abs() < 1e-12);
    }
}

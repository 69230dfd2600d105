//! `tenmin report`: recovery, missing-data diagnostics, wind rose,
//! distributions, turbulence and shear from records files, as one
//! self-contained HTML page with SVG charts, the tables as CSV files, and a
//! short summary on stdout.
//!
//! The report reads records (the contract's format) and the station file, and
//! takes every statistic from `qc_core`: whether an interval passes screening
//! (`screen::passes`), recovery totals (`Totals`), sectors and compass names,
//! Weibull fits and power density, the normal turbulence model, the shear
//! exponent and the independence tests (`analysis`). What it adds is grouping,
//! counting and drawing. See `REPORT.md` for what each part means.

mod charts;
mod data;
mod events;
mod html;
mod missing;
mod recovery;
mod site;
mod stats;
mod table;
mod wind;

use std::fs;
use std::io::{self, Write};
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::{bail, Context, Result};
use qc_core::Kind;

use crate::config;
use crate::output;
use crate::timefmt::Rfc3339;

use self::missing::{Diagnosis, FactorKind};
use self::table::{esc, Table};

/// Options of `tenmin report`.
#[derive(clap::Args, Debug)]
pub struct ReportArgs {
    /// Station file (TOML).
    #[arg(long, short = 'c', value_name = "STATION.toml")]
    pub config: PathBuf,
    /// Records CSV files (as `tenmin replay` writes them), in any order.
    #[arg(required = true, value_name = "RECORDS")]
    pub records: Vec<PathBuf>,
    /// Folder to write report.html and the tables into (created if needed).
    #[arg(
        long = "output",
        short = 'o',
        alias = "out",
        default_value = "tenmin-report",
        value_name = "DIR"
    )]
    pub output: PathBuf,
    /// Sectors of the wind rose: 8, 12, 16 or 36, the first centred on north.
    #[arg(long, default_value_t = 16, value_parser = parse_sectors, value_name = "N",
          allow_negative_numbers = true)]
    pub sectors: u16,
    /// Air density for power density, kg/m^3 (1.225: ISO standard atmosphere at 15 C, sea level).
    #[arg(long, default_value_t = 1.225, value_parser = parse_density, value_name = "KG/M3",
          allow_negative_numbers = true)]
    pub air_density: f64,
    /// Reference anemometer for the missing-data diagnostics (default: a
    /// redundant or nearest-height anemometer per channel).
    #[arg(long, value_name = "CHANNEL")]
    pub reference: Option<String>,
}

fn parse_sectors(s: &str) -> Result<u16, String> {
    match s.trim().parse::<u16>() {
        Ok(n @ (8 | 12 | 16 | 36)) => Ok(n),
        _ => Err(format!("{s:?}: sectors must be 8, 12, 16 or 36")),
    }
}

fn parse_density(s: &str) -> Result<f64, String> {
    match s.trim().parse::<f64>() {
        Ok(v) if v.is_finite() && (0.5..=2.0).contains(&v) => Ok(v),
        _ => Err(format!(
            "{s:?}: air density must be a number of kg/m^3 between 0.5 and 2.0"
        )),
    }
}

/// The caution shown on the page and in the summary.
pub const CAUTION: &str = "Screening and these diagnostics support, but do not replace, a qualified \
assessment for financing decisions. Energy-yield and other bankable estimates, and any work on masts \
or electrical installations, follow local codes and licensed, qualified practice.";

/// Everything computed for one report.
struct Results {
    recovery: recovery::Recovery,
    diags: Vec<Diagnosis>,
    rose: Option<wind::Rose>,
    dists: Vec<wind::Distribution>,
    primary: Option<usize>,
    ti: Vec<wind::TiBin>,
    shear: Option<wind::Shear>,
    outages: Vec<crate::outages::Outage>,
    pairs: Vec<site::Pair>,
    density: Option<site::Density>,
    events: Vec<events::Event>,
}

/// The campaign's events, when the station file names an events file.
fn load_events(cfg: &config::StationFile) -> Result<Vec<events::Event>> {
    match &cfg.events {
        Some((path, line)) => events::read(&cfg.path, path, *line),
        None => Ok(Vec::new()),
    }
}

fn compute(
    d: &data::Dataset,
    sectors: u16,
    rho: f64,
    reference: Option<usize>,
    events: Vec<events::Event>,
) -> Results {
    let primary = missing::top_speed(d);
    Results {
        recovery: recovery::compute(d),
        diags: (0..d.channels.len())
            .map(|c| missing::diagnose(d, c, reference))
            .collect(),
        rose: wind::rose(d, sectors, rho),
        dists: wind::distributions(d, rho),
        ti: primary.map(|c| wind::turbulence(d, c)).unwrap_or_default(),
        primary,
        shear: wind::shear(d, sectors),
        outages: site::outages(d),
        pairs: site::pairs(d),
        density: site::density(d),
        events,
    }
}

/// The tables a report writes (`<name>.csv` in its folder, beside
/// `report.html`): every file name is known before anything is read, so that
/// none of them can be an input.
pub const TABLES: [&str; 20] = [
    "recovery",
    "recovery-joint",
    "outages",
    "monthly",
    "month-hour",
    "thresholds",
    "redundant-pairs",
    "air-density",
    "events",
    "missing-tests",
    "missing-bins",
    "missing-verdicts",
    "missing-tail",
    "rose",
    "rose-speed-sector",
    "weibull",
    "speed-histogram",
    "turbulence",
    "shear",
    "shear-pairs",
];

/// Every file a report may write into `dir`.
fn files(dir: &Path) -> Vec<PathBuf> {
    std::iter::once(dir.join("report.html"))
        .chain(TABLES.iter().map(|t| dir.join(format!("{t}.csv"))))
        .collect()
}

/// Runs `tenmin report`.
pub fn run(a: &ReportArgs) -> Result<ExitCode> {
    let mut inputs = vec![("station file", a.config.as_path())];
    inputs.extend(a.records.iter().map(|r| ("records file", r.as_path())));
    if a.output.exists() && !a.output.is_dir() {
        bail!(
            "{}: is a file; the output of `tenmin report` is a folder to write report.html and the tables into",
            a.output.display()
        );
    }
    for f in files(&a.output) {
        output::refuse_inputs(&f, &inputs)?;
    }
    let cfg = config::load(&a.config)?;
    let reference = reference_of(&cfg, a)?;
    if let Some((ev, _)) = &cfg.events {
        for f in files(&a.output) {
            output::refuse_inputs(&f, &[("events file", ev.as_path())])?;
        }
    }
    let ev = load_events(&cfg)?;
    let d = data::read(&cfg, &a.records)?;
    let r = compute(&d, a.sectors, a.air_density, reference, ev);
    let tables = tables(&d, &r, a.air_density);
    if let Some(t) = tables.iter().find(|t| !TABLES.contains(&t.name)) {
        bail!(
            "table {:?} is missing from report::TABLES (a bug: please report it)",
            t.name
        );
    }
    let page = page(&d, &r, &tables, a)?;
    fs::create_dir_all(&a.output)
        .with_context(|| format!("cannot create the folder {}", a.output.display()))?;
    for t in &tables {
        t.write(&a.output)?;
    }
    let html = a.output.join("report.html");
    let ((), digest) = output::write_to_digest(Some(&html), "the report", |w| {
        Ok(w.write_all(page.as_bytes())?)
    })?;
    let used = crate::provenance::inputs(&cfg, "records", a.records.iter().map(|p| p.as_path()));
    crate::provenance::write(&html, &cfg, &used, &[], digest)?;
    let mut out = output::Output::stdout("the report's summary");
    summary(&mut out, &d, &r, a, tables.len())?;
    out.finish()?;
    Ok(ExitCode::SUCCESS)
}

/// The channel of `--reference`, checked against the station file.
fn reference_of(cfg: &config::StationFile, a: &ReportArgs) -> Result<Option<usize>> {
    Ok(match &a.reference {
        None => None,
        Some(id) => match cfg.channels.iter().position(|c| &c.id == id) {
            Some(i) if cfg.channels[i].kind == Kind::Speed => Some(i),
            Some(_) => bail!(
                "--reference {id:?}: not a speed channel in {}",
                a.config.display()
            ),
            None => bail!(
                "--reference {id:?}: no such channel in {} (channels: {})",
                a.config.display(),
                cfg.channels
                    .iter()
                    .map(|c| c.id.as_str())
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
        },
    })
}

/// The report's tables as `tenmin report` writes them: each table's name
/// (its file is `<name>.csv`) and CSV text, computed from `a.records` as
/// [`run`] computes them, writing nothing (the Python package's
/// `tenmin.report_tables`).
pub fn table_texts(
    cfg: &config::StationFile,
    a: &ReportArgs,
) -> Result<Vec<(&'static str, String)>> {
    let reference = reference_of(cfg, a)?;
    let d = data::read(cfg, &a.records)?;
    let r = compute(&d, a.sectors, a.air_density, reference, load_events(cfg)?);
    Ok(tables(&d, &r, a.air_density)
        .iter()
        .map(|t| (t.name, t.csv()))
        .collect())
}

/// What [`run`] makes of `a.records`, without writing a file: the page, the
/// tables as CSV and the summary, as text (the reference channel chosen per
/// channel). The fuzz target of the records reader (`crate::fuzzing::records`)
/// goes through here.
pub fn render(cfg: &config::StationFile, a: &ReportArgs) -> Result<Vec<String>> {
    let d = data::read(cfg, &a.records)?;
    let r = compute(&d, a.sectors, a.air_density, None, load_events(cfg)?);
    let tables = tables(&d, &r, a.air_density);
    let mut out: Vec<String> = tables.iter().map(Table::csv).collect();
    out.push(page(&d, &r, &tables, a)?);
    let mut text = Vec::new();
    summary(&mut text, &d, &r, a, tables.len())?;
    out.push(String::from_utf8_lossy(&text).into_owned());
    Ok(out)
}

fn tables(d: &data::Dataset, r: &Results, rho: f64) -> Vec<Table> {
    let mut v = vec![
        recovery::table(d, &r.recovery),
        recovery::joint_table(d, &r.recovery),
        site::outage_table(d, &r.outages),
        site::monthly_table(d),
        site::thresholds_table(d),
        site::pair_table(d, &r.pairs),
        site::density_table(d, r.density.as_ref(), rho),
        events::table(&r.events),
    ];
    if let Some(c) = r.primary {
        v.push(site::month_hour_table(d, c));
    }
    v.extend(missing::tables(d, &r.diags));
    if let Some(rose) = &r.rose {
        v.extend(wind::rose_tables(rose));
    }
    v.push(wind::weibull_table(d, &r.dists, rho));
    if let Some(x) = r
        .primary
        .and_then(|p| r.dists.iter().find(|x| x.channel == p))
    {
        v.push(wind::histogram_table(x));
    }
    if !r.ti.is_empty() {
        v.push(wind::turbulence_table(&r.ti));
    }
    if let Some(s) = &r.shear {
        v.extend(wind::shear_tables(d, s));
    }
    v
}

fn find<'a>(tables: &'a [Table], name: &str) -> Option<&'a Table> {
    tables.iter().find(|t| t.name == name)
}

fn period(d: &data::Dataset) -> String {
    format!("{} to {}", Rfc3339(d.start(0)), Rfc3339(d.start(d.len)))
}

fn pct(x: Option<f64>) -> String {
    x.map_or("-".into(), |v| format!("{:.1} %", 100.0 * v))
}

fn page(d: &data::Dataset, r: &Results, tables: &[Table], a: &ReportArgs) -> Result<String> {
    let name = d.name.clone().unwrap_or_else(|| "Station".into());
    let title = format!("{name}: measurement report");
    let files: Vec<String> = d.files.iter().map(|f| f.display().to_string()).collect();
    let mut p = html::Page::new(
        &title,
        &[
            format!(
                "Period {} (UTC), {} intervals of {} s, {} channels",
                period(d),
                d.len,
                d.interval_ms / 1000,
                d.channels.len()
            ),
            format!(
                "{} records rows from {}; station file {}",
                d.rows_read,
                files.join(", "),
                a.config.display()
            ),
        ],
    );
    p.caution(CAUTION);

    // 1. Recovery.
    p.section("1", "recovery", "Data recovery");
    p.p("Sample recovery is valid samples over possible samples at the nominal rate; interval recovery is intervals that pass screening (valid samples and no flag other than partial or clock) over the intervals of the period. The usual target is 90 % (US EPA-454/R-99-005 sec. 5.3.2, which applies it per quarter, per variable and jointly for wind speed and direction). Cells below it are marked.");
    p.chart(
        "recovery",
        &charts::recovery(d, &r.recovery)?,
        "Recovery over the whole period per channel; the dashed line is the 90 % target.",
    );
    p.chart(
        "availability",
        &charts::availability(d, &r.events)?,
        "Availability: red where an interval has no valid samples or no row at all, amber where it fails screening; numbered dashed lines are events (table in section 8).",
    );
    if let Some(t) = find(tables, "recovery") {
        p.raw(&t.html());
    }
    if let Some(t) = find(tables, "recovery-joint").filter(|t| !t.rows.is_empty()) {
        p.h3("Joint recovery of wind speed and direction");
        p.note("Intervals where the vane and its anemometer both pass screening.");
        p.raw(&t.html());
    }
    if let Some(t) = find(tables, "outages") {
        p.h3("Outages");
        p.note("Runs of intervals that fail screening, per channel, merged across adjacent intervals and across channels with the same start, end and causes. Causes: no row (the records hold none), excluded (samples excluded by decision: n_excluded or the excluded flag), no valid samples, flagged (with the flags seen).");
        if t.rows.len() > 25 {
            p.details(&format!("{} outages (table)", t.rows.len()));
            p.raw(&t.html());
            p.end_details();
        } else if t.rows.is_empty() {
            p.note("No outages: every interval of every channel passes screening.");
        } else {
            p.raw(&t.html());
        }
    }
    p.end_section();

    // 2. Missing data.
    p.section("2", "missing", "Missing-data diagnostics");
    p.p("A gap matters less by its size than by its cause. Data missing at random leave the mean of what remains unbiased; gaps that depend on the wind itself (an anemometer that drops out in storms, a vane that ices in the cold) bias it even when recovery looks fine (missing not at random, after Rubin 1976, Biometrika 63(3), 581-592). Each channel's missing intervals (no valid samples or failing screening) are tested against hour of day, month, wind speed from a reference anemometer, direction sector and temperature.");
    p.raw("<div class=\"verdicts\">");
    for g in &r.diags {
        let bias = g.bias.map_or(String::new(), |b| {
            let above = b.diff().abs() > missing::BIAS_MARK;
            format!(
                "<p class=\"bias{}\">bias estimate {:+.2} {} (on {}){}</p>",
                if above { " above" } else { "" },
                b.diff(),
                esc(d.channels[b.reference].unit()),
                esc(d.channels[b.reference].id()),
                if above {
                    format!(" &#9650; above {} m/s", missing::BIAS_MARK)
                } else {
                    String::new()
                }
            )
        });
        p.raw(&format!(
            "<div class=\"verdict\"><b>{}</b> <b class=\"tag {}\">{}</b>{bias}<p>{}</p></div>",
            esc(d.channels[g.channel].id()),
            g.verdict.code(),
            g.verdict.code().replace('_', " "),
            esc(&g.text)
        ));
    }
    p.raw("</div>");
    p.note(&format!(
        "Verdicts use the pooled tables (neighbouring bins merged until every bin expects 5 present and 5 missing intervals) with the chi-square divided by the mean run of consecutive missing intervals: \"not random\" at p < {} with Cramer's V >= {}, \"possible\" at p < {}. A large effect before that adjustment (p < {} and V >= {}) that the adjusted test cannot confirm is \"possible, too short to confirm\". \"Random\" needs power: every test at least {} separate gaps and {:.0} % power to see V = {} at p < {}; otherwise \"too short\". The bias estimate beside each verdict is a reference anemometer's mean where this channel passes minus its mean over all its passing intervals (screened 10-minute means, so it estimates the bias of the channel's mean of interval means, not of the raw sample mean); it is marked above {} m/s, about a good cup anemometer's calibration uncertainty (common practice). The thresholds are this report's choice.",
        missing::P_STRONG,
        missing::V_MIN,
        missing::P_WEAK,
        missing::P_STRONG,
        missing::V_LARGE,
        missing::MIN_RUNS,
        100.0 * missing::POWER,
        missing::V_DETECT,
        missing::P_WEAK,
        missing::BIAS_MARK
    ));
    if let Some(svg) = charts::missing_share(d, &r.diags, FactorKind::Speed)? {
        p.chart("missing-speed", &svg, "Share of intervals missing by reference wind speed (bins with at least 5 intervals). A flat line is what random gaps look like.");
    }
    if let Some(svg) = charts::missing_share(d, &r.diags, FactorKind::Hour)? {
        p.chart(
            "missing-hour",
            &svg,
            "Share of intervals missing by hour of day (UTC).",
        );
    }
    if let Some(t) = find(tables, "missing-verdicts") {
        p.details("Verdicts with the bias estimate (table)");
        p.raw(&t.html());
        p.end_details();
    }
    if let Some(t) = find(tables, "missing-tests") {
        p.details("Independence tests per channel and factor");
        p.note("Raw: the bins as listed (what scipy.stats.chi2_contingency gives on the same table, without continuity correction). Pooled: bins merged for the verdict. Adjusted p: pooled chi-square divided by the mean gap run.");
        p.raw(&t.html());
        p.end_details();
    }
    if let Some(t) = find(tables, "missing-bins") {
        p.details("Contingency tables: where gaps concentrate (observed / expected missing)");
        p.raw(&t.html());
        p.end_details();
    }
    if let Some(t) = find(tables, "missing-tail").filter(|t| !t.rows.is_empty()) {
        p.details("Upper tail of each anemometer against its Weibull fit");
        p.note("A channel that loses its strongest winds shows fewer intervals above the fitted percentiles than the 10 % and 1 % expected; read this with care, a Weibull curve is only an approximation of real wind.");
        p.raw(&t.html());
        p.end_details();
    }
    p.end_section();

    // 3. Wind rose.
    p.section("3", "rose", "Wind rose");
    match &r.rose {
        Some(rose) => {
            p.p(&format!(
                "Direction from vane {} (unit-vector 10-minute means), speed from {}; intervals where both pass screening. {} sectors, the first centred on north; a direction on a sector edge belongs to the sector clockwise of it. Calm intervals (mean below {} m/s) are counted apart. Power density per sector is 0.5 x {} kg/m3 x mean(v^3) of the 10-minute means.",
                d.channels[rose.vane].id(),
                d.channels[rose.speed].id(),
                rose.sectors,
                wind::CALM,
                a.air_density
            ));
            p.chart("rose", &charts::rose(d, rose)?, "Frequency of wind direction by sector, stacked by speed class (percent of all joint intervals).");
            if let Some(t) = find(tables, "rose") {
                p.raw(&t.html());
            }
            if let Some(t) = find(tables, "rose-speed-sector") {
                p.details("Frequency by speed bin and sector (percent of all joint intervals)");
                p.raw(&t.html());
                p.end_details();
            }
            p.chart(
                "scatter",
                &charts::scatter(d, rose)?,
                "Speed against direction, one dot per interval (thinned to about 5,000 dots).",
            );
        }
        None => {
            p.note("No direction channel with passing intervals and a speed channel: no wind rose.")
        }
    }
    p.end_section();

    // 4. Distributions and turbulence.
    p.section(
        "4",
        "distribution",
        "Speed distribution, turbulence and shear",
    );
    if let Some(x) = r
        .primary
        .and_then(|c| r.dists.iter().find(|x| x.channel == c))
    {
        p.p("Weibull fits of the 10-minute means that pass screening: maximum likelihood (Seguro and Lambert 2000, zero speeds left out) and, for comparison, the moments estimate of Justus et al. (1978). Weibull mean c Gamma(1+1/k), power density 0.5 rho c^3 Gamma(1+3/k).");
        p.chart("histogram", &charts::histogram(d, x, a.air_density)?, "Histogram of 10-minute mean speeds (1 m/s bins) with the maximum-likelihood Weibull density.");
    }
    if let Some(t) = find(tables, "weibull") {
        p.raw(&t.html());
    }
    if let (Some(c), false) = (r.primary, r.ti.is_empty()) {
        p.h3("Turbulence intensity");
        p.p(&format!(
            "Turbulence intensity (10-minute sd / mean) at {} by 1 m/s bin centred on whole speeds: mean and 90th percentile, against the IEC 61400-1 normal turbulence model sigma1 = Iref (0.75 V + 5.6 m/s), as TI, for the categories A+ (Iref 0.18), A (0.16), B (0.14) and C (0.12). Bins with fewer than {} intervals are in the table but not drawn.{}",
            d.channels[c].id(),
            wind::TI_MIN_COUNT,
            if d.ti_column { "" } else { " The records have no ti column: TI is sd / mean." }
        ));
        p.chart(
            "turbulence",
            &charts::turbulence(d, c, &r.ti)?,
            "Turbulence intensity by speed bin with the normal turbulence model curves (dashed).",
        );
        if let Some(t) = find(tables, "turbulence") {
            p.details("Turbulence table");
            p.raw(&t.html());
            p.end_details();
        }
    }
    match &r.shear {
        Some(s) => {
            p.h3("Wind shear");
            p.p(&format!(
                "Power-law exponent alpha = ln(V2/V1) / ln(z2/z1) between {} ({} m) and {} ({} m), from the mean speeds of the intervals where both pass screening and both reach {} m/s; {}.",
                d.channels[s.low].id(),
                d.channels[s.low].height().unwrap_or(f64::NAN),
                d.channels[s.high].id(),
                d.channels[s.high].height().unwrap_or(f64::NAN),
                wind::SHEAR_MIN_SPEED,
                match s.overall.alpha {
                    Some(x) => format!("overall {x:.3} from {} intervals", s.overall.n),
                    None => "no overall value".into(),
                }
            ));
            if let Some(svg) = charts::shear(d, s, true)? {
                p.chart(
                    "shear-sector",
                    &svg,
                    "Shear exponent by direction sector; the dashed line is the conventional 1/7.",
                );
            }
            if let Some(svg) = charts::shear(d, s, false)? {
                p.chart("shear-hour", &svg, "Shear exponent by hour of day (UTC).");
            }
            if let Some(t) = find(tables, "shear-pairs") {
                p.raw(&t.html());
            }
            if let Some(t) = find(tables, "shear") {
                p.details("Shear table by sector and hour");
                p.raw(&t.html());
                p.end_details();
            }
        }
        None => p.note("Shear needs two anemometers with different configured heights (height_m)."),
    }
    p.end_section();

    // 5. Monthly and diurnal.
    p.section("5", "monthly", "Monthly summary and diurnal profile");
    p.p("Means are means of the interval means that pass screening; the largest gust is that of a passing interval. Interval recovery is passing intervals over the intervals of the month in the period.");
    if let Some(t) = find(tables, "monthly") {
        p.raw(&t.html());
    }
    if let Some(c) = r.primary {
        if let Some(t) = find(tables, "month-hour") {
            p.h3(&format!(
                "Mean speed by month and hour of day (UTC) at {} (m/s)",
                d.channels[c].id()
            ));
            p.note("Calendar months pooled over the years of the record; empty where no interval passes.");
            p.raw(&t.html());
        }
    }
    if let Some(svg) = charts::diurnal(d, &site::diurnal(d))? {
        p.chart(
            "diurnal",
            &svg,
            "Diurnal profile: mean speed by hour of day (UTC) per anemometer, over the whole period.",
        );
    }
    p.end_section();

    // 6. Redundant anemometers and air density.
    p.section("6", "pairs", "Redundant anemometers and air density");
    if r.pairs.is_empty() {
        p.note("No redundant pair: a `partner` in a channel's [channel.screen] names one.");
    }
    for pr in &r.pairs {
        p.h3(&format!(
            "{} and {}",
            d.channels[pr.a].id(),
            d.channels[pr.b].id()
        ));
        if let Some(svg) = charts::pair(d, pr)? {
            p.chart(
                &format!("pair-{}-{}", d.channels[pr.a].id(), d.channels[pr.b].id()),
                &svg,
                "Interval means of the pair (intervals where neither carries a flag but partial, clock or pair_mismatch), the ordinary least-squares line of y on x and the 1:1 line.",
            );
        }
    }
    if let Some(t) = find(tables, "redundant-pairs").filter(|t| !t.rows.is_empty()) {
        p.raw(&t.html());
    }
    p.h3("Air density");
    match &r.density {
        Some(x) => p.p(&format!(
            "Air density per interval from the measured temperature ({}) and pressure ({}){}, with the ideal-gas formula as IEC 61400-12-1 uses it: rho = (1/T) (B/R0 - phi Pw (1/R0 - 1/Rw)), R0 = {} J/(kg K) for dry air, Rw = {} J/(kg K) for water vapour, Pw = 0.0000205 exp(0.0631846 T) Pa (constants from memory; common practice). Mean {}. Power density with it is 0.5 mean(rho v^3) over the intervals with both; the fixed --air-density {} kg/m3 is shown beside it.",
            d.channels[x.temperature].id(),
            d.channels[x.pressure].id(),
            x.humidity
                .map(|h| format!(" and relative humidity ({})", d.channels[h].id()))
                .unwrap_or_else(|| ", dry air (no humidity channel)".into()),
            site::R_DRY,
            site::R_VAPOUR,
            x.mean().map_or("-".into(), |m| format!("{m:.4} kg/m3")),
            a.air_density
        )),
        None => p.p(&format!(
            "The station has no pressure channel (a scalar with unit hPa, mbar, kPa or Pa) beside its temperature: power density uses the fixed --air-density {} kg/m3.",
            a.air_density
        )),
    }
    if let Some(t) = find(tables, "air-density") {
        p.raw(&t.html());
    }
    p.end_section();

    // 7. Screening thresholds.
    p.section("7", "thresholds", "Screening thresholds in force");
    p.p("Each channel's screening tests as the station file sets them: the value in force, the core's default for the channel's kind, whether the station file changed it, and where the default comes from.");
    if let Some(t) = find(tables, "thresholds") {
        p.raw(&t.html());
    }
    p.end_section();

    // 8. Time series and events.
    p.section("8", "timeseries", "Time series and events");
    for (name, svg, caption) in charts::time_series(d, &r.events)? {
        p.chart(&name, &svg, &caption);
    }
    match (&cfg_events_note(a), find(tables, "events")) {
        (_, Some(t)) if !t.rows.is_empty() => {
            p.h3("Events");
            p.note("From the events file the station file names ([campaign] events); the numbers mark them on the time axes. Events outside the period are listed but not drawn.");
            p.raw(&t.html());
        }
        (note, _) => p.note(note),
    }
    p.end_section();
    p.caution(CAUTION);
    Ok(p.finish(
        &title,
        &format!(
            "Written by tenmin {} report from records; statistics from qc-core. Tables: {} CSV files beside this page.",
            env!("CARGO_PKG_VERSION"),
            tables.len()
        ),
    ))
}

fn cfg_events_note(_a: &ReportArgs) -> String {
    "No events: a station file lists site visits, maintenance and logger resets in a file named by `[campaign] events = \"FILE\"` (see REPORT.md).".into()
}

fn summary(
    w: &mut dyn Write,
    d: &data::Dataset,
    r: &Results,
    a: &ReportArgs,
    n_tables: usize,
) -> io::Result<()> {
    writeln!(
        w,
        "tenmin report: {}, {} (UTC), {} intervals of {} s, {} rows from {} file(s)",
        d.name.as_deref().unwrap_or("station"),
        period(d),
        d.len,
        d.interval_ms / 1000,
        d.rows_read,
        d.files.len()
    )?;
    writeln!(
        w,
        "recovery: samples valid / possible, intervals passing screening / possible (target 90 %, EPA-454/R-99-005 sec. 5.3.2)"
    )?;
    for c in &r.recovery.channels {
        let s = c.all.rate();
        let i = c.all.interval_rate();
        let below =
            s.is_some_and(|x| x < recovery::TARGET) || i.is_some_and(|x| x < recovery::TARGET);
        writeln!(
            w,
            "  {:<10} {:>8} {:>8}{}",
            d.channels[c.channel].id(),
            pct(s),
            pct(i),
            if below { "  below target" } else { "" }
        )?;
    }
    for j in &r.recovery.joint {
        writeln!(
            w,
            "  joint {} + {}: {}",
            d.channels[j.direction].id(),
            d.channels[j.speed].id(),
            pct((j.all.0 > 0).then(|| j.all.1 as f64 / j.all.0 as f64))
        )?;
    }
    writeln!(
        w,
        "outages: {} runs of intervals failing screening (outages.csv){}",
        r.outages.len(),
        if r.events.is_empty() {
            String::new()
        } else {
            format!("; events: {} (events.csv)", r.events.len())
        }
    )?;
    writeln!(w, "missing data:")?;
    for g in &r.diags {
        let bias = g.bias.map_or(String::new(), |b| {
            format!(
                " [bias estimate {:+.2} {} on {}{}]",
                b.diff(),
                d.channels[b.reference].unit(),
                d.channels[b.reference].id(),
                if b.diff().abs() > missing::BIAS_MARK {
                    format!(", above {} m/s", missing::BIAS_MARK)
                } else {
                    String::new()
                }
            )
        });
        writeln!(
            w,
            "  {:<10} {}: {}{bias}",
            d.channels[g.channel].id(),
            g.verdict.code(),
            g.text
        )?;
    }
    if let Some(rose) = &r.rose {
        let top = (0..usize::from(rose.sectors)).max_by_key(|&s| rose.counts[s]);
        if let Some(s) = top {
            writeln!(
                w,
                "wind rose ({} with {}, {} sectors): most frequent {} {:.1} %, calm {:.1} %",
                d.channels[rose.vane].id(),
                d.channels[rose.speed].id(),
                rose.sectors,
                wind::sector_label(s as u16, rose.sectors),
                100.0 * rose.counts[s] as f64 / rose.total as f64,
                100.0 * rose.calm as f64 / rose.total as f64
            )?;
        }
    }
    if let Some(x) = r
        .primary
        .and_then(|c| r.dists.iter().find(|x| x.channel == c))
    {
        if let Some(wb) = x.ml {
            writeln!(
                w,
                "Weibull ML at {}: k {:.3}, c {:.3} m/s, mean {:.2} m/s, power density {:.0} W/m2 at {} kg/m3 ({} intervals)",
                d.channels[x.channel].id(),
                wb.k,
                wb.c,
                wb.mean(),
                wb.power_density(a.air_density),
                a.air_density,
                x.speeds.len()
            )?;
        }
    }
    if let Some(s) = &r.shear {
        if let Some(al) = s.overall.alpha {
            writeln!(
                w,
                "shear {} -> {}: exponent {:.3} ({} intervals)",
                d.channels[s.low].id(),
                d.channels[s.high].id(),
                al,
                s.overall.n
            )?;
        }
    }
    writeln!(
        w,
        "wrote {} and {n_tables} tables (CSV) in {}",
        a.output.join("report.html").display(),
        a.output.display()
    )?;
    writeln!(w, "{CAUTION}")
}

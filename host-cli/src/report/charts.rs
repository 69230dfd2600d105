//! Charts as SVG text, drawn with `plotters` (SVG backend, no fonts embedded:
//! text is SVG `<text>` in the page's sans-serif).

use std::ops::Range;

use anyhow::Result;
use plotters::chart::MeshStyle;
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use qc_core::analysis::TurbulenceCategory;
use qc_core::{Kind, Timestamp};

use super::data::Dataset;
use super::events::Event;
use super::missing::{Diagnosis, FactorKind};
use super::recovery::{Recovery, TARGET};
use super::wind::{sector_label, Distribution, Rose, Shear, TiBin, TI_MIN_COUNT};

/// Page ink.
const INK: RGBColor = RGBColor(0x22, 0x2b, 0x33);
/// Grid lines.
const GRID: RGBColor = RGBColor(0xdc, 0xe1, 0xe4);
/// Faint grid.
const FAINT: RGBColor = RGBColor(0xee, 0xf0, 0xf1);
/// Darker grey for reference lines that are not targets.
const GRID_DARK: RGBColor = RGBColor(0x7d, 0x86, 0x8c);
/// Target and reference lines.
const MARK: RGBColor = RGBColor(0xb2, 0x3a, 0x48);
/// Series colours, in order: this report's own palette (REPORT.md, "Colours").
/// Hues alternate along the blue-orange axis, which colour-blind readers of
/// every common type still tell apart, and neighbours in the cycle differ in
/// CIE L* lightness by at least 10, so that they stay apart even in grey.
pub const SERIES: [RGBColor; 8] = [
    RGBColor(0x1f, 0x4e, 0x79), // deep harbour blue, L* 32
    RGBColor(0xe0, 0x8a, 0x2e), // kiln orange, L* 65
    RGBColor(0x8c, 0xc2, 0xe0), // pale sky, L* 76
    RGBColor(0x8c, 0x2d, 0x1e), // rust, L* 33
    RGBColor(0x3a, 0x9a, 0x8c), // sea green, L* 58
    RGBColor(0x6b, 0x4c, 0x9a), // heather, L* 39
    RGBColor(0xd8, 0xc3, 0x7e), // dune, L* 79
    RGBColor(0x5f, 0x66, 0x6d), // slate, L* 43
];
/// Intervals that fail screening with valid samples, in time series.
const FLAG_BAND: RGBColor = RGBColor(0xe0, 0xa4, 0x3a);
/// Intervals with samples excluded by decision, in time series.
const EXCL_BAND: RGBColor = RGBColor(0x6b, 0x4c, 0x9a);
/// Event markers.
const EVENT: RGBColor = RGBColor(0x22, 0x2b, 0x33);
/// Rose speed classes, light to dark.
const ROSE: [RGBColor; 5] = [
    RGBColor(0xd6, 0xe6, 0xee),
    RGBColor(0x9c, 0xc4, 0xd8),
    RGBColor(0x5a, 0x9b, 0xbf),
    RGBColor(0x2c, 0x6c, 0x98),
    RGBColor(0x17, 0x3a, 0x5c),
];
/// Missing-interval colours: no valid samples, failed screening.
const ABSENT: RGBColor = RGBColor(0xb2, 0x3a, 0x48);
const FLAGGED: RGBColor = RGBColor(0xe0, 0xa4, 0x3a);

const FONT: &str = "sans-serif";

fn colour(i: usize) -> RGBColor {
    SERIES[i % SERIES.len()]
}

type Area<'a> = DrawingArea<SVGBackend<'a>, Shift>;

/// Draws into a fresh SVG of `size` and returns its text.
fn svg(size: (u32, u32), draw: impl FnOnce(&Area<'_>) -> Result<()>) -> Result<String> {
    let mut buf = String::new();
    {
        let root = SVGBackend::with_string(&mut buf, size).into_drawing_area();
        root.fill(&WHITE)?;
        draw(&root)?;
        root.present()?;
    }
    Ok(buf)
}

/// Text of `px` pixels (plotters' SVG backend prints `size / 1.24` as the
/// font size, so the size handed over is scaled up).
fn style(px: u32) -> TextStyle<'static> {
    TextStyle::from((FONT, f64::from(px) * 1.24).into_font()).color(&INK)
}

/// A chart with numeric x and y axes, drawn into an [`Area`].
type Chart<'a, 'b> = ChartContext<'a, SVGBackend<'b>, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

/// Label areas (x axis height, y axis width, pixels) of most charts.
const LABEL_AREAS: (u32, u32) = (40, 55);

/// A chart over `x` by `y` in `root`, with a 12-pixel margin and label areas
/// of `(x axis height, y axis width)` pixels.
fn cartesian<'a, 'b>(
    root: &Area<'b>,
    (x_area, y_area): (u32, u32),
    x: Range<f64>,
    y: Range<f64>,
) -> Result<Chart<'a, 'b>> {
    Ok(ChartBuilder::on(root)
        .margin(12)
        .x_label_area_size(x_area)
        .y_label_area_size(y_area)
        .build_cartesian_2d(x, y)?)
}

/// The mesh of `chart` in the house style: faint and grid-coloured lines,
/// 13-pixel tick labels, 14-pixel axis descriptions. The caller adds what is
/// specific to the chart (label counts and formatters, descriptions) and
/// calls `draw`.
fn mesh<'c, 'a, 'b>(
    chart: &'c mut Chart<'a, 'b>,
) -> MeshStyle<'a, 'c, RangedCoordf64, RangedCoordf64, SVGBackend<'b>> {
    let mut mesh = chart.configure_mesh();
    mesh.light_line_style(FAINT)
        .bold_line_style(GRID)
        .label_style(style(13))
        .axis_desc_style(style(14));
    mesh
}

/// A legend key.
#[derive(Clone, Copy, Debug)]
enum Key {
    /// A filled box (bars, bands).
    Box(RGBAColor),
    /// A line of a width.
    Line(RGBColor, u32),
    /// A dashed line.
    Dash(RGBColor),
    /// A dot.
    Dot(RGBColor),
}

/// Legend entries of a chart.
type Keys = Vec<(Key, String)>;

/// Estimated width of a legend entry in pixels (14-pixel sans-serif text,
/// about 7.6 pixels a character, plus the key and a gap).
fn entry_width(label: &str) -> i32 {
    30 + (label.chars().count() as f64 * 7.6).ceil() as i32 + 22
}

/// Rows a legend of `keys` takes in `width` pixels.
fn legend_rows(keys: &Keys, width: i32) -> i32 {
    let (mut rows, mut x) = (1, 0);
    for (_, l) in keys {
        let w = entry_width(l);
        if x > 0 && x + w > width {
            rows += 1;
            x = 0;
        }
        x += w;
    }
    if keys.is_empty() {
        0
    } else {
        rows
    }
}

/// Splits `root` into the plot and, below it, a legend strip for `keys`:
/// legends never cover data.
fn with_legend<'b>(root: &Area<'b>, keys: &Keys) -> (Area<'b>, Area<'b>) {
    let (w, h) = root.dim_in_pixel();
    let rows = legend_rows(keys, w as i32 - 40);
    let strip = (rows * 22 + if rows > 0 { 10 } else { 0 }) as u32;
    root.split_vertically(h.saturating_sub(strip))
}

/// Draws `keys` in `area`, left to right, wrapping into rows.
fn draw_legend(area: &Area<'_>, keys: &Keys) -> Result<()> {
    let (w, _) = area.dim_in_pixel();
    let (mut x, mut y) = (20i32, 12i32);
    for (k, label) in keys {
        let ew = entry_width(label);
        if x > 20 && x + ew > w as i32 - 20 {
            x = 20;
            y += 22;
        }
        match *k {
            Key::Box(c) => area.draw(&Rectangle::new([(x, y - 6), (x + 18, y + 6)], c.filled()))?,
            Key::Line(c, wd) => {
                area.draw(&PathElement::new([(x, y), (x + 22, y)], c.stroke_width(wd)))?
            }
            Key::Dash(c) => {
                area.draw(&PathElement::new([(x, y), (x + 8, y)], c.stroke_width(2)))?;
                area.draw(&PathElement::new(
                    [(x + 14, y), (x + 22, y)],
                    c.stroke_width(2),
                ))?;
            }
            Key::Dot(c) => area.draw(&Circle::new((x + 11, y), 4, c.filled()))?,
        }
        area.draw(&Text::new(
            label.clone(),
            (x + 30, y),
            style(14).pos(Pos::new(HPos::Left, VPos::Center)),
        ))?;
        x += ew;
    }
    Ok(())
}

/// Opaque colour as a legend box colour.
fn solid(c: RGBColor) -> RGBAColor {
    c.mix(1.0)
}

/// Draws the dashed horizontal reference line at `y` across `0..x_end` in
/// the mark colour; the caller adds its legend entry.
fn reference_line(chart: &mut Chart<'_, '_>, y: f64, x_end: f64) -> Result<()> {
    chart.draw_series(DashedLineSeries::new(
        [(0.0, y), (x_end, y)],
        6,
        4,
        MARK.stroke_width(2),
    ))?;
    Ok(())
}

/// Draws `points` as a line `width` pixels wide in `c`, with a dot of
/// `radius` pixels on each point; the caller adds its legend entry.
fn dotted_line(
    chart: &mut Chart<'_, '_>,
    points: &[(f64, f64)],
    c: RGBColor,
    width: u32,
    radius: i32,
) -> Result<()> {
    chart.draw_series(LineSeries::new(
        points.iter().copied(),
        c.stroke_width(width),
    ))?;
    chart.draw_series(points.iter().map(|&p| Circle::new(p, radius, c.filled())))?;
    Ok(())
}

/// Labels a categorical x axis drawn on `0..n` with ticks at half steps: the
/// label of category `i` at `i + 0.5`, every `every`-th one, nothing elsewhere.
fn category_labels(labels: &[String], every: usize) -> impl Fn(&f64) -> String + '_ {
    move |x: &f64| {
        let i = x.floor();
        if (x - i - 0.5).abs() < 1e-6
            && i >= 0.0
            && (i as usize) < labels.len()
            && (i as usize) % every == 0
        {
            labels[i as usize].clone()
        } else {
            String::new()
        }
    }
}

fn nice_max(x: f64) -> f64 {
    if x.is_nan() || x <= 0.0 {
        return 1.0;
    }
    let p = 10f64.powf(x.log10().floor());
    for m in [1.0, 1.2, 1.5, 2.0, 2.5, 3.0, 4.0, 5.0, 6.0, 8.0, 10.0] {
        if m * p >= x {
            return m * p;
        }
    }
    10.0 * p
}

fn time_label(t0: i64, days: f64, span_days: f64) -> String {
    let t = Timestamp::from_millis(t0 + (days * 86_400_000.0).round() as i64);
    let c = t.civil();
    if span_days <= 4.0 {
        format!("{:02}-{:02} {:02}h", c.month, c.day, c.hour)
    } else if span_days <= 400.0 {
        format!("{:02}-{:02}", c.month, c.day)
    } else {
        format!("{:04}-{:02}", c.year, c.month)
    }
}

/// The events within the dataset's time span: each one's number (from 1, in
/// the order of `events`, as the events table numbers them) and its time in
/// days from the start.
fn events_shown(d: &Dataset, events: &[Event]) -> Vec<(usize, f64)> {
    let t1 = d.t0_ms + d.len as i64 * d.interval_ms;
    events
        .iter()
        .enumerate()
        .filter(|(_, e)| (d.t0_ms..=t1).contains(&e.time.millis()))
        .map(|(k, e)| (k + 1, (e.time.millis() - d.t0_ms) as f64 / 86_400_000.0))
        .collect()
}

/// Availability: one row per channel, missing intervals drawn as bars.
pub fn availability(d: &Dataset, events: &[Event]) -> Result<String> {
    let n = d.channels.len();
    let h = 70 + 26 * n as u32;
    let days = d.len as f64 * d.interval_ms as f64 / 86_400_000.0;
    let step = d.interval_ms as f64 / 86_400_000.0;
    let shown = events_shown(d, events);
    svg((900, h.max(160) + 16), |root| {
        let fmt_x = |x: &f64| time_label(d.t0_ms, *x, days);
        let fmt_y = |y: &f64| {
            let i = (n as f64 - 0.5 - *y).round();
            if i >= 0.0 && (i as usize) < n && (y.fract().abs() - 0.5).abs() < 1e-6 {
                d.channels[i as usize].id().to_string()
            } else {
                String::new()
            }
        };
        let mut chart = ChartBuilder::on(root)
            .margin(12)
            .margin_top(26)
            .margin_right(48)
            .x_label_area_size(30)
            .y_label_area_size(70)
            .build_cartesian_2d(0.0..days, 0.0..n as f64)?;
        mesh(&mut chart)
            .disable_y_mesh()
            .x_labels(8)
            .y_labels(2 * n + 1)
            .x_label_formatter(&fmt_x)
            .y_label_formatter(&fmt_y)
            .label_style(style(14))
            .draw()?;
        for (ci, s) in d.channels.iter().enumerate() {
            let y0 = (n - 1 - ci) as f64 + 0.15;
            let y1 = y0 + 0.7;
            chart.draw_series(std::iter::once(Rectangle::new(
                [(0.0, y0), (days, y1)],
                RGBColor(0xe4, 0xef, 0xe8).filled(),
            )))?;
            let mut i = 0;
            while i < d.len {
                let kind = |i: usize| match &s.rows[i] {
                    None => Some(ABSENT),
                    Some(r) if r.tally.valid == 0 => Some(ABSENT),
                    Some(r) if !r.passed => Some(FLAGGED),
                    _ => None,
                };
                let Some(k) = kind(i) else {
                    i += 1;
                    continue;
                };
                let start = i;
                while i < d.len && kind(i) == Some(k) {
                    i += 1;
                }
                // At least a pixel wide so that single intervals show.
                let x0 = start as f64 * step;
                let x1 = (i as f64 * step).max(x0 + days / 900.0);
                chart.draw_series(std::iter::once(Rectangle::new(
                    [(x0, y0), (x1, y1)],
                    k.filled(),
                )))?;
            }
        }
        for &(k, x) in &shown {
            chart.draw_series(DashedLineSeries::new(
                [(x, 0.0), (x, n as f64)],
                5,
                4,
                EVENT.stroke_width(1),
            ))?;
            let (px, py) = chart.backend_coord(&(x, n as f64));
            root.draw(&Text::new(
                k.to_string(),
                (px, py - 4),
                style(12).pos(Pos::new(HPos::Center, VPos::Bottom)),
            ))?;
        }
        Ok(())
    })
}

/// Overall sample and interval recovery per channel against the 90 % target
/// (the axis ends at 100 %; the legend sits below the plot).
pub fn recovery(d: &Dataset, r: &Recovery) -> Result<String> {
    let n = r.channels.len();
    let keys: Keys = vec![
        (
            Key::Box(solid(colour(0))),
            "samples valid / possible".into(),
        ),
        (
            Key::Box(solid(colour(1))),
            "intervals passing screening / possible".into(),
        ),
        (
            Key::Dash(MARK),
            "90 % target (EPA-454/R-99-005 sec. 5.3.2)".into(),
        ),
    ];
    svg((900, 330), |root| {
        let (plot, leg) = with_legend(root, &keys);
        let fmt_x = |x: &f64| {
            let i = x.floor();
            if (x - i - 0.5).abs() < 1e-6 && i >= 0.0 && (i as usize) < n {
                d.channels[r.channels[i as usize].channel].id().to_string()
            } else {
                String::new()
            }
        };
        let mut chart = cartesian(&plot, (30, 50), 0.0..n as f64, 0.0..100.0)?;
        mesh(&mut chart)
            .disable_x_mesh()
            .x_labels(2 * n + 1)
            .x_label_formatter(&fmt_x)
            .y_labels(6)
            .y_label_formatter(&|y: &f64| format!("{y:.0}"))
            .y_desc("recovery (%)")
            .draw()?;
        let bars = |k: usize, f: &dyn Fn(&qc_core::Totals) -> Option<f64>| {
            r.channels
                .iter()
                .enumerate()
                .filter_map(|(i, c)| Some((i, 100.0 * f(&c.all)?)))
                .map(move |(i, v)| {
                    let x0 = i as f64 + 0.12 + 0.38 * k as f64;
                    Rectangle::new([(x0, 0.0), (x0 + 0.36, v)], colour(k).filled())
                })
                .collect::<Vec<_>>()
        };
        chart.draw_series(bars(0, &|t| t.rate()))?;
        chart.draw_series(bars(1, &|t| t.interval_rate()))?;
        reference_line(&mut chart, 100.0 * TARGET, n as f64)?;
        draw_legend(&leg, &keys)
    })
}

/// Share of intervals missing per bin of a factor, one line per channel.
pub fn missing_share(d: &Dataset, diags: &[Diagnosis], kind: FactorKind) -> Result<Option<String>> {
    struct Line {
        name: String,
        points: Vec<(f64, f64)>,
    }
    let mut lines = Vec::new();
    let mut labels: Vec<String> = Vec::new();
    for g in diags {
        let Some(f) = g.factors.iter().find(|f| f.kind == kind) else {
            continue;
        };
        if g.missing == 0 {
            continue;
        }
        let pts: Vec<(f64, f64)> = (0..f.raw.bins.len())
            .filter(|&i| f.raw.present[i] + f.raw.missing[i] >= 5)
            .map(|i| {
                let tot = (f.raw.present[i] + f.raw.missing[i]) as f64;
                (i as f64 + 0.5, 100.0 * f.raw.missing[i] as f64 / tot)
            })
            .collect();
        if pts.is_empty() {
            continue;
        }
        if f.raw.bins.len() > labels.len() {
            labels = f.raw.bins.iter().map(|b| b.label()).collect();
        }
        let reference = f
            .reference
            .map(|r| format!(" (by {})", d.channels[r].id()))
            .unwrap_or_default();
        lines.push(Line {
            name: format!(
                "{}{}",
                d.channels[g.channel].id(),
                if kind == FactorKind::Speed {
                    reference
                } else {
                    String::new()
                }
            ),
            points: pts,
        });
    }
    if lines.is_empty() {
        return Ok(None);
    }
    let nb = labels.len();
    // A share: the axis ends at 100 % at most.
    let ymax = nice_max(
        lines
            .iter()
            .flat_map(|l| l.points.iter().map(|p| p.1))
            .fold(0.0, f64::max)
            * 1.1,
    )
    .min(100.0);
    let keys: Keys = lines
        .iter()
        .enumerate()
        .map(|(k, l)| (Key::Line(colour(k), 2), l.name.clone()))
        .collect();
    let xdesc = match kind {
        FactorKind::Speed => "reference wind speed bin (m/s)",
        FactorKind::Hour => "hour of day (UTC)",
        FactorKind::Temperature => "temperature bin",
        FactorKind::Sector => "direction sector",
        FactorKind::Month => "month",
        FactorKind::NextToGap => "own speed bin (m/s)",
    };
    let every = if nb > 14 { 3 } else { 1 };
    svg((880, 320), |root| {
        let (plot, leg) = with_legend(root, &keys);
        let fmt_x = category_labels(&labels, every);
        let mut chart = cartesian(&plot, LABEL_AREAS, 0.0..nb as f64, 0.0..ymax)?;
        mesh(&mut chart)
            .x_labels(2 * nb + 1)
            .x_label_formatter(&fmt_x)
            .x_desc(xdesc)
            .y_desc("intervals missing (%)")
            .draw()?;
        for (k, l) in lines.iter().enumerate() {
            dotted_line(&mut chart, &l.points, colour(k), 2, 3)?;
        }
        draw_legend(&leg, &keys)
    })
    .map(Some)
}

/// Speed classes of the rose chart: lower edges, m/s.
const ROSE_CLASSES: [f64; 5] = [0.0, 4.0, 8.0, 12.0, 16.0];

/// The wind rose: stacked speed classes per sector, frequencies of all joint
/// intervals (calms in the centre note).
pub fn rose(d: &Dataset, r: &Rose) -> Result<String> {
    let n = usize::from(r.sectors);
    let total = r.total.max(1) as f64;
    // Frequency (%) per sector and class.
    let mut f = vec![[0.0f64; 5]; n];
    for (b, row) in r.table.iter().enumerate() {
        let lo = r.bins.low(b);
        let class = ROSE_CLASSES.iter().rposition(|&c| lo >= c).unwrap_or(0);
        for (s, &c) in row.iter().enumerate() {
            f[s][class] += 100.0 * c as f64 / total;
        }
    }
    let fmax = f.iter().map(|x| x.iter().sum::<f64>()).fold(0.0, f64::max);
    let outer = nice_max(fmax.max(1.0));
    let (w, h) = (760u32, 560u32);
    let (cx, cy, rad) = (300.0f64, 290.0f64, 225.0f64);
    svg((w, h), |root| {
        let to_xy = |deg: f64, rr: f64| -> (i32, i32) {
            let a = deg.to_radians();
            (
                (cx + rr * a.sin()).round() as i32,
                (cy - rr * a.cos()).round() as i32,
            )
        };
        // Rings.
        let rings = 4;
        for k in 1..=rings {
            let rr = rad * k as f64 / rings as f64;
            root.draw(&Circle::new(
                (cx as i32, cy as i32),
                rr.round() as i32,
                GRID.stroke_width(1),
            ))?;
            let pct = outer * k as f64 / rings as f64;
            let (x, y) = to_xy(101.0, rr);
            root.draw(&Text::new(
                format!("{}%", super::stats::trim(pct)),
                (x + 3, y - 2),
                style(12).color(&RGBColor(0x66, 0x70, 0x78)),
            ))?;
        }
        for k in 0..8 {
            let (x, y) = to_xy(45.0 * k as f64, rad);
            root.draw(&PathElement::new(
                [(cx as i32, cy as i32), (x, y)],
                GRID.stroke_width(1),
            ))?;
        }
        let width = 360.0 / n as f64;
        for (s, classes) in f.iter().enumerate() {
            let centre = s as f64 * width;
            let (a0, a1) = (centre - 0.42 * width, centre + 0.42 * width);
            let mut inner = 0.0;
            for (class, &v) in classes.iter().enumerate() {
                if v <= 0.0 {
                    continue;
                }
                let r0 = rad * inner / outer;
                let r1 = rad * (inner + v) / outer;
                inner += v;
                let steps = 8;
                let mut pts: Vec<(i32, i32)> = (0..=steps)
                    .map(|k| to_xy(a0 + (a1 - a0) * k as f64 / steps as f64, r1))
                    .collect();
                pts.extend(
                    (0..=steps)
                        .rev()
                        .map(|k| to_xy(a0 + (a1 - a0) * k as f64 / steps as f64, r0)),
                );
                root.draw(&Polygon::new(pts.clone(), ROSE[class].filled()))?;
                let mut outline = pts;
                outline.push(outline[0]);
                root.draw(&PathElement::new(outline, WHITE.stroke_width(1)))?;
            }
        }
        let centred = style(16).pos(Pos::new(HPos::Center, VPos::Center));
        for (deg, name) in [(0.0, "N"), (90.0, "E"), (180.0, "S"), (270.0, "W")] {
            let (x, y) = to_xy(deg, rad + 18.0);
            root.draw(&Text::new(name, (x, y), centred.clone()))?;
        }
        // Legend.
        let lx = 560;
        root.draw(&Text::new("10-minute mean speed", (lx, 120), style(13)))?;
        for (k, c) in ROSE.iter().enumerate() {
            let y = 145 + 24 * k as i32;
            root.draw(&Rectangle::new([(lx, y), (lx + 18, y + 16)], c.filled()))?;
            let label = if k + 1 < ROSE_CLASSES.len() {
                format!(
                    "{}-{} m/s",
                    if k == 0 { 0.5 } else { ROSE_CLASSES[k] },
                    ROSE_CLASSES[k + 1]
                )
            } else {
                format!(">= {} m/s", ROSE_CLASSES[k])
            };
            root.draw(&Text::new(label, (lx + 26, y + 2), style(13)))?;
        }
        let note = [
            format!(
                "vane {}, speed {}",
                d.channels[r.vane].id(),
                d.channels[r.speed].id()
            ),
            format!("{} sectors, {} intervals", r.sectors, r.total),
            format!("calm (< 0.5 m/s): {:.1} %", 100.0 * r.calm as f64 / total),
        ];
        for (k, t) in note.iter().enumerate() {
            root.draw(&Text::new(t.clone(), (lx, 290 + 20 * k as i32), style(13)))?;
        }
        Ok(())
    })
}

/// Histogram of interval means with the Weibull ML density.
pub fn histogram(d: &Dataset, x: &Distribution, rho: f64) -> Result<String> {
    let (bins, counts) = super::wind::histogram(x);
    let n = x.speeds.len().max(1) as f64;
    let freq: Vec<f64> = counts.iter().map(|&c| 100.0 * c as f64 / n).collect();
    let fit: Vec<(f64, f64)> = match x.ml {
        Some(w) => (0..=(bins.n * 10))
            .map(|k| {
                let v = k as f64 / 10.0;
                (v, 100.0 * w.pdf(v))
            })
            .collect(),
        None => Vec::new(),
    };
    let ymax = nice_max(
        freq.iter()
            .chain(fit.iter().map(|p| &p.1))
            .fold(0.0f64, |a, &b| a.max(b))
            * 1.1,
    );
    let xmax = bins.n as f64;
    let mut keys: Keys = vec![(
        Key::Box(colour(0).mix(0.75)),
        format!("measured, {} intervals", x.speeds.len()),
    )];
    if let Some(w) = x.ml {
        keys.push((
            Key::Line(colour(1), 3),
            format!(
                "Weibull ML: k {:.2}, c {:.2} m/s, mean {:.2} m/s, {:.0} W/m2 at {rho} kg/m3",
                w.k,
                w.c,
                w.mean(),
                w.power_density(rho)
            ),
        ));
    }
    svg((880, 340), |root| {
        let (plot, leg) = with_legend(root, &keys);
        let mut chart = cartesian(&plot, LABEL_AREAS, 0.0..xmax, 0.0..ymax)?;
        mesh(&mut chart)
            .x_desc(format!(
                "10-minute mean speed at {} (m/s)",
                d.channels[x.channel].id()
            ))
            .y_desc("frequency (% per m/s)")
            .draw()?;
        chart.draw_series(freq.iter().enumerate().map(|(i, &f)| {
            Rectangle::new(
                [(i as f64 + 0.06, 0.0), (i as f64 + 0.94, f)],
                colour(0).mix(0.75).filled(),
            )
        }))?;
        if x.ml.is_some() {
            chart.draw_series(LineSeries::new(
                fit.iter().copied(),
                colour(1).stroke_width(3),
            ))?;
        }
        draw_legend(&leg, &keys)
    })
}

/// Turbulence intensity by speed bin against the normal turbulence model.
pub fn turbulence(d: &Dataset, c: usize, bins: &[TiBin]) -> Result<String> {
    let shown: Vec<&TiBin> = bins.iter().filter(|b| b.n >= TI_MIN_COUNT).collect();
    let vmax = shown.iter().map(|b| b.centre).fold(0.0, f64::max).max(5.0) + 1.0;
    let tmax = shown
        .iter()
        .filter_map(|b| b.p90)
        .fold(0.0, f64::max)
        .clamp(0.3, 1.0);
    let ymax = nice_max(tmax * 1.1);
    let ntm_colour = |k: usize| {
        RGBColor(
            0x8a + 0x18 * k as u8,
            0x8a + 0x18 * k as u8,
            0x90 + 0x16 * k as u8,
        )
    };
    let mut keys: Keys = TurbulenceCategory::ALL
        .iter()
        .enumerate()
        .map(|(k, cat)| {
            (
                Key::Dash(ntm_colour(k)),
                format!("NTM {} (Iref {})", cat.name(), cat.iref()),
            )
        })
        .collect();
    keys.push((Key::Line(colour(1), 3), "measured 90th percentile".into()));
    keys.push((Key::Line(colour(0), 2), "measured mean".into()));
    svg((880, 360), |root| {
        let (plot, leg) = with_legend(root, &keys);
        let mut chart = cartesian(&plot, LABEL_AREAS, 0.0..vmax, 0.0..ymax)?;
        mesh(&mut chart)
            .x_desc(format!("speed bin at {} (m/s)", d.channels[c].id()))
            .y_desc("turbulence intensity")
            .draw()?;
        for (k, cat) in TurbulenceCategory::ALL.iter().enumerate() {
            let col = ntm_colour(k);
            let pts: Vec<(f64, f64)> = (10..=(vmax * 10.0) as usize)
                .map(|i| i as f64 / 10.0)
                .map(|v| (v, cat.ntm_ti(v)))
                .filter(|p| p.1 <= ymax)
                .collect();
            chart.draw_series(DashedLineSeries::new(pts, 5, 3, col.stroke_width(2)))?;
        }
        let mean: Vec<(f64, f64)> = shown
            .iter()
            .filter_map(|b| Some((b.centre, b.mean?)))
            .collect();
        let p90: Vec<(f64, f64)> = shown
            .iter()
            .filter_map(|b| Some((b.centre, b.p90?)))
            .collect();
        dotted_line(&mut chart, &p90, colour(1), 3, 4)?;
        dotted_line(&mut chart, &mean, colour(0), 2, 3)?;
        draw_legend(&leg, &keys)
    })
}

/// Shear exponent by sector (bars) or by hour (line).
pub fn shear(d: &Dataset, s: &Shear, by_sector: bool) -> Result<Option<String>> {
    let bins = if by_sector { &s.by_sector } else { &s.by_hour };
    if bins.iter().all(|b| b.alpha.is_none()) {
        return Ok(None);
    }
    let nb = bins.len();
    let vals: Vec<f64> = bins.iter().filter_map(|b| b.alpha).collect();
    let lo = vals.iter().copied().fold(0.0, f64::min).min(0.0);
    let hi = nice_max(vals.iter().copied().fold(0.0, f64::max).max(0.2) * 1.15);
    let labels: Vec<String> = bins.iter().map(|b| b.label.clone()).collect();
    let every = if nb > 16 { 2 } else { 1 };
    let keys: Keys = vec![
        (
            Key::Box(solid(colour(4))),
            "power-law exponent from mean speeds".into(),
        ),
        (Key::Dash(MARK), "1/7, the conventional value".into()),
    ];
    svg((880, 300), |root| {
        let (plot, leg) = with_legend(root, &keys);
        let fmt_x = category_labels(&labels, every);
        let mut chart = cartesian(&plot, LABEL_AREAS, 0.0..nb as f64, (lo * 1.15)..hi)?;
        mesh(&mut chart)
            .disable_x_mesh()
            .x_labels(2 * nb + 1)
            .x_label_formatter(&fmt_x)
            .x_desc(if by_sector {
                "direction sector"
            } else {
                "hour of day (UTC)"
            })
            .y_desc(format!(
                "shear exponent {} / {}",
                d.channels[s.low].id(),
                d.channels[s.high].id()
            ))
            .draw()?;
        chart.draw_series(bins.iter().enumerate().filter_map(|(i, b)| {
            let a = b.alpha?;
            Some(Rectangle::new(
                [(i as f64 + 0.15, 0.0), (i as f64 + 0.85, a)],
                colour(4).filled(),
            ))
        }))?;
        reference_line(&mut chart, 1.0 / 7.0, nb as f64)?;
        draw_legend(&leg, &keys)
    })
    .map(Some)
}

/// What a time-series bucket shows behind the data.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Band {
    Flagged,
    Excluded,
}

/// Time series, one chart per kind of channel: speeds as lines, directions as
/// dots, each scalar unit as lines. Intervals where a drawn channel fails
/// screening with valid samples are shaded amber, intervals with excluded
/// samples violet; events are numbered dashed lines. At most about 1,500
/// points a line (means of consecutive intervals; directions thinned).
/// Returns `(name, svg, caption)` per chart.
pub fn time_series(d: &Dataset, events: &[Event]) -> Result<Vec<(String, String, String)>> {
    let mut groups: Vec<(String, Vec<usize>, bool, String)> = Vec::new();
    let speeds: Vec<usize> = (0..d.channels.len())
        .filter(|&c| d.channels[c].spec.kind == Kind::Speed)
        .collect();
    if !speeds.is_empty() {
        groups.push(("speed".into(), speeds, false, "mean speed (m/s)".into()));
    }
    let dirs: Vec<usize> = (0..d.channels.len())
        .filter(|&c| d.channels[c].spec.kind == Kind::Direction)
        .collect();
    if !dirs.is_empty() {
        groups.push((
            "direction".into(),
            dirs,
            true,
            "mean direction (degrees from north)".into(),
        ));
    }
    let mut units: Vec<String> = Vec::new();
    for s in d.channels.iter().filter(|s| s.spec.kind == Kind::Scalar) {
        if !units.contains(&s.unit().to_string()) {
            units.push(s.unit().to_string());
        }
    }
    for u in &units {
        let chans: Vec<usize> = (0..d.channels.len())
            .filter(|&c| d.channels[c].spec.kind == Kind::Scalar && d.channels[c].unit() == u)
            .collect();
        let name = format!(
            "scalar-{}",
            u.chars()
                .map(|c| if c.is_ascii_alphanumeric() { c } else { '_' })
                .collect::<String>()
        );
        groups.push((name, chans, false, format!("mean ({u})")));
    }
    let mut out = Vec::new();
    for (name, chans, dots, ylab) in groups {
        let svg = series_chart(d, &chans, dots, &ylab, events)?;
        let ids: Vec<&str> = chans.iter().map(|&c| d.channels[c].id()).collect();
        out.push((
            format!("timeseries-{name}"),
            svg,
            format!(
                "{}: 10-minute means that pass screening over the period{}; amber where one of them fails screening with valid samples (flagged), violet where samples were excluded by decision; numbered dashed lines are events.",
                ids.join(", "),
                if dots { ", one dot per interval" } else { "" }
            ),
        ));
    }
    Ok(out)
}

fn series_chart(
    d: &Dataset,
    chans: &[usize],
    dots: bool,
    ylab: &str,
    events: &[Event],
) -> Result<String> {
    let per = d.len.div_ceil(1500).max(1);
    let step = d.interval_ms as f64 / 86_400_000.0;
    let days = d.len as f64 * step;
    let nb = d.len.div_ceil(per);
    // Bands per bucket.
    let band = |b: usize| -> Option<Band> {
        let mut f = None;
        for i in b * per..((b + 1) * per).min(d.len) {
            for &c in chans {
                if let Some(r) = &d.channels[c].rows[i] {
                    if crate::outages::has_excluded(r.flags) || r.n_excluded > 0 {
                        return Some(Band::Excluded);
                    }
                    if !r.passed && r.tally.valid > 0 {
                        f = Some(Band::Flagged);
                    }
                }
            }
        }
        f
    };
    let bands: Vec<Option<Band>> = (0..nb).map(band).collect();
    // Lines (segments broken where nothing passes) or dots.
    let mut lines: Vec<Vec<Vec<(f64, f64)>>> = Vec::new();
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for &c in chans {
        let mut segs: Vec<Vec<(f64, f64)>> = vec![Vec::new()];
        for b in 0..nb {
            let vals: Vec<f64> = (b * per..((b + 1) * per).min(d.len))
                .filter_map(|i| d.channels[c].value(i))
                .collect();
            let x = (b * per) as f64 * step + 0.5 * per as f64 * step;
            // Directions: the first passing value of the bucket (a plain
            // mean of angles is meaningless).
            let v = if dots {
                vals.first().copied()
            } else {
                super::stats::mean(&vals)
            };
            match v {
                Some(m) => {
                    lo = lo.min(m);
                    hi = hi.max(m);
                    if let Some(s) = segs.last_mut() {
                        s.push((x, m));
                    }
                }
                None => {
                    if segs.last().is_some_and(|s| !s.is_empty()) {
                        segs.push(Vec::new());
                    }
                }
            }
        }
        lines.push(segs);
    }
    let (ylo, yhi) = if dots {
        (0.0, 360.0)
    } else if !lo.is_finite() {
        (0.0, 1.0)
    } else if chans
        .iter()
        .all(|&c| d.channels[c].spec.kind == Kind::Speed)
    {
        (0.0, nice_max(hi * 1.05))
    } else {
        let pad = ((hi - lo) * 0.08).max(0.5);
        ((lo - pad).floor(), (hi + pad).ceil())
    };
    let mut keys: Keys = chans
        .iter()
        .enumerate()
        .map(|(k, &c)| {
            (
                if dots {
                    Key::Dot(colour(k))
                } else {
                    Key::Line(colour(k), 2)
                },
                d.channels[c].id().to_string(),
            )
        })
        .collect();
    if bands.contains(&Some(Band::Flagged)) {
        keys.push((Key::Box(FLAG_BAND.mix(0.35)), "flagged".into()));
    }
    if bands.contains(&Some(Band::Excluded)) {
        keys.push((Key::Box(EXCL_BAND.mix(0.35)), "excluded".into()));
    }
    let shown = events_shown(d, events);
    if !shown.is_empty() {
        keys.push((
            Key::Dash(EVENT),
            "event (number as in the events table)".into(),
        ));
    }
    svg((900, 340), |root| {
        let (plot, leg) = with_legend(root, &keys);
        let fmt_x = |x: &f64| time_label(d.t0_ms, *x, days);
        let mut chart = ChartBuilder::on(&plot)
            .margin(12)
            .margin_top(22)
            .margin_right(48)
            .x_label_area_size(LABEL_AREAS.0)
            .y_label_area_size(LABEL_AREAS.1)
            .build_cartesian_2d(0.0..days, ylo..yhi)?;
        let mut m = mesh(&mut chart);
        m.x_labels(8)
            .x_label_formatter(&fmt_x)
            .x_desc(if per > 1 {
                format!("time (UTC; means of {per} intervals)")
            } else {
                "time (UTC)".to_string()
            })
            .y_desc(ylab);
        if dots {
            m.y_labels(9);
        }
        m.draw()?;
        let mut b = 0;
        while b < nb {
            let Some(k) = bands[b] else {
                b += 1;
                continue;
            };
            let start = b;
            while b < nb && bands[b] == Some(k) {
                b += 1;
            }
            let x0 = (start * per) as f64 * step;
            let x1 = ((b * per) as f64 * step).max(x0 + days / 900.0);
            let c = match k {
                Band::Flagged => FLAG_BAND,
                Band::Excluded => EXCL_BAND,
            };
            chart.draw_series(std::iter::once(Rectangle::new(
                [(x0, ylo), (x1, yhi)],
                c.mix(0.22).filled(),
            )))?;
        }
        for (k, segs) in lines.iter().enumerate() {
            let col = colour(k);
            for seg in segs.iter().filter(|s| !s.is_empty()) {
                if dots {
                    chart.draw_series(seg.iter().map(|&p| Circle::new(p, 2, col.filled())))?;
                } else {
                    chart.draw_series(LineSeries::new(seg.iter().copied(), col.stroke_width(1)))?;
                }
            }
        }
        for &(n, x) in &shown {
            chart.draw_series(DashedLineSeries::new(
                [(x, ylo), (x, yhi)],
                5,
                4,
                EVENT.stroke_width(1),
            ))?;
            let (px, py) = chart.backend_coord(&(x, yhi));
            plot.draw(&Text::new(
                n.to_string(),
                (px, py - 4),
                style(12).pos(Pos::new(HPos::Center, VPos::Bottom)),
            ))?;
        }
        draw_legend(&leg, &keys)
    })
}

/// Speed against direction of the rose intervals (at most about 5,000 points).
pub fn scatter(d: &Dataset, r: &Rose) -> Result<String> {
    let every = r.points.len().div_ceil(5000).max(1);
    let vmax = nice_max(r.points.iter().map(|p| p.1).fold(1.0, f64::max) * 1.05);
    svg((880, 340), |root| {
        let fmt_x = |x: &f64| {
            let k = (x / 45.0).round();
            if (x - 45.0 * k).abs() < 1e-6 {
                format!("{:.0}° {}", 45.0 * k, sector_label((k as u16) % 8 * 2, 16))
            } else {
                String::new()
            }
        };
        let mut chart = ChartBuilder::on(root)
            .margin(12)
            .margin_right(40)
            .x_label_area_size(LABEL_AREAS.0)
            .y_label_area_size(LABEL_AREAS.1)
            .build_cartesian_2d(0.0..360.0, 0.0..vmax)?;
        mesh(&mut chart)
            .x_labels(9)
            .x_label_formatter(&fmt_x)
            .x_desc(format!(
                "mean direction at {} (degrees clockwise from north)",
                d.channels[r.vane].id()
            ))
            .y_desc(format!("mean speed at {} (m/s)", d.channels[r.speed].id()))
            .draw()?;
        chart.draw_series(r.points.iter().step_by(every).map(|&(a, v)| {
            Circle::new((a.rem_euclid(360.0), v), 2, colour(0).mix(0.45).filled())
        }))?;
        Ok(())
    })
}

/// Diurnal profile: the mean speed by hour of day (UTC), one line per
/// anemometer.
pub fn diurnal(d: &Dataset, profiles: &[(usize, [Option<f64>; 24])]) -> Result<Option<String>> {
    if profiles.iter().all(|p| p.1.iter().all(Option::is_none)) {
        return Ok(None);
    }
    let vmax = profiles
        .iter()
        .flat_map(|p| p.1.iter().flatten())
        .fold(1.0f64, |a, &b| a.max(b));
    let ymax = nice_max(vmax * 1.1);
    let keys: Keys = profiles
        .iter()
        .enumerate()
        .map(|(k, (c, _))| {
            let h = d.channels[*c]
                .height()
                .map(|h| format!(" ({h} m)"))
                .unwrap_or_default();
            (
                Key::Line(colour(k), 2),
                format!("{}{h}", d.channels[*c].id()),
            )
        })
        .collect();
    svg((880, 340), |root| {
        let (plot, leg) = with_legend(root, &keys);
        let mut chart = ChartBuilder::on(&plot)
            .margin(12)
            .margin_right(24)
            .x_label_area_size(LABEL_AREAS.0)
            .y_label_area_size(LABEL_AREAS.1)
            .build_cartesian_2d(0.0..24.0, 0.0..ymax)?;
        mesh(&mut chart)
            .x_labels(13)
            .x_label_formatter(&|x: &f64| format!("{:02}", x.round() as i64))
            .x_desc("hour of day (UTC, interval start; point at the middle of the hour)")
            .y_desc("mean speed (m/s)")
            .draw()?;
        for (k, (_, prof)) in profiles.iter().enumerate() {
            let pts: Vec<(f64, f64)> = prof
                .iter()
                .enumerate()
                .filter_map(|(h, v)| Some((h as f64 + 0.5, (*v)?)))
                .collect();
            dotted_line(&mut chart, &pts, colour(k), 2, 3)?;
        }
        draw_legend(&leg, &keys)
    })
    .map(Some)
}

/// A redundant pair: the two anemometers' interval means against each other,
/// the least-squares line and the 1:1 line.
pub fn pair(d: &Dataset, p: &super::site::Pair) -> Result<Option<String>> {
    if p.points.is_empty() {
        return Ok(None);
    }
    let every = p.points.len().div_ceil(5000).max(1);
    let vmax = nice_max(p.points.iter().map(|q| q.0.max(q.1)).fold(1.0, f64::max) * 1.05);
    let mut keys: Keys = vec![
        (
            Key::Dot(colour(0)),
            format!("interval means ({})", p.points.len()),
        ),
        (Key::Dash(GRID_DARK), "1:1".into()),
    ];
    if let Some((s, o, r2)) = p.fit {
        keys.push((
            Key::Line(colour(1), 2),
            format!("least squares: y = {s:.4} x {o:+.3}, R² {r2:.4}"),
        ));
    }
    svg((620, 600), |root| {
        let (plot, leg) = with_legend(root, &keys);
        let mut chart = cartesian(&plot, LABEL_AREAS, 0.0..vmax, 0.0..vmax)?;
        mesh(&mut chart)
            .x_desc(format!("mean speed at {} (m/s)", d.channels[p.a].id()))
            .y_desc(format!("mean speed at {} (m/s)", d.channels[p.b].id()))
            .draw()?;
        chart.draw_series(
            p.points
                .iter()
                .step_by(every)
                .map(|&q| Circle::new(q, 2, colour(0).mix(0.45).filled())),
        )?;
        chart.draw_series(DashedLineSeries::new(
            [(0.0, 0.0), (vmax, vmax)],
            6,
            4,
            GRID_DARK.stroke_width(2),
        ))?;
        if let Some((s, o, _)) = p.fit {
            chart.draw_series(LineSeries::new(
                [(0.0, o), (vmax, o + s * vmax)],
                colour(1).stroke_width(2),
            ))?;
        }
        draw_legend(&leg, &keys)
    })
    .map(Some)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// CIE 1976 L* of an sRGB colour (IEC 61966-2-1 transfer function and
    /// D65 luminance weights 0.2126, 0.7152, 0.0722; CIE L* = 116 f(Y) - 16;
    /// from memory, common practice).
    fn lightness(c: RGBColor) -> f64 {
        let lin = |v: u8| {
            let x = f64::from(v) / 255.0;
            if x <= 0.04045 {
                x / 12.92
            } else {
                ((x + 0.055) / 1.055).powf(2.4)
            }
        };
        let y = 0.2126 * lin(c.0) + 0.7152 * lin(c.1) + 0.0722 * lin(c.2);
        if y > 216.0 / 24389.0 {
            116.0 * y.cbrt() - 16.0
        } else {
            y * 24389.0 / 27.0
        }
    }

    #[test]
    fn palette_stays_apart_in_lightness() {
        // The rule of REPORT.md "Colours": neighbours in the cycle, and any two
        // of the first three (the series most charts draw), differ by at least
        // 10 in L*, so they stay apart for every kind of colour vision and in
        // grey print.
        let l: Vec<f64> = SERIES.iter().map(|&c| lightness(c)).collect();
        for i in 0..SERIES.len() {
            let j = (i + 1) % SERIES.len();
            assert!((l[i] - l[j]).abs() >= 10.0, "{i} and {j}: {l:?}");
        }
        for (i, j) in [(0, 1), (0, 2), (1, 2)] {
            assert!((l[i] - l[j]).abs() >= 10.0, "{i} and {j}: {l:?}");
        }
        // Check of the formula: white 100, mid grey #777777 about 50.
        assert!((lightness(WHITE) - 100.0).abs() < 1e-9);
        assert!((lightness(RGBColor(0x77, 0x77, 0x77)) - 50.0).abs() < 1.0);
    }
}

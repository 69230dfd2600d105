//! Charts as SVG text, drawn with `plotters` (SVG backend, no fonts embedded:
//! text is SVG `<text>` in the page's sans-serif).

use std::ops::Range;

use anyhow::Result;
use plotters::chart::{MeshStyle, SeriesAnno};
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use qc_core::analysis::TurbulenceCategory;
use qc_core::{Kind, Timestamp};

use super::data::Dataset;
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
/// Series colours, in order.
pub const SERIES: [RGBColor; 8] = [
    RGBColor(0x1f, 0x5f, 0x8b),
    RGBColor(0xd0, 0x7a, 0x2b),
    RGBColor(0x3b, 0x8a, 0x5a),
    RGBColor(0x8e, 0x5a, 0x9b),
    RGBColor(0x9a, 0x7b, 0x1c),
    RGBColor(0x2b, 0x9a, 0x9a),
    RGBColor(0x7a, 0x4a, 0x30),
    RGBColor(0x55, 0x66, 0x77),
];
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

/// Draws the legend of the labelled series of `chart` at `pos`: 14-pixel
/// text on a nearly opaque white box with a grid-coloured border.
fn legend<'a, 'b: 'a>(chart: &mut Chart<'a, 'b>, pos: SeriesLabelPosition) -> Result<()> {
    chart
        .configure_series_labels()
        .position(pos)
        .background_style(WHITE.mix(0.9))
        .border_style(GRID)
        .label_font(style(14))
        .draw()?;
    Ok(())
}

/// Legend key of a bar series: a 14 by 10 pixel box in `fill`.
fn box_key(fill: ShapeStyle) -> impl Fn((i32, i32)) -> Rectangle<(i32, i32)> {
    move |(x, y)| Rectangle::new([(x, y - 5), (x + 14, y + 5)], fill)
}

/// Legend key of a line series: a line `len` pixels long in `stroke` (16 in
/// most charts; 14, the width of a box key, in the recovery chart).
fn line_key(len: i32, stroke: ShapeStyle) -> impl Fn((i32, i32)) -> PathElement<(i32, i32)> {
    move |(x, y)| PathElement::new([(x, y), (x + len, y)], stroke)
}

/// Draws the dashed horizontal reference line at `y` across `0..x_end` in
/// the mark colour; the caller labels it.
fn reference_line<'c, 'a, 'b>(
    chart: &'c mut Chart<'a, 'b>,
    y: f64,
    x_end: f64,
) -> Result<&'c mut SeriesAnno<'a, SVGBackend<'b>>> {
    Ok(chart.draw_series(DashedLineSeries::new(
        [(0.0, y), (x_end, y)],
        6,
        4,
        MARK.stroke_width(2),
    ))?)
}

/// Draws `points` as a line `width` pixels wide in `c`, labelled `label` in
/// the legend, with a dot of `radius` pixels on each point.
fn dotted_line(
    chart: &mut Chart<'_, '_>,
    points: &[(f64, f64)],
    c: RGBColor,
    width: u32,
    radius: i32,
    label: impl Into<String>,
) -> Result<()> {
    chart
        .draw_series(LineSeries::new(
            points.iter().copied(),
            c.stroke_width(width),
        ))?
        .label(label)
        .legend(line_key(16, c.stroke_width(width)));
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

/// Availability: one row per channel, missing intervals drawn as bars.
pub fn availability(d: &Dataset) -> Result<String> {
    let n = d.channels.len();
    let h = 70 + 26 * n as u32;
    let days = d.len as f64 * d.interval_ms as f64 / 86_400_000.0;
    let step = d.interval_ms as f64 / 86_400_000.0;
    svg((900, h.max(160)), |root| {
        let fmt_x = |x: &f64| time_label(d.t0_ms, *x, days);
        let fmt_y = |y: &f64| {
            let i = (n as f64 - 0.5 - *y).round();
            if i >= 0.0 && (i as usize) < n && (y.fract().abs() - 0.5).abs() < 1e-6 {
                d.channels[i as usize].id().to_string()
            } else {
                String::new()
            }
        };
        let mut chart = cartesian(root, (30, 70), 0.0..days, 0.0..n as f64)?;
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
        Ok(())
    })
}

/// Overall sample and interval recovery per channel against the 90 % target.
pub fn recovery(d: &Dataset, r: &Recovery) -> Result<String> {
    let n = r.channels.len();
    svg((900, 330), |root| {
        let fmt_x = |x: &f64| {
            let i = x.floor();
            if (x - i - 0.5).abs() < 1e-6 && i >= 0.0 && (i as usize) < n {
                d.channels[r.channels[i as usize].channel].id().to_string()
            } else {
                String::new()
            }
        };
        let mut chart = cartesian(root, (30, 50), 0.0..n as f64, 0.0..160.0)?;
        mesh(&mut chart)
            .disable_x_mesh()
            .x_labels(2 * n + 1)
            .x_label_formatter(&fmt_x)
            .y_labels(8)
            .y_label_formatter(&|y: &f64| {
                if *y <= 100.0 {
                    format!("{y:.0}")
                } else {
                    String::new()
                }
            })
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
        chart
            .draw_series(bars(0, &|t| t.rate()))?
            .label("samples valid / possible")
            .legend(box_key(colour(0).filled()));
        chart
            .draw_series(bars(1, &|t| t.interval_rate()))?
            .label("intervals passing screening / possible")
            .legend(box_key(colour(1).filled()));
        reference_line(&mut chart, 100.0 * TARGET, n as f64)?
            .label("90 % target (EPA-454/R-99-005 sec. 5.3.2)")
            .legend(line_key(14, MARK.stroke_width(2)));
        legend(&mut chart, SeriesLabelPosition::UpperRight)?;
        Ok(())
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
    let ymax = nice_max(
        lines
            .iter()
            .flat_map(|l| l.points.iter().map(|p| p.1))
            .fold(0.0, f64::max)
            * 1.1,
    );
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
        let fmt_x = category_labels(&labels, every);
        let mut chart = cartesian(root, LABEL_AREAS, 0.0..nb as f64, 0.0..ymax)?;
        mesh(&mut chart)
            .x_labels(2 * nb + 1)
            .x_label_formatter(&fmt_x)
            .x_desc(xdesc)
            .y_desc("intervals missing (%)")
            .draw()?;
        for (k, l) in lines.iter().enumerate() {
            dotted_line(&mut chart, &l.points, colour(k), 2, 3, l.name.clone())?;
        }
        legend(&mut chart, SeriesLabelPosition::UpperLeft)?;
        Ok(())
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
    svg((880, 340), |root| {
        let mut chart = cartesian(root, LABEL_AREAS, 0.0..xmax, 0.0..ymax)?;
        mesh(&mut chart)
            .x_desc(format!(
                "10-minute mean speed at {} (m/s)",
                d.channels[x.channel].id()
            ))
            .y_desc("frequency (% per m/s)")
            .draw()?;
        chart
            .draw_series(freq.iter().enumerate().map(|(i, &f)| {
                Rectangle::new(
                    [(i as f64 + 0.06, 0.0), (i as f64 + 0.94, f)],
                    colour(0).mix(0.75).filled(),
                )
            }))?
            .label(format!("measured, {} intervals", x.speeds.len()))
            .legend(box_key(colour(0).mix(0.75).filled()));
        if let Some(w) = x.ml {
            chart
                .draw_series(LineSeries::new(
                    fit.iter().copied(),
                    colour(1).stroke_width(3),
                ))?
                .label(format!(
                    "Weibull ML: k {:.2}, c {:.2} m/s, mean {:.2} m/s, {:.0} W/m2 at {rho} kg/m3",
                    w.k,
                    w.c,
                    w.mean(),
                    w.power_density(rho)
                ))
                .legend(line_key(16, colour(1).stroke_width(3)));
        }
        legend(&mut chart, SeriesLabelPosition::UpperRight)?;
        Ok(())
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
    svg((880, 360), |root| {
        let mut chart = cartesian(root, LABEL_AREAS, 0.0..vmax, 0.0..ymax)?;
        mesh(&mut chart)
            .x_desc(format!("speed bin at {} (m/s)", d.channels[c].id()))
            .y_desc("turbulence intensity")
            .draw()?;
        for (k, cat) in TurbulenceCategory::ALL.iter().enumerate() {
            let col = RGBColor(
                0x8a + 0x18 * k as u8,
                0x8a + 0x18 * k as u8,
                0x90 + 0x16 * k as u8,
            );
            let pts: Vec<(f64, f64)> = (10..=(vmax * 10.0) as usize)
                .map(|i| i as f64 / 10.0)
                .map(|v| (v, cat.ntm_ti(v)))
                .filter(|p| p.1 <= ymax)
                .collect();
            chart
                .draw_series(DashedLineSeries::new(pts, 5, 3, col.stroke_width(2)))?
                .label(format!("NTM {} (Iref {})", cat.name(), cat.iref()))
                .legend(line_key(16, col.stroke_width(2)));
        }
        let mean: Vec<(f64, f64)> = shown
            .iter()
            .filter_map(|b| Some((b.centre, b.mean?)))
            .collect();
        let p90: Vec<(f64, f64)> = shown
            .iter()
            .filter_map(|b| Some((b.centre, b.p90?)))
            .collect();
        dotted_line(
            &mut chart,
            &p90,
            colour(1),
            3,
            4,
            "measured 90th percentile",
        )?;
        dotted_line(&mut chart, &mean, colour(0), 2, 3, "measured mean")?;
        legend(&mut chart, SeriesLabelPosition::UpperRight)?;
        Ok(())
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
    svg((880, 300), |root| {
        let fmt_x = category_labels(&labels, every);
        let mut chart = cartesian(root, LABEL_AREAS, 0.0..nb as f64, (lo * 1.15)..hi)?;
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
        chart
            .draw_series(bins.iter().enumerate().filter_map(|(i, b)| {
                let a = b.alpha?;
                Some(Rectangle::new(
                    [(i as f64 + 0.15, 0.0), (i as f64 + 0.85, a)],
                    colour(2).filled(),
                ))
            }))?
            .label("power-law exponent from mean speeds")
            .legend(box_key(colour(2).filled()));
        reference_line(&mut chart, 1.0 / 7.0, nb as f64)?
            .label("1/7, the conventional value")
            .legend(line_key(16, MARK.stroke_width(2)));
        legend(&mut chart, SeriesLabelPosition::UpperRight)?;
        Ok(())
    })
    .map(Some)
}

/// Speeds over time, averaged into at most about 1,500 points a line; breaks
/// where nothing passes.
pub fn time_series(d: &Dataset) -> Result<Option<String>> {
    let speeds: Vec<usize> = (0..d.channels.len())
        .filter(|&c| d.channels[c].spec.kind == Kind::Speed)
        .collect();
    if speeds.is_empty() {
        return Ok(None);
    }
    let per = d.len.div_ceil(1500).max(1);
    let step = d.interval_ms as f64 / 86_400_000.0;
    let days = d.len as f64 * step;
    let mut lines: Vec<Vec<Vec<(f64, f64)>>> = Vec::new();
    let mut vmax = 1.0f64;
    for &c in &speeds {
        let mut segs: Vec<Vec<(f64, f64)>> = vec![Vec::new()];
        for b in 0..d.len.div_ceil(per) {
            let vals: Vec<f64> = (b * per..((b + 1) * per).min(d.len))
                .filter_map(|i| d.channels[c].value(i))
                .collect();
            match super::stats::mean(&vals) {
                Some(m) => {
                    vmax = vmax.max(m);
                    let x = (b * per) as f64 * step + 0.5 * per as f64 * step;
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
    let ymax = nice_max(vmax * 1.05);
    svg((900, 340), |root| {
        let fmt_x = |x: &f64| time_label(d.t0_ms, *x, days);
        let mut chart = cartesian(root, LABEL_AREAS, 0.0..days, 0.0..ymax)?;
        mesh(&mut chart)
            .x_labels(8)
            .x_label_formatter(&fmt_x)
            .x_desc(if per > 1 {
                format!("time (UTC; means of {per} intervals)")
            } else {
                "time (UTC)".to_string()
            })
            .y_desc("mean speed (m/s)")
            .draw()?;
        for (k, (segs, &c)) in lines.iter().zip(&speeds).enumerate() {
            let col = colour(k);
            let mut first = true;
            for seg in segs.iter().filter(|s| !s.is_empty()) {
                let series =
                    chart.draw_series(LineSeries::new(seg.iter().copied(), col.stroke_width(1)))?;
                if first {
                    series
                        .label(d.channels[c].id().to_string())
                        .legend(line_key(16, col.stroke_width(2)));
                    first = false;
                }
            }
        }
        legend(&mut chart, SeriesLabelPosition::UpperRight)?;
        Ok(())
    })
    .map(Some)
}

/// Speed against direction of the rose intervals (at most about 5,000 points).
pub fn scatter(d: &Dataset, r: &Rose) -> Result<String> {
    let every = r.points.len().div_ceil(5000).max(1);
    let vmax = nice_max(r.points.iter().map(|p| p.1).fold(1.0, f64::max) * 1.05);
    svg((880, 340), |root| {
        let fmt_x = |x: &f64| {
            let k = (x / 45.0).round();
            if (x - 45.0 * k).abs() < 1e-6 {
                sector_label((k as u16) % 8 * 2, 16)
            } else {
                String::new()
            }
        };
        let mut chart = cartesian(root, LABEL_AREAS, 0.0..360.0, 0.0..vmax)?;
        mesh(&mut chart)
            .x_labels(9)
            .x_label_formatter(&fmt_x)
            .x_desc(format!(
                "mean direction at {} (deg from north)",
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
    svg((880, 340), |root| {
        let mut chart = cartesian(root, LABEL_AREAS, 0.0..24.0, 0.0..ymax)?;
        mesh(&mut chart)
            .x_labels(13)
            .x_label_formatter(&|x: &f64| format!("{:02}", x.round() as i64))
            .x_desc("hour of day (UTC, interval start; point at the middle of the hour)")
            .y_desc("mean speed (m/s)")
            .draw()?;
        for (k, (c, prof)) in profiles.iter().enumerate() {
            let pts: Vec<(f64, f64)> = prof
                .iter()
                .enumerate()
                .filter_map(|(h, v)| Some((h as f64 + 0.5, (*v)?)))
                .collect();
            let h = d.channels[*c]
                .height()
                .map(|h| format!(" ({h} m)"))
                .unwrap_or_default();
            dotted_line(
                &mut chart,
                &pts,
                colour(k),
                2,
                3,
                format!("{}{h}", d.channels[*c].id()),
            )?;
        }
        legend(&mut chart, SeriesLabelPosition::LowerRight)?;
        Ok(())
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
    svg((620, 560), |root| {
        let mut chart = cartesian(root, LABEL_AREAS, 0.0..vmax, 0.0..vmax)?;
        mesh(&mut chart)
            .x_desc(format!("mean speed at {} (m/s)", d.channels[p.a].id()))
            .y_desc(format!("mean speed at {} (m/s)", d.channels[p.b].id()))
            .draw()?;
        chart
            .draw_series(
                p.points
                    .iter()
                    .step_by(every)
                    .map(|&q| Circle::new(q, 2, colour(0).mix(0.45).filled())),
            )?
            .label(format!("interval means ({})", p.points.len()))
            .legend(|(x, y)| Circle::new((x + 7, y), 3, colour(0).filled()));
        chart
            .draw_series(DashedLineSeries::new(
                [(0.0, 0.0), (vmax, vmax)],
                6,
                4,
                GRID_DARK.stroke_width(2),
            ))?
            .label("1:1")
            .legend(line_key(16, GRID_DARK.stroke_width(2)));
        if let Some((s, o, r2)) = p.fit {
            chart
                .draw_series(LineSeries::new(
                    [(0.0, o), (vmax, o + s * vmax)],
                    colour(1).stroke_width(2),
                ))?
                .label(format!("least squares: y = {s:.4} x {o:+.3}, R² {r2:.4}"))
                .legend(line_key(16, colour(1).stroke_width(2)));
        }
        legend(&mut chart, SeriesLabelPosition::UpperLeft)?;
        Ok(())
    })
    .map(Some)
}

//! `plot` blocks: pictures of outputs, drawn with plotters as SVG or PNG.
//!
//! ```text
//! plot "weight.svg"              # .svg or .png, in the output folder
//!     weight.force               # the series to draw
//!     odile.contact              # (weight style) shades the contact phases
//!     style = body_weights       # lines (default) | body_weights | path
//!     mass = 58 kg               # (weight style) the quiet-standing weight line and the BW axis
//!     title = "Odile's jump"
//! ```
//!
//! - `lines`: every scalar and vec3 series against time; all series share one dimension.
//! - `body_weights`: one force series in newtons with a second axis in body weights, contact
//!   phases shaded, take-off and touch-down marked, body weight as a reference line.
//! - `path`: points (with `chains N`, the tip of each chain) or vec3 series projected on
//!   `plane = xz` (default), `xy` or `yz`.

use std::path::Path;

use heft_node_sdk::{Dimension, PortKind, STANDARD_GRAVITY};
use plotters::coord::Shift;
use plotters::prelude::*;

use heft_runtime::blocks::{PlannedPlot, PlotItem, Style};
use heft_runtime::check::Plan;
use heft_runtime::eval::Evaluation;

/// Draws a planned plot into `path` (.svg or .png).
pub fn draw(plan: &Plan, eval: &Evaluation, plot: &PlannedPlot, path: &Path) -> Result<(), String> {
    let size = (1100, 620);
    if path.extension().is_some_and(|e| e == "png") {
        let root = BitMapBackend::new(path, size).into_drawing_area();
        draw_on(&root, plan, eval, plot)?;
        root.present().map_err(|e| e.to_string())
    } else {
        let root = SVGBackend::new(path, size).into_drawing_area();
        draw_on(&root, plan, eval, plot)?;
        root.present().map_err(|e| e.to_string())
    }
}

/// ` [unit]` of a dimension, or nothing for a plain number (axis labels).
pub(crate) fn unit_label(d: Dimension) -> String {
    match d.si_symbol() {
        "" => String::new(),
        s => format!(" [{s}]"),
    }
}

const PALETTE: [RGBColor; 6] = [
    RGBColor(31, 94, 168),
    RGBColor(214, 96, 38),
    RGBColor(46, 140, 70),
    RGBColor(150, 60, 150),
    RGBColor(120, 120, 30),
    RGBColor(40, 150, 160),
];

fn draw_on<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    plan: &Plan,
    eval: &Evaluation,
    plot: &PlannedPlot,
) -> Result<(), String>
where
    DB::ErrorType: 'static,
{
    let err = |e: DrawingAreaErrorKind<DB::ErrorType>| e.to_string();
    root.fill(&WHITE).map_err(err)?;
    let tl = plan.timeline;
    let times: Vec<f64> = (0..tl.frames()).map(|i| tl.time(i)).collect();
    let (t0, t1) = (
        times.first().copied().unwrap_or(0.0),
        times
            .last()
            .copied()
            .unwrap_or(1.0)
            .max(times.first().copied().unwrap_or(0.0) + 1e-9),
    );
    let series = |item: &PlotItem| -> &[f64] { &eval.values[item.node][item.output] };
    let font = ("sans-serif", 18).into_font();
    match plot.style {
        Style::Lines => {
            let mut lines: Vec<(String, Vec<(f64, f64)>)> = Vec::new();
            for item in &plot.items {
                let w = item.shape.width();
                let values = series(item);
                let axes: &[&str] = if item.shape.kind == PortKind::Vec3 {
                    &["x", "y", "z"]
                } else {
                    &[""]
                };
                for (k, a) in axes.iter().enumerate() {
                    let pts = (0..times.len()).map(|i| (times[i], values[i * w + k])).collect();
                    let name = if a.is_empty() {
                        item.name.clone()
                    } else {
                        format!("{}.{a}", item.name)
                    };
                    lines.push((name, pts));
                }
            }
            let (lo, hi) = bounds(lines.iter().flat_map(|l| l.1.iter().map(|p| p.1)));
            let dim = plot
                .items
                .iter()
                .find(|i| i.shape.kind != PortKind::Flag)
                .map_or(Dimension::Dimensionless, |i| i.dimension);
            let mut chart = ChartBuilder::on(root)
                .caption(&plot.title, font.clone())
                .margin(16)
                .x_label_area_size(48)
                .y_label_area_size(72)
                .build_cartesian_2d(t0..t1, lo..hi)
                .map_err(err)?;
            chart
                .configure_mesh()
                .x_desc("time [s]")
                .y_desc(format!("value{}", unit_label(dim)))
                .draw()
                .map_err(err)?;
            for (k, (name, pts)) in lines.into_iter().enumerate() {
                let c = PALETTE[k % PALETTE.len()];
                chart
                    .draw_series(LineSeries::new(pts, c.stroke_width(2)))
                    .map_err(err)?
                    .label(name)
                    .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], c.stroke_width(2)));
            }
            legend(&mut chart)?;
        }
        Style::Weight => {
            let mass = plot.mass.unwrap_or(1.0);
            let bw = mass * STANDARD_GRAVITY;
            let force_item = plot
                .items
                .iter()
                .find(|i| i.shape.kind == PortKind::Scalar)
                .ok_or("no force series")?;
            let force = series(force_item);
            let contact = plot.items.iter().find(|i| i.shape.kind == PortKind::Flag).map(&series);
            let (_, hi) = bounds(force.iter().copied().chain([bw]));
            let hi = hi.max(bw * 1.2);
            let mut chart = ChartBuilder::on(root)
                .caption(&plot.title, font.clone())
                .margin(16)
                .x_label_area_size(48)
                .y_label_area_size(80)
                .right_y_label_area_size(72)
                .build_cartesian_2d(t0..t1, 0.0..hi)
                .map_err(err)?
                .set_secondary_coord(t0..t1, 0.0..hi / bw);
            chart
                .configure_mesh()
                .x_desc("time [s]")
                .y_desc("ground reaction force [N]")
                .draw()
                .map_err(err)?;
            chart
                .configure_secondary_axes()
                .y_desc("body weights [BW]")
                .draw()
                .map_err(err)?;
            // Contact phases shaded; take-off and touch-down marked.
            if let Some(flags) = contact {
                let shade = RGBColor(120, 170, 230).mix(0.18);
                for (a, b) in spans(&times, flags.len(), |i| flags[i] >= 0.5) {
                    chart
                        .draw_series(std::iter::once(Rectangle::new([(a, 0.0), (b, hi)], shade.filled())))
                        .map_err(err)?;
                }
                for i in 1..flags.len() {
                    let (was, is) = (flags[i - 1] >= 0.5, flags[i] >= 0.5);
                    if was != is {
                        let t = 0.5 * (times[i - 1] + times[i]);
                        let (label, color) = if was {
                            ("take-off", RGBColor(200, 40, 40))
                        } else {
                            ("touch-down", RGBColor(40, 120, 40))
                        };
                        chart
                            .draw_series(std::iter::once(PathElement::new(
                                vec![(t, 0.0), (t, hi)],
                                color.stroke_width(2),
                            )))
                            .map_err(err)?;
                        chart
                            .draw_series(std::iter::once(Text::new(
                                label.to_owned(),
                                (t, hi * 0.97),
                                ("sans-serif", 15).into_font().color(&color),
                            )))
                            .map_err(err)?;
                    }
                }
            }
            let pts: Vec<(f64, f64)> = (0..times.len()).map(|i| (times[i], force[i])).collect();
            curve_over_weight(
                &mut chart,
                (t0, t1, bw),
                &format!("body weight {bw:.0} N (quiet standing)"),
                pts,
                &force_item.name,
            )?;
        }
        Style::Path => {
            let [a, b] = plot.plane;
            let names = ["x", "y", "z"];
            let mut paths: Vec<(String, Vec<(f64, f64)>)> = Vec::new();
            for item in &plot.items {
                let w = item.shape.width();
                let values = series(item);
                let picks: Vec<usize> = match (item.shape.kind, item.chain) {
                    (PortKind::Points, Some(c)) => (0..item.shape.points / c).map(|s| s * c + c - 1).collect(),
                    (PortKind::Points, None) => (0..item.shape.points).collect(),
                    _ => vec![0],
                };
                for p in picks {
                    let pts = (0..times.len())
                        .map(|i| (values[i * w + 3 * p + a], values[i * w + 3 * p + b]))
                        .collect();
                    let name = if item.shape.kind == PortKind::Points {
                        format!("{} point {p}", item.name)
                    } else {
                        item.name.clone()
                    };
                    paths.push((name, pts));
                }
            }
            let (xl, xh) = bounds(paths.iter().flat_map(|p| p.1.iter().map(|q| q.0)));
            let (yl, yh) = bounds(paths.iter().flat_map(|p| p.1.iter().map(|q| q.1)));
            let mut chart = ChartBuilder::on(root)
                .caption(&plot.title, font.clone())
                .margin(16)
                .x_label_area_size(48)
                .y_label_area_size(72)
                .build_cartesian_2d(xl..xh, yl..yh)
                .map_err(err)?;
            chart
                .configure_mesh()
                .x_desc(format!("{} [m]", names[a]))
                .y_desc(format!("{} [m]", names[b]))
                .draw()
                .map_err(err)?;
            let many = paths.len() > PALETTE.len();
            for (k, (name, pts)) in paths.into_iter().enumerate() {
                let c = PALETTE[k % PALETTE.len()];
                let s = chart
                    .draw_series(LineSeries::new(pts, c.stroke_width(2)))
                    .map_err(err)?;
                if !many {
                    s.label(name)
                        .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], c.stroke_width(2)));
                }
            }
            if !many {
                legend(&mut chart)?;
            }
        }
    }
    Ok(())
}

/// The weight plots' last layer: the body-weight level (`weight` = (t0, t1, level)) as a thin
/// black line, the force curve `pts` over it, and the legend.
fn curve_over_weight<'a, DB: DrawingBackend + 'a>(
    chart: &mut ChartContext<
        'a,
        DB,
        Cartesian2d<plotters::coord::types::RangedCoordf64, plotters::coord::types::RangedCoordf64>,
    >,
    weight: (f64, f64, f64),
    weight_label: &str,
    pts: Vec<(f64, f64)>,
    curve_label: &str,
) -> Result<(), String> {
    let err = |e: DrawingAreaErrorKind<DB::ErrorType>| e.to_string();
    let (t0, t1, level) = weight;
    chart
        .draw_series(LineSeries::new(
            vec![(t0, level), (t1, level)],
            BLACK.mix(0.6).stroke_width(1),
        ))
        .map_err(err)?
        .label(weight_label)
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], BLACK.mix(0.6)));
    chart
        .draw_series(LineSeries::new(pts, PALETTE[0].stroke_width(2)))
        .map_err(err)?
        .label(curve_label)
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], PALETTE[0].stroke_width(2)));
    legend(chart)
}

/// Every plot's legend: a white box with a black border holding the labelled series.
fn legend<'a, DB: DrawingBackend + 'a>(
    chart: &mut ChartContext<
        'a,
        DB,
        Cartesian2d<plotters::coord::types::RangedCoordf64, plotters::coord::types::RangedCoordf64>,
    >,
) -> Result<(), String> {
    chart
        .configure_series_labels()
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .draw()
        .map_err(|e| e.to_string())
}

/// The time spans (first and last frame's times) of the runs of frames where `on` holds.
fn spans(times: &[f64], n: usize, on: impl Fn(usize) -> bool) -> Vec<(f64, f64)> {
    let mut out = Vec::new();
    let mut start = None;
    for i in 0..=n {
        match (i < n && on(i), start) {
            (true, None) => start = Some(i),
            (false, Some(s)) => {
                out.push((times[s], times[(i - 1).max(s)]));
                start = None;
            }
            _ => {}
        }
    }
    out
}

fn bounds(values: impl Iterator<Item = f64>) -> (f64, f64) {
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for v in values {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    if !lo.is_finite() || !hi.is_finite() {
        return (0.0, 1.0);
    }
    let pad = ((hi - lo) * 0.05).max(1e-6);
    (lo - pad, hi + pad)
}

/// One stretch of frames an audit found wrong, for [`draw_audit`].
#[derive(Debug, Clone, PartialEq)]
pub struct Marked {
    /// First and last time of the stretch, s.
    pub span: (f64, f64),
    /// What was found (`flight not ballistic`).
    pub label: String,
    /// True for an error, false for a warning.
    pub error: bool,
}

/// The audit's picture: the ground force implied by the centre of mass, m (g + a_z), in body
/// weights against time, the contact phases shaded blue and each finding's frames shaded
/// (red for an error, amber for a warning) with its label. `.svg` or `.png`.
pub fn draw_audit(
    path: &Path,
    title: &str,
    times: &[f64],
    weight: &[f64],
    contact: &[bool],
    marked: &[Marked],
) -> Result<(), String> {
    let size = (1100, 620);
    if path.extension().is_some_and(|e| e == "png") {
        let root = BitMapBackend::new(path, size).into_drawing_area();
        audit_on(&root, title, times, weight, contact, marked)?;
        root.present().map_err(|e| e.to_string())
    } else {
        let root = SVGBackend::new(path, size).into_drawing_area();
        audit_on(&root, title, times, weight, contact, marked)?;
        root.present().map_err(|e| e.to_string())
    }
}

fn audit_on<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    title: &str,
    times: &[f64],
    weight: &[f64],
    contact: &[bool],
    marked: &[Marked],
) -> Result<(), String>
where
    DB::ErrorType: 'static,
{
    let err = |e: DrawingAreaErrorKind<DB::ErrorType>| e.to_string();
    root.fill(&WHITE).map_err(err)?;
    let t0 = times.first().copied().unwrap_or(0.0);
    let t1 = times.last().copied().unwrap_or(1.0).max(t0 + 1e-9);
    let (_, top) = bounds(weight.iter().copied().chain([0.0, 1.0]));
    let hi = top * 1.1;
    let mut chart = ChartBuilder::on(root)
        .caption(title, ("sans-serif", 18).into_font())
        .margin(16)
        .x_label_area_size(48)
        .y_label_area_size(72)
        .build_cartesian_2d(t0..t1, 0.0..hi)
        .map_err(err)?;
    chart
        .configure_mesh()
        .x_desc("time [s]")
        .y_desc("ground force m (g + a_z) [body weights]")
        .draw()
        .map_err(err)?;
    let shade = RGBColor(120, 170, 230).mix(0.18);
    for (a, b) in spans(times, contact.len().min(times.len()), |i| contact[i]) {
        chart
            .draw_series(std::iter::once(Rectangle::new([(a, 0.0), (b, hi)], shade.filled())))
            .map_err(err)?;
    }
    for (k, m) in marked.iter().enumerate() {
        let color = if m.error {
            RGBColor(210, 40, 40)
        } else {
            RGBColor(230, 150, 20)
        };
        chart
            .draw_series(std::iter::once(Rectangle::new(
                [(m.span.0, 0.0), (m.span.1.max(m.span.0 + 1e-9), hi)],
                color.mix(0.22).filled(),
            )))
            .map_err(err)?;
        chart
            .draw_series(std::iter::once(Text::new(
                m.label.clone(),
                (m.span.0, hi * (0.96 - 0.05 * k as f64)),
                ("sans-serif", 15).into_font().color(&color),
            )))
            .map_err(err)?;
    }
    let pts: Vec<(f64, f64)> = times.iter().copied().zip(weight.iter().copied()).collect();
    curve_over_weight(&mut chart, (t0, t1, 1.0), "body weight", pts, "implied ground force")?;
    Ok(())
}

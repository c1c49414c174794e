//! `review` blocks: one self-contained HTML page per block that plays the run in 3D, with its
//! curves, the audit's findings on the timeline and the run's summary values.
//!
//! ```text
//! review "review.html"                # .html, in the output folder
//!     title = "Odile's jump"          # default: the file name
//!     frames = 12..84                 # the frames shown; default: all
//!     body = odile                    # a node's joints (a character's with its bones); audited
//!     colliders = odile.colliders     # a list of colliders, drawn as capsules (repeatable)
//!     braid.positions                 # a strand's points: a chain of joints per strand
//!     tips.points joints 5            # any other points: chains of 5 joints (or loose points)
//!     odile.head                      # a vec3 or transform in m: a point with its path
//!     weight.force                    # a scalar, flag or other vec3: a curve with a cursor
//!     strands = tubes                 # lines (default) | tubes, of `strand_radius` (3 mm)
//!     mass = 55 kg                    # the body mass the audit uses (a character needs it)
//!     plots = on                      # the graph's plots drawn on the page too (default on)
//!     audit = on                      # the body audited, its findings on the timeline
//! ```
//!
//! The page opens from a `file://` address with no network and no server: the script that
//! draws it ([`SCRIPT`], `review/review.js`) and its style ([`STYLE`]) are heft's own and
//! embedded in the page, and so is the run's data. The 3D view is a perspective projection of
//! lines, points and capsule outlines on a 2D canvas (Z up, metres, a ground grid with its
//! axes labelled), not a 3D library: heft's set-up needs only cargo, and no 3D library ships
//! through crates.io for a page to embed.
//!
//! **The data.** Positions (strands, joints, points, colliders) are stored per shown series as
//! whole multiples of [`STEP`] (10 micrometres) from the page's origin, frame after frame, each
//! value as the difference from the same value at the frame before (zigzag, then LEB128
//! variable-length bytes), the stream deflated (zlib) and written as base64 in chunks of
//! [`CHUNK`] bytes; the page inflates it with the browser's own `DecompressionStream`. A
//! position on the page is within half a step (5e-6 m) of the run's, plus the rounding of the
//! 32-bit floats it is drawn from (1.2e-7 of its distance from the origin). Curves and the
//! audit are JSON numbers (32-bit floats' shortest text).

use std::borrow::Cow;
use std::io::Write;
use std::path::Path;

use base64::Engine as _;
use flate2::Compression;
use flate2::write::ZlibEncoder;
use heft_audit::{Finding, Limits, audit};
use heft_node_sdk::{Dimension, PortKind};
use heft_runtime::blocks::{PlannedPlot, PlannedReview, ReviewItem, ReviewShow, StrandLook, Style};
use heft_runtime::check::Plan;
use heft_runtime::eval::Evaluation;
use serde::Serialize;

use crate::commit::Transaction;
use crate::motion;
use crate::output::{SummaryEntry, WriteError, summary_entries};
use crate::plots::unit_label;

/// The page's script: the 3D view, the charts, the controls and the test hook.
pub const SCRIPT: &str = include_str!("review/review.js");
/// The page's style.
pub const STYLE: &str = include_str!("review/review.css");

/// The position quantum, m: positions are stored as whole multiples of it from the origin.
pub const STEP: f64 = 1e-5;

/// The largest distance from the page's origin a position may have, in steps: 2^30 (10.7 km),
/// so that a frame-to-frame difference and its zigzag code stay exact in the page's numbers.
const MAX_STEPS: f64 = (1u64 << 30) as f64;

/// Raw bytes per base64 chunk in the page (a multiple of 3, so each chunk decodes alone).
pub const CHUNK: usize = 3 << 20;

/// The most paths a path plot on the page draws (the page says when it draws fewer).
const MAX_PATHS: usize = 64;

/// Writes every review page of the plan into the transaction (beside its target in `dir`);
/// returns each page's file name and the series it shows, for `run.json`.
pub fn stage_all(
    plan: &Plan,
    eval: &Evaluation,
    graph: &Path,
    dir: &Path,
    staged: &mut Transaction<'_>,
) -> Result<Vec<(String, Vec<String>)>, WriteError> {
    let mut written = Vec::new();
    for review in &plan.reviews {
        let path = dir.join(&review.file);
        let fail = |e: String| WriteError {
            path: path.clone(),
            reason: format!("cannot write the review page: {e}"),
        };
        let mut file = staged.create(&path)?;
        write_page(plan, eval, review, graph, &mut file).map_err(fail)?;
        staged.add(file)?;
        let mut shown: Vec<String> = review.body.map(|b| plan.nodes[b].name.clone()).into_iter().collect();
        shown.extend(review.items.iter().map(|i| i.name.clone()));
        written.push((review.file.clone(), shown));
    }
    Ok(written)
}

/// The page's frames: indices into the run's timeline.
fn page_frames(plan: &Plan, review: &PlannedReview) -> std::ops::Range<usize> {
    let start = plan.timeline.start_frame;
    match review.range {
        Some((a, b)) => (a - start) as usize..(b - start) as usize + 1,
        None => 0..plan.timeline.frames(),
    }
}

#[derive(Serialize)]
struct Page {
    title: String,
    graph: String,
    heft_version: &'static str,
    fps: f64,
    /// The frame number of the page's first frame.
    first_frame: i64,
    /// Frames on the page.
    frames: usize,
    /// The time of the page's first frame, s.
    first_time: f64,
    /// Positions are stored relative to this point, m (world).
    origin: [f64; 3],
    /// The position quantum, m.
    step: f64,
    /// The box every shown position stays in, m (world): min, max.
    bounds: [[f64; 3]; 2],
    strands: &'static str,
    strand_radius: f64,
    scene: Vec<SceneItem>,
    charts: Vec<Chart>,
    audit: AuditPart,
    summaries: Vec<SummaryEntry>,
}

#[derive(Serialize)]
struct SceneItem {
    name: String,
    /// `strands`, `points`, `point`, `joints` or `colliders`.
    kind: &'static str,
    /// Points per frame (colliders: three per collider).
    points: usize,
    /// Joints per chain, for strands.
    #[serde(skip_serializing_if = "Option::is_none")]
    chain: Option<usize>,
    /// Bones (parent joint, child joint), for a character's body.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    bones: Vec<[usize; 2]>,
    /// The index of its data in the page.
    track: usize,
}

#[derive(Serialize)]
struct Series {
    name: String,
    values: Vec<f32>,
    /// For a path: the second coordinate.
    #[serde(skip_serializing_if = "Option::is_none")]
    y: Option<Vec<f32>>,
}

#[derive(Serialize)]
struct Chart {
    title: String,
    /// `lines`, `body_weights`, `flag` or `path`.
    style: &'static str,
    x_label: String,
    y_label: String,
    series: Vec<Series>,
    /// `body_weights`: the contact flag (1 on the ground) and the body weight, N.
    #[serde(skip_serializing_if = "Option::is_none")]
    contact: Option<Vec<u8>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    body_weight: Option<f64>,
    /// A path plot that draws fewer paths than it has says how many it has.
    #[serde(skip_serializing_if = "Option::is_none")]
    paths_total: Option<usize>,
}

#[derive(Serialize, Default)]
struct AuditPart {
    /// The audited body.
    #[serde(skip_serializing_if = "Option::is_none")]
    body: Option<String>,
    /// Why there is no audit.
    #[serde(skip_serializing_if = "Option::is_none")]
    note: Option<String>,
    /// The ground force the centre of mass implies, body weights, at each page frame.
    weight: Vec<f32>,
    /// 1 while a foot is on the ground.
    contact: Vec<u8>,
    findings: Vec<PageFinding>,
}

/// A finding with its kind in words (`arm swing after take-off`), as `heft audit` prints it.
#[derive(Serialize)]
struct PageFinding {
    #[serde(flatten)]
    finding: Finding,
    words: &'static str,
}

/// One shown 3D series: frame-major values, of which the page stores the first `columns` of
/// each frame (a transform's translation, not its rotation).
struct Track<'a> {
    values: Cow<'a, [f64]>,
    width: usize,
    columns: usize,
    /// A list of colliders, whose every third point holds two radii, not a position.
    colliders: bool,
}

impl Track<'_> {
    /// Column `c` of a frame is a position (stored from the origin), not a radius.
    fn is_position(&self, c: usize) -> bool {
        !self.colliders || (c / 3) % 3 != 2
    }
    fn frame(&self, f: usize) -> impl Iterator<Item = (usize, f64)> + '_ {
        self.values[f * self.width..f * self.width + self.columns]
            .iter()
            .copied()
            .enumerate()
    }
}

/// Writes one review page.
pub fn write_page(
    plan: &Plan,
    eval: &Evaluation,
    review: &PlannedReview,
    graph: &Path,
    out: &mut impl Write,
) -> Result<(), String> {
    let frames = page_frames(plan, review);
    let mut scene = Vec::new();
    let mut tracks: Vec<Track<'_>> = Vec::new();
    if let Some(b) = review.body {
        let (item, track) = body_item(plan, eval, b);
        scene.push(SceneItem {
            track: tracks.len(),
            ..item
        });
        tracks.push(track);
    }
    for item in &review.items {
        let values = &eval.values[item.node][item.output];
        let width = item.shape.width();
        let (kind, chain) = match item.show {
            ReviewShow::Points { chain: Some(c) } => ("strands", Some(c)),
            ReviewShow::Points { chain: None } => ("points", None),
            ReviewShow::Point => ("point", None),
            ReviewShow::Colliders => ("colliders", None),
            ReviewShow::Curve => continue,
        };
        let points = if item.shape.kind == PortKind::Points {
            item.shape.points
        } else {
            1
        };
        scene.push(SceneItem {
            name: item.name.clone(),
            kind,
            points,
            chain,
            bones: Vec::new(),
            track: tracks.len(),
        });
        tracks.push(Track {
            values: Cow::Borrowed(values),
            width,
            columns: 3 * points,
            colliders: item.show == ReviewShow::Colliders,
        });
    }
    let bounds = bounds(&tracks, frames.clone());
    let origin = [0, 1, 2].map(|k| ((bounds[0][k] + bounds[1][k]) / 2.0 / STEP).round() * STEP);
    let tl = plan.timeline;
    let mut charts: Vec<Chart> = review
        .items
        .iter()
        .filter(|i| i.show == ReviewShow::Curve)
        .map(|i| curve_chart(eval, i, frames.clone()))
        .collect();
    if review.plots {
        // A plot drawn twice (as .svg and as .png) is one chart on the page.
        for (k, p) in plan.plots.iter().enumerate() {
            let same = |q: &PlannedPlot| q.style == p.style && q.title == p.title && q.items == p.items;
            if !plan.plots[..k].iter().any(same) {
                charts.push(plot_chart(eval, p, frames.clone()));
            }
        }
    }
    let page = Page {
        title: review.title.clone(),
        graph: graph.display().to_string(),
        heft_version: env!("CARGO_PKG_VERSION"),
        fps: tl.fps(),
        first_frame: tl.frame_number(frames.start),
        frames: frames.len(),
        first_time: tl.time(frames.start),
        origin,
        step: STEP,
        bounds,
        strands: match review.strands {
            StrandLook::Lines => "lines",
            StrandLook::Tubes => "tubes",
        },
        strand_radius: review.strand_radius,
        scene,
        charts,
        audit: audit_part(plan, eval, review, frames.clone()),
        summaries: summary_entries(plan, eval),
    };
    let json = serde_json::to_string(&page).map_err(|e| e.to_string())?;
    let io = |e: std::io::Error| e.to_string();
    write!(
        out,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
         <meta name=\"generator\" content=\"heft {}\">\n<title>{} - heft review</title>\n<style>\n{STYLE}</style>\n\
         </head>\n<body>\n<noscript>This review page draws the run with its own script: allow scripts for \
         this file to see it.</noscript>\n",
        env!("CARGO_PKG_VERSION"),
        escape(&review.title)
    )
    .map_err(io)?;
    // In a script element `</` could end it early and `<!--` change how it is read: JSON writes
    // every `<` (only ever inside a string) as `\u003c`.
    writeln!(
        out,
        "<script type=\"application/json\" id=\"heft-review\">{}</script>",
        json.replace('<', "\\u003c")
    )
    .map_err(io)?;
    for (k, track) in tracks.iter().enumerate() {
        write_track(out, k, track, frames.clone(), origin)?;
    }
    write!(out, "<script>\n{SCRIPT}</script>\n</body>\n</html>\n").map_err(io)?;
    Ok(())
}

/// The body's joints: every transform (or vec3) output in m of node `b`; for a character, with
/// a bone from each joint to its nearest ancestor among them.
fn body_item<'a>(plan: &Plan, eval: &'a Evaluation, b: usize) -> (SceneItem, Track<'a>) {
    let node = &plan.nodes[b];
    let spec = node.ty.spec();
    let joints: Vec<usize> = spec
        .outputs
        .iter()
        .enumerate()
        .filter(|(_, o)| o.kind == PortKind::Transform && o.dimension == Dimension::Length)
        .map(|(k, _)| k)
        .collect();
    let labels: Vec<String> = joints.iter().map(|&k| spec.outputs[k].name.clone()).collect();
    let mut bones = Vec::new();
    if let Some(ch) = motion::character_of(plan, b) {
        let joint_of = |char_node: usize| labels.iter().position(|l| *l == ch.nodes[char_node].port);
        for (j, label) in labels.iter().enumerate() {
            let Some(mut at) = ch.nodes.iter().position(|n| n.port == *label) else {
                continue;
            };
            while let Some(parent) = ch.nodes[at].parent {
                if let Some(p) = joint_of(parent) {
                    bones.push([p, j]);
                    break;
                }
                at = parent;
            }
        }
    }
    // The joints' translations, gathered into one frame-major series.
    let frames = plan.timeline.frames();
    let mut values = Vec::with_capacity(frames * 3 * joints.len());
    for f in 0..frames {
        for &k in &joints {
            let w = node.outputs[k].width();
            values.extend_from_slice(&eval.values[b][k][f * w..f * w + 3]);
        }
    }
    let width = 3 * joints.len();
    let item = SceneItem {
        name: node.name.clone(),
        kind: "joints",
        points: joints.len(),
        chain: None,
        bones,
        track: 0,
    };
    let track = Track {
        values: Cow::Owned(values),
        width,
        columns: width,
        colliders: false,
    };
    (item, track)
}

/// The box every shown position stays in over the page's frames: min, max (a unit box about
/// the origin when nothing is shown).
fn bounds(tracks: &[Track<'_>], frames: std::ops::Range<usize>) -> [[f64; 3]; 2] {
    let mut lo = [f64::INFINITY; 3];
    let mut hi = [f64::NEG_INFINITY; 3];
    for t in tracks {
        for f in frames.clone() {
            for (k, v) in t.frame(f) {
                if t.is_position(k) {
                    lo[k % 3] = lo[k % 3].min(v);
                    hi[k % 3] = hi[k % 3].max(v);
                }
            }
        }
    }
    if lo.iter().chain(&hi).any(|v| !v.is_finite()) {
        return [[-0.5; 3], [0.5; 3]];
    }
    [lo, hi]
}

/// Raw bytes written as base64 in chunks of [`CHUNK`], each in a script element of its own
/// that the page decodes alone.
struct Base64Chunks<'w, W: Write> {
    out: &'w mut W,
    track: usize,
    pending: Vec<u8>,
}

impl<W: Write> Base64Chunks<'_, W> {
    fn flush_chunk(&mut self) -> std::io::Result<()> {
        if self.pending.is_empty() {
            return Ok(());
        }
        write!(
            self.out,
            "<script type=\"application/x-heft-data\" data-track=\"{}\">",
            self.track
        )?;
        let text = base64::engine::general_purpose::STANDARD.encode(&self.pending);
        self.out.write_all(text.as_bytes())?;
        self.out.write_all(b"</script>\n")?;
        self.pending.clear();
        Ok(())
    }
}

impl<W: Write> Write for Base64Chunks<'_, W> {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        let room = CHUNK - self.pending.len();
        let n = buf.len().min(room);
        self.pending.extend_from_slice(&buf[..n]);
        if self.pending.len() == CHUNK {
            self.flush_chunk()?;
        }
        Ok(n)
    }
    fn flush(&mut self) -> std::io::Result<()> {
        Ok(())
    }
}

/// Appends `v` as an unsigned LEB128 number.
fn leb128(out: &mut Vec<u8>, mut v: u64) {
    while v >= 0x80 {
        out.push((v as u8) | 0x80);
        v >>= 7;
    }
    out.push(v as u8);
}

/// Writes one shown series' positions over the page's frames (see the module notes).
fn write_track(
    out: &mut impl Write,
    k: usize,
    track: &Track<'_>,
    frames: std::ops::Range<usize>,
    origin: [f64; 3],
) -> Result<(), String> {
    let io = |e: std::io::Error| e.to_string();
    let chunks = Base64Chunks {
        out,
        track: k,
        pending: Vec::with_capacity(CHUNK),
    };
    let mut z = ZlibEncoder::new(chunks, Compression::fast());
    let mut previous = vec![0i64; track.columns];
    let mut bytes = Vec::with_capacity(track.columns * 2);
    for f in frames {
        bytes.clear();
        for (c, v) in track.frame(f) {
            let from = if track.is_position(c) { origin[c % 3] } else { 0.0 };
            let steps = ((v - from) / STEP).round();
            if steps.abs() >= MAX_STEPS {
                return Err(format!(
                    "a value of {v} m is farther than {:.0} m from the shown scene's centre: a review page holds \
                     positions within that (show fewer or nearer series)",
                    MAX_STEPS * STEP
                ));
            }
            let q = steps as i64;
            let d = q - previous[c];
            previous[c] = q;
            leb128(&mut bytes, ((d << 1) ^ (d >> 63)) as u64);
        }
        z.write_all(&bytes).map_err(io)?;
    }
    let mut chunks = z.finish().map_err(io)?;
    chunks.flush_chunk().map_err(io)
}

fn f32s(values: impl Iterator<Item = f64>) -> Vec<f32> {
    values.map(|v| v as f32).collect()
}

/// The curves of a scalar or flag (one) or a vec3 (`name.x`, `.y`, `.z`) over the frames.
fn curves(values: &[f64], shape: heft_node_sdk::Shape, name: &str, frames: std::ops::Range<usize>) -> Vec<Series> {
    let w = shape.width();
    let axes: &[&str] = if shape.kind == PortKind::Vec3 {
        &["x", "y", "z"]
    } else {
        &[""]
    };
    axes.iter()
        .enumerate()
        .map(|(k, a)| Series {
            name: if a.is_empty() {
                name.to_owned()
            } else {
                format!("{name}.{a}")
            },
            values: f32s(frames.clone().map(|f| values[f * w + k])),
            y: None,
        })
        .collect()
}

/// A series listed in the review as a curve: its own chart.
fn curve_chart(eval: &Evaluation, item: &ReviewItem, frames: std::ops::Range<usize>) -> Chart {
    let series = curves(&eval.values[item.node][item.output], item.shape, &item.name, frames);
    let flag = item.shape.kind == PortKind::Flag;
    Chart {
        title: item.name.clone(),
        style: if flag { "flag" } else { "lines" },
        x_label: "time [s]".to_owned(),
        y_label: if flag {
            "on (1) / off (0)".to_owned()
        } else {
            format!("{}{}", item.name, unit_label(item.dimension))
        },
        series,
        contact: None,
        body_weight: None,
        paths_total: None,
    }
}

/// One of the graph's plots, drawn on the page with a cursor.
fn plot_chart(eval: &Evaluation, plot: &PlannedPlot, frames: std::ops::Range<usize>) -> Chart {
    let values = |node: usize, output: usize| &eval.values[node][output];
    let mut chart = Chart {
        title: plot.title.clone(),
        style: "lines",
        x_label: "time [s]".to_owned(),
        y_label: String::new(),
        series: Vec::new(),
        contact: None,
        body_weight: None,
        paths_total: None,
    };
    match plot.style {
        Style::Lines => {
            let mut dimension = Dimension::Dimensionless;
            for item in &plot.items {
                if item.shape.kind != PortKind::Flag {
                    dimension = item.dimension;
                }
                let v = values(item.node, item.output);
                chart.series.extend(curves(v, item.shape, &item.name, frames.clone()));
            }
            chart.y_label = format!("value{}", unit_label(dimension));
        }
        Style::Weight => {
            chart.style = "body_weights";
            chart.y_label = "ground reaction force [N]".to_owned();
            chart.body_weight = plot.mass.map(|m| m * heft_node_sdk::STANDARD_GRAVITY);
            for item in &plot.items {
                let v = values(item.node, item.output);
                if item.shape.kind == PortKind::Flag {
                    chart.contact = Some(frames.clone().map(|f| u8::from(v[f] >= 0.5)).collect());
                } else {
                    chart.series.push(Series {
                        name: item.name.clone(),
                        values: f32s(frames.clone().map(|f| v[f])),
                        y: None,
                    });
                }
            }
        }
        Style::Path => {
            let names = ["x", "y", "z"];
            let [a, b] = plot.plane;
            chart.style = "path";
            chart.x_label = format!("{} [m]", names[a]);
            chart.y_label = format!("{} [m]", names[b]);
            let mut total = 0;
            for item in &plot.items {
                let v = values(item.node, item.output);
                let w = item.shape.width();
                let picks: Vec<usize> = match (item.shape.kind, item.chain) {
                    (PortKind::Points, Some(c)) => (0..item.shape.points / c).map(|s| s * c + c - 1).collect(),
                    (PortKind::Points, None) => (0..item.shape.points).collect(),
                    _ => vec![0],
                };
                total += picks.len();
                for p in picks {
                    if chart.series.len() == MAX_PATHS {
                        break;
                    }
                    chart.series.push(Series {
                        name: if item.shape.kind == PortKind::Points {
                            format!("{} point {p}", item.name)
                        } else {
                            item.name.clone()
                        },
                        values: f32s(frames.clone().map(|f| v[f * w + 3 * p + a])),
                        y: Some(f32s(frames.clone().map(|f| v[f * w + 3 * p + b]))),
                    });
                }
            }
            chart.paths_total = (total > chart.series.len()).then_some(total);
        }
    }
    chart
}

/// The audit of the review's body over the page's frames, as `heft audit` gives it for the
/// same graph and frames; or why there is none.
fn audit_part(plan: &Plan, eval: &Evaluation, review: &PlannedReview, frames: std::ops::Range<usize>) -> AuditPart {
    let none = |note: String| AuditPart {
        note: Some(note),
        ..AuditPart::default()
    };
    if !review.audit {
        return none("the audit is off for this page (`audit = off`)".to_owned());
    }
    let Some(b) = review.body else {
        return none("no body is shown (`body = NODE`), so there is nothing to audit".to_owned());
    };
    let name = plan.nodes[b].name.clone();
    let motion = if motion::character_of(plan, b).is_some() {
        let Some(mass) = review.mass else {
            return none(format!(
                "`{name}` is a character: give its body mass (`mass = 55 kg`) to audit its motion"
            ));
        };
        match motion::character_motion(plan, &eval.values, b, mass) {
            Ok(read) => read.motion,
            Err(e) => return none(format!("`{name}` cannot be audited: {e}")),
        }
    } else {
        match motion::body_of_node(plan, b, review.mass) {
            Ok(body) => motion::graph_motion(plan, &eval.values, &body).motion,
            Err(e) => return none(format!("`{name}` cannot be audited: {e}")),
        }
    };
    let motion = motion.frames(frames.start, frames.len());
    let report = audit(&motion, &Limits::default());
    AuditPart {
        body: Some(name),
        note: None,
        weight: f32s(motion::implied_weight(&motion).into_iter()),
        contact: motion.contact.iter().map(|&c| u8::from(c)).collect(),
        findings: report
            .findings
            .into_iter()
            .map(|finding| PageFinding {
                words: finding.kind.words(),
                finding,
            })
            .collect(),
    }
}

/// Text for HTML: `&`, `<`, `>` and `"` escaped.
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            _ => out.push(c),
        }
    }
    out
}

/// One point of a sweep for its index page.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepPoint {
    /// Its cells, in the table's columns.
    pub cells: Vec<String>,
    /// The point's page (or folder), relative to the index; none when the point failed.
    pub link: Option<String>,
}

/// A sweep's index page: one row per point with its values, each linking to its page. The
/// columns carry their units (`odile.rise [m]`); a click on a column's head sorts by it.
pub fn sweep_index(title: &str, columns: &[String], points: &[SweepPoint]) -> String {
    let mut html = format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
         <meta name=\"generator\" content=\"heft {}\">\n<title>{} - heft sweep</title>\n<style>\n{STYLE}</style>\n\
         </head>\n<body class=\"sweep\">\n<header><h1>{}</h1><p class=\"sub\">{} points; click a column's head to \
         sort by it, a point to open its page</p></header>\n<main>\n<table id=\"points\">\n<thead><tr>",
        env!("CARGO_PKG_VERSION"),
        escape(title),
        escape(title),
        points.len()
    );
    for c in columns {
        html.push_str(&format!("<th>{}</th>", escape(c)));
    }
    html.push_str("</tr></thead>\n<tbody>\n");
    for p in points {
        html.push_str(if p.link.is_some() {
            "<tr>"
        } else {
            "<tr class=\"failed\">"
        });
        for (k, cell) in p.cells.iter().enumerate() {
            match (&p.link, k) {
                (Some(link), 0) => {
                    html.push_str(&format!("<td><a href=\"{}\">{}</a></td>", escape(link), escape(cell)))
                }
                _ => html.push_str(&format!("<td>{}</td>", escape(cell))),
            }
        }
        html.push_str("</tr>\n");
    }
    html.push_str(&format!(
        "</tbody>\n</table>\n</main>\n<script>\n{}</script>\n</body>\n</html>\n",
        SORT_SCRIPT
    ));
    html
}

/// The sweep index's only script: sorting the table by a column (numbers as numbers).
const SORT_SCRIPT: &str = r#""use strict";
(() => {
  const table = document.getElementById("points");
  const body = table.tBodies[0];
  let last = -1;
  let up = true;
  table.tHead.rows[0].querySelectorAll("th").forEach((th, k) => {
    th.addEventListener("click", () => {
      up = last === k ? !up : true;
      last = k;
      const key = (row) => {
        const text = row.cells[k].textContent;
        const n = Number(text);
        return text !== "" && Number.isFinite(n) ? n : text;
      };
      const rows = Array.from(body.rows);
      rows.sort((a, b) => {
        const x = key(a);
        const y = key(b);
        const order = typeof x === typeof y ? (x < y ? -1 : x > y ? 1 : 0) : typeof x === "number" ? -1 : 1;
        return up ? order : -order;
      });
      rows.forEach((r) => body.appendChild(r));
    });
  });
})();
"#;

#[cfg(test)]
mod tests {
    use super::*;
    use std::io::Read;

    /// Reads a page's track back as the page's script does: the base64 chunks of `track` in
    /// order, inflated, then the zigzag LEB128 differences summed column by column, in steps.
    fn read_back(html: &str, track: usize, width: usize) -> (Vec<i64>, usize) {
        let open = format!("<script type=\"application/x-heft-data\" data-track=\"{track}\">");
        let mut deflated = Vec::new();
        let mut chunks = 0;
        for part in html.split(&open).skip(1) {
            let text = &part[..part.find("</script>").expect("closed")];
            deflated.extend(base64::engine::general_purpose::STANDARD.decode(text).expect("base64"));
            chunks += 1;
        }
        let mut bytes = Vec::new();
        flate2::read::ZlibDecoder::new(deflated.as_slice())
            .read_to_end(&mut bytes)
            .expect("zlib");
        let mut values = Vec::new();
        let mut previous = vec![0i64; width];
        let mut at = 0;
        while at < bytes.len() {
            let (mut z, mut shift) = (0u64, 0);
            loop {
                let b = bytes[at];
                at += 1;
                z |= u64::from(b & 127) << shift;
                shift += 7;
                if b < 128 {
                    break;
                }
            }
            let d = (z >> 1) as i64 ^ -((z & 1) as i64);
            let c = values.len() % width;
            previous[c] += d;
            values.push(previous[c]);
        }
        (values, chunks)
    }

    /// A deterministic scatter in [-1, 1) (a linear congruential generator, Knuth's MMIX
    /// constants): differences too large and too irregular for the deflate to shrink.
    fn scatter(n: usize) -> Vec<f64> {
        let mut x: u64 = 1;
        (0..n)
            .map(|_| {
                x = x.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
                (x >> 11) as f64 / (1u64 << 52) as f64 - 1.0
            })
            .collect()
    }

    #[test]
    fn positions_come_back_within_half_a_step_across_chunks() {
        // A collider (its start, end and radii; the radii kept from 0, not the origin) over
        // 300 000 frames: more than one chunk of deflated differences.
        let width = 9;
        let frames = 300_000;
        let values: Vec<f64> = scatter(width * frames)
            .into_iter()
            .enumerate()
            .map(|(i, v)| if i % width < 6 { 100.0 + v } else { 0.5 + 0.25 * v })
            .collect();
        let track = Track {
            values: Cow::Borrowed(&values),
            width,
            columns: width,
            colliders: true,
        };
        let origin = [100.25, 100.0, 99.5];
        let mut html = Vec::new();
        write_track(&mut html, 3, &track, 0..frames, origin).expect("written");
        let html = String::from_utf8(html).expect("text");
        let (steps, chunks) = read_back(&html, 3, width);
        assert!(chunks >= 2, "{chunks} chunk(s)");
        assert_eq!(steps.len(), values.len());
        for (i, (&q, &v)) in steps.iter().zip(&values).enumerate() {
            let from = if i % width < 6 { origin[i % 3] } else { 0.0 };
            let back = from + q as f64 * STEP;
            assert!(
                (back - v).abs() <= STEP / 2.0 * (1.0 + 1e-9),
                "value {i}: {v} came back as {back}"
            );
        }
    }

    #[test]
    fn a_position_beyond_the_pages_reach_is_refused() {
        let values = [0.0, 0.0, 0.0, 20_000.0, 0.0, 0.0];
        let track = Track {
            values: Cow::Borrowed(&values),
            width: 3,
            columns: 3,
            colliders: false,
        };
        let err = write_track(&mut Vec::new(), 0, &track, 0..2, [0.0; 3]).expect_err("refused");
        assert!(err.contains("20000 m") && err.contains("10737 m"), "{err}");
    }

    #[test]
    fn html_text_is_escaped() {
        assert_eq!(
            escape("Juno's <jump> & \"fall\""),
            "Juno's &lt;jump&gt; &amp; &quot;fall&quot;"
        );
    }
}

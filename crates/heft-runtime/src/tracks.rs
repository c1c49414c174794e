//! Host-side source nodes: series read from files when a graph is checked. They look like
//! node types to the graph (`track.force`) but are evaluated by the host, which alone does
//! I/O; plugins never see a file.
//!
//! A track's samples must be taken at the graph's frame rate (a 1000 Hz force record is
//! read by a graph with `rate 1000 fps`): sample `k` at time `t_k` is frame `round(t_k * fps)`.

use std::path::{Path, PathBuf};
use std::sync::OnceLock;

use heft_node_sdk::{Dimension, NodeSpec, ParamSpec, ParamValue, PortKind, PortSpec, Timeline};

/// The plugin name reserved for host-side nodes.
pub const HOST_PLUGIN: &str = "track";

/// A host-side node type.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum HostNode {
    /// A vertical force channel from a CSV file.
    Force,
}

impl HostNode {
    /// Every host node type.
    pub const ALL: [HostNode; 1] = [HostNode::Force];

    /// `track.force`.
    pub fn full_name(self) -> String {
        format!("{HOST_PLUGIN}.{}", self.spec().name)
    }

    /// The node type's spec.
    pub fn spec(self) -> &'static NodeSpec {
        static FORCE: OnceLock<NodeSpec> = OnceLock::new();
        match self {
            HostNode::Force => FORCE.get_or_init(|| NodeSpec {
                name: "force".into(),
                doc: "A force channel read from a CSV file (for example a force plate's vertical force).".into(),
                notes: "Reads two columns of a CSV file with a header row: time in seconds (or milliseconds) and \
                        force in newtons (or kilonewtons). Samples must be taken at the graph's frame rate and \
                        cover its frame range; sample k at time t_k is frame round(t_k * fps). The file is read \
                        when the graph is checked; a relative path is taken from the graph file's folder."
                    .into(),
                inputs: vec![],
                outputs: vec![PortSpec::new(
                    "value",
                    PortKind::Scalar,
                    Dimension::Force,
                    "The force, per frame.",
                )],
                params: vec![
                    ParamSpec::text("file", None, "CSV file, relative to the graph file's folder."),
                    ParamSpec::text("time_column", Some("time"), "Header of the time column."),
                    ParamSpec::choice("time_unit", &["s", "ms"], "Unit of the time column."),
                    ParamSpec::text("column", None, "Header of the force column."),
                    ParamSpec::choice("unit", &["N", "kN"], "Unit of the force column."),
                ],
                summaries: vec![],
            }),
        }
    }
}

/// Why a track could not be read; `param` names the parameter the problem belongs to.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct TrackError {
    /// The parameter to point at (`file`, `column`, ...).
    pub param: &'static str,
    /// What is wrong, naming the file, row and column where it applies.
    pub message: String,
    /// How to fix it.
    pub help: Option<String>,
}

fn err(param: &'static str, message: String) -> TrackError {
    TrackError {
        param,
        message,
        help: None,
    }
}

fn text<'a>(spec: &NodeSpec, values: &'a [ParamValue], name: &str) -> &'a str {
    spec.params
        .iter()
        .position(|p| p.name == name)
        .and_then(|i| match &values[i] {
            ParamValue::Text(t) | ParamValue::Choice(t) => Some(t.as_str()),
            _ => None,
        })
        .unwrap_or_default()
}

/// Reads a host node's data for the timeline: one series per output.
pub fn load(
    node: HostNode,
    values: &[ParamValue],
    graph_dir: &Path,
    timeline: Timeline,
) -> Result<Vec<Vec<f64>>, TrackError> {
    match node {
        HostNode::Force => {
            let spec = node.spec();
            let file = text(spec, values, "file");
            let path: PathBuf = graph_dir.join(file);
            let time_scale = if text(spec, values, "time_unit") == "ms" {
                1e-3
            } else {
                1.0
            };
            let scale = if text(spec, values, "unit") == "kN" { 1e3 } else { 1.0 };
            let (times, force) =
                read_two_columns(&path, text(spec, values, "time_column"), text(spec, values, "column"))?;
            let times: Vec<f64> = times.iter().map(|t| t * time_scale).collect();
            let force: Vec<f64> = force.iter().map(|f| f * scale).collect();
            Ok(vec![frames_of(&path, &times, &force, timeline)?])
        }
    }
}

/// (time, value) columns of a CSV file; every cell checked.
fn read_two_columns(path: &Path, time_col: &str, value_col: &str) -> Result<(Vec<f64>, Vec<f64>), TrackError> {
    let shown = path.display();
    let mut reader = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .from_path(path)
        .map_err(|e| err("file", format!("cannot read {shown}: {e}")))?;
    let headers = reader
        .headers()
        .map_err(|e| err("file", format!("{shown}: cannot read the header row: {e}")))?
        .clone();
    let find = |name: &str, param: &'static str| -> Result<usize, TrackError> {
        headers.iter().position(|h| h == name).ok_or_else(|| TrackError {
            param,
            message: format!("{shown} has no column `{name}`"),
            help: Some(format!(
                "its columns are: {}",
                headers.iter().map(|h| format!("`{h}`")).collect::<Vec<_>>().join(", ")
            )),
        })
    };
    let (ti, vi) = (find(time_col, "time_column")?, find(value_col, "column")?);
    let mut times = Vec::new();
    let mut values = Vec::new();
    for record in reader.records() {
        let record = record.map_err(|e| err("file", format!("{shown}: {e}")))?;
        let line = record.position().map_or(0, |p| p.line());
        let cell = |i: usize, name: &str| -> Result<f64, TrackError> {
            let raw = record.get(i).unwrap_or("");
            match raw.parse::<f64>() {
                Ok(v) if v.is_finite() => Ok(v),
                _ => Err(err(
                    "file",
                    format!("{shown}: line {line}, column `{name}`: `{raw}` is not a number"),
                )),
            }
        };
        let t = cell(ti, time_col)?;
        let v = cell(vi, value_col)?;
        if let Some(&prev) = times.last()
            && t <= prev
        {
            return Err(err(
                "file",
                format!("{shown}: line {line}: the time {t} does not increase (the line before has {prev})"),
            ));
        }
        times.push(t);
        values.push(v);
    }
    if times.len() < 2 {
        return Err(err(
            "file",
            format!("{shown} holds {} samples; a track needs at least 2", times.len()),
        ));
    }
    Ok((times, values))
}

/// Maps samples to the timeline's frames, checking the sample rate and the coverage.
fn frames_of(path: &Path, times: &[f64], values: &[f64], tl: Timeline) -> Result<Vec<f64>, TrackError> {
    let fps = tl.fps();
    let shown = path.display();
    for (k, w) in times.windows(2).enumerate() {
        let step = (w[1] - w[0]) * fps;
        if (step - 1.0).abs() > 0.01 {
            return Err(TrackError {
                param: "file",
                message: format!(
                    "{shown}: samples {} and {} are {} s apart, but the graph runs at {} fps ({} s per frame)",
                    k + 1,
                    k + 2,
                    w[1] - w[0],
                    fps,
                    tl.dt()
                ),
                help: Some(format!(
                    "set the graph's rate to the file's sample rate (about {:.0} fps), or resample the file",
                    1.0 / (w[1] - w[0])
                )),
            });
        }
    }
    let first = (times[0] * fps).round() as i64;
    let last = first + times.len() as i64 - 1;
    let want_last = tl.start_frame + tl.frame_count as i64 - 1;
    if tl.start_frame < first || want_last > last {
        return Err(TrackError {
            param: "file",
            message: format!(
                "{shown} covers frames {first}..{last} ({} s to {} s), but the graph evaluates frames {}..{want_last}",
                times[0],
                times[times.len() - 1],
                tl.start_frame
            ),
            help: Some(format!("set `frames {first}..{last}` or a range inside it")),
        });
    }
    let from = (tl.start_frame - first) as usize;
    Ok(values[from..from + tl.frames()].to_vec())
}

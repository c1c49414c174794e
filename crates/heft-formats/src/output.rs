//! Writing results: one CSV per output, the bakes and plots, and a JSON run summary, each
//! written in full to a temporary file and committed together ([`crate::commit`]), so a failed
//! or killed run leaves no half-written or mismatched files.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::time::Duration;

use serde::Serialize;

pub use crate::commit::OutputDir;
use heft_runtime::check::Plan;
use heft_runtime::eval::{Evaluation, columns};

use crate::csv_out::CsvWriter;
use crate::parquet_out::ParquetWriter;
use heft_runtime::check::WriteFormat;

/// Why outputs could not be written.
#[derive(Debug)]
pub struct WriteError {
    /// The file (or folder) involved.
    pub path: PathBuf,
    /// What failed.
    pub reason: String,
}

impl std::fmt::Display for WriteError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {}", self.path.display(), self.reason)
    }
}

impl std::error::Error for WriteError {}

fn werr(path: &Path, e: impl std::fmt::Display) -> WriteError {
    WriteError {
        path: path.to_path_buf(),
        reason: e.to_string(),
    }
}

/// The CSV text of one output, in memory (see [`crate::csv_out::CsvWriter`], which
/// [`write_all`] streams into the file instead).
pub fn csv_text(plan: &Plan, eval: &Evaluation, node: usize, output: usize) -> Result<Vec<u8>, String> {
    let w = CsvWriter::new(plan, node, output)?;
    let mut text = Vec::new();
    w.write_header(&mut text).map_err(|e| e.to_string())?;
    w.write_rows(&mut text, 0..plan.timeline.frames(), &eval.values[node][output])
        .map_err(|e| e.to_string())?;
    Ok(text)
}

#[derive(Serialize)]
struct PluginEntry {
    name: String,
    version: String,
    file: String,
    sha256: String,
}

#[derive(Serialize)]
struct NodeEntry {
    name: String,
    #[serde(rename = "type")]
    ty: String,
    seconds: f64,
    /// Every parameter's value as the node ran with it (defaults, the graph's lines and
    /// `--set` applied), in SI with its unit.
    parameters: Vec<ParamEntry>,
}

#[derive(Serialize)]
struct ParamEntry {
    name: String,
    value: serde_json::Value,
    unit: &'static str,
}

/// A parameter's value for run.json: numbers as numbers (SI), vectors as arrays, keys as
/// [time, [x, y, z]] pairs, words and texts as strings.
fn param_json(v: &heft_node_sdk::ParamValue) -> serde_json::Value {
    use heft_node_sdk::ParamValue as P;
    use serde_json::json;
    match v {
        P::Number(x) => json!(x),
        P::Integer(i) => json!(i),
        P::Bool(b) => json!(b),
        P::Choice(c) | P::Text(c) => json!(c),
        P::Vec3(v) => json!(v),
        P::Keys(k) => json!(k),
    }
}

#[derive(Serialize)]
struct OutputEntry {
    file: String,
    node: String,
    port: String,
    kind: String,
    /// For a `write`: `csv` or `parquet`.
    #[serde(skip_serializing_if = "Option::is_none")]
    format: Option<&'static str>,
    columns: Vec<String>,
}

#[derive(Serialize)]
struct SummaryEntry {
    node: String,
    name: String,
    value: f64,
    unit: &'static str,
}

#[derive(Serialize)]
struct TimelineEntry {
    first_frame: i64,
    last_frame: i64,
    frame_count: u64,
    rate: String,
    fps: f64,
}

#[derive(Serialize)]
struct Summary {
    heft_version: &'static str,
    graph: String,
    timeline: TimelineEntry,
    plugins: Vec<PluginEntry>,
    nodes: Vec<NodeEntry>,
    outputs: Vec<OutputEntry>,
    summaries: Vec<SummaryEntry>,
    warnings: Vec<String>,
    evaluation_seconds: f64,
    /// Time spent building and staging the output files (this summary and the final rename
    /// excepted).
    writing_seconds: f64,
    /// From the start of the run to the outputs staged: reading, checking, evaluating and
    /// writing.
    wall_seconds: f64,
}

/// Writes one file atomically: a temporary file beside it, then a rename.
pub fn write_atomically(path: &Path, bytes: &[u8]) -> Result<(), WriteError> {
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    std::fs::create_dir_all(dir).map_err(|e| werr(dir, format!("cannot create the folder: {e}")))?;
    let mut tmp = tempfile::Builder::new()
        .prefix(".heft-")
        .suffix(".partial")
        .tempfile_in(dir)
        .map_err(|e| werr(dir, format!("cannot create a file in the folder: {e}")))?;
    tmp.write_all(bytes).map_err(|e| werr(path, e))?;
    tmp.as_file().sync_all().map_err(|e| werr(path, e))?;
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        tmp.as_file()
            .set_permissions(std::fs::Permissions::from_mode(0o644))
            .map_err(|e| werr(path, e))?;
    }
    tmp.persist(path).map_err(|e| werr(path, e.error))?;
    Ok(())
}

/// The file name of the run summary in the output folder.
pub const SUMMARY_FILE: &str = "run.json";

/// Writes every planned output and the run summary into the locked output folder `out`.
/// Either every file is replaced or none is ([`crate::commit`]). Returns the paths written.
pub fn write_all(
    plan: &Plan,
    eval: &Evaluation,
    graph_path: &Path,
    out: &OutputDir,
    wall: Duration,
) -> Result<Vec<PathBuf>, WriteError> {
    let writing = std::time::Instant::now();
    let dir = out.path();
    let mut staged = out.transaction();
    let mut outputs = Vec::new();
    let frames = 0..plan.timeline.frames();
    for w in &plan.writes {
        let path = dir.join(w.file());
        let values = &eval.values[w.node][w.output];
        let mut file = staged.create(&path)?;
        let pn = &plan.nodes[w.node];
        let port = &pn.ty.spec().outputs[w.output];
        let columns = match w.format {
            WriteFormat::Csv => {
                let csv = CsvWriter::new(plan, w.node, w.output).map_err(|e| werr(&path, e))?;
                csv.write_header(&mut file)
                    .and_then(|()| csv.write_rows(&mut file, frames.clone(), values))
                    .map_err(|e| werr(&path, e))?;
                columns(
                    &format!("{}.{}", pn.name, port.name),
                    pn.outputs[w.output],
                    port.dimension,
                    &port.codes,
                )
            }
            WriteFormat::Parquet => {
                let parquet = ParquetWriter::new(plan, w).map_err(|e| werr(&path, e))?;
                let mut table = parquet.start(file).map_err(|e| werr(&path, e))?;
                table.write_frames(frames.clone(), values).map_err(|e| werr(&path, e))?;
                file = table.finish().map_err(|e| werr(&path, e))?;
                // As for CSV: the columns after `frame` and `time [s]`.
                parquet.column_names()[2..].to_vec()
            }
        };
        staged.add(file)?;
        outputs.push(OutputEntry {
            file: w.file(),
            node: pn.name.clone(),
            port: port.name.clone(),
            kind: pn.outputs[w.output].to_string(),
            format: Some(w.format.extension()),
            columns,
        });
    }
    for bake in &plan.bakes {
        let files = crate::gltf_out::bake_files(plan, eval, bake).map_err(|e| werr(&dir.join(&bake.file), e))?;
        for (name, parts) in files {
            let path = dir.join(&name);
            let parts: Vec<&[u8]> = parts.iter().map(Vec::as_slice).collect();
            staged.stage(&path, &parts)?;
            outputs.push(OutputEntry {
                file: name,
                node: String::new(),
                port: String::new(),
                kind: "glTF 2.0".to_owned(),
                format: None,
                columns: bake.items.iter().map(|i| i.name.clone()).collect(),
            });
        }
    }
    for plot in &plan.plots {
        let path = dir.join(&plot.file);
        let ext = path.extension().and_then(|e| e.to_str()).unwrap_or("svg").to_owned();
        let tmp = staged.stage_path(&path, &ext)?;
        crate::plots::draw(plan, eval, plot, &tmp).map_err(|e| werr(&path, format!("cannot draw the plot: {e}")))?;
        outputs.push(OutputEntry {
            file: plot.file.clone(),
            node: String::new(),
            port: String::new(),
            kind: "plot".to_owned(),
            format: None,
            columns: plot.items.iter().map(|i| i.name.clone()).collect(),
        });
    }
    for (file, columns) in crate::review_out::stage_all(plan, eval, graph_path, dir, &mut staged)? {
        let kind = "review page".to_owned();
        outputs.push(OutputEntry {
            file,
            node: String::new(),
            port: String::new(),
            kind,
            format: None,
            columns,
        });
    }
    let mut plugins: Vec<PluginEntry> = Vec::new();
    for n in &plan.nodes {
        let Some(p) = n.ty.plugin() else { continue };
        let file = p.plugin.origin().display().to_string();
        if !plugins.iter().any(|e| e.file == file) {
            plugins.push(PluginEntry {
                name: p.plugin.descriptor().name.clone(),
                version: p.plugin.descriptor().version.clone(),
                file,
                sha256: p.sha256.clone(),
            });
        }
    }
    let tl = plan.timeline;
    let summary = Summary {
        heft_version: env!("CARGO_PKG_VERSION"),
        graph: graph_path.display().to_string(),
        timeline: TimelineEntry {
            first_frame: tl.start_frame,
            last_frame: tl.start_frame + tl.frame_count as i64 - 1,
            frame_count: tl.frame_count,
            rate: format!("{}/{}", tl.rate_num, tl.rate_den),
            fps: tl.fps(),
        },
        plugins,
        nodes: plan
            .nodes
            .iter()
            .zip(&eval.node_time)
            .map(|(n, t)| NodeEntry {
                name: n.name.clone(),
                ty: n.ty.full_name.clone(),
                seconds: t.as_secs_f64(),
                parameters: n
                    .ty
                    .spec()
                    .params
                    .iter()
                    .zip(&n.params)
                    .map(|(spec, value)| ParamEntry {
                        name: spec.name.clone(),
                        value: param_json(value),
                        unit: match &spec.ty {
                            heft_node_sdk::ParamType::Number { dimension, .. }
                            | heft_node_sdk::ParamType::Vec3 { dimension, .. }
                            | heft_node_sdk::ParamType::Keys { dimension, .. } => dimension.si_symbol(),
                            _ => "",
                        },
                    })
                    .collect(),
            })
            .collect(),
        outputs,
        summaries: plan
            .nodes
            .iter()
            .zip(&eval.summaries)
            .flat_map(|(n, values)| {
                n.ty.spec().summaries.iter().zip(values).map(|(s, v)| SummaryEntry {
                    node: n.name.clone(),
                    name: s.name.clone(),
                    value: *v,
                    unit: s.dimension.si_symbol(),
                })
            })
            .collect(),
        warnings: eval.warnings.iter().map(|(n, w)| format!("{n}: {w}")).collect(),
        evaluation_seconds: eval.wall.as_secs_f64(),
        writing_seconds: writing.elapsed().as_secs_f64(),
        wall_seconds: (wall + writing.elapsed()).as_secs_f64(),
    };
    let summary_path = dir.join(SUMMARY_FILE);
    let json = serde_json::to_vec_pretty(&summary).map_err(|e| werr(&summary_path, e))?;
    staged.stage(&summary_path, &[&json])?;
    staged.commit()
}

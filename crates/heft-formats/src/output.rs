//! Writing results: one CSV per output, the bakes and plots, and a JSON run summary, each
//! written in full to a temporary file and committed together ([`crate::commit`]), so a failed
//! or killed run leaves no half-written or mismatched files.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::time::Duration;

use serde::Serialize;

pub use crate::commit::OutputDir;
use heft_runtime::blocks::{BakeFormat, PlannedBake};
use heft_runtime::check::Plan;
use heft_runtime::eval::{Evaluation, Frames, Schedule, columns};

use crate::commit::{StagedFile, Transaction};
use crate::csv_out::CsvWriter;
use crate::gltf_out::{BakeWriter, BinStore};
use crate::parquet_out::{ParquetFile, ParquetWriter};
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

/// One summary value of a node, as run.json and the review pages list it.
#[derive(Serialize)]
pub(crate) struct SummaryEntry {
    node: String,
    name: String,
    value: f64,
    unit: &'static str,
}

/// Every node's summary values, in the graph's order.
pub(crate) fn summary_entries(plan: &Plan, eval: &Evaluation) -> Vec<SummaryEntry> {
    plan.nodes
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
        .collect()
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

/// Writes every planned output of a whole evaluation and the run summary into the locked
/// output folder `out`. Either every file is replaced or none is ([`crate::commit`]). Returns
/// the paths written.
pub fn write_all(
    plan: &Plan,
    eval: &Evaluation,
    graph_path: &Path,
    out: &OutputDir,
    wall: Duration,
) -> Result<Vec<PathBuf>, WriteError> {
    Writer::new(plan, out, Schedule::whole(plan)).finish(eval, graph_path, wall)
}

/// A planned `write` going out window by window.
enum Stream {
    Csv(CsvWriter, StagedFile),
    Parquet(Box<ParquetFile<StagedFile>>, Vec<String>),
}

/// Where a bake's buffer is staged while it is filled: its `.bin` for a `.gltf` with a separate
/// buffer (the file itself, committed as it is), else a scratch file beside the bake that the
/// bake is written from at the end (never committed).
fn bin_target(dir: &Path, bake: &PlannedBake) -> PathBuf {
    let file = dir.join(&bake.file);
    match bake.format {
        BakeFormat::GltfSeparate => file.with_extension("bin"),
        _ => file,
    }
}

/// The outputs of a run written as it is evaluated ([`heft_runtime::eval::evaluate_in_windows`]):
/// the writes and bakes the schedule streams take each window of frames as it comes
/// ([`Writer::window`]) into staged files, so a long shot's largest outputs are never held
/// whole; everything else, the plots and `run.json` are written at [`Writer::finish`], and the
/// files are committed together. A writer dropped unfinished leaves nothing behind.
pub struct Writer<'a> {
    plan: &'a Plan,
    out: &'a OutputDir,
    schedule: Schedule,
    staged: Transaction<'a>,
    /// For each planned write: its stream, once its first window came.
    streams: Vec<Option<Stream>>,
    /// For each planned bake: its writer, once its first window came.
    bakes: Vec<Option<BakeWriter<'a>>>,
    /// Time spent writing windows.
    writing: Duration,
}

impl std::fmt::Debug for Writer<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Writer")
            .field("out", &self.out.path())
            .finish_non_exhaustive()
    }
}

impl<'a> Writer<'a> {
    /// A writer of `plan`'s outputs into `out`, streaming what `schedule` streams.
    pub fn new(plan: &'a Plan, out: &'a OutputDir, schedule: Schedule) -> Writer<'a> {
        Writer {
            plan,
            out,
            schedule,
            staged: out.transaction(),
            streams: plan.writes.iter().map(|_| None).collect(),
            bakes: plan.bakes.iter().map(|_| None).collect(),
            writing: Duration::ZERO,
        }
    }

    /// Writes the streamed outputs' frames of one window (windows come in order).
    pub fn window(&mut self, frames: &Frames<'_>) -> Result<(), WriteError> {
        let started = std::time::Instant::now();
        let plan = self.plan;
        let dir = self.out.path();
        for (w, stream) in plan.writes.iter().zip(&mut self.streams) {
            if !self.schedule.streamed[w.node][w.output] {
                continue;
            }
            let path = dir.join(w.file());
            let width = plan.nodes[w.node].outputs[w.output].width();
            let values = frames.window_values(w.node, w.output, width);
            if stream.is_none() {
                let mut file = self.staged.create(&path)?;
                *stream = Some(match w.format {
                    WriteFormat::Csv => {
                        let csv = CsvWriter::new(plan, w.node, w.output).map_err(|e| werr(&path, e))?;
                        csv.write_header(&mut file).map_err(|e| werr(&path, e))?;
                        Stream::Csv(csv, file)
                    }
                    WriteFormat::Parquet => {
                        let parquet = ParquetWriter::new(plan, w).map_err(|e| werr(&path, e))?;
                        let names = parquet.column_names()[2..].to_vec();
                        Stream::Parquet(Box::new(parquet.start(file).map_err(|e| werr(&path, e))?), names)
                    }
                });
            }
            match stream {
                Some(Stream::Csv(csv, file)) => csv
                    .write_rows(file, frames.range.clone(), values)
                    .map_err(|e| werr(&path, e))?,
                Some(Stream::Parquet(table, _)) => table
                    .write_frames(frames.range.clone(), values)
                    .map_err(|e| werr(&path, e))?,
                None => {}
            }
        }
        for (k, (bake, writer)) in plan.bakes.iter().zip(&mut self.bakes).enumerate() {
            if !self.schedule.streamed_bakes[k] {
                continue;
            }
            let path = dir.join(&bake.file);
            if writer.is_none() {
                let store = self.staged.create(&bin_target(dir, bake))?;
                let opened = BakeWriter::open(plan, bake, frames, BinStore::File(store)).map_err(|e| werr(&path, e))?;
                *writer = Some(opened);
            }
            if let Some(writer) = writer {
                writer.window(frames).map_err(|e| werr(&path, e))?;
            }
        }
        self.writing += started.elapsed();
        Ok(())
    }

    /// Writes everything else from the evaluation (every output it holds), the plots and
    /// `run.json`, and commits every file together. `wall` is the run's time so far.
    pub fn finish(mut self, eval: &Evaluation, graph_path: &Path, wall: Duration) -> Result<Vec<PathBuf>, WriteError> {
        let writing = std::time::Instant::now();
        let plan = self.plan;
        let dir = self.out.path().to_path_buf();
        let all = Frames::of(eval, 0..plan.timeline.frames());
        let mut outputs = Vec::new();
        for (w, stream) in plan.writes.iter().zip(std::mem::take(&mut self.streams)) {
            let path = dir.join(w.file());
            let pn = &plan.nodes[w.node];
            let port = &pn.ty.spec().outputs[w.output];
            let csv_columns = || {
                columns(
                    &format!("{}.{}", pn.name, port.name),
                    pn.outputs[w.output],
                    port.dimension,
                    &port.codes,
                )
            };
            let (file, columns) = match (stream, w.format) {
                (Some(Stream::Csv(_, file)), _) => (file, csv_columns()),
                (Some(Stream::Parquet(table, names)), _) => (table.finish().map_err(|e| werr(&path, e))?, names),
                (None, WriteFormat::Csv) => {
                    let mut file = self.staged.create(&path)?;
                    let csv = CsvWriter::new(plan, w.node, w.output).map_err(|e| werr(&path, e))?;
                    csv.write_header(&mut file)
                        .and_then(|()| csv.write_rows(&mut file, all.range.clone(), &eval.values[w.node][w.output]))
                        .map_err(|e| werr(&path, e))?;
                    (file, csv_columns())
                }
                (None, WriteFormat::Parquet) => {
                    let file = self.staged.create(&path)?;
                    let parquet = ParquetWriter::new(plan, w).map_err(|e| werr(&path, e))?;
                    let mut table = parquet.start(file).map_err(|e| werr(&path, e))?;
                    table
                        .write_frames(all.range.clone(), &eval.values[w.node][w.output])
                        .map_err(|e| werr(&path, e))?;
                    // As for CSV: the columns after `frame` and `time [s]`.
                    let names = parquet.column_names()[2..].to_vec();
                    (table.finish().map_err(|e| werr(&path, e))?, names)
                }
            };
            self.staged.add(file)?;
            outputs.push(OutputEntry {
                file: w.file(),
                node: pn.name.clone(),
                port: port.name.clone(),
                kind: pn.outputs[w.output].to_string(),
                format: Some(w.format.extension()),
                columns,
            });
        }
        for (bake, writer) in plan.bakes.iter().zip(std::mem::take(&mut self.bakes)) {
            let path = dir.join(&bake.file);
            let writer = match writer {
                Some(w) => w,
                None => {
                    let store = self.staged.create(&bin_target(&dir, bake))?;
                    let mut w =
                        BakeWriter::open(plan, bake, &all, BinStore::File(store)).map_err(|e| werr(&path, e))?;
                    w.window(&all).map_err(|e| werr(&path, e))?;
                    w
                }
            };
            for name in writer.finish_staged(&mut self.staged, &dir)? {
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
        let in_windows = self.writing;
        let mut staged = self.staged;
        let dir = dir.as_path();
        for plot in &plan.plots {
            let path = dir.join(&plot.file);
            let ext = path.extension().and_then(|e| e.to_str()).unwrap_or("svg").to_owned();
            let tmp = staged.stage_path(&path, &ext)?;
            crate::plots::draw(plan, eval, plot, &tmp)
                .map_err(|e| werr(&path, format!("cannot draw the plot: {e}")))?;
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
            outputs.push(OutputEntry {
                file,
                node: String::new(),
                port: String::new(),
                kind: "review page".to_owned(),
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
            summaries: summary_entries(plan, eval),
            warnings: eval.warnings.iter().map(|(n, w)| format!("{n}: {w}")).collect(),
            evaluation_seconds: eval.wall.saturating_sub(in_windows).as_secs_f64(),
            writing_seconds: (in_windows + writing.elapsed()).as_secs_f64(),
            wall_seconds: (wall + writing.elapsed()).as_secs_f64(),
        };
        let summary_path = dir.join(SUMMARY_FILE);
        let json = serde_json::to_vec_pretty(&summary).map_err(|e| werr(&summary_path, e))?;
        staged.stage(&summary_path, &[&json])?;
        staged.commit()
    }
}

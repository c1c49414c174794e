//! Evaluating a [`Plan`]: level by level, the nodes of a level in parallel (rayon). Each
//! node is a pure function of its parameters and inputs, and every buffer it sees is
//! fixed before it runs, so results are bit-identical for any thread count. A node is given
//! the evaluation's threads shared among the plugin nodes of its level ([`node_threads`]), and
//! must give the same bits for any count it is given.

use std::time::{Duration, Instant};

use rayon::prelude::*;

use heft_node_sdk::{Dimension, PortKind, Shape};

use crate::check::Plan;
use crate::registry::Provider;

/// Why an evaluation stopped.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum EvalError {
    /// A node returned an error or panicked.
    Node {
        /// Node instance name.
        node: String,
        /// Its type `plugin.node`.
        ty: String,
        /// The node's message.
        message: String,
    },
    /// A node wrote NaN or infinity.
    NonFinite {
        /// Node instance name.
        node: String,
        /// Output port.
        port: String,
        /// The first frame (frame number) holding a bad value.
        frame: i64,
        /// The column within the port.
        column: String,
        /// The bad value as text.
        value: String,
    },
    /// The thread pool could not be built.
    Threads(String),
    /// The outputs of a window of frames could not be written (evaluation in windows): the
    /// writer's message, naming the file.
    Output(String),
}

impl std::fmt::Display for EvalError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            EvalError::Node { node, ty, message } => write!(f, "node `{node}` ({ty}) failed: {message}"),
            EvalError::NonFinite {
                node,
                port,
                frame,
                column,
                value,
            } => write!(
                f,
                "node `{node}` wrote {value} to output `{port}` (column `{column}`) at frame {frame}; no output was written"
            ),
            EvalError::Threads(e) => write!(f, "cannot start the worker threads: {e}"),
            EvalError::Output(e) => write!(f, "cannot write the outputs: {e}"),
        }
    }
}

impl std::error::Error for EvalError {}

impl EvalError {
    /// The error with the place its node is declared in front (`jump.graph:12:1: node ...`),
    /// so that a failure at run time points at the graph's line as a check problem does.
    pub fn located(&self, plan: &Plan) -> String {
        let node = match self {
            EvalError::Node { node, .. } | EvalError::NonFinite { node, .. } => Some(node),
            EvalError::Threads(_) | EvalError::Output(_) => None,
        };
        match node.and_then(|n| plan.nodes.iter().find(|p| &p.name == n)) {
            Some(p) => format!("{}: {self}", p.at),
            None => self.to_string(),
        }
    }
}

/// The results of an evaluation.
#[derive(Debug, Clone)]
pub struct Evaluation {
    /// For each node, each output's frame-major values over the whole timeline; empty for an
    /// output that went out window by window and is not held ([`Schedule::streamed`]).
    pub values: Vec<Vec<Vec<f64>>>,
    /// Time spent in each node.
    pub node_time: Vec<Duration>,
    /// For each node, its summary values in spec order (SI).
    pub summaries: Vec<Vec<f64>>,
    /// Warnings, as (node name, message), in node order.
    pub warnings: Vec<(String, String)>,
    /// Wall time of the whole evaluation.
    pub wall: Duration,
}

#[derive(Debug)]
struct NodeResult {
    outputs: Vec<Vec<f64>>,
    summaries: Vec<f64>,
    time: Duration,
    warnings: Vec<String>,
}

/// Every value of node `i`'s outputs is finite, or the error names the node, the port, the
/// frame, the column and the value; the outputs start at timeline frame `first`.
fn check_finite(plan: &Plan, i: usize, outputs: &[Vec<f64>], first: usize) -> Result<(), EvalError> {
    let node = &plan.nodes[i];
    let spec = node.ty.spec();
    for (k, (values, shape)) in outputs.iter().zip(&node.outputs).enumerate() {
        if let Some(bad) = values.iter().position(|v| !v.is_finite()) {
            let w = shape.width().max(1);
            let port = &spec.outputs[k];
            let cols = columns(&port.name, *shape, port.dimension, &port.codes);
            if values[bad].to_bits() == UNWRITTEN.to_bits() {
                return Err(EvalError::Node {
                    node: node.name.clone(),
                    ty: node.ty.full_name.clone(),
                    message: format!(
                        "it did not write its output `{}` (column `{}` at frame {}, and maybe more): a node \
                         writes every value of every output",
                        port.name,
                        cols.get(bad % w).cloned().unwrap_or_default(),
                        plan.timeline.frame_number(first + bad / w)
                    ),
                });
            }
            return Err(EvalError::NonFinite {
                node: node.name.clone(),
                port: port.name.clone(),
                frame: plan.timeline.frame_number(first + bad / w),
                column: cols.get(bad % w).cloned().unwrap_or_default(),
                value: format!("{}", values[bad]),
            });
        }
    }
    Ok(())
}

/// What output buffers hold before a node writes them: a NaN of its own bits, so that a value
/// the node left unwritten is told from a NaN it computed.
const UNWRITTEN: f64 = f64::from_bits(0x7ff8_0000_dead_beef);

/// The threads each plugin node of a level may use (`Call::threads`): the evaluation's
/// `threads` shared evenly among the level's `nodes` plugin nodes, which run at the same time,
/// at least 1 (a level of more nodes than threads gives each one).
pub fn node_threads(threads: usize, nodes: usize) -> usize {
    (threads / nodes.max(1)).max(1)
}

/// Node `i`'s inputs as the plugin call takes them: each connected port's values with its
/// width, from the results of the nodes evaluated before; an unconnected port is empty.
fn node_inputs<'a>(plan: &Plan, i: usize, done: &'a [Option<NodeResult>]) -> Vec<(&'a [f64], usize)> {
    plan.nodes[i]
        .inputs
        .iter()
        .map(|src| match src {
            Some((a, k)) => match &done[*a] {
                Some(r) => (r.outputs[*k].as_slice(), plan.nodes[*a].outputs[*k].width()),
                None => (&[][..], 0),
            },
            None => (&[][..], 0),
        })
        .collect()
}

fn run_node(plan: &Plan, i: usize, done: &[Option<NodeResult>], threads: usize) -> Result<NodeResult, EvalError> {
    let node = &plan.nodes[i];
    let spec = node.ty.spec();
    let frames = plan.timeline.frames();
    let inputs = node_inputs(plan, i, done);
    if let Some(data) = &node.host_data {
        // A host node's data (a track read from a file) is checked like any node's outputs:
        // a value that overflowed on reading (1e306 kN is 1e309 N) is refused here.
        check_finite(plan, i, data, 0)?;
        return Ok(NodeResult {
            outputs: data.clone(),
            summaries: Vec::new(),
            time: std::time::Duration::ZERO,
            warnings: Vec::new(),
        });
    }
    let Provider::Plugin { plugin, index } = &node.ty.provider else {
        return Err(EvalError::Node {
            node: node.name.clone(),
            ty: node.ty.full_name.clone(),
            message: "a host node without its data".to_owned(),
        });
    };
    // Allocated fallibly: a buffer the system cannot give is an error naming the output, not
    // an abort.
    let mut outputs: Vec<Vec<f64>> = Vec::with_capacity(node.outputs.len());
    for k in 0..node.outputs.len() {
        outputs.push(allocate(plan, i, k, frames)?);
    }
    let mut summaries = vec![f64::NAN; spec.summaries.len()];
    let started = Instant::now();
    let warnings = {
        let mut views: Vec<(&mut [f64], usize)> = outputs
            .iter_mut()
            .zip(&node.outputs)
            .map(|(v, s)| (v.as_mut_slice(), s.width()))
            .collect();
        plugin
            .plugin
            .evaluate_with_threads(
                *index,
                &node.params_bytes,
                plan.timeline,
                &inputs,
                &mut views,
                &mut summaries,
                threads,
            )
            .map_err(|e| EvalError::Node {
                node: node.name.clone(),
                ty: node.ty.full_name.clone(),
                message: e.to_string(),
            })?
    };
    let time = started.elapsed();
    check_finite(plan, i, &outputs, 0)?;
    summaries_ok(plan, i, &summaries)?;
    Ok(NodeResult {
        outputs,
        summaries,
        time,
        warnings,
    })
}

/// Evaluates a plan on `threads` worker threads (`None`: one per core).
pub fn evaluate(plan: &Plan, threads: Option<usize>) -> Result<Evaluation, EvalError> {
    evaluate_observed(plan, threads, &|_| {})
}

/// Like [`evaluate`], calling `node_done(i)` (from any worker thread) as node `i` finishes,
/// for progress display.
pub fn evaluate_observed(
    plan: &Plan,
    threads: Option<usize>,
    node_done: &(dyn Fn(usize) + Sync),
) -> Result<Evaluation, EvalError> {
    evaluate_in_windows(plan, threads, &Schedule::whole(plan), node_done, &mut |_| Ok(()))
}

/// How an evaluation runs in windows of frames, so that a long shot's largest outputs are never
/// held whole: which nodes advance window by window, which of their outputs are still gathered
/// whole, and how many frames a window holds.
///
/// A node runs in windows when its type can ([`heft_node_sdk::host::Plugin::windowed`]) and
/// every input it reads comes from a node evaluated whole before the windows; nodes that read a
/// windowed node's output run whole after them. A windowed node's output is gathered whole when
/// a node, a plot or a review page reads it, or a bake that cannot be written window by window
/// (one that reads a node evaluated after the windows, or a series or an anchor from a windowed
/// node); every other output of it goes to the writers one window at a time and is not held
/// ([`Schedule::streamed`]).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Schedule {
    /// For each node: it advances window by window.
    pub windowed: Vec<bool>,
    /// For each node: it reads a windowed node's output, so it runs after the windows.
    pub after: Vec<bool>,
    /// For each node and output: written window by window and not held.
    pub streamed: Vec<Vec<bool>>,
    /// For each bake of the plan: written window by window.
    pub streamed_bakes: Vec<bool>,
    /// Frames a window holds (at least 1).
    pub window: usize,
}

impl Schedule {
    /// Every node evaluated whole, every output held: [`evaluate`].
    pub fn whole(plan: &Plan) -> Schedule {
        Schedule {
            windowed: vec![false; plan.nodes.len()],
            after: vec![false; plan.nodes.len()],
            streamed: plan.nodes.iter().map(|n| vec![false; n.outputs.len()]).collect(),
            streamed_bakes: vec![false; plan.bakes.len()],
            window: plan.timeline.frames().max(1),
        }
    }

    /// The schedule of `plan` with windows of at most `budget` bytes of windowed outputs (at
    /// least one frame a window).
    pub fn windows(plan: &Plan, budget: u64) -> Schedule {
        let n = plan.nodes.len();
        let mut windowed = vec![false; n];
        let mut after = vec![false; n];
        for level in &plan.levels {
            for &i in level {
                let node = &plan.nodes[i];
                let reads_windowed = node.inputs.iter().flatten().any(|&(a, _)| windowed[a] || after[a]);
                let can = match &node.ty.provider {
                    Provider::Plugin { plugin, index } => plugin.plugin.windowed(*index),
                    Provider::Host(_) => false,
                };
                if reads_windowed {
                    after[i] = true;
                } else if can && node.host_data.is_none() {
                    windowed[i] = true;
                }
            }
        }
        let mut kept: Vec<Vec<bool>> = plan.nodes.iter().map(|n| vec![false; n.outputs.len()]).collect();
        for node in &plan.nodes {
            for &(a, k) in node.inputs.iter().flatten() {
                kept[a][k] = true;
            }
        }
        for plot in &plan.plots {
            for item in &plot.items {
                kept[item.node][item.output] = true;
            }
        }
        // A review page shows its items, its body and, with its audit, reads the positions of
        // every strand node too (`heft_formats::motion::graph_chains`): all whole.
        for review in &plan.reviews {
            for item in &review.items {
                kept[item.node][item.output] = true;
            }
            if let Some(b) = review.body {
                kept[b].iter_mut().for_each(|k| *k = true);
                if review.audit {
                    for (node, k) in plan.nodes.iter().zip(kept.iter_mut()) {
                        let spec = node.ty.spec();
                        for (port, held) in spec.outputs.iter().zip(k.iter_mut()) {
                            if port.name == "positions" && port.kind == PortKind::Points {
                                *held = true;
                            }
                        }
                    }
                }
            }
        }
        let mut streamed_bakes = Vec::with_capacity(plan.bakes.len());
        for bake in &plan.bakes {
            // A bake written window by window takes only its points window by window; its
            // series and anchors it writes when it is laid out, so they must come from nodes
            // evaluated before the windows.
            let mut read = Vec::new();
            let mut streams = true;
            for item in &bake.items {
                read.push((item.node, item.output));
                let before = !windowed[item.node] && !after[item.node];
                streams &= if item.shape.kind == PortKind::Points {
                    !after[item.node]
                } else {
                    before
                };
                if let crate::blocks::BakeAnchor::Series { node, output } = item.anchor {
                    read.push((node, output));
                    streams &= !windowed[node] && !after[node];
                }
            }
            if !streams {
                for (node, output) in read {
                    kept[node][output] = true;
                }
            }
            streamed_bakes.push(streams);
        }
        let streamed: Vec<Vec<bool>> = kept
            .iter()
            .zip(&windowed)
            .map(|(k, &w)| k.iter().map(|&held| w && !held).collect())
            .collect();
        let per_frame: u64 = plan
            .nodes
            .iter()
            .zip(&windowed)
            .filter(|(_, w)| **w)
            .flat_map(|(n, _)| n.outputs.iter().map(|s| 8 * s.width() as u64))
            .sum();
        let frames = plan.timeline.frames().max(1);
        let window = usize::try_from(budget / per_frame.max(1))
            .unwrap_or(usize::MAX)
            .clamp(1, frames);
        Schedule {
            windowed,
            after,
            streamed,
            streamed_bakes,
            window,
        }
    }

    /// The bytes the evaluation holds under this schedule (8 per value): every output held
    /// whole over every frame, and a window of every windowed node's outputs.
    pub fn footprint(&self, plan: &Plan) -> crate::check::Footprint {
        let frames = u128::from(plan.timeline.frame_count);
        let window = self.window as u128;
        let mut f = crate::check::Footprint {
            total: 0,
            largest: None,
        };
        for (i, n) in plan.nodes.iter().enumerate() {
            for (k, shape) in n.outputs.iter().enumerate() {
                let per_frame = shape.width() as u128 * 8;
                let held = if self.streamed[i][k] { 0 } else { frames * per_frame };
                let bytes = held + if self.windowed[i] { window * per_frame } else { 0 };
                f.total += bytes;
                if f.largest.is_none_or(|(_, _, b)| bytes > b) {
                    f.largest = Some((i, k, bytes));
                }
            }
        }
        f
    }

    /// True when some node advances window by window.
    pub fn has_windows(&self) -> bool {
        self.windowed.iter().any(|&w| w)
    }
}

/// One window of frames of an evaluation in windows, as the writers see it: every output of a
/// node evaluated before the windows, whole, and the window's frames of every windowed node.
#[derive(Debug, Clone)]
pub struct Frames<'a> {
    /// The window's frames (indices into the timeline).
    pub range: std::ops::Range<usize>,
    /// For each node, its outputs over the whole timeline (empty when not evaluated yet).
    whole: Vec<&'a [Vec<f64>]>,
    /// For each windowed node, its outputs over the window.
    window: &'a [Option<Vec<Vec<f64>>>],
}

impl<'a> Frames<'a> {
    /// Frames `range` of a whole evaluation (every output held): what a writer that takes
    /// windows is given when the evaluation ran whole.
    pub fn of(eval: &'a Evaluation, range: std::ops::Range<usize>) -> Frames<'a> {
        Frames {
            range,
            whole: eval.values.iter().map(Vec::as_slice).collect(),
            window: &[],
        }
    }

    /// The values of `node`'s output `output` at timeline frame `i`: a frame of the window for
    /// a windowed node, any frame for a node evaluated before the windows. Empty for a node
    /// evaluated after them, or a frame outside the window.
    pub fn frame(&self, node: usize, output: usize, i: usize, width: usize) -> &'a [f64] {
        let (values, first): (&'a [f64], usize) = match self.window.get(node) {
            Some(Some(w)) => (&w[output], self.range.start),
            _ => match self.whole[node].get(output) {
                Some(v) => (v, 0),
                None => return &[],
            },
        };
        match i.checked_sub(first) {
            Some(k) => values.get(k * width..(k + 1) * width).unwrap_or(&[]),
            None => &[],
        }
    }

    /// The window's values of `node`'s output `output`, frame-major, from the window's first
    /// frame.
    pub fn window_values(&self, node: usize, output: usize, width: usize) -> &'a [f64] {
        match self.window.get(node) {
            Some(Some(w)) => &w[output],
            _ => self.whole[node]
                .get(output)
                .and_then(|v| v.get(self.range.start * width..self.range.end * width))
                .unwrap_or(&[]),
        }
    }
}

/// A windowed node's buffers and carry across the windows.
struct Advancing {
    node: usize,
    carry: heft_node_sdk::host::Carry,
    window: Vec<Vec<f64>>,
    kept: Vec<Option<Vec<f64>>>,
    summaries: Vec<f64>,
    warnings: Vec<String>,
    time: Duration,
}

fn allocate(plan: &Plan, i: usize, k: usize, frames: usize) -> Result<Vec<f64>, EvalError> {
    let node = &plan.nodes[i];
    let len = frames.saturating_mul(node.outputs[k].width());
    let mut v = Vec::new();
    v.try_reserve_exact(len).map_err(|_| EvalError::Node {
        node: node.name.clone(),
        ty: node.ty.full_name.clone(),
        message: format!(
            "cannot get {:.1} GiB of memory for its output `{}` over {frames} frames: evaluate fewer frames",
            len as f64 * 8.0 / (1u64 << 30) as f64,
            node.ty.spec().outputs[k].name
        ),
    })?;
    v.resize(len, UNWRITTEN);
    Ok(v)
}

/// Advances windowed node `a.node` over `range`.
fn advance_node(
    plan: &Plan,
    a: &mut Advancing,
    done: &[Option<NodeResult>],
    range: std::ops::Range<usize>,
    threads: usize,
) -> Result<(), EvalError> {
    let i = a.node;
    let node = &plan.nodes[i];
    let fail = |message: String| EvalError::Node {
        node: node.name.clone(),
        ty: node.ty.full_name.clone(),
        message,
    };
    let Provider::Plugin { plugin, index } = &node.ty.provider else {
        return Err(fail("a host node cannot run in windows".to_owned()));
    };
    let inputs = node_inputs(plan, i, done);
    for (buf, shape) in a.window.iter_mut().zip(&node.outputs) {
        buf.clear();
        buf.resize(range.len() * shape.width(), UNWRITTEN);
    }
    a.summaries.fill(f64::NAN);
    let started = Instant::now();
    let warnings = {
        let mut views: Vec<(&mut [f64], usize)> = a
            .window
            .iter_mut()
            .zip(&node.outputs)
            .map(|(v, s)| (v.as_mut_slice(), s.width()))
            .collect();
        let window = heft_node_sdk::abi::Window {
            first: range.start as u64,
            count: range.len() as u64,
        };
        plugin
            .plugin
            .advance(
                *index,
                &node.params_bytes,
                plan.timeline,
                window,
                &inputs,
                &mut views,
                &mut a.summaries,
                threads,
                &mut a.carry,
            )
            .map_err(|e| fail(e.to_string()))?
    };
    a.time += started.elapsed();
    a.warnings.extend(warnings);
    check_finite(plan, i, &a.window, range.start)?;
    for ((kept, buf), shape) in a.kept.iter_mut().zip(&a.window).zip(&node.outputs) {
        if let Some(kept) = kept {
            let w = shape.width();
            kept[range.start * w..range.end * w].copy_from_slice(buf);
        }
    }
    Ok(())
}

fn summaries_ok(plan: &Plan, i: usize, summaries: &[f64]) -> Result<(), EvalError> {
    let node = &plan.nodes[i];
    if let Some((k, v)) = summaries.iter().enumerate().find(|(_, v)| !v.is_finite()) {
        let name = &node.ty.spec().summaries[k].name;
        return Err(EvalError::Node {
            node: node.name.clone(),
            ty: node.ty.full_name.clone(),
            message: if v.is_nan() {
                format!("it did not report its summary value `{name}`")
            } else {
                format!("its summary value `{name}` is {v}")
            },
        });
    }
    Ok(())
}

/// Evaluates a plan as `schedule` says: the nodes before the windows whole, level by level;
/// then the windowed nodes window by window (in parallel with each other), handing each
/// window's frames to `sink` in order before the next window is computed; then the nodes after
/// the windows. A sink's error stops the evaluation ([`EvalError::Output`]). With
/// [`Schedule::whole`] it is [`evaluate_observed`]. The values held in the result are those
/// the schedule keeps; the results are the bits of a whole evaluation for any schedule.
pub fn evaluate_in_windows(
    plan: &Plan,
    threads: Option<usize>,
    schedule: &Schedule,
    node_done: &(dyn Fn(usize) + Sync),
    sink: &mut dyn FnMut(&Frames<'_>) -> Result<(), String>,
) -> Result<Evaluation, EvalError> {
    // One thread needs no pool of its own (a sweep evaluates many points this way).
    let pool = match threads {
        Some(1) => None,
        _ => {
            let mut builder = rayon::ThreadPoolBuilder::new();
            if let Some(n) = threads {
                builder = builder.num_threads(n.max(1));
            }
            Some(builder.build().map_err(|e| EvalError::Threads(e.to_string()))?)
        }
    };
    let total = pool.as_ref().map_or(1, rayon::ThreadPool::current_num_threads);
    let started = Instant::now();
    let mut done: Vec<Option<NodeResult>> = (0..plan.nodes.len()).map(|_| None).collect();
    let whole_levels = |done: &mut Vec<Option<NodeResult>>, after: bool| -> Result<(), EvalError> {
        for level in &plan.levels {
            let level: Vec<usize> = level
                .iter()
                .copied()
                .filter(|&i| !schedule.windowed[i] && schedule.after[i] == after)
                .collect();
            // Host nodes (tracks read when the graph was checked) only copy their data.
            let plugin_nodes = level.iter().filter(|&&i| plan.nodes[i].host_data.is_none()).count();
            let threads = node_threads(total, plugin_nodes);
            let one = |&i: &usize| {
                let r = run_node(plan, i, done, threads);
                node_done(i);
                r
            };
            let results: Vec<Result<NodeResult, EvalError>> = match &pool {
                Some(pool) => pool.install(|| level.par_iter().map(one).collect()),
                None => level.iter().map(one).collect(),
            };
            for (&i, r) in level.iter().zip(results) {
                done[i] = Some(r?);
            }
        }
        Ok(())
    };
    whole_levels(&mut done, false)?;

    // The windows.
    let frames = plan.timeline.frames();
    let mut advancing: Vec<Advancing> = Vec::new();
    for (i, node) in plan.nodes.iter().enumerate().filter(|(i, _)| schedule.windowed[*i]) {
        let Provider::Plugin { index, .. } = &node.ty.provider else {
            continue;
        };
        let mut kept = Vec::with_capacity(node.outputs.len());
        for k in 0..node.outputs.len() {
            kept.push(if schedule.streamed[i][k] {
                None
            } else {
                Some(allocate(plan, i, k, frames)?)
            });
        }
        advancing.push(Advancing {
            node: i,
            carry: heft_node_sdk::host::Carry::new(*index),
            window: vec![Vec::new(); node.outputs.len()],
            kept,
            summaries: vec![f64::NAN; node.ty.spec().summaries.len()],
            warnings: Vec::new(),
            time: Duration::ZERO,
        });
    }
    if !advancing.is_empty() {
        let threads = node_threads(total, advancing.len());
        let step = schedule.window.max(1);
        let mut start = 0;
        while start < frames {
            let range = start..(start + step).min(frames);
            let one = |a: &mut Advancing| advance_node(plan, a, &done, range.clone(), threads);
            let results: Vec<Result<(), EvalError>> = match &pool {
                Some(pool) => pool.install(|| advancing.par_iter_mut().map(one).collect()),
                None => advancing.iter_mut().map(one).collect(),
            };
            results.into_iter().collect::<Result<(), EvalError>>()?;
            let mut window: Vec<Option<Vec<Vec<f64>>>> = (0..plan.nodes.len()).map(|_| None).collect();
            for a in &mut advancing {
                window[a.node] = Some(std::mem::take(&mut a.window));
            }
            let result = sink(&Frames {
                range: range.clone(),
                whole: done
                    .iter()
                    .map(|r| r.as_ref().map_or(&[][..], |r| r.outputs.as_slice()))
                    .collect(),
                window: &window,
            });
            for a in &mut advancing {
                a.window = window[a.node].take().unwrap_or_default();
            }
            result.map_err(EvalError::Output)?;
            start = range.end;
        }
        for a in advancing {
            summaries_ok(plan, a.node, &a.summaries)?;
            node_done(a.node);
            let outputs = a.kept.into_iter().map(Option::unwrap_or_default).collect();
            done[a.node] = Some(NodeResult {
                outputs,
                summaries: a.summaries,
                time: a.time,
                warnings: a.warnings,
            });
        }
    }
    whole_levels(&mut done, true)?;

    let wall = started.elapsed();
    let mut values = Vec::with_capacity(done.len());
    let mut node_time = Vec::with_capacity(done.len());
    let mut summaries = Vec::with_capacity(done.len());
    let mut warnings = Vec::new();
    for (i, r) in done.into_iter().enumerate() {
        let r = r.unwrap_or(NodeResult {
            outputs: Vec::new(),
            summaries: Vec::new(),
            time: Duration::ZERO,
            warnings: Vec::new(),
        });
        values.push(r.outputs);
        summaries.push(r.summaries);
        node_time.push(r.time);
        warnings.extend(r.warnings.into_iter().map(|w| (plan.nodes[i].name.clone(), w)));
    }
    Ok(Evaluation {
        values,
        summaries,
        node_time,
        warnings,
        wall,
    })
}

/// The names of a port's values, with units (used in messages, and as CSV headers by the
/// writers): `position.x [m]`, `hips.qw`, `tips.p3.z [m]`.
pub fn columns(port: &str, shape: Shape, dimension: Dimension, codes: &[String]) -> Vec<String> {
    let unit = match dimension.si_symbol() {
        "" if !codes.is_empty() => {
            // Whole-number codes: their names in the header, so the file says what 3 means.
            let named: Vec<String> = codes.iter().enumerate().map(|(k, n)| format!("{k} {n}")).collect();
            format!(" [code: {}]", named.join("; "))
        }
        "" => String::new(),
        s => format!(" [{s}]"),
    };
    match shape.kind {
        PortKind::Scalar => vec![format!("{port}{unit}")],
        PortKind::Flag => vec![format!("{port} [on/off]")],
        PortKind::Vec3 => ["x", "y", "z"].iter().map(|a| format!("{port}.{a}{unit}")).collect(),
        PortKind::Transform => ["tx", "ty", "tz"]
            .iter()
            .map(|a| format!("{port}.{a}{unit}"))
            .chain(["qx", "qy", "qz", "qw"].iter().map(|a| format!("{port}.{a}")))
            .collect(),
        PortKind::Points => (0..shape.points)
            .flat_map(|p| {
                let unit = unit.clone();
                ["x", "y", "z"]
                    .into_iter()
                    .map(move |a| format!("{port}.p{p}.{a}{unit}"))
            })
            .collect(),
    }
}

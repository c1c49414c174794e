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
            EvalError::Threads(_) => None,
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
    /// For each node, each output's frame-major values.
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

struct NodeResult {
    outputs: Vec<Vec<f64>>,
    summaries: Vec<f64>,
    time: Duration,
    warnings: Vec<String>,
}

/// Every value of node `i`'s outputs is finite, or the error names the node, the port, the
/// frame, the column and the value.
fn check_finite(plan: &Plan, i: usize, outputs: &[Vec<f64>]) -> Result<(), EvalError> {
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
                        plan.timeline.frame_number(bad / w)
                    ),
                });
            }
            return Err(EvalError::NonFinite {
                node: node.name.clone(),
                port: port.name.clone(),
                frame: plan.timeline.frame_number(bad / w),
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

fn run_node(plan: &Plan, i: usize, done: &[Option<NodeResult>], threads: usize) -> Result<NodeResult, EvalError> {
    let node = &plan.nodes[i];
    let spec = node.ty.spec();
    let frames = plan.timeline.frames();
    let empty: &[f64] = &[];
    let inputs: Vec<(&[f64], usize)> = node
        .inputs
        .iter()
        .map(|src| match src {
            Some((a, k)) => match &done[*a] {
                Some(r) => (r.outputs[*k].as_slice(), plan.nodes[*a].outputs[*k].width()),
                None => (empty, 0),
            },
            None => (empty, 0),
        })
        .collect();
    if let Some(data) = &node.host_data {
        // A host node's data (a track read from a file) is checked like any node's outputs:
        // a value that overflowed on reading (1e306 kN is 1e309 N) is refused here.
        check_finite(plan, i, data)?;
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
    let mut outputs: Vec<Vec<f64>> = Vec::with_capacity(node.outputs.len());
    for (k, shape) in node.outputs.iter().enumerate() {
        // Allocated fallibly: a buffer the system cannot give is an error naming the output,
        // not an abort.
        let len = frames.saturating_mul(shape.width());
        let mut v = Vec::new();
        v.try_reserve_exact(len).map_err(|_| EvalError::Node {
            node: node.name.clone(),
            ty: node.ty.full_name.clone(),
            message: format!(
                "cannot get {:.1} GiB of memory for its output `{}` over {frames} frames: evaluate fewer frames",
                len as f64 * 8.0 / (1u64 << 30) as f64,
                spec.outputs[k].name
            ),
        })?;
        v.resize(len, UNWRITTEN);
        outputs.push(v);
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
    check_finite(plan, i, &outputs)?;
    if let Some((k, v)) = summaries.iter().enumerate().find(|(_, v)| !v.is_finite()) {
        let name = &spec.summaries[k].name;
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
    for level in &plan.levels {
        // Host nodes (tracks read when the graph was checked) only copy their data.
        let plugin_nodes = level.iter().filter(|&&i| plan.nodes[i].host_data.is_none()).count();
        let threads = node_threads(total, plugin_nodes);
        let one = |&i: &usize| {
            let r = run_node(plan, i, &done, threads);
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

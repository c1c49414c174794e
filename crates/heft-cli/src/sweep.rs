//! `heft sweep`: a grid of runs.

use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::time::Instant;

use heft_formats::output;
use heft_formats::review_out::{SweepPoint, sweep_index};
use heft_node_sdk::ParamValue;
use heft_runtime::check::{Overrides, Plan};
use heft_runtime::diag::render;
use heft_runtime::graph::GraphFile;
use heft_runtime::registry::Registry;
use heft_runtime::sweep::{Axis, grid};
use heft_runtime::{check, eval, read_graph};
use rayon::prelude::*;

use crate::GraphArgs;

/// What one point gave: its SI axis values, its summaries (or an error).
struct PointResult {
    index: usize,
    axis_values: Vec<String>,
    summaries: Vec<(String, f64)>,
    error: Option<String>,
}

fn si_value(plan: &Plan, target: &str) -> String {
    let Some((node, param)) = target.split_once('.') else {
        return String::new();
    };
    plan.nodes
        .iter()
        .find(|n| n.name == node)
        .and_then(|n| {
            n.ty.spec()
                .params
                .iter()
                .position(|p| p.name == param)
                .map(|k| &n.params[k])
        })
        .map(|v| match v {
            ParamValue::Number(x) => format!("{x}"),
            ParamValue::Integer(i) => i.to_string(),
            other => format!("{other:?}"),
        })
        .unwrap_or_default()
}

/// ` [unit]` of a parameter `node.param` of the plan (SI), or nothing for a plain number.
fn unit_of(plan: &Plan, target: &str) -> String {
    let symbol = target
        .split_once('.')
        .and_then(|(node, param)| {
            let n = plan.nodes.iter().find(|n| n.name == node)?;
            let spec = n.ty.spec();
            let p = spec.params.iter().find(|p| p.name == param)?;
            match &p.ty {
                heft_node_sdk::ParamType::Number { dimension, .. } => Some(dimension.si_symbol()),
                _ => None,
            }
        })
        .unwrap_or("");
    if symbol.is_empty() {
        String::new()
    } else {
        format!(" [{symbol}]")
    }
}

/// The summary columns of the graph (`node.summary [unit]`), those in `wanted` when it names
/// any, in the graph's order.
fn summary_columns(plan: &Plan, wanted: &[String]) -> Vec<String> {
    let mut columns = Vec::new();
    for n in &plan.nodes {
        for s in &n.ty.spec().summaries {
            let name = format!("{}.{}", n.name, s.name);
            if wanted.is_empty() || wanted.contains(&name) {
                columns.push(summary_column(&name, s.dimension));
            }
        }
    }
    columns
}

/// A summary's column name: `node.summary [unit]`.
fn summary_column(name: &str, dimension: heft_node_sdk::Dimension) -> String {
    match dimension.si_symbol() {
        "" => name.to_owned(),
        u => format!("{name} [{u}]"),
    }
}

#[allow(clippy::too_many_arguments)]
fn run_point(
    registry: &Registry,
    parsed: &GraphFile,
    graph: &GraphArgs,
    axes: &[Axis],
    index: usize,
    values: &[String],
    out: &Path,
    wanted: &[String],
) -> PointResult {
    let mut result = PointResult {
        index,
        axis_values: values.to_vec(),
        summaries: Vec::new(),
        error: None,
    };
    let mut set = graph.set.clone();
    set.extend(axes.iter().zip(values).map(|(a, v)| format!("{}={v}", a.target)));
    let overrides = Overrides {
        set,
        frames: graph.frames,
    };
    // The graph parsed without problems (checked before the sweep starts).
    let plan = match check::check(parsed, Vec::new(), registry, &overrides) {
        Ok(p) => p,
        Err(p) => {
            result.error = Some(render(&p, false));
            return result;
        }
    };
    result.axis_values = axes.iter().map(|a| si_value(&plan, &a.target)).collect();
    let started = Instant::now();
    let folder = match output::OutputDir::open(&out.join(format!("point-{index:04}"))) {
        Ok(f) => f,
        Err(err) => {
            result.error = Some(format!("cannot use the output folder {err}"));
            return result;
        }
    };
    let e = match eval::evaluate(&plan, Some(1)) {
        Ok(e) => e,
        Err(e) => {
            result.error = Some(e.located(&plan));
            return result;
        }
    };
    for (n, values) in plan.nodes.iter().zip(&e.summaries) {
        for (s, v) in n.ty.spec().summaries.iter().zip(values) {
            let name = format!("{}.{}", n.name, s.name);
            if wanted.is_empty() || wanted.contains(&name) {
                result.summaries.push((summary_column(&name, s.dimension), *v));
            }
        }
    }
    if let Err(err) = output::write_all(&plan, &e, &graph.graph, &folder, started.elapsed()) {
        result.error = Some(err.to_string());
    }
    result
}

#[allow(clippy::too_many_arguments)]
pub(crate) fn run(
    registry: &Registry,
    graph: &GraphArgs,
    axes: &[Axis],
    out: &Path,
    shard: Option<(usize, usize)>,
    wanted: &[String],
    threads: Option<usize>,
    quiet: bool,
    color: bool,
) -> ExitCode {
    // Read the graph once and check it as it stands, so that a broken graph stops before any
    // point runs; every point then checks the same parsed graph with its own overrides.
    let (parsed, base) = match read_graph(&graph.graph) {
        Ok((g, p)) => {
            let overrides = Overrides {
                set: graph.set.clone(),
                frames: graph.frames,
            };
            match check::check(&g, p, registry, &overrides) {
                Ok(plan) => (g, plan),
                Err(problems) => {
                    eprint!("{}", render(&problems, color));
                    return ExitCode::from(1);
                }
            }
        }
        Err(e) => {
            eprintln!("error: cannot read the graph file {}: {e}", graph.graph.display());
            return ExitCode::from(1);
        }
    };
    let all = match grid(axes) {
        Ok(g) => g,
        Err(e) => {
            eprintln!("error: {e}");
            return ExitCode::from(1);
        }
    };
    let total = all.len();
    let points: Vec<(usize, Vec<String>)> = all
        .into_iter()
        .filter(|(i, _)| shard.is_none_or(|(k, n)| i % n == k))
        .collect();
    let mut builder = rayon::ThreadPoolBuilder::new();
    if let Some(n) = threads {
        builder = builder.num_threads(n);
    }
    let pool = match builder.build() {
        Ok(p) => p,
        Err(e) => {
            eprintln!("error: cannot start the worker threads: {e}");
            return ExitCode::from(1);
        }
    };
    let results: Vec<PointResult> = pool.install(|| {
        points
            .par_iter()
            .map(|(i, values)| run_point(registry, &parsed, graph, axes, *i, values, out, wanted))
            .collect()
    });
    // The table: one row per point; the columns come from the graph, not from the points that
    // ran, so every shard's table has the same header (an empty shard's too) and they
    // concatenate. A varied parameter's column is `node.param.set [unit]`, kept apart from a
    // summary of the same name when a data tool strips the units.
    let columns = summary_columns(&base, wanted);
    let mut w = csv::Writer::from_writer(Vec::new());
    let mut header = vec!["point".to_owned(), "folder".to_owned()];
    header.extend(
        axes.iter()
            .map(|a| format!("{}.set{}", a.target, unit_of(&base, &a.target))),
    );
    header.extend(columns.iter().cloned());
    header.push("error".to_owned());
    let mut failed = 0;
    let mut rows = vec![header];
    for r in &results {
        // A point that failed wrote no folder: its row names none.
        let folder = if r.error.is_none() {
            format!("point-{:04}", r.index)
        } else {
            String::new()
        };
        let mut row = vec![r.index.to_string(), folder];
        row.extend(r.axis_values.iter().cloned());
        for c in &columns {
            row.push(
                r.summaries
                    .iter()
                    .find(|(n, _)| n == c)
                    .map(|(_, v)| format!("{v}"))
                    .unwrap_or_default(),
            );
        }
        if let Some(e) = &r.error {
            failed += 1;
            eprintln!("point {}: {e}", r.index);
        }
        row.push(
            r.error
                .clone()
                .unwrap_or_default()
                .lines()
                .next()
                .unwrap_or_default()
                .to_owned(),
        );
        rows.push(row);
    }
    for row in &rows {
        if let Err(e) = w.write_record(row) {
            eprintln!("error: cannot write the table: {e}");
            return ExitCode::from(1);
        }
    }
    let stem = match shard {
        Some((i, n)) => format!("sweep-shard-{i}-of-{n}"),
        None => "sweep".to_owned(),
    };
    let table: PathBuf = out.join(format!("{stem}.csv"));
    let bytes = match w.into_inner() {
        Ok(b) => b,
        Err(e) => {
            eprintln!("error: cannot write the table: {e}");
            return ExitCode::from(1);
        }
    };
    if let Err(e) = output::write_atomically(&table, &bytes) {
        eprintln!("error: cannot write the table: {e}");
        return ExitCode::from(1);
    }
    // The same rows as a page, each point linking to its review page (the graph's first), or
    // to its run.json when the graph has none.
    let page = base.reviews.first().map_or("run.json", |r| r.file.as_str());
    let points: Vec<SweepPoint> = rows[1..]
        .iter()
        .zip(&results)
        .map(|(row, r)| SweepPoint {
            cells: row.clone(),
            link: r.error.is_none().then(|| format!("point-{:04}/{page}", r.index)),
        })
        .collect();
    let title = format!(
        "Sweep of {} over {}",
        graph.graph.display(),
        axes.iter().map(|a| a.target.as_str()).collect::<Vec<_>>().join(", ")
    );
    let index = out.join(format!("{stem}.html"));
    if let Err(e) = output::write_atomically(&index, sweep_index(&title, &rows[0], &points).as_bytes()) {
        eprintln!("error: cannot write the index page: {e}");
        return ExitCode::from(1);
    }
    if !quiet {
        println!(
            "swept {} of {} points ({} failed); table {}, index {}",
            results.len(),
            total,
            failed,
            table.display(),
            index.display()
        );
    }
    if failed > 0 {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    }
}

//! The heft runtime: reads graph files, finds and loads node plugins, checks a graph
//! against them and evaluates it (independent branches in parallel). It names no file
//! format: host source nodes come in through [`source::HostSource`], and the writers of
//! outputs (`heft-formats`) follow the plan it makes. It holds no `unsafe` (the plugin
//! boundary is `heft-node-sdk`'s).
#![forbid(unsafe_code)]
#![warn(missing_docs)]

pub mod blocks;
pub mod check;
pub mod diag;
pub mod eval;
pub mod graph;
pub mod recipes;
pub mod registry;
pub mod sweep;
pub mod units;

use std::path::Path;
use std::sync::Arc;

/// Reads and parses a graph file. `Err` only when the file cannot be read; syntax
/// problems come back with what could be parsed.
pub fn read_graph(path: &Path) -> Result<(graph::GraphFile, Vec<diag::Problem>), std::io::Error> {
    let text = std::fs::read_to_string(path)?;
    let source: Arc<diag::Source> = diag::Source::new(path.display().to_string(), text);
    let (mut graph, mut problems) = graph::parse(&source);
    recipes::expand(&mut graph, &mut problems);
    Ok((graph, problems))
}

/// Parses and checks graph text in one step (for tests and tools).
pub fn plan_text(
    name: &str,
    text: &str,
    registry: &registry::Registry,
    overrides: &check::Overrides,
) -> Result<check::Plan, Vec<diag::Problem>> {
    let source = diag::Source::new(name, text);
    let (mut graph, mut problems) = graph::parse(&source);
    recipes::expand(&mut graph, &mut problems);
    check::check(&graph, problems, registry, overrides)
}
pub mod node_docs;
pub mod source;

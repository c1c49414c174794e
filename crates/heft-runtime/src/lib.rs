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

/// The largest graph or recipe file heft reads, bytes.
pub const GRAPH_FILE_LIMIT: u64 = 64 << 20;
/// The largest data file (a CSV track, a glTF character) heft reads, bytes.
pub const DATA_FILE_LIMIT: u64 = 4 << 30;

/// The memory the system has free for a new allocation, bytes (`MemAvailable` of
/// /proc/meminfo), where the system says; `None` elsewhere.
pub fn free_memory() -> Option<u128> {
    let text = std::fs::read_to_string("/proc/meminfo").ok()?;
    let line = text.lines().find(|l| l.starts_with("MemAvailable:"))?;
    let kib: u128 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kib * 1024)
}

/// Whether `bytes` more can be held, or why not (for a message that goes on "needs ...").
pub fn check_memory(bytes: u128) -> Result<(), String> {
    match free_memory() {
        Some(free) if bytes > free => {
            let gib = |b: u128| b as f64 / (1u128 << 30) as f64;
            Err(format!(
                "{:.1} GiB, more than the {:.1} GiB this machine has free",
                gib(bytes),
                gib(free)
            ))
        }
        _ => Ok(()),
    }
}

/// Reads a whole file, but no more than `limit` bytes: a larger file (or an endless one, such
/// as a device) is an error saying so, before it can fill the memory.
pub fn read_limited(path: &Path, limit: u64) -> std::io::Result<Vec<u8>> {
    use std::io::Read;
    let file = std::fs::File::open(path)?;
    if file.metadata()?.is_dir() {
        return Err(std::io::Error::other("it is a folder"));
    }
    let mut bytes = Vec::new();
    file.take(limit + 1).read_to_end(&mut bytes)?;
    if bytes.len() as u64 > limit {
        return Err(std::io::Error::other(format!(
            "it is larger than {} MiB, the most heft reads from a file of this kind",
            limit >> 20
        )));
    }
    Ok(bytes)
}

/// Reads a text file with [`read_limited`]: UTF-8, a leading byte-order mark dropped.
pub fn read_text(path: &Path, limit: u64) -> std::io::Result<String> {
    let bytes = read_limited(path, limit)?;
    let mut text = String::from_utf8(bytes)
        .map_err(|e| std::io::Error::other(format!("it is not UTF-8 text (byte {})", e.utf8_error().valid_up_to())))?;
    if text.starts_with('\u{feff}') {
        text.drain(..'\u{feff}'.len_utf8());
    }
    Ok(text)
}

/// Reads and parses a graph file. `Err` only when the file cannot be read; syntax
/// problems come back with what could be parsed.
pub fn read_graph(path: &Path) -> Result<(graph::GraphFile, Vec<diag::Problem>), std::io::Error> {
    let text = read_text(path, GRAPH_FILE_LIMIT)?;
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

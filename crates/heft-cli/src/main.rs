//! `heft`: evaluate secondary-motion graphs from the command line.
#![forbid(unsafe_code)]

use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::time::Instant;

use clap::{Args, Parser, Subcommand};
use heft_formats::output;
use heft_formats::plugin_lock::PluginLock;
use heft_runtime::check::{Overrides, Plan};
use heft_runtime::diag::render;
use heft_runtime::registry::{Registry, search_path};
use heft_runtime::{check, eval, read_graph};

mod audit;
mod describe;
mod sweep;

/// heft evaluates secondary-motion graphs: it loads node plugins, wires them as a graph
/// file says, evaluates every frame headlessly and writes the results.
#[derive(Parser, Debug)]
#[command(name = "heft", version, about, long_about = None)]
struct Cli {
    /// A folder to load node plugins from (repeatable; searched before HEFT_PLUGIN_PATH
    /// and the folder of the heft executable).
    #[arg(long = "plugins", value_name = "DIR", global = true)]
    plugins: Vec<PathBuf>,

    /// Print only errors.
    #[arg(long, short, global = true, conflicts_with = "verbose")]
    quiet: bool,

    /// Also print the plugin search, the evaluation order and the time spent in each node.
    #[arg(long, short, global = true)]
    verbose: bool,

    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand, Debug)]
enum Command {
    /// Check a graph, evaluate it and write its outputs.
    Run {
        #[command(flatten)]
        graph: GraphArgs,
        /// Folder for the outputs (created if missing): a CSV file per `write` line (or a
        /// Parquet table with `format parquet`), the bakes and plots, and run.json.
        #[arg(long, value_name = "DIR", default_value = "out")]
        out: PathBuf,
        /// Worker threads, 1 to 1024 (default: one per core). Results do not depend on it.
        #[arg(long, value_name = "N", value_parser = clap::value_parser!(u16).range(1..=1024))]
        threads: Option<u16>,
        /// Frames evaluated at once by the nodes that run in windows (strands), whose streamed
        /// outputs are written as each window is done (default: as many as fit in 32 MiB of
        /// their outputs). Results do not depend on it; memory does.
        #[arg(long, value_name = "FRAMES", value_parser = clap::value_parser!(u32).range(1..))]
        window: Option<u32>,
    },
    /// Evaluate a graph at every point of a parameter grid, each point into its own folder,
    /// with a CSV table of the summary values per point.
    Sweep {
        #[command(flatten)]
        graph: GraphArgs,
        /// A varied parameter: `node.param=A..B:N`, N values from A to B with units
        /// (`odile.crouch_depth=20..30 cm:3`). Repeatable: the axes form a grid.
        #[arg(long = "vary", value_name = "NODE.PARAM=A..B:N", required = true, value_parser = heft_runtime::sweep::parse_axis)]
        vary: Vec<heft_runtime::sweep::Axis>,
        /// Folder for the points' folders and the table (created if missing).
        #[arg(long, value_name = "DIR", default_value = "out")]
        out: PathBuf,
        /// Only the points whose index modulo N is I (0 <= I < N), for a job array.
        #[arg(long, value_name = "I/N", value_parser = heft_runtime::sweep::parse_shard)]
        shard: Option<(usize, usize)>,
        /// A summary value for the table, `node.name` (repeatable; default: all).
        #[arg(long = "summary", value_name = "NODE.NAME")]
        summary: Vec<String>,
        /// Points evaluated at once, 1 to 1024 (default: one per core).
        #[arg(long, value_name = "N", value_parser = clap::value_parser!(u16).range(1..=1024))]
        threads: Option<u16>,
    },
    /// Check a graph against the plugins without evaluating it.
    Check {
        #[command(flatten)]
        graph: GraphArgs,
    },
    /// Show where a motion breaks physics: a graph's centre of mass and contact, or a glTF
    /// character's skeleton. One finding a line; exit status 3 when one reaches --fail-on.
    #[command(after_long_help = audit::LIMITS_HELP)]
    Audit(audit::AuditArgs),
    /// List the plugins and node types found, or describe one node type.
    Nodes {
        /// A node type `plugin.node` to describe in full.
        #[arg(value_name = "TYPE")]
        node_type: Option<String>,
    },
}

#[derive(Args, Debug)]
pub(crate) struct GraphArgs {
    /// The graph file.
    #[arg(value_name = "GRAPH")]
    pub(crate) graph: PathBuf,
    /// Override a parameter: `node.param=VALUE`, with units (`jump.mass=58 kg`). Repeatable.
    #[arg(long = "set", value_name = "NODE.PARAM=VALUE")]
    pub(crate) set: Vec<String>,
    /// Pin the plugins: the first run writes FILE (the SHA-256 of each plugin the graph
    /// uses); later runs load only those files and are refused when one has changed.
    #[arg(long = "plugin-lock", value_name = "FILE")]
    pub(crate) plugin_lock: Option<PathBuf>,
    /// Evaluate these frames instead of the graph's range: `A..B`, inclusive.
    #[arg(long, value_name = "A..B", value_parser = parse_frames, allow_hyphen_values = true)]
    pub(crate) frames: Option<(i64, i64)>,
}

pub(crate) fn parse_frames(s: &str) -> Result<(i64, i64), String> {
    let (a, b) = s.split_once("..").ok_or("expected A..B, e.g. 1..48")?;
    let a: i64 = a
        .trim()
        .parse()
        .map_err(|_| format!("`{a}` is not a whole frame number"))?;
    let b: i64 = b
        .trim()
        .parse()
        .map_err(|_| format!("`{b}` is not a whole frame number"))?;
    if b < a {
        return Err(format!("the range {a}..{b} ends before it starts"));
    }
    Ok((a, b))
}

/// Exit code for graph, input and evaluation errors (usage errors exit with 2 through clap).
pub(crate) const FAILED: u8 = 1;

fn main() -> ExitCode {
    let cli = Cli::parse();
    let color = std::io::stderr().is_terminal();
    let dirs = search_path(&cli.plugins);
    let lock_path = match &cli.command {
        Command::Run { graph, .. } | Command::Sweep { graph, .. } | Command::Check { graph } => {
            graph.plugin_lock.clone()
        }
        Command::Nodes { .. } | Command::Audit(_) => None,
    };
    let mut lock = match lock_path.as_deref().map(PluginLock::read).transpose() {
        Ok(l) => l,
        Err(e) => {
            eprintln!("error: {e}");
            return ExitCode::from(FAILED);
        }
    };
    let registry = heft_formats::with_sources(Registry::discover_admitting(&dirs, &mut |path, sha| {
        lock.as_mut().is_none_or(|l| l.admit(path, sha))
    }));
    if let Some(Err(e)) = lock.as_ref().map(|l| l.verify(&registry)) {
        eprintln!("error: {e}");
        return ExitCode::from(FAILED);
    }
    if cli.verbose {
        eprintln!("plugin folders searched, in order:");
        for d in &dirs {
            eprintln!("  {}", d.display());
        }
        for p in registry.plugins() {
            let d = p.plugin.descriptor();
            eprintln!("loaded {} {} from {}", d.name, d.version, p.plugin.origin().display());
        }
    }
    match &cli.command {
        Command::Nodes { node_type } => describe::nodes(&registry, node_type.as_deref()),
        Command::Audit(args) => audit::run(&registry, args, color, cli.quiet),
        Command::Check { graph } => match plan(&registry, graph, color, cli.quiet) {
            Some(plan) => {
                if !pin(lock.as_ref(), &plan, cli.quiet) {
                    return ExitCode::from(FAILED);
                }
                if !cli.quiet {
                    println!(
                        "{}: ok ({} nodes, {} frames, {} outputs)",
                        graph.graph.display(),
                        plan.nodes.len(),
                        plan.timeline.frame_count,
                        plan.writes.len()
                    );
                }
                ExitCode::SUCCESS
            }
            None => ExitCode::from(FAILED),
        },
        Command::Sweep {
            graph,
            vary,
            out,
            shard,
            summary,
            threads,
        } => sweep::run(
            &registry,
            graph,
            vary,
            out,
            *shard,
            summary,
            threads.map(usize::from),
            cli.quiet,
            color,
        ),
        Command::Run {
            graph,
            out,
            threads,
            window,
        } => {
            let started = Instant::now();
            let Some(plan) = plan(&registry, graph, color, cli.quiet) else {
                return ExitCode::from(FAILED);
            };
            if !pin(lock.as_ref(), &plan, cli.quiet) {
                return ExitCode::from(FAILED);
            }
            let say = Say {
                quiet: cli.quiet,
                verbose: cli.verbose,
            };
            let mut schedule = eval::Schedule::windows(&plan, WINDOW_BYTES);
            if let Some(w) = *window {
                schedule.window = usize::try_from(w)
                    .unwrap_or(usize::MAX)
                    .min(plan.timeline.frames().max(1));
            }
            run(
                &plan,
                &schedule,
                &graph.graph,
                out,
                threads.map(usize::from),
                started,
                say,
            )
        }
    }
}

/// Writes the plugin lock when it is new; false (with the error said) when it cannot be written.
fn pin(lock: Option<&PluginLock>, plan: &Plan, quiet: bool) -> bool {
    let Some(lock) = lock else { return true };
    match lock.write_if_new(plan) {
        Ok(wrote) => {
            if wrote && !quiet {
                eprintln!("note: wrote the plugin lock: later runs with it load only these plugin files");
            }
            true
        }
        Err(e) => {
            eprintln!("error: {e}");
            false
        }
    }
}

fn warn_failures(registry: &Registry, quiet: bool) {
    if quiet {
        return;
    }
    for f in registry.failures() {
        eprintln!("warning: skipped a plugin file: {f}");
    }
}

fn plan(registry: &Registry, args: &GraphArgs, color: bool, quiet: bool) -> Option<Plan> {
    warn_failures(registry, quiet);
    let (graph, problems) = match read_graph(&args.graph) {
        Ok(g) => g,
        Err(e) => {
            eprintln!("error: cannot read the graph file {}: {e}", args.graph.display());
            return None;
        }
    };
    let overrides = Overrides {
        set: args.set.clone(),
        frames: args.frames,
    };
    match check::check(&graph, problems, registry, &overrides) {
        Ok(plan) => Some(plan),
        Err(problems) => {
            eprint!("{}", render(&problems, color));
            None
        }
    }
}

/// How much to print.
#[derive(Debug, Clone, Copy)]
struct Say {
    quiet: bool,
    verbose: bool,
}

/// The outputs of the nodes that run in windows held at once, by default (`--window`).
const WINDOW_BYTES: u64 = 32 << 20;

fn run(
    plan: &Plan,
    schedule: &eval::Schedule,
    graph: &Path,
    out: &Path,
    threads: Option<usize>,
    started: Instant,
    say: Say,
) -> ExitCode {
    let quiet = say.quiet;
    // The output folder is made ready and locked before the evaluation: an unusable folder, or
    // one another run is writing into, is found before any work is done.
    let out = match output::OutputDir::open(out) {
        Ok(o) => o,
        Err(e) => {
            eprintln!("error: cannot use the output folder {e}");
            return ExitCode::from(FAILED);
        }
    };
    if !quiet {
        for c in out.cleared() {
            eprintln!("note: {}: {c}", out.path().display());
        }
    }
    if say.verbose {
        for (k, level) in plan.levels.iter().enumerate() {
            let names: Vec<&str> = level.iter().map(|&i| plan.nodes[i].name.as_str()).collect();
            eprintln!("level {k}: {}", names.join(", "));
        }
    }
    if let Err(e) = fits_in_memory(plan, schedule) {
        eprintln!("error: {e}");
        return ExitCode::from(FAILED);
    }
    // A progress bar only on a terminal, and not when quiet.
    let bar = (!quiet && std::io::stderr().is_terminal()).then(|| {
        let bar = indicatif::ProgressBar::new(plan.nodes.len() as u64);
        if let Ok(style) =
            indicatif::ProgressStyle::with_template("{bar:30} {pos}/{len} nodes  {elapsed} (about {eta} left)  {msg}")
        {
            bar.set_style(style);
        }
        bar
    });
    let done = |i: usize| {
        if let Some(b) = &bar {
            b.set_message(plan.nodes[i].name.clone());
            b.inc(1);
        }
    };
    // The streamed outputs are written window by window as the evaluation goes; the rest after.
    let mut writer = output::Writer::new(plan, &out, schedule.clone());
    // A long shot spends most of its time in the windows: the bar says how far they are.
    let total = plan.timeline.frames();
    let evaluation = eval::evaluate_in_windows(plan, threads, schedule, &done, &mut |frames| {
        if let Some(b) = &bar {
            b.set_message(format!("frames written: {} of {total}", frames.range.end));
        }
        writer.window(frames).map_err(|e| e.to_string())
    });
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let evaluation = match evaluation {
        Ok(e) => e,
        Err(e) => {
            eprintln!("error: {}", e.located(plan));
            return ExitCode::from(FAILED);
        }
    };
    if say.verbose {
        for (n, t) in plan.nodes.iter().zip(&evaluation.node_time) {
            eprintln!("{:>10.3} ms  {} ({})", t.as_secs_f64() * 1e3, n.name, n.ty.full_name);
        }
    }
    if !quiet {
        for (node, w) in &evaluation.warnings {
            eprintln!("warning: node `{node}`: {w}");
        }
    }
    match writer.finish(&evaluation, graph, started.elapsed()) {
        Ok(paths) => {
            if !quiet {
                // The evaluation's time counts the windows written as it went: say the whole.
                println!(
                    "evaluated {} nodes over {} frames and wrote {} files to {} in {:.3} s",
                    plan.nodes.len(),
                    plan.timeline.frame_count,
                    paths.len(),
                    out.path().display(),
                    started.elapsed().as_secs_f64(),
                );
            }
            ExitCode::SUCCESS
        }
        Err(e) => {
            eprintln!("error: cannot write the outputs: {e}");
            ExitCode::from(FAILED)
        }
    }
}

/// Refuses a run whose outputs alone would not fit in the memory the system has free, before
/// anything is allocated, naming the largest output.
fn fits_in_memory(plan: &Plan, schedule: &eval::Schedule) -> Result<(), String> {
    let need = schedule.footprint(plan);
    heft_runtime::check_memory(need.total).map_err(|e| {
        let largest = need
            .largest
            .map(|(n, k, b)| {
                let node = &plan.nodes[n];
                format!(
                    " (the largest, `{}.{}`, {:.1} GiB)",
                    node.name,
                    node.ty.spec().outputs[k].name,
                    b as f64 / (1u128 << 30) as f64
                )
            })
            .unwrap_or_default();
        format!(
            "this run's outputs need {e}{largest} over {} frames: evaluate fewer frames at a time (`--frames`), \
             or fewer strands per node",
            plan.timeline.frame_count
        )
    })
}

//! Threads: `xpbd.strand_fast` with its lane groups split across the threads the host gives a
//! node (`Call::threads`, ABI 1.2), called through its plugin function table with 1 thread and
//! with 2. After the benches it prints the speed-up of 2 threads over 1 in this run (read back
//! from this run's criterion estimates; the machine is shared and noisy, so only a ratio within
//! one run means anything, and it can be no better than the cores the run really had).
//!
//! Run: `cargo bench -p heft-benches --bench threads` (about half a minute).
//!
//! What is measured (criterion prints elements/s; an element is one particle advanced by one
//! substep, pinned roots included; a call's first output frame is the initial state, so a call
//! over 25 frames simulates 24), at 24 fps and 20 substeps a frame (h = 1/480 s), `placement` =
//! line, `pin` = one_end, other parameters at their defaults, on an anchor swaying 2 cm at
//! 0.5 Hz along X:
//!
//! - `threads_1024x32`: 1024 strands of 32 particles (64 lane groups of 16), the case.
//! - `threads_208x32`: 208 strands of 32 particles (13 lane groups): the least work a frame
//!   splits across 2 threads (the node's `MIN_WORK_PER_THREAD`, 4096 lane-group
//!   particle-substeps a thread; here 4160): whether handing a share of every frame to another
//!   thread pays at the smallest split allowed.
//!
//! Each group also runs `2_calls_at_once`: two independent one-thread calls on two threads at
//! once (twice the work, counted so). It shares nothing but the machine, so its ratio to one
//! thread is the most the machine gave to 2 threads in this run: one core running alone may
//! clock higher than two running together, and a shared host may lend the second core to others.
//! The summary prints both ratios and how much of that ceiling the node's 2 threads reach.
//!
//! The results are the same bits at any thread count (nodes/xpbd/tests/threads.rs checks it);
//! each configuration is run once, and its outputs compared with the one-thread run's, before
//! it is timed.

use std::hint::black_box;
use std::time::{Duration, SystemTime};

use criterion::{Criterion, SamplingMode, Throughput};
use heft_benches::NodeCall;
use heft_node_sdk::host::Plugin;
use heft_node_sdk::{ParamValue, Timeline};

/// Frames per second.
const FPS: u32 = 24;
/// Substeps per frame (the contract's default).
const SUBSTEPS: usize = 20;
/// Frames simulated per call.
const FRAMES: usize = 24;
/// Thread counts compared.
const THREADS: [usize; 2] = [1, 2];

/// One prepared evaluation of `xpbd.strand_fast`: `strands` strands of `particles` particles
/// on the swaying anchor.
fn node_call(strands: usize, particles: usize) -> NodeCall {
    let plugin = Plugin::from_static(heft_xpbd::plugin_table(), "xpbd (linked)").expect("the xpbd table loads");
    let index = plugin
        .descriptor()
        .nodes
        .iter()
        .position(|n| n.name == "strand_fast")
        .expect("xpbd.strand_fast") as u32;
    let timeline = Timeline {
        start_frame: 0,
        frame_count: FRAMES as u64 + 1,
        rate_num: FPS,
        rate_den: 1,
    };
    let anchor: Vec<f64> = (0..timeline.frames())
        .flat_map(|i| {
            let t = timeline.time(i);
            let x = 0.02 * (std::f64::consts::PI * t).sin();
            [x, 0.0, 1.0, 0.0, 0.0, 0.0, 1.0]
        })
        .collect();
    NodeCall::new(
        plugin,
        index,
        &[
            ("count", ParamValue::Integer(strands as i64)),
            ("placement", ParamValue::Choice("line".to_owned())),
            ("segments", ParamValue::Integer(particles as i64 - 1)),
            ("substeps", ParamValue::Integer(SUBSTEPS as i64)),
        ],
        timeline,
        vec![("anchor", anchor)],
    )
}

#[derive(Clone, Copy)]
struct Case {
    group: &'static str,
    strands: usize,
    particles: usize,
}

fn bench_name(threads: usize) -> String {
    if threads == 1 {
        "1_thread".to_owned()
    } else {
        format!("{threads}_threads")
    }
}

fn elements(case: Case) -> u64 {
    (case.strands * case.particles * SUBSTEPS * FRAMES) as u64
}

fn bench_case(c: &mut Criterion, case: Case) {
    let mut call = node_call(case.strands, case.particles);
    call.run_with_threads(1).expect("xpbd.strand_fast evaluates");
    let one = call.bits();
    for threads in THREADS {
        call.run_with_threads(threads).expect("xpbd.strand_fast evaluates");
        assert!(
            call.bits() == one,
            "{}: {threads} threads give other bits than 1",
            case.group
        );
    }
    let mut g = c.benchmark_group(case.group);
    g.sampling_mode(SamplingMode::Flat)
        .sample_size(10)
        .warm_up_time(Duration::from_secs(1))
        .measurement_time(Duration::from_secs(4))
        .throughput(Throughput::Elements(elements(case)));
    for threads in THREADS {
        g.bench_function(bench_name(threads).as_str(), |b| {
            b.iter(|| black_box(call.run_with_threads(threads)))
        });
    }
    // The machine's own ceiling in this run: two independent one-thread calls on two threads
    // of this process at once, twice the work of one call and nothing shared but the machine
    // (cores, caches, memory, the allocator). On a shared host this is what 2 threads could
    // give at best, whatever the node does.
    let mut other = node_call(case.strands, case.particles);
    other.run_with_threads(1).expect("xpbd.strand_fast evaluates");
    assert!(other.bits() == one, "{}: a second call gives other bits", case.group);
    g.throughput(Throughput::Elements(2 * elements(case)));
    g.bench_function(INDEPENDENT, |b| {
        b.iter(|| {
            std::thread::scope(|s| {
                let helper = s.spawn(|| black_box(other.run_with_threads(1)));
                black_box(call.run_with_threads(1)).expect("xpbd.strand_fast evaluates");
                helper
                    .join()
                    .expect("the second call returns")
                    .expect("xpbd.strand_fast evaluates");
            })
        })
    });
    g.finish();
}

/// The bench of two independent one-thread calls at once (see [`bench_case`]).
const INDEPENDENT: &str = "2_calls_at_once";

fn main() {
    let started = SystemTime::now();
    let cores = std::thread::available_parallelism().map_or(0, usize::from);
    let cases = [
        Case {
            group: "threads_1024x32",
            strands: 1024,
            particles: 32,
        },
        Case {
            group: "threads_208x32",
            strands: 208,
            particles: 32,
        },
    ];
    let mut c = Criterion::default().configure_from_args();
    for &case in &cases {
        bench_case(&mut c, case);
    }
    c.final_summary();
    eprintln!("\nthis run ({cores} cores available; shared and noisy: compare only within one run):");
    for case in cases {
        let one = heft_benches::mean_ns(case.group, &bench_name(1), started);
        for threads in THREADS {
            let Some(ns) = heft_benches::mean_ns(case.group, &bench_name(threads), started) else {
                eprintln!("  {}/{}: not run in this run", case.group, bench_name(threads));
                continue;
            };
            let mut line = format!(
                "  {}/{}: {:.3e} particle-substeps/s",
                case.group,
                bench_name(threads),
                elements(case) as f64 / (ns * 1e-9)
            );
            if let (Some(one), true) = (one, threads > 1) {
                line += &format!(", {:.2} x 1 thread", one / ns);
            }
            eprintln!("{line}");
        }
        if let (Some(one), Some(two), Some(both)) = (
            one,
            heft_benches::mean_ns(case.group, &bench_name(2), started),
            heft_benches::mean_ns(case.group, INDEPENDENT, started),
        ) {
            // `both` did twice the work of one call.
            let ceiling = 2.0 * one / both;
            eprintln!(
                "  {}/{INDEPENDENT}: {:.2} x 1 thread (two independent calls: the most this machine gave to 2 threads in this run); 2 threads reach {:.0} % of it",
                case.group,
                ceiling,
                100.0 * (one / two) / ceiling
            );
        }
    }
}

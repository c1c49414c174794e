//! Timing harness, ignored by default (the real benches are criterion benches under benches/):
//!
//! ```text
//! cargo test --release -p heft-xpbd --test timing -- --ignored --nocapture
//! ```
//!
//! Reports particle-substeps per second on one thread, for the whole node (frame loop, outputs,
//! energy and blow-up checks included) and for the solver core alone.
mod support;
use support::*;

use std::time::Instant;

/// The node: `count` strands of `segments` segments on a moving anchor, defaults otherwise.
fn node(run: Runner, count: i64, segments: i64, substeps: i64, frames: u64) -> f64 {
    let tl = timeline(24, frames);
    let anchor = transform(tl, |t| ([0.1 * (4.0 * t).sin(), 0.0, 2.0], [0.0, 0.0, 0.0, 1.0]));
    let changes = [
        int("count", count),
        int("segments", segments),
        int("substeps", substeps),
        choice("placement", "ring"),
    ];
    let inputs = [("anchor", anchor)];
    let t0 = Instant::now();
    let r = run(&changes, tl, &inputs).expect("runs");
    let dt = t0.elapsed().as_secs_f64();
    assert!(r.positions.iter().all(|c| c.is_finite()));
    (count * (segments + 1) * substeps) as f64 * (frames - 1) as f64 / dt
}

#[test]
#[ignore]
fn particle_substeps_per_second() {
    for round in 0..3 {
        println!("round {round}");
        for (name, r) in BOTH {
            println!(
                "  {name}, 1024 strands x 32 particles, 20 substeps: {:.3e}",
                node(r, 1024, 31, 20, 25)
            );
            println!(
                "  {name}, 1 strand x 257 particles, 2000 substeps: {:.3e}",
                node(r, 1, 256, 2000, 25)
            );
        }
    }
}

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

use heft_xpbd::solver::{Coeffs, Lanes, Lanes3, Model, SubstepInput, substep};
use std::time::Instant;

/// The node: `count` strands of `segments` segments on a moving anchor, defaults otherwise.
fn node(count: i64, segments: i64, substeps: i64, frames: u64) -> f64 {
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

/// The solver core alone: `strands` hanging strands in lanes of `N`, `substeps` substeps.
fn core<const N: usize>(strands: usize, particles: usize, substeps: usize) -> f64 {
    let l0 = 0.4 / (particles - 1) as f64;
    let m = 0.05 * l0;
    let mut inv_mass = vec![1.0 / m; particles];
    inv_mass[0] = 0.0;
    inv_mass[particles - 1] = 0.5 / m;
    let model = Model {
        rest_length: l0,
        inv_mass,
        stretch_compliance: l0 / 200.0,
        bend_compliance: Some(l0 / 1.0e-4),
        damping_rate: 2.5,
        gravity: [0.0, 0.0, -G],
    };
    let h = 1.0 / 24.0 / 20.0;
    let c = Coeffs::new(&model, h);
    let mut lanes = Lanes::<N>::new(strands, particles);
    let x: Vec<[f64; 3]> = (0..strands * particles)
        .map(|k| {
            let (s, i) = (k / particles, k % particles);
            [0.01 * s as f64 + 0.7 * l0 * i as f64, 0.0, -0.7 * l0 * i as f64]
        })
        .collect();
    let v = vec![[0.0; 3]; x.len()];
    lanes.load(&x, &v, h);
    let t0 = Instant::now();
    for g in 0..lanes.groups() {
        let (xg, pg) = lanes.group_mut(g);
        let pin: Lanes3<N> = xg[0];
        for _ in 0..substeps {
            let input = SubstepInput {
                pin_root: Some(&pin),
                pin_tip: None,
                base: c.h2_gravity,
                spin: None,
                wind: None,
                colliders: None,
                free: (1, particles),
            };
            substep(&c, &input, xg, pg);
        }
    }
    let dt = t0.elapsed().as_secs_f64();
    let (mut xo, mut vo) = (x.clone(), v.clone());
    lanes.store(&mut xo, &mut vo, h);
    assert!(xo.iter().flatten().all(|c| c.is_finite()));
    (strands * particles * substeps) as f64 / dt
}

#[test]
#[ignore]
fn particle_substeps_per_second() {
    for round in 0..3 {
        println!("round {round}");
        println!(
            "  node, 1024 strands x 32 particles, 20 substeps: {:.3e}",
            node(1024, 31, 20, 25)
        );
        println!(
            "  node, 1 strand x 257 particles, 2000 substeps: {:.3e}",
            node(1, 256, 2000, 25)
        );
        println!("  core, 1024 x 32, lanes of 32: {:.3e}", core::<32>(1024, 32, 480));
        println!("  core, 1024 x 32, lanes of 16: {:.3e}", core::<16>(1024, 32, 480));
        println!("  core, 1024 x 32, lanes of 8:  {:.3e}", core::<8>(1024, 32, 480));
        println!("  core, 1024 x 32, lanes of 4:  {:.3e}", core::<4>(1024, 32, 480));
        println!("  core, 1 x 100000, 1 lane:     {:.3e}", core::<1>(1, 100_000, 200));
    }
}

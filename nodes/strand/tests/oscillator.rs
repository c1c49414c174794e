//! A single damped spring-mass through `strand.euler`, against the closed form.
//!
//! Model: one segment (segments = 1), particle 0 pinned to a fixed anchor, no gravity, no
//! bending. Particle 1 carries half the strand's mass: length 2 m and 1 kg/m give m = 1 kg;
//! stretch_stiffness E A = 200 N gives k = E A / l0 = 100 N/m, so omega0 = sqrt(k / m) = 10
//! rad/s. Damping a = -(damping + relative_damping) v (the anchor is still, so relative damping
//! acts like absolute damping): 2 zeta omega0 = 2 1/s for zeta = 0.1, split 1 + 1 so that both
//! paths are exercised. The spring acts along the segment, so a stretch along the rest
//! direction stays one-dimensional: x = the stretch beyond the rest length.

mod support;

use heft_strand::Euler;
use support::*;

/// Underdamped free vibration from rest: x(t) = x0 e^{-zeta w0 t} (cos wd t + zeta /
/// sqrt(1 - zeta^2) sin wd t), wd = w0 sqrt(1 - zeta^2) (e.g. Thomson & Dahleh, Theory of
/// Vibration with Applications, 5th ed., 1998, sec. 2.6).
fn closed_form(t: f64) -> f64 {
    let (w0, zeta) = (10.0f64, 0.1f64);
    let wd = w0 * (1.0 - zeta * zeta).sqrt();
    (-zeta * w0 * t).exp() * ((wd * t).cos() + zeta / (1.0 - zeta * zeta).sqrt() * (wd * t).sin())
}

/// x(0.5 s) and the largest error over 1 s at `substeps` per 1 ms frame.
fn errors(substeps: i64) -> (f64, f64) {
    let tl = timeline(1000, 1001);
    let anchor = fixed_anchor(tl, [0.0; 3]);
    let start = points_input(tl, &[[0.0; 3], [0.0, 0.0, -3.0]]);
    let run = run::<Euler>(
        &[
            int("segments", 1),
            num("length", 2.0),
            num("mass_per_length", 1.0),
            num("stretch_stiffness", 200.0),
            num("bending_stiffness", 0.0),
            num("damping", 1.0),
            num("relative_damping", 1.0),
            num("gravity", 0.0),
            int("substeps", substeps),
        ],
        tl,
        &[("anchor", anchor), ("initial_positions", start)],
    )
    .expect("runs");
    let stretch = |f: usize| -run.x(f, 1)[2] - 2.0;
    let at_half = stretch(500);
    eprintln!(
        "h = {:.0e} s: x(0.5 s) = {at_half:.7} m vs {:.7} m",
        1e-3 / substeps as f64,
        closed_form(0.5)
    );
    let mut worst: f64 = 0.0;
    for f in 0..run.frames() {
        worst = worst.max((stretch(f) - closed_form(run.time(f))).abs());
        // No sideways motion.
        assert_eq!(run.x(f, 1)[0], 0.0);
    }
    eprintln!("largest error over 1 s: {worst:.2e} m");
    (at_half, worst)
}

#[test]
fn damped_spring_mass_matches_the_closed_form() {
    // The brief's figure for x(0.5 s).
    assert!((closed_form(0.5) - 0.0985507).abs() < 5e-8);
    // Symplectic Euler evaluates the damping with the velocity of the previous half step, a
    // first-order error of order zeta w0 h x0 w0 t ~ 1e-5 m at h = 1e-5 s (its phase error
    // (w0 h)^2 / 24 is negligible): allow 3e-5 m there, and ask for first-order convergence,
    // the error ten times smaller (within 30 %) at h = 1e-6 s.
    let (x_coarse, worst_coarse) = errors(100);
    let (x_fine, worst_fine) = errors(1000);
    let expect = closed_form(0.5);
    assert!((x_coarse - expect).abs() < 3e-5, "x(0.5) = {x_coarse}");
    assert!(worst_coarse < 3e-5, "worst {worst_coarse}");
    assert!((x_fine - expect).abs() < 3e-6, "x(0.5) = {x_fine}");
    let ratio = worst_coarse / worst_fine;
    assert!((ratio - 10.0).abs() < 3.0, "error ratio {ratio}");
}

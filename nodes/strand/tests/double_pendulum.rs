//! The double pendulum through the strand methods: normal modes and a large-amplitude
//! trajectory against an adaptive Dormand-Prince integration of the exact equations.
//!
//! Model: two segments of l = 1 m (length 2 m), particle 0 pinned to a fixed anchor. Lumped
//! strand masses would give the bobs m and m / 2; the textbook double pendulum has two equal
//! bobs, so the test prepares the node's `Setup` from the parameters and sets the last
//! particle's mass to that of the middle one (1 kg each, mass_per_length 1 kg/m) with
//! `Setup::set_particle_mass`, then runs the method through `evaluate_with`. The rods are
//! stiff springs for Euler (E A = 1e7 N, k = 1e7 N/m) and rigid constraints for Verlet.

mod support;

use heft_node_sdk::Node;
use heft_strand::{Euler, EulerMethod, Verlet, VerletMethod};
use heft_strand_common::{Method, Setup};
use ode_solvers::{Dopri5, System, Vector4};
use support::*;

const L: f64 = 1.0;

fn setup<N: Node>(substeps: i64, stiffness: f64) -> Setup {
    let p = params(
        &N::spec(),
        &[
            int("segments", 2),
            num("length", 2.0 * L),
            num("mass_per_length", 1.0),
            num("stretch_stiffness", stiffness),
            num("bending_stiffness", 0.0),
            num("damping", 0.0),
            num("relative_damping", 0.0),
            int("substeps", substeps),
        ],
    );
    let mut s = Setup::from_params(&p).expect("valid parameters");
    s.set_particle_mass(2, s.mass[1]);
    assert_eq!((s.mass[1], s.mass[2]), (1.0, 1.0));
    s
}

/// Bob positions (x, z) from the angles from the downward vertical.
fn bobs(t1: f64, t2: f64) -> [[f64; 3]; 3] {
    let p1 = [L * t1.sin(), 0.0, -L * t1.cos()];
    let p2 = [p1[0] + L * t2.sin(), 0.0, p1[2] - L * t2.cos()];
    [[0.0; 3], p1, p2]
}

fn run_from<N: Node, M: Method>(t1: f64, t2: f64, seconds: f64, fps: u32, substeps: i64, stiffness: f64) -> Run {
    let tl = timeline(fps, (seconds * f64::from(fps)).round() as u64 + 1);
    let s = setup::<N>(substeps, stiffness);
    let inputs = [
        ("anchor", fixed_anchor(tl, [0.0; 3])),
        ("initial_positions", points_input(tl, &bobs(t1, t2))),
    ];
    run_setup::<N, M>(&s, tl, &inputs).expect("runs")
}

/// Normal modes of the equal-mass, equal-length double pendulum: omega^2 = (g / l)(2 -+ sqrt 2),
/// with amplitude ratios theta2 / theta1 = +-sqrt 2 (the standard small-oscillation analysis of
/// its Lagrangian; e.g. Landau & Lifshitz, Mechanics, 3rd ed., 1976, sec. 23, from memory):
/// 2.39679 and 5.78636 rad/s for l = 1 m.
fn modes<N: Node, M: Method>(tol: f64) {
    let slow = ((G / L) * (2.0 - 2f64.sqrt())).sqrt();
    let fast = ((G / L) * (2.0 + 2f64.sqrt())).sqrt();
    assert!((slow - 2.39679).abs() < 5e-6 && (fast - 5.78636).abs() < 5e-6);
    let eps = 1.0e-3;
    for (ratio, expect, seconds) in [(2f64.sqrt(), slow, 8.0), (-(2f64.sqrt()), fast, 4.0)] {
        let run = run_from::<N, M>(eps, ratio * eps, seconds, 1000, 10, 1.0e7);
        let t: Vec<f64> = (0..run.frames()).map(|i| run.time(i)).collect();
        let y: Vec<f64> = (0..run.frames()).map(|i| run.x(i, 1)[0]).collect();
        let w = 2.0 * std::f64::consts::PI / period_from_crossings(&crossings(&t, &y));
        eprintln!(
            "{} mode: {w:.6} rad/s vs {expect:.6} rad/s (rel {:.1e})",
            N::spec().name,
            rel(w, expect)
        );
        assert!(rel(w, expect) < tol, "{w} vs {expect}");
    }
}

// Tolerance 1e-5: the modes are excited exactly (small amplitude 1e-3 rad, nonlinear
// corrections ~ theta^2 / 16 = 6e-8), h = 1e-4 s gives a phase error (omega h)^2 / 24 < 1e-8,
// the spring rods stretch by m g / k ~ 2e-6 relative, and the crossings of a pure sinusoid are
// interpolated to third order in the 1 ms frame spacing.
#[test]
fn euler_double_pendulum_normal_modes() {
    modes::<Euler, EulerMethod>(1e-5);
}

#[test]
fn verlet_double_pendulum_normal_modes() {
    modes::<Verlet, VerletMethod>(1e-5);
}

/// The double pendulum in angles, from its Lagrangian (equal masses m, equal lengths l):
/// L = m l^2 (theta1'^2 + theta2'^2 / 2 + theta1' theta2' cos(theta1 - theta2))
///     + m g l (2 cos theta1 + cos theta2),
/// whose Euler-Lagrange equations are the 2x2 system M(theta) theta'' = r(theta, theta') with
/// M = [[2, c], [c, 1]] l, c = cos(theta1 - theta2),
/// r = [-theta2'^2 sin(theta1 - theta2) - 2 (g / l) sin theta1,
///       theta1'^2 sin(theta1 - theta2) - (g / l) sin theta2] (times l / l)
/// (any mechanics text's treatment of the double pendulum, e.g. Taylor, Classical Mechanics,
/// 2005, ch. 7 and 11; derived here from the Lagrangian).
struct DoublePendulum;

impl System<f64, Vector4<f64>> for DoublePendulum {
    fn system(&self, _t: f64, y: &Vector4<f64>, dy: &mut Vector4<f64>) {
        let (t1, t2, w1, w2) = (y[0], y[1], y[2], y[3]);
        let (s, c) = (t1 - t2).sin_cos();
        let r1 = -w2 * w2 * s - 2.0 * (G / L) * t1.sin();
        let r2 = w1 * w1 * s - (G / L) * t2.sin();
        let det = 2.0 - c * c;
        dy[0] = w1;
        dy[1] = w2;
        dy[2] = (r1 - c * r2) / det;
        dy[3] = (2.0 * r2 - c * r1) / det;
    }
}

/// Bob positions from the reference solution at times 0, 0.01, .., `seconds`.
fn reference(t1: f64, t2: f64, seconds: f64) -> Vec<[[f64; 3]; 3]> {
    let mut solver = Dopri5::new(
        DoublePendulum,
        0.0,
        seconds,
        0.01,
        Vector4::new(t1, t2, 0.0, 0.0),
        1e-10,
        1e-10,
    );
    solver.integrate().expect("integrates");
    solver.y_out().iter().map(|y| bobs(y[0], y[1])).collect()
}

/// Largest distance between the node's bobs and the reference over `seconds`, sampled every
/// 10 ms.
fn trajectory_error<N: Node, M: Method>(substeps: i64, stiffness: f64) -> f64 {
    let (t1, t2, seconds) = (60.0 * DEG, 90.0 * DEG, 2.0);
    let refs = reference(t1, t2, seconds);
    let run = run_from::<N, M>(t1, t2, seconds, 100, substeps, stiffness);
    assert_eq!(refs.len(), run.frames());
    let mut worst: f64 = 0.0;
    for (f, r) in refs.iter().enumerate() {
        for (b, rb) in r.iter().enumerate().skip(1) {
            let p = run.x(f, b);
            let d = ((p[0] - rb[0]).powi(2) + (p[1] - rb[1]).powi(2) + (p[2] - rb[2]).powi(2)).sqrt();
            worst = worst.max(d);
        }
    }
    eprintln!(
        "{} h = {:.0e} s, E A = {stiffness:.0e} N: largest bob distance from Dopri5 over 2 s: {worst:.2e} m",
        N::spec().name,
        0.01 / substeps as f64
    );
    worst
}

/// Euler with stiff springs. At h = 1e-5 s (100 fps x 1000 substeps) and E A = 1e7 N the
/// error does not change when h is halved or doubled (measured: 2.0e-5 m at h = 2e-5, 1e-5 and
/// 5e-6 s): it is the rods' compliance, a stretch T / k of a few 1e-6 m that the chaotic motion
/// (60 and 90 deg release) amplifies. So the check is that it scales with the compliance: within
/// 5e-5 m at E A = 1e7 N and at least five times closer at E A = 1e8 N (omega_max = 2e4 rad/s,
/// still stable at h = 1e-5 s).
#[test]
fn euler_double_pendulum_trajectory_matches_dopri5() {
    let soft = trajectory_error::<Euler, EulerMethod>(1000, 1.0e7);
    let stiff = trajectory_error::<Euler, EulerMethod>(1000, 1.0e8);
    assert!(soft < 5e-5, "{soft}");
    assert!(stiff < soft / 5.0, "{stiff} vs {soft}");
}

/// Verlet: rigid rods, but the projection's first-order dissipation (see the pendulum tests)
/// dominates: measured 4.5e-4, 2.2e-4 and 1.1e-4 m at h = 2e-5, 1e-5 and 5e-6 s. Within 5e-4 m
/// at h = 1e-5 s, and first order: halving h halves the error (within 25 %).
#[test]
fn verlet_double_pendulum_trajectory_matches_dopri5() {
    let coarse = trajectory_error::<Verlet, VerletMethod>(1000, 1.0e7);
    let fine = trajectory_error::<Verlet, VerletMethod>(2000, 1.0e7);
    assert!(coarse < 5e-4, "{coarse}");
    assert!((coarse / fine - 2.0).abs() < 0.5, "{coarse} / {fine}");
}

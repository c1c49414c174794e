//! Simple pendulum checks of `strand.euler` and `strand.verlet`: small- and large-amplitude
//! periods, a pivot accelerating upward, and a strand on an anchor in free fall.
//!
//! Point-mass pendulum model: one segment (segments = 1, two particles), particle 0 pinned
//! to a fixed anchor, so only particle 1 moves; with lumped masses it carries half the
//! strand's mass (mass_per_length 1 kg/m, length 1 m: 0.5 kg) at exactly L from the pivot,
//! which is a point mass on a massless rod. For Euler the rod is a stiff spring (E A = 1e7 N,
//! k = 1e7 N/m): the static stretch m g / k = 4.9e-7 m lengthens the pendulum by 4.9e-7
//! relative and the period by half that, 2.5e-7; for Verlet the rod is a rigid constraint.

mod support;

use heft_node_sdk::{Node, ParamValue};
use heft_strand::{Euler, Verlet};
use support::*;

const L: f64 = 1.0;

fn pendulum_params(substeps: i64) -> Vec<(&'static str, ParamValue)> {
    vec![
        int("segments", 1),
        num("length", L),
        num("mass_per_length", 1.0),
        num("stretch_stiffness", 1.0e7),
        num("bending_stiffness", 0.0),
        num("damping", 0.0),
        num("relative_damping", 0.0),
        int("substeps", substeps),
    ]
}

/// The period of a pendulum released from rest at `theta0` under a pivot moving as `pivot(t)`,
/// measured from the zero crossings of the bob's horizontal offset from the pivot.
fn measured_period<N: Node>(
    theta0: f64,
    seconds: f64,
    fps: u32,
    substeps: i64,
    pivot: impl Fn(f64) -> [f64; 3],
) -> f64 {
    let tl = timeline(fps, (seconds * f64::from(fps)) as u64 + 1);
    let anchor = moving_anchor(tl, &pivot);
    let p0 = pivot(0.0);
    let start = points_input(tl, &[p0, [p0[0] + L * theta0.sin(), p0[1], p0[2] - L * theta0.cos()]]);
    let run = run::<N>(
        &pendulum_params(substeps),
        tl,
        &[("anchor", anchor), ("initial_positions", start)],
    )
    .expect("runs");
    let t: Vec<f64> = (0..run.frames()).map(|i| run.time(i)).collect();
    let y: Vec<f64> = (0..run.frames()).map(|i| run.x(i, 1)[0] - pivot(t[i])[0]).collect();
    period_from_crossings(&crossings(&t, &y))
}

/// T = 4 sqrt(L / g) K(sin(theta0 / 2)), the exact period of the simple pendulum (e.g.
/// Landau & Lifshitz, Mechanics, 3rd ed., 1976, sec. 11, problem 1; K by the AGM, A&S 17.6).
fn exact_period(theta0: f64, g: f64) -> f64 {
    4.0 * (L / g).sqrt() * elliptic_k((0.5 * theta0).sin())
}

#[test]
fn the_elliptic_integral_reproduces_the_published_periods() {
    // The brief's figures for L = 1 m, g = 9.80665 m/s^2 (7 significant digits).
    assert!((exact_period(30.0 * DEG, G) - 2.041338).abs() < 5e-7);
    assert!((exact_period(60.0 * DEG, G) - 2.153242).abs() < 5e-7);
    assert!((exact_period(90.0 * DEG, G) - 2.368246).abs() < 5e-7);
    // K(0) = pi / 2 (A&S 17.3.11 limit).
    assert!((elliptic_k(0.0) - std::f64::consts::FRAC_PI_2).abs() < 1e-15);
}

/// Small-angle period 2 pi sqrt(L / g) = 2.006409 s for L = 1 m (any mechanics text).
/// At 1e-3 rad the amplitude correction (1 + theta0^2 / 16) is 6e-8 relative.
fn small_angle<N: Node>(tol: f64) {
    let t = measured_period::<N>(1.0e-3, 6.5, 1000, 10, |_| [0.0, 0.0, 0.0]);
    let expect = 2.0 * std::f64::consts::PI * (L / G).sqrt();
    assert!((expect - 2.006409).abs() < 5e-7);
    eprintln!(
        "{} small-angle period {t:.7} s vs {expect:.7} s (rel {:.2e})",
        N::spec().name,
        rel(t, expect)
    );
    assert!(rel(t, expect) < tol, "period {t} vs {expect}");
}

fn large_angles<N: Node>(tol: f64) {
    for deg in [30.0, 60.0, 90.0] {
        let t = measured_period::<N>(deg * DEG, 7.5, 1000, 10, |_| [0.0, 0.0, 0.0]);
        let expect = exact_period(deg * DEG, G);
        eprintln!(
            "{} {deg} deg period {t:.7} s vs {expect:.7} s (rel {:.2e})",
            N::spec().name,
            rel(t, expect)
        );
        assert!(rel(t, expect) < tol, "{deg} deg: period {t} vs {expect}");
    }
}

// Euler tolerance 2e-6: the spring stretch (2.5e-7 relative, rising to 7.5e-7 at the bottom
// of a 90 deg swing where the tension is 3 m g), symplectic Euler's period error
// (omega h)^2 / 24 = 4e-9 at h = 1e-4 s, and interpolated zero crossings at 1 ms frames
// (third order in the frame spacing) together stay well below it.
#[test]
fn euler_small_angle_period() {
    small_angle::<Euler>(2e-6);
}

#[test]
fn euler_large_amplitude_periods() {
    large_angles::<Euler>(2e-6);
}

// Verlet: rigid rod. Small amplitudes are second-order accurate (same 2e-6).
#[test]
fn verlet_small_angle_period() {
    small_angle::<Verlet>(2e-6);
}

/// At large amplitude Jakobsen's projection (along the new rod direction, not the old one as
/// in SHAKE) removes kinetic energy: for a bob turning at angular rate w the predicted step
/// 2 x - x_prev projects back to an angle short by (w h)^2 per step relative (a short
/// calculation on a circle, no source), a first-order numerical damping. The amplitude then
/// decays and the period, which grows with amplitude, shortens in proportion to h. So check
/// first-order convergence to the exact period: the error at h = 1e-4 s is below 2e-3
/// relative (1.6e-3 at 90 deg, where the bob turns fastest) and ten times smaller (within 20 %)
/// at h = 1e-5 s.
#[test]
fn verlet_large_amplitude_periods_converge_at_first_order() {
    for deg in [30.0, 60.0, 90.0] {
        let expect = exact_period(deg * DEG, G);
        let coarse = measured_period::<Verlet>(deg * DEG, 7.5, 1000, 10, |_| [0.0, 0.0, 0.0]);
        let fine = measured_period::<Verlet>(deg * DEG, 7.5, 1000, 100, |_| [0.0, 0.0, 0.0]);
        let (ec, ef) = (rel(coarse, expect), rel(fine, expect));
        eprintln!(
            "verlet {deg} deg: period {coarse:.7} s (h = 1e-4 s, rel {ec:.2e}), {fine:.7} s (h = 1e-5 s, rel {ef:.2e}), exact {expect:.7} s"
        );
        assert!(ec < 2e-3, "{deg} deg: {coarse} vs {expect}");
        assert!((ec / ef - 10.0).abs() < 2.0, "{deg} deg: error ratio {}", ec / ef);
        assert!(coarse < expect && fine < expect, "the projection only removes energy");
    }
}

/// A pivot accelerating upward at a feels gravity g + a: T = 2 pi sqrt(L / (g + a)) =
/// 1.828591 s for a = 2 m/s^2 (equivalence principle; e.g. Halliday, Resnick & Walker,
/// Fundamentals of Physics, ch. 15 problems). The pivot path z = a t^2 / 2 is sampled per
/// frame; between frames the pin follows the cubic through the samples, which is the
/// parabola itself, so the pin accelerates smoothly.
fn accelerating_pivot<N: Node>() {
    let a = 2.0;
    let t = measured_period::<N>(1.0e-3, 6.0, 1000, 10, |t| [0.0, 0.0, 0.5 * a * t * t]);
    let expect = 2.0 * std::f64::consts::PI * (L / (G + a)).sqrt();
    assert!((expect - 1.828591).abs() < 5e-7);
    eprintln!(
        "{} accelerating pivot period {t:.7} s vs {expect:.7} s (rel {:.2e})",
        N::spec().name,
        rel(t, expect)
    );
    assert!(rel(t, expect) < 1e-5, "period {t} vs {expect}");
}

#[test]
fn euler_pendulum_on_a_pivot_accelerating_upward() {
    accelerating_pivot::<Euler>();
}

#[test]
fn verlet_pendulum_on_a_pivot_accelerating_upward() {
    accelerating_pivot::<Verlet>();
}

/// A strand whose anchor falls freely is weightless in the anchor's frame (equivalence
/// principle): laid out horizontally at rest, it must keep its shape relative to the anchor.
/// The anchor path z = -g t^2 / 2 is sampled at the frames; between them the pins follow the
/// cubic through the samples with the velocities the samples give (central differences, exact
/// for a parabola), so they fall exactly as the free particles do.
fn free_fall<N: Node>(fps: u32) -> f64 {
    let tl = timeline(fps, u64::from(fps) + 1);
    let anchor = moving_anchor(tl, |t| [0.0, 0.0, -0.5 * G * t * t]);
    let run = run::<N>(
        &[
            int("segments", 8),
            num("length", 0.4),
            vec3("rest_direction", [1.0, 0.0, 0.0]),
            int("substeps", 20),
            // A horizontal strand in free fall needs no damping to hold still; leave the
            // defaults for everything else (bending, relative damping) on.
            num("damping", 0.0),
        ],
        tl,
        &[("anchor", anchor)],
    )
    .expect("runs");
    let mut worst: f64 = 0.0;
    for f in 0..run.frames() {
        let pivot = run.x(f, 0);
        for i in 0..run.n {
            let p = run.x(f, i);
            let rest = [0.4 * i as f64 / 8.0, 0.0, 0.0];
            // Particle 0 is pinned to the anchor; the rest should ride along rigidly.
            for k in 0..3 {
                worst = worst.max((p[k] - pivot[k] - rest[k]).abs());
            }
        }
    }
    eprintln!(
        "{} free fall at {fps} fps: largest drift from the rest shape {worst:.2e} m in 1 s",
        N::spec().name
    );
    // And the strand did fall: 4.9 m in 1 s.
    assert!((run.x(run.frames() - 1, 8)[2] + 0.5 * G).abs() < 1e-5);
    worst
}

/// The shape holds at 1000 fps over 1 s (within 5e-8 m, measured 9e-9 m: rounding over 20 000
/// substeps; the straight-line pins left 1.2e-6 m, g dt^2 / 8) and at 24 fps with the node's
/// default substeps (a 30 cm strand at 45 degrees for half a second: within 1e-5 m, measured
/// about 1e-14 m).
/// With the pins moved along straight lines between frames it drifted 3.7 mm (Verlet) and
/// 97 mm (symplectic Euler) at 24 fps: the anchor's acceleration reached the strand as a
/// velocity kick once a frame.
fn free_fall_check<N: Node>() {
    let fine = free_fall::<N>(1000);
    assert!(fine < 5e-8, "drift {fine} m at 1000 fps");
    let drift = heft_strand_common::testing::free_fall_drift::<N>(24, None);
    eprintln!(
        "{} at 24 fps, default substeps: drift {drift:.2e} m in 0.5 s",
        N::spec().name
    );
    assert!(drift < 1e-5, "drift {drift} m at 24 fps");
}

#[test]
fn euler_strand_in_free_fall_keeps_its_shape() {
    free_fall_check::<Euler>();
}

#[test]
fn verlet_strand_in_free_fall_keeps_its_shape() {
    free_fall_check::<Verlet>();
}

/// A strand hanging from an anchor that accelerates upward at 4 m/s^2 carries (g + a) / g of
/// its static tension (equivalence principle; Halliday, Resnick & Walker, Fundamentals of
/// Physics, ch. 5, the apparent weight in an accelerating elevator): the top segment of the
/// mass-spring strand stretches by that ratio, within 0.5 % at 24 and 60 fps with the default
/// substeps (measured: to 1e-10). strand.verlet holds its segments at their length with
/// constraints, so its tension does not show in its positions.
#[test]
fn euler_strand_in_an_accelerating_elevator_carries_g_plus_a() {
    let (g, a) = (G, 4.0);
    for fps in [24, 60] {
        let ratio = heft_strand_common::testing::elevator_stretch::<Euler>(a, fps, 4)
            / heft_strand_common::testing::elevator_stretch::<Euler>(0.0, fps, 4);
        eprintln!("euler at {fps} fps: stretch ratio {ratio:.10} vs {:.10}", (g + a) / g);
        assert!((ratio / ((g + a) / g) - 1.0).abs() < 5e-3, "{ratio}");
    }
}

/// strand.verlet's projection takes energy out of a swing, first order in h: the amplitude lost
/// per period by a 1 m pendulum released at 30 degrees is what its notes state (15.7 % at 60 fps
/// and 1 substep, 4.3 % at 4, 0.9 % at 20; 2.2 % at 24 fps and 20), within a tenth of each
/// figure, and it falls in proportion to h: from 1 to 4 substeps by about 4 (a first-order error;
/// measured 3.6).
#[test]
fn verlet_loses_the_amplitude_its_notes_state() {
    let loss = |fps: u32, substeps: i64| {
        let tl = timeline(fps, u64::from(fps) * 10 + 1);
        let anchor = moving_anchor(tl, |_| [0.0, 0.0, 2.0]);
        let a = 30f64.to_radians();
        let r = run::<Verlet>(
            &[
                int("segments", 1),
                num("length", 1.0),
                vec3("rest_direction", [a.sin(), 0.0, -a.cos()]),
                num("damping", 0.0),
                num("relative_damping", 0.0),
                num("bending_stiffness", 0.0),
                int("substeps", substeps),
            ],
            tl,
            &[("anchor", anchor)],
        )
        .expect("runs");
        let xs: Vec<f64> = (0..r.frames()).map(|f| r.x(f, 1)[0]).collect();
        let peaks: Vec<f64> = (1..xs.len() - 1)
            .filter(|&i| xs[i] > xs[i - 1] && xs[i] >= xs[i + 1] && xs[i] > 0.0)
            .map(|i| xs[i])
            .collect();
        let n = peaks.len() - 1;
        1.0 - (peaks[n] / peaks[0]).powf(1.0 / n as f64)
    };
    let spec = Verlet::spec();
    for (fps, substeps, stated, text) in [
        (60, 1, 0.157, "15.7 %"),
        (60, 4, 0.043, "4.3 %"),
        (60, 20, 0.009, "0.9 %"),
        (24, 20, 0.022, "2.2 %"),
    ] {
        let l = loss(fps, substeps);
        eprintln!(
            "verlet, {fps} fps, {substeps} substeps: {:.2} % of the amplitude a period",
            100.0 * l
        );
        assert!((l / stated - 1.0).abs() < 0.1, "{l} vs {stated}");
        assert!(spec.notes.contains(text), "the notes state {text}");
    }
    let ratio = loss(60, 1) / loss(60, 4);
    assert!(ratio > 3.0 && ratio < 5.0, "{ratio}");
}

/// A frame run again at twice the substeps (after a blow-up) starts where the frame started
/// and keeps the velocity: a thrown free strand stays on its parabola, shifted from that frame
/// on by the lag g h T / 4 the change of step gives a method exact on a parabola (derived beside
/// `rerun_free_fall`; 4.3e-5 m for symplectic Euler at 100 substeps, inside its explicit limit,
/// 2.1e-4 m for Verlet at 20), within 1e-9 m (measured: 8e-16 m and 4e-14 m).
#[test]
fn a_frame_run_again_keeps_a_thrown_strand_on_its_parabola() {
    use heft_strand::{EulerMethod, VerletMethod};
    use heft_strand_common::testing::rerun_free_fall;
    let euler = rerun_free_fall::<Euler, EulerMethod>(100);
    let verlet = rerun_free_fall::<Verlet, VerletMethod>(20);
    eprintln!("strand.euler {euler:.2e} m, strand.verlet {verlet:.2e} m");
    assert!(euler < 1e-9, "{euler}");
    assert!(verlet < 1e-9, "{verlet}");
}

//! Contract behaviour of `strand.euler` and `strand.verlet`: blow-up errors, momentum,
//! energy, wind, colliders, pins, placement, input errors and determinism.

mod support;

use heft_node_sdk::field::{points_for, write_frame};
use heft_node_sdk::{Node, ParamValue, Params, Timeline};
use heft_strand::{Euler, Verlet};
use heft_strand_common::Setup;
use proptest::prelude::*;
use support::*;

fn finite(run: &Run) -> bool {
    run.positions
        .iter()
        .chain(&run.velocities)
        .chain(&run.momentum)
        .chain(&run.energy)
        .all(|v| v.is_finite())
}

// ---------------------------------------------------------------- blow-up

/// Three strands, free, no gravity: strands 0 and 1 lie still at their rest shape (every force
/// is exactly zero, so nothing can grow), strand 2 starts with a transverse velocity. Stiff
/// segments and one substep per frame put h far beyond the explicit limit, so only strand 2
/// blows up, and the message names it, the frame, h, the limit and the substeps to use.
#[test]
fn euler_blow_up_names_strand_frame_and_substeps() {
    let tl = Timeline {
        start_frame: 100,
        frame_count: 48,
        rate_num: 24,
        rate_den: 1,
    };
    let changes = [
        int("count", 3),
        choice("placement", "line"),
        choice("pin", "free"),
        num("gravity", 0.0),
        num("stretch_stiffness", 1.0e4),
        int("substeps", 1),
        // The message of one try (frames run again are tested in the frame loop's tests).
        int("reruns", 0),
    ];
    let n = 3 * 13;
    let mut vel = vec![[0.0; 3]; n];
    for v in &mut vel[26..39] {
        *v = [0.0, 0.1, 0.0];
    }
    vel[32] = [0.0, -0.2, 0.0];
    let (result, run) = run_raw::<Euler>(&changes, tl, &[("initial_velocities", points_input(tl, &vel))]);
    let msg = result.expect_err("blows up").0;
    eprintln!("{msg}");
    assert!(msg.starts_with("strand 2 blew up at frame 102 ("), "{msg}");
    // The limit quoted is the setup's explicit limit, and the advice is 1.25 frame / limit.
    let setup = Setup::from_params(&params(&Euler::spec(), &changes)).expect("valid");
    let limit = setup.explicit_step_limit(false).expect("springs limit the step");
    let need = (1.25 / 24.0 / limit).ceil() as u64;
    assert!(msg.contains(&format!("h = {:.3e} s", 1.0 / 24.0)), "{msg}");
    assert!(msg.contains(&format!("about {limit:.3e} s")), "{msg}");
    assert!(msg.contains(&format!("raise `substeps` to at least {need}")), "{msg}");
    // h = 1/24 s is far above the limit: the message calls it an instability.
    assert!(
        msg.contains("above the explicit stability limit for these parameters")
            && msg.contains("a numerical instability"),
        "{msg}"
    );
    // Nothing non-finite was written.
    assert!(finite(&run));
    // And the advice works: at that many substeps the same strand stays in one piece.
    let mut fixed = changes.to_vec();
    fixed.push(int("substeps", need as i64));
    support::run::<Euler>(&fixed, tl, &[("initial_velocities", points_input(tl, &vel))]).expect("stable");
}

/// The default strand (k = 6000 N/m, m = 1.67e-3 kg, c = 2.7 N/m, damping 2.5 1/s): omega_max =
/// sqrt((4 k + 16 c) / m) = 3798 rad/s and h < 5.26e-4 s, the figure the notes quote.
#[test]
fn the_default_stability_limit_is_the_one_in_the_notes() {
    let setup = Setup::from_params(&Params::defaults(&Euler::spec()).expect("defaults")).expect("valid");
    let k: f64 = 200.0 / (0.4 / 12.0);
    let m = 0.05 * 0.4 / 12.0;
    let c = 1.0e-4 / (0.4f64 / 12.0).powi(3);
    let w = ((4.0 * k + 16.0 * c) / m).sqrt();
    assert!((setup.omega_max() - w).abs() < 1e-9 * w);
    assert!((w - 3798.1).abs() < 0.1, "{w}");
    let limit = setup.explicit_step_limit(false).expect("limited");
    assert!((limit - 5.26e-4).abs() < 5e-7, "{limit}");
    // Symplectic Euler on x'' = -w^2 x - gamma x' is stable iff w^2 h^2 + 2 gamma h < 4: check
    // the formula's root directly.
    let g = 2.5;
    assert!((w * w * limit * limit + 2.0 * g * limit - 4.0).abs() < 1e-9);
    // 100 substeps at 24 fps is inside it, 79 is not.
    assert!(1.0 / 24.0 / 100.0 < limit && 1.0 / 24.0 / 79.0 > limit);
}

/// Verlet's limit is bending only: a fine strand with the default E I at 20 substeps blows up
/// and says so, with the bending limit 2 / sqrt(16 c / m).
#[test]
fn verlet_blow_up_quotes_the_bending_limit() {
    let tl = timeline(24, 24);
    let changes = [int("segments", 64), int("reruns", 0)];
    let (result, run) = run_raw::<Verlet>(&changes, tl, &[("anchor", fixed_anchor(tl, [0.0; 3]))]);
    let msg = result.expect_err("blows up").0;
    eprintln!("{msg}");
    let l0: f64 = 0.4 / 64.0;
    let c = 1.0e-4 / l0.powi(3);
    let m = 0.05 * l0;
    let w = (16.0 * c / m).sqrt();
    let g = 2.5;
    let limit = ((g * g + 4.0 * w * w).sqrt() - g) / (w * w);
    assert!(msg.starts_with("strand 0 blew up at frame"), "{msg}");
    assert!(msg.contains(&format!("about {limit:.3e} s")), "{msg}");
    // h = 2.08e-3 s is above it; the limit is named as Verlet's, not as an explicit spring limit.
    assert!(
        msg.contains("above the stability limit of the explicit bending and damping terms for these parameters"),
        "{msg}"
    );
    assert!(finite(&run));
}

/// A soft, heavy strand (the conformance kit's report: `mass_per_length` 1e4 kg/m,
/// `stretch_stiffness` 1e-3 N, gravity 100 m/s^2) hanging from a still anchor, no damping: the
/// springs (k = 0.03 N/m against 333 kg particles) hardly act, so the particles fall freely. The
/// top segment (l0 = 0.4 / 12 m, vertical) passes 10 l0 once particle 1 has fallen 9 l0 = 0.3 m:
/// at t = sqrt(2 x 0.3 / 100) = 0.0775 s, between frames 1 (0.0417 s) and 2 (0.0833 s), whatever
/// the step (leapfrog positions are exact for a constant acceleration). The step is far inside
/// the explicit limit, so the message calls it the strand's physics and gives the Hooke's-law
/// stretch of the hanging strand, and 4 times the substeps stop at the same frame.
#[test]
fn euler_over_stretch_of_a_soft_heavy_strand_is_called_physics() {
    let tl = timeline(24, 24);
    let changes = [
        num("mass_per_length", 1.0e4),
        num("stretch_stiffness", 1.0e-3),
        num("gravity", 100.0),
        num("damping", 0.0),
        num("relative_damping", 0.0),
    ];
    let anchor = [("anchor", fixed_anchor(tl, [0.0; 3]))];
    let (result, run) = run_raw::<Euler>(&changes, tl, &anchor);
    let msg = result.expect_err("over-stretches").0;
    eprintln!("{msg}");
    assert!(
        msg.starts_with(
            "strand 0 blew up at frame 2: it stretches past 10 times its rest length under its load (segment 0 is"
        ),
        "{msg}"
    );
    let setup = Setup::from_params(&params(&Euler::spec(), &changes)).expect("valid");
    let limit = setup.explicit_step_limit(false).expect("springs limit the step");
    let h = 1.0 / 24.0 / 100.0;
    assert!(limit > 37.0 * h, "{limit}");
    assert!(
        msg.contains(&format!(
            "h = {h:.3e} s is {:.1} times below the explicit stability limit for these parameters (about {limit:.3e} s)",
            limit / h
        )),
        "{msg}"
    );
    // Hooke: the top segment carries the 12 particles below the pin, mu L (1 - 1/24) = 3833.3 kg
    // (half a segment's mass at the tip), T = 3.8333e5 N, stretched to 1 + T / (E A) rest lengths.
    let tension = 100.0 * 1.0e4 * 0.4 * (1.0 - 1.0 / 24.0);
    assert!(
        msg.contains(&format!(
            "about {:.3e} rest lengths: a tension of {tension:.3e} N",
            1.0 + tension / 1.0e-3
        )),
        "{msg}"
    );
    assert!(
        msg.ends_with(
            "more substeps will not help: give it a stiffer `stretch_stiffness` or a lighter `mass_per_length`"
        ),
        "{msg}"
    );
    assert!(finite(&run));
    let mut finer = changes.to_vec();
    finer.push(int("substeps", 400));
    let msg = run_raw::<Euler>(&finer, tl, &anchor).0.expect_err("the same physics").0;
    assert!(
        msg.starts_with("strand 0 blew up at frame 2: it stretches past 10 times"),
        "{msg}"
    );
}

// ---------------------------------------------------------------- initial state

/// `strand.verlet` puts an initial state that is off its constraints onto them without turning
/// the correction into velocity. A free strand, no gravity, damping or bending, at rest, its
/// particles jittered by up to a quarter segment per axis: with no force acting, every shape at
/// rest length is an equilibrium, so once projected nothing may move. (Before, the first
/// substep's projection became a velocity correction / h: tens of m/s here.) Frame 0 is the
/// state as given (the contract); the projection is mass-weighted, a sum of equal and opposite
/// moves along the segments, so the centre of mass stays where it was.
#[test]
fn verlet_projects_an_initial_state_off_its_constraints_without_making_velocity() {
    let tl = timeline(24, 4);
    let segments = 12usize;
    let changes = [
        choice("pin", "free"),
        int("segments", segments as i64),
        num("gravity", 0.0),
        num("damping", 0.0),
        num("relative_damping", 0.0),
        num("bending_stiffness", 0.0),
    ];
    let l0 = 0.4 / segments as f64;
    // Jitter in [-0.25, 0.25] l0 per axis from a fixed table (no randomness).
    let jitter = |i: usize, c: usize| 0.25 * (((7 * i + 3 * c) % 11) as f64 / 5.0 - 1.0);
    let x0: Vec<[f64; 3]> = (0..=segments)
        .map(|i| {
            [
                jitter(i, 0) * l0,
                jitter(i, 1) * l0,
                1.0 - i as f64 * l0 + jitter(i, 2) * l0,
            ]
        })
        .collect();
    let v0 = vec![[0.0; 3]; x0.len()];
    let inputs = [
        ("initial_positions", points_input(tl, &x0)),
        ("initial_velocities", points_input(tl, &v0)),
    ];
    let r = run::<Verlet>(&changes, tl, &inputs).expect("runs");
    let n = x0.len();
    for (i, x) in x0.iter().enumerate() {
        assert_eq!(r.x(0, i), *x, "frame 0 is the given state");
    }
    let off: f64 = (1..n)
        .map(|i| {
            let (a, b) = (r.x(0, i - 1), r.x(0, i));
            (((b[0] - a[0]).powi(2) + (b[1] - a[1]).powi(2) + (b[2] - a[2]).powi(2)).sqrt() - l0).abs()
        })
        .fold(0.0, f64::max);
    assert!(off > 0.1 * l0, "the given state is off the constraints: {off}");
    // Equal interior masses, half at the ends (the lumping the notes state).
    let centre = |f: usize| -> [f64; 3] {
        let mut c = [0.0; 3];
        for i in 0..n {
            let w = if i == 0 || i == n - 1 { 0.5 } else { 1.0 } / segments as f64;
            let x = r.x(f, i);
            for k in 0..3 {
                c[k] += w * x[k];
            }
        }
        c
    };
    let c0 = centre(0);
    for f in 1..r.frames() {
        for i in 1..n {
            let (a, b) = (r.x(f, i - 1), r.x(f, i));
            let l = ((b[0] - a[0]).powi(2) + (b[1] - a[1]).powi(2) + (b[2] - a[2]).powi(2)).sqrt();
            assert!((l - l0).abs() < 1e-12 * l0, "frame {f} segment {i}: {l} vs {l0}");
        }
        for i in 0..n {
            let v = r.v(f, i);
            assert!(
                v.iter().all(|c| c.abs() < 1e-9),
                "frame {f} particle {i} moves at {v:?}"
            );
            let (a, b) = (r.x(1, i), r.x(f, i));
            assert!(
                (0..3).all(|k| (a[k] - b[k]).abs() < 1e-12),
                "frame {f} particle {i} moved"
            );
        }
        let c = centre(f);
        assert!((0..3).all(|k| (c[k] - c0[k]).abs() < 1e-14), "{c:?} vs {c0:?}");
    }
}

// ---------------------------------------------------------------- defaults

/// The defaults run at 24 fps on a swaying, turning anchor (a head nodding 5 cm and turning
/// 20 deg at 1 Hz) without blowing up, for both methods, and the tip hangs below the root.
#[test]
fn defaults_are_stable_at_24_fps() {
    let tl = timeline(24, 97);
    let anchor: Vec<f64> = (0..tl.frames())
        .flat_map(|i| {
            let t = tl.time(i);
            let yaw = 0.35 * (std::f64::consts::TAU * t).sin();
            [
                0.05 * (std::f64::consts::TAU * t).sin(),
                0.0,
                1.6,
                0.0,
                0.0,
                (0.5 * yaw).sin(),
                (0.5 * yaw).cos(),
            ]
        })
        .collect();
    for run in [
        run::<Euler>(&[], tl, &[("anchor", anchor.clone())]).expect("euler runs"),
        run::<Verlet>(&[], tl, &[("anchor", anchor.clone())]).expect("verlet runs"),
    ] {
        assert!(finite(&run));
        let last = run.frames() - 1;
        assert!(run.x(last, 12)[2] < 1.6 - 0.3, "{:?}", run.x(last, 12));
    }
}

// ---------------------------------------------------------------- conservation

fn free_changes(count: i64, segments: i64, ea: f64, ei: f64, substeps: i64) -> Vec<(&'static str, ParamValue)> {
    vec![
        int("count", count),
        int("segments", segments),
        choice("pin", "free"),
        choice("placement", "line"),
        num("gravity", 0.0),
        num("damping", 0.0),
        num("relative_damping", 0.0),
        num("stretch_stiffness", ea),
        num("bending_stiffness", ei),
        int("substeps", substeps),
    ]
}

/// Random initial state: the rest shape with each particle moved by up to 0.1 l0 per axis,
/// and random velocities up to 1 m/s per component. (At 0.3 l0 a stretched pair can swing
/// through zero length, where a spring's direction flips: a blow-up of the model, not of the
/// integrator, which this test is not about.)
fn random_state(count: usize, segments: usize, jitter: &[f64], vel: &[f64]) -> (Vec<[f64; 3]>, Vec<[f64; 3]>) {
    let l0 = 0.4 / segments as f64;
    let n = count * (segments + 1);
    let mut x = Vec::with_capacity(n);
    let mut v = Vec::with_capacity(n);
    for s in 0..count {
        for i in 0..=segments {
            let k = 3 * (s * (segments + 1) + i);
            let base = [(s as f64 - 0.5 * (count as f64 - 1.0)) * 0.02, 0.0, -(i as f64) * l0];
            x.push([
                base[0] + 0.1 * l0 * jitter[k % jitter.len()],
                base[1] + 0.1 * l0 * jitter[(k + 1) % jitter.len()],
                base[2] + 0.1 * l0 * jitter[(k + 2) % jitter.len()],
            ]);
            v.push([vel[k % vel.len()], vel[(k + 1) % vel.len()], vel[(k + 2) % vel.len()]]);
        }
    }
    (x, v)
}

/// Substeps that keep h at 80 % of the explicit limit (capped at 10000).
fn stable_substeps(changes: &[(&'static str, ParamValue)], fps: f64) -> i64 {
    let setup = Setup::from_params(&params(&Euler::spec(), changes)).expect("valid");
    let limit = setup.explicit_step_limit(false).unwrap_or(1.0);
    ((1.0 / fps / (0.8 * limit)).ceil() as i64).clamp(1, 10000)
}

fn momentum_is_conserved<N: Node>(count: i64, segments: i64, ea: f64, ei: f64, jitter: &[f64], vel: &[f64]) {
    let tl = timeline(24, 13);
    let sub = stable_substeps(&free_changes(count, segments, ea, ei, 1), 24.0);
    let changes = free_changes(count, segments, ea, ei, sub);
    let (x, v) = random_state(count as usize, segments as usize, jitter, vel);
    let run = run::<N>(
        &changes,
        tl,
        &[
            ("initial_positions", points_input(tl, &x)),
            ("initial_velocities", points_input(tl, &v)),
        ],
    )
    .expect("runs");
    let setup = Setup::from_params(&params(&N::spec(), &changes)).expect("valid");
    // The scale: sum m |v| at frame 0 (the momentum itself may be near zero).
    let scale: f64 = (0..run.n)
        .map(|i| setup.mass[i % setup.particles] * run.v(0, i).iter().map(|c| c * c).sum::<f64>().sqrt())
        .sum();
    let p0 = run.p(0);
    for f in 1..run.frames() {
        let p = run.p(f);
        for k in 0..3 {
            assert!(
                (p[k] - p0[k]).abs() <= 1e-9 * scale,
                "frame {f}: {p:?} vs {p0:?} (scale {scale})"
            );
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 24, ..ProptestConfig::default() })]

    /// Internal forces (springs, bending) come in equal and opposite pairs and Verlet's
    /// mass-weighted projection moves no centre of mass, so with no gravity, damping, pins or
    /// wind the total momentum is constant (Newton's third law): to 1e-9 of sum m |v|, the
    /// round-off of a few thousand steps.
    #[test]
    fn euler_conserves_momentum(
        count in 1i64..=3,
        segments in 1i64..=10,
        ea in 10.0f64..1000.0,
        ei in 0.0f64..1e-4,
        jitter in prop::collection::vec(-1.0f64..1.0, 30),
        vel in prop::collection::vec(-1.0f64..1.0, 30),
    ) {
        momentum_is_conserved::<Euler>(count, segments, ea, ei, &jitter, &vel);
    }

    #[test]
    fn verlet_conserves_momentum(
        count in 1i64..=3,
        segments in 1i64..=10,
        ei in 0.0f64..1e-4,
        jitter in prop::collection::vec(-1.0f64..1.0, 30),
        vel in prop::collection::vec(-1.0f64..1.0, 30),
    ) {
        momentum_is_conserved::<Verlet>(count, segments, 100.0, ei, &jitter, &vel);
    }
}

/// Symplectic Euler keeps the energy of a conservative system bounded (no drift; Hairer,
/// Lubich & Wanner 2006, sec. IX.8): a 60 deg pendulum (one stiff segment, as in the pendulum
/// tests) over 20 s at h = 1e-4 s. The energy output pairs x_n with the half-step velocity
/// v_{n-1/2}, an O(h) oscillation of relative size about omega h ~ 3e-4; allow 1e-3 of the
/// swing's energy m g L (1 - cos 60) and no trend: the mean of the last second equals the
/// mean of the first to 1e-4.
#[test]
fn euler_energy_is_bounded() {
    let tl = timeline(100, 2001);
    let th = 60.0 * DEG;
    let run = run::<Euler>(
        &[
            int("segments", 1),
            num("length", 1.0),
            num("mass_per_length", 1.0),
            num("stretch_stiffness", 1.0e7),
            num("bending_stiffness", 0.0),
            num("damping", 0.0),
            num("relative_damping", 0.0),
            int("substeps", 100),
        ],
        tl,
        &[
            ("anchor", fixed_anchor(tl, [0.0; 3])),
            (
                "initial_positions",
                points_input(tl, &[[0.0; 3], [th.sin(), 0.0, -th.cos()]]),
            ),
        ],
    )
    .expect("runs");
    let swing = 0.5 * G * (1.0 - th.cos());
    let e0 = run.energy[0];
    assert!((e0 - (-0.5 * G * th.cos())).abs() < 1e-12, "frame 0 energy {e0}");
    let worst = run.energy.iter().map(|e| (e - e0).abs()).fold(0.0, f64::max);
    eprintln!(
        "pendulum energy: largest deviation {:.2e} of the swing energy",
        worst / swing
    );
    assert!(worst < 1e-3 * swing);
    let first: f64 = run.energy[..100].iter().sum::<f64>() / 100.0;
    let last: f64 = run.energy[1901..].iter().sum::<f64>() / 100.0;
    assert!((last - first).abs() < 1e-4 * swing, "{first} {last}");
}

// ---------------------------------------------------------------- wind

/// A uniform wind field as the SDK lays it out: a 2 x 2 x 2 grid 100 m across.
fn uniform_wind(tl: Timeline, w: [f64; 3]) -> Vec<f64> {
    let one = {
        let mut out = vec![0.0; 3 * points_for(2, 2, 2)];
        write_frame(&mut out, [2, 2, 2], 100.0, [-50.0, -50.0, -50.0], |_| w);
        out
    };
    (0..tl.frames()).flat_map(|_| one.iter().copied()).collect()
}

/// Drag towards a uniform wind from rest: v' = d (w - v) gives v(t) = w (1 - e^{-d t}) and
/// x(t) = x0 + w (t - (1 - e^{-d t}) / d) (a linear first-order ODE, closed form). A free
/// one-segment strand without gravity moves as one body. The drag is evaluated with the
/// velocity half a step back, a first-order error: at h = 1e-4 s about d |w| h / 2 = 3.2e-4 m/s
/// in the reported velocity and at most |w| h / 2 = 1.6e-4 m in position; tolerances 5e-4 m/s
/// and 2e-4 m, and ten times tighter (within 30 %) at h = 1e-5 s.
fn wind_drag<N: Node>(substeps: i64) -> (f64, f64) {
    let tl = timeline(100, 101);
    let w = [3.0, 0.0, 1.0];
    let d = 2.0;
    let run = run::<N>(
        &[
            int("segments", 1),
            choice("pin", "free"),
            num("gravity", 0.0),
            num("damping", 0.0),
            num("relative_damping", 0.0),
            num("drag", d),
            int("substeps", substeps),
        ],
        tl,
        &[("wind", uniform_wind(tl, w))],
    )
    .expect("runs");
    let (mut worst_v, mut worst_x) = (0.0f64, 0.0f64);
    for f in 0..run.frames() {
        let t = run.time(f);
        let e = (-d * t).exp();
        for i in 0..2 {
            let x0 = [0.0, 0.0, -0.4 * i as f64];
            for k in 0..3 {
                worst_v = worst_v.max((run.v(f, i)[k] - w[k] * (1.0 - e)).abs());
                worst_x = worst_x.max((run.x(f, i)[k] - x0[k] - w[k] * (t - (1.0 - e) / d)).abs());
            }
        }
    }
    eprintln!(
        "{} wind, h = {:.0e} s: velocity error {worst_v:.2e} m/s, position error {worst_x:.2e} m",
        N::spec().name,
        0.01 / substeps as f64
    );
    (worst_v, worst_x)
}

fn wind_check<N: Node>() {
    let (v1, x1) = wind_drag::<N>(100);
    let (v2, x2) = wind_drag::<N>(1000);
    assert!(v1 < 5e-4 && x1 < 2e-4, "{v1} {x1}");
    assert!(
        (v1 / v2 - 10.0).abs() < 3.0 && (x1 / x2 - 10.0).abs() < 3.0,
        "{v1} {v2} {x1} {x2}"
    );
}

#[test]
fn euler_wind_drag_matches_the_closed_form() {
    wind_check::<Euler>();
}

#[test]
fn verlet_wind_drag_matches_the_closed_form() {
    wind_check::<Verlet>();
}

#[test]
fn a_bad_wind_field_is_an_error_naming_the_frame() {
    let tl = timeline(24, 10);
    let mut wind = uniform_wind(tl, [1.0, 0.0, 0.0]);
    let width = wind.len() / 10;
    wind[4 * width + 3] = 0.0; // spacing of frame 4
    let err = run::<Euler>(&[choice("pin", "free")], tl, &[("wind", wind)]).expect_err("bad field");
    assert!(
        err.0.contains("`wind` at frame 4") && err.0.contains("spacing"),
        "{}",
        err.0
    );
}

// ---------------------------------------------------------------- colliders

fn sphere_track(tl: Timeline, f: impl Fn(f64) -> [f64; 3]) -> Vec<f64> {
    moving_anchor(tl, f)
}

/// A sphere (radius 0.1 m, centre 0.05 m off its transform) sweeps through a hanging strand
/// and another drops onto a falling free strand: no free particle is ever inside a sphere.
fn colliders_keep_particles_out<N: Node>() {
    let tl = timeline(24, 73);
    let centre1 = |t: f64| [-0.3 + 0.3 * t, 0.0, -0.25];
    let run = run::<N>(
        &[
            vec3("collider_1_offset", [0.05, 0.0, 0.0]),
            num("collider_2_radius", 0.15),
        ],
        tl,
        &[
            ("anchor", fixed_anchor(tl, [0.0; 3])),
            ("collider_1", sphere_track(tl, centre1)),
            ("collider_2", sphere_track(tl, |_| [0.0, 0.3, -0.6])),
        ],
    )
    .expect("runs");
    let mut pushed = 0.0f64;
    for f in 0..run.frames() {
        let c1 = centre1(run.time(f));
        let centres = [([c1[0] + 0.05, c1[1], c1[2]], 0.1), ([0.0, 0.3, -0.6], 0.15)];
        for i in 1..run.n {
            let p = run.x(f, i);
            for (c, r) in centres {
                let d = ((p[0] - c[0]).powi(2) + (p[1] - c[1]).powi(2) + (p[2] - c[2]).powi(2)).sqrt();
                assert!(d >= r, "frame {f} particle {i} at {d} from a sphere of radius {r}");
                pushed = pushed.max(p[0]);
            }
        }
    }
    // The sweep really pushed the strand aside (it hangs at x = 0 otherwise).
    assert!(pushed > 0.05, "{pushed}");
}

#[test]
fn euler_colliders_keep_particles_out() {
    colliders_keep_particles_out::<Euler>();
}

#[test]
fn verlet_colliders_keep_particles_out() {
    colliders_keep_particles_out::<Verlet>();
}

#[test]
fn a_pin_inside_a_collider_is_left_alone_with_a_warning() {
    let tl = timeline(24, 5);
    let run = run::<Euler>(
        &[],
        tl,
        &[
            ("anchor", fixed_anchor(tl, [0.0; 3])),
            ("collider_1", fixed_anchor(tl, [0.0, 0.0, 0.05])),
        ],
    )
    .expect("runs");
    assert_eq!(run.x(4, 0), [0.0; 3]);
    assert_eq!(run.warnings.len(), 1, "{:?}", run.warnings);
    assert!(run.warnings[0].contains("pinned particle is inside a collider from frame 0"));
}

// ---------------------------------------------------------------- pins and placement

/// Pins ride on the anchor exactly at frames: an anchor turning about Z at 1 rad/s and moving
/// along Y carries particle 0 of each ring strand at R(t) (offset) + translation.
#[test]
fn pins_follow_a_turning_anchor_and_rings_are_placed_evenly() {
    let tl = timeline(24, 25);
    let anchor: Vec<f64> = (0..tl.frames())
        .flat_map(|i| {
            let t = tl.time(i);
            [0.0, 0.2 * t, 1.0, 0.0, 0.0, (0.5 * t).sin(), (0.5 * t).cos()]
        })
        .collect();
    for run in [
        run::<Euler>(
            &[int("count", 4), choice("placement", "ring")],
            tl,
            &[("anchor", anchor.clone())],
        )
        .expect("runs"),
        run::<Verlet>(
            &[int("count", 4), choice("placement", "ring")],
            tl,
            &[("anchor", anchor.clone())],
        )
        .expect("runs"),
    ] {
        for f in 0..run.frames() {
            let t = run.time(f);
            for s in 0..4 {
                let a = t + std::f64::consts::FRAC_PI_2 * s as f64;
                let want = [0.15 * a.cos(), 0.2 * t + 0.15 * a.sin(), 1.0];
                let got = run.x(f, s * 13);
                for k in 0..3 {
                    assert!(
                        (got[k] - want[k]).abs() < 1e-12,
                        "frame {f} strand {s}: {got:?} vs {want:?}"
                    );
                }
            }
        }
    }
}

/// Line placement: strands `spacing` apart along local X, centred; both ends pinned, the end on
/// `anchor_b`; the rest shape is a V whose segments have their rest length.
#[test]
fn line_placement_and_both_ends_on_two_anchors() {
    let tl = timeline(24, 25);
    let changes = [
        int("count", 3),
        choice("placement", "line"),
        choice("pin", "both_ends"),
        vec3("end_offset", [0.0, 0.0, 0.0]),
    ];
    let b = |t: f64| [0.3, 0.1 * t, 0.0];
    let run = run::<Euler>(
        &changes,
        tl,
        &[
            ("anchor", fixed_anchor(tl, [0.0; 3])),
            ("anchor_b", moving_anchor(tl, b)),
        ],
    )
    .expect("runs");
    for s in 0..3 {
        let dx = (s as f64 - 1.0) * 0.02;
        assert_eq!(run.x(0, s * 13), [dx, 0.0, 0.0]);
        for f in 0..run.frames() {
            let want = b(run.time(f));
            let got = run.x(f, s * 13 + 12);
            for k in 0..3 {
                assert!((got[k] - [want[0] + dx, want[1], want[2]][k]).abs() < 1e-12);
            }
        }
        // The V at frame 0: every segment at its rest length 0.4 / 12, sagging down (-Z).
        for i in 0..12 {
            let (p, q) = (run.x(0, s * 13 + i), run.x(0, s * 13 + i + 1));
            let l = ((p[0] - q[0]).powi(2) + (p[1] - q[1]).powi(2) + (p[2] - q[2]).powi(2)).sqrt();
            assert!((l - 0.4 / 12.0).abs() < 1e-12, "{l}");
        }
        assert!(run.x(0, s * 13 + 6)[2] < -0.1);
    }
}

// ---------------------------------------------------------------- errors

#[test]
fn input_problems_are_clear_errors() {
    let tl = timeline(24, 10);
    let e = run::<Euler>(&[], tl, &[]).expect_err("no anchor");
    assert!(
        e.0.contains("pin = one_end needs the `anchor` input connected"),
        "{}",
        e.0
    );
    let e = run::<Verlet>(
        &[vec3("rest_direction", [0.0; 3])],
        tl,
        &[("anchor", fixed_anchor(tl, [0.0; 3]))],
    )
    .expect_err("zero direction");
    assert!(e.0.contains("`rest_direction` is a zero vector"), "{}", e.0);
    let mut anchor = fixed_anchor(tl, [0.0; 3]);
    anchor[7 * 6 + 6] = 0.0; // frame 6: quaternion (0, 0, 0, 0)
    let e = run::<Euler>(&[], tl, &[("anchor", anchor)]).expect_err("zero quaternion");
    assert!(e.0.contains("`anchor` at frame 6"), "{}", e.0);
    let p = params(&Euler::spec(), &[int("count", 2)]);
    let e = Euler::output_points(&p, &[7, 0, 0, 0, 0, 0, 3 * 13, 0]).expect_err("wrong N");
    assert!(
        e.0.contains("`initial_positions` carries 13 points but this node has 26 particles"),
        "{}",
        e.0
    );
    assert_eq!(
        Euler::output_points(&p, &[7, 0, 0, 0, 0, 0, 78, 78]).expect("fits"),
        [26, 26, 0, 0]
    );
}

#[test]
fn evaluation_is_deterministic() {
    let tl = timeline(24, 30);
    let anchor = moving_anchor(tl, |t| [0.1 * (3.0 * t).sin(), 0.0, 0.0]);
    let inputs = [
        ("anchor", anchor.clone()),
        ("collider_1", fixed_anchor(tl, [0.05, 0.0, -0.3])),
    ];
    let a = run::<Euler>(&[int("count", 5), choice("placement", "ring")], tl, &inputs).expect("runs");
    let b = run::<Euler>(&[int("count", 5), choice("placement", "ring")], tl, &inputs).expect("runs");
    assert!(
        a.positions
            .iter()
            .zip(&b.positions)
            .all(|(x, y)| x.to_bits() == y.to_bits())
    );
    assert!(a.energy.iter().zip(&b.energy).all(|(x, y)| x.to_bits() == y.to_bits()));
}

// ---------------------------------------------------------------- robustness

proptest! {
    #![proptest_config(ProptestConfig { cases: 32, ..ProptestConfig::default() })]

    /// Any parameters within their ranges (bounded here for run time) either run to the end
    /// with finite outputs and no free particle inside the sphere, or stop with the blow-up
    /// error; they never panic or write a non-finite value.
    #[test]
    fn any_parameters_give_finite_outputs_or_a_blow_up_error(
        verlet in any::<bool>(),
        count in 1i64..=4,
        segments in 1i64..=16,
        placement in 0usize..3,
        pin in 0usize..3,
        ea in 1.0f64..1.0e4,
        ei in 0.0f64..1.0e-3,
        damping in 0.0f64..5.0,
        substeps in 1i64..=60,
        radius in 0.01f64..0.3,
        sway in 0.0f64..0.5,
    ) {
        let tl = timeline(24, 25);
        let changes = [
            int("count", count),
            int("segments", segments),
            choice("placement", ["single", "line", "ring"][placement]),
            choice("pin", ["one_end", "both_ends", "free"][pin]),
            num("stretch_stiffness", ea),
            num("bending_stiffness", ei),
            num("damping", damping),
            int("substeps", substeps),
            num("collider_1_radius", radius),
        ];
        let inputs = [
            ("anchor", moving_anchor(tl, |t| [sway * (6.0 * t).sin(), 0.0, 0.0])),
            ("collider_1", fixed_anchor(tl, [0.0, 0.05, -0.25])),
        ];
        let (result, run) = if verlet {
            run_raw::<Verlet>(&changes, tl, &inputs)
        } else {
            run_raw::<Euler>(&changes, tl, &inputs)
        };
        prop_assert!(finite(&run));
        match result {
            Ok(()) => {
                let p = segments as usize + 1;
                for f in 0..run.frames() {
                    for i in 0..run.n {
                        let pinned = (pin == 0 && i % p == 0) || (pin == 1 && (i % p == 0 || i % p == p - 1));
                        if pinned {
                            continue;
                        }
                        let x = run.x(f, i);
                        let d = (x[0].powi(2) + (x[1] - 0.05).powi(2) + (x[2] + 0.25).powi(2)).sqrt();
                        prop_assert!(d >= radius, "frame {} particle {} inside ({} < {})", f, i, d, radius);
                    }
                }
            }
            Err(e) => prop_assert!(e.0.contains("blew up at frame"), "{}", e.0),
        }
    }
}

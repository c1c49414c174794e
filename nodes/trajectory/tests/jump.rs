//! Tests of `trajectory.jump`: the node called directly (no plugin boundary) and the plan's
//! closed-form functions, checked against physics from outside the project.

use std::collections::HashMap;

use heft_node_sdk::{Io, Node, NodeError, ParamValue, Params, STANDARD_GRAVITY, Timeline};
use heft_trajectory::Jump;
use heft_trajectory::jump::{Drive, JumpSpec, Phase, Plan};
use proptest::prelude::*;

/// Standard gravity, exact by definition (3rd CGPM, 1901).
const G: f64 = STANDARD_GRAVITY;
const DEG: f64 = std::f64::consts::PI / 180.0;

fn timeline(fps: u32, start: i64, frames: u64) -> Timeline {
    Timeline {
        start_frame: start,
        frame_count: frames,
        rate_num: fps,
        rate_den: 1,
    }
}

type Changes = Vec<(&'static str, ParamValue)>;

fn params(changes: &[(&'static str, ParamValue)]) -> Params {
    let mut p = Params::defaults(&Jump::spec()).expect("every parameter has a default");
    for (name, value) in changes {
        p = p.with(name, value.clone()).expect("a parameter of the node");
    }
    p
}

fn num(name: &'static str, v: f64) -> (&'static str, ParamValue) {
    (name, ParamValue::Number(v))
}

fn speed_mode() -> (&'static str, ParamValue) {
    ("plan_by", ParamValue::Choice("takeoff_speed".into()))
}

fn no_swing() -> (&'static str, ParamValue) {
    num("arm_swing_to", -40.0 * DEG)
}

/// The plan the node builds for these parameters at 24 fps (take-off frame 48 = 2 s).
fn plan(changes: &[(&'static str, ParamValue)]) -> Result<Plan, NodeError> {
    let spec = JumpSpec::from_params(&params(changes), timeline(24, 0, 1))?;
    Plan::new(&spec)
}

/// One evaluation of the node: every output by name (values, width), summaries, warnings.
struct Run {
    tl: Timeline,
    out: HashMap<String, (Vec<f64>, usize)>,
    summary: HashMap<String, f64>,
    warnings: Vec<String>,
}

impl Run {
    fn frame(&self, name: &str, i: usize) -> &[f64] {
        let (v, w) = &self.out[name];
        &v[i * w..(i + 1) * w]
    }
    fn z(&self, name: &str, i: usize) -> f64 {
        self.frame(name, i)[2]
    }
    fn s(&self, name: &str) -> f64 {
        self.summary[name]
    }
    fn frames(&self) -> usize {
        self.tl.frames()
    }
    fn contact(&self, i: usize) -> bool {
        self.frame("contact", i)[0] == 1.0
    }
}

fn run(p: &Params, tl: Timeline) -> Result<Run, NodeError> {
    let spec = Jump::spec();
    let n = tl.frames();
    let widths: Vec<usize> = spec
        .outputs
        .iter()
        .map(|o| o.kind.width(o.points.unwrap_or(0)))
        .collect();
    let mut bufs: Vec<Vec<f64>> = widths.iter().map(|w| vec![f64::NAN; n * w]).collect();
    let (summaries, warnings) = {
        let outs: Vec<&mut [f64]> = bufs.iter_mut().map(Vec::as_mut_slice).collect();
        let mut io = Io::new(tl, &spec, vec![], outs, widths.clone());
        Jump::evaluate(p, &mut io)?;
        (io.summaries().to_vec(), io.warnings().to_vec())
    };
    let out = spec
        .outputs
        .iter()
        .zip(bufs)
        .zip(&widths)
        .map(|((o, b), w)| (o.name.clone(), (b, *w)))
        .collect();
    let summary = spec.summaries.iter().map(|s| s.name.clone()).zip(summaries).collect();
    Ok(Run {
        tl,
        out,
        summary,
        warnings,
    })
}

/// The node at `fps`, frames covering 0 s to 5 s, take-off at 2 s.
fn run_at(fps: u32, changes: &[(&'static str, ParamValue)]) -> Result<Run, NodeError> {
    let mut c = changes.to_vec();
    c.push(("takeoff_frame", ParamValue::Integer(2 * i64::from(fps))));
    run(&params(&c), timeline(fps, 0, 5 * u64::from(fps) + 1))
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}

/// Composite Simpson's rule of `f` over [a, b] with `n` (even) intervals.
fn simpson(f: impl Fn(f64) -> f64, a: f64, b: f64, n: usize) -> f64 {
    let h = (b - a) / n as f64;
    let mut s = f(a) + f(b);
    for i in 1..n {
        let w = if i % 2 == 1 { 4.0 } else { 2.0 };
        s += w * f(a + h * i as f64);
    }
    s * h / 3.0
}

/// Golden-section maximum of a unimodal `f` on [a, b].
fn golden_max(f: impl Fn(f64) -> f64, mut a: f64, mut b: f64) -> (f64, f64) {
    let r = 0.5 * (5f64.sqrt() - 1.0);
    for _ in 0..200 {
        let (c, d) = (b - r * (b - a), a + r * (b - a));
        if f(c) > f(d) {
            b = d;
        } else {
            a = c;
        }
    }
    let m = 0.5 * (a + b);
    (m, f(m))
}

/// A parameter set inside bounded ranges that covers the three drives, swings during the
/// push, straddling take-off, in flight, and no swing.
fn jump_changes() -> impl Strategy<Value = Changes> {
    let body = (40.0..120.0f64, 1.4..2.0f64, 0.20..0.35f64, 0.0..0.06f64, 0.3..0.8f64);
    let drive = (0..3u8, 0.25..0.60f64, 1.8..3.2f64, 0.15..0.6f64);
    let times = (0.5..0.9f64, 0.10..0.30f64, 0.4..1.0f64);
    let arms = (any::<bool>(), -60.0..0.0f64, 100.0..180.0f64, -0.5..0.3f64, 0.2..0.5f64);
    let forward = prop_oneof![Just(0.0), 0.3..2.5f64];
    (body, drive, times, arms, forward).prop_map(|(b, d, t, a, f)| {
        let mut c = vec![
            num("forward_speed", f),
            num("body_mass", b.0),
            num("body_height", b.1),
            num("crouch_depth", b.2),
            num("takeoff_extension", b.3),
            num("push_hold", b.4),
            (
                "plan_by",
                ParamValue::Choice(["rise", "takeoff_speed", "jump_height"][usize::from(d.0)].into()),
            ),
            num("rise", d.1),
            num("takeoff_speed", d.2),
            num("jump_height", d.3),
            num("countermovement_duration", t.0),
            num("landing_depth", t.1),
            num("recovery_duration", t.2),
            num("arm_swing_from", a.1 * DEG),
            num("arm_swing_to", if a.0 { a.2 * DEG } else { a.1 * DEG }),
            num("arm_swing_start", a.3),
            num("arm_swing_duration", a.4),
        ];
        c.push(("takeoff_frame", ParamValue::Integer(48)));
        c
    })
}

/// Position, velocity and acceleration of one coordinate.
type Motion3 = [f64; 3];

fn close3(a: [f64; 3], b: [f64; 3], tol: f64) -> bool {
    a.iter().zip(b).all(|(x, y)| (x - y).abs() <= tol * (1.0 + y.abs()))
}

proptest! {
    // No failure file: these tests live outside src/, where proptest's default file
    // persistence cannot place one; a failure prints its minimal case instead.
    #![proptest_config(ProptestConfig { cases: 64, failure_persistence: None, ..ProptestConfig::default() })]

    /// Free fall: in flight the only external force is gravity, so the whole-body COM follows
    /// z = z_to + v_to tau - g tau^2 / 2 with x and y constant (closed form of uniformly
    /// accelerated motion; Halliday, Resnick & Walker, Fundamentals of Physics, ch. 2 and 4).
    /// z_to and v_to are taken from the contact side (the propulsion closed form at take-off),
    /// the path from the node's output at 240 fps; to 1e-9 relative.
    #[test]
    fn flight_is_ballistic(c in jump_changes()) {
        let plan = plan(&c);
        prop_assume!(plan.is_ok());
        let r = run_at(240, &c).expect("same parameters as the plan");
        let t_to = r.s("takeoff_time");
        let before = plan.expect("checked").state_in(Phase::Propulsion, t_to).com;
        let (z0, v0) = (before.position[2], before.velocity[2]);
        let mut flight_frames = 0;
        for i in 0..r.frames() {
            if r.contact(i) {
                continue;
            }
            flight_frames += 1;
            let tau = r.tl.time(i) - t_to;
            let want = z0 + v0 * tau - 0.5 * G * tau * tau;
            let p = r.frame("com_position", i);
            prop_assert!(rel(p[2], want) < 1e-9, "frame {i}: z {} vs {want}", p[2]);
            let x = before.position[0] + before.velocity[0] * tau;
            prop_assert!((p[0] - x).abs() < 1e-9 && p[1] == 0.0, "frame {i}: x {} vs {x}, y {}", p[0], p[1]);
            // Relative to the take-off speed, the velocity's own scale: near the apex the
            // velocity itself passes through zero and a relative error of it means nothing.
            let v = r.frame("com_velocity", i)[2];
            prop_assert!((v - (v0 - G * tau)).abs() <= 1e-9 * v0.abs(), "frame {i}: vz {v} vs {}", v0 - G * tau);
            prop_assert!(rel(r.z("com_acceleration", i), -G) < 1e-12);
            prop_assert!(r.frame("foot_height", i)[0] >= 0.0);
        }
        // A flight of at least 2 v/g minus the arms' effect lasts many frames at 240 fps.
        prop_assert!(flight_frames >= 10, "{flight_frames} flight frames");
        prop_assert!(rel(r.s("flight_time"), r.s("touchdown_time") - t_to) < 1e-12);
    }

    /// Continuity (momentum cannot jump without an infinite force; the force profile is
    /// continuous): the whole-body COM velocity agrees across take-off and touch-down, and
    /// position, velocity and acceleration agree where each piece of the plan meets the next,
    /// each closed form evaluated at the junction from both sides, and the dispatching state a
    /// nanosecond either side.
    #[test]
    fn motion_is_continuous_across_phases(c in jump_changes()) {
        let plan = plan(&c);
        prop_assume!(plan.is_ok());
        let plan = plan.expect("checked");
        let (t_to, t_td) = (plan.takeoff_time, plan.touchdown_time);
        for (a, b, t) in [(Phase::Propulsion, Phase::Flight, t_to), (Phase::Flight, Phase::Landing, t_td)] {
            let (l, r) = (plan.state_in(a, t).com, plan.state_in(b, t).com);
            let dv = (0..3).map(|k| (l.velocity[k] - r.velocity[k]).abs()).fold(0.0, f64::max);
            prop_assert!(dv < 1e-6, "{a:?}/{b:?} velocity jumps by {dv}");
            // The ground force is zero on both sides: whole-body acceleration -g.
            prop_assert!((l.acceleration[2] + G).abs() < 1e-9 && (r.acceleration[2] + G).abs() < 1e-9);
            let (l, r) = (plan.state(t - 1e-9).com, plan.state(t + 1e-9).com);
            let dv = (0..3).map(|k| (l.velocity[k] - r.velocity[k]).abs()).fold(0.0, f64::max);
            prop_assert!(dv < 1e-6, "{a:?}/{b:?} velocity jumps by {dv} across {t}");
        }
        // Each contact piece starts where the one before ends (the flight between take-off
        // and touch-down is checked above), standing before the first and after the last.
        let pieces = &plan.pieces;
        let mut pairs: Vec<(Motion3, Motion3, f64)> = Vec::new();
        let first = pieces[0].1;
        pairs.push(([plan.standing_height, 0.0, 0.0], first.eval(first.start()), first.start()));
        for w in pieces.windows(2) {
            let (a, b) = (w[0].1, w[1].1);
            if w[0].0 == Phase::Propulsion && w[1].0 == Phase::Landing {
                continue;
            }
            pairs.push((a.eval(b.start()), b.eval(b.start()), b.start()));
        }
        let last = pieces[pieces.len() - 1].1;
        pairs.push((last.eval(last.end()), [plan.settled_height, 0.0, 0.0], last.end()));
        // Forward motion: continuous in position, velocity and acceleration where the push
        // starts, at take-off and touch-down (no horizontal force with no vertical one), and
        // where the landing ends.
        let t_land = plan.touchdown_time + plan.landing_duration;
        for (a, b, t) in [
            (Phase::Braking, Phase::Propulsion, plan.lowest_time),
            (Phase::Propulsion, Phase::Flight, t_to),
            (Phase::Flight, Phase::Landing, t_td),
            (Phase::Landing, Phase::Recovery, t_land),
        ] {
            let (l, r) = (plan.state_in(a, t).com, plan.state_in(b, t).com);
            prop_assert!((l.position[0] - r.position[0]).abs() < 1e-12, "{a:?}/{b:?} x {l:?} {r:?}");
            prop_assert!((l.velocity[0] - r.velocity[0]).abs() < 1e-10, "{a:?}/{b:?} vx {l:?} {r:?}");
            prop_assert!((l.acceleration[0] - r.acceleration[0]).abs() < 1e-8, "{a:?}/{b:?} ax {l:?} {r:?}");
        }
        for (x, y, t) in pairs {
            prop_assert!((x[0] - y[0]).abs() < 1e-12 * (1.0 + y[0].abs()), "position {x:?} {y:?} at {t}");
            prop_assert!((x[1] - y[1]).abs() < 1e-10 * (1.0 + y[1].abs()), "velocity {x:?} {y:?} at {t}");
            prop_assert!((x[2] - y[2]).abs() < 1e-8 * (1.0 + y[2].abs()), "acceleration {x:?} {y:?} at {t}");
        }
    }

    /// Impulse-momentum theorem (Linthorne 2001, Am. J. Phys. 69(11):1198-1204): from rest,
    /// the net vertical impulse over the contact before take-off, integral of F - m g = m a_z,
    /// equals m v_z at take-off. Composite Simpson on the plan's acceleration, split at the
    /// segment and swing boundaries; to 1e-6 relative.
    #[test]
    fn impulse_before_takeoff_is_takeoff_momentum(c in jump_changes()) {
        let plan = plan(&c);
        prop_assume!(plan.is_ok());
        let plan = plan.expect("checked");
        let m = plan.spec.body_mass;
        let impulse = net_impulse(&plan, m);
        let momentum = m * plan.takeoff_speed;
        prop_assert!(rel(impulse, momentum) < 1e-6, "impulse {impulse} vs m v {momentum}");
    }

    /// The landing stops the fall without a rebound: from touch-down to the lowest point the
    /// centre of mass never moves up and the ground never pulls (force >= 0), and it ends at
    /// rest `landing_depth` below standing with one body weight (static equilibrium).
    #[test]
    fn the_landing_stops_the_fall_without_a_rebound(c in jump_changes()) {
        let plan = plan(&c);
        prop_assume!(plan.is_ok());
        let plan = plan.expect("checked");
        let (t0, t1) = (plan.touchdown_time, plan.touchdown_time + plan.landing_duration);
        for i in 0..=400 {
            let st = plan.state_in(Phase::Landing, t0 + (t1 - t0) * f64::from(i) / 400.0).com;
            prop_assert!(st.velocity[2] <= 1e-12, "moves up at {i}: {:?}", st.velocity);
            prop_assert!(G + st.acceleration[2] >= -1e-9, "pulls at {i}: {:?}", st.acceleration);
        }
        let end = plan.state_in(Phase::Landing, t1).com;
        prop_assert!((end.position[2] - (plan.settled_height - plan.spec.landing_depth)).abs() < 1e-12);
        prop_assert!(end.velocity[2].abs() < 1e-12 && end.acceleration[2].abs() < 1e-9, "{end:?}");
    }

    /// plan_by = rise: the apex of the whole-body COM (found by golden-section search on the
    /// evaluated path, not from the take-off formula) is the standing height plus `rise`, to
    /// 1e-9 relative, whatever the arms do.
    #[test]
    fn rise_drive_reaches_the_requested_rise(c in jump_changes(), rise in 0.3..0.6f64) {
        let mut c = c;
        c.push(("plan_by", ParamValue::Choice("rise".into())));
        c.push(num("rise", rise));
        let plan = plan(&c);
        prop_assume!(plan.is_ok());
        let plan = plan.expect("checked");
        let got = apex_by_search(&plan) - plan.standing_height;
        prop_assert!(rel(got, rise) < 1e-9, "rise {got} vs {rise}");
    }
}

/// Integral of m a_z from the first motion to take-off (composite Simpson, 20 000 intervals
/// per smooth piece).
fn net_impulse(plan: &Plan, m: f64) -> f64 {
    let t_to = plan.takeoff_time;
    let mut cuts: Vec<f64> = plan.pieces.iter().flat_map(|(_, p)| [p.start(), p.end()]).collect();
    cuts.extend([plan.start(), t_to]);
    if plan.arms.moves() {
        cuts.extend([plan.arms.start, plan.arms.end()]);
    }
    let mut cuts: Vec<f64> = cuts.into_iter().filter(|&t| t >= plan.start() && t <= t_to).collect();
    cuts.sort_by(f64::total_cmp);
    cuts.dedup();
    cuts.windows(2)
        .map(|w| {
            simpson(
                |t| m * plan.state_in(plan.phase(t.min(t_to)), t).com.acceleration[2],
                w[0],
                w[1],
                20_000,
            )
        })
        .sum()
}

fn apex_by_search(plan: &Plan) -> f64 {
    golden_max(
        |t| plan.state(t).com.position[2],
        plan.takeoff_time,
        plan.touchdown_time,
    )
    .1
}

/// Impulse-momentum theorem (Linthorne 2001) for the defaults and for no swing, with the
/// measured figures printed.
#[test]
fn impulse_matches_momentum_for_the_defaults() {
    for changes in [vec![], vec![no_swing()], vec![speed_mode()]] {
        let p = plan(&changes).expect("valid");
        let m = p.spec.body_mass;
        let (i, mv) = (net_impulse(&p, m), m * p.takeoff_speed);
        println!(
            "{changes:?}: impulse {i:.9} N s, m v_to {mv:.9} N s, relative difference {:.1e}",
            rel(i, mv)
        );
        assert!(rel(i, mv) < 1e-6, "{i} vs {mv}");
    }
}

/// With no arm motion in flight the trunk keeps a fixed offset from the COM, so the feet are
/// back at take-off height when the parabola is: flight time 2 v / g (closed form of free
/// fall, Halliday, Resnick & Walker, ch. 4). The bisection is to 1e-12 s.
#[test]
fn touchdown_without_arm_motion_in_flight_is_two_v_over_g() {
    for changes in [
        vec![no_swing()],
        vec![num("arm_swing_start", -0.5), num("arm_swing_duration", 0.3)],
        vec![
            speed_mode(),
            no_swing(),
            num("takeoff_speed", 3.1),
            num("landing_depth", 0.25),
        ],
    ] {
        let p = plan(&changes).expect("valid");
        let flight = p.touchdown_time - p.takeoff_time;
        let want = 2.0 * p.takeoff_speed / G;
        println!("{changes:?}: flight {flight:.12} s, 2 v / g {want:.12} s");
        assert!((flight - want).abs() < 2e-12, "{flight} vs {want}");
    }
}

/// Dempster's segments as tabulated in Winter (2009), Biomechanics and Motor Control of Human
/// Movement, 4th ed., Table 4.1: (mass fraction, centre of mass from the proximal end), typed
/// here from the table for the tests (the node has its own copy).
const HEAD_NECK: (f64, f64) = (0.081, 1.000);
const TRUNK: (f64, f64) = (0.497, 0.50);
const UPPER_ARM: (f64, f64) = (0.028, 0.436);
const FOREARM: (f64, f64) = (0.016, 0.430);
const HAND: (f64, f64) = (0.006, 0.506);
const THIGH: (f64, f64) = (0.100, 0.433);
const SHANK: (f64, f64) = (0.0465, 0.433);
const FOOT: (f64, f64) = (0.0145, 0.50);

/// The whole-body centre of mass is the mass-weighted sum of the segments' centres
/// (definition), rebuilt here from the node's joint outputs at every frame with Winter's
/// Table 4.1 rows (head and neck from the neck to the head joint, trunk from the mid-hips
/// to the mid-shoulders, hand from the wrist to 0.4 forearm lengths beyond it, foot from the
/// ankle to the ball): it equals the planned `com_position` to 1e-9 m, and the body without
/// the arms equals `trunk_position`.
#[test]
fn com_is_the_mass_weighted_sum_of_the_segments() {
    for changes in [vec![], vec![speed_mode(), num("body_height", 1.9)]] {
        let r = run_at(100, &changes).expect("valid");
        let mut worst: f64 = 0.0;
        for i in 0..r.frames() {
            let p = |name: &str| -> [f64; 3] {
                let f = r.frame(name, i);
                [f[0], f[1], f[2]]
            };
            let mut sum = [0.0; 3];
            let mut rest = [0.0; 3];
            let mut rest_mass = 0.0;
            let mut add = |row: (f64, f64), a: [f64; 3], b: [f64; 3], arm: bool| {
                for k in 0..3 {
                    let c = a[k] + row.1 * (b[k] - a[k]);
                    sum[k] += row.0 * c;
                    if !arm {
                        rest[k] += row.0 * c;
                    }
                }
                if !arm {
                    rest_mass += row.0;
                }
            };
            let mid = |a: [f64; 3], b: [f64; 3]| [0.5 * (a[0] + b[0]), 0.5 * (a[1] + b[1]), 0.5 * (a[2] + b[2])];
            add(HEAD_NECK, p("neck"), p("head"), false);
            add(TRUNK, p("hips"), mid(p("shoulder_l"), p("shoulder_r")), false);
            for side in ["l", "r"] {
                let (sh, el, wr) = (
                    p(&format!("upper_arm_{side}")),
                    p(&format!("forearm_{side}")),
                    p(&format!("hand_{side}")),
                );
                let knuckle = [0, 1, 2].map(|k| wr[k] + 0.4 * (wr[k] - el[k]));
                add(UPPER_ARM, sh, el, true);
                add(FOREARM, el, wr, true);
                add(HAND, wr, knuckle, true);
                add(THIGH, p(&format!("thigh_{side}")), p(&format!("shin_{side}")), false);
                add(SHANK, p(&format!("shin_{side}")), p(&format!("foot_{side}")), false);
                add(FOOT, p(&format!("foot_{side}")), p(&format!("toe_{side}")), false);
            }
            let com = r.frame("com_position", i);
            let trunk = r.frame("trunk_position", i);
            for k in 0..3 {
                // The table's rows sum to 1.000.
                worst = worst.max((sum[k] - com[k]).abs());
                assert!(
                    (rest[k] / rest_mass - trunk[k]).abs() < 1e-9,
                    "frame {i}: body without arms"
                );
            }
        }
        println!("{changes:?}: the segments' centre of mass is the planned one to {worst:.1e} m");
        assert!(worst < 1e-9, "{worst}");
    }
}

/// Velocity and acceleration are the time derivatives of position (central differences,
/// O(h^2)) in every phase: checks the closed-form integration of each piece.
#[test]
fn velocities_and_accelerations_are_derivatives() {
    let p = plan(&[speed_mode()]).expect("valid");
    let h = 1e-5;
    let mut t = p.start() + 0.0123;
    let mut checked = 0;
    while t < p.end() {
        let ph = p.phase(t);
        if p.phase(t - h) == ph && p.phase(t + h) == ph {
            let (a, b, c) = (p.state(t - h), p.state(t), p.state(t + h));
            for (m, l, r) in [(b.com, a.com, c.com)] {
                for k in [0, 2] {
                    let v = (r.position[k] - l.position[k]) / (2.0 * h);
                    let acc = (r.velocity[k] - l.velocity[k]) / (2.0 * h);
                    assert!(
                        (v - m.velocity[k]).abs() < 1e-5,
                        "{ph:?} at {t}: v {v} vs {}",
                        m.velocity[k]
                    );
                    assert!(
                        (acc - m.acceleration[k]).abs() < 1e-3,
                        "{ph:?} at {t}: a {acc} vs {}",
                        m.acceleration[k]
                    );
                }
            }
            checked += 1;
        }
        t += 0.0071;
    }
    assert!(checked > 250, "{checked}");
}

/// Arm swing during the push (Lees, Vanrenterghem & De Clercq 2004, J Biomech 37:1929-40:
/// swinging the arms raised jump height by 0.086 m, 28 % of it from a higher COM at
/// take-off). plan_by = takeoff_speed, the same trunk take-off speed, swing against no swing: higher
/// peak ground force in the push, higher COM and faster COM at take-off, higher apex, and a
/// gain of 10 to 40 % of the no-swing rise. Forces from the node's output at 1000 fps,
/// F = m (g + a_z) in contact (Newton's second law).
#[test]
fn arm_swing_in_the_push_raises_the_jump() {
    let with = run_at(1000, &[speed_mode()]).expect("valid");
    let without = run_at(1000, &[speed_mode(), no_swing()]).expect("valid");
    let m = 58.0;
    let peak_push = |r: &Run| {
        (0..r.frames())
            .filter(|&i| r.contact(i) && r.tl.time(i) <= r.s("takeoff_time"))
            .map(|i| m * (G + r.z("com_acceleration", i)))
            .fold(f64::MIN, f64::max)
    };
    let (fw, fo) = (peak_push(&with), peak_push(&without));
    let (gain, height_gain) = (
        with.s("rise") - without.s("rise"),
        with.s("takeoff_height") - without.s("takeoff_height"),
    );
    println!(
        "peak push force {fw:.1} N ({:.2} BW) vs {fo:.1} N ({:.2} BW); take-off height {:.4} vs {:.4} m; take-off \
         speed {:.4} vs {:.4} m/s; rise {:.4} vs {:.4} m: gain {gain:.4} m = {:.1} % of the no-swing rise, {:.1} % \
         of it from the higher take-off height",
        fw / (m * G),
        fo / (m * G),
        with.s("takeoff_height"),
        without.s("takeoff_height"),
        with.s("takeoff_speed"),
        without.s("takeoff_speed"),
        with.s("rise"),
        without.s("rise"),
        100.0 * gain / without.s("rise"),
        100.0 * height_gain / gain
    );
    assert!(fw > fo);
    assert!(with.s("takeoff_height") > without.s("takeoff_height"));
    assert!(with.s("takeoff_speed") > without.s("takeoff_speed"));
    assert!(with.s("apex_height") > without.s("apex_height"));
    // Without arm motion at take-off the speed is exactly the legs' (plan_by = takeoff_speed, 2.4 m/s).
    assert!((without.s("takeoff_speed") - 2.4).abs() < 1e-12);
    assert!(gain > 0.0);
    let share = gain / without.s("rise");
    assert!((0.10..=0.40).contains(&share), "gain {share}");
    // Both the height and the speed contribute (Lees et al. 2004: 28 % / 72 %).
    assert!(height_gain > 0.0 && height_gain < gain);
}

/// Conservation of momentum in flight (no external force but gravity): arms swung after
/// take-off and done before touch-down leave the COM parabola unchanged, to 1e-9 relative at
/// every flight frame before the earlier touch-down; the body without the arms goes down
/// while the arms go up, by k r (cos theta_from - cos theta_to) with k = 0.100 the arms'
/// mass fraction and r the distance of a straight arm's centre of mass from the shoulder,
/// summed here from Winter's (2009) Table 4.1 rows on Drillis & Contini's lengths (COM
/// definition), and the feet land earlier.
#[test]
fn arm_swing_in_flight_leaves_the_com_path_alone() {
    let swing = [num("arm_swing_start", 0.05), num("arm_swing_duration", 0.2)];
    let with = run_at(1000, &swing).expect("valid");
    let without = run_at(1000, &[no_swing()]).expect("valid");
    let t_to = with.s("takeoff_time");
    assert_eq!(t_to, without.s("takeoff_time"));
    let end = with.s("touchdown_time").min(without.s("touchdown_time"));
    assert!(t_to + 0.25 < end, "the swing ends before touch-down");
    let mut n = 0;
    for i in 0..with.frames() {
        let t = with.tl.time(i);
        if t <= t_to || t >= end {
            continue;
        }
        for k in 0..3 {
            let (a, b) = (with.frame("com_position", i)[k], without.frame("com_position", i)[k]);
            assert!(
                (a - b).abs() <= 1e-9 * b.abs().max(1.0),
                "frame {i} axis {k}: {a} vs {b}"
            );
        }
        n += 1;
    }
    assert!(n > 300, "{n} flight frames compared");
    let i = (0..with.frames())
        .find(|&i| with.tl.time(i) >= t_to + 0.25)
        .expect("frame at the end of the swing");
    let drop = without.z("trunk_position", i) - with.z("trunk_position", i);
    let h = 1.65;
    let (u, f) = (0.186 * h, 0.146 * h);
    let arm_radius =
        (UPPER_ARM.0 * UPPER_ARM.1 * u + FOREARM.0 * (u + FOREARM.1 * f) + HAND.0 * (u + f + HAND.1 * 0.4 * f))
            / (UPPER_ARM.0 + FOREARM.0 + HAND.0);
    let k = 2.0 * (UPPER_ARM.0 + FOREARM.0 + HAND.0);
    let want = k * arm_radius * ((-40.0 * DEG).cos() - (160.0 * DEG).cos());
    println!(
        "trunk {drop:.6} m lower at the end of the swing (expected {want:.6} m); touch-down {:.4} s vs {:.4} s",
        with.s("touchdown_time"),
        without.s("touchdown_time")
    );
    assert!((drop - want).abs() < 1e-9, "{drop} vs {want}");
    assert!(with.s("touchdown_time") < without.s("touchdown_time"));
}

/// Quiet standing is static equilibrium (Newton's first law): a_z = 0, so F = m g, and the
/// COM is at the standing height the segments give. A shallower landing gives a higher peak
/// ground force, a few body weights: between 2 and 6 BW for these (common practice, no
/// source; from memory, drop-landing studies report peaks of roughly 2 to 6 BW for drops of a
/// few tenths of a metre).
#[test]
fn standing_weighs_one_body_weight_and_a_stiff_landing_several() {
    let r = run_at(1000, &[]).expect("valid");
    let p = plan(&[]).expect("valid");
    let t_cm = p.countermovement_start;
    let mut n = 0;
    for i in (0..r.frames()).filter(|&i| r.tl.time(i) < t_cm) {
        assert!(r.z("com_acceleration", i).abs() < 1e-12, "frame {i}");
        assert!((r.z("com_position", i) - r.s("standing_com_height")).abs() < 1e-12);
        n += 1;
    }
    assert!(n > 1000, "{n} standing frames");
    let stiff = run_at(1000, &[num("landing_depth", 0.12)]).expect("valid");
    let peak = stiff.s("peak_landing_force");
    // The summary is the largest (g + a_z) / g over the landing; the frames agree with it.
    let from_frames = (0..stiff.frames())
        .filter(|&i| stiff.contact(i) && stiff.tl.time(i) > stiff.s("takeoff_time"))
        .map(|i| (G + stiff.z("com_acceleration", i)) / G)
        .fold(f64::MIN, f64::max);
    println!(
        "peak landing force {peak:.3} BW (frames: {from_frames:.3} BW) in {:.3} s; defaults {:.3} BW in {:.3} s",
        stiff.s("landing_duration"),
        r.s("peak_landing_force"),
        r.s("landing_duration")
    );
    assert!((2.0..=6.0).contains(&peak), "{peak}");
    assert!(from_frames <= peak + 1e-9 && from_frames > peak - 1e-3);
    assert!(r.s("peak_landing_force") < peak, "a deeper landing peaks lower");
    assert!(r.s("landing_duration") > stiff.s("landing_duration"));
}

/// plan_by = rise with the default swing (during the push and into the flight) and with no
/// swing: the apex found by search is the standing height plus `rise` (1e-9 relative), and the
/// node's summaries report it.
#[test]
fn rise_drive_with_and_without_swing() {
    let by_rise = ("plan_by", ParamValue::Choice("rise".into()));
    for changes in [
        vec![by_rise.clone()],
        vec![by_rise.clone(), no_swing()],
        vec![by_rise.clone(), num("rise", 0.5), num("arm_swing_start", 0.0)],
    ] {
        let p = plan(&changes).expect("valid");
        let Drive::Rise(want) = p.spec.drive else {
            unreachable!("plan_by = rise is set")
        };
        let got = apex_by_search(&p) - p.standing_height;
        println!("{changes:?}: rise {got:.12} m");
        assert!(rel(got, want) < 1e-9, "{got} vs {want}");
        let r = run_at(24, &changes).expect("valid");
        assert!(rel(r.s("rise"), want) < 1e-12);
        assert!(rel(r.s("apex_height"), p.standing_height + want) < 1e-12);
    }
}

/// Analytic evaluation: 24 fps and 1000 fps give the same values at the same times (t = k/8 s),
/// and the landmarks ride on the upright trunk at their fixed offsets with an identity rotation.
#[test]
fn any_frame_rate_gives_the_same_path() {
    let (a, b) = (run_at(24, &[]).expect("valid"), run_at(1000, &[]).expect("valid"));
    for k in 0..40usize {
        let (i, j) = (3 * k, 125 * k);
        assert_eq!(a.tl.time(i), b.tl.time(j));
        for name in ["com_position", "com_velocity", "trunk_position", "head"] {
            assert_eq!(a.frame(name, i), b.frame(name, j), "{name} at {} s", a.tl.time(i));
        }
    }
    for s in ["takeoff_speed", "touchdown_time", "peak_landing_force"] {
        assert_eq!(a.s(s), b.s(s), "{s}");
    }
    let h = 1.65;
    for i in 0..b.frames() {
        let (head, hips, chest) = (b.frame("head", i), b.frame("hips", i), b.frame("chest", i));
        // Winter (2009) Fig. 4.1: eyes 0.936 H, chest 0.720 H, hips 0.530 H; the trunk upright.
        assert!((head[2] - hips[2] - (0.936 - 0.530) * h).abs() < 1e-12);
        assert!((chest[2] - hips[2] - (0.720 - 0.530) * h).abs() < 1e-12);
        assert_eq!(&head[3..], &[0.0, 0.0, 0.0, 1.0]);
        assert_eq!(head[0], hips[0]);
    }
}

/// The flags and the foot height: in contact the feet are on the ground; in flight they are
/// above it; the take-off frame is the last contact frame.
#[test]
fn contact_flag_and_feet() {
    let r = run_at(24, &[]).expect("valid");
    let (t_to, t_td) = (r.s("takeoff_time"), r.s("touchdown_time"));
    for i in 0..r.frames() {
        let t = r.tl.time(i);
        let flying = t > t_to && t < t_td;
        assert_eq!(r.contact(i), !flying, "frame {i}");
        let f = r.frame("foot_height", i)[0];
        if flying {
            assert!(f > 0.0, "frame {i}: {f}");
        } else {
            assert_eq!(f, 0.0);
        }
    }
    assert!(r.contact(48) && !r.contact(49), "take-off at frame 48");
    assert!(r.warnings.is_empty(), "{:?}", r.warnings);
}

/// Frames that do not cover the jump are allowed, with a warning naming the jump's span.
#[test]
fn frames_that_miss_part_of_the_jump_warn() {
    let r = run(&params(&[]), timeline(24, 40, 10)).expect("allowed");
    assert_eq!(r.warnings.len(), 1, "{:?}", r.warnings);
    assert!(r.warnings[0].contains("frames 40..49") && r.warnings[0].contains("takeoff_frame"));
}

fn error(changes: &[(&'static str, ParamValue)]) -> String {
    match run_at(24, changes) {
        Ok(_) => panic!("{changes:?} should be refused"),
        Err(e) => e.0,
    }
}

/// Impossible jumps are refused with a message that names the parameter to change and which
/// way.
#[test]
fn impossible_jumps_are_refused_with_the_parameter_to_change() {
    // Deeper than hips at knee height: 0.245 x 1.65 m = 0.404 m.
    let e = error(&[num("crouch_depth", 0.45)]);
    assert!(e.contains("`crouch_depth`") && e.contains("0.404"), "{e}");
    // An apex below the take-off height.
    let e = error(&[("plan_by", ParamValue::Choice("rise".into())), num("rise", 0.05)]);
    assert!(e.contains("raise `rise` above") && e.contains("`jump_height`"), "{e}");
    // A countermovement faster than free fall: the ground would have to pull.
    let e = error(&[num("countermovement_duration", 0.15)]);
    assert!(
        e.contains("countermovement") && e.contains("`countermovement_duration` longer"),
        "{e}"
    );
    // A small hop after a deep, quick dip: its push cannot stop the dive in time.
    let e = error(&[
        num("jump_height", 0.05),
        num("crouch_depth", 0.38),
        num("countermovement_duration", 0.4),
    ]);
    assert!(
        e.contains("`countermovement_duration` longer") && e.contains("`crouch_depth` smaller"),
        "{e}"
    );
    // A landing deeper than the body allows.
    let e = error(&[num("landing_depth", 0.6)]);
    assert!(e.contains("reduce `landing_depth`"), "{e}");
    // An ankle lift past the foot upright on its ball.
    let e = error(&[num("takeoff_extension", 0.2)]);
    assert!(e.contains("reduce `takeoff_extension`"), "{e}");
    // A small hop whose arms fly up right after take-off: the feet come down before the apex.
    let e = error(&[
        speed_mode(),
        num("takeoff_speed", 0.3),
        num("crouch_depth", 0.05),
        num("arm_swing_from", 90.0 * DEG),
        num("arm_swing_to", 180.0 * DEG),
        num("arm_swing_start", 0.0),
        num("arm_swing_duration", 0.06),
    ]);
    assert!(
        e.contains("before the centre of mass reaches its apex") && e.contains("`arm_swing_start`"),
        "{e}"
    );
}

/// Any parameter set inside the declared ranges.
fn any_changes() -> impl Strategy<Value = Changes> {
    // Crouch and landing depth drawn mostly where the body allows them (up to 0.25 H), so
    // that many draws get past the first checks.
    let body = (20.0..300.0f64, 0.8..2.5f64, 0.0..0.25f64, 0.0..0.3f64, 0.0..0.9f64);
    let drive = (0..3u8, 0.01..2.0f64, 0.1..8.0f64, -1_000_000..1_000_000i64);
    let times = (0.05..5.0f64, 0.0..0.25f64, 0.05..10.0f64);
    let arms = (-180.0..180.0f64, -180.0..180.0f64, -5.0..5.0f64, 0.05..5.0f64);
    (body, drive, times, arms).prop_map(|(b, d, t, a)| {
        vec![
            num("body_mass", b.0),
            num("body_height", b.1),
            num("crouch_depth", (b.2 * b.1).max(0.01)),
            num("takeoff_extension", b.3),
            num("push_hold", b.4),
            (
                "plan_by",
                ParamValue::Choice(["rise", "takeoff_speed", "jump_height"][usize::from(d.0)].into()),
            ),
            num("rise", d.1),
            num("jump_height", d.1),
            num("takeoff_speed", d.2),
            ("takeoff_frame", ParamValue::Integer(d.3)),
            num("countermovement_duration", t.0),
            num("landing_depth", (t.1 * b.1).clamp(0.01, 1.0)),
            num("recovery_duration", t.2),
            num("arm_swing_from", a.0 * DEG),
            num("arm_swing_to", a.1 * DEG),
            num("arm_swing_start", a.2),
            num("arm_swing_duration", a.3),
        ]
    })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 512, failure_persistence: None, ..ProptestConfig::default() })]

    /// Over the whole declared parameter ranges the node either refuses the jump with a
    /// message that names a parameter or writes finite values everywhere (the host rejects
    /// NaN and infinity), with the feet never below the ground.
    #[test]
    fn any_declared_parameters_give_an_error_or_finite_output(c in any_changes()) {
        let tf = match c.iter().find(|(n, _)| *n == "takeoff_frame") {
            Some((_, ParamValue::Integer(f))) => *f,
            _ => 0,
        };
        match run(&params(&c), timeline(24, tf - 24 * 15, 24 * 40)) {
            Err(e) => prop_assert!(e.0.contains('`'), "an error without a parameter name: {}", e.0),
            Ok(r) => {
                for (name, (v, _)) in &r.out {
                    prop_assert!(v.iter().all(|x| x.is_finite()), "{name} is not finite");
                }
                for (name, v) in &r.summary {
                    prop_assert!(v.is_finite(), "summary {name} is {v}");
                }
                for i in 0..r.frames() {
                    prop_assert!(r.frame("foot_height", i)[0] >= 0.0);
                }
            }
        }
    }
}

/// The body's joints: rigid limb segments of the lengths of Drillis & Contini's proportions
/// (Winter 2009, Fig. 4.1: upper arm 0.186 H, forearm 0.146 H, thigh hip to knee 0.530 - 0.285 H,
/// shank knee to ankle 0.285 - 0.039 H) at every frame of the default jump; each segment's
/// transform points its local -Z along the segment; the arms hang at the planner's arm angle;
/// standing, the legs are straight; in the crouch the knees bend forward; left and right
/// mirror each other across y = 0.
#[test]
fn the_bodys_joints_are_rigid_segments_that_follow_the_plan() {
    let r = run_at(24, &[]).expect("runs");
    let h = 1.65;
    let p = |name: &str, i: usize| -> [f64; 3] {
        let f = r.frame(name, i);
        [f[0], f[1], f[2]]
    };
    let q = |name: &str, i: usize| -> [f64; 4] {
        let f = r.frame(name, i);
        [f[3], f[4], f[5], f[6]]
    };
    let dist =
        |a: [f64; 3], b: [f64; 3]| ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)).sqrt();
    // Rotates (0, 0, -1) by a unit quaternion (x, y, z, w): the third column of its matrix, negated.
    let minus_z = |q: [f64; 4]| {
        let [x, y, z, w] = q;
        [
            -2.0 * (x * z + y * w),
            -2.0 * (y * z - x * w),
            -(1.0 - 2.0 * (x * x + y * y)),
        ]
    };
    let mut bent = false;
    for i in 0..r.frames() {
        for side in ["l", "r"] {
            let (sh, el, wr) = (
                p(&format!("upper_arm_{side}"), i),
                p(&format!("forearm_{side}"), i),
                p(&format!("hand_{side}"), i),
            );
            let (hip, knee, ankle) = (
                p(&format!("thigh_{side}"), i),
                p(&format!("shin_{side}"), i),
                p(&format!("foot_{side}"), i),
            );
            assert!((dist(sh, el) - 0.186 * h).abs() < 1e-12 && (dist(el, wr) - 0.146 * h).abs() < 1e-12);
            assert!((dist(hip, knee) - 0.245 * h).abs() < 1e-12 && (dist(knee, ankle) - 0.246 * h).abs() < 1e-12);
            let theta = r.frame("arm_angle", i)[0];
            assert!((wr[2] - sh[2] + 0.332 * h * theta.cos()).abs() < 1e-12, "frame {i}");
            for (joint, from, to) in [("upper_arm", sh, el), ("thigh", hip, knee), ("shin", knee, ankle)] {
                let d = minus_z(q(&format!("{joint}_{side}"), i));
                let len = dist(from, to);
                for k in 0..3 {
                    assert!(
                        (d[k] - (to[k] - from[k]) / len).abs() < 1e-12,
                        "{joint}_{side} frame {i}"
                    );
                }
            }
            bent |= knee[0] - 0.5 * (hip[0] + ankle[0]) > 0.05;
        }
        let (l, rr) = (p("shoulder_l", i), p("shoulder_r", i));
        assert!((l[1] + rr[1]).abs() < 1e-12 && (l[1] - rr[1] - 0.259 * h).abs() < 1e-12);
    }
    // Standing at frame 0: the leg straight (hip to ankle the whole leg, 0.491 H).
    let (hip, ankle) = (p("thigh_l", 0), p("foot_l", 0));
    assert!((dist(hip, ankle) - 0.491 * h).abs() < 1e-9, "{}", dist(hip, ankle) / h);
    assert!(bent, "the knees bend forward in the crouch");
}

/// The body's colliders ride on its joints: at every frame of the default jump, the twelve
/// colliders' ends are the joint outputs (head; hips to neck; shoulder to elbow to wrist; hip
/// joint to knee to ankle; the ankles), in the documented order, and the radii are the
/// documented fractions of the body height (trajectory::body::collider_radii, from memory), the
/// same at every frame.
#[test]
fn the_bodys_colliders_ride_on_its_joints() {
    use heft_node_sdk::colliders::read_frame;
    use heft_trajectory::body::collider_radii as radii;
    let r = run_at(24, &[]).expect("runs");
    let h = 1.65;
    let p = |name: &str, i: usize| -> [f64; 3] {
        let f = r.frame(name, i);
        [f[0], f[1], f[2]]
    };
    for i in 0..r.frames() {
        let list = read_frame(r.frame("colliders", i)).expect("a whole list");
        let want = [
            (p("head", i), p("head", i), [radii::HEAD; 2]),
            (p("hips", i), p("neck", i), [radii::TRUNK; 2]),
            (p("upper_arm_l", i), p("forearm_l", i), radii::UPPER_ARM),
            (p("upper_arm_r", i), p("forearm_r", i), radii::UPPER_ARM),
            (p("forearm_l", i), p("hand_l", i), radii::FOREARM),
            (p("forearm_r", i), p("hand_r", i), radii::FOREARM),
            (p("thigh_l", i), p("shin_l", i), radii::THIGH),
            (p("thigh_r", i), p("shin_r", i), radii::THIGH),
            (p("shin_l", i), p("foot_l", i), radii::SHIN),
            (p("shin_r", i), p("foot_r", i), radii::SHIN),
            (p("foot_l", i), p("foot_l", i), [radii::FOOT; 2]),
            (p("foot_r", i), p("foot_r", i), [radii::FOOT; 2]),
        ];
        assert_eq!(list.len(), want.len());
        for (k, (c, (a, b, rr))) in list.iter().zip(want).enumerate() {
            assert!(
                close3(c.start, a, 1e-12) && close3(c.end, b, 1e-12),
                "collider {k} at frame {i}: {c:?}"
            );
            assert!(
                (c.start_radius - rr[0] * h).abs() < 1e-15 && (c.end_radius - rr[1] * h).abs() < 1e-15,
                "collider {k} at frame {i}: {c:?}"
            );
        }
    }
}

/// The force curve of the default jump has the measured shape: the ground force is at its
/// largest at the lowest point of the countermovement and at least 1.8 body weights there
/// (the issue's figure; from memory, maximal countermovement jumps of adults peak at about 2
/// to 2.5 BW), the peak of the push within 10 % of it (McHugh, Hickok, Cohen, Virgile &
/// Connolly 2021, "Is there a biomechanically efficient vertical ground reaction force
/// profile for countermovement jumps?", Transl Sports Med 4(1):138-146, abstract: "Peak
/// force occurred at low position in 52% of jumps"), and the unweighting dips to a few
/// tenths of body weight (the same order as the 0.43 BW reported for self-selected
/// countermovement jumps in PMC11208864, "Effect of countermovement depth on the
/// neuromechanics of a vertical jump", abstract; we accept 0.3 to 0.6 BW). The lowest point
/// is where the centre of mass is at rest, `crouch_depth` below standing (to 1e-12 m).
/// Forces from the node's frames at 1000 fps, F = m (g + a_z) (Newton's second law).
#[test]
fn the_default_jump_pushes_hardest_at_its_lowest_point() {
    let r = run_at(1000, &[]).expect("valid");
    let p = plan(&[]).expect("valid");
    let low = p.state(p.lowest_time).com;
    assert!(low.velocity[2].abs() < 1e-12, "{:?}", low.velocity);
    assert!((low.position[2] - (p.standing_height - p.spec.crouch_depth)).abs() < 1e-12);
    let bw = |i: usize| (G + r.z("com_acceleration", i)) / G;
    let (t_low, t_to) = (p.lowest_time, r.s("takeoff_time"));
    let i_low = (0..r.frames())
        .min_by(|&a, &b| (r.tl.time(a) - t_low).abs().total_cmp(&(r.tl.time(b) - t_low).abs()))
        .expect("frames");
    let at_low = bw(i_low);
    let push_peak = (0..r.frames())
        .filter(|&i| r.tl.time(i) >= t_low && r.tl.time(i) <= t_to)
        .map(bw)
        .fold(f64::MIN, f64::max);
    let overall = (0..r.frames())
        .filter(|&i| r.tl.time(i) <= t_to)
        .map(bw)
        .fold(f64::MIN, f64::max);
    let least = (0..r.frames())
        .filter(|&i| r.tl.time(i) <= t_low)
        .map(bw)
        .fold(f64::MAX, f64::min);
    println!(
        "lowest point {at_low:.3} BW at {t_low:.3} s, push peak {push_peak:.3} BW, largest before take-off {overall:.3} \
         BW, least in the unweighting {least:.3} BW; unweighting {:.3} s, braking {:.3} s, push {:.3} s",
        r.s("unweighting_duration"),
        r.s("braking_duration"),
        r.s("push_duration")
    );
    assert!(at_low >= 1.8, "{at_low}");
    assert!(push_peak <= 1.1 * at_low, "{push_peak} vs {at_low}");
    assert!(overall <= 1.1 * at_low, "{overall} vs {at_low}");
    assert!((0.3..=0.6).contains(&least), "{least}");
    assert!((r.s("lowest_point_force") - at_low).abs() < 1e-3);
}

/// Every jump height from 5 cm to 70 cm plans with the defaults (plan_by = jump_height), and
/// the centre of mass rises by exactly that height after take-off (its apex found by search
/// on the evaluated path against h; v^2 / (2 g) of free flight, to 1e-9 relative), with no
/// warning.
#[test]
fn every_jump_height_from_5_to_70_cm_plans_with_the_defaults() {
    for cm in (5..=70).step_by(5) {
        let h = f64::from(cm) / 100.0;
        let p = plan(&[num("jump_height", h)]).unwrap_or_else(|e| panic!("{cm} cm: {}", e.0));
        let got = apex_by_search(&p) - p.takeoff_height;
        println!(
            "{cm} cm: take-off {:.3} m/s, push {:.3} s at {:.2} BW, landing {:.3} s peaking at {:.2} BW",
            p.takeoff_speed, p.durations[2], p.lowest_point_force, p.landing_duration, p.peak_landing_force
        );
        assert!(rel(got, h) < 1e-9, "{cm} cm: {got}");
        assert!(p.warnings.is_empty(), "{cm} cm: {:?}", p.warnings);
    }
}

/// A standing broad jump (forward_speed 2.5 m/s, jump_height 0.15 m: a take-off about 34
/// degrees above the horizontal). In the air the centre of mass follows the exact parabola in
/// both directions, x = x_to + u tau and z = z_to + v tau - g tau^2 / 2 (free flight,
/// Halliday, Resnick & Walker, ch. 4), to 1e-9 m at 240 fps; the horizontal impulse of the push
/// is m u and that of the landing -m u (impulse-momentum theorem, composite Simpson on the
/// plan's horizontal acceleration, to 1e-6 relative); the balls of the feet stay where they
/// stand on the ground (planted, to 1e-12 m) and land where the body ends standing, the
/// jump's distance ahead; the segments' centre of mass is the planned one at every frame.
#[test]
fn a_standing_broad_jump_flies_on_the_exact_parabola() {
    let changes = [num("forward_speed", 2.5), num("jump_height", 0.15)];
    let p = plan(&changes).expect("valid");
    let r = run_at(240, &changes).expect("valid");
    let (t_to, u) = (p.takeoff_time, 2.5);
    let before = p.state_in(Phase::Propulsion, t_to).com;
    let (x0, z0, v0) = (before.position[0], before.position[2], before.velocity[2]);
    assert!((before.velocity[0] - u).abs() < 1e-12, "{:?}", before.velocity);
    let mut flight = 0;
    for i in 0..r.frames() {
        if r.contact(i) {
            continue;
        }
        flight += 1;
        let tau = r.tl.time(i) - t_to;
        let c = r.frame("com_position", i);
        assert!((c[0] - (x0 + u * tau)).abs() < 1e-9, "frame {i}: x {}", c[0]);
        assert!((c[2] - (z0 + v0 * tau - 0.5 * G * tau * tau)).abs() < 1e-9, "frame {i}");
    }
    assert!(flight > 50, "{flight}");
    let m = p.spec.body_mass;
    let impulse =
        |t0: f64, t1: f64, phase: Phase| simpson(|t| m * p.state_in(phase, t).com.acceleration[0], t0, t1, 20_000);
    let push = impulse(p.lowest_time, t_to, Phase::Propulsion);
    let land = impulse(p.touchdown_time, p.touchdown_time + p.landing_duration, Phase::Landing);
    assert!(rel(push, m * u) < 1e-6 && rel(-land, m * u) < 1e-6, "{push} {land}");
    // Planted feet, and where they land.
    let ball = |i: usize| r.frame("toe_l", i)[0];
    let (first, last) = (0, r.frames() - 1);
    for i in 0..r.frames() {
        let t = r.tl.time(i);
        if t <= t_to {
            assert!((ball(i) - ball(first)).abs() < 1e-12, "frame {i}");
        } else if t >= p.touchdown_time {
            assert!((ball(i) - ball(last)).abs() < 1e-12, "frame {i}");
        }
    }
    let distance = r.s("jump_distance");
    assert!(
        (ball(last) - ball(first) - distance).abs() < 1e-9,
        "{} vs {distance}",
        ball(last) - ball(first)
    );
    assert!((r.frame("com_position", last)[0] - distance).abs() < 1e-12);
    println!(
        "broad jump: take-off {:.1} deg, {distance:.3} m, flight {:.3} s; push needs friction {:.2}, landing {:.2}; \
         legs turn {:.1} deg forward in the air",
        v0.atan2(u).to_degrees(),
        r.s("flight_time"),
        r.s("push_friction"),
        r.s("landing_friction"),
        p.leg_swing.to_degrees()
    );
    // The friction shoes on a floor give is of the order of 0.5 to 1 (from memory).
    assert!(r.s("push_friction") < 1.0 && r.s("landing_friction") < 1.0);
    // The body is where the plan puts it, in x too.
    for i in 0..r.frames() {
        let l = p.limbs(r.tl.time(i));
        let c = p.body.centres(&l).0;
        let want = r.frame("com_position", i);
        assert!(
            (c[0] - want[0]).abs() < 1e-9 && (c[2] - want[2]).abs() < 1e-9,
            "frame {i}: {c:?} vs {want:?}"
        );
    }
}

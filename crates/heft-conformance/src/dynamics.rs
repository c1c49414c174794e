//! Any dynamics node, declared by its author: which outputs hold the state and the masses,
//! which parameters set gravity, dissipation and a force-free setting, which output reports the
//! force its anchors put on it, and which inputs are the anchors the kit moves. From that
//! declaration the kit checks momentum balance, energy behaviour, determinism and finiteness,
//! independence of call history, and convergence order, through the real plugin boundary.

use std::cell::{Cell, RefCell};

use heft_node_sdk::abi::Status;
use heft_node_sdk::{Dimension, ParamType, ParamValue, PortKind, PortSpec, Timeline};
use proptest::prelude::*;
use proptest::strategy::Union;

use crate::cases::{V3, Verdict, add, beyond, direction, norm, run_property, scale, sub};
use crate::determinism::{
    Counts, Motion, SENTINEL, all_finite, compare, param_strategy, something_checked, timeline_strategy,
};
use crate::momentum::fmt_v3;
use crate::subject::{Run, RunError, Setup, Subject};
use crate::{Failure, Failures, Property, Tolerances};

/// How the kit knows the masses of a node's points.
#[derive(Debug, Clone, PartialEq)]
pub enum Mass {
    /// Every point of the positions output has the mass this number parameter gives (kg); the
    /// momentum is the sum of m v over the velocities output.
    Each(String),
    /// The total mass is the product of these number parameters (the strand contract: `count`
    /// x `length` x `mass_per_length`); how it is lumped over the points is the node's own, so the
    /// momentum is read from the declared momentum output.
    Product(Vec<String>),
}

/// What a dynamics node's author declares for the kit. Build it with [`Dynamics::new`] and the
/// methods that follow it; [`Dynamics::strand`] is the strand contract's declaration.
#[derive(Debug, Clone, PartialEq)]
pub struct Dynamics {
    positions: String,
    velocities: String,
    mass: Mass,
    momentum: Option<String>,
    energy: Option<String>,
    gravity: Option<String>,
    reaction: Option<String>,
    anchors: Vec<String>,
    dissipation: Vec<String>,
    free: Vec<(String, ParamValue)>,
    substeps: Option<(String, i64)>,
    fixed: Vec<(String, ParamValue)>,
}

impl Dynamics {
    /// A node whose state is the `positions` output (m; a points or vec3 port) moving at the
    /// `velocities` output (m/s), with masses as `mass` says.
    pub fn new(positions: &str, velocities: &str, mass: Mass) -> Dynamics {
        Dynamics {
            positions: positions.to_owned(),
            velocities: velocities.to_owned(),
            mass,
            momentum: None,
            energy: None,
            gravity: None,
            reaction: None,
            anchors: Vec::new(),
            dissipation: Vec::new(),
            free: Vec::new(),
            substeps: None,
            fixed: Vec::new(),
        }
    }

    /// The strand contract (DEVELOPERS.md, "Testing a dynamics node with the conformance
    /// kit") as a declaration: the strand nodes pass the same checks as any other node.
    pub fn strand() -> Dynamics {
        Dynamics::new(
            "positions",
            "velocities",
            Mass::Product(vec!["count".into(), "length".into(), "mass_per_length".into()]),
        )
        .momentum("momentum")
        .energy("energy")
        .gravity("gravity")
        .anchor("anchor")
        .dissipation("damping")
        .dissipation("relative_damping")
        .free("pin", ParamValue::Choice("free".into()))
    }

    /// A vec3 output (N s) with the node's total linear momentum.
    pub fn momentum(mut self, output: &str) -> Dynamics {
        self.momentum = Some(output.to_owned());
        self
    }

    /// A scalar output (J) with the node's total energy: kinetic, elastic and the potential of
    /// gravity (m g z).
    pub fn energy(mut self, output: &str) -> Dynamics {
        self.energy = Some(output.to_owned());
        self
    }

    /// The number parameter (m/s^2) of the gravity acting on every mass along -Z.
    pub fn gravity(mut self, param: &str) -> Dynamics {
        self.gravity = Some(param.to_owned());
        self
    }

    /// A vec3 output (N): every external force on the node but gravity (what its anchors, its
    /// springs to them and any drag put on its masses), at each frame.
    pub fn reaction(mut self, output: &str) -> Dynamics {
        self.reaction = Some(output.to_owned());
        self
    }

    /// An input (a vec3 or transform port in m) the kit moves: along a smooth path that comes to
    /// rest, so that energy is put in and then left alone.
    pub fn anchor(mut self, input: &str) -> Dynamics {
        self.anchors.push(input.to_owned());
        self
    }

    /// A number parameter that dissipates energy (0: none).
    pub fn dissipation(mut self, param: &str) -> Dynamics {
        self.dissipation.push(param.to_owned());
        self
    }

    /// A parameter value that, with every dissipation at 0, leaves no external force but gravity
    /// (a free end, a spring of zero stiffness).
    pub fn free(mut self, param: &str, value: ParamValue) -> Dynamics {
        self.free.push((param.to_owned(), value));
        self
    }

    /// The integer parameter of substeps per frame, and a count at the node's defaults where the
    /// error is in its asymptotic regime (every mode resolved): the convergence runs use it,
    /// twice it, and a reference run 64 times it.
    pub fn substeps(mut self, param: &str, coarse: i64) -> Dynamics {
        self.substeps = Some((param.to_owned(), coarse));
        self
    }

    /// A parameter value the balance, energy and order runs use instead of the default (a
    /// substep count that resolves every mode of the node's defaults, say); the determinism
    /// runs still draw it anywhere in its range.
    pub fn set(mut self, param: &str, value: ParamValue) -> Dynamics {
        self.fixed.retain(|(n, _)| n != param);
        self.fixed.push((param.to_owned(), value));
        self
    }

    /// A setup over `tl` with the declared fixed values.
    fn base(&self, tl: Timeline) -> Setup {
        self.fixed
            .iter()
            .fold(Setup::new(tl), |s, (n, v)| s.param(n, v.clone()))
    }

    /// What the node type is missing of the declaration, or what does not fit it.
    pub fn problems(&self, subject: &Subject) -> Vec<String> {
        let spec = subject.spec();
        let mut problems = Vec::new();
        let output = |name: &str| spec.outputs.iter().find(|o| o.name == name);
        let mut want_output = |name: &str, kinds: &[PortKind], dim: Dimension| match output(name) {
            None => problems.push(format!("no output `{name}` ({})", dim.si_symbol())),
            Some(o) if !kinds.contains(&o.kind) || o.dimension != dim => problems.push(format!(
                "output `{name}` is {} in {}, the declaration needs {} in {}",
                o.kind.name(),
                o.dimension.si_symbol(),
                kind_names(kinds),
                dim.si_symbol()
            )),
            Some(_) => {}
        };
        let vector = [PortKind::Points, PortKind::Vec3];
        want_output(&self.positions, &vector, Dimension::Length);
        want_output(&self.velocities, &vector, Dimension::Velocity);
        if let Some(m) = &self.momentum {
            want_output(m, &[PortKind::Vec3], Dimension::Impulse);
        }
        if let Some(e) = &self.energy {
            want_output(e, &[PortKind::Scalar], Dimension::Energy);
        }
        if let Some(r) = &self.reaction {
            want_output(r, &[PortKind::Vec3], Dimension::Force);
        }
        let mut want_number = |name: &str, dim: Option<Dimension>| match subject.param(name).map(|p| &p.ty) {
            Some(ParamType::Number { dimension, .. }) if dim.is_none_or(|d| d == *dimension) => {}
            _ => problems.push(match dim {
                Some(d) => format!("no number parameter `{name}` ({})", d.si_symbol()),
                None => format!("no number parameter `{name}`"),
            }),
        };
        match &self.mass {
            Mass::Each(p) => want_number(p, Some(Dimension::Mass)),
            Mass::Product(ps) => {
                for p in ps {
                    if subject.integer_range(p).is_none() {
                        want_number(p, None);
                    }
                }
            }
        }
        if let Some(g) = &self.gravity {
            want_number(g, Some(Dimension::Acceleration));
        }
        for d in &self.dissipation {
            want_number(d, None);
        }
        if matches!(self.mass, Mass::Product(_)) && self.momentum.is_none() {
            problems.push("masses given as a product need a momentum output (`Dynamics::momentum`)".to_owned());
        }
        for (name, value) in &self.free {
            match subject.param(name) {
                None => problems.push(format!("no parameter `{name}` for the free setting")),
                Some(_) => {
                    if let Err(e) = subject.param_values(&Setup::at_24fps(1).param(name, value.clone())) {
                        problems.push(format!("the free setting: {e}"));
                    }
                }
            }
        }
        for (name, value) in &self.fixed {
            if let Err(e) = subject.param_values(&Setup::at_24fps(1).param(name, value.clone())) {
                problems.push(format!("the fixed setting: {e}"));
            }
        }
        if let Some((name, coarse)) = &self.substeps {
            match subject.integer_range(name) {
                Some((min, max)) if (min..=max).contains(coarse) => {}
                Some((min, max)) => {
                    problems.push(format!("{coarse} substeps is outside `{name}`'s range {min} to {max}"))
                }
                None => problems.push(format!("no integer parameter `{name}`")),
            }
        }
        for a in &self.anchors {
            match spec.inputs.iter().find(|p| p.name == *a) {
                Some(PortSpec {
                    kind: PortKind::Vec3 | PortKind::Transform,
                    dimension: Dimension::Length,
                    ..
                }) => {}
                Some(p) => problems.push(format!(
                    "anchor input `{a}` is {} in {}, the kit moves vec3 or transform ports in m",
                    p.kind.name(),
                    p.dimension.si_symbol()
                )),
                None => problems.push(format!("no input `{a}`")),
            }
        }
        for p in &spec.inputs {
            if !p.optional && !self.anchors.contains(&p.name) {
                problems.push(format!(
                    "required input `{}` is not an anchor the kit moves (declare it with `Dynamics::anchor`)",
                    p.name
                ));
            }
        }
        for p in &spec.params {
            if p.default.is_none() {
                problems.push(format!("parameter `{}` has no default", p.name));
            }
        }
        problems
    }
}

fn kind_names(kinds: &[PortKind]) -> String {
    kinds.iter().map(|k| k.name()).collect::<Vec<_>>().join(" or ")
}

/// An anchor's path: from `base` it moves by `shift` and turns by `turn` radians about an axis,
/// both along the quintic smoothstep s(u) = 10 u^3 - 15 u^4 + 6 u^5 over the first `until` of
/// the run, then stays (continuous in position, velocity and acceleration where it stops).
#[derive(Debug, Clone)]
struct Travel {
    base: V3,
    shift: V3,
    axis: (f64, f64),
    turn: f64,
    until: f64,
}

impl Travel {
    fn strategy(until: f64) -> BoxedStrategy<Travel> {
        (
            [-0.5f64..=0.5, -0.5f64..=0.5, 0.5f64..=1.5],
            [-0.3f64..=0.3, -0.3f64..=0.3, -0.3f64..=0.3],
            (-3.2f64..=3.2, -1.6f64..=1.6),
            -1.5f64..=1.5,
        )
            .prop_map(move |(base, shift, axis, turn)| Travel {
                base,
                shift,
                axis,
                turn,
                until,
            })
            .boxed()
    }

    /// The time (s from the first frame) when the anchor comes to rest.
    fn stop(&self, tl: &Timeline) -> f64 {
        self.until * (tl.time(tl.frames().saturating_sub(1)) - tl.time(0))
    }

    fn series(&self, tl: &Timeline, kind: PortKind) -> Vec<f64> {
        let stop = self.stop(tl);
        let axis = direction(self.axis.0, self.axis.1);
        let mut out = Vec::with_capacity(7 * tl.frames());
        for i in 0..tl.frames() {
            let t = tl.time(i) - tl.time(0);
            let u = if stop > 0.0 { (t / stop).min(1.0) } else { 1.0 };
            let s = u * u * u * (10.0 + u * (-15.0 + 6.0 * u));
            let p = add(self.base, scale(self.shift, s));
            out.extend_from_slice(&p);
            if kind == PortKind::Transform {
                let half = 0.5 * self.turn * s;
                let q = scale(axis, half.sin());
                out.extend_from_slice(&[q[0], q[1], q[2], half.cos()]);
            }
        }
        out
    }
}

fn kind_of(subject: &Subject, input: &str) -> PortKind {
    subject
        .spec()
        .inputs
        .iter()
        .find(|p| p.name == input)
        .map_or(PortKind::Vec3, |p| p.kind)
}

fn timeline(start_frame: i64, frames: usize, rate: u32) -> Timeline {
    Timeline {
        start_frame,
        frame_count: frames as u64,
        rate_num: rate,
        rate_den: 1,
    }
}

/// A number parameter's value in a setup (its default when the setup leaves it).
fn number(subject: &Subject, setup: &Setup, name: &str) -> Option<f64> {
    let values = subject.param_values(setup).ok()?;
    let k = subject.spec().params.iter().position(|p| p.name == name)?;
    match values.get(k)? {
        ParamValue::Number(v) => Some(*v),
        ParamValue::Integer(v) => Some(*v as f64),
        _ => None,
    }
}

/// The run's masses: the total and, for [`Mass::Each`], each point's.
fn masses(subject: &Subject, d: &Dynamics, setup: &Setup, points: usize) -> (f64, Option<f64>) {
    match &d.mass {
        Mass::Each(p) => {
            let m = number(subject, setup, p).unwrap_or(f64::NAN);
            (m * points as f64, Some(m))
        }
        Mass::Product(ps) => (
            ps.iter()
                .map(|p| number(subject, setup, p).unwrap_or(f64::NAN))
                .product(),
            None,
        ),
    }
}

/// Everything one balance or energy run measured.
struct State {
    /// Total mass, kg.
    mass: f64,
    /// Momentum at each frame, N s.
    momentum: Vec<V3>,
    /// Largest RMS point speed of the run, m/s.
    v_max: f64,
}

/// Reads the momentum of every frame and checks that the declared momentum output (if any)
/// is the sum of m v (for [`Mass::Each`]).
fn state(subject: &Subject, d: &Dynamics, setup: &Setup, run: &Run, tol: f64) -> Result<State, Verdict> {
    let n = run.vectors(&d.positions);
    if n == 0 || run.vectors(&d.velocities) != n {
        return Err(Verdict::fail(format!(
            "`{}` has {n} points and `{}` {}: they must have the same, at least one",
            d.positions,
            d.velocities,
            run.vectors(&d.velocities)
        )));
    }
    let (mass, each) = masses(subject, d, setup, n);
    let frames = run.frames();
    let velocity = |f: usize, i: usize| run.vector(&d.velocities, f, i).unwrap_or([f64::NAN; 3]);
    let v_max = (0..frames)
        .map(|f| ((0..n).map(|i| norm(velocity(f, i)).powi(2)).sum::<f64>() / n as f64).sqrt())
        .fold(0.0, f64::max);
    let summed: Option<Vec<V3>> = each.map(|m| {
        (0..frames)
            .map(|f| (0..n).fold([0.0; 3], |p, i| add(p, scale(velocity(f, i), m))))
            .collect()
    });
    let output: Option<Vec<V3>> = d.momentum.as_ref().map(|name| {
        (0..frames)
            .map(|f| run.vector(name, f, 0).unwrap_or([f64::NAN; 3]))
            .collect()
    });
    if let (Some(a), Some(b), Some(name)) = (&summed, &output, &d.momentum) {
        let allowed = tol * mass * v_max.max(f64::MIN_POSITIVE);
        for (f, (x, y)) in a.iter().zip(b).enumerate() {
            if beyond(norm(sub(*x, *y)), allowed) {
                let frame = run.timeline.frame_number(f);
                return Err(Verdict::at(
                    format!(
                        "the `{name}` output is {} N s at frame {frame}, but the sum of m v over `{}` is {} N s \
                         ({:.3e} N s apart, more than {allowed:.3e})",
                        fmt_v3(*y),
                        d.velocities,
                        fmt_v3(*x),
                        norm(sub(*x, *y))
                    ),
                    frame,
                ));
            }
        }
    }
    let momentum = output.or(summed).unwrap_or_default();
    Ok(State { mass, momentum, v_max })
}

/// One momentum-balance case.
#[derive(Debug, Clone)]
struct BalanceCase {
    params: Vec<(String, ParamValue)>,
    anchors: Vec<Travel>,
    frames: usize,
    gravity: f64,
}

/// The balance runs' frame rate: 240 fps, so the trapezoid rule over the frame samples of the
/// reaction integrates it to about (omega dt)^2 / 12 of the impulse for a force oscillating at
/// omega (3e-4 at 10 rad/s).
const BALANCE_FPS: u32 = 240;

fn balance_setup(subject: &Subject, d: &Dynamics, case: &BalanceCase, free: bool) -> Setup {
    let tl = timeline(1001, case.frames, BALANCE_FPS);
    let mut setup = Setup::new(tl);
    for (name, value) in &case.params {
        setup = setup.param(name, value.clone());
    }
    for (name, value) in &d.fixed {
        setup = setup.param(name, value.clone());
    }
    if let Some(g) = &d.gravity {
        setup = setup.number(g, case.gravity);
    }
    if free {
        for (name, value) in &d.free {
            setup = setup.param(name, value.clone());
        }
        for name in &d.dissipation {
            setup = setup.number(name, 0.0);
        }
    } else if let Some((name, coarse)) = &d.substeps {
        // Fine substeps: the node's impulse over a frame is then its force's integral to well
        // below the tolerance, whatever its method's order.
        let max = subject.integer_range(name).map_or(*coarse, |r| r.1);
        setup = setup.integer(name, coarse.saturating_mul(16).min(max));
    }
    for (name, travel) in d.anchors.iter().zip(&case.anchors) {
        setup = setup
            .connect(name, travel.series(&tl, kind_of(subject, name)))
            .note(format!("{name}: {travel:?}"));
    }
    setup
}

fn balance_strategy(subject: &Subject, d: &Dynamics) -> BoxedStrategy<BalanceCase> {
    let declared: Vec<String> = d
        .gravity
        .iter()
        .chain(d.substeps.iter().map(|(n, _)| n))
        .cloned()
        .collect();
    let params: Vec<BoxedStrategy<(String, ParamValue)>> = param_strategy(subject, true);
    let g_max = d
        .gravity
        .as_ref()
        .and_then(|g| subject.number_range(g))
        .map_or(0.0, |(lo, hi)| hi.min(20.0).max(lo));
    let g_min = d
        .gravity
        .as_ref()
        .and_then(|g| subject.number_range(g))
        .map_or(0.0, |(lo, _)| lo.max(0.0));
    let gravity: BoxedStrategy<f64> = if g_max > g_min {
        Union::new_weighted(vec![(1, Just(g_min).boxed()), (3, (g_min..=g_max).boxed())]).boxed()
    } else {
        Just(g_min).boxed()
    };
    let anchors = vec![Travel::strategy(0.5); d.anchors.len()];
    (params, anchors, 24usize..=48, gravity)
        .prop_map(move |(params, anchors, frames, gravity)| BalanceCase {
            params: params.into_iter().filter(|(n, _)| !declared.contains(n)).collect(),
            anchors,
            frames,
            gravity,
        })
        .boxed()
}

/// Momentum balance: dP/dt = M g + F, F the declared reaction output.
///
/// - Free runs (the declared free setting, every dissipation 0, gravity g from 0 to 20 m/s^2
///   within its range, the other parameters near their defaults, the anchors moving): nothing
///   but gravity acts, so P(t) = P(t1) + M g (t - t1) at every frame from the first after the
///   initial state (t1; a staggered method's velocities lag the frame by a fixed part of a
///   substep), to `momentum` x (M (v_max + g T) + max |P|) (T the run's duration).
/// - With a reaction output (the node's defaults near, anchors moving then resting, 24 to 48
///   frames at 240 fps, substeps 16 times the declared coarse count): over every frame,
///   P(t1) - P(t0) = M g dt + the integral of F by the trapezoid rule over the two frame samples,
///   to `balance` x the largest impulse a frame can carry, dt max(|F| + M g), plus twice the
///   trapezoid rule's error dt^3 |F''| / 12 with F'' from the samples' second differences, plus
///   twice a one-sided Riemann sum's error h |F(t1) - F(t0)| (h the substep).
///
/// A momentum output, when declared beside [`Mass::Each`], must equal the sum of m v at every
/// frame.
pub fn check_balance(subject: &Subject, d: &Dynamics, tolerances: &Tolerances) -> Result<(), Failure> {
    contract(subject, d)?;
    let strategy = (balance_strategy(subject, d), any::<bool>());
    let has_reaction = d.reaction.is_some();
    run_property(
        subject,
        Property::Momentum,
        &tolerances.budget,
        tolerances.budget.cases,
        0x6261_6c61,
        strategy,
        |(case, anchored)| {
            let free = !(*anchored && has_reaction);
            let setup = balance_setup(subject, d, case, free);
            let text = subject.describe(&setup);
            judge_balance(subject, d, &setup, free, tolerances).map_err(|v| (v, text))
        },
    )
}

fn judge_balance(subject: &Subject, d: &Dynamics, setup: &Setup, free: bool, tol: &Tolerances) -> Result<(), Verdict> {
    let run = subject
        .run(setup)
        .map_err(|e| Verdict::from_run(&e, "parameters near the defaults, anchors moving smoothly"))?;
    let s = state(subject, d, setup, &run, tol.momentum)?;
    let tl = run.timeline;
    let g = d
        .gravity
        .as_ref()
        .and_then(|g| number(subject, setup, g))
        .unwrap_or(0.0);
    let weight: V3 = [0.0, 0.0, -s.mass * g];
    if free {
        // From the first frame after the initial state: a staggered method's velocity output
        // lags the frame time by a fixed part of a substep (v at t - h / 2), which shifts every
        // later frame's momentum alike; the balance is the rate of change.
        let first = usize::from(tl.frames() > 1);
        let p0 = s.momentum[first];
        let duration = tl.time(tl.frames() - 1) - tl.time(0);
        let p_max = s.momentum.iter().fold(0.0f64, |m, p| m.max(norm(*p)));
        let allowed = tol.momentum * (s.mass * (s.v_max + g * duration) + p_max);
        for (f, p) in s.momentum.iter().enumerate().skip(first) {
            let t = tl.time(f) - tl.time(first);
            let want = add(p0, scale(weight, t));
            let off = norm(sub(*p, want));
            if beyond(off, allowed) {
                let frame = tl.frame_number(f);
                return Err(Verdict::at(
                    format!(
                        "momentum is not balanced: with {} nothing but gravity acts, so P(t) = P(t1) + M g (t - t1) \
                         = {} N s at frame {frame} (t1 frame {}, M = {} kg, g = {g} m/s^2 down, t - t1 = {t} s); \
                         the node's momentum is {} N s, {off:.3e} N s off, more than {allowed:.3e} N s",
                        free_words(d),
                        fmt_v3(want),
                        tl.frame_number(first),
                        s.mass,
                        fmt_v3(*p)
                    ),
                    frame,
                ));
            }
        }
        return Ok(());
    }
    let Some(reaction) = &d.reaction else {
        return Ok(());
    };
    let dt = tl.dt();
    let force = |f: usize| run.vector(reaction, f, 0).unwrap_or([f64::NAN; 3]);
    let frames = run.frames();
    let scale_f = (0..frames).map(|f| norm(force(f)) + s.mass * g).fold(0.0, f64::max);
    // The trapezoid rule's error over a frame is dt^3 / 12 |F''| (Abramowitz & Stegun 1964,
    // 25.4.2); F'' is estimated by the second difference of the frame samples beside the frame,
    // taken twice over. The rest of the allowance is `balance` of the largest impulse a frame
    // carries.
    let curvature = |f: usize| {
        if f == 0 || f + 1 >= frames {
            0.0
        } else {
            norm(add(sub(force(f + 1), scale(force(f), 2.0)), force(f - 1)))
        }
    };
    // A method that applies each substep's force at one end of the substep sums the force as a
    // left or right Riemann sum, which differs from the integral by at most h |F(t1) - F(t0)|
    // over a frame where F is monotone (h the substep); twice that is allowed.
    let substep = d
        .substeps
        .as_ref()
        .and_then(|(name, _)| number(subject, setup, name))
        .map_or(0.0, |n| dt / n.max(1.0));
    for f in 0..frames.saturating_sub(1) {
        let riemann = 2.0 * substep * norm(sub(force(f + 1), force(f)));
        let quadrature = 2.0 * dt / 12.0 * curvature(f).max(curvature(f + 1)) + riemann;
        let allowed = tol.balance * dt * scale_f + quadrature;
        let trapezoid = scale(add(force(f), force(f + 1)), dt / 2.0);
        let want = add(trapezoid, scale(weight, dt));
        let got = sub(s.momentum[f + 1], s.momentum[f]);
        let off = norm(sub(got, want));
        if beyond(off, allowed) {
            let (a, b) = (tl.frame_number(f), tl.frame_number(f + 1));
            return Err(Verdict::at(
                format!(
                    "momentum is not balanced: from frame {a} to {b} the momentum changes by {} N s, but gravity and \
                     the `{reaction}` output give an impulse of {} N s (M g dt plus the trapezoid rule over the two \
                     frames' forces; M = {} kg, g = {g} m/s^2), {off:.3e} N s apart, more than {allowed:.3e} N s: a \
                     force acts that `{reaction}` does not report",
                    fmt_v3(got),
                    fmt_v3(want),
                    s.mass
                ),
                b,
            ));
        }
    }
    Ok(())
}

fn free_words(d: &Dynamics) -> String {
    let mut parts: Vec<String> = d
        .free
        .iter()
        .map(|(n, v)| match v {
            ParamValue::Number(x) => format!("`{n}` = {x}"),
            ParamValue::Integer(x) => format!("`{n}` = {x}"),
            ParamValue::Choice(w) => format!("`{n}` = {w}"),
            other => format!("`{n}` = {other:?}"),
        })
        .collect();
    parts.extend(d.dissipation.iter().map(|n| format!("`{n}` = 0")));
    if parts.is_empty() {
        "the node's parameters".to_owned()
    } else {
        parts.join(", ")
    }
}

/// One energy case.
#[derive(Debug, Clone)]
struct EnergyCase {
    anchors: Vec<Travel>,
    /// Each dissipation's factor on its default (0: none).
    dissipation: Option<f64>,
}

/// Energy from two frames after the anchors come to rest (0.5 s into a 120-frame run at 24 fps; a
/// quarter of the kit's `cases`, at least 4), the other
/// parameters at their defaults:
/// - with every dissipation at its default times 0.5 to 2 (or 0.5 to 2 where the default is 0),
///   the energy output never rises from one frame to the next by more than `energy_growth` of
///   its range over the rest of the run;
/// - with every dissipation 0 and gravity 0, it stays within `energy_drift` of its value when
///   the anchors stopped (a symplectic method), or, for a method declared dissipative
///   (`energy_drift` = None), never rises above it by more than `energy_growth`.
pub fn check_energy_balance(subject: &Subject, d: &Dynamics, tolerances: &Tolerances) -> Result<(), Failure> {
    contract(subject, d)?;
    let Some(energy) = d.energy.clone() else {
        return Ok(());
    };
    let strategy = (
        vec![Travel::strategy(0.1); d.anchors.len()],
        prop::option::of(0.5f64..=2.0),
    )
        .prop_map(|(anchors, dissipation)| EnergyCase { anchors, dissipation });
    run_property(
        subject,
        Property::Energy,
        &tolerances.budget,
        (tolerances.budget.cases / 4).max(4),
        0x656e_6572,
        strategy,
        |case| {
            let tl = timeline(1001, 120, 24);
            let mut setup = d.base(tl);
            for name in &d.dissipation {
                let default = subject.param(name).and_then(|p| match p.default {
                    Some(ParamValue::Number(v)) => Some(v),
                    _ => None,
                });
                let value = match (case.dissipation, default) {
                    (None, _) => 0.0,
                    (Some(k), Some(v)) if v > 0.0 => k * v,
                    (Some(k), _) => k,
                };
                let value = subject.number_range(name).map_or(value, |(lo, hi)| value.clamp(lo, hi));
                setup = setup.number(name, value);
            }
            if case.dissipation.is_none()
                && let Some(g) = &d.gravity
            {
                setup = setup.number(g, 0.0);
            }
            for (name, travel) in d.anchors.iter().zip(&case.anchors) {
                setup = setup
                    .connect(name, travel.series(&tl, kind_of(subject, name)))
                    .note(format!("{name}: {travel:?}"));
            }
            let text = subject.describe(&setup);
            let stop = case.anchors.iter().map(|t| t.stop(&tl)).fold(0.0, f64::max);
            judge_energy(subject, &energy, &setup, stop, case.dissipation.is_some(), tolerances).map_err(|v| (v, text))
        },
    )
}

fn judge_energy(
    subject: &Subject,
    energy: &str,
    setup: &Setup,
    stop: f64,
    damped: bool,
    tol: &Tolerances,
) -> Result<(), Verdict> {
    let run = subject
        .run(setup)
        .map_err(|e| Verdict::from_run(&e, "the node's defaults, anchors moving smoothly then resting"))?;
    let tl = run.timeline;
    let e: Vec<f64> = (0..run.frames())
        .map(|f| run.scalar(energy, f).unwrap_or(f64::NAN))
        .collect();
    // Two frames after the first sample at rest: a node may move an anchor between frame
    // samples along a curve that takes its velocity from the neighbouring samples (a cubic
    // through central differences), which keeps it moving for one frame past the last sample
    // that moves.
    let Some(first) = (0..run.frames())
        .find(|&f| tl.time(f) - tl.time(0) >= stop)
        .map(|f| f + 2)
        .filter(|&f| f + 1 < run.frames())
    else {
        return Err(Verdict::Reject("the anchors never came to rest".into()));
    };
    let rest = &e[first..];
    let (lo, hi) = rest.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| {
        (lo.min(*v), hi.max(*v))
    });
    let size = e.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    if (hi - lo) < 1.0e-6 * size {
        return Err(Verdict::Reject(format!(
            "the anchors' motion changed the energy by {:.3e} J of {size:.3e} J: too little to judge",
            hi - lo
        )));
    }
    if damped {
        let allowed = tol.energy_growth * (hi - lo);
        for f in first + 1..run.frames() {
            let rise = e[f] - e[f - 1];
            if beyond(rise, allowed) && rise > 0.0 || !e[f].is_finite() {
                let frame = tl.frame_number(f);
                return Err(Verdict::at(
                    format!(
                        "energy rises with dissipation on and the anchors at rest: `{energy}` goes from {} J at frame \
                         {} to {} J at frame {frame}, a rise of {rise:.3e} J, more than {allowed:.3e} J ({} of its \
                         range {:.3e} J after the anchors stopped)",
                        e[f - 1],
                        tl.frame_number(f - 1),
                        e[f],
                        tol.energy_growth,
                        hi - lo
                    ),
                    frame,
                ));
            }
        }
        return Ok(());
    }
    let e0 = e[first];
    if e0.is_finite() && e0.abs() <= 1.0e-12 {
        return Err(Verdict::Reject("the anchors' motion put no energy in".into()));
    }
    for (f, v) in e.iter().enumerate().skip(first) {
        let frame = tl.frame_number(f);
        let (bad, what) = match tol.energy_drift {
            Some(drift) => (
                beyond((v - e0).abs(), drift * e0.abs()),
                format!("stay within {drift} of it (a symplectic method)"),
            ),
            None => (
                beyond(v - e0, tol.energy_growth * e0.abs()),
                format!(
                    "never rise above it by more than {} (a dissipative method)",
                    tol.energy_growth
                ),
            ),
        };
        if bad {
            return Err(Verdict::at(
                format!(
                    "energy is not kept: with no dissipation, no gravity and the anchors at rest from frame {} ({} \
                     J), `{energy}` must {what}; at frame {frame} it is {v} J",
                    tl.frame_number(first),
                    e0
                ),
                frame,
            ));
        }
    }
    Ok(())
}

/// One determinism case: parameters anywhere or near the defaults, a timeline, anchors moving
/// or left unconnected.
#[derive(Debug, Clone)]
struct WildCase {
    params: Vec<(String, ParamValue)>,
    timeline: Timeline,
    anchors: Vec<Option<Motion>>,
}

fn wild_setup(subject: &Subject, d: &Dynamics, case: &WildCase) -> Setup {
    let tl = case.timeline;
    let mut setup = Setup::new(tl);
    for (name, value) in &case.params {
        setup = setup.param(name, value.clone());
    }
    for (name, motion) in d.anchors.iter().zip(&case.anchors) {
        if let Some(m) = motion {
            let mut series = m.series(&tl);
            if kind_of(subject, name) == PortKind::Vec3 {
                series = series.chunks(7).flat_map(|c| c[..3].to_vec()).collect();
            }
            setup = setup.connect(name, series).note(format!("{name}: {m:?}"));
        }
    }
    setup
}

/// Determinism, finiteness and independence of call history. Cases: half near the defaults,
/// half anywhere in the declared ranges (as [`crate::check_deterministic_and_finite`] draws
/// them), 2 to 10 frames on any timeline, each anchor moving (still or up to 1 m/s, turning up
/// to 3 rad/s) or, when optional, unconnected 1 time in 4. Each case is called, called again into
/// buffers pre-filled with a sentinel, then another call is made (the defaults on another
/// timeline, each optional anchor connected where the case leaves it unconnected and the other
/// way round), and the case is called a third time: all
/// three must agree bit for bit, every value must be finite, and an error must be the same each
/// time. A node that runs in windows of frames (ABI 1.3) is also run in windows of one frame and
/// of two, which must give the same bits. Fails also when the node refused every case.
pub fn check_history(subject: &Subject, d: &Dynamics, tolerances: &Tolerances) -> Result<(), Failure> {
    contract(subject, d)?;
    let optional: Vec<bool> = d
        .anchors
        .iter()
        .map(|a| subject.spec().inputs.iter().any(|p| p.name == *a && p.optional))
        .collect();
    let make = |tame: bool| {
        let anchors: Vec<BoxedStrategy<Option<Motion>>> = optional
            .iter()
            .map(|&opt| {
                if opt {
                    prop::option::weighted(0.75, Motion::strategy()).boxed()
                } else {
                    Motion::strategy().prop_map(Some).boxed()
                }
            })
            .collect();
        (param_strategy(subject, tame), timeline_strategy(), anchors)
            .prop_map(|(params, timeline, anchors)| WildCase {
                params,
                timeline,
                anchors,
            })
            .boxed()
    };
    let strategy = Union::new(vec![make(true), make(false)]);
    let ran = Cell::new(0u32);
    let errors = Cell::new(0u32);
    let first_error: RefCell<Option<String>> = RefCell::new(None);
    run_property(
        subject,
        Property::Determinism,
        &tolerances.budget,
        tolerances.budget.wild_cases,
        0x6869_7374,
        strategy,
        |case| {
            let setup = wild_setup(subject, d, case);
            let text = subject.describe(&setup);
            let mut other = WildCase {
                params: Vec::new(),
                timeline: Timeline {
                    start_frame: case.timeline.start_frame.saturating_add(17),
                    ..case.timeline
                },
                anchors: case.anchors.clone(),
            };
            // The other call differs in every input it can: an optional anchor the case leaves
            // unconnected is connected (still, somewhere else), and the other way round.
            for (k, opt) in optional.iter().enumerate() {
                if *opt {
                    other.anchors[k] = match case.anchors[k] {
                        Some(_) => None,
                        None => Some(Motion::still([0.3, -0.2, 1.1])),
                    };
                }
            }
            let a = subject.run(&setup);
            let b = subject.run_filled(&setup, SENTINEL);
            let _ = subject.run(&wild_setup(subject, d, &other));
            let c = subject.run(&setup);
            // In windows, as `heft run` evaluates it: the same result, or the same error.
            let windowed = || {
                if !subject.windowed() {
                    return None;
                }
                [1, 2].iter().find_map(|&w| {
                    let r = subject.run_in_windows(&setup, w);
                    match (&a, &r) {
                        (Ok(x), Ok(y)) => compare(x, y).err().map(|v| {
                            history(
                                v,
                                &format!(
                                    "the result depends on the windows of frames it is evaluated in: in windows of \
                                     {w} frame(s), "
                                ),
                                ["whole", "in windows"],
                            )
                        }),
                        (Err(x), Err(y)) if x == y => None,
                        (x, y) => Some(
                            Verdict::fail(format!(
                                "whole and in windows of {w} frame(s) do not succeed or fail alike: {}, {}",
                                outcome(x),
                                outcome(y)
                            ))
                            .about(Property::History),
                        ),
                    }
                })
            };
            ran.set(ran.get() + 1);
            let verdict = match (&a, &b, &c) {
                (Err(RunError::Setup(m)), _, _) => Err(Verdict::Reject(m.clone())),
                (Err(e @ RunError::Node { status, .. }), _, _)
                | (_, Err(e @ RunError::Node { status, .. }), _)
                | (_, _, Err(e @ RunError::Node { status, .. }))
                    if *status != Status::NodeError =>
                {
                    Err(Verdict::fail(e.to_string()).about(Property::Finiteness))
                }
                (Err(x), Err(y), Err(z)) if x == y && y == z => {
                    errors.set(errors.get() + 1);
                    first_error
                        .borrow_mut()
                        .get_or_insert_with(|| format!("{x} [case: {text}]"));
                    Ok(())
                }
                (Ok(x), Ok(y), Ok(z)) => compare(x, y)
                    .and_then(|()| {
                        compare(x, z).map_err(|v| {
                            history(
                                v,
                                "the result depends on the calls made before: ",
                                ["in the first call", "when called again after another call"],
                            )
                        })
                    })
                    .and_then(|()| all_finite(x, subject).map_err(|v| v.about(Property::Finiteness))),
                _ => Err(Verdict::fail(format!(
                    "three identical calls (the third after another call) do not all succeed or all fail alike: {}, \
                     {}, {}",
                    outcome(&a),
                    outcome(&b),
                    outcome(&c)
                ))),
            };
            // Only a node that passes the rest is run in windows (its failure would be the rest's).
            let verdict = verdict.and_then(|()| windowed().map_or(Ok(()), Err));
            verdict.map_err(|v| (v, text))
        },
    )?;
    something_checked(
        subject,
        &Counts {
            cases: ran.get(),
            errors: errors.get(),
            examples: first_error.into_inner().into_iter().collect(),
        },
    )
}

/// A failed comparison of two runs that should agree, told as a history failure: `lead`
/// (ending in its separator), then `compare`'s message with its two runs named `runs` instead of "the first time" and
/// "the second".
fn history(v: Verdict, lead: &str, runs: [&str; 2]) -> Verdict {
    match v {
        Verdict::Fail { message, frame, .. } => Verdict::Fail {
            message: format!(
                "{lead}{}",
                message
                    .replacen("two identical calls differ: ", "", 1)
                    .replacen("the first time", runs[0], 1)
                    .replacen("the second", runs[1], 1)
            ),
            frame,
            property: Some(Property::History),
        },
        r => r,
    }
}

fn outcome(r: &Result<Run, RunError>) -> String {
    match r {
        Ok(_) => "ok".to_owned(),
        Err(e) => e.to_string(),
    }
}

/// Convergence at the declared order (only when substeps are declared): the node's defaults,
/// anchors moving then resting over 24 frames at 24 fps, runs at the declared coarse count n,
/// 2 n, and a reference at 64 n (at least 16 n, within the range); the order of the RMS error of
/// the positions over every point and frame after the first, log2(e_n / e_2n), must be within
/// `order_tolerance` of `order` (the reference's own error makes the ratio 2.03 for order 1 at
/// 64 n). A node exact at any substep count (both errors below 1e-12 m) passes.
pub fn check_order(subject: &Subject, d: &Dynamics, tolerances: &Tolerances) -> Result<(), Failure> {
    contract(subject, d)?;
    let Some((param, coarse)) = d.substeps.clone() else {
        return Ok(());
    };
    let max = subject.integer_range(&param).map_or(i64::MAX, |r| r.1);
    let reference = coarse.saturating_mul(64).min(max);
    if reference < coarse.saturating_mul(16) {
        return Err(Failure::new(
            Property::Convergence,
            subject.name(),
            format!("`{param}` stops at {max}: the reference run needs at least 16 x {coarse}"),
        ));
    }
    let strategy = vec![Travel::strategy(0.5); d.anchors.len()];
    run_property(
        subject,
        Property::Convergence,
        &tolerances.budget,
        tolerances.budget.convergence_cases,
        0x6f72_6465,
        strategy,
        |anchors| {
            let tl = timeline(1001, 24, 24);
            let mut setup = d.base(tl);
            for (name, travel) in d.anchors.iter().zip(anchors) {
                setup = setup
                    .connect(name, travel.series(&tl, kind_of(subject, name)))
                    .note(format!("{name}: {travel:?}"));
            }
            let text = subject.describe(&setup);
            let run = |n: i64| {
                subject
                    .run(&setup.clone().integer(&param, n))
                    .map_err(|e| (Verdict::from_run(&e, "the node's defaults"), text.clone()))
            };
            let (r, c, f) = (run(reference)?, run(coarse)?, run(2 * coarse)?);
            let errors = [c.rms_distance(&r, &d.positions), f.rms_distance(&r, &d.positions)];
            if errors[0] < 1.0e-12 && errors[1] < 1.0e-12 {
                return Ok(());
            }
            let order = (errors[0] / errors[1]).log2();
            if beyond((order - tolerances.order).abs(), tolerances.order_tolerance) {
                return Err((
                    Verdict::fail(format!(
                        "the declared order is {} (+- {}), but halving the substep from {coarse} to {} substeps a \
                         frame takes the RMS position error against {reference} substeps from {:.4e} m to {:.4e} m: \
                         order {order:.3}",
                        tolerances.order,
                        tolerances.order_tolerance,
                        2 * coarse,
                        errors[0],
                        errors[1]
                    )),
                    text,
                ));
            }
            Ok(())
        },
    )
}

fn contract(subject: &Subject, d: &Dynamics) -> Result<(), Failure> {
    let problems = d.problems(subject);
    if problems.is_empty() {
        Ok(())
    } else {
        Err(Failure::new(Property::Contract, subject.name(), problems.join("; ")))
    }
}

/// Every check of a declared dynamics node: the declaration against the node's ports and
/// parameters, then [`check_balance`], [`check_energy_balance`], [`check_history`] and
/// [`check_order`]; every failure found.
pub fn check_dynamics(subject: &Subject, d: &Dynamics, tolerances: &Tolerances) -> Result<(), Failures> {
    if let Err(f) = contract(subject, d) {
        return Err(Failures(vec![f]));
    }
    type Check = fn(&Subject, &Dynamics, &Tolerances) -> Result<(), Failure>;
    let checks: [Check; 4] = [check_balance, check_energy_balance, check_history, check_order];
    let failures: Vec<Failure> = checks
        .iter()
        .filter_map(|check| check(subject, d, tolerances).err())
        .collect();
    if failures.is_empty() {
        Ok(())
    } else {
        Err(Failures(failures))
    }
}

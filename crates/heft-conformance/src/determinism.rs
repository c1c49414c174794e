//! Property 3: determinism and finiteness over random parameters anywhere in the valid ranges.

use std::cell::{Cell, RefCell};

use heft_node_sdk::abi::Status;
use heft_node_sdk::{ParamType, ParamValue, Timeline, field};
use proptest::prelude::*;
use proptest::strategy::Union;

use crate::cases::{Material, SplitMix, StateSpec, V3, Verdict, add, direction, run_property, scale};
use crate::subject::{Run, RunError, Setup, Subject};
use crate::{Failure, Property, Tolerances};

/// The second of the two identical calls gets its output buffers pre-filled with this value (the
/// host fills with zeros), so a value the node never writes shows up as a difference.
pub(crate) const SENTINEL: f64 = 7.25e12;

/// Caps on the cost of a case: the kit draws these integer parameters only up to here.
const COUNT_CAP: i64 = 3;
const SEGMENTS_CAP: i64 = 24;
const SUBSTEPS_CAP: i64 = 200;
/// Near the defaults `substeps` is raised to h omega_max <= 1, but not above this.
const TAME_SUBSTEPS_CAP: i64 = 2000;
/// Other integer parameters: up to max(min + 16, 2 * default).
const OTHER_INT_SPAN: i64 = 16;

/// How the random cases of [`check_deterministic_and_finite`] ended.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Counts {
    /// Cases run (each is two calls).
    pub cases: u32,
    /// Cases the node refused with an error (the same error both times).
    pub errors: u32,
    /// The first few of those errors, with the case.
    pub examples: Vec<String>,
}

/// A transform input that moves: translation base + velocity t, rotation about a fixed axis by
/// angle + rate t.
#[derive(Debug, Clone)]
pub(crate) struct Motion {
    base: V3,
    velocity: V3,
    axis: (f64, f64),
    angle: f64,
    rate: f64,
}

impl Motion {
    pub(crate) fn strategy() -> BoxedStrategy<Motion> {
        let still = any::<bool>();
        (
            [-0.5f64..=0.5, -0.5f64..=0.5, 0.5f64..=1.5],
            [-1.0f64..=1.0, -1.0f64..=1.0, -1.0f64..=1.0],
            (-3.2f64..=3.2, -1.6f64..=1.6),
            -3.2f64..=3.2,
            -3.0f64..=3.0,
            still,
        )
            .prop_map(|(base, velocity, axis, angle, rate, still)| Motion {
                base,
                velocity: if still { [0.0; 3] } else { velocity },
                axis,
                angle,
                rate: if still { 0.0 } else { rate },
            })
            .boxed()
    }

    /// Resting at `base`, not turned.
    pub(crate) fn still(base: V3) -> Motion {
        Motion {
            base,
            velocity: [0.0; 3],
            axis: (0.0, 0.0),
            angle: 0.0,
            rate: 0.0,
        }
    }

    pub(crate) fn series(&self, tl: &Timeline) -> Vec<f64> {
        let axis = direction(self.axis.0, self.axis.1);
        let mut out = Vec::with_capacity(7 * tl.frames());
        for i in 0..tl.frames() {
            let t = tl.time(i) - tl.time(0);
            let p = add(self.base, scale(self.velocity, t));
            let half = 0.5 * (self.angle + self.rate * t);
            let q = scale(axis, half.sin());
            out.extend_from_slice(&[p[0], p[1], p[2], q[0], q[1], q[2], half.cos()]);
        }
        out
    }
}

/// A wind field in the `heft_node_sdk::field` layout: (nx, ny, nz), (spacing, 0, 0), origin,
/// then nx ny nz velocity samples, x fastest; the same every frame.
#[derive(Debug, Clone)]
struct Wind {
    n: [usize; 3],
    spacing: f64,
    origin: V3,
    amplitude: f64,
    seed: u64,
}

impl Wind {
    fn strategy() -> BoxedStrategy<Wind> {
        (
            [1usize..=3, 1usize..=3, 1usize..=3],
            0.05f64..=0.5,
            [-1.0f64..=0.0, -1.0f64..=0.0, 0.0f64..=1.0],
            0.0f64..=5.0,
            any::<u64>(),
        )
            .prop_map(|(n, spacing, origin, amplitude, seed)| Wind {
                n,
                spacing,
                origin,
                amplitude,
                seed,
            })
            .boxed()
    }

    fn series(&self, frames: usize) -> Vec<f64> {
        let mut rng = SplitMix::new(self.seed);
        let [nx, ny, nz] = self.n;
        let mut one = vec![0.0; 3 * field::points_for(nx, ny, nz)];
        field::write_frame(&mut one, self.n, self.spacing, self.origin, |_| {
            scale(rng.vector(), self.amplitude)
        });
        one.repeat(frames)
    }
}

/// One random case.
#[derive(Debug, Clone)]
struct Wild {
    /// Near the defaults, with `substeps` raised to the explicit stability estimate.
    tame: bool,
    params: Vec<(String, ParamValue)>,
    timeline: Timeline,
    anchor: Option<Motion>,
    anchor_b: Option<Motion>,
    colliders: Vec<Option<Motion>>,
    wind: Option<Wind>,
    state: Option<StateSpec>,
}

/// Finite bounds for drawing from a declared range (a range may be unbounded).
fn finite(min: f64, max: f64) -> (f64, f64) {
    (min.max(-1.0e9), max.min(1.0e9))
}

fn number_strategy(min: f64, max: f64, default: f64) -> BoxedStrategy<f64> {
    let (lo, hi) = finite(min, max);
    if lo.partial_cmp(&hi) != Some(std::cmp::Ordering::Less) {
        return Just(default).boxed();
    }
    // Ranges over several decades are drawn log-uniformly, or nearly every draw is near the top.
    let inside: BoxedStrategy<f64> = if lo >= 0.0 && (lo == 0.0 || hi / lo > 1.0e3) {
        let a = lo.max(hi * 1.0e-6);
        (a.ln()..=hi.ln()).prop_map(move |l| l.exp().clamp(lo, hi)).boxed()
    } else {
        (lo..=hi).boxed()
    };
    Union::new_weighted(vec![
        (2, Just(default).boxed()),
        (1, Just(lo).boxed()),
        (1, Just(hi).boxed()),
        (4, inside),
    ])
    .boxed()
}

fn integer_strategy(name: &str, min: i64, max: i64, default: i64) -> BoxedStrategy<i64> {
    let cap = match name {
        "count" => COUNT_CAP,
        "segments" => SEGMENTS_CAP,
        "substeps" => SUBSTEPS_CAP,
        _ => min.saturating_add(OTHER_INT_SPAN).max(default.saturating_mul(2)),
    };
    let hi = max.min(cap).max(min);
    if (min..=hi).contains(&default) {
        Union::new_weighted(vec![(1, Just(default).boxed()), (3, (min..=hi).boxed())]).boxed()
    } else {
        (min..=hi).boxed()
    }
}

fn vec3_strategy(min: f64, max: f64, default: [f64; 3]) -> BoxedStrategy<[f64; 3]> {
    let (lo, hi) = finite(min, max);
    let (lo, hi) = if lo <= 1.0 && hi >= -1.0 && lo.max(-1.0) < hi.min(1.0) {
        (lo.max(-1.0), hi.min(1.0))
    } else {
        (lo, hi)
    };
    if lo.partial_cmp(&hi) != Some(std::cmp::Ordering::Less) {
        return Just(default).boxed();
    }
    let mut options = vec![(2, Just(default).boxed()), (4, [lo..=hi, lo..=hi, lo..=hi].boxed())];
    if lo <= 0.0 && hi >= 0.0 {
        options.push((1, Just([0.0; 3]).boxed()));
    }
    Union::new_weighted(options).boxed()
}

/// Near the default: the default itself, the default scaled by 0.5 to 2, or zero where the range
/// starts at zero (an edge a node must handle).
fn tame_number(min: f64, max: f64, default: f64) -> BoxedStrategy<f64> {
    let mut options = vec![
        (2, Just(default).boxed()),
        (
            3,
            (0.5f64..=2.0).prop_map(move |k| (default * k).clamp(min, max)).boxed(),
        ),
    ];
    if min == 0.0 && default != 0.0 {
        options.push((1, Just(0.0).boxed()));
    }
    Union::new_weighted(options).boxed()
}

fn tame_integer(name: &str, min: i64, max: i64, default: i64) -> BoxedStrategy<i64> {
    let cap = match name {
        "count" => COUNT_CAP,
        "segments" => SEGMENTS_CAP,
        _ => i64::MAX,
    };
    let hi = max.min(cap).min(default.saturating_mul(2)).max(min);
    let lo = (default / 2).clamp(min, hi);
    let d = default.clamp(min, hi);
    Union::new_weighted(vec![(1, Just(d).boxed()), (2, (lo..=hi).boxed())]).boxed()
}

pub(crate) fn param_strategy(subject: &Subject, tame: bool) -> Vec<BoxedStrategy<(String, ParamValue)>> {
    subject
        .spec()
        .params
        .iter()
        .map(|p| {
            let name = p.name.clone();
            let default = p.default.clone().unwrap_or(ParamValue::Bool(false));
            let values: BoxedStrategy<ParamValue> = match (&p.ty, &default) {
                (ParamType::Number { min, max, .. }, ParamValue::Number(d)) if tame => {
                    tame_number(*min, *max, *d).prop_map(ParamValue::Number).boxed()
                }
                (ParamType::Number { min, max, .. }, ParamValue::Number(d)) => {
                    number_strategy(*min, *max, *d).prop_map(ParamValue::Number).boxed()
                }
                (ParamType::Integer { min, max }, ParamValue::Integer(d)) if tame => {
                    tame_integer(&name, *min, *max, *d)
                        .prop_map(ParamValue::Integer)
                        .boxed()
                }
                (ParamType::Integer { min, max }, ParamValue::Integer(d)) => integer_strategy(&name, *min, *max, *d)
                    .prop_map(ParamValue::Integer)
                    .boxed(),
                (ParamType::Vec3 { .. }, ParamValue::Vec3(d)) if tame => Just(*d).prop_map(ParamValue::Vec3).boxed(),
                (ParamType::Vec3 { min, max, .. }, ParamValue::Vec3(d)) => {
                    vec3_strategy(*min, *max, *d).prop_map(ParamValue::Vec3).boxed()
                }
                (ParamType::Choice { options }, _) if !options.is_empty() => prop::sample::select(options.clone())
                    .prop_map(ParamValue::Choice)
                    .boxed(),
                (ParamType::Bool, _) => any::<bool>().prop_map(ParamValue::Bool).boxed(),
                _ => Just(default).boxed(),
            };
            values.prop_map(move |v| (name.clone(), v)).boxed()
        })
        .collect()
}

pub(crate) fn timeline_strategy() -> BoxedStrategy<Timeline> {
    (
        -100i64..=2000,
        2u64..=10,
        prop::sample::select(vec![(24u32, 1u32), (25, 1), (30, 1), (24_000, 1001), (60, 1)]),
    )
        .prop_map(|(start_frame, frame_count, (rate_num, rate_den))| Timeline {
            start_frame,
            frame_count,
            rate_num,
            rate_den,
        })
        .boxed()
}

/// Half the cases near the defaults with `anchor` connected and the other transform inputs 3
/// times in 4, half anywhere in the ranges with them connected half of the time.
fn wild_strategy(subject: &Subject) -> BoxedStrategy<Wild> {
    let make = |tame: bool| {
        let p = if tame { 0.75 } else { 0.5 };
        let motion = move || prop::option::weighted(p, Motion::strategy());
        // Near the defaults the anchor is always there (most pins need it).
        let anchor = if tame {
            Motion::strategy().prop_map(Some).boxed()
        } else {
            motion().boxed()
        };
        (
            param_strategy(subject, tame),
            timeline_strategy(),
            anchor,
            motion(),
            [motion(), motion(), motion()],
            prop::option::of(Wind::strategy()),
            prop::option::of(StateSpec::strategy(0.25, (0.0, 3.0), 1.0)),
        )
            .prop_map(
                move |(params, timeline, anchor, anchor_b, colliders, wind, state)| Wild {
                    tame,
                    params,
                    timeline,
                    anchor,
                    anchor_b,
                    colliders: colliders.to_vec(),
                    wind,
                    state,
                },
            )
            .boxed()
    };
    Union::new(vec![make(true), make(false)]).boxed()
}

fn integer_of(params: &[(String, ParamValue)], name: &str) -> Option<i64> {
    params.iter().find(|(n, _)| n == name).and_then(|(_, v)| match v {
        ParamValue::Integer(i) => Some(*i),
        _ => None,
    })
}

fn number_of(params: &[(String, ParamValue)], name: &str) -> Option<f64> {
    params.iter().find(|(n, _)| n == name).and_then(|(_, v)| match v {
        ParamValue::Number(x) => Some(*x),
        _ => None,
    })
}

fn build(subject: &Subject, case: &Wild) -> Setup {
    let tl = case.timeline;
    let mut setup = Setup::new(tl);
    for (name, value) in &case.params {
        setup = setup.param(name, value.clone());
    }
    let mut origin: V3 = [0.0, 0.0, 1.0];
    let connect = |setup: Setup, name: &str, motion: &Option<Motion>| match motion {
        Some(m) if subject.has_input(name) => setup.connect(name, m.series(&tl)),
        _ => setup,
    };
    if let Some(m) = &case.anchor
        && subject.has_input("anchor")
    {
        origin = m.base;
    }
    setup = connect(setup, "anchor", &case.anchor);
    setup = connect(setup, "anchor_b", &case.anchor_b);
    for (k, c) in case.colliders.iter().enumerate() {
        setup = connect(setup, &format!("collider_{}", k + 1), c);
    }
    if let Some(w) = &case.wind
        && subject.has_input("wind")
    {
        setup = setup.connect("wind", w.series(tl.frames()));
    }
    let material = Material {
        count: integer_of(&case.params, "count").unwrap_or(1).max(1),
        segments: integer_of(&case.params, "segments").unwrap_or(1).max(1),
        length: number_of(&case.params, "length").unwrap_or(0.4),
        mass_per_length: number_of(&case.params, "mass_per_length").unwrap_or(0.05),
        stretch: number_of(&case.params, "stretch_stiffness").unwrap_or(200.0),
        bending: number_of(&case.params, "bending_stiffness").unwrap_or(0.0),
    };
    if case.tame
        && let (Some(drawn), Some((_, max))) = (integer_of(&case.params, "substeps"), subject.integer_range("substeps"))
    {
        // Near the defaults the case should run, not blow up: at least h omega_max <= 1.
        let stable = material.substeps(tl.dt(), 1.0);
        if stable.is_positive() {
            setup = setup.integer("substeps", drawn.max(stable).min(max).min(TAME_SUBSTEPS_CAP));
        }
    }
    if let Some(state) = &case.state {
        let origins: Vec<V3> = (0..material.count)
            .map(|s| add(origin, [0.05 * s as f64, 0.0, 0.0]))
            .collect();
        let (x, v) = state.build(&material, &origins, false);
        setup = setup.initial_state(&x, &v).note(state.describe());
    }
    let motions: Vec<String> = [("anchor", &case.anchor), ("anchor_b", &case.anchor_b)]
        .into_iter()
        .chain(case.colliders.iter().enumerate().map(|(k, c)| {
            let name: &'static str = ["collider_1", "collider_2", "collider_3"][k.min(2)];
            (name, c)
        }))
        .filter_map(|(n, m)| match m {
            Some(m) if subject.has_input(n) => Some(format!("{n}: {m:?}")),
            _ => None,
        })
        .collect();
    for m in motions {
        setup = setup.note(m);
    }
    if let Some(w) = &case.wind
        && subject.has_input("wind")
    {
        setup = setup.note(format!("wind: {w:?}"));
    }
    setup
}

/// Two identical calls compared value by value, bit for bit.
pub(crate) fn compare(a: &Run, b: &Run) -> Result<(), Verdict> {
    let tl = a.timeline;
    for ((name, va, w), (_, vb, _)) in a.outputs().zip(b.outputs()) {
        if let Some(k) = va.iter().zip(vb).position(|(x, y)| x.to_bits() != y.to_bits()) {
            let w = w.max(1);
            let frame = tl.frame_number(k / w);
            let unwritten = if vb[k] == SENTINEL {
                format!(
                    " (the second call's buffers were pre-filled with {SENTINEL:e}: the node never writes this value, \
                     so it depends on what the host's buffer held)"
                )
            } else {
                String::new()
            };
            return Err(Verdict::at(
                format!(
                    "two identical calls differ: `{name}` value {} of frame {frame} is {} the first time and {} the \
                     second{unwritten}",
                    k % w,
                    va[k],
                    vb[k]
                ),
                frame,
            ));
        }
    }
    for (k, (x, y)) in a.summaries.iter().zip(&b.summaries).enumerate() {
        if x.to_bits() != y.to_bits() {
            return Err(Verdict::fail(format!(
                "two identical calls differ: summary value {k} is {x} the first time and {y} the second"
            )));
        }
    }
    if a.warnings != b.warnings {
        return Err(Verdict::fail(format!(
            "two identical calls differ: warnings {:?} the first time and {:?} the second",
            a.warnings, b.warnings
        )));
    }
    Ok(())
}

/// Every output value and summary value finite.
pub(crate) fn all_finite(run: &Run, subject: &Subject) -> Result<(), Verdict> {
    let tl = run.timeline;
    for (name, values, w) in run.outputs() {
        if let Some(k) = values.iter().position(|v| !v.is_finite()) {
            let w = w.max(1);
            let frame = tl.frame_number(k / w);
            return Err(Verdict::at(
                format!(
                    "`{name}` value {} of frame {frame} is {} (the host rejects every non-finite output; the node \
                     should return an error naming the problem instead)",
                    k % w,
                    values[k]
                ),
                frame,
            ));
        }
    }
    if let Some(k) = run.summaries.iter().position(|v| !v.is_finite()) {
        return Err(Verdict::fail(format!(
            "summary value `{}` is {}",
            subject.spec().summaries[k].name,
            run.summaries[k]
        )));
    }
    Ok(())
}

/// Runs the random cases of property 3 and counts the cases the node refused.
///
/// Half the cases are near the defaults: each number at its default, scaled by 0.5 to 2 (within
/// the range) or at zero where its range starts at zero; integers between half and twice their
/// default, `substeps` then raised to h omega_max <= 1 (the kit's stability estimate, at most
/// 2000) so that these cases run rather than blow up; vectors at their default; every choice
/// word and boolean; `anchor` connected, each other transform input 3 times in 4. The other
/// half are anywhere in the declared ranges: numbers at their default (1 in 4), at either end (1
/// in 8 each) or inside (1 in 2; log-uniformly when the range spans more than three decades from
/// zero or a positive minimum), vectors at their default, at zero or with components in [-1, 1]
/// within the range; transform inputs connected half of the time. To bound the cost, `count` is drawn up to 3, `segments` up to 24,
/// `substeps` up to 200 in the wide half, other integers up to max(min + 16, 2 x default).
/// Timelines: 2 to 10 frames starting anywhere from frame -100 to 2000 at 24, 25, 30, 60 or
/// 24000/1001 fps. Transform inputs (`anchor`, `anchor_b`, `collider_1..3`) are still or moving
/// (up to 1 m/s, turning up to 3 rad/s); `wind`, if the node has it, is connected half of the
/// time (a grid of 1 to 3 samples per axis in the `heft_node_sdk::field` layout, up to 5 m/s);
/// the initial state half of the time (jitter up to a quarter segment, speeds up to 3 m/s plus
/// a drift up to 1 m/s).
///
/// Each case is called twice, the second time into output buffers pre-filled with a sentinel
/// (the host fills with zeros). A `NodeError` both times with the same message is counted, not
/// failed (a blow-up message for too few substeps is the contract's answer); a panic, a
/// malformed call, different results (bits, warnings or errors) or a non-finite output or
/// summary value is a [`Failure`].
pub fn finiteness_counts(subject: &Subject, tolerances: &Tolerances) -> Result<Counts, Failure> {
    let ran = Cell::new(0u32);
    let errors = Cell::new(0u32);
    let examples: RefCell<Vec<String>> = RefCell::new(Vec::new());
    let strategy = wild_strategy(subject);
    run_property(
        subject,
        Property::Determinism,
        &tolerances.budget,
        tolerances.budget.wild_cases,
        0x6465_7465,
        strategy,
        |case| {
            let setup = build(subject, case);
            let text = subject.describe(&setup);
            let first = subject.run(&setup);
            let second = subject.run_filled(&setup, SENTINEL);
            ran.set(ran.get() + 1);
            let verdict = match (&first, &second) {
                (Err(RunError::Setup(m)), _) | (_, Err(RunError::Setup(m))) => Err(Verdict::Reject(m.clone())),
                (Err(e @ RunError::Node { status, .. }), _) | (_, Err(e @ RunError::Node { status, .. }))
                    if *status != Status::NodeError =>
                {
                    Err(Verdict::fail(e.to_string()).about(Property::Finiteness))
                }
                (Err(a), Err(b)) if a == b => {
                    errors.set(errors.get() + 1);
                    let mut ex = examples.borrow_mut();
                    if ex.len() < 3 {
                        ex.push(format!("{a} [case: {text}]"));
                    }
                    Ok(())
                }
                (Err(a), Err(b)) => Err(Verdict::fail(format!(
                    "two identical calls fail differently: first `{a}`, then `{b}`"
                ))),
                (Ok(_), Err(e)) | (Err(e), Ok(_)) => Err(Verdict::fail(format!(
                    "of two identical calls one succeeds and one fails ({e})"
                ))),
                (Ok(a), Ok(b)) => {
                    compare(a, b).and_then(|()| all_finite(a, subject).map_err(|v| v.about(Property::Finiteness)))
                }
            };
            verdict.map_err(|v| (v, text))
        },
    )?;
    Ok(Counts {
        cases: ran.get(),
        errors: errors.get(),
        examples: examples.into_inner(),
    })
}

/// Property 3: the same inputs give bit-identical outputs, and no output is NaN or infinite, for
/// random parameters anywhere in the valid ranges (see [`finiteness_counts`] for the cases).
/// Fails also when the node refused every case: then nothing was checked.
pub fn check_deterministic_and_finite(subject: &Subject, tolerances: &Tolerances) -> Result<(), Failure> {
    let counts = finiteness_counts(subject, tolerances)?;
    something_checked(subject, &counts)
}

/// A failure when the node refused every case: then nothing was checked.
pub(crate) fn something_checked(subject: &Subject, counts: &Counts) -> Result<(), Failure> {
    if counts.cases > 0 && counts.errors == counts.cases {
        return Err(Failure::new(
            Property::Finiteness,
            subject.name(),
            format!(
                "the node returned an error in every one of the {} random cases, so no output was checked; the \
                 first: {}",
                counts.cases,
                counts.examples.first().cloned().unwrap_or_default()
            ),
        ));
    }
    Ok(())
}

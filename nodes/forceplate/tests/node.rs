//! `forceplate.analyse` called as a node (no plugin boundary), and property tests of
//! [`heft_forceplate::analyse`].

mod support;

use heft_forceplate::{Analyse, Phase, Settings, analyse};
use heft_node_sdk::{Io, Node, NodeError, NodeSpec, ParamType, ParamValue, Params, Series, Timeline};
use proptest::prelude::*;
use support::{Jump, rel};

fn timeline(start_frame: i64, frames: usize, fps: u32) -> Timeline {
    Timeline {
        start_frame,
        frame_count: frames as u64,
        rate_num: fps,
        rate_den: 1,
    }
}

/// Runs the node; returns the outputs, the summaries and the warnings.
type Run = (Vec<Vec<f64>>, Vec<f64>, Vec<String>);

fn run(force: &[f64], tl: Timeline, params: &Params) -> Result<Run, NodeError> {
    let spec: NodeSpec = Analyse::spec();
    let n = tl.frames();
    let widths: Vec<usize> = spec.outputs.iter().map(|o| o.kind.width(0)).collect();
    let mut bufs: Vec<Vec<f64>> = widths.iter().map(|w| vec![f64::NAN; n * w]).collect();
    let (summaries, warnings, result) = {
        let outputs: Vec<&mut [f64]> = bufs.iter_mut().map(|b| b.as_mut_slice()).collect();
        let mut io = Io::new(tl, &spec, vec![Series::new(force, 1)], outputs, widths);
        let result = Analyse::evaluate(params, &mut io);
        (io.summaries().to_vec(), io.warnings().to_vec(), result)
    };
    result.map(|()| (bufs, summaries, warnings))
}

fn defaults() -> Params {
    Params::defaults(&Analyse::spec()).expect("every parameter has a default")
}

#[test]
fn the_spec_is_complete_and_its_defaults_lie_in_range() {
    let spec = Analyse::spec();
    assert_eq!(spec.name, "analyse");
    assert!(!spec.doc.is_empty() && spec.notes.contains("Owen") && spec.notes.contains("Linthorne"));
    for p in &spec.params {
        let (ParamType::Number { min, max, .. }, Some(ParamValue::Number(d))) = (&p.ty, &p.default) else {
            panic!("parameter `{}` should be a number with a default", p.name);
        };
        assert!(min <= d && d <= max, "default of `{}` out of range", p.name);
    }
    let names: Vec<&str> = spec.summaries.iter().map(|s| s.name.as_str()).collect();
    assert_eq!(names.len(), 15, "{names:?}");
    // The node's defaults are the analysis' defaults.
    let s = Settings::default();
    let p = defaults();
    assert_eq!(p.number("standing_duration").ok(), Some(s.standing_duration));
    assert_eq!(p.number("onset_deviations").ok(), Some(s.onset_deviations));
    assert_eq!(p.number("onset_backtrack").ok(), Some(s.onset_backtrack));
    assert_eq!(p.number("flight_threshold").ok(), Some(s.flight_threshold));
    assert_eq!(p.number("min_flight_duration").ok(), Some(s.min_flight_duration));
}

/// The node writes what `analyse` finds, with times on the timeline: starting at frame 250 at
/// 1000 fps shifts every time by 0.25 s (Timeline::time: frame number over frame rate).
#[test]
fn the_node_reports_the_analysis_on_the_timeline() {
    let jump = Jump::ilse();
    let force = jump.record(1000.0);
    let tl = timeline(250, force.len(), 1000);
    let (outputs, summaries, warnings) = run(&force, tl, &defaults()).expect("evaluates");
    let a = analyse(&force, 1000.0, &Settings::default()).expect("analyses");
    assert!(warnings.is_empty(), "{warnings:?}");
    assert_eq!(outputs[0], a.velocity);
    assert_eq!(outputs[1], a.displacement);
    assert_eq!(outputs[3], a.body_weights);
    let codes: Vec<f64> = a.phase.iter().map(|p| p.code()).collect();
    assert_eq!(outputs[2], codes);
    // The centre of mass: at the default standing height (0.95 m) plus the path, upright.
    for (i, p) in a.path.iter().enumerate() {
        assert_eq!(outputs[4][7 * i..7 * i + 7], [0.0, 0.0, 0.95 + p, 0.0, 0.0, 0.0, 1.0]);
    }
    let spec = Analyse::spec();
    let get = |name: &str| summaries[spec.summaries.iter().position(|s| s.name == name).expect(name)];
    assert!(summaries.iter().all(|v| v.is_finite()), "{summaries:?}");
    assert!((get("takeoff_time") - (a.takeoff_time + 0.25)).abs() < 1e-9);
    assert!((get("touchdown_time") - (a.touchdown_time + 0.25)).abs() < 1e-9);
    assert!((get("onset_time") - (a.onset_time + 0.25)).abs() < 1e-9);
    // Values against the closed-form jump (see tests/jump.rs for the sources).
    assert!(rel(get("body_mass"), jump.mass) < 1e-9);
    assert!(rel(get("takeoff_velocity"), jump.takeoff_velocity()) < 0.005);
    let h = jump.takeoff_velocity().powi(2) / (2.0 * heft_node_sdk::STANDARD_GRAVITY);
    assert!(rel(get("height_from_flight_time"), h) < 0.005);
    assert!(rel(get("height_from_velocity"), h) < 0.005);
    assert!(get("countermovement_depth") < -0.2);
    // Pure: a second evaluation is bit-identical.
    let (again, summaries_again, _) = run(&force, tl, &defaults()).expect("evaluates");
    assert_eq!(outputs, again);
    assert_eq!(
        summaries.iter().map(|v| v.to_bits()).collect::<Vec<_>>(),
        summaries_again.iter().map(|v| v.to_bits()).collect::<Vec<_>>()
    );
}

#[test]
fn the_node_refuses_a_slow_timeline_and_names_frames() {
    let jump = Jump::ilse();
    let slow = jump.record(50.0);
    let e = run(&slow, timeline(0, slow.len(), 50), &defaults()).expect_err("50 fps");
    assert!(e.0.contains("sample rate 50 Hz is below 100 Hz"), "{e}");

    let force = jump.record(1000.0);
    let cut = &force[..((jump.touchdown() - 0.1) * 1000.0) as usize];
    let e = run(cut, timeline(250, cut.len(), 1000), &defaults()).expect_err("ends in flight");
    assert!(e.0.contains("take-off at frame 2490"), "{e}");
}

#[test]
fn the_node_passes_parameters_and_warnings() {
    let jump = Jump::ilse();
    let mut force = jump.record(1000.0);
    let k = analyse(&force, 1000.0, &Settings::default())
        .expect("analyses")
        .takeoff_index;
    force[k + 100] = 14.0;
    let low = defaults()
        .with("flight_threshold", ParamValue::Number(10.0))
        .and_then(|p| p.with("min_flight_duration", ParamValue::Number(0.0)))
        .expect("parameters exist");
    let (outputs, _, warnings) = run(&force, timeline(0, force.len(), 1000), &low).expect("evaluates");
    assert_eq!(outputs[2][k + 100], Phase::Landing.code(), "the spike ends the flight");
    assert!(warnings.iter().any(|w| w.contains("may be a spike")), "{warnings:?}");
}

/// Bounded strategies only (no default float strategies).
fn jump_strategy() -> impl Strategy<Value = Jump> {
    (
        45.0..130.0f64,
        1.0..1.8f64,
        2.0..8.0f64,
        0.2..0.4f64,
        12.0..20.0f64,
        0.35..0.6f64,
        0.03..0.08f64,
    )
        .prop_map(|(mass, t0, a1, t1, p, t2, t3)| Jump {
            mass,
            t0,
            a1,
            t1,
            p,
            t2,
            t3,
            ..Jump::ilse()
        })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(128))]

    /// Impulse-momentum (Linthorne 2001) over a family of closed-form jumps at 1000 Hz: the
    /// analysis' m v at its take-off instant equals m v of the closed-form motion at that instant
    /// (the impulse of F - m g from rest), and the take-off and touch-down instants lie within
    /// one sample of the closed-form 20 N crossings. (Where the force reaches zero inside a
    /// sample, linear interpolation across that corner can move the crossing by up to a sample,
    /// so v is compared at the analysis' own instant; tests/jump.rs checks the nominal values.)
    #[test]
    fn any_closed_form_jump_obeys_impulse_momentum(jump in jump_strategy()) {
        let rate = 1000.0;
        let a = analyse(&jump.record(rate), rate, &Settings::default()).expect("analyses");
        let v = jump.kinematics(a.takeoff_time).1;
        prop_assert!(rel(a.body_mass * a.takeoff_velocity, jump.mass * v) < 2e-4,
            "m v {} vs {}", a.body_mass * a.takeoff_velocity, jump.mass * v);
        let (t_off, t_on) = (jump.takeoff_crossing(20.0), jump.touchdown_crossing(20.0));
        prop_assert!((a.takeoff_time - t_off).abs() < 1.0 / rate, "take-off {} vs {t_off}", a.takeoff_time);
        prop_assert!((a.touchdown_time - t_on).abs() < 1.0 / rate, "touch-down {} vs {t_on}", a.touchdown_time);
        prop_assert!(a.warnings.is_empty(), "{:?}", a.warnings);
    }

    /// Whatever the record (quiet standing, then arbitrary steps of force), the analysis never
    /// panics, and when it succeeds every output and summary is finite and the phases never
    /// go backwards.
    #[test]
    fn any_record_gives_finite_results_or_an_error(
        bw in 100.0..1500.0f64,
        // Half the steps unload the plate (below the 20 N threshold), half load it.
        steps in proptest::collection::vec((prop_oneof![-50.0..20.0f64, 20.0..4000.0f64], 1usize..400), 0..12),
        rate in prop_oneof![Just(100.0), Just(333.0), Just(1000.0)],
    ) {
        let mut force = vec![bw; rate as usize];
        for (value, len) in steps {
            force.extend(std::iter::repeat_n(value, len));
        }
        if let Ok(a) = analyse(&force, rate, &Settings::default()) {
            let scalars = [a.body_mass, a.onset_time, a.takeoff_time, a.touchdown_time, a.flight_time,
                a.takeoff_velocity, a.height_from_velocity, a.height_from_flight_time,
                a.peak_propulsive_force, a.peak_landing_force, a.countermovement_depth];
            prop_assert!(scalars.iter().all(|v| v.is_finite()), "{scalars:?}");
            prop_assert!(a.velocity.iter().chain(&a.displacement).chain(&a.body_weights).all(|v| v.is_finite()));
            prop_assert!(a.phase.windows(2).all(|w| w[0] <= w[1]));
            prop_assert!(a.flight_time >= Settings::default().min_flight_duration);
        }
    }
}

/// Two jumps in one record through the node: each frame says its jump (1 then 2) and that
/// jump's height, the summaries count the jumps and name the higher one (Ilse's first jump,
/// p = 16 m/s^2, against the second's 12), and the other summaries are the first jump's.
#[test]
fn the_node_splits_a_record_of_two_jumps() {
    use heft_forceplate::analyse_jumps;
    let first = Jump::ilse();
    let second = Jump {
        p: 12.0,
        ..Jump::ilse()
    };
    let mut force = first.record(1000.0);
    force.extend(second.record(1000.0));
    let (outputs, summaries, _) = run(&force, timeline(0, force.len(), 1000), &defaults()).expect("evaluates");
    let jumps = analyse_jumps(&force, 1000.0, &Settings::default()).expect("analyses");
    let spec = Analyse::spec();
    let out = |name: &str| &outputs[spec.outputs.iter().position(|o| o.name == name).expect(name)];
    let get = |name: &str| summaries[spec.summaries.iter().position(|s| s.name == name).expect(name)];
    for (k, j) in jumps.iter().enumerate() {
        for i in j.start..j.end {
            assert_eq!(out("jump")[i], (k + 1) as f64, "frame {i}");
            assert_eq!(out("jump_height")[i], j.analysis.height_from_velocity, "frame {i}");
        }
    }
    assert_eq!(get("jump_count"), 2.0);
    assert_eq!(get("highest_jump_number"), 1.0);
    assert_eq!(get("highest_jump"), jumps[0].analysis.height_from_velocity);
    assert!(jumps[0].analysis.height_from_velocity > jumps[1].analysis.height_from_velocity);
    assert_eq!(get("takeoff_velocity"), jumps[0].analysis.takeoff_velocity);
}

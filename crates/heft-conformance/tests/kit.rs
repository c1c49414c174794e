//! The kit against the fixture plugin `leaky` (tests/fixtures/plugin-leaky): it must pass the
//! correct reference node and fail each deliberately broken one on the property it breaks.

use heft_conformance::{
    Property, Setup, Subject, Tolerances, check_all, check_convergence, check_deterministic_and_finite, check_energy,
    check_momentum, finiteness_counts, measure_order,
};

fn subject(node: &str) -> Subject {
    Subject::from_static(heft_test_plugin_leaky::plugin_table(), node).expect("the fixture node loads")
}

#[test]
fn the_leaky_strand_fails_the_momentum_property() {
    // leaky.strand adds 1e-3 m/s^2 along +X to every particle at every substep: momentum grows by
    // M * 1e-3 N per second of simulation (impulse-momentum theorem), from the first frame on.
    let f = check_momentum(&subject("leaky.strand"), &Tolerances::default()).expect_err("the leak is found");
    assert_eq!(f.property, Property::Momentum);
    assert_eq!(f.node, "leaky.strand");
    // The kit's timelines start at frame 1001: the first frame after the initial state is 1002.
    assert_eq!(f.frame, Some(1002), "{f}");
    let text = f.to_string();
    assert!(text.starts_with("`leaky.strand` fails momentum: "), "{text}");
    assert!(text.contains("the `momentum` output at frame 1002"), "{text}");
    let case = f.case.as_deref().expect("the case is reported");
    for part in [
        "pin = free",
        "gravity = 0 m/s^2",
        "damping = 0 1/s",
        "relative_damping = 0 1/s",
        "substeps = ",
    ] {
        assert!(case.contains(part), "{part} missing from {case}");
    }
}

#[test]
fn check_all_reports_the_momentum_failure_among_the_leaky_strands_failures() {
    let failures = check_all(&subject("leaky.strand"), &Tolerances::default()).expect_err("the leak is found");
    let f = failures.of(Property::Momentum).expect("a momentum failure");
    assert_eq!(f.frame, Some(1002));
    // Its determinism, finiteness and convergence are unaffected by a constant push.
    assert!(failures.of(Property::Determinism).is_none(), "{failures}");
    assert!(failures.of(Property::Finiteness).is_none(), "{failures}");
    assert!(failures.of(Property::Convergence).is_none(), "{failures}");
}

#[test]
fn the_sound_reference_node_passes_every_property() {
    check_all(&subject("leaky.sound"), &Tolerances::default()).expect("leaky.sound conforms");
}

#[test]
fn wrong_sign_damping_fails_energy_and_nothing_else_sees_it() {
    let pump = subject("leaky.pump");
    let f = check_energy(&pump, &Tolerances::default()).expect_err("the pump is found");
    assert_eq!(f.property, Property::Energy);
    assert!(f.message.contains("energy"), "{f}");
    // The momentum check runs with damping 0, where the defect does nothing.
    check_momentum(&pump, &Tolerances::default()).expect("no damping, no defect");
}

#[test]
fn a_call_counter_in_the_output_fails_determinism() {
    let f = check_deterministic_and_finite(&subject("leaky.restless"), &Tolerances::default())
        .expect_err("the counter is found");
    assert_eq!(f.property, Property::Determinism);
    assert!(f.message.starts_with("two identical calls differ: `positions`"), "{f}");
    assert!(f.frame.is_some(), "{f}");
}

#[test]
fn nan_at_an_end_of_a_valid_range_fails_finiteness() {
    let f = check_deterministic_and_finite(&subject("leaky.fragile"), &Tolerances::default())
        .expect_err("the NaN is found");
    assert_eq!(f.property, Property::Finiteness);
    assert!(f.message.starts_with("`energy` value 0 of frame"), "{f}");
    assert!(f.message.contains("NaN"), "{f}");
    let case = f.case.as_deref().expect("the case is reported");
    assert!(case.contains("bending_stiffness = 0 N m^2"), "{case}");
}

#[test]
fn refused_cases_are_counted_not_failed() {
    let counts = finiteness_counts(&subject("leaky.sound"), &Tolerances::default()).expect("no failure");
    assert_eq!(counts.cases, Tolerances::default().budget.wild_cases);
    // Random parameters across the whole ranges make an explicit method blow up, and pin one_end
    // without an anchor is an error: some cases are refused, most must run.
    assert!(counts.errors > 0 && 2 * counts.errors < counts.cases, "{counts:?}");
    assert!(
        counts
            .examples
            .iter()
            .any(|e| e.contains("blew up at frame") || e.contains("needs the `anchor` input")),
        "{counts:?}"
    );
}

#[test]
fn claiming_second_order_for_symplectic_euler_fails_convergence() {
    let tol = Tolerances {
        order: 2.0,
        ..Tolerances::default()
    };
    let f = check_convergence(&subject("leaky.sound"), &tol).expect_err("first order is not second");
    assert_eq!(f.property, Property::Convergence);
    assert!(f.message.contains("observed order 1.0"), "{f}");
    assert!(f.message.contains("the node declares order 2 +- 0.3"), "{f}");
}

#[test]
fn the_measured_order_of_symplectic_euler_is_one() {
    // Symplectic Euler is a first-order method (Hairer, Lubich & Wanner 2006, Geometric Numerical
    // Integration, 2nd ed., section I.1.2 and theorem VI.3.3). Against a reference at 64 n
    // substeps with error C (h/64), the measured ratio is (1 - 1/64) / (1/2 - 1/64) = 2.0323,
    // log2 = 1.0231 (derived in `measure_order`'s documentation).
    let sound = subject("leaky.sound");
    let setup = Setup::at_24fps(12)
        .integer("segments", 4)
        .number("length", 0.4)
        .number("mass_per_length", 0.1)
        .number("stretch_stiffness", 2.5)
        .number("bending_stiffness", 1.0e-5)
        .number("damping", 0.2)
        .number("relative_damping", 0.0)
        .choice("pin", "one_end")
        .choice("placement", "single")
        .vec3("rest_direction", [1.0, 0.0, 0.0])
        .connect_still("anchor", &[0.0, 0.0, 1.0, 0.0, 0.0, 0.0, 1.0]);
    let m = measure_order(&sound, &setup, 40, 2560).expect("runs");
    assert!((m.order - 1.0231).abs() < 0.02, "{m:?}");
    assert!(m.errors[0] > m.errors[1] && m.errors[1] > 0.0, "{m:?}");
}

#[test]
fn nodes_are_found_by_name_and_unknown_ones_are_named() {
    assert_eq!(subject("sound").name(), "leaky.sound");
    let e = Subject::from_static(heft_test_plugin_leaky::plugin_table(), "leaky.hair").expect_err("no such node");
    assert_eq!(e.property, Property::Load);
    assert!(e.message.contains("leaky.sound, leaky.strand"), "{e}");
    let e = Subject::from_static(heft_test_plugin_leaky::plugin_table(), "xpbd.sound").expect_err("wrong plugin");
    assert!(e.message.contains("the plugin is `leaky`"), "{e}");
}

#[test]
fn setups_outside_the_declared_ranges_are_refused_before_the_node_runs() {
    let sound = subject("leaky.sound");
    let e = sound
        .run(&Setup::at_24fps(3).number("damping", -1.0))
        .expect_err("out of range");
    assert!(
        e.to_string()
            .contains("`damping` = -1 is outside its valid range 0 to 100"),
        "{e}"
    );
    let e = sound
        .run(&Setup::at_24fps(3).number("stiffness", 1.0))
        .expect_err("unknown");
    assert!(e.to_string().contains("no parameter `stiffness`"), "{e}");
    let e = sound
        .run(&Setup::at_24fps(3).connect("anchor", vec![0.0; 20]))
        .expect_err("not a transform");
    assert!(e.to_string().contains("input `anchor`"), "{e}");
}

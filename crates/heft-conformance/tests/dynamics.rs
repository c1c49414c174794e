//! The kit's declared-dynamics checks against the fixture plugin `leaky`: a point mass on a
//! spring (not a strand) passes every property, and each deliberately broken follower fails the
//! property it breaks; the strand reference passes the same checks through the strand
//! contract's declaration.

use heft_conformance::{Dynamics, Mass, Property, Subject, Tolerances, check_balance, check_dynamics, check_history};
use heft_node_sdk::ParamValue;

fn open(node: &str) -> Subject {
    Subject::open_static(heft_test_plugin_leaky::plugin_table(), node).expect("the fixture node loads")
}

/// What the follower's author declares.
fn follower() -> Dynamics {
    Dynamics::new("position", "velocity", Mass::Each("mass".into()))
        .momentum("momentum")
        .energy("energy")
        .gravity("gravity")
        .reaction("force")
        .anchor("target")
        .dissipation("damping")
        .free("stiffness", ParamValue::Number(0.0))
        .substeps("substeps", 8)
}

#[test]
fn a_spring_follower_passes_every_property() {
    check_dynamics(&open("leaky.follower"), &follower(), &Tolerances::default()).expect("leaky.follower conforms");
}

#[test]
fn a_force_the_reaction_leaves_out_fails_momentum_balance() {
    let f = check_balance(&open("leaky.drag"), &follower(), &Tolerances::default()).expect_err("the drag is found");
    assert_eq!(f.property, Property::Momentum, "{f}");
    assert!(f.message.starts_with("momentum is not balanced"), "{f}");
    assert!(f.frame.is_some(), "{f}");
}

#[test]
fn memory_across_calls_fails_independence_of_call_history() {
    let f = check_history(&open("leaky.memory"), &follower(), &Tolerances::default()).expect_err("the memory is found");
    assert_eq!(f.property, Property::History, "{f}");
    assert!(
        f.message.starts_with("the result depends on the calls made before"),
        "{f}"
    );
    let case = f.case.as_deref().expect("the case is reported");
    assert!(
        !case.contains("target:"),
        "the failing case leaves the target unconnected: {case}"
    );
}

/// A node that runs in windows of frames but forgets its state between them gives other results
/// in windows than whole: found, as a result that depends on how it is called.
#[test]
fn forgetting_between_windows_fails_independence_of_call_history() {
    let subject = open("leaky.forgetful");
    assert!(subject.windowed());
    let f = check_history(&subject, &follower(), &Tolerances::default()).expect_err("the forgetting is found");
    assert_eq!(f.property, Property::History, "{f}");
    assert!(
        f.message
            .starts_with("the result depends on the windows of frames it is evaluated in: in windows of 1 frame(s)"),
        "{f}"
    );
    // The follower itself runs in windows too, and gives the same bits (it passes every
    // property above).
    assert!(open("leaky.follower").windowed());
}

#[test]
fn a_declaration_that_does_not_fit_is_named_piece_by_piece() {
    let d = Dynamics::new("position", "speed", Mass::Each("weight".into()))
        .reaction("energy")
        .anchor("target")
        .substeps("substeps", 0);
    let problems = d.problems(&open("leaky.follower"));
    assert_eq!(
        problems,
        [
            "no output `speed` (m/s)",
            "output `energy` is scalar in J, the declaration needs vec3 in N",
            "no number parameter `weight` (kg)",
            "0 substeps is outside `substeps`'s range 1 to 100000",
        ]
    );
    let failures = check_dynamics(&open("leaky.follower"), &d, &Tolerances::default()).expect_err("refused");
    assert_eq!(failures.0.len(), 1);
    assert_eq!(failures.0[0].property, Property::Contract);
}

#[test]
fn the_strand_reference_passes_the_declared_checks_and_the_leaky_strand_fails_balance() {
    let strand = Dynamics::strand();
    let sound = Subject::from_static(heft_test_plugin_leaky::plugin_table(), "leaky.sound").expect("loads");
    check_dynamics(&sound, &strand, &Tolerances::default()).expect("leaky.sound conforms");
    let f = check_balance(&open("leaky.strand"), &strand, &Tolerances::default()).expect_err("the push is found");
    assert_eq!(f.property, Property::Momentum, "{f}");
}

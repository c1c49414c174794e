//! The spring through heft's conformance kit, as a studio's node would be: the author declares
//! which outputs hold the state and how the masses are known, which parameters set gravity and
//! dissipation, which setting leaves the point free, which output reports the force its target
//! puts on it, and which input the kit moves; the kit checks momentum balance, energy,
//! determinism and finiteness, independence of call history and convergence order through the
//! plugin boundary heft uses.

use heft_conformance::{Dynamics, Mass, Subject, Tolerances, check_dynamics};
use heft_node_sdk::ParamValue;

#[test]
fn the_spring_passes_the_conformance_kit() {
    let subject = Subject::open_static(heft_follow::plugin_table(), "follow.spring").expect("the node loads");
    let declared = Dynamics::new("position", "velocity", Mass::Each("mass".into()))
        .energy("energy")
        .gravity("gravity")
        .reaction("force")
        .anchor("target")
        .dissipation("damping_ratio")
        .free("frequency", ParamValue::Number(0.0))
        // omega h = 0.065 at the defaults: every mode resolved, the error in its asymptotic regime.
        .substeps("substeps", 8);
    // Symplectic Euler is first order and keeps energy within about omega h of itself without
    // damping: the kit's defaults (order 1 +- 0.3, energy within 10 %) are its claims.
    check_dynamics(&subject, &declared, &Tolerances::default()).unwrap();
}

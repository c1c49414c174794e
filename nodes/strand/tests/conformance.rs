//! `strand.euler` and `strand.verlet` against the conformance kit (crates/heft-conformance):
//! momentum, energy, determinism and finiteness, convergence order, through the plugin boundary
//! the host uses. The tolerances are what each method is known to do, not fitted to the runs;
//! the figures measured with the kit's default budget and seed are quoted beside them (the kit
//! passes at those values and fails just below them).

use heft_conformance::{Dynamics, Subject, Tolerances, check_all, check_dynamics};
use heft_node_sdk::ParamValue;

fn subject(node: &str) -> Subject {
    Subject::from_static(heft_strand::plugin_table(), node).expect("the node type follows the strand contract")
}

/// Symplectic Euler on the mass-spring chain (started as leapfrog).
///
/// - Momentum: internal forces come in equal and opposite pairs, so momentum is conserved to
///   rounding; the kit's allowance 1e-9 of M v_max is a rounding allowance. Measured: 2.5e-13.
/// - Energy: symplectic, first order. For a harmonic oscillator symplectic Euler conserves the
///   modified energy H~ = H - (h omega^2 / 2) p q exactly, and |(h omega^2 / 2) p q| <= (h omega / 2) H,
///   so H swings by at most about h omega of itself and does not drift (Hairer, Lubich & Wanner
///   2006, Geometric Numerical Integration, 2nd ed., sec. I.1 and IX.8 (from memory); the energy of
///   a nonlinear system stays within O(h) over exponentially long times, theorem IX.8.1). The kit
///   runs at h omega_max <= 0.1, omega_max an upper bound of the chain's highest frequency: so
///   `energy_drift` 0.1 (the bound if all the energy sat in the highest mode; measured 1.9e-2),
///   `drift_growth` 2 (a bounded error gives about 1; measured 0.96), and `energy_growth` 0.1 of
///   the range for the frame-to-frame rises of damped runs (the same h omega / 2 oscillation on
///   both sides; measured 3.3e-2).
/// - Order 1: symplectic Euler is a first-order method (ibid., sec. VI.3). Started as leapfrog
///   its positions would be second order for forces of position alone, but damping, relative
///   damping and drag act on the half-step velocity, a first-order error, and the kit's
///   convergence cases are damped. Measured orders 1.04 to 1.06; allowed 1 +- 0.3.
#[test]
fn euler_passes_the_conformance_kit() {
    let tolerances = Tolerances {
        momentum: 1.0e-9,
        energy_growth: 0.1,
        energy_drift: Some(0.1),
        drift_growth: 2.0,
        order: 1.0,
        order_tolerance: 0.3,
        ..Tolerances::default()
    };
    check_all(&subject("strand.euler"), &tolerances).unwrap();
    // The same claims through the checks any dynamics node gets, declared as the strand contract.
    check_dynamics(
        &subject("strand.euler"),
        &Dynamics::strand()
            .free("ground", ParamValue::Bool(false))
            // The contract's mass count x length x mass_per_length is a uniform strand's; a
            // tapered one's is the cone's (heft-strand-common's setup tests).
            .set("tip_thickness", ParamValue::Number(1.0)),
        &tolerances,
    )
    .unwrap();
}

/// Position Verlet with Jakobsen's distance-constraint projection.
///
/// - Momentum: the projection moves the two ends of a segment by mass-weighted equal and
///   opposite amounts, and bending forces come in balanced triples, so momentum is conserved to
///   rounding (1e-9 of M v_max allowed; measured 5.9e-12).
/// - Energy: dissipative, not symplectic (`energy_drift` None): projecting along the new segment
///   direction and taking v = (x_new - x) / h removes kinetic energy at first order in h (the
///   node notes; Jakobsen 2001, Advanced Character Physics, GDC, gives the projection; it is not
///   the symplectic RATTLE, whose multipliers act along the old constraint gradients: Hairer,
///   Lubich & Wanner 2006, sec. VII.1). So energy must never rise beyond `energy_growth` 0.1: the
///   explicit bending term oscillates by up to h omega / 2 of its energy as in symplectic Euler,
///   and h omega_max <= 0.1. Measured: no rise at all (passes at 1e-8) in damped and undamped
///   runs, since the initial state's projection no longer turns into velocity.
/// - Order 1: the projection's velocity error is first order in h (the notes: a pendulum's
///   period falls short in proportion to h, nodes/strand/tests/pendulum.rs). Measured 0.95 to
///   1.01; allowed 1 +- 0.3.
#[test]
fn verlet_passes_the_conformance_kit() {
    let tolerances = Tolerances {
        momentum: 1.0e-9,
        energy_growth: 0.1,
        energy_drift: None,
        order: 1.0,
        order_tolerance: 0.3,
        ..Tolerances::default()
    };
    check_all(&subject("strand.verlet"), &tolerances).unwrap();
    // A position method keeps no velocity: each projection and each g h^2 it adds moves positions
    // of order 1 m by amounts rounded to 1e-16 m, which is a velocity error of 1e-16 / h per
    // particle per step (5e-13 m/s at h = 1/4800 s); over hundreds of steps and a dozen
    // constraints a step this rounding reaches some 1e-8 of the momentum (measured 3.2e-8 in a
    // free fall of 39 frames at 20 substeps, 240 fps). Declared for the free fall: 1e-7.
    let free_fall = Tolerances {
        momentum: 1.0e-7,
        ..tolerances
    };
    check_dynamics(
        &subject("strand.verlet"),
        &Dynamics::strand()
            .free("ground", ParamValue::Bool(false))
            // The contract's mass count x length x mass_per_length is a uniform strand's; a
            // tapered one's is the cone's (heft-strand-common's setup tests).
            .set("tip_thickness", ParamValue::Number(1.0)),
        &free_fall,
    )
    .unwrap();
}

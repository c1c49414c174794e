//! Property 4: convergence at the declared order as the substep shrinks.

use crate::cases::{
    ANCHOR, Material, StateSpec, Verdict, add, beyond, clamp_number, int_range, num_range, place, run_property,
};
use crate::momentum::free_origin;
use crate::subject::{RunError, Setup, Subject};
use crate::{Failure, Property, Tolerances};
use proptest::prelude::*;

/// h omega_max of the coarse run: all modes resolved, so the error is in its asymptotic regime.
const H_OMEGA: f64 = 0.1;
/// The reference run has this many times the coarse run's substeps (fewer if the node's range
/// stops earlier, but at least `MIN_FACTOR`).
const REF_FACTOR: i64 = 64;
const MIN_FACTOR: i64 = 16;

/// What one convergence measurement found.
#[derive(Debug, Clone, PartialEq)]
pub struct OrderMeasurement {
    /// n: the coarse run's substeps; the fine run has 2 n.
    pub substeps: i64,
    /// The reference run's substeps.
    pub reference_substeps: i64,
    /// RMS position error (m) over every particle and every frame after the first, of the runs
    /// at n and 2 n substeps against the reference run.
    pub errors: [f64; 2],
    /// log2(errors\[0\] / errors\[1\]).
    pub order: f64,
}

/// Runs a setup at `substeps`, twice as many, and `reference` substeps, and measures the order
/// of convergence of the positions. With the reference's own error e_ref, the measured ratio is
/// (1 - (n / ref)^p) / (2^-p - (n / ref)^p) instead of 2^p: for ref = 64 n, 2.03 instead of 2
/// for p = 1 and 4.0 for p = 2.
pub fn measure_order(
    subject: &Subject,
    setup: &Setup,
    substeps: i64,
    reference: i64,
) -> Result<OrderMeasurement, RunError> {
    let reference_run = subject.run(&setup.clone().integer("substeps", reference))?;
    let coarse = subject.run(&setup.clone().integer("substeps", substeps))?;
    let fine = subject.run(&setup.clone().integer("substeps", 2 * substeps))?;
    let errors = [
        coarse.rms_distance(&reference_run, "positions"),
        fine.rms_distance(&reference_run, "positions"),
    ];
    Ok(OrderMeasurement {
        substeps,
        reference_substeps: reference,
        errors,
        order: (errors[0] / errors[1]).log2(),
    })
}

/// One convergence case.
#[derive(Debug, Clone)]
struct Case {
    segments: i64,
    length: f64,
    mass_per_length: f64,
    wave_speed: f64,
    bending: f64,
    gravity: f64,
    damping: f64,
    relative_damping: f64,
    state: StateSpec,
}

/// Checks the convergence order against `tolerances.order`.
///
/// A smooth problem with every mode resolved: one strand of 2 to 6 segments, `length` 0.3 to 0.6
/// m, `mass_per_length` 0.05 to 0.2 kg/m, `stretch_stiffness` = c^2 x `mass_per_length` for an
/// axial wave speed c of 3 to 6 m/s (a soft strand, so that 12 frames at 24 fps are at most 120
/// radians of its fastest mode), `bending_stiffness` 0 to 1e-4 N m^2, `gravity` 5 to 12 m/s^2,
/// `damping` and `relative_damping` 0 to 1 1/s. If the node has an `anchor` input and offers
/// `one_end`, the strand hangs from a fixed anchor at (0, 0, 1) m, straight at rest length within
/// 0.5 rad of horizontal, at rest, and swings down; otherwise it is free, with a random jitter
/// up to a tenth of a segment and velocities up to 0.5 m/s. The coarse run has h omega_max <= 0.1
/// (n substeps), the fine run 2 n, the reference 64 n (or the node's maximum, at least 16 n).
/// Passes when |log2(e(n) / e(2 n)) - order| <= order_tolerance.
pub fn check_convergence(subject: &Subject, tolerances: &Tolerances) -> Result<(), Failure> {
    let p = Property::Convergence;
    let pinned = subject.has_input("anchor") && subject.offers("pin", "one_end");
    let state = if pinned {
        (-std::f64::consts::PI..std::f64::consts::PI, -0.5f64..=0.5, any::<u64>())
            .prop_map(|(azimuth, elevation, seed)| StateSpec {
                azimuth,
                elevation,
                jitter: 0.0,
                speed: 0.0,
                drift: [0.0; 3],
                seed,
            })
            .boxed()
    } else {
        StateSpec::strategy(0.1, (0.0, 0.5), 0.0)
    };
    let strategy = (
        int_range(subject, p, "segments", (2, 6))?,
        num_range(subject, p, "length", (0.3, 0.6))?,
        num_range(subject, p, "mass_per_length", (0.05, 0.2))?,
        3.0f64..=6.0,
        num_range(subject, p, "bending_stiffness", (0.0, 1.0e-4))?,
        num_range(subject, p, "gravity", (5.0, 12.0))?,
        num_range(subject, p, "damping", (0.0, 1.0))?,
        num_range(subject, p, "relative_damping", (0.0, 1.0))?,
        state,
    )
        .prop_map(
            |(segments, length, mass_per_length, wave_speed, bending, gravity, damping, relative_damping, state)| {
                Case {
                    segments,
                    length,
                    mass_per_length,
                    wave_speed,
                    bending,
                    gravity,
                    damping,
                    relative_damping,
                    state,
                }
            },
        );
    let max = subject.integer_range("substeps").map_or(i64::MAX, |r| r.1);
    let tol = tolerances;
    run_property(
        subject,
        p,
        &tol.budget,
        tol.budget.convergence_cases,
        0x636f_6e76,
        strategy,
        |case| {
            let material = Material {
                count: 1,
                segments: case.segments,
                length: case.length,
                mass_per_length: case.mass_per_length,
                stretch: clamp_number(
                    subject,
                    "stretch_stiffness",
                    case.wave_speed * case.wave_speed * case.mass_per_length,
                ),
                bending: case.bending,
            };
            let dt = Setup::at_24fps(1).timeline.dt();
            let n = material.substeps(dt, H_OMEGA).max(2);
            let reference = (REF_FACTOR * n).min(max);
            if reference < MIN_FACTOR * n {
                return Err((
                    Verdict::Reject(format!(
                        "a reference of {} substeps is needed, the node allows {max}",
                        MIN_FACTOR * n
                    )),
                    String::new(),
                ));
            }
            let (mut setup, pins) = place(subject, Setup::at_24fps(12), 1);
            let origin = if pinned {
                setup = setup.connect_still("anchor", &ANCHOR);
                add([ANCHOR[0], ANCHOR[1], ANCHOR[2]], pins[0])
            } else {
                free_origin(0)
            };
            let (x, v) = case.state.build(&material, &[origin], pinned);
            let setup = material
                .apply(setup)
                .choice("pin", if pinned { "one_end" } else { "free" })
                .number("gravity", case.gravity)
                .number("damping", case.damping)
                .number("relative_damping", case.relative_damping)
                .initial_state(&x, &v)
                .note(case.state.describe())
                .note(format!("substeps {n}, {} and a reference at {reference}", 2 * n));
            let text = subject.describe(&setup);
            let m = measure_order(subject, &setup, n, reference).map_err(|e| {
                (
                    Verdict::from_run(&e, "a soft strand inside the node's ranges, h omega_max <= 0.1"),
                    text.clone(),
                )
            })?;
            let [e1, e2] = m.errors;
            let resolvable = 1.0e-10 * material.length;
            if !(e1.is_finite() && e2.is_finite() && e1 > resolvable && e2 > 0.0) {
                return Err((
                    Verdict::fail(format!(
                        "the position errors against the reference run, {e1:.3e} m at {n} substeps and {e2:.3e} m at \
                         {} substeps, are not measurable (not finite, or below {resolvable:.1e} m)",
                        2 * n
                    )),
                    text,
                ));
            }
            if beyond((m.order - tol.order).abs(), tol.order_tolerance) {
                return Err((
                    Verdict::fail(format!(
                        "against a reference run at {reference} substeps the RMS position error is {e1:.4e} m at {n} \
                         substeps and {e2:.4e} m at {}: ratio {:.4}, observed order {:.3}; the node declares order {} \
                         +- {}",
                        2 * n,
                        e1 / e2,
                        m.order,
                        tol.order,
                        tol.order_tolerance
                    )),
                    text,
                ));
            }
            Ok(())
        },
    )
}

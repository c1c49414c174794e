//! Property 2: energy. With damping it must not rise (beyond the node's declared allowance);
//! without damping it must stay bounded over a long run (symplectic) or never rise (dissipative).

use proptest::prelude::*;

use crate::cases::{
    ANCHOR, Material, MaterialRanges, StateSpec, V3, Verdict, add, num_range, place, require_number, run_property,
};
use crate::momentum::free_origin;
use crate::subject::{Run, Setup, Subject};
use crate::{Failure, Property, Tolerances};

/// h omega_max of the energy runs: a twentieth of the explicit stability limit, where the energy
/// error of a first-order symplectic method is a few percent of the oscillation energy.
const H_OMEGA: f64 = 0.1;

/// One damped case.
#[derive(Debug, Clone)]
struct Damped {
    material: Material,
    state: StateSpec,
    gravity: f64,
    damping: f64,
    relative_damping: f64,
    pinned: bool,
    frames: usize,
}

/// Checks energy in two parts.
///
/// Damped runs: `damping` 0.2 to 3 1/s, `relative_damping` 0 to 3 1/s, `gravity` 0 to 12 m/s^2,
/// `pin` free or (when the node has an `anchor` input and offers it) `one_end` on a fixed anchor
/// at (0, 0, 1) m (the anchor is connected in both cases, so relative damping acts against a
/// still anchor); `count` 1 to 2, `segments` 1 to 8, `length` 0.2 to 0.8 m, `mass_per_length` 0.02
/// to 0.2 kg/m, `stretch_stiffness` 10 to 200 N, `bending_stiffness` 0 to 1e-4 N m^2; jitter up to
/// a tenth of a segment, velocities a drift up to 0.5 m/s plus 0.1 to 1.5 m/s per particle and
/// axis; 24 to 48 frames at 24 fps; `substeps` such that h omega_max <= 0.1. Damping only removes
/// energy (dE/dt = -sum m_i (damping |v_i|^2 + relative_damping |v_i - v_anchor|^2) for a still
/// anchor), so: no rise from one frame to the next above `energy_growth` times the run's energy
/// range (max - min), and less energy at the last frame than at the first.
///
/// Undamped runs (`long_run_frames` frames, gravity 0, `pin` free, no damping, one strand of 2 to
/// 6 segments, `length` 0.3 to 0.6 m, `mass_per_length` 0.05 to 0.2 kg/m, `stretch_stiffness` 5 to
/// 50 N, `bending_stiffness` 0 to 1e-4 N m^2, h omega_max <= 0.1): E0 > 0 is kinetic plus elastic
/// energy. With `energy_drift` = Some(d) (a symplectic method: its energy error stays bounded over
/// exponentially long times, Hairer, Lubich & Wanner 2006, Geometric Numerical Integration, 2nd
/// ed., theorem IX.8.1): |E - E0| / E0 <= d at every frame, and the mean |E - E0| over the second
/// half at most `drift_growth` times the mean over the first half (a drift growing linearly from
/// zero gives 3). With `energy_drift` = None (a dissipative method): E <= E0 (1 + energy_growth).
pub fn check_energy(subject: &Subject, tolerances: &Tolerances) -> Result<(), Failure> {
    for name in ["damping", "relative_damping", "gravity"] {
        require_number(subject, Property::Energy, name, 0.0)?;
    }
    damped(subject, tolerances)?;
    undamped(subject, tolerances)
}

fn max_substeps(subject: &Subject) -> i64 {
    subject.integer_range("substeps").map_or(i64::MAX, |r| r.1)
}

fn too_many(substeps: i64, max: i64) -> Result<(), (Verdict, String)> {
    if substeps > max {
        Err((
            Verdict::Reject(format!("{substeps} substeps needed, the node allows {max}")),
            String::new(),
        ))
    } else {
        Ok(())
    }
}

fn damped(subject: &Subject, tol: &Tolerances) -> Result<(), Failure> {
    let ranges = MaterialRanges {
        count: (1, 2),
        segments: (1, 8),
        length: (0.2, 0.8),
        mass_per_length: (0.02, 0.2),
        stretch: (10.0, 200.0),
        bending: (0.0, 1.0e-4),
    };
    let can_pin = subject.has_input("anchor") && subject.offers("pin", "one_end");
    let strategy = (
        ranges.strategy(subject, Property::Energy)?,
        StateSpec::strategy(0.1, (0.1, 1.5), 0.5),
        num_range(subject, Property::Energy, "gravity", (0.0, 12.0))?,
        num_range(subject, Property::Energy, "damping", (0.2, 3.0))?,
        num_range(subject, Property::Energy, "relative_damping", (0.0, 3.0))?,
        any::<bool>().prop_map(move |b| b && can_pin),
        24usize..=48,
    )
        .prop_map(
            |(material, state, gravity, damping, relative_damping, pinned, frames)| Damped {
                material,
                state,
                gravity,
                damping,
                relative_damping,
                pinned,
                frames,
            },
        );
    let max = max_substeps(subject);
    run_property(
        subject,
        Property::Energy,
        &tol.budget,
        tol.budget.cases,
        0x656e_6572,
        strategy,
        |case| {
            let dt = Setup::at_24fps(1).timeline.dt();
            let substeps = case.material.substeps(dt, H_OMEGA);
            too_many(substeps, max)?;
            let (mut setup, pins) = place(subject, Setup::at_24fps(case.frames), case.material.count);
            let anchor: V3 = [ANCHOR[0], ANCHOR[1], ANCHOR[2]];
            let origins: Vec<V3> = if case.pinned {
                pins.iter().map(|p| add(anchor, *p)).collect()
            } else {
                (0..case.material.count).map(free_origin).collect()
            };
            if subject.has_input("anchor") {
                setup = setup.connect_still("anchor", &ANCHOR);
            }
            let (x, v) = case.state.build(&case.material, &origins, case.pinned);
            let setup = case
                .material
                .apply(setup)
                .choice("pin", if case.pinned { "one_end" } else { "free" })
                .number("gravity", case.gravity)
                .number("damping", case.damping)
                .number("relative_damping", case.relative_damping)
                .integer("substeps", substeps)
                .initial_state(&x, &v)
                .note(case.state.describe());
            let text = subject.describe(&setup);
            let run = subject.run(&setup).map_err(|e| {
                (
                    Verdict::from_run(&e, "a damped strand inside the node's ranges, h omega_max <= 0.1"),
                    text.clone(),
                )
            })?;
            judge_damped(&run, tol).map_err(|v| (v, text))
        },
    )
}

fn energies(run: &Run) -> Result<Vec<f64>, Verdict> {
    let e: Vec<f64> = (0..run.frames()).map(|f| run.energy(f)).collect();
    if let Some(f) = e.iter().position(|v| !v.is_finite()) {
        let frame = run.timeline.frame_number(f);
        return Err(Verdict::at(format!("`energy` is {} at frame {frame}", e[f]), frame));
    }
    Ok(e)
}

fn judge_damped(run: &Run, tol: &Tolerances) -> Result<(), Verdict> {
    let tl = run.timeline;
    let e = energies(run)?;
    let hi = e.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let lo = e.iter().copied().fold(f64::INFINITY, f64::min);
    let range = hi - lo;
    let allowed = tol.energy_growth * range;
    for f in 1..e.len() {
        let rise = e[f] - e[f - 1];
        if rise > allowed {
            return Err(Verdict::at(
                format!(
                    "damping only removes energy, but `energy` rises from {} J at frame {} to {} J at frame {}: \
                     +{rise:.4e} J, more than {allowed:.4e} J (energy_growth {} of the run's energy range {range:.4e} \
                     J)",
                    e[f - 1],
                    tl.frame_number(f - 1),
                    e[f],
                    tl.frame_number(f),
                    tol.energy_growth
                ),
                tl.frame_number(f),
            ));
        }
    }
    let last = e.len() - 1;
    if e[last] >= e[0] {
        return Err(Verdict::at(
            format!(
                "damping removes energy from moving particles, but `energy` is {} J at frame {} and {} J at the last \
                 frame {}",
                e[0],
                tl.frame_number(0),
                e[last],
                tl.frame_number(last)
            ),
            tl.frame_number(last),
        ));
    }
    Ok(())
}

fn undamped(subject: &Subject, tol: &Tolerances) -> Result<(), Failure> {
    let ranges = MaterialRanges {
        count: (1, 1),
        segments: (2, 6),
        length: (0.3, 0.6),
        mass_per_length: (0.05, 0.2),
        stretch: (5.0, 50.0),
        bending: (0.0, 1.0e-4),
    };
    let strategy = (
        ranges.strategy(subject, Property::Energy)?,
        StateSpec::strategy(0.1, (0.1, 1.0), 0.3),
    );
    let frames = tol.budget.long_run_frames.max(4);
    let max = max_substeps(subject);
    run_property(
        subject,
        Property::Energy,
        &tol.budget,
        tol.budget.long_run_cases,
        0x6c6f_6e67,
        strategy,
        |(material, state)| {
            let dt = Setup::at_24fps(1).timeline.dt();
            let substeps = material.substeps(dt, H_OMEGA);
            too_many(substeps, max)?;
            let (setup, _) = place(subject, Setup::at_24fps(frames), material.count);
            let (x, v) = state.build(material, &[free_origin(0)], false);
            let setup = material
                .apply(setup)
                .choice("pin", "free")
                .number("gravity", 0.0)
                .number("damping", 0.0)
                .number("relative_damping", 0.0)
                .integer("substeps", substeps)
                .initial_state(&x, &v)
                .note(state.describe());
            let text = subject.describe(&setup);
            let run = subject.run(&setup).map_err(|e| {
                (
                    Verdict::from_run(
                        &e,
                        "an undamped free strand inside the node's ranges, h omega_max <= 0.1",
                    ),
                    text.clone(),
                )
            })?;
            judge_undamped(&run, tol).map_err(|v| (v, text))
        },
    )
}

fn judge_undamped(run: &Run, tol: &Tolerances) -> Result<(), Verdict> {
    let tl = run.timeline;
    let e = energies(run)?;
    let e0 = e[0];
    if e0.is_nan() || e0 <= 0.0 {
        return Err(Verdict::at(
            format!(
                "with gravity 0 the energy is kinetic plus elastic, positive for moving particles, but `energy` is \
                 {e0} J at frame {}",
                tl.frame_number(0)
            ),
            tl.frame_number(0),
        ));
    }
    let Some(drift) = tol.energy_drift else {
        let allowed = e0 * (1.0 + tol.energy_growth);
        if let Some(f) = e.iter().position(|v| *v > allowed) {
            return Err(Verdict::at(
                format!(
                    "without damping a dissipative method's energy must not rise, but `energy` is {} J at frame {}, \
                     above E0 = {e0} J by more than energy_growth {}",
                    e[f],
                    tl.frame_number(f),
                    tol.energy_growth
                ),
                tl.frame_number(f),
            ));
        }
        return Ok(());
    };
    let dev: Vec<f64> = e.iter().map(|v| (v - e0).abs() / e0).collect();
    if let Some(f) = dev.iter().position(|d| *d > drift) {
        return Err(Verdict::at(
            format!(
                "without damping a symplectic method's energy error stays bounded, but |E - E0| / E0 reaches {:.4e} at \
                 frame {} (E0 = {e0} J, E = {} J), more than energy_drift {drift}",
                dev[f],
                tl.frame_number(f),
                e[f]
            ),
            tl.frame_number(f),
        ));
    }
    let half = dev.len() / 2;
    let first = dev[1..half].iter().sum::<f64>() / (half - 1).max(1) as f64;
    let second = dev[half..].iter().sum::<f64>() / (dev.len() - half) as f64;
    // Errors at rounding level (an exactly conserving method) grow like random walks; ignore them.
    if second > 1.0e-12 && second > tol.drift_growth * first {
        return Err(Verdict::at(
            format!(
                "without damping the energy error grows: the mean |E - E0| / E0 is {first:.4e} over frames {} to {} \
                 and {second:.4e} over frames {} to {}, more than drift_growth {} times (a bounded error gives about \
                 1, a linear drift 3)",
                tl.frame_number(1),
                tl.frame_number(half - 1),
                tl.frame_number(half),
                tl.frame_number(dev.len() - 1),
                tol.drift_growth
            ),
            tl.frame_number(dev.len() - 1),
        ));
    }
    Ok(())
}

//! Property 1: conservation of linear momentum, and the `momentum` output's agreement with the
//! `velocities` output.

use crate::cases::{
    Material, MaterialRanges, StateSpec, V3, Verdict, add, beyond, clamp_integer, clamp_number, dot, norm,
    require_number, run_property, scale, sub,
};
use crate::subject::{Run, Setup, Subject};
use crate::{Failure, Property, Tolerances};

/// h omega_max of the momentum runs: a quarter of the explicit stability limit h omega_max < 2.
const H_OMEGA: f64 = 0.5;

/// What every momentum run sets: no external force of any kind.
fn isolated(subject: &Subject, material: &Material, frames: usize, substeps: i64) -> Setup {
    let (setup, _) = crate::cases::place(subject, Setup::at_24fps(frames), material.count);
    material
        .apply(setup)
        .choice("pin", "free")
        .number("gravity", 0.0)
        .number("damping", 0.0)
        .number("relative_damping", 0.0)
        .integer("substeps", substeps)
}

/// Where free strand `s` starts (the kit's free strands are 0.1 m apart along Y, 1 m up).
pub(crate) fn free_origin(s: i64) -> V3 {
    [0.0, 0.1 * s as f64, 1.0]
}

/// Checks conservation of momentum: gravity 0, `pin = free`, `damping` and `relative_damping` 0,
/// no wind, no colliders, no anchors.
///
/// - A uniform translation first: a straight strand at rest length with every particle at the
///   same velocity u must keep u, move by u t, and report momentum M u, M = count * length *
///   mass_per_length (the contract's mass, however the node lumps it).
/// - Then random cases: strands laid along a random direction with per-particle jitter up to a
///   quarter of a rest segment per axis and random velocities (a drift up to 1 m/s plus up to 2
///   m/s per particle and axis); `count` 1 to 3, `segments` 1 to 12, `length` 0.2 to 1 m,
///   `mass_per_length` 0.02 to 0.2 kg/m, `stretch_stiffness` 10 to 300 N, `bending_stiffness` 0
///   to 1e-4 N m^2 (each clipped to the node's range), 12 to 36 frames at 24 fps, `substeps` such
///   that h omega_max <= 0.5 (omega_max the Gershgorin bound of the chain, a quarter of the
///   explicit stability limit). Frame 0 of `positions` and `velocities` must be the initial
///   state; the `momentum` output must keep its frame-0 value within `momentum * M * v_max`; and
///   it must equal the sum of m_i v_i over the `velocities` output for masses lumped
///   symmetrically (both end particles of a strand of equal mass, the interior particles of
///   equal mass, all adding up to M): the kit fits the end mass over the whole run and checks
///   the residual at every frame with the same tolerance, and that no fitted mass is negative.
///   The kit cannot know the node's lumping; these are the masses of any lumping that treats
///   the two free ends alike.
pub fn check_momentum(subject: &Subject, tolerances: &Tolerances) -> Result<(), Failure> {
    for name in ["gravity", "damping", "relative_damping"] {
        require_number(subject, Property::Momentum, name, 0.0)?;
    }
    uniform_translation(subject, tolerances)?;
    let ranges = MaterialRanges {
        count: (1, 3),
        segments: (1, 12),
        length: (0.2, 1.0),
        mass_per_length: (0.02, 0.2),
        stretch: (10.0, 300.0),
        bending: (0.0, 1.0e-4),
    };
    let strategy = (
        ranges.strategy(subject, Property::Momentum)?,
        StateSpec::strategy(0.25, (0.0, 2.0), 1.0),
        12usize..=36,
    );
    let max_substeps = subject.integer_range("substeps").map_or(i64::MAX, |r| r.1);
    run_property(
        subject,
        Property::Momentum,
        &tolerances.budget,
        tolerances.budget.cases,
        0x6d6f_6d65,
        strategy,
        |(material, state, frames)| {
            let dt = Setup::at_24fps(1).timeline.dt();
            let substeps = material.substeps(dt, H_OMEGA);
            if substeps > max_substeps {
                return Err((
                    Verdict::Reject(format!("{substeps} substeps needed, the node allows {max_substeps}")),
                    String::new(),
                ));
            }
            let origins: Vec<V3> = (0..material.count).map(free_origin).collect();
            let (x, v) = state.build(material, &origins, false);
            let setup = isolated(subject, material, *frames, substeps)
                .initial_state(&x, &v)
                .note(state.describe());
            let case = subject.describe(&setup);
            judge(subject, material, &setup, &x, &v, tolerances).map_err(|v| (v, case))
        },
    )
}

fn judge(
    subject: &Subject,
    material: &Material,
    setup: &Setup,
    x0: &[V3],
    v0: &[V3],
    tol: &Tolerances,
) -> Result<(), Verdict> {
    let run = subject.run(setup).map_err(|e| {
        Verdict::from_run(
            &e,
            "a free strand with no external force, every parameter inside the node's range and h omega_max <= 0.5",
        )
    })?;
    let tl = run.timeline;
    let n = material.points();
    if run.points != n {
        return Err(Verdict::fail(format!(
            "`positions` has {} points; count x (segments + 1) = {n}",
            run.points
        )));
    }
    let m = material.total_mass();
    let frames = run.frames();
    let v_max = (0..frames).map(|f| rms_speed(&run, f, n)).fold(0.0, f64::max);
    let allowed = tol.momentum * m * v_max;
    initial_state_is_frame_0(&run, x0, v0, tol.momentum, material.length, v_max)?;
    let p0 = run.momentum(0);
    for f in 1..frames {
        let p = run.momentum(f);
        let change = norm(sub(p, p0));
        if beyond(change, allowed) {
            return Err(Verdict::at(
                format!(
                    "momentum is not conserved: with gravity 0, `pin` = free and no damping nothing acts on the \
                     strands from outside, so the `momentum` output must keep its frame-{} value {} N s; at frame {} \
                     it is {} N s, a change of {change:.3e} N s, more than the tolerance {allowed:.3e} N s ({} x M \
                     v_max, M = {m} kg, v_max = {v_max:.4} m/s)",
                    tl.frame_number(0),
                    fmt_v3(p0),
                    tl.frame_number(f),
                    fmt_v3(p),
                    tol.momentum
                ),
                tl.frame_number(f),
            ));
        }
    }
    lumped_masses_agree(&run, material, allowed, v_max, tol.momentum)
}

/// Root-mean-square particle speed at frame `f`.
fn rms_speed(run: &Run, f: usize, n: usize) -> f64 {
    let sum: f64 = (0..n)
        .map(|i| {
            let v = run.velocity(f, i);
            v[0] * v[0] + v[1] * v[1] + v[2] * v[2]
        })
        .sum();
    (sum / n.max(1) as f64).sqrt()
}

/// Frame 0 of `positions` and `velocities` must be the initial state the kit passed (a copy; the
/// allowance is `rel` of each value's magnitude plus the strand length, or the run's top speed).
fn initial_state_is_frame_0(run: &Run, x0: &[V3], v0: &[V3], rel: f64, length: f64, v_max: f64) -> Result<(), Verdict> {
    let f0 = run.timeline.frame_number(0);
    for (i, (x, v)) in x0.iter().zip(v0).enumerate() {
        let (gx, gv) = (run.position(0, i), run.velocity(0, i));
        let x_ok = norm(sub(gx, *x)) <= rel * (norm(*x) + length);
        let v_ok = norm(sub(gv, *v)) <= rel * (norm(*v) + v_max);
        if !(x_ok && v_ok) {
            return Err(Verdict::at(
                format!(
                    "frame {f0} of `positions` / `velocities` must be the initial state from `initial_positions` / \
                     `initial_velocities`: particle {i} was passed at {} m with {} m/s and comes out at {} m with {} \
                     m/s",
                    fmt_v3(*x),
                    fmt_v3(*v),
                    fmt_v3(gx),
                    fmt_v3(gv)
                ),
                f0,
            ));
        }
    }
    Ok(())
}

/// The `momentum` output against the sum of m_i v_i over `velocities`, for the symmetric lumping
/// that fits best (see [`check_momentum`]).
fn lumped_masses_agree(run: &Run, material: &Material, allowed: f64, v_max: f64, rel: f64) -> Result<(), Verdict> {
    let per = (material.segments + 1) as usize;
    let strands = material.count as usize;
    let m_strand = material.total_mass() / strands as f64;
    let frames = run.frames();
    // Per frame: the sum of the end particles' velocities and of the interior particles'.
    let sums: Vec<(V3, V3)> = (0..frames)
        .map(|f| {
            let mut ends = [0.0; 3];
            let mut inner = [0.0; 3];
            for s in 0..strands {
                for i in 0..per {
                    let v = run.velocity(f, s * per + i);
                    if i == 0 || i == per - 1 {
                        ends = add(ends, v);
                    } else {
                        inner = add(inner, v);
                    }
                }
            }
            (ends, inner)
        })
        .collect();
    let interior = per as f64 - 2.0;
    // With end mass a and interior mass m_in = (m_strand - 2 a) / interior:
    // P = a * ends + m_in * inner = a * (ends - 2 inner / interior) + m_strand / interior * inner.
    let w = |(e, i): &(V3, V3)| {
        if per == 2 {
            *e
        } else {
            sub(*e, scale(*i, 2.0 / interior))
        }
    };
    let b = |(_, i): &(V3, V3)| {
        if per == 2 {
            [0.0; 3]
        } else {
            scale(*i, m_strand / interior)
        }
    };
    let (end_mass, well_determined) = if per == 2 {
        (0.5 * m_strand, true)
    } else {
        let mut num = 0.0;
        let mut den = 0.0;
        for (f, s) in sums.iter().enumerate() {
            num += dot(sub(run.momentum(f), b(s)), w(s));
            den += dot(w(s), w(s));
        }
        let a = num / den;
        let natural = 0.5 * m_strand / material.segments as f64;
        // A rigid translation makes w zero: then any lumping gives the same momentum.
        let resolved = (1.0e-6 * v_max).powi(2) * (frames * strands) as f64;
        if den > 0.0 && a.is_finite() {
            (a, den > resolved)
        } else {
            (natural, false)
        }
    };
    let inner_mass = if per > 2 {
        (m_strand - 2.0 * end_mass) / interior
    } else {
        0.0
    };
    if well_determined && (end_mass < -rel * m_strand || inner_mass < -rel * m_strand) {
        return Err(Verdict::fail(format!(
            "the `momentum` output matches the `velocities` output only with a negative particle mass (best \
             symmetric lumping of the strand's {m_strand} kg: end particles {end_mass:.6e} kg, interior particles \
             {inner_mass:.6e} kg)"
        )));
    }
    for (f, s) in sums.iter().enumerate() {
        let want = add(scale(w(s), end_mass), b(s));
        let got = run.momentum(f);
        let off = norm(sub(got, want));
        if beyond(off, allowed) {
            let tl = run.timeline;
            return Err(Verdict::at(
                format!(
                    "the `momentum` output is not the sum of m_i v_i over the `velocities` output for masses adding \
                     up to count x length x mass_per_length = {} kg: at frame {} it is {} N s, but the best symmetric \
                     lumping (end particles {end_mass:.6e} kg, interior particles {inner_mass:.6e} kg) gives {} N s, \
                     {off:.3e} N s apart, more than {allowed:.3e} N s",
                    material.total_mass(),
                    tl.frame_number(f),
                    fmt_v3(got),
                    fmt_v3(want)
                ),
                tl.frame_number(f),
            ));
        }
    }
    Ok(())
}

fn uniform_translation(subject: &Subject, tol: &Tolerances) -> Result<(), Failure> {
    let material = Material {
        count: clamp_integer(subject, "count", 2),
        segments: clamp_integer(subject, "segments", 4),
        length: clamp_number(subject, "length", 0.5),
        mass_per_length: clamp_number(subject, "mass_per_length", 0.1),
        stretch: clamp_number(subject, "stretch_stiffness", 100.0),
        bending: clamp_number(subject, "bending_stiffness", 1.0e-4),
    };
    let frames = 13;
    let dt = Setup::at_24fps(1).timeline.dt();
    let substeps = clamp_integer(subject, "substeps", material.substeps(dt, H_OMEGA));
    let dir = scale([1.0, 2.0, -1.0], 1.0 / 6f64.sqrt());
    let u: V3 = [0.3, -0.2, 0.5];
    let l0 = material.rest_segment();
    let per = (material.segments + 1) as usize;
    let mut x = Vec::new();
    for s in 0..material.count {
        for i in 0..per {
            x.push(add(free_origin(s), scale(dir, l0 * i as f64)));
        }
    }
    let v = vec![u; x.len()];
    let setup = isolated(subject, &material, frames, substeps)
        .initial_state(&x, &v)
        .note(format!(
            "initial state: straight strands at rest length along {} with every particle at {} m/s",
            fmt_v3(dir),
            fmt_v3(u)
        ));
    let fail = |message: String, frame: Option<i64>| {
        let mut f = Failure::new(
            Property::Momentum,
            subject.name(),
            format!("uniform translation: {message}"),
        );
        f.frame = frame;
        f.case = Some(subject.describe(&setup));
        f
    };
    let run = subject.run(&setup).map_err(|e| fail(e.to_string(), None))?;
    let tl = run.timeline;
    if run.points != material.points() {
        return Err(fail(
            format!(
                "`positions` has {} points; count x (segments + 1) = {}",
                run.points,
                material.points()
            ),
            None,
        ));
    }
    let m = material.total_mass();
    let speed = norm(u);
    let want_p = scale(u, m);
    for f in 0..run.frames() {
        let frame = tl.frame_number(f);
        let p = run.momentum(f);
        if beyond(norm(sub(p, want_p)), tol.momentum * m * speed) {
            return Err(fail(
                format!(
                    "momentum is not conserved: every particle moves at {} m/s and nothing acts on the strands, so \
                     the momentum is M u = {} N s at every frame (M = count x length x mass_per_length = {m} kg); \
                     the `momentum` output at frame {frame} is {} N s, {:.3e} N s off, more than the tolerance \
                     {:.3e} N s ({} x M |u|)",
                    fmt_v3(u),
                    fmt_v3(want_p),
                    fmt_v3(p),
                    norm(sub(p, want_p)),
                    tol.momentum * m * speed,
                    tol.momentum
                ),
                Some(frame),
            ));
        }
        let elapsed = tl.time(f) - tl.time(0);
        for (i, start) in x.iter().enumerate() {
            let vi = run.velocity(f, i);
            let xi = run.position(f, i);
            let want_x = add(*start, scale(u, elapsed));
            let pos_tol = tol.momentum * (speed * elapsed + material.length);
            if beyond(norm(sub(vi, u)), tol.momentum * speed) || beyond(norm(sub(xi, want_x)), pos_tol) {
                return Err(fail(
                    format!(
                        "a straight strand at rest length moving at {} m/s has no internal force, so particle {i} \
                         must be at {} m with that velocity at frame {frame} ({elapsed} s later); it is at {} m with \
                         {} m/s",
                        fmt_v3(u),
                        fmt_v3(want_x),
                        fmt_v3(xi),
                        fmt_v3(vi)
                    ),
                    Some(frame),
                ));
            }
        }
    }
    Ok(())
}

pub(crate) fn fmt_v3(v: V3) -> String {
    format!("({:.6e}, {:.6e}, {:.6e})", v[0], v[1], v[2])
}

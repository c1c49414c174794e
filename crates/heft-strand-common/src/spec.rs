//! The contract's ports and parameters, shared by every strand node type.

use heft_node_sdk::{Dimension, NodeError, NodeSpec, ParamSpec, Params, PortKind, PortSpec, STANDARD_GRAVITY};

/// Input port names, in spec order. The collider end inputs come last, after the `initial_*`
/// inputs, so that the input widths [`output_points`] reads keep their places.
pub const INPUTS: [&str; 12] = [
    "anchor",
    "anchor_b",
    "wind",
    "collider_1",
    "collider_2",
    "collider_3",
    "initial_positions",
    "initial_velocities",
    "collider_1_end",
    "collider_2_end",
    "collider_3_end",
    "colliders",
];

/// Output port names, in spec order.
pub const OUTPUTS: [&str; 4] = ["positions", "velocities", "momentum", "energy"];

/// Placement choices.
pub const PLACEMENTS: [&str; 3] = ["single", "line", "ring"];
/// Pin choices.
pub const PINS: [&str; 3] = ["one_end", "both_ends", "free"];

/// The spec of a strand node type: the contract's inputs, outputs and parameters, no summaries.
pub fn node_spec(name: &str, doc: &str, notes: &str) -> NodeSpec {
    let len = Dimension::Length;
    let mut params = vec![
        ParamSpec::integer(
            "count",
            1,
            (1, 4096),
            "Strands carried by this node, all sharing these parameters.",
        ),
        ParamSpec::choice(
            "placement",
            &PLACEMENTS,
            "single: every strand at the anchor point; line: `spacing` apart along the anchor's local X, centred; \
             ring: evenly on a circle of `radius` in the anchor's local XY plane.",
        ),
        ParamSpec::number(
            "spacing",
            len,
            0.02,
            (0.0, 10.0),
            "Distance between strands for `line`.",
        ),
        ParamSpec::number("radius", len, 0.15, (0.0, 10.0), "Circle radius for `ring`."),
        ParamSpec::number("length", len, 0.4, (0.001, 100.0), "Rest length of each strand."),
        ParamSpec::integer(
            "segments",
            12,
            (1, 4096),
            "Segments per strand; particles per strand = segments + 1. A node carries at most 1052672 particles \
             (count x (segments + 1)): 4096 strands of 256 segments, or one chain of 4096.",
        ),
        ParamSpec::number(
            "mass_per_length",
            Dimension::LinearDensity,
            0.05,
            (1.0e-6, 1.0e4),
            "Mass per unit rest length, lumped onto the particles (half a segment's mass at each end).",
        ),
        ParamSpec::number(
            "stretch_stiffness",
            Dimension::Force,
            200.0,
            (1.0e-3, 1.0e9),
            "Axial rigidity E A; a segment of rest length l0 is a spring of k = E A / l0.",
        ),
        ParamSpec::number(
            "bending_stiffness",
            Dimension::BendingStiffness,
            1.0e-4,
            (0.0, 1.0e3),
            "Flexural rigidity E I; 0 = a chain that bends freely.",
        ),
        ParamSpec::number(
            "tip_thickness",
            Dimension::Dimensionless,
            1.0,
            (0.05, 20.0),
            "The strand's thickness at its tip over its thickness at the root, tapering linearly: a cone of one \
             material, so along the strand the mass per length and `stretch_stiffness` scale with the thickness \
             squared and `bending_stiffness` with its fourth power (hair thins toward its tip). The three are \
             given at the root; 1 = uniform.",
        ),
        ParamSpec::number(
            "damping",
            Dimension::Rate,
            0.5,
            (0.0, 1.0e3),
            "Absolute damping: a = -damping v (still air).",
        ),
        ParamSpec::number(
            "relative_damping",
            Dimension::Rate,
            2.0,
            (0.0, 1.0e3),
            "Damping relative to the anchor's rigid motion: a = -relative_damping (v - v_anchor).",
        ),
        ParamSpec::integer(
            "substeps",
            20,
            (1, 10000),
            "Solver steps per frame; h = frame duration / substeps.",
        ),
        ParamSpec::integer(
            "reruns",
            3,
            (0, 6),
            "How many times a frame in which a strand blows up or crumples is run again from its start, each time \
             with twice the substeps (3: up to 8 times `substeps`); the other strands keep their first try. 0 stops \
             the run at the first blow-up. Not when the cause is the strand's physics or a jump in the anchor's \
             motion, which more substeps do not mend.",
        ),
        ParamSpec::vec3(
            "rest_direction",
            Dimension::Dimensionless,
            [0.0, 0.0, -1.0],
            (-1.0e3, 1.0e3),
            "Direction the strand is laid along at the first frame, in the anchor's local frame (normalised; not zero).",
        ),
        ParamSpec::choice(
            "pin",
            &PINS,
            "one_end: particle 0 follows the anchor; both_ends: particle 0 and the last particle follow \
             `anchor` and `anchor_b` (or two points of `anchor`); free: nothing is pinned.",
        ),
        ParamSpec::vec3(
            "start_offset",
            len,
            [0.0; 3],
            (-100.0, 100.0),
            "Where particle 0 is pinned, in the anchor's local frame (added to the placement offset).",
        ),
        ParamSpec::vec3(
            "end_offset",
            len,
            [0.2, 0.0, 0.0],
            (-100.0, 100.0),
            "Where the last particle is pinned for both_ends: on `anchor_b` if connected, else on `anchor`.",
        ),
        ParamSpec::number(
            "gravity",
            Dimension::Acceleration,
            STANDARD_GRAVITY,
            (0.0, 100.0),
            "Gravity along -Z; standard gravity 9.80665 m/s^2 by default.",
        ),
        ParamSpec::number(
            "drag",
            Dimension::Rate,
            1.0,
            (0.0, 1.0e3),
            "Wind coupling a = drag (v_wind - v); used only when `wind` is connected.",
        ),
    ];
    for k in 1..=3 {
        params.push(ParamSpec::number(
            &format!("collider_{k}_radius"),
            len,
            0.1,
            (0.0, 100.0),
            &format!(
                "Radius of collider {k}: of the sphere, or at the start of the capsule when `collider_{k}_end` is \
                 connected."
            ),
        ));
    }
    for k in 1..=3 {
        params.push(ParamSpec::vec3(
            &format!("collider_{k}_offset"),
            len,
            [0.0; 3],
            (-100.0, 100.0),
            &format!(
                "Centre of collider {k}'s sphere, or the start of its capsule, in the local frame of `collider_{k}`."
            ),
        ));
    }
    for k in 1..=3 {
        params.push(ParamSpec::number(
            &format!("collider_{k}_end_radius"),
            len,
            0.0,
            (0.0, 100.0),
            &format!(
                "Radius at the end of capsule collider {k} (used only when `collider_{k}_end` is connected); the \
                 radius varies linearly along the capsule from `collider_{k}_radius` at the start. 0 (the default) \
                 means the same as `collider_{k}_radius`, a straight capsule; for a pointed end give a small radius \
                 (1 mm). Where one end's sphere contains the other's, the capsule is that sphere."
            ),
        ));
    }
    for k in 1..=3 {
        params.push(ParamSpec::vec3(
            &format!("collider_{k}_end_offset"),
            len,
            [0.0; 3],
            (-100.0, 100.0),
            &format!(
                "The end of capsule collider {k} in the local frame of `collider_{k}_end` (used only when that \
                 input is connected)."
            ),
        ));
    }
    params.push(ParamSpec::choice(
        "start",
        &["as_laid", "settled"],
        "How the strands start: as laid out (straight along `rest_direction`, or between the pins), or settled: at \
         rest in their hanging equilibrium for the first frame's pose of the anchors and colliders, under the \
         apparent gravity g - a of an anchor already accelerating there, so that the first frames are calm (a \
         strand pinned at both ends hangs at its rest length).",
    ));
    params.push(ParamSpec::number(
        "friction",
        Dimension::Dimensionless,
        0.0,
        (0.0, 10.0),
        "Kinetic friction coefficient at every collider and the ground (Coulomb): a particle sliding on a surface \
         slows by this times the push the surface gives it (on the ground, a deceleration friction x g).",
    ));
    params.push(ParamSpec::number(
        "static_friction",
        Dimension::Dimensionless,
        0.0,
        (0.0, 10.0),
        "Static friction coefficient: a particle sliding slower than this times the push the surface gives it stops \
         (taken as at least `friction`).",
    ));
    params.push(ParamSpec::boolean(
        "ground",
        false,
        "A ground the strands rest on: the plane z = `ground_height` in world space (Z up); particles below it are \
         lifted onto it after every substep and lose their downward velocity.",
    ));
    params.push(ParamSpec::number(
        "ground_height",
        len,
        0.0,
        (-1.0e4, 1.0e4),
        "Height of the ground (world Z), used when `ground` is on.",
    ));
    let tr = |n: &str, doc: &str| PortSpec::new(n, PortKind::Transform, len, doc).optional();
    let mut inputs = vec![
        tr("anchor", "The transform the pins ride on (a head, a hip)."),
        tr(
            "anchor_b",
            "Second transform for the last particle with pin = both_ends.",
        ),
        PortSpec::new(
            "wind",
            PortKind::Points,
            Dimension::Velocity,
            "A wind field (from noise.wind), sampled at the particles.",
        )
        .optional(),
        tr(
            "collider_1",
            "Transform carrying collider 1: a sphere, or the start of a capsule when `collider_1_end` is connected.",
        ),
        tr(
            "collider_2",
            "Transform carrying collider 2: a sphere, or the start of a capsule when `collider_2_end` is connected.",
        ),
        tr(
            "collider_3",
            "Transform carrying collider 3: a sphere, or the start of a capsule when `collider_3_end` is connected.",
        ),
        PortSpec::new(
            "initial_positions",
            PortKind::Points,
            len,
            "Frame 0 replaces the rest shape: count x (segments + 1) points, strand by strand.",
        )
        .optional(),
        PortSpec::new(
            "initial_velocities",
            PortKind::Points,
            Dimension::Velocity,
            "Frame 0 replaces the zero initial velocity (same N).",
        )
        .optional(),
    ];
    for k in 1..=3 {
        inputs.push(tr(
            &format!("collider_{k}_end"),
            &format!(
                "Transform carrying the end of collider {k}: when connected, collider {k} is a capsule from \
                 `collider_{k}` to here (a limb, from a joint to its child); `collider_{k}` must be connected too."
            ),
        ));
    }
    inputs.push(
        PortSpec::new(
            "colliders",
            PortKind::Points,
            len,
            "A body to collide with: any number of spheres and capsules in one list, such as trajectory.jump's \
             `colliders` or the last of a chain of collider.add nodes. Each end moves on the cubic through its \
             frame samples.",
        )
        .optional(),
    );
    let outputs = vec![
        PortSpec::new(
            "positions",
            PortKind::Points,
            len,
            "Particle positions; strand s, particle i at index s (segments + 1) + i.",
        ),
        PortSpec::new(
            "velocities",
            PortKind::Points,
            Dimension::Velocity,
            "Particle velocities, same layout.",
        ),
        PortSpec::new(
            "momentum",
            PortKind::Vec3,
            Dimension::Impulse,
            "Total linear momentum sum m_i v_i.",
        ),
        PortSpec::new(
            "energy",
            PortKind::Scalar,
            Dimension::Energy,
            "Kinetic + gravitational (m g z) + elastic energy of the node's model.",
        ),
    ];
    NodeSpec {
        name: name.to_owned(),
        doc: doc.to_owned(),
        notes: notes.to_owned(),
        inputs,
        outputs,
        params,
        summaries: Vec::new(),
    }
}

/// The most particles one strand node carries, count x (segments + 1): 4096 strands of 256
/// segments. Each output frame of positions is 24 bytes a particle (25 MB at the limit).
pub const MAX_PARTICLES: usize = 4096 * 257;

/// Total particle count N = count x (segments + 1) for these parameters.
pub fn particle_count(params: &Params) -> Result<usize, NodeError> {
    let count = params.integer("count")?;
    let segments = params.integer("segments")?;
    if !(1..=4096).contains(&count) {
        return Err(NodeError::new(format!("`count` = {count} is outside 1..=4096")));
    }
    if !(1..=4096).contains(&segments) {
        return Err(NodeError::new(format!("`segments` = {segments} is outside 1..=4096")));
    }
    let n = count as usize * (segments as usize + 1);
    if n > MAX_PARTICLES {
        return Err(NodeError::new(format!(
            "`count` x (`segments` + 1) = {count} x {} = {n} particles, more than the {MAX_PARTICLES} a strand node \
             carries: use fewer strands or segments, or split them over several nodes",
            segments + 1
        )));
    }
    Ok(n)
}

/// The point counts of the outputs: N, N, 0, 0. Checks the `initial_*` input widths
/// (in input order) against N when they are connected.
pub fn output_points(params: &Params, inputs: &[usize]) -> Result<Vec<usize>, NodeError> {
    let n = particle_count(params)?;
    for (k, name) in [(6, "initial_positions"), (7, "initial_velocities")] {
        if let Some(&w) = inputs.get(k)
            && w != 0
            && w != 3 * n
        {
            return Err(NodeError::new(format!(
                "`{name}` carries {} points but this node has {n} particles (count x (segments + 1))",
                w / 3
            )));
        }
    }
    Ok(vec![n, n, 0, 0])
}

#[cfg(test)]
mod tests {
    use super::*;
    use heft_node_sdk::{ParamType, ParamValue};

    fn counted(count: i64, segments: i64) -> Result<usize, NodeError> {
        let spec = node_spec("strand", "doc", "notes");
        let p = Params::defaults(&spec)
            .and_then(|p| p.with("count", ParamValue::Integer(count)))
            .and_then(|p| p.with("segments", ParamValue::Integer(segments)))
            .expect("in range");
        particle_count(&p)
    }

    /// One chain of 4096 segments, or 4096 strands of 256, fits; more particles in all is
    /// refused with both figures named.
    #[test]
    fn a_node_carries_a_long_chain_or_many_strands_up_to_the_particle_limit() {
        assert_eq!(counted(1, 4096).unwrap(), 4097);
        assert_eq!(counted(4096, 256).unwrap(), MAX_PARTICLES);
        let e = counted(4096, 257).unwrap_err().0;
        assert!(
            e.contains("4096 x 258 = 1056768 particles") && e.contains("1052672"),
            "{e}"
        );
    }

    #[test]
    fn every_parameter_has_a_default_inside_its_range_and_ports_match_the_names() {
        let spec = node_spec("strand", "doc", "notes");
        let mut names: Vec<&str> = spec.params.iter().map(|p| p.name.as_str()).collect();
        names.sort_unstable();
        names.dedup();
        assert_eq!(names.len(), spec.params.len(), "duplicate parameter names");
        for p in &spec.params {
            match (&p.ty, &p.default) {
                (ParamType::Number { min, max, .. }, Some(ParamValue::Number(v))) => {
                    assert!(min <= v && v <= max, "{}", p.name)
                }
                (ParamType::Integer { min, max }, Some(ParamValue::Integer(v))) => {
                    assert!(min <= v && v <= max, "{}", p.name)
                }
                (ParamType::Vec3 { min, max, .. }, Some(ParamValue::Vec3(v))) => {
                    assert!(v.iter().all(|c| min <= c && c <= max), "{}", p.name)
                }
                (ParamType::Choice { options }, Some(ParamValue::Choice(v))) => assert!(options.contains(v)),
                (ParamType::Bool, Some(ParamValue::Bool(_))) => {}
                other => panic!("{}: {other:?}", p.name),
            }
        }
        assert_eq!(spec.inputs.iter().map(|p| p.name.as_str()).collect::<Vec<_>>(), INPUTS);
        assert_eq!(
            spec.outputs.iter().map(|p| p.name.as_str()).collect::<Vec<_>>(),
            OUTPUTS
        );
        assert!(spec.inputs.iter().all(|p| p.optional));
        assert!(spec.summaries.is_empty());
    }
}

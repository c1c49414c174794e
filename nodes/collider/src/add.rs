use heft_node_sdk::colliders::{self, Capsule};
use heft_node_sdk::math::transform;
use heft_node_sdk::{Dimension, Io, Node, NodeError, NodeSpec, ParamSpec, Params, PortKind, PortSpec, Series};

/// Appends a sphere or a tapered capsule riding on one or two transforms to a collider list.
#[derive(Debug)]
pub struct Add;

/// The place of `offset` in the frame of transform `t` (translation, then a quaternion
/// x, y, z, w): t + q offset q*, with q normalised. None when the transform is not finite or
/// its quaternion is zero.
pub fn place(t: &[f64], offset: [f64; 3]) -> Option<[f64; 3]> {
    let (t, q) = transform::read(t)?;
    Some(transform::apply(t, q, offset))
}

impl Node for Add {
    fn spec() -> NodeSpec {
        let len = Dimension::Length;
        NodeSpec {
            name: "add".into(),
            doc: "A sphere, or a tapered capsule from one transform to another (a limb, from a joint to its child), \
                  added to the end of a collider list."
                .into(),
            notes: "The output is the input `list` (empty when it is not connected) with one collider after it, \
                    as a list of three points per collider: its start, its end, and (start radius, end radius, 0). The start is `offset` in the frame of `start` (t + R(q) offset, \
                    the quaternion normalised). With `end` connected the collider is a capsule to `end_offset` \
                    in the frame of `end` (wire the same joint to both for a capsule along one bone); without it, \
                    a sphere of `radius` at the start. The radius runs linearly from `radius` \
                    at the start to `end_radius` at the end (0 means the same as `radius`). A chain of these \
                    nodes, each taking the list of the one before, builds a body of any size for a strand's \
                    `colliders` input; the strand moves each end on the cubic through its frame samples. \
                    Errors: a transform that is not finite or has a zero quaternion (naming the input and the \
                    frame), a list that is not whole colliders."
                .into(),
            inputs: vec![
                PortSpec::new(
                    "list",
                    PortKind::Points,
                    len,
                    "The colliders so far, a list from another collider.add or a body; not connected: none.",
                )
                .optional(),
                PortSpec::new(
                    "start",
                    PortKind::Transform,
                    len,
                    "The transform carrying the sphere, or the start of the capsule (a joint).",
                ),
                PortSpec::new(
                    "end",
                    PortKind::Transform,
                    len,
                    "The transform carrying the end of the capsule (the joint's child); not connected: a sphere.",
                )
                .optional(),
            ],
            outputs: vec![PortSpec::new(
                "list",
                PortKind::Points,
                len,
                "The input list and this collider after it.",
            )],
            params: vec![
                ParamSpec::number(
                    "radius",
                    len,
                    0.05,
                    (0.0, 100.0),
                    "Radius of the sphere, or at the start of the capsule.",
                ),
                ParamSpec::number(
                    "end_radius",
                    len,
                    0.0,
                    (0.0, 100.0),
                    "Radius at the end of the capsule; 0 (the default) means the same as `radius`.",
                ),
                ParamSpec::vec3(
                    "offset",
                    len,
                    [0.0; 3],
                    (-100.0, 100.0),
                    "The sphere's centre, or the capsule's start, in the local frame of `start`.",
                ),
                ParamSpec::vec3(
                    "end_offset",
                    len,
                    [0.0; 3],
                    (-100.0, 100.0),
                    "The capsule's end in the local frame of `end` (used only when `end` is connected).",
                ),
            ],
            summaries: vec![],
        }
    }

    fn output_points(_params: &Params, inputs: &[usize]) -> Result<Vec<usize>, NodeError> {
        let values = inputs.first().copied().unwrap_or(0);
        let per = 3 * colliders::POINTS_PER_COLLIDER;
        if !values.is_multiple_of(per) {
            return Err(NodeError::new(format!(
                "input `list` carries {} points, not a whole number of colliders ({} points each)",
                values / 3,
                colliders::POINTS_PER_COLLIDER
            )));
        }
        Ok(vec![values / 3 + colliders::POINTS_PER_COLLIDER])
    }

    fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
        let tl = io.timeline();
        let radius = params.number("radius")?;
        let end_radius = match params.number("end_radius")? {
            r if r > 0.0 => r,
            _ => radius,
        };
        let (offset, end_offset) = (params.vec3("offset")?, params.vec3("end_offset")?);
        let list = io.input("list")?;
        let start = io.input("start")?;
        let end = io.input("end")?;
        let end = if end.is_empty() { None } else { Some(end) };
        let at = |s: &Series<'_>, name: &str, f: usize, offset: [f64; 3]| {
            place(s.frame(f), offset).ok_or_else(|| {
                NodeError::new(format!(
                    "input `{name}` at frame {} is not a transform: a value is not finite or its quaternion is zero",
                    tl.frame_number(f)
                ))
            })
        };
        let mut frames = Vec::with_capacity(tl.frames());
        for f in 0..tl.frames() {
            let centre = at(&start, "start", f, offset)?;
            let mut c = if list.is_empty() {
                Vec::new()
            } else {
                colliders::read_frame(list.frame(f))
                    .map_err(|e| NodeError::new(format!("input `list` at frame {}: {e}", tl.frame_number(f))))?
            };
            c.push(match &end {
                Some(e) => Capsule {
                    start: centre,
                    end: at(e, "end", f, end_offset)?,
                    start_radius: radius,
                    end_radius,
                },
                None => Capsule::sphere(centre, radius),
            });
            frames.push(c);
        }
        io.fill("list", |f, out| colliders::write_frame(out, &frames[f]))
    }
}

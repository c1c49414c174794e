use heft_node_sdk::{Dimension, Io, Node, NodeError, NodeSpec, ParamSpec, Params, PortKind, PortSpec};

use crate::spline::NaturalSpline;

/// A centre-of-mass path through keyframes, C2-continuous.
#[derive(Debug)]
pub struct Keyed;

impl Node for Keyed {
    fn spec() -> NodeSpec {
        NodeSpec {
            name: "keyed".into(),
            doc: "Centre-of-mass path through keyframes on a natural cubic spline (continuous acceleration).".into(),
            notes: "Each axis is a natural cubic spline through the keys (second derivative zero at the end keys), \
                    so position, velocity and acceleration are continuous everywhere. Before the first key and \
                    after the last the path continues along the end tangent (straight, zero acceleration), which \
                    keeps the acceleration continuous."
                .into(),
            summaries: Vec::new(),
            inputs: vec![],
            outputs: vec![
                PortSpec::new("position", PortKind::Vec3, Dimension::Length, "Position on the spline."),
                PortSpec::new("velocity", PortKind::Vec3, Dimension::Velocity, "First derivative."),
                PortSpec::new(
                    "acceleration",
                    PortKind::Vec3,
                    Dimension::Acceleration,
                    "Second derivative.",
                ),
            ],
            params: vec![ParamSpec::keys(
                "key",
                Dimension::Length,
                2,
                "A keyframe `time: (x, y, z) unit`; repeat the line for each key, in increasing time.",
            )],
        }
    }

    fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
        let keys = params.keys("key")?;
        let times: Vec<f64> = keys.iter().map(|k| k.0).collect();
        let axes: Vec<NaturalSpline> = (0..3)
            .map(|a| {
                let values: Vec<f64> = keys.iter().map(|k| k.1[a]).collect();
                NaturalSpline::new(&times, &values)
            })
            .collect::<Result<_, _>>()
            .map_err(NodeError::new)?;
        let tl = io.timeline();
        io.fill("position", |i, out| {
            for (a, s) in axes.iter().enumerate() {
                out[a] = s.eval(tl.time(i))[0];
            }
        })?;
        io.fill("velocity", |i, out| {
            for (a, s) in axes.iter().enumerate() {
                out[a] = s.eval(tl.time(i))[1];
            }
        })?;
        io.fill("acceleration", |i, out| {
            for (a, s) in axes.iter().enumerate() {
                out[a] = s.eval(tl.time(i))[2];
            }
        })
    }
}

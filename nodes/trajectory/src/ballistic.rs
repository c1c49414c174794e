use heft_node_sdk::{
    Dimension, Io, Node, NodeError, NodeSpec, ParamSpec, Params, PortKind, PortSpec, STANDARD_GRAVITY,
};

/// Free flight under uniform gravity: p(t) = p0 + v0 (t - t0) + g (t - t0)^2 / 2, g = (0, 0, -g).
#[derive(Debug)]
pub struct Ballistic;

impl Node for Ballistic {
    fn spec() -> NodeSpec {
        NodeSpec {
            name: "ballistic".into(),
            doc: "Exact free-flight parabola of a centre of mass from a launch position and velocity.".into(),
            notes: "p(t) = p0 + v0 (t - t0) - (0, 0, g) (t - t0)^2 / 2, evaluated in closed form at every frame \
                    (no integration error). Z is up. Frames before the launch time follow the same parabola."
                .into(),
            summaries: Vec::new(),
            inputs: vec![],
            outputs: vec![
                PortSpec::new(
                    "position",
                    PortKind::Vec3,
                    Dimension::Length,
                    "Centre-of-mass position.",
                ),
                PortSpec::new(
                    "velocity",
                    PortKind::Vec3,
                    Dimension::Velocity,
                    "Centre-of-mass velocity.",
                ),
                PortSpec::new(
                    "acceleration",
                    PortKind::Vec3,
                    Dimension::Acceleration,
                    "Centre-of-mass acceleration (0, 0, -g).",
                ),
            ],
            params: vec![
                ParamSpec::vec3(
                    "launch_position",
                    Dimension::Length,
                    [0.0, 0.0, 1.0],
                    (-1.0e4, 1.0e4),
                    "Position at the launch time.",
                ),
                ParamSpec::vec3(
                    "launch_velocity",
                    Dimension::Velocity,
                    [0.0, 0.0, 2.5],
                    (-1.0e3, 1.0e3),
                    "Velocity at the launch time.",
                ),
                ParamSpec::number(
                    "launch_time",
                    Dimension::Time,
                    0.0,
                    (-1.0e5, 1.0e5),
                    "Time of launch (frame number divided by frame rate).",
                ),
                ParamSpec::number(
                    "gravity",
                    Dimension::Acceleration,
                    STANDARD_GRAVITY,
                    (0.0, 100.0),
                    "Magnitude of gravity along -Z; standard gravity 9.80665 m/s^2 by default.",
                ),
            ],
        }
    }

    fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
        let p0 = params.vec3("launch_position")?;
        let v0 = params.vec3("launch_velocity")?;
        let t0 = params.number("launch_time")?;
        let g = params.number("gravity")?;
        let acc = [0.0, 0.0, -g];
        let tl = io.timeline();
        io.fill("position", |i, out| {
            let tau = tl.time(i) - t0;
            for k in 0..3 {
                out[k] = p0[k] + v0[k] * tau + 0.5 * acc[k] * tau * tau;
            }
        })?;
        io.fill("velocity", |i, out| {
            let tau = tl.time(i) - t0;
            for k in 0..3 {
                out[k] = v0[k] + acc[k] * tau;
            }
        })?;
        io.fill("acceleration", |_, out| out.copy_from_slice(&acc))
    }
}

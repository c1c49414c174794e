use heft_node_sdk::{Dimension, Io, Node, NodeError, NodeSpec, ParamSpec, Params, PortKind, PortSpec};

use crate::common::{self, FIXED_GAIN, STREAM_JITTER};
use crate::gradient::NoiseTable;
use crate::gust::series;

/// Shakes a transform in its own frame by fractal noise in translation and rotation.
#[derive(Debug)]
pub struct Jitter;

pub(crate) use heft_node_sdk::math::quat::{
    from_rotation_vector as quat_from_rotation_vector, mul as quat_mul, normalise as normalised, rotate,
};

/// Quaternions further than this from unit length are reported (then normalised).
const UNIT_TOLERANCE: f64 = 1e-6;

impl Node for Jitter {
    fn spec() -> NodeSpec {
        NodeSpec {
            name: "jitter".into(),
            doc: "Shakes a transform (a camera, an attachment) by smooth seeded noise in position and rotation.".into(),
            notes: "Six independent channels of fractal improved Perlin noise (Perlin 2002; each channel its own \
                    permutation table from the seed, octaves at lacunarity 2 with a fixed gain of 0.5, as in \
                    noise.gust) give an offset d and a rotation vector r, each component normalised to [-1, 1] \
                    and scaled: |d_k| <= amplitude, |r_k| <= rotation_amplitude. Both act in the transform's \
                    own frame: position' = position + R(q) d, q' = q exp(r/2), renormalised to unit length. The \
                    input quaternion is normalised first (a warning names frames more than 1e-6 from unit \
                    length; a zero quaternion is an error). The shake varies on a time scale of 1/frequency \
                    and repeats after 256/frequency seconds; a warning is given when the finest octave is \
                    above half the frame rate. The shake is added, not filtered: it does not depend on the \
                    input's motion."
                .into(),
            inputs: vec![PortSpec::new(
                "input",
                PortKind::Transform,
                Dimension::Length,
                "The transform to shake.",
            )],
            outputs: vec![PortSpec::new(
                "output",
                PortKind::Transform,
                Dimension::Length,
                "The shaken transform (unit quaternion).",
            )],
            params: vec![
                common::seed_param(),
                ParamSpec::number(
                    "amplitude",
                    Dimension::Length,
                    0.005,
                    (0.0, 10.0),
                    "Largest offset along each of the transform's own axes.",
                ),
                ParamSpec::number(
                    "rotation_amplitude",
                    Dimension::Angle,
                    0.01,
                    (0.0, std::f64::consts::PI),
                    "Largest rotation about each of the transform's own axes.",
                ),
                ParamSpec::number(
                    "frequency",
                    Dimension::Frequency,
                    2.0,
                    (0.0, 1000.0),
                    "Lattice rate of the first octave: the shake changes on a time scale of 1/frequency.",
                ),
                common::octaves_param(),
            ],
            summaries: Vec::new(),
        }
    }

    fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
        let seed = common::seed(params)?;
        let amplitude = common::number_in(params, "amplitude", 0.0, 10.0)?;
        let rotation_amplitude = common::number_in(params, "rotation_amplitude", 0.0, std::f64::consts::PI)?;
        let frequency = common::number_in(params, "frequency", 0.0, 1000.0)?;
        let octaves = common::octaves(params)?;
        let input = io.input("input")?;
        common::check_input(io, "input", input.as_slice(), 7)?;
        let tl = io.timeline();
        let mut off_unit = Vec::new();
        for i in 0..io.frames() {
            let f = input.frame(i);
            let n2 = f[3] * f[3] + f[4] * f[4] + f[5] * f[5] + f[6] * f[6];
            if n2 <= 1e-18 {
                return Err(NodeError::new(format!(
                    "input `input` has a zero rotation quaternion at frame {}",
                    tl.frame_number(i)
                )));
            }
            if (n2.sqrt() - 1.0).abs() > UNIT_TOLERANCE {
                off_unit.push(tl.frame_number(i));
            }
        }
        if let Some(first) = off_unit.first() {
            io.warn(format!(
                "input `input` has a quaternion that is not unit length at {} frame(s), first at frame {first}; \
                 normalised before shaking",
                off_unit.len()
            ));
        }
        common::warn_if_aliased(io, frequency, octaves);
        let tables: Vec<NoiseTable> = (0..6).map(|k| NoiseTable::from_seed(seed, STREAM_JITTER + k)).collect();
        io.fill("output", |i, out| {
            let t = tl.time(i);
            let ch = |k: usize| series(&tables[k], t, frequency, octaves, FIXED_GAIN);
            let f = input.frame(i);
            let q = normalised([f[3], f[4], f[5], f[6]]);
            let d = [amplitude * ch(0), amplitude * ch(1), amplitude * ch(2)];
            let r = [
                rotation_amplitude * ch(3),
                rotation_amplitude * ch(4),
                rotation_amplitude * ch(5),
            ];
            let world = rotate(q, d);
            let q_out = normalised(quat_mul(q, quat_from_rotation_vector(r)));
            out.copy_from_slice(&[
                f[0] + world[0],
                f[1] + world[1],
                f[2] + world[2],
                q_out[0],
                q_out[1],
                q_out[2],
                q_out[3],
            ]);
        })
    }
}

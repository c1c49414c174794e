use heft_node_sdk::{Dimension, Io, Node, NodeError, NodeSpec, ParamSpec, Params, PortKind, PortSpec};

use crate::common::{self, FIXED_GAIN, STREAM_JITTER};
use crate::gradient::NoiseTable;
use crate::gust::series;

/// Shakes a transform in its own frame by fractal noise in translation and rotation.
#[derive(Debug)]
pub struct Jitter;

/// Hamilton product a b of quaternions stored (x, y, z, w).
pub(crate) fn quat_mul(a: [f64; 4], b: [f64; 4]) -> [f64; 4] {
    [
        a[3] * b[0] + a[0] * b[3] + a[1] * b[2] - a[2] * b[1],
        a[3] * b[1] - a[0] * b[2] + a[1] * b[3] + a[2] * b[0],
        a[3] * b[2] + a[0] * b[1] - a[1] * b[0] + a[2] * b[3],
        a[3] * b[3] - a[0] * b[0] - a[1] * b[1] - a[2] * b[2],
    ]
}

/// The unit quaternion of rotation vector `r` (axis times angle, rad): exp(r / 2).
pub(crate) fn quat_from_rotation_vector(r: [f64; 3]) -> [f64; 4] {
    let angle = (r[0] * r[0] + r[1] * r[1] + r[2] * r[2]).sqrt();
    let half = 0.5 * angle;
    // sin(angle/2)/angle -> 1/2 - angle^2/48 as angle -> 0 (Taylor series).
    let k = if angle < 1e-6 {
        0.5 - angle * angle / 48.0
    } else {
        half.sin() / angle
    };
    [k * r[0], k * r[1], k * r[2], half.cos()]
}

/// Rotates `v` by the unit quaternion `q`: v + 2 w (u x v) + 2 u x (u x v), u = q.xyz.
pub(crate) fn rotate(q: [f64; 4], v: [f64; 3]) -> [f64; 3] {
    let u = [q[0], q[1], q[2]];
    let cross = |a: [f64; 3], b: [f64; 3]| {
        [
            a[1] * b[2] - a[2] * b[1],
            a[2] * b[0] - a[0] * b[2],
            a[0] * b[1] - a[1] * b[0],
        ]
    };
    let uv = cross(u, v);
    let uuv = cross(u, uv);
    [
        v[0] + 2.0 * (q[3] * uv[0] + uuv[0]),
        v[1] + 2.0 * (q[3] * uv[1] + uuv[1]),
        v[2] + 2.0 * (q[3] * uv[2] + uuv[2]),
    ]
}

fn normalised(q: [f64; 4]) -> [f64; 4] {
    let n = (q[0] * q[0] + q[1] * q[1] + q[2] * q[2] + q[3] * q[3]).sqrt();
    q.map(|c| c / n)
}

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

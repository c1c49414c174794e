//! `noise.wind`: a wind velocity field, sampled on a grid that follows a transform.

use heft_node_sdk::field::{self, points_for};
use heft_node_sdk::{Dimension, Io, Node, NodeError, NodeSpec, ParamSpec, Params, PortKind, PortSpec, SummarySpec};

use crate::common::{self, FIXED_GAIN, OFFSETS, STREAM_WIND};
use crate::gradient::{NOISE4_BOUND, NoiseTable, fractal4, gain_sum};

/// Largest `samples`: 32^3 samples are 0.8 MB per frame.
pub const CELLS_MAX: i64 = 32;

/// The curl of one octave of 4D noise, per component, has this many times the RMS of one
/// octave of the noise itself divided by [`NOISE4_BOUND`]; dividing the curl by it gives
/// the divergence-free field the same RMS as the direct field of the same amplitude.
/// Measured in this project: 5.31 to 5.36 per component over 200000 random points for
/// each of three seeds (RMS of one octave of 4D noise 0.293, of a curl component 1.017);
/// no published source.
pub const CURL_RMS_RATIO: f64 = 5.33;

/// The wind model of one `noise.wind` instance: a velocity at any point and time.
#[derive(Debug, Clone)]
pub struct WindModel {
    tables: [NoiseTable; 3],
    mean: [f64; 3],
    amplitude: f64,
    frequency: f64,
    scale: f64,
    octaves: u32,
    gain: f64,
    divergence_free: bool,
}

impl WindModel {
    /// A model; `scale` > 0, `octaves` >= 1 (the node checks its parameters first).
    pub fn new(
        seed: u64,
        mean: [f64; 3],
        amplitude: f64,
        frequency: f64,
        scale: f64,
        octaves: u32,
        divergence_free: bool,
    ) -> WindModel {
        WindModel {
            tables: [0, 1, 2].map(|k| NoiseTable::from_seed(seed, STREAM_WIND + k)),
            mean,
            amplitude,
            frequency,
            scale,
            octaves,
            gain: FIXED_GAIN,
            divergence_free,
        }
    }

    /// Noise coordinates of a world point and time.
    fn coordinates(&self, p: [f64; 3], t: f64) -> [f64; 4] {
        [
            p[0] / self.scale + OFFSETS[0],
            p[1] / self.scale + OFFSETS[1],
            p[2] / self.scale + OFFSETS[2],
            t * self.frequency + OFFSETS[3],
        ]
    }

    /// Wind velocity (m/s) at world point `p` (m) and time `t` (s).
    pub fn velocity(&self, p: [f64; 3], t: f64) -> [f64; 3] {
        let q = self.coordinates(p, t);
        let s = gain_sum(self.octaves, self.gain);
        if !self.divergence_free {
            let k = self.amplitude / (NOISE4_BOUND * s);
            return [0, 1, 2].map(|c| self.mean[c] + k * fractal4(&self.tables[c], q, self.octaves, self.gain).0);
        }
        // Potential psi_c = sum gain^o n_c(2^o q) / 2^o, so d psi_c / d q_a = sum gain^o
        // (d_a n_c)(2^o q): the fractal gradient with weights gain^o.
        let mut d = [[0.0; 3]; 3];
        for (c, dc) in d.iter_mut().enumerate() {
            let mut weight = 1.0;
            let mut freq = 1.0;
            for _ in 0..self.octaves {
                let (_, g) = self.tables[c].noise4_with_gradient(q.map(|x| x * freq));
                for a in 0..3 {
                    dc[a] += weight * g[a];
                }
                weight *= self.gain;
                freq *= 2.0;
            }
        }
        let k = self.amplitude / (CURL_RMS_RATIO * s);
        let curl = [d[2][1] - d[1][2], d[0][2] - d[2][0], d[1][0] - d[0][1]];
        [0, 1, 2].map(|c| self.mean[c] + k * curl[c])
    }

    /// The stream function (m^2/s) whose curl is the divergence-free velocity, minus the
    /// mean wind: Psi_c = amplitude scale / (K S) psi_c(q).
    pub fn potential(&self, p: [f64; 3], t: f64) -> [f64; 3] {
        let q = self.coordinates(p, t);
        let k = self.amplitude * self.scale / (CURL_RMS_RATIO * gain_sum(self.octaves, self.gain));
        [0, 1, 2].map(|c| {
            let mut sum = 0.0;
            let mut weight = 1.0;
            let mut freq = 1.0;
            for _ in 0..self.octaves {
                sum += weight / freq * self.tables[c].noise4(q.map(|x| x * freq));
                weight *= self.gain;
                freq *= 2.0;
            }
            k * sum
        })
    }
}

/// A wind field on a grid that follows a transform.
#[derive(Debug)]
pub struct Wind;

fn cells(params: &Params) -> Result<usize, NodeError> {
    let c = params.integer("samples")?;
    if !(2..=CELLS_MAX).contains(&c) {
        return Err(NodeError::new(format!("`samples` = {c} is outside 2 to {CELLS_MAX}")));
    }
    Ok(c as usize)
}

impl Node for Wind {
    fn spec() -> NodeSpec {
        NodeSpec {
            name: "wind".into(),
            doc: "A gusting wind velocity field on a grid that follows a transform; seeded, optionally \
                  divergence-free."
                .into(),
            notes: "Velocity at world point p and time t: mean + fluctuation. The fluctuation is a fractal sum of \
                    4D improved Perlin noise (Perlin 2002, \"Improving Noise\", SIGGRAPH: quintic fade; in 4D the \
                    32 tesseract-edge gradients, the 4D analogue of Perlin's 12 cube edges) of q = (p / scale, \
                    t frequency): time is the fourth noise coordinate, so the pattern evolves in place rather \
                    than sliding. Octaves at lacunarity 2, gain 0.5, in space and time together. Three channels \
                    with their own permutation tables from the seed. With divergence_free off, each component is \
                    mean + amplitude F_c / (B S) with B = 1.53658 (the largest |n| of the 4D gradient set, \
                    measured here) and S the sum of gains, so each component stays within mean +- amplitude. With \
                    divergence_free on (curl noise: Bridson, Hourihan & Nordenstam 2007, \"Curl-noise for \
                    procedural fluid flow\", SIGGRAPH), the fluctuation is the curl of a vector potential whose \
                    components are the three channels, computed from the noise's analytic derivatives, so its \
                    divergence is zero (air at low speed is incompressible); it is scaled to the same RMS as the \
                    direct field but has no hard bound. The noise is evaluated at world positions: the grid \
                    (samples^3 of them, spacing apart, axis-aligned in world space, centred on the origin \
                    transform's translation; its rotation is ignored) samples a wind that stays put while the \
                    grid moves. Output: a wind field strand nodes read on their `wind` input. No obstacles or boundaries (Bridson's \
                    boundary ramp is not applied) and no advection by the mean wind. The pattern repeats every \
                    256 scale in space and 256/frequency in time. Warnings: the finest octave faster than half the \
                    frame rate, or finer than two grid spacings (the grid cannot resolve it)."
                .into(),
            inputs: vec![
                PortSpec::new(
                    "origin",
                    PortKind::Transform,
                    Dimension::Length,
                    "The grid is centred on this transform's translation; world origin if unconnected.",
                )
                .optional(),
            ],
            outputs: vec![PortSpec::new(
                "field",
                PortKind::Points,
                Dimension::Velocity,
                "The wind field for a strand node's `wind` input: a header of 3 points, then the velocity at each sample.",
            )],
            params: vec![
                common::seed_param(),
                ParamSpec::integer("samples", 8, (2, CELLS_MAX), "Samples along each axis of the grid."),
                ParamSpec::number(
                    "spacing",
                    Dimension::Length,
                    0.1,
                    (0.001, 10.0),
                    "Distance between neighbouring samples.",
                ),
                ParamSpec::vec3(
                    "mean",
                    Dimension::Velocity,
                    [0.5, 0.0, 0.0],
                    (-100.0, 100.0),
                    "The steady wind.",
                ),
                ParamSpec::number(
                    "amplitude",
                    Dimension::Velocity,
                    0.3,
                    (0.0, 100.0),
                    "Strength of the gusts: the bound of each component's departure from the mean (RMS-matched \
                     when divergence_free).",
                ),
                ParamSpec::number(
                    "frequency",
                    Dimension::Frequency,
                    0.5,
                    (0.0, 1000.0),
                    "How fast the pattern changes: it evolves on a time scale of 1/frequency.",
                ),
                ParamSpec::number(
                    "scale",
                    Dimension::Length,
                    1.0,
                    (0.001, 1000.0),
                    "Size of the largest gust features (the first octave's lattice spacing).",
                ),
                common::octaves_param(),
                ParamSpec::boolean(
                    "divergence_free",
                    true,
                    "Curl noise: a swirling flow with no sources or sinks, as incompressible air.",
                ),
            ],
            summaries: vec![SummarySpec::new(
                "peak_speed",
                Dimension::Velocity,
                "The highest wind speed at any sample of any frame.",
            )],
        }
    }

    fn output_points(params: &Params, _inputs: &[usize]) -> Result<Vec<usize>, NodeError> {
        let c = cells(params)?;
        Ok(vec![points_for(c, c, c)])
    }

    fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
        let seed = common::seed(params)?;
        let cells = cells(params)?;
        let spacing = common::number_in(params, "spacing", 0.001, 10.0)?;
        let mean = params.vec3("mean")?;
        if mean.iter().any(|m| !(-100.0..=100.0).contains(m)) {
            return Err(NodeError::new(format!(
                "`mean` = ({}, {}, {}) has a component outside -100 to 100 m/s",
                mean[0], mean[1], mean[2]
            )));
        }
        let amplitude = common::number_in(params, "amplitude", 0.0, 100.0)?;
        let frequency = common::number_in(params, "frequency", 0.0, 1000.0)?;
        let scale = common::number_in(params, "scale", 0.001, 1000.0)?;
        let octaves = common::octaves(params)?;
        let divergence_free = params.boolean("divergence_free")?;
        let origin = io.input("origin")?;
        if !origin.is_empty() {
            common::check_input(io, "origin", origin.as_slice(), 7)?;
        }
        common::warn_if_aliased(io, frequency, octaves);
        let finest = scale / f64::from(1u32 << (octaves - 1));
        if spacing > 0.5 * finest {
            io.warn(format!(
                "the finest octave's features are {finest} m (scale / 2^{}), less than two grid spacings of \
                 {spacing} m; the grid cannot resolve them. Lower `spacing` or `octaves`, or raise `scale`",
                octaves - 1
            ));
        }
        let model = WindModel::new(seed, mean, amplitude, frequency, scale, octaves, divergence_free);
        let half = 0.5 * spacing * (cells - 1) as f64;
        let tl = io.timeline();
        let mut peak2: f64 = 0.0;
        io.fill("field", |i, out| {
            let centre = if origin.is_empty() { [0.0; 3] } else { origin.vec3(i) };
            let corner = centre.map(|c| c - half);
            let t = tl.time(i);
            field::write_frame(out, [cells; 3], spacing, corner, |p| {
                let v = model.velocity(p, t);
                peak2 = peak2.max(v[0] * v[0] + v[1] * v[1] + v[2] * v[2]);
                v
            });
        })?;
        io.summary("peak_speed", peak2.sqrt())
    }
}

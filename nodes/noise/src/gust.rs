use heft_node_sdk::{Dimension, Io, Node, NodeError, NodeSpec, ParamSpec, Params, PortKind, PortSpec};

use crate::common::{self, OFFSETS, STREAM_GUST};
use crate::gradient::{NOISE3_BOUND, NoiseTable, fractal3, gain_sum};

/// A scalar series of fractal noise around a mean: `mean + amplitude F(t f) / (B S)`.
#[derive(Debug)]
pub struct Gust;

/// The normalised fractal sum of a time series at time `t`: in [-1, 1].
pub(crate) fn series(table: &NoiseTable, t: f64, frequency: f64, octaves: u32, gain: f64) -> f64 {
    let p = [t * frequency + OFFSETS[0], OFFSETS[1], OFFSETS[2]];
    fractal3(table, p, octaves, gain).0 / (NOISE3_BOUND * gain_sum(octaves, gain))
}

impl Node for Gust {
    fn spec() -> NodeSpec {
        NodeSpec {
            name: "gust".into(),
            doc: "A smooth random time series around a mean, such as wind-speed gusts; seeded and repeatable.".into(),
            notes: "value(t) = mean + amplitude F(t) / (B S). F is a fractal sum of improved Perlin noise (Perlin \
                    2002, \"Improving Noise\", SIGGRAPH: quintic fade, the 12 cube-edge gradients, a permutation \
                    table Fisher-Yates-shuffled from the seed by SplitMix64): F(t) = sum over octaves o of \
                    gain^o n(2^o (t f + a), 2^o b, 2^o c), a line through 3D noise at fixed off-lattice offsets \
                    b, c so that the series does not pass through zero at every 1/f seconds. S = sum of gain^o \
                    and B = 1.03635 (the largest |n| of this gradient set, measured in this project: not 1), \
                    so |value - mean| <= amplitude always; the RMS departure is about 0.17 amplitude (3 octaves, gain \
                    0.5; measured). The \
                    pattern varies on a time scale of 1/frequency and repeats after 256/frequency seconds. \
                    Frequency 0 holds a constant. Warns when the finest octave (frequency 2^(octaves-1)) is \
                    above half the frame rate, where it aliases. The value may go negative unless \
                    mean >= amplitude."
                .into(),
            inputs: vec![],
            outputs: vec![PortSpec::new(
                "value",
                PortKind::Scalar,
                Dimension::Velocity,
                "mean plus noise, within mean +- amplitude.",
            )],
            params: vec![
                common::seed_param(),
                ParamSpec::number(
                    "mean",
                    Dimension::Velocity,
                    0.5,
                    (-100.0, 100.0),
                    "The steady value the noise varies around.",
                ),
                ParamSpec::number(
                    "amplitude",
                    Dimension::Velocity,
                    0.3,
                    (0.0, 100.0),
                    "The largest possible departure from the mean.",
                ),
                ParamSpec::number(
                    "frequency",
                    Dimension::Frequency,
                    0.5,
                    (0.0, 1000.0),
                    "Lattice rate of the first octave: the series changes on a time scale of 1/frequency.",
                ),
                common::octaves_param(),
                ParamSpec::number(
                    "gain",
                    Dimension::Dimensionless,
                    0.5,
                    (0.0, 1.0),
                    "Weight of each octave relative to the one before (0: one octave only, 1: all equal).",
                ),
            ],
            summaries: Vec::new(),
        }
    }

    fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
        let seed = common::seed(params)?;
        let mean = common::number_in(params, "mean", -100.0, 100.0)?;
        let amplitude = common::number_in(params, "amplitude", 0.0, 100.0)?;
        let frequency = common::number_in(params, "frequency", 0.0, 1000.0)?;
        let octaves = common::octaves(params)?;
        let gain = common::number_in(params, "gain", 0.0, 1.0)?;
        common::warn_if_aliased(io, frequency, octaves);
        let table = NoiseTable::from_seed(seed, STREAM_GUST);
        let tl = io.timeline();
        io.fill("value", |i, out| {
            out[0] = mean + amplitude * series(&table, tl.time(i), frequency, octaves, gain);
        })
    }
}

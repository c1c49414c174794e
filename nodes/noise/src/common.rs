//! Pieces shared by the noise nodes: parameters that recur, channel streams, offsets.

use heft_node_sdk::{Io, NodeError, ParamSpec, Params};

/// Largest seed accepted (the range of a 32-bit unsigned seed).
pub const SEED_MAX: i64 = 4_294_967_295;

/// Highest octave count accepted: at lacunarity 2 the eighth octave is 128 times finer
/// than the first, more than a frame or a grid resolves in practice.
pub const OCTAVES_MAX: i64 = 8;

/// Fixed gain of `noise.jitter` and `noise.wind` (each octave half the previous one):
/// the usual fractal sum, common practice, no source.
pub const FIXED_GAIN: f64 = 0.5;

/// Noise channel streams of a seed (see `NoiseTable::from_seed`); distinct per node type
/// so that one seed gives unrelated noise in different node types.
pub const STREAM_GUST: u64 = 0;
/// First of the six jitter streams (translation x, y, z, rotation x, y, z).
pub const STREAM_JITTER: u64 = 16;
/// First of the three wind streams (one per velocity or potential component).
pub const STREAM_WIND: u64 = 32;

/// Fractional offsets added to noise coordinates (golden-ratio and square-root fractions:
/// phi - 1, sqrt 2 - 1, sqrt 3 - 1, sqrt 5 - 2) so that regular frames and grid points,
/// and their doublings in finer octaves, never land on lattice points, where the noise is
/// forced to zero. Common practice, no source.
pub const OFFSETS: [f64; 4] = [
    0.618_033_988_749_894_9,
    0.414_213_562_373_095_1,
    0.732_050_807_568_877_2,
    0.236_067_977_499_789_7,
];

pub fn seed_param() -> ParamSpec {
    ParamSpec::integer(
        "seed",
        0,
        (0, SEED_MAX),
        "Picks the noise: the same seed gives the same result every run; another seed another pattern.",
    )
}

pub fn octaves_param() -> ParamSpec {
    ParamSpec::integer(
        "octaves",
        3,
        (1, OCTAVES_MAX),
        "Layers of detail; each is twice the frequency of the one before.",
    )
}

pub fn seed(params: &Params) -> Result<u64, NodeError> {
    let s = params.integer("seed")?;
    if !(0..=SEED_MAX).contains(&s) {
        return Err(NodeError::new(format!("`seed` = {s} is outside 0 to {SEED_MAX}")));
    }
    Ok(s as u64)
}

pub fn octaves(params: &Params) -> Result<u32, NodeError> {
    let o = params.integer("octaves")?;
    if !(1..=OCTAVES_MAX).contains(&o) {
        return Err(NodeError::new(format!("`octaves` = {o} is outside 1 to {OCTAVES_MAX}")));
    }
    Ok(o as u32)
}

/// A number parameter checked to lie in `min..=max` (the host checks ranges first; this
/// keeps direct callers honest too).
pub fn number_in(params: &Params, name: &str, min: f64, max: f64) -> Result<f64, NodeError> {
    let v = params.number(name)?;
    if !(v >= min && v <= max) {
        return Err(NodeError::new(format!("`{name}` = {v} is outside {min} to {max}")));
    }
    Ok(v)
}

/// Warns when the finest octave varies faster than the frames can show: above the
/// Nyquist frequency, half the frame rate (Shannon 1949, "Communication in the presence
/// of noise"), it aliases into a slower, false wobble.
pub fn warn_if_aliased(io: &mut Io<'_>, frequency: f64, octaves: u32) {
    let finest = frequency * f64::from(1u32 << (octaves - 1));
    let nyquist = 0.5 * io.timeline().fps();
    if finest > nyquist {
        io.warn(format!(
            "the finest octave changes at {finest} Hz (frequency {frequency} Hz times 2^{}), above the \
             {nyquist} Hz that frames at {} fps can show; it will alias. Lower `frequency` or `octaves`",
            octaves - 1,
            io.timeline().fps()
        ));
    }
}

/// Checks that a connected input holds one frame per frame of the call and only finite
/// values; names the first bad frame.
pub fn check_input(io: &Io<'_>, name: &str, values: &[f64], width: usize) -> Result<(), NodeError> {
    let frames = io.frames();
    if values.len() != frames * width {
        return Err(NodeError::new(format!(
            "input `{name}` holds {} values; {frames} frames of {width} were expected",
            values.len()
        )));
    }
    if let Some(bad) = values.iter().position(|v| !v.is_finite()) {
        return Err(NodeError::new(format!(
            "input `{name}` is not finite at frame {}",
            io.timeline().frame_number(bad / width)
        )));
    }
    Ok(())
}

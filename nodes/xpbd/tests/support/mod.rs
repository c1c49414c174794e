//! Helpers for the `xpbd.strand` tests: run the node over buffers of our own, with no plugin
//! boundary (DEVELOPERS.md, "Testing a node").
#![allow(dead_code)]

use heft_node_sdk::{Io, Node, NodeError, NodeSpec, ParamValue, Params, PortKind, Series, Timeline};
use heft_xpbd::{XpbdStrand, XpbdStrandF32};

/// Standard gravity, exact by definition (3rd CGPM, 1901).
pub const G: f64 = heft_node_sdk::STANDARD_GRAVITY;

pub fn timeline(fps: u32, frames: u64) -> Timeline {
    Timeline {
        start_frame: 0,
        frame_count: frames,
        rate_num: fps,
        rate_den: 1,
    }
}

pub fn num(name: &'static str, v: f64) -> (&'static str, ParamValue) {
    (name, ParamValue::Number(v))
}
pub fn int(name: &'static str, v: i64) -> (&'static str, ParamValue) {
    (name, ParamValue::Integer(v))
}
pub fn choice(name: &'static str, v: &str) -> (&'static str, ParamValue) {
    (name, ParamValue::Choice(v.to_owned()))
}
pub fn vec3(name: &'static str, v: [f64; 3]) -> (&'static str, ParamValue) {
    (name, ParamValue::Vec3(v))
}

pub fn params(spec: &NodeSpec, changes: &[(&'static str, ParamValue)]) -> Params {
    let mut p = Params::defaults(spec).expect("every parameter has a default");
    for (name, value) in changes {
        p = p.with(name, value.clone()).expect("a parameter of the node");
    }
    p
}

/// Every output of one evaluation, frame-major.
#[derive(Debug, Clone, PartialEq)]
pub struct Run {
    pub tl: Timeline,
    pub n: usize,
    pub positions: Vec<f64>,
    pub velocities: Vec<f64>,
    pub momentum: Vec<f64>,
    pub energy: Vec<f64>,
    pub warnings: Vec<String>,
}

impl Run {
    pub fn frames(&self) -> usize {
        self.tl.frames()
    }
    pub fn x(&self, frame: usize, particle: usize) -> [f64; 3] {
        let o = 3 * (frame * self.n + particle);
        [self.positions[o], self.positions[o + 1], self.positions[o + 2]]
    }
    pub fn v(&self, frame: usize, particle: usize) -> [f64; 3] {
        let o = 3 * (frame * self.n + particle);
        [self.velocities[o], self.velocities[o + 1], self.velocities[o + 2]]
    }
    pub fn p(&self, frame: usize) -> [f64; 3] {
        [
            self.momentum[3 * frame],
            self.momentum[3 * frame + 1],
            self.momentum[3 * frame + 2],
        ]
    }
    pub fn time(&self, frame: usize) -> f64 {
        self.tl.time(frame)
    }
}

/// Connected inputs by name: (name, values frame-major).
pub type Inputs<'a> = &'a [(&'static str, Vec<f64>)];

/// One of the node types' runners ([`run`], [`run_f32`]).
pub type Runner = fn(&[(&'static str, ParamValue)], Timeline, Inputs<'_>) -> Result<Run, NodeError>;

/// Both node types: (name, runner).
pub const BOTH: [(&str, Runner); 2] = [("xpbd.strand", run), ("xpbd.strand_f32", run_f32)];

/// Runs `xpbd.strand` (f64 lanes) with these parameter changes and inputs.
pub fn run(changes: &[(&'static str, ParamValue)], tl: Timeline, inputs: Inputs<'_>) -> Result<Run, NodeError> {
    run_node::<XpbdStrand>(changes, tl, inputs)
}

/// Runs `xpbd.strand_f32` (f32 lanes) with these parameter changes and inputs.
pub fn run_f32(changes: &[(&'static str, ParamValue)], tl: Timeline, inputs: Inputs<'_>) -> Result<Run, NodeError> {
    run_node::<XpbdStrandF32>(changes, tl, inputs)
}

/// Runs node type `Nd` with these parameter changes and inputs.
pub fn run_node<Nd: Node>(
    changes: &[(&'static str, ParamValue)],
    tl: Timeline,
    inputs: Inputs<'_>,
) -> Result<Run, NodeError> {
    let spec = Nd::spec();
    let p = params(&spec, changes);
    let n = Nd::output_points(&p, &[])?[0];
    let frames = tl.frames();
    let series: Vec<Series<'_>> = spec
        .inputs
        .iter()
        .map(|port| match inputs.iter().find(|(name, _)| *name == port.name) {
            Some((_, v)) => {
                let width = match port.kind {
                    PortKind::Points => v.len() / frames,
                    k => k.width(0),
                };
                Series::new(v, width)
            }
            None => Series::new(&[], port.kind.width(0)),
        })
        .collect();
    let widths = vec![3 * n, 3 * n, 3, 1];
    let mut bufs: Vec<Vec<f64>> = widths.iter().map(|w| vec![0.0; frames * w]).collect();
    let warnings = {
        let outs: Vec<&mut [f64]> = bufs.iter_mut().map(Vec::as_mut_slice).collect();
        let mut io = Io::new(tl, &spec, series, outs, widths);
        Nd::evaluate(&p, &mut io)?;
        io.warnings().to_vec()
    };
    let mut it = bufs.into_iter();
    let mut next = || it.next().unwrap_or_default();
    Ok(Run {
        tl,
        n,
        positions: next(),
        velocities: next(),
        momentum: next(),
        energy: next(),
        warnings,
    })
}

/// A transform series: translation and unit quaternion (x, y, z, w) per frame from `f(time)`.
pub fn transform(tl: Timeline, f: impl Fn(f64) -> ([f64; 3], [f64; 4])) -> Vec<f64> {
    (0..tl.frames())
        .flat_map(|i| {
            let (t, q) = f(tl.time(i));
            [t[0], t[1], t[2], q[0], q[1], q[2], q[3]]
        })
        .collect()
}

/// A fixed anchor at `at` with no rotation.
pub fn fixed_anchor(tl: Timeline, at: [f64; 3]) -> Vec<f64> {
    transform(tl, |_| (at, [0.0, 0.0, 0.0, 1.0]))
}

/// A points input whose every frame is `pts` (only frame 0 is read by the node).
pub fn points_input(tl: Timeline, pts: &[[f64; 3]]) -> Vec<f64> {
    let one: Vec<f64> = pts.iter().flatten().copied().collect();
    (0..tl.frames()).flat_map(|_| one.iter().copied()).collect()
}

/// Times where `y` crosses zero in either direction, linearly interpolated.
pub fn crossings(t: &[f64], y: &[f64]) -> Vec<f64> {
    let mut out = Vec::new();
    for i in 1..y.len() {
        if (y[i - 1] < 0.0) != (y[i] < 0.0) {
            out.push(t[i - 1] + (t[i] - t[i - 1]) * (-y[i - 1]) / (y[i] - y[i - 1]));
        }
    }
    out
}

/// The period from zero crossings (two per period) by least squares on crossing k at
/// t0 + k T / 2.
pub fn period_by_regression(c: &[f64]) -> f64 {
    assert!(c.len() >= 3, "too few zero crossings: {}", c.len());
    let n = c.len() as f64;
    let mean_k = (n - 1.0) / 2.0;
    let mean_t = c.iter().sum::<f64>() / n;
    let (mut sxy, mut sxx) = (0.0, 0.0);
    for (k, t) in c.iter().enumerate() {
        let dk = k as f64 - mean_k;
        sxy += dk * (t - mean_t);
        sxx += dk * dk;
    }
    2.0 * sxy / sxx
}

/// A small deterministic generator (SplitMix64, Steele, Lea & Flood 2014, "Fast Splittable
/// Pseudorandom Number Generators", OOPSLA) for test data; seeded, so runs repeat.
#[derive(Debug, Clone)]
pub struct SplitMix(pub u64);

impl SplitMix {
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in [lo, hi).
    pub fn uniform(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
}

//! Helpers for testing a strand node type over buffers of our own, with no plugin boundary
//! (DEVELOPERS.md, "Testing a node"): parameters, inputs (transforms, points), one evaluation's
//! outputs, zero crossings, a seeded generator. Compiled with the `testing` feature, which the
//! strand plugins turn on for their tests only.

use heft_node_sdk::{Io, Node, NodeError, NodeSpec, ParamValue, Params, PortKind, Series, Timeline};

use crate::{Method, Setup, evaluate_with};

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

/// One evaluation: every output, frame-major.
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

fn call(
    spec: &NodeSpec,
    n: usize,
    tl: Timeline,
    inputs: Inputs<'_>,
    eval: impl FnOnce(&mut Io<'_>) -> Result<(), NodeError>,
) -> Result<Run, NodeError> {
    let (result, run) = call_raw(spec, n, tl, inputs, eval);
    result.map(|()| run)
}

/// Like `call`, but also returns the buffers when the node fails (to check what it wrote).
fn call_raw(
    spec: &NodeSpec,
    n: usize,
    tl: Timeline,
    inputs: Inputs<'_>,
    eval: impl FnOnce(&mut Io<'_>) -> Result<(), NodeError>,
) -> (Result<(), NodeError>, Run) {
    let frames = tl.frames();
    let series: Vec<Series<'_>> = spec
        .inputs
        .iter()
        .map(|port| {
            let width = match port.kind {
                PortKind::Points => inputs
                    .iter()
                    .find(|(name, _)| *name == port.name)
                    .map_or(0, |(_, v)| if port.name == "wind" { v.len() / frames } else { 3 * n }),
                k => k.width(0),
            };
            match inputs.iter().find(|(name, _)| *name == port.name) {
                Some((_, v)) => Series::new(v, width),
                None => Series::new(&[], width),
            }
        })
        .collect();
    let widths = vec![3 * n, 3 * n, 3, 1];
    let mut bufs: Vec<Vec<f64>> = widths.iter().map(|w| vec![0.0; frames * w]).collect();
    let (result, warnings) = {
        let outs: Vec<&mut [f64]> = bufs.iter_mut().map(Vec::as_mut_slice).collect();
        let mut io = Io::new(tl, spec, series, outs, widths);
        let r = eval(&mut io);
        (r, io.warnings().to_vec())
    };
    let mut it = bufs.into_iter();
    let run = Run {
        tl,
        n,
        positions: it.next().unwrap(),
        velocities: it.next().unwrap(),
        momentum: it.next().unwrap(),
        energy: it.next().unwrap(),
        warnings,
    };
    (result, run)
}

/// Runs node type `N` with these parameter changes and inputs.
pub fn run<N: Node>(
    changes: &[(&'static str, ParamValue)],
    tl: Timeline,
    inputs: Inputs<'_>,
) -> Result<Run, NodeError> {
    let spec = N::spec();
    let p = params(&spec, changes);
    let n = N::output_points(&p, &[])?[0];
    call(&spec, n, tl, inputs, |io| N::evaluate(&p, io))
}

/// Runs node type `N` and returns the buffers whether or not it fails.
pub fn run_raw<N: Node>(
    changes: &[(&'static str, ParamValue)],
    tl: Timeline,
    inputs: Inputs<'_>,
) -> (Result<(), NodeError>, Run) {
    let spec = N::spec();
    let p = params(&spec, changes);
    let n = N::output_points(&p, &[]).expect("valid point counts")[0];
    call_raw(&spec, n, tl, inputs, |io| N::evaluate(&p, io))
}

/// Runs method `M` on a prepared setup (spec of node type `N` for the ports).
pub fn run_setup<N: Node, M: Method>(setup: &Setup, tl: Timeline, inputs: Inputs<'_>) -> Result<Run, NodeError> {
    let spec = N::spec();
    call(&spec, setup.total_particles(), tl, inputs, |io| {
        evaluate_with::<M>(setup, io)
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

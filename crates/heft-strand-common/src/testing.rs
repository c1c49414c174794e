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

/// Parameter changes: (name, value).
pub type Changes = Vec<(&'static str, ParamValue)>;

/// Connected inputs by name: (name, values frame-major).
pub type Inputs<'a> = &'a [(&'static str, Vec<f64>)];

fn call(
    spec: &NodeSpec,
    n: usize,
    tl: Timeline,
    inputs: Inputs<'_>,
    threads: usize,
    eval: impl FnOnce(&mut Io<'_>) -> Result<(), NodeError>,
) -> Result<Run, NodeError> {
    let (result, run) = call_raw(spec, n, tl, inputs, threads, eval);
    result.map(|()| run)
}

/// Like `call`, but also returns the buffers when the node fails (to check what it wrote).
fn call_raw(
    spec: &NodeSpec,
    n: usize,
    tl: Timeline,
    inputs: Inputs<'_>,
    threads: usize,
    eval: impl FnOnce(&mut Io<'_>) -> Result<(), NodeError>,
) -> (Result<(), NodeError>, Run) {
    let frames = tl.frames();
    let series: Vec<Series<'_>> = spec
        .inputs
        .iter()
        .map(|port| {
            let width = match port.kind {
                PortKind::Points => inputs.iter().find(|(name, _)| *name == port.name).map_or(0, |(_, v)| {
                    if port.name == "wind" || port.name == "colliders" {
                        v.len() / frames
                    } else {
                        3 * n
                    }
                }),
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
        let mut io = Io::new(tl, spec, series, outs, widths).with_threads(threads);
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
    call(&spec, n, tl, inputs, 1, |io| N::evaluate(&p, io))
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
    call_raw(&spec, n, tl, inputs, 1, |io| N::evaluate(&p, io))
}

/// Runs method `M` on a prepared setup (spec of node type `N` for the ports).
pub fn run_setup<N: Node, M: Method>(setup: &Setup, tl: Timeline, inputs: Inputs<'_>) -> Result<Run, NodeError> {
    run_setup_threads::<N, M>(setup, tl, inputs, 1)
}

/// [`run_setup`], the node allowed `threads` threads ([`Io::threads`]).
pub fn run_setup_threads<N: Node, M: Method>(
    setup: &Setup,
    tl: Timeline,
    inputs: Inputs<'_>,
    threads: usize,
) -> Result<Run, NodeError> {
    let spec = N::spec();
    call(&spec, setup.total_particles(), tl, inputs, threads, |io| {
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

/// The signed distance (m, negative inside) of `x` from the tapered capsule from ball
/// (`start`, `r0`) to ball (`end`, `r1`), computed from its definition as a union of balls, as
/// a reference independent of `heft_strand_common::Capsule`: min over t in [0, 1] of
/// |x - c(t)| - r(t), c(t) = start + t (end - start), r(t) = r0 + t (r1 - r0). Outside that is
/// the distance to the union; inside, minus the depth in the deepest ball, which for this
/// convex union (the hull of its two end balls) is the distance to its surface: every ball lies
/// inside, and the ball that the nearest surface point lies on holds x at exactly that depth.
/// The function of t is convex (a norm of an affine function minus a linear one), so a golden-
/// section search finds its minimum (Kiefer 1953, "Sequential minimax search for a maximum",
/// Proc. AMS 4); 200 iterations shrink the bracket below 1e-40.
pub fn round_cone_distance(x: [f64; 3], start: [f64; 3], end: [f64; 3], r0: f64, r1: f64) -> f64 {
    let f = |t: f64| {
        let c = [0, 1, 2].map(|k| start[k] + t * (end[k] - start[k]));
        let d = [0, 1, 2].map(|k| x[k] - c[k]);
        (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt() - (r0 + t * (r1 - r0))
    };
    let g = (5.0f64.sqrt() - 1.0) / 2.0;
    let (mut lo, mut hi) = (0.0f64, 1.0f64);
    let (mut a, mut b) = (hi - g * (hi - lo), lo + g * (hi - lo));
    let (mut fa, mut fb) = (f(a), f(b));
    for _ in 0..200 {
        if fa <= fb {
            hi = b;
            (b, fb) = (a, fa);
            a = hi - g * (hi - lo);
            fa = f(a);
        } else {
            lo = a;
            (a, fa) = (b, fb);
            b = lo + g * (hi - lo);
            fb = f(b);
        }
    }
    f(0.0).min(f(1.0)).min(fa).min(fb)
}

/// The two end centres and radii of a capsule at one instant: (start, end, r0, r1), m.
pub type CapsuleShape = ([f64; 3], [f64; 3], f64, f64);

/// A scene for the capsule collider tests, shared by every strand node type's tests: parameter
/// changes, connected inputs, and where the capsule is at any time (for the checks).
#[derive(Debug, Clone)]
pub struct CapsuleScene {
    pub tl: Timeline,
    pub changes: Vec<(&'static str, ParamValue)>,
    pub inputs: Vec<(&'static str, Vec<f64>)>,
    /// The capsule at time t (s), from the same transforms as the inputs.
    pub capsule: fn(f64) -> CapsuleShape,
}

impl CapsuleScene {
    /// Runs node type `N` on the scene, with `extra` parameter changes on top (a method's
    /// substeps, say).
    pub fn run<N: Node>(&self, extra: &[(&'static str, ParamValue)]) -> Result<Run, NodeError> {
        let changes: Vec<(&'static str, ParamValue)> = self.changes.iter().chain(extra).cloned().collect();
        run::<N>(&changes, self.tl, &self.inputs)
    }

    /// The signed distance of particle `i` at `frame` from the capsule at that frame's time, by
    /// [`round_cone_distance`] (m, negative inside).
    pub fn distance(&self, run: &Run, frame: usize, i: usize) -> f64 {
        let (a, b, r0, r1) = (self.capsule)(run.time(frame));
        round_cone_distance(run.x(frame, i), a, b, r0, r1)
    }

    /// The least signed distance of any particle for which `free` holds, over every frame, with
    /// its frame and particle.
    pub fn deepest(&self, run: &Run, free: impl Fn(usize) -> bool) -> (f64, usize, usize) {
        let mut worst = (f64::INFINITY, 0, 0);
        for f in 0..run.frames() {
            for i in (0..run.n).filter(|&i| free(i)) {
                let d = self.distance(run, f, i);
                if d < worst.0 {
                    worst = (d, f, i);
                }
            }
        }
        worst
    }
}

impl CapsuleScene {
    /// The same scene with its capsule given as the one entry of the `colliders` list input
    /// (its ends and radii sampled from `capsule` at the frames) instead of the numbered
    /// collider inputs.
    pub fn as_list(&self) -> CapsuleScene {
        let mut scene = self.clone();
        scene.inputs.retain(|(name, _)| !name.starts_with("collider_"));
        let list = (0..self.tl.frames())
            .flat_map(|i| {
                let (a, b, r0, r1) = (self.capsule)(self.tl.time(i));
                [a[0], a[1], a[2], b[0], b[1], b[2], r0, r1, 0.0]
            })
            .collect();
        scene.inputs.push(("colliders", list));
        scene
    }
}

/// The spheres of [`fence_scene`]: (centre, radius), m.
pub fn fence() -> Vec<([f64; 3], f64)> {
    (0..12)
        .map(|k| {
            let x = 0.04 + 0.05 * k as f64;
            ([x, 0.0, -0.12 - 0.02 * (k % 3) as f64], 0.02 + 0.004 * (k % 4) as f64)
        })
        .collect()
}

/// A 0.6 m chain of 48 segments (no bending stiffness) pinned at the origin, laid out
/// horizontally along +X, falls onto a fence of twelve still spheres of three heights and four
/// radii below it ([`fence`]), given as a `colliders` list, and drapes over them; damped at
/// 2 + 2 1/s, 3 s at 24 fps.
pub fn fence_scene() -> (Timeline, Changes, Vec<(&'static str, Vec<f64>)>) {
    let tl = timeline(24, 72);
    let changes = vec![
        num("length", 0.6),
        int("segments", 48),
        num("bending_stiffness", 0.0),
        num("damping", 2.0),
        vec3("rest_direction", [1.0, 0.0, 0.0]),
    ];
    let frame: Vec<f64> = fence()
        .iter()
        .flat_map(|&(c, r)| [c[0], c[1], c[2], c[0], c[1], c[2], r, r, 0.0])
        .collect();
    let list = frame.repeat(tl.frames());
    let inputs = vec![("anchor", fixed_anchor(tl, [0.0; 3])), ("colliders", list)];
    (tl, changes, inputs)
}

/// Runs node type `N` on [`fence_scene`] with `substeps`: the least signed distance of any free
/// particle from any of the fence's spheres over every frame (by [`round_cone_distance`],
/// independent of the node's projection), and how many spheres the chain rests on at the end
/// (a particle within 1e-6 m of the surface).
pub fn fence_drape<N: Node>(substeps: i64) -> (f64, usize) {
    let (tl, mut changes, inputs) = fence_scene();
    changes.push(int("substeps", substeps));
    let run = run::<N>(&changes, tl, &inputs).expect("runs");
    let spheres = fence();
    let mut deepest = f64::INFINITY;
    for f in 0..run.frames() {
        for i in 1..run.n {
            for &(c, r) in &spheres {
                deepest = deepest.min(round_cone_distance(run.x(f, i), c, c, r, r));
            }
        }
    }
    let last = run.frames() - 1;
    let touched = spheres
        .iter()
        .filter(|&&(c, r)| (1..run.n).any(|i| round_cone_distance(run.x(last, i), c, c, r, r) < 1e-6))
        .count();
    (deepest, touched)
}

/// Where the limb of [`limb_scene`] runs: along Y at x = 0.03 m, z = -0.15 m, from y = -0.15 m
/// to 0.15 m.
pub const LIMB_X: f64 = 0.03;
/// See [`LIMB_X`].
pub const LIMB_Z: f64 = -0.15;
/// The radius of the straight limb of [`limb_scene`], m.
pub const LIMB_RADIUS: f64 = 0.05;

/// A still horizontal limb, a capsule from one transform (the shoulder) to another (the elbow),
/// in the way of a 0.4 m strand of 40 segments and no bending stiffness (a chain) on a still
/// anchor at the origin, whose plumb line would pass 3 cm inside the limb: the strand starts
/// clear of it, laid 19 degrees off the vertical towards -X, swings against the limb's -X side
/// and settles there over 5 s (24 fps), damped at 4 + 2 1/s (damping, relative damping).
/// Straight: radius 0.05 m; tapered: 0.06 m at the shoulder (y = -0.15 m) to 0.04 m at the
/// elbow (y = 0.15 m).
pub fn limb_scene(tapered: bool) -> CapsuleScene {
    let tl = timeline(24, 120);
    let (r0, r1) = if tapered { (0.06, 0.04) } else { (LIMB_RADIUS, 0.0) };
    let changes = vec![
        int("segments", 40),
        num("bending_stiffness", 0.0),
        num("damping", 4.0),
        vec3("rest_direction", [-0.35, 0.0, -1.0]),
        num("collider_1_radius", r0),
        num("collider_1_end_radius", r1),
    ];
    let inputs = vec![
        ("anchor", fixed_anchor(tl, [0.0; 3])),
        ("collider_1", fixed_anchor(tl, [LIMB_X, -0.15, LIMB_Z])),
        ("collider_1_end", fixed_anchor(tl, [LIMB_X, 0.15, LIMB_Z])),
    ];
    fn straight(_: f64) -> CapsuleShape {
        (
            [LIMB_X, -0.15, LIMB_Z],
            [LIMB_X, 0.15, LIMB_Z],
            LIMB_RADIUS,
            LIMB_RADIUS,
        )
    }
    fn tapered_limb(_: f64) -> CapsuleShape {
        ([LIMB_X, -0.15, LIMB_Z], [LIMB_X, 0.15, LIMB_Z], 0.06, 0.04)
    }
    CapsuleScene {
        tl,
        changes,
        inputs,
        capsule: if tapered { tapered_limb } else { straight },
    }
}

/// The speed of the capsule of [`pushed_scene`], m/s.
pub const PUSH_SPEED: f64 = 0.5;

/// A free strand (0.2 m, 12 segments, 0.05 kg/m) lying still along Y from (0.1, -0.1, 0) with
/// no gravity and no damping, and a straight capsule of radius 0.05 m along Y whose two ends ride
/// on two transforms moving at [`PUSH_SPEED`] along +X from x = -0.1 m: its surface reaches the
/// strand at t = 0.3 s and pushes it on; 1 s at 24 fps, 200 substeps.
pub fn pushed_scene() -> CapsuleScene {
    let tl = timeline(24, 24);
    let changes = vec![
        choice("pin", "free"),
        num("gravity", 0.0),
        num("damping", 0.0),
        num("relative_damping", 0.0),
        num("length", 0.2),
        vec3("rest_direction", [0.0, 1.0, 0.0]),
        vec3("start_offset", [0.1, -0.1, 0.0]),
        num("collider_1_radius", 0.05),
        // The explicit limit of `strand.euler` for this strand is 2.6e-4 s (k = 1.2e4 N/m,
        // m = 8.3e-4 kg): 200 substeps at 24 fps.
        int("substeps", 200),
    ];
    let inputs = vec![
        (
            "collider_1",
            transform(tl, |t| ([-0.1 + PUSH_SPEED * t, -0.2, 0.0], [0.0, 0.0, 0.0, 1.0])),
        ),
        (
            "collider_1_end",
            transform(tl, |t| ([-0.1 + PUSH_SPEED * t, 0.2, 0.0], [0.0, 0.0, 0.0, 1.0])),
        ),
    ];
    fn shape(t: f64) -> CapsuleShape {
        let x = -0.1 + PUSH_SPEED * t;
        ([x, -0.2, 0.0], [x, 0.2, 0.0], 0.05, 0.05)
    }
    CapsuleScene {
        tl,
        changes,
        inputs,
        capsule: shape,
    }
}

/// The elbow of [`forearm_scene`], m.
pub const ELBOW: [f64; 3] = [0.0, -0.2, -0.25];

/// A forearm sweeping through a hanging strand (the defaults on a still anchor at the origin):
/// a tapered capsule, 0.04 m at the elbow to 0.03 m at the wrist, from a still elbow transform
/// at [`ELBOW`] to a wrist transform 0.3 m away that swings about the elbow in the horizontal
/// plane from -X through +Y (where the strand hangs, 0.2 m from the elbow) to +X in 1.5 s; 2 s
/// at 24 fps.
pub fn forearm_scene() -> CapsuleScene {
    let tl = timeline(24, 48);
    fn wrist(t: f64) -> [f64; 3] {
        let a = std::f64::consts::PI * (t / 1.5).min(1.0);
        [ELBOW[0] - 0.3 * a.cos(), ELBOW[1] + 0.3 * a.sin(), ELBOW[2]]
    }
    let changes = vec![num("collider_1_radius", 0.04), num("collider_1_end_radius", 0.03)];
    let inputs = vec![
        ("anchor", fixed_anchor(tl, [0.0; 3])),
        ("collider_1", fixed_anchor(tl, ELBOW)),
        ("collider_1_end", transform(tl, |t| (wrist(t), [0.0, 0.0, 0.0, 1.0]))),
    ];
    fn shape(t: f64) -> CapsuleShape {
        (ELBOW, wrist(t), 0.04, 0.03)
    }
    CapsuleScene {
        tl,
        changes,
        inputs,
        capsule: shape,
    }
}

/// A 30 cm strand of 8 segments hanging at 45 degrees from an anchor that falls freely from
/// rest (z = -g t^2 / 2, sampled at the frames), for half a second at `fps`, no damping, with
/// each node's default substeps unless `substeps` is given. Returns the largest distance of a
/// particle from where it started relative to the anchor. In the anchor's falling frame the
/// strand is weightless (equivalence principle), so at rest it must stay exactly as it was.
pub fn free_fall_drift<N: Node>(fps: u32, substeps: Option<i64>) -> f64 {
    let tl = timeline(fps, u64::from(fps) / 2 + 1);
    let g = heft_node_sdk::STANDARD_GRAVITY;
    let anchor = transform(tl, |t| ([0.0, 0.0, -0.5 * g * t * t], [0.0, 0.0, 0.0, 1.0]));
    let h = std::f64::consts::FRAC_1_SQRT_2;
    let mut changes = vec![
        int("segments", 8),
        num("length", 0.3),
        vec3("rest_direction", [h, 0.0, -h]),
        num("damping", 0.0),
        num("relative_damping", 0.0),
    ];
    if let Some(s) = substeps {
        changes.push(int("substeps", s));
    }
    let run = run::<N>(&changes, tl, &[("anchor", anchor)]).expect("runs");
    let mut worst: f64 = 0.0;
    for f in 0..run.frames() {
        let pivot = run.x(f, 0);
        for i in 0..run.n {
            let (p, p0, pivot0) = (run.x(f, i), run.x(0, i), run.x(0, 0));
            for k in 0..3 {
                worst = worst.max(((p[k] - pivot[k]) - (p0[k] - pivot0[k])).abs());
            }
        }
    }
    worst
}

/// The stretch of the top segment of a 30 cm strand of 8 segments hanging from an anchor that
/// accelerates upward at `a` from rest (z = a t^2 / 2), at `fps` for `seconds`, with relative
/// damping so that it settles: the mean over the last second of (|x1 - x0| - rest length).
/// A strand at rest in a frame accelerating upward at a feels gravity g + a (equivalence
/// principle), so its tensions, and a linear stretch, scale by (g + a) / g.
pub fn elevator_stretch<N: Node>(a: f64, fps: u32, seconds: u32) -> f64 {
    let frames = u64::from(fps * seconds) + 1;
    let tl = timeline(fps, frames);
    let anchor = transform(tl, |t| ([0.0, 0.0, 0.5 * a * t * t], [0.0, 0.0, 0.0, 1.0]));
    let run = run::<N>(
        &[
            int("segments", 8),
            num("length", 0.3),
            num("damping", 0.0),
            num("relative_damping", 5.0),
        ],
        tl,
        &[("anchor", anchor)],
    )
    .expect("runs");
    let rest = 0.3 / 8.0;
    let last = run.frames() - 1;
    let from = last + 1 - fps as usize;
    let mut sum = 0.0;
    for f in from..=last {
        let (p0, p1) = (run.x(f, 0), run.x(f, 1));
        let d = ((p1[0] - p0[0]).powi(2) + (p1[1] - p0[1]).powi(2) + (p1[2] - p0[2]).powi(2)).sqrt();
        sum += d - rest;
    }
    sum / fps as f64
}

/// Runs a strand whose anchor holds still except for three frames (20 to 22) where the capture
/// put it 500 m away, at 24 fps for 2 s: returns the error, if the node gives one.
pub fn glitched_anchor<N: Node>() -> Option<String> {
    let tl = timeline(24, 49);
    let anchor = transform(tl, |t| {
        let frame = (t * 24.0).round() as i64;
        let x = if (20..=22).contains(&frame) { 500.0 } else { 0.0 };
        ([x, 0.0, 1.5], [0.0, 0.0, 0.0, 1.0])
    });
    run::<N>(&[int("segments", 8), num("length", 0.3)], tl, &[("anchor", anchor)])
        .err()
        .map(|e| e.to_string())
}

/// A 110 cm sash hanging from hips that crouch, jump 0.35 m and land (a made-up path: 0.95 m
/// standing, 0.70 m at the bottom of the crouch, a free-fall parabola in the air), over a ground
/// at z = 0, at 24 fps for 2 s with the default substeps. Returns the lowest particle height over
/// every frame, and the lowest height the sash's tip would reach without the ground (hanging
/// straight down at the bottom of the crouch: 0.70 - 1.10 = -0.40 m).
pub fn sash_over_the_ground<N: Node>() -> (f64, f64) {
    let tl = timeline(24, 49);
    let g = heft_node_sdk::STANDARD_GRAVITY;
    let z = |t: f64| -> f64 {
        // 0 to 0.5 s: crouch 0.95 -> 0.70 (cosine); 0.5 to 0.8 s: push 0.70 -> 1.00 (cosine),
        // leaving at 2.62 m/s; then the parabola from 1.00 m at 2.62 m/s until it comes back to
        // 0.95 m; then standing.
        let ease = |u: f64| 0.5 - 0.5 * (std::f64::consts::PI * u.clamp(0.0, 1.0)).cos();
        let v0 = (2.0 * g * 0.35).sqrt();
        let t_land = 0.8 + (v0 + (v0 * v0 + 2.0 * g * 0.05).sqrt()) / g;
        if t < 0.5 {
            0.95 - 0.25 * ease(t / 0.5)
        } else if t < 0.8 {
            0.70 + 0.30 * ease((t - 0.5) / 0.3)
        } else if t < t_land {
            let s = t - 0.8;
            1.0 + v0 * s - 0.5 * g * s * s
        } else {
            0.95
        }
    };
    let hips = transform(tl, |t| ([0.0, 0.0, z(t)], [0.0, 0.0, 0.0, 1.0]));
    let run = run::<N>(
        &[
            int("segments", 22),
            num("length", 1.1),
            vec3("rest_direction", [0.0, 0.0, -1.0]),
            vec3("start_offset", [0.0, 0.15, 0.0]),
            ("ground", ParamValue::Bool(true)),
        ],
        tl,
        &[("anchor", hips)],
    )
    .expect("runs");
    let mut lowest = f64::INFINITY;
    for f in 0..run.frames() {
        for i in 0..run.n {
            lowest = lowest.min(run.x(f, i)[2]);
        }
    }
    (lowest, 0.70 - 1.10)
}

/// A strand started settled (`start = settled`) on a still anchor at 1.5 m, at 24 fps for
/// 1 s: returns the largest distance any particle moves from frame 0 over the run, the chain's
/// length at frame 0 (the sum of its segment lengths) and the height of its last particle at
/// frame 0. `both_ends`: a necklace of 42 cm pinned 12 cm apart; otherwise a 45 cm braid laid
/// out horizontally from its pin.
pub fn settled_start<N: Node>(both_ends: bool, substeps: Option<i64>) -> (f64, f64, f64) {
    let tl = timeline(24, 25);
    let anchor = transform(tl, |_| ([0.0, 0.0, 1.5], [0.0, 0.0, 0.0, 1.0]));
    let mut changes = vec![
        int("segments", 20),
        choice("start", "settled"),
        vec3("rest_direction", [1.0, 0.0, 0.0]),
    ];
    if let Some(s) = substeps {
        changes.push(int("substeps", s));
    }
    if both_ends {
        changes.extend([
            choice("pin", "both_ends"),
            num("length", 0.42),
            vec3("start_offset", [0.0, -0.06, 0.0]),
            vec3("end_offset", [0.0, 0.06, 0.0]),
        ]);
    } else {
        changes.push(num("length", 0.45));
    }
    let run = run::<N>(&changes, tl, &[("anchor", anchor)]).expect("runs");
    let mut moved: f64 = 0.0;
    for f in 0..run.frames() {
        for i in 0..run.n {
            let (a, b) = (run.x(f, i), run.x(0, i));
            moved = moved.max(((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)).sqrt());
        }
    }
    let length: f64 = (1..run.n)
        .map(|i| {
            let (a, b) = (run.x(0, i - 1), run.x(0, i));
            ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)).sqrt()
        })
        .sum();
    (moved, length, run.x(0, run.n - 1)[2])
}

/// The sideways acceleration of the anchor of [`settled_under_acceleration`], m/s^2.
pub const SIDEWAYS: f64 = 3.0;

/// A 45 cm braid of 20 segments started settled (`start = settled`) on an anchor that
/// accelerates sideways at [`SIDEWAYS`] along +X from rest at frame 0 (x = a t^2 / 2, sampled
/// at the frames), at 24 fps for 1 s, undamped. In the anchor's frame the apparent gravity
/// g - a is constant, tilted back from the vertical by atan(a / g) (the equivalence principle;
/// a hanging chain lines up with the gravity it feels), so a strand settled in that
/// equilibrium stays put relative to the anchor. Returns the largest distance any particle
/// moves relative to the anchor from frame 0 over the run, and the angle of the chord from the
/// pin to the tip from straight down at frame 0, rad (towards -X positive).
pub fn settled_under_acceleration<N: Node>(substeps: Option<i64>) -> (f64, f64) {
    let tl = timeline(24, 25);
    let at = |t: f64| [0.5 * SIDEWAYS * t * t, 0.0, 1.5];
    let anchor = transform(tl, |t| (at(t), [0.0, 0.0, 0.0, 1.0]));
    let mut changes = vec![
        int("segments", 20),
        num("length", 0.45),
        num("damping", 0.0),
        num("relative_damping", 0.0),
        choice("start", "settled"),
    ];
    if let Some(s) = substeps {
        changes.push(int("substeps", s));
    }
    let run = run::<N>(&changes, tl, &[("anchor", anchor)]).expect("runs");
    let rel = |f: usize, i: usize| {
        let (x, o) = (run.x(f, i), at(run.time(f)));
        [x[0] - o[0], x[1] - o[1], x[2] - o[2]]
    };
    let mut moved: f64 = 0.0;
    for f in 0..run.frames() {
        for i in 0..run.n {
            let (a, b) = (rel(f, i), rel(0, i));
            moved = moved.max(((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)).sqrt());
        }
    }
    for f in 0..4 {
        eprintln!(
            "f{f} pin {:?} p1 {:?} p10 {:?} v1 {:?}",
            rel(f, 0),
            rel(f, 1),
            rel(f, 10),
            run.v(f, 1)
        );
    }
    let tip = rel(0, run.n - 1);
    (moved, (-tip[0]).atan2(-tip[2]))
}

/// A free 30 cm strand lying flat on the ground (z = 0) along x, all of it sliding along x at
/// `v0` m/s, with these friction coefficients, at 24 fps for 2 s: returns how far its centre
/// of mass slides.
pub fn sliding_distance<N: Node>(static_friction: f64, friction: f64, v0: f64) -> f64 {
    let tl = timeline(24, 49);
    let n = 9;
    let x0: Vec<[f64; 3]> = (0..n).map(|i| [0.3 * i as f64 / 8.0, 0.0, 0.0]).collect();
    let v: Vec<[f64; 3]> = vec![[v0, 0.0, 0.0]; n];
    let run = run::<N>(
        &[
            int("segments", 8),
            num("length", 0.3),
            choice("pin", "free"),
            num("damping", 0.0),
            num("relative_damping", 0.0),
            num("friction", friction),
            num("static_friction", static_friction),
            ("ground", ParamValue::Bool(true)),
        ],
        tl,
        &[
            ("initial_positions", points_input(tl, &x0)),
            ("initial_velocities", points_input(tl, &v)),
        ],
    )
    .expect("runs");
    let com = |f: usize| (0..n).map(|i| run.x(f, i)[0]).sum::<f64>() / n as f64;
    com(run.frames() - 1) - com(0)
}

/// A free 1 cm strand resting on a still sphere of radius 1 m, 20 degrees from its top (laid
/// along the slope's level line), at 24 fps for 1 s with these friction coefficients: returns
/// how far its centre of mass moves. Coulomb: it holds where tan 20 deg = 0.364 is below the
/// static coefficient, and slides off where it is above.
pub fn resting_on_a_slope<N: Node>(static_friction: f64, friction: f64, substeps: Option<i64>) -> f64 {
    let tl = timeline(24, 25);
    let a = 20f64.to_radians();
    let r = 1.0 + 1e-9;
    let x0 = vec![[r * a.sin(), -0.005, r * a.cos()], [r * a.sin(), 0.005, r * a.cos()]];
    let sphere = transform(tl, |_| ([0.0; 3], [0.0, 0.0, 0.0, 1.0]));
    let run = run::<N>(
        &[
            int("segments", 1),
            num("length", 0.01),
            choice("pin", "free"),
            num("damping", 0.0),
            num("relative_damping", 0.0),
            num("friction", friction),
            num("static_friction", static_friction),
            num("collider_1_radius", 1.0),
            int("substeps", substeps.unwrap_or(20)),
        ],
        tl,
        &[("initial_positions", points_input(tl, &x0)), ("collider_1", sphere)],
    )
    .expect("runs");
    let com = |f: usize| {
        let (p, q) = (run.x(f, 0), run.x(f, 1));
        [0.5 * (p[0] + q[0]), 0.5 * (p[1] + q[1]), 0.5 * (p[2] + q[2])]
    };
    let (a, b) = (com(0), com(run.frames() - 1));
    ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)).sqrt()
}

/// Method `M` without [`Method::frame_and_store`]: the frame loop writes every frame through
/// [`Method::store`] after the frame, to check the outputs `M` writes as it runs a frame against.
#[derive(Debug)]
pub struct StoreAfter<M>(pub M);

impl<M: Method> Method for StoreAfter<M> {
    fn new(setup: &Setup) -> Self {
        StoreAfter(M::new(setup))
    }
    fn frame(&mut self, setup: &Setup, state: &mut crate::State, env: &crate::FrameEnv<'_>) {
        self.0.frame(setup, state, env);
    }
    fn elastic_energy(&self, setup: &Setup, state: &crate::State) -> f64 {
        self.0.elastic_energy(setup, state)
    }
    fn fills_state(&self) -> bool {
        self.0.fills_state()
    }
    fn mark(&mut self, state: &crate::State, keep: &mut crate::State) {
        self.0.mark(state, keep);
    }
    fn rewind(&mut self, state: &mut crate::State, keep: &crate::State) {
        self.0.rewind(state, keep);
    }
    fn hold(&mut self, state: &crate::State, held: &mut crate::State) {
        self.0.hold(state, held);
    }
    fn merge(&mut self, state: &mut crate::State, held: &crate::State, take: &[bool]) {
        self.0.merge(state, held, take);
    }
    fn store(&self, x: &mut [f64], v: &mut [f64]) {
        self.0.store(x, v);
    }
    fn momentum_and_energy(&self, setup: &Setup, state: &crate::State) -> (crate::V3, f64, f64) {
        self.0.momentum_and_energy(setup, state)
    }
    fn surely_intact(&self, setup: &Setup, state: &crate::State) -> bool {
        self.0.surely_intact(setup, state)
    }
    fn stability_limit(setup: &Setup, wind: bool) -> Option<f64> {
        M::stability_limit(setup, wind)
    }
    const LIMIT_NAME: &'static str = M::LIMIT_NAME;
    const STRETCHABLE: bool = M::STRETCHABLE;
    const WATCHES_CRUMPLING: bool = M::WATCHES_CRUMPLING;
}

/// Method `M` made to blow up once: the first try of frame `FRAME` (timeline index) comes out
/// with a NaN in particle 0, so the frame loop runs that frame again at twice the substeps
/// (its `reruns`), from where the frame started. Everything else is `M`'s.
#[derive(Debug)]
pub struct RerunOnce<M, const FRAME: usize> {
    inner: M,
    /// True while the frame just run is the one to spoil.
    spoil: bool,
}

impl<M: Method, const FRAME: usize> Method for RerunOnce<M, FRAME> {
    fn new(setup: &Setup) -> Self {
        RerunOnce {
            inner: M::new(setup),
            spoil: false,
        }
    }
    fn frame(&mut self, setup: &Setup, state: &mut crate::State, env: &crate::FrameEnv<'_>) {
        self.inner.frame(setup, state, env);
        self.spoil = env.frame == FRAME && env.substeps == setup.substeps;
        if self.spoil && self.inner.fills_state() {
            state.x[0][0] = f64::NAN;
        }
    }
    /// The spoiled try goes into the outputs too, when `M` writes them as it runs the frame:
    /// the rerun must replace it there.
    fn frame_and_store(
        &mut self,
        setup: &Setup,
        state: &mut crate::State,
        env: &crate::FrameEnv<'_>,
        out: crate::Out<'_>,
    ) -> bool {
        let crate::Out { x, v } = out;
        let written = self
            .inner
            .frame_and_store(setup, state, env, crate::Out { x: &mut *x, v });
        self.spoil = env.frame == FRAME && env.substeps == setup.substeps;
        if self.spoil && written {
            x[0] = f64::NAN;
        }
        written
    }
    fn elastic_energy(&self, setup: &Setup, state: &crate::State) -> f64 {
        self.inner.elastic_energy(setup, state)
    }
    fn fills_state(&self) -> bool {
        self.inner.fills_state()
    }
    fn mark(&mut self, state: &crate::State, keep: &mut crate::State) {
        self.inner.mark(state, keep);
    }
    fn rewind(&mut self, state: &mut crate::State, keep: &crate::State) {
        self.inner.rewind(state, keep);
    }
    fn hold(&mut self, state: &crate::State, held: &mut crate::State) {
        self.inner.hold(state, held);
    }
    fn merge(&mut self, state: &mut crate::State, held: &crate::State, take: &[bool]) {
        self.inner.merge(state, held, take);
    }
    fn store(&self, x: &mut [f64], v: &mut [f64]) {
        self.inner.store(x, v);
        if self.spoil {
            x[0] = f64::NAN;
        }
    }
    fn momentum_and_energy(&self, setup: &Setup, state: &crate::State) -> (crate::V3, f64, f64) {
        self.inner.momentum_and_energy(setup, state)
    }
    fn surely_intact(&self, setup: &Setup, state: &crate::State) -> bool {
        !self.spoil && self.inner.surely_intact(setup, state)
    }
    fn stability_limit(setup: &Setup, wind: bool) -> Option<f64> {
        M::stability_limit(setup, wind)
    }
    const LIMIT_NAME: &'static str = M::LIMIT_NAME;
    const STRETCHABLE: bool = M::STRETCHABLE;
    const WATCHES_CRUMPLING: bool = M::WATCHES_CRUMPLING;
}

/// A free strand (12 segments, 0.4 m, laid along x, no damping) thrown at (1, 0, 2) m/s under
/// gravity for 6 frames at 24 fps and `substeps`, with `M`'s frame 3 run again at twice that
/// ([`RerunOnce`]). Returns the largest distance of a particle from the parabola
/// x0 + v0 t + g t^2 / 2 shifted, from frame 3 on, by -g h T / 4 (h = T / substeps, T the
/// frame).
///
/// The shift is what a frame at h / 2 between frames at h gives a method exact on a parabola
/// whose velocity is a step over the last substep, v(t - h / 2) (XPBD's s / h, Verlet's
/// (x - x_prev) / h, leapfrog Euler's v): kept across the change, it stands for v(t - h / 4),
/// g h / 4 behind the parabola's, for the frame at h / 2; back at h it stands for v(t - h / 2)
/// again, exact, and the positions keep the frame's lag g h T / 4 (2.1e-4 m at 24 fps and 20
/// substeps, 4.3e-5 m at 100). Exact methods return rounding; a rerun that did not start from
/// the frame's start, or lost the velocity, returns far more.
pub fn rerun_free_fall<N: Node, M: Method>(substeps: usize) -> f64 {
    let tl = timeline(24, 6);
    let g = heft_node_sdk::STANDARD_GRAVITY;
    let changes = [
        choice("pin", "free"),
        int("segments", 12),
        num("length", 0.4),
        vec3("rest_direction", [1.0, 0.0, 0.0]),
        num("damping", 0.0),
        num("relative_damping", 0.0),
        int("substeps", substeps as i64),
    ];
    let setup = Setup::from_params(&params(&N::spec(), &changes)).expect("valid");
    let v0 = [1.0, 0.0, 2.0];
    let vel = points_input(tl, &vec![v0; setup.total_particles()]);
    let run = run_setup::<N, RerunOnce<M, 3>>(&setup, tl, &[("initial_velocities", vel)]).expect("runs");
    let rerun = format!("1 frame went wrong at the {substeps} substeps given");
    let at = format!("frame 3 at {}", 2 * substeps);
    assert!(
        run.warnings.len() == 1 && run.warnings[0].starts_with(&rerun) && run.warnings[0].contains(&at),
        "{:?}",
        run.warnings
    );
    let dt = 1.0 / 24.0;
    let h = dt / substeps as f64;
    let mut worst: f64 = 0.0;
    for f in 0..run.frames() {
        let t = f as f64 * dt;
        let shift = if f >= 3 { g * h * dt / 4.0 } else { 0.0 };
        for i in 0..run.n {
            let p = run.x(f, i);
            let want = [
                run.x(0, i)[0] + v0[0] * t,
                run.x(0, i)[1],
                run.x(0, i)[2] + v0[2] * t - 0.5 * g * t * t + shift,
            ];
            for k in 0..3 {
                worst = worst.max((p[k] - want[k]).abs());
            }
        }
    }
    worst
}

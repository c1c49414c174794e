//! Strand throughput at matched accuracy: `xpbd.strand` and `xpbd.strand_fast`, called through
//! their plugin function table, against the same chains built in rapier3d (a general-purpose
//! rigid-body engine from crates.io) with spherical impulse joints, each engine at the step that
//! makes it accurate; then the rates of every strand node at the default step, and the longest
//! chain the contract allows.
//!
//! Run: `cargo bench -p heft-benches --bench strands` (a few minutes).
//!
//! 1. Accuracy first (printed before the benches): a 1 m hanging chain of 32 particles released
//!    in its first mode, run by each engine at 1, 2, 3, 5, 10, ... 640 substeps of 1/24 s. An
//!    engine matches at a step when the first mode is within 0.2 % of the discrete chain's (the
//!    model all of them simulate: Bernoulli's n-body hanging chain) and the chain stays within
//!    0.5 % of its length at every frame; it matches strictly when the swing also keeps 0.95 of
//!    its amplitude after six periods (numerical damping, which the first two do not see). The
//!    largest such steps are the engine's matched steps.
//! 2. `matched_1024x32`: one second of 1024 strands of 32 particles (`count` = 1024,
//!    `segments` = 31, `length` = 0.4 m, `placement` = line, `pin` = one_end, other parameters at
//!    their defaults) on an anchor swaying 2 cm at 0.5 Hz along X, each engine at its matched
//!    steps. criterion times the nodes' whole second (24 frames); rapier3d takes about 50 ms a
//!    step of those 32768 bodies, so it is timed over 4 steps a call and its second projected
//!    from that (its time per step does not change over a run: no sleeping, no contacts). The
//!    report gives the seconds per simulated second and our speed over rapier3d's, for each
//!    match.
//! 3. `strands_1024x32`: the same strands in every strand node at the default 20 substeps
//!    (h = 1/480 s), particle-substeps per second (an element is one particle advanced by one
//!    substep, pinned root particles included; a call's first output frame is the initial
//!    state, so a call over 25 frames simulates 24). A method whose stability limit is below
//!    h (`strand.euler`'s explicit springs) runs at the fewest substeps its limit allows plus
//!    25 %, over fewer frames (at least one) to keep a call near 480 substeps; the schedule is
//!    printed before each bench.
//! 4. `strand_1x4097`: one chain of 4097 particles in the XPBD nodes at 80 substeps, the step
//!    that keeps it within 1 % of its length (nodes/xpbd/tests/inextensible.rs).
//! 5. `wind_1024x32`: `xpbd.strand_fast` on the strands of 3 with and without a 16^3 wind field;
//!    the report gives the share of the run the wind's sampling takes.
//!
//! Everything runs on one thread: the strand nodes are single-threaded, and rapier3d is built
//! without its `parallel` feature. No `-C target-cpu` is set: the XPBD nodes pick AVX2 at run
//! time where the CPU has it (`HEFT_SIMD=portable` forces the SSE2 baseline); the other nodes
//! and rapier3d run on the SSE2 baseline.
//!
//! Peer model (rapier3d 0.36, f32): each particle but the root is a dynamic body with a ball's
//! mass properties (mass = the node's lumped particle mass, inertia of a 2 mm ball) and no
//! collider (the strand nodes do no particle-particle collision, so a broad phase would be work
//! the nodes do not do); a spherical impulse joint ties each body to its parent's centre by a
//! rigid arm of one rest length: the nodes' chain of point masses on inextensible links. The
//! roots are joints onto one kinematic anchor body moved at every step as the nodes move their
//! anchor. Impulse joints, not multibody joints: they are rapier's usual way to build ropes and
//! chains, and its multibody solver factors a dense augmented mass matrix per multibody per step
//! (`LU` of a `DMatrix`, rapier3d `multibody.rs`), which scales badly with chain length.
//! `dt` = h, one `PhysicsWorld::step` per substep, linear damping 0.5 /s like the nodes'
//! `damping` (rapier has no counterpart of `relative_damping`); `rapier` keeps rapier's default
//! of 4 solver iterations a step (internal substeps of dt / 4), `rapier_1_iteration` makes one,
//! as `xpbd.strand` makes one solve of its constraints a substep. Bodies never sleep (a hanging chain at
//! rest would otherwise be skipped). World construction is not timed.

use std::hint::black_box;
use std::sync::OnceLock;
use std::time::{Duration, SystemTime};

use criterion::{Criterion, SamplingMode, Throughput};
use heft_benches::NodeCall;
use heft_node_sdk::host::Plugin;
use heft_node_sdk::{ParamValue, Params, STANDARD_GRAVITY, Timeline};
use heft_strand_common::{Method, Setup, step_limit};
use heft_xpbd::Xpbd;
use rapier3d::prelude::{
    MassProperties, PhysicsWorld, RigidBodyBuilder, RigidBodyHandle, SphericalJointBuilder, Vector,
};

/// Frames per second of every run here.
const FPS: u32 = 24;
/// Substeps per frame of the benches (the contract's default): h = 1 / 480 s.
const SUBSTEPS: usize = 20;
/// Spacing of the `line` placement (the contract's default), m.
const SPACING: f64 = 0.02;
/// Radius of the rapier balls (sets their rotational inertia only; no colliders), m.
const BALL_RADIUS: f64 = 0.002;

// ---------------------------------------------------------------------------------------------
// Calling a strand node through its plugin function table.

/// The contract's node types, with the plugin each lives in.
#[derive(Clone, Copy)]
enum Kind {
    Xpbd,
    XpbdF32,
    Euler,
    Verlet,
}

impl Kind {
    fn name(self) -> &'static str {
        match self {
            Kind::Xpbd => "xpbd",
            Kind::XpbdF32 => "xpbd_f32",
            Kind::Euler => "euler",
            Kind::Verlet => "verlet",
        }
    }

    /// The plugin and the node's index in it. `xpbd` is linked statically (its function table);
    /// `strand` is built as a library and loaded like the host does, because two plugin crates
    /// cannot be linked into one program: each exports the unmangled entry symbol
    /// `heft_plugin_entry_v1` (`export_plugin!`), and the linker rejects the duplicate.
    fn plugin(self) -> (Plugin, u32) {
        static STRAND: OnceLock<Plugin> = OnceLock::new();
        let (plugin, node) = match self {
            Kind::Xpbd | Kind::XpbdF32 => (
                Plugin::from_static(heft_xpbd::plugin_table(), "xpbd (linked)").expect("the xpbd table loads"),
                if matches!(self, Kind::Xpbd) {
                    "strand"
                } else {
                    "strand_fast"
                },
            ),
            Kind::Euler | Kind::Verlet => {
                let strand = STRAND.get_or_init(|| {
                    let path = heft_benches::build_plugin("heft-strand", "heft_strand");
                    Plugin::load(&path).expect("the strand plugin loads")
                });
                (strand.clone(), self.name())
            }
        };
        let index = plugin
            .descriptor()
            .nodes
            .iter()
            .position(|n| n.name == node)
            .expect("node type present") as u32;
        (plugin, index)
    }

    /// The method's largest stable substep for these parameters, s; `None` when it has none.
    /// `xpbd.strand` states its own (none); `strand.euler` keeps the strand model's explicit
    /// spring limit (`Setup::explicit_step_limit`, the `Method` default); `strand.verlet`'s
    /// segments are rigid constraints, so only its explicit bending term and damping limit the
    /// step (as nodes/strand/src/verlet.rs states it in `VerletMethod::stability_limit`; the
    /// plugin is loaded dynamically here, so the bench asks the shared model the same question).
    /// Every configuration is run once before it is timed, so a wrong limit fails loudly.
    fn step_limit(self, params: &Params) -> Option<f64> {
        let setup = Setup::from_params(params).expect("valid parameters");
        match self {
            Kind::Xpbd => Xpbd::<f64>::stability_limit(&setup, false),
            Kind::XpbdF32 => Xpbd::<f32>::stability_limit(&setup, false),
            Kind::Euler => setup.explicit_step_limit(false),
            Kind::Verlet => step_limit(setup.omega_max_of(false), setup.damping_rate(false)),
        }
    }
}

/// One prepared evaluation of a strand node type (see [`heft_benches::NodeCall`]).
fn node_call(
    kind: Kind,
    overrides: &[(&str, ParamValue)],
    timeline: Timeline,
    connected: Vec<(&str, Vec<f64>)>,
) -> NodeCall {
    let (plugin, index) = kind.plugin();
    NodeCall::new(plugin, index, overrides, timeline, connected)
}

/// A timeline of `frames` frames from frame 0 at `fps`.
fn timeline(frames: usize, fps: u32) -> Timeline {
    Timeline {
        start_frame: 0,
        frame_count: frames as u64,
        rate_num: fps,
        rate_den: 1,
    }
}

/// The anchor's translation at time t: a gentle sway of 2 cm at 0.5 Hz along X, 1.5 m up.
fn anchor_at(t: f64) -> [f64; 3] {
    [0.02 * (std::f64::consts::TAU * 0.5 * t).sin(), 0.0, 1.5]
}

/// The anchor as a transform series (identity rotation).
fn anchor_series(tl: Timeline) -> Vec<f64> {
    (0..tl.frames())
        .flat_map(|i| {
            let p = anchor_at(tl.time(i));
            [p[0], p[1], p[2], 0.0, 0.0, 0.0, 1.0]
        })
        .collect()
}

// ---------------------------------------------------------------------------------------------
// The same chains in rapier3d.

/// Chains of balls on spherical impulse joints, rooted on one kinematic anchor body.
struct RapierChains {
    world: PhysicsWorld,
    anchor: RigidBodyHandle,
    /// Every ball, chain-major (the root particle of each chain is the anchor's joint point).
    balls: Vec<RigidBodyHandle>,
    /// Positions written once per frame, like the node's `positions` output (root omitted).
    out: Vec<f64>,
}

/// Lumped particle masses of a strand (half a segment's mass at each end), root first.
fn lumped_masses(mass_per_length: f64, length: f64, particles: usize) -> Vec<f64> {
    let seg = mass_per_length * length / (particles - 1) as f64;
    (0..particles)
        .map(|i| if i == 0 || i + 1 == particles { 0.5 * seg } else { seg })
        .collect()
}

fn v3(p: [f64; 3]) -> Vector {
    Vector::new(p[0] as f32, p[1] as f32, p[2] as f32)
}

impl RapierChains {
    /// `roots[c]` is chain c's root offset on the anchor; `shapes[c][i]` particle i's position
    /// relative to the root (i = 0 is the root itself, at 0). Masses as the strand nodes lump them.
    fn new(
        anchor_at: [f64; 3],
        kinematic: bool,
        roots: &[[f64; 3]],
        shapes: &[Vec<[f64; 3]>],
        masses: &[f64],
        h: f64,
        damping: f64,
    ) -> Self {
        let mut world = PhysicsWorld {
            gravity: Vector::new(0.0, 0.0, -(STANDARD_GRAVITY as f32)),
            ..PhysicsWorld::default()
        };
        world.integration_parameters.dt = h as f32;
        let anchor_body = if kinematic {
            RigidBodyBuilder::kinematic_position_based()
        } else {
            RigidBodyBuilder::fixed()
        };
        let anchor = world.insert_body(anchor_body.translation(v3(anchor_at)));
        let particles = masses.len();
        let mut balls = Vec::with_capacity(roots.len() * (particles - 1));
        for (root, shape) in roots.iter().zip(shapes) {
            let mut parent = anchor;
            let mut parent_local = v3(*root);
            for i in 1..particles {
                let m = masses[i];
                let inertia = 0.4 * m * BALL_RADIUS * BALL_RADIUS;
                let p = [0, 1, 2].map(|k| anchor_at[k] + root[k] + shape[i][k]);
                let body = RigidBodyBuilder::dynamic()
                    .translation(v3(p))
                    .additional_mass_properties(MassProperties::new(
                        Vector::ZERO,
                        m as f32,
                        Vector::splat(inertia as f32),
                    ))
                    .linear_damping(damping as f32)
                    .can_sleep(false);
                let handle = world.insert_body(body);
                // The arm from this ball to its parent's centre (or the root point).
                let arm = [0, 1, 2].map(|k| shape[i - 1][k] - shape[i][k]);
                let joint = SphericalJointBuilder::new()
                    .local_anchor1(parent_local)
                    .local_anchor2(v3(arm));
                world.insert_impulse_joint(parent, handle, joint);
                balls.push(handle);
                parent = handle;
                parent_local = Vector::ZERO;
            }
        }
        let out = vec![0.0; balls.len() * 3];
        RapierChains {
            world,
            anchor,
            balls,
            out,
        }
    }

    /// Straight chains hanging from a `line` of roots, like the node's rest shape.
    fn hanging(count: usize, particles: usize, length: f64, mass_per_length: f64, damping: f64, h: f64) -> Self {
        let l0 = length / (particles - 1) as f64;
        let roots: Vec<[f64; 3]> = (0..count)
            .map(|s| [(s as f64 - 0.5 * (count - 1) as f64) * SPACING, 0.0, 0.0])
            .collect();
        let shape: Vec<[f64; 3]> = (0..particles).map(|i| [0.0, 0.0, -(i as f64) * l0]).collect();
        let shapes = vec![shape; count];
        let masses = lumped_masses(mass_per_length, length, particles);
        RapierChains::new(anchor_at(0.0), true, &roots, &shapes, &masses, h, damping)
    }

    /// One frame of `substeps` steps, the anchor moved linearly from time t0 to t1 like the
    /// nodes interpolate it; then the positions are copied out.
    fn frame(&mut self, t0: f64, t1: f64, substeps: usize) {
        let (a0, a1) = (anchor_at(t0), anchor_at(t1));
        for k in 1..=substeps {
            let u = k as f64 / substeps as f64;
            let a = [0, 1, 2].map(|c| a0[c] + u * (a1[c] - a0[c]));
            self.world.bodies[self.anchor].set_next_kinematic_translation(v3(a));
            self.world.step();
        }
        for (b, out) in self.balls.iter().zip(self.out.chunks_exact_mut(3)) {
            let p = self.world.bodies[*b].translation();
            out.copy_from_slice(&[f64::from(p.x), f64::from(p.y), f64::from(p.z)]);
        }
    }
}

// ---------------------------------------------------------------------------------------------
// The hanging-chain modes.

/// First zero of the Bessel function J0 (Abramowitz & Stegun 1964, Handbook of Mathematical
/// Functions, Table 9.5).
const J0_FIRST_ZERO: f64 = 2.404_825_557_695_773;

/// The first mode of a uniform inextensible chain of length `l` hanging from a fixed point:
/// omega_1 = (j_{0,1} / 2) sqrt(g / l) (D. Bernoulli 1738, "Theoremata de oscillationibus
/// corporum filo flexili connexorum et catenae verticaliter suspensae", Comment. Acad. Sci.
/// Imp. Petrop. 6 (1732/33); the mode shape is J0(2 omega sqrt(s / g)), s measured from the
/// free end).
fn bernoulli_omega1(l: f64, g: f64) -> f64 {
    0.5 * J0_FIRST_ZERO * (g / l).sqrt()
}

/// The first mode of the discrete chain the nodes and the rapier model simulate: lumped masses
/// `m[1..]` (m[0] is the fixed root) on massless inextensible links of length `l0`, small
/// horizontal swings. Bernoulli's n-body hanging chain (same source): m_i u_i'' =
/// T_i (u_{i+1} - u_i) / l0 - T_{i-1} (u_i - u_{i-1}) / l0 with T_j = g sum_{k > j} m_k the
/// tension of link j (between particles j and j+1). Returns (omega_1, the mode's u, root
/// first, u_0 = 0, scaled to a unit tip). Inverse iteration K u = omega^2 M u, each step a
/// tridiagonal solve (Golub & Van Loan, Matrix Computations, 4th ed., secs. 4.3.6, 8.2.2).
fn discrete_chain_mode(m: &[f64], l0: f64, g: f64) -> (f64, Vec<f64>) {
    let n = m.len() - 1; // unknowns u_1..u_n
    // Tension of link j (particles j, j+1), j = 0..n-1; link n does not exist.
    let tension: Vec<f64> = (0..n).map(|j| g * m[j + 1..].iter().sum::<f64>()).collect();
    let t = |j: usize| if j < n { tension[j] } else { 0.0 };
    // Row r (particle i = r + 1): diagonal (T_{i-1} + T_i) / l0, off-diagonal -T_i / l0.
    let diag: Vec<f64> = (1..=n).map(|i| (t(i - 1) + t(i)) / l0).collect();
    let off: Vec<f64> = (1..n).map(|i| -t(i) / l0).collect();
    let mass = &m[1..];
    let mut u = vec![1.0; n];
    let mut omega2 = 0.0;
    for _ in 0..200 {
        let rhs: Vec<f64> = u.iter().zip(mass).map(|(a, b)| a * b).collect();
        let next = solve_tridiagonal(&diag, &off, &rhs);
        let tip = next[n - 1];
        u = next.iter().map(|x| x / tip).collect();
        // Rayleigh quotient u'K u / u'M u.
        let ku: f64 = (0..n)
            .map(|r| {
                let left = if r > 0 { off[r - 1] * u[r - 1] } else { 0.0 };
                let right = if r + 1 < n { off[r] * u[r + 1] } else { 0.0 };
                u[r] * (diag[r] * u[r] + left + right)
            })
            .sum();
        let mu: f64 = u.iter().zip(mass).map(|(a, b)| a * a * b).sum();
        omega2 = ku / mu;
    }
    let mut shape = vec![0.0];
    shape.extend(u);
    (omega2.sqrt(), shape)
}

/// Solves the symmetric tridiagonal system (diagonal `d`, off-diagonal `e`) by the Thomas
/// algorithm (no pivoting; the chain's K is diagonally dominant).
fn solve_tridiagonal(d: &[f64], e: &[f64], rhs: &[f64]) -> Vec<f64> {
    let n = d.len();
    let mut c = vec![0.0; n];
    let mut y = vec![0.0; n];
    for r in 0..n {
        let sub = if r > 0 { e[r - 1] } else { 0.0 };
        let prev_c = if r > 0 { c[r - 1] } else { 0.0 };
        let prev_y = if r > 0 { y[r - 1] } else { 0.0 };
        let denom = d[r] - sub * prev_c;
        c[r] = if r + 1 < n { e[r] / denom } else { 0.0 };
        y[r] = (rhs[r] - sub * prev_y) / denom;
    }
    let mut x = vec![0.0; n];
    for r in (0..n).rev() {
        x[r] = y[r] - if r + 1 < n { c[r] * x[r + 1] } else { 0.0 };
    }
    x
}

/// The swing frequency from a sampled signal: zero crossings found by linear interpolation,
/// then a least-squares line through (crossing number, time) gives the half period.
fn frequency_from_crossings(samples: &[f64], dt: f64) -> Option<f64> {
    let crossings: Vec<f64> = samples
        .windows(2)
        .enumerate()
        .filter(|(_, w)| (w[0] < 0.0) != (w[1] < 0.0))
        .map(|(i, w)| (i as f64 + w[0] / (w[0] - w[1])) * dt)
        .collect();
    if crossings.len() < 4 {
        return None;
    }
    let k = crossings.len() as f64;
    let mean_i = 0.5 * (k - 1.0);
    let mean_t = crossings.iter().sum::<f64>() / k;
    let (mut sxy, mut sxx) = (0.0, 0.0);
    for (i, t) in crossings.iter().enumerate() {
        let di = i as f64 - mean_i;
        sxy += di * (t - mean_t);
        sxx += di * di;
    }
    let half_period = sxy / sxx;
    Some(std::f64::consts::PI / half_period)
}

/// What one mode run gives: frequency, tip amplitude at the end over the start, and the chain's
/// largest stretch over the run.
struct ModeRun {
    omega: f64,
    amplitude_ratio: f64,
    /// The largest |chain length / rest length - 1| over the run.
    stretch: f64,
}

fn mode_stats(tip_x: &[f64], lengths: &[f64], dt: f64, period: f64, rest_length: f64) -> ModeRun {
    let omega = frequency_from_crossings(tip_x, dt).expect("the chain swings through zero");
    let last_period = (period / dt).ceil() as usize;
    let start = tip_x.iter().take(last_period).fold(0.0f64, |a, x| a.max(x.abs()));
    let end = tip_x.iter().rev().take(last_period).fold(0.0f64, |a, x| a.max(x.abs()));
    ModeRun {
        omega,
        amplitude_ratio: end / start,
        stretch: lengths.iter().fold(0.0f64, |a, l| a.max((l / rest_length - 1.0).abs())),
    }
}

fn chain_length(points: &[f64]) -> f64 {
    points
        .chunks_exact(3)
        .zip(points.chunks_exact(3).skip(1))
        .map(|(a, b)| ((b[0] - a[0]).powi(2) + (b[1] - a[1]).powi(2) + (b[2] - a[2]).powi(2)).sqrt())
        .sum()
}

/// The hanging chain of the mode measurement: a 1 m chain of 32 particles (31 links) with the
/// contract's default mass per length, released from rest in the discrete chain's first mode
/// shape with a 1 cm tip displacement, sampled at 24 frames/s for six periods.
struct ModeSetup {
    length: f64,
    particles: usize,
    mass_per_length: f64,
    masses: Vec<f64>,
    /// Particle positions relative to the root (at the origin), m.
    shape: Vec<[f64; 3]>,
    fps: u32,
    frames: usize,
    period: f64,
}

impl ModeSetup {
    /// The chain and the discrete chain's first mode (omega_1 and shape) it is released in.
    fn new() -> (ModeSetup, f64) {
        let (length, particles, mass_per_length) = (1.0, 32, 0.05);
        let l0 = length / (particles - 1) as f64;
        let masses = lumped_masses(mass_per_length, length, particles);
        let (omega_d, mode) = discrete_chain_mode(&masses, l0, STANDARD_GRAVITY);
        let amp = 0.01;
        // x = 1 cm times the mode; z laid down link by link so that every link is exactly l0.
        let mut shape = vec![[0.0; 3]; particles];
        for i in 1..particles {
            let (x0, x1) = (amp * mode[i - 1], amp * mode[i]);
            shape[i] = [x1, 0.0, shape[i - 1][2] - (l0 * l0 - (x1 - x0).powi(2)).sqrt()];
        }
        let fps = FPS;
        let period = std::f64::consts::TAU / omega_d;
        let setup = ModeSetup {
            length,
            particles,
            mass_per_length,
            masses,
            shape,
            fps,
            frames: (6.0 * period * f64::from(fps)).ceil() as usize + 1,
            period,
        };
        (setup, omega_d)
    }

    fn dt(&self) -> f64 {
        1.0 / f64::from(self.fps)
    }

    /// `xpbd.strand` (or `xpbd.strand_fast`) with `substeps` a frame: the anchor still at the
    /// origin, the contract's default stretch stiffness (E A = 200 N), no bending, no damping.
    fn xpbd(&self, kind: Kind, substeps: usize) -> ModeRun {
        let tl = timeline(self.frames, self.fps);
        let still: Vec<f64> = (0..self.frames)
            .flat_map(|_| [0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 1.0])
            .collect();
        let initial: Vec<f64> = (0..self.frames)
            .flat_map(|_| self.shape.iter().flatten().copied())
            .collect();
        let mut call = node_call(
            kind,
            &[
                ("length", ParamValue::Number(self.length)),
                ("segments", ParamValue::Integer(self.particles as i64 - 1)),
                ("mass_per_length", ParamValue::Number(self.mass_per_length)),
                ("bending_stiffness", ParamValue::Number(0.0)),
                ("damping", ParamValue::Number(0.0)),
                ("relative_damping", ParamValue::Number(0.0)),
                ("substeps", ParamValue::Integer(substeps as i64)),
            ],
            tl,
            vec![("anchor", still), ("initial_positions", initial)],
        );
        call.run().expect("xpbd.strand runs the hanging chain");
        let (pos, width) = call.output("positions");
        let tip: Vec<f64> = pos.chunks_exact(width).map(|f| f[width - 3]).collect();
        let lengths: Vec<f64> = pos.chunks_exact(width).map(chain_length).collect();
        mode_stats(&tip, &lengths, self.dt(), self.period, self.length)
    }

    /// rapier3d with `substeps` steps a frame and `iterations` solver iterations a step (its
    /// internal substeps; 4 by default): a fixed root at the origin, no damping.
    fn rapier(&self, substeps: usize, iterations: usize) -> ModeRun {
        let h = self.dt() / substeps as f64;
        let mut chain = RapierChains::new(
            [0.0; 3],
            false,
            &[[0.0; 3]],
            std::slice::from_ref(&self.shape),
            &self.masses,
            h,
            0.0,
        );
        chain.world.integration_parameters.num_solver_iterations = iterations;
        let mut tip = Vec::with_capacity(self.frames);
        let mut lengths = Vec::with_capacity(self.frames);
        for i in 0..self.frames {
            if i > 0 {
                for _ in 0..substeps {
                    chain.world.step();
                }
            }
            let mut pts = vec![0.0; 3];
            for b in &chain.balls {
                let p = chain.world.bodies[*b].translation();
                pts.extend([f64::from(p.x), f64::from(p.y), f64::from(p.z)]);
            }
            tip.push(pts[pts.len() - 3]);
            lengths.push(chain_length(&pts));
        }
        mode_stats(&tip, &lengths, self.dt(), self.period, self.length)
    }
}

/// The accuracy every engine is brought to before it is timed: the hanging chain's first mode
/// within 0.2 % of the discrete chain's (the model every engine here simulates; the 31-link
/// chain itself is within 0.2 % of Bernoulli's continuous one) and the chain's length within
/// 0.5 % of its rest length at every frame.
const MODE_ERROR: f64 = 0.002;
/// See [`MODE_ERROR`].
const STRETCH: f64 = 0.005;
/// The stricter match also asks that the swing keep its amplitude: the tip's after six periods
/// at least this share of its first (a damping the two figures above do not see).
const KEPT_AMPLITUDE: f64 = 0.95;

/// The two accuracies engines are matched at.
#[derive(Clone, Copy, PartialEq)]
enum Match {
    /// First mode and length ([`MODE_ERROR`], [`STRETCH`]): the criteria.
    Mode,
    /// Those and the swing's amplitude ([`KEPT_AMPLITUDE`]).
    Undamped,
}

impl Match {
    fn name(self) -> &'static str {
        match self {
            Match::Mode => "first mode and length",
            Match::Undamped => "first mode, length and amplitude",
        }
    }

    fn holds(self, err: f64, r: &ModeRun) -> bool {
        let mode = err.abs() < MODE_ERROR && r.stretch < STRETCH;
        match self {
            Match::Mode => mode,
            Match::Undamped => mode && r.amplitude_ratio >= KEPT_AMPLITUDE,
        }
    }
}

/// Both matches.
const MATCHES: [Match; 2] = [Match::Mode, Match::Undamped];

/// Substeps a 24 frames/s frame is divided into, tried in order until an engine is accurate.
const LADDER: [usize; 11] = [1, 2, 3, 5, 10, 20, 40, 80, 160, 320, 640];

/// An engine compared at matched accuracy.
#[derive(Clone, Copy)]
enum Engine {
    Node(Kind),
    /// rapier3d with this many solver iterations a step.
    Rapier(usize),
}

impl Engine {
    fn name(self) -> String {
        match self {
            Engine::Node(k) => k.name().to_owned(),
            Engine::Rapier(i) => rapier_name(i),
        }
    }
}

/// The engines compared at matched accuracy.
const MATCHED: [Engine; 4] = [
    Engine::Node(Kind::Xpbd),
    Engine::Node(Kind::XpbdF32),
    Engine::Rapier(4),
    Engine::Rapier(1),
];

/// Runs the hanging chain's first mode in every engine at the steps of [`LADDER`], prints each
/// run's errors, and returns for each engine of [`MATCHED`] and each of [`MATCHES`] the largest
/// step (as substeps a 24 frames/s frame) at which it holds; `None` if no step of the ladder
/// does.
fn matched_steps() -> Vec<[Option<usize>; 2]> {
    let (setup, omega_d) = ModeSetup::new();
    let omega_b = bernoulli_omega1(setup.length, STANDARD_GRAVITY);
    eprintln!(
        "hanging chain, first mode: L = {} m, {} particles, {} kg/m, released in the first mode (1 cm at the tip), \
         6 periods, tip x sampled at {} frames/s",
        setup.length, setup.particles, setup.mass_per_length, setup.fps
    );
    eprintln!(
        "  Bernoulli, continuous chain (D. Bernoulli 1738; j0,1 = 2.404826 from Abramowitz & Stegun 1964, \
         Table 9.5): omega_1 = {omega_b:.5} rad/s"
    );
    eprintln!(
        "  discrete 31-link chain with the nodes' lumped masses (Bernoulli's n-body chain, linearised): \
         omega_1 = {omega_d:.5} rad/s ({:+.3} % from Bernoulli)",
        100.0 * (omega_d - omega_b) / omega_b
    );
    assert!(
        ((omega_d - omega_b) / omega_b).abs() < 0.01,
        "the discrete chain's first mode is off by more than 1 %"
    );
    eprintln!(
        "  matched accuracy: first mode within {} % of the discrete chain's and length within {} % at every frame",
        100.0 * MODE_ERROR,
        100.0 * STRETCH
    );
    MATCHED
        .iter()
        .map(|&e| {
            let mut found = [None, None];
            for steps in LADDER {
                let r = match e {
                    Engine::Node(k) => setup.xpbd(k, steps),
                    Engine::Rapier(i) => setup.rapier(steps, i),
                };
                let err = (r.omega - omega_d) / omega_d;
                let mut marks = String::new();
                for (slot, m) in found.iter_mut().zip(MATCHES) {
                    if slot.is_none() && err.is_finite() && m.holds(err, &r) {
                        *slot = Some(steps);
                        marks += &format!("  <- matched: {}", m.name());
                    }
                }
                eprintln!(
                    "  {:<22} h = 1/{:<5} s ({steps} substeps at 24 fps): first mode {:+.3} % (against Bernoulli \
                     {:+.3} %), longest {:+.3} %, tip amplitude after 6 periods x {:.3}{marks}",
                    e.name(),
                    FPS as usize * steps,
                    100.0 * err,
                    100.0 * (r.omega - omega_b) / omega_b,
                    100.0 * r.stretch,
                    r.amplitude_ratio,
                );
                if found.iter().all(Option::is_some) {
                    break;
                }
            }
            found
        })
        .collect()
}

/// The strands timed at matched accuracy: 1024 strands of 32 particles, 0.4 m, on the swaying
/// anchor, one second (24 frames at 24 frames/s).
const MATCHED_CASE: Case = Case {
    group: "matched_1024x32",
    strands: 1024,
    particles: 32,
    length: 0.4,
    kinds: &XPBD,
    substeps: SUBSTEPS,
};

/// rapier3d steps timed a call at matched accuracy (its time per step does not change over a
/// run: no sleeping, no contacts), from which one second is projected.
const RAPIER_STEPS_TIMED: usize = 4;

/// The bench of `engine` at `substeps` a frame.
fn matched_name(engine: Engine, substeps: usize) -> String {
    format!("{}_{substeps}_substeps", engine.name())
}

/// Times one second of [`MATCHED_CASE`] in every matched engine at each of its matched steps:
/// criterion measures a whole second for the nodes, and [`RAPIER_STEPS_TIMED`] steps for
/// rapier3d.
fn bench_matched(c: &mut Criterion, steps: &[[Option<usize>; 2]]) {
    let case = MATCHED_CASE;
    let mut g = c.benchmark_group(case.group);
    g.sampling_mode(SamplingMode::Flat)
        .sample_size(10)
        .warm_up_time(Duration::from_secs(1))
        .measurement_time(Duration::from_secs(4));
    for (&e, found) in MATCHED.iter().zip(steps) {
        let mut substeps: Vec<usize> = found.iter().flatten().copied().collect();
        substeps.dedup();
        if substeps.is_empty() {
            eprintln!(
                "{}/{}: no step of the ladder is accurate enough; not timed",
                case.group,
                e.name()
            );
        }
        for substeps in substeps {
            let h = 1.0 / f64::from(FPS) / substeps as f64;
            let name = matched_name(e, substeps);
            match e {
                Engine::Node(kind) => {
                    let tl = timeline(FRAMES + 1, FPS);
                    let mut call = node_call(
                        kind,
                        &overrides(case, substeps),
                        tl,
                        vec![("anchor", anchor_series(tl))],
                    );
                    call.run().unwrap_or_else(|err| panic!("{} fails: {err}", kind.name()));
                    g.throughput(Throughput::Elements(
                        (case.strands * case.particles * FRAMES * substeps) as u64,
                    ));
                    g.bench_function(name, |b| b.iter(|| black_box(call.run())));
                }
                Engine::Rapier(iterations) => {
                    let mut chains = RapierChains::hanging(case.strands, case.particles, case.length, 0.05, 0.5, h);
                    chains.world.integration_parameters.num_solver_iterations = iterations;
                    let mut t = 0.0;
                    g.throughput(Throughput::Elements(
                        (case.strands * case.particles * RAPIER_STEPS_TIMED) as u64,
                    ));
                    g.bench_function(name, |b| {
                        b.iter(|| {
                            chains.frame(t, t + h * RAPIER_STEPS_TIMED as f64, RAPIER_STEPS_TIMED);
                            t += h * RAPIER_STEPS_TIMED as f64;
                            black_box(&chains.out);
                        })
                    });
                }
            }
        }
    }
    g.finish();
}

/// Seconds to simulate one second of [`MATCHED_CASE`] in `engine` at `substeps` a frame, from
/// this run's criterion means (`None` where it did not run).
fn matched_seconds(engine: Engine, substeps: usize, since: SystemTime) -> Option<f64> {
    let ns = heft_benches::mean_ns(MATCHED_CASE.group, &matched_name(engine, substeps), since)?;
    Some(match engine {
        Engine::Node(_) => ns * 1e-9,
        Engine::Rapier(_) => ns * 1e-9 * (FPS as usize * substeps) as f64 / RAPIER_STEPS_TIMED as f64,
    })
}

// ---------------------------------------------------------------------------------------------
// The benches.

/// A strand case: strands of `particles` particles, `length` m long, run by `kinds` at
/// `substeps` a frame for one second.
#[derive(Clone, Copy)]
struct Case {
    group: &'static str,
    strands: usize,
    particles: usize,
    length: f64,
    kinds: &'static [Kind],
    substeps: usize,
}

/// Frames the nodes run: one second.
const FRAMES: usize = 24;

/// The node's parameters for a case, the substeps given.
fn overrides(case: Case, substeps: usize) -> Vec<(&'static str, ParamValue)> {
    vec![
        ("count", ParamValue::Integer(case.strands as i64)),
        ("placement", ParamValue::Choice("line".to_owned())),
        ("segments", ParamValue::Integer(case.particles as i64 - 1)),
        ("length", ParamValue::Number(case.length)),
        ("substeps", ParamValue::Integer(substeps as i64)),
    ]
}

/// Substeps and frames for `kind`: the bench's 20 substeps over 24 frames, or for a method whose
/// stability limit is below the bench's step the fewest substeps the limit allows plus 25 %,
/// over proportionally fewer frames (at least one) to keep each call near 480 substeps.
fn schedule(kind: Kind, case: Case) -> (usize, usize) {
    let (plugin, index) = kind.plugin();
    let spec = &plugin.descriptor().nodes[index as usize];
    let mut params = Params::defaults(spec).expect("defaults");
    for (n, v) in overrides(case, case.substeps) {
        params = params.with(n, v).expect("known parameter");
    }
    let frame = 1.0 / f64::from(FPS);
    let substeps = match kind.step_limit(&params) {
        Some(limit) if frame / case.substeps as f64 > limit / 1.25 => (1.25 * frame / limit).ceil() as usize,
        _ => case.substeps,
    };
    (substeps, (FRAMES * case.substeps / substeps).max(1))
}

/// The node types benched at the default step, in order.
const KINDS: [Kind; 4] = [Kind::Xpbd, Kind::XpbdF32, Kind::Verlet, Kind::Euler];
/// The XPBD nodes.
const XPBD: [Kind; 2] = [Kind::Xpbd, Kind::XpbdF32];

/// The benches of one case: (name, particle-substeps per iteration).
fn bench_names(case: Case) -> Vec<(String, u64)> {
    case.kinds
        .iter()
        .map(|&k| {
            let (substeps, frames) = schedule(k, case);
            (
                k.name().to_owned(),
                (case.strands * case.particles * frames * substeps) as u64,
            )
        })
        .collect()
}

fn rapier_name(iterations: usize) -> String {
    if iterations == 4 {
        "rapier".to_owned()
    } else {
        format!("rapier_{iterations}_iteration")
    }
}

fn bench_case(c: &mut Criterion, case: Case) {
    let mut g = c.benchmark_group(case.group);
    g.sampling_mode(SamplingMode::Flat)
        .sample_size(10)
        .warm_up_time(Duration::from_secs(1))
        .measurement_time(Duration::from_secs(4));
    let names = bench_names(case);
    for (&kind, (name, elements)) in case.kinds.iter().zip(&names) {
        let (substeps, frames) = schedule(kind, case);
        eprintln!(
            "{}/{name}: {} strands x {} particles, {frames} frames x {substeps} substeps (h = {:.3e} s)",
            case.group,
            case.strands,
            case.particles,
            1.0 / f64::from(FPS) / substeps as f64
        );
        let tl = timeline(frames + 1, FPS);
        let mut call = node_call(
            kind,
            &overrides(case, substeps),
            tl,
            vec![("anchor", anchor_series(tl))],
        );
        call.run().unwrap_or_else(|e| panic!("{} fails: {e}", kind.name()));
        g.throughput(Throughput::Elements(*elements));
        g.bench_function(name.as_str(), |b| b.iter(|| black_box(call.run())));
    }
    g.finish();
}

/// A wind field for every frame of `tl`: a 16^3 grid 20 cm apart centred on the strands (3 m
/// across), a breeze of 0.4 m/s with a gust that varies in space and time.
fn wind_series(tl: Timeline) -> Vec<f64> {
    let per_frame = 3 * heft_node_sdk::field::points_for(16, 16, 16);
    let mut out = vec![0.0; per_frame * tl.frames()];
    for (i, frame) in out.chunks_exact_mut(per_frame).enumerate() {
        let t = tl.time(i);
        heft_node_sdk::field::write_frame(frame, [16, 16, 16], 0.2, [-1.5, -1.5, 0.0], |p| {
            [
                0.4 + 0.3 * (3.0 * p[2] + t).sin(),
                0.2 * (2.0 * p[0] - t).cos(),
                0.1 * (p[1] * 4.0).sin(),
            ]
        });
    }
    out
}

/// `wind_1024x32`: the strands of `strands_1024x32` in `xpbd.strand_fast` at 20 substeps
/// with and without a wind field (`drag` 2 /s): the share of a run the wind's sampling takes
/// (every particle, every substep, at the frame's two fields).
fn bench_wind(c: &mut Criterion) {
    let case = Case {
        group: "wind_1024x32",
        strands: 1024,
        particles: 32,
        length: 0.4,
        kinds: &[Kind::XpbdF32],
        substeps: SUBSTEPS,
    };
    let mut g = c.benchmark_group(case.group);
    g.sampling_mode(SamplingMode::Flat)
        .sample_size(10)
        .warm_up_time(Duration::from_secs(1))
        .measurement_time(Duration::from_secs(4));
    let tl = timeline(FRAMES + 1, FPS);
    let mut params = overrides(case, SUBSTEPS);
    params.push(("drag", ParamValue::Number(2.0)));
    for (name, wind) in [("still", false), ("in_wind", true)] {
        let mut inputs = vec![("anchor", anchor_series(tl))];
        if wind {
            inputs.push(("wind", wind_series(tl)));
        }
        let mut call = node_call(Kind::XpbdF32, &params, tl, inputs);
        call.run().expect("xpbd.strand_fast runs in the wind");
        g.throughput(Throughput::Elements(
            (case.strands * case.particles * FRAMES * SUBSTEPS) as u64,
        ));
        g.bench_function(name, |b| b.iter(|| black_box(call.run())));
    }
    g.finish();
}

/// Prints the matched-accuracy seconds and ratios, then the rates of this run, from this run's
/// criterion means.
fn report(steps: &[[Option<usize>; 2]], cases: &[Case], since: SystemTime) {
    for (k, m) in MATCHES.into_iter().enumerate() {
        eprintln!(
            "\none second of {} strands x {} particles matched on {} (one thread, from criterion's means; \
             rapier3d projected from {RAPIER_STEPS_TIMED} steps):",
            MATCHED_CASE.strands,
            MATCHED_CASE.particles,
            m.name()
        );
        let seconds: Vec<Option<f64>> = MATCHED
            .iter()
            .zip(steps)
            .map(|(&e, found)| matched_seconds(e, found[k]?, since))
            .collect();
        let peer = seconds[2];
        for ((e, found), t) in MATCHED.iter().zip(steps).zip(&seconds) {
            let (Some(s), Some(t)) = (found[k], t) else {
                eprintln!("  {}: not run", e.name());
                continue;
            };
            let mut line = format!(
                "  {:<22} h = 1/{:<5} s ({s} substeps at 24 fps): {t:.3} s",
                e.name(),
                FPS as usize * s
            );
            if let (Engine::Node(_), Some(p)) = (e, peer) {
                line += &format!(", {:.0} x as fast as rapier3d (4 iterations)", p / t);
            }
            eprintln!("{line}");
        }
    }
    eprintln!("\nstrand rates of this run (particle-substeps per second on one thread, from criterion's means):");
    for &case in cases {
        for (n, el) in bench_names(case) {
            match heft_benches::mean_ns(case.group, &n, since) {
                Some(ns) => eprintln!("  {}/{n}: {:.3e} /s", case.group, el as f64 / (ns * 1e-9)),
                None => eprintln!("  {}/{n}: not run in this run", case.group),
            }
        }
    }
}

fn main() {
    let started = SystemTime::now();
    let steps = matched_steps();
    let cases = [
        Case {
            group: "strands_1024x32",
            strands: 1024,
            particles: 32,
            length: 0.4,
            kinds: &KINDS,
            substeps: SUBSTEPS,
        },
        // The longest chain the contract allows, at the substeps that keep it within 1 % of its
        // length (nodes/xpbd/tests/inextensible.rs).
        Case {
            group: "strand_1x4097",
            strands: 1,
            particles: 4097,
            length: 0.4,
            kinds: &XPBD,
            substeps: 80,
        },
    ];
    let mut c = Criterion::default().configure_from_args();
    bench_matched(&mut c, &steps);
    for &case in &cases {
        bench_case(&mut c, case);
    }
    bench_wind(&mut c);
    c.final_summary();
    report(&steps, &cases, started);
    let (still, wind) = (
        heft_benches::mean_ns("wind_1024x32", "still", started),
        heft_benches::mean_ns("wind_1024x32", "in_wind", started),
    );
    if let (Some(a), Some(b)) = (still, wind) {
        eprintln!(
            "\nwind: xpbd_f32 takes {:.2} times as long in a 16^3 wind field; the sampling is {:.0} % of the run",
            b / a,
            100.0 * (b - a) / b
        );
    }
}

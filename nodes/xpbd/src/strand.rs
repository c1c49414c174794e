//! `xpbd.strand` and `xpbd.strand_fast`: the strand contract solved with XPBD, each strand's
//! stretch constraints solved together every substep, strands across SIMD lanes in f64 or f32.

use std::marker::PhantomData;

use heft_node_sdk::{Io, Node, NodeError, NodeSpec, Params};
use heft_strand_common::geometry::{cross, dot, sub};
use heft_strand_common::{Collider, FrameEnv, Method, Out, Pin, Setup, State, V3};

use crate::solver::{
    Coeffs, GroupFigures, LaneColliders, Lanes, Lanes3, Model, Near, Particle, Real, Scratch, SubstepInput, Summary,
    SummaryModel, store_group, substep,
};

/// An XPBD strand node type with lanes of `T`.
#[derive(Debug)]
pub struct XpbdNode<T>(PhantomData<T>);

/// The node type `xpbd.strand` (f64 lanes).
pub type XpbdStrand = XpbdNode<f64>;

/// The node type `xpbd.strand_fast` (f32 lanes: twice the lanes per SIMD register).
pub type XpbdStrandF32 = XpbdNode<f32>;

/// A lane number type with the name and texts of its node type.
pub trait Precision: Real {
    /// The node type's name within the plugin.
    const NAME: &'static str;
    /// One line.
    const DOC: &'static str;
    /// The method notes.
    const NOTES: &'static str;
}

impl Precision for f64 {
    const NAME: &'static str = "strand";
    const DOC: &'static str = DOC;
    const NOTES: &'static str = NOTES;
}

impl Precision for f32 {
    const NAME: &'static str = "strand_fast";
    const DOC: &'static str = DOC_F32;
    const NOTES: &'static str = NOTES_F32;
}

const DOC: &str = "Strands (hair, braids, skirts, garlands) solved with XPBD: compliant constraints, each strand's \
                   stretch solved directly every substep, so it holds its length at any resolution.";

const DOC_F32: &str = "Strands solved with XPBD in single precision: `xpbd.strand` with f32 lanes, for many strands \
                       (hair, fringes) where speed matters more than the last digits.";

/// The notes both node types share (method, bending, layout, step, stability, energy).
macro_rules! shared_notes {
    () => {
        "\
Method: extended position-based dynamics (XPBD; Macklin, Muller & Chentanez 2016, \"XPBD: Position-Based \
Simulation of Compliant Constrained Dynamics\", MIG) with small steps (Macklin, Storey, Lu, Terdiman, Chentanez, \
Jeschke & Muller 2019, \"Small Steps in Physics Simulation\", SCA). Every substep h: predict x* = x + h v*, damping \
first, backward Euler in the velocity-proportional terms, v' = (v + h (relative_damping v_anchor(x) + drag \
v_wind(x))) / (1 + h (damping + relative_damping + drag)), then the gravity kick v* = v' + h g (so damping takes \
nothing from the equilibrium and a strand falling with its anchor is not held back); set the pins on their \
anchors; project the bending constraints in one Gauss-Seidel sweep root to tip; solve the stretch constraints \
C_j = |x_{j+1} - x_j| - l0 (compliance alpha = 1 / k = l0 / (E A)) of each strand together, directly: one \
Newton step of the XPBD system from lambda = 0, whose matrix J W J^T + alpha / h^2 is tridiagonal along a chain, \
solved in time linear in the particles (the Thomas algorithm; the structure Deul, Kugelstadt, Weiler & Bender \
2018, \"Direct Position-Based Solver for Stiff Rods\", Computer Graphics Forum, use); spread the correction \
across the strand by the tension's geometric stiffness (Tournier, Nesme, Gilles & Faure 2015, \"Stable \
Constrained Dynamics\", ACM TOG; Andrews, Teichmann & Kry 2017, Computer Graphics Forum), so that the fast \
transverse waves of a finely divided, taut strand are advanced as by backward Euler and not explicitly (a \
Laplacian along the strand with weight lambda_j / l0, whose rows sum to zero: momentum is kept); then one \
Gauss-Seidel sweep of the stretch constraints from the solve's multipliers, even segments then odd ones, \
takes out the linearisation's remainder; push particles out of the colliders (pinned ones excepted) to their nearest surface point and remove \
their inward velocity relative \
to the surface there; v = (x - x_prev) / h. A collider is a sphere on `collider_k`, or, with `collider_k_end` \
connected, a capsule from `collider_k` to `collider_k_end`, straight or tapered (radius from \
`collider_k_radius` to `collider_k_end_radius`), moving with its two ends; with `ground` on, the plane \
z = `ground_height` is a collider too. Contacts have Coulomb friction (`friction`, `static_friction`; Bridson, \
Fedkiw & Anderson 2002): the sliding velocity is slowed by mu_k times the push out, or stopped within mu_s times \
 it, and the step's displacement with it. Wind is sampled at \
each particle every substep.\n\
Bending: the vector constraint (x_{i-1} - 2 x_i + x_{i+1}) / l0 with compliance l0 / (E I), i.e. the energy \
E I / (2 l0^3) |x_{i-1} - 2 x_i + x_{i+1}|^2 per interior particle: the Euler-Bernoulli energy 1/2 int E I |x''|^2 \
ds with the central second difference (Terzopoulos, Platt, Barr & Fleischer 1987, \"Elastically Deformable \
Models\", SIGGRAPH), E I theta^2 / (2 l0) for a small turning angle theta; linear, so one projection solves it. It \
also resists unequal neighbouring segment lengths, which the stretch stiffness keeps small. The lowest mode of a \
free strand matches Euler-Bernoulli theory to 0.3 % at 40 segments.\n\
Layout: strands are grouped 1, 2, 4, 8 or 16 at a time (by count) into SIMD lanes; each particle index holds \
the x, y, z of its group's strands contiguously and the solver runs the same branch-free arithmetic on every \
lane, compiled for the widest SIMD instruction set the CPU has (AVX-512 or AVX2 where present, picked at run \
time; \
HEFT_SIMD=portable forces the target's baseline). The compiler never contracts the arithmetic, and the fused \
multiply-adds the solver writes out are rounded once on every path (an instruction, or the C library's fma), so \
results are bit-identical whatever the CPU, and a strand's result does not depend on its group or on the other \
strands (a frame run again, below, runs the lanes at the finer step, and every strand that came out right at the \
coarser step takes that result back). Positions \
are held relative to each strand's particle 0 at the start of the frame (kept in f64), so the precision does \
not depend on how far from the world origin the strand is; the velocity is held as the step s = x - x_prev, a \
number of its own that the constraints correct directly, never as a difference of two positions. The run starts \
at second order: the first step is h v0 - h^2 g / 2, the step from half a step back on the parabola, so a free \
strand falls exactly as x0 + v0 t + g t^2 / 2 (a step h v0 would leave it g h t / 2 behind).\n\
Stiffness and step: compliance makes the stiffness independent of the iteration count, and solving a strand's \
stretch constraints together makes it independent of the step and of the segment count: a hanging strand at rest \
stretches each segment by Hooke's T_j / k (T the weight below it), to rounding, at any substep count (a single \
Gauss-Seidel sweep would leave about h^2 g (n - 1) on the top segment: 5 % of a 40 cm strand of 32 segments at \
the default 20 substeps, 344 % at 256). Measured with the defaults swinging down from horizontal: the strand at \
most 0.11 % longer than at rest at 32 and at 256 segments (Hooke's share 0.05 %). Finer strands need shorter \
steps for the solve's linearisation: swinging down from horizontal, 4096 segments of 0.1 mm stay within 0.44 % \
at 80 substeps, and at 20 run two frames again (below) and stay within 0.57 %; on a character's head through a \
jump, against the head, a 40 cm strand runs every frame at one step within 1 % with 64 segments at the default \
20 substeps and needs about segments / 6.4 substeps from 256 up (40 at 256, 80 at 512, 640 at 4096); at fewer, \
the frames of fastest motion run again at finer steps and the strand stays within 1 % (256 at 20: 7 of 73 \
frames). Bending is one sweep, stiff bending is softened by about h^2 times the stencil's \
stiffness over the particle mass. The swing of a stiff strand is damped as by backward Euler, about pi omega h \
of its amplitude per period (0.4 % for a 1 m pendulum at 100 substeps at 24 frames/s, 2 % at 20).\n\
Stability: no step limit for any stiffness: the solve stays bounded as the compliance goes to 0 (its pivots are \
at least alpha / h^2 and the matrix is diagonally dominant) and the damping is backward Euler; E A = 1e9 N and E \
I = 1e3 N m^2 run at 1 substep per frame. An explicit spring chain with the defaults would need h < 2 / \
omega_max = 5.3e-4 s (omega_max = 2 sqrt(k / m) = 3795 rad/s), 80 substeps at 24 frames/s. Large steps cost \
accuracy; the contract's checks still run every frame: a blow-up (non-finite values, a segment beyond 10 rest \
lengths, a speed above 1e4 m/s), when an anchor or initial state is violent or a very fine strand's step too \
coarse, and a crumpled strand (more than 1 % longer than its rest length or its end-to-end distance), the first \
sign of a step too coarse. Either runs the frame again from its start at twice the substeps, up to `reruns` \
times; a blow-up left after them stops the run, a crumple left is kept and named in a warning.\n\
Energy output: kinetic + m g z + 1/2 k (l - l0)^2 + the bending energy, from the positions.\n"
    };
}

const NOTES: &str = concat!(
    shared_notes!(),
    "Precision: f64 lanes. `xpbd.strand_fast` is the same method with f32 lanes, 1.5 to 2.4 times as fast on many strands."
);

const NOTES_F32: &str = concat!(
    shared_notes!(),
    "Precision: f32 lanes; everything else (coefficients, pins, colliders, wind, the outputs, the energy and \
     momentum sums) in f64. Positions are resolved to about 6e-8 of their distance from the strand's root (3e-8 m \
     on a 0.5 m strand), steps to 6e-8 of themselves, so a gravity kick h^2 g far below the position spacing is \
     kept (a free fall at 2000 substeps a frame is right to 7e-4 after 1 s, at 20 substeps to 3e-6). The \
     constraints take the rounding of the positions for stretch and correct it into the steps: momentum is kept \
     to about 1e-5 of M v over a frame (1e-12 in f64), the swing of a pendulum matches `xpbd.strand` to 1e-4, a \
     busy scene stays within 3e-6 m of it over 2 s, and the stretch energy of very stiff strands (1/2 k \
     (l - l0)^2 with k = 1e9 N/m) is dominated by that rounding. Invisible in animation; use `xpbd.strand` for \
     analysis and for very stiff strands. 1.5 to 2.4 times as fast on many strands: twice the lanes per SIMD register (a single strand fills one lane in \
     either, and runs as fast in both)."
);

impl<T: Precision> Node for XpbdNode<T> {
    fn spec() -> NodeSpec {
        heft_strand_common::node_spec(T::NAME, T::DOC, T::NOTES)
    }

    fn output_points(params: &Params, inputs: &[usize]) -> Result<Vec<usize>, NodeError> {
        heft_strand_common::output_points(params, inputs)
    }

    fn check(params: &Params, inputs: &[usize], timeline: heft_node_sdk::Timeline) -> Vec<heft_node_sdk::CheckProblem> {
        heft_strand_common::check::<Xpbd<T>>(params, inputs, timeline)
    }

    fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
        heft_strand_common::evaluate::<Xpbd<T>>(params, io)
    }

    const WINDOWED: bool = true;

    fn advance(params: &Params, carry: &mut heft_node_sdk::Carry, io: &mut Io<'_>) -> Result<(), NodeError> {
        heft_strand_common::advance::<Xpbd<T>>(params, carry, io)
    }
}

/// The XPBD method for [`heft_strand_common::evaluate`], with lanes of `T` (f64 or f32).
#[derive(Debug)]
pub struct Xpbd<T: Real> {
    model: Model,
    coeffs: Coeffs<T>,
    /// (h, wind connected, gravity) the coefficients were made for.
    made_for: (f64, bool, [f64; 3]),
    /// Per substep k of a frame: the prediction's base and spin in f64 (see [`SubstepInput`]).
    shared: Vec<([f64; 3], Option<[f64; 3]>)>,
    engine: Engine<T>,
    /// The instruction set the lanes run on (see [`GroupRun`]).
    arch: pulp::Arch,
}

/// The lane width, chosen by the strand count.
#[derive(Debug)]
enum Engine<T: Real> {
    L1(Group<T, 1>),
    L2(Group<T, 2>),
    L4(Group<T, 4>),
    L8(Group<T, 8>),
    L16(Group<T, 16>),
}

/// Strands in lanes of `N`, with their pin offsets and scratch.
#[derive(Debug)]
struct Group<T: Real, const N: usize> {
    lanes: Lanes<T, N>,
    /// Per group: the start and end pin offsets of each lane (anchor-local), m.
    start: Vec<Lanes3<f64, N>>,
    end: Vec<Lanes3<f64, N>>,
    /// The scratch of each thread that runs lane groups (the first is the calling thread's),
    /// made as threads are first used.
    workers: Vec<Worker<T, N>>,
    /// True once the lanes hold the state: the frame loop hands every call the state the
    /// previous call left, so later frames only move the origins (see [`GroupRun`]).
    loaded: bool,
    /// The figures of the state the last frame left (`None` before the first frame).
    summary: Option<Summary>,
    /// Each lane group's part of them, computed by the thread that ran the group.
    figures: Vec<GroupFigures<N>>,
    /// The substep of the last frame (the lanes hold h v).
    stored_h: f64,
    /// The threads the last frame ran on (its store is split the same way).
    threads: usize,
    /// The lanes as the last [`Method::mark`] found them (empty until a mark of loaded lanes),
    /// with `loaded` and `stored_h` then.
    kept: Kept<T, N>,
    /// The lanes a try of a frame left, held while it runs again ([`Method::hold`]).
    held: Kept<T, N>,
    /// True when the next frame is to keep its start in `kept` (see [`Group::mark`]).
    keep: bool,
}

/// A lane group's state at the start of a frame, to run the frame again (see [`Method::mark`]).
#[derive(Debug)]
struct Kept<T: Real, const N: usize> {
    origin: Vec<Lanes3<f64, N>>,
    x: Vec<Particle<T, N>>,
    loaded: bool,
    stored_h: f64,
}

impl<T: Real, const N: usize> Kept<T, N> {
    fn new() -> Kept<T, N> {
        Kept {
            origin: Vec::new(),
            x: Vec::new(),
            loaded: false,
            stored_h: 1.0,
        }
    }
}

/// The scratch one thread reuses from lane group to lane group: wind per particle, colliders
/// near each lane, the chain solve's segments. Every group overwrites what it reads of it, so
/// a group's result does not depend on which thread ran it, or what ran before.
#[derive(Debug)]
struct Worker<T: Real, const N: usize> {
    wind: Vec<Lanes3<T, N>>,
    near: Vec<Near<T, N>>,
    scratch: Scratch<T, N>,
}

impl<T: Real, const N: usize> Worker<T, N> {
    fn new(particles: usize) -> Worker<T, N> {
        Worker {
            wind: vec![[[T::ZERO; N]; 3]; particles],
            near: Vec::with_capacity(3),
            scratch: Scratch::new(particles),
        }
    }
}

/// The least work a thread is given, in lane-group particle-substeps (a group of `N` lanes
/// advancing one particle by one substep): below it, handing a share of the frame to another
/// thread costs more than it saves. benches/threads.rs times the least split it allows (208
/// strands of 32 particles at 20 substeps: 4160 a thread): 1.19 times one thread in one run (1.54
/// times when a substep was 1.7 times slower).
const MIN_WORK_PER_THREAD: usize = 4096;

/// How many threads run a frame's `groups` lane groups of `particles` particles over `substeps`
/// substeps when `allowed` may: at most one per group, each with at least
/// [`MIN_WORK_PER_THREAD`], at least 1.
fn threads_for(allowed: usize, groups: usize, particles: usize, substeps: usize) -> usize {
    let work = groups.saturating_mul(particles).saturating_mul(substeps);
    allowed.min(groups).min(work / MIN_WORK_PER_THREAD).max(1)
}

/// The lane groups thread `k` of `threads` runs: contiguous ranges, in order, that differ in
/// size by at most one and together cover `0..groups`.
fn share(k: usize, threads: usize, groups: usize) -> std::ops::Range<usize> {
    k * groups / threads..(k + 1) * groups / threads
}

/// How many of the node's `strands` the lane groups `groups` hold (the last group's lanes past
/// them are padding).
fn strands_in(groups: &std::ops::Range<usize>, lanes: usize, strands: usize) -> usize {
    (groups.end * lanes).min(strands) - (groups.start * lanes).min(strands)
}

/// Lanes per group for `strands` strands (see `Method::new` of [`Xpbd`]).
fn lanes_for(strands: usize) -> usize {
    match strands {
        0..=2 => strands.max(1),
        3..=4 => 4,
        5..=8 => 8,
        _ => 16,
    }
}

/// How many threads run each frame of the strands of `setup` when the node may use `allowed`:
/// one per lane group at most, and only as many as have enough work to pay for starting them.
/// Results are the same bits for any count.
pub fn frame_threads(setup: &Setup, allowed: usize) -> usize {
    let groups = setup.strands.div_ceil(lanes_for(setup.strands));
    threads_for(allowed, groups, setup.particles, setup.substeps)
}

/// What every lane group of a frame shares (see [`GroupRun`]).
#[derive(Clone, Copy)]
struct FrameJob<'a, T: Real> {
    arch: pulp::Arch,
    env: &'a FrameEnv<'a>,
    coeffs: &'a Coeffs<T>,
    shared: &'a [([f64; 3], Option<[f64; 3]>)],
    root: bool,
    tip: bool,
    free: (usize, usize),
    wind_gain: f64,
    /// Move each lane's origin to its particle 0 before the substeps (as a load would).
    reorigin: bool,
    /// What the frame's figures are taken with (see [`Lanes::group_figures`]).
    model: &'a SummaryModel<'a>,
    /// The node's strands (the last group's lanes past them are padding).
    strands: usize,
}

impl<T: Real> FrameJob<'_, T> {
    /// Runs the frame's substeps for one thread's share of the lane groups (see [`Share`]),
    /// then takes each group's part of the frame's figures and, when the share carries the
    /// outputs' part, writes the group's strands there. When the share carries room to
    /// keep the frame's start, each group is copied there first, while it is in the cache the
    /// substeps are about to read it into.
    fn run<const N: usize>(&self, share: Share<'_, T, N>) {
        let Share {
            first,
            origin,
            x,
            start,
            end,
            worker,
            figures,
            mut kept,
            mut out,
        } = share;
        let particles = x.len() / origin.len().max(1);
        let groups = origin.iter_mut().zip(x.chunks_exact_mut(particles)).zip(figures);
        for (g, ((origin, x), figures)) in groups.enumerate() {
            if let Some((ko, kx)) = &mut kept {
                ko[g] = *origin;
                kx[g * particles..(g + 1) * particles].copy_from_slice(x);
            }
            self.arch.dispatch(GroupRun {
                origin: &mut *origin,
                x: &mut *x,
                start: &start[g],
                end: &end[g],
                wind: &mut worker.wind,
                near: &mut worker.near,
                scratch: &mut worker.scratch,
                job: *self,
            });
            let live = self.strands.saturating_sub((first + g) * N).min(N);
            *figures = self.arch.dispatch(Figures {
                origin: &*origin,
                x: &*x,
                live,
                model: self.model,
            });
            if let Some(Out { x: ox, v: ov }) = &mut out {
                let at = g * N * 3 * particles..(g * N + live) * 3 * particles;
                store_group(origin, x, 0..live, &mut ox[at.clone()], &mut ov[at], self.env.h);
            }
        }
    }
}

/// One thread's share of a frame: consecutive lane groups from group `first`, their origins,
/// particles (`origin.len()` groups of `particles` each), pin offsets, figures, the thread's
/// scratch, and, when the frame's start is to be kept (see [`Method::mark`]), the room for it.
struct Share<'a, T: Real, const N: usize> {
    first: usize,
    origin: &'a mut [Lanes3<f64, N>],
    x: &'a mut [Particle<T, N>],
    start: &'a [Lanes3<f64, N>],
    end: &'a [Lanes3<f64, N>],
    worker: &'a mut Worker<T, N>,
    figures: &'a mut [GroupFigures<N>],
    kept: Option<StartRoom<'a, T, N>>,
    /// The outputs' part for the share's strands, when the frame writes them as it goes.
    out: Option<Out<'a>>,
}

/// Room for the origins and particles of a thread's lane groups at the start of a frame.
type StartRoom<'a, T, const N: usize> = (&'a mut [Lanes3<f64, N>], &'a mut [Particle<T, N>]);

impl<T: Real, const N: usize> Group<T, N> {
    /// Writes the state the last frame left (see [`Lanes::store`]), split across the threads
    /// that frame ran on: each stores the strands of its lane groups into its own part of the
    /// outputs, so the values are the same whatever the split.
    fn store(&self, x: &mut [f64], v: &mut [f64]) {
        let (groups, per_strand) = (self.lanes.groups(), 3 * self.lanes.particles());
        let strands = self.lanes.strands();
        if self.threads <= 1 {
            self.lanes.store(x, v, self.stored_h);
            return;
        }
        rayon::scope(|scope| {
            let (mut x, mut v) = (x, v);
            for k in 0..self.threads {
                let g = share(k, self.threads, groups);
                let first = (g.start * N).min(strands);
                let range = first..first + strands_in(&g, N, strands);
                let (xa, xb) = std::mem::take(&mut x).split_at_mut(range.len() * per_strand);
                let (va, vb) = std::mem::take(&mut v).split_at_mut(range.len() * per_strand);
                (x, v) = (xb, vb);
                let lanes = &self.lanes;
                let h = self.stored_h;
                scope.spawn(move |_| lanes.store_strands(range, xa, va, h));
            }
        });
    }

    fn new(setup: &Setup) -> Group<T, N> {
        let lanes = Lanes::<T, N>::new(setup.strands, setup.particles);
        let groups = lanes.groups();
        let per_lane = |offsets: &[V3]| -> Vec<Lanes3<f64, N>> {
            (0..groups)
                .map(|g| std::array::from_fn(|k| std::array::from_fn(|l| offsets[lanes.strand_of(g, l)][k])))
                .collect()
        };
        Group {
            start: per_lane(&setup.start_offsets),
            end: per_lane(&setup.end_offsets),
            workers: vec![Worker::new(setup.particles)],
            loaded: false,
            summary: None,
            figures: Vec::new(),
            stored_h: 1.0,
            threads: 1,
            lanes,
            kept: Kept::new(),
            held: Kept::new(),
            keep: false,
        }
    }

    /// Holds the lanes a try of a frame left (see [`Method::hold`]).
    fn hold(&mut self) {
        let held = &mut self.held;
        held.stored_h = self.stored_h;
        held.origin.clone_from(&self.lanes.origin);
        held.x.clone_from(&self.lanes.x);
    }

    /// The strands of `take` back to the held lanes, the others' steps scaled to the held step
    /// (see [`Method::merge`]).
    fn merge(&mut self, take: &[bool]) {
        let held = &self.held;
        let ratio = T::of(held.stored_h / self.stored_h);
        let n = self.lanes.particles();
        for g in 0..self.lanes.groups() {
            for l in 0..N {
                // Padding lanes follow the strand they repeat.
                if take[self.lanes.strand_of(g, l)] {
                    for c in 0..3 {
                        self.lanes.origin[g][c][l] = held.origin[g][c][l];
                    }
                    for i in g * n..(g + 1) * n {
                        for c in 0..3 {
                            self.lanes.x[i][0][c][l] = held.x[i][0][c][l];
                            self.lanes.x[i][1][c][l] = held.x[i][1][c][l];
                        }
                    }
                } else {
                    for i in g * n..(g + 1) * n {
                        for c in 0..3 {
                            self.lanes.x[i][1][c][l] = self.lanes.x[i][1][c][l] * ratio;
                        }
                    }
                }
            }
        }
        self.stored_h = held.stored_h;
        // The frame's figures were taken before the merge: the frame loop checks the state.
        self.summary = None;
    }

    /// Keeps the lanes (when loaded: each thread copies its groups as the next frame starts
    /// them; `state` otherwise, which the first frame loads from).
    fn mark(&mut self, state: &State, keep: &mut State) {
        let kept = &mut self.kept;
        kept.loaded = self.loaded;
        kept.stored_h = self.stored_h;
        if self.loaded {
            self.keep = true;
        } else {
            keep.clone_from(state);
        }
    }

    /// Back to the last [`Group::mark`].
    fn rewind(&mut self, state: &mut State, keep: &State) {
        let kept = &self.kept;
        self.loaded = kept.loaded;
        self.stored_h = kept.stored_h;
        if kept.loaded {
            self.lanes.origin.clone_from(&kept.origin);
            self.lanes.x.clone_from(&kept.x);
        } else {
            state.clone_from(keep);
        }
    }

    /// Runs a frame (see [`Method::frame`]) on the lanes, split across the threads, and when
    /// given `out`, each thread writes its strands there as it finishes them: true when it did.
    #[allow(clippy::too_many_arguments)]
    fn frame(
        &mut self,
        arch: pulp::Arch,
        setup: &Setup,
        state: &mut State,
        env: &FrameEnv<'_>,
        coeffs: &Coeffs<T>,
        shared: &[([f64; 3], Option<[f64; 3]>)],
        mut out: Option<Out<'_>>,
    ) -> bool {
        let h = env.h;
        let n = setup.particles;
        let reorigin = self.loaded;
        if self.loaded && self.stored_h != h {
            // A step of another length than the last frame's (a frame run again at more
            // substeps, or the one after it): the steps s = h v scaled to keep the velocity.
            let ratio = T::of(h / self.stored_h);
            for p in self.lanes.x.iter_mut() {
                for row in p[1].iter_mut() {
                    for s in row.iter_mut() {
                        *s = *s * ratio;
                    }
                }
            }
        }
        if !self.loaded {
            // The first step is taken from half a step back on the path of the particles'
            // acceleration at the start: gravity for a strand as laid out (exact for a free
            // fall); the anchor's for a settled one (in equilibrium under the apparent gravity
            // g - a of its anchor, it moves with the anchor).
            let start_accel = if setup.settled_start {
                env.anchor_acceleration_at(0.0)
            } else {
                setup.gravity
            };
            self.lanes.load(&state.x, &state.v, h, start_accel);
            self.loaded = true;
        }
        let root = setup.pin != Pin::Free;
        let tip = setup.pin == Pin::BothEnds;
        let free = (usize::from(root), n - usize::from(tip));
        let model = SummaryModel {
            mass: &setup.mass,
            gravity: setup.gravity,
            h,
            stretch_k: &setup.segment_k,
            rest_length: setup.rest_length,
            bending_k: &setup.bend_c,
            max_length: heft_strand_common::BLOW_UP_STRETCH * setup.rest_length,
            max_speed: heft_strand_common::BLOW_UP_SPEED,
            crumple: heft_strand_common::overlong_limit::<Xpbd<T>>(setup),
        };
        let job = FrameJob {
            arch,
            env,
            coeffs,
            shared,
            root,
            tip,
            free,
            wind_gain: coeffs.h2_decay * setup.drag,
            reorigin,
            model: &model,
            strands: setup.strands,
        };
        // Lane groups are independent within a frame: contiguous ranges of them run on
        // `threads` threads, each with its own scratch, and every group computes the same bits
        // whichever thread runs it.
        let groups = self.lanes.groups();
        let threads = threads_for(env.threads, groups, n, env.substeps);
        self.threads = threads;
        while self.workers.len() < threads {
            self.workers.push(Worker::new(n));
        }
        let mut origin: &mut [Lanes3<f64, N>] = &mut self.lanes.origin;
        let mut x: &mut [Particle<T, N>] = &mut self.lanes.x;
        let (mut start, mut end): (&[Lanes3<f64, N>], &[Lanes3<f64, N>]) = (&self.start, &self.end);
        self.figures.resize(groups, GroupFigures::default());
        let mut figures: &mut [GroupFigures<N>] = &mut self.figures;
        // The frame's start, kept group by group as the threads reach them (see `Group::mark`).
        let keep = std::mem::take(&mut self.keep);
        if keep {
            self.kept.origin.resize(groups, [[0.0; N]; 3]);
            self.kept.x.resize(groups * n, [[[T::ZERO; N]; 3]; 2]);
        }
        let (mut kept_origin, mut kept_x): (&mut [Lanes3<f64, N>], &mut [Particle<T, N>]) =
            (&mut self.kept.origin, &mut self.kept.x);
        let written = out.is_some();
        let mut parts = Vec::with_capacity(threads);
        for (k, worker) in self.workers.iter_mut().take(threads).enumerate() {
            let g = share(k, threads, groups);
            let count = g.len();
            let out = out.as_mut().map(|Out { x, v }| {
                let len = strands_in(&g, N, setup.strands) * 3 * n;
                let (xa, xb) = std::mem::take(x).split_at_mut(len);
                let (va, vb) = std::mem::take(v).split_at_mut(len);
                (*x, *v) = (xb, vb);
                Out { x: xa, v: va }
            });
            let (o, o_rest) = std::mem::take(&mut origin).split_at_mut(count);
            let (p, p_rest) = std::mem::take(&mut x).split_at_mut(count * n);
            let (a, a_rest) = start.split_at(count);
            let (b, b_rest) = end.split_at(count);
            let (f, f_rest) = std::mem::take(&mut figures).split_at_mut(count);
            (origin, x, start, end, figures) = (o_rest, p_rest, a_rest, b_rest, f_rest);
            let kept = if keep {
                let (ko, ko_rest) = std::mem::take(&mut kept_origin).split_at_mut(count);
                let (kx, kx_rest) = std::mem::take(&mut kept_x).split_at_mut(count * n);
                (kept_origin, kept_x) = (ko_rest, kx_rest);
                Some((ko, kx))
            } else {
                None
            };
            parts.push(Share {
                first: share(k, threads, groups).start,
                origin: o,
                x: p,
                start: a,
                end: b,
                worker,
                figures: f,
                kept,
                out,
            });
        }
        let mut parts = parts.into_iter();
        if let Some(first) = parts.next() {
            if threads == 1 {
                job.run(first);
            } else {
                rayon::scope(|scope| {
                    for part in parts {
                        scope.spawn(move |_| job.run(part));
                    }
                    scope.spawn(move |_| job.run(first));
                });
            }
        }
        // The state stays in the lanes: the frame loop asks for it through `Method::store`.
        self.stored_h = h;
        // The groups' parts of the figures, added in group order (the same bits for any split).
        let mut summary = Summary::default();
        for f in &self.figures {
            summary.add(f);
        }
        self.summary = Some(summary);
        written
    }
}

/// One lane group's part of the frame's figures ([`Lanes::group_figures`]), under the widest
/// SIMD instruction set the CPU has, as [`GroupRun`].
struct Figures<'a, T: Real, const N: usize> {
    origin: &'a Lanes3<f64, N>,
    x: &'a [Particle<T, N>],
    live: usize,
    model: &'a SummaryModel<'a>,
}

impl<T: Real, const N: usize> pulp::WithSimd for Figures<'_, T, N> {
    type Output = GroupFigures<N>;
    #[inline(always)]
    fn with_simd<S: pulp::Simd>(self, _: S) -> GroupFigures<N> {
        Lanes::<T, N>::group_figures(self.origin, self.x, self.live, self.model)
    }
}

/// The substeps of one frame for one lane group, run under the widest SIMD instruction set
/// the CPU has: `pulp` compiles [`pulp::WithSimd::with_simd`] once per instruction set and picks
/// one at run time; everything it calls on the hot path is `#[inline(always)]`, so it is compiled
/// for that instruction set too. The arithmetic is the same IEEE sequence on every path (Rust
/// does not contract `a * b + c` into a fused multiply-add), so results do not depend on the CPU.
struct GroupRun<'a, T: Real, const N: usize> {
    origin: &'a mut Lanes3<f64, N>,
    x: &'a mut [Particle<T, N>],
    start: &'a Lanes3<f64, N>,
    end: &'a Lanes3<f64, N>,
    wind: &'a mut [Lanes3<T, N>],
    near: &'a mut Vec<Near<T, N>>,
    scratch: &'a mut Scratch<T, N>,
    /// What every group of the frame shares.
    job: FrameJob<'a, T>,
}

impl<T: Real, const N: usize> pulp::WithSimd for GroupRun<'_, T, N> {
    type Output = ();

    #[inline(always)]
    fn with_simd<S: pulp::Simd>(self, _: S) {
        let GroupRun {
            origin,
            x,
            start,
            end,
            wind,
            near,
            scratch,
            job:
                FrameJob {
                    env,
                    coeffs,
                    shared,
                    root,
                    tip,
                    free,
                    wind_gain,
                    reorigin,
                    ..
                },
        } = self;
        if reorigin {
            // o += x_0 (exact in f64), x -= x_0: relative positions stay within a strand
            // length of zero as the strand travels. The steps do not change.
            let d = x[0][0];
            for l in 0..N {
                for c in 0..3 {
                    origin[c][l] += d[c][l].wide();
                }
            }
            for p in x.iter_mut() {
                for c in 0..3 {
                    for l in 0..N {
                        p[0][c][l] -= d[c][l];
                    }
                }
            }
        }
        let mut pin_root = [[T::ZERO; N]; 3];
        let mut pin_tip = [[T::ZERO; N]; 3];
        let mut base = [[T::ZERO; N]; 3];
        for (k, &(base_k, spin_k)) in shared.iter().enumerate().take(env.substeps) {
            if root {
                set_pins(env.anchor_pose(k + 1), start, origin, &mut pin_root);
            }
            if tip {
                set_pins(env.end_pose(k + 1), end, origin, &mut pin_tip);
            }
            // base + spin x o_lane: the spin term's share of the lane's origin.
            let w = spin_k.unwrap_or([0.0; 3]);
            for l in 0..N {
                let o = [origin[0][l], origin[1][l], origin[2][l]];
                base[0][l] = T::of(base_k[0] + (w[1] * o[2] - w[2] * o[1]));
                base[1][l] = T::of(base_k[1] + (w[2] * o[0] - w[0] * o[2]));
                base[2][l] = T::of(base_k[2] + (w[0] * o[1] - w[1] * o[0]));
            }
            if env.has_wind() {
                let ambient = env.ambient(k);
                // The whole lane group's particle at once (FieldView::sample_lanes).
                for (xi, wi) in x.iter().zip(wind.iter_mut()) {
                    let mut p = [[0.0f64; N]; 3];
                    for c in 0..3 {
                        for l in 0..N {
                            p[c][l] = origin[c][l] + xi[0][c][l].wide();
                        }
                    }
                    let w = ambient.wind_lanes::<N>(&p);
                    for c in 0..3 {
                        for l in 0..N {
                            wi[c][l] = T::of(wind_gain * w[c][l]);
                        }
                    }
                }
            }
            let colliders = env.has_colliders().then(|| {
                let world = env.colliders(k + 1);
                near.clear();
                near.extend(world.shapes.iter().map(|s| near_lanes(s, origin)));
                LaneColliders {
                    world,
                    origin,
                    near: &near[..],
                }
            });
            let input = SubstepInput {
                pin_root: root.then_some(&pin_root),
                pin_tip: tip.then_some(&pin_tip),
                base: &base,
                spin: spin_k.map(|s| s.map(T::of)),
                wind: env.has_wind().then_some(&wind[..]),
                colliders,
                free,
            };
            substep(coeffs, &input, x, scratch);
        }
    }
}

/// A collider as the cheap test of one lane group sees it (see [`Near`]): its centre or start
/// relative to each lane's origin, with a conservative radius: 0.1 % plus the rounding of the
/// relative positions (for a capsule, of the axis and of the projection onto it as well).
#[inline(always)]
fn near_lanes<T: Real, const N: usize>(s: &Collider, origin: &Lanes3<f64, N>) -> Near<T, N> {
    let mut start = [[T::ZERO; N]; 3];
    let mut reach = 0.0f64;
    match s {
        Collider::Sphere(s) => {
            for l in 0..N {
                for c in 0..3 {
                    let r = s.centre[c] - origin[c][l];
                    start[c][l] = T::of(r);
                    reach = reach.max(r.abs());
                }
            }
            let r = s.radius * 1.001 + 8.0 * T::EPSILON * (reach + s.radius);
            Near {
                start,
                axis: [T::ZERO; 3],
                inv_len2: T::ZERO,
                r2: T::of(r * r),
                capsule: false,
                ground: false,
            }
        }
        Collider::Capsule(k) => {
            for l in 0..N {
                for c in 0..3 {
                    let r = k.start[c] - origin[c][l];
                    start[c][l] = T::of(r);
                    reach = reach.max(r.abs()).max((k.end[c] - origin[c][l]).abs());
                }
            }
            let axis = sub(k.end, k.start);
            let m = k.max_radius();
            let r = m * 1.001 + 16.0 * T::EPSILON * (reach + k.length() + m);
            Near {
                start,
                axis: axis.map(T::of),
                inv_len2: T::of(1.0 / dot(axis, axis)),
                r2: T::of(r * r),
                capsule: true,
                ground: false,
            }
        }
        Collider::Ground(g) => {
            for l in 0..N {
                let r = g.height - origin[2][l];
                start[2][l] = T::of(r);
                reach = reach.max(r.abs());
            }
            // A margin of 0.1 mm plus the rounding of the relative heights: a particle that
            // close above is checked exactly.
            Near {
                start,
                axis: [T::ZERO; 3],
                inv_len2: T::ZERO,
                r2: T::of(1.0e-4 + 16.0 * T::EPSILON * reach),
                capsule: false,
                ground: true,
            }
        }
    }
}

/// Pin targets of one group's lanes: the pose applied to each lane's offset, relative to the
/// lane's origin (lanes side by side).
#[inline(always)]
fn set_pins<T: Real, const N: usize>(
    pose: &heft_strand_common::Pose,
    offsets: &Lanes3<f64, N>,
    origin: &Lanes3<f64, N>,
    out: &mut Lanes3<T, N>,
) {
    let (r, t) = (&pose.r, &pose.t);
    for k in 0..3 {
        for l in 0..N {
            let p = r[k][0] * offsets[0][l] + r[k][1] * offsets[1][l] + r[k][2] * offsets[2][l] + t[k];
            out[k][l] = T::of(p - origin[k][l]);
        }
    }
}

/// The environment variable that picks the instruction set the lanes run on: `portable` for the
/// baseline of the target (SSE2 on x86-64), anything else or unset for the widest the CPU has.
/// Results are bit-identical either way (tests/simd.rs checks it); the switch is there to show
/// that, and to time the difference.
pub const SIMD_VARIABLE: &str = "HEFT_SIMD";

fn instruction_set() -> pulp::Arch {
    match std::env::var(SIMD_VARIABLE) {
        Ok(v) if v == "portable" => pulp::Arch::Scalar,
        _ => pulp::Arch::new(),
    }
}

impl<T: Real> Xpbd<T> {
    /// A frame (see [`Method::frame`]), writing the outputs as it goes when given them: true
    /// when it wrote them.
    fn run_frame(&mut self, setup: &Setup, state: &mut State, env: &FrameEnv<'_>, out: Option<Out<'_>>) -> bool {
        let wind = env.has_wind();
        if self.made_for != (env.h, wind, env.gravity) {
            self.model.damping_rate = setup.damping_rate(wind);
            self.model.gravity = env.gravity;
            self.coeffs.update(&self.model, env.h);
            self.made_for = (env.h, wind, env.gravity);
        }
        let c = &self.coeffs;
        let cr = setup.relative_damping;
        if self.shared.len() < env.substeps {
            self.shared.resize(env.substeps, ([0.0; 3], None));
        }
        for (k, slot) in self.shared.iter_mut().enumerate().take(env.substeps) {
            // The anchor's rigid velocity v_lin + w x (x - o) that goes with the velocity
            // (x_k - x_{k-1}) / h held at boundary k.
            let a = env.anchor_velocity(k);
            let lin = [0, 1, 2].map(|i| a.linear[i] - cross(a.angular, a.origin)[i]);
            let base = [0, 1, 2].map(|i| c.h2_gravity[i] + c.h2_decay * cr * lin[i]);
            let rotating = cr != 0.0 && a.angular != [0.0; 3];
            *slot = (base, rotating.then(|| a.angular.map(|w| c.h2_decay * cr * w)));
        }
        let shared = &self.shared[..env.substeps];
        match &mut self.engine {
            Engine::L1(e) => e.frame(self.arch, setup, state, env, c, shared, out),
            Engine::L2(e) => e.frame(self.arch, setup, state, env, c, shared, out),
            Engine::L4(e) => e.frame(self.arch, setup, state, env, c, shared, out),
            Engine::L8(e) => e.frame(self.arch, setup, state, env, c, shared, out),
            Engine::L16(e) => e.frame(self.arch, setup, state, env, c, shared, out),
        }
    }

    /// The figures of the state the last frame left.
    fn summary(&self) -> Option<Summary> {
        match &self.engine {
            Engine::L1(e) => e.summary,
            Engine::L2(e) => e.summary,
            Engine::L4(e) => e.summary,
            Engine::L8(e) => e.summary,
            Engine::L16(e) => e.summary,
        }
    }

    fn model(setup: &Setup, wind: bool) -> Model {
        Model {
            rest_length: setup.rest_length,
            inv_mass: setup.inv_mass.clone(),
            stretch_compliance: setup.segment_k.iter().map(|k| 1.0 / k).collect(),
            // alpha_b = l0 / (E I)_i = 1 / (c_i l0^2).
            bend_compliance: (setup.bending_stiffness > 0.0).then(|| {
                let l0 = setup.rest_length;
                setup.bend_c.iter().map(|c| 1.0 / (c * l0 * l0)).collect()
            }),
            damping_rate: setup.damping_rate(wind),
            gravity: setup.gravity,
        }
    }
}

impl<T: Real> Method for Xpbd<T> {
    fn new(setup: &Setup) -> Xpbd<T> {
        let model = Xpbd::<T>::model(setup, false);
        // A placeholder step; `frame` remakes the coefficients (in place) for the real one.
        let coeffs = Coeffs::new(&model, 1.0);
        // Lanes per group: up to 16 (4 AVX2 registers of f64, 2 of f32; 2 and 1 of AVX-512), so
        // several independent chains of dependent projections are in flight while a group's
        // state (16 lanes x 32 particles x position and step: 12 KB in f32, 24 KB in f64) stays
        // in the L1 cache. Measured in benches/strands.rs: 8 and 32 lanes are slower for both
        // types with AVX2; with AVX-512, 32 lanes of f32 are 0.89 times 16 (benches/threads.rs,
        // one run).
        let engine = match lanes_for(setup.strands) {
            1 => Engine::L1(Group::new(setup)),
            2 => Engine::L2(Group::new(setup)),
            4 => Engine::L4(Group::new(setup)),
            8 => Engine::L8(Group::new(setup)),
            _ => Engine::L16(Group::new(setup)),
        };
        Xpbd {
            model,
            coeffs,
            made_for: (f64::NAN, false, [f64::NAN; 3]),
            shared: vec![([0.0; 3], None); setup.substeps],
            engine,
            arch: instruction_set(),
        }
    }

    fn frame(&mut self, setup: &Setup, state: &mut State, env: &FrameEnv<'_>) {
        self.run_frame(setup, state, env, None);
    }

    /// Each thread writes the strands of its lane groups as it finishes them.
    fn frame_and_store(&mut self, setup: &Setup, state: &mut State, env: &FrameEnv<'_>, out: Out<'_>) -> bool {
        self.run_frame(setup, state, env, Some(out))
    }

    /// The state stays in the lanes between frames.
    fn fills_state(&self) -> bool {
        false
    }

    /// From the lanes.
    fn store(&self, x: &mut [f64], v: &mut [f64]) {
        match &self.engine {
            Engine::L1(e) => e.store(x, v),
            Engine::L2(e) => e.store(x, v),
            Engine::L4(e) => e.store(x, v),
            Engine::L8(e) => e.store(x, v),
            Engine::L16(e) => e.store(x, v),
        }
    }

    /// The lanes (or, before the first frame, `state`).
    fn mark(&mut self, state: &State, keep: &mut State) {
        match &mut self.engine {
            Engine::L1(e) => e.mark(state, keep),
            Engine::L2(e) => e.mark(state, keep),
            Engine::L4(e) => e.mark(state, keep),
            Engine::L8(e) => e.mark(state, keep),
            Engine::L16(e) => e.mark(state, keep),
        }
    }

    fn hold(&mut self, _state: &State, _held: &mut State) {
        match &mut self.engine {
            Engine::L1(e) => e.hold(),
            Engine::L2(e) => e.hold(),
            Engine::L4(e) => e.hold(),
            Engine::L8(e) => e.hold(),
            Engine::L16(e) => e.hold(),
        }
    }

    fn merge(&mut self, _state: &mut State, _held: &State, take: &[bool]) {
        match &mut self.engine {
            Engine::L1(e) => e.merge(take),
            Engine::L2(e) => e.merge(take),
            Engine::L4(e) => e.merge(take),
            Engine::L8(e) => e.merge(take),
            Engine::L16(e) => e.merge(take),
        }
    }

    /// Back to the marked lanes; the next frame scales their steps to its h.
    fn rewind(&mut self, state: &mut State, keep: &State) {
        match &mut self.engine {
            Engine::L1(e) => e.rewind(state, keep),
            Engine::L2(e) => e.rewind(state, keep),
            Engine::L4(e) => e.rewind(state, keep),
            Engine::L8(e) => e.rewind(state, keep),
            Engine::L16(e) => e.rewind(state, keep),
        }
    }

    /// From the lanes, computed at the end of the frame (the contract's definitions, which the
    /// first frame uses).
    fn elastic_energy(&self, setup: &Setup, state: &State) -> f64 {
        match self.summary() {
            Some(f) => f.elastic,
            None => heft_strand_common::forces::elastic_energy(setup, state),
        }
    }

    /// As [`Method::elastic_energy`].
    fn momentum_and_energy(&self, setup: &Setup, state: &State) -> (V3, f64, f64) {
        match self.summary() {
            Some(f) => (f.momentum, f.kinetic, f.gravity),
            None => heft_strand_common::forces::momentum_and_energy(setup, state),
        }
    }

    /// A look at the lanes with a margin (see [`Summary`]); the frame loop's own check runs
    /// whenever this is false.
    fn surely_intact(&self, _setup: &Setup, _state: &State) -> bool {
        self.summary().is_some_and(|f| f.surely_intact)
    }

    /// XPBD has no step limit (see the node notes).
    fn stability_limit(_setup: &Setup, _wind: bool) -> Option<f64> {
        None
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The threads' shares are contiguous, in order, cover every group once, and differ in
    /// size by at most one: 13 groups on 4 threads are 3, 3, 3 and 4.
    #[test]
    fn shares_are_contiguous_and_even() {
        let sizes: Vec<usize> = (0..4).map(|k| share(k, 4, 13).len()).collect();
        assert_eq!(sizes, [3, 3, 3, 4]);
        for (threads, groups) in [(1, 1), (2, 2), (2, 3), (3, 64), (4, 5), (7, 100)] {
            let mut next = 0;
            for k in 0..threads {
                let r = share(k, threads, groups);
                assert_eq!(r.start, next, "{threads} threads, {groups} groups: thread {k}");
                assert!(r.len() == groups / threads || r.len() == groups / threads + 1);
                next = r.end;
            }
            assert_eq!(next, groups);
        }
    }

    /// A frame runs on at most one thread per lane group, and on no more threads than have
    /// `MIN_WORK_PER_THREAD` each: 1024 strands of 32 particles at 20 substeps (64 groups, 40960
    /// group particle-substeps) use 8 of 8 allowed; 208 strands (13 groups, 8320) 2 of 8; 16
    /// strands (one group) 1.
    #[test]
    fn a_frame_uses_threads_only_for_enough_work() {
        assert_eq!(threads_for(8, 64, 32, 20), 8);
        assert_eq!(threads_for(2, 64, 32, 20), 2);
        assert_eq!(threads_for(8, 13, 32, 20), 2);
        assert_eq!(threads_for(8, 1, 4096, 80), 1);
        assert_eq!(threads_for(8, 3, 2, 1), 1);
        assert_eq!(threads_for(1, 64, 32, 20), 1);
        assert_eq!(lanes_for(1), 1);
        assert_eq!(lanes_for(2), 2);
        assert_eq!(lanes_for(3), 4);
        assert_eq!(lanes_for(8), 8);
        assert_eq!(lanes_for(9), 16);
    }
}

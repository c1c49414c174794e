//! `strand.verlet`: position Verlet with distance constraints (Jakobsen 2001).

use heft_node_sdk::{Io, Node, NodeError, NodeSpec, Params};
use heft_strand_common::forces::{add_bending_forces, bending_energy_all};
use heft_strand_common::geometry::{axpy, dot, scale, sub};
use heft_strand_common::{FrameEnv, Method, Setup, State, V3, step_limit};

/// Gauss-Seidel passes over the segments per substep, alternating root-to-tip and tip-to-root.
pub const PASSES: usize = 4;

/// The node type `strand.verlet`.
#[derive(Debug)]
pub struct Verlet;

/// Strands advanced in lockstep: their constraint passes are independent chains of
/// dependent square roots and divisions, so interleaving them lets the processor overlap their
/// latencies. Results do not depend on it (each strand's arithmetic is unchanged).
const LANES: usize = 4;

/// Position Verlet x_new = 2 x - x_prev + h^2 a, then [`PASSES`] Gauss-Seidel passes that
/// put each segment back to its rest length (mass-weighted), then v = (x_new - x) / h.
#[derive(Debug, Clone)]
pub struct VerletMethod {
    prev: Vec<V3>,
    f: Vec<V3>,
    /// 1 / (w_a + w_b) per segment (0 when both ends are pinned).
    inv_w: Vec<f64>,
    /// Scratch of the initial projection ([`project_onto_constraints`]).
    start: StartScratch,
    started: bool,
    /// The step of the last frame, s.
    last_h: f64,
    /// `prev`, `started` and `last_h` at the last [`Method::mark`].
    marked: (Vec<V3>, bool, f64),
    /// `prev` and `last_h` of a try of a frame held while it runs again ([`Method::hold`]).
    held: (Vec<V3>, f64),
}

/// Newton iterations of the initial projection at most. Measured on 200 hanging or free chains
/// per size, each particle jittered by up to 0 to 1/4 segment per axis: every one reached
/// START_TOLERANCE, in at most 6 iterations at 8 segments (mean 3.7), 12 at 32 (5.4), 47 at 128
/// (9.9) and 74 at 256 (13.2). A state still off the constraints after these keeps its
/// residual, which the first substep's projection turns into velocity.
pub const START_ITERATIONS: usize = 200;
/// The initial projection stops once every segment is within this fraction of its rest length.
pub const START_TOLERANCE: f64 = 1.0e-13;
/// Halvings of a Newton step at most in the line search.
const HALVINGS: usize = 40;

/// Scratch buffers of [`project_onto_constraints`] for one strand.
#[derive(Debug, Clone, Default)]
pub struct StartScratch {
    /// Unit segment directions.
    n: Vec<V3>,
    /// Constraint values |x_{j+1} - x_j| - l0, then the multipliers.
    c: Vec<f64>,
    /// The Thomas algorithm's modified super-diagonal.
    cp: Vec<f64>,
    /// The Newton step of each particle.
    step: Vec<V3>,
    /// A candidate iterate of the line search.
    trial: Vec<V3>,
}

impl StartScratch {
    /// Buffers for strands of `particles` particles.
    pub fn new(particles: usize) -> StartScratch {
        let segs = particles.saturating_sub(1);
        StartScratch {
            n: vec![[0.0; 3]; segs],
            c: vec![0.0; segs],
            cp: vec![0.0; segs],
            step: vec![[0.0; 3]; particles],
            trial: vec![[0.0; 3]; particles],
        }
    }
}

/// The constraint violations of one strand, over the segments whose ends are not both pinned:
/// (the sum of (|x_{j+1} - x_j| - l0)^2, the largest |(|x_{j+1} - x_j| - l0)|), both NaN when a
/// position is not finite.
fn violation(x: &[V3], w: &[f64], l0: f64) -> (f64, f64) {
    let (mut sum, mut worst) = (0.0, 0.0f64);
    for (j, pair) in x.windows(2).enumerate() {
        if w[j] + w[j + 1] == 0.0 {
            continue;
        }
        let d = sub(pair[1], pair[0]);
        let e = dot(d, d).sqrt() - l0;
        if e.is_nan() {
            return (f64::NAN, f64::NAN);
        }
        sum += e * e;
        worst = worst.max(e.abs());
    }
    (sum, worst)
}

/// Moves the particles of one strand (inverse masses `w`, 0 for pinned ones, which do not move)
/// onto its distance constraints |x_{j+1} - x_j| = l0 by Newton iterations on the constraints:
/// each solves J W J^T lambda = C, a tridiagonal system for a chain (Thomas algorithm), for the
/// step -W J^T lambda, the mass-weighted least-norm step onto the linearised constraints (the
/// "fast projection" of Goldenthal, Harmon, Fattal, Bercovier & Grinspun 2007, "Efficient
/// Simulation of Inextensible Cloth", SIGGRAPH, sec. 4, from memory). The step is a descent
/// direction of phi = sum C_j^2 (d phi / d alpha = -2 phi along it), so a backtracking line search
/// (halve it until phi falls by at least 1e-4 x 2 alpha phi: Armijo's rule, Nocedal & Wright 2006,
/// Numerical Optimization, 2nd ed., sec. 3.1) keeps a long, strongly jittered chain from
/// overshooting, and full steps give Newton's quadratic convergence near the constraints. Every
/// step is a sum of equal and opposite moves along the segments, weighted by inverse mass, so a
/// free strand's centre of mass does not move. An unsatisfiable state (pins farther apart than
/// the strand is long) ends where phi stops falling. Returns the largest violation left, m.
pub fn project_onto_constraints(x: &mut [V3], w: &[f64], l0: f64, scratch: &mut StartScratch) -> f64 {
    let p = x.len();
    let (mut phi, mut worst) = violation(x, w, l0);
    if p < 2 || phi.is_nan() {
        return worst;
    }
    let segs = p - 1;
    let StartScratch { n, c, cp, step, trial } = scratch;
    for _ in 0..START_ITERATIONS {
        if worst <= START_TOLERANCE * l0 {
            break;
        }
        for j in 0..segs {
            let d = sub(x[j + 1], x[j]);
            let l = dot(d, d).sqrt();
            n[j] = if l > 0.0 { scale(d, 1.0 / l) } else { [0.0; 3] };
            c[j] = if w[j] + w[j + 1] > 0.0 { l - l0 } else { 0.0 };
        }
        // Thomas algorithm on A lambda = C, A_jj = w_j + w_{j+1}, A_{j,j+1} = A_{j+1,j} =
        // -w_{j+1} n_j . n_{j+1} (symmetric positive definite for independent rows; a row whose
        // ends are both pinned is zero and decoupled: its multiplier is 0).
        for j in 0..segs {
            let diag = w[j] + w[j + 1];
            let sub_diag = if j > 0 { -w[j] * dot(n[j - 1], n[j]) } else { 0.0 };
            let sup_diag = if j + 1 < segs {
                -w[j + 1] * dot(n[j], n[j + 1])
            } else {
                0.0
            };
            let (cp_prev, c_prev) = if j > 0 { (cp[j - 1], c[j - 1]) } else { (0.0, 0.0) };
            let denom = diag - sub_diag * cp_prev;
            if denom > 0.0 {
                cp[j] = sup_diag / denom;
                c[j] = (c[j] - sub_diag * c_prev) / denom;
            } else {
                cp[j] = 0.0;
                c[j] = 0.0;
            }
        }
        for j in (0..segs.saturating_sub(1)).rev() {
            c[j] -= cp[j] * c[j + 1];
        }
        // step_i = -w_i (J^T lambda)_i, (J^T lambda)_i = n_{i-1} lambda_{i-1} - n_i lambda_i.
        for (i, st) in step.iter_mut().enumerate() {
            let mut jt = [0.0; 3];
            if i < segs {
                jt = scale(n[i], c[i]);
            }
            if i > 0 {
                jt = axpy(jt, -c[i - 1], n[i - 1]);
            }
            *st = scale(jt, w[i]);
        }
        let mut alpha = 1.0;
        let mut accepted = None;
        for _ in 0..HALVINGS {
            for ((t, xi), st) in trial.iter_mut().zip(x.iter()).zip(step.iter()) {
                *t = axpy(*xi, alpha, *st);
            }
            let (phi_t, worst_t) = violation(trial, w, l0);
            if phi_t <= phi * (1.0 - 2.0e-4 * alpha) {
                accepted = Some((phi_t, worst_t));
                break;
            }
            alpha *= 0.5;
        }
        let Some((phi_t, worst_t)) = accepted else {
            break;
        };
        x.copy_from_slice(trial);
        (phi, worst) = (phi_t, worst_t);
    }
    worst
}

/// Projects every segment of `lanes` consecutive strands of `p` particles (strand-major in
/// `x`) to the rest length `l0`: [`PASSES`] passes, alternating root-to-tip and tip-to-root.
/// Each correction moves the two ends along the segment in proportion to their inverse masses
/// `w` (a pinned end, inverse mass 0, does not move); `inv_w[j]` = 1 / (w_j + w_{j+1}).
#[inline]
pub fn project_lengths(x: &mut [V3], lanes: usize, p: usize, w: &[f64], inv_w: &[f64], l0: f64) {
    let segs = p - 1;
    for pass in 0..PASSES {
        for n in 0..segs {
            let j = if pass % 2 == 0 { n } else { segs - 1 - n };
            let (wa, wb, iw) = (w[j], w[j + 1], inv_w[j]);
            if iw == 0.0 {
                continue;
            }
            for lane in 0..lanes {
                let a = lane * p + j;
                let d = sub(x[a + 1], x[a]);
                let l2 = dot(d, d);
                if l2 == 0.0 {
                    continue;
                }
                let l = l2.sqrt();
                let corr = scale(d, (l - l0) / l * iw);
                x[a] = axpy(x[a], wa, corr);
                x[a + 1] = axpy(x[a + 1], -wb, corr);
            }
        }
    }
}

impl Method for VerletMethod {
    fn new(setup: &Setup) -> Self {
        let w = &setup.inv_mass;
        VerletMethod {
            prev: vec![[0.0; 3]; setup.total_particles()],
            f: vec![[0.0; 3]; LANES * setup.particles],
            inv_w: (0..setup.segments)
                .map(|j| {
                    let ws = w[j] + w[j + 1];
                    if ws > 0.0 { 1.0 / ws } else { 0.0 }
                })
                .collect(),
            start: StartScratch::new(setup.particles),
            started: false,
            last_h: f64::NAN,
            marked: (Vec::new(), false, f64::NAN),
            held: (Vec::new(), f64::NAN),
        }
    }

    fn hold(&mut self, state: &State, held: &mut State) {
        held.clone_from(state);
        self.held.0.clone_from(&self.prev);
        self.held.1 = self.last_h;
    }

    /// The strands of `take` back to the held try, the others' x - x_prev scaled to its step.
    fn merge(&mut self, state: &mut State, held: &State, take: &[bool]) {
        let p = state.x.len() / take.len().max(1);
        let ratio = self.held.1 / self.last_h;
        for (s, &t) in take.iter().enumerate() {
            for n in s * p..(s + 1) * p {
                if t {
                    (state.x[n], state.v[n], self.prev[n]) = (held.x[n], held.v[n], self.held.0[n]);
                } else {
                    self.prev[n] = axpy(state.x[n], -ratio, sub(state.x[n], self.prev[n]));
                }
            }
        }
        self.last_h = self.held.1;
    }

    fn mark(&mut self, state: &State, keep: &mut State) {
        keep.clone_from(state);
        self.marked.0.clone_from(&self.prev);
        (self.marked.1, self.marked.2) = (self.started, self.last_h);
    }

    fn rewind(&mut self, state: &mut State, keep: &State) {
        state.clone_from(keep);
        self.prev.clone_from(&self.marked.0);
        (self.started, self.last_h) = (self.marked.1, self.marked.2);
    }

    fn frame(&mut self, setup: &Setup, state: &mut State, env: &FrameEnv<'_>) {
        let h = env.h;
        let inv_h = 1.0 / h;
        let start = !self.started;
        self.started = true;
        if !start && self.last_h != h {
            // A step of another length than the last frame's (a frame run again at more
            // substeps, or the one after it): x - x_prev scaled to keep the velocity.
            let ratio = h / self.last_h;
            for (prev, x) in self.prev.iter_mut().zip(&state.x) {
                *prev = axpy(*x, -ratio, sub(*x, *prev));
            }
        }
        self.last_h = h;
        let p = setup.particles;
        let (l0, c_b) = (setup.rest_length, &setup.bend_c[..]);
        let colliders = env.has_colliders();
        let mut s0 = 0;
        while s0 < setup.strands {
            let lanes = LANES.min(setup.strands - s0);
            let range = s0 * p..(s0 + lanes) * p;
            let xs = &mut state.x[range.clone()];
            let vs = &mut state.v[range.clone()];
            let prevs = &mut self.prev[range];
            if start {
                // An initial state off the constraints (segments not at rest length, from
                // `initial_positions`) is first put on them, and x_prev is set from the
                // projected positions below, so the correction moves x_prev with x and is not
                // turned into velocity: otherwise the first substep's projection would make it
                // a velocity (x_new - x_prev) / h, injecting energy 1/2 m (correction / h)^2.
                // Then the textbook start of position Verlet from x0 and v0 (second order):
                // x_prev = x0 - h v0 + h^2 a(x0, v0) / 2 (Verlet 1967; Hairer, Lubich & Wanner 2003,
                // Acta Numerica 12, "Geometric numerical integration illustrated by the
                // Stormer-Verlet method", sec. 1.2).
                // A settled strand is already where this solver holds it (its passes leave a
                // hanging chain slightly long): projecting it would move it off that and start
                // it bouncing.
                if !setup.settled_start {
                    for lane in 0..lanes {
                        project_onto_constraints(
                            &mut xs[lane * p..(lane + 1) * p],
                            &setup.inv_mass,
                            l0,
                            &mut self.start,
                        );
                    }
                }
                let ambient = env.ambient(0);
                for lane in 0..lanes {
                    let (x, v) = (&xs[lane * p..(lane + 1) * p], &vs[lane * p..(lane + 1) * p]);
                    let prev = &mut prevs[lane * p..(lane + 1) * p];
                    let f = &mut self.f[..p];
                    f.fill([0.0; 3]);
                    add_bending_forces(x, c_b, f);
                    for i in 0..p {
                        // A settled strand starts in equilibrium under the apparent gravity g - a
                        // of its anchor: the constraints' forces, which a(x0, v0) leaves out,
                        // balance it, so it accelerates with the anchor.
                        let a = if setup.pinned[i] {
                            [0.0; 3]
                        } else if setup.settled_start {
                            env.anchor_acceleration_at(0.0)
                        } else {
                            axpy(ambient.accel(x[i], v[i]), setup.inv_mass[i], f[i])
                        };
                        prev[i] = axpy(axpy(x[i], -h, v[i]), 0.5 * h * h, a);
                    }
                }
            }
            for k in 0..env.substeps {
                let ambient = env.ambient(k);
                for lane in 0..lanes {
                    let x = &mut xs[lane * p..(lane + 1) * p];
                    let prev = &mut prevs[lane * p..(lane + 1) * p];
                    let f = &mut self.f[lane * p..(lane + 1) * p];
                    f.fill([0.0; 3]);
                    add_bending_forces(x, c_b, f);
                    for i in 0..p {
                        if setup.pinned[i] {
                            prev[i] = x[i];
                            continue;
                        }
                        let vel = scale(sub(x[i], prev[i]), inv_h);
                        let a = axpy(ambient.accel(x[i], vel), setup.inv_mass[i], f[i]);
                        // x_new = 2 x - x_prev + h^2 a = x + h vel + h^2 a
                        let xn = axpy(axpy(x[i], h, vel), h * h, a);
                        prev[i] = x[i];
                        x[i] = xn;
                    }
                    for (slot, &i) in setup.pins.iter().enumerate() {
                        x[i] = env.pin_target(s0 + lane, slot, k + 1);
                    }
                }
                project_lengths(xs, lanes, p, &setup.inv_mass, &self.inv_w, l0);
                let c = env.colliders(k + 1);
                for n in 0..lanes * p {
                    vs[n] = scale(sub(xs[n], prevs[n]), inv_h);
                    if colliders && !setup.pinned[n % p] && c.project(&mut xs[n], &mut vs[n]) {
                        prevs[n] = axpy(xs[n], -h, vs[n]);
                    }
                }
            }
            s0 += lanes;
        }
    }

    /// Segments are rigid, so only bending stores energy.
    fn elastic_energy(&self, setup: &Setup, state: &State) -> f64 {
        bending_energy_all(setup, state)
    }

    /// Only bending (explicit) and damping limit the step; the constraints do not.
    fn stability_limit(setup: &Setup, wind: bool) -> Option<f64> {
        step_limit(setup.omega_max_of(false), setup.damping_rate(wind))
    }

    const LIMIT_NAME: &'static str = "the stability limit of the explicit bending and damping terms";

    /// Segments are rigid: a segment beyond 10 rest lengths is the projection falling behind.
    const STRETCHABLE: bool = false;
}

impl Node for Verlet {
    fn spec() -> NodeSpec {
        heft_strand_common::node_spec(
            "verlet",
            "Strands as inextensible chains with bending: position Verlet with distance constraints.",
            "Method: position (Stormer-)Verlet, x_new = 2 x - x_prev + h^2 a with a = F_bend / m + g - damping v \
             - relative_damping (v - v_anchor) + drag (v_wind - v) and v = (x - x_prev) / h; then every segment \
             is projected back to its rest length l0 = length / segments by 4 Gauss-Seidel passes per substep \
             (alternating root-to-tip and tip-to-root; each correction shared by inverse mass, pinned particles \
             do not move); the velocity is v = (x_new - x) / h (Jakobsen 2001, Advanced Character Physics, GDC; \
             Verlet 1967, Phys. Rev. 159, 98). An initial state off the constraints (segments not at rest \
             length, from `initial_positions`) is first moved onto them by the mass-weighted fast projection \
             (Newton iterations on the chain's tridiagonal system; Goldenthal et al. 2007, Efficient Simulation of \
             Inextensible Cloth, SIGGRAPH), which keeps a free strand's centre of mass, with x_prev moved along so \
             the correction is not turned into velocity: frame 0 of the outputs is the state as given, frame 1 \
             follows from the projected one. The run starts with x_prev = x0 - h v0 + h^2 a0 / 2. Segments are \
             rigid: `stretch_stiffness` is ignored and the energy output counts bending only. The projection takes \
             energy out of a swing, at a rate that falls with h (first order): a 1 m pendulum released at 30 degrees \
             loses 15.7 % of its amplitude per period at 60 fps and 1 substep, 4.3 % at 4 substeps, 0.9 % at 20, and \
             2.2 % at 24 fps and the default 20 (measured). Masses are lumped \
             (half a segment's mass at each end of every segment). Bending: energy \
             (c / 2) |x_{i-1} - 2 x_i + x_{i+1}|^2 at each interior particle, c = bending_stiffness / l0^3 \
             (central-difference Euler-Bernoulli; Terzopoulos et al. 1987). Pins follow the anchor at every \
             substep; v_anchor is the anchor's rigid velocity field taken half a step back, like the backward \
             difference it is compared with. Colliders (spheres, or capsules from `collider_k` to \
             `collider_k_end`, straight or tapered) push particles to their nearest surface point after every \
             substep and remove their inward velocity relative to the surface there (x_prev is moved to match); \
             with `ground` on, the plane z = `ground_height` is a collider too. Contacts have Coulomb friction (`friction`, `static_friction`; Bridson, Fedkiw & Anderson 2002): the sliding velocity is slowed by mu_k times the push out, or stopped within mu_s times it, and the step's displacement with it. \
             Stability: the constraints are \
             unconditionally stable; the explicit bending term needs h < 2 / omega_b with omega_b^2 <= 16 c / m \
             (161 rad/s for the defaults: h < 1.2e-2 s; a 64-segment strand needs h < 4.4e-4 s), and damping \
             gamma needs h gamma < 2. Limits: the projection along the new segment direction removes kinetic \
             energy at first order in h (about 2 (w h)^2 per step at turning rate w: a pendulum released at \
             60 deg swings 4.6e-4 short in period at h = 1e-4 s), so the method is dissipative, not symplectic, \
             and positions converge at first order in h (the conformance kit measures orders 0.95 to 1.01); \
             4 passes leave a residual stretch under load \
             that grows as (segments h)^2 (hanging defaults at 24 fps: strain 1.9e-3, 0.7 mm on 0.4 m; \
             32 segments: 1.3e-2), cut quadratically by more substeps; velocities lag half a step (backward \
             difference); no self-collision, no twist; colliders act on particles only; pins are not pushed out of \
             colliders.",
        )
    }

    fn output_points(params: &Params, inputs: &[usize]) -> Result<Vec<usize>, NodeError> {
        heft_strand_common::output_points(params, inputs)
    }

    fn check(params: &Params, inputs: &[usize], timeline: heft_node_sdk::Timeline) -> Vec<heft_node_sdk::CheckProblem> {
        heft_strand_common::check::<VerletMethod>(params, inputs, timeline)
    }

    fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
        heft_strand_common::evaluate::<VerletMethod>(params, io)
    }

    const WINDOWED: bool = true;

    fn advance(params: &Params, carry: &mut heft_node_sdk::Carry, io: &mut Io<'_>) -> Result<(), NodeError> {
        heft_strand_common::advance::<VerletMethod>(params, carry, io)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A fixed table of jitters in [-1, 1] (no randomness).
    fn wobble(i: usize, c: usize) -> f64 {
        ((7 * i + 3 * c + 1) % 11) as f64 / 5.0 - 1.0
    }

    fn chain(p: usize, l0: f64, jitter: f64) -> Vec<V3> {
        (0..p)
            .map(|i| {
                [
                    jitter * l0 * wobble(i, 0),
                    jitter * l0 * wobble(i, 1),
                    -(i as f64) * l0 + jitter * l0 * wobble(i, 2),
                ]
            })
            .collect()
    }

    fn lengths(x: &[V3]) -> Vec<f64> {
        x.windows(2)
            .map(|w| dot(sub(w[1], w[0]), sub(w[1], w[0])).sqrt())
            .collect()
    }

    /// Hanging from a pin (inverse mass 0), jittered by up to a quarter segment per axis: every
    /// segment ends at its rest length to rounding and the pin does not move.
    #[test]
    fn a_pinned_chain_is_put_on_its_constraints_and_the_pin_stays() {
        for p in [2usize, 5, 13, 257] {
            let l0 = 0.4 / (p - 1) as f64;
            let w: Vec<f64> = (0..p).map(|i| if i == 0 { 0.0 } else { 1.0 / (0.05 * l0) }).collect();
            let mut x = chain(p, l0, 0.25);
            let pin = x[0];
            let before = lengths(&x).iter().map(|l| (l - l0).abs()).fold(0.0, f64::max);
            assert!(before > 0.05 * l0, "{before}");
            let left = project_onto_constraints(&mut x, &w, l0, &mut StartScratch::new(p));
            assert_eq!(x[0], pin);
            for l in lengths(&x) {
                assert!((l - l0).abs() <= 1e-13 * l0, "{p} particles: {l} vs {l0}");
            }
            assert!(left <= 1e-13 * l0, "{left}");
        }
    }

    /// Pins 1.5 strand lengths apart cannot be met: the projection keeps its best iterate, stays
    /// finite, leaves the pins where they are and does not make the violation worse.
    #[test]
    fn an_unsatisfiable_state_is_left_finite_and_no_worse() {
        let p = 9;
        let l0 = 0.05;
        let mut w = vec![1.0; p];
        w[0] = 0.0;
        w[p - 1] = 0.0;
        let span = 1.5 * l0 * (p - 1) as f64;
        let mut x: Vec<V3> = (0..p)
            .map(|i| [span * i as f64 / (p - 1) as f64, 0.01 * wobble(i, 1), 0.0])
            .collect();
        let (a, b) = (x[0], x[p - 1]);
        let before = violation(&x, &w, l0).1;
        let left = project_onto_constraints(&mut x, &w, l0, &mut StartScratch::new(p));
        assert!(x.iter().flatten().all(|c| c.is_finite()));
        assert_eq!((x[0], x[p - 1]), (a, b));
        assert!(left <= before && left == violation(&x, &w, l0).1, "{left} vs {before}");
        // At best the stretch is shared: no segment can be shorter than span / segments.
        assert!(left >= 0.5 * l0 - 1e-12, "{left}");
    }
}

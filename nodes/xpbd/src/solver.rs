//! The XPBD strand solver core: strands laid across SIMD lanes; per substep ("small steps") a
//! sweep of the bending constraints, a direct solve of each strand's stretch constraints, and a
//! last sweep.
//!
//! Method: Macklin, Muller & Chentanez 2016, "XPBD: Position-Based Simulation of Compliant
//! Constrained Dynamics" (MIG), eqs. 12 and 17-18 (the Newton step of the compliant system and
//! its Gauss-Seidel form, with alpha_tilde = alpha / h^2), and Macklin, Storey, Lu, Terdiman,
//! Chentanez, Jeschke & Muller 2019, "Small Steps in Physics Simulation" (SCA), Algorithm 1 (one
//! iteration per substep, lambda reset to 0 every substep). Equation and algorithm numbers are
//! from memory.
//!
//! One substep of one lane group ([`substep`] has the details of 3 to 5):
//!
//! 1. predict x* = x + h v* in two split steps: damping, backward Euler in the linear velocity
//!    terms, v' = (v + h (c_r v_anchor(x) + drag v_wind(x))) / (1 + h gamma) with
//!    gamma = damping + c_r (+ drag), then the gravity kick v* = v' + h g. Damping first keeps
//!    it out of the equilibrium (at rest the constraints carry exactly m g) and leaves a particle
//!    moving with a falling anchor unaffected. The velocity is held as the particle's step over
//!    the last substep, s = h v = x - x_prev, so the prediction reads s* = decay s + h^2 decay
//!    (c_r v_anchor(x) + drag v_wind(x)) + h^2 g, x* = x + s*; x is left as it is and the
//!    particle's position is x + s until step 6;
//! 2. pins: the pinned particles are set on their targets at the end of the substep;
//! 3. one sweep root to tip of the bending constraints, each projected once with lambda = 0;
//! 4. the stretch constraints of the strand solved together: one Newton step of the XPBD
//!    system, tridiagonal along the chain, by the Thomas algorithm;
//! 5. its correction spread across the strand by the tension's geometric stiffness, then one
//!    sweep of the stretch constraints from the solve's multipliers; every correction is added
//!    to the step only, so the step stays x - x_prev (the position-based velocity) without that
//!    difference ever being taken;
//! 6. x += s; the velocity is s / h (read out at the end of a frame);
//! 7. colliders: each particle found inside a sphere or capsule is pushed to the nearest point
//!    of its surface and the inward normal component of its velocity (relative to the surface
//!    there) removed (its step set to h times the new velocity).
//!
//! Three passes over a group's particles: root to tip (steps 1 to 3 and the solve's forward
//! elimination), tip to root (its back substitution and the spreading's elimination), root to
//! tip (the spreading's back substitution, the last sweep in red-black order, steps 6 and 7).
//!
//! Layout: strands are grouped `N` at a time ("lanes"). For each particle index `i` of a group
//! the position and the step of its `N` strands are stored x, y, z rows of `N` lanes
//! ([`Particle`]: `[[[T; N]; 3]; 2]`), so the inner loops run the same arithmetic on all lanes
//! with no branches and the compiler vectorises them. The passes along a strand are sequential
//! in `i`; the lanes give the parallelism. Every lane's arithmetic is the same sequence of IEEE
//! operations whatever `N` is and whatever instruction set runs it (Rust neither reassociates
//! nor contracts floating-point operations; the fused multiply-adds are written out as
//! [`Real::mul_add`], rounded once on every path), so a strand's result depends neither on its
//! group nor on the CPU. The eliminations' chains of pivots are written so that each pivot
//! waits for the last one by a fused multiply-add and a division only: a single strand (one
//! lane) is bound by those chains. The node runs the substeps through `pulp`, which compiles
//! them once per instruction set and picks the widest the CPU has at run time; every function
//! on the substep path is `#[inline(always)]` so that it is compiled inside that choice.
//!
//! Precision: the lanes hold [`Real`] numbers, f64 (`xpbd.strand`) or f32
//! (`xpbd.strand_fast`), as positions relative to a per-strand origin: the strand's particle 0 at
//! the start of the frame, kept in f64 (see [`Lanes::load`]). Relative positions stay within a
//! strand length (plus a frame's travel) of zero whatever the world coordinates, so f32 keeps
//! a resolution of 3e-8 m on a 0.5 m strand where world positions 10 m from the origin would
//! have 9.5e-7 m. The step s = x - x_prev is held as a number of its own, not as the difference
//! of two positions, so the velocity keeps the type's relative precision (6e-8 in f32) however
//! small the step: a difference of f32 positions would quantise it to ulp(x) / h (1.4e-5 m/s on
//! a 0.5 m strand at h = 1/480 s), and a gravity kick h^2 g below half an ulp of x (h < 1/8000 s
//! on a 0.3 m strand) would vanish. Everything else (coefficients, pins, colliders, wind) is
//! computed in f64 and rounded once into the lanes.

use heft_strand_common::{Collider, Colliders};

use std::fmt::Debug;
use std::ops::{Add, AddAssign, Div, Mul, Neg, Sub, SubAssign};

/// The number type of the lanes: f64 or f32. Both have the same IEEE semantics, so the solver is
/// one generic code path.
pub trait Real:
    Copy
    + Debug
    + PartialOrd
    + Send
    + Sync
    + Add<Output = Self>
    + Sub<Output = Self>
    + Mul<Output = Self>
    + Div<Output = Self>
    + AddAssign
    + SubAssign
    + Neg<Output = Self>
    + 'static
{
    /// 0.
    const ZERO: Self;
    /// 1.
    const ONE: Self;
    /// Smallest squared length used in a normalisation (keeps 0/0 out: a zero vector times a
    /// finite factor stays zero); a normal number of the type.
    const TINY_SQ: Self;
    /// Machine epsilon of the type.
    const EPSILON: f64;
    /// The nearest value of the type.
    fn of(x: f64) -> Self;
    /// The exact f64 value.
    fn wide(self) -> f64;
    /// Square root (correctly rounded, IEEE).
    fn sqrt(self) -> Self;
    /// The larger of two values (the other one when one is NaN, as `f64::max`).
    fn max(self, other: Self) -> Self;
    /// The smaller of two values (the other one when one is NaN, as `f64::min`).
    fn min(self, other: Self) -> Self;
    /// self * a + b, rounded once (IEEE fused multiply-add).
    fn mul_add(self, a: Self, b: Self) -> Self;
}

/// `Real` for a float type, its smallest squared length given.
macro_rules! real {
    ($t:ty, $tiny:expr) => {
        impl Real for $t {
            const ZERO: $t = 0.0;
            const ONE: $t = 1.0;
            const TINY_SQ: $t = $tiny;
            const EPSILON: f64 = <$t>::EPSILON as f64;
            #[inline(always)]
            fn of(x: f64) -> $t {
                x as $t
            }
            #[inline(always)]
            fn wide(self) -> f64 {
                f64::from(self)
            }
            #[inline(always)]
            fn sqrt(self) -> $t {
                <$t>::sqrt(self)
            }
            #[inline(always)]
            fn max(self, other: $t) -> $t {
                <$t>::max(self, other)
            }
            #[inline(always)]
            fn min(self, other: $t) -> $t {
                <$t>::min(self, other)
            }
            #[inline(always)]
            fn mul_add(self, a: $t, b: $t) -> $t {
                <$t>::mul_add(self, a, b)
            }
        }
    };
}

real!(f64, 1.0e-300);
real!(f32, 1.0e-36);

/// One vector per lane: x, y, z, each `[T; N]`.
pub type Lanes3<T, const N: usize> = [[T; N]; 3];

/// One particle index of a lane group: its position and its step s = x - x_prev, each per lane.
pub type Particle<T, const N: usize> = [Lanes3<T, N>; 2];

/// The constants every strand of a node instance shares.
#[derive(Debug, Clone, PartialEq)]
pub struct Model {
    /// Rest length of every segment l0 (m).
    pub rest_length: f64,
    /// Inverse mass of every particle (1/kg), root first; 0 for a pinned particle.
    pub inv_mass: Vec<f64>,
    /// Stretch compliance of each segment alpha_j = 1 / k_j = l0 / (E A)_j (m/N), root first.
    pub stretch_compliance: Vec<f64>,
    /// Bending compliance of each interior particle i (at index i - 1), alpha_b = l0 / (E I)_i
    /// (1/(N m)); `None` when E I = 0 (no bending).
    pub bend_compliance: Option<Vec<f64>>,
    /// Total rate gamma of the velocity-proportional terms (1/s): damping + relative damping,
    /// plus drag when wind is connected.
    pub damping_rate: f64,
    /// Gravity vector (m/s^2).
    pub gravity: [f64; 3],
}

/// Per-substep coefficients, computed in f64 from the model and the substep h; those the lanes
/// use are rounded once to `T`.
#[derive(Debug, Clone, PartialEq)]
pub struct Coeffs<T> {
    /// Substep (s).
    pub h: f64,
    /// Backward-Euler factor of the damping step: decay = 1 / (1 + h gamma), gamma the model's
    /// damping rate: v' = decay (v + h (c_r v_anchor + drag v_wind)).
    pub decay: T,
    /// h^2 decay: the factor on a damping source term (c_r v_anchor, drag v_wind) in the
    /// position prediction.
    pub h2_decay: f64,
    /// h^2 g: gravity's share of the prediction.
    pub h2_gravity: [f64; 3],
    /// Rest length l0.
    pub rest_length: T,
    /// Inverse mass w_i of every particle.
    pub inv_mass: Vec<T>,
    /// Per segment j: the diagonal of the chain's system, w_j + w_{j+1} + alpha_j / h^2 (1 where
    /// that is 0: a segment between two pinned particles of a rigid strand, which nothing moves).
    pub diagonal: Vec<T>,
    /// Per segment j: 1 / `diagonal`.
    pub inv_diagonal: Vec<T>,
    /// Per segment j: alpha_j / h^2, the least pivot the elimination can meet (see [`substep`]).
    pub least_pivot: Vec<T>,
    /// Per interior particle i (at index i - 1): (w_{i-1} b, 2 w_i b, w_{i+1} b) with
    /// b = 1 / (w_{i-1} + 4 w_i + w_{i+1} + l0^2 alpha_b / h^2); empty without bending.
    pub bend: Vec<[T; 3]>,
}

impl<T: Real> Coeffs<T> {
    /// Coefficients for substep `h`.
    pub fn new(model: &Model, h: f64) -> Coeffs<T> {
        let n = model.inv_mass.len();
        let mut c = Coeffs {
            h: 0.0,
            decay: T::ONE,
            h2_decay: 0.0,
            h2_gravity: [0.0; 3],
            rest_length: T::of(model.rest_length),
            inv_mass: model.inv_mass.iter().map(|&w| T::of(w)).collect(),
            diagonal: vec![T::ONE; n.saturating_sub(1)],
            inv_diagonal: vec![T::ONE; n.saturating_sub(1)],
            least_pivot: vec![T::ZERO; n.saturating_sub(1)],
            bend: Vec::with_capacity(n.saturating_sub(2)),
        };
        c.update(model, h);
        c
    }

    /// Recomputes the coefficients for substep `h` in place (no allocation once sized).
    pub fn update(&mut self, model: &Model, h: f64) {
        let w = &model.inv_mass;
        let l0 = model.rest_length;
        self.h = h;
        let decay = 1.0 / (1.0 + h * model.damping_rate);
        self.decay = T::of(decay);
        self.h2_decay = h * h * decay;
        self.h2_gravity = model.gravity.map(|g| h * h * g);
        self.rest_length = T::of(l0);
        for (slot, &wi) in self.inv_mass.iter_mut().zip(w) {
            *slot = T::of(wi);
        }
        for (j, (p, &alpha)) in w.windows(2).zip(&model.stretch_compliance).enumerate() {
            let alpha_tilde = alpha / (h * h);
            let d = p[0] + p[1] + alpha_tilde;
            let d = if d > 0.0 { d } else { 1.0 };
            self.diagonal[j] = T::of(d);
            self.inv_diagonal[j] = T::of(1.0 / d);
            self.least_pivot[j] = T::of(alpha_tilde);
        }
        self.bend.clear();
        if let Some(alpha_b) = &model.bend_compliance {
            self.bend.extend(w.windows(3).zip(alpha_b).map(|(p, &a)| {
                let b = 1.0 / (p[0] + 4.0 * p[1] + p[2] + l0 * l0 * a / (h * h));
                [T::of(p[0] * b), T::of(2.0 * p[1] * b), T::of(p[2] * b)]
            }));
        }
    }
}

/// What the chain's direct solve keeps of each segment j between its two passes (see
/// [`substep`]): the unit direction n_j, and the factors of the elimination.
#[derive(Debug, Clone, Copy)]
pub struct Segment<T, const N: usize> {
    /// n_j = (x_{j+1} - x_j) / |x_{j+1} - x_j| at the predicted positions.
    pub n: Lanes3<T, N>,
    /// u_j = e_j / beta_j: the superdiagonal over the pivot (0 for the last segment).
    pub up: [T; N],
    /// rho_j = gamma_j / beta_j: the eliminated right-hand side over the pivot.
    pub rho: [T; N],
    /// dlambda_j of the solve, the multiplier pass 3 projects from.
    pub lam: [T; N],
}

impl<T: Real, const N: usize> Segment<T, N> {
    /// Zeroed scratch for one segment.
    pub fn zero() -> Segment<T, N> {
        Segment {
            n: [[T::ZERO; N]; 3],
            up: [T::ZERO; N],
            rho: [T::ZERO; N],
            lam: [T::ZERO; N],
        }
    }
}

/// What one substep of one lane group needs besides its state. Positions are relative to the
/// lanes' origins (see [`Lanes`]).
#[derive(Debug, Clone, Copy)]
pub struct SubstepInput<'a, T, const N: usize> {
    /// Where particle 0 is at the end of the substep (per lane), when pinned.
    pub pin_root: Option<&'a Lanes3<T, N>>,
    /// Where the last particle is at the end of the substep (per lane), when pinned.
    pub pin_tip: Option<&'a Lanes3<T, N>>,
    /// The position-independent part of the prediction per lane, h^2 g + h^2 decay c_r (v_lin +
    /// w x (o_lane - o)), m (v_lin, w and o the anchor's linear velocity, angular velocity and
    /// origin, o_lane the lane's origin).
    pub base: &'a Lanes3<T, N>,
    /// h^2 decay c_r w (w the anchor's angular velocity): the prediction adds spin x x; `None`
    /// when the anchor does not rotate (or relative damping is 0).
    pub spin: Option<[T; 3]>,
    /// h^2 decay drag v_wind(x) per particle and lane, when wind is connected.
    pub wind: Option<&'a [Lanes3<T, N>]>,
    /// Colliders at the end of the substep (world, f64), when any is connected, with the lanes'
    /// origins and each live collider as the lanes' cheap test sees it.
    pub colliders: Option<LaneColliders<'a, T, N>>,
    /// Particles `free.0..free.1` may be collided (pinned ones are not).
    pub free: (usize, usize),
}

/// The colliders of one substep as one lane group sees them.
#[derive(Debug, Clone, Copy)]
pub struct LaneColliders<'a, T, const N: usize> {
    /// The colliders (world, f64).
    pub world: &'a Colliders,
    /// The lanes' origins (world, f64).
    pub origin: &'a Lanes3<f64, N>,
    /// Per live collider, in the lanes' numbers: what the cheap test reads.
    pub near: &'a [Near<T, N>],
}

/// A live collider as the cheap test in the lanes sees it: a particle is a candidate when it
/// lies within sqrt(`r2`) of `start` (a sphere) or of the segment from `start` to
/// `start + axis` (a capsule, which lies inside the straight capsule of its larger radius).
/// `r2` is conservative: the test only picks the particles that the exact f64 projection
/// ([`Colliders::project`]) looks at.
#[derive(Debug, Clone, Copy)]
pub struct Near<T, const N: usize> {
    /// The sphere's centre, or the capsule's start, relative to each lane's origin.
    pub start: Lanes3<T, N>,
    /// end - start (world axes); zero for a sphere.
    pub axis: [T; 3],
    /// 1 / |axis|^2; zero for a sphere.
    pub inv_len2: T,
    /// The squared radius of the test.
    pub r2: T,
    /// True for a capsule (the segment test), false for a sphere (the distance to `start`).
    pub capsule: bool,
    /// True for the ground: the test is z below start's z plus the margin `r2` (not squared).
    pub ground: bool,
}

/// s* = decay s + base (+ spin x x) (+ wind). The predicted position is x + s*; x itself stays
/// the position at the start of the substep until the particle is final ([`finish`]).
#[inline(always)]
fn predict<T: Real, const N: usize>(
    c: &Coeffs<T>,
    inp: &SubstepInput<'_, T, N>,
    base: &Lanes3<T, N>,
    i: usize,
    p: &mut Particle<T, N>,
) {
    let [x, s] = p;
    for k in 0..3 {
        for l in 0..N {
            s[k][l] = c.decay.mul_add(s[k][l], base[k][l]);
        }
    }
    if let Some(w) = inp.spin {
        for l in 0..N {
            let (px, py, pz) = (x[0][l], x[1][l], x[2][l]);
            s[0][l] += w[1] * pz - w[2] * py;
            s[1][l] += w[2] * px - w[0] * pz;
            s[2][l] += w[0] * py - w[1] * px;
        }
    }
    if let Some(w) = inp.wind {
        // A local copy, as for the base in `substep`: otherwise the compiler, unable to tell
        // the wind slice from the steps, goes lane by lane.
        let wi = w[i];
        for k in 0..3 {
            for l in 0..N {
                s[k][l] += wi[k][l];
            }
        }
    }
}

/// A pinned particle: its step is the move to its target.
#[inline(always)]
fn pin<T: Real, const N: usize>(target: &Lanes3<T, N>, p: &mut Particle<T, N>) {
    let [x, s] = p;
    for k in 0..3 {
        for l in 0..N {
            s[k][l] = target[k][l] - x[k][l];
        }
    }
}

/// What the spreading of the correction keeps of each particle i between passes 2 and 3 (see
/// [`substep`]): dx_i = r_i + g_i dx_{i-1}.
#[derive(Debug, Clone, Copy)]
pub struct Spread<T, const N: usize> {
    /// The part of particle i's correction along the strand, applied as it is.
    pub along: Lanes3<T, N>,
    /// r_i.
    pub r: Lanes3<T, N>,
    /// g_i.
    pub g: [T; N],
}

/// The scratch of one substep of one lane group: one [`Segment`] per segment, one [`Spread`]
/// per particle.
#[derive(Debug, Clone)]
pub struct Scratch<T, const N: usize> {
    seg: Vec<Segment<T, N>>,
    spread: Vec<Spread<T, N>>,
}

impl<T: Real, const N: usize> Scratch<T, N> {
    /// Scratch for strands of `particles` particles (at least 2).
    pub fn new(particles: usize) -> Scratch<T, N> {
        Scratch {
            seg: vec![Segment::zero(); particles - 1],
            spread: vec![
                Spread {
                    along: [[T::ZERO; N]; 3],
                    r: [[T::ZERO; N]; 3],
                    g: [T::ZERO; N],
                };
                particles
            ],
        }
    }
}

/// The forward elimination's running values: the last pivot's inverse 1 / beta and rho of
/// the segment before the one being eliminated.
#[derive(Debug, Clone, Copy)]
struct Elimination<T, const N: usize> {
    inv_pivot: [T; N],
    rho: [T; N],
}

/// Forward elimination of segment k of the chain's system (see [`substep`]): its direction and
/// constraint C_k = |x_{k+1} - x_k| - l0 at the current positions x + s, the off-diagonal
/// e_{k-1} = -w_k n_{k-1} . n_k it shares with segment k - 1 (whose u_{k-1} it completes), the
/// pivot beta_k = d_k - e_{k-1} u_{k-1} and rho_k = (-C_k - e_{k-1} rho_{k-1}) / beta_k.
#[inline(always)]
#[allow(clippy::needless_range_loop)] // lane loops over several rows of one lane
fn eliminate<T: Real, const N: usize>(
    c: &Coeffs<T>,
    k: usize,
    p: &Particle<T, N>,
    q: &Particle<T, N>,
    seg: &mut [Segment<T, N>],
    run: &mut Elimination<T, N>,
) {
    let [px, ps] = p;
    let [qx, qs] = q;
    let l0 = c.rest_length;
    let (diag, floor) = (c.diagonal[k], c.least_pivot[k]);
    let mut n = [[T::ZERO; N]; 3];
    let mut rhs = [T::ZERO; N];
    for l in 0..N {
        let dx = (qx[0][l] - px[0][l]) + (qs[0][l] - ps[0][l]);
        let dy = (qx[1][l] - px[1][l]) + (qs[1][l] - ps[1][l]);
        let dz = (qx[2][l] - px[2][l]) + (qs[2][l] - ps[2][l]);
        let r = length(dx, dy, dz);
        let inv_r = T::ONE / r;
        n[0][l] = dx * inv_r;
        n[1][l] = dy * inv_r;
        n[2][l] = dz * inv_r;
        rhs[l] = l0 - r;
    }
    if k == 0 {
        let inv = T::ONE / diag;
        for l in 0..N {
            run.inv_pivot[l] = inv;
            run.rho[l] = rhs[l] * inv;
        }
    } else {
        let w = c.inv_mass[k];
        let prev = &mut seg[k - 1];
        for l in 0..N {
            let cos = prev.n[2][l].mul_add(n[2][l], prev.n[1][l].mul_add(n[1][l], prev.n[0][l] * n[0][l]));
            // e = -w cos.
            let wc = w * cos;
            prev.up[l] = -(wc * run.inv_pivot[l]);
            // The pivot is at least alpha_k / h^2 in exact arithmetic (the system is the sum of
            // a positive semi-definite J W J^T and alpha / h^2 times the identity); the floor
            // keeps rounding from taking it lower (and a NaN out). e^2 is formed off the chain
            // of pivots, so that each pivot waits for the last one's inverse by one fused
            // multiply-add, the floor and a division only.
            let beta = (-(wc * wc)).mul_add(run.inv_pivot[l], diag);
            let beta = if beta > floor { beta } else { floor };
            let inv = T::ONE / beta;
            run.inv_pivot[l] = inv;
            run.rho[l] = wc.mul_add(run.rho[l], rhs[l]) * inv;
        }
    }
    let s = &mut seg[k];
    s.n = n;
    s.rho = run.rho;
    s.up = [T::ZERO; N];
}

/// The length of (dx, dy, dz), at least sqrt(`TINY_SQ`) (so that 1 / length is finite).
#[inline(always)]
fn length<T: Real>(dx: T, dy: T, dz: T) -> T {
    dz.mul_add(dz, dy.mul_add(dy, dx * dx)).max(T::TINY_SQ).sqrt()
}

/// The bending constraint C = (p - 2 q + r) / l0 (a vector, linear in the positions, so one
/// projection solves it exactly), compliance alpha_b = l0 / (E I); positions x + s as in
/// [`eliminate`] and [`correct`], corrections into the steps.
#[inline(always)]
fn bend<T: Real, const N: usize>(kk: [T; 3], p: &mut Particle<T, N>, q: &mut Particle<T, N>, r: &mut Particle<T, N>) {
    let [ka, kb, kc] = kk;
    let (nka, nkc) = (-ka, -kc);
    let ([px, ps], [qx, qs], [rx, rs]) = (p, q, r);
    for k in 0..3 {
        for l in 0..N {
            let u = (px[k][l] - (qx[k][l] + qx[k][l]) + rx[k][l]) + (ps[k][l] - (qs[k][l] + qs[k][l]) + rs[k][l]);
            ps[k][l] = nka.mul_add(u, ps[k][l]);
            qs[k][l] = kb.mul_add(u, qs[k][l]);
            rs[k][l] = nkc.mul_add(u, rs[k][l]);
        }
    }
}

/// Particle `i`, which no constraint of this substep touches any more: finished, then pushed out
/// of the colliders unless pinned.
#[inline(always)]
fn done_with<T: Real, const N: usize>(
    c: &Coeffs<T>,
    inp: &SubstepInput<'_, T, N>,
    free: &std::ops::Range<usize>,
    i: usize,
    p: &mut Particle<T, N>,
) {
    finish(p);
    if let Some(col) = &inp.colliders
        && free.contains(&i)
    {
        collide(c.h, col, p);
    }
}

/// A particle no constraint of this substep touches any more: x += s.
#[inline(always)]
fn finish<T: Real, const N: usize>(p: &mut Particle<T, N>) {
    let [x, s] = p;
    for k in 0..3 {
        for l in 0..N {
            x[k][l] += s[k][l];
        }
    }
}

/// Projects the lanes of one particle that are inside a collider (rare: a cheap test in the
/// lanes' numbers first, see [`Near`]). The projection runs in f64 on the world position o + x
/// through [`Colliders::project`], with every radius grown by a margin of 2 ulps of the
/// relative position (and of twice the larger radius), so that rounding the result back into
/// the lanes cannot leave it inside; the velocity s / h goes through it too, and the step is
/// set to h times the velocity the projection left.
#[inline(always)]
fn collide<T: Real, const N: usize>(h: f64, col: &LaneColliders<'_, T, N>, p: &mut Particle<T, N>) {
    let [x, step] = p;
    let mut inside = false;
    for near in col.near {
        let (c, r2) = (&near.start, near.r2);
        if near.ground {
            for l in 0..N {
                inside |= x[2][l] < c[2][l] + r2;
            }
        } else if near.capsule {
            let (a, w) = (near.axis, near.inv_len2);
            for l in 0..N {
                let (dx, dy, dz) = (x[0][l] - c[0][l], x[1][l] - c[1][l], x[2][l] - c[2][l]);
                let t = ((dx * a[0] + dy * a[1] + dz * a[2]) * w).max(T::ZERO).min(T::ONE);
                let (ex, ey, ez) = (dx - t * a[0], dy - t * a[1], dz - t * a[2]);
                inside |= ex * ex + ey * ey + ez * ez < r2;
            }
        } else {
            for l in 0..N {
                let (dx, dy, dz) = (x[0][l] - c[0][l], x[1][l] - c[1][l], x[2][l] - c[2][l]);
                inside |= dx * dx + dy * dy + dz * dz < r2;
            }
        }
    }
    if !inside {
        return;
    }
    for l in 0..N {
        let o = [col.origin[0][l], col.origin[1][l], col.origin[2][l]];
        let rel = [x[0][l].wide(), x[1][l].wide(), x[2][l].wide()];
        let mut p = [0, 1, 2].map(|k| o[k] + rel[k]);
        let mut v = [0, 1, 2].map(|k| step[k][l].wide() / h);
        let reach = rel.iter().fold(0.0f64, |m, c| m.max(c.abs()));
        let grow = |s: Collider| match s {
            Collider::Sphere(mut b) => {
                b.radius += 2.0 * T::EPSILON * (reach + b.radius + b.radius);
                Collider::Sphere(b)
            }
            Collider::Ground(mut g) => {
                g.height += 2.0 * T::EPSILON * (reach + g.height.abs());
                Collider::Ground(g)
            }
            Collider::Capsule(c) => {
                let m = c.max_radius();
                let by = 2.0 * T::EPSILON * (reach + m + m);
                Collider::capsule(
                    c.start,
                    c.end,
                    c.start_radius + by,
                    c.end_radius + by,
                    c.start_velocity,
                    c.end_velocity,
                )
            }
        };
        if col.world.project_mapped(&mut p, &mut v, grow) {
            for k in 0..3 {
                x[k][l] = T::of(p[k] - o[k]);
                step[k][l] = T::of(h * v[k]);
            }
        }
    }
}

#[inline(always)]
fn triple<T>(s: &mut [T], i: usize) -> (&mut T, &mut T, &mut T) {
    let (a, rest) = s[i..i + 3].split_at_mut(1);
    let (b, c) = rest.split_at_mut(1);
    (&mut a[0], &mut b[0], &mut c[0])
}

/// How many segments the forward elimination trails the placing of particles: segment j - 2 is
/// eliminated right after particle j + 1 is placed and the bending constraint centred on j
/// projected, the last bend that moves particle j - 1.
pub const ELIMINATION_LAG: usize = 2;

/// Advances one lane group by one substep. `x` holds each particle's position and step
/// (particle-major, lanes inside; at least 2 particles); `scratch` is sized for its particles.
///
/// **Stretch: one direct solve of the whole chain.** The stretch constraints of a strand are
/// solved together: one Newton step of the XPBD system (Macklin et al. 2016, eq. 12 at
/// lambda = 0, as every substep starts it) (J W J^T + alpha / h^2) dlambda = -C(x*),
/// dx = W J^T dlambda, where C_j = |x_{j+1} - x_j| - l0, J its gradient, W the inverse masses.
/// Along a chain segment j shares a particle only with j - 1 and j + 1, so the system is
/// tridiagonal (the structure the direct solver for rods of Deul, Kugelstadt, Weiler & Bender
/// 2018, "Direct Position-Based Solver for Stiff Rods", Computer Graphics Forum, exploits for
/// trees): diagonal d_j = w_j + w_{j+1} + alpha_j / h^2, off-diagonal e_j = -w_{j+1} n_j . n_{j+1},
/// n_j the unit segment direction. Gaussian elimination without pivoting (the Thomas algorithm)
/// is stable on it: it is symmetric positive definite and weakly diagonally dominant
/// (|e_{j-1}| + |e_j| <= d_j). A chain's weight is carried in one substep, so the stretch is
/// Hooke's T / k at any segment count, where a Gauss-Seidel sweep leaves about h^2 g (n - 1) at
/// the top of a rigid chain.
///
/// **Transverse stability: the correction spread by the tension.** A tension T pulls a
/// strand's particles back across it with a stiffness T / l0 per segment (its geometric
/// stiffness); a linear solve at the predicted positions applies that pull explicitly, which is
/// stable only while h^2 omega^2 < 4/3 for the fastest transverse wave, omega = 2 sqrt(T / (m l0)):
/// a 40 cm strand of 256 segments at 20 substeps of 1/24 s has h^2 omega^2 = 28 and zigzags
/// apart. Following Tournier, Nesme, Gilles & Faure 2015 ("Stable Constrained Dynamics", ACM
/// TOG 34(4)) and Andrews, Teichmann & Kry 2017 ("Geometric Stiffness for Real-time Constrained
/// Multibody Dynamics", Computer Graphics Forum 36(2)), the step is taken with the geometric
/// stiffness K in the system: (M + h^2 K) dx = J^T dlambda instead of M dx = J^T dlambda. Here K
/// is approximated by the strand's graph Laplacian with the weight kappa_j = max(-lambda_j, 0) /
/// l0 on segment j (h^2 K's norm, tension only; lambda = h^2 times the force), isotropic
/// rather than across the segment only: its rows sum to zero, so the correction keeps the
/// strand's momentum exactly, a smooth correction (a chain carrying its weight) passes
/// unchanged, and a transverse zigzag mode is advanced as by backward Euler,
/// x' = (x + h v) / (1 + h^2 omega^2), for any step. Only the part of a particle's correction
/// across the strand's tangent is spread; the part along it is applied as the solve made it, so
/// the stretch is the solve's (spreading the whole correction moves Hooke's stretch and leaves
/// single segments of a swinging 256-segment strand 1.6 % long). The system is tridiagonal in
/// the particles, one for x, y and z alike, solved by the Thomas algorithm from the tip
/// (pivots at least 1).
///
/// **Cleaning up.** Last, one Gauss-Seidel sweep of the same constraints from the multipliers
/// of the solve (XPBD eq. 18 with lambda = dlambda_j): each projection is exact along its
/// segment, so it takes out the second-order remainder of the linear solve and what the
/// spreading left, and leaves a solved segment (-C = alpha_tilde lambda) as it is. The
/// strands' stretch hardly needs it (at 32, 256 and 4096 segments the figures agree to 0.03 %
/// of the length without it), but f32 lanes do: without it they drift 4.2e-4 m from the f64
/// lanes over 2 s of a busy scene (tests/precision.rs), with it 2.2e-6 m. The sweep runs in
/// red-black order: the even segments, which share no particle, then the odd ones. Root to tip
/// one after the other, every projection would wait for the one before it (a square root and
/// a division); in this order no chain of dependent projections is longer than two, so the
/// lanes' projections overlap in the processor.
///
/// **Order.** Pass 1, root to tip: place particle j + 1 (predict, or pin), project the
/// bending constraint centred on j (Gauss-Seidel: bending is linear and local), eliminate
/// segment j - 2 ([`ELIMINATION_LAG`]). Pass 2, tip to root: back-substitute dlambda_j =
/// rho_j - u_j dlambda_{j+1}, and eliminate particle j + 1's row of the spreading system.
/// Pass 3, root to tip: back-substitute particle j + 1's correction; when segment j is even,
/// project it, then the odd segment j - 1, and finish particles j - 1 and j (x += s) and push
/// them out of the colliders. Until then a particle's
/// position is x + s with x its position at the start of the substep: the constraints read
/// differences of x (exact for nearby particles) plus differences of s (small numbers, at full
/// relative precision) and write only s.
#[inline(always)]
pub fn substep<T: Real, const N: usize>(
    c: &Coeffs<T>,
    inp: &SubstepInput<'_, T, N>,
    x: &mut [Particle<T, N>],
    scratch: &mut Scratch<T, N>,
) {
    let n = x.len();
    let m = n - 1;
    let bending = !c.bend.is_empty();
    let free = inp.free.0..inp.free.1;
    let Scratch { seg, spread } = scratch;
    // A local copy: the compiler then knows the steps written below are not the base it reads.
    let base = *inp.base;
    match inp.pin_root {
        Some(t) => pin(t, &mut x[0]),
        None => predict(c, inp, &base, 0, &mut x[0]),
    }
    let mut run = Elimination {
        inv_pivot: [T::ZERO; N],
        rho: [T::ZERO; N],
    };
    for j in 0..m {
        match inp.pin_tip {
            Some(t) if j + 2 == n => pin(t, &mut x[j + 1]),
            _ => predict(c, inp, &base, j + 1, &mut x[j + 1]),
        }
        if bending && j >= 1 {
            let (p, q, r) = triple(x, j - 1);
            bend(c.bend[j - 1], p, q, r);
        }
        if j >= ELIMINATION_LAG {
            let k = j - ELIMINATION_LAG;
            eliminate(c, k, &x[k], &x[k + 1], seg, &mut run);
        }
    }
    for k in m.saturating_sub(ELIMINATION_LAG)..m {
        eliminate(c, k, &x[k], &x[k + 1], seg, &mut run);
    }
    // Pass 2. Per particle i, from the tip: dlambda of the segments on its root's side
    // (i - 1) and its tip's side (i), the impulse b_i = n_{i-1} dlambda_{i-1} - n_i dlambda_i,
    // and row i of (I + W L) dx = W b, rows below eliminated: dx_i = r_i + g_i dx_{i-1}.
    let inv_l0 = T::ONE / c.rest_length;
    let half = T::of(0.5);
    let mut lam_tip = [T::ZERO; N];
    let mut n_tip = [[T::ZERO; N]; 3];
    let mut kappa_tip = [T::ZERO; N];
    let mut wr_tip = [T::ZERO; N];
    let mut inv_tip = [T::ZERO; N];
    let mut r_tip = [[T::ZERO; N]; 3];
    for i in (0..n).rev() {
        let w = c.inv_mass[i];
        let mut lam_root = [T::ZERO; N];
        let mut n_root = [[T::ZERO; N]; 3];
        let mut kappa_root = [T::ZERO; N];
        if i >= 1 {
            let sg = &mut seg[i - 1];
            for l in 0..N {
                lam_root[l] = (-sg.up[l]).mul_add(lam_tip[l], sg.rho[l]);
                kappa_root[l] = (T::ZERO - lam_root[l]).max(T::ZERO) * inv_l0;
            }
            sg.lam = lam_root;
            n_root = sg.n;
        }
        // The correction w_i b_i = w_i (n_{i-1} dlambda_{i-1} - n_i dlambda_i), split along the
        // strand's tangent at i, t = n_{i-1} + n_i, and across it, along n_{i-1} - n_i (which is
        // orthogonal to t, both directions being unit vectors):
        // w_i b_i = w_i / 2 (dlambda_{i-1} - dlambda_i) t + w_i / 2 (dlambda_{i-1} + dlambda_i)
        // (n_{i-1} - n_i). Only the part across is spread. An end particle has one segment:
        // its correction lies along it, all of it.
        let (wa, wb) = if i == 0 || i == m {
            (w, T::ZERO)
        } else {
            (half * w, half * w)
        };
        let sp = &mut spread[i];
        for l in 0..N {
            let a = wa * (lam_root[l] - lam_tip[l]);
            let b = wb * (lam_root[l] + lam_tip[l]);
            // The pivot 1 + w kappa_{i-1} + w kappa_i (1 - g_{i+1}) with g_{i+1} =
            // w_{i+1} kappa_i / pivot_{i+1}: the part that does not depend on the last pivot
            // formed first, so that each pivot waits for the last one's inverse by one fused
            // multiply-add and a division only.
            let (wr, wk) = (w * kappa_root[l], w * kappa_tip[l]);
            let inv = T::ONE / (-(wk * wr_tip[l])).mul_add(inv_tip[l], (T::ONE + wr) + wk);
            inv_tip[l] = inv;
            wr_tip[l] = wr;
            sp.g[l] = wr * inv;
            for k in 0..3 {
                sp.along[k][l] = a * (n_root[k][l] + n_tip[k][l]);
                sp.r[k][l] = b.mul_add(n_root[k][l] - n_tip[k][l], wk * r_tip[k][l]) * inv;
            }
        }
        lam_tip = lam_root;
        n_tip = n_root;
        kappa_tip = kappa_root;
        r_tip = sp.r;
    }
    // Pass 3: dx_i = r_i + g_i dx_{i-1} (g_0 = 0), then the last sweep in red-black order,
    // finishing each particle once no segment is left to move it.
    let mut dx_root = [[T::ZERO; N]; 3];
    for i in 0..n {
        // Local copies: read through references, the loop is compiled lane by lane.
        let Spread { along, r, g } = spread[i];
        let mut d = [[T::ZERO; N]; 3];
        for k in 0..3 {
            for l in 0..N {
                d[k][l] = g[l].mul_add(dx_root[k][l], r[k][l]);
            }
        }
        dx_root = d;
        let step = &mut x[i][1];
        for k in 0..3 {
            for l in 0..N {
                step[k][l] += along[k][l] + d[k][l];
            }
        }
        // Segment j = i - 1 now has both its particles. The sweep goes in red-black order:
        // an even segment as soon as it can, then the odd one before it, which both its
        // neighbours have moved; particles up to j are then final.
        if i >= 1 && (i - 1).is_multiple_of(2) {
            let j = i - 1;
            correct_segment(c, seg, x, j);
            if j >= 1 {
                correct_segment(c, seg, x, j - 1);
                done_with(c, inp, &free, j - 1, &mut x[j - 1]);
            }
            done_with(c, inp, &free, j, &mut x[j]);
        }
    }
    // The last segment, when odd, and the particles it touches.
    if m.is_multiple_of(2) {
        correct_segment(c, seg, x, m - 1);
        done_with(c, inp, &free, m - 1, &mut x[m - 1]);
    }
    done_with(c, inp, &free, m, &mut x[m]);
}

/// [`correct`] on segment `j` of the chain `x`, from the solve's multiplier.
#[inline(always)]
fn correct_segment<T: Real, const N: usize>(c: &Coeffs<T>, seg: &[Segment<T, N>], x: &mut [Particle<T, N>], j: usize) {
    let (p, q) = pair(x, j);
    correct(c, j, &seg[j].lam, p, q);
}

/// The compliant projection of segment j's constraint from multiplier `lam`: dlambda =
/// (-C - alpha_tilde lam) / (w_p + w_q + alpha_tilde), p -= w_p n dlambda, q += w_q n dlambda.
#[inline(always)]
fn correct<T: Real, const N: usize>(
    c: &Coeffs<T>,
    j: usize,
    lam: &[T; N],
    p: &mut Particle<T, N>,
    q: &mut Particle<T, N>,
) {
    let [px, ps] = p;
    let [qx, qs] = q;
    let (wp, wq) = (c.inv_mass[j], c.inv_mass[j + 1]);
    let (inv_d, at) = (c.inv_diagonal[j], c.least_pivot[j]);
    let l0 = c.rest_length;
    for l in 0..N {
        let dx = (qx[0][l] - px[0][l]) + (qs[0][l] - ps[0][l]);
        let dy = (qx[1][l] - px[1][l]) + (qs[1][l] - ps[1][l]);
        let dz = (qx[2][l] - px[2][l]) + (qs[2][l] - ps[2][l]);
        let r = length(dx, dy, dz);
        // dlambda / r: the direction's normalisation folded in.
        let f = (((l0 - r) - at * lam[l]) * inv_d) / r;
        let (fa, fb) = (-(wp * f), wq * f);
        ps[0][l] = fa.mul_add(dx, ps[0][l]);
        ps[1][l] = fa.mul_add(dy, ps[1][l]);
        ps[2][l] = fa.mul_add(dz, ps[2][l]);
        qs[0][l] = fb.mul_add(dx, qs[0][l]);
        qs[1][l] = fb.mul_add(dy, qs[1][l]);
        qs[2][l] = fb.mul_add(dz, qs[2][l]);
    }
}

#[inline(always)]
fn pair<T>(s: &mut [T], i: usize) -> (&mut T, &mut T) {
    let (a, b) = s.split_at_mut(i + 1);
    (&mut a[i], &mut b[0])
}

/// Stores the strands of lanes `lanes` of one lane group (its origins `o` and particles `xs`)
/// as [`Lanes::store`] does, into `x` and `v` that hold just those strands: world positions
/// o + x and velocities s (1 / h), in f64, strand-major, three values a particle.
#[inline]
pub fn store_group<T: Real, const N: usize>(
    o: &Lanes3<f64, N>,
    xs: &[Particle<T, N>],
    lanes: std::ops::Range<usize>,
    x: &mut [f64],
    v: &mut [f64],
    h: f64,
) {
    let inv_h = 1.0 / h;
    let per_strand = 3 * xs.len();
    for (s, l) in lanes.enumerate() {
        let (x, v) = (&mut x[s * per_strand..], &mut v[s * per_strand..]);
        for (i, [a, b]) in xs.iter().enumerate() {
            for k in 0..3 {
                x[3 * i + k] = o[k][l] + a[k][l].wide();
                v[3 * i + k] = b[k][l].wide() * inv_h;
            }
        }
    }
}

/// What [`Lanes::group_figures`] needs of the model.
#[derive(Debug, Clone, Copy)]
pub struct SummaryModel<'a> {
    /// Mass of each particle of a strand, kg.
    pub mass: &'a [f64],
    /// Gravity, m/s^2.
    pub gravity: [f64; 3],
    /// The substep the steps were taken with, s.
    pub h: f64,
    /// Each segment's spring constant k_j = (E A)_j / l0 (N/m) of the contract's energies.
    pub stretch_k: &'a [f64],
    /// Rest length l0, m.
    pub rest_length: f64,
    /// Each interior particle's bending constant c_i = (E I)_i / l0^3 (N/m, at index i - 1).
    pub bending_k: &'a [f64],
    /// The frame loop's blow-up limits: segment length (m) and speed (m/s).
    pub max_length: f64,
    /// See `max_length`.
    pub max_speed: f64,
    /// The frame loop's crumple limit (a strand's length over the larger of its rest length and
    /// the distance between its ends, see `heft_strand_common::OverlongLimit`).
    pub crumple: heft_strand_common::OverlongLimit,
}

/// One lane group's part of a [`Summary`], lane by lane (see [`Lanes::group_figures`]).
#[derive(Debug, Clone, Copy)]
pub struct GroupFigures<const N: usize> {
    momentum: [[f64; N]; 3],
    kinetic: [f64; N],
    gravity: [f64; N],
    stretch: [f64; N],
    bending: [f64; N],
    ok: bool,
    live: usize,
}

impl<const N: usize> Default for GroupFigures<N> {
    fn default() -> GroupFigures<N> {
        GroupFigures {
            momentum: [[0.0; N]; 3],
            kinetic: [0.0; N],
            gravity: [0.0; N],
            stretch: [0.0; N],
            bending: [0.0; N],
            ok: true,
            live: 0,
        }
    }
}

impl Summary {
    /// Adds a lane group's part, lane by lane.
    pub fn add<const N: usize>(&mut self, f: &GroupFigures<N>) {
        for l in 0..f.live {
            for k in 0..3 {
                self.momentum[k] += f.momentum[k][l];
            }
            self.kinetic += f.kinetic[l];
            self.gravity += f.gravity[l];
            self.elastic += f.stretch[l] + f.bending[l];
        }
        self.surely_intact &= f.ok;
    }
}

impl Default for Summary {
    /// Nothing yet: zero figures, no strand near a blow-up.
    fn default() -> Summary {
        Summary {
            momentum: [0.0; 3],
            kinetic: 0.0,
            gravity: 0.0,
            elastic: 0.0,
            surely_intact: true,
        }
    }
}

/// The per-frame figures of a state, as the strand contract defines them: total momentum
/// sum m v (N s), kinetic energy sum 1/2 m |v|^2 and gravitational energy -sum m g . x (J),
/// elastic energy sum 1/2 k (|x_{j+1} - x_j| - l0)^2 + sum 1/2 c |x_{i-1} - 2 x_i + x_{i+1}|^2
/// (J), from v = s / h and x = o + x_rel in f64, summed per lane, then over lanes in order; and
/// whether no strand is near blowing up or crumpling: every position and step finite, every
/// speed at most 0.98 of the limit, every segment at most 0.98 of the limit long, every strand's
/// length at most 0.999 of its overlong limit. The margins cover the rounding between these
/// numbers and the world positions and velocities the frame loop's own checks read, so
/// `surely_intact` means those checks would pass.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Summary {
    /// N s.
    pub momentum: [f64; 3],
    /// J.
    pub kinetic: f64,
    /// J.
    pub gravity: f64,
    /// J.
    pub elastic: f64,
    /// No strand near a blow-up.
    pub surely_intact: bool,
}

/// The state of all strands laid out in lane groups of `N`: positions relative to each strand's
/// origin, and steps.
#[derive(Debug, Clone)]
pub struct Lanes<T, const N: usize> {
    strands: usize,
    particles: usize,
    /// Per group: each lane's origin (world, f64): its strand's particle 0 when loaded.
    pub origin: Vec<Lanes3<f64, N>>,
    /// Positions relative to the origins and steps s = x - x_prev, group-major, then particle,
    /// then position/step, then x/y/z, then lane.
    pub x: Vec<Particle<T, N>>,
}

impl<T: Real, const N: usize> Lanes<T, N> {
    /// Room for `strands` strands of `particles` particles (zero state).
    pub fn new(strands: usize, particles: usize) -> Lanes<T, N> {
        let groups = strands.div_ceil(N);
        let zero = [[T::ZERO; N]; 3];
        Lanes {
            strands,
            particles,
            origin: vec![[[0.0; N]; 3]; groups],
            x: vec![[zero; 2]; groups * particles],
        }
    }

    /// Number of strands.
    pub fn strands(&self) -> usize {
        self.strands
    }

    /// Particles per strand.
    pub fn particles(&self) -> usize {
        self.particles
    }

    /// Number of lane groups.
    pub fn groups(&self) -> usize {
        self.strands.div_ceil(N)
    }

    /// The strand in lane `l` of group `g`: padding lanes of the last group repeat the last
    /// strand, so they compute finite values that are never read.
    pub fn strand_of(&self, g: usize, l: usize) -> usize {
        (g * N + l).min(self.strands - 1)
    }

    /// Loads positions and velocities (world, strand-major, strand s particle i at
    /// s * particles + i), moving each strand's origin to its particle 0 and holding the
    /// velocity as the step h v - h^2 a / 2 (both rounded once from f64): the step from the
    /// position half a step back on the path of constant acceleration a = `accel` (gravity), so that a
    /// free particle follows x0 + v0 t + a t^2 / 2 exactly (a second-order start; the step h v
    /// alone would leave it behind by a h t / 2).
    pub fn load(&mut self, x: &[[f64; 3]], v: &[[f64; 3]], h: f64, accel: [f64; 3]) {
        let n = self.particles;
        for g in 0..self.groups() {
            for l in 0..N {
                let s = self.strand_of(g, l);
                let o = x[s * n];
                for i in 0..n {
                    let (a, b) = (x[s * n + i], v[s * n + i]);
                    for k in 0..3 {
                        self.origin[g][k][l] = o[k];
                        self.x[g * n + i][0][k][l] = T::of(a[k] - o[k]);
                        self.x[g * n + i][1][k][l] = T::of(h * b[k] - 0.5 * h * h * accel[k]);
                    }
                }
            }
        }
    }

    /// Stores world positions o + x and the velocities v = s (1 / h) (in f64), strand-major,
    /// three values a particle.
    pub fn store(&self, x: &mut [f64], v: &mut [f64], h: f64) {
        self.store_strands(0..self.strands, x, v, h);
    }

    /// [`Lanes::store`] for the strands `strands` only, into `x` and `v` that hold just those
    /// strands (their first value is strand `strands.start`'s), so that threads can store
    /// disjoint ranges.
    pub fn store_strands(&self, strands: std::ops::Range<usize>, x: &mut [f64], v: &mut [f64], h: f64) {
        let n = self.particles;
        let per_strand = 3 * n;
        let first = strands.start;
        let mut s = strands.start;
        while s < strands.end {
            let g = s / N;
            let lanes = s % N..(strands.end - g * N).min(N);
            let at = (s - first) * per_strand..(s - first + lanes.len()) * per_strand;
            store_group(
                &self.origin[g],
                &self.x[g * n..(g + 1) * n],
                lanes.clone(),
                &mut x[at.clone()],
                &mut v[at],
                h,
            );
            s += lanes.len();
        }
    }

    /// One lane group's part of the frame loop's per-frame figures ([`Summary`], in one
    /// vectorised pass): its origins `o`, its particles `xs`, and `live` strands in its lanes
    /// (the rest are padding). The groups' parts are added in group order ([`Summary::add`]), so
    /// threads that each take the parts of their own groups give the same bits.
    #[inline(always)]
    #[allow(clippy::needless_range_loop)] // lane loops: x, y, z of one lane from three rows
    pub fn group_figures(
        o: &Lanes3<f64, N>,
        xs: &[Particle<T, N>],
        live: usize,
        m: &SummaryModel<'_>,
    ) -> GroupFigures<N> {
        let inv_h = 1.0 / m.h;
        let max_s2 = (0.98 * m.max_speed * m.h).powi(2);
        let max_l2 = (0.98 * m.max_length).powi(2);
        let mut f = GroupFigures {
            live,
            ..GroupFigures::default()
        };
        let (lp, lk, lg, es, eb) = (
            &mut f.momentum,
            &mut f.kinetic,
            &mut f.gravity,
            &mut f.stretch,
            &mut f.bending,
        );
        let mut ok = true;
        let mut length = [0.0f64; N];
        for (i, (q, &mass)) in xs.iter().zip(m.mass).enumerate() {
            for l in 0..N {
                let rel = [0, 1, 2].map(|k| q[0][k][l].wide());
                let v = [0, 1, 2].map(|k| q[1][k][l].wide() * inv_h);
                let x = [0, 1, 2].map(|k| o[k][l] + rel[k]);
                for k in 0..3 {
                    lp[k][l] += mass * v[k];
                }
                let v2 = v[0] * v[0] + v[1] * v[1] + v[2] * v[2];
                lk[l] += 0.5 * mass * v2;
                lg[l] -= mass * (m.gravity[0] * x[0] + m.gravity[1] * x[1] + m.gravity[2] * x[2]);
                // A NaN step fails the comparison.
                let s = [0, 1, 2].map(|k| q[1][k][l].wide());
                let s2 = s[0] * s[0] + s[1] * s[1] + s[2] * s[2];
                ok &= rel[0].is_finite() & rel[1].is_finite() & rel[2].is_finite() & (s2 <= max_s2);
            }
            if i >= 1 {
                let p = &xs[i - 1];
                for l in 0..N {
                    let d = [0, 1, 2].map(|k| q[0][k][l].wide() - p[0][k][l].wide());
                    let l2 = d[0] * d[0] + d[1] * d[1] + d[2] * d[2];
                    let r = l2.sqrt();
                    length[l] += r;
                    let e = r - m.rest_length;
                    es[l] += 0.5 * m.stretch_k[i - 1] * e * e;
                    ok &= l2 <= max_l2;
                }
            }
            if i >= 2 && m.bending_k[i - 2] != 0.0 {
                let (p, r) = (&xs[i - 2], &xs[i - 1]);
                let c = m.bending_k[i - 2];
                for l in 0..N {
                    let b = [0, 1, 2].map(|k| p[0][k][l].wide() - 2.0 * r[0][k][l].wide() + q[0][k][l].wide());
                    eb[l] += 0.5 * c * (b[0] * b[0] + b[1] * b[1] + b[2] * b[2]);
                }
            }
        }
        // The strand's length against the overlong limit, with a margin of 1e-3 of it for the
        // rounding between these numbers and the world positions (f32 lanes: about 1.2e-7 of the
        // strand's reach per segment, 5e-4 over 4096 segments at most).
        if let (Some(first), Some(last)) = (xs.first(), xs.last()) {
            let rest = m.rest_length * (xs.len() - 1) as f64;
            let c = &m.crumple;
            for l in 0..N {
                let d = [0, 1, 2].map(|k| last[0][k][l].wide() - first[0][k][l].wide());
                let span = (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt();
                let p = [0, 1, 2].map(|k| lp[k][l]);
                // The kinetic energy about the centre of mass, less a margin of 1e-3 of itself.
                let about = (lk[l] - (p[0] * p[0] + p[1] * p[1] + p[2] * p[2]) / (2.0 * c.mass)).max(0.0);
                let limit = 1.0 + c.stretch((1.0 - 1.0e-3) * about);
                ok &= length[l] <= (1.0 - 1.0e-3) * limit * rest.max(span);
            }
        }
        f.ok = ok;
        f
    }

    /// Origins and particles of lane group `g`.
    pub fn group_mut(&mut self, g: usize) -> (&mut Lanes3<f64, N>, &mut [Particle<T, N>]) {
        let r = g * self.particles..(g + 1) * self.particles;
        (&mut self.origin[g], &mut self.x[r])
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn model(n: usize, stretch_compliance: f64, bend_compliance: Option<f64>) -> Model {
        Model {
            rest_length: 0.1,
            inv_mass: vec![100.0; n],
            stretch_compliance: vec![stretch_compliance; n - 1],
            bend_compliance: bend_compliance.map(|a| vec![a; n - 2]),
            damping_rate: 0.0,
            gravity: [0.0, 0.0, 0.0],
        }
    }

    /// The input of a substep of `n` free particles with nothing but their constraints: no
    /// pins, no gravity, spin, wind or colliders (`zero` is the prediction's base).
    fn free_of_everything(zero: &Lanes3<f64, 1>, n: usize) -> SubstepInput<'_, f64, 1> {
        SubstepInput {
            pin_root: None,
            pin_tip: None,
            base: zero,
            spin: None,
            wind: None,
            colliders: None,
            free: (0, n),
        }
    }

    /// One substep of one lane with nothing but the constraints: no gravity, no pins, steps 0.
    fn constraints_only(c: &Coeffs<f64>, at: &[[f64; 3]]) -> Vec<[f64; 3]> {
        let zero: Lanes3<f64, 1> = [[0.0], [0.0], [0.0]];
        let mut x: Vec<Particle<f64, 1>> = at.iter().map(|p| [p.map(|v| [v]), zero]).collect();
        let mut scratch = Scratch::new(at.len());
        substep(c, &free_of_everything(&zero, at.len()), &mut x, &mut scratch);
        x.iter().map(|p| [p[0][0][0], p[0][1][0], p[0][2][0]]).collect()
    }

    /// One segment: the direct solve is the compliant projection, computed by hand from
    /// Macklin et al. 2016, eq. 18 (lambda = 0): alpha_tilde = 0.002 / 0.01^2 = 20, w = 100 each,
    /// C = 0.05 m, dlambda = -0.05 / 220, each end moves 100 * 0.05 / 220 m toward the other.
    #[test]
    fn one_segment_matches_the_hand_computed_xpbd_update() {
        let c = Coeffs::<f64>::new(&model(2, 0.002, None), 0.01);
        let x = constraints_only(&c, &[[0.0; 3], [0.15, 0.0, 0.0]]);
        let moved = 100.0 * 0.05 / 220.0;
        assert!((x[0][0] - moved).abs() < 1e-15, "{:?}", x[0]);
        assert!((x[1][0] - (0.15 - moved)).abs() < 1e-15, "{:?}", x[1]);
    }

    /// Forward elimination of every segment of a chain laid out at `at` (steps 0), then back
    /// substitution: the multipliers dlambda of the chain's direct solve.
    fn multipliers(c: &Coeffs<f64>, at: &[[f64; 3]]) -> Vec<f64> {
        let zero: Lanes3<f64, 1> = [[0.0], [0.0], [0.0]];
        let x: Vec<Particle<f64, 1>> = at.iter().map(|p| [p.map(|v| [v]), zero]).collect();
        let mut scratch = Scratch::<f64, 1>::new(at.len());
        let mut run = Elimination {
            inv_pivot: [0.0],
            rho: [0.0],
        };
        for k in 0..at.len() - 1 {
            eliminate(c, k, &x[k], &x[k + 1], &mut scratch.seg, &mut run);
        }
        let mut lam = vec![0.0; at.len() - 1];
        let mut next = 0.0;
        for k in (0..at.len() - 1).rev() {
            next = scratch.seg[k].rho[0] - scratch.seg[k].up[0] * next;
            lam[k] = next;
        }
        lam
    }

    /// Two segments bent at a corner, unequal masses: the tridiagonal elimination gives the
    /// multipliers of the Newton step of the XPBD system (Macklin et al. 2016, eq. 12 at
    /// lambda = 0) that the 2 x 2 system written out densely and solved by Cramer's rule gives.
    #[test]
    fn two_segments_match_the_dense_newton_step() {
        let mut m = model(3, 0.0, None);
        m.inv_mass = vec![50.0, 200.0, 80.0];
        m.stretch_compliance = vec![2e-4, 5e-4];
        let h = 0.01;
        let c = Coeffs::<f64>::new(&m, h);
        let at = [[0.0, 0.0, 0.0], [0.12, 0.01, 0.0], [0.15, 0.09, 0.02]];
        let d = |a: [f64; 3], b: [f64; 3]| [b[0] - a[0], b[1] - a[1], b[2] - a[2]];
        let norm = |v: [f64; 3]| (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt();
        let (d0, d1) = (d(at[0], at[1]), d(at[1], at[2]));
        let (n0, n1) = (d0.map(|v| v / norm(d0)), d1.map(|v| v / norm(d1)));
        let cons = [norm(d0) - 0.1, norm(d1) - 0.1];
        let w = &m.inv_mass;
        let at_ = [m.stretch_compliance[0] / (h * h), m.stretch_compliance[1] / (h * h)];
        let dot = n0[0] * n1[0] + n0[1] * n1[1] + n0[2] * n1[2];
        // A = J W J^T + alpha_tilde, J = [[-n0, n0, 0], [0, -n1, n1]].
        let a = [[w[0] + w[1] + at_[0], -w[1] * dot], [-w[1] * dot, w[1] + w[2] + at_[1]]];
        let det = a[0][0] * a[1][1] - a[0][1] * a[1][0];
        let want = [
            (-cons[0] * a[1][1] + cons[1] * a[0][1]) / det,
            (-cons[1] * a[0][0] + cons[0] * a[1][0]) / det,
        ];
        let got = multipliers(&c, &at);
        for k in 0..2 {
            assert!(
                (got[k] - want[k]).abs() < 1e-15 * want[k].abs().max(1e-3),
                "{got:?} vs {want:?}"
            );
        }
    }

    /// A chain of 40 free particles of unequal masses, bent and stretched at random, moving at
    /// random, with no gravity: a substep's corrections are internal forces, so the momentum
    /// sum m s (s the step, h times the velocity) is kept to rounding (Newton's third law),
    /// through the direct solve, the spreading across the strand and the last sweep.
    #[test]
    fn a_substep_keeps_the_momentum_of_a_free_chain() {
        let n = 40;
        let mut m = model(n, 1e-6, Some(1e-3));
        m.inv_mass = (0..n).map(|i| 50.0 + ((i * 37) % 11) as f64 * 20.0).collect();
        let c = Coeffs::<f64>::new(&m, 1.0 / 480.0);
        let mut state = 12345u64;
        let mut rnd = || {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        };
        let mut x: Vec<Particle<f64, 1>> = Vec::new();
        let mut p = [0.0; 3];
        for _ in 0..n {
            p = [
                p[0] + 0.1 + 0.02 * rnd(),
                p[1] + 0.05 * rnd(),
                p[2] - 0.05 + 0.05 * rnd(),
            ];
            x.push([p.map(|v| [v]), [0, 1, 2].map(|_| [0.01 * rnd()])]);
        }
        let momentum = |x: &[Particle<f64, 1>]| {
            [0, 1, 2].map(|k| x.iter().zip(&m.inv_mass).map(|(q, w)| q[1][k][0] / w).sum::<f64>())
        };
        let zero: Lanes3<f64, 1> = [[0.0], [0.0], [0.0]];
        let input = free_of_everything(&zero, n);
        let before = momentum(&x);
        let moved: Vec<[f64; 3]> = x.iter().map(|q| [q[0][0][0], q[0][1][0], q[0][2][0]]).collect();
        let mut scratch = Scratch::new(n);
        substep(&c, &input, &mut x, &mut scratch);
        let after = momentum(&x);
        let scale: f64 = x.iter().zip(&m.inv_mass).map(|(q, w)| q[1][0][0].abs() / w).sum();
        let turned = x.iter().zip(&moved).any(|(q, p)| (q[0][1][0] - p[1]).abs() > 1e-3);
        assert!(turned, "the constraints did move the particles");
        for k in 0..3 {
            assert!(
                (after[k] - before[k]).abs() < 1e-13 * scale,
                "axis {k}: {before:?} -> {after:?}"
            );
        }
    }

    /// A rigid chain of 400 segments, every length off by up to 1 %: one direct solve is a
    /// Newton step, so what is left is second order in the error (one Gauss-Seidel sweep alone
    /// leaves a first-order share of it). The stiffest compliance heft allows (E A = 1e9 N)
    /// at h = 1/480 s.
    #[test]
    fn one_solve_leaves_a_second_order_error_on_a_long_chain() {
        let n = 401;
        let mut m = model(n, 0.1 / 1e9, None);
        m.inv_mass = (0..n).map(|i| 100.0 + (i % 7) as f64 * 30.0).collect();
        let c = Coeffs::<f64>::new(&m, 1.0 / 480.0);
        // A zig-zag helix with lengths 0.1 (1 + 0.01 sin(1.7 j)).
        let mut at = vec![[0.0; 3]];
        for j in 0..n - 1 {
            let (t, len) = (j as f64 * 0.3, 0.1 * (1.0 + 0.01 * (1.7 * j as f64).sin()));
            let dir = [t.cos() * 0.6, t.sin() * 0.6, -0.8];
            let p = at[j];
            at.push([0, 1, 2].map(|k| p[k] + len * dir[k]));
        }
        let err = |x: &[[f64; 3]]| {
            x.windows(2)
                .map(|p| {
                    let d = [0, 1, 2].map(|k| p[1][k] - p[0][k]);
                    ((d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt() - 0.1).abs()
                })
                .fold(0.0f64, f64::max)
        };
        let before = err(&at);
        let after = err(&constraints_only(&c, &at));
        assert!(before > 9e-4, "{before}");
        // Measured: 0.031 before^2 / l0 (3e-7 m from 1e-3 m).
        assert!(after < 0.1 * before * before / 0.1, "{before} -> {after}");
    }

    /// The bending constraint is linear: with zero compliance and equal masses one projection
    /// straightens three particles exactly and keeps their centre of mass (Macklin et al. 2016,
    /// eq. 18 with alpha = 0 is the PBD projection of Muller et al. 2007, which conserves
    /// momentum for a translation-invariant constraint).
    #[test]
    fn a_rigid_bend_projection_straightens_three_particles() {
        let c = Coeffs::<f64>::new(&model(3, 0.002, Some(0.0)), 0.01);
        assert_eq!(c.bend.len(), 1);
        let zero: Lanes3<f64, 1> = [[0.0], [0.0], [0.0]];
        let mut x: Vec<Particle<f64, 1>> = vec![
            [[[0.0], [0.0], [0.0]], zero],
            [[[0.1], [0.03], [0.0]], zero],
            [[[0.2], [0.0], [0.0]], zero],
        ];
        let (p, q, r) = triple(&mut x, 0);
        bend(c.bend[0], p, q, r);
        for p in &mut x {
            finish(p);
        }
        let u = x[0][0][1][0] - 2.0 * x[1][0][1][0] + x[2][0][1][0];
        assert!(u.abs() < 1e-15, "{u}");
        let cy = (x[0][0][1][0] + x[1][0][1][0] + x[2][0][1][0]) / 3.0;
        assert!((cy - 0.01).abs() < 1e-15, "{cy}");
    }

    /// Load then store gives the state back (velocity to rounding of (x - (x - h v)) / h).
    #[test]
    fn lanes_round_trip_with_padding() {
        let (strands, particles, h) = (5, 3, 1e-3);
        let x: Vec<[f64; 3]> = (0..strands * particles)
            .map(|i| [i as f64, 0.5, -0.25 * i as f64])
            .collect();
        let v: Vec<[f64; 3]> = (0..strands * particles).map(|i| [0.1, -(i as f64), 2.0]).collect();
        let mut lanes = Lanes::<f64, 4>::new(strands, particles);
        lanes.load(&x, &v, h, [0.0; 3]);
        let (mut x2, mut v2) = (vec![[0.0; 3]; x.len()], vec![[0.0; 3]; x.len()]);
        lanes.store(x2.as_flattened_mut(), v2.as_flattened_mut(), h);
        assert_eq!(x, x2);
        for (a, b) in v.iter().zip(&v2) {
            for k in 0..3 {
                assert!((a[k] - b[k]).abs() < 1e-11, "{a:?} {b:?}");
            }
        }
    }
}

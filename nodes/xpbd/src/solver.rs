//! The XPBD strand solver core: strands laid across SIMD lanes, one Gauss-Seidel sweep of
//! compliant constraints per substep ("small steps").
//!
//! Method: Macklin, Muller & Chentanez 2016, "XPBD: Position-Based Simulation of Compliant
//! Constrained Dynamics" (MIG), eqs. 17-18 (the compliant update with alpha_tilde = alpha / h^2),
//! and Macklin, Storey, Lu, Terdiman, Chentanez, Jeschke & Muller 2019, "Small Steps in Physics
//! Simulation" (SCA), Algorithm 1 (one iteration per substep, lambda reset to 0 every substep).
//! Equation and algorithm numbers are from memory.
//!
//! One substep of one lane group:
//!
//! 1. predict x* = x + h v* in two split steps: damping, backward Euler in the linear velocity
//!    terms, v' = (v + h (c_r v_anchor(x) + drag v_wind(x))) / (1 + h gamma) with
//!    gamma = damping + c_r (+ drag), then the gravity kick v* = v' + h g. Damping first keeps
//!    it out of the equilibrium (at rest the constraints carry exactly m g) and leaves a particle
//!    moving with a falling anchor unaffected. The velocity is held as the particle's step over
//!    the last substep, s = h v = x - x_prev, so the prediction reads s* = decay s + h^2 decay
//!    (c_r v_anchor(x) + drag v_wind(x)) + h^2 g, x* = x + s*; x is left as it is and the
//!    particle's position is x + s until step 4;
//! 2. pins: the pinned particles are set on their targets at the end of the substep;
//! 3. one sweep root to tip: for each segment j the distance constraint (j, j+1), then, two
//!    segments behind, the bending constraint centred on j - 2 (see [`BEND_LAG`]), each projected
//!    once with lambda = 0; every correction is added to the step only, so the step stays
//!    x - x_prev (the position-based velocity) without that difference ever being taken;
//! 4. x += s; the velocity is s / h (read out at the end of a frame);
//! 5. colliders: each particle found inside a sphere or capsule is pushed to the nearest point
//!    of its surface and the inward normal component of its velocity (relative to the surface
//!    there) removed (its step set to h times the new velocity).
//!
//! Steps 1, 3, 4 and 5 run fused in one pass over the particles (a particle is predicted just
//! before its first constraint, and finished and collided once no constraint of the sweep
//! touches it any more), so each particle's data is loaded once per substep.
//!
//! Layout: strands are grouped `N` at a time ("lanes"). For each particle index `i` of a group
//! the position and the step of its `N` strands are stored x, y, z rows of `N` lanes
//! ([`Particle`]: `[[[T; N]; 3]; 2]`), so the inner loops run the same arithmetic on all lanes
//! with no branches and the compiler vectorises them. Gauss-Seidel along a strand is sequential
//! in `i`; the lanes give the parallelism. Every lane's arithmetic is the same sequence of IEEE
//! operations whatever `N` is and whatever instruction set runs it (Rust neither reassociates
//! nor contracts floating-point operations), so a strand's result depends neither on its group
//! nor on the CPU. The node runs the substeps through `pulp`, which compiles them once per
//! instruction set and picks the widest the CPU has at run time; every function on the substep
//! path is `#[inline(always)]` so that it is compiled inside that choice.
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
use std::ops::{Add, AddAssign, Div, Mul, Sub, SubAssign};

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
    /// Stretch compliance per segment alpha = 1 / k = l0 / (E A) (m/N).
    pub stretch_compliance: f64,
    /// Bending compliance alpha_b = l0 / (E I) (1/(N m)); `None` when E I = 0 (no bending).
    pub bend_compliance: Option<f64>,
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
    /// Per segment j: (w_j s_j, w_{j+1} s_j) with s_j = 1 / (w_j + w_{j+1} + alpha / h^2).
    pub stretch: Vec<[T; 2]>,
    /// Per interior particle i (at index i - 1): (w_{i-1} b, 2 w_i b, w_{i+1} b) with
    /// b = 1 / (w_{i-1} + 4 w_i + w_{i+1} + l0^2 alpha_b / h^2); empty without bending.
    pub bend: Vec<[T; 3]>,
}

impl<T: Real> Coeffs<T> {
    /// Coefficients for substep `h`.
    pub fn new(model: &Model, h: f64) -> Coeffs<T> {
        let mut c = Coeffs {
            h: 0.0,
            decay: T::ONE,
            h2_decay: 0.0,
            h2_gravity: [0.0; 3],
            rest_length: T::of(model.rest_length),
            stretch: vec![[T::ZERO; 2]; model.inv_mass.len().saturating_sub(1)],
            bend: Vec::with_capacity(model.inv_mass.len().saturating_sub(2)),
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
        let alpha_tilde = model.stretch_compliance / (h * h);
        for (slot, p) in self.stretch.iter_mut().zip(w.windows(2)) {
            let s = 1.0 / (p[0] + p[1] + alpha_tilde);
            *slot = [T::of(p[0] * s), T::of(p[1] * s)];
        }
        self.bend.clear();
        if let Some(alpha_b) = model.bend_compliance {
            let soft = l0 * l0 * alpha_b / (h * h);
            self.bend.extend(w.windows(3).map(|p| {
                let b = 1.0 / (p[0] + 4.0 * p[1] + p[2] + soft);
                [T::of(p[0] * b), T::of(2.0 * p[1] * b), T::of(p[2] * b)]
            }));
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
            s[k][l] = c.decay * s[k][l] + base[k][l];
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

/// The distance constraint C = |q - p| - l0 with compliance alpha, projected once with
/// lambda = 0 (XPBD eq. 18): dlambda = -C / (w_p + w_q + alpha / h^2), p += w_p dlambda n...
/// written as p += a f d, q -= b f d with d = q - p, f = 1 - l0 / |d|. The current positions
/// are x + s; d is taken as (x_q - x_p) + (s_q - s_p), and the corrections go into the steps.
#[inline(always)]
fn stretch<T: Real, const N: usize>(l0: T, a: T, b: T, p: &mut Particle<T, N>, q: &mut Particle<T, N>) {
    let [px, ps] = p;
    let [qx, qs] = q;
    for l in 0..N {
        let dx = (qx[0][l] - px[0][l]) + (qs[0][l] - ps[0][l]);
        let dy = (qx[1][l] - px[1][l]) + (qs[1][l] - ps[1][l]);
        let dz = (qx[2][l] - px[2][l]) + (qs[2][l] - ps[2][l]);
        let r = (dx * dx + dy * dy + dz * dz).max(T::TINY_SQ).sqrt();
        let f = T::ONE - l0 / r;
        let (fa, fb) = (a * f, b * f);
        ps[0][l] += fa * dx;
        ps[1][l] += fa * dy;
        ps[2][l] += fa * dz;
        qs[0][l] -= fb * dx;
        qs[1][l] -= fb * dy;
        qs[2][l] -= fb * dz;
    }
}

/// The bending constraint C = (p - 2 q + r) / l0 (a vector, linear in the positions, so one
/// projection solves it exactly), compliance alpha_b = l0 / (E I); positions x + s as in
/// [`stretch`], corrections into the steps.
#[inline(always)]
fn bend<T: Real, const N: usize>(kk: [T; 3], p: &mut Particle<T, N>, q: &mut Particle<T, N>, r: &mut Particle<T, N>) {
    let [ka, kb, kc] = kk;
    let ([px, ps], [qx, qs], [rx, rs]) = (p, q, r);
    for k in 0..3 {
        for l in 0..N {
            let u = (px[k][l] - (qx[k][l] + qx[k][l]) + rx[k][l]) + (ps[k][l] - (qs[k][l] + qs[k][l]) + rs[k][l]);
            ps[k][l] -= ka * u;
            qs[k][l] += kb * u;
            rs[k][l] -= kc * u;
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
fn pair<T>(s: &mut [T], i: usize) -> (&mut T, &mut T) {
    let (a, b) = s.split_at_mut(i + 1);
    (&mut a[i], &mut b[0])
}

#[inline(always)]
fn triple<T>(s: &mut [T], i: usize) -> (&mut T, &mut T, &mut T) {
    let (a, rest) = s[i..i + 3].split_at_mut(1);
    let (b, c) = rest.split_at_mut(1);
    (&mut a[0], &mut b[0], &mut c[0])
}

/// How many segments the bending sweep trails the stretch sweep: the bending constraint centred
/// on particle j - 2 is projected right after segment j, so it never touches the two particles
/// the next segment's projection reads, and a single long strand's chain of dependent
/// projections (latency-bound: a square root and a division per segment) is not lengthened.
pub const BEND_LAG: usize = 2;

/// Advances one lane group by one substep. `x` holds each particle's position and step
/// (particle-major, lanes inside; at least 2 particles).
///
/// Order, each projection using the latest positions (a Gauss-Seidel sweep): predict particle
/// j + 1, project segment j, project the bending constraint centred on j - 2, then finish
/// particle j - 3 (no constraint of the sweep touches it any more): x += s, and push it out of
/// the colliders; then the remaining bending constraints and particles at the tip. During the
/// sweep a particle's position is x + s with x its position at the start of the substep: the
/// constraints read differences of x (exact for nearby particles) plus differences of s (small
/// numbers, at full relative precision) and write only s.
#[inline(always)]
pub fn substep<T: Real, const N: usize>(c: &Coeffs<T>, inp: &SubstepInput<'_, T, N>, x: &mut [Particle<T, N>]) {
    let n = x.len();
    let bending = !c.bend.is_empty();
    let l0 = c.rest_length;
    let free = inp.free.0..inp.free.1;
    // A local copy: the compiler then knows the steps written below are not the base it reads.
    let base = *inp.base;
    match inp.pin_root {
        Some(t) => pin(t, &mut x[0]),
        None => predict(c, inp, &base, 0, &mut x[0]),
    }
    for j in 0..n - 1 {
        match inp.pin_tip {
            Some(t) if j + 2 == n => pin(t, &mut x[j + 1]),
            _ => predict(c, inp, &base, j + 1, &mut x[j + 1]),
        }
        let [a, b] = c.stretch[j];
        let (p, q) = pair(x, j);
        stretch(l0, a, b, p, q);
        if j > BEND_LAG {
            // Centre j - BEND_LAG >= 1: the triple starts at j - BEND_LAG - 1.
            let first = j - BEND_LAG - 1;
            if bending {
                let (p, q, r) = triple(x, first);
                bend(c.bend[first], p, q, r);
            }
            // Particle `first` is final: its last constraint was the bend centred one past it.
            done_with(c, inp, &free, first, &mut x[first]);
        }
    }
    // Bends centred on 1..=n-2 not yet projected, then the particles not yet final.
    let done = (n - 1).saturating_sub(BEND_LAG + 1);
    if bending {
        for first in done..n.saturating_sub(2) {
            let (p, q, r) = triple(x, first);
            bend(c.bend[first], p, q, r);
        }
    }
    for (i, p) in x.iter_mut().enumerate().skip(done) {
        done_with(c, inp, &free, i, p);
    }
}

/// What [`Lanes::summary`] needs of the model.
#[derive(Debug, Clone, Copy)]
pub struct SummaryModel<'a> {
    /// Mass of each particle of a strand, kg.
    pub mass: &'a [f64],
    /// Gravity, m/s^2.
    pub gravity: [f64; 3],
    /// The substep the steps were taken with, s.
    pub h: f64,
    /// Segment spring constant k = E A / l0 (N/m), rest length l0 (m), bending constant
    /// c = E I / l0^3 (N/m) of the contract's energies.
    pub stretch_k: f64,
    /// Rest length l0, m.
    pub rest_length: f64,
    /// Bending constant c, N/m.
    pub bending_k: f64,
    /// The frame loop's blow-up limits: segment length (m) and speed (m/s).
    pub max_length: f64,
    /// See `max_length`.
    pub max_speed: f64,
}

/// The per-frame figures of a state, as the strand contract defines them: total momentum
/// sum m v (N s), kinetic energy sum 1/2 m |v|^2 and gravitational energy -sum m g . x (J),
/// elastic energy sum 1/2 k (|x_{j+1} - x_j| - l0)^2 + sum 1/2 c |x_{i-1} - 2 x_i + x_{i+1}|^2
/// (J), from v = s / h and x = o + x_rel in f64, summed per lane, then over lanes in order; and
/// whether no strand is near blowing up: every position and step finite, every speed at most
/// 0.98 of the limit, every segment at most 0.98 of the limit long. The 2 % margin covers the
/// rounding between these numbers and the world positions and velocities the frame loop's own
/// check reads, so `surely_intact` means that check would pass.
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
        let n = self.particles;
        let inv_h = 1.0 / h;
        for s in 0..self.strands {
            let (g, l) = (s / N, s % N);
            let o = self.origin[g];
            for i in 0..n {
                let [a, b] = &self.x[g * n + i];
                let at = 3 * (s * n + i);
                for k in 0..3 {
                    x[at + k] = o[k][l] + a[k][l].wide();
                    v[at + k] = b[k][l].wide() * inv_h;
                }
            }
        }
    }

    /// The frame loop's per-frame figures of the state in the lanes, in one vectorised pass
    /// (see [`Summary`]); `mass` is the mass of each particle of a strand, `h` the substep.
    #[inline(always)]
    #[allow(clippy::needless_range_loop)] // lane loops: x, y, z of one lane from three rows
    pub fn summary(&self, m: &SummaryModel<'_>) -> Summary {
        let n = self.particles;
        let inv_h = 1.0 / m.h;
        let max_s2 = (0.98 * m.max_speed * m.h).powi(2);
        let max_l2 = (0.98 * m.max_length).powi(2);
        let mut out = Summary {
            momentum: [0.0; 3],
            kinetic: 0.0,
            gravity: 0.0,
            elastic: 0.0,
            surely_intact: true,
        };
        for g in 0..self.groups() {
            let live = (self.strands - g * N).min(N);
            let o = &self.origin[g];
            let xs = &self.x[g * n..(g + 1) * n];
            let mut lp = [[0.0f64; N]; 3];
            let mut lk = [0.0f64; N];
            let mut lg = [0.0f64; N];
            let mut es = [0.0f64; N];
            let mut eb = [0.0f64; N];
            let mut ok = true;
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
                        let e = l2.sqrt() - m.rest_length;
                        es[l] += 0.5 * m.stretch_k * e * e;
                        ok &= l2 <= max_l2;
                    }
                }
                if i >= 2 && m.bending_k != 0.0 {
                    let (p, r) = (&xs[i - 2], &xs[i - 1]);
                    for l in 0..N {
                        let b = [0, 1, 2].map(|k| p[0][k][l].wide() - 2.0 * r[0][k][l].wide() + q[0][k][l].wide());
                        eb[l] += 0.5 * m.bending_k * (b[0] * b[0] + b[1] * b[1] + b[2] * b[2]);
                    }
                }
            }
            for l in 0..live {
                for k in 0..3 {
                    out.momentum[k] += lp[k][l];
                }
                out.kinetic += lk[l];
                out.gravity += lg[l];
                out.elastic += es[l] + eb[l];
            }
            out.surely_intact &= ok;
        }
        out
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
            stretch_compliance,
            bend_compliance,
            damping_rate: 0.0,
            gravity: [0.0, 0.0, -9.80665],
        }
    }

    /// One compliant projection between equal masses, computed by hand from Macklin et al.
    /// 2016, eq. 18 (lambda = 0): alpha_tilde = 0.002 / 0.01^2 = 20, w = 100 each, C = 0.05 m,
    /// dlambda = -0.05 / 220, each end moves 100 * 0.05 / 220 m toward the other.
    #[test]
    fn one_stretch_projection_matches_the_hand_computed_xpbd_update() {
        let c = Coeffs::<f64>::new(&model(2, 0.002, None), 0.01);
        let zero: Lanes3<f64, 1> = [[0.0], [0.0], [0.0]];
        let mut p: Particle<f64, 1> = [zero, zero];
        let mut q: Particle<f64, 1> = [[[0.15], [0.0], [0.0]], zero];
        stretch(c.rest_length, c.stretch[0][0], c.stretch[0][1], &mut p, &mut q);
        let moved = 100.0 * 0.05 / 220.0;
        // Positions are x + s; the corrections go into the steps.
        assert!((p[1][0][0] - moved).abs() < 1e-15, "{}", p[1][0][0]);
        assert!((q[1][0][0] + moved).abs() < 1e-15, "{}", q[1][0][0]);
        assert_eq!((p[0][0][0], q[0][0][0]), (0.0, 0.15));
    }

    /// The bending constraint is linear: with zero compliance and equal masses one projection
    /// straightens three particles exactly and keeps their centre of mass (Macklin et al. 2016,
    /// eq. 18 with alpha = 0 is the PBD projection of Muller et al. 2007, which conserves
    /// momentum for a translation-invariant constraint).
    #[test]
    fn a_rigid_bend_projection_straightens_three_particles() {
        let c = Coeffs::<f64>::new(&model(3, 0.002, Some(0.0)), 0.01);
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

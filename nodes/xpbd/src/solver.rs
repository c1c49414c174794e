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
//!    moving with a falling anchor unaffected. The velocity is held implicitly as
//!    v = (x - x_prev) / h, so the prediction reads x* = x + decay (x - x_prev) + h^2 decay
//!    (c_r v_anchor(x) + drag v_wind(x)) + h^2 g;
//! 2. pins: the pinned particles are set on their targets at the end of the substep;
//! 3. one sweep root to tip: for each segment j the distance constraint (j, j+1), then, two
//!    segments behind, the bending constraint centred on j - 2 (see [`BEND_LAG`]), each projected
//!    once with lambda = 0;
//! 4. colliders: each particle found inside a sphere is pushed to its surface and the inward
//!    normal component of its velocity (relative to the sphere) removed;
//! 5. the velocity is (x - x_prev) / h (implicit in the layout, read out at the end of a frame).
//!
//! Steps 1, 3 and 4 run fused in one pass over the particles (a particle is predicted just
//! before its first constraint and collided once no constraint of the sweep touches it any
//! more), so each particle's data is loaded once per substep.
//!
//! Layout: strands are grouped `N` at a time ("lanes"). For each particle index `i` of a group
//! the x, y and z of its `N` strands are contiguous (`[[f64; N]; 3]`), so the inner loops run
//! the same arithmetic on all lanes with no branches and the compiler vectorises them. Gauss-
//! Seidel along a strand is sequential in `i`; the lanes give the parallelism. Every lane's
//! arithmetic is the same sequence of IEEE operations whatever `N` is (Rust neither reassociates
//! nor contracts floating-point operations), so a strand's result does not depend on its group.
//!
//! Precision: the lanes hold [`Real`] numbers, f64 (`xpbd.strand`) or f32
//! (`xpbd.strand_f32`), as positions relative to a per-strand origin: the strand's particle 0 at
//! the start of the frame, kept in f64 (see [`Lanes::load`]). Relative positions stay within a
//! strand length (plus a frame's travel) of zero whatever the world coordinates, so f32 keeps
//! a resolution of 3e-8 m on a 0.5 m strand where world positions 10 m from the origin would
//! have 9.5e-7 m. The velocity is held as (x - x_prev) / h, quantised to ulp(x) / h: 1.4e-5 m/s
//! on a 0.5 m strand at h = 1/480 s in f32 (2.6e-14 m/s in f64). Everything else (coefficients,
//! pins, colliders, wind) is computed in f64 and rounded once into the lanes.

use heft_strand_common::Colliders;

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
    /// The larger of two values (`self` if either is NaN... see `f64::max`).
    fn max(self, other: Self) -> Self;
}

impl Real for f64 {
    const ZERO: f64 = 0.0;
    const ONE: f64 = 1.0;
    const TINY_SQ: f64 = 1.0e-300;
    const EPSILON: f64 = f64::EPSILON;
    #[inline(always)]
    fn of(x: f64) -> f64 {
        x
    }
    #[inline(always)]
    fn wide(self) -> f64 {
        self
    }
    #[inline(always)]
    fn sqrt(self) -> f64 {
        f64::sqrt(self)
    }
    #[inline(always)]
    fn max(self, other: f64) -> f64 {
        f64::max(self, other)
    }
}

impl Real for f32 {
    const ZERO: f32 = 0.0;
    const ONE: f32 = 1.0;
    const TINY_SQ: f32 = 1.0e-36;
    const EPSILON: f64 = f32::EPSILON as f64;
    #[inline(always)]
    fn of(x: f64) -> f32 {
        x as f32
    }
    #[inline(always)]
    fn wide(self) -> f64 {
        f64::from(self)
    }
    #[inline(always)]
    fn sqrt(self) -> f32 {
        f32::sqrt(self)
    }
    #[inline(always)]
    fn max(self, other: f32) -> f32 {
        f32::max(self, other)
    }
}

/// One vector per lane: x, y, z, each `[T; N]`.
pub type Lanes3<T, const N: usize> = [[T; N]; 3];

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
    /// origins and each live sphere's centre relative to each lane's origin.
    pub colliders: Option<LaneColliders<'a, T, N>>,
    /// Particles `free.0..free.1` may be collided (pinned ones are not).
    pub free: (usize, usize),
}

/// The colliders of one substep as one lane group sees them.
#[derive(Debug, Clone, Copy)]
pub struct LaneColliders<'a, T, const N: usize> {
    /// The spheres (world, f64).
    pub world: &'a Colliders,
    /// The lanes' origins (world, f64).
    pub origin: &'a Lanes3<f64, N>,
    /// Per live sphere: its centre relative to each lane's origin, and its radius squared.
    pub near: &'a [(Lanes3<T, N>, T)],
}

/// x* = x + decay (x - x_prev) + base (+ spin x x) (+ wind); x_prev = x.
#[inline(always)]
fn predict<T: Real, const N: usize>(
    c: &Coeffs<T>,
    inp: &SubstepInput<'_, T, N>,
    i: usize,
    x: &mut Lanes3<T, N>,
    prev: &mut Lanes3<T, N>,
) {
    let old = *x;
    for k in 0..3 {
        for l in 0..N {
            x[k][l] = old[k][l] + c.decay * (old[k][l] - prev[k][l]) + inp.base[k][l];
        }
    }
    if let Some(s) = inp.spin {
        for l in 0..N {
            let (px, py, pz) = (old[0][l], old[1][l], old[2][l]);
            x[0][l] += s[1] * pz - s[2] * py;
            x[1][l] += s[2] * px - s[0] * pz;
            x[2][l] += s[0] * py - s[1] * px;
        }
    }
    if let Some(w) = inp.wind {
        for k in 0..3 {
            for l in 0..N {
                x[k][l] += w[i][k][l];
            }
        }
    }
    *prev = old;
}

/// The distance constraint C = |q - p| - l0 with compliance alpha, projected once with
/// lambda = 0 (XPBD eq. 18): dlambda = -C / (w_p + w_q + alpha / h^2), p += w_p dlambda n...
/// written as p += a f d, q -= b f d with d = q - p, f = 1 - l0 / |d|.
#[inline(always)]
fn stretch<T: Real, const N: usize>(l0: T, a: T, b: T, p: &mut Lanes3<T, N>, q: &mut Lanes3<T, N>) {
    for l in 0..N {
        let dx = q[0][l] - p[0][l];
        let dy = q[1][l] - p[1][l];
        let dz = q[2][l] - p[2][l];
        let r = (dx * dx + dy * dy + dz * dz).max(T::TINY_SQ).sqrt();
        let f = T::ONE - l0 / r;
        let (fa, fb) = (a * f, b * f);
        p[0][l] += fa * dx;
        p[1][l] += fa * dy;
        p[2][l] += fa * dz;
        q[0][l] -= fb * dx;
        q[1][l] -= fb * dy;
        q[2][l] -= fb * dz;
    }
}

/// The bending constraint C = (p - 2 q + r) / l0 (a vector, linear in the positions, so one
/// projection solves it exactly), compliance alpha_b = l0 / (E I).
#[inline(always)]
fn bend<T: Real, const N: usize>(kk: [T; 3], p: &mut Lanes3<T, N>, q: &mut Lanes3<T, N>, r: &mut Lanes3<T, N>) {
    let [ka, kb, kc] = kk;
    for k in 0..3 {
        for l in 0..N {
            let u = p[k][l] - (q[k][l] + q[k][l]) + r[k][l];
            p[k][l] -= ka * u;
            q[k][l] += kb * u;
            r[k][l] -= kc * u;
        }
    }
}

/// Projects the lanes of one particle that are inside a collider (rare: a cheap test in the
/// lanes' numbers first). The projection runs in f64 on the world position o + x through
/// [`Colliders::project`], with every radius grown by a margin of 2 ulps of the relative
/// position, so that rounding the result back into the lanes cannot leave it inside; the
/// velocity (x - x_prev) / h goes through it too, and x_prev is set so that the new velocity is
/// what the projection left.
#[inline(always)]
fn collide<T: Real, const N: usize>(
    h: f64,
    col: &LaneColliders<'_, T, N>,
    x: &mut Lanes3<T, N>,
    prev: &mut Lanes3<T, N>,
) {
    let mut inside = false;
    for (centre, r2) in col.near {
        for l in 0..N {
            let (dx, dy, dz) = (x[0][l] - centre[0][l], x[1][l] - centre[1][l], x[2][l] - centre[2][l]);
            inside |= dx * dx + dy * dy + dz * dz < *r2;
        }
    }
    if !inside {
        return;
    }
    for l in 0..N {
        let o = [col.origin[0][l], col.origin[1][l], col.origin[2][l]];
        let rel = [x[0][l].wide(), x[1][l].wide(), x[2][l].wide()];
        let mut p = [0, 1, 2].map(|k| o[k] + rel[k]);
        let mut v = [0, 1, 2].map(|k| (rel[k] - prev[k][l].wide()) / h);
        let mut grown = *col.world;
        let reach = rel.iter().fold(0.0f64, |m, c| m.max(c.abs()));
        for s in grown.spheres[..grown.count].iter_mut() {
            s.radius += 2.0 * T::EPSILON * (reach + s.radius + s.radius);
        }
        if grown.project(&mut p, &mut v) {
            for k in 0..3 {
                let r = p[k] - o[k];
                x[k][l] = T::of(r);
                prev[k][l] = T::of(r - h * v[k]);
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

/// Advances one lane group by one substep. `x` holds the positions and `prev` the positions
/// one substep earlier (particle-major, lanes inside; at least 2 particles).
///
/// Order, each projection using the latest positions (a Gauss-Seidel sweep): predict particle
/// j + 1, project segment j, project the bending constraint centred on j - 2, push particle j - 3
/// (no longer touched by this sweep) out of the colliders; then the remaining bending constraints
/// and collisions at the tip.
#[inline(always)]
pub fn substep<T: Real, const N: usize>(
    c: &Coeffs<T>,
    inp: &SubstepInput<'_, T, N>,
    x: &mut [Lanes3<T, N>],
    prev: &mut [Lanes3<T, N>],
) {
    let n = x.len();
    let bending = !c.bend.is_empty();
    let l0 = c.rest_length;
    let (lo, hi) = inp.free;
    match inp.pin_root {
        Some(p) => {
            prev[0] = x[0];
            x[0] = *p;
        }
        None => predict(c, inp, 0, &mut x[0], &mut prev[0]),
    }
    for j in 0..n - 1 {
        match inp.pin_tip {
            Some(p) if j + 2 == n => {
                prev[j + 1] = x[j + 1];
                x[j + 1] = *p;
            }
            _ => predict(c, inp, j + 1, &mut x[j + 1], &mut prev[j + 1]),
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
            if let Some(col) = &inp.colliders
                && (lo..hi).contains(&first)
            {
                collide(c.h, col, &mut x[first], &mut prev[first]);
            }
        }
    }
    // Bends centred on 1..=n-2 not yet projected, then the particles not yet collided.
    let done = (n - 1).saturating_sub(BEND_LAG + 1);
    if bending {
        for first in done..n.saturating_sub(2) {
            let (p, q, r) = triple(x, first);
            bend(c.bend[first], p, q, r);
        }
    }
    if let Some(col) = &inp.colliders {
        for i in done.max(lo)..hi {
            collide(c.h, col, &mut x[i], &mut prev[i]);
        }
    }
}

/// The state of all strands laid out in lane groups of `N`: positions and the positions one
/// substep earlier, relative to each strand's origin.
#[derive(Debug, Clone)]
pub struct Lanes<T, const N: usize> {
    strands: usize,
    particles: usize,
    /// Per group: each lane's origin (world, f64): its strand's particle 0 when loaded.
    pub origin: Vec<Lanes3<f64, N>>,
    /// Positions relative to the origins, group-major, then particle, then x/y/z, then lane.
    pub x: Vec<Lanes3<T, N>>,
    /// Positions one substep earlier, same layout.
    pub prev: Vec<Lanes3<T, N>>,
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
            x: vec![zero; groups * particles],
            prev: vec![zero; groups * particles],
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
    /// velocity as x_prev = x - h v (both rounded once from f64).
    pub fn load(&mut self, x: &[[f64; 3]], v: &[[f64; 3]], h: f64) {
        let n = self.particles;
        for g in 0..self.groups() {
            for l in 0..N {
                let s = self.strand_of(g, l);
                let o = x[s * n];
                for i in 0..n {
                    let (a, b) = (x[s * n + i], v[s * n + i]);
                    for k in 0..3 {
                        self.origin[g][k][l] = o[k];
                        self.x[g * n + i][k][l] = T::of(a[k] - o[k]);
                        self.prev[g * n + i][k][l] = T::of(a[k] - h * b[k] - o[k]);
                    }
                }
            }
        }
    }

    /// Stores world positions o + x and the velocities v = (x - x_prev) (1 / h) (in f64).
    pub fn store(&self, x: &mut [[f64; 3]], v: &mut [[f64; 3]], h: f64) {
        let n = self.particles;
        let inv_h = 1.0 / h;
        for s in 0..self.strands {
            let (g, l) = (s / N, s % N);
            let o = self.origin[g];
            for i in 0..n {
                let (a, b) = (&self.x[g * n + i], &self.prev[g * n + i]);
                x[s * n + i] = [0, 1, 2].map(|k| o[k][l] + a[k][l].wide());
                v[s * n + i] = [0, 1, 2].map(|k| (a[k][l].wide() - b[k][l].wide()) * inv_h);
            }
        }
    }

    /// The elastic energy of every strand, J: sum over segments of 1/2 k (|x_{j+1} - x_j| -
    /// l0)^2 plus, over interior particles, 1/2 c |x_{i-1} - 2 x_i + x_{i+1}|^2 (the contract's
    /// default, `heft_strand_common::forces::elastic_energy`), computed in f64 from the lanes'
    /// values (exact differences of the relative positions), lanes side by side; the same sums
    /// per strand, added over strands in order.
    #[inline(always)]
    pub fn elastic_energy(&self, k: f64, l0: f64, c: f64) -> f64 {
        let n = self.particles;
        let mut total = 0.0;
        for g in 0..self.groups() {
            let live = (self.strands - g * N).min(N);
            let xs = &self.x[g * n..(g + 1) * n];
            let mut es = [0.0f64; N];
            let mut eb = [0.0f64; N];
            for w in xs.windows(2) {
                for l in 0..N {
                    let dx = w[1][0][l].wide() - w[0][0][l].wide();
                    let dy = w[1][1][l].wide() - w[0][1][l].wide();
                    let dz = w[1][2][l].wide() - w[0][2][l].wide();
                    let d = (dx * dx + dy * dy + dz * dz).sqrt() - l0;
                    es[l] += 0.5 * k * d * d;
                }
            }
            if c != 0.0 {
                for w in xs.windows(3) {
                    for l in 0..N {
                        let b = |a: usize| w[0][a][l].wide() - 2.0 * w[1][a][l].wide() + w[2][a][l].wide();
                        let (bx, by, bz) = (b(0), b(1), b(2));
                        eb[l] += 0.5 * c * (bx * bx + by * by + bz * bz);
                    }
                }
            }
            for l in 0..live {
                total += es[l] + eb[l];
            }
        }
        total
    }

    /// Origins, positions and previous positions of lane group `g`.
    #[allow(clippy::type_complexity)]
    pub fn group_mut(&mut self, g: usize) -> (&mut Lanes3<f64, N>, &mut [Lanes3<T, N>], &mut [Lanes3<T, N>]) {
        let r = g * self.particles..(g + 1) * self.particles;
        (&mut self.origin[g], &mut self.x[r.clone()], &mut self.prev[r])
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
        let mut p: Lanes3<f64, 1> = [[0.0], [0.0], [0.0]];
        let mut q: Lanes3<f64, 1> = [[0.15], [0.0], [0.0]];
        stretch(c.rest_length, c.stretch[0][0], c.stretch[0][1], &mut p, &mut q);
        let moved = 100.0 * 0.05 / 220.0;
        assert!((p[0][0] - moved).abs() < 1e-15, "{}", p[0][0]);
        assert!((q[0][0] - (0.15 - moved)).abs() < 1e-15, "{}", q[0][0]);
    }

    /// The bending constraint is linear: with zero compliance and equal masses one projection
    /// straightens three particles exactly and keeps their centre of mass (Macklin et al. 2016,
    /// eq. 18 with alpha = 0 is the PBD projection of Muller et al. 2007, which conserves
    /// momentum for a translation-invariant constraint).
    #[test]
    fn a_rigid_bend_projection_straightens_three_particles() {
        let c = Coeffs::<f64>::new(&model(3, 0.002, Some(0.0)), 0.01);
        let mut x: Vec<Lanes3<f64, 1>> = vec![[[0.0], [0.0], [0.0]], [[0.1], [0.03], [0.0]], [[0.2], [0.0], [0.0]]];
        let (p, q, r) = triple(&mut x, 0);
        bend(c.bend[0], p, q, r);
        let u = x[0][1][0] - 2.0 * x[1][1][0] + x[2][1][0];
        assert!(u.abs() < 1e-15, "{u}");
        let cy = (x[0][1][0] + x[1][1][0] + x[2][1][0]) / 3.0;
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
        lanes.load(&x, &v, h);
        let (mut x2, mut v2) = (vec![[0.0; 3]; x.len()], vec![[0.0; 3]; x.len()]);
        lanes.store(&mut x2, &mut v2, h);
        assert_eq!(x, x2);
        for (a, b) in v.iter().zip(&v2) {
            for k in 0..3 {
                assert!((a[k] - b[k]).abs() < 1e-11, "{a:?} {b:?}");
            }
        }
    }
}

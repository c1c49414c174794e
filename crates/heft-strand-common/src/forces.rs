//! Forces and energies of the strand model, shared by the explicit methods.
//!
//! Stretch: each segment is a linear spring of constant k = E A / l0 on its length,
//! energy 1/2 k (l - l0)^2, force k (l - l0) along the segment.
//!
//! Bending: the Euler-Bernoulli beam energy U = 1/2 integral of E I |x''(s)|^2 ds (any
//! strength-of-materials text, e.g. Timoshenko & Gere, Theory of Elastic Stability, 2nd ed.,
//! 1961, ch. 1), discretised with the central second difference x'' ~ (x_{i-1} - 2 x_i +
//! x_{i+1}) / l0^2 over a length l0 at every interior particle (the finite-difference
//! discretisation of Terzopoulos, Platt, Barr & Fleischer 1987, "Elastically Deformable
//! Models", SIGGRAPH):
//!
//!   U_i = (c / 2) |b_i|^2,  b_i = x_{i-1} - 2 x_i + x_{i+1},  c = E I / l0^3.
//!
//! With both segments at rest length and a turning angle theta_i, |b_i| = 2 l0 sin(theta_i / 2),
//! so U_i = (E I / l0) (1 - cos theta_i), which is E I theta_i^2 / (2 l0) for small angles: the
//! continuum energy of a curvature theta_i / l0 held over a length l0. The form is linear in
//! the positions (a constant stiffness matrix c D^T D), rotation and translation invariant, and
//! its forces sum to zero (momentum is conserved). It also resists unequal neighbouring
//! segment lengths along a straight strand, a coupling the stiff stretch springs make small.

use crate::geometry::{V3, add, axpy, dot, scale, sub};
use crate::run::State;
use crate::setup::Setup;

/// Adds the stretch spring forces of one strand (positions `x`; `k` the spring constant of each
/// segment) into `f`. A segment of zero length exerts no force (its direction is undefined).
#[inline]
pub fn add_stretch_forces(x: &[V3], k: &[f64], l0: f64, f: &mut [V3]) {
    for (j, &k) in k.iter().enumerate().take(x.len().saturating_sub(1)) {
        let e = sub(x[j + 1], x[j]);
        let l2 = dot(e, e);
        if l2 == 0.0 {
            continue;
        }
        let l = l2.sqrt();
        let s = k * (l - l0) / l;
        let fj = scale(e, s);
        f[j] = add(f[j], fj);
        f[j + 1] = sub(f[j + 1], fj);
    }
}

/// Adds the bending forces of one strand into `f`: for every interior particle i (with `c`
/// at index i - 1), f_{i-1} -= c_i b_i, f_i += 2 c_i b_i, f_{i+1} -= c_i b_i (minus the gradient
/// of (c_i / 2) |b_i|^2).
#[inline]
pub fn add_bending_forces(x: &[V3], c: &[f64], f: &mut [V3]) {
    for (i, &c) in (1..x.len().saturating_sub(1)).zip(c) {
        if c == 0.0 {
            continue;
        }
        let b = add(sub(x[i - 1], scale(x[i], 2.0)), x[i + 1]);
        let cb = scale(b, c);
        f[i - 1] = sub(f[i - 1], cb);
        f[i] = axpy(f[i], 2.0, cb);
        f[i + 1] = sub(f[i + 1], cb);
    }
}

/// Stretch energy of one strand, sum of 1/2 k_j (l_j - l0)^2, J.
pub fn stretch_energy(x: &[V3], k: &[f64], l0: f64) -> f64 {
    x.windows(2)
        .zip(k)
        .map(|(w, &k)| {
            let d = crate::geometry::norm(sub(w[1], w[0])) - l0;
            0.5 * k * d * d
        })
        .sum()
}

/// Bending energy of one strand, sum of (c_i / 2) |x_{i-1} - 2 x_i + x_{i+1}|^2, J.
pub fn bending_energy(x: &[V3], c: &[f64]) -> f64 {
    x.windows(3)
        .zip(c)
        .map(|(w, &c)| {
            let b = add(sub(w[0], scale(w[1], 2.0)), w[2]);
            0.5 * c * dot(b, b)
        })
        .sum()
}

/// Stretch plus bending energy of every strand, J (the default elastic energy of a method).
pub fn elastic_energy(setup: &Setup, state: &State) -> f64 {
    state
        .x
        .chunks_exact(setup.particles)
        .map(|x| stretch_energy(x, &setup.segment_k, setup.rest_length) + bending_energy(x, &setup.bend_c))
        .sum()
}

/// Bending energy only, of every strand, J (for methods whose segments are rigid).
pub fn bending_energy_all(setup: &Setup, state: &State) -> f64 {
    state
        .x
        .chunks_exact(setup.particles)
        .map(|x| bending_energy(x, &setup.bend_c))
        .sum()
}

/// Total linear momentum sum m_i v_i (N s), kinetic energy sum 1/2 m |v|^2 and gravitational
/// energy -sum m g . x (J), in one pass.
pub fn momentum_and_energy(setup: &Setup, state: &State) -> (V3, f64, f64) {
    let mut mom = [0.0; 3];
    let (mut ke, mut pe) = (0.0, 0.0);
    for (xs, vs) in state
        .x
        .chunks_exact(setup.particles)
        .zip(state.v.chunks_exact(setup.particles))
    {
        for ((x, v), &m) in xs.iter().zip(vs).zip(&setup.mass) {
            mom = axpy(mom, m, *v);
            ke += 0.5 * m * dot(*v, *v);
            pe -= m * dot(setup.gravity, *x);
        }
    }
    (mom, ke, pe)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn bent(theta: f64, l0: f64) -> Vec<V3> {
        vec![[-l0, 0.0, 0.0], [0.0; 3], [l0 * theta.cos(), l0 * theta.sin(), 0.0]]
    }

    /// At rest length the discrete energy is (E I / l0)(1 - cos theta) and tends to the
    /// continuum E I theta^2 / (2 l0) (curvature theta / l0 over a length l0).
    #[test]
    fn bending_energy_matches_the_angle_form() {
        let (ei, l0) = (2e-3, 0.05);
        let c = ei / (l0 * l0 * l0);
        for theta in [0.01, 0.3, 1.0, 2.5] {
            let e = bending_energy(&bent(theta, l0), &[c]);
            assert!((e - ei / l0 * (1.0 - theta.cos())).abs() < 1e-15, "{theta}");
        }
        let theta = 1e-3;
        let e = bending_energy(&bent(theta, l0), &[c]);
        assert!((e / (ei * theta * theta / (2.0 * l0)) - 1.0).abs() < 1e-6);
    }

    /// Forces are minus the gradient of the energies (central differences) and sum to zero, with
    /// a different stiffness on every segment and interior particle (a tapered strand).
    #[test]
    fn forces_are_minus_the_energy_gradient() {
        let x: Vec<V3> = vec![
            [0.0, 0.0, 0.0],
            [0.03, 0.01, -0.02],
            [0.05, -0.01, -0.05],
            [0.06, 0.02, -0.09],
        ];
        let (k, l0, c) = ([500.0, 300.0, 120.0], 0.035, [3.0, 1.2]);
        let energy = |x: &[V3]| stretch_energy(x, &k, l0) + bending_energy(x, &c);
        let mut f = vec![[0.0; 3]; 4];
        add_stretch_forces(&x, &k, l0, &mut f);
        add_bending_forces(&x, &c, &mut f);
        let eps = 1e-7;
        for i in 0..4 {
            for a in 0..3 {
                let mut xp = x.clone();
                let mut xm = x.clone();
                xp[i][a] += eps;
                xm[i][a] -= eps;
                let g = (energy(&xp) - energy(&xm)) / (2.0 * eps);
                assert!(
                    (f[i][a] + g).abs() < 1e-6 * (1.0 + g.abs()),
                    "{i} {a}: {} vs {}",
                    f[i][a],
                    -g
                );
            }
        }
        for a in 0..3 {
            assert!(f.iter().map(|v| v[a]).sum::<f64>().abs() < 1e-12);
        }
    }
}

//! Apparent weight arithmetic, shared by the node and its tests.

/// Vertical ground reaction force on a body of mass `mass` whose centre of mass accelerates
/// vertically at `a_z` under gravity `g` (magnitude, acting along -Z): Newton's second law
/// F - m g = m a_z, so F = m (g + a_z) in contact; 0 in flight (nothing to push on).
pub fn ground_reaction_force(mass: f64, g: f64, a_z: f64, contact: bool) -> f64 {
    if contact { mass * (g + a_z) } else { 0.0 }
}

/// Apparent gravity at a point accelerating at `a`: g_vec - a with g_vec = (0, 0, -g). It is
/// what a plumb line or a hanging element at that point feels; zero in free fall.
pub fn apparent_gravity(g: f64, a: [f64; 3]) -> [f64; 3] {
    [-a[0], -a[1], -g - a[2]]
}

/// Second time derivative of a path sampled every `dt` seconds, by finite differences:
/// the central difference (x[i-1] - 2 x[i] + x[i+1]) / dt^2 inside, and at each end the
/// one-sided four-point difference (2 x0 - 5 x1 + 4 x2 - x3) / dt^2 (second-order accurate,
/// Fornberg 1988) when there are at least 4 samples, else the three-point one
/// (x0 - 2 x1 + x2) / dt^2. All are exact for a parabola (zero truncation error for
/// polynomials up to degree 2, and the central and four-point ones up to degree 3).
/// `None` when there are fewer than 3 samples.
pub fn second_difference(path: &[[f64; 3]], dt: f64) -> Option<Vec<[f64; 3]>> {
    let n = path.len();
    if n < 3 {
        return None;
    }
    let inv = 1.0 / (dt * dt);
    let stencil = |i: usize, w: &[f64]| -> [f64; 3] {
        let mut out = [0.0; 3];
        for (k, c) in w.iter().enumerate() {
            for (o, x) in out.iter_mut().zip(path[i + k]) {
                *o += c * x;
            }
        }
        out.map(|v| v * inv)
    };
    let mut acc = Vec::with_capacity(n);
    let (first, last) = if n >= 4 {
        let fwd = stencil(0, &[2.0, -5.0, 4.0, -1.0]);
        // Backward: the same weights read from the end, 2 x[n-1] - 5 x[n-2] + 4 x[n-3] - x[n-4].
        let bwd = stencil(n - 4, &[-1.0, 4.0, -5.0, 2.0]);
        (fwd, bwd)
    } else {
        let c = stencil(0, &[1.0, -2.0, 1.0]);
        (c, c)
    };
    acc.push(first);
    for i in 1..n - 1 {
        acc.push(stencil(i - 1, &[1.0, -2.0, 1.0]));
    }
    acc.push(last);
    Some(acc)
}

/// Integral of a series sampled every `dt` seconds by the trapezoid rule; 0 for fewer than
/// 2 samples.
pub fn trapezoid(values: &[f64], dt: f64) -> f64 {
    if values.len() < 2 {
        return 0.0;
    }
    let inner: f64 = values[1..values.len() - 1].iter().sum();
    dt * (0.5 * (values[0] + values[values.len() - 1]) + inner)
}

/// Groups sorted frame indices into runs of consecutive indices, as (first, last) pairs.
pub fn runs(indices: &[usize]) -> Vec<(usize, usize)> {
    let mut out: Vec<(usize, usize)> = Vec::new();
    for &i in indices {
        match out.last_mut() {
            Some(r) if r.1 + 1 == i => r.1 = i,
            _ => out.push((i, i)),
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A cubic x(t) = t^3 sampled at t = 0, 0.1, ..., 0.5: x'' = 6 t exactly (calculus). The
    /// central and four-point one-sided differences have zero truncation error for cubics
    /// (Fornberg 1988, 'Generation of finite difference formulas on arbitrarily spaced grids',
    /// Math. Comp. 51(184), table of one-sided second-derivative weights 2, -5, 4, -1).
    #[test]
    fn second_difference_is_exact_for_a_cubic() {
        let dt = 0.1;
        let path: Vec<[f64; 3]> = (0..6)
            .map(|i| {
                let t = i as f64 * dt;
                [t * t * t, 0.0, 1.0]
            })
            .collect();
        let a = second_difference(&path, dt).expect("6 samples");
        for (i, v) in a.iter().enumerate() {
            let want = 6.0 * i as f64 * dt;
            assert!((v[0] - want).abs() < 1e-10, "frame {i}: {} vs {want}", v[0]);
            assert!(v[1].abs() < 1e-12 && v[2].abs() < 1e-12);
        }
        assert!(second_difference(&path[..2], dt).is_none());
    }

    /// Three samples of a parabola x = t^2 (x'' = 2): the three-point ends are exact too.
    #[test]
    fn three_samples_of_a_parabola() {
        let path = [[0.0, 0.0, 0.0], [0.25, 0.0, 0.0], [1.0, 0.0, 0.0]];
        let a = second_difference(&path, 0.5).expect("3 samples");
        for v in a {
            assert!((v[0] - 2.0).abs() < 1e-12, "{v:?}");
        }
    }

    /// Trapezoid rule on a straight line is exact: the integral of 2 t from 0 to 1 is 1.
    #[test]
    fn trapezoid_of_a_line_is_exact() {
        let v: Vec<f64> = (0..=10).map(|i| 2.0 * i as f64 / 10.0).collect();
        assert!((trapezoid(&v, 0.1) - 1.0).abs() < 1e-14);
        assert_eq!(trapezoid(&[5.0], 0.1), 0.0);
    }

    #[test]
    fn runs_group_consecutive_frames() {
        assert_eq!(runs(&[2, 3, 4, 7, 9, 10]), [(2, 4), (7, 7), (9, 10)]);
        assert!(runs(&[]).is_empty());
    }
}

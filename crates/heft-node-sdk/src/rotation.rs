//! Unit quaternions (x, y, z, w) as the host and the nodes both use them: the rotation matrix,
//! and spherical linear interpolation. One implementation, so that a bake and a strand turn a
//! transform between two samples the same way.

/// The rotation matrix of a unit quaternion (x, y, z, w), row-major `m[row][col]`.
pub fn matrix(q: [f64; 4]) -> [[f64; 3]; 3] {
    let [x, y, z, w] = q;
    [
        [
            1.0 - 2.0 * (y * y + z * z),
            2.0 * (x * y - z * w),
            2.0 * (x * z + y * w),
        ],
        [
            2.0 * (x * y + z * w),
            1.0 - 2.0 * (x * x + z * z),
            2.0 * (y * z - x * w),
        ],
        [
            2.0 * (x * z - y * w),
            2.0 * (y * z + x * w),
            1.0 - 2.0 * (x * x + y * y),
        ],
    ]
}

fn norm4(v: [f64; 4]) -> f64 {
    (v[0] * v[0] + v[1] * v[1] + v[2] * v[2] + v[3] * v[3]).sqrt()
}

/// Spherical linear interpolation from `a` to `b` along the shorter arc (Shoemake 1985,
/// "Animating rotation with quaternion curves", SIGGRAPH): a constant angular speed, exact for
/// every angle. The angle between the two is taken as 2 atan2(|a - b|, |a + b|), which keeps its
/// precision near zero, so no switch to a linear blend is needed but below 1e-9 rad, where both
/// agree to rounding. The result is normalised.
pub fn slerp(a: [f64; 4], b: [f64; 4], u: f64) -> [f64; 4] {
    let d = a[0] * b[0] + a[1] * b[1] + a[2] * b[2] + a[3] * b[3];
    let b = if d < 0.0 { b.map(|c| -c) } else { b };
    let diff = [0, 1, 2, 3].map(|k| b[k] - a[k]);
    let sum = [0, 1, 2, 3].map(|k| b[k] + a[k]);
    let angle = 2.0 * norm4(diff).atan2(norm4(sum));
    let (wa, wb) = if angle < 1e-9 {
        (1.0 - u, u)
    } else {
        let s = angle.sin();
        (((1.0 - u) * angle).sin() / s, (u * angle).sin() / s)
    };
    let q = [0, 1, 2, 3].map(|k| wa * a[k] + wb * b[k]);
    let n = norm4(q);
    q.map(|c| c / n)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Slerp keeps a constant angular speed (Shoemake 1985): a third of the way from the identity
    /// to 170 deg about an axis is 170/3 deg, also for two rotations 1e-6 rad apart; and it takes
    /// the shorter arc when the second is given with the opposite sign.
    #[test]
    fn slerp_constant_speed_on_the_shorter_arc() {
        for angle in [170f64.to_radians(), 1e-6] {
            let a = [0.0, 0.0, 0.0, 1.0];
            let b = [0.0, (angle / 2.0).sin(), 0.0, (angle / 2.0).cos()];
            for b in [b, b.map(|c| -c)] {
                let m = slerp(a, b, 1.0 / 3.0);
                let got = 2.0 * m[1].atan2(m[3]);
                assert!(
                    (got - angle / 3.0).abs() < 1e-15_f64.max(angle * 1e-13),
                    "{angle}: {got}"
                );
            }
        }
    }

    /// The matrix of a quarter turn about Z takes +X to +Y.
    #[test]
    fn quarter_turn_matrix() {
        let h = std::f64::consts::FRAC_PI_4;
        let m = matrix([0.0, 0.0, h.sin(), h.cos()]);
        assert!((m[1][0] - 1.0).abs() < 1e-15 && m[0][0].abs() < 1e-15);
    }
}

//! Small math that nodes and the host share: 3-vectors, unit quaternions (x, y, z, w) and
//! rigid transforms. One implementation, so that every node, the strand frame loop, the
//! readers and the bakes move and turn points the same way; a node author's own crate uses it
//! too instead of writing its own.

/// 3-vectors as `[f64; 3]` (x, y, z).
pub mod vec3 {
    /// A 3-vector.
    pub type V3 = [f64; 3];

    /// a + b
    #[inline(always)]
    pub fn add(a: V3, b: V3) -> V3 {
        [a[0] + b[0], a[1] + b[1], a[2] + b[2]]
    }
    /// a - b
    #[inline(always)]
    pub fn sub(a: V3, b: V3) -> V3 {
        [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
    }
    /// s a
    #[inline(always)]
    pub fn scale(a: V3, s: f64) -> V3 {
        [a[0] * s, a[1] * s, a[2] * s]
    }
    /// a + s b
    #[inline(always)]
    pub fn axpy(a: V3, s: f64, b: V3) -> V3 {
        [a[0] + s * b[0], a[1] + s * b[1], a[2] + s * b[2]]
    }
    /// a . b
    #[inline(always)]
    pub fn dot(a: V3, b: V3) -> f64 {
        a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
    }
    /// a x b (right-handed)
    #[inline(always)]
    pub fn cross(a: V3, b: V3) -> V3 {
        [
            a[1] * b[2] - a[2] * b[1],
            a[2] * b[0] - a[0] * b[2],
            a[0] * b[1] - a[1] * b[0],
        ]
    }
    /// |a|
    #[inline(always)]
    pub fn norm(a: V3) -> f64 {
        dot(a, a).sqrt()
    }
    /// The point a fraction `u` of the way from a to b: a + u (b - a).
    #[inline(always)]
    pub fn lerp(a: V3, b: V3, u: f64) -> V3 {
        axpy(a, u, sub(b, a))
    }
}

/// Unit quaternions as `[f64; 4]` (x, y, z, w): rotations.
pub mod quat {
    pub use crate::rotation::{matrix, slerp};

    /// A quaternion (x, y, z, w).
    pub type Quat = [f64; 4];

    /// No rotation.
    pub const IDENTITY: Quat = [0.0, 0.0, 0.0, 1.0];

    /// Hamilton product a b: b first, then a.
    #[inline]
    pub fn mul(a: Quat, b: Quat) -> Quat {
        [
            a[3] * b[0] + a[0] * b[3] + a[1] * b[2] - a[2] * b[1],
            a[3] * b[1] - a[0] * b[2] + a[1] * b[3] + a[2] * b[0],
            a[3] * b[2] + a[0] * b[1] - a[1] * b[0] + a[2] * b[3],
            a[3] * b[3] - a[0] * b[0] - a[1] * b[1] - a[2] * b[2],
        ]
    }

    /// The conjugate (the inverse of a unit quaternion).
    #[inline]
    pub fn conj(q: Quat) -> Quat {
        [-q[0], -q[1], -q[2], q[3]]
    }

    /// Rotates a vector by a unit quaternion: q v q*, evaluated as v + 2 w (u x v) + 2 u x (u x v)
    /// with u the vector part (the same product, expanded).
    #[inline]
    pub fn rotate(q: Quat, v: [f64; 3]) -> [f64; 3] {
        let (x, y, z, w) = (q[0], q[1], q[2], q[3]);
        let c = [
            2.0 * (y * v[2] - z * v[1]),
            2.0 * (z * v[0] - x * v[2]),
            2.0 * (x * v[1] - y * v[0]),
        ];
        [
            v[0] + w * c[0] + (y * c[2] - z * c[1]),
            v[1] + w * c[1] + (z * c[0] - x * c[2]),
            v[2] + w * c[2] + (x * c[1] - y * c[0]),
        ]
    }

    /// The 4D dot product.
    #[inline]
    pub fn dot(a: Quat, b: Quat) -> f64 {
        a.iter().zip(b).map(|(x, y)| x * y).sum()
    }

    /// Scaled to unit length; the identity when too short to have a direction.
    #[inline]
    pub fn normalise(q: Quat) -> Quat {
        let n = dot(q, q).sqrt();
        if n > 1e-12 { q.map(|c| c / n) } else { IDENTITY }
    }

    /// The unit quaternion of rotation vector `r` (axis times angle, rad): exp(r / 2), with
    /// sin(angle / 2) / angle taken from its Taylor series 1/2 - angle^2 / 48 near zero.
    #[inline]
    pub fn from_rotation_vector(r: [f64; 3]) -> Quat {
        let angle = (r[0] * r[0] + r[1] * r[1] + r[2] * r[2]).sqrt();
        let half = 0.5 * angle;
        let k = if angle < 1e-6 {
            0.5 - angle * angle / 48.0
        } else {
            half.sin() / angle
        };
        [k * r[0], k * r[1], k * r[2], half.cos()]
    }
}

/// Rigid transforms: a translation and a unit quaternion, as a transform port carries them.
pub mod transform {
    use super::quat::{Quat, rotate};
    use super::vec3::{V3, add};

    /// Where local point `p` of the transform (t, q) lies: t + q p q*.
    #[inline]
    pub fn apply(t: V3, q: Quat, p: V3) -> V3 {
        add(t, rotate(q, p))
    }

    /// One frame of a transform port (tx, ty, tz, qx, qy, qz, qw) as (t, q), the quaternion
    /// normalised; `None` when the frame holds fewer than 7 values, a value is not finite, or
    /// the quaternion is shorter than 1e-9 (no direction to normalise).
    pub fn read(frame: &[f64]) -> Option<(V3, Quat)> {
        if frame.len() < 7 || frame[..7].iter().any(|v| !v.is_finite()) {
            return None;
        }
        let q = [frame[3], frame[4], frame[5], frame[6]];
        let n = (q[0] * q[0] + q[1] * q[1] + q[2] * q[2] + q[3] * q[3]).sqrt();
        (n >= 1e-9).then(|| ([frame[0], frame[1], frame[2]], [q[0] / n, q[1] / n, q[2] / n, q[3] / n]))
    }
}

#[cfg(test)]
mod tests {
    use super::quat::dot;
    use super::quat::{IDENTITY, conj, from_rotation_vector, matrix, mul, normalise, rotate};
    use super::transform::apply;
    use super::vec3::{cross, lerp};

    /// A quarter turn about +Z takes +X to +Y (right-handed, Z up), three ways: rotating the
    /// vector, through the matrix, and as the product of two eighth turns; the rotation
    /// vector (0, 0, pi/2) gives the same quaternion; a point (1, 0, 0) of the transform at
    /// (1, 2, 3) so turned lies at (1, 3, 3).
    #[test]
    fn a_quarter_turn_about_z_three_ways() {
        let h = std::f64::consts::FRAC_PI_4;
        let q = [0.0, 0.0, h.sin(), h.cos()];
        let close = |a: [f64; 3], b: [f64; 3]| (0..3).all(|k| (a[k] - b[k]).abs() < 1e-15);
        assert!(close(rotate(q, [1.0, 0.0, 0.0]), [0.0, 1.0, 0.0]));
        let m = matrix(q);
        assert!(close([m[0][0], m[1][0], m[2][0]], [0.0, 1.0, 0.0]));
        let e = [0.0, 0.0, (h / 2.0).sin(), (h / 2.0).cos()];
        assert!((dot(mul(e, e), q) - 1.0).abs() < 1e-15);
        let r = from_rotation_vector([0.0, 0.0, std::f64::consts::FRAC_PI_2]);
        assert!((dot(r, q) - 1.0).abs() < 1e-15);
        assert!(close(apply([1.0, 2.0, 3.0], q, [1.0, 0.0, 0.0]), [1.0, 3.0, 3.0]));
        assert!(close(rotate(conj(q), rotate(q, [0.3, -0.2, 0.9])), [0.3, -0.2, 0.9]));
        assert_eq!(cross([1.0, 0.0, 0.0], [0.0, 1.0, 0.0]), [0.0, 0.0, 1.0]);
        assert_eq!(lerp([0.0; 3], [2.0, 4.0, 6.0], 0.5), [1.0, 2.0, 3.0]);
        assert_eq!(normalise([0.0; 4]), IDENTITY);
    }
}

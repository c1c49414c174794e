//! Small vector helpers, rigid poses interpolated between frames, and sphere colliders.

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
/// a x b
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

/// A rigid pose: translation and a unit quaternion (x, y, z, w), with its rotation matrix.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Pose {
    /// Translation (world position of the local origin), m.
    pub t: V3,
    /// Unit quaternion x, y, z, w.
    pub q: [f64; 4],
    /// The rotation matrix of `q`, row-major.
    pub r: [[f64; 3]; 3],
}

impl Pose {
    /// The world frame itself.
    pub const IDENTITY: Pose = Pose {
        t: [0.0; 3],
        q: [0.0, 0.0, 0.0, 1.0],
        r: [[1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]],
    };

    /// A pose from a translation and a unit quaternion (x, y, z, w).
    pub fn new(t: V3, q: [f64; 4]) -> Pose {
        let [x, y, z, w] = q;
        let r = [
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
        ];
        Pose { t, q, r }
    }

    /// Rotates a local vector into world axes.
    #[inline(always)]
    pub fn rotate(&self, v: V3) -> V3 {
        let r = &self.r;
        [
            r[0][0] * v[0] + r[0][1] * v[1] + r[0][2] * v[2],
            r[1][0] * v[0] + r[1][1] * v[1] + r[1][2] * v[2],
            r[2][0] * v[0] + r[2][1] * v[1] + r[2][2] * v[2],
        ]
    }

    /// The world position of a local point.
    #[inline(always)]
    pub fn apply(&self, p: V3) -> V3 {
        add(self.rotate(p), self.t)
    }
}

/// Reads one frame of a transform series (7 values); the quaternion is normalised. `None`
/// when the values are not finite or the quaternion is (nearly) zero.
pub fn read_transform(v: &[f64]) -> Option<(V3, [f64; 4])> {
    if v.len() < 7 || v[..7].iter().any(|x| !x.is_finite()) {
        return None;
    }
    let q = [v[3], v[4], v[5], v[6]];
    let n = (q[0] * q[0] + q[1] * q[1] + q[2] * q[2] + q[3] * q[3]).sqrt();
    if n < 1e-9 {
        return None;
    }
    Some(([v[0], v[1], v[2]], [q[0] / n, q[1] / n, q[2] / n, q[3] / n]))
}

/// The motion of a transform over one frame: translation interpolated linearly, rotation by
/// normalised lerp (nlerp) along the shorter arc.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Track {
    t0: V3,
    t1: V3,
    q0: [f64; 4],
    q1: [f64; 4],
    /// Velocity of the translation over the frame, m/s.
    pub linear: V3,
    /// Angular velocity over the frame (world axes), rad/s: the rotation from the start to the
    /// end orientation divided by the frame duration.
    pub angular: V3,
}

impl Track {
    /// A transform that does not move.
    pub fn still(t: V3, q: [f64; 4]) -> Track {
        Track {
            t0: t,
            t1: t,
            q0: q,
            q1: q,
            linear: [0.0; 3],
            angular: [0.0; 3],
        }
    }

    /// The motion from (t0, q0) to (t1, q1) over `dt` seconds (unit quaternions).
    pub fn between(t0: V3, q0: [f64; 4], t1: V3, q1: [f64; 4], dt: f64) -> Track {
        let d = q0[0] * q1[0] + q0[1] * q1[1] + q0[2] * q1[2] + q0[3] * q1[3];
        let q1 = if d < 0.0 { [-q1[0], -q1[1], -q1[2], -q1[3]] } else { q1 };
        // q_rel = q1 * conj(q0): the world-frame rotation taking the start to the end orientation.
        let (a, b) = ([q1[0], q1[1], q1[2]], q1[3]);
        let (c, e) = ([-q0[0], -q0[1], -q0[2]], q0[3]);
        let v = add(add(scale(c, b), scale(a, e)), cross(a, c));
        let w = b * e - dot(a, c);
        let s = norm(v);
        let angular = if s < 1e-12 {
            scale(v, 2.0 / dt)
        } else {
            scale(v, 2.0 * s.atan2(w.max(0.0)) / (s * dt))
        };
        Track {
            t0,
            t1,
            q0,
            q1,
            linear: scale(sub(t1, t0), 1.0 / dt),
            angular,
        }
    }

    /// The pose at fraction `frac` (0 = start of the frame, 1 = end).
    pub fn pose(&self, frac: f64) -> Pose {
        let t = axpy(self.t0, frac, sub(self.t1, self.t0));
        let mut q = [0.0; 4];
        for (k, slot) in q.iter_mut().enumerate() {
            *slot = self.q0[k] + frac * (self.q1[k] - self.q0[k]);
        }
        // q0 . q1 >= 0 after the sign flip, so |q| >= 1/sqrt(2): never zero.
        let n = (q[0] * q[0] + q[1] * q[1] + q[2] * q[2] + q[3] * q[3]).sqrt();
        Pose::new(t, [q[0] / n, q[1] / n, q[2] / n, q[3] / n])
    }

    /// The translation at fraction `frac` (extrapolated linearly outside 0..=1).
    pub fn translation(&self, frac: f64) -> V3 {
        axpy(self.t0, frac, sub(self.t1, self.t0))
    }

    /// The rigid-body velocity field of the transform at fraction `frac`, with the frame's
    /// constant linear and angular velocity.
    pub fn velocity(&self, frac: f64) -> RigidVelocity {
        RigidVelocity {
            origin: axpy(self.t0, frac, sub(self.t1, self.t0)),
            linear: self.linear,
            angular: self.angular,
        }
    }
}

/// The velocity field of a rigid body: v(x) = linear + angular x (x - origin).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct RigidVelocity {
    /// The body's reference point (world), m.
    pub origin: V3,
    /// Velocity of the reference point, m/s.
    pub linear: V3,
    /// Angular velocity (world axes), rad/s.
    pub angular: V3,
}

impl RigidVelocity {
    /// The velocity of the body's material point at world position `x`.
    #[inline(always)]
    pub fn at(&self, x: V3) -> V3 {
        add(self.linear, cross(self.angular, sub(x, self.origin)))
    }
}

/// A sphere collider at one instant.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Sphere {
    /// Centre (world), m.
    pub centre: V3,
    /// Radius, m.
    pub radius: f64,
    /// Velocity of the centre, m/s.
    pub velocity: V3,
}

/// Up to three sphere colliders at one instant.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Colliders {
    /// The spheres; only the first `count` are live.
    pub spheres: [Sphere; 3],
    /// How many spheres are live.
    pub count: usize,
}

/// Factor on the radius a projected particle is placed at, so that rounding never leaves it
/// a hair inside the sphere (a few ulps; common practice, no source).
const SURFACE: f64 = 1.0 + 8.0 * f64::EPSILON;

impl Colliders {
    /// True when no collider is live.
    pub fn is_empty(&self) -> bool {
        self.count == 0
    }

    /// Pushes a particle found inside a sphere out to its surface along the radius and removes
    /// the inward normal component of its velocity relative to the sphere's centre. Repeats
    /// (up to 4 passes) while a push lands the particle inside another sphere; a particle
    /// caught where overlapping spheres leave no outside point in reach may stay inside.
    /// Returns true when anything moved.
    #[inline]
    pub fn project(&self, x: &mut V3, v: &mut V3) -> bool {
        let mut moved = false;
        for _ in 0..4 {
            let mut any = false;
            for s in &self.spheres[..self.count] {
                let d = sub(*x, s.centre);
                let d2 = dot(d, d);
                if d2 >= s.radius * s.radius {
                    continue;
                }
                let l = d2.sqrt();
                // A particle exactly at the centre leaves upward (+Z): deterministic.
                let n = if l > 0.0 { scale(d, 1.0 / l) } else { [0.0, 0.0, 1.0] };
                *x = axpy(s.centre, s.radius * SURFACE, n);
                let vn = dot(sub(*v, s.velocity), n);
                if vn < 0.0 {
                    *v = axpy(*v, -vn, n);
                }
                any = true;
            }
            moved |= any;
            if !any || self.count == 1 {
                break;
            }
        }
        moved
    }

    /// True when `x` is strictly inside a live sphere.
    pub fn contains(&self, x: V3) -> bool {
        self.spheres[..self.count].iter().any(|s| {
            let d = sub(x, s.centre);
            dot(d, d) < s.radius * s.radius
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: V3, b: V3, tol: f64) -> bool {
        (0..3).all(|k| (a[k] - b[k]).abs() <= tol)
    }

    #[test]
    fn a_quarter_turn_about_z_maps_x_to_y() {
        let h = std::f64::consts::FRAC_1_SQRT_2;
        let p = Pose::new([1.0, 0.0, 0.0], [0.0, 0.0, h, h]);
        assert!(close(p.apply([1.0, 0.0, 0.0]), [1.0, 1.0, 0.0], 1e-15));
        assert!(close(p.rotate([0.0, 0.0, 1.0]), [0.0, 0.0, 1.0], 1e-15));
    }

    #[test]
    fn angular_velocity_of_a_quarter_turn_over_one_second() {
        let h = std::f64::consts::FRAC_1_SQRT_2;
        // Sign-flipped end quaternion: the shorter arc is still taken.
        let t = Track::between([0.0; 3], [0.0, 0.0, 0.0, 1.0], [0.0; 3], [0.0, 0.0, -h, -h], 1.0);
        assert!(close(t.angular, [0.0, 0.0, std::f64::consts::FRAC_PI_2], 1e-14));
        let half = t.pose(0.5);
        // nlerp at the midpoint of a symmetric arc is the slerp midpoint: 45 degrees.
        let e = std::f64::consts::FRAC_PI_8;
        assert!(close([half.q[2], half.q[3], 0.0], [e.sin(), e.cos(), 0.0], 1e-15));
    }

    #[test]
    fn projection_lands_on_the_surface_and_removes_inward_speed() {
        let c = Colliders {
            spheres: [
                Sphere {
                    centre: [0.0; 3],
                    radius: 1.0,
                    velocity: [0.0; 3],
                },
                Sphere::default(),
                Sphere::default(),
            ],
            count: 1,
        };
        let mut x = [0.0, 0.0, 0.5];
        let mut v = [1.0, 0.0, -2.0];
        assert!(c.project(&mut x, &mut v));
        assert!(!c.contains(x));
        assert!(close(x, [0.0, 0.0, 1.0], 1e-14));
        assert!(close(v, [1.0, 0.0, 0.0], 1e-15));
    }
}

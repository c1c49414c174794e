//! Small vector helpers, rigid poses interpolated between frames, and the colliders: spheres and
//! (tapered) capsules.

pub use heft_node_sdk::math::vec3::{V3, add, axpy, cross, dot, norm, scale, sub};

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
        let r = heft_node_sdk::math::quat::matrix(q);
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

/// One frame of a transform input as (translation, unit quaternion); see
/// [`heft_node_sdk::math::transform::read`].
pub use heft_node_sdk::math::transform::read as read_transform;

/// The motion of a transform over one frame. The translation follows the cubic Hermite
/// curve through the two frame samples with the velocities at the two ends (continuous in
/// position and velocity from frame to frame; exact for a path that is a polynomial of degree
/// up to 3 in time, a free-fall parabola among them, when the end velocities are exact), or
/// the straight line when no end velocities are given. The rotation turns at the constant
/// angular velocity that takes the start orientation to the end one along the shorter arc
/// (spherical linear interpolation, Shoemake 1985), so a point carried by a transform turning
/// at a constant rate moves along its arc at a constant speed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Track {
    t0: V3,
    t1: V3,
    q0: [f64; 4],
    q1: [f64; 4],
    /// Velocity of the translation at the start and the end of the frame, m/s.
    m0: V3,
    m1: V3,
    /// The frame's duration, s.
    dt: f64,
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
            m0: [0.0; 3],
            m1: [0.0; 3],
            dt: 1.0,
            angular: [0.0; 3],
        }
    }

    /// The motion from (t0, q0) to (t1, q1) over `dt` seconds (unit quaternions), the
    /// translation along the straight line.
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
        let linear = scale(sub(t1, t0), 1.0 / dt);
        Track {
            t0,
            t1,
            q0,
            q1,
            m0: linear,
            m1: linear,
            dt,
            angular,
        }
    }

    /// The same frame with the translation's velocities at its start and end (m/s): the path
    /// becomes the cubic Hermite curve through the two samples with those tangents.
    pub fn with_end_velocities(self, m0: V3, m1: V3) -> Track {
        Track { m0, m1, ..self }
    }

    /// The pose at fraction `frac` (0 = start of the frame, 1 = end).
    pub fn pose(&self, frac: f64) -> Pose {
        Pose::new(self.translation(frac), self.rotation(frac))
    }

    /// The rotation at fraction `frac`: the start orientation turned by `angular` for
    /// `frac` of the frame.
    fn rotation(&self, frac: f64) -> [f64; 4] {
        heft_node_sdk::math::quat::slerp(self.q0, self.q1, frac)
    }

    /// The translation at fraction `frac` (the curve extended outside 0..=1).
    pub fn translation(&self, frac: f64) -> V3 {
        let u = frac;
        let (u2, u3) = (u * u, u * u * u);
        let h00 = 2.0 * u3 - 3.0 * u2 + 1.0;
        let h10 = u3 - 2.0 * u2 + u;
        let h01 = -2.0 * u3 + 3.0 * u2;
        let h11 = u3 - u2;
        [0, 1, 2].map(|k| h00 * self.t0[k] + h10 * self.dt * self.m0[k] + h01 * self.t1[k] + h11 * self.dt * self.m1[k])
    }

    /// The velocity of the translation at fraction `frac`, m/s.
    pub fn linear_at(&self, frac: f64) -> V3 {
        let u = frac;
        let u2 = u * u;
        let d00 = 6.0 * u2 - 6.0 * u;
        let d10 = 3.0 * u2 - 4.0 * u + 1.0;
        let d01 = -6.0 * u2 + 6.0 * u;
        let d11 = 3.0 * u2 - 2.0 * u;
        [0, 1, 2].map(|k| (d00 * self.t0[k] + d01 * self.t1[k]) / self.dt + d10 * self.m0[k] + d11 * self.m1[k])
    }

    /// The acceleration of the translation at fraction `frac`, m/s^2 (the cubic's second
    /// derivative: the parabola's own acceleration for a free fall).
    pub fn acceleration_at(&self, frac: f64) -> V3 {
        let u = frac;
        let (a00, a10, a01, a11) = (12.0 * u - 6.0, 6.0 * u - 4.0, 6.0 - 12.0 * u, 6.0 * u - 2.0);
        let inv = 1.0 / self.dt;
        [0, 1, 2].map(|k| ((a00 * self.t0[k] + a01 * self.t1[k]) * inv + a10 * self.m0[k] + a11 * self.m1[k]) * inv)
    }

    /// The rigid-body velocity field of the transform at fraction `frac`: the translation's
    /// velocity there and the frame's constant angular velocity.
    pub fn velocity(&self, frac: f64) -> RigidVelocity {
        RigidVelocity {
            origin: self.translation(frac),
            linear: self.linear_at(frac),
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

/// Coulomb friction at a contact: the static and the kinetic coefficient.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Friction {
    /// Static coefficient: a contact whose sliding speed is within this times the normal velocity
    /// change stops sliding.
    pub static_coefficient: f64,
    /// Kinetic coefficient: otherwise the sliding speed drops by this times the normal velocity
    /// change.
    pub kinetic: f64,
    /// The step the contact's velocity was taken over, s: the sliding the friction takes out of
    /// the velocity is taken out of that step's displacement too (zero: velocity only).
    pub step: f64,
}

/// A contact's velocity ([`contact_velocity`]) and the matching position: the tangential
/// displacement the friction removed from this step (`friction.step` times the velocity it
/// took away) taken back, so a particle that static friction holds does not creep.
#[inline]
fn contact_with_friction(x: &mut V3, v: &mut V3, surface: V3, n: V3, friction: Friction) {
    let before = *v;
    *v = contact_velocity(before, surface, n, friction);
    if friction.step > 0.0 && (friction.kinetic > 0.0 || friction.static_coefficient > 0.0) {
        // The change in the tangential part (the normal part's change is the push out, which
        // the projection has already made in position).
        let change = sub(*v, before);
        let tangential = axpy(change, -dot(change, n), n);
        *x = axpy(*x, friction.step, tangential);
    }
}

/// The velocity of a particle after a contact with unit normal `n` (out of the collider) on a
/// surface moving at `surface`: the inward part of the relative velocity removed, and its
/// tangential part slowed by Coulomb friction, the normal velocity change dvn standing for the
/// normal impulse per unit mass: stopped when its speed is within mu_s dvn, else shortened by
/// mu_k dvn (Bridson, Fedkiw & Anderson 2002, "Robust treatment of collisions, contact and
/// friction for cloth animation", SIGGRAPH, sec. 7.2). With no friction only the inward part
/// goes. Resting on the ground, dvn is g h each step, so a sliding particle slows at mu_k g.
#[inline]
pub fn contact_velocity(v: V3, surface: V3, n: V3, friction: Friction) -> V3 {
    let rel = sub(v, surface);
    let vn = dot(rel, n);
    if vn >= 0.0 {
        return v;
    }
    let dvn = -vn;
    let tangential = axpy(rel, -vn, n);
    if friction.kinetic <= 0.0 && friction.static_coefficient <= 0.0 {
        return axpy(v, -vn, n);
    }
    let speed = norm(tangential);
    let kept = if speed <= friction.static_coefficient * dvn {
        0.0
    } else {
        (1.0 - friction.kinetic * dvn / speed).max(0.0)
    };
    add(surface, scale(tangential, kept))
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

/// Factor on the radius a projected particle is placed at, so that rounding never leaves it
/// a hair inside the sphere (a few ulps; common practice, no source).
const SURFACE: f64 = 1.0 + 8.0 * f64::EPSILON;

impl Sphere {
    /// Pushes a particle found inside the sphere out to its surface along the radius and removes
    /// the inward normal component of its velocity relative to the sphere's centre. Returns true
    /// when the particle was inside.
    #[inline]
    pub fn project(&self, x: &mut V3, v: &mut V3) -> bool {
        self.project_with(x, v, Friction::default())
    }

    /// [`Sphere::project`] with Coulomb friction on the tangential velocity ([`contact_velocity`]).
    #[inline]
    pub fn project_with(&self, x: &mut V3, v: &mut V3, friction: Friction) -> bool {
        let d = sub(*x, self.centre);
        let d2 = dot(d, d);
        if d2 >= self.radius * self.radius {
            return false;
        }
        let l = d2.sqrt();
        // A particle exactly at the centre leaves upward (+Z): deterministic.
        let n = if l > 0.0 { scale(d, 1.0 / l) } else { [0.0, 0.0, 1.0] };
        *x = axpy(self.centre, self.radius * SURFACE, n);
        contact_with_friction(x, v, self.velocity, n, friction);
        true
    }

    /// True when `x` is strictly inside the sphere.
    #[inline]
    pub fn contains(&self, x: V3) -> bool {
        let d = sub(x, self.centre);
        dot(d, d) < self.radius * self.radius
    }
}

/// A capsule collider at one instant, straight or tapered: the union of the balls centred on
/// the segment from `start` to `end` whose radius varies linearly from `start_radius` to
/// `end_radius` (a "round cone"). It is also the convex hull of the two end balls, since the
/// ball at parameter t is the Minkowski combination (1 - t) B(start, r0) + t B(end, r1) and the
/// convex hull of two convex sets is the union of their convex combinations (Schneider 2014,
/// Convex Bodies: The Brunn-Minkowski Theory, 2nd ed., sec. 1.1 and 3.1, from memory). Its
/// surface is the two end spheres' outer caps joined by the cone frustum tangent to both. Made
/// only where neither end ball contains the other ([`Capsule::new`]; [`Collider::capsule`]
/// falls back to a sphere otherwise).
///
/// Closest surface point (derived here; the geometry is the planar one of the two circles and
/// their common external tangent). Let L = |end - start|, u the unit axis, dr = r1 - r0 and
/// sin(phi) = dr / L, cos(phi) = sqrt(L^2 - dr^2) / L (|dr| < L). A point x has the axial
/// coordinate a = (x - start) . u and the radial distance rho from the axis, in the direction w
/// (a unit vector perpendicular to u). In the half-plane of u and w the shape's outline is the
/// circle of radius r0 about 0, the circle of radius r1 about (L, 0) and their common tangent
/// with outward normal n = (-sin phi, cos phi) (in 3D n = cos(phi) w - sin(phi) u), which
/// touches them at r0 n and (L, 0) + r1 n: the tangency needs (L, 0) . n + r1 = r0, i.e.
/// sin(phi) = dr / L. Along e = (cos phi, sin phi) the tangent runs from 0 to L cos(phi), and
/// tau = a cos(phi) + rho sin(phi) is the coordinate of x along it. The shape is convex with a
/// smooth (C1) outline, so the nearest surface point of any x, inside or out, is the one whose
/// normal line passes through x on the near side, and the normal lines partition the half-plane
/// by tau: tau <= 0, the start cap (normals through the start centre); tau >= L cos(phi), the
/// end cap; otherwise the tangent, where the normal line through x meets the axis at
/// a + rho tan(phi), the centre of the ball of parameter t = tau / (L cos phi) that touches the
/// tangent at the foot of the normal. For an inside point the same partition holds: the depth
/// of x in a convex body is min over unit m of (h(m) - x . m), h the support function, here
/// h(m) = max(start . m + r0, end . m + r1) (the hull of two balls); over the directions where
/// the start ball's support is the larger (angle from u at least 90 deg + phi) the minimum is at
/// m along x - start if that direction lies there (tau <= 0), else at the boundary direction n,
/// which gives the tangent's distance r0 - (x - start) . n; likewise at the end; the smaller of
/// the two minima is the cap's when tau is outside (0, L cos phi) and the tangent's inside it.
/// In every case the nearest surface point lies on the ball of parameter
/// t = clamp(tau / (L cos phi), 0, 1), along n (on the tangent) or along the radius (on a cap).
/// Points in the other half of the plane are never nearer: the outline is symmetric about the
/// axis and x lies on the side of w.
///
/// The surface moves with the two ends: by the envelope theorem on the signed distance
/// min over t of |x - c(t)| - r(t), its normal speed at a surface point is n . c'(t*) with t*
/// the ball it lies on, c'(t*) = (1 - t*) v_start + t* v_end.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Capsule {
    /// Centre of the start ball (world), m.
    pub start: V3,
    /// Centre of the end ball (world), m.
    pub end: V3,
    /// Radius at the start, m.
    pub start_radius: f64,
    /// Radius at the end, m.
    pub end_radius: f64,
    /// Velocity of the start centre, m/s.
    pub start_velocity: V3,
    /// Velocity of the end centre, m/s.
    pub end_velocity: V3,
    /// Unit axis from start to end.
    axis: V3,
    /// How far outside the surface a projected particle is put, m: 32 ulps of the largest
    /// coordinate, length and radius involved, so that rounding never leaves it a hair inside
    /// (common practice, no source).
    slack: f64,
    /// |end - start|, m.
    length: f64,
    /// sin(phi) = (end_radius - start_radius) / length.
    sin: f64,
    /// cos(phi).
    cos: f64,
}

/// Where a point is relative to a capsule's surface: the ball of the family its nearest surface
/// point lies on, that point's outward normal, and the signed distance (negative inside).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CapsuleContact {
    /// Parameter of the ball: 0 at the start, 1 at the end.
    pub t: f64,
    /// Centre of that ball, m.
    pub centre: V3,
    /// Its radius, m.
    pub radius: f64,
    /// Outward unit normal of the surface at the nearest surface point.
    pub normal: V3,
    /// Signed distance from the surface, m (negative inside).
    pub distance: f64,
}

impl Capsule {
    /// A capsule from ball (start, r0) to ball (end, r1) with the velocities of the two centres;
    /// `None` when one end ball contains the other (L <= |r1 - r0|: the shape is then that ball),
    /// or for values that are not finite.
    pub fn new(start: V3, end: V3, r0: f64, r1: f64, start_velocity: V3, end_velocity: V3) -> Option<Capsule> {
        let d = sub(end, start);
        let length = norm(d);
        let dr = r1 - r0;
        let valid = length.is_finite() && dr.is_finite() && length > dr.abs();
        if !valid {
            return None;
        }
        Some(Capsule {
            start,
            end,
            start_radius: r0,
            end_radius: r1,
            start_velocity,
            end_velocity,
            axis: scale(d, 1.0 / length),
            slack: 32.0
                * f64::EPSILON
                * (start.iter().chain(&end).fold(0.0f64, |m, c| m.max(c.abs())) + length + r0.max(r1)),
            length,
            sin: dr / length,
            // sqrt(L^2 - dr^2) / L without the cancellation of L^2 - dr^2.
            cos: ((length - dr) * (length + dr)).sqrt() / length,
        })
    }

    /// The unit axis from start to end.
    pub fn axis(&self) -> V3 {
        self.axis
    }

    /// |end - start|, m.
    pub fn length(&self) -> f64 {
        self.length
    }

    /// The larger of the two radii, m.
    pub fn max_radius(&self) -> f64 {
        self.start_radius.max(self.end_radius)
    }

    /// The nearest surface point's ball, normal and the signed distance of `x` (see the type's
    /// notes). A point on the axis, where the direction away from it is not defined, leaves
    /// along the part of +Z perpendicular to the axis (+X for a vertical axis): deterministic,
    /// and upward off a horizontal limb.
    #[inline]
    pub fn contact(&self, x: V3) -> CapsuleContact {
        let u = self.axis;
        let d = sub(x, self.start);
        let a = dot(d, u);
        let (rho, w) = radial(d, u);
        let (s, c) = (self.sin, self.cos);
        let side = axpy(scale(w, c), -s, u);
        let tau = a * c + rho * s;
        if tau <= 0.0 {
            let l = norm(d);
            CapsuleContact {
                t: 0.0,
                centre: self.start,
                radius: self.start_radius,
                normal: if l > 0.0 { scale(d, 1.0 / l) } else { side },
                distance: l - self.start_radius,
            }
        } else if tau >= self.length * c {
            let e = sub(x, self.end);
            let l = norm(e);
            CapsuleContact {
                t: 1.0,
                centre: self.end,
                radius: self.end_radius,
                normal: if l > 0.0 { scale(e, 1.0 / l) } else { side },
                distance: l - self.end_radius,
            }
        } else {
            let t = tau / (self.length * c);
            CapsuleContact {
                t,
                centre: axpy(self.start, t, sub(self.end, self.start)),
                radius: self.start_radius + t * (self.end_radius - self.start_radius),
                normal: side,
                distance: rho * c - a * s - self.start_radius,
            }
        }
    }

    /// The signed distance of `x` from the surface, m (negative inside).
    pub fn signed_distance(&self, x: V3) -> f64 {
        self.contact(x).distance
    }

    /// True when `x` is strictly inside the capsule.
    #[inline]
    pub fn contains(&self, x: V3) -> bool {
        self.contact(x).distance < 0.0
    }

    /// The velocity of the surface at the nearest surface point of parameter `t`:
    /// (1 - t) v_start + t v_end (its normal component is the surface's normal speed).
    #[inline]
    pub fn surface_velocity(&self, t: f64) -> V3 {
        axpy(scale(self.start_velocity, 1.0 - t), t, self.end_velocity)
    }

    /// Pushes a particle found inside the capsule to the nearest surface point (onto the ball of
    /// the family that point lies on, along the surface normal) and removes the inward normal
    /// component of its velocity relative to the surface there, as [`Sphere::project`] does.
    /// Returns true when the particle was inside.
    #[inline]
    pub fn project(&self, x: &mut V3, v: &mut V3) -> bool {
        self.project_with(x, v, Friction::default())
    }

    /// [`Capsule::project`] with Coulomb friction on the tangential velocity ([`contact_velocity`]).
    #[inline]
    pub fn project_with(&self, x: &mut V3, v: &mut V3, friction: Friction) -> bool {
        let k = self.contact(*x);
        if k.distance >= 0.0 {
            return false;
        }
        let n = k.normal;
        *x = axpy(k.centre, k.radius + self.slack, n);
        contact_with_friction(x, v, self.surface_velocity(k.t), n, friction);
        true
    }
}

/// The distance of `d` from the line along the unit vector `u`, and the unit direction away
/// from it, perpendicular to `u` to rounding: Gram-Schmidt against `u`, repeated while a pass
/// shortens the vector below 1 / sqrt(2) of its length (Kahan's "twice is enough" criterion, in
/// Parlett, The Symmetric Eigenvalue Problem, 1980, sec. 6-9, from memory). Where the remainder is
/// rounding noise (`d` on the line) its direction means nothing: the distance is then 0 and
/// the direction [`perpendicular`] to `u`.
#[inline]
fn radial(d: V3, u: V3) -> (f64, V3) {
    let mut q = axpy(d, -dot(d, u), u);
    let mut l = norm(q);
    for _ in 0..2 {
        let r = axpy(q, -dot(q, u), u);
        let lr = norm(r);
        if lr >= l * std::f64::consts::FRAC_1_SQRT_2 {
            return if lr > 0.0 {
                (lr, scale(r, 1.0 / lr))
            } else {
                (0.0, perpendicular(u))
            };
        }
        (q, l) = (r, lr);
    }
    (0.0, perpendicular(u))
}

/// A unit vector perpendicular to the unit vector `u`: the part of +Z perpendicular to it, or of
/// +X when `u` is (nearly) vertical.
fn perpendicular(u: V3) -> V3 {
    let z = axpy([0.0, 0.0, 1.0], -u[2], u);
    let l = norm(z);
    if l > 1e-6 {
        return scale(z, 1.0 / l);
    }
    let x = axpy([1.0, 0.0, 0.0], -u[0], u);
    scale(x, 1.0 / norm(x))
}

/// One collider at one instant: a sphere or a capsule.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Collider {
    /// A sphere.
    Sphere(Sphere),
    /// A capsule, straight or tapered.
    Capsule(Capsule),
    /// The ground: everything below a height.
    Ground(Ground),
}

/// The ground at one instant: the half-space z < `height` (world Z is up), still.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Ground {
    /// Height of the ground, m.
    pub height: f64,
}

impl Ground {
    /// Lifts a particle below the ground onto it and removes its downward velocity. Returns
    /// true when the particle was below.
    #[inline]
    pub fn project(&self, x: &mut V3, v: &mut V3) -> bool {
        self.project_with(x, v, Friction::default())
    }

    /// [`Ground::project`] with Coulomb friction on the horizontal velocity ([`contact_velocity`]).
    #[inline]
    pub fn project_with(&self, x: &mut V3, v: &mut V3, friction: Friction) -> bool {
        if x[2] >= self.height {
            return false;
        }
        // Just above, by the rounding of the height (a particle left exactly on it is not inside).
        x[2] = self.height + 8.0 * f64::EPSILON * self.height.abs().max(1.0);
        contact_with_friction(x, v, [0.0; 3], [0.0, 0.0, 1.0], friction);
        true
    }

    /// True when `x` is strictly below the ground.
    #[inline]
    pub fn contains(&self, x: V3) -> bool {
        x[2] < self.height
    }
}

impl Default for Collider {
    fn default() -> Collider {
        Collider::Sphere(Sphere::default())
    }
}

impl Collider {
    /// The capsule from ball (start, r0) to ball (end, r1) (see [`Capsule::new`]), or, when one
    /// end ball contains the other, that ball as a sphere moving with its centre.
    pub fn capsule(start: V3, end: V3, r0: f64, r1: f64, start_velocity: V3, end_velocity: V3) -> Collider {
        match Capsule::new(start, end, r0, r1, start_velocity, end_velocity) {
            Some(c) => Collider::Capsule(c),
            None if r1 > r0 => Collider::Sphere(Sphere {
                centre: end,
                radius: r1,
                velocity: end_velocity,
            }),
            None => Collider::Sphere(Sphere {
                centre: start,
                radius: r0,
                velocity: start_velocity,
            }),
        }
    }

    /// See [`Sphere::project`] and [`Capsule::project`].
    #[inline]
    pub fn project(&self, x: &mut V3, v: &mut V3) -> bool {
        self.project_with(x, v, Friction::default())
    }

    /// The signed distance of `x` from the surface (negative inside), the outward unit normal
    /// at the nearest surface point, and the surface's velocity there.
    #[inline]
    pub fn nearest(&self, x: V3) -> (f64, V3, V3) {
        match self {
            Collider::Sphere(s) => {
                let d = sub(x, s.centre);
                let l = norm(d);
                let n = if l > 0.0 { scale(d, 1.0 / l) } else { [0.0, 0.0, 1.0] };
                (l - s.radius, n, s.velocity)
            }
            Collider::Capsule(c) => {
                let k = c.contact(x);
                (k.distance, k.normal, c.surface_velocity(k.t))
            }
            Collider::Ground(g) => (x[2] - g.height, [0.0, 0.0, 1.0], [0.0; 3]),
        }
    }

    /// [`Collider::project`] with Coulomb friction.
    #[inline]
    pub fn project_with(&self, x: &mut V3, v: &mut V3, friction: Friction) -> bool {
        match self {
            Collider::Sphere(s) => s.project_with(x, v, friction),
            Collider::Capsule(c) => c.project_with(x, v, friction),
            Collider::Ground(g) => g.project_with(x, v, friction),
        }
    }

    /// True when `x` is strictly inside.
    #[inline]
    pub fn contains(&self, x: V3) -> bool {
        match self {
            Collider::Sphere(s) => s.contains(x),
            Collider::Capsule(c) => c.contains(x),
            Collider::Ground(g) => g.contains(x),
        }
    }
}

/// One Gauss-Newton step of a particle at `x` inside a collider towards the crease where it
/// meets the nearest other surface, for a particle that pushes out of one collider keep landing
/// in another. With d1, n1 the signed distance and outward normal of the collider it is
/// deepest in, and d2, n2 those of the other surface nearest to `x` (inside it or closer than
/// |d1|, so that a push out of the first would reach it), the smallest move with
/// n1 . dx = -d1 and n2 . dx = -d2 (each surface linearised at its nearest point: Gauss-Newton
/// for the two constraints; Nocedal & Wright 2006, Numerical Optimization, sec. 10.3), is
/// dx = a n1 + b n2 from the 2 x 2 normal equations, aimed a few ulps past the surfaces. Then
/// the inward velocity relative to each surface goes ([`contact_velocity`]). With no other
/// surface that near, the one collider projects as usual. Returns false when `x` is inside
/// none, or when the two normals face each other (a squeeze with no way out).
fn crease_step(shapes: impl Iterator<Item = Collider> + Clone, x: &mut V3, v: &mut V3, friction: Friction) -> bool {
    let mut first: Option<(usize, f64, V3, V3, Collider)> = None;
    for (i, s) in shapes.clone().enumerate() {
        let (d, n, u) = s.nearest(*x);
        if d < 0.0 && first.is_none_or(|f| d < f.1) {
            first = Some((i, d, n, u, s));
        }
    }
    let Some((i1, d1, n1, u1, s1)) = first else {
        return false;
    };
    let second = shapes
        .enumerate()
        .filter(|&(i, _)| i != i1)
        .map(|(_, s)| s.nearest(*x))
        .filter(|&(d, ..)| d < -d1)
        .min_by(|a, b| a.0.total_cmp(&b.0));
    let Some((d2, n2, u2)) = second else {
        return s1.project_with(x, v, friction);
    };
    let c = dot(n1, n2);
    let det = (1.0 - c) * (1.0 + c);
    if det < 1e-12 {
        return false;
    }
    let past = 32.0 * f64::EPSILON * (x.iter().fold(0.0f64, |m, c| m.max(c.abs())) + d1.abs() + d2.abs());
    let (r1, r2) = (past - d1, past - d2);
    let (a, b) = ((r1 - c * r2) / det, (r2 - c * r1) / det);
    *x = axpy(axpy(*x, a, n1), b, n2);
    *v = contact_velocity(*v, u1, n1, friction);
    *v = contact_velocity(*v, u2, n2, friction);
    let (w1, w2) = (dot(sub(*v, u1), n1), dot(sub(*v, u2), n2));
    if w1 < 0.0 || w2 < 0.0 {
        // Leaving the second surface turned the velocity into the first: the smallest change
        // that leaves neither moving inward keeps only the part along the crease.
        let (a, b) = ((-w1 + c * w2) / det, (-w2 + c * w1) / det);
        *v = axpy(axpy(*v, a.max(0.0), n1), b.max(0.0), n2);
    }
    true
}

/// The colliders and the ground at one instant.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Colliders {
    /// The live colliders.
    pub shapes: Vec<Collider>,
    /// Friction at every contact.
    pub friction: Friction,
}

impl Colliders {
    /// True when no collider is live.
    pub fn is_empty(&self) -> bool {
        self.shapes.is_empty()
    }

    /// Pushes a particle found inside a collider out to its nearest surface point and removes
    /// the inward normal component of its velocity relative to the surface there (a sphere's
    /// centre velocity; see [`Capsule::project`]). Repeats (up to 4 passes) while a push lands
    /// the particle inside another collider. Where two colliders overlap (an elbow, a thigh
    /// against the trunk, a shin on the ground), pushes out of one and the other converge
    /// slowly on the crease between them; a particle still inside after the passes goes
    /// there in Gauss-Newton steps on the two deepest surfaces (`crease_step`). Only a
    /// particle squeezed between surfaces that face each other, with no way out, may stay
    /// inside. Returns true when anything moved.
    #[inline]
    pub fn project(&self, x: &mut V3, v: &mut V3) -> bool {
        self.project_mapped(x, v, |s| s)
    }

    /// [`Colliders::project`] against every collider changed by `map` first (a margin added
    /// to its radius, say), without building a new list.
    #[inline]
    pub fn project_mapped(&self, x: &mut V3, v: &mut V3, map: impl Fn(Collider) -> Collider) -> bool {
        let mut moved = false;
        let mut settled = false;
        for _ in 0..4 {
            let mut any = false;
            for s in &self.shapes {
                any |= map(*s).project_with(x, v, self.friction);
            }
            moved |= any;
            if !any || self.shapes.len() == 1 {
                settled = true;
                break;
            }
        }
        if !settled {
            for _ in 0..8 {
                if !crease_step(self.shapes.iter().map(|s| map(*s)), x, v, self.friction) {
                    break;
                }
            }
        }
        moved
    }

    /// True when `x` is strictly inside a live collider.
    pub fn contains(&self, x: V3) -> bool {
        self.shapes.iter().any(|s| s.contains(x))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The cubic through two samples of z = -g t^2 / 2 with the exact velocities at both ends
    /// is the parabola itself, anywhere inside the frame, and so is its velocity.
    #[test]
    fn a_track_with_end_velocities_follows_a_parabola_exactly() {
        let g = 9.80665;
        let (t0, dt) = (0.3, 1.0 / 24.0);
        let z = |t: f64| -0.5 * g * t * t;
        let id = [0.0, 0.0, 0.0, 1.0];
        let tr = Track::between([0.0, 0.0, z(t0)], id, [0.0, 0.0, z(t0 + dt)], id, dt)
            .with_end_velocities([0.0, 0.0, -g * t0], [0.0, 0.0, -g * (t0 + dt)]);
        for k in 0..=10 {
            let f = f64::from(k) / 10.0;
            let t = t0 + f * dt;
            assert!((tr.pose(f).t[2] - z(t)).abs() < 1e-15, "{f}");
            assert!((tr.linear_at(f)[2] + g * t).abs() < 1e-13, "{f}");
        }
    }

    /// A transform turning a quarter turn about Z in one frame carries a point 10 cm out along
    /// the arc at a constant angular speed: halfway, at 45 degrees and still 10 cm out (slerp,
    /// Shoemake 1985), where the chord would pass 7.07 cm out.
    #[test]
    fn a_turning_track_moves_points_along_the_arc() {
        let h = std::f64::consts::FRAC_PI_4; // half of 90 degrees
        let tr = Track::between(
            [0.0; 3],
            [0.0, 0.0, 0.0, 1.0],
            [0.0; 3],
            [0.0, 0.0, h.sin(), h.cos()],
            1.0 / 24.0,
        );
        for k in 0..=8 {
            let f = f64::from(k) / 8.0;
            let p = tr.pose(f).apply([0.1, 0.0, 0.0]);
            let angle = f * std::f64::consts::FRAC_PI_2;
            assert!(
                (p[0] - 0.1 * angle.cos()).abs() < 1e-15 && (p[1] - 0.1 * angle.sin()).abs() < 1e-15,
                "{f}: {p:?}"
            );
        }
    }

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
        // The midpoint of a quarter turn: 45 degrees (slerp).
        let e = std::f64::consts::FRAC_PI_8;
        assert!(close([half.q[2], half.q[3], 0.0], [e.sin(), e.cos(), 0.0], 1e-15));
    }

    #[test]
    fn projection_lands_on_the_surface_and_removes_inward_speed() {
        let c = Colliders {
            shapes: vec![Collider::Sphere(Sphere {
                centre: [0.0; 3],
                radius: 1.0,
                velocity: [0.0; 3],
            })],
            friction: Friction::default(),
        };
        let mut x = [0.0, 0.0, 0.5];
        let mut v = [1.0, 0.0, -2.0];
        assert!(c.project(&mut x, &mut v));
        assert!(!c.contains(x));
        assert!(close(x, [0.0, 0.0, 1.0], 1e-14));
        assert!(close(v, [1.0, 0.0, 0.0], 1e-15));
    }

    /// The ground lifts a particle below it onto its surface and stops its fall, keeps its
    /// sideways velocity (no friction), and leaves a particle above it alone.
    #[test]
    fn the_ground_lifts_and_stops_a_particle_below_it() {
        let g = Ground { height: -0.25 };
        let (mut x, mut v) = ([1.0, 2.0, -0.3], [0.5, -0.5, -3.0]);
        assert!(g.project(&mut x, &mut v));
        assert!(!g.contains(x) && (x[2] + 0.25).abs() < 1e-14 && [x[0], x[1]] == [1.0, 2.0]);
        assert_eq!(v, [0.5, -0.5, 0.0]);
        let (mut x, mut v) = ([0.0, 0.0, -0.2], [0.0, 0.0, -1.0]);
        assert!(!g.project(&mut x, &mut v));
        assert_eq!((x, v), ([0.0, 0.0, -0.2], [0.0, 0.0, -1.0]));
    }

    /// Coulomb friction at a contact (Bridson, Fedkiw & Anderson 2002, sec. 7.2): a particle
    /// hitting the ground at (3, 0, -4) m/s loses its 4 m/s of fall; with mu_k = 0.5 its sliding
    /// speed drops by 0.5 x 4 = 2 m/s, to 1 m/s; with mu_s = 1 (4 m/s of allowance) it stops.
    #[test]
    fn friction_slows_or_stops_the_sliding_part() {
        let v = [3.0, 0.0, -4.0];
        let n = [0.0, 0.0, 1.0];
        let kinetic = Friction {
            static_coefficient: 0.5,
            kinetic: 0.5,
            step: 0.0,
        };
        assert!(close(contact_velocity(v, [0.0; 3], n, kinetic), [1.0, 0.0, 0.0], 1e-15));
        let stuck = Friction {
            static_coefficient: 1.0,
            kinetic: 0.5,
            step: 0.0,
        };
        assert!(close(contact_velocity(v, [0.0; 3], n, stuck), [0.0; 3], 1e-15));
        assert_eq!(contact_velocity(v, [0.0; 3], n, Friction::default()), [3.0, 0.0, 0.0]);
        // Leaving the surface: untouched.
        assert_eq!(contact_velocity([3.0, 0.0, 1.0], [0.0; 3], n, stuck), [3.0, 0.0, 1.0]);
    }

    // ------------------------------------------------------------ capsules
    //
    // References independent of `Capsule::contact`:
    // - `round_cone_distance` (crate::testing): the signed distance from the definition, min over
    //   t of |x - c(t)| - r(t), by golden-section search;
    // - the support function of the hull of two balls, h(m) = max(start . m + r0, end . m + r1)
    //   (the support function of a convex hull is the largest of the parts'; Schneider 2014,
    //   Convex Bodies, sec. 1.7), with the depth of an inside point x being
    //   min over unit m of h(m) - x . m (the distance to the nearest supporting plane);
    // - the cone frustum tangent to both end spheres: in the plane through the axis its outline
    //   is the common external tangent of the two circles, at angle phi with sin(phi) = dr / L
    //   (the radii difference over the centre distance: similar triangles), touching the start
    //   circle at axial position -r0 sin(phi) and the end circle at L - r1 sin(phi); between
    //   them its distance from the axis at axial position a is r(a) / cos(phi), r(a) the radius
    //   interpolated at a, since the distance from a point (a, 0) of the axis to the tangent
    //   line is cos(phi) times the line's height above it.

    use crate::testing::round_cone_distance;
    use proptest::prelude::*;

    fn unit(theta: f64, psi: f64) -> V3 {
        [theta.sin() * psi.cos(), theta.sin() * psi.sin(), theta.cos()]
    }

    /// A tapered capsule: start in a 2 m box, axis in any direction, length 0.02..1 m, start
    /// radius 0..0.4 m, end radius r0 + f L (clipped at 0) for |f| < 1, so that neither end ball
    /// contains the other; `f` near +-1 puts it close to that limit.
    fn capsules() -> impl Strategy<Value = (V3, V3, f64, f64)> {
        capsules_tapered(prop_oneof![
            -0.999f64..0.999,
            Just(0.0),
            Just(0.999999),
            Just(-0.999999)
        ])
    }

    /// As [`capsules`] with the taper f drawn from `f`.
    fn capsules_tapered(f: impl Strategy<Value = f64>) -> impl Strategy<Value = (V3, V3, f64, f64)> {
        (
            prop::array::uniform3(-1.0f64..1.0),
            0.0f64..std::f64::consts::PI,
            0.0f64..std::f64::consts::TAU,
            0.02f64..1.0,
            0.0f64..0.4,
            f,
        )
            .prop_map(|(a, theta, psi, l, r0, f)| {
                let b = axpy(a, l, unit(theta, psi));
                (a, b, r0, (r0 + f * l).max(0.0))
            })
    }

    fn cap(a: V3, b: V3, r0: f64, r1: f64) -> Capsule {
        Capsule::new(a, b, r0, r1, [0.0; 3], [0.0; 3]).expect("neither ball contains the other")
    }

    /// The surface point's distance from the axis checked against the cone frustum and the end
    /// spheres in closed form (see above); `tol` in m.
    fn on_the_frustum_or_a_cap(q: V3, a: V3, b: V3, r0: f64, r1: f64, tol: f64) -> Result<(), String> {
        let l = norm(sub(b, a));
        let u = scale(sub(b, a), 1.0 / l);
        let (sin, cos) = ((r1 - r0) / l, (1.0 - ((r1 - r0) / l).powi(2)).sqrt());
        let along = dot(sub(q, a), u);
        let rho = norm(axpy(sub(q, a), -along, u));
        let (touch_a, touch_b) = (-r0 * sin, l - r1 * sin);
        let (got, want, what) = if along < touch_a - tol {
            (norm(sub(q, a)), r0, "the start sphere")
        } else if along > touch_b + tol {
            (norm(sub(q, b)), r1, "the end sphere")
        } else if along > touch_a + tol && along < touch_b - tol {
            (rho, (r0 + along * (r1 - r0) / l) / cos, "the frustum")
        } else {
            return Ok(()); // at a seam: the other checks cover it
        };
        if (got - want).abs() <= tol {
            Ok(())
        } else {
            Err(format!(
                "{q:?} is {got} from {what}'s centre line or centre, want {want}"
            ))
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig { cases: 2000, ..ProptestConfig::default() })]

        /// A point inside a tapered capsule (drawn inside the ball of a random parameter t0) is
        /// moved onto the surface: its signed distance by the union-of-balls reference is 0, its
        /// distance from the axis is the frustum's or its distance from an end centre that end's
        /// radius; and along the shortest way out: the move's length is the point's depth by the
        /// reference, its direction m* is the outward normal there (the supporting plane of
        /// direction m* passes through the new point, h(m*) - x . m* = |move|), and no other
        /// supporting plane is nearer (200 random directions and 24 tilts of m* by 1e-4 to 0.3
        /// rad).
        #[test]
        fn a_point_inside_a_capsule_goes_to_the_nearest_surface_point(
            (a, b, r0, r1) in capsules(),
            t0 in 0.0f64..=1.0,
            theta in 0.0f64..std::f64::consts::PI,
            psi in 0.0f64..std::f64::consts::TAU,
            depth in 0.0f64..0.999,
            seed in any::<u64>(),
        ) {
            let r_t0 = r0 + t0 * (r1 - r0);
            prop_assume!(r_t0 > 1e-3);
            let centre = axpy(a, t0, sub(b, a));
            let p = axpy(centre, depth * r_t0, unit(theta, psi));
            let c = cap(a, b, r0, r1);
            let tol = 1e-12;
            let inside = -round_cone_distance(p, a, b, r0, r1);
            prop_assert!(inside > 0.0);
            let (mut x, mut v) = (p, [0.0; 3]);
            prop_assert!(c.project(&mut x, &mut v));
            prop_assert!(round_cone_distance(x, a, b, r0, r1).abs() <= tol, "{}", round_cone_distance(x, a, b, r0, r1));
            prop_assert!(!c.contains(x));
            if let Err(e) = on_the_frustum_or_a_cap(x, a, b, r0, r1, 1e-9) {
                return Err(TestCaseError::fail(e));
            }
            let moved = norm(sub(x, p));
            prop_assert!((moved - inside).abs() <= tol, "moved {moved}, depth {inside}");
            let h = |m: V3| (dot(a, m) + r0).max(dot(b, m) + r1);
            let m_star = scale(sub(x, p), 1.0 / moved);
            // m* is the direction of a difference of two rounded points: off by about
            // 1e-16 m / |move| rad, which tilts the plane by that times the coordinates (< 2 m).
            let tol_star = tol + 1e-14 / moved;
            let gap = h(m_star) - dot(p, m_star);
            prop_assert!((gap - moved).abs() <= tol_star, "{gap} vs {moved}");
            // Two unit vectors perpendicular to m*, for the tilts.
            let helper = if m_star[0].abs() < 0.9 { [1.0, 0.0, 0.0] } else { [0.0, 1.0, 0.0] };
            let e1 = scale(cross(m_star, helper), 1.0 / norm(cross(m_star, helper)));
            let e2 = cross(m_star, e1);
            let mut rng = seed | 1;
            let mut uniform = || {
                // xorshift64 (Marsaglia 2003, J. Stat. Softw. 8(14)): directions for the check.
                rng ^= rng << 13;
                rng ^= rng >> 7;
                rng ^= rng << 17;
                (rng >> 11) as f64 / (1u64 << 53) as f64
            };
            let mut directions: Vec<V3> = (0..200)
                .map(|_| unit((1.0 - 2.0 * uniform()).acos(), std::f64::consts::TAU * uniform()))
                .collect();
            for angle in [1e-4f64, 1e-3, 1e-2, 0.3] {
                for k in 0..6 {
                    let phase = std::f64::consts::TAU * k as f64 / 6.0;
                    let side = axpy(scale(e1, phase.cos()), phase.sin(), e2);
                    directions.push(axpy(scale(m_star, angle.cos()), angle.sin(), side));
                }
            }
            for m in directions {
                prop_assert!(h(m) - dot(p, m) >= moved - tol, "a supporting plane of normal {m:?} is nearer");
            }
        }

        /// Points anywhere around a capsule: those outside by the reference are left bit for bit
        /// (position and velocity), those inside are moved; the signed distance agrees with the
        /// reference.
        #[test]
        fn points_outside_a_capsule_are_left_alone(
            (a, b, r0, r1) in capsules(),
            p in prop::array::uniform3(-2.0f64..2.0),
            v in prop::array::uniform3(-3.0f64..3.0),
        ) {
            let c = cap(a, b, r0, r1);
            let want = round_cone_distance(p, a, b, r0, r1);
            prop_assert!((c.signed_distance(p) - want).abs() <= 1e-12, "{} vs {want}", c.signed_distance(p));
            prop_assume!(want.abs() > 1e-9);
            let (mut x, mut w) = (p, v);
            let moved = c.project(&mut x, &mut w);
            if want > 0.0 {
                prop_assert!(!moved);
                prop_assert_eq!(x.map(f64::to_bits), p.map(f64::to_bits));
                prop_assert_eq!(w.map(f64::to_bits), v.map(f64::to_bits));
            } else {
                prop_assert!(moved);
            }
        }

        /// With equal radii a capsule is the segment swept by a sphere: the signed distance agrees
        /// with the brute-force minimum over 10001 spheres evenly along the segment (which
        /// overestimates it by at most half their spacing, by the triangle inequality), and a
        /// point inside goes to a point of the swept surface, by its depth r - dist(x, segment).
        #[test]
        fn a_straight_capsule_is_a_sphere_swept_along_its_segment(
            (a, b, r0, _r1) in capsules(),
            p in prop::array::uniform3(-1.5f64..1.5),
        ) {
            let r = r0;
            let c = cap(a, b, r, r);
            let spheres = 10000;
            let brute = |x: V3| {
                (0..=spheres)
                    .map(|i| norm(sub(x, axpy(a, i as f64 / spheres as f64, sub(b, a)))) - r)
                    .fold(f64::INFINITY, f64::min)
            };
            let spacing = c.length() / spheres as f64;
            let tol = 0.5 * spacing + 1e-12;
            let want = brute(p);
            let got = c.signed_distance(p);
            prop_assert!(got <= want + 1e-12 && got >= want - tol, "{got} vs brute force {want}");
            let (mut x, mut v) = (p, [0.0; 3]);
            if c.project(&mut x, &mut v) {
                let on = brute(x);
                prop_assert!((-1e-12..=tol).contains(&on), "{on}");
                prop_assert!((norm(sub(x, p)) - (-want)).abs() <= tol);
            } else {
                prop_assert!(want >= -tol);
            }
        }

        /// The velocity keeps its tangential part and loses only the part that moves into the
        /// surface faster than the surface moves out: v' . n = max(v . n, s_n), where n is the
        /// direction of the push and s_n the surface's normal speed, measured here as
        /// -d/dt of the reference signed distance of the surface point with both ends moving
        /// (central difference; independent of the interpolated velocity the projection uses).
        /// Tapers up to 0.99 of the limit: nearer, the shape changes too fast for a difference
        /// quotient (the position tests above go to 1 - 1e-6).
        #[test]
        fn the_inward_velocity_relative_to_the_moving_surface_is_removed(
            (a, b, r0, r1) in capsules_tapered(prop_oneof![-0.99f64..0.99, Just(0.0)]),
            va in prop::array::uniform3(-2.0f64..2.0),
            vb in prop::array::uniform3(-2.0f64..2.0),
            v in prop::array::uniform3(-3.0f64..3.0),
            t0 in 0.0f64..=1.0,
            theta in 0.0f64..std::f64::consts::PI,
            psi in 0.0f64..std::f64::consts::TAU,
            depth in 0.05f64..0.95,
        ) {
            let r_t0 = r0 + t0 * (r1 - r0);
            prop_assume!(r_t0 > 1e-2);
            let p = axpy(axpy(a, t0, sub(b, a)), depth * r_t0, unit(theta, psi));
            let c = Capsule::new(a, b, r0, r1, va, vb).expect("a capsule");
            let (mut x, mut w) = (p, v);
            prop_assert!(c.project(&mut x, &mut w));
            let n = scale(sub(x, p), 1.0 / norm(sub(x, p)));
            // The step: 1e-6 s, or less where the shape changes fast, near a capsule whose end
            // ball is about to swallow the other (cos(phi) goes as the square root of the gap
            // L - |dr|, which the ends' motion closes at up to |va| + |vb|).
            let gap = c.length() - (r1 - r0).abs();
            let dt = (1e-6f64).min(1e-4 * gap / (norm(va) + norm(vb) + 1e-12));
            let moved = |s: f64| round_cone_distance(x, axpy(a, s, va), axpy(b, s, vb), r0, r1);
            let speed = -(moved(dt) - moved(-dt)) / (2.0 * dt);
            let tangential = |y: V3| axpy(y, -dot(y, n), n);
            prop_assert!(close(tangential(w), tangential(v), 1e-9), "{w:?} vs {v:?}");
            let want = dot(v, n).max(speed);
            // The difference quotient's error: O(dt^2), and the reference's rounding (about
            // 1e-15 m on these coordinates) over dt.
            let tol = 1e-6 + 1e-15 / dt;
            prop_assert!((dot(w, n) - want).abs() <= tol, "{} vs {want} (dt {dt})", dot(w, n));
        }
    }

    /// Where one end ball contains the other the capsule is that ball, moving with its centre.
    #[test]
    fn a_capsule_whose_end_ball_swallows_the_other_is_that_sphere() {
        let (a, b) = ([0.0, 0.0, 0.0], [0.1, 0.0, 0.0]);
        let (va, vb) = ([1.0, 0.0, 0.0], [0.0, 2.0, 0.0]);
        assert_eq!(Capsule::new(a, b, 0.3, 0.1, va, vb), None);
        assert_eq!(
            Collider::capsule(a, b, 0.3, 0.1, va, vb),
            Collider::Sphere(Sphere {
                centre: a,
                radius: 0.3,
                velocity: va
            })
        );
        assert_eq!(
            Collider::capsule(a, b, 0.05, 0.2, va, vb),
            Collider::Sphere(Sphere {
                centre: b,
                radius: 0.2,
                velocity: vb
            })
        );
        // Coincident ends with equal radii: the sphere itself.
        assert_eq!(
            Collider::capsule(a, a, 0.2, 0.2, va, va),
            Collider::Sphere(Sphere {
                centre: a,
                radius: 0.2,
                velocity: va
            })
        );
    }

    /// A particle exactly on the axis of a horizontal limb, where every direction out is as
    /// short, leaves straight up: the part of +Z perpendicular to the axis.
    #[test]
    fn a_point_on_the_axis_leaves_upward() {
        let c = cap([0.0, 0.0, 1.0], [0.3, 0.0, 1.0], 0.05, 0.05);
        let (mut x, mut v) = ([0.1, 0.0, 1.0], [0.0, 0.0, -1.0]);
        assert!(c.project(&mut x, &mut v));
        assert!(close(x, [0.1, 0.0, 1.05], 1e-13), "{x:?}");
        assert_eq!(v, [0.0, 0.0, 0.0]);
    }
}
#[cfg(test)]
mod crease {
    use super::*;

    fn sphere(centre: V3, radius: f64) -> Collider {
        Collider::Sphere(Sphere {
            centre,
            radius,
            velocity: [0.0; 3],
        })
    }

    /// Two overlapping spheres (centres 5.4 cm apart, radii 2.8 and 3.2 cm) and particles
    /// just inside the crease where their surfaces meet, moving into it: pushes out of one land
    /// in the other and back (the first start, from a run of the fence scene, ended 3.3e-9 m
    /// inside with four passes alone), so the crease step takes over. Every particle ends
    /// outside both (no depth at all), touching at least one (within 1e-7 m: the Gauss-Newton
    /// steps overshoot by the surfaces' curvature times the square of the step), with no
    /// inward velocity left relative to a surface it touches.
    #[test]
    fn a_particle_in_the_crease_of_two_spheres_ends_outside_both() {
        let (ca, cb) = ([0.34, 0.0, -0.12], [0.39, 0.0, -0.14]);
        let c = Colliders {
            shapes: vec![sphere(ca, 0.028), sphere(cb, 0.032)],
            friction: Friction::default(),
        };
        for start in [
            [0.3678304963570917, 0.0, -0.11692375445989799],
            [0.36783, 0.0, -0.1170],
            [0.36783, 0.002, -0.1172],
            [0.3676, -0.001, -0.1168],
        ] {
            let (mut x, mut v) = (start, [0.3, 0.1, -1.0]);
            c.project(&mut x, &mut v);
            assert!(!c.contains(x), "from {start:?}: {x:?} is inside");
            let touching: Vec<V3> = c
                .shapes
                .iter()
                .map(|s| s.nearest(x))
                .filter(|k| k.0 < 1e-7)
                .map(|k| k.1)
                .collect();
            assert!(!touching.is_empty(), "from {start:?}: {x:?} touches neither");
            for n in touching {
                assert!(
                    dot(v, n) >= -1e-12,
                    "from {start:?}: still moving in at {v:?}, normal {n:?}"
                );
            }
        }
    }

    /// Two spheres of radius 1 m whose centres are 1 m apart along X, and a particle deep in
    /// their overlap: it ends outside both, on the surface of at least one, and the push keeps
    /// to the plane through the two centres and the start (the problem is symmetric about it,
    /// so y : z stays 3 : 4).
    #[test]
    fn a_particle_deep_in_two_spheres_ends_outside_both() {
        let c = Colliders {
            shapes: vec![sphere([0.0; 3], 1.0), sphere([1.0, 0.0, 0.0], 1.0)],
            friction: Friction::default(),
        };
        let (mut x, mut v) = ([0.5, 0.3, 0.4], [0.0; 3]);
        c.project(&mut x, &mut v);
        assert!(!c.contains(x), "{x:?}");
        let touching = c.shapes.iter().filter(|s| s.nearest(x).0 < 1e-12).count();
        assert!(touching >= 1, "{x:?}");
        assert!((x[1] / x[2] - 0.75).abs() < 1e-12, "{x:?}");
    }
}

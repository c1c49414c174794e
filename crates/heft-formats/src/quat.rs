//! Unit quaternions (x, y, z, w) for the host: rotations of tracks and bakes.

/// A quaternion (x, y, z, w).
pub type Quat = [f64; 4];

/// Hamilton product a b.
pub fn mul(a: Quat, b: Quat) -> Quat {
    [
        a[3] * b[0] + a[0] * b[3] + a[1] * b[2] - a[2] * b[1],
        a[3] * b[1] - a[0] * b[2] + a[1] * b[3] + a[2] * b[0],
        a[3] * b[2] + a[0] * b[1] - a[1] * b[0] + a[2] * b[3],
        a[3] * b[3] - a[0] * b[0] - a[1] * b[1] - a[2] * b[2],
    ]
}

/// The conjugate (the inverse of a unit quaternion).
pub fn conj(q: Quat) -> Quat {
    [-q[0], -q[1], -q[2], q[3]]
}

/// Rotates a vector by a unit quaternion: q v q*, evaluated as v + 2 w (u x v) + 2 u x (u x v)
/// with u the vector part (the same product, expanded).
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
pub fn dot(a: Quat, b: Quat) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// Scaled to unit length; the identity when too short to have a direction.
pub fn normalise(q: Quat) -> Quat {
    let n = dot(q, q).sqrt();
    if n > 1e-12 {
        q.map(|c| c / n)
    } else {
        [0.0, 0.0, 0.0, 1.0]
    }
}

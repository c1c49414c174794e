//! How a list of colliders crosses the plugin boundary as a points port.
//!
//! A body to collide with is many shapes (a head, a trunk, two arms of two segments each, two
//! legs of three), more than a node could offer as numbered ports. A collider list carries
//! any number of them on one points port, three points per collider:
//!
//! | point | contents |
//! |---|---|
//! | 3k | the start of collider k (world, m) |
//! | 3k + 1 | the end of collider k (world, m) |
//! | 3k + 2 | `(start radius, end radius, 0)`, m |
//!
//! Collider k is the tapered capsule from start to end whose radius runs linearly from the
//! start radius to the end radius (a round cone capped by two balls); a sphere is a capsule
//! whose start and end coincide. The number of colliders is fixed for a run (a points port
//! has a fixed N); every frame carries every collider's place and radii, so a reader checks
//! and reads each frame. A writer sizes the port with [`points_for`] and fills frames with
//! [`write_frame`]; a reader calls [`read_frame`].

/// Points per collider.
pub const POINTS_PER_COLLIDER: usize = 3;

/// Points per frame of a list of `count` colliders (saturates instead of overflowing).
pub fn points_for(count: usize) -> usize {
    count.saturating_mul(POINTS_PER_COLLIDER)
}

/// One collider of a list at one frame.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Capsule {
    /// The start of the axis (world, m).
    pub start: [f64; 3],
    /// The end of the axis (world, m); equal to `start` for a sphere.
    pub end: [f64; 3],
    /// Radius at the start, m.
    pub start_radius: f64,
    /// Radius at the end, m.
    pub end_radius: f64,
}

impl Capsule {
    /// A sphere: a capsule of zero length.
    pub fn sphere(centre: [f64; 3], radius: f64) -> Capsule {
        Capsule {
            start: centre,
            end: centre,
            start_radius: radius,
            end_radius: radius,
        }
    }
}

/// Writes one frame of a list.
///
/// # Panics
///
/// If `out.len()` is not `3 * points_for(colliders.len())`: the caller sized the port with
/// [`points_for`], so a mismatch is a bug in the caller.
pub fn write_frame(out: &mut [f64], colliders: &[Capsule]) {
    assert_eq!(
        out.len(),
        3 * points_for(colliders.len()),
        "a frame of {} colliders needs {} values",
        colliders.len(),
        3 * points_for(colliders.len())
    );
    for (c, o) in colliders.iter().zip(out.chunks_exact_mut(9)) {
        o[..3].copy_from_slice(&c.start);
        o[3..6].copy_from_slice(&c.end);
        o[6..].copy_from_slice(&[c.start_radius, c.end_radius, 0.0]);
    }
}

/// Reads one frame of a list, checked: whole colliders, finite places, radii finite and not
/// negative. The error names the collider (counted from 0) and what is wrong; the caller adds
/// the port and the frame.
pub fn read_frame(values: &[f64]) -> Result<Vec<Capsule>, String> {
    let per = 3 * POINTS_PER_COLLIDER;
    if !values.len().is_multiple_of(per) {
        return Err(format!(
            "a collider list holds {POINTS_PER_COLLIDER} points per collider (start, end, radii); {} points is not a \
             multiple of {POINTS_PER_COLLIDER}",
            values.len() as f64 / 3.0
        ));
    }
    values
        .chunks_exact(per)
        .enumerate()
        .map(|(k, c)| {
            if let Some(bad) = c[..6].iter().find(|v| !v.is_finite()) {
                return Err(format!(
                    "collider {k}: its start or end holds {bad}, not a finite position"
                ));
            }
            for (which, r) in [("start", c[6]), ("end", c[7])] {
                if !(r.is_finite() && r >= 0.0) {
                    return Err(format!(
                        "collider {k}: its {which} radius is {r} m; a radius is a finite length, 0 or more"
                    ));
                }
            }
            Ok(Capsule {
                start: [c[0], c[1], c[2]],
                end: [c[3], c[4], c[5]],
                start_radius: c[6],
                end_radius: c[7],
            })
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_written_frame_reads_back() {
        let list = [
            Capsule::sphere([0.0, 0.0, 1.6], 0.1),
            Capsule {
                start: [0.2, 0.0, 1.4],
                end: [0.2, 0.0, 1.1],
                start_radius: 0.05,
                end_radius: 0.04,
            },
        ];
        let mut out = vec![0.0; 3 * points_for(list.len())];
        write_frame(&mut out, &list);
        assert_eq!(out.len(), 18);
        assert_eq!(&out[6..9], &[0.1, 0.1, 0.0]);
        assert_eq!(read_frame(&out).unwrap(), list);
        assert_eq!(read_frame(&[]).unwrap(), vec![]);
    }

    #[test]
    fn broken_frames_are_refused_naming_the_collider() {
        let mut out = vec![0.0; 18];
        write_frame(&mut out, &[Capsule::sphere([0.0; 3], 0.1); 2]);
        let mut bad = out.clone();
        bad[16] = -0.01;
        let e = read_frame(&bad).unwrap_err();
        assert!(e.contains("collider 1") && e.contains("end radius is -0.01"), "{e}");
        let mut bad = out.clone();
        bad[1] = f64::NAN;
        assert!(read_frame(&bad).unwrap_err().contains("collider 0"));
        let e = read_frame(&out[..12]).unwrap_err();
        assert!(e.contains("4 points is not a multiple of 3"), "{e}");
    }
}

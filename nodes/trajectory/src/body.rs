//! A segmented body for whole-body centre-of-mass work: segment mass fractions and centre of
//! mass positions, body proportions as fractions of body height, and the two-part model the
//! jump planner uses (two arms swinging about the shoulders, the rest of the body as one
//! "trunk").

/// One body segment of the anthropometric table.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Segment {
    /// Segment name.
    pub name: &'static str,
    /// Segment mass divided by whole-body mass.
    pub mass_fraction: f64,
    /// Distance of the segment's centre of mass from its proximal end, divided by the
    /// segment length.
    pub com_fraction: f64,
    /// Proximal end of the segment length.
    pub proximal: &'static str,
    /// Distal end of the segment length.
    pub distal: &'static str,
}

const fn segment(
    name: &'static str,
    mass_fraction: f64,
    com_fraction: f64,
    proximal: &'static str,
    distal: &'static str,
) -> Segment {
    Segment {
        name,
        mass_fraction,
        com_fraction,
        proximal,
        distal,
    }
}

/// Dempster's segment parameters as tabulated in Winter, Biomechanics and Motor Control of
/// Human Movement (4th ed., Wiley, 2009), Table 4.1: one row per segment of one side (arms and
/// legs appear twice in a body). First written from memory of that widely reproduced table;
/// every row here (mass fraction and centre of mass from the proximal end) agrees with the
/// table as transcribed in Duarte's BMC notebooks (github.com/BMClab/BMC,
/// data/BSP_DempsterWinter.txt), checked by hand. The tests check their sum (head and neck +
/// trunk + two arms + two legs = 1.000) and the arm rows against the "total arm" row.
pub const DEMPSTER: [Segment; 8] = [
    segment("hand", 0.006, 0.506, "wrist axis", "knuckle II middle finger"),
    segment("forearm", 0.016, 0.430, "elbow axis", "ulnar styloid"),
    segment("upper arm", 0.028, 0.436, "glenohumeral axis", "elbow axis"),
    segment("foot", 0.0145, 0.50, "lateral malleolus", "head metatarsal II"),
    segment("leg", 0.0465, 0.433, "femoral condyles", "medial malleolus"),
    segment("thigh", 0.100, 0.433, "greater trochanter", "femoral condyles"),
    segment("head and neck", 0.081, 1.000, "C7-T1 and 1st rib", "ear canal"),
    segment("trunk", 0.497, 0.50, "greater trochanter", "glenohumeral joint"),
];

/// Winter (2009) Table 4.1, "total arm" row (upper arm + forearm + hand of one side): mass
/// fraction 0.050, centre of mass at 0.530 of the shoulder-to-wrist length from the
/// shoulder. Checked against the same transcription as [`DEMPSTER`].
pub const TOTAL_ARM: Segment = segment("total arm", 0.050, 0.530, "glenohumeral joint", "ulnar styloid");

/// A row of [`DEMPSTER`] by name.
pub fn dempster(name: &str) -> Option<&'static Segment> {
    DEMPSTER.iter().find(|s| s.name == name)
}

/// Body proportions as fractions of body height H (Drillis & Contini 1966, as drawn in
/// Winter 2009, Fig. 4.1). Written from memory of that figure.
pub mod proportions {
    /// Upper arm length (shoulder to elbow), fraction of H.
    pub const UPPER_ARM: f64 = 0.186;
    /// Forearm length (elbow to wrist), fraction of H.
    pub const FOREARM: f64 = 0.146;
    /// Shoulder (glenohumeral joint) height, fraction of H.
    pub const SHOULDER: f64 = 0.818;
    /// Chest (nipple line) height, fraction of H.
    pub const CHEST: f64 = 0.720;
    /// Hip (greater trochanter) height, fraction of H.
    pub const HIP: f64 = 0.530;
    /// Knee height, fraction of H (from memory of the same figure; used only for the
    /// deepest crouch the planner accepts).
    pub const KNEE: f64 = 0.285;
    /// Head centre height, fraction of H: about 0.936 (from memory, approximate: the
    /// figure's level between chin and crown that is closest to the middle of the head).
    pub const HEAD_CENTRE: f64 = 0.936;
    /// Ankle height, fraction of H (from memory of the same figure).
    pub const ANKLE: f64 = 0.039;
    /// Shoulder width (between the two glenohumeral joints), fraction of H (from memory of
    /// the same figure).
    pub const SHOULDER_WIDTH: f64 = 0.259;
    /// Hip width (between the two hip joints), fraction of H (from memory of the same figure).
    pub const HIP_WIDTH: f64 = 0.191;
}

/// Radii of the body's colliders (trajectory.jump's `colliders`), fractions of H, each at the
/// segment's proximal then distal end. From memory, approximate: adult segment girths read as
/// circles, rounded; not from a published table. They shape only what strands collide with.
pub mod collider_radii {
    /// Head (a sphere at the head centre): about 9.6 cm at H = 1.65 m.
    pub const HEAD: f64 = 0.058;
    /// Trunk (a capsule from the hips to the base of the neck): about 14 cm at H = 1.65 m.
    pub const TRUNK: f64 = 0.085;
    /// Upper arm, at the shoulder and at the elbow.
    pub const UPPER_ARM: [f64; 2] = [0.026, 0.021];
    /// Forearm, at the elbow and at the wrist.
    pub const FOREARM: [f64; 2] = [0.021, 0.016];
    /// Thigh, at the hip joint and at the knee.
    pub const THIGH: [f64; 2] = [0.042, 0.030];
    /// Shank, at the knee and at the ankle.
    pub const SHIN: [f64; 2] = [0.032, 0.022];
    /// Foot (a sphere at the ankle).
    pub const FOOT: f64 = 0.030;
}

/// The pose of a limb segment pointing from `from` to `to` in the x-z plane: its rotation
/// about +Y that turns the local -Z (the segment's axis, pointing away from the body) onto
/// the segment, as a unit quaternion (x, y, z, w).
pub fn segment_rotation(from: [f64; 3], to: [f64; 3]) -> [f64; 4] {
    // R_y(phi) takes (0, 0, -1) to (-sin phi, 0, -cos phi): phi = -atan2(dx, -dz).
    let phi = -(to[0] - from[0]).atan2(-(to[2] - from[2]));
    [0.0, (0.5 * phi).sin(), 0.0, (0.5 * phi).cos()]
}

/// The knee of a two-segment leg in the x-z plane from the hip to the ankle (thigh `l1`,
/// shank `l2`), bending forward (+x); where the ankle is out of reach the leg is straight
/// toward it and the ankle moves to its end. Returns (knee, ankle). The law of cosines gives
/// the angle at the hip.
pub fn leg(hip: [f64; 3], ankle: [f64; 3], l1: f64, l2: f64) -> ([f64; 3], [f64; 3]) {
    let d = [ankle[0] - hip[0], 0.0, ankle[2] - hip[2]];
    let len = (d[0] * d[0] + d[2] * d[2]).sqrt().max(1e-12);
    let u = [d[0] / len, 0.0, d[2] / len];
    let reach = len.min(l1 + l2);
    let cos_a = ((l1 * l1 + reach * reach - l2 * l2) / (2.0 * l1 * reach)).clamp(-1.0, 1.0);
    let sin_a = (1.0 - cos_a * cos_a).sqrt();
    // Forward of the hip-to-ankle line, in the x-z plane.
    let f = [-u[2], 0.0, u[0]];
    let knee = [
        hip[0] + l1 * (cos_a * u[0] + sin_a * f[0]),
        hip[1],
        hip[2] + l1 * (cos_a * u[2] + sin_a * f[2]),
    ];
    let ankle = [hip[0] + reach * u[0], hip[1], hip[2] + reach * u[2]];
    (knee, ankle)
}

/// The two-part body of the jump planner, in its standing pose: both arms (each one rigid
/// segment, shoulder to wrist, swinging about the shoulder in the x-z plane) and the rest of
/// the body ("trunk": head, trunk and legs), whose centre of mass the planner moves.
///
/// Arm angle theta: 0 = hanging straight down, positive = forward and up. The arm centre of
/// mass relative to the trunk centre of mass is `o = (r sin theta, 0, d - r cos theta)`, with
/// r the arm's centre-of-mass radius and d the shoulder's height above the trunk centre of
/// mass (constant: the shoulder rides on the trunk). Whole body = trunk + k o, k = arm mass
/// fraction of both arms.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Body {
    /// Body height H (m).
    pub height: f64,
    /// Mass fraction of both arms together (2 x total arm = 0.100).
    pub arm_fraction: f64,
    /// Shoulder to arm centre of mass (m): 0.530 x (upper arm + forearm) length.
    pub arm_radius: f64,
    /// Height of the trunk centre of mass in standing (m).
    pub trunk_standing: f64,
    /// Height of the shoulder above the trunk centre of mass (m), constant.
    pub shoulder_offset: f64,
}

impl Body {
    /// The body of height `height` whose whole-body centre of mass stands at
    /// `standing_com_height` with the arms at `standing_arm_angle` (rad).
    ///
    /// With k the arm fraction, S = 0.818 H the shoulder height and z_t the trunk height,
    /// standing_com_height = z_t + k (S - z_t - r cos theta), so
    /// z_t = (standing_com_height - k (S - r cos theta)) / (1 - k).
    pub fn new(height: f64, standing_com_height: f64, standing_arm_angle: f64) -> Body {
        let arm_fraction = 2.0 * TOTAL_ARM.mass_fraction;
        let arm_radius = TOTAL_ARM.com_fraction * (proportions::UPPER_ARM + proportions::FOREARM) * height;
        let shoulder = proportions::SHOULDER * height;
        let trunk_standing = (standing_com_height - arm_fraction * (shoulder - arm_radius * standing_arm_angle.cos()))
            / (1.0 - arm_fraction);
        Body {
            height,
            arm_fraction,
            arm_radius,
            trunk_standing,
            shoulder_offset: shoulder - trunk_standing,
        }
    }

    /// Arm centre of mass relative to the trunk centre of mass, from the arm angle and its
    /// first two time derivatives `[theta, theta', theta'']`: returns `[x, z]`, each as
    /// (offset, its velocity, its acceleration), by the chain rule.
    pub fn arm_offset(&self, theta: [f64; 3]) -> [[f64; 3]; 2] {
        let [th, w, al] = theta;
        let (s, c) = th.sin_cos();
        let r = self.arm_radius;
        [
            [r * s, r * c * w, r * (c * al - s * w * w)],
            [self.shoulder_offset - r * c, r * s * w, r * (s * al + c * w * w)],
        ]
    }

    /// Height of a landmark at `fraction` of body height above the standing trunk centre of
    /// mass (the constant offset with which it rides on the trunk).
    pub fn landmark_offset(&self, fraction: f64) -> f64 {
        fraction * self.height - self.trunk_standing
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn mass(name: &str) -> f64 {
        dempster(name).map(|s| s.mass_fraction).unwrap_or(f64::NAN)
    }

    /// Winter (2009) Table 4.1 (Dempster): head and neck + trunk + 2 x (upper arm + forearm +
    /// hand) + 2 x (thigh + leg + foot) is the whole body, 1.000 to the table's rounding.
    #[test]
    fn segment_fractions_sum_to_one() {
        let arm = mass("upper arm") + mass("forearm") + mass("hand");
        let leg = mass("thigh") + mass("leg") + mass("foot");
        let total = mass("head and neck") + mass("trunk") + 2.0 * arm + 2.0 * leg;
        assert!((total - 1.0).abs() < 1e-9, "{total}");
        // The same table's "total arm" row is the sum of its three arm rows.
        assert!((arm - TOTAL_ARM.mass_fraction).abs() < 1e-12, "{arm}");
        // Every row is a fraction of the body and a position along its segment.
        for s in DEMPSTER {
            assert!(s.mass_fraction > 0.0 && s.mass_fraction < 1.0, "{}", s.name);
            assert!(s.com_fraction > 0.0 && s.com_fraction <= 1.0, "{}", s.name);
        }
    }

    /// The standing pose reproduces the requested whole-body height: mass-weighted sum of
    /// the trunk and arm centres of mass (definition of the centre of mass).
    #[test]
    fn standing_pose_has_the_requested_com() {
        for (h, zc, th) in [(1.65, 0.9075, -0.7), (1.9, 1.05, 0.0), (1.2, 0.64, 0.3)] {
            let b = Body::new(h, zc, th);
            let arm_z = b.trunk_standing + b.shoulder_offset - b.arm_radius * f64::cos(th);
            let whole = (1.0 - b.arm_fraction) * b.trunk_standing + b.arm_fraction * arm_z;
            assert!((whole - zc).abs() < 1e-12, "{whole} vs {zc}");
            // Shoulder at 0.818 H (Winter 2009, Fig. 4.1).
            assert!((b.trunk_standing + b.shoulder_offset - 0.818 * h).abs() < 1e-12);
            // Arm centre of mass 0.530 x (0.186 + 0.146) H from the shoulder (Table 4.1, Fig. 4.1).
            assert!((b.arm_radius - 0.530 * 0.332 * h).abs() < 1e-12);
        }
    }
}

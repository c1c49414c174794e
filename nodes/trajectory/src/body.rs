//! A segmented body for whole-body centre-of-mass work: segment mass fractions and centre of
//! mass positions (Winter's Table 4.1), body proportions as fractions of body height (Drillis &
//! Contini), and the jump planner's body built from them: its joints for a pelvis, an arm
//! angle and the feet, its segments' centre of mass, and the standing pose that puts that
//! centre of mass where the planner asks.

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
/// Winter 2009, Fig. 4.1, "Body segment length expressed as fraction of body height"; p. 83
/// in a public scan of the chapter, whose edition the scan does not state). Written from
/// memory of that figure, then checked against two
/// public transcriptions of it (dpfens/PyExPhys, pyexphys/anthropometry.py, and
/// eladsimantov/anthropometric-model, tbx/AnthropometricModel.m, calculateSegmentLengths):
/// every value here agrees with them. The thigh and shank lengths are the differences of
/// the figure's hip, knee and ankle heights.
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
    /// Knee height, fraction of H.
    pub const KNEE: f64 = 0.285;
    /// Eye height, fraction of H. heft puts the head joint there: Winter's head-and-neck
    /// segment ends at the ear canal, which is taken to lie at eye level (common practice,
    /// no source).
    pub const EYE: f64 = 0.936;
    /// Ankle height, fraction of H.
    pub const ANKLE: f64 = 0.039;
    /// Shoulder width (between the two glenohumeral joints), fraction of H.
    pub const SHOULDER_WIDTH: f64 = 0.259;
    /// Hip width (between the two hip joints), fraction of H.
    pub const HIP_WIDTH: f64 = 0.191;
    /// Foot length (heel to toe tip), fraction of H.
    pub const FOOT: f64 = 0.152;
    /// How far ahead of the ankle the ball of the foot (the metatarsal heads, the end of
    /// Winter's foot segment) lies, as a fraction of the foot length: 0.5 (from memory; the
    /// figure gives no such length).
    pub const BALL_AHEAD: f64 = 0.5;
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

/// The joints of the planner's body at one instant, world space (x forward, y to the left,
/// z up); paired joints left (+y) first.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Limbs {
    /// Mid-point of the hip joints: the point the trunk is placed by.
    pub pelvis: [f64; 3],
    /// Head joint, at eye level above the pelvis (see [`proportions::EYE`]).
    pub head: [f64; 3],
    /// Base of the neck (C7-T1): the mid-point of the shoulders.
    pub neck: [f64; 3],
    /// Shoulder joints.
    pub shoulder: [[f64; 3]; 2],
    /// Elbows: the upper arm's length along the arm.
    pub elbow: [[f64; 3]; 2],
    /// Wrists: upper arm and forearm along the arm.
    pub wrist: [[f64; 3]; 2],
    /// Knuckles (the hand segment's end): 0.4 forearm lengths beyond the wrist, as heft's
    /// audit places a hand without a finger joint.
    pub knuckle: [[f64; 3]; 2],
    /// The arms' rotation (both swing together): local -Z along the arm.
    pub arm_rotation: [f64; 4],
    /// Hip joints.
    pub hip: [[f64; 3]; 2],
    /// Knees, bending forward.
    pub knee: [[f64; 3]; 2],
    /// Ankles.
    pub ankle: [[f64; 3]; 2],
    /// Balls of the feet (the foot segment's end).
    pub ball: [[f64; 3]; 2],
    /// How far the pose misses what was asked of it (m; 0 when it does not): the
    /// hip-to-ankle distance beyond the leg's length, or the centre of mass's height beyond
    /// what straight legs (or the deepest fold) reach.
    pub overreach: f64,
}

/// The planner's segmented body: Winter's (2009) Table 4.1 segments ([`DEMPSTER`]) on
/// Drillis & Contini's proportions ([`proportions`]), upright trunk, both arms swinging
/// together in the x-z plane as one straight line (upper arm, forearm, hand), legs of a
/// thigh and a shank bending forward at the knee, feet from the ankle to the ball.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Body {
    /// Body height H (m).
    pub height: f64,
}

/// Where the feet are: each ankle and ball of the foot (world space).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Feet {
    /// Ankles, left first.
    pub ankle: [[f64; 3]; 2],
    /// Balls of the feet, left first.
    pub ball: [[f64; 3]; 2],
}

impl Body {
    /// The body of height `height`.
    pub fn new(height: f64) -> Body {
        Body { height }
    }

    /// Mass fraction of both arms (upper arms, forearms, hands): 2 x 0.050.
    pub fn arm_fraction(&self) -> f64 {
        2.0 * TOTAL_ARM.mass_fraction
    }

    /// Distance from the shoulder to the centre of mass of one straight arm (upper arm,
    /// forearm and hand in line; the hand from the wrist to 0.4 forearm lengths beyond it).
    pub fn arm_radius(&self) -> f64 {
        let h = self.height;
        let (u, f) = (proportions::UPPER_ARM * h, proportions::FOREARM * h);
        let row = |n| dempster(n).map_or((0.0, 0.0), |s| (s.mass_fraction, s.com_fraction));
        let ((mu, cu), (mf, cf), (mh, ch)) = (row("upper arm"), row("forearm"), row("hand"));
        (mu * cu * u + mf * (u + cf * f) + mh * (u + f + ch * 0.4 * f)) / (mu + mf + mh)
    }

    /// Length of the leg, hip joint to ankle (thigh plus shank).
    pub fn leg_length(&self) -> f64 {
        (proportions::HIP - proportions::ANKLE) * self.height
    }

    /// Ankle to the ball of the foot.
    pub fn foot_length(&self) -> f64 {
        let ahead = proportions::BALL_AHEAD * proportions::FOOT;
        ahead.hypot(proportions::ANKLE) * self.height
    }

    /// The feet standing with the balls at `ball_x` and the ankles `lift` above their
    /// standing height, each foot turned about its ball.
    pub fn planted_feet(&self, ball_x: f64, lift: f64) -> Feet {
        let h = self.height;
        let len = self.foot_length();
        let z = (proportions::ANKLE * h + lift).min(len);
        let back = (len * len - z * z).max(0.0).sqrt();
        let y = 0.5 * proportions::HIP_WIDTH * h;
        Feet {
            ankle: [[ball_x - back, y, z], [ball_x - back, -y, z]],
            ball: [[ball_x, y, 0.0], [ball_x, -y, 0.0]],
        }
    }

    /// Where the balls stand when the ankles are at x = 0 and the heels down.
    pub fn standing_ball_x(&self) -> f64 {
        proportions::BALL_AHEAD * proportions::FOOT * self.height
    }

    /// The highest the ankle can rise on the ball of the foot (the foot upright).
    pub fn greatest_lift(&self) -> f64 {
        self.foot_length() - proportions::ANKLE * self.height
    }

    /// The joints with the pelvis at `pelvis`, the arms at `arm_angle` (0 hanging down,
    /// positive forward and up) and the feet at `feet`; each knee by the law of cosines
    /// ([`leg`]).
    pub fn limbs(&self, pelvis: [f64; 3], arm_angle: f64, feet: &Feet) -> Limbs {
        let h = self.height;
        let at = |fraction: f64, side: f64, half_width: f64| {
            [
                pelvis[0],
                pelvis[1] + side * half_width * h,
                pelvis[2] + (fraction - proportions::HIP) * h,
            ]
        };
        let sides = [1.0, -1.0];
        let shoulder = sides.map(|s| at(proportions::SHOULDER, s, 0.5 * proportions::SHOULDER_WIDTH));
        let (sin, cos) = arm_angle.sin_cos();
        let along = |p: [f64; 3], length: f64| [p[0] + length * sin, p[1], p[2] - length * cos];
        let (u, f) = (proportions::UPPER_ARM * h, proportions::FOREARM * h);
        let elbow = shoulder.map(|p| along(p, u));
        let wrist = shoulder.map(|p| along(p, u + f));
        let knuckle = shoulder.map(|p| along(p, u + 1.4 * f));
        let arm_rotation = segment_rotation([0.0; 3], along([0.0; 3], 1.0));
        let hip = sides.map(|s| at(proportions::HIP, s, 0.5 * proportions::HIP_WIDTH));
        let (l1, l2) = (
            (proportions::HIP - proportions::KNEE) * h,
            (proportions::KNEE - proportions::ANKLE) * h,
        );
        let mut knee = [[0.0; 3]; 2];
        let mut ankle = [[0.0; 3]; 2];
        let mut overreach: f64 = 0.0;
        for k in 0..2 {
            let want = feet.ankle[k];
            let d = ((want[0] - hip[k][0]).powi(2) + (want[2] - hip[k][2]).powi(2)).sqrt();
            overreach = overreach.max(d - (l1 + l2));
            (knee[k], ankle[k]) = leg(hip[k], [want[0], hip[k][1], want[2]], l1, l2);
        }
        Limbs {
            pelvis,
            head: at(proportions::EYE, 0.0, 0.0),
            neck: at(proportions::SHOULDER, 0.0, 0.0),
            shoulder,
            elbow,
            wrist,
            knuckle,
            arm_rotation,
            hip,
            knee,
            ankle,
            ball: feet.ball,
            overreach: overreach.max(0.0),
        }
    }

    /// The whole-body centre of mass of `l` and that of the body without its arms: each
    /// segment of [`DEMPSTER`] at its centre-of-mass fraction between its ends (head and
    /// neck from the neck to the head joint; trunk from the mid-hip to the mid-shoulder;
    /// hand from the wrist to the knuckle; foot from the ankle to the ball), summed by mass.
    pub fn centres(&self, l: &Limbs) -> ([f64; 3], [f64; 3]) {
        let lerp = |a: [f64; 3], b: [f64; 3], c: f64| [0, 1, 2].map(|k| a[k] + c * (b[k] - a[k]));
        let mut arms = ([0.0; 3], 0.0);
        let mut rest = ([0.0; 3], 0.0);
        let add = |to: &mut ([f64; 3], f64), name: &str, a: [f64; 3], b: [f64; 3]| {
            if let Some(s) = dempster(name) {
                let c = lerp(a, b, s.com_fraction);
                for (sum, c) in to.0.iter_mut().zip(c) {
                    *sum += s.mass_fraction * c;
                }
                to.1 += s.mass_fraction;
            }
        };
        let mid = |a: [f64; 3], b: [f64; 3]| lerp(a, b, 0.5);
        add(&mut rest, "head and neck", l.neck, l.head);
        add(
            &mut rest,
            "trunk",
            mid(l.hip[0], l.hip[1]),
            mid(l.shoulder[0], l.shoulder[1]),
        );
        for k in 0..2 {
            add(&mut arms, "upper arm", l.shoulder[k], l.elbow[k]);
            add(&mut arms, "forearm", l.elbow[k], l.wrist[k]);
            add(&mut arms, "hand", l.wrist[k], l.knuckle[k]);
            add(&mut rest, "thigh", l.hip[k], l.knee[k]);
            add(&mut rest, "leg", l.knee[k], l.ankle[k]);
            add(&mut rest, "foot", l.ankle[k], l.ball[k]);
        }
        let total = arms.1 + rest.1;
        (
            [0, 1, 2].map(|k| (arms.0[k] + rest.0[k]) / total),
            [0, 1, 2].map(|k| rest.0[k] / rest.1),
        )
    }

    /// The pose on `feet` (both ankles at the same x and z) with the knees flexed by `phi`
    /// (0 straight) whose segments' centre of mass is over x = `target[0]` (the pelvis at
    /// y = `target[1]`, the body's plane of symmetry; z is not used), the arms at
    /// `arm_angle`: the pelvis sits sqrt(l1^2 + l2^2 + 2 l1 l2 cos phi) from the ankles, its x
    /// found by Newton's method with a difference slope. Where no lean of the legs balances
    /// it, [`Limbs::overreach`] holds the distance the centre of mass stays off.
    pub fn balance(&self, target: [f64; 3], arm_angle: f64, feet: &Feet, phi: f64) -> Limbs {
        let target_x = target[0];
        let h = self.height;
        let (l1, l2) = (
            (proportions::HIP - proportions::KNEE) * h,
            (proportions::KNEE - proportions::ANKLE) * h,
        );
        let a = feet.ankle[0];
        let d = (l1 * l1 + l2 * l2 + 2.0 * l1 * l2 * phi.cos()).sqrt();
        let pose = |x: f64| {
            let dx = (x - a[0]).clamp(-d, d);
            self.limbs([a[0] + dx, target[1], a[2] + (d * d - dx * dx).sqrt()], arm_angle, feet)
        };
        let mut x = a[0] + target_x - self.centres(&pose(a[0])).0[0];
        for _ in 0..50 {
            let c = self.centres(&pose(x)).0[0];
            let r = target_x - c;
            if r.abs() < 1e-14 {
                break;
            }
            let e = 1e-7;
            let slope = (self.centres(&pose(x + e)).0[0] - c) / e;
            if slope.abs() < 1e-9 {
                break;
            }
            x += r / slope;
        }
        let mut l = pose(x);
        l.overreach = l.overreach.max((self.centres(&l).0[0] - target_x).abs());
        l
    }

    /// The pose standing on `feet` (both ankles at the same x and z) whose segments' centre
    /// of mass is `target` (x and z; y is the body's plane of symmetry), with the arms at
    /// `arm_angle`. The unknowns are the pelvis's x and the knees' flexion phi (0 straight):
    /// the hip-to-ankle distance is sqrt(l1^2 + l2^2 + 2 l1 l2 cos phi) and the pelvis sits
    /// that far from the ankle, so every pose tried has the feet on the ground and the legs
    /// their length. For each phi the pelvis's x balances the centre of mass over the target
    /// (Newton's method); phi is then found by the Illinois variant of regula falsi on the
    /// height (which falls as the knees bend), to 1e-13 m. A target higher than straight legs
    /// reach gives the straight pose, one lower than the deepest fold (2.6 rad) that pose,
    /// with the distance missed in [`Limbs::overreach`].
    pub fn stand(&self, target: [f64; 3], arm_angle: f64, feet: &Feet) -> Limbs {
        let balanced = |phi: f64| {
            let l = self.balance(target, arm_angle, feet, phi);
            let z = self.centres(&l).0[2];
            (l, z - target[2])
        };
        const DEEPEST: f64 = 2.6;
        let (straight, f0) = balanced(0.0);
        if f0 <= 0.0 {
            let mut l = straight;
            l.overreach = l.overreach.max(-f0);
            return l;
        }
        let (folded, f1) = balanced(DEEPEST);
        if f1 >= 0.0 {
            let mut l = folded;
            l.overreach = l.overreach.max(f1);
            return l;
        }
        let (mut lo, mut hi, mut flo, mut fhi) = (0.0, DEEPEST, f0, f1);
        let mut side = 0;
        let mut best = straight;
        for _ in 0..200 {
            let phi = (lo * fhi - hi * flo) / (fhi - flo);
            let (l, f) = balanced(phi);
            best = l;
            if f.abs() < 1e-13 || hi - lo < 1e-15 {
                break;
            }
            if f > 0.0 {
                (lo, flo) = (phi, f);
                if side == 1 {
                    fhi *= 0.5;
                }
                side = 1;
            } else {
                (hi, fhi) = (phi, f);
                if side == -1 {
                    flo *= 0.5;
                }
                side = -1;
            }
        }
        best
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

    /// A straight arm's centre of mass from its three rows (upper arm, forearm, hand) agrees
    /// with the same table's "total arm" row (0.530 of the shoulder-to-wrist length, Winter
    /// 2009 Table 4.1) within 5 %: the rows were measured separately, and heft's hand ends 0.4
    /// forearm lengths past the wrist.
    #[test]
    fn the_arm_rows_agree_with_the_total_arm_row() {
        let b = Body::new(1.7);
        let fraction = b.arm_radius() / ((proportions::UPPER_ARM + proportions::FOREARM) * 1.7);
        assert!((fraction / TOTAL_ARM.com_fraction - 1.0).abs() < 0.05, "{fraction}");
        assert!((b.arm_fraction() - 0.100).abs() < 1e-12);
    }

    /// The feet: the ball on the ground, the ankle a foot's length from it at ankle height
    /// plus the lift (Pythagoras), the standing ankle at x = 0; the legs standing on them reach
    /// any centre of mass below straight legs exactly, with the feet where they are.
    #[test]
    fn standing_poses_put_the_centre_of_mass_where_asked() {
        let h = 1.65;
        let b = Body::new(h);
        for lift in [0.0, 0.03, b.greatest_lift()] {
            let f = b.planted_feet(b.standing_ball_x(), lift);
            for k in 0..2 {
                let (a, ball) = (f.ankle[k], f.ball[k]);
                assert_eq!(ball[2], 0.0);
                assert!((a[2] - (proportions::ANKLE * h + lift)).abs() < 1e-15);
                assert!(((a[0] - ball[0]).hypot(a[2]) - b.foot_length()).abs() < 1e-15);
            }
            if lift == 0.0 {
                assert!(f.ankle[0][0].abs() < 1e-15);
            }
            for (z, theta) in [(0.93, -0.7), (0.80, 0.3), (0.62, 2.5), (0.70, 1.2)] {
                let l = b.stand([0.0, 0.0, z], theta, &f);
                let c = b.centres(&l).0;
                assert!(c[0].abs() < 1e-12 && (c[2] - z).abs() < 1e-12, "{c:?} for {z}");
                assert!(l.overreach < 1e-12, "{}", l.overreach);
                for k in 0..2 {
                    let d = |p: [f64; 3], q: [f64; 3]| ((p[0] - q[0]).powi(2) + (p[2] - q[2]).powi(2)).sqrt();
                    assert!((d(l.hip[k], l.knee[k]) - (proportions::HIP - proportions::KNEE) * h).abs() < 1e-12);
                    assert!((d(l.knee[k], l.ankle[k]) - (proportions::KNEE - proportions::ANKLE) * h).abs() < 1e-12);
                    assert!(d(l.ankle[k], f.ankle[k]) < 1e-12, "the feet stay where they stand");
                }
            }
        }
        // Above what straight legs reach: the straight pose, and the shortfall said.
        let f = b.planted_feet(b.standing_ball_x(), 0.0);
        let l = b.stand([0.0, 0.0, 1.2], 0.0, &f);
        assert!(l.overreach > 0.2, "{}", l.overreach);
    }
}

//! The whole-body centre of mass from a skeleton: segment masses and centre-of-mass positions
//! from a published table, mapped onto a rig's joints by their names.
//!
//! Tables (fractions of body mass; centre of mass as a fraction of the segment's length from
//! its first end):
//! - de Leva P (1996), "Adjustments to Zatsiorsky-Seluyanov's segment inertia parameters",
//!   J Biomech 29(9):1223-1230, Table 4, male and female columns, with the segment ends at joint
//!   centres where the table gives them (trunk: mid-shoulder to mid-hip, "Trunk" with MIDS;
//!   upper arm, forearm, thigh, shank between joint centres). Transcribed from the table as
//!   reproduced in Duarte's BMC notebooks (data/BSP_ZdeLeva.txt).
//! - Dempster's parameters as tabulated in Winter DA (2009), Biomechanics and Motor Control of
//!   Human Movement, 4th ed., Table 4.1 (the table heft's jump planner uses), checked against
//!   the same notebooks' transcription (data/BSP_DempsterWinter.txt).
//!
//! A rig's joints rarely sit on the table's landmarks. Where they do not, the mapping uses the
//! nearest joints and says so: the head's top (vertex) is the `head_end`/`head_top` joint when
//! the rig has one, else the head joint plus the neck-to-head vector; the hand runs from the
//! wrist along the forearm by 0.4 forearm lengths when the rig has no middle-finger joint;
//! the foot from the ankle to the toe joint (de Leva's heel-to-toe-tip foot is placed on the
//! ankle-to-toe line: an approximation of about a centimetre; a rig without toe joints has
//! the foot's mass at the ankle).

use serde::Serialize;

/// A body segment of the model.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Segment {
    /// Head (and neck, in Winter's table).
    Head,
    /// Trunk: mid-shoulder to mid-hip.
    Trunk,
    /// Upper arm: shoulder to elbow.
    UpperArm,
    /// Forearm: elbow to wrist.
    Forearm,
    /// Hand: wrist onwards.
    Hand,
    /// Thigh: hip to knee.
    Thigh,
    /// Shank: knee to ankle.
    Shank,
    /// Foot: ankle to toe.
    Foot,
}

impl Segment {
    /// Every segment, head and trunk once, the limbs' segments once per side.
    pub const ALL: [Segment; 8] = [
        Segment::Head,
        Segment::Trunk,
        Segment::UpperArm,
        Segment::Forearm,
        Segment::Hand,
        Segment::Thigh,
        Segment::Shank,
        Segment::Foot,
    ];

    /// True for the segments a body has twice.
    pub fn paired(self) -> bool {
        !matches!(self, Segment::Head | Segment::Trunk)
    }

    /// The segment's name in messages.
    pub fn name(self) -> &'static str {
        match self {
            Segment::Head => "head",
            Segment::Trunk => "trunk",
            Segment::UpperArm => "upper arm",
            Segment::Forearm => "forearm",
            Segment::Hand => "hand",
            Segment::Thigh => "thigh",
            Segment::Shank => "shank",
            Segment::Foot => "foot",
        }
    }
}

/// One row of a table: the segment's mass fraction and where its centre of mass lies.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Row {
    /// The segment.
    pub segment: Segment,
    /// Fraction of body mass (one side for a paired segment).
    pub mass: f64,
    /// Centre of mass as a fraction of the length from the first end (head: from the vertex;
    /// trunk: from mid-shoulder; limbs: from the proximal joint).
    pub com: f64,
}

const fn row(segment: Segment, mass: f64, com: f64) -> Row {
    Row { segment, mass, com }
}

/// A segment table.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum BodyModel {
    /// de Leva (1996), Table 4, male.
    DeLevaMale,
    /// de Leva (1996), Table 4, female.
    DeLevaFemale,
    /// Dempster via Winter (2009), Table 4.1.
    Winter,
}

/// de Leva (1996) Table 4, male: head VERT-CERV 6.94 % at 50.02 %, trunk MIDS-MIDH 43.46 % at
/// 43.10 %, upper arm 2.71 % at 57.72 %, forearm 1.62 % at 45.74 %, hand WJC-MET3 0.61 % at
/// 79.00 %, thigh 14.16 % at 40.95 %, shank 4.33 % at 43.95 %, foot 1.37 % at 44.15 %.
const DE_LEVA_MALE: [Row; 8] = [
    row(Segment::Head, 0.0694, 0.5002),
    row(Segment::Trunk, 0.4346, 0.4310),
    row(Segment::UpperArm, 0.0271, 0.5772),
    row(Segment::Forearm, 0.0162, 0.4574),
    row(Segment::Hand, 0.0061, 0.7900),
    row(Segment::Thigh, 0.1416, 0.4095),
    row(Segment::Shank, 0.0433, 0.4395),
    row(Segment::Foot, 0.0137, 0.4415),
];

/// de Leva (1996) Table 4, female, the same rows.
const DE_LEVA_FEMALE: [Row; 8] = [
    row(Segment::Head, 0.0668, 0.4841),
    row(Segment::Trunk, 0.4257, 0.3782),
    row(Segment::UpperArm, 0.0255, 0.5754),
    row(Segment::Forearm, 0.0138, 0.4559),
    row(Segment::Hand, 0.0056, 0.7474),
    row(Segment::Thigh, 0.1478, 0.3612),
    row(Segment::Shank, 0.0481, 0.4352),
    row(Segment::Foot, 0.0129, 0.4014),
];

/// Winter (2009) Table 4.1: head and neck 0.081 with its centre at the ear canal (1.000 of
/// C7-T1 to the ear: the head joint), trunk greater trochanter to shoulder 0.497 at 0.50 (here
/// mid-shoulder to mid-hip, so 0.50 either way), upper arm 0.028 at 0.436, forearm 0.016 at
/// 0.430, hand 0.006 at 0.506, thigh 0.100 at 0.433, leg 0.0465 at 0.433, foot 0.0145 at 0.50.
const WINTER: [Row; 8] = [
    row(Segment::Head, 0.081, 1.0),
    row(Segment::Trunk, 0.497, 0.50),
    row(Segment::UpperArm, 0.028, 0.436),
    row(Segment::Forearm, 0.016, 0.430),
    row(Segment::Hand, 0.006, 0.506),
    row(Segment::Thigh, 0.100, 0.433),
    row(Segment::Shank, 0.0465, 0.433),
    row(Segment::Foot, 0.0145, 0.50),
];

impl BodyModel {
    /// The model's rows.
    pub fn rows(self) -> &'static [Row; 8] {
        match self {
            BodyModel::DeLevaMale => &DE_LEVA_MALE,
            BodyModel::DeLevaFemale => &DE_LEVA_FEMALE,
            BodyModel::Winter => &WINTER,
        }
    }

    /// A segment's row.
    pub fn row(self, segment: Segment) -> Row {
        self.rows()
            .iter()
            .copied()
            .find(|r| r.segment == segment)
            .unwrap_or(row(segment, 0.0, 0.0))
    }

    /// The name used on the command line.
    pub fn word(self) -> &'static str {
        match self {
            BodyModel::DeLevaMale => "de-leva-male",
            BodyModel::DeLevaFemale => "de-leva-female",
            BodyModel::Winter => "winter",
        }
    }

    /// A model by its command-line name.
    pub fn from_word(word: &str) -> Option<BodyModel> {
        [BodyModel::DeLevaMale, BodyModel::DeLevaFemale, BodyModel::Winter]
            .into_iter()
            .find(|m| m.word() == word)
    }
}

/// The joint roles the mapping looks for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Role {
    /// The neck's base (cervicale).
    Neck,
    /// The head joint (skull base).
    Head,
    /// The top of the head (an end joint), optional.
    HeadTop,
    /// Shoulder joint centre.
    Shoulder(Side),
    /// Elbow.
    Elbow(Side),
    /// Wrist.
    Wrist(Side),
    /// Middle finger base (MET3), optional.
    Knuckle(Side),
    /// Hip joint centre.
    Hip(Side),
    /// Knee.
    Knee(Side),
    /// Ankle.
    Ankle(Side),
    /// Toe (ball of the foot).
    Toe(Side),
}

/// Left or right.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Side {
    /// The character's left.
    Left,
    /// The character's right.
    Right,
}

/// Splits a joint name into lowercase words: separators, and case changes in camelCase.
fn words(name: &str) -> Vec<String> {
    let name = name.rsplit([':', '|']).next().unwrap_or(name);
    let mut out: Vec<String> = Vec::new();
    let mut cur = String::new();
    let mut prev_lower = false;
    for c in name.chars() {
        if !c.is_alphanumeric() {
            if !cur.is_empty() {
                out.push(std::mem::take(&mut cur));
            }
            prev_lower = false;
            continue;
        }
        if c.is_uppercase() && prev_lower && !cur.is_empty() {
            out.push(std::mem::take(&mut cur));
        }
        prev_lower = c.is_lowercase() || c.is_ascii_digit();
        cur.extend(c.to_lowercase());
    }
    if !cur.is_empty() {
        out.push(cur);
    }
    out
}

/// The role a joint name plays in the humanoid naming most rigs share (`LeftUpLeg`,
/// `upperarm_l`, `thigh.R`, `mixamorig:LeftForeArm`, `shin_l`, ...), if any.
pub fn role_of(name: &str) -> Option<Role> {
    let w = words(name);
    let has = |s: &str| w.iter().any(|x| x == s);
    let side = if has("left") || has("l") {
        Some(Side::Left)
    } else if has("right") || has("r") {
        Some(Side::Right)
    } else {
        // Trailing or leading single letters glued to a word: "lthigh", "thighl" are not
        // guessed; a name with no side is a centre joint.
        None
    };
    let joined: String = w
        .iter()
        .filter(|x| {
            !matches!(
                x.as_str(),
                "left" | "right" | "l" | "r" | "jnt" | "joint" | "bone" | "def"
            )
        })
        .cloned()
        .collect::<Vec<_>>()
        .join("");
    let part = joined.trim_end_matches(|c: char| c.is_ascii_digit());
    match side {
        None => match part {
            "neck" => Some(Role::Neck),
            "head" => Some(Role::Head),
            "headend" | "headtop" | "headtopend" => Some(Role::HeadTop),
            _ => None,
        },
        Some(s) => match part {
            "shoulder" | "upperarm" | "uparm" | "arm" => Some(Role::Shoulder(s)),
            "elbow" | "forearm" | "lowerarm" => Some(Role::Elbow(s)),
            "wrist" | "hand" => Some(Role::Wrist(s)),
            "handmiddle" | "middle" | "middlefinger" => Some(Role::Knuckle(s)),
            "hip" | "thigh" | "upleg" | "upperleg" | "femur" => Some(Role::Hip(s)),
            "knee" | "shin" | "leg" | "lowerleg" | "calf" | "shank" => Some(Role::Knee(s)),
            "ankle" | "foot" => Some(Role::Ankle(s)),
            "toe" | "toebase" | "ball" | "toes" => Some(Role::Toe(s)),
            _ => None,
        },
    }
}

/// Which of a skeleton's joints play which role.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Mapping {
    /// (role, joint index) for every role found; the first joint of a role wins.
    pub roles: Vec<(Role, usize)>,
    /// Joints that play no role (reported, not guessed).
    pub unmapped: Vec<String>,
}

impl Mapping {
    /// The default mapping of a skeleton's joint names, with overrides (`joint name`, role)
    /// applied first.
    pub fn of(names: &[String], overrides: &[(String, Role)]) -> Mapping {
        let mut roles: Vec<(Role, usize)> = Vec::new();
        let mut unmapped = Vec::new();
        for (k, n) in names.iter().enumerate() {
            let role = overrides
                .iter()
                .find(|(o, _)| o == n)
                .map(|(_, r)| *r)
                .or_else(|| role_of(n));
            match role {
                Some(r) => match roles.iter_mut().find(|(x, _)| *x == r) {
                    None => roles.push((r, k)),
                    // A rig with a clavicle named `shoulder` and an upper-arm joint: the upper
                    // arm starts at the shoulder joint centre.
                    Some(slot)
                        if matches!(r, Role::Shoulder(_)) && is_upper_arm(n) && !is_upper_arm(&names[slot.1]) =>
                    {
                        unmapped.push(names[slot.1].clone());
                        slot.1 = k;
                    }
                    Some(_) => unmapped.push(n.clone()),
                },
                None => unmapped.push(n.clone()),
            }
        }
        Mapping { roles, unmapped }
    }

    /// The joint playing a role.
    pub fn joint(&self, role: Role) -> Option<usize> {
        self.roles.iter().find(|(r, _)| *r == role).map(|(_, k)| *k)
    }

    /// The roles the centre of mass needs that no joint plays.
    pub fn missing(&self) -> Vec<Role> {
        let mut need = vec![Role::Neck, Role::Head];
        for s in [Side::Left, Side::Right] {
            need.extend([
                Role::Shoulder(s),
                Role::Elbow(s),
                Role::Wrist(s),
                Role::Hip(s),
                Role::Knee(s),
                Role::Ankle(s),
            ]);
        }
        need.into_iter().filter(|r| self.joint(*r).is_none()).collect()
    }
}

/// True for a name that names the upper arm rather than the clavicle.
fn is_upper_arm(name: &str) -> bool {
    let w = words(name);
    let joined: String = w.concat();
    ["upperarm", "uparm"].iter().any(|p| joined.contains(p)) || w.iter().any(|x| x == "arm")
}

use heft_node_sdk::math::vec3::{V3, lerp};

/// The whole-body centre of mass of one frame: `at(joint)` is a joint's world position (m).
/// Fails with the roles missing when the mapping lacks one the model needs.
pub fn centre_of_mass(model: BodyModel, mapping: &Mapping, at: impl Fn(usize) -> V3) -> Result<V3, Vec<Role>> {
    let missing = mapping.missing();
    if !missing.is_empty() {
        return Err(missing);
    }
    let p = |r: Role| at(mapping.joint(r).unwrap_or(0));
    let mut sum = [0.0; 3];
    let mut add = |seg: Segment, a: V3, b: V3| {
        let r = model.row(seg);
        let c = lerp(a, b, r.com);
        for k in 0..3 {
            sum[k] += r.mass * c[k];
        }
    };
    let (neck, head) = (p(Role::Neck), p(Role::Head));
    if model == BodyModel::Winter {
        // Head and neck: from C7-T1 (the neck joint) to the ear canal (the head joint).
        add(Segment::Head, neck, head);
    } else {
        let top = mapping
            .joint(Role::HeadTop)
            .map(&at)
            .unwrap_or_else(|| lerp(neck, head, 2.0));
        add(Segment::Head, top, neck);
    }
    let mid = |a: V3, b: V3| lerp(a, b, 0.5);
    let mids = mid(p(Role::Shoulder(Side::Left)), p(Role::Shoulder(Side::Right)));
    let midh = mid(p(Role::Hip(Side::Left)), p(Role::Hip(Side::Right)));
    add(Segment::Trunk, mids, midh);
    for s in [Side::Left, Side::Right] {
        let (sh, el, wr) = (p(Role::Shoulder(s)), p(Role::Elbow(s)), p(Role::Wrist(s)));
        add(Segment::UpperArm, sh, el);
        add(Segment::Forearm, el, wr);
        let knuckle = mapping
            .joint(Role::Knuckle(s))
            .map(&at)
            .unwrap_or_else(|| lerp(el, wr, 1.4));
        add(Segment::Hand, wr, knuckle);
        let (hip, knee, ankle) = (p(Role::Hip(s)), p(Role::Knee(s)), p(Role::Ankle(s)));
        add(Segment::Thigh, hip, knee);
        add(Segment::Shank, knee, ankle);
        // A rig without toes: the foot's mass at the ankle (a foot's centre of mass lies some
        // 7 cm ahead of it; 1.4 % of the body there moves the whole by about 1 mm).
        let toe = mapping.joint(Role::Toe(s)).map(&at).unwrap_or(ankle);
        add(Segment::Foot, ankle, toe);
    }
    let total: f64 = Segment::ALL
        .iter()
        .map(|s| model.row(*s).mass * if s.paired() { 2.0 } else { 1.0 })
        .sum();
    Ok([sum[0] / total, sum[1] / total, sum[2] / total])
}

/// The centre of mass of both arms (upper arms, forearms, hands) of one frame, and their
/// mass as a fraction of the body's; `None` when a joint the arms need is missing.
pub fn arms_centre(model: BodyModel, mapping: &Mapping, at: impl Fn(usize) -> V3) -> Option<(V3, f64)> {
    let mut sum = [0.0; 3];
    let mut mass = 0.0;
    for s in [Side::Left, Side::Right] {
        let sh = at(mapping.joint(Role::Shoulder(s))?);
        let el = at(mapping.joint(Role::Elbow(s))?);
        let wr = at(mapping.joint(Role::Wrist(s))?);
        let knuckle = mapping
            .joint(Role::Knuckle(s))
            .map(&at)
            .unwrap_or_else(|| lerp(el, wr, 1.4));
        for (seg, a, b) in [
            (Segment::UpperArm, sh, el),
            (Segment::Forearm, el, wr),
            (Segment::Hand, wr, knuckle),
        ] {
            let r = model.row(seg);
            let c = lerp(a, b, r.com);
            for k in 0..3 {
                sum[k] += r.mass * c[k];
            }
            mass += r.mass;
        }
    }
    let total: f64 = Segment::ALL
        .iter()
        .map(|s| model.row(*s).mass * if s.paired() { 2.0 } else { 1.0 })
        .sum();
    Some(([sum[0] / mass, sum[1] / mass, sum[2] / mass], mass / total))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn total(model: BodyModel) -> f64 {
        Segment::ALL
            .iter()
            .map(|s| model.row(*s).mass * if s.paired() { 2.0 } else { 1.0 })
            .sum()
    }

    #[test]
    fn each_table_adds_up_to_the_whole_body() {
        // de Leva (1996) Table 4 and Winter (2009) Table 4.1: the segments of one body add up
        // to 100 % (de Leva: 100.00 % male, 100.00 % female to the table's rounding).
        for m in [BodyModel::DeLevaMale, BodyModel::DeLevaFemale, BodyModel::Winter] {
            assert!((total(m) - 1.0).abs() < 2e-4, "{m:?}: {}", total(m));
        }
    }

    #[test]
    fn humanoid_names_of_several_rigs_map_to_their_roles() {
        let cases = [
            ("mixamorig:LeftUpLeg", Role::Hip(Side::Left)),
            ("mixamorig:RightForeArm", Role::Elbow(Side::Right)),
            ("upperarm_l", Role::Shoulder(Side::Left)),
            ("thigh.R", Role::Hip(Side::Right)),
            ("shin_l", Role::Knee(Side::Left)),
            ("foot_r", Role::Ankle(Side::Right)),
            ("LeftToeBase", Role::Toe(Side::Left)),
            ("hand_l", Role::Wrist(Side::Left)),
            ("Neck", Role::Neck),
            ("head", Role::Head),
            ("HeadTop_End", Role::HeadTop),
            ("Left_Knee", Role::Knee(Side::Left)),
        ];
        for (name, role) in cases {
            assert_eq!(role_of(name), Some(role), "{name}");
        }
        for name in ["hips", "spine", "chest", "tail_01", "ponytail_3", "Hips"] {
            assert_eq!(role_of(name), None, "{name}");
        }
        // A clavicle named `LeftShoulder` before the upper arm `LeftArm`: the arm starts at
        // the upper arm's joint.
        let names: Vec<String> = ["LeftShoulder", "LeftArm"].iter().map(|s| s.to_string()).collect();
        let m = Mapping::of(&names, &[]);
        assert_eq!(m.joint(Role::Shoulder(Side::Left)), Some(1));
        assert_eq!(m.unmapped, ["LeftShoulder"]);
    }

    #[test]
    fn unmapped_joints_are_listed_and_missing_roles_named() {
        let names: Vec<String> = ["head", "neck", "ponytail_1", "shoulder_l"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        let m = Mapping::of(&names, &[("ponytail_1".into(), Role::Toe(Side::Left))]);
        assert!(m.unmapped.is_empty());
        assert_eq!(m.joint(Role::Toe(Side::Left)), Some(2));
        let m = Mapping::of(&names, &[]);
        assert_eq!(m.unmapped, ["ponytail_1"]);
        assert!(m.missing().contains(&Role::Knee(Side::Right)));
    }

    /// A standing figure with its segments along Z: the centre of mass of a segment at
    /// fraction c from its first end, summed by hand from the table, against the function.
    #[test]
    fn a_straight_figure_has_the_table_s_centre_of_mass() {
        let names: Vec<String> = [
            "neck",
            "head",
            "head_top",
            "shoulder_l",
            "elbow_l",
            "wrist_l",
            "middle_l",
            "shoulder_r",
            "elbow_r",
            "wrist_r",
            "middle_r",
            "hip_l",
            "knee_l",
            "ankle_l",
            "toe_l",
            "hip_r",
            "knee_r",
            "ankle_r",
            "toe_r",
        ]
        .iter()
        .map(|s| s.to_string())
        .collect();
        // Heights (m): arms hang along Z at y = +-0.2, legs at y = +-0.1; toes 0.15 m forward.
        let pos = |k: usize| -> V3 {
            match k {
                0 => [0.0, 0.0, 1.45],
                1 => [0.0, 0.0, 1.55],
                2 => [0.0, 0.0, 1.75],
                3 | 7 => [0.0, if k == 3 { 0.2 } else { -0.2 }, 1.40],
                4 | 8 => [0.0, if k == 4 { 0.2 } else { -0.2 }, 1.10],
                5 | 9 => [0.0, if k == 5 { 0.2 } else { -0.2 }, 0.85],
                6 | 10 => [0.0, if k == 6 { 0.2 } else { -0.2 }, 0.75],
                11 | 15 => [0.0, if k == 11 { 0.1 } else { -0.1 }, 0.90],
                12 | 16 => [0.0, if k == 12 { 0.1 } else { -0.1 }, 0.50],
                13 | 17 => [0.0, if k == 13 { 0.1 } else { -0.1 }, 0.08],
                _ => [0.15, if k == 14 { 0.1 } else { -0.1 }, 0.02],
            }
        };
        let m = Mapping::of(&names, &[]);
        assert!(m.unmapped.is_empty(), "{:?}", m.unmapped);
        let c = centre_of_mass(BodyModel::DeLevaMale, &m, pos).expect("complete");
        // By hand, z: head 0.0694 (1.75 + 0.5002 (1.45 - 1.75)), trunk 0.4346 (1.40 + 0.4310
        // (0.90 - 1.40)), per side upper arm 0.0271 (1.40 - 0.5772 x 0.30), forearm 0.0162
        // (1.10 - 0.4574 x 0.25), hand 0.0061 (0.85 - 0.79 x 0.10), thigh 0.1416 (0.90 - 0.4095
        // x 0.40), shank 0.0433 (0.50 - 0.4395 x 0.42), foot 0.0137 (0.08 - 0.4415 x 0.06).
        let z = 0.0694 * (1.75 - 0.5002 * 0.30)
            + 0.4346 * (1.40 - 0.4310 * 0.50)
            + 2.0
                * (0.0271 * (1.40 - 0.5772 * 0.30)
                    + 0.0162 * (1.10 - 0.4574 * 0.25)
                    + 0.0061 * (0.85 - 0.79 * 0.10)
                    + 0.1416 * (0.90 - 0.4095 * 0.40)
                    + 0.0433 * (0.50 - 0.4395 * 0.42)
                    + 0.0137 * (0.08 - 0.4415 * 0.06));
        let x = 2.0 * 0.0137 * 0.4415 * 0.15;
        let sum = 0.0694 + 0.4346 + 2.0 * (0.0271 + 0.0162 + 0.0061 + 0.1416 + 0.0433 + 0.0137);
        assert!((c[2] - z / sum).abs() < 1e-12, "{} vs {}", c[2], z / sum);
        assert!((c[0] - x / sum).abs() < 1e-12);
        assert!(c[1].abs() < 1e-12);
        // A standing adult's centre of mass is at about 55 % of body height (Winter 2009,
        // sec. 4.1, from memory): 0.97 m of 1.75 m here.
        assert!((c[2] / 1.75 - 0.55).abs() < 0.02, "{}", c[2] / 1.75);
    }
}

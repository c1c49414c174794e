//! A motion from an animated skeleton: the joints' world positions frame by frame, mapped to
//! the body's roles by their names, give the whole-body centre of mass, the arms, the feet and
//! their contact with the ground, and the passive chains (joint chains that play no part in
//! the body).

use crate::body::{BodyModel, Mapping, Role, Side, arms_centre, centre_of_mass};
use crate::checks::{Chain, Motion};

use heft_node_sdk::math::vec3::V3;

/// An animated skeleton: its joints (names and parents, each joint after its parent) and their
/// world positions at each frame (m, Z up).
#[derive(Debug, Clone, PartialEq)]
pub struct Skeleton {
    /// Joint names.
    pub names: Vec<String>,
    /// Each joint's parent.
    pub parents: Vec<Option<usize>>,
    /// `positions[frame][joint]`.
    pub positions: Vec<Vec<V3>>,
}

/// How a skeleton is read.
#[derive(Debug, Clone, PartialEq)]
pub struct Reading {
    /// The segment table.
    pub model: BodyModel,
    /// Joints whose role the user gives (`None`: leave the joint out).
    pub overrides: Vec<(String, Option<Role>)>,
    /// Number of the first frame.
    pub start_frame: i64,
    /// Frames per second.
    pub rate: f64,
    /// Body mass, kg.
    pub mass: f64,
    /// A foot within this height (m) of the lowest any foot gets is on the ground.
    pub clearance: f64,
}

/// A skeleton's motion and the joints that play no part in it.
#[derive(Debug, Clone, PartialEq)]
pub struct Read {
    /// The motion to audit.
    pub motion: Motion,
    /// Joints with no role (left out of the centre of mass; reported, not guessed).
    pub unmapped: Vec<String>,
}

impl Skeleton {
    /// The motion: the centre of mass and the arms from `reading.model`, the feet (toes, else
    /// ankles) and their contact, the passive chains. Fails with the roles no joint plays.
    pub fn motion(&self, reading: &Reading) -> Result<Read, Vec<Role>> {
        let left_out: Vec<&String> = reading
            .overrides
            .iter()
            .filter(|(_, r)| r.is_none())
            .map(|(n, _)| n)
            .collect();
        let given: Vec<(String, Role)> = reading
            .overrides
            .iter()
            .filter_map(|(n, r)| r.map(|r| (n.clone(), r)))
            .collect();
        // A joint left out keeps its place with an empty name, so indices stay the joints'.
        let kept: Vec<String> = self
            .names
            .iter()
            .map(|n| {
                if left_out.contains(&n) {
                    String::new()
                } else {
                    n.clone()
                }
            })
            .collect();
        let mapping = Mapping::of(&kept, &given);
        let frames = self.positions.len();
        let at = |j: usize, f: usize| self.positions[f][j];
        let com = (0..frames)
            .map(|f| centre_of_mass(reading.model, &mapping, |j| at(j, f)))
            .collect::<Result<Vec<V3>, Vec<Role>>>()?;
        let arms = arms_track(reading.model, &mapping, frames, at);
        let track = |j: usize| (0..frames).map(|f| at(j, f)).collect::<Vec<V3>>();
        let soles: Vec<(String, Vec<V3>)> = [Side::Left, Side::Right]
            .into_iter()
            .flat_map(|s| [Role::Ankle(s), Role::Toe(s)])
            .filter_map(|r| mapping.joint(r))
            .map(|j| (self.names[j].clone(), track(j)))
            .collect();
        let contact = feet_contact(&soles, frames, reading.clearance);
        let feet = feet_tracks(&mapping, frames, at, |j| self.names[j].clone());
        let motion = Motion {
            start_frame: reading.start_frame,
            rate: reading.rate,
            com,
            contact,
            mass: reading.mass,
            arms,
            chains: self.chains(&mapping, &kept),
            feet,
        };
        Ok(Read {
            motion,
            unmapped: mapping.unmapped.into_iter().filter(|n| !n.is_empty()).collect(),
        })
    }

    /// The passive chains: joints with no role whose descendants have none either (a ponytail,
    /// a braid; not a spine), each hanging from the first such joint's parent, following the
    /// first child.
    fn chains(&self, mapping: &Mapping, kept: &[String]) -> Vec<Chain> {
        let n = self.names.len();
        let mapped: Vec<bool> = (0..n).map(|i| mapping.roles.iter().any(|(_, j)| *j == i)).collect();
        let children = |i: usize| (0..n).filter(move |&c| self.parents[c] == Some(i));
        // Descendants with a role, bottom up (a joint comes after its parent).
        let mut body_below = mapped;
        for i in (0..n).rev() {
            if body_below[i]
                && let Some(p) = self.parents[i]
            {
                body_below[p] = true;
            }
        }
        let centre = [
            "hips", "pelvis", "spine", "chest", "root", "clavicle", "shoulder", "body",
        ];
        let candidate = |i: usize| {
            let lower = self.names[i].to_ascii_lowercase();
            !body_below[i]
                && !kept[i].is_empty()
                && self.parents[i].is_some()
                && children(i).count() <= 1
                && !centre.iter().any(|c| lower.contains(c))
        };
        let frames = self.positions.len();
        let mut out = Vec::new();
        for i in 0..n {
            let Some(parent) = self.parents[i] else { continue };
            if !candidate(i) || candidate(parent) {
                continue;
            }
            let mut joints = vec![i];
            while let Some(c) = children(*joints.last().unwrap_or(&i)).next() {
                if !candidate(c) {
                    break;
                }
                joints.push(c);
            }
            out.push(Chain {
                name: self.names[i].clone(),
                anchor: (0..frames).map(|f| self.positions[f][parent]).collect(),
                points: (0..frames)
                    .map(|f| joints.iter().map(|&j| self.positions[f][j]).collect())
                    .collect(),
            });
        }
        out
    }
}

/// The arms' centre of mass at each of `frames` frames (`at(joint, frame)` a joint's position)
/// and their mass as a fraction of the body's; `None` when a joint the arms need is missing.
pub fn arms_track(
    model: BodyModel,
    mapping: &Mapping,
    frames: usize,
    at: impl Fn(usize, usize) -> V3,
) -> Option<(Vec<V3>, f64)> {
    let each = (0..frames)
        .map(|f| arms_centre(model, mapping, |j| at(j, f)))
        .collect::<Option<Vec<_>>>()?;
    let fraction = each.first().map(|(_, m)| *m)?;
    Some((each.into_iter().map(|(p, _)| p).collect(), fraction))
}

/// Each side's foot, the toe where the rig has one, else the ankle: its name (`name(joint)`)
/// and its position at each of `frames` frames.
pub fn feet_tracks(
    mapping: &Mapping,
    frames: usize,
    at: impl Fn(usize, usize) -> V3,
    name: impl Fn(usize) -> String,
) -> Vec<(String, Vec<V3>)> {
    [Side::Left, Side::Right]
        .into_iter()
        .filter_map(|s| {
            let j = mapping.joint(Role::Toe(s)).or_else(|| mapping.joint(Role::Ankle(s)))?;
            Some((name(j), (0..frames).map(|f| at(j, f)).collect()))
        })
        .collect()
}

/// On the ground: the lowest foot within `clearance` of the lowest any foot gets over the
/// motion.
pub fn feet_contact(feet: &[(String, Vec<V3>)], frames: usize, clearance: f64) -> Vec<bool> {
    let low = |f: usize| feet.iter().map(|(_, t)| t[f][2]).fold(f64::INFINITY, f64::min);
    let ground = (0..frames).map(low).fold(f64::INFINITY, f64::min);
    (0..frames).map(|f| low(f) - ground <= clearance).collect()
}

/// `NAME=ROLE` lines (each with where it came from, for messages; a later line for the same
/// joint wins; an empty role leaves the joint out). Roles: neck, head, head_top, and
/// shoulder, elbow, wrist, knuckle, hip, knee, ankle, toe with `_l` or `_r`.
pub fn parse_overrides(lines: &[(String, String)]) -> Result<Vec<(String, Option<Role>)>, String> {
    let mut out: Vec<(String, Option<Role>)> = Vec::new();
    for (at, line) in lines {
        let (name, role) = line
            .split_once('=')
            .ok_or_else(|| format!("{at}: `{line}`: expected NAME=ROLE"))?;
        let (name, role) = (name.trim(), role.trim());
        let role = if role.is_empty() {
            None
        } else {
            Some(Role::from_word(role).ok_or_else(|| format!("{at}: `{line}`: `{role}` is not a role (see --help)"))?)
        };
        out.retain(|(n, _)| n != name);
        out.push((name.to_owned(), role));
    }
    Ok(out)
}

impl Role {
    /// A role by its word (`neck`, `head`, `head_top`, `knee_l`, `toe_r`, ...).
    pub fn from_word(word: &str) -> Option<Role> {
        match word {
            "neck" => return Some(Role::Neck),
            "head" => return Some(Role::Head),
            "head_top" => return Some(Role::HeadTop),
            _ => {}
        }
        let (part, s) = word.rsplit_once('_')?;
        let s = match s {
            "l" => Side::Left,
            "r" => Side::Right,
            _ => return None,
        };
        Some(match part {
            "shoulder" => Role::Shoulder(s),
            "elbow" => Role::Elbow(s),
            "wrist" => Role::Wrist(s),
            "knuckle" => Role::Knuckle(s),
            "hip" => Role::Hip(s),
            "knee" => Role::Knee(s),
            "ankle" => Role::Ankle(s),
            "toe" => Role::Toe(s),
            _ => return None,
        })
    }
}

impl Motion {
    /// Frames `first..first + count` of the motion (clipped to it).
    pub fn frames(self, first: usize, count: usize) -> Motion {
        let n = self.com.len();
        let first = first.min(n);
        let end = first.saturating_add(count).min(n);
        if first == 0 && end == n {
            return self;
        }
        let cut = |v: &[V3]| v[first.min(v.len())..end.min(v.len())].to_vec();
        Motion {
            start_frame: self.start_frame + first as i64,
            rate: self.rate,
            com: cut(&self.com),
            contact: self.contact[first.min(self.contact.len())..end.min(self.contact.len())].to_vec(),
            mass: self.mass,
            arms: self.arms.as_ref().map(|(a, f)| (cut(a), *f)),
            chains: self
                .chains
                .iter()
                .map(|c| Chain {
                    name: c.name.clone(),
                    anchor: cut(&c.anchor),
                    points: c.points[first.min(c.points.len())..end.min(c.points.len())].to_vec(),
                })
                .collect(),
            feet: self.feet.iter().map(|(n, t)| (n.clone(), cut(t))).collect(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn role_words_and_override_lines() {
        assert_eq!(Role::from_word("knee_l"), Some(Role::Knee(Side::Left)));
        assert_eq!(Role::from_word("head_top"), Some(Role::HeadTop));
        assert_eq!(Role::from_word("knee_x"), None);
        assert_eq!(Role::from_word("tail_l"), None);
        let lines = [
            ("map:1".to_owned(), "tail = ".to_owned()),
            ("map:2".to_owned(), " hair_root = head_top ".to_owned()),
            ("map:3".to_owned(), "tail = toe_l".to_owned()),
        ];
        assert_eq!(
            parse_overrides(&lines).expect("parses"),
            [
                ("hair_root".to_owned(), Some(Role::HeadTop)),
                ("tail".to_owned(), Some(Role::Toe(Side::Left)))
            ]
        );
        let bad = [("map:7".to_owned(), "tail toe_l".to_owned())];
        assert_eq!(
            parse_overrides(&bad).expect_err("refused"),
            "map:7: `tail toe_l`: expected NAME=ROLE"
        );
    }

    #[test]
    fn the_lowest_foot_within_the_clearance_is_on_the_ground() {
        let feet = vec![
            (
                "l".to_owned(),
                vec![[0.0, 0.0, 0.02], [0.0, 0.0, 0.10], [0.0, 0.0, 0.04]],
            ),
            (
                "r".to_owned(),
                vec![[0.0, 0.0, 0.05], [0.0, 0.0, 0.08], [0.0, 0.0, 0.03]],
            ),
        ];
        assert_eq!(feet_contact(&feet, 3, 0.015), [true, false, true]);
    }

    #[test]
    fn a_motion_s_frames_keep_every_track_aligned() {
        let m = Motion {
            start_frame: 10,
            rate: 24.0,
            com: (0..5).map(|i| [0.0, 0.0, i as f64]).collect(),
            contact: vec![true, false, false, true, true],
            mass: 60.0,
            arms: Some(((0..5).map(|i| [i as f64, 0.0, 0.0]).collect(), 0.1)),
            chains: vec![Chain {
                name: "c".into(),
                anchor: (0..5).map(|i| [0.0, i as f64, 0.0]).collect(),
                points: (0..5).map(|i| vec![[i as f64; 3]]).collect(),
            }],
            feet: vec![("f".into(), (0..5).map(|i| [0.0, 0.0, -(i as f64)]).collect())],
        };
        let s = m.frames(1, 3);
        assert_eq!(s.start_frame, 11);
        assert_eq!(s.com[0][2], 1.0);
        assert_eq!(s.contact, [false, false, true]);
        assert_eq!(s.arms.as_ref().map(|a| a.0[2][0]), Some(3.0));
        assert_eq!(s.chains[0].points[0][0][0], 1.0);
        assert_eq!(s.feet[0].1[2][2], -3.0);
    }
}

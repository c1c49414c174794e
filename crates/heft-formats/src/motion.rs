//! The motion the audit reads ([`heft_audit::Motion`]) from a graph's evaluation: a body's
//! centre of mass and contact, its arms and feet from its joints, a glTF character's skeleton,
//! and the graph's strands as passive chains. `heft audit` and the review pages
//! ([`crate::review_out`]) both read motions through these functions, so a page's findings
//! are the ones `heft audit` prints for the same graph and frames.

use std::sync::Arc;

use heft_audit::body::{BodyModel, Mapping, centre_of_mass};
use heft_audit::skeleton::{Read, Reading, Skeleton, arms_track, feet_contact, feet_tracks};
use heft_audit::{Chain, Motion};
use heft_node_sdk::{Dimension, ParamValue, PortKind};
use heft_runtime::check::Plan;

use crate::character::Character;

/// Where a graph's body is: the outputs its motion is read from.
#[derive(Debug, Clone, PartialEq)]
pub struct GraphBody {
    /// The centre of mass: (node, output), a vec3 in m. The arms and feet come from the same
    /// node's transform outputs when their names say which joints they are.
    pub com: (usize, usize),
    /// The contact flag (node, output); without it the feet decide.
    pub contact: Option<(usize, usize)>,
    /// The feet (node, output: vec3 or transform in m); empty: the feet among the centre of
    /// mass's node's joints.
    pub feet: Vec<(usize, usize)>,
    /// A foot within this height (m) of the lowest any foot gets is on the ground.
    pub clearance: f64,
    /// Body mass, kg.
    pub mass: f64,
    /// The segment table for the arms.
    pub model: BodyModel,
}

/// A graph's motion, with what the reading found on the way.
#[derive(Debug, Clone)]
pub struct GraphMotion {
    /// Every frame of the run.
    pub motion: Motion,
    /// Whether the arms were found among the body's joints.
    pub arms: bool,
    /// At each frame, the distance (m) between the body's centre of mass and the one the
    /// segment table gives for its own joints, when they are all there.
    pub com_difference: Vec<Option<f64>>,
}

/// The width of one frame of an output.
fn width(plan: &Plan, node: usize, output: usize) -> usize {
    plan.nodes[node].outputs[output].width()
}

/// A position (the first three values) of output `(node, output)` at frame `f`.
fn position(plan: &Plan, values: &[Vec<Vec<f64>>], (node, output): (usize, usize), f: usize) -> [f64; 3] {
    let w = width(plan, node, output);
    let v = &values[node][output];
    [v[w * f], v[w * f + 1], v[w * f + 2]]
}

/// The motion of a graph's body over every frame of the run (`values`: the evaluation's).
pub fn graph_motion(plan: &Plan, values: &[Vec<Vec<f64>>], body: &GraphBody) -> GraphMotion {
    let (cn, _) = body.com;
    let node = &plan.nodes[cn];
    let spec = node.ty.spec();
    // The arms and feet, from the body node's transform outputs when their names say which
    // joints they are (the jump planner's `upper_arm_l`, `forearm_l`, `hand_l`, ...).
    let transforms: Vec<(String, usize)> = spec
        .outputs
        .iter()
        .enumerate()
        .filter(|(_, o)| o.kind == PortKind::Transform)
        .map(|(k, o)| (o.name.clone(), k))
        .collect();
    let names: Vec<String> = transforms.iter().map(|(n, _)| n.clone()).collect();
    let mapping = Mapping::of(&names, &[]);
    let frames = plan.timeline.frames();
    let joint = |j: usize, f: usize| position(plan, values, (cn, transforms[j].1), f);
    let arms = arms_track(body.model, &mapping, frames, joint);
    let com: Vec<[f64; 3]> = (0..frames).map(|f| position(plan, values, body.com, f)).collect();
    let feet: Vec<(String, Vec<[f64; 3]>)> = if body.feet.is_empty() {
        feet_tracks(&mapping, frames, joint, |j| {
            format!("{}.{}", node.name, transforms[j].0)
        })
    } else {
        body.feet
            .iter()
            .map(|&(n, k)| {
                let name = format!("{}.{}", plan.nodes[n].name, plan.nodes[n].ty.spec().outputs[k].name);
                (name, (0..frames).map(|f| position(plan, values, (n, k), f)).collect())
            })
            .collect()
    };
    let contact: Vec<bool> = match body.contact {
        Some((n, k)) => values[n][k].iter().map(|v| *v > 0.5).collect(),
        None => feet_contact(&feet, frames, body.clearance),
    };
    let com_difference = (0..frames)
        .map(|f| {
            centre_of_mass(body.model, &mapping, |j| joint(j, f)).ok().map(|c| {
                let d = [c[0] - com[f][0], c[1] - com[f][1], c[2] - com[f][2]];
                (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt()
            })
        })
        .collect();
    let tl = plan.timeline;
    GraphMotion {
        arms: arms.is_some(),
        motion: Motion {
            start_frame: tl.start_frame,
            rate: tl.fps(),
            com,
            contact,
            mass: body.mass,
            arms,
            chains: graph_chains(plan, values),
            feet,
        },
        com_difference,
    }
}

/// The body a node gives by itself: its `com_position` (a vec3 in m), its `contact` flag (or,
/// without one, its feet among its joints), its `body_mass` parameter unless `mass` is given,
/// and Winter's segment table (the one heft's jump planner uses). `Err` says what is missing.
pub fn body_of_node(plan: &Plan, node: usize, mass: Option<f64>) -> Result<GraphBody, String> {
    let n = &plan.nodes[node];
    let spec = n.ty.spec();
    let com = spec
        .outputs
        .iter()
        .position(|o| o.name == "com_position" && o.kind == PortKind::Vec3 && o.dimension == Dimension::Length)
        .ok_or_else(|| {
            format!(
                "`{}` gives no centre of mass (an output `com_position`, a vec3 in m)",
                n.name
            )
        })?;
    let contact = spec
        .outputs
        .iter()
        .position(|o| o.name == "contact" && o.kind == PortKind::Flag);
    let mass = match mass {
        Some(m) => m,
        None => body_mass(plan, node).ok_or_else(|| {
            format!(
                "`{}` has no `body_mass`: give the body mass with `mass = .. kg`",
                n.name
            )
        })?,
    };
    Ok(GraphBody {
        com: (node, com),
        contact: contact.map(|k| (node, k)),
        feet: Vec::new(),
        clearance: DEFAULT_CLEARANCE,
        mass,
        model: BodyModel::Winter,
    })
}

/// A foot within 3 cm of its lowest is on the ground (`heft audit --ground-clearance`).
pub const DEFAULT_CLEARANCE: f64 = 0.03;

/// A node's `body_mass` parameter (kg), when it has one.
pub fn body_mass(plan: &Plan, node: usize) -> Option<f64> {
    let n = &plan.nodes[node];
    let k = n.ty.spec().params.iter().position(|p| p.name == "body_mass")?;
    match n.params.get(k) {
        Some(ParamValue::Number(v)) => Some(*v),
        _ => None,
    }
}

/// An integer parameter of a node, when it is a count.
fn count_param(plan: &Plan, node: usize, name: &str) -> Option<usize> {
    let n = &plan.nodes[node];
    let k = n.ty.spec().params.iter().position(|p| p.name == name)?;
    match n.params.get(k) {
        Some(ParamValue::Integer(v)) => usize::try_from(*v).ok(),
        _ => None,
    }
}

/// The graph's strands as chains: every node with a `positions` output (points, m) and a
/// connected `anchor` (a transform), split into `count` strands of `segments + 1` points when
/// the node has those parameters.
pub fn graph_chains(plan: &Plan, values: &[Vec<Vec<f64>>]) -> Vec<Chain> {
    let frames = plan.timeline.frames();
    let mut out = Vec::new();
    for (i, node) in plan.nodes.iter().enumerate() {
        let spec = node.ty.spec();
        let Some(pk) = spec
            .outputs
            .iter()
            .position(|o| o.name == "positions" && o.kind == PortKind::Points && o.dimension == Dimension::Length)
        else {
            continue;
        };
        let Some(Some((an, ak))) = spec
            .inputs
            .iter()
            .position(|p| p.name == "anchor")
            .map(|k| node.inputs[k])
        else {
            continue;
        };
        if plan.nodes[an].ty.spec().outputs[ak].kind != PortKind::Transform {
            continue;
        }
        let pos = &values[i][pk];
        let width = pos.len().checked_div(frames).unwrap_or(0);
        let points = width / 3;
        let (count, per) = match (count_param(plan, i, "count"), count_param(plan, i, "segments")) {
            (Some(c), Some(s)) if c * (s + 1) == points && c > 0 => (c, s + 1),
            _ => (1, points),
        };
        let anchor: Vec<[f64; 3]> = (0..frames).map(|f| position(plan, values, (an, ak), f)).collect();
        for s in 0..count {
            let name = if count == 1 {
                node.name.clone()
            } else {
                format!("{}[{s}]", node.name)
            };
            let chain: Vec<Vec<[f64; 3]>> = (0..frames)
                .map(|f| {
                    (0..per)
                        .map(|k| {
                            let at = f * width + 3 * (s * per + k);
                            [pos[at], pos[at + 1], pos[at + 2]]
                        })
                        .collect()
                })
                .collect();
            out.push(Chain {
                name,
                anchor: anchor.clone(),
                points: chain,
            });
        }
    }
    out
}

/// A character's skeleton in heft's axes: every node of its scene, the world position of each
/// at each of its frames.
pub fn skeleton_of(ch: &Character) -> Skeleton {
    let frames = ch.world.first().map_or(0, Vec::len);
    Skeleton {
        names: ch.nodes.iter().map(|n| n.name.clone()).collect(),
        parents: ch.nodes.iter().map(|n| n.parent).collect(),
        positions: (0..frames)
            .map(|f| (0..ch.nodes.len()).map(|j| ch.axes.point(ch.world[j][f].t)).collect())
            .collect(),
    }
}

/// The character a node of the plan read, if it is a `track.character`.
pub fn character_of(plan: &Plan, node: usize) -> Option<Arc<Character>> {
    let hierarchy = plan.nodes[node].ty.instance.as_ref()?.hierarchy.clone()?;
    hierarchy.downcast::<Character>().ok()
}

/// The motion of a graph's `track.character` node over every frame of the run: its centre of
/// mass from its skeleton with de Leva's table (the one `heft audit` takes for a glTF
/// character), its feet on the ground within [`DEFAULT_CLEARANCE`], and, besides its own
/// passive joint chains, the graph's strands. `Err` names the roles no joint plays.
pub fn character_motion(plan: &Plan, values: &[Vec<Vec<f64>>], node: usize, mass: f64) -> Result<Read, String> {
    let ch = character_of(plan, node).ok_or_else(|| format!("`{}` is not a character", plan.nodes[node].name))?;
    let reading = Reading {
        model: BodyModel::DeLevaMale,
        overrides: Vec::new(),
        start_frame: plan.timeline.start_frame,
        rate: plan.timeline.fps(),
        mass,
        clearance: DEFAULT_CLEARANCE,
    };
    let mut read = skeleton_of(&ch).motion(&reading).map_err(|missing| {
        format!(
            "no joint of `{}` plays the role of {}",
            plan.nodes[node].name,
            missing.iter().map(|r| format!("{r:?}")).collect::<Vec<_>>().join(", ")
        )
    })?;
    read.motion.chains.extend(graph_chains(plan, values));
    Ok(read)
}

/// The ground force a centre of mass implies, m (g + a_z), in body weights at each frame:
/// 1 + a_z / g, a_z by central second differences (the ends repeat their neighbour).
pub fn implied_weight(m: &Motion) -> Vec<f64> {
    let dt = 1.0 / m.rate;
    let n = m.com.len();
    (0..n)
        .map(|i| {
            let k = i.clamp(1, n.saturating_sub(2).max(1));
            if n < 3 {
                return 1.0;
            }
            1.0 + (m.com[k + 1][2] - 2.0 * m.com[k][2] + m.com[k - 1][2]) / (dt * dt * heft_audit::G)
        })
        .collect()
}

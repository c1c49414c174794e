//! Baking outputs into glTF 2.0 (Khronos Group, glTF 2.0 Specification, 2021): every series
//! becomes animated nodes sampled at every baked frame, in metres, Y up.
//!
//! - a vec3 output: one node with a translation channel;
//! - a transform output: one node with translation and rotation channels;
//! - a points output: one node per point with a translation channel, or, for strands, one
//!   chain of parent-child joints per strand with translation and rotation channels and a
//!   `skin` (its joints, and inverse bind matrices from the first baked frame), so a mesh can
//!   be skinned to it. A chain hangs under its anchor: under the character's bone when the
//!   anchor is a joint of a glTF character (through a node that cancels the bone's scale, so
//!   the chain's own transforms are rigid), under a node that shows the anchor otherwise, and
//!   under a still node named after the strand when it has no anchor. No chain is a scene root.
//! - Joint frames do not flip: joint j's rotation aims its local +Y at point j + 1 and carries
//!   its twist by parallel transport: the root joint takes the anchor's turn since the frame
//!   before, then the smallest rotation that aims it at the next point; every further joint is
//!   its parent's frame turned by the smallest rotation between their directions (the discrete
//!   rotation-minimising frame; Bishop 1975, "There is more than one way to frame a curve",
//!   American Mathematical Monthly 82(3)). The last joint keeps its parent's rotation.
//!
//! Every node carries its first baked frame as its rest TRS, so a reader that ignores the
//! animation still sees a sensible pose. Node names hold only letters, digits, `_` and `-`
//! (names every tool accepts); heft's own name, the series and the point are in the node's
//! `extras.heft`. `asset.extras.heft` holds the frame rate, the frame number at animation
//! time 0, the frame count and the axes of heft's data.
//!
//! heft's world is Z up; glTF is Y up, so positions (x, y, z) are written as (x, z, -y) and
//! rotations are turned the same way, unless the bake says `axes = y_up`. Animation time 0 is
//! the first baked frame.

use std::collections::{BTreeMap, BTreeSet};

use base64::Engine;
use heft_node_sdk::PortKind;
use serde_json::{Value, json};

use heft_runtime::blocks::{BakeAnchor, BakeFormat, BakeItem, PlannedBake};
use heft_runtime::check::Plan;
use heft_runtime::eval::Evaluation;

use std::sync::Arc;

use crate::character::{Affine, Axes, Character};
use crate::quat::{Quat, conj, mul, normalise, rotate};

/// The shortest rotation taking the unit vector `a` to the unit vector `b`.
pub fn arc(a: [f64; 3], b: [f64; 3]) -> Quat {
    let d = a[0] * b[0] + a[1] * b[1] + a[2] * b[2];
    if d < -1.0 + 1e-12 {
        // Half a turn about an axis perpendicular to `a`.
        let e = if a[0].abs() < 0.9 {
            [1.0, 0.0, 0.0]
        } else {
            [0.0, 1.0, 0.0]
        };
        let c = cross(a, e);
        let n = (c[0] * c[0] + c[1] * c[1] + c[2] * c[2]).sqrt();
        return [c[0] / n, c[1] / n, c[2] / n, 0.0];
    }
    let c = cross(a, b);
    normalise([c[0], c[1], c[2], 1.0 + d])
}

use heft_node_sdk::math::vec3::{cross, sub};

fn unit(v: [f64; 3]) -> Option<[f64; 3]> {
    let n = (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt();
    (n > 1e-12).then(|| [v[0] / n, v[1] / n, v[2] / n])
}

const Y: [f64; 3] = [0.0, 1.0, 0.0];

/// World rotations of one chain's joints at one frame, by parallel transport from `root`, a
/// rotation whose +Y is turned onto the first segment.
pub fn transport(points: &[[f64; 3]], root: Quat) -> Vec<Quat> {
    let mut out = Vec::with_capacity(points.len());
    transport_into(points, root, &mut out);
    out
}

/// [`transport`] into `out` (cleared first), so that a caller keeps one buffer for every frame.
fn transport_into(points: &[[f64; 3]], root: Quat, out: &mut Vec<Quat>) {
    out.clear();
    let mut frame = root;
    for j in 0..points.len() {
        if j + 1 < points.len()
            && let Some(d) = unit(sub(points[j + 1], points[j]))
        {
            // A product of unit quaternions is one to rounding; each frame starts afresh from
            // `root`, so nothing accumulates beyond the chain's length.
            frame = mul(arc(rotate(frame, Y), d), frame);
        }
        out.push(frame);
    }
}

/// Keeps consecutive quaternions in one hemisphere, so linear interpolation takes the short way.
fn continuous(qs: &mut [Quat]) {
    for i in 1..qs.len() {
        let d: f64 = (0..4).map(|k| qs[i][k] * qs[i - 1][k]).sum();
        if d < 0.0 {
            qs[i] = qs[i].map(|c| -c);
        }
    }
}

/// A node name every tool accepts (letters, digits, `_`, `-`), never empty.
pub fn tool_name(name: &str) -> String {
    let s = crate::character::tool_safe(name);
    if s.is_empty() { "node".to_owned() } else { s }
}

struct Builder {
    bin: Vec<u8>,
    views: Vec<Value>,
    accessors: Vec<Value>,
    nodes: Vec<Value>,
    roots: Vec<usize>,
    samplers: Vec<Value>,
    channels: Vec<Value>,
    skins: Vec<Value>,
    time_accessor: usize,
    names: BTreeSet<String>,
    /// The first value that did not fit a 32-bit float: (what, key, value).
    overflow: Option<(String, usize, f64)>,
}

impl Builder {
    fn floats(&mut self, data: &[f32], ty: &str, count: usize, min_max: Option<(Vec<f32>, Vec<f32>)>) -> usize {
        self.floats_of(data.iter().copied(), data.len(), ty, count, min_max)
    }

    /// Notes the first value of `what` that does not fit a 32-bit float (glTF's component
    /// type): `values[k]` of a channel of `width` values per key.
    fn fits(&mut self, what: &str, node: usize, values: impl Iterator<Item = f64>, width: usize) {
        if self.overflow.is_some() {
            return;
        }
        if let Some((k, v)) = values.enumerate().find(|(_, v)| !(*v as f32).is_finite()) {
            let name = self.nodes[node]["name"].as_str().unwrap_or("?");
            self.overflow = Some((format!("the {what} of `{name}`"), k / width.max(1), v));
        }
    }

    /// `len` floats from `data` into the buffer, little-endian, as one accessor.
    fn floats_of(
        &mut self,
        data: impl Iterator<Item = f32>,
        len: usize,
        ty: &str,
        count: usize,
        min_max: Option<(Vec<f32>, Vec<f32>)>,
    ) -> usize {
        while !self.bin.len().is_multiple_of(4) {
            self.bin.push(0);
        }
        let offset = self.bin.len();
        // Appended in one pass (no zeroing first): the buffer's pages are touched once.
        self.bin.reserve(4 * len);
        for v in data.take(len) {
            self.bin.extend_from_slice(&v.to_le_bytes());
        }
        // Never short: a short source is padded with zeros, as the accessor's count says.
        self.bin.resize(offset + 4 * len, 0);
        self.views
            .push(json!({"buffer": 0, "byteOffset": offset, "byteLength": len * 4}));
        let mut acc = json!({
            "bufferView": self.views.len() - 1,
            "componentType": 5126,
            "count": count,
            "type": ty,
        });
        if let Some((min, max)) = min_max {
            acc["min"] = json!(min);
            acc["max"] = json!(max);
        }
        self.accessors.push(acc);
        self.accessors.len() - 1
    }

    fn channel_of(&mut self, node: usize, path: &str, data: impl Iterator<Item = f32>, width: usize, count: usize) {
        let ty = if width == 4 { "VEC4" } else { "VEC3" };
        let output = self.floats_of(data, width * count, ty, count, None);
        self.samplers
            .push(json!({"input": self.time_accessor, "output": output, "interpolation": "LINEAR"}));
        self.channels
            .push(json!({"sampler": self.samplers.len() - 1, "target": {"node": node, "path": path}}));
    }

    /// Room in the buffer for a channel of `count` keys of `width` floats on `node`'s `path`,
    /// as one accessor (with its sampler and channel), zero-filled; returns its byte offset, for
    /// the caller to fill key by key with [`put`].
    fn channel_space(&mut self, node: usize, path: &str, width: usize, count: usize) -> usize {
        let at = self.bin.len().next_multiple_of(4);
        let ty = if width == 4 { "VEC4" } else { "VEC3" };
        let output = self.floats_of(std::iter::empty(), width * count, ty, count, None);
        self.samplers
            .push(json!({"input": self.time_accessor, "output": output, "interpolation": "LINEAR"}));
        self.channels
            .push(json!({"sampler": self.samplers.len() - 1, "target": {"node": node, "path": path}}));
        at
    }

    /// A node with a unique tool-safe name made from `name`, heft's extras and a parent.
    fn node(&mut self, name: &str, extras: Option<Value>, parent: Option<usize>) -> usize {
        let base = tool_name(name);
        let mut unique = base.clone();
        let mut k = 2;
        while !self.names.insert(unique.clone()) {
            unique = format!("{base}_{k}");
            k += 1;
        }
        let mut n = json!({"name": unique});
        if let Some(e) = extras {
            n["extras"] = json!({"heft": e});
        }
        self.nodes.push(n);
        let i = self.nodes.len() - 1;
        match parent {
            Some(p) => {
                let children = self.nodes[p]
                    .as_object_mut()
                    .map(|o| o.entry("children").or_insert(json!([])));
                if let Some(Value::Array(c)) = children {
                    c.push(json!(i));
                }
            }
            None => self.roots.push(i),
        }
        i
    }

    /// Sets a node's rest TRS (the first baked frame).
    fn rest(&mut self, node: usize, t: Option<[f64; 3]>, r: Option<Quat>, s: Option<[f64; 3]>) {
        if let Some(t) = t {
            self.nodes[node]["translation"] = json!(t.map(|c| c as f32));
        }
        if let Some(r) = r {
            self.nodes[node]["rotation"] = json!(normalise(r).map(|c| c as f32));
        }
        if let Some(s) = s {
            self.nodes[node]["scale"] = json!(s.map(|c| c as f32));
        }
    }

    fn animate_t(&mut self, node: usize, t: &[[f64; 3]]) {
        self.fits("translation", node, t.iter().flatten().copied(), 3);
        self.rest(node, t.first().copied(), None, None);
        let data = t.iter().flat_map(|p| p.map(|c| c as f32));
        self.channel_of(node, "translation", data, 3, t.len());
    }

    fn animate_r(&mut self, node: usize, r: &mut [Quat]) {
        continuous(r);
        self.rest(node, None, r.first().copied(), None);
        let data = r.iter().flat_map(|q| q.map(|c| c as f32));
        self.channel_of(node, "rotation", data, 4, r.len());
    }

    fn animate_s(&mut self, node: usize, s: &[[f64; 3]]) {
        self.fits("scale", node, s.iter().flatten().copied(), 3);
        self.rest(node, None, None, s.first().copied());
        let data = s.iter().flat_map(|p| p.map(|c| c as f32));
        self.channel_of(node, "scale", data, 3, s.len());
    }
}

/// Writes `values` little-endian at byte `at` of `bin`.
fn put<const N: usize>(bin: &mut [u8], at: usize, values: [f32; N]) {
    for (bytes, v) in bin[at..at + 4 * N].chunks_exact_mut(4).zip(values) {
        bytes.copy_from_slice(&v.to_le_bytes());
    }
}

/// A rigid transform: rotation and translation.
#[derive(Debug, Clone, Copy)]
struct Rigid {
    r: Quat,
    t: [f64; 3],
}

impl Rigid {
    const IDENTITY: Rigid = Rigid {
        r: [0.0, 0.0, 0.0, 1.0],
        t: [0.0; 3],
    };
    /// `self^-1 * (r, t)`: a child's local transform.
    fn local(&self, r: Quat, t: [f64; 3]) -> (Quat, [f64; 3]) {
        let inv = conj(self.r);
        (normalise(mul(inv, r)), rotate(inv, sub(t, self.t)))
    }
}

/// The character a node read, if it is a `track.character`.
fn character_of(plan: &Plan, node: usize) -> Option<Arc<Character>> {
    let hierarchy = plan.nodes[node].ty.instance.as_ref()?.hierarchy.clone()?;
    hierarchy.downcast::<Character>().ok()
}

/// The frames of a bake (indices into the timeline).
fn baked_frames(plan: &Plan, bake: &PlannedBake) -> std::ops::Range<usize> {
    let tl = plan.timeline;
    match bake.range {
        Some((a, b)) => {
            let a = usize::try_from(a - tl.start_frame).unwrap_or(0);
            let b = usize::try_from(b - tl.start_frame + 1).unwrap_or(0);
            a..b.min(tl.frames())
        }
        None => 0..tl.frames(),
    }
}

/// Where a character's nodes sit in the bake.
struct CharacterNodes {
    of: BTreeMap<usize, usize>,
    root: usize,
}

struct Bake<'a> {
    plan: &'a Plan,
    eval: &'a Evaluation,
    frames: std::ops::Range<usize>,
    y_up: bool,
    b: Builder,
    series_nodes: BTreeMap<(usize, usize), usize>,
    characters: BTreeMap<usize, CharacterNodes>,
    /// The character node whose own file the bake is written into.
    base: Option<usize>,
}

impl Bake<'_> {
    fn pos(&self, p: [f64; 3]) -> [f64; 3] {
        if self.y_up { p } else { [p[0], p[2], -p[1]] }
    }
    fn rot(&self, q: Quat) -> Quat {
        if self.y_up { q } else { [q[0], q[2], -q[1], q[3]] }
    }
    fn frame(&self, node: usize, output: usize, i: usize) -> &[f64] {
        let w = self.plan.nodes[node].outputs[output].width();
        &self.eval.values[node][output][i * w..(i + 1) * w]
    }
    /// The rigid transform of a transform (or vec3) series at frame `i`, in heft's world.
    fn rigid(&self, node: usize, output: usize, i: usize) -> Rigid {
        let f = self.frame(node, output, i);
        let t = [f[0], f[1], f[2]];
        let r = if f.len() >= 7 {
            normalise([f[3], f[4], f[5], f[6]])
        } else {
            [0.0, 0.0, 0.0, 1.0]
        };
        Rigid { r, t }
    }
    fn series_name(&self, node: usize, output: usize) -> String {
        let pn = &self.plan.nodes[node];
        format!("{}.{}", pn.name, pn.ty.spec().outputs[output].name)
    }

    /// The node showing a vec3 or transform series (made once).
    fn series_node(&mut self, node: usize, output: usize) -> usize {
        if let Some(&n) = self.series_nodes.get(&(node, output)) {
            return n;
        }
        let name = self.series_name(node, output);
        let kind = self.plan.nodes[node].outputs[output].kind;
        let n = self.b.node(&name, Some(json!({"name": name, "series": name})), None);
        let t: Vec<[f64; 3]> = self
            .frames
            .clone()
            .map(|i| self.pos(self.rigid(node, output, i).t))
            .collect();
        self.b.animate_t(n, &t);
        if kind == PortKind::Transform {
            let mut r: Vec<Quat> = self
                .frames
                .clone()
                .map(|i| self.rot(self.rigid(node, output, i).r))
                .collect();
            self.b.animate_r(n, &mut r);
        }
        self.series_nodes.insert((node, output), n);
        n
    }

    /// The turn of a character's whole scene from its file's axes into the bake's: a Y-up file
    /// turns into heft's Z up by a quarter turn about +X ((X, Y, Z) -> (X, -Z, Y)), and heft's
    /// Z up into the bake's Y up by the opposite quarter turn ((x, y, z) -> (x, z, -y)); a Y-up
    /// file in a Y-up bake needs no turn at all.
    fn scene_turn(&self, ch: &Character) -> Quat {
        let h = std::f64::consts::FRAC_1_SQRT_2;
        let to_heft = match ch.axes {
            crate::character::Axes::YUp => [h, 0.0, 0.0, h],
            crate::character::Axes::ZUp => [0.0, 0.0, 0.0, 1.0],
        };
        let to_bake = if self.y_up {
            [0.0, 0.0, 0.0, 1.0]
        } else {
            [-h, 0.0, 0.0, h]
        };
        normalise(mul(to_bake, to_heft))
    }

    /// The bake's node of character node `joint` of plan node `node` (made with its ancestors,
    /// under one root that turns the file's axes into the bake's).
    fn character_node(&mut self, node: usize, ch: &Character, joint: usize) -> usize {
        if self.base == Some(node) {
            // The character's own file: its node, as it is.
            return ch.nodes[joint].index;
        }
        if !self.characters.contains_key(&node) {
            let name = format!("{}_scene", self.plan.nodes[node].name);
            let root = self.b.node(&name, None, None);
            let r = self.scene_turn(ch);
            let r = if (r[3].abs() - 1.0).abs() < 1e-12 {
                [0.0, 0.0, 0.0, 1.0]
            } else {
                r
            };
            self.b.rest(root, None, Some(r), None);
            self.characters.insert(
                node,
                CharacterNodes {
                    of: BTreeMap::new(),
                    root,
                },
            );
        }
        if let Some(&n) = self.characters[&node].of.get(&joint) {
            return n;
        }
        let parent = match ch.nodes[joint].parent {
            Some(p) => self.character_node(node, ch, p),
            None => self.characters[&node].root,
        };
        let cn = &ch.nodes[joint];
        let heft_name = format!("{}.{}", self.plan.nodes[node].name, cn.port);
        let n = self.b.node(
            &cn.name,
            Some(json!({"name": heft_name, "series": heft_name, "file_name": cn.name})),
            Some(parent),
        );
        let local = &ch.local[joint];
        let t: Vec<[f64; 3]> = self.frames.clone().map(|i| local[i].t).collect();
        let mut r: Vec<Quat> = self.frames.clone().map(|i| local[i].r).collect();
        let s: Vec<[f64; 3]> = self.frames.clone().map(|i| local[i].s).collect();
        self.b.animate_t(n, &t);
        self.b.animate_r(n, &mut r);
        self.b.animate_s(n, &s);
        if let Some(m) = self.characters.get_mut(&node) {
            m.of.insert(joint, n);
        }
        n
    }

    /// Bakes one points item as chains of `c` joints.
    fn chains(&mut self, item: &BakeItem, c: usize) -> Result<(), String> {
        let strands = item.shape.points / c;
        // The parent of every chain, and its rigid world transform per frame (heft's world).
        let parent_world: Vec<Rigid>;
        let parent = match &item.anchor {
            BakeAnchor::Series { node, output } => {
                let (node, output) = (*node, *output);
                parent_world = self
                    .frames
                    .clone()
                    .map(|i| {
                        let w = self.rigid(node, output, i);
                        Rigid {
                            r: self.rot(w.r),
                            t: self.pos(w.t),
                        }
                    })
                    .collect();
                self.series_node(node, output)
            }
            BakeAnchor::Joint { node, output } => {
                let (node, output) = (*node, *output);
                let ch = character_of(self.plan, node)
                    .ok_or_else(|| format!("`{}` has no character to hang on", item.name))?;
                let port = &self.plan.nodes[node].ty.spec().outputs[output].name;
                let joint =
                    ch.nodes.iter().position(|n| &n.port == port).ok_or_else(|| {
                        format!("`{}` hangs on `{port}`, which its character does not hold", item.name)
                    })?;
                // The bone's own frame in the bake: the character's scene turned into the bake's
                // axes, then the bone's world transform in its file (rotation and position).
                let turn = self.scene_turn(&ch);
                let mut bone_world = Vec::with_capacity(self.frames.len());
                for i in self.frames.clone() {
                    let w = &ch.world[joint][i];
                    let q = w.rotation_scale().map_or([0.0, 0.0, 0.0, 1.0], |(q, _)| q);
                    bone_world.push(Rigid {
                        r: normalise(mul(turn, q)),
                        t: rotate(turn, w.t),
                    });
                }
                parent_world = bone_world;
                let bone = self.character_node(node, &ch, joint);
                // A node under the bone that cancels its scale: its world is the bone's rotation
                // and position only.
                let name = format!("{}.anchor", item.name);
                let rigid = self.b.node(&name, Some(json!({"name": name})), Some(bone));
                let mut scales = Vec::with_capacity(self.frames.len());
                for i in self.frames.clone() {
                    let w: &Affine = &ch.world[joint][i];
                    let (_, s) = w.rotation_scale().ok_or_else(|| {
                        format!(
                            "`{}` hangs on `{}`, whose world transform has shear at frame {}",
                            item.name,
                            ch.nodes[joint].name,
                            self.plan.timeline.frame_number(i)
                        )
                    })?;
                    scales.push(s.map(|v| 1.0 / v));
                }
                self.b.animate_s(rigid, &scales);
                rigid
            }
            BakeAnchor::None => {
                parent_world = vec![Rigid::IDENTITY; self.frames.len()];
                let name = format!("{}.strands", item.name);
                self.b.node(&name, Some(json!({"name": name})), None)
            }
        };
        // Everything below is in the bake's axes (`parent_world` too), where each joint aims its +Y.
        let nf = self.frames.len();
        let mut pts = vec![[0.0; 3]; c];
        let mut rots = Vec::with_capacity(c);
        // Frame 0's world transforms, for the inverse bind matrices.
        let mut bind: Vec<(Quat, [f64; 3])> = Vec::with_capacity(c);
        for s in 0..strands {
            // The strand's joints, then its channels: a translation and a rotation per joint,
            // laid out in the buffer now (their places depend only on the frame count) and
            // filled frame by frame below, so that the strand's state (the root's frame, each
            // joint's last rotation) is all that is carried from one frame to the next.
            let mut joints = Vec::with_capacity(c);
            let mut parent_node = parent;
            let mut places = Vec::with_capacity(c);
            for j in 0..c {
                let name = format!("{}.s{s}.j{j}", item.name);
                let n = self.b.node(
                    &name,
                    Some(json!({"name": name, "series": item.name, "point": s * c + j})),
                    Some(parent_node),
                );
                let t = self.b.channel_space(n, "translation", 3, nf);
                let r = self.b.channel_space(n, "rotation", 4, nf);
                places.push((t, r));
                joints.push(n);
                parent_node = n;
            }
            let mut prev_root: Option<Quat> = None;
            let mut last_r: Vec<Quat> = vec![[0.0, 0.0, 0.0, 1.0]; c];
            // The first joint (in chain order) whose translation leaves f32, with its key.
            let mut overflow: Option<(usize, usize, f64)> = None;
            for (k, i) in self.frames.clone().enumerate() {
                let f = self.frame(item.node, item.output, i);
                for (j, p) in pts.iter_mut().enumerate() {
                    let q = 3 * (s * c + j);
                    *p = self.pos([f[q], f[q + 1], f[q + 2]]);
                }
                // The root's frame before it is aimed: at the first frame the anchor's frame,
                // then last frame's root turned as the anchor turned since.
                let start = match prev_root {
                    None => parent_world[k].r,
                    Some(prev) => {
                        let turn = mul(parent_world[k].r, conj(parent_world[k - 1].r));
                        normalise(mul(turn, prev))
                    }
                };
                transport_into(&pts, start, &mut rots);
                prev_root = Some(rots[0]);
                if k == 0 {
                    bind.clear();
                    bind.extend(rots.iter().copied().zip(pts.iter().copied()));
                }
                // Local transforms: each joint in its parent's frame (the anchor's for the root).
                for j in 0..c {
                    let up = if j == 0 {
                        parent_world[k]
                    } else {
                        Rigid {
                            r: rots[j - 1],
                            t: pts[j - 1],
                        }
                    };
                    let (mut lr, lt) = up.local(rots[j], pts[j]);
                    // Consecutive keys in one hemisphere, so linear interpolation takes the
                    // short way.
                    if k > 0 && (0..4).map(|m| lr[m] * last_r[j][m]).sum::<f64>() < 0.0 {
                        lr = lr.map(|v| -v);
                    }
                    last_r[j] = lr;
                    if k == 0 {
                        self.b.rest(joints[j], Some(lt), Some(lr), None);
                    }
                    if overflow.is_none_or(|(first, _, _)| j < first)
                        && let Some(v) = lt.into_iter().find(|v| !(*v as f32).is_finite())
                    {
                        overflow = Some((j, k, v));
                    }
                    let (tp, rp) = places[j];
                    put(&mut self.b.bin, tp + 12 * k, lt.map(|v| v as f32));
                    put(&mut self.b.bin, rp + 16 * k, lr.map(|v| v as f32));
                }
            }
            if let Some((j, k, v)) = overflow
                && self.b.overflow.is_none()
            {
                let name = self.b.nodes[joints[j]]["name"].as_str().unwrap_or("?").to_owned();
                self.b.overflow = Some((format!("the translation of `{name}`"), k, v));
            }
            // Inverse bind matrices: the inverse world transform of each joint at the first
            // baked frame, column-major.
            let mut ibm: Vec<f32> = Vec::with_capacity(16 * c);
            for &(r, p) in &bind {
                let inv = conj(r);
                let m = crate::character::rotation_matrix(inv);
                let t = rotate(inv, p).map(|v| -v);
                // Column-major: column c holds m[0][c], m[1][c], m[2][c].
                let [r0, r1, r2] = m;
                for ((a, b), c) in r0.iter().zip(&r1).zip(&r2) {
                    ibm.extend([*a as f32, *b as f32, *c as f32, 0.0]);
                }
                ibm.extend([t[0] as f32, t[1] as f32, t[2] as f32, 1.0]);
            }
            let acc = self.b.floats(&ibm, "MAT4", c, None);
            self.b.skins.push(json!({
                "name": tool_name(&format!("{}.s{s}", item.name)),
                "joints": joints,
                "skeleton": joints[0],
                "inverseBindMatrices": acc,
            }));
        }
        Ok(())
    }
}

/// A character's own glTF document with all its data in one buffer: the base of a bake
/// written into the character's file.
struct Base {
    doc: Value,
    bin: Vec<u8>,
    /// The clip read (its index in `animations`).
    anim: usize,
    /// The scene the character was read from.
    scene: usize,
}

fn load_base(ch: &Character) -> Result<Base, String> {
    let path = &ch.path;
    let shown = path.display();
    let bytes = heft_runtime::read_limited(path, heft_runtime::DATA_FILE_LIMIT)
        .map_err(|e| format!("cannot read {shown} again to write into it: {e}"))?;
    let (mut doc, blob): (Value, Option<Vec<u8>>) = if bytes.starts_with(b"glTF") {
        let glb = gltf::binary::Glb::from_slice(&bytes).map_err(|e| format!("{shown}: {e}"))?;
        (
            serde_json::from_slice(&glb.json).map_err(|e| format!("{shown}: {e}"))?,
            glb.bin.map(|b| b.into_owned()),
        )
    } else {
        (
            serde_json::from_slice(&bytes).map_err(|e| format!("{shown}: {e}"))?,
            None,
        )
    };
    let dir = path.parent().unwrap_or(std::path::Path::new("."));
    let read_uri = |uri: &str, what: &str| -> Result<Vec<u8>, String> {
        if let Some(rest) = uri.strip_prefix("data:") {
            let data = rest.split_once(',').map(|(_, d)| d).unwrap_or_default();
            base64::engine::general_purpose::STANDARD
                .decode(data)
                .map_err(|e| format!("{shown}: {what}: the data URI is not base64: {e}"))
        } else {
            std::fs::read(dir.join(uri)).map_err(|e| format!("{shown}: {what} `{uri}`: {e}"))
        }
    };
    // Every buffer into one, in order, 4-byte aligned; buffer views re-pointed.
    let mut bin: Vec<u8> = Vec::new();
    let mut starts = Vec::new();
    let buffers = doc
        .get("buffers")
        .and_then(Value::as_array)
        .cloned()
        .unwrap_or_default();
    let mut blob = blob;
    for (i, buf) in buffers.iter().enumerate() {
        while !bin.len().is_multiple_of(4) {
            bin.push(0);
        }
        starts.push(bin.len());
        let data = match buf["uri"].as_str() {
            Some(uri) => read_uri(uri, &format!("`buffers[{i}].uri`"))?,
            None => blob
                .take()
                .ok_or_else(|| format!("{shown}: `buffers[{i}]` has no data"))?,
        };
        bin.extend_from_slice(&data);
    }
    if let Some(views) = doc.get_mut("bufferViews").and_then(Value::as_array_mut) {
        for v in views {
            let b = v["buffer"].as_u64().unwrap_or(0) as usize;
            let start = *starts
                .get(b)
                .ok_or_else(|| format!("{shown}: a buffer view names buffer {b}"))?;
            let off = v["byteOffset"].as_u64().unwrap_or(0) as usize;
            v["buffer"] = json!(0);
            v["byteOffset"] = json!(start + off);
        }
    }
    // Images in files beside a .gltf go into the buffer, so that the one file holds everything.
    let mut next_view = doc.get("bufferViews").and_then(Value::as_array).map_or(0, Vec::len);
    let mut extra_views = Vec::new();
    if let Some(images) = doc.get_mut("images").and_then(Value::as_array_mut) {
        for (i, img) in images.iter_mut().enumerate() {
            let Some(uri) = img["uri"].as_str().map(str::to_owned) else {
                continue;
            };
            if uri.starts_with("data:") {
                continue;
            }
            let mime = match uri.rsplit('.').next().map(str::to_ascii_lowercase).as_deref() {
                Some("png") => "image/png",
                Some("jpg" | "jpeg") => "image/jpeg",
                Some("webp") => "image/webp",
                _ => {
                    return Err(format!(
                        "{shown}: `images[{i}].uri` `{uri}`: heft copies PNG, JPEG and WebP images into the bake"
                    ));
                }
            };
            let data = read_uri(&uri, &format!("`images[{i}].uri`"))?;
            while !bin.len().is_multiple_of(4) {
                bin.push(0);
            }
            extra_views.push(json!({"buffer": 0, "byteOffset": bin.len(), "byteLength": data.len()}));
            bin.extend_from_slice(&data);
            if let Some(o) = img.as_object_mut() {
                o.remove("uri");
            }
            img["mimeType"] = json!(mime);
            img["bufferView"] = json!(next_view);
            next_view += 1;
        }
    }
    if !extra_views.is_empty() {
        match doc.get_mut("bufferViews").and_then(Value::as_array_mut) {
            Some(v) => v.extend(extra_views),
            None => doc["bufferViews"] = json!(extra_views),
        }
    }
    let scene = doc.get("scene").and_then(Value::as_u64).unwrap_or(0) as usize;
    Ok(Base {
        doc,
        bin,
        anim: ch.clip.1,
        scene,
    })
}

/// A file to write: its name, and its bytes in consecutive parts (so that the large binary
/// buffer is never copied into place behind the header).
pub type FileParts = (String, Vec<Vec<u8>>);

/// The files of one bake; a separate-buffer .gltf adds its .bin file.
pub fn bake_files(plan: &Plan, eval: &Evaluation, bake: &PlannedBake) -> Result<Vec<FileParts>, String> {
    let tl = plan.timeline;
    let frames = baked_frames(plan, bake);
    if frames.is_empty() {
        return Err("the bake's frame range holds no frame of the run".to_owned());
    }
    let base_ch: Option<Arc<Character>> = bake.base.and_then(|i| character_of(plan, i));
    let (y_up, times, base) = match &base_ch {
        None => {
            let t0 = tl.time(frames.start);
            let times: Vec<f32> = frames.clone().map(|i| (tl.time(i) - t0) as f32).collect();
            (bake.y_up_source, times, None)
        }
        Some(ch) => {
            // Keys at the clip's own times, in the file's own axes.
            let times: Vec<f32> = frames.clone().map(|i| ch.clip_times[i] as f32).collect();
            if let Some(k) = times.windows(2).position(|w| w[1] <= w[0]) {
                return Err(format!(
                    "a bake into {} keys its frames at the clip's times, which must increase, but frames {} and {} \
                     read the clip at {} s and {} s (held or looped): bake a range of frames inside the clip with `frames = A..B`",
                    ch.path.display(),
                    tl.frame_number(frames.start + k),
                    tl.frame_number(frames.start + k + 1),
                    times[k],
                    times[k + 1]
                ));
            }
            (ch.axes == Axes::ZUp, times, Some(load_base(ch)?))
        }
    };
    let mut builder = Builder {
        bin: Vec::new(),
        views: Vec::new(),
        accessors: Vec::new(),
        nodes: Vec::new(),
        roots: Vec::new(),
        samplers: Vec::new(),
        channels: Vec::new(),
        skins: Vec::new(),
        time_accessor: 0,
        names: BTreeSet::new(),
        overflow: None,
    };
    if let Some(base) = &base {
        let list = |key: &str| base.doc.get(key).and_then(Value::as_array).cloned().unwrap_or_default();
        builder.bin = base.bin.clone();
        builder.views = list("bufferViews");
        builder.accessors = list("accessors");
        builder.nodes = list("nodes");
        builder.skins = list("skins");
        builder.roots = base.doc["scenes"][base.scene]["nodes"]
            .as_array()
            .map(|a| a.iter().filter_map(|v| v.as_u64().map(|i| i as usize)).collect())
            .unwrap_or_default();
        let anim = &base.doc["animations"][base.anim];
        builder.samplers = anim["samplers"].as_array().cloned().unwrap_or_default();
        builder.channels = anim["channels"].as_array().cloned().unwrap_or_default();
        builder.names = builder
            .nodes
            .iter()
            .filter_map(|n| n["name"].as_str().map(str::to_owned))
            .collect();
    }
    let mut bk = Bake {
        plan,
        eval,
        frames: frames.clone(),
        y_up,
        b: builder,
        series_nodes: BTreeMap::new(),
        characters: BTreeMap::new(),
        base: bake.base,
    };
    // Room for every channel, so that the buffer is never moved (a move copies it whole and
    // touches twice its size): a translation and a rotation per point (a joint or a node) per
    // frame, an inverse bind matrix per joint, the times, a quarter more for a character's own
    // joints and the anchors' scales and the alignment, and the base file's own data.
    // Reserving touches no memory: only what is written is.
    let per_frame: usize = bake.items.iter().map(|i| 7 * i.shape.points.max(1)).sum();
    let matrices: usize = bake.items.iter().map(|i| 16 * i.shape.points).sum();
    let floats = per_frame * frames.len() + matrices + times.len();
    bk.b.bin.reserve(4 * (floats + floats / 4) + (1 << 20));
    let (tmin, tmax) = (
        times.first().copied().unwrap_or(0.0),
        times.last().copied().unwrap_or(0.0),
    );
    bk.b.time_accessor =
        bk.b.floats(&times, "SCALAR", times.len(), Some((vec![tmin], vec![tmax])));
    for item in &bake.items {
        match item.shape.kind {
            PortKind::Vec3 | PortKind::Transform => {
                bk.series_node(item.node, item.output);
            }
            PortKind::Points => match item.chain {
                None => {
                    for p in 0..item.shape.points {
                        let name = format!("{}.p{p}", item.name);
                        let n = bk.b.node(
                            &name,
                            Some(json!({"name": name, "series": item.name, "point": p})),
                            None,
                        );
                        let t: Vec<[f64; 3]> = frames
                            .clone()
                            .map(|i| {
                                let f = bk.frame(item.node, item.output, i);
                                bk.pos([f[3 * p], f[3 * p + 1], f[3 * p + 2]])
                            })
                            .collect();
                        bk.b.animate_t(n, &t);
                    }
                }
                Some(c) => bk.chains(item, c)?,
            },
            PortKind::Scalar | PortKind::Flag => return Err(format!("`{}` cannot be baked", item.name)),
        }
    }
    if let Some((what, key, value)) = &bk.b.overflow {
        return Err(format!(
            "{what} at frame {} is {value:e}, beyond what glTF's 32-bit floats hold (3.4e38): check the data \
             that drives it",
            tl.frame_number(frames.start + key)
        ));
    }
    let stem = std::path::Path::new(&bake.file)
        .file_stem()
        .and_then(|s| s.to_str())
        .unwrap_or("bake")
        .to_owned();
    let b = bk.b;
    let first_frame = tl.frame_number(frames.start);
    let rate = format!("{}/{}", tl.rate_num, tl.rate_den);
    let heft_extras = json!({
        "first_frame": first_frame,
        "frame_count": frames.len(),
        "frame_rate": rate,
        "fps": tl.fps(),
        "axes": if y_up { "y_up" } else { "z_up" },
        "time_accessor": b.time_accessor,
        "clip": base.as_ref().map_or(0, |b| b.anim),
    });
    let mut doc = match base {
        None => {
            let mut doc = json!({
                "asset": {
                    "version": "2.0",
                    "generator": concat!("heft ", env!("CARGO_PKG_VERSION")),
                },
                "scene": 0,
                "scenes": [{"name": tool_name(&stem), "nodes": b.roots}],
                "nodes": b.nodes,
                "animations": [{"name": tool_name(&stem), "channels": b.channels, "samplers": b.samplers}],
            });
            if !b.skins.is_empty() {
                doc["skins"] = json!(b.skins);
            }
            doc
        }
        Some(base) => {
            let mut doc = base.doc;
            doc["scenes"][base.scene]["nodes"] = json!(b.roots);
            doc["nodes"] = json!(b.nodes);
            doc["animations"][base.anim]["channels"] = json!(b.channels);
            doc["animations"][base.anim]["samplers"] = json!(b.samplers);
            if !b.skins.is_empty() {
                doc["skins"] = json!(b.skins);
            }
            doc
        }
    };
    doc["asset"]["extras"]["heft"] = heft_extras;
    doc["accessors"] = json!(b.accessors);
    doc["bufferViews"] = json!(b.views);
    doc["buffers"] = json!([{"byteLength": b.bin.len()}]);
    match bake.format {
        BakeFormat::Glb => {
            let mut json_bytes = serde_json::to_vec(&doc).map_err(|e| e.to_string())?;
            while !json_bytes.len().is_multiple_of(4) {
                json_bytes.push(b' ');
            }
            let mut bin = b.bin;
            while !bin.len().is_multiple_of(4) {
                bin.push(0);
            }
            let total = 12 + 8 + json_bytes.len() + 8 + bin.len();
            let total = u32::try_from(total).map_err(|_| "the bake is larger than a .glb file can hold (4 GiB)")?;
            let mut head = Vec::with_capacity(12 + 8 + json_bytes.len() + 8);
            head.extend_from_slice(&0x4654_6C67u32.to_le_bytes()); // "glTF"
            head.extend_from_slice(&2u32.to_le_bytes());
            head.extend_from_slice(&total.to_le_bytes());
            head.extend_from_slice(&(json_bytes.len() as u32).to_le_bytes());
            head.extend_from_slice(&0x4E4F_534Au32.to_le_bytes()); // "JSON"
            head.extend_from_slice(&json_bytes);
            head.extend_from_slice(&(bin.len() as u32).to_le_bytes());
            head.extend_from_slice(&0x004E_4942u32.to_le_bytes()); // "BIN\0"
            Ok(vec![(bake.file.clone(), vec![head, bin])])
        }
        BakeFormat::GltfEmbedded => {
            let data = base64::engine::general_purpose::STANDARD.encode(&b.bin);
            doc["buffers"][0]["uri"] = json!(format!("data:application/octet-stream;base64,{data}"));
            Ok(vec![(
                bake.file.clone(),
                vec![serde_json::to_vec_pretty(&doc).map_err(|e| e.to_string())?],
            )])
        }
        BakeFormat::GltfSeparate => {
            let bin_name = std::path::Path::new(&bake.file).with_extension("bin");
            let bin_file = bin_name.to_string_lossy().into_owned();
            let uri = bin_name
                .file_name()
                .map(|n| n.to_string_lossy().into_owned())
                .unwrap_or_default();
            doc["buffers"][0]["uri"] = json!(uri);
            Ok(vec![
                (
                    bake.file.clone(),
                    vec![serde_json::to_vec_pretty(&doc).map_err(|e| e.to_string())?],
                ),
                (bin_file, vec![b.bin]),
            ])
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shortest_arc_takes_a_to_b() {
        for d in [
            [1.0, 0.0, 0.0],
            [0.0, -1.0, 0.0],
            [0.0, 0.0, 1.0],
            [0.6, 0.0, -0.8],
            [0.0, 1.0, 0.0],
        ] {
            let r = rotate(arc(Y, d), Y);
            for k in 0..3 {
                assert!((r[k] - d[k]).abs() < 1e-12, "{d:?} -> {r:?}");
            }
        }
    }

    /// A straight chain hanging down (-Z) gets one frame for every joint, whatever the start,
    /// and its twist is the start's: parallel transport adds none along a straight line.
    #[test]
    fn transport_adds_no_twist_along_a_straight_line() {
        let pts: Vec<[f64; 3]> = (0..5).map(|j| [0.0, 0.0, -0.1 * f64::from(j)]).collect();
        let h = 0.3f64;
        let start = [0.0, 0.0, h.sin(), h.cos()]; // turned about Z
        let rots = transport(&pts, start);
        for q in &rots {
            let y = rotate(*q, Y);
            assert!((y[2] + 1.0).abs() < 1e-12, "+Y aims down the chain: {y:?}");
            let d: f64 = (0..4).map(|k| q[k] * rots[0][k]).sum();
            assert!((d.abs() - 1.0).abs() < 1e-12, "same frame on every joint");
        }
        // The joint's X axis is the start's X axis turned down about the axis normal to both.
        let x0 = rotate(start, [1.0, 0.0, 0.0]);
        let x = rotate(rots[0], [1.0, 0.0, 0.0]);
        let along = x0[0] * x[0] + x0[1] * x[1] + x0[2] * x[2];
        assert!(along > 0.5, "twist kept from the start: {x0:?} vs {x:?}");
    }

    /// A chain bent into a planar arc: transport keeps the plane's normal fixed in every
    /// joint's frame (the binormal of a planar curve is constant, Bishop 1975).
    #[test]
    fn transport_on_a_planar_curve_keeps_the_normal() {
        let pts: Vec<[f64; 3]> = (0..9)
            .map(|j| {
                let a = 0.3 * f64::from(j);
                [a.sin(), 0.0, -a.cos()]
            })
            .collect();
        let start = [0.1, 0.2, 0.3, 0.9];
        let start = normalise(start);
        let rots = transport(&pts, start);
        let normal = |q: Quat| rotate(conj(q), [0.0, 1.0, 0.0]);
        let n0 = normal(rots[0]);
        for q in &rots {
            let n = normal(*q);
            for k in 0..3 {
                assert!((n[k] - n0[k]).abs() < 1e-12, "{n:?} vs {n0:?}");
            }
        }
    }

    #[test]
    fn tool_names() {
        assert_eq!(tool_name("odile.head"), "odile_head");
        assert_eq!(tool_name("braid.positions.s0.j3"), "braid_positions_s0_j3");
    }
}

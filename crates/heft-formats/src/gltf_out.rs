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
use serde::Serialize;
use serde_json::{Value, json};

use heft_runtime::blocks::{BakeAnchor, BakeFormat, BakeItem, PlannedBake};
use heft_runtime::check::Plan;
use heft_runtime::eval::{Evaluation, Frames};

use std::sync::Arc;

use crate::character::{Affine, Axes, Character};
use crate::commit::{StagedFile, Transaction};
use crate::motion::character_of;
use crate::output::WriteError;
use crate::quat::{Quat, conj, mul, normalise, rotate};
use std::io::Write;

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

/// An entry of one of the document's lists: as read from a character's own file, or made by
/// the bake. The bake's own are typed, not `Value`s: a bake of thousands of joints holds
/// hundreds of thousands of them, and a `Value` tree takes about twenty times its text.
#[derive(Debug, Clone, Serialize)]
#[serde(untagged)]
enum Entry<T> {
    Read(Value),
    Made(T),
}

#[derive(Debug, Clone, Serialize)]
struct View {
    buffer: u32,
    #[serde(rename = "byteOffset")]
    byte_offset: usize,
    #[serde(rename = "byteLength")]
    byte_length: usize,
}

#[derive(Debug, Clone, Serialize)]
struct Accessor {
    #[serde(rename = "bufferView")]
    view: usize,
    #[serde(rename = "componentType")]
    component: u32,
    count: usize,
    #[serde(rename = "type")]
    ty: &'static str,
    #[serde(skip_serializing_if = "Option::is_none")]
    min: Option<Vec<f32>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    max: Option<Vec<f32>>,
}

#[derive(Debug, Clone, Serialize)]
struct Sampler {
    input: usize,
    output: usize,
    interpolation: &'static str,
}

#[derive(Debug, Clone, Serialize)]
struct Target {
    node: usize,
    path: &'static str,
}

#[derive(Debug, Clone, Serialize)]
struct Channel {
    sampler: usize,
    target: Target,
}

#[derive(Debug, Clone, Serialize)]
struct Skin {
    name: String,
    joints: Vec<usize>,
    skeleton: usize,
    #[serde(rename = "inverseBindMatrices")]
    matrices: usize,
}

/// heft's own names for a node, in its `extras.heft`.
#[derive(Debug, Clone, Default, Serialize)]
struct Names {
    name: String,
    #[serde(skip_serializing_if = "Option::is_none")]
    series: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    point: Option<usize>,
    #[serde(skip_serializing_if = "Option::is_none")]
    file_name: Option<String>,
}

impl Names {
    fn of(name: &str) -> Names {
        Names {
            name: name.to_owned(),
            ..Names::default()
        }
    }
    fn series(mut self, series: &str) -> Names {
        self.series = Some(series.to_owned());
        self
    }
    fn point(mut self, point: usize) -> Names {
        self.point = Some(point);
        self
    }
}

#[derive(Debug, Clone, Serialize)]
struct Extras {
    heft: Names,
}

#[derive(Debug, Clone, Serialize)]
struct Node {
    name: String,
    #[serde(skip_serializing_if = "Vec::is_empty")]
    children: Vec<usize>,
    #[serde(skip_serializing_if = "Option::is_none")]
    translation: Option<[f32; 3]>,
    #[serde(skip_serializing_if = "Option::is_none")]
    rotation: Option<[f32; 4]>,
    #[serde(skip_serializing_if = "Option::is_none")]
    scale: Option<[f32; 3]>,
    #[serde(skip_serializing_if = "Option::is_none")]
    extras: Option<Extras>,
}

/// A bake's whole document: what it keeps of a character's own file (`rest`), and the lists it
/// made or extended, typed.
#[derive(Debug, Serialize)]
struct Document<'a> {
    #[serde(flatten)]
    rest: serde_json::Map<String, Value>,
    nodes: &'a [Entry<Node>],
    accessors: &'a [Entry<Accessor>],
    #[serde(rename = "bufferViews")]
    views: &'a [Entry<View>],
    #[serde(skip_serializing_if = "<[Entry<Skin>]>::is_empty")]
    skins: &'a [Entry<Skin>],
    animations: Vec<Animation<'a>>,
    buffers: Vec<Value>,
}

/// An animation of the document: one read from a character's own file, or the bake's (the
/// clip it was read from, with the bake's channels added to its own).
#[derive(Debug, Serialize)]
#[serde(untagged)]
enum Animation<'a> {
    Read(Value),
    Made {
        #[serde(flatten)]
        rest: serde_json::Map<String, Value>,
        channels: &'a [Entry<Channel>],
        samplers: &'a [Entry<Sampler>],
    },
}

struct Builder {
    /// Bytes known when the bake is laid out (the base file's own data, the times, whole series
    /// and a character's own channels), at their byte offsets in the buffer; the points' channels
    /// are filled window by window into the places laid out for them.
    pieces: Vec<(usize, Vec<u8>)>,
    /// The buffer's length so far.
    len: usize,
    views: Vec<Entry<View>>,
    accessors: Vec<Entry<Accessor>>,
    nodes: Vec<Entry<Node>>,
    roots: Vec<usize>,
    samplers: Vec<Entry<Sampler>>,
    channels: Vec<Entry<Channel>>,
    skins: Vec<Entry<Skin>>,
    time_accessor: usize,
    names: BTreeSet<String>,
    /// The first value that did not fit a 32-bit float: (what, key, value).
    overflow: Option<(String, usize, f64)>,
}

impl Builder {
    fn floats(&mut self, data: &[f32], ty: &'static str, count: usize, min_max: Option<(Vec<f32>, Vec<f32>)>) -> usize {
        self.floats_of(data.iter().copied(), data.len(), ty, count, min_max)
    }

    /// Notes the first value of `what` that does not fit a 32-bit float (glTF's component
    /// type): `values[k]` of a channel of `width` values per key.
    fn fits(&mut self, what: &str, node: usize, values: impl Iterator<Item = f64>, width: usize) {
        if self.overflow.is_some() {
            return;
        }
        if let Some((k, v)) = values.enumerate().find(|(_, v)| !(*v as f32).is_finite()) {
            let name = self.node_name(node);
            self.overflow = Some((format!("the {what} of `{name}`"), k / width.max(1), v));
        }
    }

    /// `len` floats from `data` (none: room left zero for a later fill) into the buffer,
    /// little-endian, 4-byte aligned, as one accessor.
    fn floats_of(
        &mut self,
        data: impl Iterator<Item = f32>,
        len: usize,
        ty: &'static str,
        count: usize,
        min_max: Option<(Vec<f32>, Vec<f32>)>,
    ) -> usize {
        let offset = self.len.next_multiple_of(4);
        let mut bytes = Vec::new();
        for v in data.take(len) {
            bytes.extend_from_slice(&v.to_le_bytes());
        }
        if !bytes.is_empty() {
            // Never short: a short source is padded with zeros, as the accessor's count says.
            bytes.resize(4 * len, 0);
            self.pieces.push((offset, bytes));
        }
        self.len = offset + 4 * len;
        self.views.push(Entry::Made(View {
            buffer: 0,
            byte_offset: offset,
            byte_length: len * 4,
        }));
        let (min, max) = min_max.unzip();
        self.accessors.push(Entry::Made(Accessor {
            view: self.views.len() - 1,
            component: 5126,
            count,
            ty,
            min,
            max,
        }));
        self.accessors.len() - 1
    }

    fn channel_of(
        &mut self,
        node: usize,
        path: &'static str,
        data: impl Iterator<Item = f32>,
        width: usize,
        count: usize,
    ) {
        let ty = if width == 4 { "VEC4" } else { "VEC3" };
        let output = self.floats_of(data, width * count, ty, count, None);
        self.samplers.push(Entry::Made(Sampler {
            input: self.time_accessor,
            output,
            interpolation: "LINEAR",
        }));
        self.channels.push(Entry::Made(Channel {
            sampler: self.samplers.len() - 1,
            target: Target { node, path },
        }));
    }

    /// Room in the buffer for a channel of `count` keys of `width` floats on `node`'s `path`,
    /// as one accessor (with its sampler and channel), zero until filled; returns its byte
    /// offset, for the windows to fill.
    fn channel_space(&mut self, node: usize, path: &'static str, width: usize, count: usize) -> usize {
        let at = self.len.next_multiple_of(4);
        self.channel_of(node, path, std::iter::empty(), width, count);
        at
    }

    /// A node's name in the document.
    fn node_name(&self, node: usize) -> String {
        match &self.nodes[node] {
            Entry::Made(n) => n.name.clone(),
            Entry::Read(v) => v["name"].as_str().unwrap_or("?").to_owned(),
        }
    }

    /// A node with a unique tool-safe name made from `name`, heft's extras and a parent.
    fn node(&mut self, name: &str, extras: Option<Names>, parent: Option<usize>) -> usize {
        let base = tool_name(name);
        let mut unique = base.clone();
        let mut k = 2;
        while !self.names.insert(unique.clone()) {
            unique = format!("{base}_{k}");
            k += 1;
        }
        self.nodes.push(Entry::Made(Node {
            name: unique,
            children: Vec::new(),
            translation: None,
            rotation: None,
            scale: None,
            extras: extras.map(|heft| Extras { heft }),
        }));
        let i = self.nodes.len() - 1;
        match parent.map(|p| &mut self.nodes[p]) {
            Some(Entry::Made(n)) => n.children.push(i),
            Some(Entry::Read(v)) => {
                let children = v.as_object_mut().map(|o| o.entry("children").or_insert(json!([])));
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
        let t = t.map(|t| t.map(|c| c as f32));
        let r = r.map(|r| normalise(r).map(|c| c as f32));
        let s = s.map(|s| s.map(|c| c as f32));
        match &mut self.nodes[node] {
            Entry::Made(n) => {
                n.translation = t.or(n.translation);
                n.rotation = r.or(n.rotation);
                n.scale = s.or(n.scale);
            }
            Entry::Read(v) => {
                if let Some(t) = t {
                    v["translation"] = json!(t);
                }
                if let Some(r) = r {
                    v["rotation"] = json!(r);
                }
                if let Some(s) = s {
                    v["scale"] = json!(s);
                }
            }
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

/// A bake being laid out: its nodes, accessors and the data known before the windows.
struct Bake<'a> {
    plan: &'a Plan,
    src: &'a Frames<'a>,
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
        self.axes().pos(p)
    }
    fn rot(&self, q: Quat) -> Quat {
        self.axes().rot(q)
    }
    fn axes(&self) -> BakeAxes {
        BakeAxes { y_up: self.y_up }
    }
    /// The rigid transform of a transform (or vec3) series at frame `i`, in heft's world.
    fn rigid(&self, node: usize, output: usize, i: usize) -> Rigid {
        let w = self.plan.nodes[node].outputs[output].width();
        rigid_of(self.src.frame(node, output, i, w))
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
        let n = self.b.node(&name, Some(Names::of(&name).series(&name)), None);
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
            Some(Names {
                file_name: Some(cn.name.clone()),
                ..Names::of(&heft_name).series(&heft_name)
            }),
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

    /// Lays out one points item as chains of `c` joints: the nodes, their channels and each
    /// strand's skin, whose data the windows fill ([`ChainFill::window`]).
    fn chains(&mut self, item: &BakeItem, c: usize) -> Result<ChainFill, String> {
        let strands = item.shape.points / c;
        // The parent of every chain, and where its world transform per frame comes from.
        let (parent, anchor) = match &item.anchor {
            BakeAnchor::Series { node, output } => {
                let (node, output) = (*node, *output);
                let width = self.plan.nodes[node].outputs[output].width();
                (self.series_node(node, output), Anchor::Series { node, output, width })
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
                let bone = self.character_node(node, &ch, joint);
                // A node under the bone that cancels its scale: its world is the bone's rotation
                // and position only.
                let name = format!("{}.anchor", item.name);
                let rigid = self.b.node(&name, Some(Names::of(&name)), Some(bone));
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
                (rigid, Anchor::Joint { ch, joint, turn })
            }
            BakeAnchor::None => {
                let name = format!("{}.strands", item.name);
                (self.b.node(&name, Some(Names::of(&name)), None), Anchor::None)
            }
        };
        let nf = self.frames.len();
        let mut fill = ChainFill {
            node: item.node,
            output: item.output,
            c,
            strands,
            anchor,
            joints: Vec::with_capacity(strands * c),
            places: Vec::with_capacity(strands * c),
            matrices: Vec::with_capacity(strands),
            prev_root: vec![None; strands],
            last_r: vec![[0.0, 0.0, 0.0, 1.0]; strands * c],
            prev_parent: None,
        };
        for s in 0..strands {
            // The strand's joints, then its channels (a translation and a rotation per joint),
            // then its inverse bind matrices: their places depend only on the frame count.
            let mut parent_node = parent;
            let mut joints = Vec::with_capacity(c);
            for j in 0..c {
                let name = format!("{}.s{s}.j{j}", item.name);
                let n = self.b.node(
                    &name,
                    Some(Names::of(&name).series(&item.name).point(s * c + j)),
                    Some(parent_node),
                );
                let t = self.b.channel_space(n, "translation", 3, nf);
                let r = self.b.channel_space(n, "rotation", 4, nf);
                fill.places.push((t, r));
                joints.push(n);
                parent_node = n;
            }
            let at = self.b.len.next_multiple_of(4);
            let acc = self.b.floats_of(std::iter::empty(), 16 * c, "MAT4", c, None);
            fill.matrices.push(at);
            self.b.skins.push(Entry::Made(Skin {
                name: tool_name(&format!("{}.s{s}", item.name)),
                skeleton: joints[0],
                joints: joints.clone(),
                matrices: acc,
            }));
            fill.joints.extend(joints);
        }
        Ok(fill)
    }
}

/// Where a chain's parent frame comes from, frame by frame.
enum Anchor {
    /// A still parent at the origin.
    None,
    /// A transform series of the plan (evaluated before the windows, so whole).
    Series { node: usize, output: usize, width: usize },
    /// A joint of a glTF character: its world transform, turned from the file's axes.
    Joint {
        ch: Arc<Character>,
        joint: usize,
        turn: Quat,
    },
}

/// The channels of one points item baked as chains, filled window by window: where each lies,
/// and what each strand carries from one frame to the next (the root's frame and each joint's
/// last rotation, so frames neither flip nor jump between windows).
struct ChainFill {
    node: usize,
    output: usize,
    c: usize,
    strands: usize,
    anchor: Anchor,
    /// The bake's node of every joint, strand-major.
    joints: Vec<usize>,
    /// Byte offsets of every joint's translation and rotation channels, strand-major.
    places: Vec<(usize, usize)>,
    /// Byte offset of each strand's inverse bind matrices.
    matrices: Vec<usize>,
    prev_root: Vec<Option<Quat>>,
    last_r: Vec<Quat>,
    /// The parent's frame at the last frame filled.
    prev_parent: Option<Rigid>,
}

/// The bake's axes: positions and rotations from heft's Z-up world into them.
#[derive(Debug, Clone, Copy)]
struct BakeAxes {
    y_up: bool,
}

impl BakeAxes {
    fn pos(self, p: [f64; 3]) -> [f64; 3] {
        if self.y_up { p } else { [p[0], p[2], -p[1]] }
    }
    fn rot(self, q: Quat) -> Quat {
        if self.y_up { q } else { [q[0], q[2], -q[1], q[3]] }
    }
}

impl ChainFill {
    /// The chain's parent frame at timeline frame `i`, in the bake's axes.
    fn parent_at(&self, src: &Frames<'_>, axes: BakeAxes, i: usize) -> Rigid {
        match &self.anchor {
            Anchor::None => Rigid::IDENTITY,
            Anchor::Series { node, output, width } => {
                let w = rigid_of(src.frame(*node, *output, i, *width));
                Rigid {
                    r: axes.rot(w.r),
                    t: axes.pos(w.t),
                }
            }
            Anchor::Joint { ch, joint, turn } => {
                let w = &ch.world[*joint][i];
                let q = w.rotation_scale().map_or([0.0, 0.0, 0.0, 1.0], |(q, _)| q);
                Rigid {
                    r: normalise(mul(*turn, q)),
                    t: rotate(*turn, w.t),
                }
            }
        }
    }
}

/// The rigid transform of a transform (or vec3) frame, in heft's world.
fn rigid_of(f: &[f64]) -> Rigid {
    if f.len() < 3 {
        return Rigid::IDENTITY;
    }
    let t = [f[0], f[1], f[2]];
    let r = if f.len() >= 7 {
        normalise([f[3], f[4], f[5], f[6]])
    } else {
        [0.0, 0.0, 0.0, 1.0]
    };
    Rigid { r, t }
}

impl ChainFill {
    /// Fills timeline frames `range` (inside the baked frames `baked`): each joint's local
    /// translation and rotation keys, and at the first baked frame the rest pose (into `b`'s
    /// nodes) and each strand's inverse bind matrices, written into `store` (the buffer from
    /// byte `base`) a strand at a time.
    /// Stops at the first translation that does not fit a 32-bit float: `Ok(Some((joint node,
    /// key, value)))`.
    #[allow(clippy::too_many_arguments)]
    fn window(
        &mut self,
        src: &Frames<'_>,
        axes: BakeAxes,
        baked: &std::ops::Range<usize>,
        range: std::ops::Range<usize>,
        width: usize,
        b: &mut Builder,
        store: &mut BinStore,
        base: usize,
    ) -> Result<Option<(usize, usize, f64)>, String> {
        let c = self.c;
        let k0 = range.start - baked.start;
        let nk = range.len();
        let parents: Vec<Rigid> = range.clone().map(|i| self.parent_at(src, axes, i)).collect();
        let mut pts = vec![[0.0; 3]; c];
        let mut rots = Vec::with_capacity(c);
        let mut t_keys: Vec<Vec<u8>> = vec![Vec::new(); c];
        let mut r_keys: Vec<Vec<u8>> = vec![Vec::new(); c];
        for s in 0..self.strands {
            for (t, r) in t_keys.iter_mut().zip(&mut r_keys) {
                t.clear();
                t.reserve(12 * nk);
                r.clear();
                r.reserve(16 * nk);
            }
            for (kk, i) in range.clone().enumerate() {
                let k = k0 + kk;
                let f = src.frame(self.node, self.output, i, width);
                for (j, p) in pts.iter_mut().enumerate() {
                    let q = 3 * (s * c + j);
                    *p = axes.pos([f[q], f[q + 1], f[q + 2]]);
                }
                // The root's frame before it is aimed: at the first frame the anchor's frame,
                // then last frame's root turned as the anchor turned since.
                let start = match self.prev_root[s] {
                    None => parents[kk].r,
                    Some(prev) => {
                        let before = if kk == 0 {
                            self.prev_parent.unwrap_or(parents[kk])
                        } else {
                            parents[kk - 1]
                        };
                        let turn = mul(parents[kk].r, conj(before.r));
                        normalise(mul(turn, prev))
                    }
                };
                transport_into(&pts, start, &mut rots);
                self.prev_root[s] = Some(rots[0]);
                if k == 0 {
                    // Inverse bind matrices: the inverse world transform of each joint at the
                    // first baked frame, column-major.
                    let mut ibm: Vec<u8> = Vec::with_capacity(64 * c);
                    for (&r, &p) in rots.iter().zip(&pts) {
                        let inv = conj(r);
                        let m = crate::character::rotation_matrix(inv);
                        let t = rotate(inv, p).map(|v| -v);
                        // Column-major: column c holds m[0][c], m[1][c], m[2][c].
                        let [r0, r1, r2] = m;
                        for ((a, b), c) in r0.iter().zip(&r1).zip(&r2) {
                            for v in [*a as f32, *b as f32, *c as f32, 0.0] {
                                ibm.extend_from_slice(&v.to_le_bytes());
                            }
                        }
                        for v in [t[0] as f32, t[1] as f32, t[2] as f32, 1.0] {
                            ibm.extend_from_slice(&v.to_le_bytes());
                        }
                    }
                    store.write_at(base + self.matrices[s], &ibm)?;
                }
                // Local transforms: each joint in its parent's frame (the anchor's for the root).
                for j in 0..c {
                    let up = if j == 0 {
                        parents[kk]
                    } else {
                        Rigid {
                            r: rots[j - 1],
                            t: pts[j - 1],
                        }
                    };
                    let (mut lr, lt) = up.local(rots[j], pts[j]);
                    let last = &mut self.last_r[s * c + j];
                    // Consecutive keys in one hemisphere, so linear interpolation takes the
                    // short way.
                    if k > 0 && (0..4).map(|m| lr[m] * last[m]).sum::<f64>() < 0.0 {
                        lr = lr.map(|v| -v);
                    }
                    *last = lr;
                    let joint = self.joints[s * c + j];
                    if k == 0 {
                        b.rest(joint, Some(lt), Some(lr), None);
                    }
                    if let Some(v) = lt.into_iter().find(|v| !(*v as f32).is_finite()) {
                        return Ok(Some((joint, k, v)));
                    }
                    for v in lt {
                        t_keys[j].extend_from_slice(&(v as f32).to_le_bytes());
                    }
                    for v in lr {
                        r_keys[j].extend_from_slice(&(v as f32).to_le_bytes());
                    }
                }
            }
            for j in 0..c {
                let (tp, rp) = self.places[s * c + j];
                store.write_at(base + tp + 12 * k0, &t_keys[j])?;
                store.write_at(base + rp + 16 * k0, &r_keys[j])?;
            }
        }
        self.prev_parent = parents.last().copied();
        Ok(None)
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

/// Where a bake's binary buffer is kept while it is filled.
#[derive(Debug)]
pub enum BinStore {
    /// In memory (a whole evaluation's bake, for callers that want the bytes).
    Memory(Vec<u8>),
    /// A staged file in the output folder, filled at known offsets window by window, so that a
    /// long shot's bake never sits in memory: the separate-buffer `.bin` itself, or a scratch
    /// file that the `.glb` or embedded `.gltf` is written from at the end.
    File(StagedFile),
}

impl BinStore {
    fn write_at(&mut self, at: usize, bytes: &[u8]) -> Result<(), String> {
        match self {
            BinStore::Memory(v) => {
                let end = at + bytes.len();
                if v.len() < end {
                    v.resize(end, 0);
                }
                v[at..end].copy_from_slice(bytes);
                Ok(())
            }
            BinStore::File(f) => f
                .write_at(at as u64, bytes)
                .map_err(|e| format!("cannot write the bake's buffer: {e}")),
        }
    }
    fn set_len(&mut self, len: usize) -> Result<(), String> {
        match self {
            BinStore::Memory(v) => {
                v.resize(len, 0);
                Ok(())
            }
            BinStore::File(f) => f
                .set_len(len as u64)
                .map_err(|e| format!("cannot make room for the bake's buffer: {e}")),
        }
    }
}

/// What a bake fills window by window.
enum Fill {
    /// A points item baked as one node per point: each point's translation channel (its
    /// node, its byte offset).
    Points {
        node: usize,
        output: usize,
        width: usize,
        points: Vec<(usize, usize)>,
    },
    /// A points item baked as chains.
    Chains { fill: Box<ChainFill>, width: usize },
}

/// One bake written window by window: laid out (every node, accessor and channel, which
/// depend only on the frame count) when opened, its points' channels filled as the windows
/// come, and its document written when finished. Series, anchors and characters come from
/// nodes evaluated before the windows (see `heft_runtime::eval::Schedule`) and are written
/// when it opens.
pub struct BakeWriter<'p> {
    plan: &'p Plan,
    bake: &'p PlannedBake,
    frames: std::ops::Range<usize>,
    y_up: bool,
    b: Builder,
    fills: Vec<Fill>,
    store: BinStore,
    /// Where the buffer starts in `store`: for a .glb in a file, after the room kept for its
    /// header, its document and its buffer's chunk header, so the one file becomes the .glb.
    at: usize,
    /// The room kept for a .glb's document (0 when the document is written apart).
    room: usize,
    /// The character's own document the bake is written into: (document, clip, scene).
    base: Option<(Value, usize, usize)>,
}

impl std::fmt::Debug for BakeWriter<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("BakeWriter")
            .field("file", &self.bake.file)
            .field("bytes", &self.b.len)
            .finish_non_exhaustive()
    }
}

/// The largest buffer a `.glb` holds with a document of `json` bytes: its lengths are 32-bit
/// (glTF 2.0, section 4.4.3).
fn glb_fits(json: usize, bin: usize) -> bool {
    u32::try_from(12 + 8 + json.next_multiple_of(4) + 8 + bin.next_multiple_of(4)).is_ok()
}

impl<'p> BakeWriter<'p> {
    /// Lays out `bake`, writing what is known before the windows (from `src`: every node
    /// evaluated before them, whole) into `store`.
    pub fn open(plan: &'p Plan, bake: &'p PlannedBake, src: &Frames<'_>, store: BinStore) -> Result<Self, String> {
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
            pieces: Vec::new(),
            len: 0,
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
        let mut kept_base = None;
        if let Some(mut base) = base {
            fn list<T>(doc: &Value, key: &str) -> Vec<Entry<T>> {
                let read = doc.get(key).and_then(Value::as_array).cloned().unwrap_or_default();
                read.into_iter().map(Entry::Read).collect()
            }
            builder.views = list(&base.doc, "bufferViews");
            builder.accessors = list(&base.doc, "accessors");
            builder.nodes = list(&base.doc, "nodes");
            builder.skins = list(&base.doc, "skins");
            builder.roots = base.doc["scenes"][base.scene]["nodes"]
                .as_array()
                .map(|a| a.iter().filter_map(|v| v.as_u64().map(|i| i as usize)).collect())
                .unwrap_or_default();
            let anim = &base.doc["animations"][base.anim];
            builder.samplers = list(anim, "samplers");
            builder.channels = list(anim, "channels");
            builder.names = (0..builder.nodes.len()).map(|i| builder.node_name(i)).collect();
            builder.len = base.bin.len();
            builder.pieces.push((0, std::mem::take(&mut base.bin)));
            kept_base = Some((base.doc, base.anim, base.scene));
        }
        let mut bk = Bake {
            plan,
            src,
            frames: frames.clone(),
            y_up,
            b: builder,
            series_nodes: BTreeMap::new(),
            characters: BTreeMap::new(),
            base: bake.base,
        };
        let (tmin, tmax) = (
            times.first().copied().unwrap_or(0.0),
            times.last().copied().unwrap_or(0.0),
        );
        bk.b.time_accessor =
            bk.b.floats(&times, "SCALAR", times.len(), Some((vec![tmin], vec![tmax])));
        let mut fills = Vec::new();
        for item in &bake.items {
            let width = plan.nodes[item.node].outputs[item.output].width();
            match item.shape.kind {
                PortKind::Vec3 | PortKind::Transform => {
                    bk.series_node(item.node, item.output);
                }
                PortKind::Points => match item.chain {
                    None => {
                        let mut points = Vec::with_capacity(item.shape.points);
                        for p in 0..item.shape.points {
                            let name = format!("{}.p{p}", item.name);
                            let n =
                                bk.b.node(&name, Some(Names::of(&name).series(&item.name).point(p)), None);
                            points.push((n, bk.b.channel_space(n, "translation", 3, frames.len())));
                        }
                        fills.push(Fill::Points {
                            node: item.node,
                            output: item.output,
                            width,
                            points,
                        });
                    }
                    Some(c) => fills.push(Fill::Chains {
                        fill: Box::new(bk.chains(item, c)?),
                        width,
                    }),
                },
                PortKind::Scalar | PortKind::Flag => return Err(format!("`{}` cannot be baked", item.name)),
            }
        }
        if let Some(e) = overflow_error(plan, &frames, bk.b.overflow.as_ref()) {
            return Err(e);
        }
        let mut b = bk.b;
        // The buffer laid out whole, zero where the windows will write; what is known now in
        // place. A .glb's lengths are 32-bit: a bake too large for one is refused before any
        // frame is evaluated into it.
        if bake.format == BakeFormat::Glb && !glb_fits(1 << 20, b.len) {
            return Err(format!(
                "the bake needs {:.2} GiB of buffer, more than a .glb file can hold (4 GiB, glTF 2.0 section 4.4.3): \
                 bake fewer strands, joints or frames, or bake to a .gltf with a separate .bin",
                b.len as f64 / (1u64 << 30) as f64
            ));
        }
        let pieces = std::mem::take(&mut b.pieces);
        let mut w = BakeWriter {
            plan,
            bake,
            frames,
            y_up,
            b,
            fills,
            store,
            at: 0,
            room: 0,
            base: kept_base,
        };
        if bake.format == BakeFormat::Glb && matches!(w.store, BinStore::File(_)) {
            w.room = w.document_bound()?;
            w.at = 12 + 8 + w.room + 8;
        }
        w.store.set_len(w.at + w.b.len)?;
        for (at, bytes) in pieces {
            w.store.write_at(w.at + at, &bytes)?;
        }
        Ok(w)
    }

    /// A bound on the length of the finished document, whatever the windows fill in: the
    /// document with every rest value the windows will set written as `1.0` (3 characters),
    /// plus 13 characters for each (a 32-bit float takes at most 15 in the shortest form that
    /// reads back to it, and 16 are counted), rounded up to 4 bytes.
    fn document_bound(&mut self) -> Result<usize, String> {
        let mut set: Vec<usize> = Vec::new();
        for fill in &self.fills {
            match fill {
                Fill::Points { points, .. } => set.extend(points.iter().map(|(n, _)| *n)),
                Fill::Chains { fill, .. } => set.extend(fill.joints.iter().copied()),
            }
        }
        let mut floats = 0usize;
        let mut changed = Vec::new();
        for &n in &set {
            if let Entry::Made(node) = &mut self.b.nodes[n] {
                let (t, r) = (node.translation.is_none(), node.rotation.is_none());
                if t {
                    node.translation = Some([1.0; 3]);
                    floats += 3;
                }
                if r {
                    node.rotation = Some([1.0; 4]);
                    floats += 4;
                }
                changed.push((n, t, r));
            }
        }
        let mut counted = Counted(0);
        serde_json::to_writer(&mut counted, &self.document()).map_err(|e| e.to_string())?;
        let len = counted.0;
        for (n, t, r) in changed {
            if let Entry::Made(node) = &mut self.b.nodes[n] {
                if t {
                    node.translation = None;
                }
                if r {
                    node.rotation = None;
                }
            }
        }
        Ok((len + 13 * floats).next_multiple_of(4))
    }

    /// Fills the baked frames of `src`'s window.
    pub fn window(&mut self, src: &Frames<'_>) -> Result<(), String> {
        let range = src.range.start.max(self.frames.start)..src.range.end.min(self.frames.end);
        if range.is_empty() {
            return Ok(());
        }
        let axes = BakeAxes { y_up: self.y_up };
        let k0 = range.start - self.frames.start;
        for fill in &mut self.fills {
            match fill {
                Fill::Points {
                    node,
                    output,
                    width,
                    points,
                } => {
                    for (p, &(n, at)) in points.iter().enumerate() {
                        let mut keys = Vec::with_capacity(12 * range.len());
                        for (kk, i) in range.clone().enumerate() {
                            let f = src.frame(*node, *output, i, *width);
                            let t = axes.pos([f[3 * p], f[3 * p + 1], f[3 * p + 2]]);
                            if k0 + kk == 0 {
                                self.b.rest(n, Some(t), None, None);
                            }
                            if let Some(v) = t.into_iter().find(|v| !(*v as f32).is_finite()) {
                                self.b.fits("translation", n, std::iter::once(v), 1);
                                let e = (self.b.overflow.take().map(|(w, _, v)| (w, k0 + kk, v)))
                                    .and_then(|o| overflow_error(self.plan, &self.frames, Some(&o)));
                                return Err(e.unwrap_or_default());
                            }
                            for v in t {
                                keys.extend_from_slice(&(v as f32).to_le_bytes());
                            }
                        }
                        self.store.write_at(self.at + at + 12 * k0, &keys)?;
                    }
                }
                Fill::Chains { fill, width } => {
                    if let Some((joint, k, v)) = fill.window(
                        src,
                        axes,
                        &self.frames,
                        range.clone(),
                        *width,
                        &mut self.b,
                        &mut self.store,
                        self.at,
                    )? {
                        let name = self.b.node_name(joint);
                        let o = (format!("the translation of `{name}`"), k, v);
                        return Err(overflow_error(self.plan, &self.frames, Some(&o)).unwrap_or_default());
                    }
                }
            }
        }
        Ok(())
    }

    /// The finished document (its buffer described, its data not in it).
    fn document(&self) -> Document<'_> {
        let tl = self.plan.timeline;
        let stem = std::path::Path::new(&self.bake.file)
            .file_stem()
            .and_then(|s| s.to_str())
            .unwrap_or("bake")
            .to_owned();
        let b = &self.b;
        let first_frame = tl.frame_number(self.frames.start);
        let rate = format!("{}/{}", tl.rate_num, tl.rate_den);
        let heft_extras = json!({
            "first_frame": first_frame,
            "frame_count": self.frames.len(),
            "frame_rate": rate,
            "fps": tl.fps(),
            "axes": if self.y_up { "y_up" } else { "z_up" },
            "time_accessor": b.time_accessor,
            "clip": self.base.as_ref().map_or(0, |b| b.1),
        });
        let (channels, samplers) = (b.channels.as_slice(), b.samplers.as_slice());
        let (mut rest, animations) = match self.base.clone() {
            None => {
                let rest = json!({
                    "asset": {
                        "version": "2.0",
                        "generator": concat!("heft ", env!("CARGO_PKG_VERSION")),
                    },
                    "scene": 0,
                    "scenes": [{"name": tool_name(&stem), "nodes": b.roots}],
                });
                let mut named = serde_json::Map::new();
                named.insert("name".to_owned(), json!(tool_name(&stem)));
                let ours = Animation::Made {
                    rest: named,
                    channels,
                    samplers,
                };
                (rest, vec![ours])
            }
            Some((mut doc, anim, scene)) => {
                doc["scenes"][scene]["nodes"] = json!(b.roots);
                let read = doc
                    .as_object_mut()
                    .and_then(|o| o.remove("animations"))
                    .and_then(|a| if let Value::Array(a) = a { Some(a) } else { None })
                    .unwrap_or_default();
                let mut animations = Vec::with_capacity(read.len());
                for (k, a) in read.into_iter().enumerate() {
                    if k == anim {
                        let mut rest = if let Value::Object(o) = a {
                            o
                        } else {
                            serde_json::Map::new()
                        };
                        rest.remove("channels");
                        rest.remove("samplers");
                        animations.push(Animation::Made {
                            rest,
                            channels,
                            samplers,
                        });
                    } else {
                        animations.push(Animation::Read(a));
                    }
                }
                (doc, animations)
            }
        };
        rest["asset"]["extras"]["heft"] = heft_extras;
        let mut rest = if let Value::Object(o) = rest {
            o
        } else {
            serde_json::Map::new()
        };
        for key in ["nodes", "accessors", "bufferViews", "skins", "buffers", "animations"] {
            rest.remove(key);
        }
        Document {
            rest,
            nodes: &b.nodes,
            accessors: &b.accessors,
            views: &b.views,
            skins: &b.skins,
            animations,
            buffers: vec![json!({"byteLength": b.len})],
        }
    }

    /// The .glb's header, its document chunk and the header of its binary chunk.
    fn glb_head(doc: &Document<'_>, len: usize) -> Result<Vec<u8>, String> {
        let json = serde_json::to_vec(doc).map_err(|e| e.to_string())?;
        let (room, bin) = (json.len().next_multiple_of(4), len.next_multiple_of(4));
        let (front, back) = glb_framing(room, bin)?;
        let mut head = Vec::with_capacity(20 + room + 8);
        head.extend_from_slice(&front);
        head.extend_from_slice(&json);
        head.resize(20 + room, b' ');
        head.extend_from_slice(&back);
        Ok(head)
    }

    /// The name of the separate buffer of a `.gltf` bake, and its URI from the `.gltf`.
    fn bin_name(&self) -> (String, String) {
        let bin_name = std::path::Path::new(&self.bake.file).with_extension("bin");
        let uri = bin_name
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default();
        (bin_name.to_string_lossy().into_owned(), uri)
    }

    /// The files of a bake kept in memory ([`BinStore::Memory`]).
    pub fn finish_in_memory(self) -> Result<Vec<FileParts>, String> {
        let BinStore::Memory(bin) = &self.store else {
            return Err("the bake's buffer is not in memory".to_owned());
        };
        let mut doc = self.document();
        match self.bake.format {
            BakeFormat::Glb => {
                let head = Self::glb_head(&doc, bin.len())?;
                let mut bin = bin.clone();
                bin.resize(bin.len().next_multiple_of(4), 0);
                Ok(vec![(self.bake.file.clone(), vec![head, bin])])
            }
            BakeFormat::GltfEmbedded => {
                let data = base64::engine::general_purpose::STANDARD.encode(bin);
                doc.buffers[0]["uri"] = json!(format!("data:application/octet-stream;base64,{data}"));
                Ok(vec![(
                    self.bake.file.clone(),
                    vec![serde_json::to_vec_pretty(&doc).map_err(|e| e.to_string())?],
                )])
            }
            BakeFormat::GltfSeparate => {
                let (bin_file, uri) = self.bin_name();
                doc.buffers[0]["uri"] = json!(uri);
                Ok(vec![
                    (
                        self.bake.file.clone(),
                        vec![serde_json::to_vec_pretty(&doc).map_err(|e| e.to_string())?],
                    ),
                    (bin_file, vec![bin.clone()]),
                ])
            }
        }
    }

    /// Stages the files of a bake kept in a file ([`BinStore::File`]) in `staged`, and returns
    /// their names: a .glb is that file, its header and document written into the room kept for
    /// them; a separate-buffer .gltf's `.bin` is that file; an embedded .gltf is written from it.
    pub fn finish_staged(self, staged: &mut Transaction<'_>, dir: &std::path::Path) -> Result<Vec<String>, WriteError> {
        let target = dir.join(&self.bake.file);
        let err = |e: String| WriteError {
            path: target.clone(),
            reason: e,
        };
        let io = |e: std::io::Error| WriteError {
            path: target.clone(),
            reason: e.to_string(),
        };
        let len = self.b.len;
        let (bin_file, uri) = self.bin_name();
        let text = {
            let mut doc = self.document();
            match self.bake.format {
                BakeFormat::Glb => serde_json::to_vec(&doc),
                BakeFormat::GltfEmbedded => {
                    doc.buffers[0]["uri"] = json!(format!("data:application/octet-stream;base64,{MARK}"));
                    serde_json::to_vec_pretty(&doc)
                }
                BakeFormat::GltfSeparate => {
                    doc.buffers[0]["uri"] = json!(uri);
                    serde_json::to_vec_pretty(&doc)
                }
            }
            .map_err(|e| err(e.to_string()))?
        };
        let (format, at, room) = (self.bake.format, self.at, self.room);
        let file_name = self.bake.file.clone();
        let BinStore::File(mut bin) = self.store else {
            return Err(err("the bake's buffer is not in a file".to_owned()));
        };
        match format {
            BakeFormat::Glb => {
                if text.len() > room {
                    return Err(err(format!(
                        "the bake's document takes {} bytes, more than the {room} kept for it",
                        text.len()
                    )));
                }
                // The document padded with spaces to the room kept (white space after it is
                // still JSON, and the chunk stays 4-byte aligned), the header in front, the
                // buffer's chunk header after it.
                let bin_len = len.next_multiple_of(4);
                let (head, back) = glb_framing(room, bin_len).map_err(err)?;
                let mut tail = vec![b' '; room - text.len()];
                tail.extend_from_slice(&back);
                bin.write_at(0, &head).map_err(io)?;
                bin.write_at(20, &text).map_err(io)?;
                bin.write_at(20 + text.len() as u64, &tail).map_err(io)?;
                bin.set_len((at + bin_len) as u64).map_err(io)?;
                staged.add(bin)?;
                Ok(vec![file_name])
            }
            BakeFormat::GltfEmbedded => {
                // The document around its data URI, the data streamed from the buffer's file in
                // whole groups of 3 bytes (so the pieces join into one base64 text).
                let mark = text
                    .windows(MARK.len())
                    .position(|w| w == MARK.as_bytes())
                    .ok_or_else(|| err("the document lost its buffer".to_owned()))?;
                let mut file = staged.create(&target)?;
                file.write_all(&text[..mark]).map_err(io)?;
                let mut chunk = vec![0u8; 3 << 20];
                let mut pos = 0u64;
                loop {
                    let mut filled = 0;
                    while filled < chunk.len() {
                        let n = bin.read_at(pos + filled as u64, &mut chunk[filled..]).map_err(io)?;
                        if n == 0 {
                            break;
                        }
                        filled += n;
                    }
                    if filled == 0 {
                        break;
                    }
                    pos += filled as u64;
                    let encoded = base64::engine::general_purpose::STANDARD.encode(&chunk[..filled]);
                    file.write_all(encoded.as_bytes()).map_err(io)?;
                    if filled < chunk.len() {
                        break;
                    }
                }
                file.write_all(&text[mark + MARK.len()..]).map_err(io)?;
                staged.add(file)?;
                Ok(vec![file_name])
            }
            BakeFormat::GltfSeparate => {
                staged.stage(&target, &[&text])?;
                staged.add(bin)?;
                Ok(vec![file_name, bin_file])
            }
        }
    }
}

/// The bytes around a .glb's document chunk of `room` bytes (4-byte aligned) and its binary
/// chunk of `bin` bytes (aligned): the file header and the document chunk's header in front, the
/// binary chunk's header after (glTF 2.0, section 4.4.3).
fn glb_framing(room: usize, bin: usize) -> Result<([u8; 20], [u8; 8]), String> {
    if !glb_fits(room, bin) {
        return Err("the bake is larger than a .glb file can hold (4 GiB)".to_owned());
    }
    let mut front = [0u8; 20];
    let fields = [
        0x4654_6C67u32,
        2,
        (12 + 8 + room + 8 + bin) as u32,
        room as u32,
        0x4E4F_534A,
    ]; // "glTF", version, length, "JSON"
    for (at, v) in fields.iter().enumerate() {
        front[4 * at..4 * at + 4].copy_from_slice(&v.to_le_bytes());
    }
    let mut back = [0u8; 8];
    back[..4].copy_from_slice(&(bin as u32).to_le_bytes());
    back[4..].copy_from_slice(&0x004E_4942u32.to_le_bytes()); // "BIN\0"
    Ok((front, back))
}

/// Counts the bytes written to it (a document's length without holding its text).
struct Counted(usize);

impl std::io::Write for Counted {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        self.0 += buf.len();
        Ok(buf.len())
    }
    fn flush(&mut self) -> std::io::Result<()> {
        Ok(())
    }
}

/// What stands for an embedded buffer's base64 text in its document until the text is streamed
/// in.
const MARK: &str = "heft-buffer-data";

/// The error for a value beyond a 32-bit float: (what, key within the bake, value).
fn overflow_error(plan: &Plan, frames: &std::ops::Range<usize>, o: Option<&(String, usize, f64)>) -> Option<String> {
    o.map(|(what, key, value)| {
        format!(
            "{what} at frame {} is {value:e}, beyond what glTF's 32-bit floats hold (3.4e38): check the data \
             that drives it",
            plan.timeline.frame_number(frames.start + key)
        )
    })
}

/// The files of one bake of a whole evaluation, in memory; a separate-buffer .gltf adds its
/// .bin file.
pub fn bake_files(plan: &Plan, eval: &Evaluation, bake: &PlannedBake) -> Result<Vec<FileParts>, String> {
    let all = Frames::of(eval, 0..plan.timeline.frames());
    let mut w = BakeWriter::open(plan, bake, &all, BinStore::Memory(Vec::new()))?;
    w.window(&all)?;
    w.finish_in_memory()
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

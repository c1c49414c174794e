//! A character read from glTF 2.0 (Khronos Group, glTF 2.0 Specification, 2021): the node
//! hierarchy, and one animation clip resampled at the graph's frames.
//!
//! - Clip values between keys follow the specification's interpolation rules (section 3.11
//!   "Animations" and Appendix C "Interpolation"): STEP holds the key before, LINEAR blends
//!   linearly (rotations by spherical linear interpolation along the shorter arc), CUBICSPLINE
//!   is the cubic Hermite spline with the tangents scaled by the key interval (rotations
//!   normalised afterwards). Before its first key and after its last a channel holds its end
//!   value. A node no channel animates keeps its rest TRS.
//! - Every named node of the scene becomes one world transform per frame. The world matrix is
//!   the product of the local T R S matrices from the scene root. Its linear part must be a
//!   rotation times a positive scale along the node's own axes (no shear, no mirror): the
//!   rotation is what heft carries, the scale only moves the node's children, which are
//!   composed exactly. A node whose world matrix has shear or a mirror cannot be carried and
//!   is refused when the graph uses it, naming the node and the frame.
//! - glTF is Y up; heft's world is Z up: (X, Y, Z) -> (X, -Z, Y), unless the file is said to
//!   be Z up already.
//!
//! The file's own values are kept too ([`Character::local`], in the file's axes) so a bake can
//! rebuild the hierarchy and parent strands under its bones.

use std::path::{Path, PathBuf};

use gltf::accessor::{DataType, Dimensions};
use gltf::animation::Interpolation;
use gltf::animation::util::ReadOutputs;

use crate::quat::{Quat, dot};

/// A local transform: translation, rotation (x, y, z, w), scale.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Trs {
    /// Translation, in the file's units and axes.
    pub t: [f64; 3],
    /// Rotation, a unit quaternion (x, y, z, w).
    pub r: Quat,
    /// Scale along the node's own axes.
    pub s: [f64; 3],
}

impl Trs {
    /// The identity.
    pub const IDENTITY: Trs = Trs {
        t: [0.0; 3],
        r: [0.0, 0.0, 0.0, 1.0],
        s: [1.0; 3],
    };
}

/// An affine transform: a 3x3 linear part (row-major) and a translation.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Affine {
    /// Linear part, `m[row][col]`.
    pub m: [[f64; 3]; 3],
    /// Translation.
    pub t: [f64; 3],
}

impl Affine {
    /// T R S as a matrix.
    pub fn from_trs(x: &Trs) -> Affine {
        let r = rotation_matrix(x.r);
        let mut m = [[0.0; 3]; 3];
        for (i, row) in m.iter_mut().enumerate() {
            for (j, v) in row.iter_mut().enumerate() {
                *v = r[i][j] * x.s[j];
            }
        }
        Affine { m, t: x.t }
    }
    /// `self * other` (apply `other` first).
    pub fn mul(&self, o: &Affine) -> Affine {
        let mut m = [[0.0; 3]; 3];
        for (i, row) in m.iter_mut().enumerate() {
            for (j, v) in row.iter_mut().enumerate() {
                *v = (0..3).map(|k| self.m[i][k] * o.m[k][j]).sum();
            }
        }
        Affine { m, t: self.apply(o.t) }
    }
    /// Applies the transform to a point.
    pub fn apply(&self, p: [f64; 3]) -> [f64; 3] {
        [0, 1, 2].map(|i| self.m[i][0] * p[0] + self.m[i][1] * p[1] + self.m[i][2] * p[2] + self.t[i])
    }
    /// Splits the linear part into a rotation and a positive scale along the node's own axes,
    /// `R diag(s)`, or `None` when it has shear or a mirror (relative tolerance 1e-6).
    pub fn rotation_scale(&self) -> Option<(Quat, [f64; 3])> {
        let col = |j: usize| [self.m[0][j], self.m[1][j], self.m[2][j]];
        let s = [0, 1, 2].map(|j| norm(col(j)));
        if s.iter().any(|&v| v.is_nan() || v <= 1e-12 || !v.is_finite()) {
            return None;
        }
        let r: [[f64; 3]; 3] = [0, 1, 2].map(|i| [0, 1, 2].map(|j| self.m[i][j] / s[j]));
        // Columns orthogonal and right-handed.
        let c = |j: usize| [r[0][j], r[1][j], r[2][j]];
        let orth = [(0, 1), (0, 2), (1, 2)]
            .iter()
            .map(|&(a, b)| dot3(c(a), c(b)).abs())
            .fold(0.0, f64::max);
        let det = dot3(c(0), cross(c(1), c(2)));
        if orth > 1e-6 || (det - 1.0).abs() > 1e-6 {
            return None;
        }
        Some((quat_from_matrix(r), s))
    }
}

use heft_node_sdk::math::vec3::{cross, dot as dot3, norm};

pub use heft_node_sdk::math::quat::{matrix as rotation_matrix, slerp};

/// The unit quaternion (w >= 0) of a rotation matrix (Shepperd 1978, "Quaternion from rotation
/// matrix", J. Guidance and Control 1(3): the largest of the four candidates is taken).
pub fn quat_from_matrix(m: [[f64; 3]; 3]) -> Quat {
    let tr = m[0][0] + m[1][1] + m[2][2];
    let q = if tr > m[0][0].max(m[1][1]).max(m[2][2]) {
        let s = (1.0 + tr).sqrt() * 2.0;
        [
            (m[2][1] - m[1][2]) / s,
            (m[0][2] - m[2][0]) / s,
            (m[1][0] - m[0][1]) / s,
            0.25 * s,
        ]
    } else if m[0][0] >= m[1][1] && m[0][0] >= m[2][2] {
        let s = (1.0 + m[0][0] - m[1][1] - m[2][2]).sqrt() * 2.0;
        [
            0.25 * s,
            (m[0][1] + m[1][0]) / s,
            (m[0][2] + m[2][0]) / s,
            (m[2][1] - m[1][2]) / s,
        ]
    } else if m[1][1] >= m[2][2] {
        let s = (1.0 + m[1][1] - m[0][0] - m[2][2]).sqrt() * 2.0;
        [
            (m[0][1] + m[1][0]) / s,
            0.25 * s,
            (m[1][2] + m[2][1]) / s,
            (m[0][2] - m[2][0]) / s,
        ]
    } else {
        let s = (1.0 + m[2][2] - m[0][0] - m[1][1]).sqrt() * 2.0;
        [
            (m[0][2] + m[2][0]) / s,
            (m[1][2] + m[2][1]) / s,
            0.25 * s,
            (m[1][0] - m[0][1]) / s,
        ]
    };
    let n = dot(q, q).sqrt();
    let q = q.map(|c| c / n);
    if q[3] < 0.0 { q.map(|c| -c) } else { q }
}

/// Which way the file's world is turned into heft's.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Axes {
    /// Y up, as glTF specifies: (X, Y, Z) -> (X, -Z, Y).
    YUp,
    /// Already Z up: taken as is.
    ZUp,
}

impl Axes {
    /// A position in the file's axes, in heft's.
    pub fn point(self, p: [f64; 3]) -> [f64; 3] {
        match self {
            Axes::YUp => [p[0], -p[2], p[1]],
            Axes::ZUp => p,
        }
    }
    /// A rotation in the file's axes, in heft's (the same turn of its vector part).
    pub fn rotation(self, q: Quat) -> Quat {
        match self {
            Axes::YUp => [q[0], -q[2], q[1], q[3]],
            Axes::ZUp => q,
        }
    }
}

/// What happens to frames outside the time a clip or a track covers.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outside {
    /// An error: the source must cover every frame.
    Refuse,
    /// The first value before, the last after.
    Hold,
    /// The covered time repeats (cyclic motion).
    Loop,
}

impl Outside {
    /// From a parameter's choice text.
    pub fn from_choice(s: &str) -> Outside {
        match s {
            "hold" => Outside::Hold,
            "loop" => Outside::Loop,
            _ => Outside::Refuse,
        }
    }
    /// The source time read for a wanted time `t` (already offset), given the covered range;
    /// `None` when refused. A time within 1e-9 s (relative) of an end counts as covered.
    pub fn map(self, t: f64, first: f64, last: f64) -> Option<f64> {
        let eps = 1e-9 * first.abs().max(last.abs()).max(1.0);
        if t >= first - eps && t <= last + eps {
            return Some(t.clamp(first, last));
        }
        match self {
            Outside::Refuse => None,
            Outside::Hold => Some(t.clamp(first, last)),
            Outside::Loop => {
                let period = last - first;
                if period <= 0.0 {
                    return Some(first);
                }
                let k = ((t - first) / period).floor();
                Some((t - first - k * period).clamp(0.0, period) + first)
            }
        }
    }
}

/// One node of the character's scene.
#[derive(Debug, Clone)]
pub struct CharNode {
    /// The node's name in the file.
    pub name: String,
    /// The port name heft gives it (the name with characters other than letters, digits, `_`
    /// and `-` turned into `_`).
    pub port: String,
    /// Index in the file's `nodes` array.
    pub index: usize,
    /// The parent, as an index into [`Character::nodes`].
    pub parent: Option<usize>,
    /// The node's own rest TRS.
    pub rest: Trs,
}

/// A character resampled at the graph's frames.
#[derive(Debug, Clone)]
pub struct Character {
    /// The file read.
    pub path: PathBuf,
    /// The scene's nodes, each after its parent.
    pub nodes: Vec<CharNode>,
    /// The clip's name (or `#index` for an unnamed clip) and index.
    pub clip: (String, usize),
    /// The clip's covered time range in the file, seconds.
    pub clip_range: (f64, f64),
    /// The clip time sampled at each frame.
    pub clip_times: Vec<f64>,
    /// Local TRS per node per frame (`local[node][frame]`), in the file's axes and units.
    pub local: Vec<Vec<Trs>>,
    /// World transform per node per frame, in the file's axes.
    pub world: Vec<Vec<Affine>>,
    /// How the file's axes turn into heft's.
    pub axes: Axes,
}

/// Why a character could not be read.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct CharacterError {
    /// The parameter the problem belongs to (`file`, `clip`, ...).
    pub param: &'static str,
    /// What is wrong, naming the file and the place in it.
    pub message: String,
    /// How to fix it.
    pub help: Option<String>,
}

fn cerr(param: &'static str, message: String, help: Option<&str>) -> CharacterError {
    CharacterError {
        param,
        message,
        help: help.map(str::to_owned),
    }
}

/// A name every tool accepts: letters, digits, `_` and `-` kept, anything else `_`.
pub fn tool_safe(name: &str) -> String {
    name.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '_' || c == '-' {
                c
            } else {
                '_'
            }
        })
        .collect()
}

/// The port name of a node name: [`tool_safe`], and a leading `_` added when the name does not
/// start with a letter or `_`.
pub fn port_name(name: &str) -> String {
    let mut s = tool_safe(name);
    if !s.starts_with(|c: char| c.is_ascii_alphabetic() || c == '_') {
        s.insert(0, '_');
    }
    s
}

/// One sampler, read and checked.
struct Curve {
    node: usize,
    path: Path3,
    interpolation: Interpolation,
    times: Vec<f64>,
    /// Per key: 3 or 4 values; for CUBICSPLINE three elements a key (in-tangent, value,
    /// out-tangent), as stored.
    values: Vec<[f64; 4]>,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Path3 {
    Translation,
    Rotation,
    Scale,
}

impl Curve {
    fn width(&self) -> usize {
        if self.path == Path3::Rotation { 4 } else { 3 }
    }
    /// The value at time `t` (Appendix C of the specification).
    fn sample(&self, t: f64) -> [f64; 4] {
        let n = self.times.len();
        let cubic = self.interpolation == Interpolation::CubicSpline;
        let value = |k: usize| if cubic { self.values[3 * k + 1] } else { self.values[k] };
        if t <= self.times[0] {
            return value(0);
        }
        if t >= self.times[n - 1] {
            return value(n - 1);
        }
        let k = self.times.partition_point(|&s| s <= t) - 1;
        let (t0, t1) = (self.times[k], self.times[k + 1]);
        // A time on a key (to the precision of key times stored as 32-bit floats) takes the
        // key's value exactly.
        let tol = 4.0 * f64::from(f32::EPSILON) * t.abs().max(1.0);
        if t - t0 <= tol {
            return value(k);
        }
        if t1 - t <= tol {
            return value(k + 1);
        }
        let td = t1 - t0;
        let u = (t - t0) / td;
        let w = self.width();
        match self.interpolation {
            Interpolation::Step => value(k),
            Interpolation::Linear => {
                let (a, b) = (value(k), value(k + 1));
                if self.path == Path3::Rotation {
                    slerp(a, b, u)
                } else {
                    let mut out = [0.0; 4];
                    for i in 0..w {
                        out[i] = a[i] + u * (b[i] - a[i]);
                    }
                    out
                }
            }
            Interpolation::CubicSpline => {
                let (v0, b0) = (self.values[3 * k + 1], self.values[3 * k + 2]);
                let (a1, v1) = (self.values[3 * (k + 1)], self.values[3 * (k + 1) + 1]);
                let (u2, u3) = (u * u, u * u * u);
                let h00 = 2.0 * u3 - 3.0 * u2 + 1.0;
                let h10 = u3 - 2.0 * u2 + u;
                let h01 = -2.0 * u3 + 3.0 * u2;
                let h11 = u3 - u2;
                let mut out = [0.0; 4];
                for i in 0..w {
                    out[i] = h00 * v0[i] + h10 * td * b0[i] + h01 * v1[i] + h11 * td * a1[i];
                }
                if self.path == Path3::Rotation {
                    let n = dot(out, out).sqrt();
                    out = out.map(|c| c / n);
                }
                out
            }
        }
    }
}

/// What to read: the clip (name, or index as text; empty for the only one), the axes, the
/// time offset (file time = graph time + offset) and what happens outside the clip.
#[derive(Debug, Clone)]
pub struct Request<'a> {
    /// The clip's name or index; empty for the file's only clip.
    pub clip: &'a str,
    /// The file's axes.
    pub axes: Axes,
    /// Seconds added to each frame's time to give the clip time.
    pub offset: f64,
    /// Frames outside the clip.
    pub outside: Outside,
}

fn read_error(shown: &str, e: gltf::Error) -> CharacterError {
    let help = "heft reads glTF 2.0 files (.glb, or .gltf with its buffers embedded or beside it)";
    match e {
        gltf::Error::Io(io) => cerr("file", format!("cannot read {shown}: {io}"), None),
        gltf::Error::Binary(b) => cerr(
            "file",
            format!("{shown} is not a glTF 2.0 binary file: {b}"),
            Some(help),
        ),
        gltf::Error::Deserialize(d) => cerr(
            "file",
            format!(
                "{shown} is not a glTF 2.0 file: line {}, column {}: {d}",
                d.line(),
                d.column()
            ),
            Some(help),
        ),
        gltf::Error::Validation(list) => {
            let shown_list: Vec<String> = list
                .iter()
                .take(5)
                .map(|(path, e)| format!("`{}`: {e}", path.as_str()))
                .collect();
            let more = if list.len() > 5 {
                format!(" (and {} more)", list.len() - 5)
            } else {
                String::new()
            };
            cerr(
                "file",
                format!(
                    "{shown} breaks the glTF 2.0 specification at {}{more}",
                    shown_list.join("; ")
                ),
                None,
            )
        }
        other => cerr("file", format!("{shown}: {other}"), Some(help)),
    }
}

/// Reads a character and samples its clip at `times` (graph seconds of each frame).
pub fn load(path: &Path, req: &Request<'_>, times: &[f64]) -> Result<Character, CharacterError> {
    let shown = path.display().to_string();
    // The reader library is trusted not to panic on malformed input, but a panic must never
    // take the run down: it becomes an error naming the file.
    let read = std::panic::catch_unwind(|| read(path, &shown, req, times));
    match read {
        Ok(r) => r,
        Err(_) => Err(cerr(
            "file",
            format!("{shown}: the glTF reader failed on this file"),
            Some("check the file with the Khronos glTF validator"),
        )),
    }
}

fn read(path: &Path, shown: &str, req: &Request<'_>, times: &[f64]) -> Result<Character, CharacterError> {
    let bytes = heft_runtime::read_limited(path, heft_runtime::DATA_FILE_LIMIT)
        .map_err(|e| cerr("file", format!("cannot read {shown}: {e}"), None))?;
    let gltf = gltf::Gltf::from_slice(&bytes).map_err(|e| read_error(shown, e))?;
    let base = path.parent().unwrap_or(Path::new("."));
    let buffers = gltf::import_buffers(&gltf.document, Some(base), gltf.blob.clone()).map_err(|e| match e {
        gltf::Error::Io(io) => {
            let uris: Vec<String> = gltf
                .document
                .buffers()
                .filter_map(|b| match b.source() {
                    gltf::buffer::Source::Uri(u) if !u.starts_with("data:") => Some(format!("`{u}`")),
                    _ => None,
                })
                .collect();
            cerr(
                "file",
                format!(
                    "{shown}: cannot read its buffer {} (`buffers[*].uri`, beside the file): {io}",
                    uris.join(", ")
                ),
                Some("a .gltf file's buffers must sit where its `uri` says, relative to the .gltf file"),
            )
        }
        other => read_error(shown, other),
    })?;
    let doc = &gltf.document;

    // The scene's nodes, parents first.
    let scene = doc
        .default_scene()
        .or_else(|| doc.scenes().next())
        .ok_or_else(|| cerr("file", format!("{shown} has no scene"), None))?;
    let mut nodes: Vec<CharNode> = Vec::new();
    let mut of_index: Vec<Option<usize>> = vec![None; doc.nodes().len()];
    let mut stack: Vec<(gltf::Node<'_>, Option<usize>)> = scene.nodes().map(|n| (n, None)).collect();
    stack.reverse();
    while let Some((node, parent)) = stack.pop() {
        if of_index[node.index()].is_some() {
            return Err(cerr(
                "file",
                format!(
                    "{shown}: `nodes[{}]` is reached twice in the scene's hierarchy",
                    node.index()
                ),
                None,
            ));
        }
        let (t, r, s) = node.transform().decomposed();
        let rest = Trs {
            t: t.map(f64::from),
            r: r.map(f64::from),
            s: s.map(f64::from),
        };
        let rn = dot(rest.r, rest.r).sqrt();
        let name = node
            .name()
            .map_or_else(|| format!("node{}", node.index()), str::to_owned);
        if rn.is_nan() || rn <= 1e-9 {
            return Err(cerr(
                "file",
                format!(
                    "{shown}: `nodes[{}].rotation` of `{name}` is a zero-length quaternion",
                    node.index()
                ),
                Some("a rotation is a unit quaternion (x, y, z, w); the identity is (0, 0, 0, 1)"),
            ));
        }
        let rest = Trs {
            r: rest.r.map(|c| c / rn),
            ..rest
        };
        let i = nodes.len();
        of_index[node.index()] = Some(i);
        nodes.push(CharNode {
            port: port_name(&name),
            name,
            index: node.index(),
            parent,
            rest,
        });
        for child in node.children().collect::<Vec<_>>().into_iter().rev() {
            stack.push((child, Some(i)));
        }
    }

    // The clip.
    let animations: Vec<gltf::Animation<'_>> = doc.animations().collect();
    let clip_label = |a: &gltf::Animation<'_>| a.name().map_or_else(|| format!("#{}", a.index()), str::to_owned);
    let list = || {
        animations
            .iter()
            .map(|a| format!("`{}`", clip_label(a)))
            .collect::<Vec<_>>()
            .join(", ")
    };
    if animations.is_empty() {
        return Err(cerr(
            "file",
            format!("{shown} has no animation: heft reads a character's motion from one of its clips"),
            Some("export the character with its animation (glTF `animations`)"),
        ));
    }
    let anim = if req.clip.is_empty() {
        if animations.len() > 1 {
            return Err(cerr(
                "clip",
                format!("{shown} has {} clips; say which to read", animations.len()),
                Some(&format!("set `clip` to one of {} (or its index from 0)", list())),
            ));
        }
        &animations[0]
    } else if let Some(a) = animations.iter().find(|a| a.name() == Some(req.clip)) {
        a
    } else if let Some(a) = req.clip.parse::<usize>().ok().and_then(|k| animations.get(k)) {
        a
    } else {
        let names: Vec<String> = animations.iter().map(clip_label).collect();
        let mut help = format!("its clips are {} (or an index from 0)", list());
        if let Some(c) = heft_runtime::registry::closest(req.clip, names.iter().map(String::as_str)) {
            help = format!("did you mean `{c}`? {help}");
        }
        return Err(CharacterError {
            param: "clip",
            message: format!("{shown} has no clip `{}`", req.clip),
            help: Some(help),
        });
    };
    let clip_name = clip_label(anim);

    let mut curves: Vec<Curve> = Vec::new();
    for ch in anim.channels() {
        let target = ch.target();
        let Some(node) = of_index[target.node().index()] else {
            continue; // a node outside the scene moves nothing heft reads
        };
        let path = match target.property() {
            gltf::animation::Property::Translation => Path3::Translation,
            gltf::animation::Property::Rotation => Path3::Rotation,
            gltf::animation::Property::Scale => Path3::Scale,
            gltf::animation::Property::MorphTargetWeights => continue,
        };
        let sampler = ch.sampler();
        let at = |what: &str| {
            format!(
                "`animations[{}].samplers[{}].{what}` (clip `{clip_name}`, {} of `{}`)",
                anim.index(),
                sampler.index(),
                match path {
                    Path3::Translation => "translation",
                    Path3::Rotation => "rotation",
                    Path3::Scale => "scale",
                },
                nodes[node].name
            )
        };
        let input = sampler.input();
        if input.data_type() != DataType::F32 || input.dimensions() != Dimensions::Scalar {
            return Err(cerr(
                "file",
                format!(
                    "{shown}: {} holds {:?} {:?} values; key times are float scalars",
                    at("input"),
                    input.data_type(),
                    input.dimensions()
                ),
                None,
            ));
        }
        let output = sampler.output();
        let (ok_type, want) = match path {
            Path3::Rotation => (
                output.dimensions() == Dimensions::Vec4
                    && (output.data_type() == DataType::F32
                        || (output.normalized()
                            && matches!(
                                output.data_type(),
                                DataType::I8 | DataType::U8 | DataType::I16 | DataType::U16
                            ))),
                "float or normalized integer VEC4",
            ),
            _ => (
                output.dimensions() == Dimensions::Vec3 && output.data_type() == DataType::F32,
                "float VEC3",
            ),
        };
        if !ok_type {
            return Err(cerr(
                "file",
                format!(
                    "{shown}: {} holds {}{:?} {:?} values, which heft cannot read here; it reads {want}",
                    at("output"),
                    if output.normalized() { "normalized " } else { "" },
                    output.data_type(),
                    output.dimensions()
                ),
                None,
            ));
        }
        let reader = ch.reader(|b| buffers.get(b.index()).map(|d| d.0.as_slice()));
        let missing = || {
            cerr(
                "file",
                format!("{shown}: cannot read the data of {}", at("input")),
                None,
            )
        };
        let key_times: Vec<f64> = reader.read_inputs().ok_or_else(missing)?.map(f64::from).collect();
        let values: Vec<[f64; 4]> = match reader.read_outputs().ok_or_else(missing)? {
            ReadOutputs::Translations(it) | ReadOutputs::Scales(it) => it
                .map(|v| [f64::from(v[0]), f64::from(v[1]), f64::from(v[2]), 0.0])
                .collect(),
            ReadOutputs::Rotations(r) => r.into_f32().map(|v| v.map(f64::from)).collect(),
            ReadOutputs::MorphTargetWeights(_) => continue,
        };
        let interpolation = sampler.interpolation();
        let per_key = if interpolation == Interpolation::CubicSpline {
            3
        } else {
            1
        };
        if key_times.is_empty() || values.len() != per_key * key_times.len() {
            return Err(cerr(
                "file",
                format!(
                    "{shown}: {} has {} values for {} key times; {} needs {} a key",
                    at("output"),
                    values.len(),
                    key_times.len(),
                    match interpolation {
                        Interpolation::CubicSpline => "CUBICSPLINE",
                        Interpolation::Linear => "LINEAR",
                        Interpolation::Step => "STEP",
                    },
                    per_key
                ),
                None,
            ));
        }
        for (k, w) in key_times.windows(2).enumerate() {
            if w[1].is_nan() || w[1] <= w[0] {
                return Err(cerr(
                    "file",
                    format!(
                        "{shown}: {} key {}: the time {} s does not increase",
                        at("input"),
                        k + 1,
                        w[1]
                    ),
                    None,
                ));
            }
        }
        if let Some(k) = key_times.iter().position(|t| !t.is_finite()) {
            return Err(cerr(
                "file",
                format!("{shown}: {} key {k} is not a number", at("input")),
                None,
            ));
        }
        for (k, v) in values.iter().enumerate() {
            if v.iter().any(|c| !c.is_finite()) {
                return Err(cerr(
                    "file",
                    format!("{shown}: {} value {k} is not finite", at("output")),
                    None,
                ));
            }
            let is_value = per_key == 1 || k % 3 == 1;
            if path == Path3::Rotation && is_value && dot(*v, *v).sqrt() <= 1e-9 {
                return Err(cerr(
                    "file",
                    format!(
                        "{shown}: {} key {} at {} s is a zero-length quaternion",
                        at("output"),
                        k / per_key,
                        key_times[k / per_key]
                    ),
                    Some("a rotation is a unit quaternion (x, y, z, w); the identity is (0, 0, 0, 1)"),
                ));
            }
        }
        curves.push(Curve {
            node,
            path,
            interpolation,
            times: key_times,
            values,
        });
    }
    if curves.is_empty() {
        return Err(cerr(
            "clip",
            format!("{shown}: clip `{clip_name}` moves no node of the scene"),
            None,
        ));
    }
    let first = curves.iter().map(|c| c.times[0]).fold(f64::INFINITY, f64::min);
    let last = curves
        .iter()
        .map(|c| c.times[c.times.len() - 1])
        .fold(f64::NEG_INFINITY, f64::max);

    // The clip time of every frame.
    let mut clip_times = Vec::with_capacity(times.len());
    for &t in times {
        match req.outside.map(t + req.offset, first, last) {
            Some(c) => clip_times.push(c),
            None => {
                let (a, b) = (times[0] + req.offset, times[times.len() - 1] + req.offset);
                return Err(CharacterError {
                    param: "clip",
                    message: format!(
                        "{shown}: clip `{clip_name}` covers {first} s to {last} s, but the graph reads it from {a} s to {b} s"
                    ),
                    help: Some(
                        "set a frame range inside the clip, a `time_offset`, or `outside = hold` or `loop`".to_owned(),
                    ),
                });
            }
        }
    }

    // Local TRS per node per frame: first, whether that fits.
    let frames = times.len();
    let per = (std::mem::size_of::<Trs>() + std::mem::size_of::<Affine>() + 7 * 8) as u128;
    heft_runtime::check_memory(frames as u128 * nodes.len() as u128 * per).map_err(|e| CharacterError {
        param: "file",
        message: format!(
            "{shown}: reading its {} nodes at {frames} frames needs {e}",
            nodes.len()
        ),
        help: Some("evaluate fewer frames (`frames`, `--frames`)".to_owned()),
    })?;
    let mut local: Vec<Vec<Trs>> = nodes.iter().map(|n| vec![n.rest; frames]).collect();
    for c in &curves {
        for (f, &t) in clip_times.iter().enumerate() {
            let v = c.sample(t);
            let x = &mut local[c.node][f];
            match c.path {
                Path3::Translation => x.t = [v[0], v[1], v[2]],
                Path3::Scale => x.s = [v[0], v[1], v[2]],
                Path3::Rotation => {
                    let n = dot(v, v).sqrt();
                    x.r = v.map(|c| c / n);
                }
            }
        }
    }
    // World per node per frame.
    let mut world: Vec<Vec<Affine>> = Vec::with_capacity(nodes.len());
    for (i, n) in nodes.iter().enumerate() {
        let w: Vec<Affine> = (0..frames)
            .map(|f| {
                let own = Affine::from_trs(&local[i][f]);
                match n.parent {
                    Some(p) => world[p][f].mul(&own),
                    None => own,
                }
            })
            .collect();
        world.push(w);
    }
    Ok(Character {
        path: path.to_path_buf(),
        nodes,
        clip: (clip_name, anim.index()),
        clip_range: (first, last),
        clip_times,
        local,
        world,
        axes: req.axes,
    })
}

impl Character {
    /// Node `i`'s world transform in heft's world, frame-major (tx, ty, tz, qx, qy, qz, qw), or
    /// the frame where its world matrix has shear or a mirror.
    pub fn series(&self, i: usize) -> Result<Vec<f64>, usize> {
        let mut out = Vec::with_capacity(7 * self.world[i].len());
        let mut prev: Option<Quat> = None;
        for (f, w) in self.world[i].iter().enumerate() {
            let (q, _) = w.rotation_scale().ok_or(f)?;
            let mut q = self.axes.rotation(q);
            // Consecutive frames in one hemisphere, so a reader blending them takes the short way.
            if let Some(p) = prev
                && dot(p, q) < 0.0
            {
                q = q.map(|c| -c);
            }
            prev = Some(q);
            let t = self.axes.point(w.t);
            out.extend_from_slice(&[t[0], t[1], t[2], q[0], q[1], q[2], q[3]]);
        }
        Ok(out)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Shepperd's conversion inverts the rotation matrix of random unit quaternions.
    #[test]
    fn matrix_round_trip() {
        let mut s = 1u64;
        let mut rnd = || {
            s = s.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            (s >> 11) as f64 / (1u64 << 53) as f64 * 2.0 - 1.0
        };
        for _ in 0..1000 {
            let q = [rnd(), rnd(), rnd(), rnd()];
            let n = dot(q, q).sqrt();
            let q = q.map(|c| c / n);
            let q = if q[3] < 0.0 { q.map(|c| -c) } else { q };
            let back = quat_from_matrix(rotation_matrix(q));
            for k in 0..4 {
                assert!((back[k] - q[k]).abs() < 1e-12, "{q:?} -> {back:?}");
            }
        }
    }

    #[test]
    fn shear_is_detected() {
        let parent = Affine::from_trs(&Trs {
            s: [1.0, 2.0, 1.0],
            ..Trs::IDENTITY
        });
        let h = std::f64::consts::FRAC_PI_8; // 45 deg about Z
        let child = Affine::from_trs(&Trs {
            r: [0.0, 0.0, h.sin(), h.cos()],
            ..Trs::IDENTITY
        });
        assert!(parent.mul(&child).rotation_scale().is_none());
        let own = Affine::from_trs(&Trs {
            r: [0.0, 0.0, h.sin(), h.cos()],
            s: [1.0, 2.0, 3.0],
            ..Trs::IDENTITY
        });
        let (q, s) = own.rotation_scale().expect("rotation times scale");
        assert!((q[2] - h.sin()).abs() < 1e-12 && (s[1] - 2.0).abs() < 1e-12);
    }

    /// Looping maps a time one and a half periods on to the middle; holding clamps.
    #[test]
    fn outside_rules() {
        assert_eq!(Outside::Loop.map(2.5, 0.0, 1.0), Some(0.5));
        assert_eq!(Outside::Loop.map(-0.25, 0.0, 1.0), Some(0.75));
        assert_eq!(Outside::Hold.map(3.0, 0.0, 1.0), Some(1.0));
        assert_eq!(Outside::Refuse.map(3.0, 0.0, 1.0), None);
        assert_eq!(Outside::Refuse.map(1.0 + 1e-12, 0.0, 1.0), Some(1.0));
    }

    #[test]
    fn port_names_are_graph_names() {
        assert_eq!(port_name("upper_arm.L"), "upper_arm_L");
        assert_eq!(port_name("mixamo:Hips"), "mixamo_Hips");
        assert_eq!(port_name("2nd bone"), "_2nd_bone");
    }
}

//! Host-side source nodes: series read from CSV files when a graph is checked. They look like
//! node types to the graph (`track.force`, `track.position`, `track.transform`) but are
//! evaluated by the host, which alone does I/O; plugins never see a file.
//!
//! A track's samples may be taken at any rate: each frame's time is looked up between the
//! samples around it, linearly for forces and positions, by spherical linear interpolation
//! (slerp, Shoemake 1985) or normalised linear interpolation (nlerp) for rotations. The file
//! must cover every frame of the timeline.

use std::path::{Path, PathBuf};
use std::sync::OnceLock;

use heft_node_sdk::{Dimension, NodeSpec, ParamSpec, ParamValue, PortKind, PortSpec, Timeline};

use std::sync::Arc;

use heft_runtime::source::{HOST_PLUGIN, HostInstance, HostSource, Loaded, SourceError};

use crate::character::{Axes, Outside, Request};
use crate::quat::{Quat, dot, mul as q_mul, normalise as normalised};

/// A host-side node type.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum HostNode {
    /// A force channel (a force plate's vertical force).
    Force,
    /// A position (a marker, a centre of mass).
    Position,
    /// A position and a rotation (a joint, an attachment).
    Transform,
    /// A character from a glTF 2.0 file: one transform output per named node.
    Character,
}

const EULER_ORDERS: [&str; 6] = ["xyz", "xzy", "yxz", "yzx", "zxy", "zyx"];

fn file_params() -> Vec<ParamSpec> {
    vec![
        ParamSpec::text(
            "file",
            None,
            "CSV file with a header row, relative to the graph file's folder.",
        ),
        ParamSpec::text("time_column", Some("time"), "Header of the time column."),
        ParamSpec::choice("time_unit", &["s", "ms"], "Unit of the time column."),
    ]
    .into_iter()
    .chain(time_params())
    .collect()
}

/// The time controls every track shares.
fn time_params() -> Vec<ParamSpec> {
    vec![
        ParamSpec::number(
            "time_offset",
            Dimension::Time,
            0.0,
            (-1.0e7, 1.0e7),
            "Added to each frame's time to give the time read from the file: a take whose shot starts 10 s in reads with 10 s.",
        ),
        ParamSpec::choice(
            "outside",
            &["refuse", "hold", "loop"],
            "Frames outside the time the file covers: an error, the first or last value held, or the covered time repeated (cyclic motion).",
        ),
    ]
}

fn position_params() -> Vec<ParamSpec> {
    vec![
        ParamSpec::text("x_column", Some("x"), "Header of the x column."),
        ParamSpec::text("y_column", Some("y"), "Header of the y column."),
        ParamSpec::text("z_column", Some("z"), "Header of the z column."),
        ParamSpec::choice("unit", &["m", "cm", "mm"], "Unit of the position columns."),
        ParamSpec::choice(
            "axes",
            &["z_up", "y_up"],
            "The file's up axis: z_up (heft's world) or y_up (turned into heft's: (x, y, z) -> (x, -z, y)).",
        ),
    ]
}

const COMMON_NOTES: &str = "The file is read when the graph is checked; a relative path is taken from the graph file's \
     folder. Samples may be at any rate: each frame is interpolated between the samples around its time (linearly for \
     forces and positions). A frame reads the file at its time plus `time_offset`; the file must cover those times \
     unless `outside` says to hold the end values or loop.";

const CHARACTER_NOTES: &str = "Reads a .glb or .gltf file (buffers embedded or beside it) when the graph is checked: the \
     scene's node hierarchy and one animation clip (`clip`: a name, or an index from 0; the file's only clip when empty). \
     Every named node of the scene becomes an output of the same name, its world transform per frame (a name's characters \
     other than letters, digits, `_` and `-` become `_`): wire it like any transform, `juno.head -> braid.anchor`. The \
     clip is resampled at the graph's frames by the glTF 2.0 specification's rules (STEP; LINEAR, rotations by \
     spherical linear interpolation; CUBICSPLINE Hermite), scale in the hierarchy is honoured, and glTF's Y-up world \
     is turned into heft's Z-up one ((X, Y, Z) -> (X, -Z, Y)) unless `axes = z_up`. A node whose world matrix has \
     shear (a non-uniform scale above a rotated child) cannot be carried as a transform and is refused when used. \
     A frame reads the clip at its time plus `time_offset`; frames outside the clip are refused unless `outside` \
     says to hold or loop.";

impl HostNode {
    /// Every host node type.
    pub const ALL: [HostNode; 4] = [
        HostNode::Force,
        HostNode::Position,
        HostNode::Transform,
        HostNode::Character,
    ];

    /// `track.force`, ...
    pub fn full_name(self) -> String {
        format!("{HOST_PLUGIN}.{}", self.spec().name)
    }

    /// The node type's spec.
    pub fn spec(self) -> &'static NodeSpec {
        static SPECS: OnceLock<[NodeSpec; 4]> = OnceLock::new();
        let specs = SPECS.get_or_init(|| {
            let force = NodeSpec {
                name: "force".into(),
                doc: "A force channel read from a CSV file (for example a force plate's vertical force).".into(),
                notes: COMMON_NOTES.into(),
                outputs: vec![PortSpec::new("value", PortKind::Scalar, Dimension::Force, "The force, per frame.")],
                params: file_params()
                    .into_iter()
                    .chain([
                        ParamSpec::text("column", None, "Header of the force column."),
                        ParamSpec::choice("unit", &["N", "kN"], "Unit of the force column."),
                    ])
                    .collect(),
                ..Default::default()
            };
            let position = NodeSpec {
                name: "position".into(),
                doc: "A position read from a CSV file (a marker, a centre of mass, a captured joint).".into(),
                notes: COMMON_NOTES.into(),
                outputs: vec![PortSpec::new("value", PortKind::Vec3, Dimension::Length, "The position, per frame.")],
                params: file_params().into_iter().chain(position_params()).collect(),
                ..Default::default()
            };
            let mut transform_params: Vec<ParamSpec> = file_params().into_iter().chain(position_params()).collect();
            transform_params.extend([
                ParamSpec::choice(
                    "rotation",
                    &["none", "quaternion", "euler"],
                    "How the rotation is given: not at all (identity), as a unit quaternion, or as Euler angles.",
                ),
                ParamSpec::text("qx_column", Some("qx"), "Header of the quaternion's x column."),
                ParamSpec::text("qy_column", Some("qy"), "Header of the quaternion's y column."),
                ParamSpec::text("qz_column", Some("qz"), "Header of the quaternion's z column."),
                ParamSpec::text("qw_column", Some("qw"), "Header of the quaternion's w (scalar) column."),
                ParamSpec::text("rx_column", Some("rx"), "Header of the Euler angle about x."),
                ParamSpec::text("ry_column", Some("ry"), "Header of the Euler angle about y."),
                ParamSpec::text("rz_column", Some("rz"), "Header of the Euler angle about z."),
                ParamSpec::choice("angle_unit", &["deg", "rad"], "Unit of the Euler angles."),
                ParamSpec::choice(
                    "euler_order",
                    &EULER_ORDERS,
                    "Order of the Euler rotations about the fixed world axes: `xyz` turns about x first, then y, then z.",
                ),
                ParamSpec::choice(
                    "rotation_interpolation",
                    &["slerp", "nlerp"],
                    "Between samples: spherical linear interpolation, or normalised linear interpolation.",
                ),
            ]);
            let transform = NodeSpec {
                name: "transform".into(),
                doc: "A position and rotation read from a CSV file (a captured joint, an attachment).".into(),
                notes: format!(
                    "{COMMON_NOTES} Rotations are unit quaternions (x, y, z, w); quaternion columns are normalised, and a \
                     zero-length one is an error. Euler angles turn about the fixed world axes in the order given. Between \
                     samples rotations are slerped (Shoemake 1985) or nlerped along the shorter arc."
                ),
                outputs: vec![PortSpec::new("value", PortKind::Transform, Dimension::Length, "The transform, per frame.")],
                params: transform_params,
                ..Default::default()
            };
            let character = NodeSpec {
                name: "character".into(),
                doc: "A character's joints read from a glTF 2.0 file: one world transform output per named node.".into(),
                notes: CHARACTER_NOTES.into(),
                outputs: Vec::new(),
                params: [
                    ParamSpec::text("file", None, "A .glb or .gltf file, relative to the graph file's folder."),
                    ParamSpec::text("clip", Some(""), "The animation clip: its name, or its index from 0; empty for the file's only clip."),
                    ParamSpec::choice(
                        "axes",
                        &["y_up", "z_up"],
                        "The file's up axis: y_up as glTF specifies (turned into heft's Z up), or z_up for a file that is Z up already.",
                    ),
                ]
                .into_iter()
                .chain(time_params())
                .collect(),
                ..Default::default()
            };
            [force, position, transform, character]
        });
        match self {
            HostNode::Force => &specs[0],
            HostNode::Position => &specs[1],
            HostNode::Transform => &specs[2],
            HostNode::Character => &specs[3],
        }
    }
}

/// Why a track could not be read.
type TrackError = SourceError;

fn err(param: &'static str, message: String) -> TrackError {
    TrackError {
        param,
        message,
        help: None,
    }
}

fn text<'a>(spec: &NodeSpec, values: &'a [ParamValue], name: &str) -> &'a str {
    spec.params
        .iter()
        .position(|p| p.name == name)
        .and_then(|i| match &values[i] {
            ParamValue::Text(t) | ParamValue::Choice(t) => Some(t.as_str()),
            _ => None,
        })
        .unwrap_or_default()
}

/// The columns read from a file: times and, per requested column, its values.
struct Table {
    path: PathBuf,
    times: Vec<f64>,
    columns: Vec<Vec<f64>>,
    lines: Vec<u64>,
}

/// Reads the time column and the named columns (`(param, header)` pairs), every cell checked.
fn read_columns(
    path: &Path,
    time_col: &str,
    time_scale: f64,
    wanted: &[(&'static str, &str)],
) -> Result<Table, TrackError> {
    let shown = path.display();
    let bytes = heft_runtime::read_limited(path, heft_runtime::DATA_FILE_LIMIT)
        .map_err(|e| err("file", format!("cannot read {shown}: {e}")))?;
    if bytes.starts_with(b"glTF")
        || (bytes.first() == Some(&b'{') && bytes.windows(7).take(4096).any(|w| w == b"\"asset\""))
    {
        return Err(err(
            "file",
            format!("{shown} is a glTF file, not a CSV table: read it with `track.character`"),
        ));
    }
    let mut reader = csv::ReaderBuilder::new().trim(csv::Trim::All).from_reader(&bytes[..]);
    let headers = reader
        .headers()
        .map_err(|e| err("file", format!("{shown}: cannot read the header row: {e}")))?
        .clone();
    let find = |name: &str, param: &'static str| -> Result<usize, TrackError> {
        headers.iter().position(|h| h == name).ok_or_else(|| TrackError {
            param,
            message: format!("{shown} has no column `{name}`"),
            help: Some(format!(
                "its columns are: {}",
                headers.iter().map(|h| format!("`{h}`")).collect::<Vec<_>>().join(", ")
            )),
        })
    };
    let ti = find(time_col, "time_column")?;
    let idx: Vec<usize> = wanted.iter().map(|(p, h)| find(h, p)).collect::<Result<_, _>>()?;
    let mut table = Table {
        path: path.to_path_buf(),
        times: Vec::new(),
        columns: vec![Vec::new(); wanted.len()],
        lines: Vec::new(),
    };
    for record in reader.records() {
        let record = record.map_err(|e| err("file", format!("{shown}: {e}")))?;
        let line = record.position().map_or(0, |p| p.line());
        let cell = |i: usize, name: &str| -> Result<f64, TrackError> {
            let raw = record.get(i).unwrap_or("");
            match raw.parse::<f64>() {
                Ok(v) if v.is_finite() => Ok(v),
                _ => Err(err(
                    "file",
                    format!("{shown}: line {line}, column `{name}`: `{raw}` is not a number"),
                )),
            }
        };
        let t = cell(ti, time_col)? * time_scale;
        if let Some(&prev) = table.times.last()
            && t <= prev
        {
            return Err(err(
                "file",
                format!("{shown}: line {line}: the time {t} s does not increase (the line before has {prev} s)"),
            ));
        }
        table.times.push(t);
        table.lines.push(line);
        for (k, (&i, (_, h))) in idx.iter().zip(wanted).enumerate() {
            table.columns[k].push(cell(i, h)?);
        }
    }
    if table.times.len() < 2 {
        return Err(err(
            "file",
            format!("{shown} holds {} samples; a track needs at least 2", table.times.len()),
        ));
    }
    Ok(table)
}

/// For each frame: the sample index before the time it reads (its time plus `offset`, mapped
/// by `outside`) and the weight of the one after.
fn brackets(table: &Table, tl: Timeline, offset: f64, outside: Outside) -> Result<Vec<(usize, f64)>, TrackError> {
    let t = &table.times;
    let (first, last) = (t[0], t[t.len() - 1]);
    let eps = 1e-9 * first.abs().max(last.abs()).max(1.0);
    let mut read = Vec::with_capacity(tl.frames());
    for i in 0..tl.frames() {
        match outside.map(tl.time(i) + offset, first, last) {
            Some(x) => read.push(x),
            None => {
                let (want_first, want_last) = (tl.time(0), tl.time(tl.frames().saturating_sub(1)));
                let fps = tl.fps();
                let shifted = if offset == 0.0 {
                    String::new()
                } else {
                    format!(
                        ", read at {} s to {} s with the time offset",
                        want_first + offset,
                        want_last + offset
                    )
                };
                return Err(TrackError {
                    param: "file",
                    message: format!(
                        "{} covers {first} s to {last} s, but the graph evaluates frames {}..{} ({want_first} s to {want_last} s{shifted})",
                        table.path.display(),
                        tl.start_frame,
                        tl.frame_number(tl.frames().saturating_sub(1)),
                    ),
                    help: Some(format!(
                        "set a frame range inside frames {}..{}, or `outside = hold` or `loop`",
                        ((first - offset) * fps - 1e-9).ceil() as i64,
                        ((last - offset) * fps + 1e-9).floor() as i64
                    )),
                });
            }
        }
    }
    Ok(read
        .into_iter()
        .map(|x| {
            let k = t.partition_point(|&s| s <= x).clamp(1, t.len() - 1) - 1;
            let u = ((x - t[k]) / (t[k + 1] - t[k])).clamp(0.0, 1.0);
            // A frame that falls on a sample takes it exactly.
            if (x - t[k]).abs() <= eps {
                (k, 0.0)
            } else if (t[k + 1] - x).abs() <= eps {
                (k + 1, 0.0)
            } else {
                (k, u)
            }
        })
        .collect())
}

fn lerp(col: &[f64], (k, u): (usize, f64)) -> f64 {
    if u == 0.0 {
        col[k]
    } else {
        col[k] + u * (col[k + 1] - col[k])
    }
}

/// Spherical linear interpolation along the shorter arc (Shoemake 1985, "Animating rotation
/// with quaternion curves", SIGGRAPH), or normalised linear interpolation.
pub fn interpolate(a: Quat, b: Quat, u: f64, slerp: bool) -> Quat {
    if slerp {
        return heft_node_sdk::math::quat::slerp(a, b, u);
    }
    let b = if dot(a, b) < 0.0 { b.map(|c| -c) } else { b };
    normalised([0, 1, 2, 3].map(|k| a[k] + u * (b[k] - a[k])))
}

/// The rotation of Euler angles about the fixed world axes, applied in `order`.
pub fn euler(angles: [f64; 3], order: &str) -> Quat {
    let mut q = [0.0, 0.0, 0.0, 1.0];
    for axis in order.chars() {
        let (k, a) = match axis {
            'x' => (0, angles[0]),
            'y' => (1, angles[1]),
            _ => (2, angles[2]),
        };
        let mut r = [0.0, 0.0, 0.0, (a / 2.0).cos()];
        r[k] = (a / 2.0).sin();
        // About fixed axes: each later rotation multiplies from the left.
        q = q_mul(r, q);
    }
    q
}

impl HostSource for HostNode {
    fn spec(&self) -> &NodeSpec {
        HostNode::spec(*self)
    }
    fn load(&self, params: &[ParamValue], dir: &Path, timeline: Timeline) -> Result<Loaded, SourceError> {
        load(*self, params, dir, timeline)
    }
}

/// Reads a host node's data for the timeline: one series per output.
pub fn load(node: HostNode, values: &[ParamValue], graph_dir: &Path, timeline: Timeline) -> Result<Loaded, TrackError> {
    let spec = node.spec();
    let p = |name: &str| text(spec, values, name);
    let path: PathBuf = graph_dir.join(p("file"));
    let offset = number(spec, values, "time_offset");
    let outside = Outside::from_choice(p("outside"));
    if node == HostNode::Character {
        return load_character(&path, values, timeline);
    }
    let axes = if p("axes") == "y_up" { Axes::YUp } else { Axes::ZUp };
    load_table(node, values, &path, timeline, offset, outside, axes).map(|outputs| Loaded {
        outputs,
        instance: None,
    })
}

fn number(spec: &NodeSpec, values: &[ParamValue], name: &str) -> f64 {
    spec.params
        .iter()
        .position(|p| p.name == name)
        .and_then(|i| match &values[i] {
            ParamValue::Number(v) => Some(*v),
            _ => None,
        })
        .unwrap_or_default()
}

fn load_character(path: &Path, values: &[ParamValue], timeline: Timeline) -> Result<Loaded, TrackError> {
    let spec = HostNode::Character.spec();
    let p = |name: &str| text(spec, values, name);
    let req = Request {
        clip: p("clip"),
        axes: if p("axes") == "z_up" { Axes::ZUp } else { Axes::YUp },
        offset: number(spec, values, "time_offset"),
        outside: Outside::from_choice(p("outside")),
    };
    let times: Vec<f64> = (0..timeline.frames()).map(|i| timeline.time(i)).collect();
    let ch = crate::character::load(path, &req, &times).map_err(|e| TrackError {
        param: e.param,
        message: e.message,
        help: e.help,
    })?;
    let mut instance_spec = spec.clone();
    let mut outputs = Vec::new();
    let mut unusable = Vec::new();
    let mut by_port: std::collections::BTreeMap<&str, Vec<usize>> = std::collections::BTreeMap::new();
    for (i, n) in ch.nodes.iter().enumerate() {
        by_port.entry(n.port.as_str()).or_default().push(i);
    }
    for (i, n) in ch.nodes.iter().enumerate() {
        let same = &by_port[n.port.as_str()];
        if same.len() > 1 {
            if same[0] == i {
                let which: Vec<String> = same
                    .iter()
                    .map(|&k| format!("`nodes[{}]` `{}`", ch.nodes[k].index, ch.nodes[k].name))
                    .collect();
                unusable.push((
                    n.port.clone(),
                    format!(
                        "`{}` names more than one node of {}: {}",
                        n.port,
                        path.display(),
                        which.join(", ")
                    ),
                ));
            }
            continue;
        }
        match ch.series(i) {
            Ok(series) => {
                instance_spec.outputs.push(PortSpec::new(
                    &n.port,
                    PortKind::Transform,
                    Dimension::Length,
                    &format!("World transform of `{}` (`nodes[{}]`).", n.name, n.index),
                ));
                outputs.push(series);
            }
            Err(frame) => unusable.push((
                n.port.clone(),
                format!(
                    "`{}` (`nodes[{}]` of {}) has shear in its world transform at frame {}: a non-uniform scale above it \
                     meets a rotation, which a transform (position and rotation) cannot carry",
                    n.name,
                    n.index,
                    path.display(),
                    timeline.frame_number(frame)
                ),
            )),
        }
    }
    Ok(Loaded {
        outputs,
        instance: Some(HostInstance {
            spec: instance_spec,
            unusable,
            hierarchy: Some(Arc::new(ch)),
        }),
    })
}

fn load_table(
    node: HostNode,
    values: &[ParamValue],
    path: &Path,
    timeline: Timeline,
    offset: f64,
    outside: Outside,
    axes: Axes,
) -> Result<Vec<Vec<f64>>, TrackError> {
    let spec = node.spec();
    let p = |name: &str| text(spec, values, name);
    let path = path.to_path_buf();
    let time_scale = if p("time_unit") == "ms" { 1e-3 } else { 1.0 };
    let length_scale = match p("unit") {
        "cm" => 0.01,
        "mm" => 0.001,
        "kN" => 1e3,
        _ => 1.0,
    };
    match node {
        HostNode::Force => {
            let table = read_columns(&path, p("time_column"), time_scale, &[("column", p("column"))])?;
            let at = brackets(&table, timeline, offset, outside)?;
            Ok(vec![
                at.iter().map(|&b| length_scale * lerp(&table.columns[0], b)).collect(),
            ])
        }
        HostNode::Character => Err(err("file", "a character is not a table".to_owned())),
        HostNode::Position | HostNode::Transform => {
            let mut wanted = vec![
                ("x_column", p("x_column")),
                ("y_column", p("y_column")),
                ("z_column", p("z_column")),
            ];
            let rotation = if node == HostNode::Transform {
                p("rotation")
            } else {
                "none"
            };
            match rotation {
                "quaternion" => wanted.extend([
                    ("qx_column", p("qx_column")),
                    ("qy_column", p("qy_column")),
                    ("qz_column", p("qz_column")),
                    ("qw_column", p("qw_column")),
                ]),
                "euler" => wanted.extend([
                    ("rx_column", p("rx_column")),
                    ("ry_column", p("ry_column")),
                    ("rz_column", p("rz_column")),
                ]),
                _ => {}
            }
            let table = read_columns(&path, p("time_column"), time_scale, &wanted)?;
            let at = brackets(&table, timeline, offset, outside)?;
            let pos = |b| axes.point([0, 1, 2].map(|k| length_scale * lerp(&table.columns[k], b)));
            if node == HostNode::Position {
                return Ok(vec![at.iter().flat_map(|&b| pos(b)).collect()]);
            }
            // Rotations per sample, checked.
            let n = table.times.len();
            let mut rots: Vec<Quat> = Vec::with_capacity(n);
            for s in 0..n {
                let q = match rotation {
                    "quaternion" => {
                        let q = [3, 4, 5, 6].map(|k| table.columns[k][s]);
                        let len = dot(q, q).sqrt();
                        if len < 1e-9 {
                            return Err(TrackError {
                                param: "qw_column",
                                message: format!(
                                    "{}: line {}: the rotation ({}, {}, {}, {}) has zero length",
                                    path.display(),
                                    table.lines[s],
                                    q[0],
                                    q[1],
                                    q[2],
                                    q[3]
                                ),
                                help: Some(
                                    "a rotation is a unit quaternion (x, y, z, w); identity is (0, 0, 0, 1)".into(),
                                ),
                            });
                        }
                        q.map(|c| c / len)
                    }
                    "euler" => {
                        let f = if p("angle_unit") == "deg" {
                            std::f64::consts::PI / 180.0
                        } else {
                            1.0
                        };
                        euler([3, 4, 5].map(|k| f * table.columns[k][s]), p("euler_order"))
                    }
                    _ => [0.0, 0.0, 0.0, 1.0],
                };
                rots.push(axes.rotation(q));
            }
            let slerp = p("rotation_interpolation") != "nlerp";
            Ok(vec![
                at.iter()
                    .flat_map(|&(k, u)| {
                        let q = if u == 0.0 {
                            rots[k]
                        } else {
                            interpolate(rots[k], rots[k + 1], u, slerp)
                        };
                        let t = pos((k, u));
                        [t[0], t[1], t[2], q[0], q[1], q[2], q[3]]
                    })
                    .collect(),
            ])
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Slerp between the identity and a quarter turn about Z, halfway, is the eighth turn
    /// (Shoemake 1985: constant angular speed along the great arc).
    #[test]
    fn slerp_halfway_is_half_the_angle() {
        let a = [0.0, 0.0, 0.0, 1.0];
        let h = std::f64::consts::FRAC_PI_4; // half of 90 deg
        let b = [0.0, 0.0, h.sin(), h.cos()];
        let m = interpolate(a, b, 0.5, true);
        let e = std::f64::consts::PI / 8.0;
        assert!(
            (m[2] - e.sin()).abs() < 1e-12 && (m[3] - e.cos()).abs() < 1e-12,
            "{m:?}"
        );
        // At a quarter of the way, slerp is at a quarter of the angle; nlerp is not.
        let s = interpolate(a, b, 0.25, true);
        let n = interpolate(a, b, 0.25, false);
        let q = std::f64::consts::PI / 16.0;
        assert!((s[2] - q.sin()).abs() < 1e-12);
        assert!((n[2] - q.sin()).abs() > 1e-4);
    }

    /// Euler angles about fixed axes: 90 deg about x then 90 deg about z takes +y to +z... and
    /// +z to +x (checked by rotating vectors with the quaternion).
    #[test]
    fn euler_orders_about_fixed_axes() {
        let rot = |q: Quat, v: [f64; 3]| crate::quat::rotate(q, v);
        let r = std::f64::consts::FRAC_PI_2;
        // xyz: x by 90 takes +y to +z; then z by 90 leaves +z.
        let v = rot(euler([r, 0.0, r], "xyz"), [0.0, 1.0, 0.0]);
        assert!((v[2] - 1.0).abs() < 1e-12, "{v:?}");
        // zyx: z by 90 takes +y to -x; then x by 90 leaves -x.
        let v = rot(euler([r, 0.0, r], "zyx"), [0.0, 1.0, 0.0]);
        assert!((v[0] + 1.0).abs() < 1e-12, "{v:?}");
    }
}

//! Baking outputs into glTF 2.0 (Khronos Group, glTF 2.0 Specification, 2021): every series
//! becomes animated nodes sampled at every frame, in metres, Y up.
//!
//! - a vec3 output: one node with a translation channel;
//! - a transform output: one node with translation and rotation channels;
//! - a points output: one node per point with a translation channel, or, with `chains N`,
//!   one chain of N parent-child nodes per strand with translation and rotation channels, so
//!   a skinned mesh can follow it. Joint j of a chain points its local +Y axis from point j to
//!   point j + 1 (the shortest rotation from +Y, no twist); the last joint keeps the
//!   previous joint's rotation. Composing the local transforms gives back the points.
//!
//! heft's world is Z up; glTF is Y up, so positions (x, y, z) are written as (x, z, -y) and
//! rotations are turned the same way, unless the bake says `axes = y_up`. Animation time 0 is
//! the first frame of the timeline.

use base64::Engine;
use heft_node_sdk::PortKind;
use serde_json::{Value, json};

use crate::blocks::{BakeFormat, BakeItem, PlannedBake};
use crate::check::Plan;
use crate::eval::Evaluation;

use crate::quat::{Quat, conj as q_conj, mul as q_mul, normalise as q_normalise, rotate as q_rotate};

/// The shortest rotation taking +Y to the unit vector `d`.
fn from_y(d: [f64; 3]) -> Quat {
    let dot = d[1];
    if dot < -1.0 + 1e-12 {
        return [1.0, 0.0, 0.0, 0.0]; // half a turn about X
    }
    // cross((0, 1, 0), d) = (d.z, 0, -d.x)
    q_normalise([d[2], 0.0, -d[0], 1.0 + dot])
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

struct Builder {
    bin: Vec<u8>,
    views: Vec<Value>,
    accessors: Vec<Value>,
    nodes: Vec<Value>,
    roots: Vec<usize>,
    samplers: Vec<Value>,
    channels: Vec<Value>,
    time_accessor: usize,
}

impl Builder {
    fn floats(&mut self, data: &[f32], ty: &str, count: usize, min_max: Option<(Vec<f32>, Vec<f32>)>) -> usize {
        while !self.bin.len().is_multiple_of(4) {
            self.bin.push(0);
        }
        let offset = self.bin.len();
        for v in data {
            self.bin.extend_from_slice(&v.to_le_bytes());
        }
        self.views
            .push(json!({"buffer": 0, "byteOffset": offset, "byteLength": data.len() * 4}));
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

    fn channel(&mut self, node: usize, path: &str, data: &[f32], ty: &str, count: usize) {
        let output = self.floats(data, ty, count, None);
        self.samplers
            .push(json!({"input": self.time_accessor, "output": output, "interpolation": "LINEAR"}));
        self.channels
            .push(json!({"sampler": self.samplers.len() - 1, "target": {"node": node, "path": path}}));
    }

    fn node(&mut self, name: String, parent: Option<usize>) -> usize {
        self.nodes.push(json!({"name": name}));
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
}

fn flat3(v: &[[f64; 3]]) -> Vec<f32> {
    v.iter().flat_map(|p| p.map(|c| c as f32)).collect()
}

fn flat4(v: &[Quat]) -> Vec<f32> {
    v.iter().flat_map(|q| q.map(|c| c as f32)).collect()
}

/// The files of one bake: (file name, bytes); a separate-buffer .gltf adds its .bin file.
pub fn bake_files(plan: &Plan, eval: &Evaluation, bake: &PlannedBake) -> Result<Vec<(String, Vec<u8>)>, String> {
    let tl = plan.timeline;
    let frames = tl.frames();
    let t0 = tl.time(0);
    let times: Vec<f32> = (0..frames).map(|i| (tl.time(i) - t0) as f32).collect();
    let mut b = Builder {
        bin: Vec::new(),
        views: Vec::new(),
        accessors: Vec::new(),
        nodes: Vec::new(),
        roots: Vec::new(),
        samplers: Vec::new(),
        channels: Vec::new(),
        time_accessor: 0,
    };
    let (tmin, tmax) = (
        times.first().copied().unwrap_or(0.0),
        times.last().copied().unwrap_or(0.0),
    );
    b.time_accessor = b.floats(&times, "SCALAR", frames, Some((vec![tmin], vec![tmax])));
    let y_up = bake.y_up_source;
    let pos = |p: [f64; 3]| if y_up { p } else { [p[0], p[2], -p[1]] };
    let rot = |q: Quat| if y_up { q } else { [q[0], q[2], -q[1], q[3]] };
    for item in &bake.items {
        let BakeItem {
            node, output, shape, ..
        } = item;
        let values = &eval.values[*node][*output];
        let w = shape.width();
        let frame = |i: usize| &values[i * w..(i + 1) * w];
        match shape.kind {
            PortKind::Vec3 => {
                let n = b.node(item.name.clone(), None);
                let t: Vec<[f64; 3]> = (0..frames)
                    .map(|i| pos([frame(i)[0], frame(i)[1], frame(i)[2]]))
                    .collect();
                b.channel(n, "translation", &flat3(&t), "VEC3", frames);
            }
            PortKind::Transform => {
                let n = b.node(item.name.clone(), None);
                let t: Vec<[f64; 3]> = (0..frames)
                    .map(|i| pos([frame(i)[0], frame(i)[1], frame(i)[2]]))
                    .collect();
                let mut r: Vec<Quat> = (0..frames)
                    .map(|i| rot(q_normalise([frame(i)[3], frame(i)[4], frame(i)[5], frame(i)[6]])))
                    .collect();
                continuous(&mut r);
                b.channel(n, "translation", &flat3(&t), "VEC3", frames);
                b.channel(n, "rotation", &flat4(&r), "VEC4", frames);
            }
            PortKind::Points => match item.chain {
                None => {
                    for p in 0..shape.points {
                        let n = b.node(format!("{}.p{p}", item.name), None);
                        let t: Vec<[f64; 3]> = (0..frames)
                            .map(|i| {
                                let f = frame(i);
                                pos([f[3 * p], f[3 * p + 1], f[3 * p + 2]])
                            })
                            .collect();
                        b.channel(n, "translation", &flat3(&t), "VEC3", frames);
                    }
                }
                Some(c) => {
                    for s in 0..shape.points / c {
                        chain(&mut b, item, s, c, frames, &|i, j| {
                            let f = frame(i);
                            let k = 3 * (s * c + j);
                            pos([f[k], f[k + 1], f[k + 2]])
                        });
                    }
                }
            },
            PortKind::Scalar | PortKind::Flag => return Err(format!("`{}` cannot be baked", item.name)),
        }
    }
    let stem = std::path::Path::new(&bake.file)
        .file_stem()
        .and_then(|s| s.to_str())
        .unwrap_or("bake")
        .to_owned();
    let mut doc = json!({
        "asset": {
            "version": "2.0",
            "generator": concat!("heft ", env!("CARGO_PKG_VERSION")),
            "extras": {"first_frame": tl.start_frame, "frame_rate": format!("{}/{}", tl.rate_num, tl.rate_den)},
        },
        "scene": 0,
        "scenes": [{"name": stem, "nodes": b.roots}],
        "nodes": b.nodes,
        "animations": [{"name": stem, "channels": b.channels, "samplers": b.samplers}],
        "accessors": b.accessors,
        "bufferViews": b.views,
        "buffers": [{"byteLength": b.bin.len()}],
    });
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
            let mut out = Vec::with_capacity(total as usize);
            out.extend_from_slice(&0x4654_6C67u32.to_le_bytes()); // "glTF"
            out.extend_from_slice(&2u32.to_le_bytes());
            out.extend_from_slice(&total.to_le_bytes());
            out.extend_from_slice(&(json_bytes.len() as u32).to_le_bytes());
            out.extend_from_slice(&0x4E4F_534Au32.to_le_bytes()); // "JSON"
            out.extend_from_slice(&json_bytes);
            out.extend_from_slice(&(bin.len() as u32).to_le_bytes());
            out.extend_from_slice(&0x004E_4942u32.to_le_bytes()); // "BIN\0"
            out.extend_from_slice(&bin);
            Ok(vec![(bake.file.clone(), out)])
        }
        BakeFormat::GltfEmbedded => {
            let data = base64::engine::general_purpose::STANDARD.encode(&b.bin);
            doc["buffers"][0]["uri"] = json!(format!("data:application/octet-stream;base64,{data}"));
            Ok(vec![(
                bake.file.clone(),
                serde_json::to_vec_pretty(&doc).map_err(|e| e.to_string())?,
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
                    serde_json::to_vec_pretty(&doc).map_err(|e| e.to_string())?,
                ),
                (bin_file, b.bin),
            ])
        }
    }
}

/// One strand as a chain of joints.
fn chain(
    b: &mut Builder,
    item: &BakeItem,
    s: usize,
    c: usize,
    frames: usize,
    point: &dyn Fn(usize, usize) -> [f64; 3],
) {
    // World rotation of each joint per frame.
    let mut world: Vec<Vec<Quat>> = vec![Vec::with_capacity(frames); c];
    for i in 0..frames {
        let mut last = [0.0, 0.0, 0.0, 1.0];
        for (j, w) in world.iter_mut().enumerate() {
            if j + 1 < c {
                let (a, z) = (point(i, j), point(i, j + 1));
                let d = [z[0] - a[0], z[1] - a[1], z[2] - a[2]];
                let n = (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt();
                if n > 1e-12 {
                    last = from_y(d.map(|v| v / n));
                }
            }
            w.push(last);
        }
    }
    for w in &mut world {
        continuous(w);
    }
    let mut parent = None;
    for j in 0..c {
        let n = b.node(format!("{}.s{s}.j{j}", item.name), parent);
        let mut t = Vec::with_capacity(frames);
        let mut r = Vec::with_capacity(frames);
        for (i, &own) in world[j].iter().enumerate() {
            if j == 0 {
                t.push(point(i, 0));
                r.push(own);
            } else {
                let inv = q_conj(world[j - 1][i]);
                let (a, z) = (point(i, j - 1), point(i, j));
                t.push(q_rotate(inv, [z[0] - a[0], z[1] - a[1], z[2] - a[2]]));
                r.push(q_mul(inv, own));
            }
        }
        continuous(&mut r);
        b.channel(n, "translation", &flat3(&t), "VEC3", frames);
        b.channel(n, "rotation", &flat4(&r), "VEC4", frames);
        parent = Some(n);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shortest_arc_from_y_takes_y_to_the_direction() {
        for d in [
            [1.0, 0.0, 0.0],
            [0.0, -1.0, 0.0],
            [0.0, 0.0, 1.0],
            [0.6, 0.0, -0.8],
            [0.0, 1.0, 0.0],
        ] {
            let r = q_rotate(from_y(d), [0.0, 1.0, 0.0]);
            for k in 0..3 {
                assert!((r[k] - d[k]).abs() < 1e-12, "{d:?} -> {r:?}");
            }
        }
    }
}

//! glTF 2.0 bakes, read back with the `gltf` crate (a general-purpose reference reader) and
//! compared with the run's own CSV output.

use std::path::Path;

use heft_integration_tests::{fixture_dir, heft_in, install, library, plugin_dir, read_csv};

const GRAPH: &str = "format 1\nrate 24 fps\nframes 10..33\n\
odile = trajectory.jump\n    takeoff_frame = 20\n\
coil = probe.helix\n    count = 12\n\
write odile.head\nwrite odile.com_position as com\nwrite coil.points\n";

/// Runs `GRAPH` plus `bake_block` in a private installation; returns the output folder.
fn run(bake_block: &str) -> (tempfile::TempDir, std::process::Output) {
    let inst = install(&[
        library(plugin_dir(), "heft_trajectory"),
        library(fixture_dir(), "heft_test_plugin_probe"),
    ]);
    let dir = tempfile::tempdir().expect("temp dir");
    let graph = dir.path().join("b.graph");
    std::fs::write(&graph, format!("{GRAPH}{bake_block}")).expect("write");
    let out = dir.path().join("out");
    let o = heft_in(inst.path())
        .arg("run")
        .arg(&graph)
        .arg("--out")
        .arg(&out)
        .output()
        .expect("runs");
    (dir, o)
}

/// heft's Z-up world to glTF's Y-up: (x, y, z) -> (x, z, -y).
fn y_up(p: [f64; 3]) -> [f64; 3] {
    [p[0], p[2], -p[1]]
}

fn close(a: [f32; 3], b: [f64; 3]) -> bool {
    (0..3).all(|k| (f64::from(a[k]) - b[k]).abs() < 1e-5)
}

fn rotate(q: [f32; 4], v: [f32; 3]) -> [f32; 3] {
    let (x, y, z, w) = (q[0], q[1], q[2], q[3]);
    // v + 2 w (u x v) + 2 u x (u x v), u = (x, y, z)
    let c1 = [y * v[2] - z * v[1], z * v[0] - x * v[2], x * v[1] - y * v[0]];
    let c2 = [y * c1[2] - z * c1[1], z * c1[0] - x * c1[2], x * c1[1] - y * c1[0]];
    [
        v[0] + 2.0 * (w * c1[0] + c2[0]),
        v[1] + 2.0 * (w * c1[1] + c2[1]),
        v[2] + 2.0 * (w * c1[2] + c2[2]),
    ]
}

fn q_mul(a: [f32; 4], b: [f32; 4]) -> [f32; 4] {
    [
        a[3] * b[0] + a[0] * b[3] + a[1] * b[2] - a[2] * b[1],
        a[3] * b[1] - a[0] * b[2] + a[1] * b[3] + a[2] * b[0],
        a[3] * b[2] + a[0] * b[1] - a[1] * b[0] + a[2] * b[3],
        a[3] * b[3] - a[0] * b[0] - a[1] * b[1] - a[2] * b[2],
    ]
}

/// Per node name: (translations, rotations) sampled per frame, and the sampler times.
struct Read {
    nodes: Vec<(String, Option<usize>)>, // name, parent
    translation: std::collections::HashMap<usize, Vec<[f32; 3]>>,
    rotation: std::collections::HashMap<usize, Vec<[f32; 4]>>,
    times: Vec<f32>,
    channels: usize,
}

fn read(path: &Path) -> Read {
    let (doc, buffers, _) = gltf::import(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    let mut nodes: Vec<(String, Option<usize>)> = doc
        .nodes()
        .map(|n| (n.name().unwrap_or_default().to_owned(), None))
        .collect();
    for n in doc.nodes() {
        for c in n.children() {
            nodes[c.index()].1 = Some(n.index());
        }
    }
    let mut r = Read {
        nodes,
        translation: Default::default(),
        rotation: Default::default(),
        times: Vec::new(),
        channels: 0,
    };
    let anim = doc.animations().next().expect("one animation");
    for ch in anim.channels() {
        r.channels += 1;
        let reader = ch.reader(|b| Some(&buffers[b.index()]));
        r.times = reader.read_inputs().expect("times").collect();
        let node = ch.target().node().index();
        match reader.read_outputs().expect("outputs") {
            gltf::animation::util::ReadOutputs::Translations(t) => {
                r.translation.insert(node, t.collect());
            }
            gltf::animation::util::ReadOutputs::Rotations(q) => {
                r.rotation.insert(node, q.into_f32().collect());
            }
            _ => panic!("only translations and rotations are baked"),
        }
    }
    r
}

#[test]
fn a_glb_bake_reads_back_with_the_run_csv_values() {
    let (dir, o) = run("bake \"odile.glb\"\n    odile.head\n    odile.com_position\n    coil.points joints 4\n");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let out = dir.path().join("out");
    let r = read(&out.join("odile.glb"));
    // 1 head + 1 COM + the still node the unanchored chains hang under + 3 chains of 4 joints.
    assert_eq!(r.nodes.len(), 3 + 12);
    assert_eq!(r.channels, 2 + 1 + 12 * 2);
    // 24 frames from frame 10: times 0, 1/24, ...
    assert_eq!(r.times.len(), 24);
    for (i, t) in r.times.iter().enumerate() {
        assert!((f64::from(*t) - i as f64 / 24.0).abs() < 1e-6);
    }
    let (_, head) = read_csv(&out.join("odile.head.csv"));
    let (_, com) = read_csv(&out.join("com.csv"));
    let (_, coil) = read_csv(&out.join("coil.points.csv"));
    let idx = |name: &str| {
        r.nodes
            .iter()
            .position(|n| n.0 == name)
            .unwrap_or_else(|| panic!("node {name}"))
    };
    for f in [0, 7, 23] {
        assert!(close(
            r.translation[&idx("odile_head")][f],
            y_up([head[f][2], head[f][3], head[f][4]])
        ));
        assert!(close(
            r.translation[&idx("odile_com_position")][f],
            y_up([com[f][2], com[f][3], com[f][4]])
        ));
        // The chain's joints, composed from the root, land on the points.
        for s in 0..3 {
            let mut pos = [0.0f32; 3];
            let mut rot = [0.0f32, 0.0, 0.0, 1.0];
            for j in 0..4 {
                let n = idx(&format!("coil_points_s{s}_j{j}"));
                assert_eq!(
                    r.nodes[n].1,
                    Some(if j == 0 {
                        idx("coil_points_strands")
                    } else {
                        idx(&format!("coil_points_s{s}_j{}", j - 1))
                    })
                );
                let t = r.translation[&n][f];
                let moved = rotate(rot, t);
                pos = [pos[0] + moved[0], pos[1] + moved[1], pos[2] + moved[2]];
                rot = q_mul(rot, r.rotation[&n][f]);
                let k = 2 + 3 * (4 * s + j);
                assert!(
                    close(pos, y_up([coil[f][k], coil[f][k + 1], coil[f][k + 2]])),
                    "frame {f} chain {s} joint {j}"
                );
                // Each joint's +Y points at the next point.
                if j < 3 {
                    let next = y_up([coil[f][k + 3], coil[f][k + 4], coil[f][k + 5]]);
                    let here = y_up([coil[f][k], coil[f][k + 1], coil[f][k + 2]]);
                    let d: Vec<f64> = (0..3).map(|a| next[a] - here[a]).collect();
                    let len = d.iter().map(|v| v * v).sum::<f64>().sqrt();
                    let axis = rotate(rot, [0.0, 1.0, 0.0]);
                    assert!(
                        (0..3).all(|a| (f64::from(axis[a]) - d[a] / len).abs() < 1e-5),
                        "joint {j} aims"
                    );
                }
            }
        }
    }
}

#[test]
fn gltf_with_separate_and_embedded_buffers_read_back() {
    let (dir, o) = run(
        "bake \"sep/odile.gltf\"\n    odile.hips\n    coil.points\nbake \"odile_embedded.gltf\"\n    buffer = embedded\n    axes = y_up\n    odile.hips\n",
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let out = dir.path().join("out");
    assert!(
        out.join("sep/odile.bin").is_file(),
        "the separate buffer sits beside the .gltf"
    );
    let sep = read(&out.join("sep/odile.gltf"));
    assert_eq!(sep.nodes.len(), 1 + 12, "one node per point without chains");
    let emb = read(&out.join("odile_embedded.gltf"));
    assert_eq!(emb.nodes.len(), 1);
    // `axes = y_up` writes (x, y, z) as they are; the default writes (x, z, -y).
    let raw = emb.translation[&0][0];
    let conv = sep.translation[&sep.nodes.iter().position(|n| n.0 == "odile_hips").expect("hips")][0];
    assert_eq!((raw[0], raw[2], -raw[1]), (conv[0], conv[1], conv[2]));
    assert!(raw[2] > 0.5, "the hips are up in Z in heft's world: {raw:?}");
}

#[test]
fn bake_problems_are_reported_in_place() {
    let (_, o) = run(
        "bake \"x.glb\"\n    buffer = embedded\n    odile.contact\n    coil.points joints 5\nbake \"y.fbx\"\n    odile.head\n",
    );
    assert_eq!(o.status.code(), Some(1));
    let err = String::from_utf8_lossy(&o.stderr);
    for want in [
        "b.graph:12:5: a .glb file always holds its buffer",
        "b.graph:13:5: `odile.contact` is flag: glTF animates positions and rotations",
        "b.graph:14:24: `coil.points` has 12 points, not a whole number of chains of 5",
        "b.graph:15:6: `y.fbx` should end in .glb or .gltf",
    ] {
        assert!(err.contains(want), "missing `{want}` in:\n{err}");
    }
}

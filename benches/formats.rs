//! File formats at production sizes: reading a glTF character and resampling its clip, and
//! writing the glTF bake of many strands.
//!
//! Run: `cargo bench -p heft-benches --bench formats`. Figures are whole calls on one thread;
//! the targets are a 60-joint character with a 10 s clip at 30 fps read in under
//! 50 ms, and a .glb of 1000 strands x 17 joints x 720 frames written at 300 MB/s or more.

use std::hint::black_box;
use std::time::Duration;

use base64::Engine;
use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use heft_formats::character::{Axes, Outside, Request, load};
use heft_runtime::check::Overrides;
use heft_runtime::eval::Evaluation;
use serde_json::json;

/// A 60-joint chain (a long spine of a creature: the joint count matters, not the shape)
/// with a 10 s clip keyed at 30 fps: translation and rotation on every joint, LINEAR.
fn character_file(dir: &std::path::Path) -> std::path::PathBuf {
    let joints = 60;
    let keys = 301;
    let mut bin: Vec<u8> = Vec::new();
    let mut views = Vec::new();
    let mut accessors = Vec::new();
    let mut push = |data: &[f32], ty: &str, count: usize, minmax: bool| {
        let offset = bin.len();
        for v in data {
            bin.extend_from_slice(&v.to_le_bytes());
        }
        views.push(json!({"buffer": 0, "byteOffset": offset, "byteLength": data.len() * 4}));
        let mut a = json!({"bufferView": views.len() - 1, "componentType": 5126, "count": count, "type": ty});
        if minmax {
            a["min"] = json!([data[0]]);
            a["max"] = json!([data[data.len() - 1]]);
        }
        accessors.push(a);
        accessors.len() - 1
    };
    let times: Vec<f32> = (0..keys).map(|k| k as f32 / 30.0).collect();
    let input = push(&times, "SCALAR", keys, true);
    let mut nodes = Vec::new();
    let mut samplers = Vec::new();
    let mut channels = Vec::new();
    for j in 0..joints {
        let mut n = json!({"name": format!("joint{j}"), "translation": [0.0, 0.05, 0.0]});
        if j + 1 < joints {
            n["children"] = json!([j + 1]);
        }
        nodes.push(n);
        let t: Vec<f32> = (0..keys)
            .flat_map(|k| [0.01 * (k as f32 * 0.1 + j as f32).sin(), 0.05, 0.0])
            .collect();
        let r: Vec<f32> = (0..keys)
            .flat_map(|k| {
                let a = 0.2 * (k as f32 * 0.05 + j as f32 * 0.3).sin();
                [0.0, 0.0, a.sin(), a.cos()]
            })
            .collect();
        let out_t = push(&t, "VEC3", keys, false);
        let out_r = push(&r, "VEC4", keys, false);
        for (out, path) in [(out_t, "translation"), (out_r, "rotation")] {
            samplers.push(json!({"input": input, "output": out, "interpolation": "LINEAR"}));
            channels.push(json!({"sampler": samplers.len() - 1, "target": {"node": j, "path": path}}));
        }
    }
    let doc = json!({
        "asset": {"version": "2.0"},
        "scene": 0,
        "scenes": [{"nodes": [0]}],
        "nodes": nodes,
        "animations": [{"name": "crawl", "samplers": samplers, "channels": channels}],
        "accessors": accessors,
        "bufferViews": views,
        "buffers": [{"byteLength": bin.len(), "uri": format!(
            "data:application/octet-stream;base64,{}",
            base64::engine::general_purpose::STANDARD.encode(&bin)
        )}],
    });
    let path = dir.join("creature.gltf");
    std::fs::write(&path, serde_json::to_vec(&doc).expect("json")).expect("write");
    path
}

fn read_character(c: &mut Criterion) {
    let dir = tempfile::tempdir().expect("temp");
    let path = character_file(dir.path());
    let times: Vec<f64> = (0..301).map(|k| f64::from(k) / 30.0).collect();
    let req = Request {
        clip: "",
        axes: Axes::YUp,
        offset: 0.0,
        outside: Outside::Refuse,
    };
    let mut g = c.benchmark_group("formats");
    g.sample_size(20);
    g.bench_function("read a 60-joint character, 10 s at 30 fps", |b| {
        b.iter(|| black_box(load(&path, &req, &times).expect("reads")))
    });
    g.finish();
}

fn write_glb(c: &mut Criterion) {
    let mut reg = heft_formats::registry();
    reg.add_static(heft_xpbd::plugin_table(), "xpbd (linked)")
        .expect("xpbd");
    let text = "format 1\nrate 24 fps\nframes 0..719\n\
                hair = xpbd.strand_fast\n    count = 1000\n    segments = 16\n    placement = line\n\
                bake \"hair.glb\"\n    hair.positions\n";
    let plan = heft_runtime::plan_text("bench.graph", text, &reg, &Overrides::default()).expect("plans");
    // Strands swaying in the plane of their line: the writer's work does not depend on the
    // motion, only on its size.
    let frames = plan.timeline.frames();
    let points = plan.nodes[0].outputs[0].points;
    let mut positions = Vec::with_capacity(frames * points * 3);
    for f in 0..frames {
        for p in 0..points {
            let (s, j) = (p / 17, p % 17);
            let a = 0.3 * (f as f64 * 0.1 + s as f64 * 0.01).sin() * j as f64 / 16.0;
            let r = 0.025 * j as f64;
            positions.extend([0.02 * s as f64 + r * a.sin(), 0.0, 1.5 - r * a.cos()]);
        }
    }
    let values: Vec<Vec<Vec<f64>>> = plan
        .nodes
        .iter()
        .map(|n| {
            n.outputs
                .iter()
                .enumerate()
                .map(|(k, s)| {
                    if k == 0 {
                        positions.clone()
                    } else {
                        vec![0.0; frames * s.width()]
                    }
                })
                .collect()
        })
        .collect();
    let eval = Evaluation {
        values,
        node_time: vec![Duration::ZERO; plan.nodes.len()],
        summaries: vec![Vec::new(); plan.nodes.len()],
        warnings: Vec::new(),
        wall: Duration::ZERO,
    };
    let bytes: usize = heft_formats::gltf_out::bake_files(&plan, &eval, &plan.bakes[0]).expect("bakes")[0]
        .1
        .iter()
        .map(Vec::len)
        .sum();
    let mut g = c.benchmark_group("formats");
    g.sample_size(10);
    g.throughput(Throughput::Bytes(bytes as u64));
    g.bench_function("write the glb of 1000 strands x 17 joints x 720 frames", |b| {
        b.iter(|| black_box(heft_formats::gltf_out::bake_files(&plan, &eval, &plan.bakes[0]).expect("bakes")))
    });
    g.finish();
}

criterion_group!(benches, read_character, write_glb);
criterion_main!(benches);

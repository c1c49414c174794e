//! File formats at production sizes: reading a glTF character and resampling its clip, and
//! writing the glTF bake and the CSV of many strands.
//!
//! Run: `cargo bench -p heft-benches --bench formats`. Figures are whole calls on one thread,
//! in bytes of output per second for the writers; the targets are a 60-joint character with a
//! 10 s clip at 30 fps read in under 50 ms, and the .glb of 1000 strands x 17 joints x 720
//! frames and the CSV of 1000 strands x 17 points written at 300 MB/s or more (the CSV also
//! the way heft wrote it before, as a ratio in the same run).

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
    let (plan, eval) = strands(720, "bake \"hair.glb\"\n    hair.positions\n");
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
    // As `heft run` writes it: laid out, then filled 41 frames at a time (the default window for
    // this node: 32 MiB of its outputs); first the writer's own work (its buffer in memory, as
    // above), then into a staged file in a folder on disk, the .glb written from it at the end,
    // synced and committed (this machine's disk included).
    let frames = plan.timeline.frames();
    let all = heft_runtime::eval::Frames::of(&eval, 0..frames);
    g.bench_function(
        "write the glb of 1000 strands x 17 joints x 720 frames, 41 frames at a time",
        |b| {
            b.iter(|| {
                let store = heft_formats::gltf_out::BinStore::Memory(Vec::new());
                let mut w =
                    heft_formats::gltf_out::BakeWriter::open(&plan, &plan.bakes[0], &all, store).expect("lays out");
                for a in (0..frames).step_by(41) {
                    let window = heft_runtime::eval::Frames::of(&eval, a..(a + 41).min(frames));
                    w.window(&window).expect("fills");
                }
                black_box(w.finish_in_memory().expect("finishes"))
            })
        },
    );
    let dir = tempfile::tempdir().expect("temp dir");
    let out = heft_formats::output::OutputDir::open(&dir.path().join("out")).expect("output folder");
    g.bench_function(
        "write the glb of 1000 strands x 17 joints x 720 frames, 41 frames at a time into a file",
        |b| {
            b.iter(|| {
                let mut staged = out.transaction();
                let target = out.path().join("hair.glb");
                let store = heft_formats::gltf_out::BinStore::File(staged.create(&target).expect("staged"));
                let mut w =
                    heft_formats::gltf_out::BakeWriter::open(&plan, &plan.bakes[0], &all, store).expect("lays out");
                for a in (0..frames).step_by(41) {
                    let window = heft_runtime::eval::Frames::of(&eval, a..(a + 41).min(frames));
                    w.window(&window).expect("fills");
                }
                w.finish_staged(&mut staged, out.path()).expect("finishes");
                black_box(staged.commit().expect("commits"))
            })
        },
    );
    g.finish();
}

/// A plan of one strand node (1000 strands x 17 points, `frames` frames) with the given output
/// lines, and an evaluation whose positions sway in the plane of their line (the writers' work
/// does not depend on the motion, only on its size).
fn strands(frames: usize, lines: &str) -> (heft_runtime::check::Plan, Evaluation) {
    let mut reg = heft_formats::registry();
    reg.add_static(heft_xpbd::plugin_table(), "xpbd (linked)")
        .expect("xpbd");
    let text = format!(
        "format 1\nrate 24 fps\nframes 0..{}\n\
         hair = xpbd.strand_fast\n    count = 1000\n    segments = 16\n    placement = line\n{lines}",
        frames - 1
    );
    let plan = heft_runtime::plan_text("bench.graph", &text, &reg, &Overrides::default()).expect("plans");
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
    (plan, eval)
}

/// The CSV of the positions of 1000 strands x 17 points (51 000 value columns) over 120
/// frames (a fifth of a gigabyte; a row costs the same at any frame count), written by heft's
/// writer into a buffer kept from one iteration to the next, and, as the yardstick, the way
/// heft wrote it before: every value through `format!("{v}")` and the csv crate.
fn write_csv(c: &mut Criterion) {
    let (plan, eval) = strands(120, "write hair.positions\n");
    let w = &plan.writes[0];
    let csv = heft_formats::csv_out::CsvWriter::new(&plan, w.node, w.output).expect("writer");
    let values = &eval.values[w.node][w.output];
    let frames = plan.timeline.frames();
    let mut out: Vec<u8> = Vec::new();
    csv.write_header(&mut out).expect("header");
    csv.write_rows(&mut out, 0..frames, values).expect("rows");
    let bytes = out.len();
    // The yardstick writes the same numbers (in other text where a magnitude is below 1e-5).
    let before = formatted_as_before(&plan, values, csv.width());
    let rows = |t: &[u8]| -> Vec<Vec<u64>> {
        std::str::from_utf8(t)
            .expect("utf-8")
            .lines()
            .skip(1)
            .step_by(10)
            .map(|l| {
                l.split(',')
                    .map(|c| c.parse::<f64>().expect("a number").to_bits())
                    .collect()
            })
            .collect()
    };
    assert!(rows(&before) == rows(&out), "the same numbers, two ways");
    let mut g = c.benchmark_group("formats");
    g.sample_size(10);
    g.throughput(Throughput::Bytes(bytes as u64));
    g.bench_function("write the CSV of 1000 strands x 17 points x 120 frames", |b| {
        b.iter(|| {
            out.clear();
            csv.write_header(&mut out).expect("header");
            csv.write_rows(&mut out, 0..frames, values).expect("rows");
            black_box(out.len())
        })
    });
    g.throughput(Throughput::Bytes(before.len() as u64));
    g.bench_function(
        "the same CSV as heft wrote it before (format! and the csv crate)",
        |b| b.iter(|| black_box(formatted_as_before(&plan, values, csv.width()).len())),
    );
    // The same positions as a Parquet long table (one row per frame and particle).
    let (plan, eval) = strands(120, "write hair.positions format parquet\n");
    let w = &plan.writes[0];
    let parquet = heft_formats::parquet_out::ParquetWriter::new(&plan, w).expect("writer");
    let values = &eval.values[w.node][w.output];
    let write = |out: Vec<u8>| -> Vec<u8> {
        let mut f = parquet.start(out).expect("start");
        f.write_frames(0..frames, values).expect("rows");
        f.finish().expect("finish")
    };
    let mut out = write(Vec::new());
    g.throughput(Throughput::Bytes(out.len() as u64));
    g.bench_function(
        "write the Parquet table of 1000 strands x 17 points x 120 frames",
        |b| {
            b.iter(|| {
                out.clear();
                out = write(std::mem::take(&mut out));
                black_box(out.len())
            })
        },
    );
    g.finish();
}

/// The CSV rows the way heft wrote them before this writer (the header aside, which is the
/// same line either way).
fn formatted_as_before(plan: &heft_runtime::check::Plan, values: &[f64], width: usize) -> Vec<u8> {
    let w = &plan.writes[0];
    let header = heft_formats::csv_out::CsvWriter::new(plan, w.node, w.output).expect("writer");
    let mut head = Vec::new();
    header.write_header(&mut head).expect("header");
    let mut w = csv::Writer::from_writer(head);
    let mut row: Vec<String> = Vec::with_capacity(width + 2);
    for i in 0..plan.timeline.frames() {
        row.clear();
        row.push(plan.timeline.frame_number(i).to_string());
        row.push(format!("{}", plan.timeline.time(i)));
        row.extend(values[i * width..(i + 1) * width].iter().map(|v| format!("{v}")));
        w.write_record(&row).expect("row");
    }
    w.into_inner().expect("text")
}

criterion_group!(benches, read_character, write_glb, write_csv);
criterion_main!(benches);

//! The cost of the plugin boundary: one node evaluated over a shot through the dynamically
//! loaded library, through the same function table linked statically, and as a plain Rust
//! call with no boundary at all. Report the ratios of one run (dynamic / direct); the
//! target is at most 1.05.
//!
//! Run: `cargo bench -p heft-benches --bench plugin_call`

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use heft_node_sdk::guest::Io;
use heft_node_sdk::host::Plugin;
use heft_node_sdk::{Node, ParamValue, Params, Timeline};
use heft_trajectory::Keyed;

/// A ten-second shot at 24 fps, and a keyed centre-of-mass path with a key every 0.25 s.
fn setup() -> (Timeline, Vec<ParamValue>) {
    let timeline = Timeline {
        start_frame: 0,
        frame_count: 240,
        rate_num: 24,
        rate_den: 1,
    };
    let keys: Vec<(f64, [f64; 3])> = (0..=40)
        .map(|k| {
            let t = f64::from(k) * 0.25;
            (t, [0.3 * t, 0.1 * (2.0 * t).sin(), 1.0 + 0.05 * (3.0 * t).cos()])
        })
        .collect();
    (timeline, vec![ParamValue::Keys(keys)])
}

fn through(plugin: &Plugin, index: u32, params: &[u8], timeline: Timeline, out: &mut [Vec<f64>]) {
    let mut views: Vec<(&mut [f64], usize)> = out.iter_mut().map(|v| (v.as_mut_slice(), 3)).collect();
    plugin
        .evaluate(index, params, timeline, &[], &mut views, &mut [])
        .expect("evaluates");
}

fn bench(c: &mut Criterion) {
    let (timeline, values) = setup();
    let bytes = Plugin::encode_params(&values).expect("encodes");
    let frames = timeline.frames();
    let mut out = vec![vec![0.0; frames * 3]; 3];

    let path = heft_benches::build_plugin("heft-trajectory", "heft_trajectory");
    let dynamic = Plugin::load(&path).expect("loads");
    let linked = Plugin::from_static(heft_trajectory::plugin_table(), "linked").expect("static table");
    let index = dynamic
        .descriptor()
        .nodes
        .iter()
        .position(|n| n.name == "keyed")
        .expect("keyed") as u32;

    let mut g = c.benchmark_group("keyed_240_frames");
    g.bench_function("dynamic", |b| {
        b.iter(|| through(&dynamic, index, black_box(&bytes), timeline, &mut out))
    });
    g.bench_function("static_table", |b| {
        b.iter(|| through(&linked, index, black_box(&bytes), timeline, &mut out))
    });
    let spec = Keyed::spec();
    g.bench_function("direct", |b| {
        b.iter(|| {
            let params = Params::new(&spec, black_box(values.clone())).expect("params");
            let outs: Vec<&mut [f64]> = out.iter_mut().map(Vec::as_mut_slice).collect();
            let mut io = Io::new(timeline, &spec, vec![], outs, vec![3, 3, 3]);
            Keyed::evaluate(&params, &mut io).expect("evaluates");
        })
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);

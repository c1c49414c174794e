//! A node of many strands splits its lane groups across the threads the host gives it
//! (`Io::threads`, ABI 1.2), and gives the same bits for any count: positions, velocities,
//! momentum and energy, through the plugin boundary the host calls (`evaluate_with_threads`).

use heft_node_sdk::colliders::{self, Capsule};
use heft_node_sdk::field;
use heft_node_sdk::host::Plugin;
use heft_strand_common::Setup;
use heft_strand_common::testing::{StoreAfter, choice, int, num, params, run_setup_threads, timeline, transform};
use heft_xpbd::strand::frame_threads;

/// 75 strands of 32 particles: five groups of 16 lanes, the last with 11 strands and 5 padding
/// lanes; 120 substeps a frame, enough work per frame for 4 threads.
fn changes() -> Vec<(&'static str, heft_node_sdk::ParamValue)> {
    vec![
        int("count", 75),
        choice("placement", "line"),
        num("spacing", 0.01),
        int("segments", 31),
        int("substeps", 120),
        num("drag", 2.0),
    ]
}

/// Every output of the node type `name` over 9 frames on a swaying anchor, in a wind that varies
/// in space and time, against a sphere some strands swing into, allowed `threads` threads.
fn outputs(name: &str, threads: usize) -> Vec<Vec<f64>> {
    outputs_in(name, threads, &[], &[])
}

/// [`outputs`] with more parameter changes, evaluated in windows of the given frame counts
/// (`Plugin::advance`, ABI 1.3) and joined; whole when `windows` is empty.
fn outputs_in(
    name: &str,
    threads: usize,
    more: &[(&'static str, heft_node_sdk::ParamValue)],
    windows: &[usize],
) -> Vec<Vec<f64>> {
    let plugin = Plugin::from_static(heft_xpbd::plugin_table(), "xpbd (linked)").expect("loads");
    let index = plugin
        .descriptor()
        .nodes
        .iter()
        .position(|n| n.name == name)
        .expect("the node type");
    let spec = &plugin.descriptor().nodes[index];
    let mut all = changes();
    all.extend(more.iter().cloned());
    let p = params(spec, &all);
    let bytes = Plugin::encode_params(p.values()).expect("encodes");
    let tl = timeline(24, 9);
    let anchor = transform(tl, |t| ([0.0, 0.2 * t, 1.0 + 0.1 * t * t], [0.0, 0.0, 0.0, 1.0]));
    let dims = [4, 4, 4];
    let wind_width = 3 * field::points_for(4, 4, 4);
    let mut wind = vec![0.0; wind_width * tl.frames()];
    for (i, out) in wind.chunks_exact_mut(wind_width).enumerate() {
        let t = tl.time(i);
        field::write_frame(out, dims, 0.5, [-0.75, -0.75, 0.0], |p| {
            [2.0 * (3.0 * p[1] + t).sin(), 1.5 * p[0], 0.5 * p[2]]
        });
    }
    let sphere = [Capsule::sphere([0.1, 0.06, 0.75], 0.08)];
    let list_width = 3 * colliders::points_for(1);
    let mut list = vec![0.0; list_width * tl.frames()];
    for out in list.chunks_exact_mut(list_width) {
        colliders::write_frame(out, &sphere);
    }
    let given = [
        ("anchor", (anchor, 7)),
        ("wind", (wind, wind_width)),
        ("colliders", (list, list_width)),
    ];
    let inputs: Vec<(&[f64], usize)> = spec
        .inputs
        .iter()
        .map(|port| match given.iter().find(|(n, _)| *n == port.name) {
            Some((_, (v, w))) => (v.as_slice(), *w),
            None => (&[][..], port.kind.width(0)),
        })
        .collect();
    let points = plugin
        .output_points(
            index as u32,
            &bytes,
            tl,
            &inputs.iter().map(|i| i.1).collect::<Vec<_>>(),
            4,
        )
        .expect("shapes");
    let widths = [3 * points[0], 3 * points[1], 3, 1];
    if !windows.is_empty() {
        assert_eq!(windows.iter().sum::<usize>(), tl.frames());
        assert!(plugin.windowed(index as u32), "{name} runs in windows");
        let mut carry = heft_node_sdk::host::Carry::new(index as u32);
        let mut joined: Vec<Vec<f64>> = vec![Vec::new(); 4];
        let mut first = 0;
        for &n in windows {
            let mut bufs: Vec<Vec<f64>> = widths.iter().map(|w| vec![f64::NAN; w * n]).collect();
            let mut views: Vec<(&mut [f64], usize)> = bufs
                .iter_mut()
                .zip(widths)
                .map(|(b, w)| (b.as_mut_slice(), w))
                .collect();
            let window = heft_node_sdk::abi::Window {
                first: first as u64,
                count: n as u64,
            };
            plugin
                .advance(
                    index as u32,
                    &bytes,
                    tl,
                    window,
                    &inputs,
                    &mut views,
                    &mut [],
                    threads,
                    &mut carry,
                )
                .expect("advances");
            for (j, b) in joined.iter_mut().zip(bufs) {
                j.extend(b);
            }
            first += n;
        }
        return joined;
    }
    let mut bufs: Vec<Vec<f64>> = widths.iter().map(|w| vec![f64::NAN; w * tl.frames()]).collect();
    let mut views: Vec<(&mut [f64], usize)> = bufs
        .iter_mut()
        .zip(widths)
        .map(|(b, w)| (b.as_mut_slice(), w))
        .collect();
    plugin
        .evaluate_with_threads(index as u32, &bytes, tl, &inputs, &mut views, &mut [], threads)
        .expect("evaluates");
    bufs
}

fn bits(outputs: &[Vec<f64>]) -> Vec<Vec<u64>> {
    outputs
        .iter()
        .map(|o| o.iter().map(|v| v.to_bits()).collect())
        .collect()
}

#[test]
fn many_strands_give_the_same_bits_on_any_number_of_threads() {
    let spec = <heft_xpbd::XpbdStrand as heft_node_sdk::Node>::spec();
    let setup = Setup::from_params(&params(&spec, &changes())).expect("a valid setup");
    // The scene is split: as many threads as allowed, up to 4 (so the test compares real splits).
    for t in 1..=4 {
        assert_eq!(frame_threads(&setup, t), t, "threads used when {t} are allowed");
    }
    for name in ["strand", "strand_fast"] {
        let one = outputs(name, 1);
        // The strands moved, and some rest on the sphere (the colliders' scratch is in use).
        let tl = timeline(24, 9);
        let last = &one[0][(tl.frames() - 1) * one[0].len() / tl.frames()..];
        let touching = last
            .chunks_exact(3)
            .filter(|p| {
                let d = [p[0] - 0.1, p[1] - 0.06, p[2] - 0.75];
                ((d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt() - 0.08).abs() < 1e-3
            })
            .count();
        assert!(touching > 0, "{name}: no particle on the sphere");
        eprintln!("{name}: {touching} particles on the sphere");
        for threads in 2..=4 {
            let other = outputs(name, threads);
            for (k, port) in ["positions", "velocities", "momentum", "energy"].iter().enumerate() {
                assert!(
                    bits(&one)[k] == bits(&other)[k],
                    "{name}: `{port}` differs between 1 and {threads} threads"
                );
            }
        }
    }
}

/// A node evaluated in windows of frames (ABI 1.3, as `heft run` evaluates long shots) gives
/// the bits of its whole evaluation, whatever the windows, with threads, wind, a collider and a
/// settled start (whose relaxation runs in the first window only).
#[test]
fn windows_of_any_size_give_the_bits_of_the_whole_evaluation() {
    let settled = [choice("start", "settled")];
    for name in ["strand", "strand_fast"] {
        let whole = bits(&outputs_in(name, 2, &settled, &[]));
        for windows in [&[9][..], &[1; 9], &[4, 4, 1], &[2, 5, 2]] {
            assert_eq!(
                bits(&outputs_in(name, 2, &settled, windows)),
                whole,
                "{name} in windows {windows:?}"
            );
        }
    }
}

/// Each thread writes the positions and velocities of its strands into the outputs as it
/// finishes them (`Method::frame_and_store`): the bits the frame loop's `Method::store` writes
/// after the frame, with 1 to 3 threads, the last lane group's 5 padding lanes among them.
#[test]
fn outputs_written_as_a_frame_runs_are_the_bits_of_the_store_after_it() {
    fn compare<N: heft_node_sdk::Node, M: heft_strand_common::Method>(name: &str) {
        let tl = timeline(24, 9);
        let setup = Setup::from_params(&params(&N::spec(), &changes())).expect("a valid setup");
        let anchor = transform(tl, |t| ([0.0, 0.2 * t, 1.0 + 0.1 * t * t], [0.0, 0.0, 0.0, 1.0]));
        let inputs = [("anchor", anchor)];
        for threads in 1..=3 {
            assert_eq!(
                frame_threads(&setup, threads),
                threads,
                "threads used when {threads} are allowed"
            );
            let written = run_setup_threads::<N, M>(&setup, tl, &inputs, threads).expect("runs");
            let stored = run_setup_threads::<N, StoreAfter<M>>(&setup, tl, &inputs, threads).expect("runs");
            let per_frame = 3 * written.n;
            let last = &written.positions[per_frame * (tl.frames() - 1)..];
            assert!(written.positions[..per_frame] != *last, "{name}: the strands moved");
            for (port, a, b) in [
                ("positions", &written.positions, &stored.positions),
                ("velocities", &written.velocities, &stored.velocities),
                ("momentum", &written.momentum, &stored.momentum),
                ("energy", &written.energy, &stored.energy),
            ] {
                let differ = a
                    .iter()
                    .zip(b.iter())
                    .filter(|(x, y)| x.to_bits() != y.to_bits())
                    .count();
                assert!(
                    a.len() == b.len() && differ == 0,
                    "{name}, {threads} threads: {differ} values of `{port}` differ"
                );
            }
        }
    }
    compare::<heft_xpbd::XpbdStrand, heft_xpbd::Xpbd<f64>>("xpbd.strand");
    compare::<heft_xpbd::XpbdStrandF32, heft_xpbd::Xpbd<f32>>("xpbd.strand_fast");
}

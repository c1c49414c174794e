//! The `noise.gust` and `noise.jitter` nodes, and the plugin's specs.

mod common;

use common::{run, still, timeline};
use heft_node_sdk::{Node, NodeSpec, ParamType, ParamValue, Params};
use heft_noise::{Gust, Jitter, Wind};
use proptest::prelude::*;

fn bits(v: &[f64]) -> Vec<u64> {
    v.iter().map(|x| x.to_bits()).collect()
}

#[test]
fn every_node_documents_itself_and_its_defaults_are_valid() {
    for spec in [Gust::spec(), Jitter::spec(), Wind::spec()] {
        assert!(!spec.doc.is_empty() && !spec.notes.is_empty(), "{}", spec.name);
        assert!(Params::defaults(&spec).is_ok(), "{}", spec.name);
        for p in &spec.params {
            assert!(!p.doc.is_empty(), "{}.{}", spec.name, p.name);
            match (&p.ty, &p.default) {
                (ParamType::Number { min, max, .. }, Some(ParamValue::Number(d))) => {
                    assert!(min <= d && d <= max, "{}.{}", spec.name, p.name)
                }
                (ParamType::Integer { min, max }, Some(ParamValue::Integer(d))) => {
                    assert!(min <= d && d <= max, "{}.{}", spec.name, p.name)
                }
                (ParamType::Vec3 { min, max, .. }, Some(ParamValue::Vec3(d))) => {
                    assert!(d.iter().all(|c| min <= c && c <= max), "{}.{}", spec.name, p.name)
                }
                (ParamType::Bool, Some(ParamValue::Bool(_))) => {}
                other => panic!("{}.{}: {other:?}", spec.name, p.name),
            }
        }
    }
    let names: Vec<String> = [Gust::spec(), Jitter::spec(), Wind::spec()]
        .into_iter()
        .map(|s: NodeSpec| s.name)
        .collect();
    assert_eq!(names, ["gust", "jitter", "wind"]);
}

// ---- gust ----

fn gust(tl: heft_node_sdk::Timeline, set: &[(&str, ParamValue)]) -> Vec<f64> {
    run::<Gust>(tl, set, &[]).expect("evaluates").outputs.remove(0)
}

#[test]
fn the_gust_is_repeatable_by_seed_and_differs_between_seeds() {
    let tl = timeline(0, 240, 24);
    let a = gust(tl, &[("seed", ParamValue::Integer(3))]);
    let b = gust(tl, &[("seed", ParamValue::Integer(3))]);
    let c = gust(tl, &[("seed", ParamValue::Integer(4))]);
    assert_eq!(bits(&a), bits(&b));
    assert!(a.iter().zip(&c).filter(|(x, y)| x != y).count() > 200);
}

#[test]
fn a_frame_gets_the_same_value_whatever_frames_the_call_covers() {
    // Purity over the timeline: frame 30 is frame 30, first of its call or not.
    let whole = gust(timeline(0, 48, 24), &[]);
    let part = gust(timeline(30, 18, 24), &[]);
    assert_eq!(bits(&whole[30..]), bits(&part));
}

#[test]
fn the_gust_varies_around_its_mean_on_the_time_scale_of_its_frequency() {
    // 100 s at 24 fps, 0.5 Hz: the sample mean of the departures is near the mean (the
    // noise is odd-symmetric over the gradient set, so its expectation is zero: Perlin
    // 2002's gradients come in opposite pairs), its RMS close to 0.17 amplitude (measured
    // when writing the node, with other seeds and points), and frames 1/24 s apart are
    // close (a smooth series) while the series does move.
    let v = gust(timeline(0, 2400, 24), &[("seed", ParamValue::Integer(12))]);
    let n = v.len() as f64;
    let dev: Vec<f64> = v.iter().map(|x| (x - 0.5) / 0.3).collect();
    let mean = dev.iter().sum::<f64>() / n;
    let rms = (dev.iter().map(|d| d * d).sum::<f64>() / n).sqrt();
    assert!(mean.abs() < 0.05, "mean departure {mean}");
    assert!((0.1..0.25).contains(&rms), "RMS departure {rms}");
    let step = dev.windows(2).map(|w| (w[1] - w[0]).abs()).fold(0.0, f64::max);
    assert!(step < 0.1, "largest step between frames {step}");
    // Frequency 0: a constant.
    let flat = gust(timeline(0, 10, 24), &[("frequency", ParamValue::Number(0.0))]);
    assert!(flat.iter().all(|x| *x == flat[0]));
}

#[test]
fn the_gust_warns_when_its_finest_octave_aliases() {
    // Nyquist (Shannon 1949): 24 fps shows up to 12 Hz. 2 Hz with 3 octaves reaches
    // 8 Hz (no warning); 4 Hz reaches 16 Hz.
    let ok = run::<Gust>(timeline(0, 5, 24), &[("frequency", ParamValue::Number(2.0))], &[]).expect("ok");
    assert!(ok.warnings.is_empty(), "{:?}", ok.warnings);
    let bad = run::<Gust>(timeline(0, 5, 24), &[("frequency", ParamValue::Number(4.0))], &[]).expect("ok");
    assert!(
        bad.warnings.iter().any(|w| w.contains("16 Hz") && w.contains("alias")),
        "{:?}",
        bad.warnings
    );
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(200))]

    #[test]
    fn the_gust_stays_within_mean_plus_minus_amplitude(
        seed in 0i64..=4_294_967_295, mean in -100.0..100.0f64, amplitude in 0.0..100.0f64,
        frequency in 0.0..50.0f64, octaves in 1i64..=8, gain in 0.0..=1.0f64, start in -10_000i64..10_000,
    ) {
        let set = [
            ("seed", ParamValue::Integer(seed)),
            ("mean", ParamValue::Number(mean)),
            ("amplitude", ParamValue::Number(amplitude)),
            ("frequency", ParamValue::Number(frequency)),
            ("octaves", ParamValue::Integer(octaves)),
            ("gain", ParamValue::Number(gain)),
        ];
        let v = gust(timeline(start, 48, 24), &set);
        for x in v {
            prop_assert!(x.is_finite());
            // Bound up to the round-off of mean + amplitude * (a number within [-1, 1]).
            prop_assert!((x - mean).abs() <= amplitude * (1.0 + 1e-12) + 1e-12, "{} vs {} +- {}", x, mean, amplitude);
        }
    }
}

// ---- jitter ----

/// Conjugate (inverse of a unit quaternion), (x, y, z, w) order.
fn conj(q: [f64; 4]) -> [f64; 4] {
    [-q[0], -q[1], -q[2], q[3]]
}

fn qmul(a: [f64; 4], b: [f64; 4]) -> [f64; 4] {
    // Hamilton product, written out from (v1, w1)(v2, w2) = (w1 v2 + w2 v1 + v1 x v2,
    // w1 w2 - v1 . v2) (Kuipers 1999, Quaternions and Rotation Sequences, sec. 5.5 --
    // section from memory).
    let (v1, w1, v2, w2) = ([a[0], a[1], a[2]], a[3], [b[0], b[1], b[2]], b[3]);
    let cross = [
        v1[1] * v2[2] - v1[2] * v2[1],
        v1[2] * v2[0] - v1[0] * v2[2],
        v1[0] * v2[1] - v1[1] * v2[0],
    ];
    let dot = v1[0] * v2[0] + v1[1] * v2[1] + v1[2] * v2[2];
    [
        w1 * v2[0] + w2 * v1[0] + cross[0],
        w1 * v2[1] + w2 * v1[1] + cross[1],
        w1 * v2[2] + w2 * v1[2] + cross[2],
        w1 * w2 - dot,
    ]
}

/// Rotates v by q as q (v, 0) q*.
fn rot(q: [f64; 4], v: [f64; 3]) -> [f64; 3] {
    let r = qmul(qmul(q, [v[0], v[1], v[2], 0.0]), conj(q));
    [r[0], r[1], r[2]]
}

/// Rotation vector (axis times angle) of a unit quaternion, angle in [0, pi].
fn log(q: [f64; 4]) -> [f64; 3] {
    let q = if q[3] < 0.0 { q.map(|c| -c) } else { q };
    let s = (q[0] * q[0] + q[1] * q[1] + q[2] * q[2]).sqrt();
    if s < 1e-300 {
        return [0.0; 3];
    }
    let angle = 2.0 * s.atan2(q[3]);
    [q[0] / s * angle, q[1] / s * angle, q[2] / s * angle]
}

/// A walking, turning input: translation along x, rotation about z by 0.1 rad per frame
/// then tilted 0.3 rad about x.
fn moving_input(frames: usize) -> Vec<f64> {
    (0..frames)
        .flat_map(|i| {
            let yaw = 0.1 * i as f64;
            let qz = [0.0, 0.0, (yaw / 2.0).sin(), (yaw / 2.0).cos()];
            let qx = [(0.15f64).sin(), 0.0, 0.0, (0.15f64).cos()];
            let q = qmul(qz, qx);
            [0.05 * i as f64, 1.0, 1.7, q[0], q[1], q[2], q[3]]
        })
        .collect()
}

#[test]
fn jitter_stays_within_its_amplitudes_in_the_transforms_own_frame() {
    let frames = 200;
    let input = moving_input(frames);
    let (amp, rot_amp) = (0.02, 0.05);
    let set = [
        ("seed", ParamValue::Integer(21)),
        ("amplitude", ParamValue::Number(amp)),
        ("rotation_amplitude", ParamValue::Number(rot_amp)),
        ("frequency", ParamValue::Number(1.5)),
    ];
    let out = run::<Jitter>(timeline(0, frames as u64, 24), &set, &[&input]).expect("evaluates");
    let (mut peak_offset, mut peak_rot) = (0.0f64, 0.0f64);
    for i in 0..frames {
        let a = &input[7 * i..7 * i + 7];
        let b = &out.outputs[0][7 * i..7 * i + 7];
        let qa = [a[3], a[4], a[5], a[6]];
        let qb = [b[3], b[4], b[5], b[6]];
        let norm = qb.iter().map(|c| c * c).sum::<f64>().sqrt();
        assert!((norm - 1.0).abs() < 1e-14, "frame {i}: |q| = {norm}");
        // The offset seen in the input's own frame: R(qa)^T (b - a).
        let local = rot(conj(qa), [b[0] - a[0], b[1] - a[1], b[2] - a[2]]);
        // The rotation relative to the input, in its own frame: qa* qb.
        let r = log(qmul(conj(qa), qb));
        for k in 0..3 {
            assert!(local[k].abs() <= amp * (1.0 + 1e-9), "frame {i}: offset {local:?}");
            assert!(r[k].abs() <= rot_amp * (1.0 + 1e-9), "frame {i}: rotation {r:?}");
            peak_offset = peak_offset.max(local[k].abs());
            peak_rot = peak_rot.max(r[k].abs());
        }
    }
    // It does shake: the peaks reach a fair part of the bounds over 200 frames.
    assert!(
        peak_offset > 0.2 * amp && peak_rot > 0.2 * rot_amp,
        "{peak_offset} {peak_rot}"
    );
}

#[test]
fn zero_amplitudes_pass_the_transform_through() {
    let input = moving_input(30);
    let set = [
        ("amplitude", ParamValue::Number(0.0)),
        ("rotation_amplitude", ParamValue::Number(0.0)),
    ];
    let out = run::<Jitter>(timeline(0, 30, 24), &set, &[&input]).expect("evaluates");
    for (a, b) in input.iter().zip(&out.outputs[0]) {
        assert!((a - b).abs() < 1e-15, "{a} vs {b}");
    }
}

#[test]
fn a_pure_rotation_jitter_turns_about_the_transforms_own_axes() {
    // With the input turned 90 degrees about z, a shake about its own x axis is a turn
    // about world y (rotating x to y by 90 degrees about z, by hand). The position stays.
    let h = std::f64::consts::FRAC_PI_4;
    let input = still([1.0, 2.0, 3.0], [0.0, 0.0, h.sin(), h.cos()], 48);
    let set = [
        ("amplitude", ParamValue::Number(0.0)),
        ("rotation_amplitude", ParamValue::Number(0.2)),
    ];
    let out = run::<Jitter>(timeline(0, 48, 24), &set, &[&input]).expect("evaluates");
    for i in 0..48 {
        let b = &out.outputs[0][7 * i..7 * i + 7];
        assert_eq!(&b[..3], &[1.0, 2.0, 3.0]);
        let world = log(qmul([b[3], b[4], b[5], b[6]], conj([0.0, 0.0, h.sin(), h.cos()])));
        let local = log(qmul(conj([0.0, 0.0, h.sin(), h.cos()]), [b[3], b[4], b[5], b[6]]));
        // World-frame rotation vector = R(q_in) local rotation vector: (lx, ly, lz) -> (-ly, lx, lz).
        assert!(
            (world[0] + local[1]).abs() < 1e-12 && (world[1] - local[0]).abs() < 1e-12,
            "{world:?} {local:?}"
        );
        assert!((world[2] - local[2]).abs() < 1e-12);
    }
}

#[test]
fn jitter_reports_bad_quaternions_with_their_frame() {
    let mut input = still([0.0; 3], [0.0, 0.0, 0.0, 1.0], 5);
    input[7 * 3 + 3..7 * 3 + 7].copy_from_slice(&[0.0; 4]);
    let e = run::<Jitter>(timeline(100, 5, 24), &[], &[&input]).expect_err("zero quaternion");
    assert!(e.0.contains("zero rotation quaternion at frame 103"), "{e}");

    let mut input = still([0.0; 3], [0.0, 0.0, 0.0, 1.0], 5);
    input[7 + 6] = 2.0;
    let out = run::<Jitter>(timeline(100, 5, 24), &[], &[&input]).expect("normalises");
    assert!(
        out.warnings
            .iter()
            .any(|w| w.contains("1 frame(s), first at frame 101")),
        "{:?}",
        out.warnings
    );
    let q = &out.outputs[0][7 + 3..7 + 7];
    assert!((q.iter().map(|c| c * c).sum::<f64>() - 1.0).abs() < 1e-14);

    let e = run::<Jitter>(timeline(0, 6, 24), &[], &[&input]).expect_err("short input");
    assert!(e.0.contains("6 frames of 7"), "{e}");
}

#[test]
fn jitter_is_repeatable_by_seed() {
    let input = moving_input(24);
    let a = run::<Jitter>(timeline(0, 24, 24), &[("seed", ParamValue::Integer(1))], &[&input]).expect("a");
    let b = run::<Jitter>(timeline(0, 24, 24), &[("seed", ParamValue::Integer(1))], &[&input]).expect("b");
    let c = run::<Jitter>(timeline(0, 24, 24), &[("seed", ParamValue::Integer(2))], &[&input]).expect("c");
    assert_eq!(bits(&a.outputs[0]), bits(&b.outputs[0]));
    assert_ne!(a.outputs[0], c.outputs[0]);
}

//! The glTF character import against an independent reference: the fixture
//! `tests/fixtures/character/juno_expected.json` was computed by the script that wrote the
//! character (`make_character.py`, pygltflib and numpy), from its own implementation of the
//! glTF 2.0 specification (section 3.5.3 Transformations, 3.11 Animations, Appendix C
//! Interpolation). heft's reader shares no code with it.

use std::path::{Path, PathBuf};

use heft_formats::character::{Axes, Character, Outside, Request, load};
use serde_json::Value;

fn fixtures() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../tests/fixtures/character")
}

fn data() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../data")
}

fn expected() -> Value {
    let text = std::fs::read_to_string(fixtures().join("juno_expected.json")).expect("reference");
    serde_json::from_str(&text).expect("json")
}

fn req(clip: &str) -> Request<'_> {
    Request {
        clip,
        axes: Axes::YUp,
        offset: 0.0,
        outside: Outside::Refuse,
    }
}

fn v3(v: &Value) -> [f64; 3] {
    [0, 1, 2].map(|k| v[k].as_f64().expect("number"))
}

fn v4(v: &Value) -> [f64; 4] {
    [0, 1, 2, 3].map(|k| v[k].as_f64().expect("number"))
}

fn node(ch: &Character, name: &str) -> usize {
    ch.nodes.iter().position(|n| n.name == name).expect(name)
}

/// Every node's world transform at every reference time (k/24 s and k/30 s over each clip):
/// translation to 1e-9 m, rotation to 1e-9, scale to 1e-12.
#[test]
fn world_transforms_match_the_reference_at_and_between_keys() {
    let exp = expected();
    for (clip, c) in exp["clips"].as_object().expect("clips") {
        let samples = c["samples"].as_array().expect("samples");
        let times: Vec<f64> = samples.iter().map(|s| s["t"].as_f64().expect("t")).collect();
        let ch = load(&data().join("juno.glb"), &req(clip), &times).expect("reads");
        assert_eq!(ch.clip.0, *clip);
        assert!((ch.clip_range.1 - c["end"].as_f64().expect("end")).abs() < 1e-7);
        let mut compared = 0;
        let mut worst = 0.0f64;
        for (f, s) in samples.iter().enumerate() {
            for (name, want) in s["nodes"].as_object().expect("nodes") {
                let w = &ch.world[node(&ch, name)][f];
                let (q, scale) = w.rotation_scale().expect("no shear in Juno");
                let (t, r, sc) = (v3(&want["t"]), v4(&want["r"]), v3(&want["s"]));
                let sign = if q.iter().zip(&r).map(|(a, b)| a * b).sum::<f64>() < 0.0 {
                    -1.0
                } else {
                    1.0
                };
                for k in 0..3 {
                    worst = worst.max((w.t[k] - t[k]).abs());
                    assert!(
                        (w.t[k] - t[k]).abs() < 1e-9,
                        "{clip} t={} {name}: {:?} vs {t:?}",
                        times[f],
                        w.t
                    );
                    assert!(
                        (scale[k] - sc[k]).abs() < 1e-12,
                        "{clip} {name} scale {scale:?} vs {sc:?}"
                    );
                }
                for k in 0..4 {
                    assert!(
                        (sign * q[k] - r[k]).abs() < 1e-9,
                        "{clip} t={} {name}: rotation {q:?} vs {r:?}",
                        times[f]
                    );
                }
                compared += 1;
            }
        }
        assert!(compared > 1000, "{clip}: {compared} comparisons");
        eprintln!("{clip}: {compared} node-times compared, worst translation error {worst:e} m");
    }
}

/// At a key's time the local value is the stored key value exactly (32-bit floats widened).
#[test]
fn key_values_are_reproduced_exactly_at_keys() {
    let exp = expected();
    for (clip, keys) in exp["keys"].as_object().expect("keys") {
        let end = exp["clips"][clip]["end"].as_f64().expect("end");
        for ch_keys in keys.as_array().expect("channels") {
            let times: Vec<f64> = ch_keys["times"]
                .as_array()
                .expect("times")
                .iter()
                .map(|t| t.as_f64().expect("t"))
                .filter(|&t| t <= end)
                .collect();
            let ch = load(&data().join("juno.glb"), &req(clip), &times).expect("reads");
            let n = node(&ch, ch_keys["node"].as_str().expect("node"));
            let values = ch_keys["values"].as_array().expect("values");
            for (k, _) in times.iter().enumerate() {
                // The reference lists a CUBICSPLINE channel's tangents apart from its values.
                let value = &values[k];
                let local = ch.local[n][k];
                match ch_keys["path"].as_str().expect("path") {
                    "translation" => assert_eq!(local.t, v3(value), "{clip} {n} key {k}"),
                    "scale" => assert_eq!(local.s, v3(value), "{clip} {n} key {k}"),
                    _ => {
                        // A stored unit quaternion, normalised once more in f64: equal to rounding.
                        let want = v4(value);
                        let len = want.iter().map(|c| c * c).sum::<f64>().sqrt();
                        for (got, w) in local.r.iter().zip(want) {
                            assert!((got - w / len).abs() < 1e-15, "{clip} key {k}: {local:?}");
                        }
                    }
                }
            }
        }
    }
}

/// The .gltf with a separate buffer and with an embedded one read as the .glb does.
#[test]
fn buffer_layouts_read_alike() {
    let times: Vec<f64> = (0..48).map(|k| f64::from(k) / 24.0).collect();
    let glb = load(&data().join("juno.glb"), &req("jump"), &times).expect("glb");
    for file in ["juno_separate.gltf", "juno_embedded.gltf"] {
        let other = load(&fixtures().join(file), &req("jump"), &times).expect(file);
        assert_eq!(other.world, glb.world, "{file}");
    }
}

/// glTF's Y up turned into heft's Z up: (X, Y, Z) -> (X, -Z, Y); the head is 1.5 m or so above
/// the ground and faces -Y in heft (the character faces +Z in glTF). `axes = z_up` takes
/// the file as it is.
#[test]
fn y_up_becomes_z_up() {
    let times = [0.0];
    let ch = load(&data().join("juno.glb"), &req("jump"), &times).expect("reads");
    let head = node(&ch, "head");
    let s = ch.series(head).expect("series");
    let w = ch.world[head][0].t;
    assert_eq!([s[0], s[1], s[2]], [w[0], -w[2], w[1]]);
    assert!(s[2] > 1.3 && s[2] < 1.7, "head height {}", s[2]);
    // A rotation turned the same way: the file's +Y (up) is heft's +Z.
    let q = [s[3], s[4], s[5], s[6]];
    let r = ch.world[head][0].rotation_scale().expect("rigid").0;
    let up_file = heft_formats::quat::rotate(r, [0.0, 1.0, 0.0]);
    let up_heft = heft_formats::quat::rotate(q, [0.0, 0.0, 1.0]);
    let turned = [up_file[0], -up_file[2], up_file[1]];
    for k in 0..3 {
        assert!((up_heft[k] - turned[k]).abs() < 1e-12);
    }
    let z = load(
        &data().join("juno.glb"),
        &Request {
            axes: Axes::ZUp,
            ..req("jump")
        },
        &times,
    )
    .expect("reads");
    let s = z.series(head).expect("series");
    assert_eq!([s[0], s[1], s[2]], w);
}

/// Time controls: an offset reads the clip later; `loop` repeats a cyclic clip (its value one
/// period on equals the value now); `hold` keeps the end value; `refuse` names the range.
#[test]
fn offset_loop_hold_and_refuse() {
    let file = data().join("juno.glb");
    let t: Vec<f64> = (0..24).map(|k| f64::from(k) / 24.0).collect();
    let plain = load(&file, &req("idle_loop"), &t).expect("reads");
    let later: Vec<f64> = t.iter().map(|x| x + 2.0).collect();
    let looped = load(
        &file,
        &Request {
            outside: Outside::Loop,
            ..req("idle_loop")
        },
        &later,
    )
    .expect("loops");
    for (a, b) in plain.world.iter().zip(&looped.world) {
        for (x, y) in a.iter().zip(b) {
            for k in 0..3 {
                assert!((x.t[k] - y.t[k]).abs() < 1e-12);
            }
        }
    }
    // An offset of 0.5 s reads frame k at k/24 + 0.5 s.
    let half: Vec<f64> = t.iter().map(|x| x + 0.5).filter(|x| *x <= 1.0).collect();
    let direct = load(&file, &req("idle_loop"), &half).expect("reads");
    let offset = load(
        &file,
        &Request {
            offset: 0.5,
            ..req("idle_loop")
        },
        &t[..half.len()],
    )
    .expect("reads");
    assert_eq!(direct.world, offset.world);
    // Hold: past the end, the end.
    let held = load(
        &file,
        &Request {
            outside: Outside::Hold,
            ..req("jump")
        },
        &[2.0, 3.0, 10.0],
    )
    .expect("holds");
    assert_eq!(held.world[1][0], held.world[1][2]);
    let refused = load(&file, &req("jump"), &[0.0, 3.0]).expect_err("refuses");
    assert!(
        refused.message.contains("covers 0 s to 2 s") && refused.message.contains("3 s"),
        "{}",
        refused.message
    );
}

fn error_of(file: &Path, clip: &str) -> String {
    let e = load(file, &req(clip), &[0.0, 0.5]).expect_err("an error");
    format!("{} | {}", e.message, e.help.unwrap_or_default())
}

/// Bad input: each error names the file and the place, and nothing panics.
#[test]
fn bad_files_are_refused_with_the_place() {
    let dir = fixtures();
    let not_gltf = tempfile::NamedTempFile::new().expect("temp");
    std::fs::write(not_gltf.path(), "frame,time\n0,0\n").expect("write");
    let e = error_of(not_gltf.path(), "");
    assert!(e.contains("is not a glTF 2.0"), "{e}");

    let e = error_of(&dir.join("missing_bin.gltf"), "");
    assert!(e.contains("missing_bin.gltf") && e.contains("nowhere.bin"), "{e}");

    let e = error_of(&dir.join("no_animation.gltf"), "");
    assert!(e.contains("no_animation.gltf has no animation"), "{e}");

    let e = error_of(&dir.join("zero_quat.gltf"), "");
    assert!(
        e.contains("zero-length quaternion") && e.contains("animations[0].samplers["),
        "{e}"
    );

    let e = error_of(&data().join("juno.glb"), "");
    assert!(
        e.contains("has 2 clips") && e.contains("`jump`") && e.contains("`idle_loop`"),
        "{e}"
    );

    let e = error_of(&data().join("juno.glb"), "jmup");
    assert!(
        e.contains("no clip `jmup`") && e.contains("did you mean `jump`?"),
        "{e}"
    );

    let e = error_of(&dir.join("nowhere.glb"), "");
    assert!(e.contains("cannot read") && e.contains("nowhere.glb"), "{e}");
}

/// Sparse accessors and normalized integer rotations are valid glTF and read; the values are
/// the fixture README's, worked out from the specification (3.6.2.3 sparse substitution,
/// 3.11 normalized integers decoded as max(c / 32767, -1)).
#[test]
fn sparse_and_normalized_accessors_read() {
    let t = [4.0 / 24.0, 12.0 / 24.0, 20.0 / 24.0];
    let ch = load(&fixtures().join("sparse.gltf"), &req(""), &t).expect("sparse");
    let hips = node(&ch, "hips");
    for (f, want) in [[0.0, 0.875, 0.01], [0.0, 1.049_999_96, 0.01], [0.0, 1.125, 0.0]]
        .iter()
        .enumerate()
    {
        for (got, w) in ch.world[hips][f].t.iter().zip(want) {
            assert!((got - w).abs() < 1e-7, "{:?}", ch.world[hips][f].t);
        }
    }
    let t = [4.0 / 24.0, 9.0 / 24.0, 15.0 / 24.0, 20.0 / 24.0];
    let hold = Request {
        outside: Outside::Hold,
        ..req("")
    };
    let ch = load(&fixtures().join("normalized_rotation.gltf"), &hold, &t).expect("normalized");
    let spine = node(&ch, "spine");
    let want = [
        [0.342010, 0.0, 0.0, 0.939692],
        [0.707098, 0.0, 0.0, 0.707114],
        [0.499996, 0.0, 0.0, 0.866030],
        [0.0, 0.0, 0.0, 1.0],
    ];
    for (f, w) in want.iter().enumerate() {
        let r = ch.local[spine][f].r;
        let sign = if r[3] < 0.0 { -1.0 } else { 1.0 };
        for k in 0..4 {
            assert!((sign * r[k] - w[k]).abs() < 1e-4, "frame {f}: {r:?} vs {w:?}");
        }
    }
}

/// A non-uniform parent scale above a rotated child is shear: that node cannot be carried as a
/// transform, and [`Character::series`] says at which frame.
#[test]
fn shear_is_found() {
    let ch = load(&fixtures().join("shear.gltf"), &req(""), &[0.0, 0.5]).expect("reads");
    let sheared = (0..ch.nodes.len()).filter(|&i| ch.series(i).is_err()).count();
    assert!(sheared >= 1, "the rotated child under a (1, 2, 1) scale has shear");
}

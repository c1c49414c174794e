//! `collider.add` through its own buffers (no plugin boundary): places, radii, chaining, errors.

use heft_collider::Add;
use heft_node_sdk::colliders::{Capsule, read_frame};
use heft_node_sdk::{Io, Node, NodeError, ParamValue, Params, Series, Timeline};

fn timeline(frames: u64) -> Timeline {
    Timeline {
        start_frame: 10,
        frame_count: frames,
        rate_num: 24,
        rate_den: 1,
    }
}

/// Runs `collider.add` with these parameters and inputs (`list`, `start`, `end`; empty for
/// not connected) and returns each frame's list.
fn add(
    changes: &[(&str, ParamValue)],
    list: &[f64],
    start: &[f64],
    end: &[f64],
) -> Result<Vec<Vec<Capsule>>, NodeError> {
    let tl = timeline((start.len() / 7) as u64);
    let spec = Add::spec();
    let mut p = Params::defaults(&spec)?;
    for (name, v) in changes {
        p = p.with(name, v.clone())?;
    }
    let frames = tl.frames();
    let list_width = list.len() / frames;
    let n = Add::output_points(&p, &[list_width, 7, 7])?[0];
    let mut out = vec![0.0; frames * 3 * n];
    let mut io = Io::new(
        tl,
        &spec,
        vec![
            Series::new(list, list_width),
            Series::new(start, 7),
            Series::new(end, 7),
        ],
        vec![&mut out[..]],
        vec![3 * n],
    );
    Add::evaluate(&p, &mut io)?;
    Ok(out
        .chunks_exact(3 * n)
        .map(|f| read_frame(f).expect("a whole list"))
        .collect())
}

fn close(a: [f64; 3], b: [f64; 3]) -> bool {
    (0..3).all(|k| (a[k] - b[k]).abs() < 1e-15)
}

/// A quarter turn about +Z, (x, y, z, w) = (0, 0, sin 45, cos 45), takes +X to +Y (right-handed
/// rotation, Z up), so an offset (0.1, 0, 0) on a joint at (1, 2, 3) lands at (1, 2.1, 3); with
/// no `end` the collider is a sphere of `radius` (`end_radius` is for capsules only).
#[test]
fn a_sphere_sits_at_its_offset_in_the_joints_frame() {
    let s = std::f64::consts::FRAC_1_SQRT_2;
    let start = [1.0, 2.0, 3.0, 0.0, 0.0, s, s].repeat(2);
    let frames = add(
        &[
            ("radius", ParamValue::Number(0.08)),
            ("end_radius", ParamValue::Number(0.02)),
            ("offset", ParamValue::Vec3([0.1, 0.0, 0.0])),
        ],
        &[],
        &start,
        &[],
    )
    .unwrap();
    assert_eq!(frames.len(), 2);
    let c = frames[1][0];
    assert!(close(c.start, [1.0, 2.1, 3.0]) && close(c.end, c.start), "{c:?}");
    assert_eq!((c.start_radius, c.end_radius), (0.08, 0.08));
}

/// A capsule from a joint to its child, tapered, appended after the colliders already in the
/// list, which pass through unchanged; a quaternion given at twice unit length turns the same
/// (it is normalised).
#[test]
fn a_capsule_is_appended_to_the_list() {
    let before = Capsule::sphere([0.0, 0.0, 1.6], 0.1);
    let mut list = vec![0.0; 9];
    heft_node_sdk::colliders::write_frame(&mut list, &[before]);
    let start = [0.2, 0.0, 1.4, 0.0, 0.0, 0.0, 2.0];
    let end = [0.2, 0.0, 1.1, 0.0, 0.0, 0.0, 1.0];
    let frames = add(
        &[
            ("radius", ParamValue::Number(0.05)),
            ("end_radius", ParamValue::Number(0.04)),
            ("end_offset", ParamValue::Vec3([0.0, 0.0, -0.05])),
        ],
        &list,
        &start,
        &end,
    )
    .unwrap();
    assert_eq!(frames[0].len(), 2);
    assert_eq!(frames[0][0], before);
    let c = frames[0][1];
    assert!(
        close(c.start, [0.2, 0.0, 1.4]) && close(c.end, [0.2, 0.0, 1.05]),
        "{c:?}"
    );
    assert_eq!((c.start_radius, c.end_radius), (0.05, 0.04));
}

#[test]
fn broken_inputs_are_named_with_the_frame() {
    let mut start = [0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 1.0].repeat(3);
    start[7 * 2 + 6] = 0.0;
    let e = add(&[], &[], &start, &[]).unwrap_err();
    assert!(
        e.0.contains("`start` at frame 12") && e.0.contains("quaternion is zero"),
        "{}",
        e.0
    );
    let spec = Add::spec();
    let p = Params::defaults(&spec).unwrap();
    let e = Add::output_points(&p, &[12, 7, 0]).unwrap_err();
    assert!(e.0.contains("4 points, not a whole number of colliders"), "{}", e.0);
    let mut list = vec![0.0; 9];
    list[7] = -1.0;
    let e = add(&[], &list, &[0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 1.0], &[]).unwrap_err();
    assert!(
        e.0.contains("`list` at frame 10: collider 0: its end radius is -1"),
        "{}",
        e.0
    );
}

//! Capsule colliders (a limb from one transform to another) in `xpbd.strand` and
//! `xpbd.strand_fast`: the scenes of `heft_strand_common::testing` that the `strand.euler` and
//! `strand.verlet` tests run too, and the lanes' cheap collider test with many strands.
mod support;

use heft_node_sdk::Node;
use heft_xpbd::{XpbdStrand, XpbdStrandF32};
use support::*;

fn norm(a: [f64; 3]) -> f64 {
    (a[0] * a[0] + a[1] * a[1] + a[2] * a[2]).sqrt()
}

/// The default 20 substeps for the 40-segment limb strand: the chain's direct solve carries its
/// weight at Hooke's stretch at any step (one sweep per substep, heft's method before, stretched
/// the top segment by h^2 g (n - 1) = 1.7e-3 m against l0 = 0.01 m and needed 400).
const LIMB_SUBSTEPS: i64 = 20;

/// How far inside a capsule an output particle may be: in f64 the projection puts it a few ulps
/// outside; in f32 lanes it runs in f64 with the radii grown by the lanes' rounding, so the
/// rounded result is outside too.
const INSIDE_TOLERANCE: f64 = 1e-12;

/// As in nodes/strand/tests/capsule.rs: at rest over a still straight limb, outside it, touching
/// it, the chain below the limb hanging on the vertical tangent x = LIMB_X - LIMB_RADIUS (statics
/// of a hanging chain; within r (1 - cos(l0 / r)) = 1.0e-3 m for the discrete chain).
fn rests_on_a_straight_limb<N: Node>(name: &str, at_rest: f64) {
    let scene = limb_scene(false);
    let run = scene.run::<N>(&[int("substeps", LIMB_SUBSTEPS)]).expect("runs");
    let last = run.frames() - 1;
    let (deepest, f, i) = scene.deepest(&run, |i| i != 0);
    assert!(
        deepest >= -INSIDE_TOLERANCE,
        "{name}: particle {i} is {deepest:e} m inside the limb at frame {f}"
    );
    let speed = (0..run.n).map(|i| norm(run.v(last, i))).fold(0.0, f64::max);
    assert!(speed < at_rest, "{name}: still moving at {speed:e} m/s");
    let contacts = (1..run.n).filter(|&i| scene.distance(&run, last, i) < 1e-6).count();
    assert!(contacts >= 1, "{name}: the strand does not touch the limb");
    let hanging: Vec<f64> = (1..run.n)
        .map(|i| run.x(last, i))
        .filter(|x| x[2] < LIMB_Z - 0.02)
        .map(|x| x[0])
        .collect();
    assert!(
        hanging.len() >= 10,
        "{name}: {} particles below the limb",
        hanging.len()
    );
    let off = hanging
        .iter()
        .map(|x| (x - (LIMB_X - LIMB_RADIUS)).abs())
        .fold(0.0, f64::max);
    assert!(
        off <= 1.0e-3,
        "{name}: the chain below the limb is {off:e} m off the vertical tangent"
    );
    eprintln!(
        "{name}, straight limb: least distance from the surface {deepest:e} m, final speed {speed:e} m/s, {contacts} \
         particles within 1e-6 m of the surface, chain below {off:e} m off the vertical tangent"
    );
}

/// At rest: below 1e-5 m/s in f64 (damped at 6 1/s for 5 s, e^-30 of the swing is left); in f32
/// lanes below 1e-3 m/s, since a step correction there is resolved to about ulp(0.4 m) =
/// 3.0e-8 m, a velocity of 2.9e-4 m/s at h = 1/9600 s (measured 1.2e-4 m/s).
const AT_REST: f64 = 1e-5;
/// See [`AT_REST`].
const AT_REST_F32: f64 = 1e-3;

#[test]
fn rests_on_a_straight_limb_in_f64_and_f32() {
    rests_on_a_straight_limb::<XpbdStrand>("xpbd.strand", AT_REST);
    rests_on_a_straight_limb::<XpbdStrandF32>("xpbd.strand_fast", AT_REST_F32);
}

/// As in nodes/strand/tests/capsule.rs: on a tapered limb the frictionless contact pushes the
/// strand towards the thin end (+Y); it comes to rest outside, touching, displaced that way.
fn rests_on_a_tapered_limb<N: Node>(name: &str, at_rest: f64) {
    let scene = limb_scene(true);
    let run = scene.run::<N>(&[int("substeps", LIMB_SUBSTEPS)]).expect("runs");
    let last = run.frames() - 1;
    let (deepest, f, i) = scene.deepest(&run, |i| i != 0);
    assert!(
        deepest >= -INSIDE_TOLERANCE,
        "{name}: particle {i} is {deepest:e} m inside the limb at frame {f}"
    );
    let speed = (0..run.n).map(|i| norm(run.v(last, i))).fold(0.0, f64::max);
    assert!(speed < at_rest, "{name}: still moving at {speed:e} m/s");
    let touching: Vec<usize> = (1..run.n).filter(|&i| scene.distance(&run, last, i) < 1e-6).collect();
    assert!(!touching.is_empty(), "{name}: the strand does not touch the limb");
    let y = touching
        .iter()
        .map(|&i| run.x(last, i)[1])
        .fold(f64::INFINITY, f64::min);
    assert!(y > 0.0, "{name}: a contact at y = {y} is not towards the elbow");
    eprintln!(
        "{name}, tapered limb: least distance from the surface {deepest:e} m, final speed {speed:e} m/s, {} \
         particles within 1e-6 m of the surface, the nearest to the shoulder at y = {y:e} m",
        touching.len()
    );
}

#[test]
fn rests_on_a_tapered_limb_in_f64_and_f32() {
    rests_on_a_tapered_limb::<XpbdStrand>("xpbd.strand", AT_REST);
    rests_on_a_tapered_limb::<XpbdStrandF32>("xpbd.strand_fast", AT_REST_F32);
}

/// As in nodes/strand/tests/capsule.rs: a capsule on two transforms moving at PUSH_SPEED pushes
/// a free, weightless, undamped strand lying parallel to it; after the contact the strand
/// moves with the surface's normal speed, momentum M PUSH_SPEED along X (M = 0.01 kg), every
/// particle on the surface. In f32 lanes to about 1e-5 (the node notes: momentum kept to about
/// 1e-5 of M v over a frame; positions to 6e-8 of their size).
fn pushed_by_a_moving_capsule<N: Node>(name: &str, tolerance: f64) {
    let scene = pushed_scene();
    let run = scene.run::<N>(&[]).expect("runs");
    let want = 0.05 * 0.2 * PUSH_SPEED;
    for f in 0..run.frames() {
        let t = run.time(f);
        let p = run.p(f);
        if t < 0.29 {
            // Still: zero to the lanes' rounding.
            assert!(
                norm(p) <= tolerance * want,
                "{name}: momentum {p:?} before the contact at frame {f}"
            );
        } else if t > 0.35 {
            assert!(
                (p[0] - want).abs() <= tolerance * want
                    && p[1].abs() <= tolerance * want
                    && p[2].abs() <= tolerance * want,
                "{name}: momentum {p:?} at frame {f}, want ({want}, 0, 0)"
            );
            for i in 0..run.n {
                let d = scene.distance(&run, f, i);
                assert!(
                    d.abs() <= tolerance * 0.05,
                    "{name}: particle {i} is {d:e} m from the surface at frame {f}"
                );
            }
        }
    }
    let (deepest, ..) = scene.deepest(&run, |_| true);
    assert!(deepest >= -INSIDE_TOLERANCE, "{name}: {deepest:e}");
    eprintln!(
        "{name}, pushed: momentum at the end {:?} N s (M V = {want} N s)",
        run.p(run.frames() - 1)
    );
}

#[test]
fn pushed_by_a_moving_capsule_in_f64_and_f32() {
    pushed_by_a_moving_capsule::<XpbdStrand>("xpbd.strand", 1e-9);
    pushed_by_a_moving_capsule::<XpbdStrandF32>("xpbd.strand_fast", 1e-5);
}

/// A forearm sweeping through 20 strands side by side (`forearm_scene` with a line of strands
/// 1 cm apart across the sweep): two lane groups (16 + 4 in f64, one of 32 in f32), so the
/// lanes' cheap capsule test decides for many particles at once which go to the exact
/// projection. No free particle is ever inside the forearm, the forearm really passes through
/// the strands and pushes them along the sweep; and a strand's result does not depend on its
/// lane group: strands 0, 7 and 19 run alone equal, bit for bit, the same strands among the 20.
fn forearm_through_many_strands<N: Node>(name: &str) {
    let scene = forearm_scene();
    let count = 20;
    let line = [int("count", count), choice("placement", "line"), num("spacing", 0.01)];
    let run = scene.run::<N>(&line).expect("runs");
    let p = run.n / count as usize;
    let (deepest, f, i) = scene.deepest(&run, |i| i % p != 0);
    assert!(
        deepest >= -INSIDE_TOLERANCE,
        "{name}: particle {i} is {deepest:e} m inside the forearm at frame {f}"
    );
    let contacts = (0..run.frames())
        .flat_map(|f| (0..run.n).map(move |i| (f, i)))
        .filter(|&(f, i)| i % p != 0 && scene.distance(&run, f, i) < 1e-6)
        .count();
    assert!(
        contacts > 50,
        "{name}: the forearm should press on the strands ({contacts} contacts)"
    );
    for s in [0usize, 7, 19] {
        // Strand s of the line starts at (s - 9.5) spacing along X: alone, the same start.
        let at = (s as f64 - 0.5 * (count as f64 - 1.0)) * 0.01;
        let alone = scene.run::<N>(&[vec3("start_offset", [at, 0.0, 0.0])]).expect("runs");
        for f in 0..alone.frames() {
            for i in 0..p {
                assert_eq!(
                    (alone.x(f, i).map(f64::to_bits), alone.v(f, i).map(f64::to_bits)),
                    (
                        run.x(f, s * p + i).map(f64::to_bits),
                        run.v(f, s * p + i).map(f64::to_bits)
                    ),
                    "{name}: strand {s}, frame {f}, particle {i}"
                );
            }
        }
    }
    eprintln!("{name}, forearm through 20 strands: least distance {deepest:e} m, {contacts} contacts");
}

#[test]
fn a_forearm_through_many_strands_in_f64_and_f32() {
    forearm_through_many_strands::<XpbdStrand>("xpbd.strand");
    forearm_through_many_strands::<XpbdStrandF32>("xpbd.strand_fast");
}

/// As in nodes/strand/tests/capsule.rs: the tapered limb, the pushing capsule and the sweeping
/// forearm given as one-entry `colliders` lists give the runs of the numbered scenes, to
/// rounding (f64) or to the lanes' rounding of positions of about 1 m (f32: 1e-6 m).
fn a_listed_capsule_is_the_numbered_one<N: Node>(name: &str, tolerance: f64) {
    for (scene, extra) in [
        (limb_scene(true), vec![int("substeps", LIMB_SUBSTEPS)]),
        (pushed_scene(), vec![]),
        (forearm_scene(), vec![]),
    ] {
        let numbered = scene.run::<N>(&extra).expect("runs");
        let listed = scene.as_list().run::<N>(&extra).expect("runs");
        let d = numbered
            .positions
            .iter()
            .zip(&listed.positions)
            .map(|(x, y)| (x - y).abs())
            .fold(0.0, f64::max);
        assert!(
            d <= tolerance,
            "{name}: the listed capsule's run is {d:e} m off the numbered one's"
        );
    }
}

#[test]
fn listed_capsules_are_the_numbered_ones_in_f64_and_f32() {
    a_listed_capsule_is_the_numbered_one::<XpbdStrand>("xpbd.strand", 1e-12);
    a_listed_capsule_is_the_numbered_one::<XpbdStrandF32>("xpbd.strand_fast", 1e-6);
}

/// Twelve colliders in one list (`fence_scene`): the chain drapes over the fence, no frame
/// inside any sphere (distances from `round_cone_distance`), resting on several.
fn drapes_over_a_fence<N: Node>(name: &str, substeps: i64) {
    let (deepest, touched) = fence_drape::<N>(substeps);
    assert!(
        deepest >= -INSIDE_TOLERANCE,
        "{name}: a particle is {deepest:e} m inside a sphere"
    );
    assert!(touched >= 2, "{name}: the chain rests on {touched} spheres");
    eprintln!("{name}, fence of 12: least distance {deepest:e} m, resting on {touched} spheres");
}

#[test]
fn drapes_over_a_fence_of_twelve_in_f64_and_f32() {
    drapes_over_a_fence::<XpbdStrand>("xpbd.strand", LIMB_SUBSTEPS);
    drapes_over_a_fence::<XpbdStrandF32>("xpbd.strand_fast", LIMB_SUBSTEPS);
}

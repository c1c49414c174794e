//! Capsule colliders (a limb from one transform to another) in `strand.euler` and
//! `strand.verlet`. The scenes come from `heft_strand_common::testing` and are shared with the
//! `xpbd.strand` tests; distances from a capsule are computed there from its definition (a
//! union of balls), independently of the node's projection.

mod support;

use heft_node_sdk::Node;
use heft_strand::{Euler, Verlet};
use support::*;

fn norm(a: [f64; 3]) -> f64 {
    (a[0] * a[0] + a[1] * a[1] + a[2] * a[2]).sqrt()
}

/// 400 substeps: `strand.euler`'s 40-segment limb strand has k = 2e4 N/m on m = 5e-4 kg,
/// omega_max = 2 sqrt(k / m) = 1.26e4 rad/s, so h < 1.6e-4 s (264 substeps at 24 fps); as many
/// for `strand.verlet`, whose rigid segments then stretch less.
const LIMB_SUBSTEPS: i64 = 400;

/// How far inside a capsule an output particle may be: the projection puts it a few ulps
/// outside (a slack of 32 ulps of the coordinates), so any depth beyond rounding is a failure.
const INSIDE_TOLERANCE: f64 = 1e-12;

/// The strand over a still straight limb (`limb_scene`) comes to rest outside it, touching it,
/// with the chain below the limb hanging straight down from the limb's side: a chain with a
/// free end and no bending stiffness, frictionless contact and gravity only hangs vertically
/// below its last contact, which is where the limb's outline has a vertical tangent, at
/// x = LIMB_X - LIMB_RADIUS (statics of a hanging chain: with no load but its weight and a free
/// end, its tension is vertical; a kink where it leaves the limb would need a point force). The
/// discrete chain's last contact particle lies within one segment's arc (l0 / r = 0.2 rad) of
/// that tangent point, so the hanging part is within r (1 - cos(0.2)) = 1.0e-3 m of the line.
fn rests_on_a_straight_limb<N: Node>(name: &str) {
    let scene = limb_scene(false);
    let run = scene.run::<N>(&[int("substeps", LIMB_SUBSTEPS)]).expect("runs");
    let last = run.frames() - 1;
    let (deepest, f, i) = scene.deepest(&run, |i| i != 0);
    assert!(
        deepest >= -INSIDE_TOLERANCE,
        "{name}: particle {i} is {deepest:e} m inside the limb at frame {f}"
    );
    let speed = (0..run.n).map(|i| norm(run.v(last, i))).fold(0.0, f64::max);
    // Damped at 6 1/s over 5 s: e^-30 of the swing is left; 1e-5 m/s is at rest for this test.
    assert!(speed < 1e-5, "{name}: still moving at {speed:e} m/s");
    let contacts = (1..run.n).filter(|&i| scene.distance(&run, last, i) < 1e-9).count();
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
        "{name}: the chain below the limb is {off:e} m off the vertical tangent x = {}",
        LIMB_X - LIMB_RADIUS
    );
    eprintln!(
        "{name}, straight limb: least distance from the surface {deepest:e} m, final speed {speed:e} m/s, {contacts} \
         particles on the surface, chain below {off:e} m off the vertical tangent"
    );
}

#[test]
fn euler_rests_on_a_straight_limb() {
    rests_on_a_straight_limb::<Euler>("strand.euler");
}

#[test]
fn verlet_rests_on_a_straight_limb() {
    rests_on_a_straight_limb::<Verlet>("strand.verlet");
}

/// On a tapered limb (0.06 m at the shoulder, 0.04 m at the elbow) the surface normal leans
/// towards the thin end (n = cos(phi) w - sin(phi) u with sin(phi) = (r1 - r0) / L < 0), so a
/// frictionless contact pushes the strand along the limb towards the elbow (+Y) until its pin
/// holds it: it comes to rest outside the limb, touching it, displaced towards +Y.
fn rests_on_a_tapered_limb<N: Node>(name: &str) {
    let scene = limb_scene(true);
    let run = scene.run::<N>(&[int("substeps", LIMB_SUBSTEPS)]).expect("runs");
    let last = run.frames() - 1;
    let (deepest, f, i) = scene.deepest(&run, |i| i != 0);
    assert!(
        deepest >= -INSIDE_TOLERANCE,
        "{name}: particle {i} is {deepest:e} m inside the limb at frame {f}"
    );
    let speed = (0..run.n).map(|i| norm(run.v(last, i))).fold(0.0, f64::max);
    assert!(speed < 1e-5, "{name}: still moving at {speed:e} m/s");
    let touching: Vec<usize> = (1..run.n).filter(|&i| scene.distance(&run, last, i) < 1e-9).collect();
    assert!(!touching.is_empty(), "{name}: the strand does not touch the limb");
    let y = touching
        .iter()
        .map(|&i| run.x(last, i)[1])
        .fold(f64::INFINITY, f64::min);
    assert!(y > 0.0, "{name}: a contact at y = {y} is not towards the elbow");
    eprintln!(
        "{name}, tapered limb: least distance from the surface {deepest:e} m, final speed {speed:e} m/s, {} \
         particles on the surface, the nearest to the shoulder at y = {y:e} m",
        touching.len()
    );
}

#[test]
fn euler_rests_on_a_tapered_limb() {
    rests_on_a_tapered_limb::<Euler>("strand.euler");
}

#[test]
fn verlet_rests_on_a_tapered_limb() {
    rests_on_a_tapered_limb::<Verlet>("strand.verlet");
}

/// A capsule whose two ends ride on two transforms moving at PUSH_SPEED along +X meets a free,
/// weightless, undamped strand lying parallel to it (`pushed_scene`): every particle is in the
/// capsule's side region, so each is pushed out along +X and loses its inward velocity relative
/// to the surface, leaving with the surface's normal speed, PUSH_SPEED. A perfectly inelastic
/// push by a body of unlimited mass: afterwards the strand moves with the capsule, momentum
/// M PUSH_SPEED along X with M = 0.05 kg/m x 0.2 m (no internal force acts, the strand moving
/// as one), every particle on the surface; before the contact (t < 0.3 s) nothing moves.
fn pushed_by_a_moving_capsule<N: Node>(name: &str, tolerance: f64) {
    let scene = pushed_scene();
    let run = scene.run::<N>(&[]).expect("runs");
    let m = 0.05 * 0.2;
    for f in 0..run.frames() {
        let t = run.time(f);
        let p = run.p(f);
        let want = m * PUSH_SPEED;
        if t < 0.29 {
            // Still: zero to rounding (`strand.verlet` first puts the rest shape on its
            // constraints, moving particles by ulps).
            assert!(
                norm(p) <= 1e-15 * want,
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
    let last = run.frames() - 1;
    eprintln!(
        "{name}, pushed: momentum at the end {:?} N s (M V = {} N s)",
        run.p(last),
        m * PUSH_SPEED
    );
}

#[test]
fn euler_is_pushed_by_a_moving_capsule() {
    pushed_by_a_moving_capsule::<Euler>("strand.euler", 1e-9);
}

#[test]
fn verlet_is_pushed_by_a_moving_capsule() {
    pushed_by_a_moving_capsule::<Verlet>("strand.verlet", 1e-9);
}

/// A forearm (`forearm_scene`: elbow transform still, wrist transform swinging about it)
/// sweeps through a hanging strand: at no frame is a free particle inside the capsule as the
/// two transforms place it; the capsule really passes where the strand hung (it holds points of
/// the strand's rest line at some frame), and the strand is pushed aside along the sweep (+X) by
/// more than the forearm's radius there.
fn swept_by_a_forearm<N: Node>(name: &str) {
    let scene = forearm_scene();
    let run = scene.run::<N>(&[]).expect("runs");
    let (deepest, f, i) = scene.deepest(&run, |i| i != 0);
    assert!(
        deepest >= -INSIDE_TOLERANCE,
        "{name}: particle {i} is {deepest:e} m inside the forearm at frame {f}"
    );
    let rest_line_swept = (0..run.frames()).any(|f| {
        let (a, b, r0, r1) = (scene.capsule)(run.time(f));
        (0..=40).any(|k| round_cone_distance([0.0, 0.0, -0.01 * k as f64], a, b, r0, r1) < -0.01)
    });
    assert!(
        rest_line_swept,
        "{name}: the forearm never passes where the strand hangs"
    );
    let pushed = (0..run.frames())
        .flat_map(|f| (0..run.n).map(move |i| (f, i)))
        .map(|(f, i)| run.x(f, i)[0])
        .fold(f64::NEG_INFINITY, f64::max);
    assert!(pushed > 0.035, "{name}: the strand moved only {pushed} m along X");
    eprintln!("{name}, forearm: least distance from the surface {deepest:e} m, pushed {pushed:e} m along X");
}

#[test]
fn euler_is_swept_aside_by_a_forearm() {
    swept_by_a_forearm::<Euler>("strand.euler");
}

#[test]
fn verlet_is_swept_aside_by_a_forearm() {
    swept_by_a_forearm::<Verlet>("strand.verlet");
}

/// A capsule's end without its start is a wiring mistake, reported by name.
#[test]
fn a_capsule_end_without_its_start_is_an_error() {
    let tl = timeline(24, 5);
    let e = run::<Euler>(
        &[],
        tl,
        &[
            ("anchor", fixed_anchor(tl, [0.0; 3])),
            ("collider_2_end", fixed_anchor(tl, [0.0, 0.0, -0.2])),
        ],
    )
    .expect_err("an end alone");
    assert!(
        e.0.contains("`collider_2_end` is connected but `collider_2` is not"),
        "{}",
        e.0
    );
}

/// The end radius parameter: 0 (the default) means the start radius. A capsule of radius 0.1 m
/// with `collider_1_end_radius` left at 0 and one with it set to 0.1 m give bit-identical runs;
/// 0.05 m gives another.
#[test]
fn an_end_radius_of_zero_means_the_start_radius() {
    let scene = forearm_scene();
    let same = |r: f64| {
        let mut s = scene.clone();
        s.changes.retain(|(n, _)| !n.starts_with("collider_1"));
        s.changes.push(num("collider_1_radius", 0.04));
        s.changes.push(num("collider_1_end_radius", r));
        s.run::<Euler>(&[]).expect("runs").positions
    };
    let bits = |v: Vec<f64>| v.into_iter().map(f64::to_bits).collect::<Vec<_>>();
    assert_eq!(bits(same(0.0)), bits(same(0.04)));
    assert_ne!(bits(same(0.0)), bits(same(0.03)));
}

/// Largest difference between two runs' positions, m.
fn largest_difference(a: &Run, b: &Run) -> f64 {
    a.positions
        .iter()
        .zip(&b.positions)
        .map(|(x, y)| (x - y).abs())
        .fold(0.0, f64::max)
}

/// A collider given in the `colliders` list is the same collider as on the numbered inputs:
/// the tapered limb, the pushing capsule and the sweeping forearm, each sampled at the frames
/// into a list, give the runs of the numbered scenes (whose transforms carry no rotation, so
/// both move each end on the same cubic through the frame samples) to rounding.
fn a_listed_capsule_is_the_numbered_one<N: Node>(name: &str) {
    for (scene, extra) in [
        (limb_scene(true), vec![int("substeps", LIMB_SUBSTEPS)]),
        (pushed_scene(), vec![]),
        (forearm_scene(), vec![]),
    ] {
        let numbered = scene.run::<N>(&extra).expect("runs");
        let listed = scene.as_list().run::<N>(&extra).expect("runs");
        let d = largest_difference(&numbered, &listed);
        assert!(
            d <= 1e-12,
            "{name}: the listed capsule's run is {d:e} m off the numbered one's"
        );
    }
}

#[test]
fn euler_listed_capsules_are_the_numbered_ones() {
    a_listed_capsule_is_the_numbered_one::<Euler>("strand.euler");
}

#[test]
fn verlet_listed_capsules_are_the_numbered_ones() {
    a_listed_capsule_is_the_numbered_one::<Verlet>("strand.verlet");
}

/// Twelve colliders in one list (`fence_scene`, more than the three numbered slots): a chain
/// falling onto them drapes over the fence and ends no frame inside any sphere (distances from
/// `round_cone_distance`, independent of the node's projection), and it rests on several.
fn drapes_over_a_fence<N: Node>(name: &str, substeps: i64) {
    let (deepest, touched) = fence_drape::<N>(substeps);
    assert!(
        deepest >= -INSIDE_TOLERANCE,
        "{name}: a particle is {deepest:e} m inside a sphere"
    );
    assert!(touched >= 2, "{name}: the chain rests on {touched} spheres");
    eprintln!("{name}, fence of 12: least distance {deepest:e} m, resting on {touched} spheres");
}

/// LIMB_SUBSTEPS for `strand.euler`: the fence chain's segments (12.5 mm) are longer than the
/// limb strand's (10 mm), so its explicit limit is longer too (omega_max scales as 1 / l0).
#[test]
fn euler_drapes_over_a_fence_of_twelve() {
    drapes_over_a_fence::<Euler>("strand.euler", LIMB_SUBSTEPS);
}

#[test]
fn verlet_drapes_over_a_fence_of_twelve() {
    drapes_over_a_fence::<Verlet>("strand.verlet", 100);
}

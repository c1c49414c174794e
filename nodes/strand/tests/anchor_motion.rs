//! What reaches a strand from its anchor and its surroundings: the anchor's motion inside a
//! frame, a settled start, the ground and friction, and a glitch in the motion data named as such.

use heft_strand::{Euler, Verlet};
use heft_strand_common::testing::glitched_anchor;

/// An anchor put 500 m away for three frames (a capture glitch) tears the strand apart; the
/// error names the input, the frame and the speed (500 m in one frame at 24 fps: 12000 m/s),
/// instead of asking for more substeps.
#[test]
fn a_glitch_in_the_anchor_is_named_not_blamed_on_the_substeps() {
    for (name, err) in [
        ("strand.euler", glitched_anchor::<Euler>()),
        ("strand.verlet", glitched_anchor::<Verlet>()),
    ] {
        let err = err.unwrap_or_else(|| panic!("{name}: no error"));
        assert!(
            err.contains("input `anchor` jumps at frame 20")
                && err.contains("(12000.0 m/s)")
                && !err.contains("raise `substeps`"),
            "{name}: {err}"
        );
    }
}

/// strand.verlet holds its segments at their length with constraints and ignores
/// `stretch_stiffness`: when it blows up, its advice names only what it uses (more substeps; past
/// the 10000 allowed, the parameters it has).
#[test]
fn verlet_advice_never_names_stretch_stiffness() {
    use heft_strand_common::testing::{int, num, run, timeline, transform};
    let tl = timeline(24, 25);
    let anchor = transform(tl, |t| ([0.3 * (8.0 * t).sin(), 0.0, 1.5], [0.0, 0.0, 0.0, 1.0]));
    for (bending, want) in [
        (1.0, "raise `substeps` to at least"),
        (1.0e4, "lower `bending_stiffness`"),
    ] {
        let err = run::<Verlet>(
            &[
                int("segments", 16),
                num("length", 0.3),
                num("bending_stiffness", bending),
                int("substeps", 1),
            ],
            tl,
            &[("anchor", anchor.clone())],
        )
        .err()
        .map(|e| e.to_string())
        .expect("a stiff strand at one substep blows up");
        assert!(err.contains(want) && !err.contains("stretch_stiffness"), "{err}");
    }
}

/// A 110 cm sash on hips that crouch to 0.70 m, jump and land, over the ground at z = 0: it
/// would reach 0.40 m below the ground hanging straight down; with `ground` on no particle is
/// ever below it, and the sash does rest on it (its lowest point within 1 mm of the ground).
#[test]
fn a_sash_rests_on_the_ground_and_never_passes_below_it() {
    use heft_strand_common::testing::sash_over_the_ground;
    for (name, (lowest, unconstrained)) in [
        ("strand.euler", sash_over_the_ground::<Euler>()),
        ("strand.verlet", sash_over_the_ground::<Verlet>()),
    ] {
        assert!(unconstrained < -0.3);
        assert!((0.0..1e-3).contains(&lowest), "{name}: lowest particle at {lowest} m");
    }
}

/// `start = settled`: a 45 cm braid laid out sideways from its pin, and a 42 cm necklace pinned
/// 12 cm apart, start at rest in their hanging equilibrium. On a still anchor nothing then moves
/// by more than 1e-5 m in a second (measured about 1e-6 m); the braid hangs straight down
/// (its tip within 1 % of its length below the pin), and the necklace hangs at its rest length
/// (its chain within 1 % of 42 cm; laid out it started 58.5 cm long between pins 12 cm apart).
#[test]
fn settled_strands_start_calm_at_their_rest_length() {
    use heft_strand_common::testing::settled_start;
    for (name, braid, necklace) in [
        (
            "strand.euler",
            settled_start::<Euler>(false, Some(400)),
            settled_start::<Euler>(true, Some(400)),
        ),
        (
            "strand.verlet",
            settled_start::<Verlet>(false, None),
            settled_start::<Verlet>(true, None),
        ),
    ] {
        let (moved, length, tip) = braid;
        assert!(moved < 1e-5, "{name}: the braid moved {moved} m");
        assert!(
            ((1.5 - tip) / length - 1.0).abs() < 1e-2,
            "{name}: tip at {tip} m for a {length} m braid"
        );
        let (moved, length, _) = necklace;
        assert!(moved < 1e-5, "{name}: the necklace moved {moved} m");
        assert!(
            (length / 0.42 - 1.0).abs() < 1e-2,
            "{name}: the necklace is {length} m long"
        );
    }
}

/// A settled strand whose pin sits inside a collider is said to start inside it, with the
/// strand, the particle, the collider and the depth.
#[test]
fn a_settled_strand_starting_inside_a_collider_is_warned_about() {
    use heft_strand_common::testing::{choice, int, num, run, timeline, transform, vec3};
    let tl = timeline(24, 5);
    let anchor = transform(tl, |_| ([0.0, 0.0, 1.5], [0.0, 0.0, 0.0, 1.0]));
    let r = run::<Verlet>(
        &[
            int("segments", 8),
            num("length", 0.3),
            choice("start", "settled"),
            vec3("rest_direction", [1.0, 0.0, 0.0]),
            num("collider_1_radius", 0.1),
            vec3("collider_1_offset", [0.0, 0.0, 0.05]),
        ],
        tl,
        &[("anchor", anchor.clone()), ("collider_1", anchor)],
    )
    .expect("runs");
    assert!(
        r.warnings
            .iter()
            .any(|w| w.contains("strand 0 particle 0 starts 5.000e-2 m inside collider 1")),
        "{:?}",
        r.warnings
    );
}

/// Coulomb friction on the ground: a strand sliding flat at 1 m/s with mu_k = 0.5 stops after
/// v^2 / (2 mu_k g) = 0.10197 m (a block sliding to rest; measured to 2e-6), and on a sphere 20
/// degrees from its top (tan 20 deg = 0.364) a resting strand holds with mu_s = 0.5 (it creeps
/// less than 0.1 mm in a second) and slides off with mu_s = mu_k = 0.2.
#[test]
fn friction_stops_a_slide_where_coulomb_says_and_holds_on_a_gentle_slope() {
    use heft_strand_common::testing::{resting_on_a_slope, sliding_distance};
    let stop = 1.0 / (2.0 * 0.5 * heft_node_sdk::STANDARD_GRAVITY);
    for (name, slid) in [
        ("strand.euler", sliding_distance::<Euler>(0.0, 0.5, 1.0)),
        ("strand.verlet", sliding_distance::<Verlet>(0.0, 0.5, 1.0)),
    ] {
        assert!(
            (slid / stop - 1.0).abs() < 1e-3,
            "{name}: slid {slid} m, Coulomb {stop} m"
        );
    }
    for (name, hold, slide) in [
        (
            "strand.euler",
            resting_on_a_slope::<Euler>(0.5, 0.4, Some(800)),
            resting_on_a_slope::<Euler>(0.2, 0.2, Some(800)),
        ),
        (
            "strand.verlet",
            resting_on_a_slope::<Verlet>(0.5, 0.4, None),
            resting_on_a_slope::<Verlet>(0.2, 0.2, None),
        ),
    ] {
        assert!(hold < 1e-4, "{name}: crept {hold} m");
        assert!(slide > 0.5, "{name}: slid only {slide} m");
    }
}

/// A strand settled on an anchor that is already accelerating sideways at frame 0
/// (`settled_under_acceleration`: 3 m/s^2 along +X) starts in the equilibrium it keeps: its
/// chord hangs back from the vertical by atan(a / g) = 17.0 degrees (a chain with a free end
/// in a uniform field hangs straight along it, here the apparent gravity g - a; equivalence
/// principle), within 0.01 degree (the settling's own tolerance), and no particle moves by more
/// than 1e-5 m relative to the anchor over a second. Before the settling watched every substep
/// and took the anchor's acceleration, such a strand swung by 0.28 m.
#[test]
fn a_strand_settled_on_an_accelerating_anchor_starts_calm() {
    use heft_strand_common::testing::{G, SIDEWAYS, settled_under_acceleration};
    let want = (SIDEWAYS / G).atan();
    for (name, (moved, tilt)) in [
        ("strand.euler", settled_under_acceleration::<Euler>(Some(400))),
        ("strand.verlet", settled_under_acceleration::<Verlet>(None)),
    ] {
        eprintln!(
            "{name}: tilt {:.3} deg (want {:.3}), moved {moved:e} m",
            tilt.to_degrees(),
            want.to_degrees()
        );
        assert!(
            (tilt - want).abs() < 0.01f64.to_radians(),
            "{name}: tilt {} deg",
            tilt.to_degrees()
        );
        assert!(moved < 1e-5, "{name}: moved {moved} m relative to the anchor");
    }
}

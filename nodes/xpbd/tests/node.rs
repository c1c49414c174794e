//! The node as a whole: its contract ports, errors, and relative damping on an accelerating anchor.
mod support;
use support::*;

use heft_node_sdk::Node;
use heft_xpbd::XpbdStrand;

#[test]
fn the_node_offers_the_strand_contract() {
    let spec = XpbdStrand::spec();
    assert_eq!(spec.name, "strand");
    let inputs: Vec<&str> = spec.inputs.iter().map(|p| p.name.as_str()).collect();
    let outputs: Vec<&str> = spec.outputs.iter().map(|p| p.name.as_str()).collect();
    assert_eq!(inputs, heft_strand_common::INPUTS);
    assert_eq!(outputs, heft_strand_common::OUTPUTS);
    assert!(spec.notes.contains("Stability: no step limit"), "{}", spec.notes);
}

#[test]
fn a_pin_without_an_anchor_is_an_error_that_says_what_to_connect() {
    let tl = timeline(24, 3);
    let e = run(&[], tl, &[]).expect_err("pin = one_end needs an anchor");
    assert!(e.0.contains("`anchor`"), "{}", e.0);
}

/// The equivalence principle: in a freely falling frame gravity vanishes (apparent gravity
/// g - a = 0), so damping relative to a falling anchor must not hold back a strand that falls with
/// it. A free strand (nothing pinned) beside an anchor falling from rest, damping 0, relative
/// damping 20 1/s: whatever relative velocity the start leaves (the anchor's velocity at the first
/// frame is a one-sided difference, -g dt / 2) decays as exp(-20 t), and after 23 frames every particle
/// falls at the free-fall velocity -g (t - h / 2) (the node's velocity is the backward difference
/// over the last substep, centred h / 2 earlier) to 1e-6 m/s. The node damps before the gravity
/// kick; damping after it would leave a steady lag of h g = 0.02 m/s (derived from the update).
#[test]
fn relative_damping_does_not_hold_back_a_strand_falling_with_its_anchor() {
    let tl = timeline(24, 25);
    let anchor = transform(tl, |t| ([0.0, 0.0, 10.0 - 0.5 * G * t * t], [0.0, 0.0, 0.0, 1.0]));
    let r = run(
        &[
            choice("pin", "free"),
            vec3("rest_direction", [1.0, 0.0, 0.0]),
            num("damping", 0.0),
            num("relative_damping", 20.0),
        ],
        tl,
        &[("anchor", anchor)],
    )
    .expect("runs");
    // The frame before the last: in the last frame the anchor's velocity is a one-sided
    // difference again.
    let last = r.frames() - 2;
    let h = 1.0 / 24.0 / 20.0;
    let free_fall = -G * (r.time(last) - 0.5 * h);
    for i in 0..r.n {
        let v = r.v(last, i);
        let off = (v[0].powi(2) + v[1].powi(2) + (v[2] - free_fall).powi(2)).sqrt();
        assert!(off < 1e-6, "particle {i}: velocity {v:?} vs free fall {free_fall} m/s");
    }
}

/// Linear drag in a steady wind: dv/dt = drag (w - v) - damping v has the terminal velocity
/// drag w / (drag + damping) (the closed-form solution of a linear first-order ODE). A free strand
/// with no gravity in a uniform wind of 3 m/s along X, drag 1 1/s, damping 0.5 1/s: 2 m/s after
/// 10 s, to 1e-6 m/s (the start decays as exp(-1.5 t) = 3e-7; the backward-Euler damping step has
/// the same fixed point, derived from the update).
#[test]
fn a_free_strand_in_a_steady_wind_reaches_the_terminal_velocity() {
    let tl = timeline(24, 241);
    let dims = [2, 2, 2];
    let per_frame = 3 * heft_node_sdk::field::points_for(2, 2, 2);
    let mut wind = vec![0.0; per_frame * tl.frames()];
    for out in wind.chunks_exact_mut(per_frame) {
        // 1 km cells around the strand: it stays inside the grid.
        heft_node_sdk::field::write_frame(out, dims, 1000.0, [-500.0, -500.0, -500.0], |_| [3.0, 0.0, 0.0]);
    }
    let r = run(
        &[
            choice("pin", "free"),
            num("gravity", 0.0),
            num("damping", 0.5),
            num("relative_damping", 0.0),
            num("drag", 1.0),
        ],
        tl,
        &[("wind", wind)],
    )
    .expect("runs");
    let last = r.frames() - 1;
    for i in 0..r.n {
        let v = r.v(last, i);
        let off = ((v[0] - 2.0).powi(2) + v[1].powi(2) + v[2].powi(2)).sqrt();
        assert!(off < 1e-6, "particle {i}: velocity {v:?}, terminal (2, 0, 0) m/s");
    }
}

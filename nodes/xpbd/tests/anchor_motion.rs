//! The anchor's motion inside a frame reaches the strand as the anchor moves, not as a kick
//! once a frame: pins follow the cubic through the frame samples (exact for a parabola), and
//! the lanes start at second order.
use heft_strand_common::testing::free_fall_drift;

/// A 30 cm strand at 45 degrees on an anchor falling freely from rest, at 24 fps with the
/// default substeps, for half a second: weightless in the anchor's frame (equivalence
/// principle), it keeps its shape relative to the anchor within 1e-5 m in double precision and
/// 5e-5 m in single (measured: about 1e-15 m and 5e-7 m). With straight-line pins and a
/// first-order start it drifted 4 mm.
#[test]
fn a_strand_on_a_falling_anchor_keeps_its_shape_at_24_fps() {
    let f64_drift = free_fall_drift::<heft_xpbd::XpbdStrand>(24, None);
    let f32_drift = free_fall_drift::<heft_xpbd::XpbdStrandF32>(24, None);
    eprintln!("xpbd.strand {f64_drift:.2e} m, xpbd.strand_f32 {f32_drift:.2e} m");
    assert!(f64_drift < 1e-5, "{f64_drift}");
    assert!(f32_drift < 5e-5, "{f32_drift}");
}

//! What reaches a strand from its anchor's motion data: a glitch in the data is named as such.

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

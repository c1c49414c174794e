//! Plots: the pictures are written, carry their units and marks, and bad plot blocks are
//! reported in place.

use heft_integration_tests::heft;

fn run_jump() -> tempfile::TempDir {
    let out = tempfile::tempdir().expect("temp dir");
    let o = heft()
        .args(["run", "graphs/jump.graph", "--quiet", "--out"])
        .arg(out.path())
        .output()
        .expect("runs");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    out
}

#[test]
fn the_weight_plot_has_units_marks_and_the_body_weight_line() {
    let out = run_jump();
    let svg = std::fs::read_to_string(out.path().join("weight.svg")).expect("weight.svg");
    for want in [
        "ground reaction force [N]",
        "body weights [BW]",
        "time [s]",
        "take-off",
        "touch-down",
        "body weight 569 N (quiet standing)",
        "Odile&apos;s jump",
    ] {
        assert!(
            svg.contains(want) || svg.contains(&want.replace("&apos;", "'")),
            "`{want}` missing from weight.svg"
        );
    }
    // 58 kg x 9.80665 m/s^2 = 568.8 N: the reference line label rounds it.
    let png = std::fs::read(out.path().join("weight.png")).expect("weight.png");
    assert_eq!(&png[..8], b"\x89PNG\r\n\x1a\n", "a PNG signature");
    // IHDR: width and height, big-endian, at bytes 16..24.
    assert_eq!(u32::from_be_bytes([png[16], png[17], png[18], png[19]]), 1100);
    assert_eq!(u32::from_be_bytes([png[20], png[21], png[22], png[23]]), 620);
    let com = std::fs::read_to_string(out.path().join("com.svg")).expect("com.svg");
    assert!(
        com.contains("value [m]") && com.contains("odile.com_position.z"),
        "line plot labels"
    );
}

#[test]
fn bad_plot_blocks_are_reported_in_place() {
    let dir = tempfile::tempdir().expect("temp dir");
    let g = dir.path().join("p.graph");
    std::fs::write(
        &g,
        "format 1\nrate 24 fps\nframes 0..10\nb = trajectory.ballistic\n\
plot \"a.svg\"\n    b.position\n    style = body_weights\n\
plot \"c.jpg\"\n    b.position\n\
plot \"d.svg\"\n    b.position\n    b.velocity\n",
    )
    .expect("write");
    let o = heft().arg("check").arg(&g).output().expect("runs");
    assert_eq!(o.status.code(), Some(1));
    let err = String::from_utf8_lossy(&o.stderr);
    for want in [
        "p.graph:6:5: `b.position` (vec3) cannot be drawn in this plot style",
        "p.graph:5:6: a body_weights plot takes one force series (N) and at most one contact flag",
        "p.graph:5:6: a body_weights plot needs the body mass",
        "p.graph:8:6: `c.jpg` should end in .svg or .png",
        "p.graph:10:6: the series of one plot must share a unit",
    ] {
        assert!(err.contains(want), "missing `{want}` in:\n{err}");
    }
}

//! Host-side tracks: force channels read from CSV files when a graph is checked, with
//! errors that name the file, line and column.

use std::path::Path;

use heft_integration_tests::{registry, workspace_root};
use heft_runtime::check::{Overrides, check};
use heft_runtime::diag::Problem;
use heft_runtime::eval::evaluate;
use heft_runtime::read_graph;

fn plan_in(dir: &Path, csv: &str, body: &str) -> Result<heft_runtime::check::Plan, Vec<Problem>> {
    std::fs::write(dir.join("plate.csv"), csv).expect("write csv");
    let graph = dir.join("g.graph");
    std::fs::write(&graph, format!("format 1\nrate 100 fps\nframes 0..3\n{body}")).expect("write graph");
    let (g, p) = read_graph(&graph).expect("readable");
    check(&g, p, &registry(), &Overrides::default())
}

const NODE: &str = "plate = track.force\n    file = \"plate.csv\"\n    column = \"Fz\"\nwrite plate.value\n";

fn one_problem(dir: &Path, csv: &str, body: &str) -> (String, String, Option<String>) {
    let p = plan_in(dir, csv, body).expect_err("a problem");
    assert_eq!(p.len(), 1, "{p:?}");
    (
        p[0].location(),
        p[0].message.clone(),
        p[0].help.as_deref().map(str::to_owned),
    )
}

#[test]
fn a_force_track_is_read_into_frames() {
    let dir = tempfile::tempdir().expect("temp dir");
    let csv = "time,Fz,Fx\n0.00,569.1,1\n0.01,570.2,2\n0.02,571.3,3\n0.03,1.2,4\n0.04,0.5,5\n";
    let plan = plan_in(dir.path(), csv, NODE).expect("checks");
    let e = evaluate(&plan, Some(1)).expect("evaluates");
    assert_eq!(e.values[0][0], [569.1, 570.2, 571.3, 1.2]);
    // kN and milliseconds are converted to SI.
    let csv = "t_ms,Fz_kN\n0,0.5691\n10,0.5702\n20,0.5713\n30,0.0012\n";
    let body = "plate = track.force\n    file = \"plate.csv\"\n    time_column = \"t_ms\"\n    time_unit = ms\n    column = \"Fz_kN\"\n    unit = kN\n";
    let plan = plan_in(dir.path(), csv, body).expect("checks");
    let e = evaluate(&plan, Some(1)).expect("evaluates");
    let want = [569.1, 570.2, 571.3, 1.2];
    for (got, want) in e.values[0][0].iter().zip(want) {
        assert!((got - want).abs() < 1e-9, "{got} vs {want}");
    }
}

#[test]
fn a_missing_column_names_the_file_and_the_columns_it_has() {
    let dir = tempfile::tempdir().expect("temp dir");
    let (at, msg, help) = one_problem(dir.path(), "time,Fy\n0,1\n0.01,2\n0.02,3\n0.03,4\n", NODE);
    assert_eq!(at, format!("{}:6:14", dir.path().join("g.graph").display()));
    assert_eq!(
        msg,
        format!("{} has no column `Fz`", dir.path().join("plate.csv").display())
    );
    assert_eq!(help.as_deref(), Some("its columns are: `time`, `Fy`"));
}

#[test]
fn a_non_number_names_file_line_and_column() {
    let dir = tempfile::tempdir().expect("temp dir");
    let (_, msg, _) = one_problem(dir.path(), "time,Fz\n0,1\n0.01,2\n0.02,n/a\n0.03,4\n", NODE);
    assert_eq!(
        msg,
        format!(
            "{}: line 4, column `Fz`: `n/a` is not a number",
            dir.path().join("plate.csv").display()
        )
    );
}

#[test]
fn time_that_does_not_increase_is_an_error() {
    let dir = tempfile::tempdir().expect("temp dir");
    let (_, msg, _) = one_problem(dir.path(), "time,Fz\n0,1\n0.01,2\n0.01,3\n0.03,4\n", NODE);
    assert!(
        msg.ends_with("line 4: the time 0.01 s does not increase (the line before has 0.01 s)"),
        "{msg}"
    );
}

/// A file sampled at 50 Hz read by a 100 fps graph: frames between samples are linear
/// interpolations (exact here, since the samples lie on a straight line).
#[test]
fn a_track_at_another_rate_is_resampled_linearly() {
    let dir = tempfile::tempdir().expect("temp dir");
    let plan = plan_in(dir.path(), "time,Fz\n0,100\n0.02,300\n0.04,500\n0.06,700\n", NODE).expect("checks");
    let e = evaluate(&plan, Some(1)).expect("evaluates");
    let got = &e.values[0][0];
    for (g, want) in got.iter().zip([100.0, 200.0, 300.0, 400.0]) {
        assert!((g - want).abs() < 1e-9, "{got:?}");
    }
}

#[test]
fn a_track_shorter_than_the_timeline_is_an_error() {
    let dir = tempfile::tempdir().expect("temp dir");
    let (_, msg, help) = one_problem(dir.path(), "time,Fz\n0,1\n0.01,2\n0.02,3\n", NODE);
    assert!(
        msg.ends_with("covers 0 s to 0.02 s, but the graph evaluates frames 0..3 (0 s to 0.03 s)"),
        "{msg}"
    );
    assert_eq!(
        help.as_deref(),
        Some("set a frame range inside frames 0..2, or `outside = hold` or `loop`")
    );
}

/// Positions in centimetres become metres; rotations given as quaternions are slerped between
/// samples (Shoemake 1985): halfway between the identity and a quarter turn about Z is an
/// eighth of a turn.
#[test]
fn a_transform_track_converts_units_and_slerps_rotations() {
    let dir = tempfile::tempdir().expect("temp dir");
    let h = std::f64::consts::FRAC_PI_4;
    let csv = format!(
        "time,px,py,pz,qx,qy,qz,qw\n0,0,0,100,0,0,0,1\n0.02,10,0,100,0,0,{},{}\n0.04,20,0,100,0,0,{},{}\n",
        h.sin(),
        h.cos(),
        h.sin(),
        h.cos()
    );
    let body = "hips = track.transform\n    file = \"plate.csv\"\n    x_column = \"px\"\n    y_column = \"py\"\n    z_column = \"pz\"\n    unit = cm\n    rotation = quaternion\n";
    std::fs::write(dir.path().join("plate.csv"), csv).expect("write");
    let graph = dir.path().join("g.graph");
    std::fs::write(&graph, format!("format 1\nrate 100 fps\nframes 0..4\n{body}")).expect("write graph");
    let (g, p) = read_graph(&graph).expect("readable");
    let plan = check(&g, p, &registry(), &Overrides::default()).expect("checks");
    let v = &evaluate(&plan, None).expect("evaluates").values[0][0];
    // Frame 1 (0.01 s): x = 5 cm, z = 1 m, rotation an eighth turn about z.
    let f1 = &v[7..14];
    let e = std::f64::consts::PI / 8.0;
    assert!((f1[0] - 0.05).abs() < 1e-12 && (f1[2] - 1.0).abs() < 1e-12, "{f1:?}");
    assert!(
        (f1[5] - e.sin()).abs() < 1e-12 && (f1[6] - e.cos()).abs() < 1e-12,
        "{f1:?}"
    );
}

#[test]
fn a_zero_length_quaternion_names_the_line() {
    let dir = tempfile::tempdir().expect("temp dir");
    let body = "hips = track.transform\n    file = \"plate.csv\"\n    rotation = quaternion\n";
    let csv = "time,x,y,z,qx,qy,qz,qw\n0,0,0,0,0,0,0,1\n0.01,0,0,0,0,0,0,0\n0.02,0,0,0,0,0,0,1\n0.03,0,0,0,0,0,0,1\n";
    let (_, msg, _) = one_problem(dir.path(), csv, body);
    assert!(
        msg.ends_with("plate.csv: line 3: the rotation (0, 0, 0, 0) has zero length"),
        "{msg}"
    );
}

#[test]
fn a_missing_file_is_an_error_at_the_file_line() {
    let dir = tempfile::tempdir().expect("temp dir");
    let body = "plate = track.force\n    file = \"nowhere.csv\"\n    column = \"Fz\"\n";
    let (at, msg, _) = one_problem(dir.path(), "time,Fz\n", body);
    assert!(at.ends_with("g.graph:5:12"), "{at}");
    assert!(
        msg.starts_with(&format!("cannot read {}", dir.path().join("nowhere.csv").display())),
        "{msg}"
    );
}

/// A file given on the command line is found as a shell user expects: relative to the folder
/// heft runs in, not to the graph's folder (`graphs/other.csv` is a decoy with other values).
/// In the graph itself, the path is the graph's own (`plate.csv` beside it).
#[test]
fn a_file_set_on_the_command_line_is_relative_to_where_heft_runs() {
    let dir = tempfile::tempdir().expect("temp dir");
    let graphs = dir.path().join("graphs");
    std::fs::create_dir_all(&graphs).expect("mkdir");
    std::fs::write(dir.path().join("other.csv"), "time,Fz\n0,7\n0.01,8\n0.02,9\n0.03,10\n").expect("write");
    std::fs::write(graphs.join("other.csv"), "time,Fz\n0,-1\n0.01,-1\n0.02,-1\n0.03,-1\n").expect("write");
    std::fs::write(graphs.join("plate.csv"), "time,Fz\n0,1\n0.01,2\n0.02,3\n0.03,4\n").expect("write");
    std::fs::write(
        graphs.join("g.graph"),
        format!("format 1\nrate 100 fps\nframes 0..3\n{NODE}"),
    )
    .expect("write graph");
    let force = |set: Option<&str>| -> Vec<f64> {
        let mut cmd = heft_integration_tests::heft();
        cmd.current_dir(dir.path())
            .args(["run", "graphs/g.graph", "--quiet", "--out", "out"]);
        if let Some(s) = set {
            cmd.args(["--set", s]);
        }
        let o = cmd.output().expect("runs");
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        let text = std::fs::read_to_string(dir.path().join("out/plate.value.csv")).expect("csv");
        text.lines()
            .skip(1)
            .map(|l| l.rsplit(',').next().unwrap().parse().unwrap())
            .collect()
    };
    assert_eq!(force(None), [1.0, 2.0, 3.0, 4.0]);
    assert_eq!(force(Some("plate.file=other.csv")), [7.0, 8.0, 9.0, 10.0]);
}

/// Time controls: a take whose shot starts 10 s in reads with `time_offset = 10 s`; `hold`
/// keeps the end values; `loop` repeats the covered time; `refuse` (the default) names the
/// range it would need.
#[test]
fn time_offset_and_outside() {
    let dir = tempfile::tempdir().expect("temp dir");
    // Samples at 10.00 .. 10.03 s: frame k (k/100 s) reads k/100 + 10 s.
    let csv = "time,Fz\n10.00,1\n10.01,2\n10.02,3\n10.03,4\n";
    let body = "plate = track.force\n    file = \"plate.csv\"\n    column = \"Fz\"\n    time_offset = 10 s\n";
    let plan = plan_in(dir.path(), csv, body).expect("checks");
    assert_eq!(
        evaluate(&plan, Some(1)).expect("evaluates").values[0][0],
        [1.0, 2.0, 3.0, 4.0]
    );
    // Half a sample later: linear between samples.
    let body = "plate = track.force\n    file = \"plate.csv\"\n    column = \"Fz\"\n    time_offset = 10.005 s\n    outside = hold\n";
    let plan = plan_in(dir.path(), csv, body).expect("checks");
    let v = &evaluate(&plan, Some(1)).expect("evaluates").values[0][0];
    for (got, want) in v.iter().zip([1.5, 2.5, 3.5, 4.0]) {
        assert!((got - want).abs() < 1e-9, "{v:?}");
    }
    // Loop: a 3-sample cycle 0, 1, 2 (period 0.02 s, the last sample equal to the first).
    let csv = "time,Fz\n0.00,0\n0.01,1\n0.02,0\n";
    let body = "plate = track.force\n    file = \"plate.csv\"\n    column = \"Fz\"\n    outside = loop\n";
    let plan = plan_in(dir.path(), csv, body).expect("checks");
    let v = &evaluate(&plan, Some(1)).expect("evaluates").values[0][0];
    for (got, want) in v.iter().zip([0.0, 1.0, 0.0, 1.0]) {
        assert!((got - want).abs() < 1e-9, "{v:?}");
    }
    let body = "plate = track.force\n    file = \"plate.csv\"\n    column = \"Fz\"\n";
    let (_, msg, help) = one_problem(dir.path(), csv, body);
    assert!(msg.contains("covers 0 s to 0.02 s"), "{msg}");
    assert!(help.is_some_and(|h| h.contains("`outside = hold` or `loop`")));
}

/// Y-up position data (a capture exported Y up) is turned into heft's Z up:
/// (x, y, z) -> (x, -z, y), and quaternions the same way.
#[test]
fn y_up_tracks_are_turned_z_up() {
    let dir = tempfile::tempdir().expect("temp dir");
    let h = std::f64::consts::FRAC_PI_8; // a quarter turn about the file's Y (its up axis)
    let csv = format!(
        "time,x,y,z,qx,qy,qz,qw\n0,1,2,3,0,{s},0,{c}\n0.01,1,2,3,0,{s},0,{c}\n0.02,1,2,3,0,{s},0,{c}\n0.03,1,2,3,0,{s},0,{c}\n",
        s = (2.0 * h).sin(),
        c = (2.0 * h).cos()
    );
    let body = "hand = track.transform\n    file = \"plate.csv\"\n    rotation = quaternion\n    axes = y_up\n";
    let plan = plan_in(dir.path(), &csv, body).expect("checks");
    let v = &evaluate(&plan, Some(1)).expect("evaluates").values[0][0];
    assert_eq!(&v[..3], &[1.0, -3.0, 2.0]);
    // A turn about the file's up axis is a turn about heft's +Z: (qx, -qz, qy, qw).
    let want = [0.0, 0.0, (2.0 * h).sin(), (2.0 * h).cos()];
    for k in 0..4 {
        assert!((v[3 + k] - want[k]).abs() < 1e-12, "{v:?}");
    }
}

/// Values that overflow are refused, never written as `inf`: a force column of 1e306 kN is
/// 1e309 N, past the largest f64 (1.8e308), and the run stops naming the node, the output, the
/// frame and the value; positions of 1e308 m fit an f64 (the CSV could hold them) but not the
/// 32-bit floats of a glTF bake (3.4e38), and the bake is refused naming the joint and the frame.
#[test]
fn values_that_overflow_are_refused_not_written() {
    let dir = tempfile::tempdir().expect("temp dir");
    let csv = "time,Fz\n0.00,0.5\n0.01,1e306\n0.02,0.5\n0.03,0.5\n";
    let body = "plate = track.force\n    file = \"plate.csv\"\n    column = \"Fz\"\n    unit = kN\nwrite plate.value\n";
    let plan = plan_in(dir.path(), csv, body).expect("checks");
    let e = evaluate(&plan, Some(1)).expect_err("inf");
    assert!(
        e.to_string()
            .contains("node `plate` wrote inf to output `value` (column `value [N]`) at frame 1"),
        "{e}"
    );

    let csv = "time,x,y,z\n0,0,0,1e308\n0.01,0,0,-1e308\n0.02,0,0,1\n0.03,0,0,1\n";
    let body = "hips = track.position\n    file = \"plate.csv\"\nwrite hips.value\nbake \"b.glb\"\n    hips.value\n";
    let plan = plan_in(dir.path(), csv, body).expect("checks");
    let e = evaluate(&plan, Some(1)).expect("evaluates: the values are finite");
    let err = heft_formats::gltf_out::bake_files(&plan, &e, &plan.bakes[0]).expect_err("beyond f32");
    assert!(
        err.contains("the translation of `hips_value` at frame 0 is 1e308, beyond what glTF's 32-bit floats hold"),
        "{err}"
    );
}

/// A graph file that starts with a UTF-8 byte-order mark (as some editors save) reads like
/// any other, and a glTF file given to a CSV track is named for what it is, not "invalid
/// UTF-8".
#[test]
fn a_byte_order_mark_is_read_and_a_gltf_file_is_not_taken_for_csv() {
    let dir = tempfile::tempdir().expect("temp dir");
    std::fs::write(dir.path().join("plate.csv"), "time,Fz\n0,1\n0.01,2\n0.02,3\n0.03,4\n").expect("write");
    let graph = dir.path().join("g.graph");
    std::fs::write(&graph, format!("\u{feff}format 1\nrate 100 fps\nframes 0..3\n{NODE}")).expect("write graph");
    let (g, p) = read_graph(&graph).expect("readable");
    let plan = check(&g, p, &registry(), &Overrides::default()).expect("checks with a BOM");
    assert_eq!(
        evaluate(&plan, None).expect("evaluates").values[0][0],
        [1.0, 2.0, 3.0, 4.0]
    );

    std::fs::copy(workspace_root().join("data/juno.glb"), dir.path().join("plate.csv")).expect("copy");
    let (g, p) = read_graph(&graph).expect("readable");
    let problems = check(&g, p, &registry(), &Overrides::default()).expect_err("a glTF file");
    assert_eq!(problems.len(), 1, "{problems:?}");
    assert!(
        problems[0]
            .message
            .contains("is a glTF file, not a CSV table: read it with `track.character`"),
        "{}",
        problems[0].message
    );
}

//! Host-side tracks: force channels read from CSV files when a graph is checked, with
//! errors that name the file, line and column.

use std::path::Path;

use heft_integration_tests::registry;
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
    (p[0].location(), p[0].message.clone(), p[0].help.clone())
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
        msg.ends_with("line 4: the time 0.01 does not increase (the line before has 0.01)"),
        "{msg}"
    );
}

#[test]
fn a_sample_rate_other_than_the_graph_rate_is_an_error() {
    let dir = tempfile::tempdir().expect("temp dir");
    let (_, msg, help) = one_problem(dir.path(), "time,Fz\n0,1\n0.02,2\n0.04,3\n0.06,4\n", NODE);
    assert!(
        msg.contains("samples 1 and 2 are 0.02 s apart, but the graph runs at 100 fps (0.01 s per frame)"),
        "{msg}"
    );
    assert!(help.is_some_and(|h| h.contains("about 50 fps")));
}

#[test]
fn a_track_shorter_than_the_timeline_is_an_error() {
    let dir = tempfile::tempdir().expect("temp dir");
    let (_, msg, help) = one_problem(dir.path(), "time,Fz\n0,1\n0.01,2\n0.02,3\n", NODE);
    assert!(
        msg.ends_with("covers frames 0..2 (0 s to 0.02 s), but the graph evaluates frames 0..3"),
        "{msg}"
    );
    assert_eq!(help.as_deref(), Some("set `frames 0..2` or a range inside it"));
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

#[test]
fn the_file_can_be_set_from_the_command_line_without_quotes() {
    let dir = tempfile::tempdir().expect("temp dir");
    std::fs::write(dir.path().join("other.csv"), "time,Fz\n0,7\n0.01,8\n0.02,9\n0.03,10\n").expect("write");
    std::fs::write(dir.path().join("plate.csv"), "time,Fz\n0,1\n0.01,2\n0.02,3\n0.03,4\n").expect("write");
    let graph = dir.path().join("g.graph");
    std::fs::write(&graph, format!("format 1\nrate 100 fps\nframes 0..3\n{NODE}")).expect("write graph");
    let (g, p) = read_graph(&graph).expect("readable");
    let set = Overrides {
        set: vec!["plate.file=other.csv".into()],
        frames: None,
    };
    let plan = check(&g, p, &registry(), &set).expect("checks");
    assert_eq!(
        evaluate(&plan, None).expect("evaluates").values[0][0],
        [7.0, 8.0, 9.0, 10.0]
    );
}

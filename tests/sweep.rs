//! `heft sweep`: grids of runs, shards of a job array, and the summary table.

use heft_integration_tests::{heft, read_csv, run_parameter};

#[test]
fn a_sweep_runs_every_grid_point_and_tables_the_summaries() {
    let out = tempfile::tempdir().expect("temp dir");
    let o = heft()
        .args([
            "sweep",
            "graphs/jump.graph",
            "--quiet",
            "--vary",
            "odile.takeoff_speed=2.2..2.6 m/s:3",
        ])
        .args([
            "--vary",
            "odile.crouch_depth=25..30 cm:2",
            "--summary",
            "odile.rise",
            "--out",
        ])
        .arg(out.path())
        .output()
        .expect("runs");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let (header, rows) = read_csv_text(&out.path().join("sweep.csv"));
    assert_eq!(
        header,
        [
            "point",
            "folder",
            "odile.takeoff_speed.set [m/s]",
            "odile.crouch_depth.set [m]",
            "odile.rise [m]",
            "error"
        ]
    );
    assert_eq!(rows.len(), 6);
    // Row-major: the last axis varies fastest. 25 cm is 0.25 m in SI.
    assert_eq!(rows[1][2..4], ["2.2".to_owned(), "0.3".to_owned()]);
    assert_eq!(rows[2][2..4], ["2.4".to_owned(), "0.25".to_owned()]);
    // Each point has its own folder with its own run summary, and a faster push jumps higher.
    let rise: Vec<f64> = rows.iter().map(|r| r[4].parse().expect("number")).collect();
    assert!(rise[0] < rise[2] && rise[2] < rise[4], "{rise:?}");
    for r in &rows {
        assert!(out.path().join(&r[1]).join("run.json").is_file(), "{}", r[1]);
        let (_, com) = read_csv(&out.path().join(&r[1]).join("com.csv"));
        assert_eq!(com.len(), 85);
        // The point's run.json records the values it ran with, in SI.
        let folder = out.path().join(&r[1]);
        let param = |name: &str| run_parameter(&folder, "odile", name);
        assert_eq!(param("takeoff_speed").to_string(), r[2]);
        assert_eq!(param("crouch_depth").to_string(), r[3]);
    }
}

#[test]
fn shards_split_the_grid_without_overlap() {
    let out = tempfile::tempdir().expect("temp dir");
    for shard in ["0/3", "1/3", "2/3"] {
        let o = heft()
            .args([
                "sweep",
                "graphs/toss.graph",
                "-q",
                "--vary",
                "parcel.launch_time=0..0.5 s:7",
                "--shard",
                shard,
                "--out",
            ])
            .arg(out.path())
            .output()
            .expect("runs");
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    }
    let mut points: Vec<usize> = Vec::new();
    for i in 0..3 {
        let (_, rows) = read_csv_text(&out.path().join(format!("sweep-shard-{i}-of-3.csv")));
        points.extend(rows.iter().map(|r| r[0].parse::<usize>().expect("index")));
        assert!(rows.iter().all(|r| r[0].parse::<usize>().expect("index") % 3 == i));
    }
    points.sort_unstable();
    assert_eq!(points, (0..7).collect::<Vec<_>>());
    // A shard with no point (the eighth of a seven-point grid split eight ways) writes the
    // same header as the others, so the tables concatenate.
    let o = heft()
        .args([
            "sweep",
            "graphs/toss.graph",
            "-q",
            "--vary",
            "parcel.launch_time=0..0.5 s:7",
        ])
        .args(["--shard", "7/8", "--out"])
        .arg(out.path())
        .output()
        .expect("runs");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let (empty, rows) = read_csv_text(&out.path().join("sweep-shard-7-of-8.csv"));
    let (full, _) = read_csv_text(&out.path().join("sweep-shard-0-of-3.csv"));
    assert!(rows.is_empty());
    assert_eq!(empty, full);
}

#[test]
fn a_failing_point_is_recorded_and_the_sweep_goes_on() {
    let out = tempfile::tempdir().expect("temp dir");
    // Gravity above 100 m/s^2 is out of range for the parcel: the last point fails.
    let o = heft()
        .args([
            "sweep",
            "graphs/toss.graph",
            "-q",
            "--vary",
            "parcel.gravity=9..109 m/s^2:3",
            "--out",
        ])
        .arg(out.path())
        .output()
        .expect("runs");
    assert_eq!(o.status.code(), Some(1));
    let (_, rows) = read_csv_text(&out.path().join("sweep.csv"));
    assert_eq!(rows.len(), 3);
    assert!(rows[0][rows[0].len() - 1].is_empty() && rows[1][rows[1].len() - 1].is_empty());
    assert!(rows[2][rows[2].len() - 1].contains("out of range"), "{:?}", rows[2]);
    // The failed point wrote no folder, and its row names none.
    assert!(
        rows[2][1].is_empty() && !out.path().join("point-0002").exists(),
        "{:?}",
        rows[2]
    );
    assert!(out.path().join("point-0001/run.json").is_file());
}

#[test]
fn bad_sweep_arguments_are_usage_errors() {
    for vary in ["odile.rise=1..2", "rise=1..2:3", "odile.rise=1 m..2 s:3"] {
        let o = heft()
            .args(["sweep", "graphs/jump.graph", "--vary", vary])
            .output()
            .expect("runs");
        assert_eq!(o.status.code(), Some(2), "{vary}");
    }
    let o = heft()
        .args([
            "sweep",
            "graphs/jump.graph",
            "--vary",
            "odile.rise=1..2 m:2",
            "--shard",
            "3/3",
        ])
        .output()
        .expect("runs");
    assert_eq!(o.status.code(), Some(2));
}

fn read_csv_text(path: &std::path::Path) -> (Vec<String>, Vec<Vec<String>>) {
    let mut r = csv::Reader::from_path(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    let header = r.headers().expect("header").iter().map(str::to_owned).collect();
    let rows = r
        .records()
        .map(|x| x.expect("row").iter().map(str::to_owned).collect())
        .collect();
    (header, rows)
}

//! Parquet outputs (`write node.port format parquet`), read back by readers heft did not write
//! them with, against the graph's evaluation: hyparquet, a JavaScript reader (npm, pinned by
//! tests/clients/package-lock.json, run by tests/clients/read_parquet.sh), and the Rust
//! `parquet` crate's own record reader for the window-by-window writing.
//!
//! The expected tables are built here from the evaluation's values and the graph's own
//! figures (24 fps, 3 strands of 4 segments), not from heft's writer.

use std::path::Path;
use std::process::Command;

use heft_integration_tests::{heft, registry, workspace_root};
use heft_runtime::check::{Overrides, Plan};
use heft_runtime::eval::{Evaluation, evaluate};
use serde_json::Value;

const GRAPH: &str = "format 1
rate 24 fps
frames -3..40
odile = trajectory.jump
    takeoff_frame = 14
hair = xpbd.strand
    count = 3
    segments = 4
odile.head -> hair.anchor
write hair.positions format parquet
write hair.positions
write odile.head format parquet
write odile.contact format parquet
write odile.foot_height format parquet
write odile.colliders format parquet
write odile.com_position as com format parquet
";

/// Joints per strand in `GRAPH`: its segments plus one.
const JOINTS: usize = 5;

/// The plan and evaluation of `GRAPH`, in this process.
fn evaluated() -> (Plan, Evaluation) {
    let plan = heft_runtime::plan_text("p.graph", GRAPH, &registry(), &Overrides::default()).expect("plans");
    let eval = evaluate(&plan, Some(1)).expect("evaluates");
    (plan, eval)
}

/// What hyparquet reads from `file` (see tests/clients/read_parquet.mjs).
fn hyparquet(file: &Path) -> Value {
    let o = Command::new("bash")
        .arg(workspace_root().join("tests/clients/read_parquet.sh"))
        .arg(file)
        .output()
        .expect("bash runs");
    assert!(
        o.status.success(),
        "hyparquet could not read {}:\n{}",
        file.display(),
        String::from_utf8_lossy(&o.stderr)
    );
    serde_json::from_slice(&o.stdout).expect("JSON from read_parquet.mjs")
}

/// The 16 hexadecimal digits of an f64's bits, as read_parquet.mjs prints a DOUBLE.
fn bits(v: f64) -> String {
    format!("{:016x}", v.to_bits())
}

/// One expected column: its name, its Parquet type and its values as read_parquet.mjs prints them.
type Col = (String, &'static str, Vec<String>);

/// The expected long table of output `port` of node `node`: the index columns (`frame`, `time
/// [s]`, and `strand`/`joint` or `point` for points), then `names`, one value per row from the
/// evaluation: a points output has one row per frame and point, `names` being x, y, z.
fn expected(plan: &Plan, eval: &Evaluation, node: &str, port: &str, names: &[&str], joints: Option<usize>) -> Vec<Col> {
    let n = plan.nodes.iter().position(|p| p.name == node).expect("node");
    let k = plan.nodes[n]
        .ty
        .spec()
        .outputs
        .iter()
        .position(|o| o.name == port)
        .expect("port");
    let values = &eval.values[n][k];
    let frames = 44; // -3..40
    let width = values.len() / frames;
    let points = plan.nodes[n].outputs[k].kind == heft_node_sdk::PortKind::Points;
    let rows_per_frame = if points { width / 3 } else { 1 };
    let rows = frames * rows_per_frame;
    let (f, p) = (|r: usize| r / rows_per_frame, |r: usize| r % rows_per_frame);
    let mut cols: Vec<Col> = vec![
        (
            "frame".into(),
            "INT64",
            (0..rows).map(|r| (f(r) as i64 - 3).to_string()).collect(),
        ),
        (
            "time [s]".into(),
            "DOUBLE",
            (0..rows).map(|r| bits((f(r) as f64 - 3.0) / 24.0)).collect(),
        ),
    ];
    if points {
        match joints {
            Some(c) => {
                cols.push((
                    "strand".into(),
                    "INT64",
                    (0..rows).map(|r| (p(r) / c).to_string()).collect(),
                ));
                cols.push((
                    "joint".into(),
                    "INT64",
                    (0..rows).map(|r| (p(r) % c).to_string()).collect(),
                ));
            }
            None => cols.push(("point".into(), "INT64", (0..rows).map(|r| p(r).to_string()).collect())),
        }
    }
    for (j, name) in names.iter().enumerate() {
        let at = |r: usize| {
            if points {
                values[f(r) * width + 3 * p(r) + j]
            } else {
                values[f(r) * width + j]
            }
        };
        cols.push(((*name).to_owned(), "DOUBLE", (0..rows).map(|r| bits(at(r))).collect()));
    }
    cols
}

fn strs(v: &[String]) -> Vec<&str> {
    v.iter().map(String::as_str).collect()
}

/// Compares what hyparquet read with the expected columns; returns the misses.
fn compare(file: &str, read: &Value, want: &[Col]) -> Vec<String> {
    let mut misses = Vec::new();
    let schema: Vec<(String, String)> = read["schema"]
        .as_array()
        .expect("schema")
        .iter()
        .map(|s| {
            (
                s["name"].as_str().unwrap_or("").to_owned(),
                s["type"].as_str().unwrap_or("").to_owned(),
            )
        })
        .collect();
    let want_schema: Vec<(String, String)> = want.iter().map(|(n, t, _)| (n.clone(), (*t).to_owned())).collect();
    if schema != want_schema {
        misses.push(format!("{file}: columns {schema:?}, expected {want_schema:?}"));
        return misses;
    }
    let rows = want[0].2.len();
    if read["rows"].as_u64() != Some(rows as u64) {
        misses.push(format!("{file}: {} rows, expected {rows}", read["rows"]));
    }
    for (name, _, values) in want {
        let got: Vec<&str> = read["columns"][name]
            .as_array()
            .map(|a| a.iter().map(|v| v.as_str().unwrap_or("?")).collect())
            .unwrap_or_default();
        if let Some(r) = (0..rows).find(|&r| got.get(r).copied() != Some(values[r].as_str())) {
            misses.push(format!(
                "{file}: column `{name}` row {r}: read {:?}, expected {}",
                got.get(r),
                values[r]
            ));
        }
    }
    misses
}

/// Every Parquet output of a `heft run`, read by hyparquet, holds the evaluation's values bit
/// for bit in the long layout, with the units in the column names and in the `heft` metadata;
/// run.json lists each file with its format and columns.
#[test]
fn parquet_outputs_read_by_hyparquet_hold_the_evaluation() {
    let dir = tempfile::tempdir().expect("temp dir");
    let graph = dir.path().join("p.graph");
    std::fs::write(&graph, GRAPH).expect("write graph");
    let out = dir.path().join("out");
    let o = heft()
        .arg("run")
        .arg(&graph)
        .arg("--out")
        .arg(&out)
        .arg("--quiet")
        .output()
        .expect("heft runs");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let (plan, eval) = evaluated();
    let xyz = |s: &str, unit: &str| -> Vec<String> { ["x", "y", "z"].map(|a| format!("{s}.{a} [{unit}]")).to_vec() };
    let hair = xyz("hair.positions", "m");
    let colliders = xyz("odile.colliders", "m");
    let com = xyz("odile.com_position", "m");
    let head = [
        "odile.head.tx [m]",
        "odile.head.ty [m]",
        "odile.head.tz [m]",
        "odile.head.qx",
        "odile.head.qy",
        "odile.head.qz",
        "odile.head.qw",
    ];
    let cases: Vec<(&str, Vec<Col>)> = vec![
        (
            "hair.positions.parquet",
            expected(&plan, &eval, "hair", "positions", &strs(&hair), Some(JOINTS)),
        ),
        (
            "odile.head.parquet",
            expected(&plan, &eval, "odile", "head", &head, None),
        ),
        (
            "odile.contact.parquet",
            expected(&plan, &eval, "odile", "contact", &["odile.contact [on/off]"], None),
        ),
        (
            "odile.foot_height.parquet",
            expected(&plan, &eval, "odile", "foot_height", &["odile.foot_height [m]"], None),
        ),
        (
            "odile.colliders.parquet",
            expected(&plan, &eval, "odile", "colliders", &strs(&colliders), None),
        ),
        (
            "com.parquet",
            expected(&plan, &eval, "odile", "com_position", &strs(&com), None),
        ),
    ];
    // The unit of every column, in order (none for a frame number, an index, a quaternion
    // component or an on/off flag).
    let units = |file: &str| -> Vec<&str> {
        match file {
            "hair.positions.parquet" => vec!["", "s", "", "", "m", "m", "m"],
            "odile.head.parquet" => vec!["", "s", "m", "m", "m", "", "", "", ""],
            "odile.contact.parquet" => vec!["", "s", ""],
            "odile.foot_height.parquet" => vec!["", "s", "m"],
            "odile.colliders.parquet" => vec!["", "s", "", "m", "m", "m"],
            _ => vec!["", "s", "m", "m", "m"],
        }
    };
    let run: Value = serde_json::from_slice(&std::fs::read(out.join("run.json")).expect("run.json")).expect("JSON");
    let mut misses = Vec::new();
    for (file, want) in &cases {
        let read = hyparquet(&out.join(file));
        misses.extend(compare(file, &read, want));
        // The metadata: the series, its kind and each value column's unit.
        let meta: Value =
            serde_json::from_str(read["metadata"]["heft"].as_str().unwrap_or("null")).expect("heft metadata");
        if meta["frame_rate"] != "24/1" || meta["first_frame"] != -3 || meta["frame_count"] != 44 {
            misses.push(format!("{file}: timeline metadata {meta}"));
        }
        for (name, unit) in want.iter().map(|(n, _, _)| n).zip(units(file)) {
            if meta["units"][name] != *unit {
                misses.push(format!(
                    "{file}: unit of `{name}` is {}, expected `{unit}`",
                    meta["units"][name]
                ));
            }
        }
        // run.json: the file, its format, and the columns after `frame` and `time [s]`.
        let entry = run["outputs"]
            .as_array()
            .and_then(|o| o.iter().find(|e| e["file"] == *file))
            .unwrap_or_else(|| panic!("{file} not in run.json"));
        let listed: Vec<&str> = entry["columns"]
            .as_array()
            .map(|c| c.iter().filter_map(Value::as_str).collect())
            .unwrap_or_default();
        let want_listed: Vec<&str> = want[2..].iter().map(|(n, _, _)| n.as_str()).collect();
        if entry["format"] != "parquet" || listed != want_listed {
            misses.push(format!(
                "{file}: run.json lists {entry}, expected columns {want_listed:?}"
            ));
        }
    }
    let meta: Value = serde_json::from_str(
        hyparquet(&out.join("hair.positions.parquet"))["metadata"]["heft"]
            .as_str()
            .unwrap_or("null"),
    )
    .expect("metadata");
    assert_eq!(meta["joints_per_strand"], JOINTS as u64);
    assert_eq!(meta["node"], "hair");
    assert_eq!(meta["output"], "positions");
    assert!(misses.is_empty(), "{}", misses.join("\n"));
    // The same run's CSV of the strands is still written beside it, and is listed as CSV.
    let csv = run["outputs"]
        .as_array()
        .and_then(|o| o.iter().find(|e| e["file"] == "hair.positions.csv"))
        .expect("the CSV too");
    assert_eq!(csv["format"], "csv");
}

/// The writer takes the frames in windows, in order: a file written in three windows reads
/// back (with the `parquet` crate's own record reader) as the same rows as one written whole,
/// and a window out of order is refused with a message, not a panic.
#[test]
fn parquet_written_window_by_window_reads_as_written_whole() {
    use heft_formats::parquet_out::ParquetWriter;
    use parquet::file::reader::{FileReader, SerializedFileReader};

    let (plan, eval) = evaluated();
    let w = plan
        .writes
        .iter()
        .find(|w| w.stem == "hair.positions" && w.format == heft_runtime::check::WriteFormat::Parquet)
        .expect("planned");
    let writer = ParquetWriter::new(&plan, w).expect("writer");
    let values = &eval.values[w.node][w.output];
    let width = writer.width();
    let whole = {
        let mut f = writer.start(Vec::new()).expect("start");
        f.write_frames(0..44, values).expect("write");
        f.finish().expect("finish")
    };
    let windowed = {
        let mut f = writer.start(Vec::new()).expect("start");
        for (a, b) in [(0, 5), (5, 6), (6, 44)] {
            f.write_frames(a..b, &values[a * width..b * width]).expect("write");
        }
        f.finish().expect("finish")
    };
    let scratch = tempfile::tempdir().expect("temp dir");
    let rows = |bytes: Vec<u8>| -> (usize, Vec<String>) {
        let path = scratch.path().join("t.parquet");
        std::fs::write(&path, bytes).expect("write");
        let reader = SerializedFileReader::new(std::fs::File::open(&path).expect("open")).expect("a Parquet file");
        let groups = reader.metadata().num_row_groups();
        let rows = reader
            .get_row_iter(None)
            .expect("rows")
            .map(|r| r.expect("row").to_string())
            .collect();
        (groups, rows)
    };
    let (g_whole, whole) = rows(whole);
    let (g_windowed, windowed) = rows(windowed);
    assert_eq!(whole.len(), 44 * 15);
    assert_eq!((g_whole, g_windowed), (1, 3), "one row group per window here");
    assert!(whole == windowed, "the same rows either way");
    // Row 7 is frame -3, strand 1, joint 2 (point 7 of 15).
    assert!(
        whole[7].starts_with("{frame: -3, time [s]: -1.25E-1, strand: 1, joint: 2,"),
        "{}",
        whole[7]
    );

    let mut f = writer.start(Vec::new()).expect("start");
    f.write_frames(0..5, &values[..5 * width]).expect("write");
    let err = f.write_frames(6..7, &values[6 * width..7 * width]).expect_err("a gap");
    assert_eq!(err, "frames from 6 follow frames up to 5");
    let err = f.write_frames(5..7, &values[..width]).expect_err("too few values");
    assert_eq!(err, format!("{width} values for 2 frames of {width} values"));
}

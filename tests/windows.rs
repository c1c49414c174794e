//! `heft run` evaluates the nodes that run in windows (the strands) window by window and writes
//! their outputs as each window is done (`heft_runtime::eval::Schedule`,
//! `heft_formats::output::Writer`). Whatever the window, the files are those of a whole
//! evaluation written at the end: the same bytes for CSV and glTF (.glb, and .gltf with its
//! buffer separate or embedded), the same rows for Parquet.

use std::path::{Path, PathBuf};

use heft_integration_tests::{heft, registry, workspace_root};
use heft_runtime::check::Overrides;
use heft_runtime::{check, eval, read_graph};

/// A braid on a shaken head, baked three ways and written twice, over 40 frames.
const GRAPH: &str = "format 1
rate 24 fps
frames 0..39
head = noise.jitter
    amplitude = 5 cm
    rotation_amplitude = 0.3 rad
braid = xpbd.strand
    count = 3
    segments = 6
    placement = line
    start = settled
    drag = 1.5 1/s
write braid.positions as braid
write braid.positions as braid format parquet
write braid.energy
bake \"braid.glb\"
    braid.positions
bake \"braid_separate.gltf\"
    braid.positions
bake \"braid_embedded.gltf\"
    buffer = embedded
    braid.positions
";

/// The test's graph file: `GRAPH` with `head` driven by a transform the example character gives.
fn graph_file(dir: &Path) -> PathBuf {
    let juno = workspace_root().join("data/juno.glb");
    let text = GRAPH.replace(
        "head = noise.jitter",
        &format!(
            "juno = track.character\n    file = \"{}\"\n    clip = jump\n    outside = loop\nhead = noise.jitter",
            juno.display()
        ),
    ) + "juno.head -> head.input\nhead.output -> braid.anchor\n";
    let path = dir.join("braid.graph");
    std::fs::write(&path, text).expect("write the graph");
    path
}

/// The plan of `graph`.
fn plan_of(graph: &Path) -> check::Plan {
    let (g, problems) = read_graph(graph).expect("readable");
    check::check(&g, problems, &registry(), &Overrides::default()).expect("plans")
}

/// `heft run --quiet` of `graph` into `out`, in windows of `window` frames (the default
/// without); true when it succeeds.
fn run_in_windows(graph: &Path, out: &Path, window: Option<&str>) -> bool {
    let mut cmd = heft();
    cmd.args(["run", "--quiet", "--out"]).arg(out).arg(graph);
    if let Some(w) = window {
        cmd.args(["--window", w]);
    }
    cmd.status().expect("heft runs").success()
}

/// The files of `graph` from a whole evaluation written at the end (`output::write_all`).
fn written_whole(graph: &Path, out: &Path) {
    let plan = plan_of(graph);
    let e = eval::evaluate(&plan, Some(1)).expect("evaluates");
    let dir = heft_formats::output::OutputDir::open(out).expect("output folder");
    heft_formats::output::write_all(&plan, &e, graph, &dir, std::time::Duration::ZERO).expect("writes");
}

/// The rows of a Parquet file, as the `parquet` crate's record reader prints them.
fn parquet_rows(path: &Path) -> Vec<String> {
    use parquet::file::reader::{FileReader, SerializedFileReader};
    let reader = SerializedFileReader::new(std::fs::File::open(path).expect("open")).expect("a Parquet file");
    reader
        .get_row_iter(None)
        .expect("rows")
        .map(|r| r.expect("row").to_string())
        .collect()
}

/// Every file of `whole` but run.json is in `other` with the same bytes (the same rows for
/// Parquet); returns how many were compared.
fn same_files(whole: &Path, other: &Path, what: &str) -> usize {
    let mut compared = 0;
    for entry in std::fs::read_dir(whole).expect("out") {
        let path = entry.expect("entry").path();
        let name = path.file_name().expect("name").to_string_lossy().into_owned();
        if name == "run.json" || name.starts_with('.') {
            continue;
        }
        let theirs = other.join(&name);
        if name.ends_with(".parquet") {
            assert!(
                parquet_rows(&path) == parquet_rows(&theirs),
                "{what}: {name} holds other rows"
            );
        } else {
            let (a, b) = (
                std::fs::read(&path).expect("read"),
                std::fs::read(&theirs).expect("read"),
            );
            assert!(a == b, "{what}: {name} differs ({} and {} bytes)", a.len(), b.len());
        }
        compared += 1;
    }
    compared
}

#[test]
fn a_run_in_windows_writes_the_files_of_a_whole_evaluation() {
    let scratch = tempfile::tempdir().expect("temp dir");
    let graph = graph_file(scratch.path());
    let whole = scratch.path().join("whole");
    written_whole(&graph, &whole);
    for window in [None, Some("1"), Some("7"), Some("40")] {
        let out = scratch.path().join(format!("window-{}", window.unwrap_or("default")));
        assert!(run_in_windows(&graph, &out, window), "window {window:?}");
        let compared = same_files(&whole, &out, &format!("window {window:?}"));
        // braid.csv, braid.parquet, braid.energy.csv, three bakes and one .bin.
        assert_eq!(compared, 7, "window {window:?}");
    }
    // The example graphs too: a character's own file with strands and colliders baked into it
    // (juno), a planned jump with a Parquet table and a bake (jump).
    for name in ["juno", "jump"] {
        let graph = workspace_root().join(format!("graphs/{name}.graph"));
        let whole = scratch.path().join(format!("{name}-whole"));
        written_whole(&graph, &whole);
        let out = scratch.path().join(format!("{name}-3"));
        assert!(run_in_windows(&graph, &out, Some("3")), "{name}");
        assert!(same_files(&whole, &out, name) >= 4, "{name}");
    }
}

/// A strand node's outputs that only the writers read are not held whole: the run's memory
/// check and its evaluation count a window of them (`Schedule::footprint`), and a node that
/// reads one runs whole after the windows, its input gathered.
#[test]
fn only_what_is_read_whole_is_held() {
    let scratch = tempfile::tempdir().expect("temp dir");
    let graph = graph_file(scratch.path());
    let plan = plan_of(&graph);
    let braid = plan.nodes.iter().position(|n| n.name == "braid").expect("braid");
    let s = eval::Schedule::windows(&plan, 1 << 20);
    assert!(s.windowed[braid] && s.has_windows());
    assert!(s.streamed[braid].iter().all(|&x| x), "nothing reads the braid whole");
    assert_eq!(s.streamed_bakes, [true, true, true]);
    let frames = plan.timeline.frames() as u128;
    let whole = heft_runtime::eval::Schedule::whole(&plan).footprint(&plan).total;
    let held = s.footprint(&plan).total;
    let braid_per_frame: u128 = plan.nodes[braid].outputs.iter().map(|o| 8 * o.width() as u128).sum();
    assert_eq!(whole - held, braid_per_frame * (frames - s.window as u128));

    // A plot of the energy keeps that output whole, and so does a bake of the momentum (a bake
    // lays its series out before the windows, so it is written at the end instead): only those.
    let text = std::fs::read_to_string(&graph).expect("read")
        + "plot \"energy.svg\"\n    braid.energy\nbake \"momentum.glb\"\n    braid.momentum\n";
    let plotted = scratch.path().join("plotted.graph");
    std::fs::write(&plotted, text).expect("write");
    let plan = plan_of(&plotted);
    let s = eval::Schedule::windows(&plan, 1 << 20);
    let spec = plan.nodes[braid].ty.spec();
    for (k, port) in spec.outputs.iter().enumerate() {
        let held = port.name == "energy" || port.name == "momentum";
        assert_eq!(s.streamed[braid][k], !held, "{}", port.name);
    }
    assert_eq!(s.streamed_bakes, [true, true, true, false]);
    let out = scratch.path().join("plotted");
    assert!(run_in_windows(&plotted, &out, Some("4")));
    assert!(out.join("energy.svg").is_file());
    let whole = scratch.path().join("plotted-whole");
    written_whole(&plotted, &whole);
    assert_eq!(
        std::fs::read(out.join("momentum.glb")).expect("baked"),
        std::fs::read(whole.join("momentum.glb")).expect("baked")
    );
}

/// A run that fails after some windows were written leaves the output folder as it was: the
/// streamed files were only staged, and are removed; the error names the node and the frame.
#[test]
fn a_run_that_fails_after_some_windows_leaves_the_folder_as_it_was() {
    let scratch = tempfile::tempdir().expect("temp dir");
    // A still head that jumps 3 km between frames 20 and 21 (a glitch in the data): the strand
    // is flung faster than a strand can move, and the jump is named.
    let mut csv = String::from("time,x,y,z,qx,qy,qz,qw\n");
    for f in 0..40 {
        let x = if f <= 20 { 0.0 } else { 3000.0 };
        csv.push_str(&format!("{},{x},0,1.5,0,0,0,1\n", f as f64 / 24.0));
    }
    std::fs::write(scratch.path().join("head.csv"), csv).expect("write");
    let graph = scratch.path().join("glitch.graph");
    std::fs::write(
        &graph,
        "format 1\nrate 24 fps\nframes 0..39\nhead = track.transform\n    file = \"head.csv\"\n    rotation = quaternion\n\
         braid = strand.euler\n    segments = 8\nhead.value -> braid.anchor\nwrite braid.positions as braid\n\
         bake \"braid.glb\"\n    braid.positions\n",
    )
    .expect("write");
    let out = scratch.path().join("out");
    std::fs::create_dir_all(&out).expect("folder");
    std::fs::write(out.join("braid.csv"), "an earlier run's file\n").expect("write");
    let o = heft()
        .args(["run", "--window", "4", "--out"])
        .arg(&out)
        .arg(&graph)
        .output()
        .expect("heft runs");
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("braid") && err.contains("jumps at frame 2"), "{err}");
    assert_eq!(
        std::fs::read_to_string(out.join("braid.csv")).expect("kept"),
        "an earlier run's file\n"
    );
    let mut left: Vec<String> = std::fs::read_dir(&out)
        .expect("out")
        .map(|e| e.expect("entry").file_name().to_string_lossy().into_owned())
        .filter(|n| n != ".heft-lock")
        .collect();
    left.sort();
    assert_eq!(left, ["braid.csv"], "nothing staged is left behind");
}

/// `heft nodes` says which node types run in windows: the strand nodes do, a wind field does not.
#[test]
fn the_node_docs_say_which_types_run_in_windows() {
    for (ty, windowed) in [("xpbd.strand", true), ("strand.euler", true), ("noise.wind", false)] {
        let o = heft().args(["nodes", ty]).output().expect("heft runs");
        assert!(o.status.success(), "{ty}");
        let text = String::from_utf8_lossy(&o.stdout);
        assert_eq!(text.contains("Runs in windows of frames"), windowed, "{ty}: {text}");
    }
}

//! The `heft` command line: sub-commands, exit codes, plugin search, atomic output.

use std::process::Output;

use heft_integration_tests::{fixture_dir, heft, heft_in, install, library, plugin_dir, read_csv};

fn text(o: &Output) -> (String, String) {
    (
        String::from_utf8_lossy(&o.stdout).into_owned(),
        String::from_utf8_lossy(&o.stderr).into_owned(),
    )
}

#[test]
fn help_is_there_for_every_command() {
    for args in [
        &["--help"][..],
        &["run", "--help"],
        &["check", "--help"],
        &["nodes", "--help"],
    ] {
        let o = heft().args(args).output().expect("heft runs");
        assert!(o.status.success(), "{args:?}");
        let (out, _) = text(&o);
        assert!(out.contains("Usage: heft"), "{args:?}: {out}");
    }
    let (out, _) = text(&heft().args(["run", "--help"]).output().expect("runs"));
    for flag in ["--out", "--set", "--frames", "--threads", "--plugins"] {
        assert!(out.contains(flag), "run --help mentions {flag}");
    }
}

#[test]
fn usage_errors_exit_with_2() {
    for args in [
        &["run"][..],
        &["frobnicate"],
        &["run", "graphs/toss.graph", "--frames", "9..3"],
        &["run", "graphs/toss.graph", "--threads", "0"],
    ] {
        let o = heft().args(args).output().expect("heft runs");
        assert_eq!(o.status.code(), Some(2), "{args:?}");
    }
}

#[test]
fn check_accepts_a_good_graph_and_reports_a_bad_one_with_place_and_caret() {
    let o = heft().args(["check", "graphs/toss.graph"]).output().expect("runs");
    assert!(o.status.success());
    assert!(
        text(&o)
            .0
            .contains("graphs/toss.graph: ok (2 nodes, 49 frames, 4 outputs)")
    );

    let dir = tempfile::tempdir().expect("temp dir");
    let bad = dir.path().join("bad.graph");
    std::fs::write(
        &bad,
        "format 1\nrate 24 fps\nframes 1..4\nb = trajectory.ballistic\n    gravity = 9.8 kg\n",
    )
    .expect("write");
    let o = heft().arg("check").arg(&bad).output().expect("runs");
    assert_eq!(o.status.code(), Some(1));
    let (_, err) = text(&o);
    assert!(err.contains(&format!("{}:5:19", bad.display())), "{err}");
    assert!(
        err.contains("`kg` is a mass, but `gravity` is an acceleration"),
        "{err}"
    );
    assert!(err.contains("    gravity = 9.8 kg"), "the source line is shown: {err}");
    assert!(
        err.contains("   ·                   ─┬"),
        "a caret marks the place: {err}"
    );
}

#[test]
fn a_missing_graph_file_is_an_input_error() {
    let o = heft().args(["run", "graphs/no-such.graph"]).output().expect("runs");
    assert_eq!(o.status.code(), Some(1));
    assert!(text(&o).1.contains("cannot read the graph file graphs/no-such.graph"));
}

#[test]
fn set_and_frames_override_the_graph() {
    let out = tempfile::tempdir().expect("temp dir");
    let o = heft()
        .args(["run", "graphs/toss.graph", "--quiet", "--frames", "10..12"])
        .args([
            "--set",
            "parcel.launch_velocity=(0, 0, 0) m/s",
            "--set",
            "parcel.launch_position=(1, 2, 300) cm",
        ])
        .arg("--out")
        .arg(out.path())
        .output()
        .expect("runs");
    assert!(o.status.success(), "{}", text(&o).1);
    let (_, rows) = read_csv(&out.path().join("parcel.position.csv"));
    assert_eq!(rows.iter().map(|r| r[0]).collect::<Vec<_>>(), [10.0, 11.0, 12.0]);
    // Dropped from rest at 3 m at t0 = 0.25 s: z = 3 - g (t - t0)^2 / 2.
    let t: f64 = 11.0 / 24.0 - 0.25;
    assert!((rows[1][4] - (3.0 - 0.5 * 9.80665 * t * t)).abs() < 1e-12);
    assert_eq!((rows[1][2], rows[1][3]), (0.01, 0.02));

    let o = heft()
        .args(["check", "graphs/toss.graph", "--set", "parcel.launch_time=2 kg"])
        .output()
        .expect("runs");
    assert_eq!(o.status.code(), Some(1));
    assert!(text(&o).1.contains("--set 1:1:22"), "{}", text(&o).1);
}

#[test]
fn nodes_lists_and_describes() {
    let o = heft().arg("nodes").output().expect("runs");
    assert!(o.status.success());
    let (out, _) = text(&o);
    assert!(
        out.contains("trajectory 0.1.0") && out.contains("trajectory.ballistic") && out.contains("trajectory.keyed")
    );

    let (out, _) = text(&heft().args(["nodes", "trajectory.ballistic"]).output().expect("runs"));
    assert!(out.contains("launch_velocity"), "{out}");
    assert!(out.contains("default (0, 0, 2.5) m/s"), "{out}");
    assert!(out.contains("range 0 to 100 m/s^2"), "{out}");
    assert!(out.contains("acceleration       vec3       m/s^2"), "{out}");

    let o = heft().args(["nodes", "trajectory.balistic"]).output().expect("runs");
    assert_eq!(o.status.code(), Some(1));
    assert!(text(&o).1.contains("did you mean `trajectory.ballistic`?"));
}

#[test]
fn plugins_are_found_by_flag_environment_and_executable_folder() {
    let bare = install(&[]);
    let graph = ["check", "graphs/toss.graph", "--quiet"];
    let o = heft_in(bare.path()).args(graph).output().expect("runs");
    assert_eq!(o.status.code(), Some(1), "no plugins: unknown node types");
    assert!(text(&o).1.contains("unknown node type `trajectory.ballistic`"));
    let o = heft_in(bare.path())
        .args(graph)
        .arg("--plugins")
        .arg(plugin_dir())
        .output()
        .expect("runs");
    assert!(o.status.success(), "--plugins: {}", text(&o).1);
    let o = heft_in(bare.path())
        .args(graph)
        .env("HEFT_PLUGIN_PATH", plugin_dir())
        .output()
        .expect("runs");
    assert!(o.status.success(), "HEFT_PLUGIN_PATH: {}", text(&o).1);
    let beside = install(&[library(plugin_dir(), "heft_trajectory")]);
    let o = heft_in(beside.path()).args(graph).output().expect("runs");
    assert!(o.status.success(), "executable folder: {}", text(&o).1);
}

/// A run that fails leaves the output folder as it was: no partial files, the previous
/// run's files untouched; the error names the line the failing node is declared on.
#[test]
fn a_failed_run_leaves_previous_outputs_untouched() {
    let inst = install(&[
        library(plugin_dir(), "heft_trajectory"),
        library(fixture_dir(), "heft_test_plugin_probe"),
    ]);
    let out = tempfile::tempdir().expect("temp dir");
    let dir = tempfile::tempdir().expect("temp dir");
    let graph = dir.path().join("spoil.graph");
    std::fs::write(
        &graph,
        "format 1\nrate 24 fps\nframes 1..20\nb = trajectory.ballistic\ns = probe.spoil\n    from_frame = 30\nwrite b.position\nwrite s.value\n",
    )
    .expect("write");
    let ok = heft_in(inst.path())
        .arg("run")
        .arg(&graph)
        .arg("--out")
        .arg(out.path())
        .output()
        .expect("runs");
    assert!(ok.status.success(), "{}", text(&ok).1);
    let before: Vec<(String, Vec<u8>)> = listing(out.path());
    assert_eq!(before.len(), 3, "two CSV files and run.json");

    let bad = heft_in(inst.path())
        .arg("run")
        .arg(&graph)
        .args(["--set", "s.from_frame=7", "--set", "b.launch_time=1 s", "--out"])
        .arg(out.path())
        .output()
        .expect("runs");
    assert_eq!(bad.status.code(), Some(1));
    let (_, err) = text(&bad);
    assert!(
        err.contains("spoil.graph:5:1: node `s` wrote NaN to output `value` (column `value.z [m]`) at frame 7"),
        "{err}"
    );
    assert_eq!(listing(out.path()), before, "nothing changed, nothing left over");

    // An output folder that cannot be made is an error too, with nothing written.
    let file = dir.path().join("a-file");
    std::fs::write(&file, "x").expect("write");
    let o = heft()
        .args(["run", "graphs/toss.graph", "--out"])
        .arg(&file)
        .output()
        .expect("runs");
    assert_eq!(o.status.code(), Some(1));
    assert!(text(&o).1.contains("cannot create the output folder"), "{}", text(&o).1);
}

fn listing(dir: &std::path::Path) -> Vec<(String, Vec<u8>)> {
    let mut v: Vec<(String, Vec<u8>)> = std::fs::read_dir(dir)
        .expect("dir")
        .map(|e| e.expect("entry").path())
        // The folder's lock holds the last run's process number.
        .filter(|p| !p.ends_with(heft_formats::commit::LOCK_FILE))
        .map(|p| {
            (
                p.file_name().expect("name").to_string_lossy().into_owned(),
                std::fs::read(&p).expect("read"),
            )
        })
        .collect();
    v.sort();
    v
}

#[test]
fn the_run_summary_names_graph_plugins_timeline_and_outputs() {
    let out = tempfile::tempdir().expect("temp dir");
    let o = heft()
        .args(["run", "graphs/toss.graph", "--quiet", "--out"])
        .arg(out.path())
        .output()
        .expect("runs");
    assert!(o.status.success());
    let s: serde_json::Value =
        serde_json::from_slice(&std::fs::read(out.path().join("run.json")).expect("run.json")).expect("JSON");
    assert_eq!(s["graph"], "graphs/toss.graph");
    assert_eq!(s["timeline"]["frame_count"], 49);
    assert_eq!(s["timeline"]["rate"], "24/1");
    assert_eq!(s["plugins"][0]["name"], "trajectory");
    assert_eq!(s["plugins"][0]["sha256"].as_str().map(str::len), Some(64));
    assert_eq!(s["outputs"].as_array().map(Vec::len), Some(4));
    assert_eq!(s["outputs"][0]["file"], "parcel.position.csv");
    assert!(s["wall_seconds"].as_f64().is_some_and(|w| w > 0.0));
    // The wall time includes the writing: at least the evaluation and the writing together.
    let (wall, eval, write) = (
        s["wall_seconds"].as_f64().expect("wall"),
        s["evaluation_seconds"].as_f64().expect("evaluation"),
        s["writing_seconds"].as_f64().expect("writing"),
    );
    assert!(write > 0.0 && wall >= eval + write, "{wall} {eval} {write}");
    assert_eq!(s["nodes"][1]["type"], "trajectory.keyed");
    // Every parameter the node ran with, in SI with its unit.
    let gravity = s["nodes"]
        .as_array()
        .expect("nodes")
        .iter()
        .flat_map(|n| n["parameters"].as_array().cloned().unwrap_or_default())
        .find(|p| p["name"] == "gravity")
        .expect("a gravity parameter");
    assert_eq!(gravity["unit"], "m/s^2");
    assert!(gravity["value"].as_f64().is_some_and(|g| g > 0.0));
}

/// Two runs into one output folder never mix their files: while one run holds the folder (its
/// lock taken here, as a run takes it before evaluating), a second is refused before it
/// evaluates, naming the other process, and writes nothing; once the folder is free, a run
/// clears the temporary files a killed run left (41 MB each in the field) and says so.
#[test]
fn runs_never_share_an_output_folder_and_clear_what_a_killed_run_left() {
    let out = tempfile::tempdir().expect("temp dir");
    let held = heft_formats::commit::OutputDir::open(out.path()).expect("lock");
    let o = heft()
        .args(["run", "graphs/toss.graph", "--out"])
        .arg(out.path())
        .output()
        .expect("runs");
    assert_eq!(o.status.code(), Some(1));
    let (stdout, err) = text(&o);
    assert!(
        err.contains(&format!(
            "another heft run (process {}) is writing into this folder",
            std::process::id()
        )),
        "{err}"
    );
    assert!(!stdout.contains("evaluated"), "{stdout}");
    assert!(listing(out.path()).is_empty(), "nothing written");
    drop(held);

    std::fs::write(out.path().join(".heft-AbC123.partial"), vec![0u8; 1024]).expect("write");
    std::fs::write(out.path().join(".heft-XyZ789.partial.svg"), b"<svg").expect("write");
    let o = heft()
        .args(["run", "graphs/toss.graph", "--out"])
        .arg(out.path())
        .output()
        .expect("runs");
    assert!(o.status.success(), "{}", text(&o).1);
    assert!(
        text(&o).1.contains("removed 2 temporary files a stopped run left"),
        "{}",
        text(&o).1
    );
    assert!(
        listing(out.path()).iter().all(|(name, _)| !name.starts_with(".heft-")),
        "{:?}",
        listing(out.path()).iter().map(|(n, _)| n).collect::<Vec<_>>()
    );
}

/// Impossible requests are refused before any work, never run, panicked on or aborted: a frame
/// range of 2^63 frames; a run whose outputs cannot fit in memory (4096 strands of 255
/// segments over ten million frames, 480 TB); a "graph" that never ends (/dev/zero); 65 535
/// threads. A range starting at a negative frame is read as one (not as an option).
#[test]
fn impossible_requests_are_refused_before_any_work() {
    let o = heft()
        .args(["check", "graphs/toss.graph", "--frames", "0..9223372036854775807"])
        .output()
        .expect("runs");
    assert_eq!(o.status.code(), Some(1));
    assert!(
        text(&o).1.contains(
            "`--frames` 0..9223372036854775807 holds 9223372036854775808 frames, more than one run evaluates"
        ),
        "{}",
        text(&o).1
    );
    let o = heft()
        .args(["check", "graphs/toss.graph", "--frames", "-48..96"])
        .output()
        .expect("runs");
    assert!(o.status.success(), "{}", text(&o).1);

    let dir = tempfile::tempdir().expect("temp dir");
    let graph = dir.path().join("huge.graph");
    std::fs::write(
        &graph,
        // The strands' positions read whole by another node (a write alone would take them a
        // window at a time).
        "format 1\nrate 1000 fps\nframes 1..10000000\nhair = xpbd.strand\n    count = 4096\n    segments = 255\n    \
         pin = free\ntail = xpbd.strand\n    count = 4096\n    segments = 255\n    pin = free\n\
         hair.positions -> tail.initial_positions\nwrite hair.positions\n",
    )
    .expect("write");
    let o = heft()
        .arg("run")
        .arg(&graph)
        .arg("--out")
        .arg(dir.path().join("out"))
        .output()
        .expect("runs");
    assert_eq!(o.status.code(), Some(1));
    let err = text(&o).1;
    assert!(
        err.contains("this run's outputs need")
            && err.contains("(the largest, `hair.positions`")
            && err.contains("--frames"),
        "{err}"
    );

    if std::path::Path::new("/dev/zero").exists() {
        let o = heft().args(["check", "/dev/zero"]).output().expect("runs");
        assert_eq!(o.status.code(), Some(1));
        assert!(text(&o).1.contains("larger than 64 MiB"), "{}", text(&o).1);
    }

    let o = heft()
        .args(["run", "graphs/toss.graph", "--threads", "65535"])
        .output()
        .expect("runs");
    assert_eq!(o.status.code(), Some(2));
    assert!(text(&o).1.contains("65535 is not in 1..=1024"), "{}", text(&o).1);
}

/// Plugins pinned for a farm: the first run with `--plugin-lock` writes the lock (the graph's
/// plugin and the SHA-256 of its file, checked against coreutils' `sha256sum`, a hasher heft did
/// not write), later runs with it succeed while the plugin is the same, and are refused, before
/// anything is loaded from it, once its file has other contents.
#[test]
fn a_plugin_lock_pins_the_plugins_of_a_run() {
    let inst = install(&[library(plugin_dir(), "heft_trajectory")]);
    let dir = tempfile::tempdir().expect("temp dir");
    let lock = dir.path().join("plugins.lock");
    let run = |out: &str| {
        heft_in(inst.path())
            .args(["run", "graphs/toss.graph", "--plugin-lock"])
            .arg(&lock)
            .arg("--out")
            .arg(dir.path().join(out))
            .output()
            .expect("runs")
    };
    let o = run("a");
    assert!(o.status.success(), "{}", text(&o).1);
    assert!(text(&o).1.contains("wrote the plugin lock"), "{}", text(&o).1);
    let written: serde_json::Value = serde_json::from_slice(&std::fs::read(&lock).expect("lock")).expect("json");
    let file = library(inst.path(), "heft_trajectory");
    let sum = std::process::Command::new("sha256sum")
        .arg(&file)
        .output()
        .expect("sha256sum runs");
    let sum = String::from_utf8_lossy(&sum.stdout);
    assert_eq!(written["plugins"][0]["name"], "trajectory");
    assert_eq!(written["plugins"][0]["sha256"].as_str(), sum.split_whitespace().next());
    assert_eq!(written["plugins"].as_array().map(Vec::len), Some(1));

    let o = run("b");
    assert!(o.status.success(), "{}", text(&o).1);
    assert!(!text(&o).1.contains("wrote the plugin lock"), "{}", text(&o).1);

    // Another library under the pinned file name.
    std::fs::copy(library(plugin_dir(), "heft_weight"), &file).expect("copy");
    let o = run("c");
    assert_eq!(o.status.code(), Some(1));
    let err = text(&o).1;
    assert!(
        err.contains("plugin `trajectory` (") && err.contains("has changed since") && err.contains("it was not loaded"),
        "{err}"
    );
    assert!(!dir.path().join("c").exists(), "nothing written");
}

/// The install step: install.sh puts heft and its plugins in PREFIX/lib/heft and links
/// PREFIX/bin/heft to it; run through the link, from another folder, heft finds every plugin
/// (it follows the link to its own folder) and runs a graph.
#[test]
fn the_install_script_puts_heft_where_a_shell_finds_it_with_its_plugins() {
    let prefix = tempfile::tempdir().expect("temp dir");
    let o = std::process::Command::new("sh")
        .arg(heft_integration_tests::workspace_root().join("install.sh"))
        .arg(prefix.path())
        .env("HEFT_BUILD_DIR", plugin_dir())
        .output()
        .expect("sh runs");
    assert!(o.status.success(), "{}", text(&o).1);
    assert!(text(&o).0.contains("installed heft and"), "{}", text(&o).0);
    let exe = prefix.path().join("bin/heft");
    assert!(
        std::fs::symlink_metadata(&exe)
            .expect("bin/heft")
            .file_type()
            .is_symlink()
    );
    let o = std::process::Command::new(&exe)
        .arg("nodes")
        .current_dir(prefix.path())
        .env_remove("HEFT_PLUGIN_PATH")
        .output()
        .expect("runs");
    assert!(o.status.success(), "{}", text(&o).1);
    for plugin in ["trajectory", "strand", "xpbd", "collider"] {
        assert!(
            text(&o).0.contains(&format!("{plugin} 0.1.0")),
            "{plugin}: {}",
            text(&o).0
        );
    }
    let graph = heft_integration_tests::workspace_root().join("graphs/toss.graph");
    let o = std::process::Command::new(&exe)
        .arg("run")
        .arg(graph)
        .args(["--quiet", "--out", "out"])
        .current_dir(prefix.path())
        .env_remove("HEFT_PLUGIN_PATH")
        .output()
        .expect("runs");
    assert!(o.status.success(), "{}", text(&o).1);
    assert!(prefix.path().join("out/run.json").exists());
}

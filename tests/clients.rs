//! The glTF bakes of the example graphs, read by real clients: the Khronos glTF validator and
//! three.js in Node, pinned by tests/clients/package-lock.json and installed by
//! tests/clients/run.sh when missing. What is checked, and against what, is written at the top
//! of tests/clients/check_bake.mjs: the validator's errors and warnings, every node found by
//! its name in three.js, the played animation against the run's own CSV output (1e-5 m), and
//! a ribbon skinned by three.js to every skin (>= 90 % of its width at every frame).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::sync::OnceLock;

use heft_integration_tests::{heft, workspace_root};
use serde_json::Value;

/// The example graphs that bake glTF: those with a line starting with `bake`, so that new
/// examples are covered without a change here.
fn baking_graphs() -> Vec<PathBuf> {
    heft_integration_tests::example_graphs_with("bake")
}

/// Runs every baking graph once per test process, each into its own folder; returns them.
fn baked() -> &'static [PathBuf] {
    static DIRS: OnceLock<Vec<PathBuf>> = OnceLock::new();
    DIRS.get_or_init(|| {
        let graphs = baking_graphs();
        assert!(
            graphs.iter().any(|g| g.ends_with("graphs/jump.graph")),
            "graphs/jump.graph bakes odile.glb; found {graphs:?}"
        );
        let root = Path::new(env!("CARGO_TARGET_TMPDIR")).join("clients");
        let _ = std::fs::remove_dir_all(&root);
        graphs
            .iter()
            .map(|g| {
                let stem = g.file_stem().and_then(|s| s.to_str()).expect("graph file name");
                let out = root.join(stem);
                let o = heft()
                    .arg("run")
                    .arg(g)
                    .arg("--out")
                    .arg(&out)
                    .arg("--quiet")
                    .output()
                    .expect("heft runs");
                assert!(
                    o.status.success(),
                    "heft run {}: {}",
                    g.display(),
                    String::from_utf8_lossy(&o.stderr)
                );
                out
            })
            .collect()
    })
}

/// `bash tests/clients/run.sh DIR...`: installs Node, npm and the pinned packages if missing,
/// then checks every bake of the folders.
fn check(dirs: &[&Path]) -> Output {
    Command::new("bash")
        .arg(workspace_root().join("tests/clients/run.sh"))
        .args(dirs)
        .current_dir(workspace_root())
        .output()
        .expect("bash runs")
}

fn text(o: &Output) -> String {
    format!(
        "exit status {:?}\n--- stdout\n{}--- stderr\n{}",
        o.status.code(),
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

fn run_json(dir: &Path) -> Value {
    let path = dir.join("run.json");
    serde_json::from_slice(&std::fs::read(&path).unwrap_or_else(|e| panic!("{}: {e}", path.display())))
        .unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

fn outputs(run: &Value) -> &[Value] {
    run["outputs"].as_array().map(Vec::as_slice).unwrap_or_default()
}

/// The glTF files a run wrote (its glTF 2.0 outputs ending in .glb or .gltf).
fn bake_files(run: &Value) -> Vec<String> {
    outputs(run)
        .iter()
        .filter(|o| o["kind"] == "glTF 2.0")
        .filter_map(|o| o["file"].as_str())
        .filter(|f| f.ends_with(".glb") || f.ends_with(".gltf"))
        .map(str::to_owned)
        .collect()
}

/// Every bake of every baking example passes every client check.
#[test]
fn example_bakes_pass_the_validator_and_three_js() {
    let dirs = baked();
    // The checker's own count, against the bakes the runs list in run.json.
    let expected: usize = dirs.iter().map(|d| bake_files(&run_json(d)).len()).sum();
    assert!(expected >= 1, "no bake in {dirs:?}");
    let paths: Vec<&Path> = dirs.iter().map(PathBuf::as_path).collect();
    let o = check(&paths);
    let report = text(&o);
    assert!(o.status.success(), "the client checks failed:\n{report}");
    println!("{report}");
    let summary = format!("summary: {expected} bake files checked, 0 with failures");
    assert!(
        String::from_utf8_lossy(&o.stdout).contains(&summary),
        "expected `{summary}` in:\n{report}"
    );
}

/// Copies a folder (one level of subfolders deep is enough for bakes such as `sep/x.gltf`).
fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).expect("create copy");
    for e in std::fs::read_dir(from).expect("read folder") {
        let e = e.expect("entry");
        let dest = to.join(e.file_name());
        if e.file_type().expect("file type").is_dir() {
            copy_dir(&e.path(), &dest);
        } else {
            std::fs::copy(e.path(), &dest).expect("copy file");
        }
    }
}

/// Renames node `index` in the JSON of a .glb (the GLB container, glTF 2.0 specification,
/// chapter 4: a 12-byte header, then chunks of length, type and data padded to 4 bytes).
fn rename_node_in_glb(bytes: &[u8], index: usize, name: &str) -> Vec<u8> {
    let word = |o: usize| u32::from_le_bytes(bytes[o..o + 4].try_into().expect("4 bytes"));
    assert_eq!(word(0), 0x4654_6C67, "glTF magic");
    assert_eq!(word(16), 0x4E4F_534A, "the first chunk is JSON");
    let json_len = word(12) as usize;
    let mut doc: Value = serde_json::from_slice(&bytes[20..20 + json_len]).expect("GLB JSON");
    doc["nodes"][index]["name"] = Value::from(name);
    let mut json = serde_json::to_vec(&doc).expect("JSON");
    while !json.len().is_multiple_of(4) {
        json.push(b' ');
    }
    let rest = &bytes[20 + json_len..];
    let total = u32::try_from(12 + 8 + json.len() + rest.len()).expect("size");
    let mut out = Vec::with_capacity(total as usize);
    out.extend_from_slice(&bytes[0..8]);
    out.extend_from_slice(&total.to_le_bytes());
    out.extend_from_slice(&u32::try_from(json.len()).expect("size").to_le_bytes());
    out.extend_from_slice(&0x4E4F_534Au32.to_le_bytes());
    out.extend_from_slice(&json);
    out.extend_from_slice(rest);
    out
}

/// The checker can fail: one CSV value moved by 1 cm, one node renamed with a dot (which
/// three.js strips), and a chain joint twisted about its bone are each caught and named.
#[test]
fn the_checker_fails_a_moved_value_and_a_dotted_name() {
    // A run with a .glb bake and a CSV output whose series (node.port) one of its bakes shows.
    let baked_csv = |run: &Value| -> Option<String> {
        let baked_series: Vec<&str> = outputs(run)
            .iter()
            .filter(|o| o["kind"] == "glTF 2.0")
            .flat_map(|o| o["columns"].as_array().map(Vec::as_slice).unwrap_or_default())
            .filter_map(Value::as_str)
            .collect();
        outputs(run)
            .iter()
            .filter(|o| o["kind"] != "glTF 2.0")
            .filter(|o| o["file"].as_str().is_some_and(|f| f.ends_with(".csv")))
            .find(|o| {
                let node = o["node"].as_str().unwrap_or("");
                let port = o["port"].as_str().unwrap_or("");
                baked_series.contains(&format!("{node}.{port}").as_str())
            })
            .and_then(|o| o["file"].as_str())
            .map(str::to_owned)
    };
    let (good, csv, glb) = baked()
        .iter()
        .find_map(|d| {
            let run = run_json(d);
            let csv = baked_csv(&run)?;
            let glb = bake_files(&run).into_iter().find(|f| f.ends_with(".glb"))?;
            Some((d, csv, glb))
        })
        .expect("an example run with a .glb bake and a baked series written as CSV");
    let scratch = tempfile::tempdir().expect("temp dir");

    // Both breaks are checked, and every miss is reported together.
    let mut misses = Vec::new();

    // 1. The first value column (x of a position) of the middle row, plus 1 cm.
    let moved = scratch.path().join("moved");
    copy_dir(good, &moved);
    let path = moved.join(&csv);
    let original = std::fs::read_to_string(&path).expect("CSV");
    let mut lines: Vec<String> = original.lines().map(str::to_owned).collect();
    let row = lines.len() / 2;
    let mut cells: Vec<String> = lines[row].split(',').map(str::to_owned).collect();
    let frame = cells[0].clone();
    let x: f64 = cells[2].parse().expect("a number");
    cells[2] = format!("{}", x + 0.01);
    lines[row] = cells.join(",");
    std::fs::write(&path, lines.join("\n") + "\n").expect("write CSV");
    let o = check(&[&moved]);
    let report = text(&o);
    // The error found is the 1 cm put in (float32 keys change the third digit at most), at
    // the frame of the row changed.
    let want = "worst position error 1.00e-2 m at ";
    let placed = format!(" frame {frame} is above 1.00e-5 m");
    if o.status.success() {
        misses.push(format!("a value of {csv} moved by 1 cm passed:\n{report}"));
    } else if !String::from_utf8_lossy(&o.stdout)
        .lines()
        .any(|l| l.contains(want) && l.contains(&placed))
    {
        misses.push(format!(
            "a value of {csv} moved by 1 cm at frame {frame}: expected `{want}...{placed}` in:\n{report}"
        ));
    }

    // 2. A .glb node renamed with a dot.
    let dotted = scratch.path().join("dotted");
    copy_dir(good, &dotted);
    let path = dotted.join(&glb);
    let bytes = std::fs::read(&path).expect("glb");
    std::fs::write(&path, rename_node_in_glb(&bytes, 0, "renamed.node")).expect("write glb");
    let o = check(&[&dotted]);
    let report = text(&o);
    let want = "node 0 `renamed.node`: three.js finds no object of that name (it named the node `renamednode`)";
    if o.status.success() {
        misses.push(format!("a node of {glb} named with a dot passed:\n{report}"));
    } else if !report.contains(want) {
        misses.push(format!(
            "a node of {glb} named with a dot: expected `{want}` in:\n{report}"
        ));
    }
    // 3. The tip joint of a chain turned a quarter turn about its own bone at every frame: its
    // position does not move (it has no children), but a card skinned across it would narrow
    // to cos(45 deg) = 0.71 of its width.
    let twisted = scratch.path().join("twisted");
    copy_dir(good, &twisted);
    let path = twisted.join(&glb);
    let bytes = std::fs::read(&path).expect("glb");
    let (bytes, tip) = twist_a_chain_tip(&bytes);
    std::fs::write(&path, bytes).expect("write glb");
    let o = check(&[&twisted]);
    let report = text(&o);
    let want = format!(
        "twist narrows a ribbon to 0.7071 of its width between joints {} and {}",
        tip - 1,
        tip
    );
    if o.status.success() {
        misses.push(format!("a chain tip of {glb} twisted by 90 degrees passed:\n{report}"));
    } else if !report.contains(&want) {
        misses.push(format!(
            "a chain tip of {glb} twisted by 90 degrees: expected `{want}` in:\n{report}"
        ));
    }
    assert!(misses.is_empty(), "{}", misses.join("\n\n"));
}

/// Turns the last joint of the first baked chain by a quarter turn about its own +Y, in every
/// key of its rotation channel (q -> q (0, sin 45, 0, cos 45)). Returns the new bytes and the
/// joint's index in its chain.
fn twist_a_chain_tip(bytes: &[u8]) -> (Vec<u8>, usize) {
    let json_len = u32::from_le_bytes(bytes[12..16].try_into().expect("4 bytes")) as usize;
    let doc: Value = serde_json::from_slice(&bytes[20..20 + json_len]).expect("GLB JSON");
    let bin_start = 20 + json_len + 8;
    let skin = &doc["skins"][0];
    let joints = skin["joints"].as_array().expect("joints");
    let tip = joints.len() - 1;
    let node = joints[tip].as_u64().expect("index");
    let anim = &doc["animations"][0];
    let channel = anim["channels"]
        .as_array()
        .expect("channels")
        .iter()
        .find(|c| c["target"]["node"].as_u64() == Some(node) && c["target"]["path"] == "rotation")
        .expect("the tip's rotation channel");
    let sampler = &anim["samplers"][channel["sampler"].as_u64().expect("sampler") as usize];
    let acc = &doc["accessors"][sampler["output"].as_u64().expect("output") as usize];
    let view = &doc["bufferViews"][acc["bufferView"].as_u64().expect("view") as usize];
    let start = bin_start
        + view["byteOffset"].as_u64().unwrap_or(0) as usize
        + acc["byteOffset"].as_u64().unwrap_or(0) as usize;
    let count = acc["count"].as_u64().expect("count") as usize;
    let mut out = bytes.to_vec();
    let h = std::f32::consts::FRAC_PI_4;
    let (s, c) = (h.sin(), h.cos());
    for k in 0..count {
        let at = start + 16 * k;
        let q: Vec<f32> = (0..4)
            .map(|i| f32::from_le_bytes(out[at + 4 * i..at + 4 * i + 4].try_into().expect("4 bytes")))
            .collect();
        // q (0, s, 0, c), the Hamilton product.
        let r = [
            q[0] * c - q[2] * s,
            q[3] * s + q[1] * c,
            q[0] * s + q[2] * c,
            q[3] * c - q[1] * s,
        ];
        for (i, v) in r.iter().enumerate() {
            out[at + 4 * i..at + 4 * i + 4].copy_from_slice(&v.to_le_bytes());
        }
    }
    (out, tip)
}

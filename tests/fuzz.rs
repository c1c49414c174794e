//! A bounded fuzz test, run with the suite: mutated graphs, CSV tracks and glTF characters go
//! through the checker, the renderer of problems and (when small) the evaluation and the
//! writers. Nothing may panic and nothing may hang: each case runs on a worker with a time
//! limit, and a failing case is printed in full, with its seed, to reproduce it.
//!
//! The mutations are seeded (splitmix64), so a run is repeatable; `HEFT_FUZZ_CASES` raises the
//! number of cases for a longer local run. The cargo-fuzz targets in `fuzz/` do the same with
//! coverage guidance (see DEVELOPERS.md, "Fuzzing").

use std::path::Path;
use std::sync::mpsc;
use std::time::Duration;

use std::sync::LazyLock;

use heft_integration_tests::{registry, workspace_root};
use heft_runtime::check::{Overrides, check};
use heft_runtime::diag::render;
use heft_runtime::eval::evaluate;
use heft_runtime::read_graph;
use heft_runtime::registry::Registry;

/// splitmix64 (Steele, Lea & Flood 2014): a small, well-mixed seeded generator.
struct Mix(u64);

impl Mix {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
}

/// The real plugins, loaded once.
static REGISTRY: LazyLock<Registry> = LazyLock::new(registry);

/// Pieces a mutation may insert: the graph language's own tokens and some troublemakers.
const PIECES: &[&str] = &[
    "->",
    ".",
    "=",
    "..",
    "\n",
    "    ",
    "#",
    "\"",
    "(",
    ")",
    ",",
    ":",
    "1e308",
    "-1e308",
    "nan",
    "inf",
    "0",
    "-0",
    "9223372036854775807",
    "cm",
    "kg",
    "m/s",
    "deg",
    "fps",
    "frames",
    "rate",
    "write",
    "bake",
    "plot",
    "review",
    "include",
    "as",
    "format 1",
    "\u{feff}",
    "é",
    "\t",
    "\r\n",
    "count = 4096",
    "segments = 255",
    "key = 0 s: (0, 0, 1) m",
];

/// One mutation of `bytes`: a byte changed, a piece inserted, a run deleted or repeated, or
/// two lines swapped.
fn mutate(bytes: &mut Vec<u8>, r: &mut Mix) {
    let n = bytes.len();
    match r.below(6) {
        0 if n > 0 => {
            let i = r.below(n);
            bytes[i] = r.next() as u8;
        }
        1 => {
            let p = PIECES[r.below(PIECES.len())].as_bytes();
            let i = r.below(n + 1);
            bytes.splice(i..i, p.iter().copied());
        }
        2 if n > 0 => {
            let i = r.below(n);
            let len = 1 + r.below(16.min(n - i));
            bytes.drain(i..i + len);
        }
        3 if n > 0 => {
            let i = r.below(n);
            let len = 1 + r.below(64.min(n - i));
            let run: Vec<u8> = bytes[i..i + len].to_vec();
            bytes.splice(i..i, run);
        }
        4 => {
            let text = String::from_utf8_lossy(bytes).into_owned();
            let mut lines: Vec<&str> = text.lines().collect();
            if lines.len() > 1 {
                let (a, b) = (r.below(lines.len()), r.below(lines.len()));
                lines.swap(a, b);
            }
            *bytes = lines.join("\n").into_bytes();
        }
        _ => {
            if n > 0 {
                let i = r.below(n);
                bytes[i] ^= 1 << r.below(8);
            }
        }
    }
}

/// Checks the graph at `path` (a mutated copy), renders its problems, and when it checks and
/// is small, evaluates it on a few frames and builds its files.
fn exercise(path: &Path) {
    let reg = &*REGISTRY;
    let Ok((g, p)) = read_graph(path) else { return };
    let overrides = Overrides::default();
    match check(&g, p, reg, &overrides) {
        Err(problems) => {
            let text = render(&problems, false);
            assert!(text.ends_with("found\n") || text.ends_with("shown\n"), "{text}");
        }
        Ok(plan) => {
            if heft_runtime::eval::Schedule::whole(&plan).footprint(&plan).total > 4 << 20 {
                return;
            }
            // A few frames are enough to exercise the evaluation and the writers, and keep
            // the test to seconds.
            let first = plan.timeline.start_frame;
            let few = Overrides {
                set: Vec::new(),
                frames: Some((first, first + 4)),
            };
            let Ok((g, p)) = read_graph(path) else { return };
            let Ok(plan) = check(&g, p, reg, &few) else { return };
            if let Ok(e) = evaluate(&plan, Some(1)) {
                for b in &plan.bakes {
                    let _ = heft_formats::gltf_out::bake_files(&plan, &e, b);
                }
                for w in &plan.writes {
                    let _ = heft_formats::output::csv_text(&plan, &e, w.node, w.output);
                    if let Ok(t) = heft_formats::parquet_out::ParquetWriter::new(&plan, w)
                        && let Ok(mut f) = t.start(Vec::new())
                    {
                        let _ = f.write_frames(0..plan.timeline.frames(), &e.values[w.node][w.output]);
                        let _ = f.finish();
                    }
                }
            }
        }
    }
}

/// Runs `case` on a worker thread and fails, with `what`, if it panics or takes more than
/// `limit`.
fn bounded(what: String, limit: Duration, case: impl FnOnce() + Send + 'static) {
    let (tx, rx) = mpsc::channel();
    let worker = std::thread::Builder::new()
        .stack_size(8 << 20)
        .spawn(move || {
            let outcome = std::panic::catch_unwind(std::panic::AssertUnwindSafe(case));
            let _ = tx.send(outcome.is_ok());
        })
        .expect("a worker thread");
    match rx.recv_timeout(limit) {
        Ok(true) => {
            let _ = worker.join();
        }
        Ok(false) => panic!("panicked on {what}"),
        Err(_) => panic!("no answer within {limit:?} on {what}"),
    }
}

fn cases(default: usize) -> usize {
    std::env::var("HEFT_FUZZ_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(default)
}

/// Mutated copies of the example graphs (one to five mutations each).
#[test]
fn mutated_graphs_never_panic_or_hang() {
    let dir = tempfile::tempdir().expect("temp dir");
    let data = dir.path().join("data");
    std::fs::create_dir_all(&data).expect("mkdir");
    for f in ["juno.glb", "odile_plate.csv"] {
        std::fs::copy(workspace_root().join("data").join(f), data.join(f)).expect("copy");
    }
    let graphs = dir.path().join("graphs");
    std::fs::create_dir_all(&graphs).expect("mkdir");
    let originals: Vec<(String, Vec<u8>)> = ["toss", "hop", "jump", "juno", "plate_analysis", "jump_late_arms"]
        .iter()
        .map(|n| {
            let text = std::fs::read(workspace_root().join(format!("graphs/{n}.graph"))).expect("graph");
            ((*n).to_owned(), text)
        })
        .collect();
    let mut r = Mix(0x4845_4654_0001);
    for case in 0..cases(300) {
        let (name, text) = &originals[r.below(originals.len())];
        let mut bytes = text.clone();
        for _ in 0..1 + r.below(5) {
            mutate(&mut bytes, &mut r);
        }
        let path = graphs.join(format!("case{case}.graph"));
        std::fs::write(&path, &bytes).expect("write");
        if let Ok(keep) = std::env::var("HEFT_FUZZ_LAST") {
            // For a case that kills the process (out of memory): the last one started.
            std::fs::write(keep, &bytes).expect("write");
        }
        let what = format!("case {case} (from {name}.graph):\n{}", String::from_utf8_lossy(&bytes));
        bounded(what, Duration::from_secs(60), move || exercise(&path));
    }
}

/// Mutated force-plate CSV files read by a track, and mutated glTF characters (bytes changed
/// in the JSON and in the binary chunk) read by `track.character`.
#[test]
fn mutated_tracks_and_characters_never_panic_or_hang() {
    let dir = tempfile::tempdir().expect("temp dir");
    let csv = std::fs::read(workspace_root().join("data/odile_plate.csv")).expect("csv");
    let glb = std::fs::read(workspace_root().join("data/juno.glb")).expect("glb");
    let mut r = Mix(0x4845_4654_0002);
    for case in 0..cases(150) {
        let (file, graph, original) = if case % 2 == 0 {
            (
                "plate.csv",
                "format 1\nrate 1000 fps\nframes 0..99\nplate = track.force\n    file = \"plate.csv\"\n    \
                 time_column = \"time [s]\"\n    column = \"weight.force [N]\"\nwrite plate.value\n",
                &csv,
            )
        } else {
            (
                "juno.glb",
                "format 1\nrate 24 fps\nframes 0..10\njuno = track.character\n    file = \"juno.glb\"\n    \
                 clip = jump\nwrite juno.head\nbake \"b.glb\"\n    juno.head\n",
                &glb,
            )
        };
        let mut bytes = original.clone();
        for _ in 0..1 + r.below(8) {
            // Most mutations where the structure is (the CSV's header, the glb's JSON chunk).
            let cut = if r.below(4) == 0 {
                bytes.len()
            } else {
                bytes.len().min(2048)
            };
            let tail = bytes.split_off(cut);
            mutate(&mut bytes, &mut r);
            bytes.extend(tail);
        }
        let case_dir = dir.path().join(format!("case{case}"));
        std::fs::create_dir_all(&case_dir).expect("mkdir");
        std::fs::write(case_dir.join(file), &bytes).expect("write");
        let path = case_dir.join("g.graph");
        std::fs::write(&path, graph).expect("write");
        let what = format!("case {case}: {file} mutated, kept in {}", case_dir.display());
        bounded(what, Duration::from_secs(60), move || exercise(&path));
    }
}

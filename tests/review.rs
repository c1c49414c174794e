//! Review pages in a real browser: the pages the example graphs write are opened from their
//! file:// addresses in headless Chromium (Debian's package, installed by
//! tests/clients/browser.sh when missing) and read back through the page's hook,
//! `window.heftReview`. A page fails on any error it logs, on any request it makes beyond its
//! own file, on a scene that is not the run's (its joints against the graph's outputs, a strand's
//! tip at a scrubbed frame against the run's CSV within 1e-4 m), on findings other than those
//! `heft audit` gives for the same frames, and on a blank screenshot.

use std::collections::BTreeSet;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::sync::OnceLock;

use heft_integration_tests::{heft, read_csv, registry, workspace_root};
use heft_node_sdk::{Dimension, PortKind};
use heft_runtime::check::{self, Overrides, Plan};
use serde_json::{Value, json};

/// How far a position on the page may be from the run's: the bound (the page keeps
/// positions to 5e-6 m: half its 1e-5 m step).
const TOLERANCE: f64 = 1e-4;

/// The example graphs with a review block (a line starting with `review`).
fn reviewing_graphs() -> Vec<PathBuf> {
    heft_integration_tests::example_graphs_with("review")
}

fn run_into(graph: &Path, out: &Path) {
    let o = heft()
        .arg("run")
        .arg(graph)
        .arg("--out")
        .arg(out)
        .arg("--quiet")
        .output()
        .expect("heft runs");
    assert!(
        o.status.success(),
        "heft run {}: {}",
        graph.display(),
        String::from_utf8_lossy(&o.stderr)
    );
}

/// Every reviewing example run once per test process, each into its own folder.
fn reviewed() -> &'static [(PathBuf, PathBuf)] {
    static RUNS: OnceLock<Vec<(PathBuf, PathBuf)>> = OnceLock::new();
    RUNS.get_or_init(|| {
        let graphs = reviewing_graphs();
        for want in ["jump.graph", "juno.graph"] {
            assert!(
                graphs.iter().any(|g| g.ends_with(want)),
                "graphs/{want} writes a review page; found {graphs:?}"
            );
        }
        let root = Path::new(env!("CARGO_TARGET_TMPDIR")).join("review");
        let _ = std::fs::remove_dir_all(&root);
        graphs
            .into_iter()
            .map(|g| {
                let out = root.join(g.file_stem().and_then(|s| s.to_str()).expect("graph name"));
                run_into(&g, &out);
                (g, out)
            })
            .collect()
    })
}

fn plan_of(graph: &Path) -> Plan {
    let (parsed, problems) = heft_runtime::read_graph(graph).expect("readable graph");
    check::check(&parsed, problems, &registry(), &Overrides::default())
        .unwrap_or_else(|p| panic!("{}: {p:?}", graph.display()))
}

fn run_json(dir: &Path) -> Value {
    let path = dir.join("run.json");
    serde_json::from_slice(&std::fs::read(&path).unwrap_or_else(|e| panic!("{}: {e}", path.display())))
        .unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

/// Opens the pages of `spec` in headless Chromium: `bash tests/clients/browser.sh SPEC`.
fn browse(spec: &Value, name: &str) -> (Output, Value) {
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR")).join("review-specs");
    std::fs::create_dir_all(&dir).expect("spec folder");
    let path = dir.join(format!("{name}.json"));
    std::fs::write(&path, serde_json::to_vec_pretty(spec).expect("spec")).expect("write spec");
    let o = Command::new("bash")
        .arg(workspace_root().join("tests/clients/browser.sh"))
        .arg(&path)
        .current_dir(workspace_root())
        .output()
        .expect("bash runs");
    let report: Value = serde_json::from_slice(&o.stdout).unwrap_or(Value::Null);
    (o, report)
}

fn text(o: &Output) -> String {
    format!(
        "exit status {:?}\n--- stdout\n{}--- stderr\n{}",
        o.status.code(),
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

/// The page's joints by series, from the graph: a body's transform outputs in m, a strand's
/// points from the columns of its CSV when the run wrote one (x, y, z per point), other points
/// from their shape, one for a vec3 or transform.
fn expected_scene(
    plan: &Plan,
    out: &Path,
    run: &Value,
    review: &heft_runtime::blocks::PlannedReview,
) -> Vec<(String, u64)> {
    let mut scene = Vec::new();
    if let Some(b) = review.body {
        let joints = plan.nodes[b]
            .ty
            .spec()
            .outputs
            .iter()
            .filter(|o| o.kind == PortKind::Transform && o.dimension == Dimension::Length)
            .count();
        scene.push((plan.nodes[b].name.clone(), joints as u64));
    }
    for item in &review.items {
        if item.show == heft_runtime::blocks::ReviewShow::Colliders {
            continue;
        }
        let points = match item.shape.kind {
            PortKind::Points => {
                let csv = csv_of(run, &item.name).map(|f| {
                    let (header, _) = read_csv(&out.join(f));
                    ((header.len() - 2) / 3) as u64
                });
                csv.unwrap_or(item.shape.points as u64)
            }
            PortKind::Vec3 | PortKind::Transform if item.dimension == Dimension::Length => 1,
            _ => continue,
        };
        scene.push((item.name.clone(), points));
    }
    scene
}

/// The CSV file a run wrote for `node.port`, from its run.json.
fn csv_of<'a>(run: &'a Value, series: &str) -> Option<&'a str> {
    let (node, port) = series.split_once('.')?;
    run["outputs"].as_array()?.iter().find_map(|o| {
        (o["node"] == node && o["port"] == port && o["format"] == "csv")
            .then(|| o["file"].as_str())
            .flatten()
    })
}

/// Scrubbing as a user does: the slider set and its `input` event sent; gives the frame shown.
fn scrub_to(index: usize) -> String {
    format!(
        "(() => {{ const s = document.getElementById('scrub'); s.value = '{index}'; \
         s.dispatchEvent(new Event('input')); return heftReview.frameNumber; }})()"
    )
}

/// The distinct colours of a PNG's pixels inside a rectangle, and the share that is not the
/// white of the page's paper.
fn colours(png_path: &Path, rect: &Value) -> (usize, f64) {
    let decoder = png::Decoder::new(std::io::BufReader::new(
        std::fs::File::open(png_path).unwrap_or_else(|e| panic!("{}: {e}", png_path.display())),
    ));
    let mut reader = decoder.read_info().expect("a PNG");
    let mut buf = vec![0; reader.output_buffer_size().expect("size")];
    let info = reader.next_frame(&mut buf).expect("PNG pixels");
    let channels = info.color_type.samples();
    let x0 = rect["x"].as_f64().expect("x").ceil() as usize;
    let y0 = rect["y"].as_f64().expect("y").ceil() as usize;
    let x1 = (x0 + rect["width"].as_f64().expect("width") as usize).min(info.width as usize);
    let y1 = (y0 + rect["height"].as_f64().expect("height") as usize).min(info.height as usize);
    let mut seen = BTreeSet::new();
    let mut inked = 0usize;
    for y in y0..y1 {
        for x in x0..x1 {
            let at = (y * info.width as usize + x) * channels;
            let px = [buf[at], buf[at + 1], buf[at + 2]];
            seen.insert(px);
            if px != [255, 255, 255] {
                inked += 1;
            }
        }
    }
    (seen.len(), inked as f64 / ((x1 - x0) * (y1 - y0)).max(1) as f64)
}

#[test]
fn example_review_pages_play_the_run_in_chromium() {
    let runs = reviewed();
    let shots = Path::new(env!("CARGO_TARGET_TMPDIR")).join("review-shots");
    std::fs::create_dir_all(&shots).expect("shots folder");
    struct Expect {
        file: PathBuf,
        frame: i64,
        scene: Vec<(String, u64)>,
        /// (series, point index, CSV file): the points compared at the scrubbed frame.
        tips: Vec<(String, u64, PathBuf)>,
        findings: Option<Vec<(String, i64, i64)>>,
    }
    let mut expected = Vec::new();
    let mut pages = Vec::new();
    for (graph, out) in runs {
        let plan = plan_of(graph);
        let run = run_json(out);
        for review in &plan.reviews {
            let file = out.join(&review.file);
            let tl = plan.timeline;
            let (first, last) = review
                .range
                .unwrap_or((tl.start_frame, tl.start_frame + tl.frame_count as i64 - 1));
            // A frame in the flight or the landing, not the first (scrubbing must move).
            let index = ((last - first) * 3 / 5) as usize;
            let scene = expected_scene(&plan, out, &run, review);
            // Each strand's tip: the last joint of its first and of its last chain.
            let mut tips = Vec::new();
            for item in &review.items {
                let heft_runtime::blocks::ReviewShow::Points { chain: Some(chain) } = item.show else {
                    continue;
                };
                if let Some(csv) = csv_of(&run, &item.name) {
                    for p in [chain - 1, item.shape.points - 1] {
                        tips.push((item.name.clone(), p as u64, out.join(csv)));
                    }
                }
            }
            // `heft audit` on the same graph and frames, for a planner's body (a character is
            // audited on the page with the graph's strands, which `heft audit FILE.glb` lacks).
            let findings = review
                .body
                .filter(|&b| plan.nodes[b].ty.spec().outputs.iter().any(|o| o.name == "com_position"))
                .map(|_| audit_findings(graph, first, last));
            let mut eval = vec![
                "heftReview.frames".to_owned(),
                "heftReview.jointCount()".to_owned(),
                "heftReview.scene()".to_owned(),
                scrub_to(index),
            ];
            for (name, p, _) in &tips {
                eval.push(format!("heftReview.point('{name}', {p})"));
            }
            eval.push("heftReview.findings()".to_owned());
            eval.push("heftReview.drawTime(10)".to_owned());
            let stem = format!(
                "{}-{}",
                graph.file_stem().and_then(|s| s.to_str()).unwrap_or("graph"),
                review.file.replace(['/', '.'], "_")
            );
            let shot = shots.join(format!("{stem}.png"));
            let _ = std::fs::remove_file(&shot);
            pages.push(json!({ "file": file, "shot": shot, "eval": eval }));
            expected.push(Expect {
                file,
                frame: first + index as i64,
                scene,
                tips,
                findings,
            });
        }
    }
    assert!(pages.len() >= 2, "review pages: {pages:?}");
    let (o, report) = browse(&json!({ "pages": pages }), "examples");
    assert!(o.status.success(), "the browser check failed:\n{}", text(&o));
    let results = report["pages"].as_array().expect("pages");
    assert_eq!(results.len(), expected.len());
    for (page, want) in results.iter().zip(&expected) {
        let at = want.file.display();
        assert_eq!(page["errors"], json!([]), "{at}: errors");
        assert_eq!(page["requests"], json!([]), "{at}: the page asked the network");
        let r = page["results"].as_array().expect("results");
        // The joints, series by series, and their sum.
        let scene = r[2].as_array().expect("scene");
        let got: Vec<(String, u64)> = scene
            .iter()
            .filter(|s| s["kind"] != "colliders")
            .map(|s| {
                (
                    s["name"].as_str().unwrap_or("").to_owned(),
                    s["points"].as_u64().unwrap_or(0),
                )
            })
            .collect();
        assert_eq!(got, want.scene, "{at}: the joints of each series");
        assert_eq!(
            r[1].as_u64(),
            Some(want.scene.iter().map(|(_, n)| n).sum::<u64>()),
            "{at}: joint count"
        );
        assert_eq!(r[3].as_i64(), Some(want.frame), "{at}: the frame scrubbed to");
        // Each strand's tip at that frame, against the run's CSV.
        for (k, (name, p, csv)) in want.tips.iter().enumerate() {
            let (header, rows) = read_csv(csv);
            let row = rows
                .iter()
                .find(|row| row[0] == want.frame as f64)
                .unwrap_or_else(|| panic!("{}: no frame {}", csv.display(), want.frame));
            let column = |axis: &str| {
                header
                    .iter()
                    .position(|h| h.starts_with(&format!("{name}.p{p}.{axis} ")))
                    .unwrap_or_else(|| panic!("{}: no column for point {p} {axis}", csv.display()))
            };
            let shown = r[4 + k].as_array().expect("a position");
            for (axis, value) in ["x", "y", "z"].iter().zip(shown) {
                let csv_value = row[column(axis)];
                let page_value = value.as_f64().expect("a number");
                assert!(
                    (page_value - csv_value).abs() <= TOLERANCE,
                    "{at}: {name} point {p} {axis} at frame {}: page {page_value}, CSV {csv_value}",
                    want.frame
                );
            }
        }
        let findings = &r[4 + want.tips.len()];
        if let Some(audit) = &want.findings {
            let got: Vec<(String, i64, i64)> = findings
                .as_array()
                .expect("findings")
                .iter()
                .map(|f| {
                    (
                        f["kind"].as_str().unwrap_or("").to_owned(),
                        f["first"].as_i64().unwrap_or(0),
                        f["last"].as_i64().unwrap_or(0),
                    )
                })
                .collect();
            assert_eq!(&got, audit, "{at}: the page's findings against `heft audit`");
        }
        let draw_ms = r[5 + want.tips.len()].as_f64().expect("draw time");
        println!("{at}: ready in {} s, {draw_ms:.2} ms a draw", page["ready_seconds"]);
        // The screenshot's view is drawn: many colours (grid, labels, series) and ink.
        let shot = PathBuf::from(pages_shot(&pages, &want.file));
        let (distinct, inked) = colours(&shot, &page["view"]);
        assert!(
            distinct >= 64 && inked >= 0.03,
            "{}: the view looks blank: {distinct} colours, {:.1} % not white",
            shot.display(),
            inked * 100.0
        );
    }
}

fn pages_shot(pages: &[Value], file: &Path) -> String {
    pages
        .iter()
        .find(|p| p["file"].as_str() == file.to_str())
        .and_then(|p| p["shot"].as_str())
        .expect("a shot")
        .to_owned()
}

/// `heft audit GRAPH --frames A..B --json`: its findings as (kind, first frame, last frame).
fn audit_findings(graph: &Path, first: i64, last: i64) -> Vec<(String, i64, i64)> {
    let dir = tempfile::tempdir().expect("temp dir");
    let json = dir.path().join("audit.json");
    let o = heft()
        .arg("audit")
        .arg(graph)
        .args(["--quiet", "--frames", &format!("{first}..{last}"), "--json"])
        .arg(&json)
        .output()
        .expect("heft audit runs");
    assert!(
        matches!(o.status.code(), Some(0 | 3)),
        "heft audit {}: {}",
        graph.display(),
        String::from_utf8_lossy(&o.stderr)
    );
    let report: Value = serde_json::from_slice(&std::fs::read(&json).expect("audit json")).expect("JSON");
    report["report"]["findings"]
        .as_array()
        .expect("findings")
        .iter()
        .map(|f| {
            (
                f["kind"].as_str().unwrap_or("").to_owned(),
                f["first_frame"].as_i64().unwrap_or(0),
                f["last_frame"].as_i64().unwrap_or(0),
            )
        })
        .collect()
}

/// The late arm swing `heft audit` finds in graphs/jump_late_arms.graph is on its page, and the
/// page's findings list and timeline jump to its first frame when clicked.
#[test]
fn a_finding_on_the_page_jumps_to_its_frame() {
    let (graph, out) = reviewed()
        .iter()
        .find(|(g, _)| g.ends_with("jump_late_arms.graph"))
        .expect("graphs/jump_late_arms.graph has a review");
    let audit = audit_findings(graph, 0, 84);
    let late = audit
        .iter()
        .find(|(kind, _, _)| kind == "late_arm_swing")
        .unwrap_or_else(|| panic!("heft audit finds the late arm swing: {audit:?}"));
    let spec = json!({ "pages": [{
        "file": out.join("review.html"),
        "eval": [
            scrub_to(0),
            "(() => { document.querySelector('li.finding').click(); return heftReview.frameNumber; })()",
            "document.querySelector('li.finding').classList.contains('now')",
            "document.querySelector('li.finding strong').textContent.trim()",
        ],
    }]});
    let (o, report) = browse(&spec, "finding");
    assert!(o.status.success(), "the browser check failed:\n{}", text(&o));
    let r = &report["pages"][0]["results"];
    assert_eq!(r[0], json!(0));
    assert_eq!(r[1].as_i64(), Some(late.1), "the click shows the finding's first frame");
    assert_eq!(r[2], json!(true), "the finding is marked while its frames are shown");
    assert_eq!(r[3], json!("arm swing after take-off"));
}

/// `heft sweep` writes an index page: one row per point with its summary values (those of the
/// sweep's table), each linking to the point's own review page, which exists.
#[test]
fn a_sweep_index_links_every_point_to_its_page() {
    let out = tempfile::tempdir().expect("temp dir");
    let o = heft()
        .args([
            "sweep",
            "graphs/jump_late_arms.graph",
            "--quiet",
            "--vary",
            "odile.takeoff_speed=2.2..2.6 m/s:3",
            "--summary",
            "odile.rise",
            "--out",
        ])
        .arg(out.path())
        .output()
        .expect("heft runs");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let (header, rows) = {
        let text = std::fs::read_to_string(out.path().join("sweep.csv")).expect("sweep.csv");
        let mut lines = text
            .lines()
            .map(|l| l.split(',').map(str::to_owned).collect::<Vec<_>>());
        (lines.next().expect("header"), lines.collect::<Vec<_>>())
    };
    assert_eq!(rows.len(), 3);
    let index = out.path().join("sweep.html");
    let spec = json!({ "pages": [{
        "file": index,
        "wait": "true",
        "eval": [
            "Array.from(document.querySelectorAll('#points thead th')).map((th) => th.textContent)",
            "Array.from(document.querySelectorAll('#points tbody tr')).map((tr) => Array.from(tr.cells).map((c) => c.textContent))",
            "Array.from(document.querySelectorAll('#points tbody a')).map((a) => a.getAttribute('href'))",
            // Sorting by the rise, twice: the highest rise first.
            "(() => { const th = Array.from(document.querySelectorAll('#points thead th')).find((t) => t.textContent.startsWith('odile.rise')); th.click(); th.click(); return document.querySelector('#points tbody tr').cells[0].textContent; })()",
        ],
    }]});
    let (o, report) = browse(&spec, "sweep");
    assert!(o.status.success(), "the browser check failed:\n{}", text(&o));
    let r = &report["pages"][0]["results"];
    let got_header: Vec<String> = serde_json::from_value(r[0].clone()).expect("header");
    assert_eq!(got_header, header, "the page's columns are the table's, units included");
    assert!(header.iter().any(|h| h == "odile.rise [m]"), "{header:?}");
    let got_rows: Vec<Vec<String>> = serde_json::from_value(r[1].clone()).expect("rows");
    assert_eq!(got_rows, rows, "the page's rows are the table's");
    let links: Vec<String> = serde_json::from_value(r[2].clone()).expect("links");
    assert_eq!(links.len(), 3);
    for (row, link) in rows.iter().zip(&links) {
        assert_eq!(link, &format!("{}/review.html", row[1]), "point {}", row[0]);
        assert!(out.path().join(link).is_file(), "{link} is written");
    }
    let rise = header.iter().position(|h| h == "odile.rise [m]").expect("rise column");
    let highest = rows
        .iter()
        .max_by(|a, b| {
            a[rise]
                .parse::<f64>()
                .unwrap()
                .total_cmp(&b[rise].parse::<f64>().unwrap())
        })
        .expect("a row");
    assert_eq!(
        r[3].as_str(),
        Some(highest[0].as_str()),
        "sorted by the rise, highest first"
    );
}

/// The large case: 1000 strands of 17 joints over 720 frames. The page reads every
/// joint, scrubs to a late frame and draws it both ways; its size and the time it takes to be
/// ready and to draw a frame are printed, not judged (a timing is a measurement of this
/// machine, reported in the README, never a pass or a failure).
#[test]
fn a_review_of_1000_strands_over_720_frames_reads_and_draws_every_joint() {
    let out = Path::new(env!("CARGO_TARGET_TMPDIR")).join("review-many");
    let _ = std::fs::remove_dir_all(&out);
    run_into(&workspace_root().join("tests/fixtures/review/many_strands.graph"), &out);
    let page = out.join("many.html");
    let bytes = std::fs::metadata(&page).expect("many.html").len();
    let spec = json!({ "pages": [{
        "file": page,
        "eval": [
            "heftReview.jointCount()",
            scrub_to(700),
            "heftReview.drawTime(20)",
            "(() => { document.getElementById('tubes').click(); return heftReview.drawTime(10); })()",
        ],
    }]});
    let (o, report) = browse(&spec, "many");
    assert!(o.status.success(), "the browser check failed:\n{}", text(&o));
    let p = &report["pages"][0];
    let r = &p["results"];
    assert_eq!(r[0], json!(17000), "1000 strands of 17 joints");
    assert_eq!(r[1], json!(700));
    let (lines, tubes) = (r[2].as_f64().expect("ms"), r[3].as_f64().expect("ms"));
    println!(
        "1000 strands x 17 joints x 720 frames: page {:.1} MB, ready in {} s, a draw {lines:.1} ms as lines, \
         {tubes:.1} ms as tubes ({})",
        bytes as f64 / 1e6,
        p["ready_seconds"],
        report["browser"]
    );
    assert!(
        lines.is_finite() && lines > 0.0 && tubes.is_finite() && tubes > 0.0,
        "the page timed its draws: {lines} ms (lines), {tubes} ms (tubes)"
    );
}

/// Bad review blocks are refused before anything runs, each problem at its place.
#[test]
fn bad_review_blocks_are_reported_in_place() {
    let dir = tempfile::tempdir().expect("temp dir");
    let g = dir.path().join("r.graph");
    std::fs::write(
        &g,
        "format 1\nrate 24 fps\nframes 0..10\n\
b = trajectory.jump\n\
s = strand.euler\n\
b.head -> s.anchor\n\
review \"a.htm\"\n    b.com_position\n\
review \"c.html\"\n    colliders = b.com_position\n    body = nobody\n    frames = 5..20\n\
review \"d.html\"\n    s.positions joints 4\n    strand_radius = 3 kg\n    look = nice\n\
review \"e.html\"\n    body = s\n\
review \"f.html\"\n    title = \"nothing\"\n",
    )
    .expect("write");
    let o = heft().arg("check").arg(&g).output().expect("runs");
    assert_eq!(o.status.code(), Some(1));
    let err = String::from_utf8_lossy(&o.stderr);
    for want in [
        "r.graph:7:8: `a.htm` should end in .html",
        "r.graph:10:17: `b.com_position` is vec3 (a length): a list of colliders is points in m, three per collider",
        "r.graph:11:12: no node named `nobody`",
        "r.graph:12:14: the review's frames 5..20 are not all in the run's frames 0..10",
        "r.graph:14:24: `s.positions` has 13 points, not a whole number of chains of 4 joints",
        "r.graph:15:21: `strand_radius` takes a length above 0 and at most 1 m",
        "r.graph:16:5: `review` has no option `look`",
        "r.graph:18:12: `s` has no joints (transform outputs) to draw",
        "r.graph:19:8: this review shows nothing",
    ] {
        assert!(err.contains(want), "missing `{want}` in:\n{err}");
    }
}

/// A title with markup in it is shown as text, and does not end the page's data early.
#[test]
fn a_title_with_markup_is_shown_as_text() {
    let dir = tempfile::tempdir().expect("temp dir");
    let graph = dir.path().join("t.graph");
    let title = "<b>Odile</b> </script><!-- & co";
    std::fs::write(
        &graph,
        format!("format 1\nrate 24 fps\nframes 0..12\nb = trajectory.jump\nreview \"t.html\"\n    title = \"{title}\"\n    body = b\n"),
    )
    .expect("write");
    let out = dir.path().join("out");
    run_into(&graph, &out);
    let spec = json!({ "pages": [{
        "file": out.join("t.html"),
        "eval": ["document.querySelector('h1').textContent", "document.title", "heftReview.jointCount()"],
    }]});
    let (o, report) = browse(&spec, "title");
    assert!(o.status.success(), "the browser check failed:\n{}", text(&o));
    let r = &report["pages"][0]["results"];
    assert_eq!(r[0], json!(title));
    assert_eq!(r[1], json!(format!("{title} - heft review")));
    assert!(r[2].as_u64().is_some_and(|n| n > 0), "{r}");
}

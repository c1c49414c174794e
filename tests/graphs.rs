//! Example graphs from graphs/, evaluated through the real, dynamically loaded plugins and
//! checked against closed-form results.

use heft_integration_tests::{heft, read_csv, registry, workspace_root};
use heft_runtime::check::Overrides;
use heft_runtime::{check, eval, read_graph};

const G: f64 = 9.80665; // standard gravity, exact by definition (3rd CGPM, 1901)

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

/// Every example graph in graphs/ passes the checks.
#[test]
fn every_example_graph_checks() {
    let reg = registry();
    let mut count = 0;
    for entry in std::fs::read_dir(workspace_root().join("graphs")).expect("graphs/") {
        let path = entry.expect("entry").path();
        if path.extension().is_some_and(|e| e == "graph") {
            let (graph, problems) = read_graph(&path).expect("readable");
            if let Err(p) = check::check(&graph, problems, &reg, &Overrides::default()) {
                panic!("{}: {}", path.display(), heft_runtime::diag::render(&p, false));
            }
            count += 1;
        }
    }
    assert!(count >= 2, "found {count} example graphs");
}

/// Ballistic flight: with launch speed v_z, the apex comes v_z/g after launch at a rise of
/// v_z^2/(2g), and the path returns to the launch height after the flight time 2 v_z/g
/// (closed form of uniformly accelerated motion; e.g. Halliday, Resnick & Walker,
/// Fundamentals of Physics, ch. 4, projectile motion). Checked to 1e-9 relative through the
/// whole pipeline: graph file, dynamic plugin, evaluation, CSV text.
#[test]
fn ballistic_apex_and_flight_time_match_closed_form() {
    let out = tempfile::tempdir().expect("temp dir");
    let status = heft()
        .args(["run", "graphs/hop.graph", "--out"])
        .arg(out.path())
        .arg("--quiet")
        .status()
        .expect("heft runs");
    assert!(status.success());
    let (header, rows) = read_csv(&out.path().join("tamsin.position.csv"));
    assert_eq!(
        header,
        [
            "frame",
            "time [s]",
            "tamsin.position.x [m]",
            "tamsin.position.y [m]",
            "tamsin.position.z [m]"
        ]
    );
    let (_, vel) = read_csv(&out.path().join("tamsin.velocity.csv"));
    let (z0, vz, t0, fps) = (0.98, 4.903325, 0.5, 24.0);
    let row_at = |t: f64| {
        rows.iter()
            .position(|r| (r[1] - t).abs() < 1e-12)
            .expect("a frame at that time")
    };
    let apex_t = t0 + vz / G;
    let land_t = t0 + 2.0 * vz / G;
    assert!(
        (apex_t * fps - (apex_t * fps).round()).abs() < 1e-12,
        "the apex falls on a frame"
    );
    let apex = row_at(apex_t);
    let land = row_at(land_t);
    assert!(
        rel(rows[apex][4] - z0, vz * vz / (2.0 * G)) < 1e-9,
        "apex rise {}",
        rows[apex][4] - z0
    );
    assert!(
        vel[apex][4].abs() < 1e-12,
        "vertical speed at the apex {}",
        vel[apex][4]
    );
    assert!(
        (rows[land][4] - z0).abs() < 1e-9 * z0,
        "height after 2 v_z / g: {}",
        rows[land][4]
    );
    assert!(rel(vel[land][4], -vz) < 1e-9, "landing speed {}", vel[land][4]);
    // Flight time 2 v_z / g = 1 s: launch and landing are 24 frames apart.
    assert_eq!(rows[land][0] - rows[row_at(t0)][0], 24.0);
    // Horizontal motion is uniform.
    assert!(rel(rows[land][2] - rows[row_at(t0)][2], 0.6 * 2.0 * vz / G) < 1e-9);
    let (_, acc) = read_csv(&out.path().join("tamsin.acceleration.csv"));
    assert!(acc.iter().all(|r| r[4] == -G && r[2] == 0.0));
}

/// The keyed path passes through its keys (its C2 continuity is checked in the spline's
/// own unit tests, against Burden & Faires).
#[test]
fn keyed_path_passes_through_keys() {
    let reg = registry();
    let (graph, problems) = read_graph(&workspace_root().join("graphs/hop.graph")).expect("readable");
    let plan = check::check(&graph, problems, &reg, &Overrides::default()).expect("checks");
    let e = eval::evaluate(&plan, Some(1)).expect("evaluates");
    let right = plan.nodes.iter().position(|n| n.name == "right").expect("node");
    let pos = &e.values[right][0];
    // Keys at 0 s, 0.7 s and 2 s are frames 0, 16.8 (not a frame) and 48 at 24 fps.
    for (frame, z) in [(0usize, 1.0), (48, 1.0)] {
        assert!(
            (pos[frame * 3 + 2] - z).abs() < 1e-12,
            "frame {frame}: {}",
            pos[frame * 3 + 2]
        );
    }
    // Past the last key the path runs straight on: zero acceleration.
    assert_eq!(e.values[right][2][48 * 3 + 2], 0.0);
}

/// Results do not depend on the thread count: the same graph with 1 and 2 threads writes
/// byte-identical CSV files.
#[test]
fn one_and_two_threads_write_identical_files() {
    let a = tempfile::tempdir().expect("temp dir");
    let b = tempfile::tempdir().expect("temp dir");
    for (dir, threads) in [(&a, "1"), (&b, "2")] {
        let status = heft()
            .args(["run", "graphs/hop.graph", "--quiet", "--threads", threads, "--out"])
            .arg(dir.path())
            .status()
            .expect("heft runs");
        assert!(status.success());
    }
    let mut compared = 0;
    for entry in std::fs::read_dir(a.path()).expect("out") {
        let path = entry.expect("entry").path();
        if path.extension().is_some_and(|e| e == "csv") {
            let other = b.path().join(path.file_name().expect("name"));
            assert_eq!(
                std::fs::read(&path).expect("read"),
                std::fs::read(&other).expect("read"),
                "{}",
                path.display()
            );
            compared += 1;
        }
    }
    assert_eq!(compared, 6);
}

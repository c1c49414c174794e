//! The node template (templates/node) works out of heft's tree, as a studio's own crate would:
//! copied to a folder of its own with its SDK dependency pointed at this checkout, it builds,
//! its own test (a closed form) passes, and heft loads it with `--plugins` and runs its graph.

use std::path::Path;
use std::process::Command;

use heft_integration_tests::{heft, read_csv, workspace_root};

fn copy_tree(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).expect("mkdir");
    for e in std::fs::read_dir(from).expect("read template") {
        let p = e.expect("entry").path();
        let name = p.file_name().expect("name");
        if name == "target" {
            continue;
        }
        if p.is_dir() {
            copy_tree(&p, &to.join(name));
        } else {
            std::fs::copy(&p, to.join(name)).expect("copy");
        }
    }
}

fn cargo(dir: &Path, args: &[&str]) {
    let o = Command::new(std::env::var("CARGO").unwrap_or_else(|_| "cargo".into()))
        .current_dir(dir)
        .args(args)
        .env("CARGO_TARGET_DIR", dir.join("target"))
        .output()
        .expect("cargo runs");
    assert!(
        o.status.success(),
        "cargo {args:?} in the template copy failed:\n{}",
        String::from_utf8_lossy(&o.stderr)
    );
}

#[test]
fn the_node_template_builds_out_of_tree_and_runs_its_graph() {
    let dir = tempfile::tempdir().expect("temp dir");
    let crate_dir = dir.path().join("my-follow");
    copy_tree(&workspace_root().join("templates/node"), &crate_dir);
    let manifest = crate_dir.join("Cargo.toml");
    let mut text = std::fs::read_to_string(&manifest).expect("manifest");
    for dep in ["crates/heft-node-sdk", "crates/heft-conformance"] {
        let at = workspace_root().join(dep);
        text = text.replace(
            &format!("path = \"../../{dep}\""),
            &format!("path = {:?}", at.display().to_string()),
        );
    }
    assert!(
        !text.contains("../../"),
        "every path of the template points at this checkout"
    );
    std::fs::write(&manifest, text).expect("write manifest");
    // The versions heft itself is built with, so no download is needed.
    std::fs::copy(workspace_root().join("Cargo.lock"), crate_dir.join("Cargo.lock")).expect("lock");
    cargo(&crate_dir, &["test", "--offline", "--quiet"]);
    cargo(&crate_dir, &["build", "--offline", "--quiet"]);

    let o = heft()
        .current_dir(&crate_dir)
        .args([
            "run",
            "follow.graph",
            "--plugins",
            "target/debug",
            "--quiet",
            "--out",
            "out",
        ])
        .output()
        .expect("heft runs");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let (header, rows) = read_csv(&crate_dir.join("out/pendant.position.csv"));
    let (_, hand) = read_csv(&crate_dir.join("out/hand.position.csv"));
    assert_eq!(header[2], "pendant.position.x [m]");
    assert_eq!(rows.len(), 49);
    // Behind the hand while it moves, never NaN.
    // At rest where it hangs at the first frame: g / omega^2 below the hand (2 Hz, standard
    // gravity: 9.80665 / (4 pi)^2 = 0.0621 m).
    let sag = 9.80665 / (4.0 * std::f64::consts::PI).powi(2);
    assert_eq!(rows[0][2..4], hand[0][2..4]);
    assert!(
        (rows[0][4] - (hand[0][4] - sag)).abs() < 1e-12,
        "{} vs {}",
        rows[0][4],
        hand[0][4] - sag
    );
    assert!(rows.iter().flatten().all(|v| v.is_finite()));
    let lag = rows
        .iter()
        .zip(&hand)
        .map(|(p, h)| (2..5).map(|k| (p[k] - h[k]).powi(2)).sum::<f64>().sqrt())
        .fold(0.0, f64::max);
    assert!(lag > 0.01, "the pendant lags the hand: at most {lag} m");
}

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
    let sdk = workspace_root().join("crates/heft-node-sdk");
    let manifest = crate_dir.join("Cargo.toml");
    let text = std::fs::read_to_string(&manifest).expect("manifest");
    std::fs::write(
        &manifest,
        text.replace(
            "path = \"../../crates/heft-node-sdk\"",
            &format!("path = {:?}", sdk.display().to_string()),
        ),
    )
    .expect("write manifest");
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
    // At rest on the hand at the first frame, behind it while the hand moves, never NaN.
    assert_eq!(rows[0][2..5], hand[0][2..5]);
    assert!(rows.iter().flatten().all(|v| v.is_finite()));
    let lag = rows
        .iter()
        .zip(&hand)
        .map(|(p, h)| (2..5).map(|k| (p[k] - h[k]).powi(2)).sum::<f64>().sqrt())
        .fold(0.0, f64::max);
    assert!(lag > 0.01, "the pendant lags the hand: at most {lag} m");
}

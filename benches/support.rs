//! Helpers for the benches: build the real plugin library next to the bench binary's
//! profile folder (`cargo bench` builds node crates only as rlibs).

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::SystemTime;

/// Builds `package` as a cdylib in the bench's profile and returns the library path.
pub fn build_plugin(package: &str, lib_name: &str) -> PathBuf {
    let exe = std::env::current_exe().expect("bench executable");
    let profile_dir = exe
        .parent()
        .and_then(Path::parent)
        .expect("target/<profile>")
        .to_path_buf();
    let target = profile_dir.parent().expect("target").to_path_buf();
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).parent().expect("workspace root");
    let cargo = std::env::var("CARGO").unwrap_or_else(|_| "cargo".to_owned());
    let mut cmd = Command::new(cargo);
    cmd.current_dir(root)
        .args(["build", "--quiet", "-p", package, "--target-dir"])
        .arg(&target);
    if profile_dir.file_name().is_some_and(|n| n == "release") {
        cmd.arg("--release");
    }
    assert!(cmd.status().expect("cargo runs").success(), "building {package}");
    profile_dir.join(format!(
        "{}{lib_name}{}",
        std::env::consts::DLL_PREFIX,
        std::env::consts::DLL_SUFFIX
    ))
}

/// Criterion's output folder, as criterion finds it ($CRITERION_HOME, else
/// $CARGO_TARGET_DIR/criterion, else the target folder holding this executable).
fn criterion_dir() -> Option<PathBuf> {
    if let Some(home) = std::env::var_os("CRITERION_HOME") {
        return Some(PathBuf::from(home));
    }
    if let Some(target) = std::env::var_os("CARGO_TARGET_DIR") {
        return Some(PathBuf::from(target).join("criterion"));
    }
    let exe = std::env::current_exe().ok()?;
    Some(exe.parent()?.parent()?.parent()?.join("criterion"))
}

/// Mean time per iteration (ns) of one bench, from criterion's estimates file, if that file was
/// written by this run (after `since`): the benches report ratios of one run from these.
pub fn mean_ns(group: &str, bench: &str, since: SystemTime) -> Option<f64> {
    let path = criterion_dir()?
        .join(group)
        .join(bench)
        .join("new")
        .join("estimates.json");
    if std::fs::metadata(&path).and_then(|m| m.modified()).ok()? < since {
        return None;
    }
    let text = std::fs::read_to_string(path).ok()?;
    let v: serde_json::Value = serde_json::from_str(&text).ok()?;
    v["mean"]["point_estimate"].as_f64()
}

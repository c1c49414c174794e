//! Helpers for the benches: build the real plugin library next to the bench binary's
//! profile folder (`cargo bench` builds node crates only as rlibs).

use std::path::{Path, PathBuf};
use std::process::Command;

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

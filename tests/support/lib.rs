//! Helpers for the workspace tests: build the real plugins and the `heft` binary once per
//! test process (`cargo test` builds neither the cdylib files nor other packages'
//! binaries), and find them.

use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::OnceLock;

use heft_runtime::registry::Registry;

/// The example graphs in graphs/ with a line starting with `keyword` (`bake`, `review`), sorted,
/// so that a new example is covered without a change to the test that reads them.
pub fn example_graphs_with(keyword: &str) -> Vec<PathBuf> {
    let mut graphs: Vec<PathBuf> = std::fs::read_dir(workspace_root().join("graphs"))
        .expect("graphs/")
        .map(|e| e.expect("entry").path())
        .filter(|p| p.extension().is_some_and(|e| e == "graph"))
        .filter(|p| {
            std::fs::read_to_string(p)
                .unwrap_or_else(|e| panic!("{}: {e}", p.display()))
                .lines()
                .any(|l| l.split_whitespace().next() == Some(keyword))
        })
        .collect();
    graphs.sort();
    graphs
}

/// The workspace root.
pub fn workspace_root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .map(Path::to_path_buf)
        .unwrap_or_default()
}

/// The profile folder this test binary was built into (`target/debug`).
fn profile_dir() -> PathBuf {
    let exe = std::env::current_exe().expect("test executable path");
    // target/<profile>/deps/<test binary>
    exe.parent()
        .and_then(Path::parent)
        .map(Path::to_path_buf)
        .expect("target/<profile> folder")
}

fn cargo() -> String {
    std::env::var("CARGO").unwrap_or_else(|_| "cargo".to_owned())
}

fn build(packages: &[&str], target_dir: &Path) {
    let release = profile_dir().file_name().is_some_and(|n| n == "release");
    let mut cmd = Command::new(cargo());
    cmd.current_dir(workspace_root())
        .arg("build")
        .arg("--quiet")
        .arg("--target-dir")
        .arg(target_dir);
    for p in packages {
        cmd.arg("-p").arg(p);
    }
    if release {
        cmd.arg("--release");
    }
    let status = cmd.status().expect("cargo runs");
    assert!(status.success(), "building {packages:?} failed");
}

/// Builds the `heft` binary and the node plugins of the workspace (once per process) and
/// returns the folder that holds them.
pub fn plugin_dir() -> &'static Path {
    static DIR: OnceLock<PathBuf> = OnceLock::new();
    DIR.get_or_init(|| {
        let dir = profile_dir();
        let target = dir.parent().map(Path::to_path_buf).expect("target folder");
        // The packages of the plugins are the library names with `-` for `_`.
        let packages: Vec<String> = std::iter::once("heft-cli".to_owned())
            .chain(REAL_PLUGINS.iter().map(|l| l.replace('_', "-")))
            .collect();
        let packages: Vec<&str> = packages.iter().map(String::as_str).collect();
        build(&packages, &target);
        dir
    })
}

/// Builds the test-only plugins (a wrong ABI version, a node that panics) into a target
/// folder of their own, so that they never sit beside the real plugins, and returns the
/// folder that holds them.
pub fn fixture_dir() -> &'static Path {
    static DIR: OnceLock<PathBuf> = OnceLock::new();
    DIR.get_or_init(|| {
        let profile = profile_dir();
        let target = profile.parent().expect("target folder").join("fixture-plugins");
        // The fixtures are rlibs in the workspace (so a workspace build never puts them beside
        // `heft`); their loadable libraries are built here, as cdylibs, one crate at a time.
        let release = profile.file_name().is_some_and(|n| n == "release");
        for p in [
            "heft-test-plugin-wrong-abi",
            "heft-test-plugin-probe",
            "heft-test-plugin-no-entry",
        ] {
            let mut cmd = fixture_cdylib(p, &target);
            if release {
                cmd.arg("--release");
            }
            let status = cmd.status().expect("cargo runs");
            assert!(status.success(), "building {p} failed");
        }
        target.join(profile.file_name().expect("profile name"))
    })
}

/// The cargo command that builds fixture package `package` as a loadable library into
/// `target` (append `--release`, or `-- <rustc flags>`).
pub fn fixture_cdylib(package: &str, target: &Path) -> Command {
    let mut cmd = Command::new(cargo());
    cmd.current_dir(workspace_root())
        .args([
            "rustc",
            "--quiet",
            "--lib",
            "--crate-type",
            "cdylib",
            "-p",
            package,
            "--target-dir",
        ])
        .arg(target);
    cmd
}

/// The path of a plugin library named `name` (crate name with underscores) in `dir`.
pub fn library(dir: &Path, name: &str) -> PathBuf {
    dir.join(format!(
        "{}{name}{}",
        std::env::consts::DLL_PREFIX,
        std::env::consts::DLL_SUFFIX
    ))
}

/// A registry of the workspace's real plugins, loaded file by file (so that whatever else
/// a developer has built into the target folder does not change the test).
pub fn registry() -> Registry {
    let mut reg = heft_formats::registry();
    for name in REAL_PLUGINS {
        reg.load_file(&library(plugin_dir(), name));
    }
    assert!(reg.failures().is_empty(), "{:?}", reg.failures());
    reg
}

/// The library names of the workspace's node plugins.
pub const REAL_PLUGINS: &[&str] = &[
    "heft_trajectory",
    "heft_contact",
    "heft_weight",
    "heft_forceplate",
    "heft_noise",
    "heft_strand",
    "heft_xpbd",
    "heft_collider",
];

/// The real plugins plus the test plugin `probe`.
pub fn registry_with_probe() -> Registry {
    let mut reg = registry();
    reg.load_file(&library(fixture_dir(), "heft_test_plugin_probe"));
    assert!(reg.failures().is_empty(), "{:?}", reg.failures());
    reg
}

/// A private installation: a temporary folder holding a copy of `heft` and of the given
/// libraries, so that the executable-folder search finds exactly those.
pub fn install(libraries: &[PathBuf]) -> tempfile::TempDir {
    let dir = tempfile::tempdir().expect("temp dir");
    let exe = format!("heft{}", std::env::consts::EXE_SUFFIX);
    std::fs::copy(plugin_dir().join(&exe), dir.path().join(&exe)).expect("copy heft");
    for lib in libraries {
        let name = lib.file_name().expect("library file name");
        std::fs::copy(lib, dir.path().join(name)).expect("copy library");
    }
    dir
}

/// The `heft` of a private installation, run from the workspace root.
pub fn heft_in(install: &Path) -> Command {
    let mut cmd = Command::new(install.join(format!("heft{}", std::env::consts::EXE_SUFFIX)));
    cmd.env_remove("HEFT_PLUGIN_PATH").current_dir(workspace_root());
    cmd
}

/// The `heft` binary, with no plugin path from the environment.
pub fn heft() -> Command {
    let mut cmd = Command::new(plugin_dir().join(format!("heft{}", std::env::consts::EXE_SUFFIX)));
    cmd.env_remove("HEFT_PLUGIN_PATH").current_dir(workspace_root());
    cmd
}

/// Reads a CSV written by heft: the header and the rows as numbers.
pub fn read_csv(path: &Path) -> (Vec<String>, Vec<Vec<f64>>) {
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    let mut lines = text.lines();
    let header = lines.next().unwrap_or_default().split(',').map(str::to_owned).collect();
    let rows = lines
        .map(|l| {
            l.split(',')
                .map(|v| v.parse().unwrap_or_else(|_| panic!("not a number: {v}")))
                .collect()
        })
        .collect();
    (header, rows)
}

/// The value a node ran with for one of its number parameters, as the run's `run.json` in
/// `folder` records it (SI).
pub fn run_parameter(folder: &Path, node: &str, param: &str) -> f64 {
    let path = folder.join("run.json");
    let run: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{}: {e}", path.display())))
            .unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    run["nodes"]
        .as_array()
        .and_then(|nodes| nodes.iter().find(|n| n["name"] == node))
        .and_then(|n| n["parameters"].as_array())
        .and_then(|ps| ps.iter().find(|p| p["name"] == param))
        .and_then(|p| p["value"].as_f64())
        .unwrap_or_else(|| panic!("{}: no number `{node}.{param}`", path.display()))
}

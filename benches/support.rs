//! Helpers for the benches: build the real plugin library next to the bench binary's
//! profile folder (`cargo bench` builds node crates only as rlibs).

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::SystemTime;

use heft_node_sdk::host::Plugin;
use heft_node_sdk::{ParamValue, Params, PortKind, Timeline};

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

/// One prepared node evaluation: parameters encoded, inputs and output buffers allocated.
#[derive(Debug)]
pub struct NodeCall {
    plugin: Plugin,
    index: u32,
    params: Vec<u8>,
    timeline: Timeline,
    inputs: Vec<(Vec<f64>, usize)>,
    outputs: Vec<(Vec<f64>, usize)>,
    output_names: Vec<String>,
}

impl NodeCall {
    /// Node type `index` of `plugin` with its defaults and `overrides`, and the named inputs
    /// connected (the rest empty).
    pub fn new(
        plugin: Plugin,
        index: u32,
        overrides: &[(&str, ParamValue)],
        timeline: Timeline,
        connected: Vec<(&str, Vec<f64>)>,
    ) -> Self {
        let spec = plugin.descriptor().nodes[index as usize].clone();
        let mut params = Params::defaults(&spec).expect("every strand parameter has a default");
        for (name, value) in overrides {
            params = params.with(name, value.clone()).expect("known parameter");
        }
        let frames = timeline.frames();
        let mut connected = connected;
        let inputs: Vec<(Vec<f64>, usize)> = spec
            .inputs
            .iter()
            .map(|port| match connected.iter().position(|(n, _)| *n == port.name) {
                Some(k) => {
                    let data = connected.swap_remove(k).1;
                    let width = data.len() / frames;
                    (data, width)
                }
                None => (Vec::new(), 0),
            })
            .collect();
        assert!(
            connected.is_empty(),
            "unknown inputs {:?}",
            connected.iter().map(|c| c.0).collect::<Vec<_>>()
        );
        let bytes = Plugin::encode_params(params.values()).expect("encodes");
        let widths: Vec<usize> = inputs.iter().map(|(_, w)| *w).collect();
        let points = plugin
            .output_points(index, &bytes, timeline, &widths, spec.outputs.len())
            .expect("output shapes");
        let outputs = spec
            .outputs
            .iter()
            .zip(points)
            .map(|(port, n)| {
                let width = if port.kind == PortKind::Points {
                    3 * n
                } else {
                    port.kind.width(0)
                };
                (vec![0.0; frames * width], width)
            })
            .collect();
        NodeCall {
            plugin,
            index,
            params: bytes,
            timeline,
            inputs,
            outputs,
            output_names: spec.outputs.iter().map(|p| p.name.clone()).collect(),
        }
    }

    /// Evaluates the node on one thread.
    pub fn run(&mut self) -> Result<(), String> {
        self.run_with_threads(1)
    }

    /// Evaluates the node allowed `threads` threads (`Call::threads`).
    pub fn run_with_threads(&mut self, threads: usize) -> Result<(), String> {
        let inputs: Vec<(&[f64], usize)> = self.inputs.iter().map(|(d, w)| (d.as_slice(), *w)).collect();
        let mut outputs: Vec<(&mut [f64], usize)> =
            self.outputs.iter_mut().map(|(d, w)| (d.as_mut_slice(), *w)).collect();
        self.plugin
            .evaluate_with_threads(
                self.index,
                &self.params,
                self.timeline,
                &inputs,
                &mut outputs,
                &mut [],
                threads,
            )
            .map(|_| ())
            .map_err(|e| e.to_string())
    }

    /// Every output value's bits, in output order.
    pub fn bits(&self) -> Vec<u64> {
        self.outputs
            .iter()
            .flat_map(|(d, _)| d.iter().map(|v| v.to_bits()))
            .collect()
    }

    /// An output series and its width.
    pub fn output(&self, name: &str) -> (&[f64], usize) {
        let k = self.output_names.iter().position(|n| n == name).expect("output name");
        (&self.outputs[k].0, self.outputs[k].1)
    }
}

//! Plugins pinned by their contents, for runs that must be the same on every machine of a
//! farm and on every day: a lock file lists the plugins a run used, each with the SHA-256 of
//! its library file.
//!
//! The first run given `--plugin-lock FILE` writes it, naming the plugins its graph uses. Every
//! later run given the same file loads only library files whose SHA-256 is in it (a file is
//! hashed before it is loaded, since loading a library runs its start-up code), and is refused
//! when a locked plugin has changed or is missing. The file is JSON:
//!
//! ```json
//! {"heft_plugin_lock": 1, "plugins": [{"name": "xpbd", "version": "0.1.0",
//!   "file": "libheft_xpbd.so", "sha256": "9f2c..."}]}
//! ```

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use heft_runtime::check::Plan;

/// The version of the lock file's layout.
const LAYOUT: u32 = 1;

/// One pinned plugin.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Pinned {
    /// The plugin's name (`xpbd`).
    pub name: String,
    /// Its version, as it describes itself.
    pub version: String,
    /// The library's file name (no folder: the plugin folders may differ between machines).
    pub file: String,
    /// SHA-256 of the library file, hex.
    pub sha256: String,
}

#[derive(Debug, Serialize, Deserialize)]
struct LockFile {
    heft_plugin_lock: u32,
    plugins: Vec<Pinned>,
}

/// A lock file given to a run: the plugins it pins, or none yet (the run writes it).
#[derive(Debug)]
pub struct PluginLock {
    path: PathBuf,
    pinned: Option<Vec<Pinned>>,
    /// Library files found with a locked file name but other contents.
    changed: Vec<String>,
}

impl PluginLock {
    /// Reads the lock at `path`; a missing file is a lock to write.
    pub fn read(path: &Path) -> Result<PluginLock, String> {
        let pinned = match std::fs::read(path) {
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => None,
            Err(e) => return Err(format!("cannot read the plugin lock {}: {e}", path.display())),
            Ok(bytes) => {
                let f: LockFile = serde_json::from_slice(&bytes)
                    .map_err(|e| format!("the plugin lock {} is not one heft wrote: {e}", path.display()))?;
                if f.heft_plugin_lock != LAYOUT {
                    return Err(format!(
                        "the plugin lock {} has layout {}, this heft reads layout {LAYOUT}",
                        path.display(),
                        f.heft_plugin_lock
                    ));
                }
                Some(f.plugins)
            }
        };
        Ok(PluginLock {
            path: path.to_path_buf(),
            pinned,
            changed: Vec::new(),
        })
    }

    /// Whether a library file may be loaded: always while the lock is still to be written;
    /// otherwise only when its contents are pinned. A file with a pinned name and other
    /// contents is noted as changed.
    pub fn admit(&mut self, path: &Path, sha256: &str) -> bool {
        let Some(pinned) = &self.pinned else { return true };
        if pinned.iter().any(|p| p.sha256 == sha256) {
            return true;
        }
        let name = path
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default();
        if let Some(p) = pinned.iter().find(|p| p.file == name) {
            self.changed.push(format!(
                "plugin `{}` ({}) has changed since {} was written: its SHA-256 is {sha256}, the lock says {}; it \
                 was not loaded",
                p.name,
                path.display(),
                self.path.display(),
                p.sha256
            ));
        }
        false
    }

    /// After discovery: the locked plugins that changed or were not found, as one error.
    pub fn verify(&self, registry: &heft_runtime::registry::Registry) -> Result<(), String> {
        let Some(pinned) = &self.pinned else { return Ok(()) };
        let mut problems = self.changed.clone();
        for p in pinned {
            let found = registry.plugins().iter().any(|l| l.sha256 == p.sha256);
            if !found && !problems.iter().any(|c| c.contains(&format!("plugin `{}`", p.name))) {
                problems.push(format!(
                    "plugin `{}` {} ({}, SHA-256 {}) pinned by {} is not in the plugin folders",
                    p.name,
                    p.version,
                    p.file,
                    p.sha256,
                    self.path.display()
                ));
            }
        }
        match problems.is_empty() {
            true => Ok(()),
            false => Err(problems.join("\n")),
        }
    }

    /// Writes the lock, naming the plugins `plan` uses, when it did not exist; returns whether
    /// it wrote.
    pub fn write_if_new(&self, plan: &Plan) -> Result<bool, String> {
        if self.pinned.is_some() {
            return Ok(false);
        }
        let mut plugins: Vec<Pinned> = Vec::new();
        for n in &plan.nodes {
            let Some(p) = n.ty.plugin() else { continue };
            if p.sha256.is_empty() || plugins.iter().any(|q| q.sha256 == p.sha256) {
                continue;
            }
            let d = p.plugin.descriptor();
            plugins.push(Pinned {
                name: d.name.clone(),
                version: d.version.clone(),
                file: p
                    .plugin
                    .origin()
                    .file_name()
                    .map(|f| f.to_string_lossy().into_owned())
                    .unwrap_or_default(),
                sha256: p.sha256.clone(),
            });
        }
        plugins.sort_by(|a, b| a.name.cmp(&b.name));
        let text = serde_json::to_vec_pretty(&LockFile {
            heft_plugin_lock: LAYOUT,
            plugins,
        })
        .map_err(|e| e.to_string())?;
        crate::output::write_atomically(&self.path, &text).map_err(|e| format!("cannot write the plugin lock {e}"))?;
        Ok(true)
    }
}

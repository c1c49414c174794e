//! Finding and loading plugins, and looking node types up by `plugin.node`.
//!
//! Search order: the `--plugins` folders in the order given, the `HEFT_PLUGIN_PATH` list,
//! then the folder of the running `heft` executable. Every file with the platform's
//! shared-library extension in those folders (not below them) is tried. A file that is
//! not a loadable heft plugin is reported and skipped, so one stray library does not stop
//! a run that does not need it.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::sync::Arc;

use heft_node_sdk::NodeSpec;
use heft_node_sdk::abi::PluginTable;
use heft_node_sdk::host::{LoadError, Plugin};

use crate::source::{HOST_PLUGIN, HostInstance, HostSource};
use sha2::{Digest, Sha256};

/// The environment variable holding extra plugin folders (`:`-separated on Unix).
pub const PLUGIN_PATH_VAR: &str = "HEFT_PLUGIN_PATH";

/// A loaded plugin and where it came from.
#[derive(Debug)]
pub struct LoadedPlugin {
    /// The loaded library.
    pub plugin: Plugin,
    /// SHA-256 of the library file, hex (empty for a statically linked plugin).
    pub sha256: String,
}

/// Who evaluates a node type.
#[derive(Debug, Clone)]
pub enum Provider {
    /// A loaded plugin, and the node type's index in its descriptor.
    Plugin {
        /// The plugin.
        plugin: Arc<LoadedPlugin>,
        /// Index in the plugin's descriptor.
        index: u32,
    },
    /// The host itself (a source that reads a file).
    Host(Arc<dyn HostSource>),
}

/// A node type: `plugin.node` and who provides it.
#[derive(Debug, Clone)]
pub struct NodeType {
    /// `plugin.node`.
    pub full_name: String,
    /// Who evaluates it.
    pub provider: Provider,
    /// For a host node whose outputs depend on its file (a character), what this instance read.
    pub instance: Option<Arc<HostInstance>>,
}

impl NodeType {
    /// Its spec (an instance's own, where it has one).
    pub fn spec(&self) -> &NodeSpec {
        if let Some(i) = &self.instance {
            return &i.spec;
        }
        match &self.provider {
            Provider::Plugin { plugin, index } => &plugin.plugin.descriptor().nodes[*index as usize],
            Provider::Host(h) => h.spec(),
        }
    }
    /// The plugin providing it, if it is not built into the host.
    pub fn plugin(&self) -> Option<&Arc<LoadedPlugin>> {
        match &self.provider {
            Provider::Plugin { plugin, .. } => Some(plugin),
            Provider::Host(_) => None,
        }
    }
    /// Where it comes from: the plugin file, or "built into heft".
    pub fn origin(&self) -> String {
        match &self.provider {
            Provider::Plugin { plugin, .. } => plugin.plugin.origin().display().to_string(),
            Provider::Host(_) => "built into heft".to_owned(),
        }
    }
}

/// Every plugin found, and every file that failed to load.
#[derive(Debug, Default)]
pub struct Registry {
    plugins: Vec<Arc<LoadedPlugin>>,
    failures: Vec<LoadError>,
    types: BTreeMap<String, Vec<NodeType>>,
    hosts: Vec<Arc<dyn HostSource>>,
}

/// The folders searched, in order, given the `--plugins` folders.
pub fn search_path(explicit: &[PathBuf]) -> Vec<PathBuf> {
    let mut dirs: Vec<PathBuf> = explicit.to_vec();
    if let Some(list) = std::env::var_os(PLUGIN_PATH_VAR) {
        dirs.extend(std::env::split_paths(&list).filter(|p| !p.as_os_str().is_empty()));
    }
    if let Some(dir) = std::env::current_exe()
        .ok()
        .and_then(|e| e.parent().map(Path::to_path_buf))
    {
        dirs.push(dir);
    }
    dirs
}

fn is_library(path: &Path) -> bool {
    path.is_file() && path.extension().is_some_and(|e| e == std::env::consts::DLL_EXTENSION)
}

fn sha256_hex(path: &Path) -> String {
    match std::fs::read(path) {
        Ok(bytes) => Sha256::digest(&bytes).iter().map(|b| format!("{b:02x}")).collect(),
        Err(_) => String::new(),
    }
}

impl Registry {
    /// An empty registry: no plugins, no host sources.
    pub fn new() -> Registry {
        Registry::default()
    }

    /// Adds a host source node type, `track.NAME`.
    pub fn add_host(&mut self, source: Arc<dyn HostSource>) {
        let full_name = format!("{HOST_PLUGIN}.{}", source.spec().name);
        self.hosts.push(Arc::clone(&source));
        self.types.entry(full_name.clone()).or_default().push(NodeType {
            full_name,
            provider: Provider::Host(source),
            instance: None,
        });
    }

    /// The host source node types, in the order added.
    pub fn hosts(&self) -> &[Arc<dyn HostSource>] {
        &self.hosts
    }

    /// Loads every plugin in the folders, in order. Missing folders are skipped; the same
    /// file reached twice is loaded once.
    pub fn discover(dirs: &[PathBuf]) -> Registry {
        Registry::discover_admitting(dirs, &mut |_, _| true)
    }

    /// [`Registry::discover`], loading only the files `admit` accepts, given each file's path
    /// and SHA-256 (hex) read before the file is loaded: loading a library runs its start-up
    /// code, so a file is judged by its contents first (plugins pinned by a lock file).
    pub fn discover_admitting(dirs: &[PathBuf], admit: &mut dyn FnMut(&Path, &str) -> bool) -> Registry {
        let mut reg = Registry::new();
        let mut seen = std::collections::BTreeSet::new();
        for dir in dirs {
            let Ok(entries) = std::fs::read_dir(dir) else { continue };
            let mut files: Vec<PathBuf> = entries
                .filter_map(|e| e.ok().map(|e| e.path()))
                .filter(|p| is_library(p))
                .collect();
            files.sort();
            for file in files {
                let key = std::fs::canonicalize(&file).unwrap_or_else(|_| file.clone());
                if seen.insert(key) {
                    let sha = sha256_hex(&file);
                    if admit(&file, &sha) {
                        reg.load_file_with(&file, sha);
                    }
                }
            }
        }
        reg
    }

    /// Loads one library file; a failure is recorded, not returned.
    pub fn load_file(&mut self, path: &Path) {
        let sha = sha256_hex(path);
        self.load_file_with(path, sha);
    }

    fn load_file_with(&mut self, path: &Path, sha256: String) {
        match Plugin::load(path) {
            Ok(plugin) => self.add(LoadedPlugin { sha256, plugin }),
            Err(e) => self.failures.push(e),
        }
    }

    /// Adds a plugin linked into this program.
    pub fn add_static(&mut self, table: &'static PluginTable, origin: &str) -> Result<(), LoadError> {
        let plugin = Plugin::from_static(table, origin)?;
        self.add(LoadedPlugin {
            plugin,
            sha256: String::new(),
        });
        Ok(())
    }

    fn add(&mut self, loaded: LoadedPlugin) {
        let loaded = Arc::new(loaded);
        let d = loaded.plugin.descriptor();
        if d.name == HOST_PLUGIN {
            self.failures.push(LoadError::Describe {
                path: loaded.plugin.origin().to_path_buf(),
                reason: format!("the plugin name `{HOST_PLUGIN}` is reserved for node types built into heft"),
            });
            return;
        }
        // A plugin that lists one node type twice is refused, the type named once.
        let mut names = std::collections::BTreeSet::new();
        if let Some(twice) = d.nodes.iter().find(|n| !names.insert(n.name.as_str())) {
            self.failures.push(LoadError::Describe {
                path: loaded.plugin.origin().to_path_buf(),
                reason: format!(
                    "plugin `{}` lists the node type `{}` twice; each node type must be listed once",
                    d.name, twice.name
                ),
            });
            return;
        }
        for (i, n) in d.nodes.iter().enumerate() {
            let full_name = format!("{}.{}", d.name, n.name);
            self.types.entry(full_name.clone()).or_default().push(NodeType {
                full_name,
                provider: Provider::Plugin {
                    plugin: Arc::clone(&loaded),
                    index: i as u32,
                },
                instance: None,
            });
        }
        self.plugins.push(loaded);
    }

    /// Loaded plugins in load order.
    pub fn plugins(&self) -> &[Arc<LoadedPlugin>] {
        &self.plugins
    }

    /// Files that failed to load, with the reason.
    pub fn failures(&self) -> &[LoadError] {
        &self.failures
    }

    /// All node type names, sorted.
    pub fn type_names(&self) -> impl Iterator<Item = &str> {
        self.types.keys().map(String::as_str)
    }

    /// Looks a node type up. `Err` holds every offer when two or more plugins offer the name;
    /// `Ok(None)` means nobody offers it.
    pub fn lookup(&self, full_name: &str) -> Result<Option<&NodeType>, &[NodeType]> {
        match self.types.get(full_name).map(Vec::as_slice) {
            None | Some([]) => Ok(None),
            Some([one]) => Ok(Some(one)),
            Some(many) => Err(many),
        }
    }

    /// The known type name closest to `name`, if any is close enough to be a likely typo.
    pub fn closest(&self, name: &str) -> Option<&str> {
        closest(name, self.type_names())
    }
}

/// Names longer than this get no suggestion: the edit distance takes time in the product of
/// the two lengths, and a name this long is not a typo.
const LONGEST_SUGGESTED: usize = 256;

/// The candidate closest to `name` by edit distance, if close enough to suggest. Candidates
/// whose length alone puts them too far are skipped before the distance is computed.
pub fn closest<'a>(name: &str, candidates: impl Iterator<Item = &'a str>) -> Option<&'a str> {
    let n = name.chars().count();
    if n > LONGEST_SUGGESTED {
        return None;
    }
    candidates
        .filter(|c| {
            let m = c.chars().count();
            m <= LONGEST_SUGGESTED && n.abs_diff(m) <= (m.max(n) / 3).max(1)
        })
        .map(|c| (strsim::damerau_levenshtein(name, c), c))
        .filter(|(d, c)| *d < name.len().max(2) && *d <= (c.len().max(name.len()) / 3).max(1))
        .min_by_key(|(d, _)| *d)
        .map(|(_, c)| c)
}

//! Host source nodes: node types the host evaluates by reading a file when the graph is
//! checked. The runtime knows them only through [`HostSource`]; the readers themselves (CSV
//! tracks, glTF characters) live in `heft-formats`, which registers them with the registry.
//! A source still wires, overrides (`--set plate.file=...`) and documents itself like any
//! node, and keeps all I/O in the host.

use std::any::Any;
use std::path::Path;
use std::sync::Arc;

use heft_node_sdk::{NodeSpec, ParamValue, Timeline};

/// The plugin name reserved for host source nodes: `track.force`, `track.character`, ...
pub const HOST_PLUGIN: &str = "track";

/// A node type whose data the host reads from a file.
pub trait HostSource: std::fmt::Debug + Send + Sync {
    /// The type's spec (its name is the part after `track.`). A source whose outputs depend on
    /// its file declares none here and gives its instance's in [`Loaded::instance`].
    fn spec(&self) -> &NodeSpec;
    /// Reads the file for one node: `params` complete and in SI, in spec order; a relative
    /// path is taken from `dir`, the folder of the file that declares the node.
    fn load(&self, params: &[ParamValue], dir: &Path, timeline: Timeline) -> Result<Loaded, SourceError>;
}

/// A host node's data for the timeline.
#[derive(Debug, Clone)]
pub struct Loaded {
    /// One series per output, frame-major.
    pub outputs: Vec<Vec<f64>>,
    /// For a node whose outputs depend on its file (a character): the instance's own outputs.
    pub instance: Option<HostInstance>,
}

/// What a host node instance declares beyond its type.
#[derive(Debug, Clone)]
pub struct HostInstance {
    /// The type's spec with this instance's outputs.
    pub spec: NodeSpec,
    /// Names that would be outputs but cannot be used, each with the reason (given when the
    /// graph names one).
    pub unusable: Vec<(String, String)>,
    /// A node hierarchy the source read (a glTF character), for writers that attach to it
    /// (bakes hang strands under its bones). The runtime only asks whether there is one.
    pub hierarchy: Option<Arc<dyn Any + Send + Sync>>,
}

/// Why a source could not be read.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SourceError {
    /// The parameter the problem belongs to (`file`, `column`, `clip`, ...): the error points
    /// at the line that set it.
    pub param: &'static str,
    /// What is wrong, naming the file and the place in it.
    pub message: String,
    /// How to fix it.
    pub help: Option<String>,
}

//! heft's file formats, apart from planning and evaluation: what comes in (CSV tracks and
//! glTF 2.0 characters, as host source nodes the runtime reaches through
//! [`heft_runtime::source::HostSource`]) and what goes out (CSV files and `run.json`, glTF
//! bakes, plots), written all together or not at all. This crate depends on the runtime's
//! plan and evaluation; the runtime never names a format.
#![forbid(unsafe_code)]
#![warn(missing_docs)]

pub mod character;
pub mod commit;
pub mod csv_out;
pub mod gltf_out;
pub mod motion;
pub mod output;
pub mod parquet_out;
pub mod plots;
pub mod plugin_lock;
pub mod quat;
pub mod review_out;
pub mod tracks;

use std::path::PathBuf;
use std::sync::Arc;

use heft_runtime::registry::Registry;
use heft_runtime::source::HostSource;

/// The host source node types: `track.force`, `track.position`, `track.transform` (CSV) and
/// `track.character` (glTF 2.0).
pub fn sources() -> Vec<Arc<dyn HostSource>> {
    tracks::HostNode::ALL
        .into_iter()
        .map(|h| Arc::new(h) as Arc<dyn HostSource>)
        .collect()
}

/// A registry of the host source node types only.
pub fn registry() -> Registry {
    with_sources(Registry::new())
}

/// Every plugin in the folders (see [`Registry::discover`]) and the host source node types.
pub fn discover(dirs: &[PathBuf]) -> Registry {
    with_sources(Registry::discover(dirs))
}

/// `reg` with the host source node types added.
pub fn with_sources(mut reg: Registry) -> Registry {
    for s in sources() {
        reg.add_host(s);
    }
    reg
}

//! What every target shares: heft's plugins linked in, and a graph checked and rendered.

use std::sync::LazyLock;

use heft_runtime::check::{Overrides, check};
use heft_runtime::registry::Registry;

/// The workspace's plugins, linked into the target (no files to load), and the host sources.
pub static REGISTRY: LazyLock<Registry> = LazyLock::new(|| {
    let mut reg = Registry::new();
    for (table, name) in [
        (heft_trajectory::plugin_table(), "trajectory"),
        (heft_contact::plugin_table(), "contact"),
        (heft_weight::plugin_table(), "weight"),
        (heft_forceplate::plugin_table(), "forceplate"),
        (heft_noise::plugin_table(), "noise"),
        (heft_strand::plugin_table(), "strand"),
        (heft_xpbd::plugin_table(), "xpbd"),
        (heft_collider::plugin_table(), "collider"),
    ] {
        reg.add_static(table, name).expect("a linked plugin loads");
    }
    heft_formats::with_sources(reg)
});

/// Checks the graph file at `path` and renders its problems: neither may panic.
pub fn check_file(path: &std::path::Path) {
    let Ok((graph, problems)) = heft_runtime::read_graph(path) else {
        return;
    };
    if let Err(p) = check(&graph, problems, &REGISTRY, &Overrides::default()) {
        let _ = heft_runtime::diag::render(&p, false);
    }
}

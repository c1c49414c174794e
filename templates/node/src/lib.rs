//! heft node plugin `follow`, a template for your own: `follow.spring` is a point mass on a
//! damped spring that follows a moving position (a pendant, a tail tip, a lagging prop).
//!
//! Build it (`cargo build --release`), give heft its folder (`heft run follow.graph --plugins
//! target/release`), and `heft nodes follow.spring` describes it.

mod spring;

pub use spring::{Spring, State, follow, stable_step};

heft_node_sdk::export_plugin!(name: "follow", nodes: [Spring]);

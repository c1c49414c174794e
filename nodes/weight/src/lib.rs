//! heft node plugin `weight`: apparent weight and apparent gravity.
//!
//! - `weight.apparent`: the vertical ground reaction force a centre-of-mass path needs
//!   (F = m (g + a_z) in contact, 0 in flight), in newtons and body weights, and the apparent
//!   gravity g - a felt by the body or by a point a passive element hangs from.
//!
//! The arithmetic lives in [`physics`] as plain functions.
#![forbid(unsafe_code)]

mod apparent;
pub mod physics;

pub use apparent::Apparent;

heft_node_sdk::export_plugin!(name: "weight", nodes: [Apparent]);

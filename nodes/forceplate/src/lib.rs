//! heft node plugin `forceplate`: jump analysis of a vertical force record.
//!
//! - `forceplate.analyse`: body weight from quiet standing, movement onset, take-off and
//!   touch-down, centre-of-mass velocity and displacement (impulse-momentum method), jump
//!   height (impulse-momentum and flight-time methods) and the phases of a countermovement jump.
//!
//! The analysis itself is the plain function [`analyse`], shared by the node, the tests and any
//! host. SI units; up is +Z.
#![forbid(unsafe_code)]

pub mod analysis;
mod node;

pub use analysis::{Analysis, Phase, RecordedJump, Settings, analyse, analyse_jumps};
pub use node::Analyse;

heft_node_sdk::export_plugin!(name: "forceplate", nodes: [Analyse]);

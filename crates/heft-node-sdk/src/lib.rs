//! The heft node SDK.
//!
//! A node crate implements [`Node`] for each node type (safe Rust, pure functions of
//! parameters and inputs) and calls [`export_plugin!`] once. The crate is built as a
//! `cdylib` and the `heft` host loads it at run time.
//!
//! This crate is the plugin boundary and the only crate of heft that holds `unsafe`:
//! [`abi`] defines the C layout, the `guest` glue turns host pointers into slices on the
//! plugin side, and `host` (feature `host`) loads libraries and calls them.
#![warn(missing_docs)]
// The plugin boundary: the one crate allowed to hold `unsafe` (each block has a SAFETY comment).
#![allow(unsafe_code)]
#![deny(clippy::undocumented_unsafe_blocks)]

pub mod abi;
pub mod codec;
pub mod colliders;
pub mod descriptor;
pub mod field;
pub mod guest;
#[cfg(feature = "host")]
pub mod host;
pub mod math;
pub mod params;
pub mod ports;
pub mod rotation;
pub mod units;

pub use abi::Timeline;
pub use descriptor::{
    CheckProblem, NodeSpec, ParamSpec, ParamType, ParamValue, PluginDescriptor, PortKind, PortSpec, Shape, SummarySpec,
};
pub use guest::{Carry, Io, Node, NodeError, Params, Series};
pub use units::Dimension;

/// Standard gravity g_n = 9.80665 m/s^2, exact by definition (3rd CGPM, 1901).
pub const STANDARD_GRAVITY: f64 = 9.80665;

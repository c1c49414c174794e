//! Helpers for the `xpbd.strand` tests: the shared ones from `heft_strand_common::testing`,
//! run for either lane precision.
#![allow(dead_code)]

pub use heft_strand_common::testing::*;

use heft_node_sdk::{NodeError, ParamValue, Timeline};
use heft_xpbd::{XpbdStrand, XpbdStrandF32};

/// One of the node types' runners ([`run`], [`run_f32`]).
pub type Runner = fn(&[(&'static str, ParamValue)], Timeline, Inputs<'_>) -> Result<Run, NodeError>;

/// Both node types: (name, runner).
pub const BOTH: [(&str, Runner); 2] = [("xpbd.strand", run), ("xpbd.strand_fast", run_f32)];

/// Runs `xpbd.strand` (f64 lanes) with these parameter changes and inputs.
pub fn run(changes: &[(&'static str, ParamValue)], tl: Timeline, inputs: Inputs<'_>) -> Result<Run, NodeError> {
    heft_strand_common::testing::run::<XpbdStrand>(changes, tl, inputs)
}

/// Runs `xpbd.strand_fast` (f32 lanes) with these parameter changes and inputs.
pub fn run_f32(changes: &[(&'static str, ParamValue)], tl: Timeline, inputs: Inputs<'_>) -> Result<Run, NodeError> {
    heft_strand_common::testing::run::<XpbdStrandF32>(changes, tl, inputs)
}

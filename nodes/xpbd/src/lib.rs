//! heft node plugin `xpbd`.
//!
//! - `xpbd.strand`: the strand contract (shared with `strand.euler` and `strand.verlet`, see
//!   `heft_strand_common`) solved with XPBD (Macklin et al. 2016, 2019): compliant distance
//!   and bending constraints, each strand's distance constraints solved together every substep
//!   (a tridiagonal direct solve), strands across SIMD lanes and threads.
//! - `xpbd.strand_fast`: the same with f32 lanes (twice the lanes per SIMD register).
//!
//! [`solver`] is the method core (plain functions over a lane layout); [`strand`] the node.
//! World space is right-handed, Z up, SI units.
#![forbid(unsafe_code)]

pub mod solver;
pub mod strand;

pub use strand::{Precision, Xpbd, XpbdNode, XpbdStrand, XpbdStrandF32};

heft_node_sdk::export_plugin!(name: "xpbd", nodes: [XpbdStrand, XpbdStrandF32]);

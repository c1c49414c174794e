//! heft node plugin `strand`: strands of particles on anchors (hair, a braid, a necklace, a
//! skirt fringe), two explicit methods behind the shared strand contract
//! (`heft_strand_common`):
//!
//! - `strand.euler`: a mass-spring chain with bending, integrated with symplectic
//!   (semi-implicit) Euler.
//! - `strand.verlet`: position (Stormer-)Verlet with rigid distance constraints projected by
//!   Gauss-Seidel passes (Jakobsen 2001).
//!
//! Both share ports, parameters, pins, colliders, wind and the frame loop with `xpbd.strand`;
//! a graph swaps the method by changing the node type's name.
#![forbid(unsafe_code)]

pub mod euler;
pub mod verlet;

pub use euler::{Euler, EulerMethod};
pub use verlet::{Verlet, VerletMethod};

heft_node_sdk::export_plugin!(name: "strand", nodes: [Euler, Verlet]);

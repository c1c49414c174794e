//! heft node plugin `trajectory`: paths of a centre of mass.
//!
//! - `trajectory.ballistic`: the exact free-flight parabola from a launch position and velocity.
//! - `trajectory.keyed`: a path through keyframes on a natural cubic spline (C2: position,
//!   velocity and acceleration are continuous).
//!
//! World axes: right-handed, Z up, SI units (m, s). Gravity acts along -Z.

mod ballistic;
mod keyed;
pub mod spline;

pub use ballistic::Ballistic;
pub use keyed::Keyed;

heft_node_sdk::export_plugin!(name: "trajectory", nodes: [Ballistic, Keyed]);

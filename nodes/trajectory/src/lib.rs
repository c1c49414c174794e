//! heft node plugin `trajectory`: paths of a centre of mass.
//!
//! - `trajectory.ballistic`: the exact free-flight parabola from a launch position and velocity.
//! - `trajectory.keyed`: a path through keyframes on a natural cubic spline (C2: position,
//!   velocity and acceleration are continuous).
//! - `trajectory.jump`: a standing countermovement jump planner on a segmented body (Dempster's
//!   segment table, [`body`]): quintic contact phases, an exact ballistic flight, and arms that
//!   swing with a timing relative to take-off; attachments for head, chest and hips.
//!
//! World axes: right-handed, Z up, SI units (m, s). Gravity acts along -Z.
#![forbid(unsafe_code)]

mod ballistic;
pub mod body;
pub mod jump;
mod keyed;
pub mod profile;
pub mod spline;

pub use ballistic::Ballistic;
pub use jump::Jump;
pub use keyed::Keyed;

heft_node_sdk::export_plugin!(name: "trajectory", nodes: [Ballistic, Keyed, Jump]);

//! heft node plugin `trajectory`: paths of a centre of mass.
//!
//! - `trajectory.ballistic`: the exact free-flight parabola from a launch position and velocity.
//! - `trajectory.keyed`: a path through keyframes on a natural cubic spline (C2: position,
//!   velocity and acceleration are continuous).
//! - `trajectory.jump`: a standing countermovement (or broad) jump planned from a ground-force
//!   profile of the measured shape, integrated in closed form ([`profile`]), an exact ballistic
//!   flight, arms that swing with a timing relative to take-off, and a segmented body
//!   (Dempster's segments on Drillis & Contini's proportions, [`body`]) placed at every frame
//!   so that its centre of mass is the planned one; joints and colliders to hang strands from.
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

//! heft node plugin `noise`: deterministic, seeded gradient noise for secondary motion.
//!
//! - `noise.gust`: a scalar time series of fractal noise around a mean (wind-speed gusts).
//! - `noise.jitter`: shakes a transform (a camera, an attachment) by fractal noise in
//!   translation and rotation, in the transform's own frame.
//! - `noise.wind`: a wind velocity field on a grid that follows a transform, written in the
//!   [`heft_node_sdk::field`] layout; optionally divergence-free (curl noise).
//!
//! The noise is improved Perlin noise (Perlin 2002) with a permutation table shuffled from
//! the seed; see [`gradient`]. World axes: right-handed, Z up, SI units.
#![forbid(unsafe_code)]

mod common;
pub mod gradient;
mod gust;
mod jitter;
pub mod wind;

pub use gust::Gust;
pub use jitter::Jitter;
pub use wind::Wind;

heft_node_sdk::export_plugin!(name: "noise", nodes: [Gust, Jitter, Wind]);

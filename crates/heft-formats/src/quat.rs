//! Unit quaternions (x, y, z, w) for the host: the SDK's own (`heft_node_sdk::math::quat`), which every node uses too.

pub use heft_node_sdk::math::quat::{Quat, conj, dot, mul, normalise, rotate};

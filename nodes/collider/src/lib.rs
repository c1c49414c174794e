//! heft node plugin `collider`: a body to collide with, as a list.
//!
//! - `collider.add`: a sphere or tapered capsule riding on one or two transforms (a joint, or
//!   a joint and its child), appended to a collider list. Chained, any number of them make a
//!   body for a strand node's `colliders` input (the list layout is
//!   `heft_node_sdk::colliders`).

// Safe Rust only, and the export macro works under it.
#![forbid(unsafe_code)]

mod add;

pub use add::Add;

heft_node_sdk::export_plugin!(name: "collider", nodes: [Add]);

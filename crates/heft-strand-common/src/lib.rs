//! The shared strand model of heft's strand plugins (`strand.euler`, `strand.verlet`,
//! `xpbd.strand`): one set of ports and parameters (the strand contract), one frame loop, and
//! a [`Method`] trait that each plugin implements with its integrator.
//!
//! - [`node_spec`] and [`output_points`]: the contract's ports and parameters.
//! - [`Setup`]: everything derived from parameters (strands, particles, lumped masses, rest
//!   lengths, spring and bending constants, damping, gravity, pins, placement, colliders).
//! - [`State`]: positions and velocities, strand-major.
//! - [`FrameEnv`]: what a method needs inside one frame: step size, pin targets and anchor
//!   velocity at each substep boundary, collider projection (spheres and tapered capsules,
//!   [`Collider`]), gravity, damping and wind
//!   ([`Ambient`]; the wind field is read with `heft_node_sdk::field::FieldView`).
//! - [`Method`]: advances all strands by one frame.
//! - [`evaluate`]: the whole frame loop (initial state, outputs, momentum, energy, blow-up
//!   detection); [`evaluate_with`] takes a prepared [`Setup`]; [`advance`] runs it in windows of
//!   frames, carrying the simulation from one to the next ([`Running`]).
//! - [`forces`]: stretch and bending forces and energies for explicit methods.
//!
//! World space is right-handed, Z up, SI units. Strands are numbered from 0 in messages, as
//! in the output layout.

pub mod forces;
pub mod geometry;
pub mod run;
pub mod setup;
pub mod spec;
#[cfg(any(test, feature = "testing"))]
pub mod testing;

pub use geometry::{Capsule, CapsuleContact, Collider, Colliders, Ground, Pose, RigidVelocity, Sphere, Track, V3};
pub use run::{
    Ambient, BLOW_UP_SPEED, BLOW_UP_STRETCH, BlowUp, Diagnosis, FrameEnv, Method, OVERLONG, Out, OverlongLimit,
    Running, State, advance, advance_with, blow_up_cause, blow_up_message, blown_strand, check, diagnose, evaluate,
    evaluate_with, hanging_stretch, kinetic_about_centre, overlong_limit, overlong_ratio, rest_state,
};
pub use setup::{ColliderParams, Pin, Placement, Setup, step_limit};
pub use spec::{INPUTS, OUTPUTS, PINS, PLACEMENTS, node_spec, output_points, particle_count};

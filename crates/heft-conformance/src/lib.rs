//! The heft node conformance kit: property tests that drive a dynamics node through the real
//! plugin boundary (the same `heft_node_sdk::host::Plugin` calls the `heft` host makes).
//!
//! A node that follows the strand contract (inputs `initial_positions` and `initial_velocities`,
//! outputs `positions`, `velocities`, `momentum` (N s) and `energy` (J), parameters `count`,
//! `segments`, `length`, `mass_per_length`, `stretch_stiffness`, `bending_stiffness`, `damping`,
//! `relative_damping`, `substeps`, `gravity` and `pin` with a `free` option; see DEVELOPERS.md,
//! "Testing a dynamics node with the conformance kit") is checked for:
//!
//! 1. [`check_momentum`]: with no external force, momentum is constant, and it is the `velocities`
//!    output weighted by masses that add up to `count * length * mass_per_length`;
//! 2. [`check_energy`]: with damping, energy never rises from frame to frame beyond the node's
//!    declared tolerance; without damping, over a long run it stays bounded (a symplectic method)
//!    or never rises (a dissipative one);
//! 3. [`check_deterministic_and_finite`]: for random parameters anywhere in their valid ranges,
//!    two identical calls give bit-identical outputs, and every output value is finite (a node may
//!    refuse a case with an error; it may not panic or write NaN);
//! 4. [`check_convergence`]: against a run with many substeps, the error of runs at `n` and `2 n`
//!    substeps falls by about `2^p`, `p` the order the node's author declares.
//!
//! ```ignore
//! #[test]
//! fn conforms() {
//!     let subject = heft_conformance::Subject::from_static(heft_xpbd::plugin_table(), "xpbd.strand").unwrap();
//!     heft_conformance::check_all(&subject, &heft_conformance::Tolerances::default()).unwrap();
//! }
//! ```
//!
//! Every check uses proptest's `TestRunner` with bounded strategies and a fixed seed
//! ([`Budget::seed`]), so a run is reproducible; a failure reports the smallest failing case
//! proptest found, with every parameter the kit set, the timeline and the frame.

use std::fmt;

mod cases;
mod convergence;
mod determinism;
mod dynamics;
mod energy;
mod momentum;
mod subject;

pub use convergence::{OrderMeasurement, check_convergence, measure_order};
pub use determinism::{Counts, check_deterministic_and_finite, finiteness_counts};
pub use dynamics::{Dynamics, Mass, check_balance, check_dynamics, check_energy_balance, check_history, check_order};
pub use energy::check_energy;
pub use momentum::check_momentum;
pub use subject::{Run, RunError, Setup, Subject};

/// The property a check is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Property {
    /// The plugin could not be loaded or the node type was not found.
    Load,
    /// The node type does not declare the ports and parameters the kit drives.
    Contract,
    /// Conservation of linear momentum, and the `momentum` output's agreement with `velocities`.
    Momentum,
    /// Energy does not rise under damping, stays bounded without it.
    Energy,
    /// The same inputs give bit-identical outputs.
    Determinism,
    /// No output value is NaN or infinite, and the node does not panic.
    Finiteness,
    /// A call's result does not depend on the calls made before it.
    History,
    /// The error falls with the substep length at the declared order.
    Convergence,
}

impl Property {
    /// The property's name in messages.
    pub fn name(self) -> &'static str {
        match self {
            Property::Load => "loading",
            Property::Contract => "the contract",
            Property::Momentum => "momentum",
            Property::Energy => "energy",
            Property::Determinism => "determinism",
            Property::Finiteness => "finiteness",
            Property::History => "independence of call history",
            Property::Convergence => "convergence",
        }
    }
}

impl fmt::Display for Property {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// A node that failed a property: what failed, where, and the case that shows it.
#[derive(Clone, PartialEq)]
pub struct Failure {
    /// The property.
    pub property: Property,
    /// The node type (`plugin.node`).
    pub node: String,
    /// What went wrong, with the values measured and the tolerance.
    pub message: String,
    /// The frame number where it went wrong, when there is one.
    pub frame: Option<i64>,
    /// The case: every parameter the kit set, the timeline and how the inputs were made.
    pub case: Option<String>,
}

impl Failure {
    pub(crate) fn new(property: Property, node: &str, message: impl Into<String>) -> Failure {
        Failure {
            property,
            node: node.to_owned(),
            message: message.into(),
            frame: None,
            case: None,
        }
    }
}

impl fmt::Display for Failure {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "`{}` fails {}: {}", self.node, self.property, self.message)?;
        if let Some(case) = &self.case {
            write!(f, "\n  case: {case}")?;
        }
        Ok(())
    }
}

// Debug shows the readable text, so `check_all(..).unwrap()` prints a useful panic.
impl fmt::Debug for Failure {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        fmt::Display::fmt(self, f)
    }
}

impl std::error::Error for Failure {}

/// Every failure [`check_all`] found, in property order.
#[derive(Clone, PartialEq)]
pub struct Failures(pub Vec<Failure>);

impl Failures {
    /// The failure of one property, if it failed.
    pub fn of(&self, property: Property) -> Option<&Failure> {
        self.0.iter().find(|f| f.property == property)
    }
}

impl fmt::Display for Failures {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "{} propert{} failed",
            self.0.len(),
            if self.0.len() == 1 { "y" } else { "ies" }
        )?;
        for failure in &self.0 {
            write!(f, "\n- {failure}")?;
        }
        Ok(())
    }
}

impl fmt::Debug for Failures {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        fmt::Display::fmt(self, f)
    }
}

impl std::error::Error for Failures {}

/// How many cases the kit runs and how it seeds them.
#[derive(Debug, Clone, PartialEq)]
pub struct Budget {
    /// Random cases for the momentum and damped-energy checks (each).
    pub cases: u32,
    /// Random cases of the determinism and finiteness check (short runs, each called twice).
    pub wild_cases: u32,
    /// Random cases of the long undamped energy run.
    pub long_run_cases: u32,
    /// Frames of the long undamped energy run (at 24 fps).
    pub long_run_frames: usize,
    /// Random cases of the convergence check (each is three runs).
    pub convergence_cases: u32,
    /// Most simplification steps proptest takes to shrink a failing case (each is a node run).
    pub shrink_iters: u32,
    /// Seed of every check's random cases; change it to explore other cases.
    pub seed: u64,
}

impl Default for Budget {
    fn default() -> Budget {
        Budget {
            cases: 32,
            wild_cases: 96,
            long_run_cases: 3,
            long_run_frames: 2000,
            convergence_cases: 6,
            shrink_iters: 32,
            seed: 0x6865_6674_6b69_7431,
        }
    }
}

/// What the node's author declares about the method: the kit's pass/fail thresholds.
#[derive(Debug, Clone, PartialEq)]
pub struct Tolerances {
    /// Momentum: the largest change of the `momentum` output over a run, and the largest
    /// disagreement with `velocities`, as a fraction of M * v_max (M = count * length *
    /// mass_per_length, v_max the largest RMS particle speed of the run). Momentum conservation
    /// is exact for pairwise internal forces, so this is a rounding allowance.
    pub momentum: f64,
    /// Damped energy: the largest rise of `energy` from one frame to the next, as a fraction of
    /// the energy range (max - min) of the run. Explicit methods' energy oscillates by about
    /// h omega / 2 of the oscillation energy, so this is not zero.
    pub energy_growth: f64,
    /// Undamped long run, for a symplectic method: the largest |E - E0| / E0. `None` declares a
    /// dissipative method: then the run checks only that E never exceeds E0 * (1 + energy_growth).
    pub energy_drift: Option<f64>,
    /// Undamped long run, symplectic: the mean |E - E0| over the second half may be at most this
    /// multiple of the mean over the first half (bounded error gives about 1; a drift growing
    /// linearly from zero gives 3).
    pub drift_growth: f64,
    /// The convergence order p the method claims for positions at fixed frame times.
    pub order: f64,
    /// How far the observed order may be from `order`.
    pub order_tolerance: f64,
    /// Momentum balance against a declared reaction output ([`check_balance`]): the largest
    /// difference between a frame's momentum change and the impulse of gravity and the
    /// reaction, as a fraction of the largest impulse a frame carries (beside the quadrature
    /// error the kit estimates).
    pub balance: f64,
    /// How many cases to run.
    pub budget: Budget,
}

impl Default for Tolerances {
    /// Figures for a first-order symplectic method (symplectic Euler), set from the first-order
    /// energy error bound and checked with the kit's reference fixture `leaky.sound` (64
    /// momentum and damped cases, 6 long runs, 12 convergence cases): momentum drift at most
    /// 1.5e-15 of M v_max (allowed 1e-9); frame-to-frame energy rises at most 3.6 % of a damped
    /// run's range, most runs never rise (allowed 10 %); long undamped runs |E - E0| / E0 at most
    /// 3.2 % (allowed 10 %, twice the bound h omega_max / 2 = 5 % at the kit's h omega_max = 0.1)
    /// with second-to-first-half ratios 0.69 to 1.00 (allowed 2); observed orders 1.024 to 1.026
    /// (1.023 expected with the reference run's own error; allowed 1 +- 0.3).
    fn default() -> Tolerances {
        Tolerances {
            momentum: 1.0e-9,
            energy_growth: 0.1,
            energy_drift: Some(0.1),
            drift_growth: 2.0,
            order: 1.0,
            order_tolerance: 0.3,
            balance: 1.0e-3,
            budget: Budget::default(),
        }
    }
}

/// One property check.
type Check = fn(&Subject, &Tolerances) -> Result<(), Failure>;

/// Runs every property and returns every failure found (the contract is checked when the
/// [`Subject`] is made).
pub fn check_all(subject: &Subject, tolerances: &Tolerances) -> Result<(), Failures> {
    let checks: [Check; 4] = [
        check_momentum,
        check_energy,
        check_deterministic_and_finite,
        check_convergence,
    ];
    let failures: Vec<Failure> = checks
        .iter()
        .filter_map(|check| check(subject, tolerances).err())
        .collect();
    if failures.is_empty() {
        Ok(())
    } else {
        Err(Failures(failures))
    }
}

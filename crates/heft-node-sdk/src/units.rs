//! Physical dimensions of parameters and ports. Everything inside heft is SI; a
//! dimension names the SI unit its numbers are in.

use serde::{Deserialize, Serialize};

/// The physical dimension of a parameter or a port value. Values are always stored in
/// the SI unit that [`Dimension::si_symbol`] names.
///
/// New variants are only ever appended (the codec encodes the variant index).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum Dimension {
    /// A pure number (ratio, count, factor).
    Dimensionless,
    /// Metres.
    Length,
    /// Kilograms.
    Mass,
    /// Seconds.
    Time,
    /// Radians.
    Angle,
    /// Metres per second.
    Velocity,
    /// Metres per second squared.
    Acceleration,
    /// Newtons.
    Force,
    /// Hertz (per second); frame rates are a frequency.
    Frequency,
    /// Newtons per metre.
    Stiffness,
    /// Kilograms per metre.
    LinearDensity,
    /// Newton seconds per metre.
    Damping,
    /// Body weights: a force divided by m g.
    BodyWeight,
    /// Newton metres per radian (bending stiffness).
    AngularStiffness,
    /// Per second (a rate such as relative damping).
    Rate,
    /// Newton seconds (an impulse; equal to kg m/s of momentum).
    Impulse,
    /// Joules.
    Energy,
    /// Newton square metres (bending stiffness E I of a strand).
    BendingStiffness,
}

impl Dimension {
    /// The SI unit symbol values of this dimension are stored in (empty for none).
    pub fn si_symbol(self) -> &'static str {
        match self {
            Dimension::Dimensionless => "",
            Dimension::Length => "m",
            Dimension::Mass => "kg",
            Dimension::Time => "s",
            Dimension::Angle => "rad",
            Dimension::Velocity => "m/s",
            Dimension::Acceleration => "m/s^2",
            Dimension::Force => "N",
            Dimension::Frequency => "Hz",
            Dimension::Stiffness => "N/m",
            Dimension::LinearDensity => "kg/m",
            Dimension::Damping => "N s/m",
            Dimension::BodyWeight => "BW",
            Dimension::AngularStiffness => "N m/rad",
            Dimension::Rate => "1/s",
            Dimension::Impulse => "N s",
            Dimension::Energy => "J",
            Dimension::BendingStiffness => "N m^2",
        }
    }

    /// A human name for messages ("a length").
    pub fn describe(self) -> &'static str {
        match self {
            Dimension::Dimensionless => "a plain number",
            Dimension::Length => "a length",
            Dimension::Mass => "a mass",
            Dimension::Time => "a time",
            Dimension::Angle => "an angle",
            Dimension::Velocity => "a velocity",
            Dimension::Acceleration => "an acceleration",
            Dimension::Force => "a force",
            Dimension::Frequency => "a frequency",
            Dimension::Stiffness => "a stiffness",
            Dimension::LinearDensity => "a mass per length",
            Dimension::Damping => "a damping coefficient",
            Dimension::BodyWeight => "a force in body weights",
            Dimension::AngularStiffness => "a bending stiffness",
            Dimension::Rate => "a rate",
            Dimension::Impulse => "an impulse",
            Dimension::Energy => "an energy",
            Dimension::BendingStiffness => "a bending stiffness (E I)",
        }
    }
}

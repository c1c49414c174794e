//! Unit symbols accepted in graph files and their factor to SI.

use heft_node_sdk::Dimension;

/// (symbol, dimension, factor to the SI unit of that dimension).
const UNITS: &[(&str, Dimension, f64)] = &[
    ("m", Dimension::Length, 1.0),
    ("cm", Dimension::Length, 0.01),
    ("mm", Dimension::Length, 0.001),
    ("km", Dimension::Length, 1000.0),
    ("in", Dimension::Length, 0.0254),
    ("ft", Dimension::Length, 0.3048),
    ("kg", Dimension::Mass, 1.0),
    ("g", Dimension::Mass, 0.001),
    ("lb", Dimension::Mass, 0.453_592_37),
    ("s", Dimension::Time, 1.0),
    ("ms", Dimension::Time, 0.001),
    ("min", Dimension::Time, 60.0),
    ("rad", Dimension::Angle, 1.0),
    ("deg", Dimension::Angle, std::f64::consts::PI / 180.0),
    ("m/s", Dimension::Velocity, 1.0),
    ("cm/s", Dimension::Velocity, 0.01),
    ("mm/s", Dimension::Velocity, 0.001),
    ("km/h", Dimension::Velocity, 1.0 / 3.6),
    ("m/s^2", Dimension::Acceleration, 1.0),
    ("m/s2", Dimension::Acceleration, 1.0),
    ("cm/s^2", Dimension::Acceleration, 0.01),
    ("N", Dimension::Force, 1.0),
    ("kN", Dimension::Force, 1000.0),
    ("Hz", Dimension::Frequency, 1.0),
    ("fps", Dimension::Frequency, 1.0),
    ("N/m", Dimension::Stiffness, 1.0),
    ("N/cm", Dimension::Stiffness, 100.0),
    ("N/mm", Dimension::Stiffness, 1000.0),
    ("kg/m", Dimension::LinearDensity, 1.0),
    ("g/m", Dimension::LinearDensity, 0.001),
    ("g/cm", Dimension::LinearDensity, 0.1),
    ("N s/m", Dimension::Damping, 1.0),
    ("kg/s", Dimension::Damping, 1.0),
    ("BW", Dimension::BodyWeight, 1.0),
    ("N m/rad", Dimension::AngularStiffness, 1.0),
    ("N m", Dimension::AngularStiffness, 1.0),
    ("1/s", Dimension::Rate, 1.0),
    ("N s", Dimension::Impulse, 1.0),
    ("kg m/s", Dimension::Impulse, 1.0),
    ("J", Dimension::Energy, 1.0),
    ("mJ", Dimension::Energy, 0.001),
    ("N m^2", Dimension::BendingStiffness, 1.0),
    ("N mm^2", Dimension::BendingStiffness, 1e-6),
    ("%", Dimension::Dimensionless, 0.01),
];

/// Folds spelling variants: `N*s/m`, `N·s/m` and `N  s / m` all read `N s/m`.
fn normalise(symbol: &str) -> String {
    let spaced = symbol.replace(['*', '·'], " ");
    let mut out = String::new();
    for word in spaced.split_whitespace() {
        if !out.is_empty() && !out.ends_with('/') && !word.starts_with('/') && !word.starts_with('^') {
            out.push(' ');
        }
        out.push_str(word);
    }
    out.replace(" /", "/").replace("/ ", "/")
}

/// Looks a unit symbol up: its dimension and factor to SI.
pub fn lookup(symbol: &str) -> Option<(Dimension, f64)> {
    let s = normalise(symbol);
    UNITS.iter().find(|(u, _, _)| *u == s).map(|(_, d, f)| (*d, *f))
}

/// The symbols accepted for a dimension (for messages).
pub fn symbols_for(dimension: Dimension) -> Vec<&'static str> {
    UNITS
        .iter()
        .filter(|(_, d, _)| *d == dimension)
        .map(|(u, _, _)| *u)
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    // Conversion factors: BIPM, The International System of Units (SI Brochure, 9th ed.,
    // 2019), and NIST SP 811 (2008) appendix B for inch, foot and pound (exact by definition).
    #[test]
    #[allow(clippy::approx_constant)] // 30 deg in rad written out, to check the factor
    fn factors_to_si() {
        assert_eq!(lookup("cm"), Some((Dimension::Length, 0.01)));
        assert_eq!(lookup("in"), Some((Dimension::Length, 0.0254)));
        assert_eq!(lookup("lb"), Some((Dimension::Mass, 0.45359237)));
        let (d, f) = lookup("deg").expect("deg");
        assert_eq!(d, Dimension::Angle);
        assert!((30.0 * f - 0.523_598_775_598_298_9).abs() < 1e-15);
        assert_eq!(lookup("N*s/m"), Some((Dimension::Damping, 1.0)));
        assert_eq!(lookup("N  s / m"), Some((Dimension::Damping, 1.0)));
        assert_eq!(lookup("m / s^2"), Some((Dimension::Acceleration, 1.0)));
        assert_eq!(lookup("furlong"), None);
    }

    #[test]
    fn every_dimension_has_its_si_symbol() {
        for (_, d, _) in UNITS {
            if *d != Dimension::Dimensionless {
                assert_eq!(lookup(d.si_symbol()), Some((*d, 1.0)), "{d:?}");
            }
        }
    }
}

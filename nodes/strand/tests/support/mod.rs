//! Helpers for the strand tests: the shared ones from `heft_strand_common::testing`, and
//! references only these tests use.
#![allow(dead_code)]

pub use heft_strand_common::testing::*;

use heft_node_sdk::Timeline;

pub const DEG: f64 = std::f64::consts::PI / 180.0;

/// A transform series: translation per frame from `f(time)`, identity rotation.
pub fn moving_anchor(tl: Timeline, f: impl Fn(f64) -> [f64; 3]) -> Vec<f64> {
    transform(tl, |t| (f(t), [0.0, 0.0, 0.0, 1.0]))
}

/// Times where `y` crosses zero upward, linearly interpolated between frames.
pub fn upward_crossings(t: &[f64], y: &[f64]) -> Vec<f64> {
    let mut out = Vec::new();
    for i in 1..y.len() {
        if y[i - 1] < 0.0 && y[i] >= 0.0 {
            out.push(t[i - 1] + (t[i] - t[i - 1]) * (-y[i - 1]) / (y[i] - y[i - 1]));
        }
    }
    out
}

/// Mean period from zero crossings in either direction (two per period).
pub fn period_from_crossings(c: &[f64]) -> f64 {
    assert!(c.len() >= 3, "too few zero crossings: {}", c.len());
    2.0 * (c[c.len() - 1] - c[0]) / (c.len() - 1) as f64
}

pub fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

/// The complete elliptic integral of the first kind K(k) by the arithmetic-geometric mean:
/// K(k) = pi / (2 AGM(1, sqrt(1 - k^2))) (Abramowitz & Stegun 1964, Handbook of Mathematical
/// Functions, 17.6.1-17.6.4).
pub fn elliptic_k(k: f64) -> f64 {
    let (mut a, mut b) = (1.0f64, (1.0 - k * k).sqrt());
    for _ in 0..60 {
        let (an, bn) = (0.5 * (a + b), (a * b).sqrt());
        a = an;
        b = bn;
        if (a - b).abs() < 1e-16 * a {
            break;
        }
    }
    std::f64::consts::PI / (2.0 * a)
}

/// The Bessel function J0 by its power series (Abramowitz & Stegun 1964, 9.1.10), accurate to
/// rounding for |x| <= 10.
pub fn bessel_j0(x: f64) -> f64 {
    let q = -0.25 * x * x;
    let (mut term, mut sum) = (1.0f64, 1.0f64);
    for k in 1..60 {
        term *= q / (k as f64 * k as f64);
        sum += term;
        if term.abs() < 1e-18 {
            break;
        }
    }
    sum
}

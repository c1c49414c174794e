//! The static stretch of a hanging strand: XPBD's compliance, with the chain's constraints
//! solved together, gives Hooke's law whatever the substep count.
mod support;
use support::*;

const SEGMENTS: usize = 4;
const LENGTH: f64 = 1.0;
const MU: f64 = 0.05;

struct Hanging {
    /// Elongation of each segment at rest, m.
    ext: Vec<f64>,
    /// Tension of each segment: the weight hanging below it, N.
    tension: Vec<f64>,
}

/// A strand hanging from a fixed anchor, settled by damping for 20 s (24 frames/s).
fn hanging(substeps: i64, ea: f64) -> Hanging {
    let tl = timeline(24, 480);
    let r = run(
        &[
            int("segments", SEGMENTS as i64),
            num("length", LENGTH),
            num("mass_per_length", MU),
            num("stretch_stiffness", ea),
            num("bending_stiffness", 0.0),
            num("damping", 4.0),
            num("relative_damping", 0.0),
            int("substeps", substeps),
        ],
        tl,
        &[("anchor", fixed_anchor(tl, [0.0, 0.0, 2.0]))],
    )
    .expect("runs");
    let last = r.frames() - 1;
    let l0 = LENGTH / SEGMENTS as f64;
    let ext = (0..SEGMENTS)
        .map(|j| {
            let (a, b) = (r.x(last, j), r.x(last, j + 1));
            ((b[0] - a[0]).powi(2) + (b[1] - a[1]).powi(2) + (b[2] - a[2]).powi(2)).sqrt() - l0
        })
        .collect();
    // Lumped masses, as the contract's model defines them: half a segment at each end of
    // every segment.
    let m = MU * l0;
    let mass: Vec<f64> = (0..=SEGMENTS)
        .map(|i| if i == 0 || i == SEGMENTS { 0.5 * m } else { m })
        .collect();
    let tension = (0..SEGMENTS).map(|j| G * mass[j + 1..].iter().sum::<f64>()).collect();
    Hanging { ext, tension }
}

/// Hooke's law (a linear spring of k = E A / l0 carries a tension T at an elongation T / k),
/// with T the weight below each segment (statics of a hanging chain): the elongation of
/// segment j is g sum_{i > j} m_i / k. E A = 2 N, l0 = 0.25 m, so k = 8 N/m and the top
/// segment stretches 5.4 cm.
///
/// The chain's constraints are solved together every substep, so at rest -C = alpha_tilde
/// lambda holds for every segment at once (Macklin et al. 2016, eq. 12's second row, with
/// lambda = h^2 T), which is Hooke's law, whatever the step. Measured: 4e-14 relative or
/// better at 10, 20 and 40 substeps. (One Gauss-Seidel sweep per substep, heft's method before,
/// settled at T_j / k + h^2 T_{j+1} / m_{j+1}: 0.79 % too long at 10 substeps.)
#[test]
fn hanging_strand_stretches_as_hookes_law_at_10_20_and_40_substeps() {
    let ea = 2.0;
    let k = ea / (LENGTH / SEGMENTS as f64);
    for substeps in [10, 20, 40] {
        let s = hanging(substeps, ea);
        for j in 0..SEGMENTS {
            let hooke = s.tension[j] / k;
            assert!(
                (s.ext[j] / hooke - 1.0).abs() < 1e-12,
                "substeps {substeps}, segment {j}: elongation {} m vs Hooke {hooke} m",
                s.ext[j]
            );
        }
    }
}

/// The stiffness belongs to the strand, not to the step: at E A = 1e9 N (k = 4e9 N/m) the top
/// segment stretches Hooke's 1.07e-10 m at 10 and at 40 substeps alike, to 1e-4 of that (the
/// rounding of positions near 2 m, 4.4e-16 m, is 4e-6 of it). Plain PBD with one sweep would
/// leave the sweep's residual h^2 T / m, 16 times larger at 10 substeps than at 40 (Macklin et al.
/// 2016, abstract, on PBD's step- and iteration-dependent stiffness).
#[test]
fn a_rigid_strand_stretches_by_its_stiffness_whatever_the_step() {
    let ea = 1.0e9;
    let k = ea / (LENGTH / SEGMENTS as f64);
    for substeps in [10, 40] {
        let s = hanging(substeps, ea);
        for j in 0..SEGMENTS {
            let hooke = s.tension[j] / k;
            assert!(
                (s.ext[j] - hooke).abs() < 1e-4 * hooke,
                "substeps {substeps}, segment {j}: elongation {:e} m vs Hooke {hooke:e} m",
                s.ext[j]
            );
        }
    }
}

/// A tapered strand: `tip_thickness` 0.3 makes it a cone of one material, so the mass per
/// length and E A fall as the thickness squared toward the tip. Hanging at rest, segment j
/// stretches by the weight below it over its own spring constant; summed, the elongation tends
/// to the continuum's integral_0^L T(s) / EA(s) ds with T(s) = g mu_0 (d(s)^3 - d_tip^3) / (3 a)
/// for d(s) = 1 - a s, a = (1 - 0.3) / L (statics of a hanging cone, Hooke's law), computed
/// here by Simpson's rule on 20 000 intervals. 40 segments: to 0.2 % (the lumped masses'
/// second-order discretisation error, measured 0.067 %); the uniform strand's elongation
/// mu g L^2 / (2 E A) is 1.87 times as large.
#[test]
fn a_tapered_strand_stretches_as_a_hanging_cone() {
    let (segments, ea, mu, tip) = (40usize, 20.0, MU, 0.3);
    let tl = timeline(24, 480);
    let r = run(
        &[
            int("segments", segments as i64),
            num("length", LENGTH),
            num("mass_per_length", mu),
            num("stretch_stiffness", ea),
            num("bending_stiffness", 0.0),
            num("tip_thickness", tip),
            num("damping", 4.0),
            num("relative_damping", 0.0),
        ],
        tl,
        &[("anchor", fixed_anchor(tl, [0.0, 0.0, 2.0]))],
    )
    .expect("runs");
    let last = r.frames() - 1;
    let length: f64 = (0..segments)
        .map(|j| {
            let (a, b) = (r.x(last, j), r.x(last, j + 1));
            ((b[0] - a[0]).powi(2) + (b[1] - a[1]).powi(2) + (b[2] - a[2]).powi(2)).sqrt()
        })
        .sum();
    let a = (1.0 - tip) / LENGTH;
    let strain = |s: f64| {
        let d = 1.0 - a * s;
        G * mu * (d.powi(3) - tip.powi(3)) / (3.0 * a) / (ea * d * d)
    };
    let n = 20_000;
    let h = LENGTH / n as f64;
    let cone: f64 = (0..=n)
        .map(|i| {
            let w = if i == 0 || i == n {
                1.0
            } else if i % 2 == 1 {
                4.0
            } else {
                2.0
            };
            w * strain(i as f64 * h)
        })
        .sum::<f64>()
        * h
        / 3.0;
    let got = length - LENGTH;
    assert!(
        (got / cone - 1.0).abs() < 2e-3,
        "elongation {got:e} m vs the cone's {cone:e} m"
    );
    let uniform = mu * G * LENGTH * LENGTH / (2.0 * ea);
    assert!(uniform / got > 1.5, "{uniform:e} vs {got:e}");
}

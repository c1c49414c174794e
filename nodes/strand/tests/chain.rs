//! Chains under gravity: the modes of a hanging chain (Bernoulli) and the static catenary.

mod support;

use heft_node_sdk::{Node, ParamValue};
use heft_strand::{Euler, Verlet};
use support::*;

/// First three zeros of J0 (Abramowitz & Stegun 1964, Table 9.5).
const J0_ZEROS: [f64; 3] = [2.404825558, 5.520078110, 8.653727913];

fn chain_params(segments: i64, substeps: i64) -> Vec<(&'static str, ParamValue)> {
    vec![
        int("segments", segments),
        num("length", 1.0),
        num("mass_per_length", 0.05),
        // Strain under its own weight mu g L / E A = 5e-5: nearly inextensible.
        num("stretch_stiffness", 1.0e4),
        num("bending_stiffness", 0.0),
        num("damping", 0.0),
        num("relative_damping", 0.0),
        int("substeps", substeps),
    ]
}

/// The angular frequency of mode `n` (1-based) of a hanging chain of `segments` segments,
/// released from the continuum mode shape u(s) = J0(j0n sqrt(s / L)) (s = height above the free
/// end) at 1 mm amplitude; measured from the tip's horizontal zero crossings over ~10 periods.
fn mode_frequency<N: Node>(segments: usize, n: usize) -> f64 {
    let len = 1.0;
    let omega = 0.5 * J0_ZEROS[n - 1] * (G / len).sqrt();
    let seconds = 10.0 * std::f64::consts::TAU / omega;
    let fps = 200u32;
    // Euler: h = 5e-5 s at 200 fps keeps omega_max h = 2 sqrt(k / m) h below 1.5 for 32 segments.
    let substeps = 100;
    let tl = timeline(fps, (seconds * f64::from(fps)) as u64 + 1);
    let l0 = len / segments as f64;
    let pts: Vec<[f64; 3]> = (0..=segments)
        .map(|i| {
            let s = len - i as f64 * l0;
            [
                1.0e-3 * bessel_j0(J0_ZEROS[n - 1] * (s / len).sqrt()),
                0.0,
                -(i as f64) * l0,
            ]
        })
        .collect();
    let run = run::<N>(
        &chain_params(segments as i64, substeps),
        tl,
        &[
            (
                "anchor",
                fixed_anchor(tl, [1.0e-3 * bessel_j0(J0_ZEROS[n - 1]), 0.0, 0.0]),
            ),
            ("initial_positions", points_input(tl, &pts)),
        ],
    )
    .expect("runs");
    let t: Vec<f64> = (0..run.frames()).map(|i| run.time(i)).collect();
    let y: Vec<f64> = (0..run.frames()).map(|i| run.x(i, segments)[0]).collect();
    std::f64::consts::TAU / period_by_regression(&crossings(&t, &y))
}

/// Bernoulli's hanging chain: omega_n = (j0,n / 2) sqrt(g / L) (D. Bernoulli 1732; e.g.
/// Rayleigh, The Theory of Sound, vol. 1, 2nd ed., 1894, sec. 200, from memory): 3.76542,
/// 8.64322, 13.54982 rad/s for L = 1 m. A lumped-mass chain of N segments approaches them as
/// the discretisation is refined.
fn hanging_chain<N: Node>() {
    let exact: Vec<f64> = J0_ZEROS.iter().map(|j| 0.5 * j * G.sqrt()).collect();
    for (w, want) in exact.iter().zip([3.76542, 8.64322, 13.54982]) {
        assert!((w - want).abs() < 5e-6, "{w} vs {want}");
    }
    let mut errors = Vec::new();
    for segments in [8, 16, 32] {
        let w = mode_frequency::<N>(segments, 1);
        let e = rel(w, exact[0]);
        eprintln!(
            "{} first mode, {segments} segments: {w:.5} rad/s vs {:.5} (rel {e:.2e})",
            N::spec().name,
            exact[0]
        );
        errors.push(e);
    }
    // Convergence: each doubling of the segments cuts the error at least threefold (second
    // order would be fourfold), and 32 segments are within 1e-3.
    assert!(errors[1] < errors[0] / 3.0 && errors[2] < errors[1] / 3.0, "{errors:?}");
    assert!(errors[2] < 1e-3, "{errors:?}");
    // The second and third modes with 32 segments: within 1 % and 2 %.
    for (n, tol) in [(2, 0.01), (3, 0.02)] {
        let w = mode_frequency::<N>(32, n);
        eprintln!(
            "{} mode {n}, 32 segments: {w:.5} rad/s vs {:.5} (rel {:.2e})",
            N::spec().name,
            exact[n - 1],
            rel(w, exact[n - 1])
        );
        assert!(rel(w, exact[n - 1]) < tol, "mode {n}: {w}");
    }
}

#[test]
fn euler_hanging_chain_modes_converge_to_bernoulli() {
    hanging_chain::<Euler>();
}

#[test]
fn verlet_hanging_chain_modes_converge_to_bernoulli() {
    hanging_chain::<Verlet>();
}

/// The catenary parameter a for span S and length L: 2 a sinh(S / (2 a)) = L, by bisection.
fn catenary_a(span: f64, length: f64) -> f64 {
    let (mut lo, mut hi) = (1e-3, 1e3);
    for _ in 0..200 {
        let a = 0.5 * (lo + hi);
        if 2.0 * a * (span / (2.0 * a)).sinh() > length {
            lo = a;
        } else {
            hi = a;
        }
    }
    0.5 * (lo + hi)
}

/// The settled mid-point sag of a strand of `segments` pinned at both ends 1 m apart.
fn settled_sag<N: Node>(segments: i64, substeps: i64) -> f64 {
    let tl = timeline(100, 601);
    let run = run::<N>(
        &[
            int("segments", segments),
            num("length", 1.2),
            num("mass_per_length", 0.05),
            // Tension at the supports mu g (a + sag) = 0.37 N: strain 1.9e-5, which lengthens the
            // strand by 2.2e-5 m and deepens the sag by about 3 S dL / (16 sag) = 1.4e-5 m.
            num("stretch_stiffness", 2.0e4),
            num("bending_stiffness", 0.0),
            // Decay rate damping / 2 = 3 1/s for every underdamped mode: 6 s settle to 1e-8.
            num("damping", 6.0),
            num("relative_damping", 0.0),
            int("substeps", substeps),
            choice("pin", "both_ends"),
            vec3("end_offset", [1.0, 0.0, 0.0]),
        ],
        tl,
        &[("anchor", fixed_anchor(tl, [0.0; 3]))],
    )
    .expect("runs");
    let last = run.frames() - 1;
    // Settled: the mid-point no longer moves.
    let mid = (segments / 2) as usize;
    let speed = run.v(last, mid).iter().map(|c| c * c).sum::<f64>().sqrt();
    assert!(speed < 1e-6, "still moving at {speed} m/s");
    -run.x(last, mid)[2]
}

/// The static sag of a uniform chain is the catenary y = a cosh(x / a) (e.g. Irvine, Cable
/// Structures, 1981, ch. 1): span 1 m, length 1.2 m give a = 0.4695415 m and a mid-point sag
/// a (cosh(S / 2a) - 1) = 0.2923438 m. A lumped-mass chain of N segments hangs as a discrete
/// catenary whose sag converges at second order in 1 / N.
fn catenary<N: Node>(substeps: [i64; 3]) {
    let a = catenary_a(1.0, 1.2);
    let sag = a * ((0.5 / a).cosh() - 1.0);
    assert!(
        (a - 0.4695415).abs() < 5e-8 && (sag - 0.2923438).abs() < 5e-8,
        "a {a}, sag {sag}"
    );
    let mut errors = Vec::new();
    for (segments, sub) in [16, 32, 64].into_iter().zip(substeps) {
        let s = settled_sag::<N>(segments, sub);
        eprintln!(
            "{} catenary, {segments} segments: sag {s:.7} m vs {sag:.7} m (error {:.2e} m)",
            N::spec().name,
            s - sag
        );
        errors.push((s - sag).abs());
    }
    // Second order: each doubling cuts the error at least threefold; 64 segments within 5e-4 m.
    assert!(errors[1] < errors[0] / 3.0 && errors[2] < errors[1] / 3.0, "{errors:?}");
    assert!(errors[2] < 5e-4, "{errors:?}");
}

#[test]
fn euler_catenary_sag() {
    // omega_max = 2 sqrt(k / m) = 1.7e4, 3.4e4, 6.7e4 rad/s for 16, 32, 64 segments: h below
    // 2 / omega_max at 100 fps.
    catenary::<Euler>([150, 300, 600]);
}

#[test]
fn verlet_catenary_sag() {
    catenary::<Verlet>([100, 200, 400]);
}

//! XPBD is unconditionally stable for stiff constraints: as the compliance goes to 0 its update
//! (Macklin et al. 2016) becomes the PBD projection onto the constraint, which Muller,
//! Heidelberger, Hennix & Ratcliff 2007, "Position Based Dynamics" (J. Vis. Commun. Image
//! Represent. 18) state to be unconditionally stable (from memory). The stiffest parameters in
//! range run at one substep per frame.
mod support;
use support::*;

use heft_node_sdk::ParamValue;

const TOP: [f64; 3] = [0.0, 0.0, 2.0];

fn stiff(length: f64, segments: i64, mu: f64, extra: &[(&'static str, ParamValue)]) -> Vec<(&'static str, ParamValue)> {
    let mut changes = vec![
        num("length", length),
        int("segments", segments),
        num("mass_per_length", mu),
        num("stretch_stiffness", 1.0e9),
        num("bending_stiffness", 1.0e3),
        int("substeps", 1),
    ];
    changes.extend_from_slice(extra);
    changes
}

/// Kinetic plus gravitational energy sum 1/2 m |v|^2 + m g z of every frame, J.
fn mechanical_energy(r: &Run, particles: usize, m_segment: f64) -> Vec<f64> {
    (0..r.frames())
        .map(|f| {
            (0..r.n)
                .map(|i| {
                    let k = i % particles;
                    let m = if k == 0 || k + 1 == particles {
                        0.5 * m_segment
                    } else {
                        m_segment
                    };
                    let (x, v) = (r.x(f, i), r.v(f, i));
                    0.5 * m * (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]) + m * G * x[2]
                })
                .sum()
        })
        .collect()
}

/// E A = 1e9 N and E I = 1e3 N m^2, the tops of their ranges, on the lightest (1e-6 kg/m) and
/// heaviest (1e4 kg/m) strands of 0.4 m to 100 m, straight at rest length with random velocities
/// (up to 1 m/s per axis), undamped,
/// at 1 substep of 1/24 s for 10 s: h omega_max = h 2 sqrt(k / m) reaches 2.6e7 where an explicit
/// integrator needs 2. No blow-up (the node's check: finite, no segment beyond 10 rest lengths,
/// no speed above 1e4 m/s), and, with the anchor still and no damping, the kinetic plus
/// gravitational energy never rises above its initial value (an unstable step would pump energy
/// in; the dissipation is the projection's, as for backward Euler). The reported energy adds
/// 1/2 k (l - l0)^2, which at k = 1e9 N/m is dominated by rounding, so it is left out here. The
/// 100 m strand of 2.5 m segments is checked too (one sweep per substep, heft's method before,
/// could not carry its weight at this step: its top segment stretched 0.7 m).
#[test]
fn the_stiffest_strands_run_undamped_at_one_substep_without_gaining_energy() {
    for mu in [1.0e-6, 1.0e4] {
        for (length, segments) in [(0.4, 4), (4.0, 4), (1.0, 12), (100.0, 40)] {
            let tl = timeline(24, 241);
            let l0 = length / segments as f64;
            let mut rng = SplitMix(3);
            // Straight and at rest length (no stored elastic energy, which rigid constraints would
            // release at once), tilted 20 degrees from -Z, with random velocities.
            let (s, c) = (20.0f64.to_radians().sin(), 20.0f64.to_radians().cos());
            let x: Vec<[f64; 3]> = (0..=segments)
                .map(|i| [s * l0 * i as f64, 0.0, TOP[2] - c * l0 * i as f64])
                .collect();
            let v: Vec<[f64; 3]> = (0..=segments)
                .map(|_| [rng.uniform(-1.0, 1.0), rng.uniform(-1.0, 1.0), rng.uniform(-1.0, 1.0)])
                .collect();
            let r = run(
                &stiff(
                    length,
                    segments,
                    mu,
                    &[num("damping", 0.0), num("relative_damping", 0.0)],
                ),
                tl,
                &[
                    ("anchor", fixed_anchor(tl, TOP)),
                    ("initial_positions", points_input(tl, &x)),
                    ("initial_velocities", points_input(tl, &v)),
                ],
            )
            .unwrap_or_else(|e| panic!("mu {mu}, length {length}: {e}"));
            let e = mechanical_energy(&r, segments as usize + 1, mu * l0);
            let top = e.iter().copied().fold(f64::MIN, f64::max);
            assert!(
                top <= e[0] + 1e-12 * e[0].abs(),
                "mu {mu}, length {length}: energy rose from {} to {top} J",
                e[0]
            );
        }
    }
}

/// The default strand shape (12 segments, 0.4 m) at the stiffest settings on a head that bobs
/// 0.1 m and turns 0.8 rad at about 1 Hz, one substep per frame, one end or both ends pinned,
/// with damping at the top of its range: 3 s without a blow-up.
#[test]
fn stiff_strands_on_a_moving_head_run_at_one_substep() {
    let tl = timeline(24, 73);
    let head = transform(tl, |t| {
        let a = 0.8 * (6.0 * t).sin();
        (
            [0.1 * (6.0 * t).sin(), 0.0, 2.0 + 0.1 * (5.0 * t).cos()],
            [(0.5 * a).sin(), 0.0, 0.0, (0.5 * a).cos()],
        )
    });
    for mu in [1.0e-6, 1.0e4] {
        for extra in [
            vec![vec3("rest_direction", [1.0, 0.0, -0.2])],
            vec![choice("pin", "both_ends"), vec3("end_offset", [0.3, 0.0, 0.0])],
            vec![num("damping", 1.0e3), num("relative_damping", 1.0e3)],
        ] {
            let r = run(&stiff(0.4, 12, mu, &extra), tl, &[("anchor", head.clone())])
                .unwrap_or_else(|e| panic!("mu {mu}, {extra:?}: {e}"));
            assert!(r.positions.iter().chain(&r.velocities).all(|c| c.is_finite()));
        }
    }
}

/// A long, finely divided strand carries its weight at any step: the chain's constraints are
/// solved together, so 256 segments of 1.6 mm at one substep of 1/24 s (h^2 g = 17 mm, 11 rest
/// lengths, which one sweep per substep could not carry: the strand blew up) hang for 1 s as
/// long as Hooke's law says, mu g L^2 / (2 E A) = 1.96e-4 m longer than at rest (lumped masses,
/// statics of a hanging chain), to 5e-5 m in both precisions. Measured: 1e-14 m from it in f64,
/// 1.3e-5 m in f32 (the rounding of 256 lengths summed).
#[test]
fn a_long_fine_strand_at_one_substep_hangs_at_its_length() {
    let tl = timeline(24, 25);
    let anchor = [("anchor", fixed_anchor(tl, TOP))];
    for (name, runner) in BOTH {
        let r = runner(&stiff(0.4, 256, 0.05, &[num("stretch_stiffness", 200.0)]), tl, &anchor)
            .unwrap_or_else(|e| panic!("{name}: {e}"));
        let last = r.frames() - 1;
        let length: f64 = (0..256)
            .map(|j| {
                let (a, b) = (r.x(last, j), r.x(last, j + 1));
                ((b[0] - a[0]).powi(2) + (b[1] - a[1]).powi(2) + (b[2] - a[2]).powi(2)).sqrt()
            })
            .sum();
        let hooke = 0.05 * G * 0.4 * 0.4 / (2.0 * 200.0);
        assert!(
            (length - 0.4 - hooke).abs() < 5e-5,
            "{name}: {length} m, Hooke {} m",
            0.4 + hooke
        );
    }
}

/// A soft, heavy strand (`mass_per_length` 1e4 kg/m, `stretch_stiffness` 1e-3 N, gravity 100
/// m/s^2) hanging from a still anchor, no damping: the compliance l0 / (E A) = 33 m/N leaves the
/// constraints all but slack, so the particles fall freely and the top segment (l0 = 0.4 / 12 m,
/// vertical) passes 10 l0 once particle 1 has fallen 9 l0 = 0.3 m, at t = sqrt(2 x 0.3 / 100) =
/// 0.0775 s, between frames 1 and 2, whatever the step. Hanging at rest, the strand's weight would
/// stretch its top segment by Hooke's law to 1 + T / (E A) rest lengths, T = 100 m/s^2 x mu L
/// (1 - 1/24) (the 12 particles below the pin, half a segment's mass at the tip): the message
/// says this is the strand's physics and that more substeps will not help, and 4 times the
/// substeps stop at the same frame.
#[test]
fn a_soft_heavy_strand_over_stretching_is_called_physics_not_a_step_problem() {
    let tl = timeline(24, 12);
    let anchor = [("anchor", fixed_anchor(tl, TOP))];
    let soft = |substeps: i64| {
        vec![
            num("mass_per_length", 1.0e4),
            num("stretch_stiffness", 1.0e-3),
            num("gravity", 100.0),
            num("damping", 0.0),
            num("relative_damping", 0.0),
            int("substeps", substeps),
        ]
    };
    let msg = run(&soft(20), tl, &anchor).expect_err("over-stretches").0;
    assert!(
        msg.starts_with(
            "strand 0 blew up at frame 2: it stretches past 10 times its rest length under its load (segment 0 is"
        ),
        "{msg}"
    );
    let tension = 100.0 * 1.0e4 * 0.4 * (1.0 - 1.0 / 24.0);
    assert!(
        msg.contains(&format!(
            "about {:.3e} rest lengths: a tension of {tension:.3e} N",
            1.0 + tension / 1.0e-3
        )),
        "{msg}"
    );
    assert!(msg.contains("the method has no step-size stability limit"), "{msg}");
    assert!(
        msg.ends_with(
            "more substeps will not help: give it a stiffer `stretch_stiffness` or a lighter `mass_per_length`"
        ),
        "{msg}"
    );
    let msg = run(&soft(80), tl, &anchor).expect_err("the same physics").0;
    assert!(
        msg.starts_with("strand 0 blew up at frame 2: it stretches past 10 times"),
        "{msg}"
    );
}

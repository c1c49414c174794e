//! The fixture plugin `leaky` against closed forms, so that the kit's own tests rest on a
//! reference node that is right and on a leak of a known size.

use heft_conformance::{Setup, Subject};
use heft_test_plugin_leaky::PUSH;

fn subject(node: &str) -> Subject {
    Subject::from_static(heft_test_plugin_leaky::plugin_table(), node).expect("the fixture node loads")
}

/// A free, force-free strand of `segments` with every particle at rest except a uniform drift.
fn isolated(frames: usize) -> Setup {
    Setup::at_24fps(frames)
        .integer("segments", 3)
        .number("length", 0.6)
        .number("mass_per_length", 0.2)
        .number("stretch_stiffness", 50.0)
        .number("bending_stiffness", 1.0e-4)
        .number("gravity", 0.0)
        .number("damping", 0.0)
        .number("relative_damping", 0.0)
        .choice("pin", "free")
        .integer("substeps", 60)
}

#[test]
fn the_push_adds_the_impulse_m_a_t_and_the_sound_node_adds_none() {
    // Impulse-momentum theorem: a force F = M a acting for t changes the momentum by M a t. The
    // strand's mass is M = length * mass_per_length = 0.12 kg.
    let m = 0.6 * 0.2;
    let x: Vec<[f64; 3]> = (0..4)
        .map(|i| [0.0, 0.2 * i as f64 + 0.01 * (i % 2) as f64, 1.0])
        .collect();
    let v: Vec<[f64; 3]> = (0..4).map(|i| [0.1 * i as f64, -0.2, 0.3 * (i % 2) as f64]).collect();
    let setup = isolated(25).initial_state(&x, &v);
    for (node, push) in [("leaky.strand", PUSH), ("leaky.sound", 0.0)] {
        let run = subject(node).run(&setup).expect("runs");
        let p0 = run.momentum(0);
        // Frame-0 momentum: sum m_i v_i with end particles m/2 and interior particles m, m = 0.04 kg.
        let want0 = [
            0.02 * 0.0 + 0.04 * 0.1 + 0.04 * 0.2 + 0.02 * 0.3,
            -0.2 * m,
            0.04 * 0.3 + 0.02 * 0.3,
        ];
        for k in 0..3 {
            assert!((p0[k] - want0[k]).abs() < 1e-15, "{node}: {p0:?} vs {want0:?}");
        }
        for f in 1..run.frames() {
            let t = run.timeline.time(f) - run.timeline.time(0);
            let p = run.momentum(f);
            let want = [p0[0] + m * push * t, p0[1], p0[2]];
            for k in 0..3 {
                assert!(
                    (p[k] - want[k]).abs() < 1e-14,
                    "{node} frame {f}: momentum {p:?}, expected {want:?}"
                );
            }
        }
    }
}

#[test]
fn one_segment_follows_the_symplectic_euler_recurrence_of_a_harmonic_oscillator() {
    // Two particles of mass m/2 (m = mass_per_length * l0) on a spring k = E A / l0: the
    // extension u obeys u'' = -omega^2 u with omega^2 = k / (m / 4) = 4 k / m. Symplectic Euler
    // (v += h a(x); x += h v) gives, eliminating v, u[n+1] - 2 u[n] + u[n-1] = -(h omega)^2 u[n]
    // with u[1] = (1 - (h omega)^2) u[0] (derived here); the solution of this linear recurrence is
    // u[n] = u0 (cos n theta - (h omega)^2 / 2 / sin theta * sin n theta), cos theta = 1 - (h omega)^2 / 2.
    let (l0, mpl, ea, substeps): (f64, f64, f64, i64) = (0.3, 0.1, 20.0, 40);
    let (k, m) = (ea / l0, mpl * l0);
    let omega = (4.0 * k / m).sqrt();
    let u0 = 0.02;
    let setup = Setup::at_24fps(24)
        .integer("segments", 1)
        .number("length", l0)
        .number("mass_per_length", mpl)
        .number("stretch_stiffness", ea)
        .number("gravity", 0.0)
        .number("damping", 0.0)
        .number("relative_damping", 0.0)
        .choice("pin", "free")
        .integer("substeps", substeps)
        .initial_state(&[[0.0, 0.0, 1.0], [l0 + u0, 0.0, 1.0]], &[[0.0; 3]; 2]);
    let run = subject("leaky.sound").run(&setup).expect("runs");
    let h = run.timeline.dt() / substeps as f64;
    let hw2 = (h * omega).powi(2);
    let theta = (1.0 - hw2 / 2.0).acos();
    for f in 0..run.frames() {
        let n = (f as i64 * substeps) as f64;
        let want = u0 * ((n * theta).cos() - hw2 / 2.0 / theta.sin() * (n * theta).sin());
        let a = run.position(f, 0);
        let b = run.position(f, 1);
        let got = (b[0] - a[0]) - l0;
        assert!(
            (got - want).abs() < 1e-10,
            "frame {f}: extension {got}, recurrence {want}"
        );
        // Energy at frame 0: 1/2 k u0^2 + m g z (g = 0), nothing kinetic.
        if f == 0 {
            assert!((run.energy(0) - 0.5 * k * u0 * u0).abs() < 1e-15);
        }
    }
}

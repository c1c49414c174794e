//! The spring follower against closed forms of a critically damped oscillator (any textbook
//! of vibrations, e.g. Rao, Mechanical Vibrations, 6th ed., 2017, sec. 2.6.2): the step
//! response s(t) = 1 - (1 + omega t) e^(-omega t), and, by superposition (Duhamel's integral),
//! the response to the node's target, a ramp from 0 to 1 over the first frame then held:
//! x(t) = (S(t) - S(t - dt)) / dt with S(T) = T - (2 / omega)(1 - e^(-omega T)) + T e^(-omega T),
//! the integral of s.

use heft_follow::follow;

#[test]
fn a_ramp_then_hold_is_followed_as_the_closed_form_says() {
    let (omega, dt, substeps) = (2.0 * std::f64::consts::PI * 2.0, 1.0 / 24.0, 200);
    let path = follow(
        |i| if i == 0 { [0.0; 3] } else { [1.0, 0.0, 0.0] },
        48,
        dt,
        omega,
        1.0,
        0.0,
        substeps,
    );
    let s_int = |t: f64| t - (2.0 / omega) * (1.0 - (-omega * t).exp()) + t * (-omega * t).exp();
    let mut worst: f64 = 0.0;
    for (i, s) in path.iter().enumerate().skip(1) {
        let t = i as f64 * dt;
        let want = (s_int(t) - s_int(t - dt)) / dt;
        worst = worst.max((s.x[0] - want).abs());
    }
    // Symplectic Euler is first order in h = dt / 200: omega h = 2.6e-3 of the 1 m step.
    assert!(worst < 2e-3, "largest difference from the closed form: {worst} m");
    // Critically damped: no overshoot.
    assert!(path.iter().all(|s| s.x[0] <= 1.0 + 1e-12));
    eprintln!("largest difference from the closed form: {worst:e} m");
}

/// The stability limit against the step's own eigenvalues: symplectic Euler on x'' = -omega^2 x
/// - 2 zeta omega x' maps (x, v) by a 2 x 2 matrix; just below the limit its spectral radius is at
/// most 1, just above it is more than 1.
#[test]
fn the_stability_limit_is_where_the_step_starts_to_grow() {
    for (omega, zeta) in [(12.0, 0.0), (12.0, 0.5), (30.0, 2.0), (5.0, 10.0)] {
        let h_max = heft_follow::stable_step(omega, zeta).expect("a spring");
        let radius = |h: f64| {
            // v1 = v + h (-omega^2 x - 2 zeta omega v); x1 = x + h v1.
            let g = 2.0 * zeta * omega;
            let (a, b) = (1.0 - h * h * omega * omega, h * (1.0 - h * g));
            let (c, d) = (-h * omega * omega, 1.0 - h * g);
            let (tr, det) = (a + d, a * d - b * c);
            let disc = tr * tr / 4.0 - det;
            if disc >= 0.0 {
                (tr / 2.0).abs() + disc.sqrt()
            } else {
                det.sqrt()
            }
        };
        assert!(radius(0.999 * h_max) <= 1.0 + 1e-12, "omega {omega} zeta {zeta}");
        assert!(radius(1.001 * h_max) > 1.0, "omega {omega} zeta {zeta}");
    }
}

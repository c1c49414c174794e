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
        substeps,
    );
    let s_int = |t: f64| t - (2.0 / omega) * (1.0 - (-omega * t).exp()) + t * (-omega * t).exp();
    let mut worst: f64 = 0.0;
    for (i, p) in path.iter().enumerate().skip(1) {
        let t = i as f64 * dt;
        let want = (s_int(t) - s_int(t - dt)) / dt;
        worst = worst.max((p[0] - want).abs());
    }
    // Symplectic Euler is first order in h = dt / 200: omega h = 2.6e-3 of the 1 m step.
    assert!(worst < 2e-3, "largest difference from the closed form: {worst} m");
    // Critically damped: no overshoot.
    assert!(path.iter().all(|p| p[0] <= 1.0 + 1e-12));
    eprintln!("largest difference from the closed form: {worst:e} m");
}

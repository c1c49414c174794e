use heft_node_sdk::{Dimension, Io, Node, NodeError, NodeSpec, Params, node_params, node_ports};

node_params! {
    /// The parameters of `follow.spring`, declared once: the specs heft shows and checks, and
    /// typed fields for `evaluate` (a misspelt name does not compile).
    pub struct SpringParams {
        /// The point's mass.
        mass: number(Dimension::Mass, 0.05, (1.0e-6, 1000.0)),
        /// Natural frequency of the spring, omega / (2 pi); 0 leaves the point free.
        frequency: number(Dimension::Frequency, 2.0, (0.0, 100.0)),
        /// zeta: 1 is critical damping, below 1 the point overshoots.
        damping_ratio: number(Dimension::Dimensionless, 0.5, (0.0, 10.0)),
        /// Gravity along -Z.
        gravity: number(Dimension::Acceleration, 9.80665, (0.0, 100.0)),
        /// Steps per frame.
        substeps: integer(8, (1, 10_000)),
    }
}

node_ports! {
    /// What `follow.spring` is given: the specs and a typed reader from one declaration.
    pub inputs SpringInputs {
        /// The position the point follows.
        target: vec3(Dimension::Length),
    }
}

node_ports! {
    /// What `follow.spring` gives back.
    pub outputs SpringOutputs {
        /// The point.
        position: vec3(Dimension::Length),
        /// Its velocity.
        velocity: vec3(Dimension::Velocity),
        /// The spring's and damper's pull on the point (every force on it but gravity).
        force: vec3(Dimension::Force),
        /// Kinetic, spring and gravity (m g z) energy.
        energy: scalar(Dimension::Energy),
    }
}

/// A point mass on a damped spring that follows a moving position.
#[derive(Debug)]
pub struct Spring;

/// The point at one frame.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct State {
    /// Position, m.
    pub x: [f64; 3],
    /// Velocity, m/s.
    pub v: [f64; 3],
}

/// The point's path for a target path sampled at the frames: `target(i)` is the target at
/// frame i, `dt` the frame duration. Each frame is `substeps` steps of symplectic Euler
/// (v += h a; x += h v) with a = omega^2 (target - x) - 2 zeta omega v - g z, the target moving
/// linearly inside the frame. The point starts at rest where it hangs, g / omega^2 below the
/// target (on the target when omega is 0).
pub fn follow(
    target: impl Fn(usize) -> [f64; 3],
    frames: usize,
    dt: f64,
    omega: f64,
    zeta: f64,
    gravity: f64,
    substeps: usize,
) -> Vec<State> {
    let mut out = Vec::with_capacity(frames);
    if frames == 0 {
        return out;
    }
    let mut x = target(0);
    if omega > 0.0 {
        x[2] -= gravity / (omega * omega);
    }
    let mut v = [0.0; 3];
    out.push(State { x, v });
    let h = dt / substeps as f64;
    for i in 1..frames {
        let (a, b) = (target(i - 1), target(i));
        for k in 0..substeps {
            let u = (k + 1) as f64 / substeps as f64;
            for c in 0..3 {
                let t = a[c] + u * (b[c] - a[c]);
                let g = if c == 2 { gravity } else { 0.0 };
                v[c] += h * (omega * omega * (t - x[c]) - 2.0 * zeta * omega * v[c] - g);
                x[c] += h * v[c];
            }
        }
        out.push(State { x, v });
    }
    out
}

/// The largest step symplectic Euler takes stably on this spring: (h omega)^2 + 4 zeta omega h
/// < 4 (the Jury criterion on the step's matrix, determinant 1 - 2 zeta omega h and trace
/// 2 - (h omega)^2 - 2 zeta omega h); `None` when any step is stable (no spring).
pub fn stable_step(omega: f64, zeta: f64) -> Option<f64> {
    let gamma = 2.0 * zeta * omega;
    if omega > 0.0 {
        Some((-gamma + (gamma * gamma + 4.0 * omega * omega).sqrt()) / (omega * omega))
    } else {
        None
    }
}

impl Node for Spring {
    fn spec() -> NodeSpec {
        NodeSpec {
            name: "spring".into(),
            doc: "A point mass on a damped spring that follows a moving position.".into(),
            notes: "Method: a = omega^2 (target - x) - 2 zeta omega v - g z, symplectic Euler with `substeps` \
                    steps a frame, the target moving linearly inside the frame; the point starts at rest where \
                    it hangs. Stable while (h omega)^2 + 4 zeta omega h < 4 (h = frame / substeps). A template \
                    for your own node: see templates/node in heft's repository."
                .into(),
            inputs: SpringInputs::specs(),
            outputs: SpringOutputs::specs(),
            params: SpringParams::specs(),
            summaries: vec![],
        }
    }

    fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
        let p = SpringParams::read(params)?;
        let omega = 2.0 * std::f64::consts::PI * p.frequency;
        let (m, zeta, g, substeps) = (p.mass, p.damping_ratio, p.gravity, p.substeps as usize);
        let tl = io.timeline();
        let dt = tl.dt();
        if let Some(h_max) = stable_step(omega, zeta)
            && dt / substeps as f64 >= h_max
        {
            return Err(NodeError::new(format!(
                "{substeps} substeps a frame would blow up at this frequency and damping ratio; use at least {}",
                (dt / h_max).floor() as i64 + 1
            )));
        }
        let target = SpringInputs::read(io)?.target;
        let path = follow(|i| target.vec3(i), tl.frames(), dt, omega, zeta, g, substeps);
        let out = SpringOutputs::take(io)?;
        for (i, s) in path.iter().enumerate() {
            let t = target.vec3(i);
            let (mut stretch, mut speed) = (0.0, 0.0);
            for c in 0..3 {
                out.position[3 * i + c] = s.x[c];
                out.velocity[3 * i + c] = s.v[c];
                out.force[3 * i + c] = m * (omega * omega * (t[c] - s.x[c]) - 2.0 * zeta * omega * s.v[c]);
                stretch += (t[c] - s.x[c]).powi(2);
                speed += s.v[c] * s.v[c];
            }
            out.energy[i] = 0.5 * m * speed + 0.5 * m * omega * omega * stretch + m * g * s.x[2];
        }
        Ok(())
    }
}

use heft_node_sdk::{Dimension, Io, Node, NodeError, NodeSpec, Params, PortKind, PortSpec, node_params};

node_params! {
    /// The parameters of `follow.spring`, declared once: the specs heft shows and checks, and
    /// typed fields for `evaluate` (a misspelt name does not compile).
    pub struct SpringParams {
        /// Natural frequency of the spring, omega / (2 pi).
        frequency: number(Dimension::Frequency, 2.0, (0.01, 100.0)),
        /// zeta: 1 is critical damping, below 1 the point overshoots.
        damping_ratio: number(Dimension::Dimensionless, 0.5, (0.0, 10.0)),
        /// Steps per frame.
        substeps: integer(8, (1, 10_000)),
    }
}

/// A point mass on a damped spring that follows a moving position.
#[derive(Debug)]
pub struct Spring;

/// The point's path for a target path sampled at the frames: `target(i)` is the target at
/// frame i, `dt` the frame duration. Each frame is `substeps` steps of symplectic Euler
/// (v += h a; x += h v) with a = omega^2 (target - x) - 2 zeta omega v, the target moving
/// linearly inside the frame. The point starts at rest on the target.
pub fn follow(
    target: impl Fn(usize) -> [f64; 3],
    frames: usize,
    dt: f64,
    omega: f64,
    zeta: f64,
    substeps: usize,
) -> Vec<[f64; 3]> {
    let mut out = Vec::with_capacity(frames);
    if frames == 0 {
        return out;
    }
    let mut x = target(0);
    let mut v = [0.0; 3];
    out.push(x);
    let h = dt / substeps as f64;
    for i in 1..frames {
        let (a, b) = (target(i - 1), target(i));
        for k in 0..substeps {
            let u = (k + 1) as f64 / substeps as f64;
            for c in 0..3 {
                let t = a[c] + u * (b[c] - a[c]);
                v[c] += h * (omega * omega * (t - x[c]) - 2.0 * zeta * omega * v[c]);
                x[c] += h * v[c];
            }
        }
        out.push(x);
    }
    out
}

impl Node for Spring {
    fn spec() -> NodeSpec {
        NodeSpec {
            name: "spring".into(),
            doc: "A point mass on a damped spring that follows a moving position.".into(),
            notes: "Method: a = omega^2 (target - x) - 2 zeta omega v, symplectic Euler with `substeps` steps a \
                    frame, the target moving linearly inside the frame; the point starts at rest on the target. \
                    Stable for omega h < 2 (h = frame / substeps). A template for your own node: see \
                    templates/node in heft's repository."
                .into(),
            inputs: vec![PortSpec::new(
                "target",
                PortKind::Vec3,
                Dimension::Length,
                "The position the point follows.",
            )],
            outputs: vec![PortSpec::new(
                "position",
                PortKind::Vec3,
                Dimension::Length,
                "The point.",
            )],
            params: SpringParams::specs(),
            summaries: vec![],
        }
    }

    fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
        let p = SpringParams::read(params)?;
        let omega = 2.0 * std::f64::consts::PI * p.frequency;
        let (zeta, substeps) = (p.damping_ratio, p.substeps as usize);
        let tl = io.timeline();
        let dt = tl.dt();
        if omega * dt / substeps as f64 >= 2.0 {
            return Err(NodeError::new(format!(
                "omega h = {:.2} is not below 2: the spring would blow up; raise `substeps` to at least {}",
                omega * dt / substeps as f64,
                (omega * dt / 2.0).ceil() as i64 + 1
            )));
        }
        let target = io.input("target")?;
        let path = follow(|i| target.vec3(i), tl.frames(), dt, omega, zeta, substeps);
        io.fill("position", |i, out| out.copy_from_slice(&path[i]))
    }
}

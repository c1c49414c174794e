use heft_node_sdk::{
    Dimension, Io, Node, NodeError, NodeSpec, ParamSpec, Params, PortKind, PortSpec, STANDARD_GRAVITY, Series,
    SummarySpec, Timeline,
};

use crate::physics;

/// Apparent weight (vertical ground reaction force) and apparent gravity from a centre-of-mass path.
#[derive(Debug)]
pub struct Apparent;

/// At most this many frame ranges are listed in one warning.
const MAX_RANGES: usize = 8;

impl Node for Apparent {
    fn spec() -> NodeSpec {
        NodeSpec {
            name: "apparent".into(),
            doc: "Vertical ground reaction force, body weights and apparent gravity from a centre-of-mass \
                  acceleration and a contact flag."
                .into(),
            notes: "Method: Newton's second law for the whole body, F - m g = m a_z, so the vertical ground \
                    reaction force is F = m (g + a_z) while `contact` is on and 0 while it is off (the \
                    elevator-scale relation of introductory mechanics, e.g. OpenStax College Physics 2012, \
                    section 4.7). `body_weights` is F / (m g). `apparent_gravity` is g_vec - a with \
                    g_vec = (0, 0, -g), at the `attachment` when it is connected, else at the centre of mass; \
                    it is zero in free fall whatever the contact flag says. The attachment's acceleration is \
                    the second finite difference of its translation over the per-frame samples: central \
                    (x[i-1] - 2 x[i] + x[i+1]) / dt^2 inside, one-sided (2 x0 - 5 x1 + 4 x2 - x3) / dt^2 at \
                    the ends (Fornberg 1988, Math. Comp. 51(184)), or three-point ends with only 3 frames; \
                    all are exact for a parabola, so a ballistic attachment gives zero. Its rotation is not \
                    used, and the result is in world axes. Summaries: the peaks of F and F / (m g), and the \
                    impulse above body weight, the trapezoid-rule integral of F - m g over the whole record \
                    in N s (the SDK has no impulse dimension yet, so it is declared a plain number); with a \
                    ballistic flight it equals m times the change of vertical velocity (impulse-momentum \
                    theorem). Warnings: frames with contact off where |a_z + g| > `ballistic_tolerance` (the \
                    path would need a force with nothing to push on; F is still 0 there), and frames with \
                    contact on where F < -m times the tolerance (the ground would have to pull; F is reported negative, not \
                    clipped). Limits: one rigid body's centre of mass; only the vertical force is computed \
                    and only the vertical acceleration is checked in flight; the contact flag is trusted as \
                    given."
                .into(),
            inputs: vec![
                PortSpec::new(
                    "com_acceleration",
                    PortKind::Vec3,
                    Dimension::Acceleration,
                    "Centre-of-mass acceleration (Z up).",
                ),
                PortSpec::new(
                    "contact",
                    PortKind::Flag,
                    Dimension::Dimensionless,
                    "1 while the feet are on the ground.",
                ),
                PortSpec::new(
                    "attachment",
                    PortKind::Transform,
                    Dimension::Length,
                    "A point a passive element hangs from; its translation is differenced for apparent gravity.",
                )
                .optional(),
            ],
            outputs: vec![
                PortSpec::new(
                    "force",
                    PortKind::Scalar,
                    Dimension::Force,
                    "Vertical ground reaction force m (g + a_z) in contact, 0 in flight.",
                ),
                PortSpec::new(
                    "body_weights",
                    PortKind::Scalar,
                    Dimension::BodyWeight,
                    "The force divided by m g.",
                ),
                PortSpec::new(
                    "apparent_gravity",
                    PortKind::Vec3,
                    Dimension::Acceleration,
                    "g_vec - a at the attachment (or the centre of mass); zero in free fall.",
                ),
            ],
            params: vec![
                ParamSpec::number("mass", Dimension::Mass, 58.0, (1.0, 1000.0), "Body mass."),
                ParamSpec::number(
                    "gravity",
                    Dimension::Acceleration,
                    STANDARD_GRAVITY,
                    (0.01, 100.0),
                    "Magnitude of gravity along -Z; standard gravity 9.80665 m/s^2 by default.",
                ),
                ParamSpec::number(
                    "ballistic_tolerance",
                    Dimension::Acceleration,
                    0.05,
                    (0.0, 100.0),
                    "In flight, warn where |a_z + g| exceeds this.",
                ),
            ],
            summaries: vec![
                SummarySpec::new(
                    "peak_force",
                    Dimension::Force,
                    "Largest vertical ground reaction force.",
                ),
                SummarySpec::new(
                    "peak_body_weights",
                    Dimension::BodyWeight,
                    "Largest force in body weights.",
                ),
                SummarySpec::new(
                    "impulse_above_weight",
                    Dimension::Impulse,
                    "Integral of F - m g over the record (trapezoid rule).",
                ),
            ],
        }
    }

    fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
        let mass = params.number("mass")?;
        let g = params.number("gravity")?;
        let tolerance = params.number("ballistic_tolerance")?;
        let tl = io.timeline();
        let n = io.frames();
        if n == 0 {
            return Err(NodeError::new("the timeline has no frames"));
        }
        let acc = vectors(&tl, io.input("com_acceleration")?, "com_acceleration", "m/s^2")?;
        let contact = flags(&tl, io.input("contact")?)?;
        let attachment = io.input("attachment")?;
        let felt = if attachment.is_empty() {
            acc.clone()
        } else {
            let path = vectors(&tl, attachment, "attachment", "m")?;
            physics::second_difference(&path, tl.dt()).ok_or_else(|| {
                NodeError::new(format!(
                    "the attachment's acceleration is a second difference of its path and needs at least 3 \
                     frames; the timeline has {n}"
                ))
            })?
        };

        let force: Vec<f64> = (0..n)
            .map(|i| physics::ground_reaction_force(mass, g, acc[i][2], contact[i]))
            .collect();
        let weight = mass * g;
        let body_weights: Vec<f64> = force.iter().map(|f| f / weight).collect();
        let gravity: Vec<[f64; 3]> = felt.iter().map(|&a| physics::apparent_gravity(g, a)).collect();
        if let Some(i) = (0..n).find(|&i| !force[i].is_finite() || gravity[i].iter().any(|v| !v.is_finite())) {
            return Err(NodeError::new(format!(
                "the force or apparent gravity overflows at frame {}: the acceleration there is too large",
                tl.frame_number(i)
            )));
        }

        let flying: Vec<usize> = (0..n)
            .filter(|&i| !contact[i] && (acc[i][2] + g).abs() > tolerance)
            .collect();
        if !flying.is_empty() {
            let worst = flying.iter().map(|&i| (acc[i][2] + g).abs()).fold(0.0, f64::max);
            io.warn(format!(
                "the centre of mass is not ballistic in flight at frames {} (contact off but |a_z + g| > \
                 ballistic_tolerance = {tolerance} m/s^2): that path would need a vertical force of up to {:.1} \
                 N with nothing to push on; force is 0 there",
                ranges(&tl, &flying),
                mass * worst
            ));
        }
        // The same tolerance as for flight: at a take-off frame a_z is -g to rounding, F is -0.0.
        let pulling: Vec<usize> = (0..n).filter(|&i| contact[i] && force[i] < -mass * tolerance).collect();
        if !pulling.is_empty() {
            let worst = pulling.iter().map(|&i| force[i]).fold(0.0, f64::min);
            io.warn(format!(
                "the ground would have to pull at frames {} (contact on but a_z < -g): the force there is as low \
                 as {worst:.1} N and is reported negative",
                ranges(&tl, &pulling)
            ));
        }

        io.fill("force", |i, out| out[0] = force[i])?;
        io.fill("body_weights", |i, out| out[0] = body_weights[i])?;
        io.fill("apparent_gravity", |i, out| out.copy_from_slice(&gravity[i]))?;
        let peak = force.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        io.summary("peak_force", peak)?;
        io.summary("peak_body_weights", peak / weight)?;
        let above: Vec<f64> = force.iter().map(|f| f - weight).collect();
        io.summary("impulse_above_weight", physics::trapezoid(&above, tl.dt()))
    }
}

/// The first three values of every frame of an input, refusing a wrong length or a value that
/// is not finite (naming the frame).
fn vectors(tl: &Timeline, s: Series<'_>, name: &str, unit: &str) -> Result<Vec<[f64; 3]>, NodeError> {
    let n = tl.frames();
    if s.frames() != n {
        return Err(NodeError::new(format!(
            "input `{name}` holds {} frames but the timeline has {n}",
            s.frames()
        )));
    }
    (0..n)
        .map(|i| {
            let v = s.vec3(i);
            if v.iter().all(|x| x.is_finite()) {
                Ok(v)
            } else {
                Err(NodeError::new(format!(
                    "input `{name}` is ({}, {}, {}) {unit} at frame {}; it must be finite",
                    v[0],
                    v[1],
                    v[2],
                    tl.frame_number(i)
                )))
            }
        })
        .collect()
}

/// The contact flag as booleans, refusing values other than 0 and 1 (naming the frame).
fn flags(tl: &Timeline, s: Series<'_>) -> Result<Vec<bool>, NodeError> {
    let n = tl.frames();
    if s.frames() != n {
        return Err(NodeError::new(format!(
            "input `contact` holds {} frames but the timeline has {n}",
            s.frames()
        )));
    }
    (0..n)
        .map(|i| match s.frame(i)[0] {
            0.0 => Ok(false),
            1.0 => Ok(true),
            v => Err(NodeError::new(format!(
                "input `contact` is {v} at frame {}; a flag must be 0 or 1",
                tl.frame_number(i)
            ))),
        })
        .collect()
}

/// Frame numbers of sorted frame indices as "a-b, c, ..." (at most [`MAX_RANGES`] ranges).
fn ranges(tl: &Timeline, indices: &[usize]) -> String {
    let runs = physics::runs(indices);
    let mut parts: Vec<String> = runs
        .iter()
        .take(MAX_RANGES)
        .map(|&(a, b)| {
            if a == b {
                tl.frame_number(a).to_string()
            } else {
                format!("{}-{}", tl.frame_number(a), tl.frame_number(b))
            }
        })
        .collect();
    if runs.len() > MAX_RANGES {
        parts.push(format!("and {} more ranges", runs.len() - MAX_RANGES));
    }
    parts.join(", ")
}

#[cfg(test)]
mod tests {
    use heft_node_sdk::{Io, Node, NodeError, ParamValue, Params, STANDARD_GRAVITY, Series, Timeline};

    use super::Apparent;

    /// Outputs of one evaluation.
    #[derive(Debug)]
    struct Out {
        force: Vec<f64>,
        body_weights: Vec<f64>,
        gravity: Vec<[f64; 3]>,
        /// peak_force, peak_body_weights, impulse_above_weight.
        summaries: Vec<f64>,
        warnings: Vec<String>,
    }

    fn timeline(start_frame: i64, n: usize, fps: u32) -> Timeline {
        Timeline {
            start_frame,
            frame_count: n as u64,
            rate_num: fps,
            rate_den: 1,
        }
    }

    fn params(mass: f64, g: f64) -> Params {
        Params::defaults(&Apparent::spec())
            .and_then(|p| p.with("mass", ParamValue::Number(mass)))
            .and_then(|p| p.with("gravity", ParamValue::Number(g)))
            .expect("valid parameters")
    }

    /// Runs the node; `attachment` is a list of translations (identity rotation) or empty.
    fn run(
        p: &Params,
        tl: Timeline,
        acc: &[[f64; 3]],
        contact: &[bool],
        attachment: &[[f64; 3]],
    ) -> Result<Out, NodeError> {
        let spec = Apparent::spec();
        let n = tl.frames();
        let acc: Vec<f64> = acc.iter().flatten().copied().collect();
        let contact: Vec<f64> = contact.iter().map(|&c| if c { 1.0 } else { 0.0 }).collect();
        let attach: Vec<f64> = attachment
            .iter()
            .flat_map(|t| [t[0], t[1], t[2], 0.0, 0.0, 0.0, 1.0])
            .collect();
        let mut force = vec![f64::NAN; n];
        let mut bw = vec![f64::NAN; n];
        let mut grav = vec![f64::NAN; 3 * n];
        let mut io = Io::new(
            tl,
            &spec,
            vec![Series::new(&acc, 3), Series::new(&contact, 1), Series::new(&attach, 7)],
            vec![&mut force[..], &mut bw[..], &mut grav[..]],
            vec![1, 1, 3],
        );
        Apparent::evaluate(p, &mut io)?;
        let summaries = io.summaries().to_vec();
        let warnings = io.warnings().to_vec();
        Ok(Out {
            force,
            body_weights: bw,
            gravity: grav.chunks_exact(3).map(|c| [c[0], c[1], c[2]]).collect(),
            summaries,
            warnings,
        })
    }

    /// OpenStax, College Physics (2012), section 4.7 'Further Applications of Newton's Laws of
    /// Motion', example 'What does the bathroom scale read in an elevator?': a 75.0 kg man,
    /// elevator accelerating upward at 1.20 m/s^2, g = 9.80 m/s^2: the scale reads
    /// m (g + a) = 825 N; (b) at constant speed it reads m g = 735 N.
    #[test]
    fn openstax_elevator_scale_reading() {
        let tl = timeline(0, 3, 24);
        let out = run(&params(75.0, 9.80), tl, &[[0.0, 0.0, 1.20]; 3], &[true; 3], &[]).expect("runs");
        for &f in &out.force {
            assert!((f - 825.0).abs() < 1e-9, "{f}");
        }
        let out = run(&params(75.0, 9.80), tl, &[[0.0; 3]; 3], &[true; 3], &[]).expect("runs");
        assert!((out.force[0] - 735.0).abs() < 1e-9, "{}", out.force[0]);
        // With standard gravity: 75.0 (9.80665 + 1.20) = 825.49875 N (arithmetic), which is the
        // book's 825 N at its three significant figures.
        let out = run(
            &params(75.0, STANDARD_GRAVITY),
            tl,
            &[[0.0, 0.0, 1.20]; 3],
            &[true; 3],
            &[],
        )
        .expect("runs");
        assert!((out.force[0] - 825.49875).abs() < 1e-9, "{}", out.force[0]);
        assert!((out.force[0] - 825.0).abs() < 0.5, "{}", out.force[0]);
        assert!(out.warnings.is_empty());
    }

    /// Quiet standing (a = 0, contact on): F = m g exactly, one body weight, apparent gravity
    /// (0, 0, -g), no impulse above body weight (Newton's second law with zero acceleration).
    #[test]
    fn quiet_standing_is_one_body_weight() {
        let (m, g) = (58.0, STANDARD_GRAVITY);
        let out = run(&params(m, g), timeline(0, 10, 24), &[[0.0; 3]; 10], &[true; 10], &[]).expect("runs");
        assert!(out.force.iter().all(|&f| f == m * g));
        assert!(out.body_weights.iter().all(|&b| b == 1.0));
        assert!(out.gravity.iter().all(|v| *v == [0.0, 0.0, -g]));
        assert_eq!(out.summaries, [m * g, 1.0, 0.0]);
        assert!(out.warnings.is_empty());
    }

    /// Free fall (a = (0, 0, -g), contact off): no force, no body weights, no apparent gravity
    /// (weightlessness in free fall, Newton's second law), and no warning.
    #[test]
    fn free_fall_is_weightless() {
        let g = STANDARD_GRAVITY;
        let out = run(
            &params(58.0, g),
            timeline(0, 10, 24),
            &[[0.0, 0.0, -g]; 10],
            &[false; 10],
            &[],
        )
        .expect("runs");
        for i in 0..10 {
            assert_eq!(out.force[i], 0.0);
            assert_eq!(out.body_weights[i], 0.0);
            assert!(out.gravity[i].iter().all(|v| v.abs() < 1e-12), "{:?}", out.gravity[i]);
        }
        assert!(out.warnings.is_empty(), "{:?}", out.warnings);
    }

    /// A flight that is not ballistic: frames 110-112 (a_z = -g + 2) and 115 (a_z = -g - 0.5)
    /// are named; the largest force needed is m * 2 = 116.0 N for 58 kg. Contact frames 100-104
    /// stand still and are not named.
    #[test]
    fn a_non_ballistic_flight_warns_with_the_frames() {
        let g = STANDARD_GRAVITY;
        let mut acc = vec![[0.0, 0.0, -g]; 20];
        acc[..5].fill([0.0; 3]);
        for a in &mut acc[10..=12] {
            a[2] = -g + 2.0;
        }
        acc[15][2] = -g - 0.5;
        let contact: Vec<bool> = (0..20).map(|i| i < 5).collect();
        let out = run(&params(58.0, g), timeline(100, 20, 24), &acc, &contact, &[]).expect("runs");
        assert_eq!(out.warnings.len(), 1, "{:?}", out.warnings);
        let w = &out.warnings[0];
        assert!(w.contains("frames 110-112, 115 ("), "{w}");
        assert!(w.contains("116.0 N"), "{w}");
        assert!(out.force[10..].iter().all(|&f| f == 0.0));
    }

    /// Contact on with a_z = -g - 1 at frames 3-4: the ground would have to pull with
    /// m * 1 = 58 N; the force is reported as -58 N and a warning names the frames.
    #[test]
    fn contact_with_a_pulling_ground_warns() {
        let g = STANDARD_GRAVITY;
        let mut acc = vec![[0.0; 3]; 8];
        acc[3][2] = -g - 1.0;
        acc[4][2] = -g - 1.0;
        let out = run(&params(58.0, g), timeline(0, 8, 24), &acc, &[true; 8], &[]).expect("runs");
        assert!((out.force[3] + 58.0).abs() < 1e-9, "{}", out.force[3]);
        assert_eq!(out.warnings.len(), 1, "{:?}", out.warnings);
        assert!(out.warnings[0].contains("frames 3-4 ") && out.warnings[0].contains("-58.0 N"));
    }

    /// An attachment moving along x = 0.3 t, z = 1 + 0.5 t + t^2 (accelerating upward at
    /// 2 m/s^2) feels (0, 0, -(g + 2)); a free-falling one, z = 2 + 3 t - g t^2 / 2, feels
    /// nothing. Second differences of a parabola have zero truncation error (the error term of
    /// the central difference is -(h^2 / 12) f''''; Burden & Faires, Numerical Analysis, 9th
    /// ed. 2011, section 4.1; the one-sided ends are exact for cubics, Fornberg 1988), so the
    /// only error is round-off: about 12 weights * 1e-16 * 3 m / dt^2 = 2e-12 at 24 fps, and
    /// 1e-9 is asserted. The centre of mass input is deliberately different (zero).
    #[test]
    fn apparent_gravity_at_an_accelerating_attachment() {
        let g = STANDARD_GRAVITY;
        let tl = timeline(0, 30, 24);
        let up: Vec<[f64; 3]> = (0..30)
            .map(|i| {
                let t = tl.time(i);
                [0.3 * t, 0.0, 1.0 + 0.5 * t + t * t]
            })
            .collect();
        let out = run(&params(58.0, g), tl, &[[0.0; 3]; 30], &[true; 30], &up).expect("runs");
        for (i, v) in out.gravity.iter().enumerate() {
            assert!(v[0].abs() < 1e-9 && v[1].abs() < 1e-9, "frame {i}: {v:?}");
            assert!((v[2] + g + 2.0).abs() < 1e-9, "frame {i}: {v:?}");
        }
        let fall: Vec<[f64; 3]> = (0..30)
            .map(|i| {
                let t = tl.time(i);
                [0.0, 0.0, 2.0 + 3.0 * t - 0.5 * g * t * t]
            })
            .collect();
        let out = run(&params(58.0, g), tl, &[[0.0; 3]; 30], &[true; 30], &fall).expect("runs");
        for (i, v) in out.gravity.iter().enumerate() {
            assert!(v.iter().all(|x| x.abs() < 1e-9), "frame {i}: {v:?}");
        }
        // Only 2 frames of an attachment cannot be differenced twice.
        let e = run(
            &params(58.0, g),
            timeline(0, 2, 24),
            &[[0.0; 3]; 2],
            &[true; 2],
            &fall[..2],
        )
        .expect_err("short");
        assert!(e.0.contains("at least 3 frames"), "{}", e.0);
    }

    /// Impulse-momentum theorem: over a contact phase with a_z(t) = A sin(pi t / T), the
    /// impulse above body weight is m * delta v = m * 2 A T / pi (calculus). The trapezoid
    /// rule's error is at most T dt^2 max|f''| / 12 with f = m a_z, so max|f''| = m A (pi/T)^2
    /// (composite trapezoidal rule error term, Burden & Faires, Numerical Analysis, 9th ed.
    /// 2011, section 4.4). Here: 58 kg, A = 12 m/s^2, T = 0.3 s, 1000 Hz.
    #[test]
    fn impulse_above_weight_is_mass_times_velocity_change() {
        let (m, a_max, t_end) = (58.0, 12.0, 0.3);
        let tl = timeline(0, 301, 1000);
        let acc: Vec<[f64; 3]> = (0..301)
            .map(|i| [0.0, 0.0, a_max * (std::f64::consts::PI * tl.time(i) / t_end).sin()])
            .collect();
        let out = run(&params(m, STANDARD_GRAVITY), tl, &acc, &[true; 301], &[]).expect("runs");
        let dv = 2.0 * a_max * t_end / std::f64::consts::PI;
        let bound = t_end * 1e-6 * m * a_max * (std::f64::consts::PI / t_end).powi(2) / 12.0;
        let got = out.summaries[2];
        assert!((got - m * dv).abs() <= bound, "{got} vs {} (bound {bound})", m * dv);
        // The peak is at t = T / 2 (frame 150): m (g + A).
        assert!((out.summaries[0] - m * (STANDARD_GRAVITY + a_max)).abs() < 1e-9);
        assert!((out.summaries[1] - (1.0 + a_max / STANDARD_GRAVITY)).abs() < 1e-12);
    }

    #[test]
    fn refuses_bad_inputs_naming_the_frame() {
        let tl = timeline(40, 4, 24);
        let mut acc = vec![[0.0; 3]; 4];
        acc[2][1] = f64::INFINITY;
        let e = run(&params(58.0, 9.8), tl, &acc, &[true; 4], &[]).expect_err("inf");
        assert!(e.0.contains("com_acceleration") && e.0.contains("frame 42"), "{}", e.0);

        let spec = Apparent::spec();
        let acc = [0.0; 12];
        let contact = [1.0, 0.5, 1.0, 1.0];
        let mut f = [0.0; 4];
        let mut b = [0.0; 4];
        let mut gv = [0.0; 12];
        let mut io = Io::new(
            tl,
            &spec,
            vec![Series::new(&acc, 3), Series::new(&contact, 1), Series::new(&[], 7)],
            vec![&mut f[..], &mut b[..], &mut gv[..]],
            vec![1, 1, 3],
        );
        let e = Apparent::evaluate(&params(58.0, 9.8), &mut io).expect_err("flag 0.5");
        assert!(e.0.contains("0.5 at frame 41"), "{}", e.0);
    }
}

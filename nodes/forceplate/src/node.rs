use heft_node_sdk::{Dimension, Io, Node, NodeError, NodeSpec, ParamSpec, Params, PortKind, PortSpec, SummarySpec};

use crate::analysis::{Settings, analyse_jumps};

/// `forceplate.analyse`: jump analysis of a vertical ground reaction force record.
#[derive(Debug)]
pub struct Analyse;

const NOTES: &str = "\
Input: the vertical ground reaction force of one jump or several, sampled at the timeline's frame rate (run the graph at \
the plate's rate, e.g. `rate 1000 fps`; 100 Hz or more). The record starts with quiet standing.

Method.
- Weighing: body weight BW is the mean force of the first `standing_duration` seconds, or of the quiet stretch \
before the movement when the movement starts sooner, however short: the force judged against the record's first \
50 ms (its mean, and `onset_deviations` of its SD), the movement found where it goes beyond 15 % of that mean (a \
movement, not a sway; of our own, no source) and dated back to where it left the band, the window ending \
`onset_backtrack` before that, with a warning. A window shorter than 1 s gets a warning (the criterion method \
weighs on 1 s of quiet standing: Owen, Watkins, Kilduff, Bevan & Bennett 2014, J Strength Cond Res \
28(6):1552-1558). Body mass \
m = BW / g with standard gravity g = 9.80665 m/s^2. The window must be quiet: its SD may be at most 5 % of its \
mean (common practice, no source).
- Onset (Owen, Watkins, Kilduff, Bevan & Bennett 2014, J Strength Cond Res 28(6):1552-1558; details from \
memory): the first sample after the standing window whose force departs from BW by more than `onset_deviations` \
SDs of the standing force, stepped back by `onset_backtrack`. The threshold never falls below 1e-6 BW (a guard \
for noise-free records, no source).
- Velocity and displacement (impulse-momentum method, Linthorne 2001, Am J Phys 69(11):1198-1204): velocity is \
the integral of (F - BW) / m from the onset, where it is zero, by the trapezoid rule; displacement is the \
trapezoid integral of the velocity. Both are integrated to the end of the record.
- Take-off and touch-down: where the force crosses `flight_threshold` (down, then up), interpolated linearly \
inside the sample. An unloaded stretch shorter than `min_flight_duration` is not a flight. Inside a flight, a \
loaded stretch shorter than `min_flight_duration` that stays below BW is taken as noise, not a touch-down (a \
rule of our own, no source); with `min_flight_duration` 0 every crossing counts. The take-off velocity is the \
integral up to the interpolated take-off, over the linear interpolant of the force (consistent with the \
trapezoid rule).
- Jump height: from the take-off velocity, v^2 / (2 g); from the flight time t (flight-time method), g t^2 / 8.
- The centre of mass (`centre_of_mass`, for passive motion driven by the plate): `standing_height` plus the \
displacement, except in the flight, which is the exact parabola from the take-off's interpolated instant, \
velocity and displacement under standard gravity (the unloaded plate's noise does not move it); the landing's \
integral is shifted to continue from the parabola's last sample.

Phases (codes of the `phase` output; names as in McMahon, Suchomel, Lake & Comfort 2018, Strength Cond J \
40(4):96-106): 0 weighing, before the onset; 1 unweighting, from the onset to the sample of the velocity minimum \
(the force is below BW and the body speeds downward); 2 braking, from the velocity minimum (where the force \
rises back through BW) to the first sample with velocity >= 0; 3 propulsion, from there to the take-off sample; \
4 flight, from the take-off sample to the touch-down sample; 5 landing, from the touch-down sample to the end. \
When the velocity never goes negative (a squat jump) there is no unweighting or braking: propulsion starts at \
the onset. A phase starts at the first sample at or after its boundary.

Several jumps: the flights (below `flight_threshold` for at least `min_flight_duration`) are found first; between \
two the record is split at the start of the quiet stretch before the next jump (the quietest 0.1 s, extended back \
while the force stays within 2 % of its mean; of our own, no source), and each stretch is analysed on its own \
(body weight, onset, phases, heights; its warnings prefixed with its number). The `jump` output numbers each \
frame's jump and `jump_height` gives that jump's height; the other summaries are the first jump's, with \
`jump_count`, `highest_jump` and `highest_jump_number` over all of them. Each stretch's centre of mass starts \
again at `standing_height`.

Limits. Each stretch must start with quiet standing. Body weight errors grow linearly \
into the velocity and quadratically into the displacement, so the landing part of the integrated outputs \
drifts. The threshold makes the flight a little longer and the take-off velocity a little larger than at zero \
force (by about g times the time the force takes to fall from the threshold to zero). Crossings are \
interpolated linearly: where the force has a corner inside the sample (it reaches zero and stays there) the \
crossing can be off by up to one sample, which moves the take-off velocity by up to about g / rate. The \
flight-time method \
assumes the centre of mass is at the same height at take-off and touch-down; landing with bent legs makes it \
overestimate. The force is used as recorded: no filtering.";

impl Node for Analyse {
    fn spec() -> NodeSpec {
        NodeSpec {
            name: "analyse".into(),
            doc: "Jump analysis of a vertical force record of one jump or several: body weight, onset, take-off, \
                  flight, velocity, height and jump phases."
                .into(),
            notes: NOTES.into(),
            inputs: vec![PortSpec::new(
                "force",
                PortKind::Scalar,
                Dimension::Force,
                "Vertical ground reaction force, sampled at the timeline's frame rate.",
            )],
            outputs: vec![
                PortSpec::new(
                    "velocity",
                    PortKind::Scalar,
                    Dimension::Velocity,
                    "Centre-of-mass vertical velocity (impulse-momentum method), zero before onset.",
                ),
                PortSpec::new(
                    "displacement",
                    PortKind::Scalar,
                    Dimension::Length,
                    "Centre-of-mass vertical displacement from standing height, zero before onset.",
                ),
                PortSpec::new(
                    "phase",
                    PortKind::Scalar,
                    Dimension::Dimensionless,
                    "0 weighing, 1 unweighting, 2 braking, 3 propulsion, 4 flight, 5 landing.",
                )
                .with_codes(&["weighing", "unweighting", "braking", "propulsion", "flight", "landing"]),
                PortSpec::new(
                    "body_weights",
                    PortKind::Scalar,
                    Dimension::BodyWeight,
                    "Force divided by body weight.",
                ),
                PortSpec::new(
                    "centre_of_mass",
                    PortKind::Transform,
                    Dimension::Length,
                    "The centre of mass as a transform a strand or a character can hang from: at \
                     `standing_height` plus the displacement, the flight the exact parabola from the take-off \
                     (identity rotation, x = y = 0).",
                ),
                PortSpec::new(
                    "jump",
                    PortKind::Scalar,
                    Dimension::Dimensionless,
                    "Which jump of the record the frame belongs to: 1, 2, ...",
                ),
                PortSpec::new(
                    "jump_height",
                    PortKind::Scalar,
                    Dimension::Length,
                    "The height (from the take-off velocity) of the jump the frame belongs to.",
                ),
            ],
            params: vec![
                ParamSpec::number(
                    "standing_duration",
                    Dimension::Time,
                    1.0,
                    (0.2, 10.0),
                    "Quiet-standing window at the start of the record, used for body weight (shortened, with a \
                     warning, where the movement starts sooner).",
                ),
                ParamSpec::number(
                    "onset_deviations",
                    Dimension::Dimensionless,
                    5.0,
                    (1.0, 50.0),
                    "Onset: departure from body weight by more than this many standing SDs.",
                ),
                ParamSpec::number(
                    "onset_backtrack",
                    Dimension::Time,
                    0.030,
                    (0.0, 0.5),
                    "The detected onset is moved back by this much.",
                ),
                ParamSpec::number(
                    "flight_threshold",
                    Dimension::Force,
                    20.0,
                    (1.0, 500.0),
                    "The plate is unloaded below this force.",
                ),
                ParamSpec::number(
                    "standing_height",
                    Dimension::Length,
                    0.95,
                    (0.1, 3.0),
                    "Height of the centre of mass in quiet standing, for `centre_of_mass` (about 0.55 of body \
                     height).",
                ),
                ParamSpec::number(
                    "min_flight_duration",
                    Dimension::Time,
                    0.05,
                    (0.0, 1.0),
                    "Shortest unloaded stretch taken as a flight; shorter loads below body weight inside a flight are \
                     ignored as noise.",
                ),
            ],
            summaries: vec![
                SummarySpec::new("body_mass", Dimension::Mass, "Body weight over standard gravity."),
                SummarySpec::new("body_weight", Dimension::Force, "Mean force of the standing window."),
                SummarySpec::new("onset_time", Dimension::Time, "Movement onset (after the backtrack)."),
                SummarySpec::new(
                    "takeoff_time",
                    Dimension::Time,
                    "Take-off, interpolated where the force falls through flight_threshold.",
                ),
                SummarySpec::new(
                    "touchdown_time",
                    Dimension::Time,
                    "Touch-down, interpolated where the force rises through flight_threshold.",
                ),
                SummarySpec::new("flight_time", Dimension::Time, "Touch-down time minus take-off time."),
                SummarySpec::new(
                    "takeoff_velocity",
                    Dimension::Velocity,
                    "Integrated velocity at take-off (impulse-momentum method).",
                ),
                SummarySpec::new(
                    "height_from_velocity",
                    Dimension::Length,
                    "Jump height v^2 / (2 g) from the take-off velocity.",
                ),
                SummarySpec::new(
                    "height_from_flight_time",
                    Dimension::Length,
                    "Jump height g t^2 / 8 from the flight time (flight-time method).",
                ),
                SummarySpec::new(
                    "peak_propulsive_force",
                    Dimension::BodyWeight,
                    "Largest force of the propulsion phase.",
                ),
                SummarySpec::new(
                    "peak_landing_force",
                    Dimension::BodyWeight,
                    "Largest force of the landing phase.",
                ),
                SummarySpec::new("jump_count", Dimension::Dimensionless, "Jumps found in the record."),
                SummarySpec::new(
                    "highest_jump",
                    Dimension::Length,
                    "The largest height from take-off velocity among the jumps.",
                ),
                SummarySpec::new(
                    "highest_jump_number",
                    Dimension::Dimensionless,
                    "Which jump that is (1, 2, ...).",
                ),
                SummarySpec::new(
                    "countermovement_depth",
                    Dimension::Length,
                    "Smallest displacement before take-off (negative: below standing height).",
                ),
            ],
        }
    }

    fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
        let tl = io.timeline();
        let settings = Settings {
            standing_duration: params.number("standing_duration")?,
            onset_deviations: params.number("onset_deviations")?,
            onset_backtrack: params.number("onset_backtrack")?,
            flight_threshold: params.number("flight_threshold")?,
            min_flight_duration: params.number("min_flight_duration")?,
            first_frame: tl.start_frame,
        };
        let force = io.input("force")?;
        if force.frames() != io.frames() {
            return Err(NodeError::new(format!(
                "input `force` holds {} frames for a timeline of {}",
                force.frames(),
                io.frames()
            )));
        }
        let jumps = analyse_jumps(force.as_slice(), tl.fps(), &settings).map_err(NodeError::new)?;
        let several = jumps.len() > 1;
        for (k, j) in jumps.iter().enumerate() {
            for w in &j.analysis.warnings {
                io.warn(if several {
                    format!("jump {}: {w}", k + 1)
                } else {
                    w.clone()
                });
            }
        }
        // Every frame belongs to one jump's stretch of the record.
        let mut owner = Vec::with_capacity(io.frames());
        for (k, j) in jumps.iter().enumerate() {
            owner.extend((j.start..j.end).map(|i| (k, i - j.start)));
        }
        let at = |i: usize| (&jumps[owner[i].0].analysis, owner[i].1);
        io.fill("velocity", |i, out| {
            let (a, k) = at(i);
            out[0] = a.velocity[k];
        })?;
        io.fill("displacement", |i, out| {
            let (a, k) = at(i);
            out[0] = a.displacement[k];
        })?;
        io.fill("phase", |i, out| {
            let (a, k) = at(i);
            out[0] = a.phase[k].code();
        })?;
        io.fill("body_weights", |i, out| {
            let (a, k) = at(i);
            out[0] = a.body_weights[k];
        })?;
        let standing = params.number("standing_height")?;
        io.fill("centre_of_mass", |i, out| {
            let (a, k) = at(i);
            out.copy_from_slice(&[0.0, 0.0, standing + a.path[k], 0.0, 0.0, 0.0, 1.0]);
        })?;
        io.fill("jump", |i, out| out[0] = (owner[i].0 + 1) as f64)?;
        io.fill("jump_height", |i, out| out[0] = at(i).0.height_from_velocity)?;
        let (best, highest) = jumps
            .iter()
            .enumerate()
            .map(|(k, j)| (k, j.analysis.height_from_velocity))
            .fold((0, f64::MIN), |b, c| if c.1 > b.1 { c } else { b });
        io.summary("jump_count", jumps.len() as f64)?;
        io.summary("highest_jump", highest)?;
        io.summary("highest_jump_number", (best + 1) as f64)?;
        let a = &jumps[0].analysis;
        let summaries = [
            ("body_mass", a.body_mass),
            ("body_weight", a.body_weight),
            ("onset_time", a.onset_time),
            ("takeoff_time", a.takeoff_time),
            ("touchdown_time", a.touchdown_time),
            ("flight_time", a.flight_time),
            ("takeoff_velocity", a.takeoff_velocity),
            ("height_from_velocity", a.height_from_velocity),
            ("height_from_flight_time", a.height_from_flight_time),
            ("peak_propulsive_force", a.peak_propulsive_force),
            ("peak_landing_force", a.peak_landing_force),
            ("countermovement_depth", a.countermovement_depth),
        ];
        for (name, value) in summaries {
            io.summary(name, value)?;
        }
        Ok(())
    }
}

//! heft node plugin `contact`: when the feet are on the ground.
//!
//! - `contact.from_height`: contact from a foot height, with hysteresis and a minimum phase
//!   duration against chatter.
//! - `contact.from_force`: contact from a vertical ground reaction force, with a threshold in
//!   newtons or in standard deviations of the unloaded plate's noise.
//!
//! Both report the first flight's take-off, touch-down and flight time, interpolated inside
//! the frames where the signal crosses the threshold. The detection itself lives in
//! [`detect`] as plain functions so other crates can reuse it.
#![forbid(unsafe_code)]

pub mod detect;
mod force;
mod height;

pub use force::FromForce;
pub use height::FromHeight;

use heft_node_sdk::{Io, NodeError, Series, Timeline};

heft_node_sdk::export_plugin!(name: "contact", nodes: [FromHeight, FromForce]);

/// Reads a scalar input as a vector, refusing a record too short to hold a flight and any
/// value that is not finite (naming the frame).
fn scalar_input(io: &Io<'_>, name: &str, unit: &str) -> Result<Vec<f64>, NodeError> {
    let tl = io.timeline();
    let series: Series<'_> = io.input(name)?;
    let n = io.frames();
    if series.frames() != n {
        return Err(NodeError::new(format!(
            "input `{name}` holds {} frames but the timeline has {n}",
            series.frames()
        )));
    }
    if n < 3 {
        return Err(NodeError::new(format!(
            "{n} frames are too few to find a flight: a take-off and a touch-down need at least 3 frames"
        )));
    }
    let values: Vec<f64> = (0..n).map(|i| series.frame(i)[0]).collect();
    if let Some(i) = values.iter().position(|v| !v.is_finite()) {
        return Err(NodeError::new(format!(
            "input `{name}` is {} {unit} at frame {}; it must be finite",
            values[i],
            tl.frame_number(i)
        )));
    }
    Ok(values)
}

/// Writes the contact flag, reports the first complete flight's summaries, and warns when
/// there are more flights than the one reported.
fn report(
    io: &mut Io<'_>,
    phases: &[detect::Phase],
    signal: &[f64],
    threshold: f64,
    no_flight: impl FnOnce(&Timeline) -> String,
) -> Result<(), NodeError> {
    let tl = io.timeline();
    let flights = detect::complete_flights(phases, signal, threshold, |i| tl.time(i));
    let Some(first) = flights.first().copied() else {
        return Err(NodeError::new(no_flight(&tl)));
    };
    let contact = detect::states(phases);
    io.fill("contact", |i, out| out[0] = if contact[i] { 1.0 } else { 0.0 })?;
    io.summary("takeoff_time", first.takeoff_time)?;
    io.summary("touchdown_time", first.touchdown_time)?;
    io.summary("flight_time", first.flight_time())?;
    if flights.len() > 1 {
        io.warn(format!(
            "{} flights found; the summaries describe the first (frames {}..{})",
            flights.len(),
            tl.frame_number(first.phase.start),
            tl.frame_number(first.phase.end() - 1)
        ));
    }
    Ok(())
}

/// Why no complete flight was found, beyond the values: a record that starts or ends in
/// flight has flights cut by its ends, which do not count.
fn cut_flight_note(phases: &[detect::Phase]) -> &'static str {
    let starts = phases.first().is_some_and(|p| !p.contact);
    let ends = phases.last().is_some_and(|p| !p.contact);
    match (starts, ends) {
        (true, true) if phases.len() == 1 => "; the whole record is in flight",
        (true, true) => "; the record starts and ends in flight, and flights cut by its ends do not count",
        (true, false) => "; the record starts in flight, and a flight cut by its start does not count",
        (false, true) => "; the record ends in flight, and a flight cut by its end does not count",
        (false, false) => "",
    }
}

#[cfg(test)]
pub(crate) mod testing {
    //! Calling a node directly, without the plugin boundary.
    use heft_node_sdk::{Io, Node, NodeError, Params, Series, Timeline};

    /// Flags, summaries (spec order) and warnings of one evaluation.
    pub type Outcome = (Vec<f64>, Vec<f64>, Vec<String>);

    /// A timeline of `n` frames from frame 0 at `fps` frames per second.
    pub fn timeline(n: usize, fps: u32) -> Timeline {
        Timeline {
            start_frame: 0,
            frame_count: n as u64,
            rate_num: fps,
            rate_den: 1,
        }
    }

    /// Evaluates node `N` on one scalar input.
    pub fn run<N: Node>(params: &Params, tl: Timeline, input: &[f64]) -> Result<Outcome, NodeError> {
        let spec = N::spec();
        let mut flags = vec![f64::NAN; tl.frames()];
        let mut io = Io::new(tl, &spec, vec![Series::new(input, 1)], vec![&mut flags[..]], vec![1]);
        N::evaluate(params, &mut io)?;
        let summaries = io.summaries().to_vec();
        let warnings = io.warnings().to_vec();
        Ok((flags, summaries, warnings))
    }

    /// Number of changes of the flag between consecutive frames.
    pub fn transitions(flags: &[f64]) -> usize {
        flags.windows(2).filter(|w| w[0] != w[1]).count()
    }
}

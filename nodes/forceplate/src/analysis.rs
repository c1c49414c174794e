//! Jump analysis of a vertical force record: body weight from quiet standing, movement onset,
//! take-off and touch-down, centre-of-mass velocity and displacement by the impulse-momentum
//! method, jump height by the impulse-momentum and flight-time methods, and the phases of a
//! countermovement jump.
//!
//! Everything here is a plain function of the samples and the settings; the node
//! [`crate::Analyse`] and any host call [`analyse`].

use heft_node_sdk::STANDARD_GRAVITY;

/// Lowest sample rate accepted, Hz.
pub const MIN_RATE_HZ: f64 = 100.0;

/// Largest standard deviation of the standing window, as a fraction of its mean, for the
/// window to count as quiet standing. Common practice, no source: quiet standing on a plate
/// shows a force SD well under 1 % of body weight; 5 % means the subject was moving.
pub const QUIET_SD_LIMIT: f64 = 0.05;

/// The first stretch of a record against which the end of quiet standing is judged, s (of
/// our own, no source: short enough for a record that starts moving early, long enough for a
/// usable noise estimate at 1000 Hz).
pub const REFERENCE_DURATION: f64 = 0.05;

/// A departure from the reference force beyond this fraction of it is a movement, not a sway
/// (of our own, no source: a countermovement unloads the plate by 30 % or more, a push loads it
/// as much).
pub const MOVEMENT_FRACTION: f64 = 0.15;

/// Quiet standing recommended before a countermovement jump for weighing, s: Owen, Watkins,
/// Kilduff, Bevan & Bennett 2014, "Development of a criterion method to determine peak
/// mechanical power output in a countermovement jump", J Strength Cond Res 28(6):1552-1558,
/// whose criterion method weighs on the "mean VGRF for 1 second of quiet standing" (abstract).
pub const RECOMMENDED_STANDING: f64 = 1.0;

/// The onset threshold never falls below this fraction of body weight, so that a noise-free
/// (synthetic) record, whose standing SD is zero or a rounding residue, does not trigger on
/// rounding. A guard of our own, no source.
pub const ONSET_FLOOR_FRACTION: f64 = 1.0e-6;

/// Largest force magnitude accepted, N: a guard against records in the wrong unit and against
/// overflow in the sums, of our own, no source (a jump loads a plate with a few kN).
pub const MAX_FORCE: f64 = 1.0e7;

/// Settings of [`analyse`], SI units.
#[derive(Debug, Clone, PartialEq)]
pub struct Settings {
    /// Quiet-standing window at the start of the record used for body weight, s.
    pub standing_duration: f64,
    /// Onset: first sample after the standing window that departs from body weight by more
    /// than this many standing SDs (plain number).
    pub onset_deviations: f64,
    /// The detected onset is moved this far back, s.
    pub onset_backtrack: f64,
    /// The plate counts as unloaded below this force, N.
    pub flight_threshold: f64,
    /// Shortest unloaded stretch accepted as a flight, and the shortest loaded stretch inside a
    /// flight accepted as a touch-down unless it reaches body weight, s.
    pub min_flight_duration: f64,
    /// Frame number of the first sample: messages name frames, and times are frame numbers
    /// divided by the rate.
    pub first_frame: i64,
}

impl Default for Settings {
    fn default() -> Settings {
        Settings {
            standing_duration: 1.0,
            onset_deviations: 5.0,
            onset_backtrack: 0.030,
            flight_threshold: 20.0,
            min_flight_duration: 0.05,
            first_frame: 0,
        }
    }
}

/// Phase of a countermovement jump at one sample.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Phase {
    /// Before movement onset (quiet standing).
    Weighing = 0,
    /// From onset to the velocity minimum (force below body weight, the body speeds downward).
    Unweighting = 1,
    /// From the velocity minimum (force back above body weight) to zero velocity.
    Braking = 2,
    /// From zero velocity to take-off.
    Propulsion = 3,
    /// From take-off to touch-down.
    Flight = 4,
    /// From touch-down to the end of the record.
    Landing = 5,
}

impl Phase {
    /// The code written to the `phase` output.
    pub fn code(self) -> f64 {
        f64::from(self as u8)
    }
}

/// Everything [`analyse`] finds. Indices are sample indices into the record (0-based);
/// times are `(first_frame + index) / rate` seconds, interpolated where stated.
#[derive(Debug, Clone, PartialEq)]
pub struct Analysis {
    /// Mean force of the standing window, N.
    pub body_weight: f64,
    /// Body weight divided by standard gravity, kg.
    pub body_mass: f64,
    /// Standard deviation of the standing window, N.
    pub standing_sd: f64,
    /// First sample of the movement (after the backtrack).
    pub onset_index: usize,
    /// Time of `onset_index`, s.
    pub onset_time: f64,
    /// First sample of the velocity minimum (start of braking); equals `zero_velocity_index`
    /// when the velocity never goes negative (no countermovement).
    pub velocity_min_index: usize,
    /// First sample of propulsion (velocity back to zero or above).
    pub zero_velocity_index: usize,
    /// First sample of the flight (force below the threshold).
    pub takeoff_index: usize,
    /// Take-off time, interpolated inside the sample where the force crosses the threshold, s.
    pub takeoff_time: f64,
    /// First sample of the landing (force back at or above the threshold).
    pub touchdown_index: usize,
    /// Touch-down time, interpolated, s.
    pub touchdown_time: f64,
    /// `touchdown_time - takeoff_time`, s.
    pub flight_time: f64,
    /// Integrated velocity at `takeoff_time`, m/s.
    pub takeoff_velocity: f64,
    /// `takeoff_velocity^2 / (2 g)`, m.
    pub height_from_velocity: f64,
    /// `g flight_time^2 / 8`, m.
    pub height_from_flight_time: f64,
    /// Largest force of the propulsion phase, body weights.
    pub peak_propulsive_force: f64,
    /// Largest force of the landing phase, body weights.
    pub peak_landing_force: f64,
    /// Smallest displacement before take-off (negative: below the standing height), m.
    pub countermovement_depth: f64,
    /// Centre-of-mass vertical velocity per sample, zero before onset, m/s.
    pub velocity: Vec<f64>,
    /// Centre-of-mass vertical displacement per sample from its standing height, m.
    pub displacement: Vec<f64>,
    /// The same with the flight as the exact parabola from the take-off (its interpolated
    /// instant, velocity and displacement) under standard gravity, and the landing's integral
    /// shifted to continue from the parabola's last sample: the force samples of the flight
    /// (noise on an unloaded plate) do not move it. m.
    pub path: Vec<f64>,
    /// Phase per sample.
    pub phase: Vec<Phase>,
    /// Force per sample in body weights.
    pub body_weights: Vec<f64>,
    /// Things worth a look that did not stop the analysis.
    pub warnings: Vec<String>,
}

/// Frame numbers and times of samples, for messages and results.
struct Clock {
    first_frame: i64,
    rate: f64,
}

impl Clock {
    fn frame(&self, i: usize) -> i64 {
        self.first_frame + i as i64
    }
    fn time(&self, i: usize) -> f64 {
        self.frame(i) as f64 / self.rate
    }
}

/// The mean of some samples and their sample standard deviation (n - 1; 0 for one sample).
fn mean_sd(x: &[f64]) -> (f64, f64) {
    let n = x.len();
    let mean = x.iter().sum::<f64>() / n.max(1) as f64;
    let sd = if n > 1 {
        (x.iter().map(|f| (f - mean) * (f - mean)).sum::<f64>() / (n - 1) as f64).sqrt()
    } else {
        0.0
    };
    (mean, sd)
}

/// Analyses a vertical force record `force` (N) sampled at `rate_hz` (the record must start
/// with quiet standing, then hold one jump: take-off, flight and touch-down).
///
/// Method (see the node notes for sources and limits): body weight is the mean of the
/// standing window; the mass is body weight over standard gravity; the velocity is the
/// trapezoid-rule integral of `(F - BW) / m` from the onset, the displacement the trapezoid
/// integral of the velocity.
pub fn analyse(force: &[f64], rate_hz: f64, settings: &Settings) -> Result<Analysis, String> {
    check_settings(rate_hz, settings)?;
    let clock = Clock {
        first_frame: settings.first_frame,
        rate: rate_hz,
    };
    if let Some(i) = force.iter().position(|f| !f.is_finite()) {
        return Err(format!(
            "force at frame {} ({:.4} s) is {}; the record must be finite",
            clock.frame(i),
            clock.time(i),
            force[i]
        ));
    }
    if let Some(i) = force.iter().position(|f| f.abs() > MAX_FORCE) {
        return Err(format!(
            "force at frame {} ({:.4} s) is {:e} N, beyond {MAX_FORCE:e} N: the record must be in newtons",
            clock.frame(i),
            clock.time(i),
            force[i]
        ));
    }
    let dt = 1.0 / rate_hz;
    let n = force.len();
    let g = STANDARD_GRAVITY;
    let mut warnings = Vec::new();

    // Weighing: body weight from the quiet-standing window.
    let n_stand = (settings.standing_duration * rate_hz).round() as usize;
    if n <= n_stand {
        return Err(format!(
            "the record is shorter than the standing window: {n} samples ({:.4} s at {rate_hz} Hz), but \
             standing_duration {} s needs {n_stand} samples of quiet standing and then the jump",
            n as f64 * dt,
            settings.standing_duration
        ));
    }
    // The movement may start inside the window: the window then ends where the force first
    // leaves quiet standing (judged against the first 50 ms, at least 5 samples), stepped back
    // by onset_backtrack, however short the quiet stretch before it is.
    let n_ref = ((REFERENCE_DURATION * rate_hz).round() as usize).max(5).min(n_stand);
    let reference = &force[..n_ref];
    let (ref_mean, ref_sd) = mean_sd(reference);
    let ref_limit = (settings.onset_deviations * ref_sd).max(ONSET_FLOOR_FRACTION * ref_mean.abs());
    let back = (settings.onset_backtrack * rate_hz).round() as usize;
    // A movement, not a sway: the force goes beyond MOVEMENT_FRACTION of body weight; its start
    // is where it last left the reference band before that.
    let far = (MOVEMENT_FRACTION * ref_mean.abs()).max(ref_limit);
    let started = (n_ref..n)
        .find(|&i| (force[i] - ref_mean).abs() > far)
        .map(|far_at| {
            (n_ref..far_at)
                .rev()
                .find(|&i| (force[i] - ref_mean).abs() <= ref_limit)
                .map_or(n_ref, |i| i + 1)
        })
        .filter(|&start| start < n_stand);
    let n_stand = match started {
        Some(departure) => {
            let end = departure.saturating_sub(back).max(n_ref.min(departure)).max(2);
            warnings.push(format!(
                "the movement starts at frame {} ({:.3} s), inside the {} s standing window: body weight comes \
                 from the {:.3} s of quiet standing before it (frames {} to {})",
                clock.frame(departure),
                clock.time(departure),
                settings.standing_duration,
                end as f64 * dt,
                clock.frame(0),
                clock.frame(end - 1)
            ));
            end
        }
        None => n_stand,
    };
    if (n_stand as f64) * dt < RECOMMENDED_STANDING - 0.5 * dt {
        warnings.push(format!(
            "body weight comes from {:.3} s of quiet standing, less than the {RECOMMENDED_STANDING} s recommended \
             for weighing (Owen, Watkins, Kilduff, Bevan & Bennett 2014, J Strength Cond Res 28(6):1552-1558): a body weight \
             0.1 % off moves the take-off velocity by about 0.5 %",
            n_stand as f64 * dt
        ));
    }
    let window = &force[..n_stand];
    let (bw, sd) = mean_sd(window);
    let (w0, w1) = (clock.frame(0), clock.frame(n_stand - 1));
    if bw <= settings.flight_threshold {
        return Err(format!(
            "nobody stands on the plate in the standing window (frames {w0} to {w1}): its mean force {bw:.1} N \
             is not above flight_threshold {} N",
            settings.flight_threshold
        ));
    }
    if sd > QUIET_SD_LIMIT * bw {
        return Err(format!(
            "the standing window (frames {w0} to {w1}) is not quiet: its force SD {sd:.1} N is {:.1} % of its \
             mean {bw:.1} N (limit {:.0} %); start the record with quiet standing or shorten standing_duration",
            100.0 * sd / bw,
            100.0 * QUIET_SD_LIMIT
        ));
    }
    let mass = bw / g;

    // Onset: first departure beyond onset_deviations SDs after the window, stepped back.
    let limit = (settings.onset_deviations * sd).max(ONSET_FLOOR_FRACTION * bw);
    let Some(detected) = (n_stand..n).find(|&i| (force[i] - bw).abs() > limit) else {
        return Err(format!(
            "movement onset not found: after the standing window (from frame {}) the force never departs from \
             body weight {bw:.1} N by more than {} SD = {limit:.3} N",
            clock.frame(n_stand),
            settings.onset_deviations
        ));
    };
    let onset = detected.saturating_sub(back);
    if detected == n_stand {
        warnings.push(format!(
            "the force departs from body weight at frame {}, the first sample after the standing window: the \
             movement may have started inside the window; shorten standing_duration",
            clock.frame(detected)
        ));
    }

    // Velocity and displacement by the impulse-momentum method (trapezoid rule).
    let mut velocity = vec![0.0; n];
    let mut displacement = vec![0.0; n];
    for i in onset + 1..n {
        let net = 0.5 * (force[i - 1] + force[i]) - bw;
        velocity[i] = velocity[i - 1] + dt * net / mass;
        displacement[i] = displacement[i - 1] + 0.5 * dt * (velocity[i - 1] + velocity[i]);
    }

    // Take-off and touch-down.
    let flight = find_flight(force, onset.max(1), bw, settings, &clock, &mut warnings)?;
    let k = flight.takeoff;
    let j = flight.touchdown;
    let s = flight.takeoff_fraction;
    let f0 = force[k - 1];
    let takeoff_velocity = velocity[k - 1] + dt * (s * (f0 - bw) + 0.5 * (force[k] - f0) * s * s) / mass;
    if takeoff_velocity <= 0.0 {
        return Err(format!(
            "the integrated velocity at take-off (frame {}, {:.4} s) is {takeoff_velocity:.3} m/s, not upward: \
             the standing window does not give this jump's body weight, or the record is not a jump",
            clock.frame(k),
            flight.takeoff_time
        ));
    }
    let flight_time = flight.touchdown_time - flight.takeoff_time;
    // The flight as the parabola from the take-off: displacement at the interpolated take-off
    // by the trapezoid over the fraction s of the sample.
    let takeoff_displacement = displacement[k - 1] + 0.5 * s * dt * (velocity[k - 1] + takeoff_velocity);
    let parabola = |i: usize| {
        let tau = clock.time(i) - flight.takeoff_time;
        takeoff_displacement + takeoff_velocity * tau - 0.5 * STANDARD_GRAVITY * tau * tau
    };
    let shift = if j > k {
        parabola(j - 1) - displacement[j - 1]
    } else {
        0.0
    };
    let path: Vec<f64> = (0..n)
        .map(|i| match i {
            _ if i < k => displacement[i],
            _ if i < j => parabola(i),
            _ => displacement[i] + shift,
        })
        .collect();

    // Phase boundaries.
    let velocity_min_index = (onset..k)
        .reduce(|best, i| if velocity[i] < velocity[best] { i } else { best })
        .unwrap_or(onset);
    let (velocity_min_index, zero_velocity_index) = if velocity[velocity_min_index] < 0.0 {
        let zero = (velocity_min_index..k).find(|&i| velocity[i] >= 0.0).unwrap_or(k);
        (velocity_min_index, zero)
    } else {
        (onset, onset)
    };
    let phase: Vec<Phase> = (0..n)
        .map(|i| match i {
            _ if i < onset => Phase::Weighing,
            _ if i < velocity_min_index => Phase::Unweighting,
            _ if i < zero_velocity_index => Phase::Braking,
            _ if i < k => Phase::Propulsion,
            _ if i < j => Phase::Flight,
            _ => Phase::Landing,
        })
        .collect();

    let body_weights: Vec<f64> = force.iter().map(|f| f / bw).collect();
    let peak = |range: std::ops::Range<usize>| range.map(|i| body_weights[i]).fold(f64::NEG_INFINITY, f64::max);
    let peak_propulsive_force = peak(zero_velocity_index.min(k - 1)..k);
    let peak_landing_force = peak(j..n);
    let countermovement_depth = displacement[onset..k].iter().copied().fold(0.0, f64::min);

    Ok(Analysis {
        body_weight: bw,
        body_mass: mass,
        standing_sd: sd,
        onset_index: onset,
        onset_time: clock.time(onset),
        velocity_min_index,
        zero_velocity_index,
        takeoff_index: k,
        takeoff_time: flight.takeoff_time,
        touchdown_index: j,
        touchdown_time: flight.touchdown_time,
        flight_time,
        takeoff_velocity,
        height_from_velocity: takeoff_velocity * takeoff_velocity / (2.0 * g),
        height_from_flight_time: g * flight_time * flight_time / 8.0,
        peak_propulsive_force,
        peak_landing_force,
        countermovement_depth,
        velocity,
        displacement,
        path,
        phase,
        body_weights,
        warnings,
    })
}

fn check_settings(rate_hz: f64, s: &Settings) -> Result<(), String> {
    if !rate_hz.is_finite() || rate_hz < MIN_RATE_HZ {
        return Err(format!(
            "the sample rate {rate_hz} Hz is below {MIN_RATE_HZ} Hz: run the graph at the plate's sample rate \
             (for example `rate 1000 fps` for a 1000 Hz record)"
        ));
    }
    let checks = [
        ("standing_duration", s.standing_duration, s.standing_duration > 0.0),
        ("onset_deviations", s.onset_deviations, s.onset_deviations > 0.0),
        ("onset_backtrack", s.onset_backtrack, s.onset_backtrack >= 0.0),
        ("flight_threshold", s.flight_threshold, s.flight_threshold > 0.0),
        (
            "min_flight_duration",
            s.min_flight_duration,
            s.min_flight_duration >= 0.0,
        ),
    ];
    for (name, value, ok) in checks {
        if !ok || !value.is_finite() {
            return Err(format!("setting `{name}` = {value} is out of range"));
        }
    }
    if (s.standing_duration * rate_hz).round() < 2.0 {
        return Err(format!(
            "standing_duration {} s holds fewer than 2 samples at {rate_hz} Hz",
            s.standing_duration
        ));
    }
    Ok(())
}

/// A flight found in the record.
struct Flight {
    /// First unloaded sample.
    takeoff: usize,
    /// Where in the sample before `takeoff` the force crosses the threshold (0..1).
    takeoff_fraction: f64,
    takeoff_time: f64,
    /// First loaded sample of the landing.
    touchdown: usize,
    touchdown_time: f64,
}

/// Finds the first flight at or after sample `from`.
///
/// An unloaded stretch (force below the threshold) shorter than `min_flight_duration` is not a
/// flight. Inside a flight, a loaded stretch shorter than `min_flight_duration` whose force
/// stays below body weight is taken as noise and skipped (a real landing lasts longer or
/// loads the plate beyond body weight); with `min_flight_duration` 0 nothing is skipped.
fn find_flight(
    force: &[f64],
    from: usize,
    bw: f64,
    s: &Settings,
    clock: &Clock,
    warnings: &mut Vec<String>,
) -> Result<Flight, String> {
    let n = force.len();
    let thr = s.flight_threshold;
    let dt = 1.0 / clock.rate;
    // Interpolated time of a crossing of the threshold between samples i - 1 and i.
    let crossing = |i: usize| {
        let (a, b) = (force[i - 1], force[i]);
        let frac = ((a - thr) / (a - b)).clamp(0.0, 1.0);
        (frac, clock.time(i - 1) + frac * dt)
    };
    let mut search = from.max(1);
    loop {
        let Some(k) = (search..n).find(|&i| force[i - 1] >= thr && force[i] < thr) else {
            return Err(format!(
                "no flight found: after the movement onset (frame {}) the force never falls below \
                 flight_threshold {thr} N for at least min_flight_duration {} s",
                clock.frame(from),
                s.min_flight_duration
            ));
        };
        let (takeoff_fraction, takeoff_time) = crossing(k);
        // Walk the loaded stretches after take-off until one counts as the touch-down.
        let mut i = k;
        let touchdown = loop {
            let Some(j) = (i..n).find(|&x| force[x] >= thr) else {
                return Err(format!(
                    "no complete flight found: take-off at frame {} ({takeoff_time:.4} s) but the force stays \
                     below flight_threshold {thr} N until the record ends at frame {}; record the landing",
                    clock.frame(k),
                    clock.frame(n - 1)
                ));
            };
            let end = (j..n).find(|&x| force[x] < thr);
            let Some(e) = end else { break j };
            let loaded = crossing(e).1 - crossing(j).1;
            let top = force[j..e].iter().copied().fold(f64::NEG_INFINITY, f64::max);
            if loaded < s.min_flight_duration && top < bw {
                warnings.push(format!(
                    "ignored a {:.1} ms load of at most {top:.1} N inside the flight at frames {} to {} (shorter \
                     than min_flight_duration and below body weight); if it was a touch-down, lower \
                     min_flight_duration",
                    1000.0 * loaded,
                    clock.frame(j),
                    clock.frame(e - 1)
                ));
                i = e;
                continue;
            }
            break j;
        };
        let touchdown_time = crossing(touchdown).1;
        if touchdown_time - takeoff_time < s.min_flight_duration {
            warnings.push(format!(
                "ignored a {:.1} ms unloaded stretch at frames {} to {} (shorter than min_flight_duration)",
                1000.0 * (touchdown_time - takeoff_time),
                clock.frame(k),
                clock.frame(touchdown - 1)
            ));
            search = touchdown + 1;
            continue;
        }
        if let Some(x) = (touchdown..n).find(|&x| force[x] < thr)
            && force[touchdown..x].iter().all(|&f| f < bw)
        {
            warnings.push(format!(
                "the touch-down at frame {} may be a spike: the force falls below flight_threshold again at \
                 frame {} without reaching body weight; raise flight_threshold above the unloaded plate's noise",
                clock.frame(touchdown),
                clock.frame(x)
            ));
        }
        return Ok(Flight {
            takeoff: k,
            takeoff_fraction,
            takeoff_time,
            touchdown,
            touchdown_time,
        });
    }
}

/// The quiet stretch that separates two jumps is searched with windows of this length, s (of
/// our own, no source: long enough to average a plate's noise, short enough to fit between
/// two jumps).
pub const SPLIT_WINDOW: f64 = 0.1;

/// One jump of a record: where it starts (a sample index into the whole record), where it
/// ends (exclusive), and its analysis (indices inside it are relative to `start`).
#[derive(Debug, Clone, PartialEq)]
pub struct RecordedJump {
    /// First sample of the jump's stretch of the record.
    pub start: usize,
    /// One past its last sample.
    pub end: usize,
    /// The analysis of that stretch.
    pub analysis: Analysis,
}

/// Analyses a record that may hold several jumps, each after its own quiet standing: the
/// flights (the force below `flight_threshold` for at least `min_flight_duration`) are found
/// first; between consecutive flights the record is split at the start of the quiet stretch
/// before the next jump (the quietest `SPLIT_WINDOW` between the two, extended back while the
/// force stays within `onset_deviations` of that window's SD of its mean, the onset's own test
/// of quiet standing), and each stretch is analysed by [`analyse`]
/// on its own: its own body weight, onset, phases and heights. A record with one flight is one
/// jump, analysed whole. Errors name the jump and its frames.
pub fn analyse_jumps(force: &[f64], rate_hz: f64, settings: &Settings) -> Result<Vec<RecordedJump>, String> {
    check_settings(rate_hz, settings)?;
    let flights = flights(force, rate_hz, settings);
    let mut cuts = vec![0];
    for pair in flights.windows(2) {
        let (landed, next) = (pair[0].1, pair[1].0);
        // A new jump needs quiet standing before it: a gap without a quiet window (a spike
        // inside a flight, hops in a row) does not split the record.
        if let Some(cut) = quiet_start(force, rate_hz, landed, next, settings.onset_deviations) {
            cuts.push(cut);
        }
    }
    cuts.push(force.len());
    let count = cuts.len() - 1;
    let mut jumps = Vec::with_capacity(count);
    for (k, w) in cuts.windows(2).enumerate() {
        let (start, end) = (w[0], w[1]);
        let part = Settings {
            first_frame: settings.first_frame + start as i64,
            ..settings.clone()
        };
        let analysis = analyse(&force[start..end], rate_hz, &part).map_err(|e| {
            if count > 1 {
                format!(
                    "jump {} of {count} (frames {} to {}): {e}",
                    k + 1,
                    part.first_frame,
                    part.first_frame + (end - start) as i64 - 1
                )
            } else {
                e
            }
        })?;
        jumps.push(RecordedJump { start, end, analysis });
    }
    Ok(jumps)
}

/// The unloaded stretches (first sample below the threshold, first sample back at or above
/// it) at least `min_flight_duration` long.
fn flights(force: &[f64], rate_hz: f64, settings: &Settings) -> Vec<(usize, usize)> {
    let shortest = (settings.min_flight_duration * rate_hz).ceil().max(1.0) as usize;
    let mut out = Vec::new();
    let mut i = 0;
    while i < force.len() {
        if force[i] < settings.flight_threshold {
            let start = i;
            while i < force.len() && force[i] < settings.flight_threshold {
                i += 1;
            }
            if i - start >= shortest {
                out.push((start, i));
            }
        } else {
            i += 1;
        }
    }
    out
}

/// Where the quiet standing before the next jump starts, between `from` and `to`, if there is
/// one: the window of `SPLIT_WINDOW` with the least standard deviation relative to its mean
/// (running sums, linear in the stretch), quiet as a weighing window must be
/// (`QUIET_SD_LIMIT`), extended back while the force stays within `deviations` of that
/// window's SD of its mean (at least `ONSET_FLOOR_FRACTION` of it).
fn quiet_start(force: &[f64], rate_hz: f64, from: usize, to: usize, deviations: f64) -> Option<usize> {
    let len = ((SPLIT_WINDOW * rate_hz).round() as usize).max(2);
    if to < from + 2 * len {
        return None;
    }
    let (mut sum, mut squares) = (0.0, 0.0);
    for &f in &force[from..from + len] {
        sum += f;
        squares += f * f;
    }
    let n = len as f64;
    let spread = |sum: f64, squares: f64| {
        let mean = sum / n;
        ((squares / n - mean * mean).max(0.0)).sqrt() / mean.abs().max(1e-12)
    };
    let mut best = (spread(sum, squares), from);
    for s in from + 1..=to - len {
        let (out, add) = (force[s - 1], force[s + len - 1]);
        sum += add - out;
        squares += add * add - out * out;
        let q = spread(sum, squares);
        if q < best.0 {
            best = (q, s);
        }
    }
    // The window's mean and SD afresh (the running sums carry rounding); quiet as the
    // weighing window must be.
    let (mut start, window) = (best.1, &force[best.1..best.1 + len]);
    let (mean, sd) = mean_sd(window);
    if sd.is_nan() || sd > QUIET_SD_LIMIT * mean.abs() {
        return None;
    }
    let band = (deviations * sd).max(ONSET_FLOOR_FRACTION * mean.abs());
    while start > from && (force[start - 1] - mean).abs() <= band {
        start -= 1;
    }
    Some(start)
}

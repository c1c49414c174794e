//! Contact detection shared by the `contact` nodes (and free for other crates to reuse):
//! per-frame contact states from a threshold, phases, absorption of short phases, and the
//! first flight with take-off and touch-down interpolated inside their frames.
//!
//! Conventions (the same in every function here):
//!
//! - A *phase* is a maximal run of frames with the same state (contact or flight).
//! - A foot height is in contact when it is strictly below the threshold; a vertical force is
//!   in contact when it is strictly above the threshold. A value exactly at the threshold is
//!   flight in both cases.
//! - A phase of `n` frames lasts `n` frame durations.

use std::cmp::Reverse;
use std::collections::BinaryHeap;

/// A maximal run of frames `start..start + len` with one state.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Phase {
    /// True for contact, false for flight.
    pub contact: bool,
    /// First frame index of the run (0-based within the record).
    pub start: usize,
    /// Number of frames (at least 1).
    pub len: usize,
}

impl Phase {
    /// One past the last frame index.
    pub fn end(&self) -> usize {
        self.start + self.len
    }
}

/// Splits per-frame states into phases, in order. Empty input gives no phases.
pub fn phases(contact: &[bool]) -> Vec<Phase> {
    let mut out: Vec<Phase> = Vec::new();
    for (i, &c) in contact.iter().enumerate() {
        match out.last_mut() {
            Some(p) if p.contact == c => p.len += 1,
            _ => out.push(Phase {
                contact: c,
                start: i,
                len: 1,
            }),
        }
    }
    out
}

/// Per-frame states from phases (the inverse of [`phases`]).
pub fn states(phases: &[Phase]) -> Vec<bool> {
    let mut out = Vec::with_capacity(phases.last().map_or(0, Phase::end));
    for p in phases {
        out.extend(std::iter::repeat_n(p.contact, p.len));
    }
    out
}

/// Contact states from a foot height with hysteresis.
///
/// A frame below `threshold` is in contact. A maximal run of frames at or above `threshold`
/// is a flight only if some frame of it reaches `threshold + hysteresis`; otherwise the whole
/// run stays in contact. This is a two-level (Schmitt) trigger whose flights are dated back to
/// the frame where the height last rose through `threshold`: contact begins when the height
/// falls below `threshold`, and a departure from it counts only once the height reaches
/// `threshold + hysteresis`. The first frame is decided by the same rule (no assumed state).
pub fn height_contact(height: &[f64], threshold: f64, hysteresis: f64) -> Vec<bool> {
    let leave = threshold + hysteresis;
    let mut contact = vec![true; height.len()];
    let mut i = 0;
    while i < height.len() {
        if height[i] < threshold {
            i += 1;
            continue;
        }
        let start = i;
        let mut reaches = false;
        while i < height.len() && height[i] >= threshold {
            reaches |= height[i] >= leave;
            i += 1;
        }
        if reaches {
            contact[start..i].fill(false);
        }
    }
    contact
}

/// Contact states from a vertical force: contact where the force is strictly above `threshold`.
pub fn force_contact(force: &[f64], threshold: f64) -> Vec<bool> {
    force.iter().map(|&f| f > threshold).collect()
}

/// Whether a phase of `len` frames of `dt` seconds is shorter than `min_duration` seconds.
/// A relative allowance of 1e-9 keeps a phase of exactly `min_duration` (for example 20 frames
/// of 1 ms against 0.02 s) from being called short by rounding.
pub fn is_short(len: usize, dt: f64, min_duration: f64) -> bool {
    (len as f64) * dt < min_duration * (1.0 - 1e-9)
}

/// Absorbs interior phases shorter than `min_duration` into their neighbours.
///
/// Repeatedly, the shortest interior phase that is shorter than `min_duration` (the earliest
/// one on a tie) takes the state of its two neighbours, which then merge with it into one
/// phase; this repeats until no interior phase is short. The first and the last phase are
/// never absorbed and never change state: they are cut by the ends of the record, so their
/// real length is unknown. Merging only removes phase boundaries, so every boundary left is one
/// of the input's.
pub fn absorb_short_phases(phases: &[Phase], dt: f64, min_duration: f64) -> Vec<Phase> {
    let n = phases.len();
    if n < 3 {
        return phases.to_vec();
    }
    let mut len: Vec<usize> = phases.iter().map(|p| p.len).collect();
    let mut prev: Vec<Option<usize>> = (0..n).map(|i| i.checked_sub(1)).collect();
    let mut next: Vec<Option<usize>> = (0..n).map(|i| (i + 1 < n).then_some(i + 1)).collect();
    let mut alive = vec![true; n];
    // Min-heap of (length, start, index); stale entries are skipped when popped.
    let mut heap = BinaryHeap::new();
    for i in 1..n - 1 {
        if is_short(len[i], dt, min_duration) {
            heap.push(Reverse((len[i], phases[i].start, i)));
        }
    }
    while let Some(Reverse((l, _, i))) = heap.pop() {
        if !alive[i] || len[i] != l {
            continue;
        }
        let (Some(p), Some(q)) = (prev[i], next[i]) else {
            continue;
        };
        len[p] += len[i] + len[q];
        alive[i] = false;
        alive[q] = false;
        next[p] = next[q];
        if let Some(r) = next[q] {
            prev[r] = Some(p);
        }
        if prev[p].is_some() && next[p].is_some() && is_short(len[p], dt, min_duration) {
            heap.push(Reverse((len[p], phases[p].start, p)));
        }
    }
    (0..n)
        .filter(|&i| alive[i])
        .map(|i| Phase {
            contact: phases[i].contact,
            start: phases[i].start,
            len: len[i],
        })
        .collect()
}

/// Time at which the straight line through `(t0, x0)` and `(t1, x1)` reaches `level`, kept
/// inside `[t0, t1]`. When `x0 == x1` (no crossing inside the frame) it returns `t1`.
pub fn crossing_time(t0: f64, x0: f64, t1: f64, x1: f64, level: f64) -> f64 {
    let dx = x1 - x0;
    let frac = if dx == 0.0 {
        1.0
    } else {
        ((level - x0) / dx).clamp(0.0, 1.0)
    };
    t0 + frac * (t1 - t0)
}

/// A flight with contact before and after it inside the record.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Flight {
    /// The flight's frames.
    pub phase: Phase,
    /// Take-off: where the signal crosses the threshold between the last contact frame and
    /// the first flight frame (linear interpolation), in seconds.
    pub takeoff_time: f64,
    /// Touch-down: where the signal crosses the threshold between the last flight frame and
    /// the first contact frame after it, in seconds.
    pub touchdown_time: f64,
}

impl Flight {
    /// Touch-down time minus take-off time, in seconds.
    pub fn flight_time(&self) -> f64 {
        self.touchdown_time - self.takeoff_time
    }
}

/// Every flight phase with a contact phase on both sides, in order, with its take-off and
/// touch-down interpolated on `signal` at `threshold`; `time(i)` is the time of frame `i`.
pub fn complete_flights(phases: &[Phase], signal: &[f64], threshold: f64, time: impl Fn(usize) -> f64) -> Vec<Flight> {
    phases
        .iter()
        .filter(|p| !p.contact && p.start > 0 && p.end() < signal.len())
        .map(|p| {
            let (a, b) = (p.start, p.end());
            Flight {
                phase: *p,
                takeoff_time: crossing_time(time(a - 1), signal[a - 1], time(a), signal[a], threshold),
                touchdown_time: crossing_time(time(b - 1), signal[b - 1], time(b), signal[b], threshold),
            }
        })
        .collect()
}

/// Mean and standard deviation of the force on an unloaded plate, estimated from one run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct UnloadedNoise {
    /// First frame of the run used.
    pub start: usize,
    /// Frames in the run.
    pub len: usize,
    /// Mean force over the run (the plate's zero offset), N.
    pub mean: f64,
    /// Sample standard deviation (n - 1 in the denominator), N.
    pub sd: f64,
}

/// The unloaded plate's noise, taken from the longest run of frames with force at or below
/// `provisional` (the earliest on a tie). `None` when that run has fewer than 2 frames.
pub fn unloaded_noise(force: &[f64], provisional: f64) -> Option<UnloadedNoise> {
    let mut best: Option<(usize, usize)> = None;
    let mut i = 0;
    while i < force.len() {
        if force[i] > provisional {
            i += 1;
            continue;
        }
        let start = i;
        while i < force.len() && force[i] <= provisional {
            i += 1;
        }
        if best.is_none_or(|(_, l)| i - start > l) {
            best = Some((start, i - start));
        }
    }
    let (start, len) = best.filter(|&(_, l)| l >= 2)?;
    let run = &force[start..start + len];
    let mean = run.iter().sum::<f64>() / len as f64;
    let var = run.iter().map(|f| (f - mean) * (f - mean)).sum::<f64>() / (len - 1) as f64;
    Some(UnloadedNoise {
        start,
        len,
        mean,
        sd: var.sqrt(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ph(spec: &[(bool, usize)]) -> Vec<Phase> {
        let mut start = 0;
        spec.iter()
            .map(|&(contact, len)| {
                let p = Phase { contact, start, len };
                start += len;
                p
            })
            .collect()
    }

    #[test]
    fn phases_and_states_round_trip() {
        let s = [true, true, false, true, true, true, false, false];
        let p = phases(&s);
        assert_eq!(p, ph(&[(true, 2), (false, 1), (true, 3), (false, 2)]));
        assert_eq!(states(&p), s);
        assert!(phases(&[]).is_empty());
    }

    /// Hand-worked: with min 3 frames (dt 1), C5 F1 C1 F1 C5 F10 C4: the earliest 1-frame
    /// interior phase (F at 5) merges into C5+F1+C1 = C7; then F1 at 7 merges into C7+F1+C5 =
    /// C13; F10 and the last phase C4 stay. Counted by hand from the rule in the doc comment.
    #[test]
    fn absorbs_shortest_interior_phases_first_and_keeps_the_ends() {
        let p = ph(&[
            (true, 5),
            (false, 1),
            (true, 1),
            (false, 1),
            (true, 5),
            (false, 10),
            (true, 4),
        ]);
        let got = absorb_short_phases(&p, 1.0, 3.0);
        assert_eq!(got, ph(&[(true, 13), (false, 10), (true, 4)]));
        // Short first and last phases are kept: they are cut by the record.
        let p = ph(&[(false, 1), (true, 10), (false, 2)]);
        assert_eq!(absorb_short_phases(&p, 1.0, 3.0), p);
    }

    /// A phase exactly as long as the minimum is kept (20 frames of 1 ms against 0.02 s),
    /// one frame less is absorbed.
    #[test]
    fn a_phase_of_exactly_the_minimum_is_kept() {
        assert!(!is_short(20, 0.001, 0.02));
        assert!(is_short(19, 0.001, 0.02));
        assert!(!is_short(1, 0.001, 0.0));
    }

    /// Hysteresis: runs at or above the threshold that never reach threshold + hysteresis
    /// stay in contact; a run that does is flight from its first frame.
    #[test]
    fn height_hysteresis_classifies_whole_runs() {
        let h = [0.012, 0.0, 0.011, 0.0, 0.011, 0.02, 0.011, 0.009];
        let c = height_contact(&h, 0.01, 0.005);
        assert_eq!(c, [true, true, true, true, false, false, false, true]);
        // Without hysteresis every frame at or above the threshold is flight.
        let c = height_contact(&h, 0.01, 0.0);
        assert_eq!(c, [false, true, false, true, false, false, false, true]);
    }

    /// Linear interpolation of a crossing: the line through (1, 0) and (2, 4) reaches 1 at
    /// t = 1.25 (straight-line algebra).
    #[test]
    fn crossing_time_is_linear_interpolation() {
        assert_eq!(crossing_time(1.0, 0.0, 2.0, 4.0, 1.0), 1.25);
        assert_eq!(crossing_time(1.0, 4.0, 2.0, 0.0, 1.0), 1.75);
        assert_eq!(crossing_time(1.0, 3.0, 2.0, 3.0, 1.0), 2.0);
    }

    /// Sample mean and SD of 1, 2, 3, 4 (inside the run below 5) are 2.5 and
    /// sqrt(5/3) = 1.2909944... (definition of the sample standard deviation).
    #[test]
    fn unloaded_noise_uses_the_longest_run() {
        let f = [100.0, 1.0, 100.0, 1.0, 2.0, 3.0, 4.0, 100.0, 0.0, 0.0];
        let n = unloaded_noise(&f, 5.0).expect("a run");
        assert_eq!((n.start, n.len), (3, 4));
        assert!((n.mean - 2.5).abs() < 1e-15);
        assert!((n.sd - (5.0f64 / 3.0).sqrt()).abs() < 1e-15);
        assert_eq!(unloaded_noise(&[100.0, 1.0, 100.0], 5.0), None);
    }
}

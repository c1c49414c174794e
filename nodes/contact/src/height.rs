use heft_node_sdk::{Dimension, Io, Node, NodeError, NodeSpec, ParamSpec, Params, PortKind, PortSpec, SummarySpec};

use crate::detect;

/// Contact from a foot height: a threshold with hysteresis, then short phases absorbed.
#[derive(Debug)]
pub struct FromHeight;

impl Node for FromHeight {
    fn spec() -> NodeSpec {
        NodeSpec {
            name: "from_height".into(),
            doc: "Contact flag from a foot height, with the first flight's take-off, touch-down and flight time."
                .into(),
            notes: "Method: a frame whose height is below `threshold` is in contact. A run of frames at or above \
                    `threshold` counts as flight only if it reaches `threshold + hysteresis`; otherwise it stays in \
                    contact. This is a two-level (Schmitt) trigger (O. H. Schmitt 1938, 'A thermionic trigger', \
                    J. Sci. Instrum. 15) whose flights are dated back to where the height rose through \
                    `threshold`, so take-off and touch-down are both measured at the same level. The first frame \
                    is classified by the same rule. Then every interior phase (contact or flight) shorter than \
                    `min_phase_duration` is absorbed, shortest first and the earliest on a tie: it takes the \
                    state of its two neighbours, which merge with it. A phase of n frames lasts n frame \
                    durations. The first and last phases are never absorbed or changed: they are cut by the \
                    record, so their length is unknown. Summaries: the first flight with contact on both sides; \
                    take-off and touch-down are where the straight line between the two frames around the \
                    phase boundary crosses `threshold`: exact when the height is straight across that frame, \
                    otherwise within that frame, so the flight time is within two frames (a bend of the path \
                    inside both crossing frames can make it more than one frame off). Limits: the times are those of the threshold height, not of \
                    the ground: each end of the flight moves inward by about threshold / foot speed (5 ms for \
                    0.01 m at 2 m/s); heights are of one foot point above flat ground at z = 0; sliding, toe-only contact and uneven ground are not seen; a record with no flight \
                    between two contacts is an error, as the summaries cannot be reported."
                .into(),
            inputs: vec![PortSpec::new(
                "foot_height",
                PortKind::Scalar,
                Dimension::Length,
                "Height of the foot (sole point) above the ground.",
            )],
            outputs: vec![PortSpec::new(
                "contact",
                PortKind::Flag,
                Dimension::Dimensionless,
                "1 while the foot is on the ground, 0 in flight.",
            )],
            params: vec![
                ParamSpec::number(
                    "threshold",
                    Dimension::Length,
                    0.01,
                    (0.0, 1.0),
                    "Contact while the height is below this; take-off and touch-down are timed at this height.",
                ),
                ParamSpec::number(
                    "hysteresis",
                    Dimension::Length,
                    0.005,
                    (0.0, 0.5),
                    "A rise above the threshold counts as flight only once it reaches threshold + hysteresis.",
                ),
                ParamSpec::number(
                    "min_phase_duration",
                    Dimension::Time,
                    0.03,
                    (0.0, 1.0),
                    "Interior contact or flight phases shorter than this are absorbed into their neighbours.",
                ),
            ],
            summaries: vec![
                SummarySpec::new(
                    "takeoff_time",
                    Dimension::Time,
                    "Take-off of the first flight, interpolated where the height crosses the threshold.",
                ),
                SummarySpec::new(
                    "touchdown_time",
                    Dimension::Time,
                    "Touch-down ending the first flight, interpolated where the height crosses the threshold.",
                ),
                SummarySpec::new(
                    "flight_time",
                    Dimension::Time,
                    "Touch-down time minus take-off time of the first flight.",
                ),
            ],
        }
    }

    fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
        let threshold = params.number("threshold")?;
        let hysteresis = params.number("hysteresis")?;
        let min_duration = params.number("min_phase_duration")?;
        let height = crate::scalar_input(io, "foot_height", "m")?;
        let dt = io.timeline().dt();
        let raw = detect::phases(&detect::height_contact(&height, threshold, hysteresis));
        let phases = detect::absorb_short_phases(&raw, dt, min_duration);
        let note = crate::cut_flight_note(&phases);
        crate::report(io, &phases, &height, threshold, |tl| {
            let (i, max) = height
                .iter()
                .copied()
                .enumerate()
                .fold((0, f64::NEG_INFINITY), |b, (i, h)| if h > b.1 { (i, h) } else { b });
            format!(
                "no flight found between two contacts: the largest foot height is {max} m (frame {}) and the \
                 threshold is {threshold} m (a flight must reach threshold + hysteresis = {} m and last at least \
                 min_phase_duration = {min_duration} s){note}",
                tl.frame_number(i),
                threshold + hysteresis
            )
        })
    }
}

#[cfg(test)]
mod tests {
    use heft_node_sdk::{Node, ParamValue, Params};

    use super::FromHeight;
    use crate::testing::{run, timeline, transitions};

    fn params(threshold: f64, hysteresis: f64, min: f64) -> Params {
        Params::defaults(&FromHeight::spec())
            .and_then(|p| p.with("threshold", ParamValue::Number(threshold)))
            .and_then(|p| p.with("hysteresis", ParamValue::Number(hysteresis)))
            .and_then(|p| p.with("min_phase_duration", ParamValue::Number(min)))
            .expect("valid parameters")
    }

    /// A piecewise-linear foot path (invented): on the ground until 0.203 s, up at 0.8 m/s,
    /// down at 1.25 m/s (the two lines meet at about 0.244 m), back on the ground at 0.703 s. The 0.01 m crossings are
    /// at 0.203 + 0.01 / 0.8 = 0.2155 s and, with the descent reaching 0 at 0.703 s, at
    /// 0.703 - 0.01 / 1.25 = 0.695 s (straight-line algebra). Both frames around each crossing
    /// lie on the same straight segment, so linear interpolation is exact (to round-off).
    #[test]
    fn clean_piecewise_linear_crossings_are_exact() {
        let h = |t: f64| -> f64 {
            let up = 0.8 * (t - 0.203);
            let down = 1.25 * (0.703 - t);
            up.min(down).max(0.0)
        };
        let tl = timeline(100, 100);
        let heights: Vec<f64> = (0..100).map(|i| h(tl.time(i))).collect();
        let (flags, s, warnings) = run::<FromHeight>(&params(0.01, 0.005, 0.03), tl, &heights).expect("flight");
        assert!((s[0] - 0.2155).abs() < 1e-12, "take-off {}", s[0]);
        assert!((s[1] - 0.695).abs() < 1e-12, "touch-down {}", s[1]);
        assert!((s[2] - 0.4795).abs() < 1e-12, "flight time {}", s[2]);
        // Flag: flight from frame 22 (0.22 s, the first frame at or above 0.01 m) through
        // frame 69 (0.69 s, 0.01625 m); frame 70 is at 0.00375 m.
        assert_eq!(flags[21], 1.0);
        assert!(flags[22..70].iter().all(|&f| f == 0.0));
        assert_eq!(flags[70], 1.0);
        assert_eq!(transitions(&flags), 2);
        assert!(warnings.is_empty());
    }

    /// The limit of interpolation: at 25 fps (dt = 0.04 s) a foot leaves the ground at
    /// 0.19 s at 5 m/s and reaches 0.05 m at 0.20 s, holds, and comes down at 5 m/s from
    /// 0.40 s to 0.41 s. True 0.01 m crossings (straight-line algebra): 0.19 + 0.002 = 0.192 s
    /// and 0.41 - 0.002 = 0.408 s, a flight of 0.216 s. The frames around them are
    /// (0.16 s, 0 m)-(0.20 s, 0.05 m) and (0.40 s, 0.05 m)-(0.44 s, 0 m), whose chords cross
    /// 0.01 m at 0.16 + 0.04 / 5 = 0.168 s and 0.40 + 0.04 * 4 / 5 = 0.432 s: 0.264 s of flight,
    /// 1.2 frames too long. Each event stays within its frame; the flight time can be up to two
    /// frames off when the foot path bends inside the crossing frames.
    #[test]
    fn a_kink_inside_the_crossing_frame_can_cost_more_than_a_frame() {
        let tl = timeline(20, 25);
        let h: Vec<f64> = (0..20)
            .map(|i| {
                let t = tl.time(i);
                (5.0 * (t - 0.19)).min(5.0 * (0.41 - t)).clamp(0.0, 0.05)
            })
            .collect();
        let (_, s, _) = run::<FromHeight>(&params(0.01, 0.005, 0.03), tl, &h).expect("flight");
        assert!((s[0] - 0.168).abs() < 1e-12, "take-off {}", s[0]);
        assert!((s[1] - 0.432).abs() < 1e-12, "touch-down {}", s[1]);
        let err = s[2] - 0.216;
        assert!(err > 0.04 && err < 0.08, "flight time error {err} s");
    }

    /// Heights at 120 fps that jitter around 0.01 m before take-off and after touch-down
    /// (invented values; the jitter stays below threshold + hysteresis = 0.015 m).
    fn jittery() -> Vec<f64> {
        let mut h = vec![0.0; 10];
        h.extend([0.009, 0.0105, 0.0095, 0.011, 0.0092, 0.012]); // frames 10..=15
        h.extend([0.02, 0.05, 0.1, 0.15, 0.1, 0.05, 0.02]); // frames 16..=22: flight
        h.extend([0.012, 0.009, 0.011, 0.008]); // frames 23..=26
        h.extend(vec![0.0; 10]);
        h
    }

    /// With hysteresis, the jitter gives one take-off and one touch-down. Expected crossings by
    /// hand: the rise from 0.0092 m (frame 14) to 0.012 m (frame 15) passes 0.01 m at
    /// (0.01 - 0.0092) / 0.0028 = 2/7 of the frame; the fall from 0.012 m (frame 23) to
    /// 0.009 m (frame 24) passes it at 2/3 of the frame.
    #[test]
    fn hysteresis_removes_chatter() {
        let tl = timeline(37, 120);
        let dt = 1.0 / 120.0;
        let h = jittery();
        // Without hysteresis or minimum duration the same data chatter (the test data do chatter).
        let (flags, _, _) = run::<FromHeight>(&params(0.01, 0.0, 0.0), tl, &h).expect("flights");
        assert_eq!(transitions(&flags), 8);
        let (flags, s, warnings) = run::<FromHeight>(&params(0.01, 0.005, 0.0), tl, &h).expect("flight");
        assert_eq!(transitions(&flags), 2);
        assert!(flags[15..=23].iter().all(|&f| f == 0.0) && flags[14] == 1.0 && flags[24] == 1.0);
        assert!((s[0] - (14.0 + 2.0 / 7.0) * dt).abs() < 1e-12, "take-off {}", s[0]);
        assert!((s[1] - (23.0 + 2.0 / 3.0) * dt).abs() < 1e-12, "touch-down {}", s[1]);
        assert!(warnings.is_empty(), "{warnings:?}");
    }

    /// The minimum phase duration alone (0.03 s = 3.6 frames at 120 fps) also removes the
    /// chatter. By the absorption rule (shortest first, earliest on a tie) the one-frame
    /// flights at frames 11 and 13 merge into the contact before them, so the take-off is the
    /// rise 0.0092 -> 0.012 m (frames 14-15, 2/7 of the frame); after landing, the one-frame
    /// contact at frame 24 (the earliest short phase) merges into the flight, so the
    /// touch-down is the fall 0.011 -> 0.008 m (frames 25-26, 1/3 of the frame).
    #[test]
    fn minimum_phase_duration_removes_chatter() {
        let tl = timeline(37, 120);
        let dt = 1.0 / 120.0;
        let (flags, s, _) = run::<FromHeight>(&params(0.01, 0.0, 0.03), tl, &jittery()).expect("flight");
        assert_eq!(transitions(&flags), 2);
        assert!((s[0] - (14.0 + 2.0 / 7.0) * dt).abs() < 1e-12, "take-off {}", s[0]);
        assert!((s[1] - (25.0 + 1.0 / 3.0) * dt).abs() < 1e-12, "touch-down {}", s[1]);
    }

    /// A record that starts in the air keeps its first phase as flight even when it is short,
    /// and the summaries describe the first flight with a take-off inside the record.
    #[test]
    fn a_short_first_phase_is_kept() {
        let mut h = vec![0.05]; // frame 0 in the air, one frame
        h.extend(vec![0.0; 10]); // frames 1..=10
        h.extend([0.02, 0.2, 0.3, 0.2, 0.02]); // frames 11..=15
        h.extend(vec![0.0; 5]);
        let tl = timeline(h.len(), 100);
        let (flags, s, warnings) = run::<FromHeight>(&params(0.01, 0.005, 0.03), tl, &h).expect("flight");
        assert_eq!(flags[0], 0.0, "the short first flight is kept");
        assert_eq!(flags[1], 1.0);
        // Take-off between frame 10 (0 m) and 11 (0.02 m): half a frame; touch-down between
        // frame 15 (0.02 m) and 16 (0 m): half a frame (straight-line algebra).
        assert!((s[0] - 0.105).abs() < 1e-12, "take-off {}", s[0]);
        assert!((s[1] - 0.155).abs() < 1e-12, "touch-down {}", s[1]);
        assert!(warnings.is_empty(), "{warnings:?}");
    }

    #[test]
    fn no_flight_is_an_error_naming_the_largest_height_and_the_threshold() {
        let mut h = vec![0.0; 20];
        h[7] = 0.012; // above the threshold but short of threshold + hysteresis
        let e = run::<FromHeight>(&params(0.01, 0.005, 0.03), timeline(20, 100), &h).expect_err("no flight");
        assert!(e.0.contains("largest foot height is 0.012 m (frame 7)"), "{}", e.0);
        assert!(e.0.contains("threshold is 0.01 m"), "{}", e.0);
        let e = run::<FromHeight>(&params(0.01, 0.005, 0.03), timeline(20, 100), &[0.5; 20]).expect_err("in the air");
        assert!(e.0.contains("whole record is in flight"), "{}", e.0);
    }

    #[test]
    fn refuses_non_finite_heights_and_names_the_frame() {
        let mut h = vec![0.0; 10];
        h[4] = f64::NAN;
        let mut tl = timeline(10, 24);
        tl.start_frame = 100;
        let e = run::<FromHeight>(&params(0.01, 0.005, 0.03), tl, &h).expect_err("NaN");
        assert!(e.0.contains("frame 104"), "{}", e.0);
    }

    /// Two flights: the summaries describe the first and a warning says so.
    #[test]
    fn warns_when_there_is_more_than_one_flight() {
        let mut h = vec![0.0; 5];
        h.extend([0.1; 5]); // frames 5..=9
        h.extend([0.0; 5]);
        h.extend([0.1; 5]); // frames 15..=19
        h.extend([0.0; 5]);
        let (_, s, warnings) = run::<FromHeight>(&params(0.01, 0.005, 0.03), timeline(25, 100), &h).expect("flights");
        // Take-off between frames 4 (0 m) and 5 (0.1 m) at 0.01 m: 0.1 of the frame.
        assert!((s[0] - 0.041).abs() < 1e-12, "take-off {}", s[0]);
        assert_eq!(warnings.len(), 1);
        assert!(
            warnings[0].contains("2 flights") && warnings[0].contains("frames 5..9"),
            "{warnings:?}"
        );
    }
}

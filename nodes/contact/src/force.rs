use heft_node_sdk::{Dimension, Io, Node, NodeError, NodeSpec, ParamSpec, Params, PortKind, PortSpec, SummarySpec};

use crate::detect;

/// Contact from a vertical ground reaction force: a threshold in newtons or in standard
/// deviations of the unloaded plate, then short phases absorbed.
#[derive(Debug)]
pub struct FromForce;

impl Node for FromForce {
    fn spec() -> NodeSpec {
        NodeSpec {
            name: "from_force".into(),
            doc: "Contact flag from a vertical ground reaction force, with the first flight's take-off, touch-down \
                  and flight time."
                .into(),
            notes: "Method: a frame is in contact while the force is above the threshold (a force exactly at the \
                    threshold is flight). With `method = newtons` the threshold is the `threshold` parameter. With \
                    `method = deviations` it is mean + k SD of the unloaded plate, k = `deviations`: the longest \
                    run of frames with force at or below `threshold` (the earliest on a tie) is taken as the \
                    unloaded stretch (normally the flight), and its mean and sample standard deviation are used; \
                    the `threshold` summary reports the value used. A threshold of 5 SD of the unloaded \
                    plate's force is used in countermovement-jump analysis (McMahon, Suchomel, Lake & Comfort \
                    2018, 'Understanding the key phases of the countermovement jump force-time curve', Strength \
                    Cond. J. 40(4); from memory). The 20 N default: on a real force trace a 10 N threshold gave a \
                    false touch-down from plate noise where 20 N or 5 SD did not (project observation, no \
                    published source). Then every interior phase shorter than `min_phase_duration` is \
                    absorbed, shortest first and the earliest on a tie: it takes the state of its two \
                    neighbours, which merge with it; a phase of n frames lasts n frame durations; the first and \
                    last phases are never absorbed or changed (the record cuts them). Summaries: the first \
                    flight with contact on both sides; take-off and touch-down are where the straight line \
                    between the two frames around the phase boundary crosses the threshold: exact when the \
                    force is straight across that frame, otherwise within that frame, so the flight time is \
                    within two frames. Limits: the force is the total \
                    vertical force on one plate, zeroed unloaded; if the longest stretch at or below `threshold` \
                    is not the flight (a long step-off before the jump), `deviations` measures that stretch; a \
                    record with no flight between two contacts is an error."
                .into(),
            inputs: vec![PortSpec::new(
                "force",
                PortKind::Scalar,
                Dimension::Force,
                "Vertical ground reaction force.",
            )],
            outputs: vec![PortSpec::new(
                "contact",
                PortKind::Flag,
                Dimension::Dimensionless,
                "1 while the plate is loaded, 0 in flight.",
            )],
            params: vec![
                ParamSpec::choice(
                    "method",
                    &["newtons", "deviations"],
                    "`newtons`: the threshold is `threshold`; `deviations`: mean + k SD of the unloaded plate.",
                ),
                ParamSpec::number(
                    "threshold",
                    Dimension::Force,
                    20.0,
                    (0.0, 1.0e4),
                    "Contact above this force (`newtons`); for `deviations`, the level that picks the unloaded run.",
                ),
                ParamSpec::number(
                    "deviations",
                    Dimension::Dimensionless,
                    5.0,
                    (1.0, 20.0),
                    "k for `deviations`: the threshold is the unloaded mean plus k standard deviations.",
                ),
                ParamSpec::number(
                    "min_phase_duration",
                    Dimension::Time,
                    0.02,
                    (0.0, 1.0),
                    "Interior contact or flight phases shorter than this are absorbed into their neighbours.",
                ),
            ],
            summaries: vec![
                SummarySpec::new(
                    "takeoff_time",
                    Dimension::Time,
                    "Take-off of the first flight, interpolated where the force crosses the threshold.",
                ),
                SummarySpec::new(
                    "touchdown_time",
                    Dimension::Time,
                    "Touch-down ending the first flight, interpolated where the force crosses the threshold.",
                ),
                SummarySpec::new(
                    "flight_time",
                    Dimension::Time,
                    "Touch-down time minus take-off time of the first flight.",
                ),
                SummarySpec::new(
                    "threshold",
                    Dimension::Force,
                    "The force threshold used (computed from the unloaded plate for `deviations`).",
                ),
            ],
        }
    }

    fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
        let method = params.choice("method")?;
        let provisional = params.number("threshold")?;
        let k = params.number("deviations")?;
        let min_duration = params.number("min_phase_duration")?;
        let force = crate::scalar_input(io, "force", "N")?;
        let tl = io.timeline();
        let (min_i, min_f) = force
            .iter()
            .copied()
            .enumerate()
            .fold((0, f64::INFINITY), |b, (i, f)| if f < b.1 { (i, f) } else { b });
        let threshold = match method {
            "newtons" => provisional,
            "deviations" => {
                let noise = detect::unloaded_noise(&force, provisional).ok_or_else(|| {
                    NodeError::new(format!(
                        "method `deviations` needs an unloaded stretch of at least 2 frames with force at or \
                         below `threshold` = {provisional} N to measure the plate's noise; the smallest force is \
                         {min_f} N (frame {})",
                        tl.frame_number(min_i)
                    ))
                })?;
                noise.mean + k * noise.sd
            }
            other => return Err(NodeError::new(format!("unknown method `{other}`"))),
        };
        io.summary("threshold", threshold)?;
        let raw = detect::phases(&detect::force_contact(&force, threshold));
        let phases = detect::absorb_short_phases(&raw, tl.dt(), min_duration);
        let note = crate::cut_flight_note(&phases);
        crate::report(io, &phases, &force, threshold, |tl| {
            format!(
                "no flight found between two contacts: the smallest force is {min_f} N (frame {}) and the \
                 threshold is {threshold} N (a flight must stay at or below it for at least min_phase_duration \
                 = {min_duration} s){note}",
                tl.frame_number(min_i)
            )
        })
    }
}

#[cfg(test)]
mod tests {
    use heft_node_sdk::{Node, ParamValue, Params, STANDARD_GRAVITY};

    use super::FromForce;
    use crate::testing::{run, timeline, transitions};

    fn params(method: &str, threshold: f64, min: f64) -> Params {
        Params::defaults(&FromForce::spec())
            .and_then(|p| p.with("method", ParamValue::Choice(method.into())))
            .and_then(|p| p.with("threshold", ParamValue::Number(threshold)))
            .and_then(|p| p.with("min_phase_duration", ParamValue::Number(min)))
            .expect("valid parameters")
    }

    /// A clean piecewise-linear force at 500 Hz (invented): body weight 700 N, a linear drop
    /// to 0 N between 0.1003 s and 0.1403 s, unloaded until 0.5193 s, then a rise of
    /// 14000 N/s to 1400 N. The 20 N crossings (straight-line algebra) are at
    /// 0.1003 + 0.04 (680 / 700) = 0.139157 s (between frames at 0.138 s, 40.25 N, and 0.140 s,
    /// 5.25 N) and 0.5193 + 20 / 14000 = 0.520729 s (between 0.520 s, 9.8 N, and 0.522 s,
    /// 37.8 N); both frames around each crossing lie on the same straight segment, so
    /// interpolation is exact to round-off.
    #[test]
    fn clean_crossings_are_exact() {
        let f = |t: f64| -> f64 {
            if t < 0.1003 {
                700.0
            } else if t < 0.1403 {
                700.0 * (0.1403 - t) / 0.04
            } else if t < 0.5193 {
                0.0
            } else {
                (14000.0 * (t - 0.5193)).min(1400.0)
            }
        };
        let tl = timeline(400, 500);
        let force: Vec<f64> = (0..400).map(|i| f(tl.time(i))).collect();
        let (flags, s, warnings) = run::<FromForce>(&params("newtons", 20.0, 0.02), tl, &force).expect("flight");
        let takeoff = 0.1003 + 0.04 * 680.0 / 700.0;
        let touchdown = 0.5193 + 20.0 / 14000.0;
        assert!((s[0] - takeoff).abs() < 1e-12, "take-off {} vs {takeoff}", s[0]);
        assert!((s[1] - touchdown).abs() < 1e-12, "touch-down {} vs {touchdown}", s[1]);
        assert!((s[2] - (touchdown - takeoff)).abs() < 1e-12);
        assert_eq!(s[3], 20.0);
        assert_eq!(transitions(&flags), 2);
        assert!(warnings.is_empty());
    }

    /// xorshift64* (Marsaglia 2003, 'Xorshift RNGs', J. Stat. Softw. 8(14); the * output
    /// multiplier from Vigna 2016, 'An experimental exploration of Marsaglia's xorshift
    /// generators, scrambled', ACM TOMS 42(4)), seeded, so the test is deterministic.
    struct XorShift(u64);
    impl XorShift {
        fn next_u64(&mut self) -> u64 {
            self.0 ^= self.0 >> 12;
            self.0 ^= self.0 << 25;
            self.0 ^= self.0 >> 27;
            self.0.wrapping_mul(0x2545_F491_4F6C_DD1D)
        }
        /// Uniform in (0, 1): the top 53 bits, offset by half a step so 0 never occurs.
        fn uniform(&mut self) -> f64 {
            ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
        }
        /// Standard normal by the Box-Muller transform (Box & Muller 1958, 'A note on the
        /// generation of random normal deviates', Ann. Math. Stat. 29(2)), cosine branch only.
        fn normal(&mut self) -> f64 {
            let (u1, u2) = (self.uniform(), self.uniform());
            (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
        }
    }

    const NOISE_SD: f64 = 3.5;
    /// Frames (at 1000 Hz) of the single-sample spikes inside the flight, and their readings.
    const SPIKES: [(usize, f64); 4] = [(620, 12.0), (705, 15.0), (810, 13.5), (930, 14.0)];

    /// An invented force record at 1000 Hz: Ada (58 kg) stands for 0.5 s (body weight
    /// 58 g_n = 568.8 N), is in the air for exactly 0.5 s (frames 500..=999, the plate reads
    /// only Gaussian noise of SD 3.5 N), lands with 2 body weights for 0.1 s, then stands.
    /// Every frame carries the noise; four single-sample spikes of 12-15 N sit inside the
    /// flight. The true unloading and loading fall half a frame before frames 500 and 1000,
    /// so the true flight time is 0.5 s.
    fn noisy_record() -> Vec<f64> {
        let bw = 58.0 * STANDARD_GRAVITY;
        let mut rng = XorShift(0x5EED_F00D_CAFE_1234);
        let mut force: Vec<f64> = (0..1400)
            .map(|i| {
                let clean = match i {
                    0..500 => bw,
                    500..1000 => 0.0,
                    1000..1100 => 2.0 * bw,
                    _ => bw,
                };
                clean + NOISE_SD * rng.normal()
            })
            .collect();
        for (i, f) in SPIKES {
            force[i] = f;
        }
        force
    }

    #[test]
    fn the_noise_generator_has_the_intended_spread() {
        // Sample SD of 500 normal deviates scaled by 3.5 N: within 10 % of 3.5 N (the SD of a
        // sample SD for n = 500 is about sigma / sqrt(2 n) = 3.2 %, a textbook large-sample
        // approximation), so "SD about 3.5 N" holds for this seed.
        let f = noisy_record();
        let flight: Vec<f64> = (500..1000)
            .filter(|i| !SPIKES.iter().any(|s| s.0 == *i))
            .map(|i| f[i])
            .collect();
        let n = flight.len() as f64;
        let mean = flight.iter().sum::<f64>() / n;
        let sd = (flight.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
        assert!((sd - NOISE_SD).abs() < 0.35, "sd {sd}");
        assert!(mean.abs() < 0.5, "mean {mean}");
    }

    /// 10 N with no minimum duration: the 12-15 N spikes (and any noise above 10 N) flag
    /// contact inside the flight, so the first "flight" ends at or before the first spike.
    #[test]
    fn a_10_newton_threshold_gives_a_false_touchdown() {
        let tl = timeline(1400, 1000);
        let (flags, s, _) = run::<FromForce>(&params("newtons", 10.0, 0.0), tl, &noisy_record()).expect("flights");
        for (i, _) in SPIKES {
            assert_eq!(flags[i], 1.0, "contact flagged at spike frame {i}");
        }
        assert!(
            s[1] <= 0.620,
            "false touch-down at or before the first spike, got {}",
            s[1]
        );
        assert!(s[2] < 0.125, "the reported flight is cut short: {}", s[2]);
    }

    /// 20 N, 5 SD, and 10 N with a 0.02 s minimum phase each find the one true flight,
    /// within one sample (1 ms) of the true 0.5 s.
    #[test]
    fn twenty_newtons_five_sd_or_a_minimum_phase_find_the_true_flight() {
        let tl = timeline(1400, 1000);
        let force = noisy_record();
        for (p, what) in [
            (params("newtons", 20.0, 0.0), "20 N"),
            (params("deviations", 20.0, 0.0), "5 SD"),
            (params("newtons", 10.0, 0.02), "10 N with 0.02 s"),
        ] {
            let (flags, s, warnings) = run::<FromForce>(&p, tl, &force).expect(what);
            assert_eq!(transitions(&flags), 2, "{what}: one take-off and one touch-down");
            assert!(
                flags[500..1000].iter().all(|&f| f == 0.0),
                "{what}: no contact inside the flight"
            );
            assert!((s[2] - 0.5).abs() <= 0.001, "{what}: flight time {}", s[2]);
            assert!((s[0] - 0.4995).abs() <= 0.001, "{what}: take-off {}", s[0]);
            assert!((s[1] - 0.9995).abs() <= 0.001, "{what}: touch-down {}", s[1]);
            assert!(warnings.is_empty(), "{what}: {warnings:?}");
        }
    }

    /// The 5 SD threshold is the mean plus 5 sample SDs of frames 500..=999, the longest run at
    /// or below 20 N (computed here directly from those frames, spikes included).
    #[test]
    fn five_sd_is_measured_on_the_flight() {
        let force = noisy_record();
        let run_f = &force[500..1000];
        let n = run_f.len() as f64;
        let mean = run_f.iter().sum::<f64>() / n;
        let sd = (run_f.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
        let (_, s, _) = run::<FromForce>(&params("deviations", 20.0, 0.0), timeline(1400, 1000), &force).expect("ok");
        assert!(
            (s[3] - (mean + 5.0 * sd)).abs() < 1e-9,
            "{} vs {}",
            s[3],
            mean + 5.0 * sd
        );
        // It lands between the spikes (max 15 N) and the 20 N fixed threshold for this record.
        assert!(s[3] > 15.0 && s[3] < 20.0, "{}", s[3]);
    }

    #[test]
    fn deviations_without_an_unloaded_stretch_is_an_error() {
        let force = vec![600.0; 50];
        let e = run::<FromForce>(&params("deviations", 20.0, 0.02), timeline(50, 1000), &force).expect_err("none");
        assert!(e.0.contains("unloaded stretch") && e.0.contains("600 N"), "{}", e.0);
    }

    #[test]
    fn no_flight_is_an_error_naming_the_smallest_force_and_the_threshold() {
        let mut force = vec![600.0; 50];
        force[20] = 15.0;
        force[21] = 15.0; // 2 ms below 20 N: shorter than 0.02 s, absorbed
        let e = run::<FromForce>(&params("newtons", 20.0, 0.02), timeline(50, 1000), &force).expect_err("none");
        assert!(e.0.contains("smallest force is 15 N (frame 20)"), "{}", e.0);
        assert!(e.0.contains("threshold is 20 N"), "{}", e.0);
    }
}

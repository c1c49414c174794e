//! The findings: flight, take-off, landing and contact, each measured against a closed form of
//! mechanics and judged against limits whose sources are named on [`Limits`].

use serde::Serialize;

use heft_node_sdk::math::vec3::{V3, add, dot, scale, sub};

/// Standard gravity, m/s^2 (CGPM 1901; ISO 80000-3): the SDK's.
pub const G: f64 = heft_node_sdk::STANDARD_GRAVITY;

/// A motion to audit: the whole-body centre of mass and the feet's contact, frame by frame.
#[derive(Debug, Clone, PartialEq)]
pub struct Motion {
    /// Number of the first frame.
    pub start_frame: i64,
    /// Frames per second.
    pub rate: f64,
    /// Whole-body centre of mass, m (world, Z up).
    pub com: Vec<V3>,
    /// True while a foot is on the ground.
    pub contact: Vec<bool>,
    /// Body mass, kg.
    pub mass: f64,
    /// The arms, when known: their centre of mass at each frame and their mass as a fraction
    /// of the body's.
    pub arms: Option<(Vec<V3>, f64)>,
    /// Passive chains (hair, braids, necklaces, skirt strips), each hanging from an anchor.
    pub chains: Vec<Chain>,
    /// The feet (a name and the foot's lowest joint at each frame, m), when known.
    pub feet: Vec<(String, Vec<V3>)>,
}

/// A passive chain: where it hangs from and its points (equal masses), frame by frame.
#[derive(Debug, Clone, PartialEq)]
pub struct Chain {
    /// Its name in messages (`braid`, `ponytail_1`).
    pub name: String,
    /// The anchor's position at each frame, m.
    pub anchor: Vec<V3>,
    /// The chain's points at each frame (`points[frame][k]`), m.
    pub points: Vec<Vec<V3>>,
}

impl Motion {
    fn time(&self, i: usize) -> f64 {
        i as f64 / self.rate
    }
    fn frame(&self, i: usize) -> i64 {
        self.start_frame + i as i64
    }
    fn z(&self, i: usize) -> f64 {
        self.com[i][2]
    }
}

/// How serious a finding is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Severity {
    /// Worth a look: off, but within what a stylised motion may do.
    Warning,
    /// Physically impossible for a body that only the ground and gravity act on.
    Error,
}

impl Severity {
    /// The word in reports and on the command line.
    pub fn word(self) -> &'static str {
        match self {
            Severity::Warning => "warning",
            Severity::Error => "error",
        }
    }
}

/// What a finding is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Kind {
    /// In the air the centre of mass does not accelerate at -g.
    FlightNotBallistic,
    /// The feet leave the ground without the upward speed the flight needs.
    TakeoffWithoutPush,
    /// The landing gains (nearly) no weight.
    LandingTooSoft,
    /// The landing's implied ground force is beyond what bodies produce.
    LandingTooHard,
    /// The arms drive upward in the air, where they cannot raise the jump.
    LateArmSwing,
    /// A passive chain swings in the air as if gravity still pulled it.
    PassiveNotWeightless,
    /// A passive chain keeps still against its anchor through the landing, where the anchor's
    /// deceleration should pull it.
    PassiveNotTugged,
    /// A contact or flight phase shorter than any real one.
    ContactChatter,
    /// A planted foot slides along the ground.
    FootSliding,
}

impl Kind {
    /// The kind's words in reports.
    pub fn words(self) -> &'static str {
        match self {
            Kind::FlightNotBallistic => "flight not ballistic",
            Kind::TakeoffWithoutPush => "take-off without push",
            Kind::LandingTooSoft => "landing too soft",
            Kind::LandingTooHard => "landing too hard",
            Kind::LateArmSwing => "arm swing after take-off",
            Kind::PassiveNotWeightless => "passive element not weightless",
            Kind::PassiveNotTugged => "passive element not tugged on landing",
            Kind::ContactChatter => "contact chatter",
            Kind::FootSliding => "foot sliding",
        }
    }
}

/// One place where the motion breaks physics.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Finding {
    /// How serious.
    pub severity: Severity,
    /// What about.
    pub kind: Kind,
    /// First frame of the stretch.
    pub first_frame: i64,
    /// Last frame of the stretch.
    pub last_frame: i64,
    /// The value measured in the motion.
    pub measured: f64,
    /// What physics expects (or the limit crossed).
    pub expected: f64,
    /// Unit of `measured` and `expected`.
    pub unit: &'static str,
    /// One sentence: what is wrong, in an animator's words.
    pub explanation: String,
    /// What to change.
    pub change: String,
}

/// The thresholds, with their sources.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Limits {
    /// Flight: the centre of mass's fitted acceleration may differ from -g by this fraction of
    /// g before a warning (twice it: an error). No source: a tolerance of the measurement
    /// (a least-squares parabola through a keyed path at 24 fps recovers -g to 1e-12 for an
    /// exact parabola; sub-frame keying and rounding stay within a few percent).
    pub flight_acceleration: f64,
    /// Take-off: the centre of mass's upward speed over the last interval on the ground may
    /// fall short of the least the flight allows by this much (m/s) before a warning (twice
    /// it: an error). No source: a measurement tolerance.
    pub takeoff_speed: f64,
    /// Take-off: the strongest upward acceleration a push gives the centre of mass (m/s^2).
    /// Peak ground forces of standing jumps are 2 to 3 body weights (a = 1 to 2 g); 3 g bounds
    /// them (Linthorne NP 2001, "Analysis of standing vertical jumps using a force platform",
    /// Am J Phys 69(11):1198-1204, from memory).
    pub push_acceleration: f64,
    /// Landing: below this peak ground force (body weights) a landing from a flight gains no
    /// weight worth the name. Landings from jumps and drops peak at 3 to 11 body weights
    /// (McNitt-Gray JL 1993, "Kinetics of the lower extremities during drop landings from
    /// three heights", J Biomech 26(9):1037-1046; from memory); 1.5 is far below any of them.
    pub landing_low: f64,
    /// Landing: above this peak (body weights) the implied force is beyond what legs take
    /// (the top of McNitt-Gray 1993's range, 11 body weights from 1.28 m; from memory).
    pub landing_high: f64,
    /// Arms: an upward swing in the air that speeds the arms up relative to the centre of mass
    /// by more than this (m/s) is a late swing (a warning; it is physics, not an error: only the
    /// timing is wasted). No source: a swing well below any deliberate one (a full overhead swing
    /// reaches 3 to 5 m/s at the hands).
    pub arm_swing: f64,
    /// Passive chains: in the air a chain's swing about its anchor may follow gravity's pull
    /// by at most this fraction of g (the fitted k of a_swing = k g_swing) before a warning.
    /// In free fall the anchor falls with the chain and the apparent gravity g - a is zero
    /// (d'Alembert's principle in the anchor's frame; any mechanics text, e.g. Goldstein,
    /// Classical Mechanics, 3rd ed., sec. 4.10, from memory), so k is 0; standing it is 1. The
    /// limit halves the difference; no source for the half.
    pub weightless: f64,
    /// Passive chains: ... and only when the fit explains at least this share of the swing's
    /// acceleration across the chain (R^2). A swing gravity drives follows it closely (a
    /// pendulum under full g: above 0.9, tested); one driven by the body brushing it or by its
    /// own bending straightening in the air scatters about any fit (heft's skirt strips against
    /// Odile's thighs: at most 0.19). Of our own, no source.
    pub weightless_fit: f64,
    /// Passive chains on landing: the swing about the anchor should follow the apparent
    /// gravity g - a of the decelerating anchor (k = 1, d'Alembert as for `weightless`); a
    /// chain whose fitted k stays below this, and whose swing's acceleration across it is
    /// under `tug_response` of what that apparent gravity gives it, keeps still where it
    /// should be tugged (a warning). A chain pushed about by the body moves plenty and is not
    /// reported. Of our own, no source, like `weightless`.
    pub tugged: f64,
    /// See `tugged`: the RMS of the swing's acceleration across the chain over the RMS of the
    /// apparent gravity's across it.
    pub tug_response: f64,
    /// Feet: a foot within `planted_height` (m) of its lowest point in a contact phase is
    /// planted, and may travel at most `slide` (m) along the ground while planted. Common
    /// practice in animation clean-up (a centimetre or two reads as sliding), no source.
    pub slide: f64,
    /// See `slide`.
    pub planted_height: f64,
    /// Contact: a contact or flight phase shorter than this (s) is chatter. The shortest ground
    /// contacts measured are those of top-speed sprinting, about 0.08 s (Weyand PG et al. 2000,
    /// "Faster top running speeds are achieved with greater ground forces not more rapid leg
    /// movements", J Appl Physiol 89:1991-1999; from memory); 0.05 s is below any of them.
    pub min_phase: f64,
}

impl Default for Limits {
    fn default() -> Limits {
        Limits {
            flight_acceleration: 0.1,
            takeoff_speed: 0.25,
            push_acceleration: 3.0 * G,
            landing_low: 1.5,
            landing_high: 11.0,
            arm_swing: 0.5,
            weightless: 0.5,
            weightless_fit: 0.3,
            tugged: 0.5,
            tug_response: 0.5,
            slide: 0.02,
            planted_height: 0.01,
            min_phase: 0.05,
        }
    }
}

/// What was measured about one flight.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Flight {
    /// First frame in the air.
    pub first_frame: i64,
    /// Last frame in the air.
    pub last_frame: i64,
    /// Vertical acceleration of the best parabola through the centre of mass, m/s^2.
    pub acceleration: f64,
    /// Largest distance of the centre of mass from the best path a ballistic body could take
    /// (acceleration -g), m, and its frame.
    pub off_path: f64,
    /// Frame of `off_path`.
    pub off_path_frame: i64,
    /// Time the centre of mass spends within 10 cm of its highest point, s.
    pub hang: f64,
    /// The same for a ballistic body: 2 sqrt(2 x 0.1 m / g) = 0.286 s (when the apex rises
    /// 10 cm or more above both ends).
    pub ballistic_hang: f64,
    /// Upward speed of the centre of mass over the last interval on the ground, m/s.
    pub takeoff_speed: f64,
    /// The least the flight allows there: the best ballistic path's speed at the last frame on
    /// the ground less what the strongest push adds in a frame, m/s.
    pub needed_takeoff_speed: f64,
    /// Downward speed at touch-down (the best ballistic path's), m/s.
    pub touchdown_speed: f64,
    /// Peak ground force in the landing that follows (m (g + a_z)), body weights.
    pub landing_peak: Option<f64>,
    /// The arms' upward drive in the air: how much their vertical speed relative to the centre
    /// of mass grows, m/s (None without arms).
    pub arm_drive: Option<f64>,
    /// For each chain, how much gravity its swing in the air follows: k of a_swing = k g_swing
    /// (0 weightless, 1 as on the ground; None when the chain hangs too straight to tell).
    pub chain_gravity: Vec<(String, Option<f64>)>,
    /// For each chain, the share of its swing's acceleration that the fit of `chain_gravity`
    /// explains (R^2, 0 to 1).
    pub chain_fit: Vec<(String, Option<f64>)>,
    /// For each chain, how much of the landing's apparent gravity its swing follows from the
    /// touch-down (k of a_swing = k (g - a_anchor) across the chain; 1 as physics gives, 0 for
    /// a chain that keeps still; None when it hangs along that gravity or the landing is too
    /// short to tell).
    pub chain_landing: Vec<(String, Option<f64>)>,
}

/// The audit's result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Report {
    /// Frames audited.
    pub frames: usize,
    /// Frames per second.
    pub rate: f64,
    /// Body mass, kg.
    pub mass: f64,
    /// The limits used.
    pub limits: Limits,
    /// Every flight with its figures.
    pub flights: Vec<Flight>,
    /// Every finding, in frame order.
    pub findings: Vec<Finding>,
}

impl Report {
    /// The most serious finding's severity.
    pub fn worst(&self) -> Option<Severity> {
        self.findings.iter().map(|f| f.severity).max()
    }
}

/// Runs of equal contact states: (state, first index, last index).
fn runs(contact: &[bool]) -> Vec<(bool, usize, usize)> {
    let mut out: Vec<(bool, usize, usize)> = Vec::new();
    for (i, &c) in contact.iter().enumerate() {
        match out.last_mut() {
            Some(r) if r.0 == c => r.2 = i,
            _ => out.push((c, i, i)),
        }
    }
    out
}

/// Least squares of z = a + b t + c t^2 (the normal equations solved by Cramer's rule on
/// centred times, well conditioned for a flight's few dozen frames).
fn fit_quadratic(t: &[f64], z: &[f64]) -> (f64, f64, f64) {
    let n = t.len() as f64;
    let tm = t.iter().sum::<f64>() / n;
    let s = |p: i32| t.iter().map(|x| (x - tm).powi(p)).sum::<f64>();
    let sz = |p: i32| t.iter().zip(z).map(|(x, y)| (x - tm).powi(p) * y).sum::<f64>();
    let m = [[n, s(1), s(2)], [s(1), s(2), s(3)], [s(2), s(3), s(4)]];
    let r = [sz(0), sz(1), sz(2)];
    let det3 = |m: [[f64; 3]; 3]| {
        m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1]) - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
            + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0])
    };
    let d = det3(m);
    let col = |k: usize| {
        let mut x = m;
        for (row, v) in x.iter_mut().zip(r) {
            row[k] = v;
        }
        det3(x) / d
    };
    let (a, b, c) = (col(0), col(1), col(2));
    // Back from centred time: z = a + b (t - tm) + c (t - tm)^2.
    (a - b * tm + c * tm * tm, b - 2.0 * c * tm, c)
}

/// The best ballistic path z = a + b t - g t^2 / 2 (least squares in a and b).
fn fit_ballistic(t: &[f64], z: &[f64]) -> (f64, f64) {
    let y: Vec<f64> = t.iter().zip(z).map(|(t, z)| z + 0.5 * G * t * t).collect();
    let n = t.len() as f64;
    let tm = t.iter().sum::<f64>() / n;
    let ym = y.iter().sum::<f64>() / n;
    let sxx: f64 = t.iter().map(|x| (x - tm).powi(2)).sum();
    let sxy: f64 = t.iter().zip(&y).map(|(x, v)| (x - tm) * (v - ym)).sum();
    let b = if sxx > 0.0 { sxy / sxx } else { 0.0 };
    (ym - b * tm, b)
}

/// Audits a motion.
pub fn audit(m: &Motion, limits: &Limits) -> Report {
    let n = m.com.len().min(m.contact.len());
    let dt = 1.0 / m.rate;
    let weight = m.mass * G;
    let mut findings = Vec::new();
    let mut flights = Vec::new();
    let phases = runs(&m.contact[..n]);
    // Chatter: a phase shorter than the shortest real one, between two others.
    for (k, &(state, a, b)) in phases.iter().enumerate() {
        let inner = k > 0 && k + 1 < phases.len();
        let duration = (b - a + 1) as f64 * dt;
        if inner && duration < limits.min_phase {
            let what = if state { "on the ground" } else { "in the air" };
            findings.push(Finding {
                severity: Severity::Warning,
                kind: Kind::ContactChatter,
                first_frame: m.frame(a),
                last_frame: m.frame(b),
                measured: duration,
                expected: limits.min_phase,
                unit: "s",
                explanation: format!(
                    "the feet are {what} for only {:.3} s; no real contact or flight is shorter than about {} s",
                    duration, limits.min_phase
                ),
                change: "key the feet so that they stay planted (or in the air) through this stretch".into(),
            });
        }
    }
    for (k, &(state, a, b)) in phases.iter().enumerate() {
        // A complete flight: ground before and after, at least 4 frames in the air.
        if state || k == 0 || k + 1 >= phases.len() || b - a + 1 < 4 {
            continue;
        }
        let t: Vec<f64> = (a..=b).map(|i| m.time(i) - m.time(a)).collect();
        let z: Vec<f64> = (a..=b).map(|i| m.z(i)).collect();
        let (_, _, c) = fit_quadratic(&t, &z);
        let acceleration = 2.0 * c;
        let (z0, v0) = fit_ballistic(&t, &z);
        let path = |tau: f64| z0 + v0 * tau - 0.5 * G * tau * tau;
        let (off_k, off_path) = t
            .iter()
            .zip(&z)
            .map(|(tau, z)| (z - path(*tau)).abs())
            .enumerate()
            .fold((0, 0.0), |best, (k, d)| if d > best.1 { (k, d) } else { best });
        let apex = z.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let hang = z.iter().filter(|v| **v >= apex - 0.1).count() as f64 * dt;
        let ballistic_hang = 2.0 * (2.0 * 0.1 / G).sqrt();
        // The last frame on the ground and the first after landing.
        let (g0, g1) = (a - 1, b + 1);
        // The speed over the last interval on the ground (a backward difference, the mean
        // speed from frame g0 - 1 to g0), against the least the flight allows there: the
        // ballistic path's speed at g0, less what the strongest push could still add before
        // the feet leave (at most a frame later).
        let takeoff_speed = if g0 >= 1 {
            (m.z(g0) - m.z(g0 - 1)) / dt
        } else {
            f64::NAN
        };
        let needed = v0 + G * dt - (limits.push_acceleration + G) * dt;
        let touchdown_speed = -(v0 - G * (t[t.len() - 1] + dt));
        let landing_peak = landing_peak(m, g1, phases[k + 1].2, weight);
        let arm_drive = m.arms.as_ref().map(|(arms, _)| arm_drive(m, arms, a, b));
        let swings: Vec<(String, Option<(f64, f64)>)> = m
            .chains
            .iter()
            .map(|c| (c.name.clone(), swing_gravity(m, c, a, b)))
            .collect();
        let chain_gravity: Vec<(String, Option<f64>)> =
            swings.iter().map(|(n, s)| (n.clone(), s.map(|s| s.0))).collect();
        let chain_fit: Vec<(String, Option<f64>)> = swings.iter().map(|(n, s)| (n.clone(), s.map(|s| s.1))).collect();
        for (name, swing) in &swings {
            if let Some((k, fit)) = *swing
                && k > limits.weightless
                && fit >= limits.weightless_fit
            {
                findings.push(Finding {
                    severity: Severity::Warning,
                    kind: Kind::PassiveNotWeightless,
                    first_frame: m.frame(a),
                    last_frame: m.frame(b),
                    measured: k,
                    expected: 0.0,
                    unit: "g",
                    explanation: format!(
                        "in the air `{name}` swings about its anchor as if pulled by {k:.2} g; falling with the \
                         body it is weightless there and should keep drifting the way it was moving at take-off"
                    ),
                    change: format!(
                        "let `{name}` float in the air (no swing back towards hanging), and tug it down on landing"
                    ),
                });
            }
        }
        // The landing: from the first frame on the ground, up to LANDING_SPAN or the end of
        // that contact.
        let land_end = phases[k + 1].2.min(g1 + (LANDING_SPAN * m.rate).round() as usize);
        let tugs: Vec<(String, Option<(f64, f64)>)> = m
            .chains
            .iter()
            .map(|c| (c.name.clone(), landing_tug(m, c, g1, land_end)))
            .collect();
        let chain_landing: Vec<(String, Option<f64>)> = tugs.iter().map(|(n, t)| (n.clone(), t.map(|t| t.0))).collect();
        for (name, tug) in &tugs {
            if let Some((k, response)) = *tug
                && k < limits.tugged
                && response < limits.tug_response
            {
                findings.push(Finding {
                    severity: Severity::Warning,
                    kind: Kind::PassiveNotTugged,
                    first_frame: m.frame(g1),
                    last_frame: m.frame(land_end),
                    measured: k,
                    expected: 1.0,
                    unit: "g_app",
                    explanation: format!(
                        "on landing `{name}` keeps still against its anchor (its swing follows {k:.2} of the apparent \
                         gravity, its acceleration across the chain {:.0} % of what that gravity gives): the body \
                         stops hard there, and a hanging element is pulled down and swings",
                        100.0 * response
                    ),
                    change: format!(
                        "let `{name}` swing down on landing, faster than it hangs at rest (the landing multiplies its \
                         weight), then settle"
                    ),
                });
            }
        }
        let figures = Flight {
            first_frame: m.frame(a),
            last_frame: m.frame(b),
            acceleration,
            off_path,
            off_path_frame: m.frame(a + off_k),
            hang,
            ballistic_hang,
            takeoff_speed,
            needed_takeoff_speed: needed,
            touchdown_speed,
            landing_peak,
            arm_drive,
            chain_gravity,
            chain_fit,
            chain_landing,
        };
        let excess = (acceleration + G).abs() / G;
        if excess > limits.flight_acceleration {
            let floaty = acceleration > -G;
            findings.push(Finding {
                severity: if excess > 2.0 * limits.flight_acceleration {
                    Severity::Error
                } else {
                    Severity::Warning
                },
                kind: Kind::FlightNotBallistic,
                first_frame: m.frame(a),
                last_frame: m.frame(b),
                measured: acceleration,
                expected: -G,
                unit: "m/s^2",
                explanation: format!(
                    "in the air the centre of mass falls at {:.2} m/s^2 instead of {G:.2} m/s^2: the body {} (it \
                     strays up to {:.0} mm from the best ballistic path, at frame {}, and spends {:.2} s within \
                     10 cm of its apex, a ballistic body {:.2} s)",
                    -acceleration,
                    if floaty {
                        "floats as if gravity were weaker"
                    } else {
                        "drops as if gravity were stronger"
                    },
                    1000.0 * off_path,
                    m.frame(a + off_k),
                    hang,
                    ballistic_hang
                ),
                change: "key the centre of mass along a parabola in the air: no ease-in or ease-out at the apex; for \
                         a higher or longer jump raise the take-off speed instead"
                    .into(),
            });
        }
        let short = needed - takeoff_speed;
        if takeoff_speed.is_finite() && short > limits.takeoff_speed {
            findings.push(Finding {
                severity: if short > 2.0 * limits.takeoff_speed {
                    Severity::Error
                } else {
                    Severity::Warning
                },
                kind: Kind::TakeoffWithoutPush,
                first_frame: m.frame(g0),
                last_frame: m.frame(a),
                measured: takeoff_speed,
                expected: needed,
                unit: "m/s",
                explanation: format!(
                    "the feet leave the ground while the centre of mass rises at {takeoff_speed:.2} m/s, but the \
                     flight that follows needs at least {needed:.2} m/s there (its ballistic speed {:.2} m/s less \
                     what the strongest push adds in a frame): the body keeps rising in the air as if still pushed",
                    v0 + G * dt
                ),
                change: "let the legs extend and the body speed up before the feet leave the ground; the push \
                         comes first, the lift-off last"
                    .into(),
            });
        }
        if let (Some(drive), Some((arms, fraction))) = (arm_drive, &m.arms)
            && drive > limits.arm_swing
        {
            // Momentum: in the air the arms' upward momentum relative to the centre of mass,
            // fraction M drive, is taken from the trunk; on the ground the same swing is pushed
            // against the floor and the whole body keeps it: the take-off speed would grow by
            // fraction x drive, the rise by ((v + dv)^2 - v^2) / 2 g.
            let dv = fraction * drive;
            let v = (v0 + G * dt).max(0.0);
            let gain = ((v + dv).powi(2) - v * v) / (2.0 * G);
            // The trunk's drop: the rest of the body moves against the arms' rise relative to
            // the centre of mass, by fraction / (1 - fraction) of it.
            let rel = |i: usize| arms[i][2] - m.z(i);
            let rise = (a..=b).map(rel).fold(f64::NEG_INFINITY, f64::max) - rel(a);
            let drop = fraction / (1.0 - fraction) * rise.max(0.0);
            findings.push(Finding {
                severity: Severity::Warning,
                kind: Kind::LateArmSwing,
                first_frame: m.frame(a),
                last_frame: m.frame(b),
                measured: gain,
                expected: 0.0,
                unit: "m of rise lost",
                explanation: format!(
                    "the arms swing up in the air (their speed relative to the centre of mass grows by {drive:.2} \
                     m/s): there it cannot raise the jump and only pushes the trunk down, by {:.0} mm; swung \
                     during the push the same swing would have raised the jump by {:.0} mm",
                    1000.0 * drop,
                    1000.0 * gain
                ),
                change: "start the arm swing in the crouch so that its upward drive ends by take-off".into(),
            });
        }
        if let Some(peak) = landing_peak {
            let (l0, l1) = (m.frame(g1), m.frame(phases[k + 1].2));
            if peak < limits.landing_low && touchdown_speed > 0.5 {
                findings.push(Finding {
                    severity: Severity::Warning,
                    kind: Kind::LandingTooSoft,
                    first_frame: l0,
                    last_frame: l1,
                    measured: peak,
                    expected: limits.landing_low,
                    unit: "body weights",
                    explanation: format!(
                        "landing at {touchdown_speed:.2} m/s the body weighs at most {peak:.2} times its weight: it \
                         gains almost no weight, as if it settled rather than landed"
                    ),
                    change: "stop the fall over a shorter time: the centre of mass should slow down hard in the \
                             first frames after touch-down, with the knees bending"
                        .into(),
                });
            } else if peak > limits.landing_high {
                findings.push(Finding {
                    severity: Severity::Warning,
                    kind: Kind::LandingTooHard,
                    first_frame: l0,
                    last_frame: l1,
                    measured: peak,
                    expected: limits.landing_high,
                    unit: "body weights",
                    explanation: format!(
                        "landing at {touchdown_speed:.2} m/s the body's fall stops so abruptly that the ground would \
                         push with {peak:.1} times its weight, more than legs take"
                    ),
                    change: "spread the stop over more frames: bend the knees deeper or longer after touch-down".into(),
                });
            }
        }
        flights.push(figures);
    }
    for &(state, a, b) in &phases {
        if !state {
            continue;
        }
        for (name, track) in &m.feet {
            if let Some(f) = sliding(m, name, track, a, b, limits) {
                findings.push(f);
            }
        }
    }
    findings.sort_by_key(|f| (f.first_frame, f.last_frame));
    Report {
        frames: n,
        rate: m.rate,
        mass: m.mass,
        limits: limits.clone(),
        flights,
        findings,
    }
}

/// A foot's slide over one contact phase (frames a..=b): over each stretch where it is
/// planted (within `planted_height` of its lowest point in the phase), the largest horizontal
/// distance from where the stretch began.
fn sliding(m: &Motion, name: &str, track: &[V3], a: usize, b: usize, limits: &Limits) -> Option<Finding> {
    let b = b.min(track.len().checked_sub(1)?);
    if a > b {
        return None;
    }
    let low = (a..=b).map(|i| track[i][2]).fold(f64::INFINITY, f64::min);
    let mut worst: Option<(f64, usize, usize)> = None;
    let mut start: Option<usize> = None;
    for i in a..=b + 1 {
        let planted = i <= b && track[i][2] - low <= limits.planted_height;
        match (planted, start) {
            (true, None) => start = Some(i),
            (false, Some(s)) => {
                let e = i - 1;
                let d = (s..=e)
                    .map(|k| (track[k][0] - track[s][0]).hypot(track[k][1] - track[s][1]))
                    .fold(0.0, f64::max);
                if worst.is_none_or(|w| d > w.0) {
                    worst = Some((d, s, e));
                }
                start = None;
            }
            _ => {}
        }
    }
    let (d, s, e) = worst?;
    (d > limits.slide).then(|| Finding {
        severity: Severity::Warning,
        kind: Kind::FootSliding,
        first_frame: m.frame(s),
        last_frame: m.frame(e),
        measured: d,
        expected: limits.slide,
        unit: "m",
        explanation: format!(
            "`{name}` is planted on the ground but slides {:.0} mm along it; a planted foot holds its place \
             (only the ground's friction moves the body)",
            1000.0 * d
        ),
        change: format!("pin `{name}` where it lands for as long as it carries weight"),
    })
}

/// How much the arms' vertical speed relative to the centre of mass grows in the air: the sum
/// of its rises from frame to frame (central differences), m/s.
fn arm_drive(m: &Motion, arms: &[V3], a: usize, b: usize) -> f64 {
    let dt = 1.0 / m.rate;
    let n = arms.len().min(m.com.len());
    let rel_v = |i: usize| ((arms[i + 1][2] - m.z(i + 1)) - (arms[i - 1][2] - m.z(i - 1))) / (2.0 * dt);
    let lo = a.max(1);
    let hi = b.min(n.saturating_sub(2));
    (lo..hi).map(|i| (rel_v(i + 1) - rel_v(i)).max(0.0)).sum()
}

/// How much gravity a chain's swing about its anchor follows in the air (frames a..=b): with
/// r the centre of the chain's points after the first less the first (the root riding on the
/// anchor; a one-point chain: the point less the anchor), a the second difference of r, and
/// g_t the part of gravity across r (what swings a pendulum), the least-squares k of
/// a_t = k g_t over the frames (a_t the part of a across r). `None` when the chain hangs too
/// straight for gravity to swing it (the mean |g_t| below 0.2 g) or the flight is too short.
fn swing_gravity(m: &Motion, c: &Chain, a: usize, b: usize) -> Option<(f64, f64)> {
    swing_fit(m, c, a, b, &|_| [0.0, 0.0, -G]).map(|(k, fit, _)| (k, fit))
}

/// The fit behind [`swing_gravity`] and [`landing_tug`]: over frames `a..=b`, the chain's
/// centre about its pivot r (the chain's first point when it has more, else the anchor), its
/// acceleration r'' by central second differences, and `gravity(i)` the field it should
/// follow there; across: the parts normal to r. Returns k of across(r'') = k across(gravity),
/// the share of across(r'')'s variance that fit explains (R^2 through the origin), and the RMS
/// of across(r'') over that of across(gravity). `None` with fewer than 3 usable frames or a
/// field (nearly) along the chain (its across part under 0.2 g on average).
fn swing_fit(m: &Motion, c: &Chain, a: usize, b: usize, gravity: &dyn Fn(usize) -> V3) -> Option<(f64, f64, f64)> {
    let dt = 1.0 / m.rate;
    let n = c.anchor.len().min(c.points.len()).min(m.com.len());
    let centre = |i: usize| {
        let p = &c.points[i];
        let (pivot, rest) = if p.len() >= 2 {
            (p[0], &p[1..])
        } else {
            (c.anchor[i], &p[..])
        };
        let sum = rest.iter().fold([0.0; 3], |s, q| add(s, *q));
        sub(scale(sum, 1.0 / rest.len().max(1) as f64), pivot)
    };
    let (mut num, mut den, mut total, mut count) = (0.0, 0.0, 0.0, 0usize);
    for i in a.max(1)..=b.min(n.saturating_sub(2)) {
        let (r0, r1, r2) = (centre(i - 1), centre(i), centre(i + 1));
        let len = dot(r1, r1).sqrt();
        if len < 1e-6 {
            continue;
        }
        let u = scale(r1, 1.0 / len);
        let across = |v: V3| sub(v, scale(u, dot(v, u)));
        let acc = across(scale(add(sub(r2, scale(r1, 2.0)), r0), 1.0 / (dt * dt)));
        let g = across(gravity(i));
        num += dot(acc, g);
        den += dot(g, g);
        total += dot(acc, acc);
        count += 1;
    }
    if count < 3 || den / (count as f64) < (0.2 * G).powi(2) {
        return None;
    }
    let fit = if total > 0.0 { num * num / (den * total) } else { 0.0 };
    Some((num / den, fit, (total / den).sqrt()))
}

/// How long after touch-down the landing tug is measured, s (of our own: a landing's
/// deceleration lasts about 0.1 to 0.3 s).
const LANDING_SPAN: f64 = 0.25;

/// A chain's swing in the landing against the apparent gravity g - a of its anchor (a by
/// central second differences of the anchor): the k of [`swing_fit`] and the RMS ratio of
/// its swing's acceleration to that gravity's, across the chain.
fn landing_tug(m: &Motion, c: &Chain, a: usize, b: usize) -> Option<(f64, f64)> {
    let dt = 1.0 / m.rate;
    let n = c.anchor.len();
    let apparent = |i: usize| {
        let (p0, p1, p2) = (c.anchor[i - 1], c.anchor[i], c.anchor[(i + 1).min(n - 1)]);
        let anchor_acc = scale(add(sub(p2, scale(p1, 2.0)), p0), 1.0 / (dt * dt));
        sub([0.0, 0.0, -G], anchor_acc)
    };
    swing_fit(m, c, a, b, &apparent).map(|(k, _, response)| (k, response))
}

/// The largest ground force m (g + a_z) over a landing's contact frames (central second
/// differences of the centre of mass; the touch-down frame itself included), in body weights.
fn landing_peak(m: &Motion, first: usize, last: usize, weight: f64) -> Option<f64> {
    let dt = 1.0 / m.rate;
    let n = m.com.len();
    let peak = (first..=last)
        .filter(|&i| i >= 1 && i + 1 < n)
        .map(|i| m.mass * (G + (m.z(i + 1) - 2.0 * m.z(i) + m.z(i - 1)) / (dt * dt)))
        .fold(f64::NEG_INFINITY, f64::max);
    peak.is_finite().then_some(peak / weight)
}

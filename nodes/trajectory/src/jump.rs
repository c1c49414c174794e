//! `trajectory.jump`: a planned standing countermovement jump of a segmented body (two arms
//! and the rest of the body), evaluated in closed form at every frame.
//!
//! The physics lives in plain functions and types ([`JumpSpec`], [`Plan`], [`ArmSwing`]) that
//! the node and the tests share.

use heft_node_sdk::{
    CheckProblem, Dimension, Io, Node, NodeError, NodeSpec, ParamSpec, Params, PortKind, PortSpec, STANDARD_GRAVITY,
    SummarySpec, Timeline,
};

use crate::body::{Body, collider_radii, leg, proportions, segment_rotation};
use crate::profile::{Quintic, smoothstep};
use heft_node_sdk::colliders::{self, Capsule};

const G: f64 = STANDARD_GRAVITY;

/// What fixes the take-off.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Drive {
    /// Whole-body COM apex this far (m) above the standing COM height.
    Rise(f64),
    /// Vertical speed (m/s) the legs give the trunk (the body without the arms) at take-off.
    Speed(f64),
}

/// The arm swing: the angle of both arms about the shoulders (rad; 0 hanging down, positive
/// forward and up) moves from `from` to `to` on a quintic smoothstep over
/// `[start, start + duration]` (absolute times, s), and holds before and after.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ArmSwing {
    /// Angle before the swing (rad).
    pub from: f64,
    /// Angle after the swing (rad).
    pub to: f64,
    /// Start of the swing (s).
    pub start: f64,
    /// Length of the swing (s), positive.
    pub duration: f64,
}

impl ArmSwing {
    /// True unless `from == to` (no swing).
    pub fn moves(&self) -> bool {
        self.to != self.from
    }

    /// End of the swing (s).
    pub fn end(&self) -> f64 {
        self.start + self.duration
    }

    /// `[theta, theta', theta'']` at `t`: theta = from + (to - from) s(u), u = (t - start) /
    /// duration, derivatives by the chain rule (s' / duration, s'' / duration^2).
    pub fn angle(&self, t: f64) -> [f64; 3] {
        let d = self.to - self.from;
        if d == 0.0 {
            return [self.from, 0.0, 0.0];
        }
        let [s, ds, dds] = smoothstep((t - self.start) / self.duration);
        [
            self.from + d * s,
            d * ds / self.duration,
            d * dds / (self.duration * self.duration),
        ]
    }
}

/// The parameters of one planned jump, in SI units, with the take-off as an absolute time.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct JumpSpec {
    /// Body mass (kg).
    pub body_mass: f64,
    /// Body height (m).
    pub body_height: f64,
    /// Whole-body COM height in quiet standing, arms at `arm_swing_from` (m).
    pub standing_com_height: f64,
    /// How far the trunk COM goes down in the countermovement (m).
    pub crouch_depth: f64,
    /// What fixes the take-off.
    pub drive: Drive,
    /// Trunk COM at take-off above its standing height (m).
    pub takeoff_extension: f64,
    /// Unweighting plus braking (s).
    pub countermovement_duration: f64,
    /// Propulsion (s).
    pub push_duration: f64,
    /// Trunk COM at the lowest point of the landing below its take-off height (m).
    pub landing_depth: f64,
    /// Touch-down to the lowest point (s).
    pub landing_duration: f64,
    /// Lowest point back to standing (s).
    pub recovery_duration: f64,
    /// Take-off time (s).
    pub takeoff_time: f64,
    /// Arm angle before the swing (rad).
    pub arm_swing_from: f64,
    /// Arm angle after the swing (rad).
    pub arm_swing_to: f64,
    /// Start of the swing relative to take-off (s).
    pub arm_swing_start: f64,
    /// Length of the swing (s).
    pub arm_swing_duration: f64,
    /// Frames per second, used only to name frames in messages.
    pub frame_rate: f64,
}

impl JumpSpec {
    /// Reads the node's parameters; the take-off time is frame `takeoff_frame` of `timeline`'s rate.
    pub fn from_params(params: &Params, timeline: Timeline) -> Result<JumpSpec, NodeError> {
        let drive = match params.choice("plan_by")? {
            "rise" => Drive::Rise(params.number("rise")?),
            "takeoff_speed" => Drive::Speed(params.number("takeoff_speed")?),
            other => {
                return Err(NodeError::new(format!(
                    "`plan_by` is `{other}`; use `rise` or `takeoff_speed`"
                )));
            }
        };
        // The same arithmetic as Timeline::time, so the take-off frame's time is the take-off
        // time to the bit (frame number x dt).
        let takeoff = Timeline {
            start_frame: params.integer("takeoff_frame")?,
            frame_count: 1,
            ..timeline
        };
        Ok(JumpSpec {
            body_mass: params.number("body_mass")?,
            body_height: params.number("body_height")?,
            standing_com_height: params.number("standing_com_height")?,
            crouch_depth: params.number("crouch_depth")?,
            drive,
            takeoff_extension: params.number("takeoff_extension")?,
            countermovement_duration: params.number("countermovement_duration")?,
            push_duration: params.number("push_duration")?,
            landing_depth: params.number("landing_depth")?,
            landing_duration: params.number("landing_duration")?,
            recovery_duration: params.number("recovery_duration")?,
            takeoff_time: takeoff.time(0),
            arm_swing_from: params.number("arm_swing_from")?,
            arm_swing_to: params.number("arm_swing_to")?,
            arm_swing_start: params.number("arm_swing_start")?,
            arm_swing_duration: params.number("arm_swing_duration")?,
            frame_rate: timeline.fps(),
        })
    }
}

/// The phases of the jump.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Phase {
    /// Quiet standing before the countermovement (arms may already swing).
    Standing,
    /// Unweighting then braking, down to the crouch.
    Countermovement,
    /// Propulsion, from the crouch to take-off.
    Propulsion,
    /// Flight, take-off to touch-down.
    Flight,
    /// Landing, touch-down to the lowest point.
    Landing,
    /// Recovery, the lowest point back to standing height.
    Recovery,
    /// Standing after the recovery.
    Settled,
}

impl Phase {
    /// The word for messages.
    pub fn name(self) -> &'static str {
        match self {
            Phase::Standing => "quiet standing",
            Phase::Countermovement => "the countermovement",
            Phase::Propulsion => "the propulsion",
            Phase::Flight => "the flight",
            Phase::Landing => "the landing",
            Phase::Recovery => "the recovery",
            Phase::Settled => "standing after the recovery",
        }
    }
}

/// Position, velocity and acceleration of one point (x, y, z).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Motion {
    /// Position (m).
    pub position: [f64; 3],
    /// Velocity (m/s).
    pub velocity: [f64; 3],
    /// Acceleration (m/s^2).
    pub acceleration: [f64; 3],
}

/// Everything the node writes for one instant.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct State {
    /// The phase whose closed form gave this state.
    pub phase: Phase,
    /// Whole-body centre of mass.
    pub com: Motion,
    /// Centre of mass of the body without the arms.
    pub trunk: Motion,
    /// Arm angle (rad).
    pub arm_angle: f64,
    /// Height of the feet above the ground (m); 0 in contact.
    pub foot_height: f64,
    /// Feet on the ground.
    pub contact: bool,
}

/// The deepest the trunk may go below its standing height: hips (greater trochanter,
/// 0.530 H) down to knee height (0.285 H), thighs about horizontal. A modelling limit taken
/// from the proportions of Winter (2009) Fig. 4.1 (from memory); common practice, no source
/// for using it as the limit.
pub fn deepest_crouch(height: f64) -> f64 {
    (proportions::HIP - proportions::KNEE) * height
}

/// The band of standing COM heights, as fractions of body height, within which the body
/// proportions stay consistent (shoulder well above the trunk COM, trunk COM above the hips).
/// Common practice, no source: adult whole-body COM is near 0.55 H (the node's default).
pub const STANDING_COM_BAND: (f64, f64) = (0.45, 0.65);

/// A planned jump: the solved take-off and touch-down and the quintic segments of the trunk.
#[derive(Debug, Clone, PartialEq)]
pub struct Plan {
    /// The parameters.
    pub spec: JumpSpec,
    /// The two-part body.
    pub body: Body,
    /// The arm swing, in absolute time.
    pub arms: ArmSwing,
    /// Trunk height, countermovement (standing to crouch).
    pub countermovement: Quintic,
    /// Trunk height, propulsion (crouch to take-off).
    pub propulsion: Quintic,
    /// Trunk height, landing (touch-down to the lowest point).
    pub landing: Quintic,
    /// Trunk height, recovery (lowest point to standing).
    pub recovery: Quintic,
    /// Take-off time (s).
    pub takeoff_time: f64,
    /// Touch-down time (s).
    pub touchdown_time: f64,
    /// Trunk COM height, vertical speed and vertical acceleration at take-off.
    pub trunk_takeoff: [f64; 3],
    /// Whole-body COM height at take-off (m).
    pub takeoff_height: f64,
    /// Whole-body vertical COM speed at take-off (m/s).
    pub takeoff_speed: f64,
    /// Whole-body COM apex (m).
    pub apex_height: f64,
    /// Peak ground force over the landing (body weights).
    pub peak_landing_force: f64,
    /// Things that are allowed but worth saying.
    pub warnings: Vec<String>,
}

/// Samples per phase for the checks of the ground force and the landing peak.
const SAMPLES: usize = 2000;

impl Plan {
    /// Solves a jump, or says which parameter to change.
    pub fn new(spec: &JumpSpec) -> Result<Plan, NodeError> {
        let s = *spec;
        let h = s.body_height;
        let ratio = s.standing_com_height / h;
        if !(STANDING_COM_BAND.0..=STANDING_COM_BAND.1).contains(&ratio) {
            return Err(NodeError::new(format!(
                "`standing_com_height` {:.3} m is {:.3} of `body_height` {:.3} m; the body proportions need it between \
                 {:.2} and {:.2} of the height ({:.3} to {:.3} m): change `standing_com_height` or `body_height`",
                s.standing_com_height,
                ratio,
                h,
                STANDING_COM_BAND.0,
                STANDING_COM_BAND.1,
                STANDING_COM_BAND.0 * h,
                STANDING_COM_BAND.1 * h
            )));
        }
        let body = Body::new(h, s.standing_com_height, s.arm_swing_from);
        let deepest = deepest_crouch(h);
        if s.crouch_depth > deepest {
            return Err(NodeError::new(format!(
                "`crouch_depth` {:.3} m is deeper than a {:.2} m tall body allows: at most {:.3} m (hips down to knee \
                 height); reduce `crouch_depth` or raise `body_height`",
                s.crouch_depth, h, deepest
            )));
        }
        let lowest_landing = s.landing_depth - s.takeoff_extension;
        if lowest_landing > deepest {
            return Err(NodeError::new(format!(
                "`landing_depth` {:.3} m takes the trunk {:.3} m below standing, deeper than a {:.2} m tall body allows \
                 ({:.3} m, hips down to knee height); reduce `landing_depth` to at most {:.3} m",
                s.landing_depth,
                lowest_landing,
                h,
                deepest,
                deepest + s.takeoff_extension
            )));
        }

        let t_to = s.takeoff_time;
        let t_push = t_to - s.push_duration;
        let t_cm = t_push - s.countermovement_duration;
        let arms = ArmSwing {
            from: s.arm_swing_from,
            to: s.arm_swing_to,
            start: t_to + s.arm_swing_start,
            duration: s.arm_swing_duration,
        };
        let k = body.arm_fraction;
        let z_stand = body.trunk_standing;
        let z_crouch = z_stand - s.crouch_depth;
        let z_to = z_stand + s.takeoff_extension;

        // Take-off: arms' offset and its rates at take-off set the whole-body state.
        let [_, arm_z] = body.arm_offset(arms.angle(t_to));
        let com_to = z_to + k * arm_z[0];
        let (trunk_v, com_v) = match s.drive {
            Drive::Speed(v) => (v, v + k * arm_z[1]),
            Drive::Rise(rise) => {
                let apex = s.standing_com_height + rise;
                if apex <= com_to {
                    return Err(NodeError::new(format!(
                        "`rise` {:.3} m puts the apex below the take-off height: the COM is already {:.3} m above \
                         standing at take-off (`takeoff_extension` plus the arms); raise `rise` above {:.3} m or \
                         reduce `takeoff_extension`",
                        rise,
                        com_to - s.standing_com_height,
                        com_to - s.standing_com_height
                    )));
                }
                let v = (2.0 * G * (apex - com_to)).sqrt();
                (v - k * arm_z[1], v)
            }
        };
        if trunk_v <= 0.0 {
            return Err(NodeError::new(format!(
                "the arms carry the whole take-off speed ({:.3} m/s of {:.3} m/s), so the legs would not leave the \
                 ground (trunk speed {:.3} m/s at take-off); raise `rise`, or slow the arms at take-off \
                 (`arm_swing_start`, `arm_swing_duration`)",
                k * arm_z[1],
                com_v,
                trunk_v
            )));
        }
        if com_v <= 0.0 {
            return Err(NodeError::new(format!(
                "the arms swing down so fast at take-off that the body's COM moves down ({com_v:.3} m/s): there is no \
                 jump; raise `takeoff_speed` or change the arm swing (`arm_swing_from`, `arm_swing_to`, \
                 `arm_swing_start`)"
            )));
        }
        // Whole-body acceleration exactly -g at take-off: the ground force falls to zero.
        let trunk_a = -G - k * arm_z[2];
        let trunk_takeoff = [z_to, trunk_v, trunk_a];

        let countermovement = Quintic::new(
            t_cm,
            s.countermovement_duration,
            [z_stand, 0.0, 0.0],
            [z_crouch, 0.0, 0.0],
        );
        let propulsion = Quintic::new(t_push, s.push_duration, [z_crouch, 0.0, 0.0], trunk_takeoff);

        let mut plan = Plan {
            spec: s,
            body,
            arms,
            countermovement,
            propulsion,
            landing: propulsion,
            recovery: propulsion,
            takeoff_time: t_to,
            touchdown_time: t_to,
            trunk_takeoff,
            takeoff_height: com_to,
            takeoff_speed: com_v,
            apex_height: com_to + com_v * com_v / (2.0 * G),
            peak_landing_force: 0.0,
            warnings: Vec::new(),
        };

        let t_td = plan.find_touchdown()?;
        let t_apex = t_to + com_v / G;
        if t_td <= t_apex {
            return Err(NodeError::new(format!(
                "the arm swing pulls the feet back to the ground at {} before the COM reaches its apex at {}: the \
                 planned apex cannot happen; start the swing earlier (`arm_swing_start`), make it smaller \
                 (`arm_swing_from`, `arm_swing_to`) or jump higher (`rise` or `takeoff_speed`)",
                plan.at(t_td),
                plan.at(t_apex)
            )));
        }
        plan.touchdown_time = t_td;
        let f = plan.state_in(Phase::Flight, t_td).trunk;
        let landing_start = [f.position[2], f.velocity[2], f.acceleration[2]];
        let z_low = z_to - s.landing_depth;
        plan.landing = Quintic::new(t_td, s.landing_duration, landing_start, [z_low, 0.0, 0.0]);
        plan.recovery = Quintic::new(
            t_td + s.landing_duration,
            s.recovery_duration,
            [z_low, 0.0, 0.0],
            [z_stand, 0.0, 0.0],
        );

        plan.check_ground_force()?;
        plan.check_landing_depth()?;
        let (_, peak) = plan.extreme(Phase::Landing, plan.landing.start(), plan.landing.end(), true, |st| {
            (G + st.com.acceleration[2]) / G
        });
        plan.peak_landing_force = peak;
        Ok(plan)
    }

    /// A time with its frame number at the spec's frame rate, for messages.
    fn at(&self, t: f64) -> String {
        format!("{t:.3} s (frame {})", (t * self.spec.frame_rate).round())
    }

    /// The first time after take-off at which the feet (trunk height minus its take-off
    /// height) come back to the ground: bracketed by stepping (20 000 steps up to the latest
    /// possible touch-down), then bisected to 1e-12 s.
    fn find_touchdown(&self) -> Result<f64, NodeError> {
        let t_to = self.takeoff_time;
        let z_to = self.trunk_takeoff[0];
        let foot = |t: f64| self.state_in(Phase::Flight, t).trunk.position[2] - z_to;
        // The arms move the trunk at most 2 k r about the COM, so the feet are down by the
        // time the parabola alone has fallen that far below the take-off height.
        let (v, reach) = (self.takeoff_speed, 2.0 * self.body.arm_fraction * self.body.arm_radius);
        let latest = (v + (v * v + 2.0 * G * reach).sqrt()) / G;
        let steps = 20_000;
        let step = latest / f64::from(steps) * (1.0 + 1e-6);
        let mut lo = t_to;
        let mut hi = None;
        for i in 1..=steps + 1 {
            let t = t_to + step * f64::from(i);
            if foot(t) <= 0.0 {
                hi = Some(t);
                break;
            }
            lo = t;
        }
        let Some(mut hi) = hi else {
            return Err(NodeError::new(format!(
                "no touch-down found within {latest:.3} s of take-off; please report this parameter set"
            )));
        };
        while hi - lo > 1e-12 {
            let mid = 0.5 * (lo + hi);
            if mid <= lo || mid >= hi {
                break;
            }
            if foot(mid) > 0.0 {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        // `lo` is within 1e-12 s of the root and still has the feet above the ground, so no
        // flight frame ever reports them below it.
        Ok(lo)
    }

    /// The phase that holds time `t` (take-off belongs to the propulsion, touch-down to the landing).
    pub fn phase(&self, t: f64) -> Phase {
        if t < self.countermovement.start() {
            Phase::Standing
        } else if t < self.propulsion.start() {
            Phase::Countermovement
        } else if t <= self.takeoff_time {
            Phase::Propulsion
        } else if t < self.touchdown_time {
            Phase::Flight
        } else if t < self.recovery.start() {
            Phase::Landing
        } else if t < self.recovery.end() {
            Phase::Recovery
        } else {
            Phase::Settled
        }
    }

    /// The state at `t`.
    pub fn state(&self, t: f64) -> State {
        self.state_in(self.phase(t), t)
    }

    /// The closed form of `phase` evaluated at `t`, whether or not `t` lies in that phase
    /// (for checking the junctions from both sides).
    pub fn state_in(&self, phase: Phase, t: f64) -> State {
        let k = self.body.arm_fraction;
        let theta = self.arms.angle(t);
        let [ox, oz] = self.body.arm_offset(theta);
        let (com, trunk) = if phase == Phase::Flight {
            let tau = t - self.takeoff_time;
            let (z0, v0) = (self.takeoff_height, self.takeoff_speed);
            let com = [0.0, 0.0, z0 + v0 * tau - 0.5 * G * tau * tau];
            let com_v = [0.0, 0.0, v0 - G * tau];
            let com_a = [0.0, 0.0, -G];
            // Trunk = COM - k o (whole body = trunk + k o).
            let trunk = Motion {
                position: [com[0] - k * ox[0], 0.0, com[2] - k * oz[0]],
                velocity: [com_v[0] - k * ox[1], 0.0, com_v[2] - k * oz[1]],
                acceleration: [com_a[0] - k * ox[2], 0.0, com_a[2] - k * oz[2]],
            };
            let com = Motion {
                position: com,
                velocity: com_v,
                acceleration: com_a,
            };
            (com, trunk)
        } else {
            let z = match phase {
                // (Flight is handled above.)
                Phase::Standing | Phase::Settled | Phase::Flight => [self.body.trunk_standing, 0.0, 0.0],
                Phase::Countermovement => self.countermovement.eval(t),
                Phase::Propulsion => self.propulsion.eval(t),
                Phase::Landing => self.landing.eval(t),
                Phase::Recovery => self.recovery.eval(t),
            };
            // In contact the whole-body COM stays over the feet (x = 0): the trunk moves
            // opposite the arms, x_t = -k o_x.
            let trunk = Motion {
                position: [-k * ox[0], 0.0, z[0]],
                velocity: [-k * ox[1], 0.0, z[1]],
                acceleration: [-k * ox[2], 0.0, z[2]],
            };
            let com = Motion {
                position: [trunk.position[0] + k * ox[0], 0.0, z[0] + k * oz[0]],
                velocity: [trunk.velocity[0] + k * ox[1], 0.0, z[1] + k * oz[1]],
                acceleration: [trunk.acceleration[0] + k * ox[2], 0.0, z[2] + k * oz[2]],
            };
            (com, trunk)
        };
        let contact = phase != Phase::Flight;
        State {
            phase,
            com,
            trunk,
            arm_angle: theta[0],
            foot_height: if contact {
                0.0
            } else {
                trunk.position[2] - self.trunk_takeoff[0]
            },
            contact,
        }
    }

    /// Vertical ground force at `t` in body weights: (g + a_z) / g in contact, 0 in flight.
    pub fn ground_force(&self, t: f64) -> f64 {
        let st = self.state(t);
        if st.contact {
            (G + st.com.acceleration[2]) / G
        } else {
            0.0
        }
    }

    /// Time of the whole-body apex (s).
    pub fn apex_time(&self) -> f64 {
        self.takeoff_time + self.takeoff_speed / G
    }

    /// When anything starts to move: the countermovement or the arm swing, if earlier.
    pub fn start(&self) -> f64 {
        let t = self.countermovement.start();
        if self.arms.moves() { t.min(self.arms.start) } else { t }
    }

    /// When everything has stopped: the end of the recovery or of the arm swing, if later.
    pub fn end(&self) -> f64 {
        let t = self.recovery.end();
        if self.arms.moves() { t.max(self.arms.end()) } else { t }
    }

    /// The contact intervals in which the ground force may change: each with its phase.
    pub fn contact_intervals(&self) -> Vec<(Phase, f64, f64)> {
        let mut v = Vec::new();
        if self.arms.moves() && self.arms.start < self.countermovement.start() {
            v.push((Phase::Standing, self.arms.start, self.countermovement.start()));
        }
        v.push((
            Phase::Countermovement,
            self.countermovement.start(),
            self.countermovement.end(),
        ));
        v.push((Phase::Propulsion, self.propulsion.start(), self.takeoff_time));
        v.push((Phase::Landing, self.landing.start(), self.landing.end()));
        v.push((Phase::Recovery, self.recovery.start(), self.recovery.end()));
        if self.arms.moves() && self.arms.end() > self.recovery.end() {
            v.push((Phase::Settled, self.recovery.end(), self.arms.end()));
        }
        v
    }

    /// The largest (or smallest) of `f` over `phase`'s closed form on `[t0, t1]`: the best of
    /// `SAMPLES` + 1 samples, refined by golden-section search between its neighbours.
    fn extreme(&self, phase: Phase, t0: f64, t1: f64, largest: bool, f: impl Fn(&State) -> f64) -> (f64, f64) {
        let sign = if largest { 1.0 } else { -1.0 };
        let g = |t: f64| sign * f(&self.state_in(phase, t));
        let n = SAMPLES;
        let h = (t1 - t0) / n as f64;
        let mut best = (t0, g(t0));
        for i in 1..=n {
            let t = if i == n { t1 } else { t0 + h * i as f64 };
            let v = g(t);
            if v > best.1 {
                best = (t, v);
            }
        }
        let (mut a, mut b) = ((best.0 - h).max(t0), (best.0 + h).min(t1));
        let r = 0.5 * (5f64.sqrt() - 1.0);
        for _ in 0..60 {
            let (c, d) = (b - r * (b - a), a + r * (b - a));
            if g(c) > g(d) {
                b = d;
            } else {
                a = c;
            }
        }
        let m = 0.5 * (a + b);
        let vm = g(m);
        if vm > best.1 {
            best = (m, vm);
        }
        (best.0, sign * best.1)
    }

    /// The ground can push but not pull: the ground force must stay at or above zero in every
    /// contact phase.
    fn check_ground_force(&self) -> Result<(), NodeError> {
        for (phase, t0, t1) in self.contact_intervals() {
            if t1 <= t0 {
                continue;
            }
            let (t, bw) = self.extreme(phase, t0, t1, false, |st| (G + st.com.acceleration[2]) / G);
            if bw >= -1e-9 {
                continue;
            }
            let arms = self.arms.moves() && self.arms.start < t1 && self.arms.end() > t0;
            let change = match phase {
                Phase::Standing | Phase::Settled => "make `arm_swing_duration` longer or the swing smaller",
                Phase::Countermovement => "make `countermovement_duration` longer or `crouch_depth` smaller",
                Phase::Propulsion => {
                    "change `push_duration`, `crouch_depth`, `takeoff_extension` or the take-off (`rise` or \
                     `takeoff_speed`)"
                }
                Phase::Landing if self.landing_rebounds() => {
                    "the touch-down is too fast to stop within `landing_depth` without sinking below it and coming \
                     back up: make `landing_depth` larger or `landing_duration` shorter"
                }
                Phase::Landing => "make `landing_duration` longer or `landing_depth` smaller",
                Phase::Recovery | Phase::Flight => "make `recovery_duration` longer",
            };
            return Err(NodeError::new(format!(
                "during {} the ground would have to pull the body down (ground force {:.2} body weights at {}); {}{}",
                phase.name(),
                bw,
                self.at(t),
                change,
                if arms {
                    ", or move the arm swing (`arm_swing_start`, `arm_swing_duration`)"
                } else {
                    ""
                }
            )));
        }
        Ok(())
    }

    /// True when the trunk moves up at some time in the landing (it sinks below the planned
    /// lowest point and comes back).
    fn landing_rebounds(&self) -> bool {
        let (_, v) = self.extreme(Phase::Landing, self.landing.start(), self.landing.end(), true, |st| {
            st.trunk.velocity[2]
        });
        v > 1e-9
    }

    /// The landing may sink below its planned lowest point when the touch-down is fast and
    /// the landing shallow; that is allowed (a warning) unless it goes below the deepest crouch.
    fn check_landing_depth(&mut self) -> Result<(), NodeError> {
        let (t, low) = self.extreme(Phase::Landing, self.landing.start(), self.landing.end(), false, |st| {
            st.trunk.position[2]
        });
        let planned = self.trunk_takeoff[0] - self.spec.landing_depth;
        let floor = self.body.trunk_standing - deepest_crouch(self.spec.body_height);
        if low < floor {
            return Err(NodeError::new(format!(
                "the landing sinks to {:.3} m at {}, below the deepest crouch ({:.3} m, hips at knee height), and comes \
                 back up: the touch-down is too fast to stop within `landing_depth` {:.3} m in `landing_duration` \
                 {:.3} s; make `landing_depth` larger or `landing_duration` shorter",
                low,
                self.at(t),
                floor,
                self.spec.landing_depth,
                self.spec.landing_duration
            )));
        }
        if planned - low > 0.005 {
            self.warnings.push(format!(
                "the landing sinks {:.3} m below its planned lowest point (at {}) and comes back up: the touch-down \
                 is fast for `landing_depth` {:.3} m in `landing_duration` {:.3} s (a larger depth or a shorter \
                 duration avoids it)",
                planned - low,
                self.at(t),
                self.spec.landing_depth,
                self.spec.landing_duration
            ));
        }
        Ok(())
    }
}

/// A planned standing countermovement jump of a segmented body.
#[derive(Debug)]
pub struct Jump;

const DEG: f64 = std::f64::consts::PI / 180.0;

impl Node for Jump {
    fn spec() -> NodeSpec {
        let length = |name: &str, default: f64, range: (f64, f64), doc: &str| {
            ParamSpec::number(name, Dimension::Length, default, range, doc)
        };
        let time = |name: &str, default: f64, range: (f64, f64), doc: &str| {
            ParamSpec::number(name, Dimension::Time, default, range, doc)
        };
        let vec3 = |name: &str, dim: Dimension, doc: &str| PortSpec::new(name, PortKind::Vec3, dim, doc);
        let transform = |name: &str, doc: &str| PortSpec::new(name, PortKind::Transform, Dimension::Length, doc);
        NodeSpec {
            name: "jump".into(),
            doc: "Planned standing countermovement jump of the whole-body centre of mass, with a segmented body and \
                  an arm swing."
                .into(),
            notes: "Method: a two-part body. Both arms (each one rigid segment, shoulder to wrist, Dempster's total \
                    arm: 0.050 of body mass, centre of mass at 0.530 of the shoulder-to-wrist length, Winter 2009, \
                    Biomechanics and Motor Control of Human Movement, Table 4.1; upper arm 0.186 H + forearm 0.146 H, \
                    shoulder at 0.818 H, Drillis & Contini as drawn in Winter Fig. 4.1) swing about the shoulders in \
                    the x-z plane on a quintic smoothstep; the rest of the body (the trunk: head, trunk, legs) \
                    carries the shoulders. The whole-body COM is the mass-weighted sum. The trunk height in contact \
                    is made of quintic segments that fix position, velocity and acceleration at both ends: standing \
                    to the crouch (unweighting, braking), crouch to take-off (propulsion), touch-down to the lowest \
                    point (landing), lowest point to standing (recovery). At take-off the trunk is \
                    `takeoff_extension` above standing, at the speed `plan_by` sets, with the acceleration that makes \
                    the whole-body acceleration exactly -g, so the ground force falls to zero there; in `rise` mode \
                    the take-off speed is solved in closed form from apex = take-off height + v^2 / (2 g) given the \
                    arms' contribution. Flight: the whole-body COM follows the exact parabola; the trunk is what \
                    makes the mass-weighted sum equal it, so an arm swing in flight moves the trunk and the feet, \
                    not the COM. Touch-down is the first return of the feet (trunk height minus its take-off height) \
                    to the ground, found by bisection to 1e-12 s; the landing starts from the trunk's state there \
                    with whole-body acceleration -g. In contact the whole-body COM stays over the feet (x = 0) and \
                    the trunk shifts opposite the arms; in flight the horizontal momentum is zero. Everything is \
                    evaluated in closed form at each frame time, so any frame rate works. Ground force in body \
                    weights is (g + a_z) / g. Segment numbers were written from memory of Winter's table and \
                    checked by their sum; the head-centre height (0.936 H) and knee height (0.285 H) are from \
                    memory.\n\
                    Limits: a kinematic planner, not a muscle model. The take-off speed is prescribed, not produced \
                    by forces; in `speed` mode the arms add their momentum on top of the trunk speed (no reaction of \
                    the swing on the legs). The crouch is a rest point, so the ground force passes one body weight \
                    at the bottom (measured jumps typically push hardest near there). Vertical jumps only. Landmarks (head, chest, \
                    hips, neck, shoulders, hip joints) ride rigidly on the trunk COM; each arm is one straight \
                    segment at the arm angle (upper_arm at the shoulder, forearm at the elbow 0.186 H along it, hand \
                    at the wrist 0.332 H along it), and each leg a thigh (0.245 H) and a shank (0.246 H) bent forward \
                    at the knee to an ankle under the centre of mass at the feet's height (straight where out of \
                    reach); each segment's transform points its local -Z along it, so a capsule collider from one \
                    joint to the next is the limb (shoulder and hip widths 0.259 H and 0.191 H, ankle height \
                    0.039 H: from memory of Winter's Fig. 4.1). The arms stay at `arm_swing_to` after the swing, so \
                    the COM stands higher after the recovery than before the jump when they end up raised. `body_mass` scales forces only: every output here depends \
                    on mass fractions, not on the mass. Errors: a ground that would have to pull (force below zero \
                    in contact), a crouch or landing deeper than hips at knee height, an apex below the take-off \
                    height, a touch-down before the apex, legs that would not leave the ground. Frames that do not \
                    cover the whole jump are allowed, with a warning."
                .into(),
            inputs: vec![],
            outputs: vec![
                vec3("com_position", Dimension::Length, "Whole-body centre of mass."),
                vec3(
                    "com_velocity",
                    Dimension::Velocity,
                    "Whole-body centre-of-mass velocity.",
                ),
                vec3(
                    "com_acceleration",
                    Dimension::Acceleration,
                    "Whole-body centre-of-mass acceleration; ground force is m (g + a_z) in contact.",
                ),
                vec3(
                    "trunk_position",
                    Dimension::Length,
                    "Centre of mass of the body without the arms.",
                ),
                PortSpec::new(
                    "foot_height",
                    PortKind::Scalar,
                    Dimension::Length,
                    "Height of the feet above the ground; 0 in contact.",
                ),
                PortSpec::new(
                    "contact",
                    PortKind::Flag,
                    Dimension::Dimensionless,
                    "1 while the feet are on the ground.",
                ),
                transform("head", "Head centre riding on the trunk (identity rotation)."),
                transform("chest", "Chest (nipple line) riding on the trunk (identity rotation)."),
                transform(
                    "hips",
                    "Hips (greater trochanter level) riding on the trunk (identity rotation).",
                ),
                transform("neck", "Base of the neck, at shoulder height on the trunk (identity rotation)."),
                transform("shoulder_l", "Left shoulder joint (+Y side) on the trunk (identity rotation)."),
                transform("shoulder_r", "Right shoulder joint (-Y side) on the trunk (identity rotation)."),
                transform(
                    "upper_arm_l",
                    "Left upper arm: at the shoulder joint, local -Z along the arm to the elbow.",
                ),
                transform(
                    "upper_arm_r",
                    "Right upper arm: at the shoulder joint, local -Z along the arm to the elbow.",
                ),
                transform("forearm_l", "Left forearm: at the elbow, local -Z along the arm to the wrist."),
                transform("forearm_r", "Right forearm: at the elbow, local -Z along the arm to the wrist."),
                transform("hand_l", "Left hand: at the wrist, local -Z along the arm."),
                transform("hand_r", "Right hand: at the wrist, local -Z along the arm."),
                transform("thigh_l", "Left thigh: at the hip joint, local -Z along the thigh to the knee."),
                transform("thigh_r", "Right thigh: at the hip joint, local -Z along the thigh to the knee."),
                transform("shin_l", "Left shank: at the knee, local -Z along the shank to the ankle."),
                transform("shin_r", "Right shank: at the knee, local -Z along the shank to the ankle."),
                transform("foot_l", "Left ankle (identity rotation)."),
                transform("foot_r", "Right ankle (identity rotation)."),
                PortSpec::new(
                    "colliders",
                    PortKind::Points,
                    Dimension::Length,
                    "The body to collide with, a list of 12 colliders for a strand's \
                     `colliders` input, in this order: head (a sphere at `head`), trunk (hips to neck), upper arms \
                     (shoulder to elbow) left and right, forearms (elbow to wrist), thighs (hip joint to knee), \
                     shanks (knee to ankle), feet (spheres at the ankles). Radii scale with `body_height` (from \
                     memory, approximate girths; trajectory::body::collider_radii).",
                )
                .with_points(BODY_COLLIDERS * colliders::POINTS_PER_COLLIDER),
                PortSpec::new(
                    "arm_angle",
                    PortKind::Scalar,
                    Dimension::Angle,
                    "Arm angle: 0 hanging down, positive forward and up.",
                ),
            ],
            params: vec![
                ParamSpec::number("body_mass", Dimension::Mass, 58.0, (20.0, 300.0), "Body mass."),
                length(
                    "body_height",
                    1.65,
                    (0.8, 2.5),
                    "Body height H; segment lengths scale with it.",
                ),
                length(
                    "standing_com_height",
                    0.55 * 1.65,
                    (0.3, 1.5),
                    "Whole-body COM height in quiet standing, arms at `arm_swing_from` (0.45 H to 0.65 H).",
                ),
                length(
                    "crouch_depth",
                    0.28,
                    (0.0, 1.0),
                    "How far the trunk COM goes down in the countermovement (at most 0.245 H).",
                ),
                ParamSpec::choice(
                    "plan_by",
                    &["rise", "takeoff_speed"],
                    "What the jump is planned by: `rise`, the apex reached; `takeoff_speed`, the speed the legs give \
                     the trunk.",
                ),
                length(
                    "rise",
                    0.35,
                    (0.01, 2.0),
                    "With plan_by = rise: whole-body COM apex above `standing_com_height`.",
                ),
                ParamSpec::number(
                    "takeoff_speed",
                    Dimension::Velocity,
                    2.6,
                    (0.1, 8.0),
                    "With plan_by = takeoff_speed: vertical speed of the trunk (body without arms) at take-off; arms add theirs.",
                ),
                length(
                    "takeoff_extension",
                    0.10,
                    (0.0, 0.3),
                    "Trunk COM at take-off above standing (hip, knee, ankle extension onto the toes).",
                ),
                time(
                    "countermovement_duration",
                    0.50,
                    (0.05, 5.0),
                    "Unweighting and braking, standing to the crouch.",
                ),
                time("push_duration", 0.30, (0.05, 5.0), "Propulsion, crouch to take-off."),
                length(
                    "landing_depth",
                    0.15,
                    (0.01, 1.0),
                    "Trunk COM at the lowest point of the landing below its take-off height.",
                ),
                time("landing_duration", 0.20, (0.02, 5.0), "Touch-down to the lowest point."),
                time(
                    "recovery_duration",
                    0.60,
                    (0.05, 10.0),
                    "Lowest point back to standing.",
                ),
                ParamSpec::integer(
                    "takeoff_frame",
                    48,
                    (-1_000_000, 1_000_000),
                    "Frame number of take-off (time = frame / frame rate).",
                ),
                ParamSpec::number(
                    "arm_swing_from",
                    Dimension::Angle,
                    -40.0 * DEG,
                    (-180.0 * DEG, 180.0 * DEG),
                    "Arm angle before the swing, default -40 deg (0 hanging down, positive forward and up, negative back).",
                ),
                ParamSpec::number(
                    "arm_swing_to",
                    Dimension::Angle,
                    160.0 * DEG,
                    (-180.0 * DEG, 180.0 * DEG),
                    "Arm angle after the swing, default 160 deg; equal to `arm_swing_from` for no swing.",
                ),
                // Swing timing defaults: starting 0.30 s before take-off and lasting 0.45 s puts
                // the arms at about 118 deg and still rising at take-off, so the swing adds both
                // take-off height and speed (with plan_by = takeoff_speed: 27 % of the no-swing rise, 30 % of
                // the gain from height; Lees, Vanrenterghem & De Clercq 2004, J Biomech
                // 37:1929-40, report 28 % from height). A 0.30 s swing would end at take-off with
                // the arms at rest, adding height only.
                time(
                    "arm_swing_start",
                    -0.30,
                    (-5.0, 5.0),
                    "Start of the swing relative to take-off (negative = before).",
                ),
                time("arm_swing_duration", 0.45, (0.05, 5.0), "Length of the swing."),
            ],
            summaries: vec![
                SummarySpec::new("takeoff_time", Dimension::Time, "Time of take-off."),
                SummarySpec::new(
                    "takeoff_speed",
                    Dimension::Velocity,
                    "Whole-body vertical COM speed at take-off.",
                ),
                SummarySpec::new(
                    "takeoff_height",
                    Dimension::Length,
                    "Whole-body COM height at take-off.",
                ),
                SummarySpec::new("apex_height", Dimension::Length, "Whole-body COM apex."),
                SummarySpec::new("rise", Dimension::Length, "Apex minus the standing COM height."),
                SummarySpec::new("flight_time", Dimension::Time, "Take-off to touch-down."),
                SummarySpec::new("touchdown_time", Dimension::Time, "Time of touch-down."),
                SummarySpec::new(
                    "peak_landing_force",
                    Dimension::BodyWeight,
                    "Largest ground force over the landing, (g + a_z) / g.",
                ),
            ],
        }
    }

    /// The plan is made at check time too: a jump the body cannot do (a crouch deeper than
    /// the legs allow, a landing that would need the ground to pull) is a problem at the line
    /// of the first parameter the planner's message names.
    fn check(params: &Params, _: &[usize], timeline: Timeline) -> Vec<CheckProblem> {
        match JumpSpec::from_params(params, timeline).and_then(|s| Plan::new(&s).map(|_| ())) {
            Ok(()) => Vec::new(),
            Err(e) => {
                let names: Vec<String> = Self::spec().params.into_iter().map(|p| p.name).collect();
                // The first `name` in the message that is a parameter of this node.
                let blamed = e.0.split('`').skip(1).step_by(2).find(|w| names.iter().any(|n| n == w));
                vec![CheckProblem {
                    param: blamed.map(str::to_owned),
                    message: e.0,
                    help: None,
                }]
            }
        }
    }

    fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
        let tl = io.timeline();
        let spec = JumpSpec::from_params(params, tl)?;
        let plan = Plan::new(&spec)?;
        for w in &plan.warnings {
            io.warn(w.clone());
        }
        let frames = io.frames();
        if frames > 0 {
            let (first, last) = (tl.time(0), tl.time(frames - 1));
            if first > plan.start() || last < plan.end() {
                io.warn(format!(
                    "frames {}..{} ({first:.3} s to {last:.3} s) do not cover the whole jump, which runs from {} to \
                     {}; widen the frame range or move `takeoff_frame`",
                    tl.frame_number(0),
                    tl.frame_number(frames - 1),
                    plan.at(plan.start()),
                    plan.at(plan.end())
                ));
            }
        }
        io.summary("takeoff_time", plan.takeoff_time)?;
        io.summary("takeoff_speed", plan.takeoff_speed)?;
        io.summary("takeoff_height", plan.takeoff_height)?;
        io.summary("apex_height", plan.apex_height)?;
        io.summary("rise", plan.apex_height - spec.standing_com_height)?;
        io.summary("flight_time", plan.touchdown_time - plan.takeoff_time)?;
        io.summary("touchdown_time", plan.touchdown_time)?;
        io.summary("peak_landing_force", plan.peak_landing_force)?;

        let states: Vec<State> = (0..frames).map(|i| plan.state(tl.time(i))).collect();
        io.fill("com_position", |i, out| out.copy_from_slice(&states[i].com.position))?;
        io.fill("com_velocity", |i, out| out.copy_from_slice(&states[i].com.velocity))?;
        io.fill("com_acceleration", |i, out| {
            out.copy_from_slice(&states[i].com.acceleration)
        })?;
        io.fill("trunk_position", |i, out| {
            out.copy_from_slice(&states[i].trunk.position)
        })?;
        io.fill("foot_height", |i, out| out[0] = states[i].foot_height)?;
        io.fill("contact", |i, out| out[0] = if states[i].contact { 1.0 } else { 0.0 })?;
        io.fill("arm_angle", |i, out| out[0] = states[i].arm_angle)?;
        for (name, fraction) in [
            ("head", proportions::HEAD_CENTRE),
            ("chest", proportions::CHEST),
            ("hips", proportions::HIP),
        ] {
            let dz = plan.body.landmark_offset(fraction);
            io.fill(name, |i, out| {
                let p = states[i].trunk.position;
                out.copy_from_slice(&[p[0], p[1], p[2] + dz, 0.0, 0.0, 0.0, 1.0]);
            })?;
        }
        let limbs: Vec<Limbs> = states.iter().map(|s| limbs(&plan.body, s)).collect();
        let put = |out: &mut [f64], p: [f64; 3], q: [f64; 4]| {
            out.copy_from_slice(&[p[0], p[1], p[2], q[0], q[1], q[2], q[3]]);
        };
        let identity = [0.0, 0.0, 0.0, 1.0];
        io.fill("neck", |i, out| put(out, limbs[i].neck, identity))?;
        for (side, k) in [("l", 0), ("r", 1)] {
            io.fill(&format!("shoulder_{side}"), |i, out| {
                put(out, limbs[i].shoulder[k], identity)
            })?;
            io.fill(&format!("upper_arm_{side}"), |i, out| {
                put(out, limbs[i].shoulder[k], limbs[i].arm_rotation)
            })?;
            io.fill(&format!("forearm_{side}"), |i, out| {
                put(out, limbs[i].elbow[k], limbs[i].arm_rotation)
            })?;
            io.fill(&format!("hand_{side}"), |i, out| {
                put(out, limbs[i].wrist[k], limbs[i].arm_rotation)
            })?;
            io.fill(&format!("thigh_{side}"), |i, out| {
                put(
                    out,
                    limbs[i].hip[k],
                    segment_rotation(limbs[i].hip[k], limbs[i].knee[k]),
                )
            })?;
            io.fill(&format!("shin_{side}"), |i, out| {
                put(
                    out,
                    limbs[i].knee[k],
                    segment_rotation(limbs[i].knee[k], limbs[i].ankle[k]),
                )
            })?;
            io.fill(&format!("foot_{side}"), |i, out| put(out, limbs[i].ankle[k], identity))?;
        }
        let head = plan.body.landmark_offset(proportions::HEAD_CENTRE);
        let hips = plan.body.landmark_offset(proportions::HIP);
        io.fill("colliders", |i, out| {
            let t = states[i].trunk.position;
            colliders::write_frame(
                out,
                &body_colliders(
                    &limbs[i],
                    [t[0], t[1], t[2] + head],
                    [t[0], t[1], t[2] + hips],
                    plan.body.height,
                ),
            );
        })?;
        Ok(())
    }
}

/// How many colliders make the body (trajectory.jump's `colliders`).
pub const BODY_COLLIDERS: usize = 12;

/// The body's colliders at one state, in the order of the `colliders` output: head, trunk,
/// upper arms, forearms, thighs, shanks, feet (left before right), radii in
/// [`collider_radii`] times the body height `h`.
pub fn body_colliders(l: &Limbs, head: [f64; 3], hips: [f64; 3], h: f64) -> [Capsule; BODY_COLLIDERS] {
    use collider_radii as r;
    let limb = |a: [f64; 3], b: [f64; 3], radii: [f64; 2]| Capsule {
        start: a,
        end: b,
        start_radius: radii[0] * h,
        end_radius: radii[1] * h,
    };
    [
        Capsule::sphere(head, r::HEAD * h),
        limb(hips, l.neck, [r::TRUNK; 2]),
        limb(l.shoulder[0], l.elbow[0], r::UPPER_ARM),
        limb(l.shoulder[1], l.elbow[1], r::UPPER_ARM),
        limb(l.elbow[0], l.wrist[0], r::FOREARM),
        limb(l.elbow[1], l.wrist[1], r::FOREARM),
        limb(l.hip[0], l.knee[0], r::THIGH),
        limb(l.hip[1], l.knee[1], r::THIGH),
        limb(l.knee[0], l.ankle[0], r::SHIN),
        limb(l.knee[1], l.ankle[1], r::SHIN),
        Capsule::sphere(l.ankle[0], r::FOOT * h),
        Capsule::sphere(l.ankle[1], r::FOOT * h),
    ]
}

/// The body's joints at one state, world space (x forward, y to the left, z up): both sides,
/// left (+y) first.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Limbs {
    /// Base of the neck: the mid-point of the shoulders.
    pub neck: [f64; 3],
    /// Shoulder joints.
    pub shoulder: [[f64; 3]; 2],
    /// Elbows: the upper arm's length along the arm.
    pub elbow: [[f64; 3]; 2],
    /// Wrists: the whole arm's length along the arm.
    pub wrist: [[f64; 3]; 2],
    /// The arms' rotation (both swing together): local -Z along the arm.
    pub arm_rotation: [f64; 4],
    /// Hip joints.
    pub hip: [[f64; 3]; 2],
    /// Knees, bending forward.
    pub knee: [[f64; 3]; 2],
    /// Ankles: under the centre of mass (x = 0) at the feet's height above ankle height, or
    /// at the end of a straight leg where that is out of reach.
    pub ankle: [[f64; 3]; 2],
}

/// The joints of `body` at `state`: shoulders and hips ride on the trunk at their heights
/// and half their widths (Drillis & Contini 1966, as drawn in Winter 2009, Fig. 4.1; the
/// widths and the ankle height from memory), each arm is one straight segment at the arm
/// angle (0 hanging down, forward and up positive) with the elbow at the upper arm's length,
/// and each leg is a thigh (hip to knee height) and a shank (knee to ankle height) bent
/// forward at the knee to reach the ankle.
pub fn limbs(body: &Body, state: &State) -> Limbs {
    let h = body.height;
    let t = state.trunk.position;
    let at = |fraction: f64, side: f64, half_width: f64| {
        [
            t[0],
            t[1] + side * half_width * h,
            t[2] + body.landmark_offset(fraction),
        ]
    };
    let sides = [1.0, -1.0];
    let shoulder = sides.map(|s| at(proportions::SHOULDER, s, 0.5 * proportions::SHOULDER_WIDTH));
    let (sin, cos) = state.arm_angle.sin_cos();
    let along = |p: [f64; 3], length: f64| [p[0] + length * sin, p[1], p[2] - length * cos];
    let elbow = shoulder.map(|p| along(p, proportions::UPPER_ARM * h));
    let wrist = shoulder.map(|p| along(p, (proportions::UPPER_ARM + proportions::FOREARM) * h));
    let arm_rotation = segment_rotation([0.0; 3], along([0.0; 3], 1.0));
    let hip = sides.map(|s| at(proportions::HIP, s, 0.5 * proportions::HIP_WIDTH));
    let (l1, l2) = (
        (proportions::HIP - proportions::KNEE) * h,
        (proportions::KNEE - proportions::ANKLE) * h,
    );
    let mut knee = [[0.0; 3]; 2];
    let mut ankle = [[0.0; 3]; 2];
    for k in 0..2 {
        let foot = [0.0, hip[k][1], state.foot_height + proportions::ANKLE * h];
        (knee[k], ankle[k]) = leg(hip[k], foot, l1, l2);
    }
    Limbs {
        neck: [t[0], t[1], t[2] + body.landmark_offset(proportions::SHOULDER)],
        shoulder,
        elbow,
        wrist,
        arm_rotation,
        hip,
        knee,
        ankle,
    }
}

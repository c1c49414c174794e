//! `trajectory.jump`: a planned standing countermovement jump of a segmented body, whose
//! centre of mass follows a ground-force profile of the measured shape, evaluated in closed
//! form at every frame.
//!
//! The physics lives in plain functions and types ([`JumpSpec`], [`Plan`], [`ArmSwing`],
//! [`solve_push`], [`solve_countermovement`]) that the node and the tests share.

use heft_node_sdk::{
    CheckProblem, Dimension, Io, Node, NodeError, NodeSpec, ParamSpec, Params, PortKind, PortSpec, STANDARD_GRAVITY,
    SummarySpec, Timeline,
};

use crate::body::{Body, Feet, Limbs, collider_radii, proportions, segment_rotation};
use crate::profile::{Piece, smoothstep};
use heft_node_sdk::colliders::{self, Capsule};

const G: f64 = STANDARD_GRAVITY;

/// What fixes the take-off.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Drive {
    /// Jump height (m): the rise of the whole-body centre of mass from take-off to the apex,
    /// v^2 / (2 g), the height a force plate or a flight time measures.
    JumpHeight(f64),
    /// Whole-body apex this far (m) above the standing centre of mass.
    Rise(f64),
    /// Vertical speed (m/s) the legs give the body at take-off; the arms add theirs.
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
    /// How far the whole-body centre of mass goes down in the countermovement (m).
    pub crouch_depth: f64,
    /// What fixes the take-off.
    pub drive: Drive,
    /// How far the ankles rise onto the balls of the feet by take-off (m).
    pub takeoff_extension: f64,
    /// Unweighting plus braking (s).
    pub countermovement_duration: f64,
    /// Share of the push held at the force of the lowest point before it declines to zero.
    pub push_hold: f64,
    /// Whole-body centre of mass at the lowest point of the landing below standing (m).
    pub landing_depth: f64,
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
    /// Forward speed at take-off (m/s): 0 for a vertical jump, more for a standing broad jump.
    pub forward_speed: f64,
    /// Frames per second, used only to name frames in messages.
    pub frame_rate: f64,
}

impl JumpSpec {
    /// Reads the node's parameters; the take-off time is frame `takeoff_frame` of `timeline`'s rate.
    pub fn from_params(params: &Params, timeline: Timeline) -> Result<JumpSpec, NodeError> {
        let drive = match params.choice("plan_by")? {
            "jump_height" => Drive::JumpHeight(params.number("jump_height")?),
            "rise" => Drive::Rise(params.number("rise")?),
            "takeoff_speed" => Drive::Speed(params.number("takeoff_speed")?),
            other => {
                return Err(NodeError::new(format!(
                    "`plan_by` is `{other}`; use `jump_height`, `rise` or `takeoff_speed`"
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
            crouch_depth: params.number("crouch_depth")?,
            drive,
            takeoff_extension: params.number("takeoff_extension")?,
            countermovement_duration: params.number("countermovement_duration")?,
            push_hold: params.number("push_hold")?,
            landing_depth: params.number("landing_depth")?,
            recovery_duration: params.number("recovery_duration")?,
            takeoff_time: takeoff.time(0),
            arm_swing_from: params.number("arm_swing_from")?,
            arm_swing_to: params.number("arm_swing_to")?,
            arm_swing_start: params.number("arm_swing_start")?,
            arm_swing_duration: params.number("arm_swing_duration")?,
            forward_speed: params.number("forward_speed")?,
            frame_rate: timeline.fps(),
        })
    }
}

/// The phases of the jump.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Phase {
    /// Quiet standing before the countermovement (arms may already swing).
    Standing,
    /// The ground force below body weight: the body starts down.
    Unweighting,
    /// The ground force above body weight, stopping the descent at the lowest point.
    Braking,
    /// Propulsion, from the lowest point to take-off.
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
            Phase::Unweighting => "the unweighting",
            Phase::Braking => "the braking",
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

/// The planned motion at one instant.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct State {
    /// The phase whose closed form gave this state.
    pub phase: Phase,
    /// Whole-body centre of mass.
    pub com: Motion,
    /// Arm angle (rad).
    pub arm_angle: f64,
    /// Feet in contact with the ground.
    pub contact: bool,
}

/// The deepest the centre of mass may go below its standing height, in the countermovement
/// or the landing: hips (0.530 H) down to knee height (0.285 H), thighs about horizontal. A
/// modelling limit taken from Drillis & Contini's proportions; common practice, no source
/// for using it as the limit.
pub fn deepest_crouch(height: f64) -> f64 {
    (proportions::HIP - proportions::KNEE) * height
}

/// The push: the centre of mass starts at rest at the lowest point with acceleration A,
/// holds it for the share `hold` of the push, then declines as the square of the time into
/// the decline to `a_end` at take-off (-g: the ground force falls to zero, steeply, as
/// measured records do), covering `rise` (m) and reaching `speed` (m/s). With
/// alpha = (1 - hold) / 3 and beta = (1 - hold)^2 / 12 (the integrals of w^2 and of
/// (1 - w) w^2 over the decline), speed = T (A (1 - alpha) + a_end alpha) and
/// rise = T^2 (A (1/2 - beta) + a_end beta): eliminating T leaves a quadratic in A, whose
/// larger root is the push that starts hardest. Returns (A, T), or `None` when no push of
/// this shape does it.
pub fn solve_push(speed: f64, rise: f64, a_end: f64, hold: f64) -> Option<(f64, f64)> {
    let alpha = (1.0 - hold) / 3.0;
    let beta = (1.0 - hold) * (1.0 - hold) / 12.0;
    let (p, q, s, w) = (1.0 - alpha, a_end * alpha, 0.5 - beta, a_end * beta);
    let r = rise / (speed * speed);
    let (a2, a1, a0) = (r * p * p, 2.0 * r * p * q - s, r * q * q - w);
    let disc = a1 * a1 - 4.0 * a2 * a0;
    if !(speed > 0.0 && rise > 0.0 && disc >= 0.0) {
        return None;
    }
    let x = (-a1 + disc.sqrt()) / (2.0 * a2);
    let rate = p * x + q;
    (rate > 0.0 && s * x + w > 0.0).then(|| (x, speed / rate))
}

/// The countermovement: from rest, the unweighting (acceleration -A_u b(u), b = 30 u^2
/// (1 - u)^2, over T_u) then the braking (A s(u), the smoothstep, over T_b) stop at rest
/// `depth` lower with acceleration A, in `duration` = T_u + T_b. The velocity ends at zero
/// when A T_b / 2 = A_u T_u, and the depth is A_u T_u (T_u / 2 + 5 T_b / 7) (the integrals
/// of b and s and of (1 - u) times them: 1, 1/2, 1/2, 1/7), so T_b solves
/// (3/14) T_b^2 + (duration / 2) T_b - 2 depth / A = 0. Returns (T_u, T_b, A_u), or `None`
/// when A is too small to stop that depth in that time (T_b would fill the duration).
pub fn solve_countermovement(depth: f64, duration: f64, a: f64) -> Option<(f64, f64, f64)> {
    if !(a > 0.0 && depth > 0.0) {
        return None;
    }
    let (qa, qb, qc) = (3.0 / 14.0, 0.5 * duration, -2.0 * depth / a);
    let tb = (-qb + (qb * qb - 4.0 * qa * qc).sqrt()) / (2.0 * qa);
    let tu = duration - tb;
    (tu > 0.0 && tb > 0.0).then(|| (tu, tb, a * tb / (2.0 * tu)))
}

/// The landing: from touch-down at `speed` (m/s, downward) with the acceleration -g (no
/// force yet), the acceleration -g (1 - s(u)) + B b(u) (s the smoothstep, b = 12 u (1 - u)^2,
/// whose slope at u = 0 makes the force rise at once, as at an impact) brings the centre of
/// mass to rest `depth` lower with no acceleration (one body weight). The end velocity is
/// zero when B = speed / T + g / 2 (the integrals of 1 - s and of b: 1/2 and 1), and the
/// depth is then 0.4 speed T + 0.4 g T^2 / 7 (of (1 - u) times them: 5/14 and 3/5), a
/// quadratic in T with one positive root. The force g s + B b never goes below zero.
/// Returns (T, B), or `None` without a positive depth.
pub fn solve_landing(speed: f64, depth: f64) -> Option<(f64, f64)> {
    if !(depth > 0.0 && speed >= 0.0) {
        return None;
    }
    let (a, b) = (0.4 * G / 7.0, 0.4 * speed);
    let t = (-b + (b * b + 4.0 * a * depth).sqrt()) / (2.0 * a);
    (t > 0.0).then(|| (t, speed / t + 0.5 * G))
}

/// The share of the push over which its horizontal force comes in.
const LEAN_RAMP: f64 = 0.3;

/// 8-point Gauss-Legendre nodes and weights on [-1, 1] (Abramowitz & Stegun 1964, Table
/// 25.4): exact for polynomials of degree up to 15.
const GAUSS8: [(f64, f64); 8] = [
    (-0.960_289_856_497_536_2, 0.101_228_536_290_376_26),
    (-0.796_666_477_413_626_7, 0.222_381_034_453_374_47),
    (-0.525_532_409_916_329, 0.313_706_645_877_887_3),
    (-0.183_434_642_495_649_8, 0.362_683_783_378_362),
    (0.183_434_642_495_649_8, 0.362_683_783_378_362),
    (0.525_532_409_916_329, 0.313_706_645_877_887_3),
    (0.796_666_477_413_626_7, 0.222_381_034_453_374_47),
    (0.960_289_856_497_536_2, 0.101_228_536_290_376_26),
];

/// int_t0^t f(s) ds and int_t0^t (t - s) f(s) ds for an `f` that is one polynomial between
/// consecutive `breaks` (each stretch by [`GAUSS8`]).
fn integrate_pieces(f: &dyn Fn(f64) -> f64, t0: f64, t: f64, breaks: &[f64]) -> (f64, f64) {
    let mut cuts = vec![t0];
    let mut inner: Vec<f64> = breaks.iter().copied().filter(|&b| b > t0 && b < t).collect();
    inner.sort_by(f64::total_cmp);
    cuts.extend(inner);
    cuts.push(t);
    let (mut v, mut x) = (0.0, 0.0);
    for w in cuts.windows(2) {
        let (a, b) = (w[0], w[1]);
        if b <= a {
            continue;
        }
        let (mid, half) = (0.5 * (a + b), 0.5 * (b - a));
        for (node, weight) in GAUSS8 {
            let s = mid + half * node;
            let fs = f(s) * weight * half;
            v += fs;
            x += (t - s) * fs;
        }
    }
    (v, x)
}

/// The deepest dip of the unweighting's b(u) = 30 u^2 (1 - u)^2, at u = 1/2.
const UNWEIGHTING_PEAK: f64 = 30.0 / 16.0;

/// A planned jump: the centre of mass piece by piece, the body that carries it, and the
/// figures worth reporting.
#[derive(Debug, Clone, PartialEq)]
pub struct Plan {
    /// The parameters.
    pub spec: JumpSpec,
    /// The segmented body.
    pub body: Body,
    /// The arm swing, in absolute time.
    pub arms: ArmSwing,
    /// The centre of mass's height in contact, in time order, each with its phase (the
    /// flight between them is the parabola).
    pub pieces: Vec<(Phase, Piece)>,
    /// Whole-body centre of mass in quiet standing before the jump (m).
    pub standing_height: f64,
    /// Whole-body centre of mass standing after the recovery (m).
    pub settled_height: f64,
    /// Start of the countermovement (s).
    pub countermovement_start: f64,
    /// Lowest point of the countermovement, where propulsion starts (s).
    pub lowest_time: f64,
    /// Unweighting, braking and push durations (s).
    pub durations: [f64; 3],
    /// Touch-down to the lowest point of the landing (s).
    pub landing_duration: f64,
    /// Take-off time (s).
    pub takeoff_time: f64,
    /// Touch-down time (s).
    pub touchdown_time: f64,
    /// Whole-body centre-of-mass height at take-off (m).
    pub takeoff_height: f64,
    /// Whole-body vertical centre-of-mass speed at take-off (m/s).
    pub takeoff_speed: f64,
    /// Whole-body apex (m).
    pub apex_height: f64,
    /// Ground force at the lowest point of the countermovement (body weights): the push's
    /// largest.
    pub lowest_point_force: f64,
    /// Least ground force of the unweighting (body weights).
    pub least_unweighting_force: f64,
    /// Peak ground force over the landing (body weights).
    pub peak_landing_force: f64,
    /// Where the balls of the feet stand before the jump (x).
    pub ball_x: f64,
    /// Where they stand after it (x).
    pub landing_ball_x: f64,
    /// The feet at take-off, relative to the pelvis.
    pub flight_feet: Feet,
    /// Forward speed at take-off (m/s).
    pub forward_speed: f64,
    /// The largest share of the push's vertical force its horizontal force takes (the
    /// friction a forward jump needs; see [`Plan::horizontal`]).
    pub push_lean: f64,
    /// The same over the landing.
    pub landing_lean: f64,
    /// The centre of mass's x at take-off (m).
    pub takeoff_x: f64,
    /// Its x once the landing has stopped it (m).
    pub rest_x: f64,
    /// How far the straight legs turn forward about the hips in the air (rad).
    pub leg_swing: f64,
    /// When the legs' turn ends: the touch-down (s).
    pub swing_end: f64,
    /// Things that are allowed but worth saying.
    pub warnings: Vec<String>,
}

/// Samples per phase for the checks of the ground force, the reach and the landing peak.
const SAMPLES: usize = 2000;

/// Feet moved by `d`.
fn shifted(f: &Feet, d: [f64; 3]) -> Feet {
    let add = |p: [f64; 3]| [p[0] + d[0], p[1] + d[1], p[2] + d[2]];
    Feet {
        ankle: f.ankle.map(add),
        ball: f.ball.map(add),
    }
}

impl Plan {
    /// Solves a jump, or says which parameter to change and which way.
    pub fn new(spec: &JumpSpec) -> Result<Plan, NodeError> {
        let s = *spec;
        let h = s.body_height;
        let body = Body::new(h);
        let deepest = deepest_crouch(h);
        if s.crouch_depth > deepest {
            return Err(NodeError::new(format!(
                "`crouch_depth` {:.3} m is deeper than a {:.2} m tall body allows: at most {:.3} m (hips down to knee \
                 height); reduce `crouch_depth` or raise `body_height`",
                s.crouch_depth, h, deepest
            )));
        }
        if s.landing_depth > deepest {
            return Err(NodeError::new(format!(
                "`landing_depth` {:.3} m is deeper than a {:.2} m tall body allows: at most {:.3} m (hips down to knee \
                 height); reduce `landing_depth` or raise `body_height`",
                s.landing_depth, h, deepest
            )));
        }
        let most = body.greatest_lift();
        if s.takeoff_extension > most {
            return Err(NodeError::new(format!(
                "`takeoff_extension` {:.3} m lifts the ankles higher than a {:.2} m tall body's feet allow (at most \
                 {:.3} m, the foot upright on its ball); reduce `takeoff_extension`",
                s.takeoff_extension, h, most
            )));
        }
        let t_to = s.takeoff_time;
        let arms = ArmSwing {
            from: s.arm_swing_from,
            to: s.arm_swing_to,
            start: t_to + s.arm_swing_start,
            duration: s.arm_swing_duration,
        };
        let ball_x = body.standing_ball_x();
        let standing_height = straight_pose(&body, s.arm_swing_from, ball_x, 0.0, 0.0).1[2];
        let theta_to = arms.angle(t_to);
        // The arms' share of the take-off speed: k r sin(theta) theta'.
        let arm_share = body.arm_fraction() * body.arm_radius() * theta_to[0].sin() * theta_to[1];
        let z_low = standing_height - s.crouch_depth;
        // A forward take-off leans the straight legs at take-off, which lowers the take-off
        // height, which changes the push, which moves the take-off forward: a fixed point,
        // reached in a few rounds (one for a vertical jump, whose take-off is over the feet).
        let mut takeoff_x = 0.0;
        let mut solved = None;
        for _ in 0..30 {
            let (takeoff_limbs, takeoff_com) =
                straight_pose(&body, theta_to[0], ball_x, s.takeoff_extension, takeoff_x);
            let z_to = takeoff_com[2];
            let speed = match s.drive {
                Drive::JumpHeight(height) => (2.0 * G * height).sqrt(),
                Drive::Speed(v) => v + arm_share,
                Drive::Rise(rise) => {
                    let above = z_to - standing_height;
                    if rise <= above {
                        return Err(NodeError::new(format!(
                            "`rise` {:.3} m puts the apex below the take-off height: the centre of mass is already \
                             {:.3} m above standing at take-off (`takeoff_extension` and the arms); raise `rise` above \
                             {:.3} m, reduce `takeoff_extension`, or plan by `jump_height`",
                            rise, above, above
                        )));
                    }
                    (2.0 * G * (rise - above)).sqrt()
                }
            };
            if speed - arm_share <= 0.0 {
                return Err(NodeError::new(format!(
                    "the arms carry the whole take-off speed ({arm_share:.3} m/s of {speed:.3} m/s), so the legs would \
                     not leave the ground; jump higher, or slow the arms at take-off (`arm_swing_start`, \
                     `arm_swing_duration`)"
                )));
            }
            if speed <= 0.0 {
                return Err(NodeError::new(format!(
                    "the arms swing down so fast at take-off that the body's centre of mass moves down ({speed:.3} \
                     m/s): there is no jump; raise `takeoff_speed` or change the arm swing (`arm_swing_from`, \
                     `arm_swing_to`, `arm_swing_start`)"
                )));
            }
            let Some((a_push, t_push)) = solve_push(speed, z_to - z_low, -G, s.push_hold) else {
                return Err(NodeError::new(format!(
                    "no push of this shape goes from the crouch to take-off at {speed:.3} m/s over {:.3} m; change \
                     `push_hold`, `crouch_depth` or `takeoff_extension`",
                    z_to - z_low
                )));
            };
            // The push's horizontal force is a share of its vertical one (see
            // Plan::horizontal): the share that gives the forward speed, and where it leaves.
            let held = s.push_hold * t_push;
            let vertical = |tau: f64| {
                let w = ((tau - held) / (t_push - held)).max(0.0);
                let a = if tau <= held {
                    a_push
                } else {
                    a_push + (-G - a_push) * w * w
                };
                smoothstep(tau / (LEAN_RAMP * t_push))[0] * (G + a)
            };
            let (impulse, moment) = integrate_pieces(&vertical, 0.0, t_push, &[LEAN_RAMP * t_push, held]);
            let lean = s.forward_speed / impulse;
            let x = lean * moment;
            let done = (x - takeoff_x).abs() < 1e-13;
            takeoff_x = x;
            solved = Some((takeoff_limbs, a_push, t_push, lean));
            if done {
                break;
            }
        }
        let Some((takeoff_limbs, a_push, t_push, push_lean)) = solved else {
            return Err(NodeError::new(
                "the take-off could not be solved; please report this parameter set",
            ));
        };
        if takeoff_limbs.overreach > 1e-6 {
            return Err(NodeError::new(format!(
                "the take-off would put the centre of mass {takeoff_x:.3} m ahead of the feet, beyond what straight \
                 legs lean to; reduce `forward_speed`"
            )));
        }
        let Some((t_u, t_b, a_u)) = solve_countermovement(s.crouch_depth, s.countermovement_duration, a_push) else {
            return Err(NodeError::new(format!(
                "this jump pushes with {:.2} body weights at the lowest point, too little to stop a {:.3} m \
                 countermovement within `countermovement_duration` {:.3} s; make `countermovement_duration` longer or \
                 `crouch_depth` smaller, or jump higher",
                1.0 + a_push / G,
                s.crouch_depth,
                s.countermovement_duration
            )));
        };
        let least_unweighting_force = 1.0 - UNWEIGHTING_PEAK * a_u / G;
        if least_unweighting_force < 0.0 {
            return Err(NodeError::new(format!(
                "the unweighting would need the ground to pull ({least_unweighting_force:.2} body weights): the \
                 countermovement is too quick for its depth; make `countermovement_duration` longer or `crouch_depth` \
                 smaller"
            )));
        }
        let t_low = t_to - t_push;
        let t_b0 = t_low - t_b;
        let t_cm = t_b0 - t_u;
        let mut pieces = Vec::new();
        let unweighting = Piece::from_acceleration(
            t_cm,
            t_u,
            standing_height,
            0.0,
            &[0.0, 0.0, -30.0 * a_u, 60.0 * a_u, -30.0 * a_u],
        );
        pieces.push((Phase::Unweighting, unweighting));
        let [z, v, _] = unweighting.eval(t_b0);
        let braking = Piece::from_acceleration(
            t_b0,
            t_b,
            z,
            v,
            &[0.0, 0.0, 0.0, 10.0 * a_push, -15.0 * a_push, 6.0 * a_push],
        );
        pieces.push((Phase::Braking, braking));
        let [mut z, mut v, _] = braking.eval(t_low);
        let held = s.push_hold * t_push;
        if held > 0.0 {
            let hold = Piece::from_acceleration(t_low, held, z, v, &[a_push]);
            [z, v, _] = hold.eval(t_low + held);
            pieces.push((Phase::Propulsion, hold));
        }
        let decline = Piece::from_acceleration(t_low + held, t_push - held, z, v, &[a_push, 0.0, -G - a_push]);
        pieces.push((Phase::Propulsion, decline));
        let [takeoff_height, takeoff_speed, _] = decline.eval(t_to);

        let feet_to = body.planted_feet(ball_x, s.takeoff_extension);
        let flight_feet = shifted(&feet_to, takeoff_limbs.pelvis.map(|p| -p));
        let mut plan = Plan {
            spec: s,
            body,
            arms,
            pieces,
            standing_height,
            settled_height: standing_height,
            countermovement_start: t_cm,
            lowest_time: t_low,
            durations: [t_u, t_b, t_push],
            landing_duration: 0.0,
            takeoff_time: t_to,
            touchdown_time: t_to,
            takeoff_height,
            takeoff_speed,
            apex_height: takeoff_height + takeoff_speed * takeoff_speed / (2.0 * G),
            lowest_point_force: 1.0 + a_push / G,
            least_unweighting_force,
            peak_landing_force: 0.0,
            ball_x,
            landing_ball_x: ball_x,
            flight_feet,
            forward_speed: s.forward_speed,
            push_lean: 0.0,
            landing_lean: 0.0,
            takeoff_x: 0.0,
            rest_x: 0.0,
            leg_swing: 0.0,
            swing_end: t_to + 2.0 * takeoff_speed / G,
            warnings: Vec::new(),
        };

        plan.takeoff_x = takeoff_x;
        plan.push_lean = push_lean;
        // The touch-down and the landing. A forward jump swings the straight legs forward in the
        // air so that the balls of the feet land where the body will stand once the landing
        // has stopped it; that place depends on the touch-down, which depends on the swing: a
        // fixed point again (no swing, one round, for a vertical jump).
        let mut rounds = 0;
        let (t_td, landing) = loop {
            let t_td = plan.find_touchdown()?;
            let t_apex = t_to + takeoff_speed / G;
            if t_td <= t_apex {
                return Err(NodeError::new(format!(
                    "the arm swing pulls the feet back to the ground at {} before the centre of mass reaches its \
                     apex at {}: the planned apex cannot happen; start the swing earlier (`arm_swing_start`), make \
                     it smaller (`arm_swing_from`, `arm_swing_to`) or jump higher",
                    plan.at(t_td),
                    plan.at(t_apex)
                )));
            }
            plan.touchdown_time = t_td;
            let pelvis = plan.flight_pelvis(t_td);
            let feet = plan.flight_feet_at(t_td);
            plan.landing_ball_x = pelvis[0] + feet.ball[0][0];
            // The arms' angle when the body is back to standing (the landing lasts well under a
            // second; the swing's end, if later, is what counts).
            let t_rest = (t_td + 1.0 + s.recovery_duration).max(plan.arms.end());
            let tau = t_td - t_to;
            let (z_td, v_td) = (
                takeoff_height + takeoff_speed * tau - 0.5 * G * tau * tau,
                takeoff_speed - G * tau,
            );
            let theta_rest = plan.arms.angle(t_rest)[0];
            // Standing again: a vertical jump where it took off, a forward one over its feet as
            // before the jump (the balls `ball_x` ahead of the centre of mass; where the swing
            // below puts them once it has settled).
            let rest = if s.forward_speed == 0.0 {
                plan.takeoff_x
            } else {
                plan.landing_ball_x - ball_x
            };
            let settled = straight_pose(&plan.body, theta_rest, plan.landing_ball_x, 0.0, rest).1[2];
            let z_low_landing = settled - s.landing_depth;
            let Some((t_land, b)) = solve_landing(-v_td, z_td - z_low_landing) else {
                return Err(NodeError::new(format!(
                    "the centre of mass touches down at {z_td:.3} m, not above the landing's lowest point \
                     {z_low_landing:.3} m; make `landing_depth` larger"
                )));
            };
            // The landing's horizontal force is a share of its vertical one (see
            // Plan::horizontal): the share that stops the forward speed, and where it stops.
            let vertical = |tau: f64| {
                let u = tau / t_land;
                let a = -G * (1.0 - smoothstep(u)[0]) + 12.0 * b * u * (1.0 - u) * (1.0 - u);
                (1.0 - smoothstep((u - 0.5) / 0.5)[0]) * (G + a)
            };
            let (impulse, moment) = integrate_pieces(&vertical, 0.0, t_land, &[0.5 * t_land]);
            let lean = s.forward_speed / impulse;
            let rest_x = plan.takeoff_x + s.forward_speed * (tau + t_land) - lean * moment;
            let landing = (t_land, b, z_td, v_td, settled);
            plan.landing_duration = t_land;
            plan.landing_lean = lean;
            plan.rest_x = rest_x;
            if s.forward_speed == 0.0 {
                break (t_td, landing);
            }
            // Turn the legs about the hips so that the balls land `ball_x` ahead of where the
            // centre of mass will stand.
            let want = rest_x + ball_x - pelvis[0];
            let b0 = plan.flight_feet.ball[0];
            let (bx, bz) = (b0[0], b0[2]);
            let reach = bx.hypot(bz);
            let swing = (want / reach).clamp(-1.0, 1.0).asin() - bx.atan2(-bz);
            let done = (swing - plan.leg_swing).abs() < 1e-12 && (t_td - plan.swing_end).abs() < 1e-12;
            if done {
                break (t_td, landing);
            }
            // The plain iteration overshoots (about -0.6 a round): under-relaxed, it settles.
            plan.leg_swing += 0.6 * (swing - plan.leg_swing);
            plan.swing_end += 0.6 * (t_td - plan.swing_end);
            rounds += 1;
            if rounds == 200 {
                return Err(NodeError::new(format!(
                    "the legs' swing in the air to land ahead at `forward_speed` {:.2} m/s did not settle; reduce \
                     `forward_speed`",
                    s.forward_speed
                )));
            }
        };
        let (t_land, b, z_td, v_td, settled) = landing;
        plan.settled_height = settled;
        let z_low_landing = settled - s.landing_depth;
        let landing = Piece::from_acceleration(
            t_td,
            t_land,
            z_td,
            v_td,
            &[-G, 12.0 * b, -24.0 * b, 10.0 * G + 12.0 * b, -15.0 * G, 6.0 * G],
        );
        let recovery = Piece::quintic(
            t_td + t_land,
            s.recovery_duration,
            [z_low_landing, 0.0, 0.0],
            [plan.settled_height, 0.0, 0.0],
        );
        plan.landing_duration = t_land;
        plan.pieces.push((Phase::Landing, landing));
        plan.pieces.push((Phase::Recovery, recovery));

        plan.check_ground_force()?;
        plan.check_reach()?;
        let (_, peak) = plan.extreme(Phase::Landing, landing.start(), landing.end(), true, |st| {
            (G + st.com.acceleration[2]) / G
        });
        plan.peak_landing_force = peak;
        Ok(plan)
    }

    /// A time with its frame number at the spec's frame rate, for messages.
    fn at(&self, t: f64) -> String {
        format!("{t:.3} s (frame {})", (t * self.spec.frame_rate).round())
    }

    /// The pelvis in the air at `t`: the body is rigid but for the arms, so the pelvis is
    /// the centre of mass less the offset the body's shape at the arms' angle gives it.
    pub fn flight_pelvis(&self, t: f64) -> [f64; 3] {
        let com = self.flight_com(t).position;
        let theta = self.arms.angle(t)[0];
        let offset = self
            .body
            .centres(&self.body.limbs([0.0; 3], theta, &self.flight_feet_at(t)))
            .0;
        [com[0] - offset[0], 0.0, com[2] - offset[2]]
    }

    /// The exact parabola from take-off.
    fn flight_com(&self, t: f64) -> Motion {
        let tau = t - self.takeoff_time;
        let (z0, v0) = (self.takeoff_height, self.takeoff_speed);
        let (x0, u) = (self.takeoff_x, self.forward_speed);
        Motion {
            position: [x0 + u * tau, 0.0, z0 + v0 * tau - 0.5 * G * tau * tau],
            velocity: [u, 0.0, v0 - G * tau],
            acceleration: [0.0, 0.0, -G],
        }
    }

    /// The feet in the air at `t`, relative to the pelvis: the take-off shape turned forward
    /// about the hips by `leg_swing` on a smoothstep from take-off to touch-down.
    pub fn flight_feet_at(&self, t: f64) -> Feet {
        if self.leg_swing == 0.0 {
            return self.flight_feet;
        }
        let span = self.swing_end - self.takeoff_time;
        let phi = self.leg_swing * smoothstep((t - self.takeoff_time) / span)[0];
        let (sin, cos) = phi.sin_cos();
        // About each hip: the hips sit on the pelvis's x and z.
        let turn = |p: [f64; 3]| [p[0] * cos - p[2] * sin, p[1], p[0] * sin + p[2] * cos];
        Feet {
            ankle: self.flight_feet.ankle.map(turn),
            ball: self.flight_feet.ball.map(turn),
        }
    }

    /// Height of the balls of the feet above the ground in the air (they are carried with
    /// the pelvis), 0 in contact.
    pub fn foot_height(&self, t: f64) -> f64 {
        if self.phase(t) == Phase::Flight {
            self.ball_height(t)
        } else {
            0.0
        }
    }

    /// Height of the balls of the feet in the air at `t` (they are carried with the pelvis,
    /// turned with the legs).
    fn ball_height(&self, t: f64) -> f64 {
        self.flight_pelvis(t)[2] + self.flight_feet_at(t).ball[0][2]
    }

    /// The first time after take-off at which the balls of the feet come back to the
    /// ground: bracketed by stepping (20 000 steps up to the latest possible touch-down),
    /// then bisected to 1e-12 s.
    fn find_touchdown(&self) -> Result<f64, NodeError> {
        let t_to = self.takeoff_time;
        let foot = |t: f64| self.ball_height(t);
        // The arms move the pelvis at most 2 k r about the centre of mass and turning the legs
        // forward lifts the balls by at most twice their distance from the pelvis times
        // 1 - cos of the turn, so the feet are down by the time the parabola alone has fallen
        // that far below the take-off height.
        let ball = self.flight_feet.ball[0];
        let lift = 2.0 * ball[0].hypot(ball[2]) * (1.0 - self.leg_swing.cos());
        let (v, reach) = (
            self.takeoff_speed,
            2.0 * self.body.arm_fraction() * self.body.arm_radius() + lift,
        );
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
        if t < self.countermovement_start {
            return Phase::Standing;
        }
        if t <= self.takeoff_time {
            return self
                .pieces
                .iter()
                .find(|(phase, piece)| *phase != Phase::Landing && *phase != Phase::Recovery && t < piece.end())
                .map_or(Phase::Propulsion, |(phase, _)| *phase);
        }
        if t < self.touchdown_time {
            return Phase::Flight;
        }
        self.pieces
            .iter()
            .find(|(phase, piece)| (*phase == Phase::Landing || *phase == Phase::Recovery) && t < piece.end())
            .map_or(Phase::Settled, |(phase, _)| *phase)
    }

    /// The state at `t`.
    pub fn state(&self, t: f64) -> State {
        self.state_in(self.phase(t), t)
    }

    /// The closed form of `phase` evaluated at `t`, whether or not `t` lies in that phase
    /// (for checking the junctions from both sides); a phase of several pieces uses the one
    /// nearest `t`.
    pub fn state_in(&self, phase: Phase, t: f64) -> State {
        let theta = self.arms.angle(t)[0];
        let still = |z: f64| Motion {
            position: [0.0, 0.0, z],
            velocity: [0.0; 3],
            acceleration: [0.0; 3],
        };
        let com = match phase {
            Phase::Flight => self.flight_com(t),
            Phase::Standing => still(self.standing_height),
            Phase::Settled => Motion {
                position: [self.rest_x, 0.0, self.settled_height],
                velocity: [0.0; 3],
                acceleration: [0.0; 3],
            },
            _ => match self.vertical(phase, t) {
                Some([z, v, a]) => {
                    let [x, u, b] = self.horizontal(phase, t);
                    Motion {
                        position: [x, 0.0, z],
                        velocity: [u, 0.0, v],
                        acceleration: [b, 0.0, a],
                    }
                }
                None => still(self.standing_height),
            },
        };
        State {
            phase,
            com,
            arm_angle: theta,
            contact: phase != Phase::Flight,
        }
    }

    /// Height, vertical speed and acceleration of the centre of mass at `t` from the piece of
    /// `phase` nearest `t` (None for a phase without pieces).
    fn vertical(&self, phase: Phase, t: f64) -> Option<[f64; 3]> {
        self.pieces
            .iter()
            .filter(|(p, _)| *p == phase)
            .map(|(_, piece)| piece)
            .min_by(|a, b| {
                let d = |q: &Piece| (q.start() - t).max(t - q.end()).max(0.0);
                d(a).total_cmp(&d(b))
            })
            .map(|piece| piece.eval(t))
    }

    /// The share of the vertical ground force the horizontal one takes at `t` in `phase`,
    /// before the scale `push_lean` or `landing_lean`: it rises on a smoothstep over the first
    /// `LEAN_RAMP` of the push and falls on one over the second half of the landing, so the
    /// horizontal force is continuous (zero at the lowest point, at take-off and touch-down
    /// with the vertical one, and at the landing's end).
    fn lean_window(&self, phase: Phase, t: f64) -> f64 {
        match phase {
            Phase::Propulsion => smoothstep((t - self.lowest_time) / (LEAN_RAMP * self.durations[2]))[0],
            Phase::Landing => {
                let half = 0.5 * self.landing_duration;
                1.0 - smoothstep((t - self.touchdown_time - half) / half)[0]
            }
            _ => 0.0,
        }
    }

    /// The centre of mass's forward motion in contact. In the push and the landing the
    /// horizontal force is a share of the vertical one, m a_x = lean w(t) m (g + a_z) (a
    /// push along a line through the body), with w the window of [`Plan::lean_window`];
    /// velocity and position are its integrals from the phase's start, int a_x and
    /// int (t - s) a_x ds, by 8-point Gauss-Legendre quadrature on each stretch where the
    /// integrand is one polynomial (exact: the integrand's degree is below 16). Before the
    /// push x is 0, after the landing `rest_x`.
    fn horizontal(&self, phase: Phase, t: f64) -> [f64; 3] {
        let (t0, x0, v0, lean, breaks) = match phase {
            Phase::Propulsion => (
                self.lowest_time,
                0.0,
                0.0,
                self.push_lean,
                [
                    self.lowest_time + LEAN_RAMP * self.durations[2],
                    self.lowest_time + self.spec.push_hold * self.durations[2],
                ],
            ),
            Phase::Landing => {
                let td = self.flight_com(self.touchdown_time);
                let mid = self.touchdown_time + 0.5 * self.landing_duration;
                (
                    self.touchdown_time,
                    td.position[0],
                    td.velocity[0],
                    -self.landing_lean,
                    [mid, mid],
                )
            }
            Phase::Recovery | Phase::Settled => return [self.rest_x, 0.0, 0.0],
            _ => return [0.0; 3],
        };
        if lean == 0.0 {
            return [x0 + v0 * (t - t0), v0, 0.0];
        }
        let force = |s: f64| {
            let a = self.vertical(phase, s).map_or(0.0, |z| z[2]);
            lean * self.lean_window(phase, s) * (G + a)
        };
        let (dv, dx) = integrate_pieces(&force, t0, t, &breaks);
        [x0 + v0 * (t - t0) + dx, v0 + dv, force(t)]
    }

    /// How far the ankles are lifted at `t` in contact: rising over the second half of the
    /// push to `takeoff_extension` (smoothstep), coming down over the first half of the
    /// landing.
    fn lift(&self, t: f64) -> f64 {
        let e = self.spec.takeoff_extension;
        let half = 0.5 * self.durations[2];
        if t <= self.takeoff_time {
            e * smoothstep((t - (self.takeoff_time - half)) / half)[0]
        } else {
            let half = 0.5 * self.landing_duration;
            e * (1.0 - smoothstep((t - self.touchdown_time) / half)[0])
        }
    }

    /// The body's joints at `t`: in the air the pelvis carries the feet; on the ground the
    /// feet stand where they are and the pelvis is placed so that the segments' centre of
    /// mass is the planned one ([`Body::stand`]).
    pub fn limbs(&self, t: f64) -> Limbs {
        let st = self.state(t);
        if !st.contact {
            let p = self.flight_pelvis(t);
            return self.body.limbs(p, st.arm_angle, &shifted(&self.flight_feet_at(t), p));
        }
        let ball_x = if t <= self.takeoff_time {
            self.ball_x
        } else {
            self.landing_ball_x
        };
        let feet = self.body.planted_feet(ball_x, self.lift(t));
        self.body.stand(st.com.position, st.arm_angle, &feet)
    }

    /// Centre of mass of the body without its arms at `t`.
    pub fn trunk(&self, l: &Limbs) -> [f64; 3] {
        self.body.centres(l).1
    }

    /// Time of the whole-body apex (s).
    pub fn apex_time(&self) -> f64 {
        self.takeoff_time + self.takeoff_speed / G
    }

    /// When anything starts to move: the countermovement or the arm swing, if earlier.
    pub fn start(&self) -> f64 {
        let t = self.countermovement_start;
        if self.arms.moves() { t.min(self.arms.start) } else { t }
    }

    /// End of the recovery.
    fn recovery_end(&self) -> f64 {
        self.pieces.last().map_or(self.touchdown_time, |(_, p)| p.end())
    }

    /// When everything has stopped: the end of the recovery or of the arm swing, if later.
    pub fn end(&self) -> f64 {
        let t = self.recovery_end();
        if self.arms.moves() { t.max(self.arms.end()) } else { t }
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

    /// The contact intervals in which the ground force may change: each with its phase.
    pub fn contact_intervals(&self) -> Vec<(Phase, f64, f64)> {
        let mut v: Vec<(Phase, f64, f64)> = self.pieces.iter().map(|(ph, p)| (*ph, p.start(), p.end())).collect();
        if self.arms.moves() && self.arms.start < self.countermovement_start {
            v.insert(0, (Phase::Standing, self.arms.start, self.countermovement_start));
        }
        if self.arms.moves() && self.arms.end() > self.recovery_end() {
            v.push((Phase::Settled, self.recovery_end(), self.arms.end()));
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
            let change = match phase {
                Phase::Standing | Phase::Settled => "make `arm_swing_duration` longer or the swing smaller",
                _ => "make `recovery_duration` longer",
            };
            return Err(NodeError::new(format!(
                "during {} the ground would have to pull the body down (ground force {:.2} body weights at {}); {}",
                phase.name(),
                bw,
                self.at(t),
                change
            )));
        }
        Ok(())
    }

    /// The legs must reach the ground wherever the plan puts the centre of mass in contact:
    /// sampled over every contact interval (121 times each), the pose the body takes there
    /// may not ask the legs for more than their length (1 micrometre allowed for the solver).
    fn check_reach(&self) -> Result<(), NodeError> {
        // Standing and settled stretches where the arms move are among the contact intervals.
        for (phase, t0, t1) in self.contact_intervals() {
            if t1 <= t0 {
                continue;
            }
            let n = 120;
            for i in 0..=n {
                let t = t0 + (t1 - t0) * f64::from(i) / f64::from(n);
                let l = self.limbs(t);
                let short = l.overreach;

                if short <= 1e-6 {
                    continue;
                }
                let change = match phase {
                    Phase::Unweighting | Phase::Braking | Phase::Propulsion => {
                        "reduce `takeoff_extension`, or move the arm swing (`arm_swing_start`, `arm_swing_duration`)"
                    }
                    Phase::Landing | Phase::Recovery => {
                        "make `landing_depth` larger, or reduce `takeoff_extension` or `forward_speed`"
                    }
                    _ => "move the arm swing (`arm_swing_start`, `arm_swing_duration`, `arm_swing_to`)",
                };
                return Err(NodeError::new(format!(
                    "during {} at {} the feet cannot stay on the ground: the legs would have to be {:.3} m longer \
                     to hold the planned centre of mass; {}",
                    phase.name(),
                    self.at(t),
                    short,
                    change
                )));
            }
        }
        Ok(())
    }
}

/// The body standing on straight legs with the balls of the feet at `ball_x`, the ankles
/// lifted by `lift` and the arms at `arm_angle`, its centre of mass at x = `com_x` ([`Body::balance`]
/// with the knees straight). Returns the joints and the centre of mass.
pub fn straight_pose(body: &Body, arm_angle: f64, ball_x: f64, lift: f64, com_x: f64) -> (Limbs, [f64; 3]) {
    let l = body.balance([com_x, 0.0, 0.0], arm_angle, &body.planted_feet(ball_x, lift), 0.0);
    let c = body.centres(&l).0;
    (l, c)
}

/// A planned standing countermovement jump of a segmented body.
#[derive(Debug)]
pub struct Jump;

const DEG: f64 = std::f64::consts::PI / 180.0;

/// Default crouch depth, fraction of body height: 0.30 m at 1.65 m (common practice, no
/// source; measured countermovement depths of adults are of this order).
const CROUCH: f64 = 0.18;
/// Default ankle lift at take-off, fraction of body height (about 45 degrees of plantar
/// flexion of a foot of Drillis & Contini's proportions; common practice, no source).
const EXTENSION: f64 = 0.04;
/// Default landing depth below standing, fraction of body height (common practice, no
/// source).
const LANDING: f64 = 0.10;

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
            notes: "Method: the whole-body centre of mass (COM) follows a ground-force profile of the measured \
                    shape, integrated in closed form, so force and motion always agree (force = m (g + a_z)). From \
                    quiet standing: the unweighting (force below body weight, a smooth dip of 30 u^2 (1 - u)^2), \
                    the braking (force rising on a quintic smoothstep to its largest value exactly at the lowest \
                    point, where the COM is at rest `crouch_depth` below standing), the push (that force held for \
                    the share `push_hold` of the push, then declining as the square of the time to zero at \
                    take-off, where it falls steeply as in measured records). The \
                    take-off speed follows from `plan_by`; the push's force and duration follow from it and the \
                    distance from the lowest point to the take-off height (a quadratic in the force, solved in \
                    closed form), the split of `countermovement_duration` into unweighting and braking from the \
                    force at the lowest point (another quadratic). Flight: the exact parabola. Landing: from \
                    touch-down (no force yet) the force rises and falls back to one body weight at the lowest \
                    point, `landing_depth` below standing; its duration follows from that depth and the touch-down \
                    speed (a quadratic), and the body never comes back up before the lowest point. Recovery: a \
                    quintic back to standing in `recovery_duration`. The body: Dempster's segments as tabulated by \
                    Winter (2009, Biomechanics and Motor Control of Human Movement, Table 4.1) on Drillis & \
                    Contini's proportions (Winter Fig. 4.1): head and neck (C7-T1 to the head joint at eye level), \
                    an upright trunk (hips to shoulders), both arms swinging together as straight lines (upper arm, \
                    forearm, hand to 0.4 forearm lengths past the wrist), thighs and shanks bending forward at the \
                    knees, feet from the ankle to the ball. At every frame in contact the pelvis and knees are \
                    placed (Newton's method) so that the segments' COM is the planned COM to 1e-12 m; in the air \
                    the body keeps its take-off shape but for the arms, so an arm swing in flight moves the trunk \
                    and the feet, not the COM. The ankles rise onto the balls of the feet by `takeoff_extension` \
                    over the second half of the push and come down over the first half of the landing. In \
                    `takeoff_speed` mode the legs give the body that speed and the arms add their share (arm mass \
                    times the vertical speed of their centre about the shoulders). Touch-down is the first return \
                    of the balls of the feet to the ground, by bisection to 1e-12 s. Everything is evaluated in \
                    closed form at each frame time, so any frame rate works.\n\
                    Forward jumps (`forward_speed` > 0, a standing broad jump): in the push and the landing the \
                    horizontal ground force is a share of the vertical one (a push along a line through the body), \
                    coming in over the first 30 % of the push and going out over the second half of the landing, \
                    the share chosen so that the push gives the forward speed and the landing takes it away \
                    (reported as `push_friction` and `landing_friction`, the friction the floor must give); the \
                    flight is the exact parabola in x and z; the straight legs turn forward about the hips in the \
                    air so that the balls of the feet land where the body stands again.\n\
                    Limits: a planner, not a muscle model: the force's shape is prescribed (single plateau; \
                    measured jumps are often two-peaked). The trunk stays upright, so a broad jump's lean is in \
                    the legs. Errors name the parameter to \
                    change: a crouch, landing or ankle lift the body cannot make, a countermovement too quick for \
                    its depth or too slow for the push, an apex below the take-off height, a touch-down before the \
                    apex, arms that carry the whole take-off, legs too short for the planned COM. Frames that do \
                    not cover the whole jump are allowed, with a warning."
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
                    "Centre of mass of the body without the arms (the segments' sum).",
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
                transform(
                    "head",
                    "Head joint at eye level on the upright trunk (identity rotation): the end of Winter's head \
                     and neck segment.",
                ),
                transform("chest", "Chest (nipple line) on the upright trunk (identity rotation)."),
                transform("hips", "Pelvis: the mid-point of the hip joints (identity rotation)."),
                transform(
                    "neck",
                    "Base of the neck, at shoulder height on the trunk (identity rotation).",
                ),
                transform(
                    "shoulder_l",
                    "Left shoulder joint (+Y side) on the trunk (identity rotation).",
                ),
                transform(
                    "shoulder_r",
                    "Right shoulder joint (-Y side) on the trunk (identity rotation).",
                ),
                transform(
                    "upper_arm_l",
                    "Left upper arm: at the shoulder joint, local -Z along the arm to the elbow.",
                ),
                transform(
                    "upper_arm_r",
                    "Right upper arm: at the shoulder joint, local -Z along the arm to the elbow.",
                ),
                transform(
                    "forearm_l",
                    "Left forearm: at the elbow, local -Z along the arm to the wrist.",
                ),
                transform(
                    "forearm_r",
                    "Right forearm: at the elbow, local -Z along the arm to the wrist.",
                ),
                transform("hand_l", "Left hand: at the wrist, local -Z along the arm."),
                transform("hand_r", "Right hand: at the wrist, local -Z along the arm."),
                transform(
                    "thigh_l",
                    "Left thigh: at the hip joint, local -Z along the thigh to the knee.",
                ),
                transform(
                    "thigh_r",
                    "Right thigh: at the hip joint, local -Z along the thigh to the knee.",
                ),
                transform(
                    "shin_l",
                    "Left shank: at the knee, local -Z along the shank to the ankle.",
                ),
                transform(
                    "shin_r",
                    "Right shank: at the knee, local -Z along the shank to the ankle.",
                ),
                transform(
                    "foot_l",
                    "Left foot: at the ankle, local -Z toward the ball of the foot.",
                ),
                transform(
                    "foot_r",
                    "Right foot: at the ankle, local -Z toward the ball of the foot.",
                ),
                transform("toe_l", "Ball of the left foot (identity rotation)."),
                transform("toe_r", "Ball of the right foot (identity rotation)."),
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
                    "Body height H; segment lengths, and the lengths below unless set, scale with it.",
                ),
                length(
                    "crouch_depth",
                    CROUCH * 1.65,
                    (0.01, 1.0),
                    "How far the whole-body centre of mass goes down in the countermovement (at most 0.245 H); \
                     default 0.18 H.",
                )
                .scaled_by("body_height", CROUCH),
                ParamSpec::choice(
                    "plan_by",
                    &["jump_height", "rise", "takeoff_speed"],
                    "What the jump is planned by: `jump_height`, the centre of mass's rise from take-off to the apex \
                     (what a force plate measures); `rise`, the apex above standing; `takeoff_speed`, the speed the \
                     legs give the body.",
                ),
                length(
                    "jump_height",
                    0.30,
                    (0.01, 2.0),
                    "With plan_by = jump_height: the centre of mass's rise from take-off to the apex, v^2 / (2 g).",
                ),
                length(
                    "rise",
                    0.40,
                    (0.01, 2.0),
                    "With plan_by = rise: whole-body apex above the standing centre of mass.",
                ),
                ParamSpec::number(
                    "takeoff_speed",
                    Dimension::Velocity,
                    2.4,
                    (0.1, 8.0),
                    "With plan_by = takeoff_speed: vertical speed the legs give the body at take-off; the arms add \
                     theirs.",
                ),
                length(
                    "takeoff_extension",
                    EXTENSION * 1.65,
                    (0.0, 0.3),
                    "How far the ankles rise onto the balls of the feet by take-off, the legs straight; default \
                     0.04 H.",
                )
                .scaled_by("body_height", EXTENSION),
                time(
                    "countermovement_duration",
                    0.55,
                    (0.05, 5.0),
                    "Unweighting and braking, standing to the lowest point.",
                ),
                ParamSpec::number(
                    "push_hold",
                    Dimension::Dimensionless,
                    0.5,
                    (0.0, 0.9),
                    "Share of the push held at the force of the lowest point before the force declines to zero at \
                     take-off; the push's duration follows.",
                ),
                length(
                    "landing_depth",
                    LANDING * 1.65,
                    (0.01, 1.0),
                    "Whole-body centre of mass at the lowest point of the landing below standing (the landing's \
                     duration follows from it and the touch-down speed); default 0.10 H.",
                )
                .scaled_by("body_height", LANDING),
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
                // the arms high and still rising at take-off, so the swing adds both take-off
                // height and speed (tests/jump.rs measures the share against Lees,
                // Vanrenterghem & De Clercq 2004, J Biomech 37:1929-40).
                time(
                    "arm_swing_start",
                    -0.30,
                    (-5.0, 5.0),
                    "Start of the swing relative to take-off (negative = before).",
                ),
                time("arm_swing_duration", 0.45, (0.05, 5.0), "Length of the swing."),
                ParamSpec::number(
                    "forward_speed",
                    Dimension::Velocity,
                    0.0,
                    (0.0, 6.0),
                    "Horizontal speed at take-off, along +x: 0 for a vertical jump, more for a standing broad jump.",
                ),
            ],
            summaries: vec![
                SummarySpec::new("takeoff_time", Dimension::Time, "Time of take-off."),
                SummarySpec::new(
                    "takeoff_speed",
                    Dimension::Velocity,
                    "Whole-body vertical centre-of-mass speed at take-off.",
                ),
                SummarySpec::new(
                    "takeoff_height",
                    Dimension::Length,
                    "Whole-body centre-of-mass height at take-off.",
                ),
                SummarySpec::new("apex_height", Dimension::Length, "Whole-body apex."),
                SummarySpec::new("rise", Dimension::Length, "Apex minus the standing centre of mass."),
                SummarySpec::new(
                    "jump_height",
                    Dimension::Length,
                    "Apex minus the take-off height, v^2 / (2 g).",
                ),
                SummarySpec::new(
                    "standing_com_height",
                    Dimension::Length,
                    "Centre of mass in quiet standing, from the segments.",
                ),
                SummarySpec::new("flight_time", Dimension::Time, "Take-off to touch-down."),
                SummarySpec::new("touchdown_time", Dimension::Time, "Time of touch-down."),
                SummarySpec::new(
                    "unweighting_duration",
                    Dimension::Time,
                    "Ground force below body weight.",
                ),
                SummarySpec::new(
                    "braking_duration",
                    Dimension::Time,
                    "From body weight to the lowest point.",
                ),
                SummarySpec::new("push_duration", Dimension::Time, "Lowest point to take-off."),
                SummarySpec::new(
                    "landing_duration",
                    Dimension::Time,
                    "Touch-down to the lowest point of the landing.",
                ),
                SummarySpec::new(
                    "least_unweighting_force",
                    Dimension::BodyWeight,
                    "Least ground force of the unweighting.",
                ),
                SummarySpec::new(
                    "lowest_point_force",
                    Dimension::BodyWeight,
                    "Ground force at the lowest point, the push's largest.",
                ),
                SummarySpec::new(
                    "jump_distance",
                    Dimension::Length,
                    "How far forward the centre of mass ends, standing again, from where it started.",
                ),
                SummarySpec::new(
                    "push_friction",
                    Dimension::Dimensionless,
                    "Largest horizontal over vertical ground force in the push: the friction a forward jump needs.",
                ),
                SummarySpec::new(
                    "landing_friction",
                    Dimension::Dimensionless,
                    "Largest horizontal over vertical ground force in the landing.",
                ),
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
        let [t_u, t_b, t_p] = plan.durations;
        for (name, value) in [
            ("takeoff_time", plan.takeoff_time),
            ("takeoff_speed", plan.takeoff_speed),
            ("takeoff_height", plan.takeoff_height),
            ("apex_height", plan.apex_height),
            ("rise", plan.apex_height - plan.standing_height),
            ("jump_height", plan.apex_height - plan.takeoff_height),
            ("standing_com_height", plan.standing_height),
            ("flight_time", plan.touchdown_time - plan.takeoff_time),
            ("touchdown_time", plan.touchdown_time),
            ("unweighting_duration", t_u),
            ("braking_duration", t_b),
            ("push_duration", t_p),
            ("landing_duration", plan.landing_duration),
            ("jump_distance", plan.rest_x),
            ("push_friction", plan.push_lean),
            ("landing_friction", plan.landing_lean),
            ("least_unweighting_force", plan.least_unweighting_force),
            ("lowest_point_force", plan.lowest_point_force),
            ("peak_landing_force", plan.peak_landing_force),
        ] {
            io.summary(name, value)?;
        }

        let times: Vec<f64> = (0..frames).map(|i| tl.time(i)).collect();
        let states: Vec<State> = times.iter().map(|&t| plan.state(t)).collect();
        let limbs: Vec<Limbs> = times.iter().map(|&t| plan.limbs(t)).collect();
        io.fill("com_position", |i, out| out.copy_from_slice(&states[i].com.position))?;
        io.fill("com_velocity", |i, out| out.copy_from_slice(&states[i].com.velocity))?;
        io.fill("com_acceleration", |i, out| {
            out.copy_from_slice(&states[i].com.acceleration)
        })?;
        io.fill("trunk_position", |i, out| out.copy_from_slice(&plan.trunk(&limbs[i])))?;
        io.fill("foot_height", |i, out| out[0] = plan.foot_height(times[i]))?;
        io.fill("contact", |i, out| out[0] = if states[i].contact { 1.0 } else { 0.0 })?;
        io.fill("arm_angle", |i, out| out[0] = states[i].arm_angle)?;
        let put = |out: &mut [f64], p: [f64; 3], q: [f64; 4]| {
            out.copy_from_slice(&[p[0], p[1], p[2], q[0], q[1], q[2], q[3]]);
        };
        let identity = [0.0, 0.0, 0.0, 1.0];
        let chest = (proportions::CHEST - proportions::HIP) * plan.body.height;
        io.fill("head", |i, out| put(out, limbs[i].head, identity))?;
        io.fill("chest", |i, out| {
            let p = limbs[i].pelvis;
            put(out, [p[0], p[1], p[2] + chest], identity);
        })?;
        io.fill("hips", |i, out| put(out, limbs[i].pelvis, identity))?;
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
            io.fill(&format!("foot_{side}"), |i, out| {
                put(
                    out,
                    limbs[i].ankle[k],
                    segment_rotation(limbs[i].ankle[k], limbs[i].ball[k]),
                )
            })?;
            io.fill(&format!("toe_{side}"), |i, out| put(out, limbs[i].ball[k], identity))?;
        }
        io.fill("colliders", |i, out| {
            colliders::write_frame(out, &body_colliders(&limbs[i], plan.body.height));
        })?;
        Ok(())
    }
}

/// How many colliders make the body (trajectory.jump's `colliders`).
pub const BODY_COLLIDERS: usize = 12;

/// The body's colliders at one state, in the order of the `colliders` output: head, trunk,
/// upper arms, forearms, thighs, shanks, feet (left before right), radii in
/// [`collider_radii`] times the body height `h`.
pub fn body_colliders(l: &Limbs, h: f64) -> [Capsule; BODY_COLLIDERS] {
    use collider_radii as r;
    let limb = |a: [f64; 3], b: [f64; 3], radii: [f64; 2]| Capsule {
        start: a,
        end: b,
        start_radius: radii[0] * h,
        end_radius: radii[1] * h,
    };
    [
        Capsule::sphere(l.head, r::HEAD * h),
        limb(l.pelvis, l.neck, [r::TRUNK; 2]),
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

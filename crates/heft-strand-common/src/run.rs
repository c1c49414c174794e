//! The frame loop shared by every strand method: inputs, the initial state, pins, colliders,
//! wind, outputs, momentum, energy and blow-up detection.

use heft_node_sdk::{Io, NodeError, Params, Series, Timeline};

use crate::forces;
use crate::geometry::{
    Collider, Colliders, Ground, Pose, RigidVelocity, Sphere, Track, V3, add, axpy, cross, dot, norm, read_transform,
    scale, sub,
};
use crate::setup::{Pin, Setup};
use heft_node_sdk::colliders::{self as collider_list, Capsule as ListedCapsule};
use heft_node_sdk::field::{FieldPair, FieldView};

/// The simulated state: positions and velocities of every particle, strand-major (strand s,
/// particle i at index s * particles + i).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct State {
    /// Positions, m.
    pub x: Vec<V3>,
    /// Velocities, m/s.
    pub v: Vec<V3>,
}

/// A strand integrator. One value lives for a whole evaluation, so it may keep its own
/// layout and scratch buffers (allocated in `new`) across frames.
pub trait Method: Sized + Send + 'static {
    /// Prepares the method for these parameters (allocate scratch here, not in `frame`).
    fn new(setup: &Setup) -> Self;

    /// Advances every strand by one frame: `env.substeps` steps of `env.h`. Pinned particles
    /// must end each substep k (1..=substeps) on `env.pin_target(s, slot, k)`, and every free
    /// particle must be passed through `env.project(k, ..)` after each substep. It may split the
    /// strands across up to `env.threads` threads, and must give the same bits for any count.
    /// The step may differ from one frame to the next (a frame run again with more substeps,
    /// see [`Method::rewind`], and the next with `substeps` again): a method that holds the
    /// velocity as a step x - x_prev scales that step to the new h, keeping the velocity.
    fn frame(&mut self, setup: &Setup, state: &mut State, env: &FrameEnv<'_>);

    /// [`Method::frame`], writing as it goes the positions and velocities of the state it
    /// leaves into `out` (positions, velocities), as [`Method::store`] would write them after
    /// it: true when it wrote them. A method whose threads each write their own strands as
    /// they finish them saves the threads a second hand-over a frame, and reads the strands
    /// while they are in the cache. Called only when [`Method::fills_state`] is false, for a
    /// frame's first try; by default `frame` alone, writing nothing (false).
    fn frame_and_store(&mut self, setup: &Setup, state: &mut State, env: &FrameEnv<'_>, _out: Out<'_>) -> bool {
        self.frame(setup, state, env);
        false
    }

    /// The elastic energy of the method's model, J; by default stretch plus bending as
    /// [`crate::forces`] defines them.
    fn elastic_energy(&self, setup: &Setup, state: &State) -> f64 {
        forces::elastic_energy(setup, state)
    }

    /// Whether `frame` leaves the state in its `state` argument: true by default. A method that
    /// keeps the state in a layout of its own may answer false and skip that copy; the frame
    /// loop then has [`Method::store`] write the positions and velocities straight into the
    /// output frame, and into `state` only when the loop reads it (a blow-up check that the
    /// method cannot rule out, colliders).
    fn fills_state(&self) -> bool {
        true
    }

    /// Keeps, in `keep` or in the method, what it takes to run the coming frame again from
    /// where it starts (see [`Method::rewind`]); the frame loop calls it before every frame when
    /// `reruns` is above 0. By default a copy of `state`, all that a method needs whose state
    /// is `state` and whose frames take any step `env.h`. A method with state of its own (a
    /// layout of its own, the last positions) keeps that too.
    fn mark(&mut self, state: &State, keep: &mut State) {
        keep.clone_from(state);
    }

    /// Goes back to the last [`Method::mark`]: the next `frame` runs from where the marked one
    /// started, with a step `env.h` that may differ from the last frame's. By default `state`
    /// is set to `keep`.
    fn rewind(&mut self, state: &mut State, keep: &State) {
        state.clone_from(keep);
    }

    /// Keeps, in `held` or in the method, the state a try of a frame left while the frame runs
    /// again from its start (see [`Method::merge`]); by default a copy of `state`.
    fn hold(&mut self, state: &State, held: &mut State) {
        held.clone_from(state);
    }

    /// After a frame ran again at a finer step: the strands whose `take` is true get the held
    /// try's values back (see [`Method::hold`]), so that each strand keeps the first try it
    /// came out right from, whatever the others did; the state is then held at the held try's
    /// step (a method whose velocity is a step x - x_prev scales the other strands' steps to
    /// it). By default the strands' positions and velocities are copied from `held`.
    fn merge(&mut self, state: &mut State, held: &State, take: &[bool]) {
        let p = state.x.len() / take.len().max(1);
        for (s, _) in take.iter().enumerate().filter(|(_, t)| **t) {
            let r = s * p..(s + 1) * p;
            state.x[r.clone()].copy_from_slice(&held.x[r.clone()]);
            state.v[r.clone()].copy_from_slice(&held.v[r]);
        }
    }

    /// Writes the positions and velocities of the state the last `frame` left, strand-major,
    /// three values a particle, m and m/s. Called only when [`Method::fills_state`] is false;
    /// by default it writes nothing.
    fn store(&self, _x: &mut [f64], _v: &mut [f64]) {}

    /// Total linear momentum (N s), kinetic and gravitational energy (J) of `state`, as
    /// [`forces::momentum_and_energy`] defines them (the default); a method may give them from
    /// its own layout when that is faster.
    fn momentum_and_energy(&self, setup: &Setup, state: &State) -> (V3, f64, f64) {
        forces::momentum_and_energy(setup, state)
    }

    /// True when the method knows from its own layout that no strand of `state` is blown up
    /// or crumpled (see [`blown_strand`], and [`overlong_ratio`] against
    /// [`OverlongLimit::stretch`]), so the frame loop may skip those checks. It must never be true for a state either would flag;
    /// by default false (the frame loop always checks).
    fn surely_intact(&self, _setup: &Setup, _state: &State) -> bool {
        false
    }

    /// The largest stable step h for these parameters, s, quoted in the blow-up message;
    /// `None` when the method has no step limit. By default the explicit spring limit
    /// [`Setup::explicit_step_limit`].
    fn stability_limit(setup: &Setup, wind: bool) -> Option<f64> {
        setup.explicit_step_limit(wind)
    }

    /// What the blow-up message calls the limit of [`Method::stability_limit`] ("... for these
    /// parameters is about ... s").
    const LIMIT_NAME: &'static str = "the explicit stability limit";

    /// True when the frame loop watches the method's strands for crumpling (see
    /// [`OverlongLimit`]): a step too coarse for a fine, stiff strand that shows as more length
    /// than a pull explains before it blows up. False for a method whose stretch inside its
    /// step limit is the strand's physics (explicit springs: a soft strand's springs vibrate
    /// as far as its energy takes them), and whose coarse steps blow up instead.
    const WATCHES_CRUMPLING: bool = true;

    /// True when `stretch_stiffness` is the strand's axial stiffness in the method's model
    /// (springs, compliant constraints): a segment beyond [`BLOW_UP_STRETCH`] rest lengths at a
    /// step well inside the limit is then the strand's physics, not the step. False for rigid
    /// segments, where an over-long segment is the solver falling behind.
    const STRETCHABLE: bool = true;
}

/// One frame's positions and velocities in the outputs, strand-major, three values a particle
/// (see [`Method::frame_and_store`]).
#[derive(Debug)]
pub struct Out<'a> {
    /// Positions, m.
    pub x: &'a mut [f64],
    /// Velocities, m/s.
    pub v: &'a mut [f64],
}

/// Gravity, damping, relative damping and wind at one substep boundary: the acceleration a
/// particle feels besides the elastic forces. The anchor velocity is the one
/// [`FrameEnv::anchor_velocity`] gives (half a step back, matching a half-step or
/// backward-difference particle velocity); the wind is the field of the two frames around the
/// substep, blended linearly.
#[derive(Debug, Clone, Copy)]
pub struct Ambient<'e> {
    /// Gravity vector, m/s^2.
    pub gravity: V3,
    /// Absolute damping rate, 1/s.
    pub damping: f64,
    /// Relative damping rate, 1/s.
    pub relative_damping: f64,
    /// The anchor's rigid velocity field (zero without an anchor).
    pub anchor: RigidVelocity,
    wind: Option<(&'e FieldView<'e>, &'e FieldView<'e>, f64, f64)>,
    /// The same two frames side by side, when they share a grid.
    pair: Option<&'e FieldPair>,
}

impl Ambient<'_> {
    /// The acceleration at position `x` with velocity `v`:
    /// g - damping v - relative_damping (v - v_anchor(x)) + drag (v_wind(x) - v).
    #[inline(always)]
    pub fn accel(&self, x: V3, v: V3) -> V3 {
        let mut a = axpy(self.gravity, -self.damping, v);
        if self.relative_damping != 0.0 {
            a = axpy(a, -self.relative_damping, sub(v, self.anchor.at(x)));
        }
        if let Some((w0, w1, frac, drag)) = self.wind {
            let w = add(scale(w0.sample(x), 1.0 - frac), scale(w1.sample(x), frac));
            a = axpy(a, drag, sub(w, v));
        }
        a
    }

    /// [`Ambient::wind`] at `N` points at once (`x[axis][lane]`), each lane's value exactly
    /// [`Ambient::wind`]'s, through [`FieldPair::sample_lanes`] when the two frames share a
    /// grid (one cell lookup and one pass over the corners for both), else
    /// [`FieldView::sample_lanes`] of each.
    #[inline(always)]
    pub fn wind_lanes<const N: usize>(&self, x: &[[f64; N]; 3]) -> [[f64; N]; 3] {
        match self.wind {
            Some((w0, w1, frac, _)) => {
                let (a, b) = match self.pair {
                    Some(pair) => pair.sample_lanes(x),
                    None => (w0.sample_lanes(x), w1.sample_lanes(x)),
                };
                // Plain loops over local rows: nested `from_fn` closures compile lane by lane.
                let (ga, gb) = (1.0 - frac, frac);
                let mut w = [[0.0; N]; 3];
                for c in 0..3 {
                    for l in 0..N {
                        w[c][l] = a[c][l] * ga + b[c][l] * gb;
                    }
                }
                w
            }
            None => [[0.0; N]; 3],
        }
    }

    /// The wind velocity at `x` (zero without wind), m/s.
    #[inline]
    pub fn wind(&self, x: V3) -> V3 {
        match self.wind {
            Some((w0, w1, frac, _)) => add(scale(w0.sample(x), 1.0 - frac), scale(w1.sample(x), frac)),
            None => [0.0; 3],
        }
    }
}

/// Poses and colliders at the substep boundaries of one frame, filled once per frame.
#[derive(Debug, Clone)]
struct Tables {
    pose_a: Vec<Pose>,
    pose_b: Vec<Pose>,
    colliders: Vec<Colliders>,
    /// The frame's two wind fields side by side (see [`FieldPair`]).
    wind: FieldPair,
}

impl Tables {
    /// Room for `substeps` substeps (keeps the larger tables of a rerun).
    fn resize(&mut self, substeps: usize) {
        if self.pose_a.len() < substeps + 1 {
            self.pose_a.resize(substeps + 1, Pose::IDENTITY);
            self.pose_b.resize(substeps + 1, Pose::IDENTITY);
            self.colliders.resize(substeps + 1, Colliders::default());
        }
    }

    fn new(substeps: usize) -> Tables {
        Tables {
            pose_a: vec![Pose::IDENTITY; substeps + 1],
            pose_b: vec![Pose::IDENTITY; substeps + 1],
            colliders: vec![Colliders::default(); substeps + 1],
            wind: FieldPair::default(),
        }
    }
}

/// What a method needs inside one frame. Substep boundaries are indexed k = 0..=substeps
/// (fraction k / substeps of the frame); substep k runs from boundary k to k + 1.
#[derive(Debug)]
pub struct FrameEnv<'a> {
    /// The setup.
    pub setup: &'a Setup,
    /// Step size h = frame duration / substeps, s.
    pub h: f64,
    /// Substeps in this frame.
    pub substeps: usize,
    /// Frame duration, s.
    pub frame_dt: f64,
    /// Index (within the call) of the frame being computed (>= 1).
    pub frame: usize,
    /// Gravity vector, m/s^2.
    pub gravity: V3,
    /// How many threads the method may use for the frame, at least 1 (the node's
    /// `Io::threads`); the method must give the same bits for any count.
    pub threads: usize,
    anchor: Option<Track>,
    /// The anchor's angular velocity at the start and end of the frame (central differences
    /// of the frames around each).
    anchor_angular_ends: [V3; 2],
    end: Option<Track>,
    moving: &'a [Moving],
    wind: Option<(FieldView<'a>, FieldView<'a>)>,
    tables: &'a Tables,
}

impl<'a> FrameEnv<'a> {
    /// Fraction of the frame at boundary k.
    #[inline(always)]
    pub fn frac(&self, k: usize) -> f64 {
        k as f64 / self.substeps as f64
    }

    /// The anchor's pose at boundary k (the world frame when no anchor is connected).
    #[inline(always)]
    pub fn anchor_pose(&self, k: usize) -> &Pose {
        &self.tables.pose_a[k]
    }

    /// The pose carrying the end pin at boundary k (`anchor_b` if connected, else `anchor`).
    #[inline(always)]
    pub fn end_pose(&self, k: usize) -> &Pose {
        &self.tables.pose_b[k]
    }

    /// Where pin `slot` (an index into `setup.pins`: 0 = start, 1 = end) of strand `s` is at
    /// boundary k.
    #[inline(always)]
    pub fn pin_target(&self, s: usize, slot: usize, k: usize) -> V3 {
        if slot == 0 {
            self.tables.pose_a[k].apply(self.setup.start_offsets[s])
        } else {
            self.tables.pose_b[k].apply(self.setup.end_offsets[s])
        }
    }

    /// Every pin target at boundary k, strand-major: `out[s * setup.pins.len() + slot]`.
    pub fn pin_targets(&self, k: usize, out: &mut [V3]) {
        let np = self.setup.pins.len();
        for s in 0..self.setup.strands {
            for slot in 0..np {
                out[s * np + slot] = self.pin_target(s, slot, k);
            }
        }
    }

    /// Every pin target at an arbitrary fraction of the frame (poses computed on the fly).
    pub fn pin_targets_at(&self, frac: f64, out: &mut [V3]) {
        let a = self.anchor.map_or(Pose::IDENTITY, |t| t.pose(frac));
        let b = self.end.map_or(a, |t| t.pose(frac));
        let np = self.setup.pins.len();
        for s in 0..self.setup.strands {
            for slot in 0..np {
                out[s * np + slot] = if slot == 0 {
                    a.apply(self.setup.start_offsets[s])
                } else {
                    b.apply(self.setup.end_offsets[s])
                };
            }
        }
    }

    /// The anchor's rigid velocity field at fraction `frac` of the frame (zero without an
    /// anchor): the linear velocity of the anchor's path there (the derivative of the curve the
    /// pins follow, exact for a quadratic path such as free fall), and the angular velocity
    /// interpolated linearly between the central differences at the frame's two ends; `frac`
    /// may lie slightly outside 0..=1 (the values are extrapolated).
    pub fn anchor_velocity_at(&self, frac: f64) -> RigidVelocity {
        match &self.anchor {
            None => RigidVelocity::default(),
            Some(t) => {
                let [w0, w1] = self.anchor_angular_ends;
                RigidVelocity {
                    origin: t.translation(frac),
                    linear: t.linear_at(frac),
                    angular: axpy(w0, frac, sub(w1, w0)),
                }
            }
        }
    }

    /// The acceleration of the anchor's translation at fraction `frac` of the frame (zero
    /// without an anchor): what a settled strand, in equilibrium under the apparent gravity
    /// g - a of its anchor, accelerates at as a whole at the start.
    pub fn anchor_acceleration_at(&self, frac: f64) -> V3 {
        self.anchor.map_or([0.0; 3], |t| t.acceleration_at(frac))
    }

    /// The anchor's rigid velocity field that goes with the velocities a method holds at
    /// boundary k: a symplectic-Euler velocity or a backward difference (x_k - x_{k-1}) / h is
    /// centred half a step back, at (k - 1/2) h, so the field is taken there. This keeps
    /// relative damping free of a spurious force when the anchor accelerates (a strand on a
    /// falling anchor stays weightless).
    #[inline(always)]
    pub fn anchor_velocity(&self, k: usize) -> RigidVelocity {
        self.anchor_velocity_at((k as f64 - 0.5) / self.substeps as f64)
    }

    /// True when any collider is connected or the ground is on.
    #[inline(always)]
    pub fn has_colliders(&self) -> bool {
        self.setup.ground.is_some() || !self.moving.is_empty()
    }

    /// The colliders at boundary k.
    #[inline(always)]
    pub fn colliders(&self, k: usize) -> &Colliders {
        &self.tables.colliders[k]
    }

    /// Projects a particle out of the colliders at boundary k (see [`Colliders::project`]).
    #[inline(always)]
    pub fn project(&self, k: usize, x: &mut V3, v: &mut V3) -> bool {
        self.tables.colliders[k].project(x, v)
    }

    /// True when a wind field is connected.
    #[inline(always)]
    pub fn has_wind(&self) -> bool {
        self.wind.is_some()
    }

    /// Gravity, damping, relative damping and wind at boundary k.
    #[inline]
    pub fn ambient(&self, k: usize) -> Ambient<'_> {
        let frac = self.frac(k);
        Ambient {
            gravity: self.gravity,
            damping: self.setup.damping,
            relative_damping: self.setup.relative_damping,
            anchor: self.anchor_velocity(k),
            wind: self.wind.as_ref().map(|(a, b)| (a, b, frac, self.setup.drag)),
            pair: self.tables.wind.is_filled().then_some(&self.tables.wind),
        }
    }

    /// The wind velocity at world point `x` at boundary k (zero without wind), m/s.
    pub fn wind_at(&self, k: usize, x: V3) -> V3 {
        self.ambient(k).wind(x)
    }
}

/// One collider's motion over the current frame.
#[derive(Debug, Clone, Copy)]
enum Moving {
    /// Numbered collider k (from 0): a sphere on the transform `start`, or, when its end
    /// input is connected, a capsule from a point on `start` to a point on `end`. Each point
    /// moves with its transform.
    Slot { k: usize, start: Track, end: Option<Track> },
    /// Collider k (from 0) of the `colliders` list: the paths of its start and end points (no
    /// rotation), and its radii at the frame's two ends (linear between them).
    Listed {
        k: usize,
        start: Track,
        end: Track,
        radii: [[f64; 2]; 2],
    },
}

impl Moving {
    /// Where warnings name this collider.
    fn name(&self) -> String {
        match self {
            Moving::Slot { k, .. } => format!("collider {}", k + 1),
            Moving::Listed { k, .. } => format!("collider {k} of `colliders`"),
        }
    }

    /// The collider at fraction `frac` of the frame.
    fn at(&self, setup: &Setup, frac: f64) -> Collider {
        match self {
            Moving::Slot { k, start, end } => {
                let params = &setup.colliders[*k];
                let centre = start.pose(frac).apply(params.offset);
                let velocity = start.velocity(frac).at(centre);
                match end {
                    None => Collider::Sphere(Sphere {
                        centre,
                        radius: params.radius,
                        velocity,
                    }),
                    Some(e) => {
                        let end = e.pose(frac).apply(params.end_offset);
                        let end_velocity = e.velocity(frac).at(end);
                        Collider::capsule(centre, end, params.radius, params.end_radius, velocity, end_velocity)
                    }
                }
            }
            Moving::Listed { start, end, radii, .. } => {
                let [[a0, b0], [a1, b1]] = *radii;
                Collider::capsule(
                    start.translation(frac),
                    end.translation(frac),
                    a0 + frac * (a1 - a0),
                    b0 + frac * (b1 - b0),
                    start.linear_at(frac),
                    end.linear_at(frac),
                )
            }
        }
    }
}

/// The colliders at fraction `frac` of the frame, into `out` (its list reused): every moving
/// collider, then the ground.
fn colliders_at(setup: &Setup, moving: &[Moving], frac: f64, out: &mut Colliders) {
    out.shapes.clear();
    out.shapes.extend(moving.iter().map(|m| m.at(setup, frac)));
    if let Some(height) = setup.ground {
        out.shapes.push(Collider::Ground(Ground { height }));
    }
    out.friction = setup.friction;
}

/// Every collider's motion over frame i (from frame i - 1), or held still at frame 0 when `i`
/// is 0, into `out`.
fn moving_over(inputs: &Inputs<'_>, tl: &Timeline, i: usize, out: &mut Vec<Moving>) -> Result<(), NodeError> {
    out.clear();
    let over = |s: &Series<'_>, name: &str| {
        if i == 0 {
            still(s, name, tl)
        } else {
            track(s, name, tl, i)
        }
    };
    for (k, s) in inputs.colliders.iter().enumerate() {
        if let Some(s) = s {
            let end = match &inputs.collider_ends[k] {
                Some(e) => Some(over(e, COLLIDER_END_INPUTS[k])?),
                None => None,
            };
            out.push(Moving::Slot {
                k,
                start: over(s, COLLIDER_INPUTS[k])?,
                end,
            });
        }
    }
    if let Some(list) = &inputs.list {
        let prev = i.saturating_sub(1);
        for (k, (a, b)) in list[prev].iter().zip(&list[i]).enumerate() {
            let path = |end: bool| -> Result<Track, NodeError> {
                let at = |f: usize| -> Result<V3, NodeError> {
                    let c = &list[f][k];
                    Ok(if end { c.end } else { c.start })
                };
                if i == 0 {
                    return Ok(Track::still(at(0)?, IDENTITY));
                }
                Ok(Track::between(at(prev)?, IDENTITY, at(i)?, IDENTITY, tl.dt())
                    .with_end_velocities(path_velocity(&at, tl, prev)?, path_velocity(&at, tl, i)?))
            };
            out.push(Moving::Listed {
                k,
                start: path(false)?,
                end: path(true)?,
                radii: [[a.start_radius, a.end_radius], [b.start_radius, b.end_radius]],
            });
        }
    }
    Ok(())
}

/// The identity rotation (x, y, z, w).
const IDENTITY: [f64; 4] = [0.0, 0.0, 0.0, 1.0];

/// Every frame of the `colliders` list, checked: the same number of colliders in every frame
/// (a points port keeps its N), each with finite places and radii.
fn read_list(list: &Series<'_>, tl: &Timeline) -> Result<Vec<Vec<ListedCapsule>>, NodeError> {
    (0..tl.frames())
        .map(|f| {
            collider_list::read_frame(list.frame(f))
                .map_err(|e| NodeError::new(format!("input `colliders` at frame {}: {e}", tl.frame_number(f))))
        })
        .collect()
}

/// The collider input names, in order.
const COLLIDER_INPUTS: [&str; 3] = ["collider_1", "collider_2", "collider_3"];
/// The inputs carrying the colliders' end points, in order.
const COLLIDER_END_INPUTS: [&str; 3] = ["collider_1_end", "collider_2_end", "collider_3_end"];

/// The connected inputs of one evaluation.
struct Inputs<'a> {
    anchor: Option<Series<'a>>,
    anchor_b: Option<Series<'a>>,
    wind: Option<Series<'a>>,
    colliders: [Option<Series<'a>>; 3],
    collider_ends: [Option<Series<'a>>; 3],
    /// The `colliders` list, every frame read.
    list: Option<Vec<Vec<ListedCapsule>>>,
    initial_positions: Option<Series<'a>>,
    initial_velocities: Option<Series<'a>>,
}

fn connected<'a>(
    io: &Io<'a>,
    name: &str,
    frames: usize,
    width: Option<usize>,
) -> Result<Option<Series<'a>>, NodeError> {
    let s = io.input(name)?;
    if s.is_empty() {
        return Ok(None);
    }
    if let Some(w) = width
        && s.width() != w
    {
        return Err(NodeError::new(format!(
            "input `{name}` has {} values per frame, expected {w}",
            s.width()
        )));
    }
    if s.frames() < frames {
        return Err(NodeError::new(format!(
            "input `{name}` holds {} frames, the timeline has {frames}",
            s.frames()
        )));
    }
    Ok(Some(s))
}

fn transform_at(series: &Series<'_>, name: &str, tl: &Timeline, i: usize) -> Result<(V3, [f64; 4]), NodeError> {
    read_transform(series.frame(i)).ok_or_else(|| {
        NodeError::new(format!(
            "input `{name}` at frame {} is not a transform: its values are not finite or its rotation quaternion is zero",
            tl.frame_number(i)
        ))
    })
}

/// The motion of a transform over frame i (from frame i - 1): the straight line between the
/// two samples (used for its angular velocity).
fn chord(series: &Series<'_>, name: &str, tl: &Timeline, i: usize) -> Result<Track, NodeError> {
    let (t0, q0) = transform_at(series, name, tl, i - 1)?;
    let (t1, q1) = transform_at(series, name, tl, i)?;
    Ok(Track::between(t0, q0, t1, q1, tl.dt()))
}

/// The motion of a transform over frame i, as pins and colliders follow it: the cubic through
/// the two samples with the velocities the samples give at both ends.
fn track(series: &Series<'_>, name: &str, tl: &Timeline, i: usize) -> Result<Track, NodeError> {
    Ok(chord(series, name, tl, i)?.with_end_velocities(
        translation_velocity(series, name, tl, i - 1)?,
        translation_velocity(series, name, tl, i)?,
    ))
}

/// The velocity of a transform's translation at frame j, from the frame samples (see
/// [`path_velocity`]).
fn translation_velocity(series: &Series<'_>, name: &str, tl: &Timeline, j: usize) -> Result<V3, NodeError> {
    path_velocity(&|f: usize| transform_at(series, name, tl, f).map(|(t, _)| t), tl, j)
}

/// The velocity at frame j of a path sampled at the frames (`at(f)` is the place at frame f):
/// the central difference inside the timeline, the second-order one-sided difference at its
/// ends (both exact for a path quadratic in time, such as free fall), the chord with only two
/// frames.
fn path_velocity(at: &dyn Fn(usize) -> Result<V3, NodeError>, tl: &Timeline, j: usize) -> Result<V3, NodeError> {
    let frames = tl.frames();
    let dt = tl.dt();
    Ok(if frames < 2 {
        [0.0; 3]
    } else if frames == 2 {
        scale(sub(at(1)?, at(0)?), 1.0 / dt)
    } else if j == 0 {
        let (a, b, c) = (at(0)?, at(1)?, at(2)?);
        [0, 1, 2].map(|k| (-3.0 * a[k] + 4.0 * b[k] - c[k]) / (2.0 * dt))
    } else if j + 1 == frames {
        let (a, b, c) = (at(j - 2)?, at(j - 1)?, at(j)?);
        [0, 1, 2].map(|k| (a[k] - 4.0 * b[k] + 3.0 * c[k]) / (2.0 * dt))
    } else {
        scale(sub(at(j + 1)?, at(j - 1)?), 0.5 / dt)
    })
}

/// The least damping rate while settling, 1/s: a fast mode (36 Hz, say) loses e^-5 of its
/// amplitude in a second of settling; the slow swings are stopped by the kinetic damping (common
/// practice, no source).
const SETTLE_DAMPING: f64 = 10.0;

/// The acceleration at the first frame of a path sampled at the frames: the second-order
/// one-sided second difference (2 x0 - 5 x1 + 4 x2 - x3) / dt^2 (Fornberg 1988, "Generation of
/// finite difference formulas on arbitrarily spaced grids", Math. Comp. 51(184), table 1), or
/// (x0 - 2 x1 + x2) / dt^2 with three frames; both exact for a path quadratic in time. Zero
/// with fewer frames.
fn start_acceleration(at: &dyn Fn(usize) -> Result<V3, NodeError>, tl: &Timeline) -> Result<V3, NodeError> {
    let inv = 1.0 / (tl.dt() * tl.dt());
    Ok(match tl.frames() {
        0..=2 => [0.0; 3],
        3 => {
            let (a, b, c) = (at(0)?, at(1)?, at(2)?);
            [0, 1, 2].map(|k| (a[k] - 2.0 * b[k] + c[k]) * inv)
        }
        _ => {
            let (a, b, c, d) = (at(0)?, at(1)?, at(2)?, at(3)?);
            [0, 1, 2].map(|k| (2.0 * a[k] - 5.0 * b[k] + 4.0 * c[k] - d[k]) * inv)
        }
    })
}

/// The angular velocity of a transform at frame i: the mean of the angular velocities over
/// the frames before and after it (a central difference), one-sided at the ends.
fn angular_velocity(series: &Series<'_>, name: &str, tl: &Timeline, i: usize) -> Result<V3, NodeError> {
    let frames = tl.frames();
    if frames < 2 {
        return Ok([0.0; 3]);
    }
    let before = if i > 0 { Some(chord(series, name, tl, i)?) } else { None };
    let after = if i + 1 < frames {
        Some(chord(series, name, tl, i + 1)?)
    } else {
        None
    };
    Ok(match (before, after) {
        (Some(a), Some(b)) => scale(add(a.angular, b.angular), 0.5),
        (Some(a), None) | (None, Some(a)) => a.angular,
        (None, None) => [0.0; 3],
    })
}

fn still(series: &Series<'_>, name: &str, tl: &Timeline) -> Result<Track, NodeError> {
    let (t, q) = transform_at(series, name, tl, 0)?;
    Ok(Track::still(t, q))
}

/// The check-time problems of a strand node with method `M` (its `Node::check`): a step
/// `frame / substeps` at or above the method's stability limit for these parameters, found
/// before a run blows up at it, at the `substeps` line with the count that is stable.
pub fn check<M: Method>(params: &Params, inputs: &[usize], timeline: Timeline) -> Vec<heft_node_sdk::CheckProblem> {
    let Ok(setup) = Setup::from_params(params) else {
        // Refused at evaluation with the reason; nothing to say here.
        return Vec::new();
    };
    let wind = crate::spec::INPUTS
        .iter()
        .position(|n| *n == "wind")
        .and_then(|k| inputs.get(k))
        .is_some_and(|&w| w > 0);
    let (Some(limit), true) = (M::stability_limit(&setup, wind), timeline.frames() > 1) else {
        return Vec::new();
    };
    let h = timeline.dt() / setup.substeps as f64;
    if h < limit {
        return Vec::new();
    }
    let need = (timeline.dt() / limit).floor() as u64 + 1;
    vec![
        heft_node_sdk::CheckProblem::at(
            "substeps",
            format!(
                "{} substeps make a step of {h:.3e} s, not below {} of {limit:.3e} s for these parameters: the run \
                 would blow up",
                setup.substeps,
                M::LIMIT_NAME
            ),
        )
        .help(format!(
            "set `substeps` to at least {need}, or soften `stretch_stiffness`"
        )),
    ]
}

/// Evaluates a strand node with method `M`: the whole frame loop.
pub fn evaluate<M: Method>(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
    let setup = Setup::from_params(params)?;
    evaluate_with::<M>(&setup, io)
}

/// Evaluates with a given setup (for tests of idealised models, e.g. a setup whose masses
/// were changed with [`Setup::set_particle_mass`]).
pub fn evaluate_with<M: Method>(setup: &Setup, io: &mut Io<'_>) -> Result<(), NodeError> {
    advance_with::<M>(setup, &mut None, io)
}

/// What a strand node carries from one window of frames to the next: its setup and, once
/// the first frame is written, the running simulation.
struct Carried<M> {
    setup: Setup,
    run: Option<Running<M>>,
}

/// A strand simulation between windows: everything the frame loop keeps from frame to frame.
pub struct Running<M> {
    state: State,
    method: M,
    tables: Tables,
    moving: Vec<Moving>,
    pinned_inside: Option<i64>,
    /// The next frame (timeline index) the loop computes.
    next: usize,
    /// What it takes to run the coming frame again (see [`Method::mark`]).
    kept: State,
    /// A try of the frame held while the frame runs again (see [`Method::hold`]).
    held: State,
    /// Per strand, whether the last frame kept it overlong.
    crumpled: Vec<bool>,
    /// The frames run again after a blow-up or a crumple: frame number and the most substeps
    /// they ran at.
    reruns: Vec<(i64, usize)>,
    /// The strands kept crumpled (see [`OverlongLimit`]): frame number, strand and its
    /// [`overlong_ratio`].
    overlong: Vec<(i64, usize, f64)>,
}

impl<M> std::fmt::Debug for Running<M> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Running")
            .field("next", &self.next)
            .finish_non_exhaustive()
    }
}

/// Evaluates the frames of `io.window()` ([`heft_node_sdk::Node::advance`]), carrying the
/// simulation in `carry` from window to window: the outputs are the bits of [`evaluate`] for
/// those frames.
pub fn advance<M: Method>(params: &Params, carry: &mut heft_node_sdk::Carry, io: &mut Io<'_>) -> Result<(), NodeError> {
    if carry.is_empty() {
        carry.set(Carried::<M> {
            setup: Setup::from_params(params)?,
            run: None,
        });
    }
    let c = carry
        .get::<Carried<M>>()
        .ok_or_else(|| NodeError::new("the carried state is not a strand node's"))?;
    advance_with::<M>(&c.setup, &mut c.run, io)
}

/// The frame loop over `io.window()`: starts the simulation at frame 0 when `run` is empty,
/// continues it otherwise.
pub fn advance_with<M: Method>(setup: &Setup, run: &mut Option<Running<M>>, io: &mut Io<'_>) -> Result<(), NodeError> {
    let tl = io.timeline();
    let frames = tl.frames();
    let window = io.window();
    if frames == 0 || window.is_empty() {
        return Ok(());
    }
    let expected = run.as_ref().map_or(0, |r| r.next);
    if window.start != expected {
        return Err(NodeError::new(format!(
            "asked for frames from index {} where the simulation stands at {expected}: windows come in order from \
             the first frame",
            window.start
        )));
    }
    let threads = io.threads();
    let n = setup.total_particles();
    let inputs = Inputs {
        anchor: connected(io, "anchor", frames, Some(7))?,
        anchor_b: connected(io, "anchor_b", frames, Some(7))?,
        wind: connected(io, "wind", frames, None)?,
        colliders: [
            connected(io, "collider_1", frames, Some(7))?,
            connected(io, "collider_2", frames, Some(7))?,
            connected(io, "collider_3", frames, Some(7))?,
        ],
        collider_ends: [
            connected(io, "collider_1_end", frames, Some(7))?,
            connected(io, "collider_2_end", frames, Some(7))?,
            connected(io, "collider_3_end", frames, Some(7))?,
        ],
        list: match connected(io, "colliders", frames, None)? {
            Some(s) => Some(read_list(&s, &tl)?),
            None => None,
        },
        initial_positions: connected(io, "initial_positions", 1, Some(3 * n))?,
        initial_velocities: connected(io, "initial_velocities", 1, Some(3 * n))?,
    };
    if setup.pin != Pin::Free && inputs.anchor.is_none() {
        let which = if setup.pin == Pin::OneEnd {
            "one_end"
        } else {
            "both_ends"
        };
        return Err(NodeError::new(format!(
            "pin = {which} needs the `anchor` input connected (or set pin = free)"
        )));
    }
    for (name, width) in [
        ("positions", 3 * n),
        ("velocities", 3 * n),
        ("momentum", 3),
        ("energy", 1),
    ] {
        let (buf, w) = io.output(name)?;
        let count = window.len();
        if w != width || buf.len() != count * width {
            return Err(NodeError::new(format!(
                "output `{name}` has {w} values per frame and {} values, expected {width} per frame for {count} frames",
                buf.len()
            )));
        }
    }
    for k in 0..3 {
        if inputs.collider_ends[k].is_some() && inputs.colliders[k].is_none() {
            let (start, end) = (COLLIDER_INPUTS[k], COLLIDER_END_INPUTS[k]);
            return Err(NodeError::new(format!(
                "`{end}` is connected but `{start}` is not: capsule collider {} runs from `{start}` to `{end}`; \
                 connect `{start}` too (alone it makes a sphere)",
                k + 1
            )));
        }
    }
    let wind_used = inputs.wind.is_some();
    let end_on_b = setup.pin == Pin::BothEnds && inputs.anchor_b.is_some();

    if run.is_none() {
        // The initial state (frame 0).
        let pose0 = match &inputs.anchor {
            Some(s) => still(s, "anchor", &tl)?.pose(0.0),
            None => Pose::IDENTITY,
        };
        let pose0_b = match (&inputs.anchor_b, end_on_b) {
            (Some(s), true) => still(s, "anchor_b", &tl)?.pose(0.0),
            _ => pose0,
        };
        let mut state = rest_state(setup, &pose0, &pose0_b);
        if let Some(s) = &inputs.initial_positions {
            for (p, c) in state.x.iter_mut().zip(s.frame(0).chunks_exact(3)) {
                *p = [c[0], c[1], c[2]];
            }
        }
        if let Some(s) = &inputs.initial_velocities {
            for (p, c) in state.v.iter_mut().zip(s.frame(0).chunks_exact(3)) {
                *p = [c[0], c[1], c[2]];
            }
        }
        if state.x.iter().chain(&state.v).flatten().any(|c| !c.is_finite()) {
            return Err(NodeError::new(
                "`initial_positions` or `initial_velocities` holds a value that is not finite",
            ));
        }
        for s in 0..setup.strands {
            for (slot, &i) in setup.pins.iter().enumerate() {
                let pose = if slot == 0 { &pose0 } else { &pose0_b };
                let off = if slot == 0 {
                    setup.start_offsets[s]
                } else {
                    setup.end_offsets[s]
                };
                state.x[s * setup.particles + i] = pose.apply(off);
                state.v[s * setup.particles + i] = [0.0; 3];
            }
        }
        let mut moving = Vec::new();
        moving_over(&inputs, &tl, 0, &mut moving)?;
        let mut c0 = Colliders::default();
        colliders_at(setup, &moving, 0.0, &mut c0);
        let mut pinned_inside: Option<i64> = None;
        if !c0.is_empty() {
            for (idx, (x, v)) in state.x.iter_mut().zip(state.v.iter_mut()).enumerate() {
                if setup.pinned[idx % setup.particles] {
                    if c0.contains(*x) && pinned_inside.is_none() {
                        pinned_inside = Some(tl.frame_number(0));
                    }
                    continue;
                }
                c0.project(x, v);
            }
        }

        let mut warnings = Vec::new();
        if setup.settled_start {
            settle::<M>(setup, &mut state, &inputs, &tl, [pose0, pose0_b], &moving, threads)?;
            // A rest shape inside a collider: said, with the place and the depth.
            for (idx, x) in state.x.iter().enumerate() {
                for (k, shape) in c0.shapes.iter().enumerate() {
                    let (mut p, mut v) = (*x, [0.0; 3]);
                    if shape.contains(*x) && shape.project(&mut p, &mut v) {
                        let what = match moving.get(k) {
                            Some(m) => m.name(),
                            None => "the ground".to_owned(),
                        };
                        warnings.push(format!(
                            "strand {} particle {} starts {:.3e} m inside {what} even settled (pinned there, or held \
                             by its neighbours): move the pin or the collider",
                            idx / setup.particles,
                            idx % setup.particles,
                            norm(sub(p, *x))
                        ));
                    }
                }
            }
        }
        for w in warnings {
            io.warn(&w);
        }
        let method = M::new(setup);
        write_frame(io, 0, setup, &state, &method, true, false)?;
        *run = Some(Running {
            state,
            method,
            tables: Tables::new(setup.substeps),
            moving,
            pinned_inside,
            next: 1,
            kept: State::default(),
            held: State::default(),
            crumpled: Vec::new(),
            reruns: Vec::new(),
            overlong: Vec::new(),
        });
    }
    let Some(Running {
        state,
        method,
        tables,
        moving,
        pinned_inside,
        next,
        kept,
        held,
        crumpled,
        reruns,
        overlong,
    }) = run.as_mut()
    else {
        return Err(NodeError::new("the simulation did not start"));
    };

    let dt = tl.dt();
    let first = window.start;
    let limit = overlong_limit::<M>(setup);
    for i in window.start.max(1)..window.end {
        let anchor = match &inputs.anchor {
            Some(s) => Some(track(s, "anchor", &tl, i)?),
            None => None,
        };
        let anchor_angular_ends = match &inputs.anchor {
            Some(s) => [
                angular_velocity(s, "anchor", &tl, i - 1)?,
                angular_velocity(s, "anchor", &tl, i)?,
            ],
            None => [[0.0; 3]; 2],
        };
        let end = match (&inputs.anchor_b, end_on_b) {
            (Some(s), true) => Some(track(s, "anchor_b", &tl, i)?),
            _ => anchor,
        };
        moving_over(&inputs, &tl, i, moving)?;
        let wind = match &inputs.wind {
            Some(s) => {
                let view = |f: usize| {
                    FieldView::from_frame(s.frame(f))
                        .map_err(|e| NodeError::new(format!("input `wind` at frame {}: {e}", tl.frame_number(f))))
                };
                let (a, b) = (view(i - 1)?, view(i)?);
                tables.wind.fill(&a, &b);
                Some((a, b))
            }
            None => None,
        };
        if setup.reruns > 0 {
            method.mark(state, kept);
        }
        // The frame at `substeps`, and when a strand blows up for want of a shorter step, again
        // from its start at twice the substeps, up to `reruns` times.
        let mut rerun = 0;
        // Per strand, true once it came out right at some try of this frame: it keeps that try.
        let mut settled: Vec<bool> = Vec::new();
        // True when the outputs hold the frame as the loop leaves it.
        let mut written;
        let filled = loop {
            let substeps = setup.substeps << rerun;
            let h = dt / substeps as f64;
            tables.resize(substeps);
            for k in 0..=substeps {
                let frac = k as f64 / substeps as f64;
                tables.pose_a[k] = anchor.map_or(Pose::IDENTITY, |t| t.pose(frac));
                if setup.pin == Pin::BothEnds {
                    tables.pose_b[k] = if end_on_b {
                        end.map_or(Pose::IDENTITY, |t| t.pose(frac))
                    } else {
                        tables.pose_a[k]
                    };
                }
                colliders_at(setup, moving, frac, &mut tables.colliders[k]);
                tables.colliders[k].friction.step = h;
            }
            let env = FrameEnv {
                setup,
                h,
                substeps,
                frame_dt: dt,
                frame: i,
                gravity: setup.gravity,
                threads,
                anchor,
                anchor_angular_ends,
                end,
                moving,
                wind,
                tables,
            };
            // The first try writes the frame's outputs as it goes, when the method can; a
            // rerun leaves them to the store below.
            written = if rerun == 0 && !method.fills_state() {
                let at = (i - first) * 3 * n..(i - first + 1) * 3 * n;
                let (x, v) = io.output_pair("positions", "velocities")?;
                let out = Out {
                    x: &mut x[at.clone()],
                    v: &mut v[at],
                };
                method.frame_and_store(setup, state, &env, out)
            } else {
                method.frame(setup, state, &env);
                false
            };
            let mut filled = method.fills_state();
            if rerun > 0 {
                // The strands that came out right at a coarser step take that result back.
                method.merge(state, held, &settled);
            } else if method.surely_intact(setup, state) {
                crumpled.clear();
                break filled;
            }
            if !filled {
                method.store(state.x.as_flattened_mut(), state.v.as_flattened_mut());
                filled = true;
            }
            let found: Vec<Found> = (0..setup.strands)
                .map(|s| match settled.get(s) {
                    Some(true) => Found::Fine,
                    _ => inspect::<M>(setup, state, s, &limit),
                })
                .collect();
            let frame = tl.frame_number(i);
            if let Some(s) = found.iter().position(|f| *f == Found::Blown) {
                // A strand torn apart by its anchor jumping (a glitch in the motion data) is
                // the data's fault, not the step's: say so, naming the anchor and the frame.
                if let Some(e) = anchor_jump(&inputs, &tl, i)? {
                    return Err(e);
                }
                let physics = matches!(diagnose::<M>(setup, state, s, h, wind_used), Diagnosis::Physics { .. });
                if rerun == 0 && (physics || setup.reruns == 0) {
                    return Err(NodeError::new(blow_up_message::<M>(
                        setup, state, s, frame, h, dt, wind_used,
                    )));
                }
                if rerun == setup.reruns || physics {
                    // The advice is for the last step tried.
                    let mut tried = setup.clone();
                    tried.substeps = substeps;
                    let message = blow_up_message::<M>(&tried, state, s, frame, h, dt, wind_used);
                    let counts: Vec<String> = (1..=rerun).map(|r| (setup.substeps << r).to_string()).collect();
                    return Err(NodeError::new(format!(
                        "{message} (it went wrong at the {} substeps given, and again each time the frame was run \
                         from its start at {} substeps: `reruns` = {})",
                        setup.substeps,
                        counts.join(", "),
                        setup.reruns
                    )));
                }
            }
            // A strand kept crumpled last frame is not run again for it: a rerun starts from the
            // crumple and cannot mend it.
            let again = |s: usize, f: &Found| match f {
                Found::Fine => false,
                Found::Blown => true,
                Found::Overlong(_) => !crumpled.get(s).copied().unwrap_or(false),
            };
            if rerun < setup.reruns && found.iter().enumerate().any(|(s, f)| again(s, f)) {
                settled = found.iter().enumerate().map(|(s, f)| !again(s, f)).collect();
                method.hold(state, held);
                method.rewind(state, kept);
                rerun += 1;
                continue;
            }
            crumpled.clear();
            crumpled.extend(found.iter().map(|f| matches!(f, Found::Overlong(_))));
            for (s, f) in found.iter().enumerate() {
                if let Found::Overlong(ratio) = f {
                    overlong.push((frame, s, *ratio));
                }
            }
            break filled;
        };
        if rerun > 0 {
            reruns.push((tl.frame_number(i), setup.substeps << rerun));
        }
        let mut filled = filled;
        let mut fill = |state: &mut State| {
            if !filled {
                method.store(state.x.as_flattened_mut(), state.v.as_flattened_mut());
                filled = true;
            }
        };
        let substeps = setup.substeps << rerun;
        if pinned_inside.is_none() && !tables.colliders[substeps].is_empty() {
            fill(state);
            let c = &tables.colliders[substeps];
            let inside = state
                .x
                .iter()
                .enumerate()
                .any(|(idx, x)| setup.pinned[idx % setup.particles] && c.contains(*x));
            if inside {
                *pinned_inside = Some(tl.frame_number(i));
            }
        }
        write_frame(io, i - first, setup, state, method, filled, written)?;
    }
    *next = window.end;
    if let Some(f) = *pinned_inside
        && window.end == frames
    {
        io.warn(format!(
            "a pinned particle is inside a collider from frame {f}: pins follow their anchor and are not pushed out"
        ));
    }
    if !reruns.is_empty() && window.end == frames {
        io.warn(rerun_summary(setup.substeps, reruns));
    }
    // The worst strand and frame, the first of equals.
    let worst = overlong.iter().fold(None, |w: Option<&(i64, usize, f64)>, o| match w {
        Some(w) if w.2 >= o.2 => Some(w),
        _ => Some(o),
    });
    if let Some(&(frame, s, ratio)) = worst
        && window.end == frames
    {
        let mut frames: Vec<i64> = overlong.iter().map(|o| o.0).collect();
        frames.dedup();
        io.warn(format!(
            "strands came out crumpled, up to {:.1} % longer than at rest (strand {s} at frame {frame}), in {}, and \
             `reruns` = {} did not mend it: a step too coarse for their segments (raise `substeps`), or a pull \
             harder than their `stretch_stiffness` holds within {} %",
            100.0 * (ratio - 1.0),
            frame_list(&frames),
            setup.reruns,
            100.0 * OVERLONG
        ));
    }
    Ok(())
}

/// Frame numbers in order as a short list: "frame 7", "frames 7 to 9, 12".
fn frame_list(frames: &[i64]) -> String {
    let mut runs: Vec<(i64, i64)> = Vec::new();
    for &f in frames {
        match runs.last_mut() {
            Some((_, last)) if *last + 1 == f => *last = f,
            _ => runs.push((f, f)),
        }
    }
    let parts: Vec<String> = runs
        .iter()
        .map(|&(a, b)| if a == b { a.to_string() } else { format!("{a} to {b}") })
        .collect();
    let noun = if frames.len() == 1 { "frame" } else { "frames" };
    format!("{noun} {}", parts.join(", "))
}

/// The warning that lists the frames run again after a blow-up (frame number, substeps), by
/// the substeps they ran at ("frames 41 to 44 at 40, frame 42 at 80").
fn rerun_summary(substeps: usize, reruns: &[(i64, usize)]) -> String {
    let mut counts: Vec<usize> = reruns.iter().map(|r| r.1).collect();
    counts.sort_unstable();
    counts.dedup();
    let parts: Vec<String> = counts
        .iter()
        .map(|&n| {
            let frames: Vec<i64> = reruns.iter().filter(|r| r.1 == n).map(|r| r.0).collect();
            format!("{} at {n}", frame_list(&frames))
        })
        .collect();
    let most = counts.last().copied().unwrap_or(substeps);
    let count = reruns.len();
    let (noun, their) = if count == 1 {
        ("frame", "its")
    } else {
        ("frames", "their")
    };
    format!(
        "{count} {noun} went wrong at the {substeps} substeps given (a strand blew up or crumpled) and ran again \
         from {their} start with more: {}; the rest ran at {substeps} (`substeps` = {most} runs every frame at one \
         step)",
        parts.join(", ")
    )
}

/// The rest shape: each strand laid along `rest_direction` from its start point; for
/// both_ends, a V between the two pins whose arms have the strand's rest length (straight and
/// stretched when the pins are farther apart than the strand is long), sagging towards
/// `rest_direction`. Zero velocities.
pub fn rest_state(setup: &Setup, pose_a: &Pose, pose_b: &Pose) -> State {
    let p = setup.particles;
    let l0 = setup.rest_length;
    let mut x = vec![[0.0; 3]; setup.total_particles()];
    let dir_world = pose_a.rotate(setup.rest_direction);
    for s in 0..setup.strands {
        let a = pose_a.apply(setup.start_offsets[s]);
        let strand = &mut x[s * p..(s + 1) * p];
        if setup.pin != Pin::BothEnds {
            for (i, xi) in strand.iter_mut().enumerate() {
                *xi = axpy(a, i as f64 * l0, dir_world);
            }
            continue;
        }
        let b = pose_b.apply(setup.end_offsets[s]);
        let n = setup.segments;
        let n1 = n.div_ceil(2);
        let (la, lb) = (n1 as f64 * l0, (n - n1) as f64 * l0);
        let ab = sub(b, a);
        let d = norm(ab);
        let apex = if d >= la + lb {
            None
        } else {
            let u = if d > 0.0 { scale(ab, 1.0 / d) } else { [0.0; 3] };
            // Sag direction: rest_direction without its component along the span; any
            // perpendicular when they are parallel.
            let mut w = axpy(dir_world, -dot(dir_world, u), u);
            if norm(w) < 1e-9 {
                w = if u[2].abs() < 0.9 {
                    cross(u, [0.0, 0.0, 1.0])
                } else {
                    cross(u, [1.0, 0.0, 0.0])
                };
            }
            let w = scale(w, 1.0 / norm(w));
            let along = if d > 0.0 {
                (d * d + la * la - lb * lb) / (2.0 * d)
            } else {
                0.0
            };
            let across = (la * la - along * along).max(0.0).sqrt();
            Some(add(axpy(a, along, u), scale(w, across)))
        };
        for (i, xi) in strand.iter_mut().enumerate() {
            *xi = match apex {
                None => axpy(a, i as f64 / n as f64, ab),
                Some(c) if i <= n1 => axpy(a, i as f64 / n1 as f64, sub(c, a)),
                Some(c) => axpy(c, (i - n1) as f64 / (n - n1) as f64, sub(b, c)),
            };
        }
    }
    State {
        v: vec![[0.0; 3]; x.len()],
        x,
    }
}

/// Speed above which a particle counts as blown up, m/s.
pub const BLOW_UP_SPEED: f64 = 1.0e4;
/// Stretch ratio above which a segment counts as blown up.
pub const BLOW_UP_STRETCH: f64 = 10.0;

/// The first strand that blew up (a non-finite value, a segment longer than 10 rest lengths,
/// or a speed above 1e4 m/s), if any.
pub fn blown_strand(setup: &Setup, state: &State) -> Option<usize> {
    (0..setup.strands).find(|&s| is_blown(setup, state, s))
}

/// Whether strand `s` is blown up (see [`blown_strand`]).
fn is_blown(setup: &Setup, state: &State, s: usize) -> bool {
    let p = setup.particles;
    let max_l2 = (BLOW_UP_STRETCH * setup.rest_length).powi(2);
    let max_v2 = BLOW_UP_SPEED * BLOW_UP_SPEED;
    let x = &state.x[s * p..(s + 1) * p];
    let v = &state.v[s * p..(s + 1) * p];
    // Written so that NaN fails every comparison and counts as blown up.
    let mut ok = true;
    for (xi, vi) in x.iter().zip(v) {
        ok &= xi.iter().all(|c| c.is_finite()) & (dot(*vi, *vi) <= max_v2);
    }
    for w in x.windows(2) {
        let e = sub(w[1], w[0]);
        ok &= dot(e, e) <= max_l2;
    }
    !ok
}

/// How much longer than at rest a strand may be (beyond ten times the stretch its weight gives
/// it hanging still) before the frame loop takes the frame's step for too coarse: 1 %, the
/// issue's bound for a strand of 256 segments. A stable run of a stiff strand stays inside it:
/// Juno's 40 cm ponytail through her jump (graphs/juno.graph with `segments` and `substeps`
/// changed) at 256, 512 and 1024 segments and 40, 80 and 160 substeps, at most 0.38 %, 0.79 %
/// and 0.64 % (measured). A fine strand whose step is too coarse crumples into a growing zigzag:
/// the same at 256 and 20, 2 to 7 % in a frame or two before it blows up or recovers.
pub const OVERLONG: f64 = 0.01;

/// When the frame loop counts a strand as crumpled (see [`OverlongLimit::stretch`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OverlongLimit {
    /// The least stretch that counts: the larger of [`OVERLONG`] and ten times the hanging
    /// stretch of the top segment (T / (E A), for a stretchable model).
    pub base: f64,
    /// Twice the stretch per joule of kinetic energy about the strand's centre of mass:
    /// 2 x 4 / (L (E A)_min), for a stretchable model (0 for rigid segments).
    pub per_joule: f64,
    /// The strand's mass, kg.
    pub mass: f64,
}

impl OverlongLimit {
    /// The stretch (length over the larger of the rest length and the end-to-end distance,
    /// minus 1) above which a strand with kinetic energy `kinetic` (J) about its centre of mass
    /// counts as crumpled. A strand's motion about its centre pulls it with a tension of about
    /// 4 K / L (a uniform strand spinning about its middle carries T = m omega^2 L / 8 =
    /// 3 K / L there, K = m L^2 omega^2 / 24), which a soft strand must be let stretch by:
    /// twice T / (E A) (a load applied suddenly stretches a spring twice as far as at rest).
    /// Stiff strands stay at [`OVERLONG`].
    pub fn stretch(&self, kinetic: f64) -> f64 {
        self.base.max(self.per_joule * kinetic)
    }
}

/// The crumple limit of the strands of `setup` under method `M` (see [`OverlongLimit`]).
pub fn overlong_limit<M: Method>(setup: &Setup) -> OverlongLimit {
    let (hanging, per_joule) = if M::STRETCHABLE {
        let ea = setup
            .segment_k
            .iter()
            .fold(f64::INFINITY, |m, k| m.min(k * setup.rest_length));
        let length = setup.rest_length * setup.segments as f64;
        (
            hanging_stretch(setup).map_or(0.0, |(_, ratio)| ratio - 1.0),
            2.0 * 4.0 / (length * ea),
        )
    } else {
        (0.0, 0.0)
    };
    OverlongLimit {
        base: OVERLONG.max(10.0 * hanging),
        per_joule,
        mass: setup.mass.iter().sum(),
    }
}

/// A strand's length (the sum of its segments) over the larger of its rest length and the
/// distance between its ends: above 1, more length than a pull from its ends explains. A strand
/// pulled straight beyond its rest length gives 1.
pub fn overlong_ratio(setup: &Setup, x: &[V3]) -> f64 {
    let rest = setup.rest_length * setup.segments as f64;
    let length: f64 = x.windows(2).map(|w| norm(sub(w[1], w[0]))).sum();
    length / rest.max(norm(sub(x[x.len() - 1], x[0])))
}

/// The kinetic energy of a strand's particles about their centre of mass, J.
pub fn kinetic_about_centre(setup: &Setup, v: &[V3]) -> f64 {
    let (mut p, mut k) = ([0.0; 3], 0.0);
    for (vi, &m) in v.iter().zip(&setup.mass) {
        p = axpy(p, m, *vi);
        k += 0.5 * m * dot(*vi, *vi);
    }
    let mass: f64 = setup.mass.iter().sum();
    (k - dot(p, p) / (2.0 * mass)).max(0.0)
}

/// What the frame loop finds of a strand after a try of a frame.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Found {
    Fine,
    /// See [`blown_strand`].
    Blown,
    /// Crumpled ([`OverlongLimit`]), with its [`overlong_ratio`].
    Overlong(f64),
}

fn inspect<M: Method>(setup: &Setup, state: &State, s: usize, limit: &OverlongLimit) -> Found {
    if is_blown(setup, state, s) {
        return Found::Blown;
    }
    if !M::WATCHES_CRUMPLING {
        return Found::Fine;
    }
    let p = setup.particles;
    let (x, v) = (&state.x[s * p..(s + 1) * p], &state.v[s * p..(s + 1) * p]);
    let ratio = overlong_ratio(setup, x);
    if ratio > 1.0 + limit.stretch(kinetic_about_centre(setup, v)) {
        Found::Overlong(ratio)
    } else {
        Found::Fine
    }
}

/// Why a strand counts as blown up (see [`blown_strand`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum BlowUp {
    /// A position or velocity is not finite.
    NonFinite,
    /// Segment `segment` (numbered from the strand's particle 0) is `ratio` rest lengths long,
    /// the longest of the strand and more than [`BLOW_UP_STRETCH`].
    Stretch {
        /// The segment.
        segment: usize,
        /// Its length over the rest length.
        ratio: f64,
    },
    /// Particle `particle` (within the strand) moves faster than [`BLOW_UP_SPEED`].
    Speed {
        /// The particle.
        particle: usize,
        /// Its speed, m/s.
        speed: f64,
    },
}

/// Why strand `s` is blown up, if it is: a non-finite value first, then the most stretched
/// segment beyond [`BLOW_UP_STRETCH`], then the fastest particle beyond [`BLOW_UP_SPEED`].
pub fn blow_up_cause(setup: &Setup, state: &State, s: usize) -> Option<BlowUp> {
    let p = setup.particles;
    let x = &state.x[s * p..(s + 1) * p];
    let v = &state.v[s * p..(s + 1) * p];
    if x.iter().chain(v).flatten().any(|c| !c.is_finite()) {
        return Some(BlowUp::NonFinite);
    }
    let l0 = setup.rest_length;
    let (mut segment, mut ratio) = (0, f64::NEG_INFINITY);
    for (j, w) in x.windows(2).enumerate() {
        let r = norm(sub(w[1], w[0])) / l0;
        if r > ratio {
            (segment, ratio) = (j, r);
        }
    }
    if ratio > BLOW_UP_STRETCH {
        return Some(BlowUp::Stretch { segment, ratio });
    }
    let (mut particle, mut speed) = (0, f64::NEG_INFINITY);
    for (i, vi) in v.iter().enumerate() {
        let sp = norm(*vi);
        if sp > speed {
            (particle, speed) = (i, sp);
        }
    }
    (speed > BLOW_UP_SPEED).then_some(BlowUp::Speed { particle, speed })
}

/// For a strand hanging from one pin under gravity: the tension of its top segment at rest,
/// T = g x (the mass below the pin), N, and that segment's length at rest in rest lengths,
/// 1 + T / (E A) (Hooke's law for the spring k = E A / l0). `None` for other pins or no gravity.
pub fn hanging_stretch(setup: &Setup) -> Option<(f64, f64)> {
    let g = norm(setup.gravity);
    if setup.pin != Pin::OneEnd || g <= 0.0 || setup.stretch_stiffness <= 0.0 {
        return None;
    }
    let below: f64 = setup.mass.iter().skip(1).sum();
    let tension = g * below;
    Some((tension, 1.0 + tension / setup.stretch_stiffness))
}

/// Why strand `s` blew up, as far as the step is concerned (see [`diagnose`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Diagnosis {
    /// h above, or within 20 % of, the method's step limit `limit`: a numerical instability.
    AboveLimit {
        /// The limit, s.
        limit: f64,
    },
    /// The strand's physics: segment `segment` stretched to `ratio` rest lengths by a load its
    /// stiffness cannot carry; more substeps will not help. `limit` is the method's step
    /// limit, if it has one.
    Physics {
        /// The segment.
        segment: usize,
        /// Its length over the rest length.
        ratio: f64,
        /// The method's step limit, s.
        limit: Option<f64>,
    },
    /// h within a factor 2 of the limit `limit`.
    NearLimit {
        /// The limit, s.
        limit: f64,
    },
    /// h well inside the limit `limit`, but too coarse for the solver to keep up.
    InsideLimit {
        /// The limit, s.
        limit: f64,
    },
    /// The method has no step limit; a coarse step costs accuracy.
    NoLimit,
}

/// Why strand `s` of `state` blew up at a step `h`:
///
/// - h above (or within 20 % of) the method's step limit: a numerical instability.
/// - For a stretchable model ([`Method::STRETCHABLE`]), a segment beyond 10 rest lengths while
///   h is at most half the limit (the method is stable there), or, for a method without a
///   limit, while the strand's weight alone would stretch its top segment that far when applied
///   suddenly (an undamped spring k under a constant force F switched on at t = 0 moves as
///   x = (F / k)(1 - cos omega t), twice its static stretch at the turn): the strand's physics;
///   more substeps will not help, a stiffer or lighter strand will.
/// - Otherwise a step too coarse: h within a factor 2 of the limit; or well inside it but too
///   coarse for the solver, such as rigid segments' projection; or the method has no limit.
pub fn diagnose<M: Method>(setup: &Setup, state: &State, s: usize, h: f64, wind: bool) -> Diagnosis {
    let cause = blow_up_cause(setup, state, s).unwrap_or(BlowUp::NonFinite);
    let limit = M::stability_limit(setup, wind);
    // A model with rigid segments ignores `stretch_stiffness`: its over-long segments are the
    // solver falling behind.
    let hanging = if M::STRETCHABLE { hanging_stretch(setup) } else { None };
    match (limit, cause) {
        (Some(l), _) if h > 0.8 * l => Diagnosis::AboveLimit { limit: l },
        (Some(l), BlowUp::Stretch { segment, ratio }) if M::STRETCHABLE && h <= 0.5 * l => Diagnosis::Physics {
            segment,
            ratio,
            limit: Some(l),
        },
        (None, BlowUp::Stretch { segment, ratio })
            if M::STRETCHABLE && hanging.is_some_and(|(_, r)| 2.0 * r - 1.0 > BLOW_UP_STRETCH) =>
        {
            Diagnosis::Physics {
                segment,
                ratio,
                limit: None,
            }
        }
        (Some(l), _) if h > 0.5 * l => Diagnosis::NearLimit { limit: l },
        (Some(l), _) => Diagnosis::InsideLimit { limit: l },
        (None, _) => Diagnosis::NoLimit,
    }
}

/// The blow-up message of strand `s` at frame number `frame`, told apart by cause (see
/// [`diagnose`]): for a numerical instability, the substeps that put h at 0.8 of the limit;
/// for the strand's physics, a stiffer or lighter strand; otherwise twice the substeps.
pub fn blow_up_message<M: Method>(
    setup: &Setup,
    state: &State,
    s: usize,
    frame: i64,
    h: f64,
    dt: f64,
    wind: bool,
) -> String {
    let name = M::LIMIT_NAME;
    let head = format!("strand {s} blew up at frame {frame}");
    let doubled = 2 * setup.substeps as u64;
    let raise = |need: u64, instead: &str| {
        if need > 10000 {
            format!("it would take about {need} substeps, more than the 10000 allowed: {instead}")
        } else {
            format!("raise `substeps` to at least {need}")
        }
    };
    let coarse = "use fewer `segments` or a higher frame rate";
    match diagnose::<M>(setup, state, s, h, wind) {
        Diagnosis::AboveLimit { limit: l } => {
            let relation = if h > l { "above" } else { "close to" };
            let instead = if M::STRETCHABLE {
                "lower `stretch_stiffness` or `bending_stiffness`, raise `mass_per_length`, or use a method without \
                 this limit"
            } else {
                "lower `bending_stiffness` or the damping, raise `mass_per_length`, or use a method without this limit"
            };
            let advice = raise((1.25 * dt / l).ceil() as u64, instead);
            format!(
                "{head} (h = {h:.3e} s, {relation} {name} for these parameters, about {l:.3e} s: a numerical \
                 instability): {advice}"
            )
        }
        Diagnosis::Physics { segment, ratio, limit } => {
            let weight = match hanging_stretch(setup) {
                Some((tension, ratio)) => format!(
                    "; hanging still from its pin, its weight alone would stretch the top segment to about \
                     {ratio:.3e} rest lengths: a tension of {tension:.3e} N against `stretch_stiffness` {:.3e} N",
                    setup.stretch_stiffness
                ),
                None => String::new(),
            };
            let why = match limit {
                Some(l) => format!(
                    "h = {h:.3e} s is {:.1} times below {name} for these parameters (about {l:.3e} s), where the \
                     method is stable",
                    l / h
                ),
                None => "the method has no step-size stability limit, and a load applied suddenly stretches a \
                         spring twice as far as at rest"
                    .to_owned(),
            };
            format!(
                "{head}: it stretches past {BLOW_UP_STRETCH} times its rest length under its load (segment {segment} \
                 is {ratio:.3e} rest lengths long{weight}); {why}, so this is the strand's physics and more substeps \
                 will not help: give it a stiffer `stretch_stiffness` or a lighter `mass_per_length`"
            )
        }
        Diagnosis::NearLimit { limit: l } => format!(
            "{head} (h = {h:.3e} s, within a factor 2 of {name} for these parameters, about {l:.3e} s): {}",
            raise(doubled, coarse)
        ),
        Diagnosis::InsideLimit { limit: l } => format!(
            "{head} (h = {h:.3e} s, well inside {name} for these parameters, about {l:.3e} s, but too coarse for \
             the solver to keep up): {}",
            raise(doubled, coarse)
        ),
        Diagnosis::NoLimit => format!(
            "{head} (h = {h:.3e} s; this method has no step-size stability limit, but a coarse step costs accuracy): \
             {}",
            raise(doubled, coarse)
        ),
    }
}

/// Settles the strands for `start = settled`: their dynamics, with the anchors and colliders
/// held still at their first-frame pose and no wind, are run from the laid-out state, and the
/// velocities are set to zero each time the kinetic energy, watched once a frame, has passed a
/// peak (kinetic damping, the dynamic relaxation of Day 1965 and Cundall 1976: every swing is
/// stopped at the bottom of its path, so the energy drains away without a damping force), until
/// the particles move by less than 1e-6 of a segment in a frame or 40 s of settling have
/// passed. Modes too fast to be watched once a frame (a string mode of tens of hertz seen at
/// 24 fps) are drained by a damping of at least [`SETTLE_DAMPING`] while settling (damping
/// changes no equilibrium). The strands settle under the apparent gravity g - a0 of the
/// anchor's first frame (a0 its translation's acceleration there, [`start_acceleration`]), so a
/// shot that begins with the anchor already accelerating (an elevator, a run-up) starts in the
/// equilibrium it keeps. Then every particle takes the first frame's anchor velocity (the rigid
/// motion of the anchor at frame 0).
fn settle<M: Method>(
    setup: &Setup,
    state: &mut State,
    inputs: &Inputs<'_>,
    tl: &Timeline,
    poses: [Pose; 2],
    moving: &[Moving],
    threads: usize,
) -> Result<(), NodeError> {
    let mut damped = setup.clone();
    damped.damping = setup.damping.max(SETTLE_DAMPING);
    let setup = &damped;
    let substeps = setup.substeps;
    let dt = tl.dt();
    let h = dt / substeps as f64;
    let mut tables = Tables::new(substeps);
    for k in 0..=substeps {
        tables.pose_a[k] = poses[0];
        tables.pose_b[k] = poses[1];
        colliders_at(setup, moving, 0.0, &mut tables.colliders[k]);
        tables.colliders[k].friction.step = h;
    }
    let still_a = inputs.anchor.as_ref().map(|_| Track::still(poses[0].t, poses[0].q));
    let still_b = inputs.anchor_b.as_ref().map(|_| Track::still(poses[1].t, poses[1].q));
    let a0 = match &inputs.anchor {
        Some(s) => start_acceleration(&|f: usize| transform_at(s, "anchor", tl, f).map(|(t, _)| t), tl)?,
        None => [0.0; 3],
    };
    let env = FrameEnv {
        setup,
        h,
        substeps,
        frame_dt: dt,
        frame: 1,
        gravity: sub(setup.gravity, a0),
        threads,
        anchor: still_a,
        anchor_angular_ends: [[0.0; 3]; 2],
        end: still_b.or(still_a),
        moving,
        wind: None,
        tables: &tables,
    };
    let kinetic = |state: &State| -> f64 {
        state
            .v
            .iter()
            .enumerate()
            .map(|(i, v)| 0.5 * setup.mass[i % setup.particles] * dot(*v, *v))
            .sum()
    };
    let limit = 1.0e-6 * setup.rest_length;
    let most = (40.0 / dt).ceil() as usize;
    let mut method = M::new(setup);
    let mut last = 0.0;
    let mut before = state.x.clone();
    for _ in 0..most {
        method.frame(setup, state, &env);
        if !method.fills_state() {
            method.store(state.x.as_flattened_mut(), state.v.as_flattened_mut());
        }
        if state.x.iter().flatten().any(|c| !c.is_finite()) {
            return Err(NodeError::new(
                "the strand blew up while settling at its first pose: raise `substeps`, or start it as laid \
                 (`start = as_laid`)",
            ));
        }
        let moved = state
            .x
            .iter()
            .zip(&before)
            .map(|(a, b)| norm(sub(*a, *b)))
            .fold(0.0, f64::max);
        if moved < limit {
            break;
        }
        before.copy_from_slice(&state.x);
        let e = kinetic(state);
        if e < last {
            // Past the peak: stop every particle, and start the method afresh from this state.
            for v in &mut state.v {
                *v = [0.0; 3];
            }
            method = M::new(setup);
            last = 0.0;
        } else {
            last = e;
        }
    }
    // At rest with the anchor: its rigid velocity at the first frame.
    let (linear, angular) = match &inputs.anchor {
        Some(s) => (
            translation_velocity(s, "anchor", tl, 0)?,
            angular_velocity(s, "anchor", tl, 0)?,
        ),
        None => ([0.0; 3], [0.0; 3]),
    };
    for (x, v) in state.x.iter().zip(state.v.iter_mut()) {
        *v = add(linear, cross(angular, sub(*x, poses[0].t)));
    }
    Ok(())
}

/// An anchor whose acceleration is implausible for a body: above this, in m/s^2 (50 g; a
/// landing from a 1 m drop stops the body at about 10 to 20 g; common practice, no source).
const ANCHOR_JUMP: f64 = 50.0 * heft_node_sdk::STANDARD_GRAVITY;

/// When a strand blows up in frame `i`: the anchor input that jumps around it (its velocity
/// changing from frame to frame by more than [`ANCHOR_JUMP`] allows), as an error naming the
/// input, the frame and the speed.
fn anchor_jump(inputs: &Inputs<'_>, tl: &Timeline, i: usize) -> Result<Option<NodeError>, NodeError> {
    let dt = tl.dt();
    let anchors = [("anchor", &inputs.anchor), ("anchor_b", &inputs.anchor_b)];
    for (name, series) in anchors {
        let Some(series) = series else { continue };
        let at = |f: usize| transform_at(series, name, tl, f).map(|(t, _)| t);
        // Chord velocities of the frames from i - 2 to i + 1, where they exist.
        let first = i.saturating_sub(2).max(1);
        let last = (i + 1).min(tl.frames() - 1);
        let mut velocities = Vec::new();
        for f in first..=last {
            velocities.push((f, scale(sub(at(f)?, at(f - 1)?), 1.0 / dt)));
        }
        for w in velocities.windows(2) {
            let ((_, v0), (f, v1)) = (w[0], w[1]);
            let accel = norm(sub(v1, v0)) / dt;
            if accel > ANCHOR_JUMP {
                let (speed, before) = (norm(v1), norm(v0));
                let worst = if speed >= before { f } else { f - 1 };
                let moved = norm(sub(at(worst)?, at(worst - 1)?));
                return Ok(Some(NodeError::new(format!(
                    "input `{name}` jumps at frame {}: it moves {moved:.3} m in one frame ({:.1} m/s), an acceleration \
                     of {:.0} g that no body makes, and the strand cannot follow; check the motion data there (a glitch \
                     in a capture?) rather than the substeps",
                    tl.frame_number(worst),
                    moved / dt,
                    accel / heft_node_sdk::STANDARD_GRAVITY
                ))));
            }
        }
    }
    Ok(None)
}

/// Writes frame `i` of every output. Positions and velocities: none when `written` (the method
/// wrote them as it ran the frame), from `state` when `filled`, else straight from the method
/// ([`Method::store`]).
fn write_frame<M: Method>(
    io: &mut Io<'_>,
    i: usize,
    setup: &Setup,
    state: &State,
    method: &M,
    filled: bool,
    written: bool,
) -> Result<(), NodeError> {
    let elastic = method.elastic_energy(setup, state);
    let n = state.x.len();
    let frame = i * 3 * n..(i + 1) * 3 * n;
    if written {
        // The method wrote them as it ran the frame (Method::frame_and_store).
    } else if filled {
        io.output("positions")?.0[frame.clone()].copy_from_slice(state.x.as_flattened());
        io.output("velocities")?.0[frame].copy_from_slice(state.v.as_flattened());
    } else {
        let (x, v) = io.output_pair("positions", "velocities")?;
        method.store(&mut x[frame.clone()], &mut v[frame]);
    }
    let (p, ke, pe) = method.momentum_and_energy(setup, state);
    io.output("momentum")?.0[3 * i..3 * i + 3].copy_from_slice(&p);
    let e = ke + pe + elastic;
    if !e.is_finite() {
        return Err(NodeError::new(format!(
            "the energy at frame {i} of the call is not finite (positions too far from the origin?)"
        )));
    }
    io.output("energy")?.0[i] = e;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::spec::node_spec;
    use heft_node_sdk::{NodeSpec, ParamValue};

    /// A method that leaves the state alone except for the pins (to test the frame loop).
    struct Frozen;
    impl Method for Frozen {
        fn new(_: &Setup) -> Self {
            Frozen
        }
        fn frame(&mut self, setup: &Setup, state: &mut State, env: &FrameEnv<'_>) {
            for s in 0..setup.strands {
                for (slot, &i) in setup.pins.iter().enumerate() {
                    state.x[s * setup.particles + i] = env.pin_target(s, slot, env.substeps);
                }
            }
        }
    }

    fn run(spec: &NodeSpec, setup: &Setup, anchor: &[f64], frames: u64) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
        let tl = Timeline {
            start_frame: 0,
            frame_count: frames,
            rate_num: 24,
            rate_den: 1,
        };
        let n = setup.total_particles();
        let f = frames as usize;
        let (mut x, mut v, mut p, mut e) = (
            vec![0.0; f * 3 * n],
            vec![0.0; f * 3 * n],
            vec![0.0; f * 3],
            vec![0.0; f],
        );
        let inputs: Vec<Series<'_>> = spec
            .inputs
            .iter()
            .map(|port| {
                if port.name == "anchor" {
                    Series::new(anchor, 7)
                } else {
                    Series::new(&[], 0)
                }
            })
            .collect();
        let mut io = Io::new(
            tl,
            spec,
            inputs,
            vec![&mut x, &mut v, &mut p, &mut e],
            vec![3 * n, 3 * n, 3, 1],
        );
        evaluate_with::<Frozen>(setup, &mut io).expect("runs");
        (x, p, e)
    }

    /// The energy of a strand hanging straight down from z = 0 at rest is its gravitational
    /// energy -mu g L^2 / 2 (the integral of mu g z over the strand; the lumped masses are the
    /// trapezoidal rule, exact for a linear integrand), and its momentum is zero.
    #[test]
    fn the_energy_of_a_hanging_strand_at_rest_is_its_weight_times_its_centre_height() {
        let spec = node_spec("t", "", "");
        let setup = Setup::from_params(&Params::defaults(&spec).expect("defaults")).expect("valid");
        let anchor: Vec<f64> = (0..3).flat_map(|_| [0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 1.0]).collect();
        let (x, p, e) = run(&spec, &setup, &anchor, 3);
        let want = -0.05 * heft_node_sdk::STANDARD_GRAVITY * 0.4 * 0.4 / 2.0;
        for ef in e {
            assert!((ef - want).abs() < 1e-15, "{ef} vs {want}");
        }
        assert!(p.iter().all(|c| *c == 0.0));
        assert!((x[3 * 12 + 2] + 0.4).abs() < 1e-15);
    }

    #[test]
    fn both_ends_farther_apart_than_the_strand_is_long_start_straight() {
        let spec = node_spec("t", "", "");
        let p = Params::defaults(&spec)
            .and_then(|p| p.with("pin", ParamValue::Choice("both_ends".into())))
            .and_then(|p| p.with("end_offset", ParamValue::Vec3([0.8, 0.0, 0.0])))
            .expect("params");
        let setup = Setup::from_params(&p).expect("valid");
        let s = rest_state(&setup, &Pose::IDENTITY, &Pose::IDENTITY);
        for (i, x) in s.x.iter().enumerate() {
            assert!((x[0] - 0.8 * i as f64 / 12.0).abs() < 1e-15 && x[2] == 0.0);
        }
    }

    #[test]
    fn a_blown_strand_is_found_by_non_finite_values_stretch_or_speed() {
        let spec = node_spec("t", "", "");
        let p = Params::defaults(&spec)
            .and_then(|p| p.with("count", ParamValue::Integer(3)))
            .expect("params");
        let setup = Setup::from_params(&p).expect("valid");
        let fresh = rest_state(&setup, &Pose::IDENTITY, &Pose::IDENTITY);
        assert_eq!(blown_strand(&setup, &fresh), None);
        let mut s = fresh.clone();
        s.v[2 * 13 + 4] = [0.0, f64::NAN, 0.0];
        assert_eq!(blown_strand(&setup, &s), Some(2));
        let mut s = fresh.clone();
        s.v[13 + 4] = [1.01e4, 0.0, 0.0];
        assert_eq!(blown_strand(&setup, &s), Some(1));
        let mut s = fresh;
        s.x[13 + 12][2] -= 10.0 * setup.rest_length;
        assert_eq!(blown_strand(&setup, &s), Some(1));
    }

    #[test]
    fn the_cause_of_a_blow_up_is_named_with_its_segment_or_particle() {
        let spec = node_spec("t", "", "");
        let setup = Setup::from_params(&Params::defaults(&spec).expect("defaults")).expect("valid");
        let l0 = setup.rest_length;
        let fresh = rest_state(&setup, &Pose::IDENTITY, &Pose::IDENTITY);
        assert_eq!(blow_up_cause(&setup, &fresh, 0), None);
        let mut s = fresh.clone();
        s.x[4][0] = f64::INFINITY;
        assert_eq!(blow_up_cause(&setup, &s, 0), Some(BlowUp::NonFinite));
        // Particles 8..=12 moved down by 11 l0: segment 7 (particles 7 and 8) is 12 l0 long.
        let mut s = fresh.clone();
        for x in &mut s.x[8..] {
            x[2] -= 11.0 * l0;
        }
        s.v[3] = [2.0e4, 0.0, 0.0];
        match blow_up_cause(&setup, &s, 0) {
            Some(BlowUp::Stretch { segment: 7, ratio }) => assert!((ratio - 12.0).abs() < 1e-12, "{ratio}"),
            other => panic!("{other:?}"),
        }
        let mut s = fresh;
        s.v[3] = [0.0, -2.0e4, 0.0];
        assert_eq!(
            blow_up_cause(&setup, &s, 0),
            Some(BlowUp::Speed {
                particle: 3,
                speed: 2.0e4
            })
        );
    }

    /// A method with rigid segments (an over-long segment is the solver falling behind).
    struct Rigid;
    impl Method for Rigid {
        fn new(_: &Setup) -> Self {
            Rigid
        }
        fn frame(&mut self, _: &Setup, _: &mut State, _: &FrameEnv<'_>) {}
        const LIMIT_NAME: &'static str = "the bending limit";
        const STRETCHABLE: bool = false;
    }

    /// A method without a step limit.
    struct Unlimited;
    impl Method for Unlimited {
        fn new(_: &Setup) -> Self {
            Unlimited
        }
        fn frame(&mut self, _: &Setup, _: &mut State, _: &FrameEnv<'_>) {}
        fn stability_limit(_: &Setup, _: bool) -> Option<f64> {
            None
        }
    }

    fn setup_with(changes: &[(&str, ParamValue)]) -> Setup {
        let spec = node_spec("t", "", "");
        let mut p = Params::defaults(&spec).expect("defaults");
        for (name, value) in changes {
            p = p.with(name, value.clone()).expect("a parameter");
        }
        Setup::from_params(&p).expect("valid")
    }

    /// The default strand hanging straight down with its tip segment pulled to 12 rest lengths.
    fn tip_pulled(setup: &Setup) -> State {
        let mut s = rest_state(setup, &Pose::IDENTITY, &Pose::IDENTITY);
        let last = setup.particles - 1;
        s.x[last][2] -= 11.0 * setup.rest_length;
        s
    }

    const DT: f64 = 1.0 / 24.0;

    #[test]
    fn a_step_above_or_near_the_limit_is_called_an_instability() {
        let setup = setup_with(&[]);
        let state = tip_pulled(&setup);
        let l = Frozen::stability_limit(&setup, false).expect("explicit springs");
        // 1.25 frame / limit substeps put h a fifth below the limit.
        let need = (1.25 * DT / l).ceil() as u64;
        for (h, relation) in [(2.0 * l, "above"), (0.9 * l, "close to")] {
            let msg = blow_up_message::<Frozen>(&setup, &state, 0, 1005, h, DT, false);
            assert_eq!(
                msg,
                format!(
                    "strand 0 blew up at frame 1005 (h = {h:.3e} s, {relation} the explicit stability limit for these \
                     parameters, about {l:.3e} s: a numerical instability): raise `substeps` to at least {need}"
                )
            );
        }
        // Past 10000 substeps the advice changes to the parameters.
        let msg = blow_up_message::<Frozen>(&setup, &state, 0, 1005, 2.0 * l, 1.0e4 * DT, false);
        assert!(
            msg.contains("more than the 10000 allowed: lower `stretch_stiffness`"),
            "{msg}"
        );
    }

    /// A soft, heavy strand: mass_per_length 1e4 kg/m, stretch_stiffness 1e-3 N, gravity 100 m/s^2
    /// (the conformance kit's report). Hanging from one pin, its top segment carries the 12 particles
    /// below it, mu L (1 - 1 / 24) = 3833.3 kg (lumped masses: half a segment at the tip), so
    /// Hooke's law stretches it to 1 + 3.8333e5 N / 1e-3 N = 3.8333e8 rest lengths.
    #[test]
    fn a_stretch_well_inside_the_limit_is_called_the_strands_physics() {
        let changes = [
            ("mass_per_length", ParamValue::Number(1.0e4)),
            ("stretch_stiffness", ParamValue::Number(1.0e-3)),
            ("gravity", ParamValue::Number(100.0)),
        ];
        let setup = setup_with(&changes);
        let state = tip_pulled(&setup);
        let (tension, ratio) = hanging_stretch(&setup).expect("hangs from one pin");
        let want_tension = 100.0 * 1.0e4 * 0.4 * (1.0 - 1.0 / 24.0);
        assert!((tension - want_tension).abs() < 1e-9 * want_tension, "{tension}");
        assert!((ratio - (1.0 + want_tension / 1.0e-3)).abs() < 1e-6 * ratio, "{ratio}");
        let l = Frozen::stability_limit(&setup, false).expect("explicit springs");
        let h = l / 37.0;
        let msg = blow_up_message::<Frozen>(&setup, &state, 0, 1002, h, DT, false);
        assert_eq!(
            msg,
            format!(
                "strand 0 blew up at frame 1002: it stretches past 10 times its rest length under its load (segment 11 \
                 is {:.3e} rest lengths long; hanging still from its pin, its weight alone would stretch the top \
                 segment to about {ratio:.3e} rest lengths: a tension of {tension:.3e} N against `stretch_stiffness` \
                 1.000e-3 N); h = {h:.3e} s is 37.0 times below the explicit stability limit for these parameters \
                 (about {l:.3e} s), where the method is stable, so this is the strand's physics and more substeps \
                 will not help: give it a stiffer `stretch_stiffness` or a lighter `mass_per_length`",
                12.0
            )
        );
        // A method without a limit: the weight alone tells.
        let msg = blow_up_message::<Unlimited>(&setup, &state, 0, 1002, h, DT, false);
        assert!(
            msg.starts_with(
                "strand 0 blew up at frame 1002: it stretches past 10 times its rest length under its load"
            ),
            "{msg}"
        );
        assert!(msg.contains("the method has no step-size stability limit"), "{msg}");
        assert!(!msg.contains("raise `substeps`"), "{msg}");
    }

    #[test]
    fn otherwise_the_advice_is_to_double_the_substeps_in_the_methods_words() {
        // The default strand's own weight stretches it by 1 + 0.05 * 0.4 * (23/24) * g / 200 =
        // 1.00094 rest lengths: far from 10, so a 12 l0 segment is the solver's doing.
        let setup = setup_with(&[]);
        let state = tip_pulled(&setup);
        let l = Frozen::stability_limit(&setup, false).expect("explicit springs");
        let h = l / 37.0;
        // Rigid segments well inside the limit: the solver, not physics.
        let msg = blow_up_message::<Rigid>(&setup, &state, 0, 7, h, DT, false);
        assert_eq!(
            msg,
            format!(
                "strand 0 blew up at frame 7 (h = {h:.3e} s, well inside the bending limit for these parameters, \
                 about {l:.3e} s, but too coarse for the solver to keep up): raise `substeps` to at least 40"
            )
        );
        // No limit, and a weight that cannot stretch the strand that far.
        let msg = blow_up_message::<Unlimited>(&setup, &state, 0, 7, h, DT, false);
        assert_eq!(
            msg,
            format!(
                "strand 0 blew up at frame 7 (h = {h:.3e} s; this method has no step-size stability limit, but a \
                 coarse step costs accuracy): raise `substeps` to at least 40"
            )
        );
        assert!(!msg.contains("explicit"), "{msg}");
        // A stretchable method with a particle too fast (not a stretch) inside its limit.
        let mut fast = rest_state(&setup, &Pose::IDENTITY, &Pose::IDENTITY);
        fast.v[5] = [0.0, 0.0, 2.0e4];
        let msg = blow_up_message::<Frozen>(&setup, &fast, 0, 7, h, DT, false);
        assert!(msg.contains("well inside the explicit stability limit"), "{msg}");
        assert!(msg.ends_with("raise `substeps` to at least 40"), "{msg}");
        // A stretch at h between half the limit and 0.8 of it: not clearly physics, nor clearly
        // the step; doubling the substeps tells (at half the step a stretch is called physics).
        let msg = blow_up_message::<Frozen>(&setup, &state, 0, 7, 0.6 * l, DT, false);
        assert_eq!(
            msg,
            format!(
                "strand 0 blew up at frame 7 (h = {:.3e} s, within a factor 2 of the explicit stability limit for \
                 these parameters, about {l:.3e} s): raise `substeps` to at least 40",
                0.6 * l
            )
        );
        // Doubling past 10000.
        let many = setup_with(&[("substeps", ParamValue::Integer(6000))]);
        let msg = blow_up_message::<Unlimited>(&many, &state, 0, 7, h, DT, false);
        assert!(
            msg.ends_with(
                "it would take about 12000 substeps, more than the 10000 allowed: use fewer `segments` or a higher \
                 frame rate"
            ),
            "{msg}"
        );
    }

    // ------------------------------------------------------------ frames run again

    /// How [`Shaky`] goes wrong.
    const BLOWS_UP: u8 = 0;
    const CRUMPLES: u8 = 1;
    const OVERSTRETCHES: u8 = 2;
    const BLOWS_UP_SECOND: u8 = 3;

    thread_local! {
        /// The frames (timeline index) and substeps [`Shaky`] was called with, in order.
        static CALLS: std::cell::RefCell<Vec<(usize, usize)>> = const { std::cell::RefCell::new(Vec::new()) };
    }

    /// A method that moves every particle along +x at 1 m/s, substep by substep (nothing else
    /// acts), and goes wrong at frame 3 (timeline index) while it runs fewer than `FINE`
    /// substeps: particle 1 of strand 0 made NaN (`BLOWS_UP`), or moved half a rest length off
    /// the line, which leaves the strand's ends where they were and makes it 2 % longer
    /// (`CRUMPLES`), or its last segment stretched to 12 rest lengths (`OVERSTRETCHES`).
    struct Shaky<const HOW: u8, const FINE: usize>;
    impl<const HOW: u8, const FINE: usize> Method for Shaky<HOW, FINE> {
        fn new(_: &Setup) -> Self {
            Shaky
        }
        fn frame(&mut self, setup: &Setup, state: &mut State, env: &FrameEnv<'_>) {
            CALLS.with(|c| c.borrow_mut().push((env.frame, env.substeps)));
            for _ in 0..env.substeps {
                for x in state.x.iter_mut() {
                    x[0] += env.h;
                }
            }
            for v in state.v.iter_mut() {
                *v = [1.0, 0.0, 0.0];
            }
            if env.frame == 3 && env.substeps < FINE {
                let l0 = setup.rest_length;
                let last = setup.particles - 1;
                match HOW {
                    BLOWS_UP => state.x[1][0] = f64::NAN,
                    BLOWS_UP_SECOND => state.x[setup.particles + 1][0] = f64::NAN,
                    CRUMPLES => state.x[1][1] += 0.5 * l0,
                    _ => state.x[last][2] -= 11.0 * l0,
                }
            }
        }
    }

    /// Runs `M` on a free strand laid along -z from the origin, no gravity, for 6 frames: the
    /// result, the positions of every frame and the warnings.
    fn run_shaky<M: Method>(changes: &[(&str, ParamValue)]) -> (Result<(), NodeError>, Vec<f64>, Vec<String>) {
        CALLS.with(|c| c.borrow_mut().clear());
        let spec = node_spec("t", "", "");
        let mut p = Params::defaults(&spec).expect("defaults");
        for (name, value) in [
            ("pin", ParamValue::Choice("free".into())),
            ("gravity", ParamValue::Number(0.0)),
        ]
        .into_iter()
        .chain(changes.iter().cloned())
        {
            p = p.with(name, value).expect("a parameter");
        }
        let setup = Setup::from_params(&p).expect("valid");
        let tl = Timeline {
            start_frame: 0,
            frame_count: 6,
            rate_num: 24,
            rate_den: 1,
        };
        let n = setup.total_particles();
        let (mut x, mut v, mut m, mut e) = (vec![0.0; 6 * 3 * n], vec![0.0; 6 * 3 * n], vec![0.0; 18], vec![0.0; 6]);
        let inputs: Vec<Series<'_>> = spec.inputs.iter().map(|_| Series::new(&[], 0)).collect();
        let mut io = Io::new(
            tl,
            &spec,
            inputs,
            vec![&mut x, &mut v, &mut m, &mut e],
            vec![3 * n, 3 * n, 3, 1],
        );
        let result = evaluate_with::<M>(&setup, &mut io);
        let warnings = io.warnings().to_vec();
        drop(io);
        (result, x, warnings)
    }

    fn calls() -> Vec<(usize, usize)> {
        CALLS.with(|c| c.borrow().clone())
    }

    /// Every particle of frame f at its start plus f / 24 m along x (1 m/s): a frame run again
    /// starts where the frame started, not where the failed try left it.
    fn drifted_exactly(x: &[f64], particles: usize) {
        for f in 0..6 {
            for i in 0..particles {
                let at = &x[(f * particles + i) * 3..][..3];
                let want = [f as f64 / 24.0, 0.0, -(i as f64) * 0.4 / 12.0];
                for k in 0..3 {
                    assert!(
                        (at[k] - want[k]).abs() < 1e-12,
                        "frame {f} particle {i}: {at:?} against {want:?}"
                    );
                }
            }
        }
    }

    /// Frame 3 blows up at 20 and 40 substeps and not at 80: with the default `reruns` (3) it
    /// runs at 20, 40, then 80, the rest at 20; the output is the undisturbed motion, and a
    /// warning names the frame and its substeps.
    #[test]
    fn a_frame_that_blows_up_runs_again_from_its_start_with_twice_the_substeps() {
        let (result, x, warnings) = run_shaky::<Shaky<BLOWS_UP, 80>>(&[]);
        result.expect("runs");
        assert_eq!(calls(), [(1, 20), (2, 20), (3, 20), (3, 40), (3, 80), (4, 20), (5, 20)]);
        drifted_exactly(&x, 13);
        assert_eq!(
            warnings,
            [
                "1 frame went wrong at the 20 substeps given (a strand blew up or crumpled) and ran again from its \
              start with more: frame 3 at 80; the rest ran at 20 (`substeps` = 80 runs every frame at one step)"
            ]
        );
    }

    /// With `reruns` = 1 the same frame stops the run at 40 substeps, and the error says what
    /// was tried; with 0, the first blow-up stops it, with the message of a run without reruns.
    #[test]
    fn a_frame_still_blowing_up_after_its_reruns_stops_the_run_saying_what_was_tried() {
        let (result, _, _) = run_shaky::<Shaky<BLOWS_UP, 80>>(&[("reruns", ParamValue::Integer(1))]);
        let msg = result.expect_err("blows up").0;
        assert_eq!(calls(), [(1, 20), (2, 20), (3, 20), (3, 40)]);
        assert!(msg.starts_with("strand 0 blew up at frame 3 (h = 1.042e-3 s"), "{msg}");
        // The default strand's explicit limit, 5.26e-4 s: 1.25 / 24 s over it.
        assert!(msg.contains("raise `substeps` to at least 99"), "{msg}");
        assert!(
            msg.ends_with(
                "(it went wrong at the 20 substeps given, and again each time the frame was run from its start at \
                 40 substeps: `reruns` = 1)"
            ),
            "{msg}"
        );
        let (result, _, _) = run_shaky::<Shaky<BLOWS_UP, 80>>(&[("reruns", ParamValue::Integer(0))]);
        let msg = result.expect_err("blows up").0;
        assert_eq!(calls(), [(1, 20), (2, 20), (3, 20)]);
        assert!(msg.starts_with("strand 0 blew up at frame 3 (h = 2.083e-3 s"), "{msg}");
        assert!(
            msg.contains("raise `substeps` to at least 99") && !msg.contains("reruns"),
            "{msg}"
        );
    }

    /// A strand crumpled 2 % longer than at rest (beyond [`OVERLONG`], 1 %) without a blow-up runs
    /// again too; when no rerun mends it, the frame is kept and a warning gives the worst length,
    /// and the frames after it, which start crumpled, are not run again for it.
    #[test]
    fn a_crumpled_strand_runs_again_and_is_kept_with_a_warning_when_that_does_not_mend_it() {
        let (result, x, warnings) = run_shaky::<Shaky<CRUMPLES, 40>>(&[]);
        result.expect("runs");
        assert_eq!(calls(), [(1, 20), (2, 20), (3, 20), (3, 40), (4, 20), (5, 20)]);
        drifted_exactly(&x, 13);
        assert_eq!(warnings.len(), 1, "{warnings:?}");
        assert!(warnings[0].contains("frame 3 at 40"), "{warnings:?}");
        let (result, x, warnings) = run_shaky::<Shaky<CRUMPLES, 1000>>(&[("reruns", ParamValue::Integer(2))]);
        result.expect("runs");
        assert_eq!(calls(), [(1, 20), (2, 20), (3, 20), (3, 40), (3, 80), (4, 20), (5, 20)]);
        // Kept: particle 1 of frame 3 (and after) is half a rest length off the line; two of the
        // 12 segments are sqrt(1 + 0.5^2) rest lengths long, the strand 1.97 % longer.
        let l0 = 0.4 / 12.0;
        assert!((x[(3 * 13 + 1) * 3 + 1] - 0.5 * l0).abs() < 1e-15);
        let over = 2.0 * ((1.0f64 + 0.25).sqrt() - 1.0) / 12.0;
        assert_eq!(warnings.len(), 2, "{warnings:?}");
        assert!(warnings[0].contains("frame 3 at 80"), "{warnings:?}");
        assert!(
            warnings[1].starts_with(&format!(
                "strands came out crumpled, up to {:.1} % longer than at rest (strand 0 at frame 3), in frames 3 to \
                 5",
                100.0 * over
            )),
            "{warnings:?}"
        );
    }

    /// Only the strand that blew up takes the finer step: the other keeps the try it came out
    /// right from, the same bits as in a run where nothing went wrong, so a strand's result does
    /// not depend on the others.
    #[test]
    fn a_frame_run_again_changes_only_the_strands_that_went_wrong() {
        let two = [
            ("count", ParamValue::Integer(2)),
            ("placement", ParamValue::Choice("line".into())),
        ];
        let (result, x, _) = run_shaky::<Shaky<BLOWS_UP_SECOND, 80>>(&two);
        result.expect("runs");
        assert_eq!(calls(), [(1, 20), (2, 20), (3, 20), (3, 40), (3, 80), (4, 20), (5, 20)]);
        let (result, clean, warnings) = run_shaky::<Shaky<BLOWS_UP_SECOND, 0>>(&two);
        result.expect("runs");
        assert!(warnings.is_empty(), "{warnings:?}");
        let n = 13 * 3;
        for f in 0..6 {
            let (a, b) = (&x[f * 2 * n..][..n], &clean[f * 2 * n..][..n]);
            assert!(a.iter().zip(b).all(|(p, q)| p.to_bits() == q.to_bits()), "frame {f}");
            assert!(x[f * 2 * n + n..][..n].iter().all(|c| c.is_finite()), "frame {f}");
        }
    }

    /// A blow-up the loop calls the strand's physics (a segment past 10 rest lengths at a step
    /// half the stability limit or less) is not run again: more substeps do not mend it.
    #[test]
    fn a_blow_up_that_is_the_strands_physics_is_not_run_again() {
        // 200 substeps: h = 2.08e-4 s, 0.4 times the default strand's limit of 5.26e-4 s.
        let (result, _, _) = run_shaky::<Shaky<OVERSTRETCHES, 1000>>(&[("substeps", ParamValue::Integer(200))]);
        let msg = result.expect_err("blows up").0;
        assert_eq!(calls(), [(1, 200), (2, 200), (3, 200)]);
        assert!(msg.contains("this is the strand's physics"), "{msg}");
    }
}

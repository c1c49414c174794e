//! `xpbd.strand`: the strand contract solved with XPBD, one constraint sweep per substep, strands
//! across SIMD lanes.

use heft_node_sdk::{Io, Node, NodeError, NodeSpec, Params};
use heft_strand_common::geometry::cross;
use heft_strand_common::{FrameEnv, Method, Pin, Setup, State, V3};

use crate::solver::{Coeffs, Lanes, Lanes3, Model, SubstepInput, substep};

/// The node type `xpbd.strand`.
#[derive(Debug)]
pub struct XpbdStrand;

const DOC: &str = "Strands (hair, braids, skirts, garlands) solved with XPBD: compliant constraints, one sweep per \
                   substep, unconditionally stable for stiff strands.";

const NOTES: &str = "\
Method: extended position-based dynamics (XPBD; Macklin, Muller & Chentanez 2016, \"XPBD: Position-Based \
Simulation of Compliant Constrained Dynamics\", MIG) with small steps (Macklin, Storey, Lu, Terdiman, Chentanez, \
Jeschke & Muller 2019, \"Small Steps in Physics Simulation\", SCA). Every substep h: predict x* = x + h v*, damping \
first, backward Euler in the velocity-proportional terms, v' = (v + h (relative_damping v_anchor(x) + drag \
v_wind(x))) / (1 + h (damping + relative_damping + drag)), then the gravity kick v* = v' + h g (so damping takes \
nothing from the equilibrium and a strand falling with its anchor is not held back); set the pins on their \
anchors; one Gauss-Seidel sweep root to tip projecting each segment's distance constraint C = |x_{j+1} - x_j| - \
l0 with compliance alpha = 1 / k = l0 / (E A) and, two segments behind, each interior particle's bending \
constraint, each once with lambda = 0 (no iterations, nothing carried across substeps); push particles out of \
the colliders (pinned ones excepted) and remove their inward velocity; v = (x - x_prev) / h. Wind is sampled at \
each particle every substep.\n\
Bending: the vector constraint (x_{i-1} - 2 x_i + x_{i+1}) / l0 with compliance l0 / (E I), i.e. the energy \
E I / (2 l0^3) |x_{i-1} - 2 x_i + x_{i+1}|^2 per interior particle: the Euler-Bernoulli energy 1/2 int E I |x''|^2 \
ds with the central second difference (Terzopoulos, Platt, Barr & Fleischer 1987, \"Elastically Deformable \
Models\", SIGGRAPH), E I theta^2 / (2 l0) for a small turning angle theta; linear, so one projection solves it. It \
also resists unequal neighbouring segment lengths, which the stretch stiffness keeps small. The lowest mode of a \
free strand matches Euler-Bernoulli theory to 0.3 % at 40 segments.\n\
Layout: strands are grouped 1, 2, 4, 8 or 16 at a time (by count) into SIMD lanes; each particle index holds \
the x, y, z of its group's strands contiguously and the sweep runs the same branch-free arithmetic on every \
lane. A strand's result does not depend on its group. f64 throughout.\n\
Stiffness and step: compliance makes the stiffness independent of the iteration count; the single sweep per \
substep leaves an error that falls as h^2. A hanging strand at rest stretches segment j by T_j / k + \
h^2 T_{j+1} / m_{j+1} (T the tension, m the particle mass; the sweep's fixed point), Hooke's value times about \
1 + h^2 k / m. With the defaults (l0 = 0.0333 m, m = 1.67e-3 kg, k = 6000 N/m, 24 frames/s, 20 substeps, \
h = 2.08e-3 s) h^2 k / m = 15.6: the strand stretches about 17 times more than E A = 200 N says, 0.8 % of its \
length. Rigid or not, a strand of n particles carries its weight only with a top-segment stretch of about \
h^2 g (n - 1), so long, finely divided strands need many substeps (keep h^2 g (n - 1) below a tenth of l0). \
Raise `substeps` where stretch matters (the error falls 4-fold per doubling). The swing of a stiff strand is \
damped as by backward Euler, about pi omega h of its amplitude per period (0.4 % for a 1 m pendulum at 100 \
substeps at 24 frames/s, 2 % at 20).\n\
Stability: no step limit for any stiffness: the projections stay bounded as the compliance goes to 0 (the PBD \
limit) and the damping is backward Euler; E A = 1e9 N and E I = 1e3 N m^2 run at 1 substep per frame. An explicit \
spring chain with the defaults would need h < 2 / omega_max = 5.3e-4 s (omega_max = 2 sqrt(k / m) = 3795 rad/s), \
80 substeps at 24 frames/s. Large steps cost accuracy, not stability. The contract's blow-up check still runs \
every frame (non-finite values, a segment beyond 10 rest lengths, a speed above 1e4 m/s); with XPBD it fires when \
the step is too coarse for the strand's weight to be carried (h^2 g (n - 1) near 10 l0) or an anchor or initial \
state is violent: raise `substeps`.\n\
Energy output: kinetic + m g z + 1/2 k (l - l0)^2 + the bending energy, from the positions; at coarse steps on \
stiff strands the stretch term mostly measures the sweep's residual stretch.";

impl Node for XpbdStrand {
    fn spec() -> NodeSpec {
        heft_strand_common::node_spec("strand", DOC, NOTES)
    }

    fn output_points(params: &Params, inputs: &[usize]) -> Result<Vec<usize>, NodeError> {
        heft_strand_common::output_points(params, inputs)
    }

    fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
        heft_strand_common::evaluate::<Xpbd>(params, io)
    }
}

/// The XPBD method for [`heft_strand_common::evaluate`].
#[derive(Debug)]
pub struct Xpbd {
    model: Model,
    coeffs: Coeffs,
    /// (h, wind connected) the coefficients were made for.
    made_for: (f64, bool),
    /// Per substep k of a frame: the prediction's base and spin (see [`SubstepInput`]).
    shared: Vec<([f64; 3], Option<[f64; 3]>)>,
    engine: Engine,
}

/// The lane width, chosen by the strand count.
#[derive(Debug)]
enum Engine {
    L1(Group<1>),
    L2(Group<2>),
    L4(Group<4>),
    L8(Group<8>),
    L16(Group<16>),
}

/// Strands in lanes of `N`, with their pin offsets and scratch.
#[derive(Debug)]
struct Group<const N: usize> {
    lanes: Lanes<N>,
    /// Per group: the start and end pin offsets of each lane (anchor-local), m.
    start: Vec<[V3; N]>,
    end: Vec<[V3; N]>,
    wind: Vec<Lanes3<N>>,
}

impl<const N: usize> Group<N> {
    fn new(setup: &Setup) -> Group<N> {
        let lanes = Lanes::<N>::new(setup.strands, setup.particles);
        let groups = lanes.groups();
        let per_lane = |offsets: &[V3]| -> Vec<[V3; N]> {
            (0..groups)
                .map(|g| std::array::from_fn(|l| offsets[lanes.strand_of(g, l)]))
                .collect()
        };
        Group {
            start: per_lane(&setup.start_offsets),
            end: per_lane(&setup.end_offsets),
            wind: vec![[[0.0; N]; 3]; setup.particles],
            lanes,
        }
    }

    fn frame(
        &mut self,
        setup: &Setup,
        state: &mut State,
        env: &FrameEnv<'_>,
        coeffs: &Coeffs,
        shared: &[([f64; 3], Option<[f64; 3]>)],
    ) {
        let h = env.h;
        let n = setup.particles;
        self.lanes.load(&state.x, &state.v, h);
        let root = setup.pin != Pin::Free;
        let tip = setup.pin == Pin::BothEnds;
        let free = (usize::from(root), n - usize::from(tip));
        let colliders = env.has_colliders();
        let wind_gain = coeffs.h2_decay * setup.drag;
        let mut pin_root: Lanes3<N> = [[0.0; N]; 3];
        let mut pin_tip: Lanes3<N> = [[0.0; N]; 3];
        for g in 0..self.lanes.groups() {
            let (x, prev) = self.lanes.group_mut(g);
            for (k, &(base, spin)) in shared.iter().enumerate().take(env.substeps) {
                if root {
                    set_pins(env.anchor_pose(k + 1), &self.start[g], &mut pin_root);
                }
                if tip {
                    set_pins(env.end_pose(k + 1), &self.end[g], &mut pin_tip);
                }
                if env.has_wind() {
                    let ambient = env.ambient(k);
                    for (xi, wi) in x.iter().zip(self.wind.iter_mut()) {
                        for l in 0..N {
                            let w = ambient.wind([xi[0][l], xi[1][l], xi[2][l]]);
                            for c in 0..3 {
                                wi[c][l] = wind_gain * w[c];
                            }
                        }
                    }
                }
                let input = SubstepInput {
                    pin_root: root.then_some(&pin_root),
                    pin_tip: tip.then_some(&pin_tip),
                    base,
                    spin,
                    wind: env.has_wind().then_some(&self.wind[..]),
                    colliders: colliders.then(|| env.colliders(k + 1)),
                    free,
                };
                substep(coeffs, &input, x, prev);
            }
        }
        self.lanes.store(&mut state.x, &mut state.v, h);
    }
}

/// Pin targets of one group's lanes: the pose applied to each lane's offset.
#[inline]
fn set_pins<const N: usize>(pose: &heft_strand_common::Pose, offsets: &[V3; N], out: &mut Lanes3<N>) {
    for (l, off) in offsets.iter().enumerate() {
        let p = pose.apply(*off);
        for c in 0..3 {
            out[c][l] = p[c];
        }
    }
}

impl Xpbd {
    fn model(setup: &Setup, wind: bool) -> Model {
        Model {
            rest_length: setup.rest_length,
            inv_mass: setup.inv_mass.clone(),
            stretch_compliance: 1.0 / setup.spring_k,
            bend_compliance: (setup.bending_stiffness > 0.0).then(|| setup.rest_length / setup.bending_stiffness),
            damping_rate: setup.damping_rate(wind),
            gravity: setup.gravity,
        }
    }
}

impl Method for Xpbd {
    fn new(setup: &Setup) -> Xpbd {
        let model = Xpbd::model(setup, false);
        // A placeholder step; `frame` remakes the coefficients (in place) for the real one.
        let coeffs = Coeffs::new(&model, 1.0);
        let engine = match setup.strands {
            1 => Engine::L1(Group::new(setup)),
            2 => Engine::L2(Group::new(setup)),
            3..=4 => Engine::L4(Group::new(setup)),
            5..=8 => Engine::L8(Group::new(setup)),
            _ => Engine::L16(Group::new(setup)),
        };
        Xpbd {
            model,
            coeffs,
            made_for: (f64::NAN, false),
            shared: vec![([0.0; 3], None); setup.substeps],
            engine,
        }
    }

    fn frame(&mut self, setup: &Setup, state: &mut State, env: &FrameEnv<'_>) {
        let wind = env.has_wind();
        if self.made_for != (env.h, wind) {
            self.model.damping_rate = setup.damping_rate(wind);
            self.coeffs.update(&self.model, env.h);
            self.made_for = (env.h, wind);
        }
        let c = &self.coeffs;
        let cr = setup.relative_damping;
        if self.shared.len() < env.substeps {
            self.shared.resize(env.substeps, ([0.0; 3], None));
        }
        for (k, slot) in self.shared.iter_mut().enumerate().take(env.substeps) {
            // The anchor's rigid velocity v_lin + w x (x - o) that goes with the velocity
            // (x_k - x_{k-1}) / h held at boundary k.
            let a = env.anchor_velocity(k);
            let lin = [0, 1, 2].map(|i| a.linear[i] - cross(a.angular, a.origin)[i]);
            let base = [0, 1, 2].map(|i| c.h2_gravity[i] + c.h2_decay * cr * lin[i]);
            let rotating = cr != 0.0 && a.angular != [0.0; 3];
            *slot = (base, rotating.then(|| a.angular.map(|w| c.h2_decay * cr * w)));
        }
        let shared = &self.shared[..env.substeps];
        match &mut self.engine {
            Engine::L1(e) => e.frame(setup, state, env, c, shared),
            Engine::L2(e) => e.frame(setup, state, env, c, shared),
            Engine::L4(e) => e.frame(setup, state, env, c, shared),
            Engine::L8(e) => e.frame(setup, state, env, c, shared),
            Engine::L16(e) => e.frame(setup, state, env, c, shared),
        }
    }

    /// XPBD has no step limit (see the node notes).
    fn stability_limit(_setup: &Setup, _wind: bool) -> Option<f64> {
        None
    }
}

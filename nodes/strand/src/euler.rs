//! `strand.euler`: a mass-spring chain integrated with symplectic Euler.

use heft_node_sdk::{Io, Node, NodeError, NodeSpec, ParamValue, Params};
use heft_strand_common::forces::{add_bending_forces, add_stretch_forces};
use heft_strand_common::geometry::{axpy, scale, sub};
use heft_strand_common::{FrameEnv, Method, Setup, State, V3};

/// Default substeps of `strand.euler`: the explicit limit for the default strand is about
/// 5.3e-4 s, so 100 substeps (h = 4.2e-4 s at 24 fps) keep the default stable from 24 fps up.
pub const EULER_DEFAULT_SUBSTEPS: i64 = 100;

/// The node type `strand.euler`.
#[derive(Debug)]
pub struct Euler;

/// Symplectic Euler on the mass-spring chain: v += h a(x, v); x += h v.
#[derive(Debug, Clone)]
pub struct EulerMethod {
    f: Vec<V3>,
    started: bool,
    /// `started` at the last [`Method::mark`].
    marked_started: bool,
}

impl Method for EulerMethod {
    fn new(setup: &Setup) -> Self {
        EulerMethod {
            f: vec![[0.0; 3]; setup.particles],
            started: false,
            marked_started: false,
        }
    }

    /// Explicit springs: a soft strand's stretch inside the step limit is its physics, and a
    /// step beyond the limit blows up.
    const WATCHES_CRUMPLING: bool = false;

    fn mark(&mut self, state: &State, keep: &mut State) {
        keep.clone_from(state);
        self.marked_started = self.started;
    }

    /// Back to the marked state. The velocities stand for v_{-1/2} of the last step; a frame
    /// with another h takes them as its own (a first-order change of the half step, in the
    /// frames run again only).
    fn rewind(&mut self, state: &mut State, keep: &State) {
        state.clone_from(keep);
        self.started = self.marked_started;
    }

    fn frame(&mut self, setup: &Setup, state: &mut State, env: &FrameEnv<'_>) {
        let p = setup.particles;
        let h = env.h;
        let inv_h = 1.0 / h;
        let (k_s, l0, c_b) = (&setup.segment_k[..], setup.rest_length, &setup.bend_c[..]);
        let colliders = env.has_colliders();
        let start = !self.started;
        self.started = true;
        for s in 0..setup.strands {
            let x = &mut state.x[s * p..(s + 1) * p];
            let v = &mut state.v[s * p..(s + 1) * p];
            if start {
                // Symplectic Euler is the leapfrog scheme with v_k standing for v_{k-1/2}; start
                // it as leapfrog, v_{-1/2} = v_0 - h a(x_0, v_0) / 2, so that positions are
                // second-order accurate instead of lagging by h a t / 2 (Hairer, Lubich & Wanner
                // 2006, sec. I.1.4 and VI.3: the symplectic Euler / Stormer-Verlet relation).
                let ambient = env.ambient(0);
                let f = &mut self.f[..];
                f.fill([0.0; 3]);
                add_stretch_forces(x, k_s, l0, f);
                add_bending_forces(x, c_b, f);
                for i in 0..p {
                    if !setup.pinned[i] {
                        let a = axpy(ambient.accel(x[i], v[i]), setup.inv_mass[i], f[i]);
                        v[i] = axpy(v[i], -0.5 * h, a);
                    }
                }
            }
            for k in 0..env.substeps {
                let ambient = env.ambient(k);
                let f = &mut self.f[..];
                f.fill([0.0; 3]);
                add_stretch_forces(x, k_s, l0, f);
                add_bending_forces(x, c_b, f);
                for i in 0..p {
                    if setup.pinned[i] {
                        continue;
                    }
                    let a = axpy(ambient.accel(x[i], v[i]), setup.inv_mass[i], f[i]);
                    v[i] = axpy(v[i], h, a);
                    x[i] = axpy(x[i], h, v[i]);
                }
                for (slot, &i) in setup.pins.iter().enumerate() {
                    let t = env.pin_target(s, slot, k + 1);
                    v[i] = scale(sub(t, x[i]), inv_h);
                    x[i] = t;
                }
                if colliders {
                    let c = env.colliders(k + 1);
                    for i in 0..p {
                        if !setup.pinned[i] {
                            c.project(&mut x[i], &mut v[i]);
                        }
                    }
                }
            }
        }
    }
}

impl Node for Euler {
    fn spec() -> NodeSpec {
        let mut spec = heft_strand_common::node_spec(
            "euler",
            "Strands as mass-spring chains with bending, integrated with symplectic Euler.",
            "Method: each strand is a chain of segments + 1 particles with lumped masses (half a segment's mass \
             at each end of every segment). Segments are linear springs k = stretch_stiffness / l0 on their \
             length (l0 = length / segments). Bending at each interior particle i has the energy \
             (c / 2) |x_{i-1} - 2 x_i + x_{i+1}|^2 with c = bending_stiffness / l0^3: the central-difference \
             discretisation of the Euler-Bernoulli energy 1/2 E I |x''|^2 (Terzopoulos et al. 1987, \
             Elastically Deformable Models), equal to (E I / l0)(1 - cos theta_i) at rest length. Each \
             substep h = frame / substeps: a = F / m + g - damping v - relative_damping (v - v_anchor) + \
             drag (v_wind - v); v += h a; x += h v (symplectic, semi-implicit Euler: Hairer, Lubich & Wanner, \
             Geometric Numerical Integration, 2nd ed., 2006, sec. VI.3; the energy error stays bounded and \
             momentum is conserved exactly without gravity, damping and pins). Symplectic Euler is leapfrog \
             with v standing half a step back, so the run starts as leapfrog (v_{-1/2} = v_0 - h a_0 / 2): \
             positions are second-order accurate for conservative forces; the velocities reported, and used by \
             damping and drag, are the half-step ones (first order), and v_anchor (the anchor's rigid velocity \
             field, interpolated from central differences of its frames) is taken at the same half step. Pinned \
             particles are placed on the anchor at every substep: the anchor's translation follows the cubic \
             through the frame samples with central-difference velocities (exact for a parabola, so an anchor \
             in free fall carries no kick once a frame), its rotation turns at the frame's constant angular \
             velocity (slerp). After every substep particles inside a collider are pushed to its nearest surface point \
             and lose their inward velocity relative to the surface there. A collider is a sphere on \
             `collider_k`, or, with `collider_k_end` connected, a capsule from `collider_k` to `collider_k_end` \
             whose radius runs linearly from `collider_k_radius` to `collider_k_end_radius` (a limb: the union of \
             the spheres along the segment, a cone frustum tangent to the two end spheres plus their caps); its \
             surface moves with the two ends' velocities, interpolated along it. With `ground` on, the plane z = `ground_height` is a collider too: a particle below it is lifted onto it and loses its downward velocity. Contacts have Coulomb friction (`friction`, `static_friction`; Bridson, Fedkiw & Anderson 2002): the sliding velocity is slowed by mu_k times the push out, or stopped within mu_s times it, and the step's displacement with it. \
             Stability: explicit, h < 2 / omega_max with omega_max^2 <= (4 k + 16 c) / m for a chain \
             (2 sqrt(k / m) without bending), reduced by damping gamma to h < (sqrt(gamma^2 + 4 omega^2) - \
             gamma) / omega^2. For the defaults (k = 6000 N/m, m = 1.67e-3 kg, c = 2.7 N/m, gamma = 2.5 1/s) \
             omega_max = 3798 rad/s and h < 5.26e-4 s: at least 80 substeps at 24 fps, hence the default of \
             100 here (h = 4.17e-4 s; `strand.verlet` and `xpbd.strand` default to 20). Stiffer, finer or \
             lighter strands need more (k and c grow as 1 / l0 and 1 / l0^3); a blow-up (non-finite value, a \
             segment beyond 10 rest lengths or a speed above 1e4 m/s) stops with an error: with h near or above \
             the limit it says how many substeps are needed; with h well inside it, a segment beyond 10 rest \
             lengths is the strand's physics (too soft or too heavy for its load: more substeps would not help) \
             and the error says so. \
             Limits: no self-collision or strand-strand contact; no twist; colliders are spheres and capsules \
             and act on particles only (a segment may cut through a collider thinner than it is long); a \
             particle squeezed between collider surfaces that face each other may stay inside one; pins are not pushed out of \
             colliders (a warning says so).",
        );
        for p in &mut spec.params {
            if p.name == "substeps" {
                p.default = Some(ParamValue::Integer(EULER_DEFAULT_SUBSTEPS));
            }
        }
        spec
    }

    fn output_points(params: &Params, inputs: &[usize]) -> Result<Vec<usize>, NodeError> {
        heft_strand_common::output_points(params, inputs)
    }

    fn check(params: &Params, inputs: &[usize], timeline: heft_node_sdk::Timeline) -> Vec<heft_node_sdk::CheckProblem> {
        heft_strand_common::check::<EulerMethod>(params, inputs, timeline)
    }

    fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
        heft_strand_common::evaluate::<EulerMethod>(params, io)
    }

    const WINDOWED: bool = true;

    fn advance(params: &Params, carry: &mut heft_node_sdk::Carry, io: &mut Io<'_>) -> Result<(), NodeError> {
        heft_strand_common::advance::<EulerMethod>(params, carry, io)
    }
}

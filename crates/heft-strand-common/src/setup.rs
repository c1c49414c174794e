//! Everything a strand method needs that follows from the parameters alone.

use heft_node_sdk::{NodeError, Params};

use crate::geometry::{V3, norm, scale};
use crate::spec::particle_count;

/// Which particles follow anchors.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Pin {
    /// Particle 0 follows `anchor`.
    OneEnd,
    /// Particle 0 follows `anchor`; the last particle follows `anchor_b` (or `anchor`).
    BothEnds,
    /// Nothing is pinned.
    Free,
}

/// Where the strands start, relative to the anchor.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Placement {
    /// Every strand at the anchor point.
    Single,
    /// `spacing` apart along the anchor's local X, centred.
    Line,
    /// Evenly on a circle of `radius` in the anchor's local XY plane.
    Ring,
}

/// A collider's parameters: a sphere on its transform, or, when its end transform is
/// connected, a capsule from the start point to the end point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ColliderParams {
    /// Radius of the sphere, or at the start of the capsule, m.
    pub radius: f64,
    /// Centre of the sphere, or the start of the capsule, in the collider transform's local
    /// frame, m.
    pub offset: V3,
    /// Radius at the end of the capsule, m: `collider_k_end_radius`, or `radius` when that
    /// parameter is 0 (its default).
    pub end_radius: f64,
    /// The end of the capsule in the end transform's local frame, m.
    pub end_offset: V3,
}

/// The strand model derived from parameters. Every strand of the node shares it. Fields are
/// public so tests and methods can read them; change masses only through
/// [`Setup::set_particle_mass`], which keeps `inv_mass` consistent.
#[derive(Debug, Clone, PartialEq)]
pub struct Setup {
    /// Number of strands.
    pub strands: usize,
    /// Segments per strand.
    pub segments: usize,
    /// Particles per strand (segments + 1).
    pub particles: usize,
    /// Rest length of a strand, m.
    pub length: f64,
    /// Rest length of every segment, l0 = length / segments, m.
    pub rest_length: f64,
    /// Mass of each particle of a strand (index within the strand), kg: lumped, half a
    /// segment's mass (tapered, see `tip_thickness`) at each end of every segment.
    pub mass: Vec<f64>,
    /// 1 / mass, and 0 for pinned particles (index within the strand), 1/kg.
    pub inv_mass: Vec<f64>,
    /// True for pinned particles (index within the strand).
    pub pinned: Vec<bool>,
    /// The pinned particle indices within a strand, in pin-slot order (start pin, end pin).
    pub pins: Vec<usize>,
    /// Pin mode.
    pub pin: Pin,
    /// Placement mode.
    pub placement: Placement,
    /// Axial rigidity E A at the root, N.
    pub stretch_stiffness: f64,
    /// Flexural rigidity E I at the root, N m^2.
    pub bending_stiffness: f64,
    /// Spring constant of each segment, k_j = (E A)_j / l0, N/m: E A at the root scaled by the
    /// taper (see `tip_thickness`).
    pub segment_k: Vec<f64>,
    /// Bending coefficient of each interior particle i (at index i - 1), c_i = (E I)_i / l0^3 of
    /// the discrete energy (c_i / 2) |x_{i-1} - 2 x_i + x_{i+1}|^2, N/m: E I at the root scaled
    /// by the taper.
    pub bend_c: Vec<f64>,
    /// Thickness at the tip over thickness at the root (1: uniform).
    pub tip_thickness: f64,
    /// Absolute damping rate, 1/s.
    pub damping: f64,
    /// Damping rate relative to the anchor's rigid motion, 1/s.
    pub relative_damping: f64,
    /// Wind coupling rate, 1/s.
    pub drag: f64,
    /// Gravity vector (0, 0, -g), m/s^2.
    pub gravity: V3,
    /// Solver steps per frame.
    pub substeps: usize,
    /// How many times a frame in which a strand blows up or crumples is run again, each time with
    /// twice the substeps.
    pub reruns: u32,
    /// Unit direction the free strand is laid along at the first frame (anchor-local).
    pub rest_direction: V3,
    /// Where particle 0 of each strand is pinned / starts, anchor-local (placement + start_offset), m.
    pub start_offsets: Vec<V3>,
    /// Where the last particle of each strand is pinned for both_ends, in the end anchor's
    /// local frame (placement + end_offset), m.
    pub end_offsets: Vec<V3>,
    /// The three colliders' parameters.
    pub colliders: [ColliderParams; 3],
    /// The ground's height (world Z), m, when the strands have a ground to rest on.
    pub ground: Option<f64>,
    /// True when the strands start at rest in their hanging equilibrium (`start = settled`).
    pub settled_start: bool,
    /// Friction at every collider and the ground.
    pub friction: crate::geometry::Friction,
}

impl Setup {
    /// Reads and checks the parameters.
    pub fn from_params(params: &Params) -> Result<Setup, NodeError> {
        let total = particle_count(params)?;
        let strands = params.integer("count")? as usize;
        let segments = params.integer("segments")? as usize;
        let particles = segments + 1;
        debug_assert_eq!(total, strands * particles);
        let positive = |name: &str| -> Result<f64, NodeError> {
            let v = params.number(name)?;
            if v.is_finite() && v > 0.0 {
                Ok(v)
            } else {
                Err(NodeError::new(format!("`{name}` must be positive, got {v}")))
            }
        };
        let non_negative = |name: &str| -> Result<f64, NodeError> {
            let v = params.number(name)?;
            if v.is_finite() && v >= 0.0 {
                Ok(v)
            } else {
                Err(NodeError::new(format!("`{name}` must be zero or positive, got {v}")))
            }
        };
        let length = positive("length")?;
        let mu = positive("mass_per_length")?;
        let ea = positive("stretch_stiffness")?;
        let ei = non_negative("bending_stiffness")?;
        let damping = non_negative("damping")?;
        let relative_damping = non_negative("relative_damping")?;
        let drag = non_negative("drag")?;
        let g = non_negative("gravity")?;
        let spacing = non_negative("spacing")?;
        let radius = non_negative("radius")?;
        let substeps = params.integer("substeps")?;
        if !(1..=10000).contains(&substeps) {
            return Err(NodeError::new(format!("`substeps` = {substeps} is outside 1..=10000")));
        }
        let reruns = params.integer("reruns")?;
        if !(0..=6).contains(&reruns) {
            return Err(NodeError::new(format!("`reruns` = {reruns} is outside 0..=6")));
        }
        let pin = match params.choice("pin")? {
            "one_end" => Pin::OneEnd,
            "both_ends" => Pin::BothEnds,
            "free" => Pin::Free,
            other => {
                return Err(NodeError::new(format!(
                    "`pin` = `{other}` is not one_end, both_ends or free"
                )));
            }
        };
        let placement = match params.choice("placement")? {
            "single" => Placement::Single,
            "line" => Placement::Line,
            "ring" => Placement::Ring,
            other => {
                return Err(NodeError::new(format!(
                    "`placement` = `{other}` is not single, line or ring"
                )));
            }
        };
        let dir = params.vec3("rest_direction")?;
        let dn = norm(dir);
        if !(dn.is_finite() && dn > 1e-12) {
            return Err(NodeError::new(
                "`rest_direction` is a zero vector; give the direction the strand hangs in, e.g. (0, 0, -1)",
            ));
        }
        let vec = |name: &str| -> Result<V3, NodeError> {
            let v = params.vec3(name)?;
            if v.iter().all(|c| c.is_finite()) {
                Ok(v)
            } else {
                Err(NodeError::new(format!("`{name}` is not finite")))
            }
        };
        let start = vec("start_offset")?;
        let end = vec("end_offset")?;
        let mut colliders = [ColliderParams {
            radius: 0.0,
            offset: [0.0; 3],
            end_radius: 0.0,
            end_offset: [0.0; 3],
        }; 3];
        for (k, c) in colliders.iter_mut().enumerate() {
            c.radius = non_negative(&format!("collider_{}_radius", k + 1))?;
            c.offset = vec(&format!("collider_{}_offset", k + 1))?;
            let end_radius = non_negative(&format!("collider_{}_end_radius", k + 1))?;
            c.end_radius = if end_radius == 0.0 { c.radius } else { end_radius };
            c.end_offset = vec(&format!("collider_{}_end_offset", k + 1))?;
        }

        let l0 = length / segments as f64;
        // A cone of one material: thickness d(s) / d_root = 1 - (1 - tip) s / L; mass per length
        // and E A scale with d^2 (taken at each segment's middle), E I with d^4 (at each
        // interior particle). Masses are lumped: half of each segment's at each of its ends.
        let tip = positive("tip_thickness")?;
        let thickness = |s: f64| 1.0 - (1.0 - tip) * s / length;
        let area = |j: usize| thickness((j as f64 + 0.5) * l0).powi(2);
        let segment_k: Vec<f64> = (0..segments).map(|j| ea * area(j) / l0).collect();
        let bend_c: Vec<f64> = (1..segments)
            .map(|i| ei * thickness(i as f64 * l0).powi(4) / (l0 * l0 * l0))
            .collect();
        let mut mass = vec![0.0; particles];
        for j in 0..segments {
            let half = 0.5 * mu * area(j) * l0;
            mass[j] += half;
            mass[j + 1] += half;
        }
        let pins: Vec<usize> = match pin {
            Pin::OneEnd => vec![0],
            Pin::BothEnds => vec![0, particles - 1],
            Pin::Free => vec![],
        };
        let mut pinned = vec![false; particles];
        for &p in &pins {
            pinned[p] = true;
        }
        let inv_mass = mass
            .iter()
            .zip(&pinned)
            .map(|(m, p)| if *p { 0.0 } else { 1.0 / m })
            .collect();
        let placement_offset = |s: usize| -> V3 {
            match placement {
                Placement::Single => [0.0; 3],
                Placement::Line => [(s as f64 - 0.5 * (strands as f64 - 1.0)) * spacing, 0.0, 0.0],
                Placement::Ring => {
                    let a = std::f64::consts::TAU * s as f64 / strands as f64;
                    [radius * a.cos(), radius * a.sin(), 0.0]
                }
            }
        };
        let start_offsets = (0..strands)
            .map(|s| crate::geometry::add(placement_offset(s), start))
            .collect();
        let end_offsets = (0..strands)
            .map(|s| crate::geometry::add(placement_offset(s), end))
            .collect();
        Ok(Setup {
            strands,
            segments,
            particles,
            length,
            rest_length: l0,
            mass,
            inv_mass,
            pinned,
            pins,
            pin,
            placement,
            stretch_stiffness: ea,
            bending_stiffness: ei,
            segment_k,
            bend_c,
            tip_thickness: tip,
            damping,
            relative_damping,
            drag,
            gravity: [0.0, 0.0, -g],
            substeps: substeps as usize,
            reruns: reruns as u32,
            rest_direction: scale(dir, 1.0 / dn),
            start_offsets,
            end_offsets,
            colliders,
            ground: params.boolean("ground")?.then_some(params.number("ground_height")?),
            settled_start: params.choice("start")? == "settled",
            friction: crate::geometry::Friction {
                static_coefficient: params.number("static_friction")?.max(params.number("friction")?),
                kinetic: params.number("friction")?,
                step: 0.0,
            },
        })
    }

    /// Total particles of the node (strands x particles per strand).
    pub fn total_particles(&self) -> usize {
        self.strands * self.particles
    }

    /// Sets the mass of particle `i` of every strand (kg, positive), keeping `inv_mass`
    /// consistent (pinned particles keep an inverse mass of 0). For tests of idealised models
    /// (a double pendulum with equal bobs) and for methods that need other mass layouts.
    pub fn set_particle_mass(&mut self, i: usize, m: f64) {
        self.mass[i] = m;
        self.inv_mass[i] = if self.pinned[i] { 0.0 } else { 1.0 / m };
    }

    /// A bound on the highest angular frequency of the linearised strand (springs along the
    /// strand, bending), by Gershgorin's theorem on M^-1 K row by row over the free particles:
    /// a particle with two free neighbours contributes 4 k / m, and the bending stencil
    /// [1, -2, 1] at each interior particle contributes c times the absolute row sum of D^T D
    /// (16 c / m in the middle of a long strand). For a uniform chain this is the textbook
    /// bound omega_max = 2 sqrt(k / m) of a spring chain; a single spring on a pinned particle
    /// gives sqrt(k / m) exactly.
    pub fn omega_max(&self) -> f64 {
        self.omega_max_of(true)
    }

    /// [`Setup::omega_max`] with the springs along the strand (`stretch` true) or without them
    /// (false: for a method whose segments are rigid). Each segment's and each interior
    /// particle's own constants (a tapered strand's vary).
    pub fn omega_max_of(&self, stretch: bool) -> f64 {
        let p = self.particles;
        let mut worst: f64 = 0.0;
        let k = |j: usize| if stretch { self.segment_k[j] } else { 0.0 };
        for i in 0..p {
            if self.pinned[i] {
                continue;
            }
            // Pinned particles are not degrees of freedom: their columns drop out of the rows.
            let free = |j: usize| !self.pinned[j];
            let mut row = 0.0;
            if i > 0 {
                row += k(i - 1) * (1.0 + f64::from(u8::from(free(i - 1))));
            }
            if i + 1 < p {
                row += k(i) * (1.0 + f64::from(u8::from(free(i + 1))));
            }
            if p >= 3 {
                // Row i of D^T C D, where row j of D is the stencil [1, -2, 1] at j-1, j, j+1 for
                // every interior particle j and C holds its c_j: entries at i-2..=i+2 (index
                // e[at + 2 - i]).
                let stencil = |j: usize, at: usize| -> f64 {
                    if at + 1 == j || at == j + 1 {
                        1.0
                    } else if at == j {
                        -2.0
                    } else {
                        0.0
                    }
                };
                let mut e = [0.0f64; 5];
                for j in i.saturating_sub(1).max(1)..=(i + 1).min(p - 2) {
                    for at in j - 1..=j + 1 {
                        e[at + 2 - i] += self.bend_c[j - 1] * stencil(j, i) * stencil(j, at);
                    }
                }
                let sum: f64 = e
                    .iter()
                    .enumerate()
                    .filter(|(q, v)| **v != 0.0 && free(i + q - 2))
                    .map(|(_, v)| v.abs())
                    .sum();
                row += sum;
            }
            worst = worst.max(row / self.mass[i]);
        }
        worst.sqrt()
    }

    /// Total velocity-proportional damping rate gamma, 1/s (damping + relative damping, plus
    /// drag when a wind field is connected).
    pub fn damping_rate(&self, wind: bool) -> f64 {
        self.damping + self.relative_damping + if wind { self.drag } else { 0.0 }
    }

    /// The largest stable step of an explicit (symplectic Euler / Verlet) spring integrator
    /// for these parameters, s: for x'' = -omega^2 x - gamma x' the symplectic Euler map is
    /// stable when omega^2 h^2 + 2 gamma h < 4 (Jury's criterion on its characteristic
    /// polynomial z^2 - (2 - gamma h - omega^2 h^2) z + (1 - gamma h)), i.e.
    /// h < (sqrt(gamma^2 + 4 omega^2) - gamma) / omega^2, which is 2 / omega when gamma = 0.
    /// `None` when nothing limits the step.
    pub fn explicit_step_limit(&self, wind: bool) -> Option<f64> {
        step_limit(self.omega_max(), self.damping_rate(wind))
    }
}

/// The explicit stability limit for highest frequency `omega` (rad/s) and damping rate
/// `gamma` (1/s): h < (sqrt(gamma^2 + 4 omega^2) - gamma) / omega^2; 2 / gamma when omega is 0.
pub fn step_limit(omega: f64, gamma: f64) -> Option<f64> {
    if omega > 0.0 {
        Some(((gamma * gamma + 4.0 * omega * omega).sqrt() - gamma) / (omega * omega))
    } else if gamma > 0.0 {
        Some(2.0 / gamma)
    } else {
        None
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::spec::node_spec;
    use heft_node_sdk::ParamValue;

    fn setup(changes: &[(&str, ParamValue)]) -> Setup {
        let spec = node_spec("t", "", "");
        let mut p = Params::defaults(&spec).expect("defaults");
        for (n, v) in changes {
            p = p.with(n, v.clone()).expect("param");
        }
        Setup::from_params(&p).expect("valid")
    }

    /// The largest eigenvalue of M^-1 A (A symmetric positive semi-definite, M diagonal) by
    /// power iteration on M^-1/2 A M^-1/2 (Golub & Van Loan, Matrix Computations, sec. 7.3).
    fn lambda_max(a: &[Vec<f64>], m: &[f64]) -> f64 {
        let n = m.len();
        let s: Vec<Vec<f64>> = (0..n)
            .map(|i| (0..n).map(|j| a[i][j] / (m[i] * m[j]).sqrt()).collect())
            .collect();
        // Start with an alternating vector: the highest mode of a chain alternates.
        let mut v: Vec<f64> = (0..n)
            .map(|i| if i % 2 == 0 { 1.0 } else { -1.0 } * (1.0 + 0.01 * i as f64))
            .collect();
        let mut lambda = 0.0;
        for _ in 0..20000 {
            let w: Vec<f64> = (0..n).map(|i| (0..n).map(|j| s[i][j] * v[j]).sum()).collect();
            let norm = w.iter().map(|x| x * x).sum::<f64>().sqrt();
            lambda = v.iter().zip(&w).map(|(x, y)| x * y).sum::<f64>();
            v = w.iter().map(|x| x / norm).collect();
        }
        lambda
    }

    /// The axial stiffness matrix of a free straight strand (springs plus the bending stencil,
    /// which also acts along the strand), pinned rows and columns removed.
    fn axial_matrix(s: &Setup) -> (Vec<Vec<f64>>, Vec<f64>) {
        let p = s.particles;
        let mut a = vec![vec![0.0; p]; p];
        for j in 0..p - 1 {
            let k = s.segment_k[j];
            a[j][j] += k;
            a[j + 1][j + 1] += k;
            a[j][j + 1] -= k;
            a[j + 1][j] -= k;
        }
        for j in 1..p - 1 {
            let d = [(j - 1, 1.0), (j, -2.0), (j + 1, 1.0)];
            for (r, x) in d {
                for (c, y) in d {
                    a[r][c] += s.bend_c[j - 1] * x * y;
                }
            }
        }
        let free: Vec<usize> = (0..p).filter(|&i| !s.pinned[i]).collect();
        let a = free.iter().map(|&i| free.iter().map(|&j| a[i][j]).collect()).collect();
        let m = free.iter().map(|&i| s.mass[i]).collect();
        (a, m)
    }

    #[test]
    fn masses_are_lumped_and_pins_have_no_inverse_mass() {
        let s = setup(&[("pin", ParamValue::Choice("both_ends".into()))]);
        let total: f64 = s.mass.iter().sum();
        assert!((total - 0.05 * 0.4).abs() < 1e-15);
        assert_eq!(s.mass[0], 0.5 * s.mass[1]);
        assert_eq!((s.inv_mass[0], s.inv_mass[12]), (0.0, 0.0));
        assert_eq!(s.pins, [0, 12]);
        assert_eq!(s.segment_k, vec![200.0 / (0.4 / 12.0); 12]);
    }

    #[test]
    fn placements_put_strands_on_a_line_or_a_ring() {
        let s = setup(&[
            ("count", ParamValue::Integer(4)),
            ("placement", ParamValue::Choice("ring".into())),
            ("start_offset", ParamValue::Vec3([0.0, 0.0, 0.1])),
        ]);
        assert!((s.start_offsets[1][0]).abs() < 1e-16 && (s.start_offsets[1][1] - 0.15).abs() < 1e-16);
        assert_eq!(s.start_offsets[1][2], 0.1);
        assert!((s.end_offsets[2][0] - (-0.15 + 0.2)).abs() < 1e-15);
        let s = setup(&[
            ("count", ParamValue::Integer(3)),
            ("placement", ParamValue::Choice("line".into())),
        ]);
        assert_eq!(
            s.start_offsets.iter().map(|o| o[0]).collect::<Vec<_>>(),
            [-0.02, 0.0, 0.02]
        );
    }

    /// The Gershgorin bound is an upper bound of the true highest frequency, and close to it
    /// for a free chain (2 sqrt(k / m) is the highest frequency of a long uniform chain).
    #[test]
    fn omega_max_bounds_the_highest_frequency() {
        for (segments, pin, ei) in [
            (1, "free", 0.0),
            (12, "free", 0.0),
            (12, "one_end", 1e-4),
            (40, "free", 1e-3),
            (3, "both_ends", 1e-2),
        ] {
            let s = setup(&[
                ("segments", ParamValue::Integer(segments)),
                ("pin", ParamValue::Choice(pin.into())),
                ("bending_stiffness", ParamValue::Number(ei)),
            ]);
            let (a, m) = axial_matrix(&s);
            let exact = lambda_max(&a, &m).sqrt();
            let bound = s.omega_max();
            assert!(
                bound >= exact * (1.0 - 1e-9),
                "{segments} {pin}: bound {bound} < {exact}"
            );
            assert!(
                bound <= 1.5 * exact,
                "{segments} {pin}: bound {bound} far above {exact}"
            );
            if segments == 1 && pin == "free" {
                // Two half masses on one spring: omega = sqrt(k / (m/4)) = 2 sqrt(k / m) exactly.
                assert!((bound - exact).abs() < 1e-9 * exact);
            }
        }
        // A single segment on a pin: sqrt(k / m) exactly.
        let s = setup(&[
            ("segments", ParamValue::Integer(1)),
            ("bending_stiffness", ParamValue::Number(0.0)),
        ]);
        assert!((s.omega_max() - (s.segment_k[0] / s.mass[1]).sqrt()).abs() < 1e-9);
    }

    #[test]
    fn the_step_limit_is_the_root_of_the_jury_condition() {
        for (w, g) in [(100.0, 0.0), (100.0, 5.0), (3.0, 50.0)] {
            let h = step_limit(w, g).expect("limited");
            assert!((w * w * h * h + 2.0 * g * h - 4.0).abs() < 1e-12);
        }
        assert_eq!(step_limit(0.0, 4.0), Some(0.5));
        assert_eq!(step_limit(0.0, 0.0), None);
    }

    #[test]
    fn a_zero_rest_direction_is_refused() {
        let spec = node_spec("t", "", "");
        let p = Params::defaults(&spec)
            .and_then(|p| p.with("rest_direction", ParamValue::Vec3([0.0; 3])))
            .expect("params");
        assert!(Setup::from_params(&p).unwrap_err().0.contains("zero vector"));
    }
    /// `tip_thickness`: a cone of one material. The strand's mass is the cone's,
    /// mu L (1 + r + r^2) / 3 (the volume of a frustum over the cylinder's), to the midpoint
    /// rule's error (about (1 - r)^2 / (12 n^2) of it: 2e-4 here); the tip segment's spring constant
    /// is the root's times the squared thickness ratio of their middles, and the last interior
    /// particle's bending coefficient the fourth power of its thickness; Gershgorin's bound
    /// holds for the tapered stiffness matrix too (checked against the power iteration).
    #[test]
    fn a_tapered_strand_is_a_cone_of_one_material() {
        let (n, r) = (12usize, 0.4);
        let s = setup(&[
            ("segments", ParamValue::Integer(n as i64)),
            ("tip_thickness", ParamValue::Number(r)),
            ("pin", ParamValue::Choice("free".into())),
            ("bending_stiffness", ParamValue::Number(1e-3)),
        ]);
        let total: f64 = s.mass.iter().sum();
        let cone = 0.05 * 0.4 * (1.0 + r + r * r) / 3.0;
        assert!((total / cone - 1.0).abs() < 5e-4, "{total} vs {cone}");
        let d = |x: f64| 1.0 - (1.0 - r) * x / n as f64;
        let ratio = s.segment_k[n - 1] / s.segment_k[0];
        assert!((ratio - (d(n as f64 - 0.5) / d(0.5)).powi(2)).abs() < 1e-12, "{ratio}");
        let c = s.bend_c[n - 2] / (s.bending_stiffness / s.rest_length.powi(3));
        assert!((c - d(n as f64 - 1.0).powi(4)).abs() < 1e-12, "{c}");
        let (a, m) = axial_matrix(&s);
        let exact = lambda_max(&a, &m).sqrt();
        assert!(s.omega_max() >= exact * (1.0 - 1e-9), "{} < {exact}", s.omega_max());
    }
}

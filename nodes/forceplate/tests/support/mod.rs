//! A synthetic countermovement jump whose centre-of-mass motion is known in closed form, and
//! a seeded noise generator. Shared by the test files (not every file uses every item).
#![allow(dead_code)]

use std::f64::consts::PI;

use heft_node_sdk::STANDARD_GRAVITY as G;

/// A countermovement jump built from a known centre-of-mass acceleration a(t); the plate
/// force is F = m (g + a) while the feet are on it (Newton's second law) and 0 in flight.
///
/// - standing, t < t0: a = 0;
/// - unweighting lobe, u = t - t0 in [0, t1]: a = -a1 sin^2(pi u / t1);
/// - rise, u in [0, t2]: a = p sin^2(pi u / (2 t2));
/// - push-off, w in [0, t3]: a = -g + (p + g) cos(pi w / (2 t3)), reaching F = 0 at take-off;
/// - flight of 2 V / g, F = 0 (ballistic: the centre of mass returns to its take-off height);
/// - landing, u from touch-down: F = m g (1 - exp(-u / tau)) + m (V + g tau) b(u), with
///   b(u) = pi / (2 tl) sin(pi u / tl) on [0, tl] (unit area), so the landing impulse brings the
///   velocity from -V back to 0.
///
/// Velocity and displacement are the exact integrals of a(t), written out in closed form below.
#[derive(Debug, Clone, Copy)]
pub struct Jump {
    pub mass: f64,
    pub t0: f64,
    pub a1: f64,
    pub t1: f64,
    pub p: f64,
    pub t2: f64,
    pub t3: f64,
    pub tl: f64,
    pub tau: f64,
    /// Seconds of landing recorded after touch-down.
    pub after: f64,
}

impl Jump {
    /// A 72 kg jumper (an invented test character, "Ilse Marrow") doing a countermovement jump:
    /// take-off velocity 2.7149 m/s, countermovement depth 0.234 m, peak propulsive force 2.63 BW.
    pub fn ilse() -> Jump {
        Jump {
            mass: 72.0,
            t0: 1.5,
            a1: 5.0,
            t1: 0.30,
            p: 16.0,
            t2: 0.40,
            t3: 0.04,
            tl: 0.15,
            tau: 0.02,
            after: 1.0,
        }
    }

    /// Velocity and displacement at the end of the unweighting lobe.
    fn end1(&self) -> (f64, f64) {
        (-self.a1 * self.t1 / 2.0, -self.a1 * self.t1 * self.t1 / 4.0)
    }
    /// Velocity and displacement at the end of the rise.
    fn end2(&self) -> (f64, f64) {
        let (v1, z1) = self.end1();
        let t2 = self.t2;
        (
            v1 + self.p * t2 / 2.0,
            z1 + v1 * t2 + self.p * t2 * t2 * (0.25 - 1.0 / (PI * PI)),
        )
    }
    /// Take-off (zero force) time.
    pub fn takeoff(&self) -> f64 {
        self.t0 + self.t1 + self.t2 + self.t3
    }
    /// Take-off velocity V at zero force, closed form: v2 - g t3 + (p + g) 2 t3 / pi.
    pub fn takeoff_velocity(&self) -> f64 {
        let (v2, _) = self.end2();
        v2 - G * self.t3 + (self.p + G) * 2.0 * self.t3 / PI
    }
    /// Ballistic flight time 2 V / g.
    pub fn flight_time(&self) -> f64 {
        2.0 * self.takeoff_velocity() / G
    }
    /// Touch-down (force starts rising from zero) time.
    pub fn touchdown(&self) -> f64 {
        self.takeoff() + self.flight_time()
    }
    /// Length of the record, s.
    pub fn duration(&self) -> f64 {
        self.touchdown() + self.after
    }
    /// Time of the velocity minimum: the end of the unweighting lobe, where a crosses zero.
    pub fn velocity_min_time(&self) -> f64 {
        self.t0 + self.t1
    }

    /// Centre-of-mass acceleration, velocity and displacement from the start to touch-down
    /// (flight: a = -g, v = V - g s, z = z(take-off) + V s - g s^2 / 2, s after take-off).
    pub fn kinematics(&self, t: f64) -> (f64, f64, f64) {
        let g = G;
        if t < self.t0 {
            return (0.0, 0.0, 0.0);
        }
        let u = t - self.t0;
        if u <= self.t1 {
            let (a1, t1) = (self.a1, self.t1);
            let c = 2.0 * PI / t1;
            let a = -a1 * (PI * u / t1).sin().powi(2);
            let v = -a1 / 2.0 * (u - (c * u).sin() / c);
            let z = -a1 / 2.0 * (u * u / 2.0 + ((c * u).cos() - 1.0) / (c * c));
            return (a, v, z);
        }
        let u = u - self.t1;
        if u <= self.t2 {
            let (v1, z1) = self.end1();
            let (p, t2) = (self.p, self.t2);
            let c = PI / t2;
            let a = p * (PI * u / (2.0 * t2)).sin().powi(2);
            let v = v1 + p / 2.0 * (u - (c * u).sin() / c);
            let z = z1 + v1 * u + p / 2.0 * (u * u / 2.0 + ((c * u).cos() - 1.0) / (c * c));
            return (a, v, z);
        }
        let w = u - self.t2;
        let (v2, z2) = self.end2();
        let k = PI / (2.0 * self.t3);
        let push = |w: f64| {
            let a = -g + (self.p + g) * (k * w).cos();
            let v = v2 - g * w + (self.p + g) * (k * w).sin() / k;
            let z = z2 + v2 * w - g * w * w / 2.0 + (self.p + g) * (1.0 - (k * w).cos()) / (k * k);
            (a, v, z)
        };
        if w <= self.t3 {
            return push(w);
        }
        let (_, v3, z3) = push(self.t3);
        let s = w - self.t3;
        (-g, v3 - g * s, z3 + v3 * s - g * s * s / 2.0)
    }

    /// Vertical ground reaction force at time t, N.
    pub fn force(&self, t: f64) -> f64 {
        let (m, g) = (self.mass, G);
        if t < self.takeoff() {
            return m * (g + self.kinematics(t).0);
        }
        let td = self.touchdown();
        if t < td {
            return 0.0;
        }
        let u = t - td;
        let b = if u <= self.tl {
            PI / (2.0 * self.tl) * (PI * u / self.tl).sin()
        } else {
            0.0
        };
        m * g * (1.0 - (-u / self.tau).exp()) + m * (self.takeoff_velocity() + g * self.tau) * b
    }

    /// The record sampled at `rate` Hz: sample i at i / rate seconds.
    pub fn record(&self, rate: f64) -> Vec<f64> {
        let n = (self.duration() * rate).floor() as usize;
        (0..n).map(|i| self.force(i as f64 / rate)).collect()
    }

    /// The time during the push-off where the force falls through `threshold`, closed form:
    /// m (p + g) cos(pi w / (2 t3)) = threshold.
    pub fn takeoff_crossing(&self, threshold: f64) -> f64 {
        let w = (2.0 * self.t3 / PI) * (threshold / (self.mass * (self.p + G))).acos();
        self.t0 + self.t1 + self.t2 + w
    }
    /// The time after touch-down where the landing force rises through `threshold` (bisection
    /// on the closed-form force, which rises monotonically there).
    pub fn touchdown_crossing(&self, threshold: f64) -> f64 {
        let td = self.touchdown();
        bisect(|t| self.force(t) - threshold, td, td + 0.01)
    }
    /// The time of zero velocity during the rise (bisection on the closed-form velocity).
    pub fn zero_velocity_time(&self) -> f64 {
        let a = self.velocity_min_time();
        bisect(|t| self.kinematics(t).1, a, a + self.t2)
    }
}

/// Root of an increasing function on [lo, hi] by bisection, to 1e-15 s.
pub fn bisect(f: impl Fn(f64) -> f64, mut lo: f64, mut hi: f64) -> f64 {
    assert!(f(lo) < 0.0 && f(hi) >= 0.0, "no sign change on [{lo}, {hi}]");
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if f(mid) < 0.0 {
            lo = mid
        } else {
            hi = mid
        }
        if hi - lo < 1e-15 {
            break;
        }
    }
    0.5 * (lo + hi)
}

/// Seeded Gaussian noise: xorshift64* (Vigna 2016, "An experimental exploration of Marsaglia's
/// xorshift generators, scrambled", ACM TOMS 42(4):30) feeding the Box-Muller transform (Box &
/// Muller 1958, Ann. Math. Statist. 29(2):610-611).
#[derive(Debug, Clone)]
pub struct Noise {
    state: u64,
    spare: Option<f64>,
}

impl Noise {
    pub fn new(seed: u64) -> Noise {
        Noise {
            state: seed.max(1),
            spare: None,
        }
    }
    /// Uniform in (0, 1).
    fn uniform(&mut self) -> f64 {
        self.state ^= self.state >> 12;
        self.state ^= self.state << 25;
        self.state ^= self.state >> 27;
        let x = self.state.wrapping_mul(0x2545_F491_4F6C_DD1D);
        ((x >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    /// Standard normal deviate.
    pub fn gaussian(&mut self) -> f64 {
        if let Some(z) = self.spare.take() {
            return z;
        }
        let (u1, u2) = (self.uniform(), self.uniform());
        let r = (-2.0 * u1.ln()).sqrt();
        let th = 2.0 * PI * u2;
        self.spare = Some(r * th.sin());
        r * th.cos()
    }
}

/// Adds Gaussian noise of SD `sd` to every sample.
pub fn add_noise(record: &mut [f64], sd: f64, seed: u64) {
    let mut noise = Noise::new(seed);
    for f in record {
        *f += sd * noise.gaussian();
    }
}

/// Relative difference |got - want| / |want|.
pub fn rel(got: f64, want: f64) -> f64 {
    ((got - want) / want).abs()
}

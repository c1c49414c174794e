//! Smooth one-dimensional profiles: pieces whose acceleration is a polynomial (among them the
//! quintic segments that fix position, velocity and acceleration at both ends), and the
//! quintic smoothstep.

/// A stretch of motion whose acceleration is a polynomial in the normalised time
/// u = (t - t0) / duration, integrated in closed form from a start position and velocity:
/// position z(u) = z0 + v0 T u + T^2 sum a_k u^(k+2) / ((k+1)(k+2)), T the duration.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Piece {
    t0: f64,
    duration: f64,
    /// Position coefficients of u^0 .. u^7.
    c: [f64; 8],
}

impl Piece {
    /// The piece from `z0`, `v0` at `t0` whose acceleration is sum `accel[k]` u^k (m/s^2;
    /// at most degree 5). `duration` must be positive.
    pub fn from_acceleration(t0: f64, duration: f64, z0: f64, v0: f64, accel: &[f64]) -> Piece {
        let t = duration;
        let mut c = [0.0; 8];
        c[0] = z0;
        c[1] = v0 * t;
        for (k, a) in accel.iter().enumerate().take(6) {
            let k = k as f64;
            c[k as usize + 2] = a * t * t / ((k + 1.0) * (k + 2.0));
        }
        Piece { t0, duration, c }
    }

    /// The quintic over `[t0, t0 + duration]` from `start` = (position, velocity,
    /// acceleration) to `end` (six conditions, six coefficients: the unique quintic Hermite
    /// segment). With c0 = p0, c1 = v0 T, c2 = a0 T^2 / 2 fixed by the start, the end
    /// conditions c3 + c4 + c5 = dp, 3 c3 + 4 c4 + 5 c5 = dv, 6 c3 + 12 c4 + 20 c5 = da solve
    /// in closed form. `duration` must be positive.
    pub fn quintic(t0: f64, duration: f64, start: [f64; 3], end: [f64; 3]) -> Piece {
        let t = duration;
        let [p0, v0, a0] = start;
        let [p1, v1, a1] = end;
        let dp = p1 - p0 - v0 * t - 0.5 * a0 * t * t;
        let dv = (v1 - v0 - a0 * t) * t;
        let da = (a1 - a0) * t * t;
        Piece {
            t0,
            duration,
            c: [
                p0,
                v0 * t,
                0.5 * a0 * t * t,
                10.0 * dp - 4.0 * dv + 0.5 * da,
                -15.0 * dp + 7.0 * dv - da,
                6.0 * dp - 3.0 * dv + 0.5 * da,
                0.0,
                0.0,
            ],
        }
    }

    /// Start time.
    pub fn start(&self) -> f64 {
        self.t0
    }

    /// End time.
    pub fn end(&self) -> f64 {
        self.t0 + self.duration
    }

    /// Position, velocity and acceleration at `t` (the polynomial continues outside).
    pub fn eval(&self, t: f64) -> [f64; 3] {
        let u = (t - self.t0) / self.duration;
        let (mut p, mut v, mut a) = (0.0, 0.0, 0.0);
        for k in (0..8).rev() {
            let kf = k as f64;
            p = p * u + self.c[k];
            if k >= 1 {
                v = v * u + kf * self.c[k];
            }
            if k >= 2 {
                a = a * u + kf * (kf - 1.0) * self.c[k];
            }
        }
        [p, v / self.duration, a / (self.duration * self.duration)]
    }
}

/// The quintic smoothstep s(u) = 10 u^3 - 15 u^4 + 6 u^5 and its first two derivatives in u,
/// clamped to 0 before u = 0 and 1 after u = 1. s, s' and s'' are continuous at both ends
/// (s' = s'' = 0 there), so a motion built on it is C2.
pub fn smoothstep(u: f64) -> [f64; 3] {
    if u <= 0.0 {
        return [0.0, 0.0, 0.0];
    }
    if u >= 1.0 {
        return [1.0, 0.0, 0.0];
    }
    let u2 = u * u;
    [
        u2 * u * (10.0 + u * (-15.0 + 6.0 * u)),
        30.0 * u2 * (1.0 - u) * (1.0 - u),
        60.0 * u * (1.0 + u * (-3.0 + 2.0 * u)),
    ]
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The segment meets all six end conditions (its definition: quintic Hermite
    /// interpolation; Biagiotti & Melchiorri, Trajectory Planning for Automatic Machines and
    /// Robots, 2008, ch. 2, polynomial trajectories of degree five; chapter from memory).
    #[test]
    fn meets_its_end_conditions() {
        let q = Piece::quintic(1.5, 0.4, [0.9, -0.3, 2.0], [0.6, 1.7, -9.8]);
        let s = q.eval(1.5);
        let e = q.eval(1.9);
        for (got, want) in s.iter().zip([0.9, -0.3, 2.0]).chain(e.iter().zip([0.6, 1.7, -9.8])) {
            assert!((got - want).abs() < 1e-12, "{got} vs {want}");
        }
    }

    /// Rest-to-rest over a distance D in time T: the quintic is the minimum-jerk profile
    /// x = D (10 u^3 - 15 u^4 + 6 u^5) (Flash & Hogan 1985, J Neurosci 5(7):1688-1703), whose
    /// peak speed 15 D / (8 T) at mid-time and peak acceleration 10 sqrt(3) D / (3 T^2) at
    /// u = (3 - sqrt 3)/6 follow by differentiating that closed form by hand.
    #[test]
    fn rest_to_rest_is_the_minimum_jerk_profile() {
        let (d, t) = (0.28, 0.5);
        let q = Piece::quintic(0.0, t, [0.0, 0.0, 0.0], [-d, 0.0, 0.0]);
        let mid = q.eval(t / 2.0);
        assert!((mid[0] + d / 2.0).abs() < 1e-15);
        assert!((mid[1] + 15.0 * d / (8.0 * t)).abs() < 1e-12);
        let u = (3.0 - 3f64.sqrt()) / 6.0;
        let peak = q.eval(u * t)[2];
        assert!((peak + 10.0 * 3f64.sqrt() * d / (3.0 * t * t)).abs() < 1e-12, "{peak}");
        for k in 0..=20 {
            let u = f64::from(k) / 20.0;
            let s = smoothstep(u)[0];
            assert!((q.eval(u * t)[0] + d * s).abs() < 1e-14);
        }
    }

    /// A piece integrates its acceleration polynomial exactly: against the composite
    /// Simpson rule of the acceleration (velocity) and of the velocity (position), which is
    /// exact for polynomials of degree 3 per panel and converges as h^4 otherwise.
    #[test]
    fn a_piece_integrates_its_acceleration() {
        let accel = [1.5, -2.0, 30.0, -60.0, 30.0, 4.0];
        let p = Piece::from_acceleration(0.7, 0.25, 0.9, -0.4, &accel);
        let a = |t: f64| {
            let u = (t - 0.7) / 0.25;
            accel.iter().rev().fold(0.0, |s, c| s * u + c)
        };
        let simpson = |f: &dyn Fn(f64) -> f64, t0: f64, t1: f64| {
            let n = 2000;
            let h = (t1 - t0) / n as f64;
            (0..=n)
                .map(|i| {
                    let w = if i == 0 || i == n {
                        1.0
                    } else if i % 2 == 1 {
                        4.0
                    } else {
                        2.0
                    };
                    w * f(t0 + h * i as f64)
                })
                .sum::<f64>()
                * h
                / 3.0
        };
        for t in [0.7, 0.8, 0.95] {
            let [z, v, acc] = p.eval(t);
            assert!((acc - a(t)).abs() < 1e-12);
            let v_want = -0.4 + simpson(&|s| a(s), 0.7, t);
            assert!((v - v_want).abs() < 1e-10, "{v} vs {v_want}");
            let z_want = 0.9 + simpson(&|s| p.eval(s)[1], 0.7, t);
            assert!((z - z_want).abs() < 1e-10, "{z} vs {z_want}");
        }
    }

    /// Derivatives agree with central differences of the position (definition of the
    /// derivative; the O(h^2) difference error bounds the tolerance).
    #[test]
    fn derivatives_match_differences() {
        let q = Piece::quintic(-0.2, 0.3, [1.0, 0.5, 3.0], [1.4, 2.6, -9.8]);
        let h = 1e-5;
        for k in 1..10 {
            let t = -0.2 + 0.03 * f64::from(k);
            let [p, v, a] = q.eval(t);
            let (pm, pp) = (q.eval(t - h), q.eval(t + h));
            assert!(((pp[0] - pm[0]) / (2.0 * h) - v).abs() < 1e-6);
            assert!(((pp[0] - 2.0 * p + pm[0]) / (h * h) - a).abs() < 1e-3);
        }
        let h = 1e-6;
        for k in 1..10 {
            let u = 0.1 * f64::from(k);
            let [s, ds, dds] = smoothstep(u);
            let (m, p) = (smoothstep(u - h), smoothstep(u + h));
            assert!(((p[0] - m[0]) / (2.0 * h) - ds).abs() < 1e-8);
            assert!(((p[1] - m[1]) / (2.0 * h) - dds).abs() < 1e-8);
            assert!((0.0..=1.0).contains(&s));
        }
    }
}

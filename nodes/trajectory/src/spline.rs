//! Natural cubic spline interpolation (one axis).

/// A natural cubic spline: cubic between knots, C2 at the knots, zero second derivative at
/// both ends, extended linearly outside the knots.
#[derive(Debug, Clone)]
pub struct NaturalSpline {
    t: Vec<f64>,
    y: Vec<f64>,
    /// Second derivatives at the knots.
    m: Vec<f64>,
}

impl NaturalSpline {
    /// Builds the spline through `(t[i], y[i])`; `t` strictly increasing, at least 2 knots.
    pub fn new(t: &[f64], y: &[f64]) -> Result<NaturalSpline, String> {
        let n = t.len();
        if n < 2 || y.len() != n {
            return Err(format!("a spline needs at least 2 keys with values, got {n}"));
        }
        if let Some(i) = (1..n).find(|&i| t[i] <= t[i - 1] || !t[i].is_finite()) {
            return Err(format!(
                "key times must increase: key {} at {} s follows {} s",
                i + 1,
                t[i],
                t[i - 1]
            ));
        }
        // Tridiagonal system for interior second derivatives (Thomas algorithm):
        // h[i-1] m[i-1] + 2 (h[i-1] + h[i]) m[i] + h[i] m[i+1] = 6 (d[i] - d[i-1]).
        let mut m = vec![0.0; n];
        if n > 2 {
            let h: Vec<f64> = (0..n - 1).map(|i| t[i + 1] - t[i]).collect();
            let d: Vec<f64> = (0..n - 1).map(|i| (y[i + 1] - y[i]) / h[i]).collect();
            let k = n - 2;
            let mut diag = vec![0.0; k];
            let mut rhs = vec![0.0; k];
            for j in 0..k {
                diag[j] = 2.0 * (h[j] + h[j + 1]);
                rhs[j] = 6.0 * (d[j + 1] - d[j]);
            }
            for j in 1..k {
                let w = h[j] / diag[j - 1];
                diag[j] -= w * h[j];
                rhs[j] -= w * rhs[j - 1];
            }
            m[k] = rhs[k - 1] / diag[k - 1];
            for j in (0..k - 1).rev() {
                m[j + 1] = (rhs[j] - h[j + 1] * m[j + 2]) / diag[j];
            }
        }
        Ok(NaturalSpline {
            t: t.to_vec(),
            y: y.to_vec(),
            m,
        })
    }

    /// Value, first and second derivative at `x`.
    pub fn eval(&self, x: f64) -> [f64; 3] {
        let n = self.t.len();
        if x <= self.t[0] {
            let s = self.slope_at(0, 0.0);
            return [self.y[0] + s * (x - self.t[0]), s, 0.0];
        }
        if x >= self.t[n - 1] {
            let h = self.t[n - 1] - self.t[n - 2];
            let s = self.slope_at(n - 2, h);
            return [self.y[n - 1] + s * (x - self.t[n - 1]), s, 0.0];
        }
        let i = match self.t.partition_point(|&tk| tk <= x) {
            0 => 0,
            p => (p - 1).min(n - 2),
        };
        let (a, b) = self.coefficients(i);
        let u = x - self.t[i];
        let c = self.m[i] / 2.0;
        let d = (self.m[i + 1] - self.m[i]) / (6.0 * (self.t[i + 1] - self.t[i]));
        [
            a + u * (b + u * (c + u * d)),
            b + u * (2.0 * c + 3.0 * u * d),
            2.0 * c + 6.0 * u * d,
        ]
    }

    fn coefficients(&self, i: usize) -> (f64, f64) {
        let h = self.t[i + 1] - self.t[i];
        let b = (self.y[i + 1] - self.y[i]) / h - h * (2.0 * self.m[i] + self.m[i + 1]) / 6.0;
        (self.y[i], b)
    }

    fn slope_at(&self, i: usize, u: f64) -> f64 {
        let (_, b) = self.coefficients(i);
        let c = self.m[i] / 2.0;
        let d = (self.m[i + 1] - self.m[i]) / (6.0 * (self.t[i + 1] - self.t[i]));
        b + u * (2.0 * c + 3.0 * u * d)
    }

    /// Coefficients (a, b, c, d) of segment `i`: a + b u + c u^2 + d u^3 with u = x - t[i].
    pub fn segment(&self, i: usize) -> [f64; 4] {
        let (a, b) = self.coefficients(i);
        [
            a,
            b,
            self.m[i] / 2.0,
            (self.m[i + 1] - self.m[i]) / (6.0 * (self.t[i + 1] - self.t[i])),
        ]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Burden & Faires, Numerical Analysis (9th ed., 2011), section 3.5: the natural cubic
    /// spline through (0, 1), (1, e), (2, e^2), (3, e^3) has the printed coefficients
    /// (a, b, c, d) = (1, 1.46600, 0, 0.25228), (2.71828, 2.22285, 0.75685, 1.69107),
    /// (7.38906, 8.80977, 5.83007, -1.94336), given there to 5 decimals.
    #[test]
    #[allow(clippy::approx_constant)] // the book's printed 5-decimal values, e.g. 2.71828
    fn matches_burden_faires_natural_spline_example() {
        let t = [0.0, 1.0, 2.0, 3.0];
        let y: Vec<f64> = t.iter().map(|x: &f64| x.exp()).collect();
        let s = NaturalSpline::new(&t, &y).expect("valid keys");
        let book = [
            [1.0, 1.46600, 0.0, 0.25228],
            [2.71828, 2.22285, 0.75685, 1.69107],
            [7.38906, 8.80977, 5.83007, -1.94336],
        ];
        for (i, row) in book.iter().enumerate() {
            let got = s.segment(i);
            for k in 0..4 {
                assert!(
                    (got[k] - row[k]).abs() < 6e-6,
                    "segment {i} coefficient {k}: {} vs {}",
                    got[k],
                    row[k]
                );
            }
        }
    }

    /// A spline through samples of a straight line is that line (linear functions are
    /// reproduced exactly by natural splines: zero second derivatives solve the system).
    #[test]
    fn reproduces_a_straight_line() {
        let t = [0.0, 0.3, 0.7, 1.6, 2.0];
        let y: Vec<f64> = t.iter().map(|x| 2.0 - 0.5 * x).collect();
        let s = NaturalSpline::new(&t, &y).expect("valid keys");
        for x in [-0.5, 0.1, 0.5, 1.0, 1.9, 2.5] {
            let [p, v, a] = s.eval(x);
            assert!((p - (2.0 - 0.5 * x)).abs() < 1e-12);
            assert!((v + 0.5).abs() < 1e-12);
            assert!(a.abs() < 1e-12);
        }
    }

    /// C2 continuity: at every knot, the left and right limits of value, slope and second
    /// derivative agree (definition of a cubic spline, Burden & Faires section 3.5).
    #[test]
    fn is_c2_at_knots_and_at_the_ends() {
        let t = [0.0, 0.25, 0.9, 1.2, 2.0];
        let y = [1.0, 0.8, 1.3, 1.5, 1.0];
        let s = NaturalSpline::new(&t, &y).expect("valid keys");
        let eps = 1e-7;
        for &k in &t {
            let l = s.eval(k - eps);
            let r = s.eval(k + eps);
            assert!((l[0] - r[0]).abs() < 1e-5);
            assert!((l[1] - r[1]).abs() < 1e-4);
            assert!(
                (l[2] - r[2]).abs() < 1e-3,
                "second derivative jumps at {k}: {l:?} {r:?}"
            );
        }
        for (i, &k) in t.iter().enumerate() {
            assert!((s.eval(k)[0] - y[i]).abs() < 1e-12, "interpolates key {i}");
        }
    }

    #[test]
    fn rejects_times_that_do_not_increase() {
        let err = NaturalSpline::new(&[0.0, 1.0, 1.0], &[0.0, 1.0, 2.0]).expect_err("repeated time");
        assert!(err.contains("key 3"), "{err}");
    }
}

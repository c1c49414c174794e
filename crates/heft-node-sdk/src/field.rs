//! How a velocity field on a grid crosses the plugin boundary as a points port.
//!
//! One frame of a field port holds, as points of (x, y, z):
//!
//! | point | contents |
//! |---|---|
//! | 0 | `(nx, ny, nz)`: samples per axis, as numbers |
//! | 1 | `(spacing, 0, 0)`: distance between neighbouring samples, m |
//! | 2 | the grid origin: world position of sample `(0, 0, 0)`, m |
//! | 3.. | `nx * ny * nz` velocity samples, m/s, x fastest: sample `(i, j, k)` is point `3 + i + nx (j + ny k)` |
//!
//! The grid is axis-aligned in world space; sample `(i, j, k)` sits at
//! `origin + spacing * (i, j, k)`. The origin may move from frame to frame (a grid that
//! follows a character); the dimensions may not, since a points port has a fixed N. Every
//! frame carries its own header, so a reader checks and reads it per frame. A writer calls
//! [`points_for`] for N and [`write_frame`] per frame; a reader wraps each frame in a
//! [`FieldView`] and calls [`FieldView::sample`].

/// Points before the samples: dimensions, spacing, origin.
pub const HEADER_POINTS: usize = 3;

/// Points per frame of a field with `nx * ny * nz` samples (saturates instead of overflowing).
pub fn points_for(nx: usize, ny: usize, nz: usize) -> usize {
    nx.saturating_mul(ny).saturating_mul(nz).saturating_add(HEADER_POINTS)
}

/// Writes one frame: the header, then `sample(position)` at every grid position in
/// x-fastest order.
///
/// # Panics
///
/// If `out.len()` is not `3 * points_for(dims)`: the caller sized the port with
/// [`points_for`], so a mismatch is a bug in the caller.
pub fn write_frame(
    out: &mut [f64],
    dims: [usize; 3],
    spacing: f64,
    origin: [f64; 3],
    mut sample: impl FnMut([f64; 3]) -> [f64; 3],
) {
    let [nx, ny, nz] = dims;
    assert_eq!(
        out.len(),
        3 * points_for(nx, ny, nz),
        "field frame of {nx} x {ny} x {nz} samples needs {} values",
        3 * points_for(nx, ny, nz)
    );
    let (header, samples) = out.split_at_mut(3 * HEADER_POINTS);
    header.copy_from_slice(&[
        nx as f64, ny as f64, nz as f64, spacing, 0.0, 0.0, origin[0], origin[1], origin[2],
    ]);
    let mut chunks = samples.chunks_exact_mut(3);
    for k in 0..nz {
        for j in 0..ny {
            for i in 0..nx {
                let p = [
                    origin[0] + spacing * i as f64,
                    origin[1] + spacing * j as f64,
                    origin[2] + spacing * k as f64,
                ];
                if let Some(c) = chunks.next() {
                    c.copy_from_slice(&sample(p));
                }
            }
        }
    }
}

/// Positions this close to a grid line (in cells) are read as on it, so that sampling at
/// a sample's own position returns that sample exactly despite the round-off of
/// `(p - origin) / spacing`, and positions on the far faces are inside.
const SNAP_CELLS: f64 = 1e-9;

/// A read-only view of one frame of a field port, with its header checked.
#[derive(Debug, Clone, Copy)]
pub struct FieldView<'a> {
    dims: [usize; 3],
    spacing: f64,
    origin: [f64; 3],
    samples: &'a [f64],
}

impl<'a> FieldView<'a> {
    /// Checks one frame's header against its length: dimensions are positive whole numbers
    /// whose product matches the number of samples, the spacing is positive, the origin is
    /// finite. The error says what is wrong (the caller adds the port and frame).
    pub fn from_frame(values: &'a [f64]) -> Result<FieldView<'a>, String> {
        if !values.len().is_multiple_of(3) {
            return Err(format!(
                "a field frame holds whole points; {} values is not a multiple of 3",
                values.len()
            ));
        }
        let points = values.len() / 3;
        if points < HEADER_POINTS + 1 {
            return Err(format!(
                "a field frame needs {HEADER_POINTS} header points and at least one sample; it has {points} points"
            ));
        }
        let count = points - HEADER_POINTS;
        let mut dims = [0usize; 3];
        for (a, d) in dims.iter_mut().enumerate() {
            let v = values[a];
            if !(v.is_finite() && v >= 1.0 && v.fract() == 0.0 && v <= count as f64) {
                return Err(format!(
                    "field header: samples along {} = {v} is not a whole number from 1 to {count}",
                    ["x", "y", "z"][a]
                ));
            }
            *d = v as usize;
        }
        let product = dims[0].checked_mul(dims[1]).and_then(|p| p.checked_mul(dims[2]));
        if product != Some(count) {
            return Err(format!(
                "field header: {} x {} x {} samples, but the frame holds {count}",
                dims[0], dims[1], dims[2]
            ));
        }
        let spacing = values[3];
        if !(spacing.is_finite() && spacing > 0.0) {
            return Err(format!("field header: spacing {spacing} m is not positive"));
        }
        if values[4] != 0.0 || values[5] != 0.0 {
            return Err(format!(
                "field header: point 1 must be (spacing, 0, 0), found ({spacing}, {}, {})",
                values[4], values[5]
            ));
        }
        let origin = [values[6], values[7], values[8]];
        if origin.iter().any(|o| !o.is_finite()) {
            return Err(format!(
                "field header: origin ({}, {}, {}) is not finite",
                origin[0], origin[1], origin[2]
            ));
        }
        let samples = &values[3 * HEADER_POINTS..];
        if let Some(k) = samples.iter().position(|v| !v.is_finite()) {
            return Err(format!(
                "field sample {} has a non-finite velocity ({})",
                k / 3,
                samples[k]
            ));
        }
        Ok(FieldView {
            dims,
            spacing,
            origin,
            samples,
        })
    }

    /// Samples per axis.
    pub fn dims(&self) -> [usize; 3] {
        self.dims
    }

    /// Distance between neighbouring samples, m.
    pub fn spacing(&self) -> f64 {
        self.spacing
    }

    /// World position of sample (0, 0, 0), m.
    pub fn origin(&self) -> [f64; 3] {
        self.origin
    }

    /// The stored sample `(i, j, k)`, m/s; zero for indices outside the grid.
    pub fn at(&self, i: usize, j: usize, k: usize) -> [f64; 3] {
        let [nx, ny, nz] = self.dims;
        if i >= nx || j >= ny || k >= nz {
            return [0.0; 3];
        }
        let s = 3 * (i + nx * (j + ny * k));
        [self.samples[s], self.samples[s + 1], self.samples[s + 2]]
    }

    /// The velocity at world position `p` by trilinear interpolation of the eight
    /// surrounding samples; zero outside the grid's box (and for a non-finite `p`). At a
    /// sample's position it returns that sample exactly. Along an axis with one sample
    /// the box is flat: only points on that plane are inside.
    #[inline]
    pub fn sample(&self, p: [f64; 3]) -> [f64; 3] {
        self.sample_lanes(&p.map(|c| [c])).map(|c| c[0])
    }

    /// [`FieldView::sample`] at `N` points at once, `p[axis][lane]`, the result laid out the
    /// same way. Each lane gets exactly [`FieldView::sample`]'s value. The cell and weight
    /// arithmetic runs lane by lane in loops the compiler vectorises; only the reads of the
    /// eight corners are per lane. Strand solvers that hold their particles across SIMD lanes
    /// sample a whole lane group in one call (inlined, so that it is compiled for the
    /// instruction set their caller runs on).
    #[inline(always)]
    pub fn sample_lanes<const N: usize>(&self, p: &[[f64; N]; 3]) -> [[f64; N]; 3] {
        let cells = Cells::locate(self.dims, self.spacing, self.origin, p);
        cells.gather::<3>(self.samples, self.dims)
    }

    /// True when `other` has the same grid: dimensions, spacing and origin.
    pub fn same_grid(&self, other: &FieldView<'_>) -> bool {
        self.dims == other.dims && self.spacing == other.spacing && self.origin == other.origin
    }
}

/// Where `N` points fall in a grid: per lane, whether it is inside, its cell's lower sample
/// and the fractions along each axis.
struct Cells<const N: usize> {
    inside: [bool; N],
    /// The flat index of the cell's lower sample, i + nx (j + ny k): a whole number, exact in
    /// f64 (a grid has far fewer than 2^53 samples).
    corner: [f64; N],
    frac: [[f64; N]; 3],
}

impl<const N: usize> Cells<N> {
    #[inline(always)]
    fn locate(dims: [usize; 3], spacing: f64, origin: [f64; 3], p: &[[f64; N]; 3]) -> Cells<N> {
        // One division per call, not one per lane and axis.
        let inv_spacing = 1.0 / spacing;
        let mut inside = [true; N];
        let mut corner = [0.0f64; N];
        let mut frac = [[0.0f64; N]; 3];
        // The flat index's step along each axis.
        let stride = [1.0, dims[0] as f64, (dims[0] * dims[1]) as f64];
        for a in 0..3 {
            let n = dims[a];
            let top = (n - 1) as f64;
            let (o, last) = (origin[a], n.saturating_sub(2) as f64);
            for l in 0..N {
                let mut u = (p[a][l] - o) * inv_spacing;
                inside[l] &= u >= -SNAP_CELLS && u <= top + SNAP_CELLS;
                // The nearest sample (ties, far from any snap, go up). Lanes outside (or not
                // finite) compute a clamped cell and are zeroed in `gather`.
                let nearest = (u + 0.5).floor();
                if (u - nearest).abs() <= SNAP_CELLS {
                    u = nearest;
                }
                let u = u.clamp(0.0, top);
                // In 0..=last whatever u is (`min` returns `last` for a NaN). The index stays
                // in f64 until `gather` converts it once per lane: conversions between
                // floating point and integers are slow in the vector units.
                let i = u.floor().min(last);
                corner[l] += i * stride[a];
                frac[a][l] = u - i;
            }
        }
        Cells { inside, corner, frac }
    }

    /// The trilinear interpolation of `W` values per sample (`samples` holds `W` values per
    /// sample, x fastest), per lane; zero for the lanes outside.
    #[inline(always)]
    fn gather<const W: usize>(&self, samples: &[f64], dims: [usize; 3]) -> [[f64; N]; W] {
        let [nx, ny, nz] = dims;
        // The step to the upper sample along each axis: none along an axis with one sample
        // (its cell's lower sample is then the only one, and its upper weight is zero).
        let up = |n: usize, stride: usize| if n > 1 { W * stride } else { 0 };
        let (sx, sy, sz) = (up(nx, 1), up(ny, nx), up(nz, nx * ny));
        let frac = &self.frac;
        let mut v = [[0.0f64; N]; W];
        for l in 0..N {
            if !self.inside[l] {
                continue;
            }
            let base = W * self.corner[l] as usize;
            let (fx, fy, fz) = (frac[0][l], frac[1][l], frac[2][l]);
            let (gx, gy, gz) = (1.0 - fx, 1.0 - fy, 1.0 - fz);
            // The eight corners in the order x fastest, each weight the product of its axes'
            // factors in x, y, z order, read as four pairs along x (one slice each: adjacent
            // in memory unless the grid has one sample along x). Samples are finite
            // (`from_frame` checks), so a corner of weight zero adds zero.
            let rows = [(gy, gz, 0), (fy, gz, sy), (gy, fz, sz), (fy, fz, sy + sz)];
            // The lane's values side by side, so that the loops over them are vector operations.
            let mut acc = [0.0f64; W];
            for (wy, wz, off) in rows {
                let r = &samples[base + off..][..sx + W];
                let (lo, hi) = (&r[..W], &r[sx..sx + W]);
                let (w0, w1) = (gx * wy * wz, fx * wy * wz);
                for c in 0..W {
                    acc[c] += w0 * lo[c];
                }
                for c in 0..W {
                    acc[c] += w1 * hi[c];
                }
            }
            for c in 0..W {
                v[c][l] = acc[c];
            }
        }
        v
    }
}

/// Two frames of a field on the same grid with their samples side by side (the first frame's
/// velocity, then the second's), so that a point's cell, weights and corner reads serve both:
/// what a strand node samples every substep, between the frames around it.
#[derive(Debug, Clone, Default)]
pub struct FieldPair {
    dims: [usize; 3],
    spacing: f64,
    origin: [f64; 3],
    /// 6 values per sample.
    samples: Vec<f64>,
}

impl FieldPair {
    /// Holds `a` and `b` side by side, reusing the storage; false (and `self` left empty) when
    /// their grids differ ([`FieldView::same_grid`]).
    pub fn fill(&mut self, a: &FieldView<'_>, b: &FieldView<'_>) -> bool {
        self.samples.clear();
        if !a.same_grid(b) {
            return false;
        }
        (self.dims, self.spacing, self.origin) = (a.dims, a.spacing, a.origin);
        self.samples.reserve(2 * a.samples.len());
        for (p, q) in a.samples.chunks_exact(3).zip(b.samples.chunks_exact(3)) {
            self.samples.extend_from_slice(p);
            self.samples.extend_from_slice(q);
        }
        true
    }

    /// True when it holds two frames.
    pub fn is_filled(&self) -> bool {
        !self.samples.is_empty()
    }

    /// The two frames' [`FieldView::sample_lanes`] at `N` points at once: exactly their values,
    /// with one cell lookup per point.
    #[inline(always)]
    pub fn sample_lanes<const N: usize>(&self, p: &[[f64; N]; 3]) -> ([[f64; N]; 3], [[f64; N]; 3]) {
        let cells = Cells::locate(self.dims, self.spacing, self.origin, p);
        let v = cells.gather::<6>(&self.samples, self.dims);
        ([v[0], v[1], v[2]], [v[3], v[4], v[5]])
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn frame(dims: [usize; 3], spacing: f64, origin: [f64; 3], f: impl FnMut([f64; 3]) -> [f64; 3]) -> Vec<f64> {
        let mut out = vec![0.0; 3 * points_for(dims[0], dims[1], dims[2])];
        write_frame(&mut out, dims, spacing, origin, f);
        out
    }

    /// An affine field v = a + B p.
    fn affine(p: [f64; 3]) -> [f64; 3] {
        [
            0.5 + 1.5 * p[0] - 0.25 * p[1] + 2.0 * p[2],
            -1.0 + 0.75 * p[0] + 3.0 * p[1] - 0.5 * p[2],
            0.125 - 2.5 * p[0] + 0.5 * p[1] + 1.25 * p[2],
        ]
    }

    #[test]
    fn the_layout_is_header_then_x_fastest_samples() {
        let out = frame([2, 3, 2], 0.5, [1.0, -2.0, 0.25], |p| p);
        assert_eq!(out.len(), 3 * (3 + 12));
        assert_eq!(&out[..9], &[2.0, 3.0, 2.0, 0.5, 0.0, 0.0, 1.0, -2.0, 0.25]);
        // Sample (i, j, k) = (1, 2, 1) is point 3 + 1 + 2 (2 + 3 * 1) = 14 and sits at
        // origin + 0.5 (1, 2, 1).
        assert_eq!(&out[42..45], &[1.5, -1.0, 0.75]);
        assert_eq!(&out[9..12], &[1.0, -2.0, 0.25]);
    }

    #[test]
    fn writing_then_sampling_at_the_sample_points_gives_the_samples() {
        let origin = [0.3, -0.7, 1.1];
        let h = 0.1;
        let out = frame([4, 3, 5], h, origin, |p| [p[0].sin(), p[1] * p[2], (p[0] + p[2]).cos()]);
        let view = FieldView::from_frame(&out).expect("valid");
        assert_eq!(view.dims(), [4, 3, 5]);
        for k in 0..5 {
            for j in 0..3 {
                for i in 0..4 {
                    let p = [
                        origin[0] + h * i as f64,
                        origin[1] + h * j as f64,
                        origin[2] + h * k as f64,
                    ];
                    assert_eq!(view.sample(p), view.at(i, j, k), "sample ({i}, {j}, {k})");
                    assert_eq!(view.at(i, j, k), [p[0].sin(), p[1] * p[2], (p[0] + p[2]).cos()]);
                }
            }
        }
    }

    #[test]
    fn trilinear_interpolation_reproduces_an_affine_field() {
        // Trilinear interpolation is three nested linear interpolations, each exact for a
        // function linear along its axis, so it reproduces any affine field (elementary;
        // the multilinear case is in Press, Teukolsky, Vetterling & Flannery 2007,
        // Numerical Recipes 3rd ed., sec. 3.6 -- section from memory). Tolerance: the
        // round-off of a few dozen operations on values of order 10.
        let origin = [-0.4, 0.2, -1.0];
        let out = frame([5, 4, 6], 0.25, origin, affine);
        let view = FieldView::from_frame(&out).expect("valid");
        for s in 0..200 {
            let f = s as f64;
            let p = [
                origin[0] + (f * 0.618_034).fract() * 1.0,
                origin[1] + (f * 0.414_214).fract() * 0.75,
                origin[2] + (f * 0.732_051).fract() * 1.25,
            ];
            let got = view.sample(p);
            let want = affine(p);
            for c in 0..3 {
                assert!((got[c] - want[c]).abs() < 1e-12, "{p:?}: {got:?} vs {want:?}");
            }
        }
    }

    #[test]
    fn outside_the_grid_is_zero_and_the_faces_are_inside() {
        let origin = [0.0, 0.0, 0.0];
        let out = frame([3, 3, 3], 0.5, origin, |_| [1.0, 2.0, 3.0]);
        let view = FieldView::from_frame(&out).expect("valid");
        assert_eq!(view.sample([1.0, 1.0, 1.0]), [1.0, 2.0, 3.0]);
        assert_eq!(view.sample([0.0, 0.5, 1.0]), [1.0, 2.0, 3.0]);
        for p in [
            [-0.01, 0.5, 0.5],
            [1.01, 0.5, 0.5],
            [0.5, -0.01, 0.5],
            [0.5, 1.01, 0.5],
            [0.5, 0.5, -0.01],
            [0.5, 0.5, 1.01],
            [f64::NAN, 0.5, 0.5],
        ] {
            assert_eq!(view.sample(p), [0.0; 3], "{p:?}");
        }
        assert_eq!(view.at(3, 0, 0), [0.0; 3]);
    }

    #[test]
    fn a_moved_origin_moves_the_grid() {
        let out = frame([2, 2, 2], 1.0, [10.0, 20.0, 30.0], |p| [p[0], 0.0, 0.0]);
        let view = FieldView::from_frame(&out).expect("valid");
        assert_eq!(view.origin(), [10.0, 20.0, 30.0]);
        assert_eq!(view.sample([10.25, 20.5, 30.5]), [10.25, 0.0, 0.0]);
        assert_eq!(view.sample([0.5, 0.5, 0.5]), [0.0; 3]);
    }

    #[test]
    fn bad_headers_are_errors() {
        let good = frame([2, 2, 2], 0.5, [0.0; 3], |_| [0.0; 3]);
        assert!(FieldView::from_frame(&good).is_ok());
        let broken = |i: usize, v: f64| {
            let mut f = good.clone();
            f[i] = v;
            FieldView::from_frame(&f).expect_err("bad header")
        };
        assert!(broken(0, 0.0).contains("along x"));
        assert!(broken(1, 2.5).contains("along y"));
        assert!(broken(2, f64::NAN).contains("along z"));
        assert!(broken(0, 4.0).contains("4 x 2 x 2 samples, but the frame holds 8"));
        assert!(broken(3, 0.0).contains("spacing"));
        assert!(broken(3, -0.5).contains("spacing"));
        assert!(broken(4, 1.0).contains("(spacing, 0, 0)"));
        assert!(broken(7, f64::INFINITY).contains("origin"));
        assert!(
            FieldView::from_frame(&good[..good.len() - 1])
                .expect_err("ragged")
                .contains("multiple of 3")
        );
        assert!(
            FieldView::from_frame(&good[..9])
                .expect_err("no samples")
                .contains("at least one sample")
        );
        assert!(FieldView::from_frame(&good[..good.len() - 3]).is_err());
    }

    #[test]
    fn points_for_counts_the_header() {
        assert_eq!(points_for(8, 8, 8), 515);
        assert_eq!(points_for(1, 1, 1), 4);
        assert_eq!(points_for(usize::MAX, 2, 1), usize::MAX);
    }

    /// A sample that is not finite is refused when the frame is read, naming the sample (so
    /// that sampling never meets it).
    #[test]
    fn a_non_finite_sample_is_refused() {
        let mut f = frame([2, 2, 2], 1.0, [0.0; 3], |_| [1.0, 2.0, 3.0]);
        let at = 3 * HEADER_POINTS + 3 * 5 + 1;
        f[at] = f64::INFINITY;
        let e = FieldView::from_frame(&f).unwrap_err();
        assert_eq!(e, "field sample 5 has a non-finite velocity (inf)");
    }

    /// Lanes sample as the one-point call does, bit for bit, inside, on the faces, outside and
    /// for a non-finite point, whatever lane a point is in.
    #[test]
    fn a_pair_samples_both_frames_as_their_views_do() {
        // Two frames on one grid (one sample along y), points inside, on faces, on the corner
        // samples, outside and not finite: each lane of the pair is the bits of each view's own
        // sample.
        let (dims, h, o) = ([5, 1, 4], 0.25, [0.5, -0.5, 1.0]);
        let a = frame(dims, h, o, |p| [p[0].sin(), p[2] * p[0], (p[1] - p[2]).cos()]);
        let b = frame(dims, h, o, |p| [p[2] - p[0], (3.0 * p[0]).cos(), p[0] * p[0] * p[2]]);
        let (va, vb) = (
            FieldView::from_frame(&a).expect("valid"),
            FieldView::from_frame(&b).expect("valid"),
        );
        let mut pair = FieldPair::default();
        assert!(pair.fill(&va, &vb));
        assert!(pair.is_filled());
        let mut points = vec![
            [0.5, -0.5, 1.0],
            [1.5, -0.5, 1.75],
            [1.5, -0.5, 1.7500000001],
            [f64::NAN, -0.5, 1.2],
        ];
        points.extend([[0.4, -0.5, 1.2], [0.9, -0.4, 1.2], [1.6, -0.5, 1.2], [0.9, -0.5, 0.9]]);
        for k in 0..40 {
            let f = k as f64;
            points.push([
                0.5 + (f * 0.618_034).fract(),
                -0.5,
                1.0 + (f * 0.414_214).fract() * 0.75,
            ]);
        }
        for chunk in points.chunks_exact(8) {
            let lanes: [[f64; 8]; 3] = std::array::from_fn(|ax| std::array::from_fn(|l| chunk[l][ax]));
            let (ga, gb) = pair.sample_lanes(&lanes);
            let (wa, wb) = (va.sample_lanes(&lanes), vb.sample_lanes(&lanes));
            for ax in 0..3 {
                for l in 0..8 {
                    assert_eq!(ga[ax][l].to_bits(), wa[ax][l].to_bits(), "{:?}, axis {ax}", chunk[l]);
                    assert_eq!(gb[ax][l].to_bits(), wb[ax][l].to_bits(), "{:?}, axis {ax}", chunk[l]);
                }
            }
        }
        // A corner sample of each frame.
        let (ga, gb) = pair.sample_lanes(&[[0.5], [-0.5], [1.0]]);
        assert_eq!([ga[0][0], ga[1][0], ga[2][0]], va.at(0, 0, 0));
        assert_eq!([gb[0][0], gb[1][0], gb[2][0]], vb.at(0, 0, 0));
        // A grid that moved between the frames is not paired.
        let moved = frame(dims, h, [0.6, -0.5, 1.0], |p| p);
        assert!(!pair.fill(&va, &FieldView::from_frame(&moved).expect("valid")));
        assert!(!pair.is_filled());
    }

    #[test]
    fn lanes_sample_as_one_point_does() {
        let f = frame([4, 3, 2], 0.5, [-1.0, 0.0, 2.0], |p| {
            [p[0] * p[1], p[2] - p[0], (p[1] + 1.0).sqrt()]
        });
        let view = FieldView::from_frame(&f).expect("valid");
        let points: [[f64; 3]; 8] = [
            [-0.3, 0.2, 2.4],
            [0.5, 1.0, 2.5],
            [-1.0, 0.0, 2.0],
            [0.1, 0.7, 2.1],
            [0.6, 0.2, 2.2],
            [-1.2, 0.1, 2.1],
            [f64::NAN, 0.3, 2.2],
            [0.25, 0.25, 2.25],
        ];
        let lanes: [[f64; 8]; 3] = std::array::from_fn(|a| std::array::from_fn(|l| points[l][a]));
        let got = view.sample_lanes(&lanes);
        for (l, p) in points.iter().enumerate() {
            let one = view.sample(*p);
            for a in 0..3 {
                assert_eq!(got[a][l].to_bits(), one[a].to_bits(), "lane {l}, axis {a}");
            }
        }
        assert_eq!(view.sample(points[5]), [0.0; 3]);
        // The corner sample itself: f(-1, 0, 2).
        assert_eq!(view.sample(points[2]), [0.0, 3.0, 1.0]);
    }
}

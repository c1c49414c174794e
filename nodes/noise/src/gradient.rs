//! Gradient noise after Perlin, "Improving Noise" (SIGGRAPH 2002), seeded, with analytic
//! derivatives, in 3D and 4D.
//!
//! - Lattice: the integer points. At each one a pseudo-random gradient is picked from the
//!   midpoints of the cell's edges: in 3D the 12 vectors with one zero and two +-1
//!   components (the edges of a cube, Perlin 2002), in 4D the 32 vectors with one zero and
//!   three +-1 components (the edges of a tesseract, the same construction one dimension up;
//!   the set Gustavson 2005, "Simplex noise demystified", uses for 4D -- from memory).
//! - The noise at `p` blends each corner's linear ramp `g . (p - corner)` with the quintic
//!   fade `6t^5 - 15t^4 + 10t^3` per axis (tensor product). It is zero at every lattice
//!   point and twice continuously differentiable.
//! - Hashing: Perlin's chained permutation, `h = P[(P[(P[x] + y) mod 256] + z) mod 256]`,
//!   one more level in 4D; the gradient is `h mod 12` (3D) or `h mod 32` (4D). Perlin pads
//!   the 12 to 16 with four repeats to use `h mod 16`; taking `h mod 12` instead keeps the
//!   set at the 12 edges with a small bias: 256 = 21 * 12 + 4, so gradients 0-3 come from
//!   22 table values and the other 8 from 21. In 4D, 256 = 8 * 32 is uniform. The noise
//!   repeats every 256 lattice units along each axis.
//! - The table `P` is a permutation of 0..=255 shuffled from the seed by Fisher-Yates
//!   (Durstenfeld 1964, Algorithm 235; Knuth, TAOCP vol. 2, sec. 3.4.2, Algorithm P)
//!   driven by SplitMix64 (Steele, Lea & Flood 2014, "Fast splittable pseudorandom number
//!   generators", OOPSLA), with unbiased bounded draws by rejection.
//!
//! Range: at most [`NOISE3_BOUND`] = 1.03635 in 3D and [`NOISE4_BOUND`] = 1.53658 in 4D
//! in absolute value, not 1. Each corner's ramp is at most the sum of the two (3D) or
//! three (4D) largest components of `|p - corner|` (the best edge gradient), the fade
//! weights are non-negative and sum to one, so `|n(p)|` is at most the weighted sum of
//! those per-corner maxima; a table can place the best gradient at every corner of a
//! cell, so that bound is also the supremum over tables (a test builds such a table).
//! Over the cell it is 1 at the centre and 3.6 % more off-centre; the maximum was found
//! numerically in this project and is re-checked by a test. Measured, no published source.

/// Gradient noise is zero at lattice points and its magnitude never exceeds this in 3D
/// with the 12 edge gradients: the maximum over the unit cell of the per-corner bound
/// (module docs). Measured in this project by a pattern search (largest value
/// 1.036353811212 at (0.5, 0.64474, 0.48149) and its mirror images), rounded up; no
/// published source.
pub const NOISE3_BOUND: f64 = 1.036_353_811_3;

/// The same bound in 4D with the 32 edge gradients: 1.536582334047 at
/// (0.49193, 0.35641, 0.5, 0.48163) and mirror images, rounded up. Measured, no source.
pub const NOISE4_BOUND: f64 = 1.536_582_334_1;

/// The fade of Perlin 2002: `6t^5 - 15t^4 + 10t^3`. 0 at 0, 1 at 1, with zero first
/// and second derivatives at both ends.
pub fn fade(t: f64) -> f64 {
    t * t * t * (t * (t * 6.0 - 15.0) + 10.0)
}

/// d(fade)/dt = `30 t^2 (t - 1)^2`.
pub fn fade_derivative(t: f64) -> f64 {
    let s = t * (t - 1.0);
    30.0 * s * s
}

/// SplitMix64 (Steele, Lea & Flood 2014; constants of Vigna's reference `splitmix64.c`).
#[derive(Debug, Clone)]
pub struct SplitMix64 {
    state: u64,
}

/// The golden-ratio increment of SplitMix64.
const GAMMA: u64 = 0x9E37_79B9_7F4A_7C15;

fn mix64(mut z: u64) -> u64 {
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

impl SplitMix64 {
    /// A generator whose state starts at `seed`.
    pub fn new(seed: u64) -> SplitMix64 {
        SplitMix64 { state: seed }
    }

    /// The next 64 bits.
    pub fn next_u64(&mut self) -> u64 {
        self.state = self.state.wrapping_add(GAMMA);
        mix64(self.state)
    }

    /// A uniform integer in `0..bound` (`bound` > 0), without modulo bias: draws below
    /// `2^64 mod bound` are rejected, leaving a whole number of copies of `0..bound`.
    pub fn below(&mut self, bound: u64) -> u64 {
        let bound = bound.max(1);
        let reject_below = bound.wrapping_neg() % bound;
        loop {
            let r = self.next_u64();
            if r >= reject_below {
                return r % bound;
            }
        }
    }

    /// The `k`-th output (0-based) of `SplitMix64::new(seed)`, computed directly: the state
    /// after `k + 1` steps is `seed + (k + 1) GAMMA`.
    pub fn output_at(seed: u64, k: u64) -> u64 {
        mix64(seed.wrapping_add(k.wrapping_add(1).wrapping_mul(GAMMA)))
    }
}

/// Shuffles `values` in place: Fisher-Yates as Durstenfeld wrote it (swap each position
/// from the last down with a uniformly chosen position at or before it), so every
/// permutation is equally likely given uniform draws.
pub fn shuffle<T>(values: &mut [T], rng: &mut SplitMix64) {
    for i in (1..values.len()).rev() {
        let j = rng.below(i as u64 + 1) as usize;
        values.swap(i, j);
    }
}

/// One seeded gradient-noise function: a permutation table.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct NoiseTable {
    perm: [u8; 256],
}

impl NoiseTable {
    /// The table of channel `stream` of `seed`: the identity 0..=255 shuffled by a
    /// SplitMix64 seeded with output `stream` of a SplitMix64 seeded with `seed`. Different
    /// streams of one seed give independent-looking noise functions.
    pub fn from_seed(seed: u64, stream: u64) -> NoiseTable {
        let mut rng = SplitMix64::new(SplitMix64::output_at(seed, stream));
        let mut perm = [0u8; 256];
        for (i, p) in perm.iter_mut().enumerate() {
            *p = i as u8;
        }
        shuffle(&mut perm, &mut rng);
        NoiseTable { perm }
    }

    /// A table from a given permutation of 0..=255 (for reference tables).
    pub fn from_permutation(perm: [u8; 256]) -> Result<NoiseTable, String> {
        let mut seen = [false; 256];
        for &p in &perm {
            if std::mem::replace(&mut seen[p as usize], true) {
                return Err(format!("{p} appears twice: not a permutation of 0..=255"));
            }
        }
        Ok(NoiseTable { perm })
    }

    /// The permutation.
    pub fn permutation(&self) -> &[u8; 256] {
        &self.perm
    }

    /// Perlin's chained hash of a lattice point.
    fn hash<const N: usize>(&self, cell: [i64; N]) -> u8 {
        let mut h = 0usize;
        for c in cell {
            h = self.perm[(h + (c & 255) as usize) & 255] as usize;
        }
        h as u8
    }

    /// 3D noise at `p`; |value| <= [`NOISE3_BOUND`].
    pub fn noise3(&self, p: [f64; 3]) -> f64 {
        self.noise3_with_gradient(p).0
    }

    /// 3D noise and its exact gradient (d/dx, d/dy, d/dz).
    pub fn noise3_with_gradient(&self, p: [f64; 3]) -> (f64, [f64; 3]) {
        self.noise_with_gradient(p, |h| usize::from(h) % 12)
    }

    /// 4D noise at `p`; |value| <= [`NOISE4_BOUND`].
    pub fn noise4(&self, p: [f64; 4]) -> f64 {
        self.noise4_with_gradient(p).0
    }

    /// 4D noise and its exact gradient.
    pub fn noise4_with_gradient(&self, p: [f64; 4]) -> (f64, [f64; 4]) {
        self.noise_with_gradient(p, |h| usize::from(h) % 32)
    }

    /// The noise of dimension `N` (3 or 4) with gradient `edge_gradient(select(hash))`.
    pub(crate) fn noise_with_gradient<const N: usize>(
        &self,
        p: [f64; N],
        select: impl Fn(u8) -> usize,
    ) -> (f64, [f64; N]) {
        let mut cell = [0i64; N];
        let mut t = [0.0; N];
        let mut s = [0.0; N];
        let mut ds = [0.0; N];
        for a in 0..N {
            let f = p[a].floor();
            // Saturating for coordinates beyond i64 (their fraction is 0 there anyway).
            cell[a] = f as i64;
            t[a] = p[a] - f;
            s[a] = fade(t[a]);
            ds[a] = fade_derivative(t[a]);
        }
        let mut value = 0.0;
        let mut grad = [0.0; N];
        for corner in 0..(1usize << N) {
            let mut c = cell;
            let mut d = [0.0; N];
            let mut w = [0.0; N];
            let mut dw = [0.0; N];
            for a in 0..N {
                if corner >> a & 1 == 1 {
                    c[a] = c[a].wrapping_add(1);
                    d[a] = t[a] - 1.0;
                    w[a] = s[a];
                    dw[a] = ds[a];
                } else {
                    d[a] = t[a];
                    w[a] = 1.0 - s[a];
                    dw[a] = -ds[a];
                }
            }
            let g = edge_gradient::<N>(select(self.hash(c)));
            let ramp: f64 = (0..N).map(|a| g[a] * d[a]).sum();
            let weight: f64 = w.iter().product();
            value += weight * ramp;
            for a in 0..N {
                let others: f64 = (0..N).filter(|&b| b != a).map(|b| w[b]).product();
                grad[a] += dw[a] * others * ramp + weight * g[a];
            }
        }
        (value, grad)
    }
}

/// Edge gradient `index` of the N-cube: `N 2^(N-1)` vectors with one zero component and
/// the others +-1. Ordered as Perlin's 3D table: the zero sits on axis
/// `N - 1 - index / 2^(N-1)`; bit k of `index mod 2^(N-1)` negates the k-th other axis.
/// In 3D this gives (1,1,0), (-1,1,0), (1,-1,0), (-1,-1,0), (1,0,1), (-1,0,1), (1,0,-1),
/// (-1,0,-1), (0,1,1), (0,-1,1), (0,1,-1), (0,-1,-1): Perlin's `grad` for h = 0..11.
pub fn edge_gradient<const N: usize>(index: usize) -> [f64; N] {
    let half = 1usize << (N - 1);
    let zero = N - 1 - (index / half) % N;
    let signs = index % half;
    let mut g = [0.0; N];
    let mut k = 0;
    for (a, ga) in g.iter_mut().enumerate() {
        if a == zero {
            continue;
        }
        *ga = if signs >> k & 1 == 1 { -1.0 } else { 1.0 };
        k += 1;
    }
    g
}

/// `sum of gain^o` for `o` in `0..octaves`: the bound on a fractal sum of unit-bounded
/// octaves.
pub fn gain_sum(octaves: u32, gain: f64) -> f64 {
    (0..octaves).map(|o| gain.powi(o as i32)).sum()
}

/// Fractal sum of 3D octaves, lacunarity 2: `sum gain^o n(2^o p)`, with its gradient.
/// Scaling by a power of two is exact in floating point.
pub fn fractal3(table: &NoiseTable, p: [f64; 3], octaves: u32, gain: f64) -> (f64, [f64; 3]) {
    let mut value = 0.0;
    let mut grad = [0.0; 3];
    let mut amp = 1.0;
    let mut freq = 1.0;
    for _ in 0..octaves {
        let (v, g) = table.noise3_with_gradient(p.map(|x| x * freq));
        value += amp * v;
        for a in 0..3 {
            grad[a] += amp * freq * g[a];
        }
        amp *= gain;
        freq *= 2.0;
    }
    (value, grad)
}

/// Fractal sum of 4D octaves, lacunarity 2: `sum gain^o n(2^o p)`, with its gradient.
pub fn fractal4(table: &NoiseTable, p: [f64; 4], octaves: u32, gain: f64) -> (f64, [f64; 4]) {
    let mut value = 0.0;
    let mut grad = [0.0; 4];
    let mut amp = 1.0;
    let mut freq = 1.0;
    for _ in 0..octaves {
        let (v, g) = table.noise4_with_gradient(p.map(|x| x * freq));
        value += amp * v;
        for a in 0..4 {
            grad[a] += amp * freq * g[a];
        }
        amp *= gain;
        freq *= 2.0;
    }
    (value, grad)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Ken Perlin's permutation from the reference implementation of "Improving Noise"
    /// (Perlin 2002, `ImprovedNoise.java`), as reproduced by the Rosetta Code task
    /// "Perlin noise".
    const PERLIN_PERMUTATION: [u8; 256] = [
        151, 160, 137, 91, 90, 15, 131, 13, 201, 95, 96, 53, 194, 233, 7, 225, 140, 36, 103, 30, 69, 142, 8, 99, 37,
        240, 21, 10, 23, 190, 6, 148, 247, 120, 234, 75, 0, 26, 197, 62, 94, 252, 219, 203, 117, 35, 11, 32, 57, 177,
        33, 88, 237, 149, 56, 87, 174, 20, 125, 136, 171, 168, 68, 175, 74, 165, 71, 134, 139, 48, 27, 166, 77, 146,
        158, 231, 83, 111, 229, 122, 60, 211, 133, 230, 220, 105, 92, 41, 55, 46, 245, 40, 244, 102, 143, 54, 65, 25,
        63, 161, 1, 216, 80, 73, 209, 76, 132, 187, 208, 89, 18, 169, 200, 196, 135, 130, 116, 188, 159, 86, 164, 100,
        109, 198, 173, 186, 3, 64, 52, 217, 226, 250, 124, 123, 5, 202, 38, 147, 118, 126, 255, 82, 85, 212, 207, 206,
        59, 227, 47, 16, 58, 17, 182, 189, 28, 42, 223, 183, 170, 213, 119, 248, 152, 2, 44, 154, 163, 70, 221, 153,
        101, 155, 167, 43, 172, 9, 129, 22, 39, 253, 19, 98, 108, 110, 79, 113, 224, 232, 178, 185, 112, 104, 218, 246,
        97, 228, 251, 34, 242, 193, 238, 210, 144, 12, 191, 179, 162, 241, 81, 51, 145, 235, 249, 14, 239, 107, 49,
        192, 214, 31, 181, 199, 106, 157, 184, 84, 204, 176, 115, 121, 50, 45, 127, 4, 150, 254, 138, 236, 205, 93,
        222, 114, 67, 29, 24, 72, 243, 141, 128, 195, 78, 66, 215, 61, 156, 180,
    ];

    /// Perlin's `grad(hash, x, y, z)` takes `hash & 15`; values 12-15 repeat (1,1,0),
    /// (0,-1,1), (-1,1,0), (0,-1,-1), which are our gradients 0, 9, 1 and 11.
    fn perlin_select(h: u8) -> usize {
        match h & 15 {
            12 => 0,
            13 => 9,
            14 => 1,
            15 => 11,
            g => usize::from(g),
        }
    }

    #[test]
    #[allow(clippy::approx_constant)] // 3.14 is Perlin's test point, not pi.
    fn perlins_reference_table_gives_perlins_published_values() {
        // Perlin's reference implementation gives noise(3.14, 42, 7) = 0.13691995878400012
        // and noise(-4.2, 10, 6) = 0.14208000000000043 (Rosetta Code, "Perlin noise"; the
        // second value as reproduced by ports of the reference code). Our corner sum
        // differs from his nested lerps only in round-off.
        let table = NoiseTable::from_permutation(PERLIN_PERMUTATION).expect("a permutation");
        for (p, want) in [
            ([3.14, 42.0, 7.0], 0.136_919_958_784_000_12),
            ([-4.2, 10.0, 6.0], 0.142_080_000_000_000_43),
        ] {
            let (got, _) = table.noise_with_gradient(p, perlin_select);
            assert!((got - want).abs() < 1e-13, "noise{p:?} = {got}, Perlin gives {want}");
        }
    }

    #[test]
    fn the_3d_gradients_are_perlins_first_twelve() {
        // Perlin 2002, sec. 3 and the reference `grad`: h = 0..11 select x+y, -x+y, x-y,
        // -x-y, x+z, -x+z, x-z, -x-z, y+z, -y+z, y-z, -y-z.
        let want: [[f64; 3]; 12] = [
            [1.0, 1.0, 0.0],
            [-1.0, 1.0, 0.0],
            [1.0, -1.0, 0.0],
            [-1.0, -1.0, 0.0],
            [1.0, 0.0, 1.0],
            [-1.0, 0.0, 1.0],
            [1.0, 0.0, -1.0],
            [-1.0, 0.0, -1.0],
            [0.0, 1.0, 1.0],
            [0.0, -1.0, 1.0],
            [0.0, 1.0, -1.0],
            [0.0, -1.0, -1.0],
        ];
        for (i, w) in want.iter().enumerate() {
            assert_eq!(&edge_gradient::<3>(i), w, "gradient {i}");
        }
        // 4D: 32 distinct vectors, each with one zero and three +-1 (tesseract edges).
        let all: Vec<[f64; 4]> = (0..32).map(edge_gradient::<4>).collect();
        for (i, g) in all.iter().enumerate() {
            assert_eq!(g.iter().filter(|c| **c == 0.0).count(), 1, "{g:?}");
            assert_eq!(g.iter().filter(|c| c.abs() == 1.0).count(), 3, "{g:?}");
            assert!(!all[..i].contains(g), "{g:?} repeats");
        }
    }

    #[test]
    fn splitmix64_gives_the_reference_outputs() {
        // First outputs of Vigna's splitmix64.c seeded with 0, as published with the
        // xoshiro seeding code and reproduced by many ports.
        let mut r = SplitMix64::new(0);
        let want = [
            0xE220_A839_7B1D_CDAF,
            0x6E78_9E6A_A1B9_65F4,
            0x06C4_5D18_8009_454F,
            0xF88B_B8A8_724C_81EC,
        ];
        for (k, w) in want.iter().enumerate() {
            assert_eq!(r.next_u64(), *w, "output {k}");
            assert_eq!(SplitMix64::output_at(0, k as u64), *w, "output {k} computed directly");
        }
    }

    #[test]
    fn fisher_yates_makes_every_permutation_equally_likely() {
        // Knuth, TAOCP vol. 2, sec. 3.4.2, Algorithm P: all n! orders are equally likely.
        // 60000 shuffles of 3 items: each of the 6 orders has expected count 10000 and
        // binomial standard deviation sqrt(60000 (1/6)(5/6)) = 91.3; accept 5 sigma.
        let mut rng = SplitMix64::new(2002);
        let mut counts = std::collections::BTreeMap::new();
        for _ in 0..60_000 {
            let mut v = [0u8, 1, 2];
            shuffle(&mut v, &mut rng);
            *counts.entry(v).or_insert(0usize) += 1;
        }
        assert_eq!(counts.len(), 6);
        for (order, n) in counts {
            assert!((n as f64 - 10_000.0).abs() < 5.0 * 91.3, "{order:?}: {n}");
        }
    }

    #[test]
    fn bounded_draws_are_uniform_and_in_range() {
        // Bound 3 over 30000 draws: expected 10000 each, sd sqrt(30000 (1/3)(2/3)) = 81.6.
        let mut rng = SplitMix64::new(7);
        let mut counts = [0usize; 3];
        for _ in 0..30_000 {
            counts[rng.below(3) as usize] += 1;
        }
        for n in counts {
            assert!((n as f64 - 10_000.0).abs() < 5.0 * 81.6, "{counts:?}");
        }
        assert_eq!(rng.below(1), 0);
    }

    #[test]
    fn seeded_tables_are_permutations() {
        for seed in [0u64, 1, 42, u64::MAX] {
            for stream in 0..4 {
                let t = NoiseTable::from_seed(seed, stream);
                assert!(NoiseTable::from_permutation(*t.permutation()).is_ok());
            }
        }
        assert_ne!(NoiseTable::from_seed(5, 0), NoiseTable::from_seed(5, 1));
        assert!(NoiseTable::from_permutation([0; 256]).is_err());
    }
}

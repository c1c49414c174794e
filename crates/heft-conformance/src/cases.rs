//! What the checks share: vector arithmetic, the strand material and its stability estimate,
//! random initial states, ranges clipped to the node's declared ranges, and the proptest runner.

use std::cell::RefCell;
use std::cmp::Ordering;
use std::fmt::Debug;

use proptest::prelude::*;
use proptest::test_runner::{Config, RngAlgorithm, TestError, TestRng, TestRunner};

use crate::subject::{RunError, Setup, Subject};
use crate::{Budget, Failure, Property};

pub(crate) type V3 = [f64; 3];

/// True when `value` is above `limit` or either is NaN: the test a bound must pass to hold.
pub(crate) fn beyond(value: f64, limit: f64) -> bool {
    !matches!(value.partial_cmp(&limit), Some(Ordering::Less | Ordering::Equal))
}

pub(crate) fn add(a: V3, b: V3) -> V3 {
    [a[0] + b[0], a[1] + b[1], a[2] + b[2]]
}
pub(crate) fn sub(a: V3, b: V3) -> V3 {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}
pub(crate) fn scale(a: V3, s: f64) -> V3 {
    [a[0] * s, a[1] * s, a[2] * s]
}
pub(crate) fn dot(a: V3, b: V3) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}
pub(crate) fn norm(a: V3) -> f64 {
    dot(a, a).sqrt()
}

/// The unit vector at an azimuth (from +X towards +Y) and an elevation (towards +Z), radians.
pub(crate) fn direction(azimuth: f64, elevation: f64) -> V3 {
    [
        elevation.cos() * azimuth.cos(),
        elevation.cos() * azimuth.sin(),
        elevation.sin(),
    ]
}

/// SplitMix64 (Steele, Lea & Flood 2014, "Fast splittable pseudorandom number generators",
/// OOPSLA; the constants of Vigna's reference `splitmix64.c`): expands one proptest-drawn seed
/// into the per-particle jitter and velocities, so a case stays short to print.
#[derive(Debug, Clone)]
pub(crate) struct SplitMix(u64);

impl SplitMix {
    pub(crate) fn new(seed: u64) -> SplitMix {
        SplitMix(seed)
    }
    pub(crate) fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    }
    /// Uniform in [-1, 1).
    pub(crate) fn symmetric(&mut self) -> f64 {
        // 53 random bits to [0, 1), then to [-1, 1).
        let u = (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64;
        2.0 * u - 1.0
    }
    pub(crate) fn vector(&mut self) -> V3 {
        [self.symmetric(), self.symmetric(), self.symmetric()]
    }
}

/// The strand parameters the checks vary.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Material {
    pub count: i64,
    pub segments: i64,
    /// m
    pub length: f64,
    /// kg/m
    pub mass_per_length: f64,
    /// E A, N
    pub stretch: f64,
    /// E I, N m^2
    pub bending: f64,
}

impl Material {
    pub(crate) fn rest_segment(&self) -> f64 {
        self.length / self.segments as f64
    }

    /// The strand contract's mass: count * length * mass_per_length.
    pub(crate) fn total_mass(&self) -> f64 {
        self.count as f64 * self.length * self.mass_per_length
    }

    pub(crate) fn points(&self) -> usize {
        (self.count * (self.segments + 1)) as usize
    }

    /// An upper bound of the chain's highest angular frequency: lumped masses m = mass_per_length
    /// l0, springs k = E A / l0 and the bending stiffness E I / l0^3 of a second-difference
    /// bending energy; the Gershgorin circle theorem bounds the largest eigenvalue of M^-1 K by
    /// the largest row sum, (4 k + 16 E I / l0^3) / m (Golub & Van Loan 2013, Matrix
    /// Computations, 4th ed., theorem 7.2.1). For the chain without bending this is the
    /// textbook omega_max = 2 sqrt(k / m).
    pub(crate) fn omega_max(&self) -> f64 {
        let l0 = self.rest_segment();
        let m = self.mass_per_length * l0;
        let k = self.stretch / l0;
        ((4.0 * k + 16.0 * self.bending / l0.powi(3)) / m).sqrt()
    }

    /// Substeps per frame of duration `dt` that make h * omega_max at most `h_omega`.
    pub(crate) fn substeps(&self, dt: f64, h_omega: f64) -> i64 {
        ((dt * self.omega_max() / h_omega).ceil() as i64).max(1)
    }

    pub(crate) fn apply(&self, setup: Setup) -> Setup {
        setup
            .integer("count", self.count)
            .integer("segments", self.segments)
            .number("length", self.length)
            .number("mass_per_length", self.mass_per_length)
            .number("stretch_stiffness", self.stretch)
            .number("bending_stiffness", self.bending)
    }
}

/// Ranges the kit draws a material from, before clipping to the node's ranges.
#[derive(Debug, Clone)]
pub(crate) struct MaterialRanges {
    pub count: (i64, i64),
    pub segments: (i64, i64),
    pub length: (f64, f64),
    pub mass_per_length: (f64, f64),
    pub stretch: (f64, f64),
    pub bending: (f64, f64),
}

impl MaterialRanges {
    pub(crate) fn strategy(&self, subject: &Subject, property: Property) -> Result<BoxedStrategy<Material>, Failure> {
        let count = int_range(subject, property, "count", self.count)?;
        let segments = int_range(subject, property, "segments", self.segments)?;
        let length = num_range(subject, property, "length", self.length)?;
        let mpl = num_range(subject, property, "mass_per_length", self.mass_per_length)?;
        let stretch = num_range(subject, property, "stretch_stiffness", self.stretch)?;
        let bending = num_range(subject, property, "bending_stiffness", self.bending)?;
        Ok((count, segments, length, mpl, stretch, bending)
            .prop_map(
                |(count, segments, length, mass_per_length, stretch, bending)| Material {
                    count,
                    segments,
                    length,
                    mass_per_length,
                    stretch,
                    bending,
                },
            )
            .boxed())
    }
}

/// An integer range intersected with the node's; empty means the node cannot take the check.
pub(crate) fn int_range(
    subject: &Subject,
    property: Property,
    name: &str,
    want: (i64, i64),
) -> Result<std::ops::RangeInclusive<i64>, Failure> {
    let (min, max) = subject.integer_range(name).unwrap_or(want);
    let lo = want.0.max(min);
    let hi = want.1.min(max);
    if lo > hi {
        return Err(Failure::new(
            property,
            subject.name(),
            format!(
                "the check needs `{name}` in {} to {}, but the node accepts only {min} to {max}",
                want.0, want.1
            ),
        ));
    }
    Ok(lo..=hi)
}

/// A number range intersected with the node's, as a strategy.
pub(crate) fn num_range(
    subject: &Subject,
    property: Property,
    name: &str,
    want: (f64, f64),
) -> Result<BoxedStrategy<f64>, Failure> {
    let (min, max) = subject.number_range(name).unwrap_or(want);
    let lo = want.0.max(min);
    let hi = want.1.min(max);
    if beyond(lo, hi) {
        return Err(Failure::new(
            property,
            subject.name(),
            format!(
                "the check needs `{name}` in {} to {}, but the node accepts only {min} to {max}",
                want.0, want.1
            ),
        ));
    }
    Ok(if lo == hi { Just(lo).boxed() } else { (lo..=hi).boxed() })
}

/// A fixed value the check needs: an error naming the parameter if the node's range excludes it.
pub(crate) fn require_number(subject: &Subject, property: Property, name: &str, value: f64) -> Result<(), Failure> {
    match subject.number_range(name) {
        Some((min, max)) if value >= min && value <= max => Ok(()),
        Some((min, max)) => Err(Failure::new(
            property,
            subject.name(),
            format!("the check needs `{name}` = {value}, but the node accepts only {min} to {max}"),
        )),
        None => Ok(()),
    }
}

/// A preferred value moved into the node's range.
pub(crate) fn clamp_number(subject: &Subject, name: &str, value: f64) -> f64 {
    match subject.number_range(name) {
        Some((min, max)) => value.clamp(min, max.max(min)),
        None => value,
    }
}

/// A preferred integer moved into the node's range.
pub(crate) fn clamp_integer(subject: &Subject, name: &str, value: i64) -> i64 {
    match subject.integer_range(name) {
        Some((min, max)) => value.clamp(min, max.max(min)),
        None => value,
    }
}

/// Where the strands' particle 0 sits: placement `single` for one strand, `line` (if offered)
/// for several; returns the setup and the pin of each strand relative to the anchor origin (the
/// kit's anchors are not rotated). `start_offset` is set to zero when the node has it.
pub(crate) fn place(subject: &Subject, setup: Setup, count: i64) -> (Setup, Vec<V3>) {
    let mut setup = setup;
    if subject.vec3_range("start_offset").is_some() {
        setup = setup.vec3("start_offset", [0.0; 3]);
    }
    let mut spacing = 0.0;
    if subject.param("placement").is_some() {
        if count > 1 && subject.offers("placement", "line") {
            spacing = clamp_number(subject, "spacing", 0.05);
            setup = setup.choice("placement", "line");
            if subject.number_range("spacing").is_some() {
                setup = setup.number("spacing", spacing);
            }
        } else if subject.offers("placement", "single") {
            setup = setup.choice("placement", "single");
        }
    }
    let pins = (0..count)
        .map(|s| [(s as f64 - (count as f64 - 1.0) / 2.0) * spacing, 0.0, 0.0])
        .collect();
    (setup, pins)
}

/// A random initial state: each strand laid along one direction from its origin at rest length,
/// each particle moved by up to `jitter` rest segments along each axis, velocities a common
/// drift plus up to `speed` along each axis per particle.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct StateSpec {
    pub azimuth: f64,
    pub elevation: f64,
    /// Fraction of a rest segment (below 0.25, so no two neighbours can meet).
    pub jitter: f64,
    /// m/s
    pub speed: f64,
    /// m/s
    pub drift: V3,
    pub seed: u64,
}

impl StateSpec {
    pub(crate) fn strategy(jitter: f64, speed: (f64, f64), drift: f64) -> BoxedStrategy<StateSpec> {
        (
            -std::f64::consts::PI..std::f64::consts::PI,
            -1.5f64..1.5,
            0.0..=jitter,
            speed.0..=speed.1,
            [-drift..=drift, -drift..=drift, -drift..=drift],
            any::<u64>(),
        )
            .prop_map(|(azimuth, elevation, jitter, speed, drift, seed)| StateSpec {
                azimuth,
                elevation,
                jitter,
                speed,
                drift,
                seed,
            })
            .boxed()
    }

    /// Positions and velocities, strand-major; with `pinned` each strand's particle 0 sits on its
    /// origin at rest.
    pub(crate) fn build(&self, material: &Material, origins: &[V3], pinned: bool) -> (Vec<V3>, Vec<V3>) {
        let mut rng = SplitMix::new(self.seed);
        let dir = direction(self.azimuth, self.elevation);
        let l0 = material.rest_segment();
        let per = (material.segments + 1) as usize;
        let mut x = Vec::with_capacity(origins.len() * per);
        let mut v = Vec::with_capacity(origins.len() * per);
        for origin in origins {
            for i in 0..per {
                let jitter = scale(rng.vector(), self.jitter * l0);
                let kick = scale(rng.vector(), self.speed);
                if pinned && i == 0 {
                    x.push(*origin);
                    v.push([0.0; 3]);
                } else {
                    x.push(add(add(*origin, scale(dir, l0 * i as f64)), jitter));
                    v.push(add(self.drift, kick));
                }
            }
        }
        (x, v)
    }

    pub(crate) fn describe(&self) -> String {
        format!(
            "initial state: laid along azimuth {} rad, elevation {} rad, jitter {} of a segment, per-particle speed \
             up to {} m/s per axis, drift ({}, {}, {}) m/s, seed {}",
            self.azimuth,
            self.elevation,
            self.jitter,
            self.speed,
            self.drift[0],
            self.drift[1],
            self.drift[2],
            self.seed
        )
    }
}

/// The fixed anchor of the kit's pinned runs: at (0, 0, 1) m, not rotated.
pub(crate) const ANCHOR: [f64; 7] = [0.0, 0.0, 1.0, 0.0, 0.0, 0.0, 1.0];

/// How one case of a property ended.
#[derive(Debug, Clone)]
pub(crate) enum Verdict {
    /// The property does not hold: the message, the frame number, and the property when it is
    /// not the one being checked (the determinism check also reports finiteness).
    Fail {
        message: String,
        frame: Option<i64>,
        property: Option<Property>,
    },
    /// The case cannot be run on this node (outside its ranges); draw another.
    Reject(String),
}

impl Verdict {
    pub(crate) fn fail(message: impl Into<String>) -> Verdict {
        Verdict::Fail {
            message: message.into(),
            frame: None,
            property: None,
        }
    }
    pub(crate) fn at(message: impl Into<String>, frame: i64) -> Verdict {
        Verdict::Fail {
            message: message.into(),
            frame: Some(frame),
            property: None,
        }
    }
    /// The same verdict, reported under another property.
    pub(crate) fn about(self, p: Property) -> Verdict {
        match self {
            Verdict::Fail { message, frame, .. } => Verdict::Fail {
                message,
                frame,
                property: Some(p),
            },
            r => r,
        }
    }
    /// A run error in a case the node should have run.
    pub(crate) fn from_run(e: &RunError, why: &str) -> Verdict {
        match e {
            RunError::Setup(m) => Verdict::Reject(m.clone()),
            e => Verdict::fail(format!("{e} ({why})")),
        }
    }
}

/// Runs a property's cases through proptest and turns the smallest failure into a [`Failure`].
/// `case` builds the setup of a case (or rejects it); `test` judges it.
pub(crate) fn run_property<S>(
    subject: &Subject,
    property: Property,
    budget: &Budget,
    cases: u32,
    salt: u64,
    strategy: S,
    test: impl Fn(&S::Value) -> Result<(), (Verdict, String)>,
) -> Result<(), Failure>
where
    S: Strategy,
    S::Value: Clone + Debug,
{
    let config = Config {
        cases,
        max_local_rejects: cases.saturating_mul(64).max(64),
        max_global_rejects: cases.saturating_mul(64).max(64),
        max_shrink_iters: budget.shrink_iters,
        failure_persistence: None,
        fork: false,
        timeout: 0,
        max_shrink_time: 0,
        verbose: 0,
        ..Config::default()
    };
    let mut seed = [0u8; 32];
    let mut rng = SplitMix::new(budget.seed ^ salt);
    for chunk in seed.chunks_mut(8) {
        chunk.copy_from_slice(&rng.next_u64().to_le_bytes());
    }
    let mut runner = TestRunner::new_with_rng(config, TestRng::from_seed(RngAlgorithm::ChaCha, &seed));
    type Failed = (String, Option<i64>, Option<Property>, String);
    let last_fail: RefCell<Option<Failed>> = RefCell::new(None);
    let last_reject: RefCell<Option<String>> = RefCell::new(None);
    let result = runner.run(&strategy, |value| match test(&value) {
        Ok(()) => Ok(()),
        Err((Verdict::Reject(why), _)) => {
            *last_reject.borrow_mut() = Some(why.clone());
            Err(TestCaseError::reject(why))
        }
        Err((
            Verdict::Fail {
                message,
                frame,
                property: p,
            },
            case,
        )) => {
            *last_fail.borrow_mut() = Some((message.clone(), frame, p, case));
            Err(TestCaseError::fail(message))
        }
    });
    match result {
        Ok(()) => Ok(()),
        Err(TestError::Fail(reason, _)) => {
            let (message, frame, p, case) = last_fail
                .into_inner()
                .unwrap_or_else(|| (reason.message().to_owned(), None, None, String::new()));
            let mut f = Failure::new(p.unwrap_or(property), subject.name(), message);
            f.frame = frame;
            f.case = (!case.is_empty()).then_some(case);
            Err(f)
        }
        Err(TestError::Abort(reason)) => Err(Failure::new(
            property,
            subject.name(),
            format!(
                "the kit could not build enough cases this node accepts ({}); the last refusal: {}",
                reason.message(),
                last_reject.into_inner().unwrap_or_default()
            ),
        )),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn splitmix_matches_the_reference_stream() {
        // Vigna's reference splitmix64.c seeded with 1477776061723855037: the first three of the
        // 50 outputs listed in the `reference` test of the rand_xoshiro crate (rust-random/rngs,
        // rand_xoshiro/src/splitmix64.rs), "produced with the reference implementation".
        let mut r = SplitMix::new(1_477_776_061_723_855_037);
        let want: [u64; 3] = [
            1_985_237_415_132_408_290,
            2_979_275_885_539_914_483,
            13_511_426_838_097_143_398,
        ];
        for w in want {
            assert_eq!(r.next_u64(), w);
        }
    }

    #[test]
    fn symmetric_draws_are_uniform_on_minus_one_to_one() {
        // For U uniform on [-1, 1): mean 0, variance 1/3. With 1e5 draws the standard error of
        // the mean is sqrt(1/3 / 1e5) = 1.8e-3; 5 standard errors is 9.1e-3.
        let mut r = SplitMix::new(42);
        let n = 100_000;
        let xs: Vec<f64> = (0..n).map(|_| r.symmetric()).collect();
        assert!(xs.iter().all(|x| (-1.0..1.0).contains(x)));
        let mean = xs.iter().sum::<f64>() / n as f64;
        let var = xs.iter().map(|x| (x - mean) * (x - mean)).sum::<f64>() / n as f64;
        assert!(mean.abs() < 9.1e-3, "mean {mean}");
        assert!((var - 1.0 / 3.0).abs() < 0.01, "variance {var}");
    }

    #[test]
    fn omega_max_is_the_chain_bound_without_bending() {
        // Chain of springs k between masses m: the highest mode of the infinite chain has
        // omega = 2 sqrt(k / m) (the dispersion relation omega = 2 sqrt(k/m) |sin(q a / 2)|,
        // Kittel 2005, Introduction to Solid State Physics, 8th ed., chapter 4, eq. 9).
        let m = Material {
            count: 1,
            segments: 10,
            length: 0.5,
            mass_per_length: 0.1,
            stretch: 100.0,
            bending: 0.0,
        };
        let k: f64 = 100.0 / 0.05;
        let mass = 0.1 * 0.05;
        assert!((m.omega_max() - 2.0 * (k / mass).sqrt()).abs() < 1e-9);
        // 1/24 s at h omega <= 0.5: omega = 1264.9 rad/s, 105.4 -> 106 substeps.
        assert_eq!(m.substeps(1.0 / 24.0, 0.5), 106);
    }

    #[test]
    fn states_keep_pinned_ends_and_jitter_within_bounds() {
        let m = Material {
            count: 2,
            segments: 4,
            length: 0.4,
            mass_per_length: 0.1,
            stretch: 100.0,
            bending: 0.0,
        };
        let s = StateSpec {
            azimuth: 0.3,
            elevation: -0.2,
            jitter: 0.2,
            speed: 1.0,
            drift: [0.5, 0.0, 0.0],
            seed: 9,
        };
        let origins = [[0.0, 0.0, 1.0], [0.1, 0.0, 1.0]];
        let (x, v) = s.build(&m, &origins, true);
        assert_eq!(x.len(), 10);
        assert_eq!((x[0], v[0]), (origins[0], [0.0; 3]));
        assert_eq!((x[5], v[5]), (origins[1], [0.0; 3]));
        let dir = direction(0.3, -0.2);
        for i in 1..5 {
            let ideal = add(origins[0], scale(dir, 0.1 * i as f64));
            let off = sub(x[i], ideal);
            assert!(off.iter().all(|c| c.abs() <= 0.2 * 0.1), "{off:?}");
            assert!(sub(v[i], [0.5, 0.0, 0.0]).iter().all(|c| c.abs() <= 1.0));
        }
    }
}

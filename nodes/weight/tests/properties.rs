//! Property tests of `weight.apparent` (bounded strategies only).

use heft_node_sdk::{Io, Node, ParamValue, Params, Series, Timeline};
use heft_weight::Apparent;
use proptest::prelude::*;

proptest! {
    #![proptest_config(ProptestConfig::with_cases(256))]

    /// In contact with a linearly varying vertical acceleration a_z = b + c tau (tau from the
    /// first frame), the impulse above body weight is m * delta v = m (b T + c T^2 / 2) over
    /// T = (frames - 1) dt (impulse-momentum theorem; the trapezoid rule is exact for a
    /// straight line), and body_weights = 1 + a_z / g at every frame (F = m (g + a_z)).
    #[test]
    fn impulse_is_mass_times_velocity_change_for_linear_acceleration(
        mass in 20.0f64..200.0,
        g in 1.0f64..20.0,
        b in -5.0f64..30.0,
        c in -50.0f64..50.0,
        fps in prop::sample::select(vec![24u32, 60, 240, 1000]),
        start_frame in -50i64..50,
        frames in 2usize..200,
    ) {
        let tl = Timeline { start_frame, frame_count: frames as u64, rate_num: fps, rate_den: 1 };
        let tau = |i: usize| tl.time(i) - tl.time(0);
        let acc: Vec<f64> = (0..frames).flat_map(|i| [0.0, 0.0, b + c * tau(i)]).collect();
        let contact = vec![1.0; frames];
        let spec = Apparent::spec();
        let params = Params::defaults(&spec)
            .and_then(|p| p.with("mass", ParamValue::Number(mass)))
            .and_then(|p| p.with("gravity", ParamValue::Number(g)))
            .map_err(|e| TestCaseError::fail(e.0))?;
        let (mut f, mut bw, mut gv) = (vec![0.0; frames], vec![0.0; frames], vec![0.0; 3 * frames]);
        let mut io = Io::new(
            tl,
            &spec,
            vec![Series::new(&acc, 3), Series::new(&contact, 1), Series::new(&[], 7)],
            vec![&mut f[..], &mut bw[..], &mut gv[..]],
            vec![1, 1, 3],
        );
        Apparent::evaluate(&params, &mut io).map_err(|e| TestCaseError::fail(e.0))?;
        let t = tau(frames - 1);
        let want = mass * (b * t + 0.5 * c * t * t);
        let got = io.summaries()[2];
        prop_assert!((got - want).abs() <= 1e-9 * (1.0 + want.abs()), "{} vs {}", got, want);
        for (i, v) in bw.iter().enumerate() {
            let expect = 1.0 + (b + c * tau(i)) / g;
            prop_assert!((v - expect).abs() <= 1e-12 * (1.0 + expect.abs()), "frame {}: {} vs {}", i, v, expect);
        }
    }
}

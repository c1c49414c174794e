//! The motion audit on a production-size character: 60 joints (the 21 of a humanoid and three
//! 13-joint chains) over a 10 s clip at 30 fps (300 frames): the centre of mass and the arms
//! from the skeleton, then every check. The target: under 100 ms.
//!
//! Run: `cargo bench -p heft-benches --bench audit`. The second group is the audit's share:
//! the analysis alone against the centre of mass alone, a ratio measured in one run.

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use heft_audit::body::{BodyModel, Mapping, arms_centre, centre_of_mass};
use heft_audit::{Chain, Limits, Motion, audit};

const FRAMES: usize = 300;
const RATE: f64 = 30.0;

/// Joint names and their positions at every frame: a humanoid jumping (a parabola between two
/// stands) and three chains hanging from the head.
fn skeleton() -> (Vec<String>, Vec<Vec<[f64; 3]>>) {
    let body = [
        ("neck", [0.0, 0.0, 1.45]),
        ("head", [0.0, 0.0, 1.55]),
        ("head_top", [0.0, 0.0, 1.72]),
        ("upper_arm_l", [0.0, 0.18, 1.40]),
        ("forearm_l", [0.0, 0.18, 1.12]),
        ("hand_l", [0.0, 0.18, 0.87]),
        ("upper_arm_r", [0.0, -0.18, 1.40]),
        ("forearm_r", [0.0, -0.18, 1.12]),
        ("hand_r", [0.0, -0.18, 0.87]),
        ("thigh_l", [0.0, 0.09, 0.95]),
        ("shin_l", [0.0, 0.09, 0.52]),
        ("foot_l", [0.0, 0.09, 0.08]),
        ("toe_l", [0.14, 0.09, 0.02]),
        ("thigh_r", [0.0, -0.09, 0.95]),
        ("shin_r", [0.0, -0.09, 0.52]),
        ("foot_r", [0.0, -0.09, 0.08]),
        ("toe_r", [0.14, -0.09, 0.02]),
        ("hips", [0.0, 0.0, 0.95]),
        ("spine", [0.0, 0.0, 1.10]),
        ("chest", [0.0, 0.0, 1.30]),
        ("clavicle_l", [0.0, 0.05, 1.42]),
    ];
    let mut names: Vec<String> = body.iter().map(|(n, _)| n.to_string()).collect();
    for c in 0..3 {
        for k in 0..13 {
            names.push(format!("strap{c}_{k}"));
        }
    }
    let lift = |f: usize| {
        let t = f as f64 / RATE;
        let tau = t - 4.0;
        if (0.0..0.5).contains(&tau) {
            2.45 * tau - 4.903 * tau * tau
        } else {
            0.0
        }
    };
    let frames = (0..FRAMES)
        .map(|f| {
            let up = lift(f);
            let mut p: Vec<[f64; 3]> = body.iter().map(|(_, q)| [q[0], q[1], q[2] + up]).collect();
            let head = p[1];
            for c in 0..3 {
                let phase = (f as f64 * 0.1 + c as f64).sin() * 0.3;
                for k in 0..13 {
                    let r = 0.03 * (k + 1) as f64;
                    p.push([
                        head[0] - r * phase.sin(),
                        head[1] + 0.02 * c as f64,
                        head[2] - r * phase.cos(),
                    ]);
                }
            }
            p
        })
        .collect();
    (names, frames)
}

fn analyse(names: &[String], frames: &[Vec<[f64; 3]>]) -> usize {
    let mapping = Mapping::of(names, &[]);
    let model = BodyModel::DeLevaMale;
    let com: Vec<[f64; 3]> = frames
        .iter()
        .map(|p| centre_of_mass(model, &mapping, |j| p[j]).unwrap_or([0.0; 3]))
        .collect();
    let arms: Vec<([f64; 3], f64)> = frames
        .iter()
        .filter_map(|p| arms_centre(model, &mapping, |j| p[j]))
        .collect();
    let fraction = arms.first().map_or(0.0, |a| a.1);
    let contact: Vec<bool> = frames.iter().map(|p| p[12][2] < 0.05).collect();
    let chains = (0..3)
        .map(|c| Chain {
            name: format!("strap{c}"),
            anchor: frames.iter().map(|p| p[1]).collect(),
            points: frames
                .iter()
                .map(|p| p[21 + 13 * c..21 + 13 * (c + 1)].to_vec())
                .collect(),
        })
        .collect();
    let m = Motion {
        start_frame: 1,
        rate: RATE,
        com,
        contact,
        mass: 60.0,
        arms: Some((arms.into_iter().map(|a| a.0).collect(), fraction)),
        chains,
        feet: vec![
            ("toe_l".into(), frames.iter().map(|p| p[12]).collect()),
            ("toe_r".into(), frames.iter().map(|p| p[16]).collect()),
        ],
    };
    audit(&m, &Limits::default()).findings.len()
}

fn bench(c: &mut Criterion) {
    let (names, frames) = skeleton();
    let mut g = c.benchmark_group("audit of 60 joints x 300 frames");
    g.bench_function("centre of mass, arms, chains, feet and every check", |b| {
        b.iter(|| black_box(analyse(black_box(&names), black_box(&frames))))
    });
    g.bench_function("centre of mass alone", |b| {
        let mapping = Mapping::of(&names, &[]);
        b.iter(|| {
            let s: f64 = frames
                .iter()
                .map(|p| centre_of_mass(BodyModel::DeLevaMale, &mapping, |j| p[j]).map_or(0.0, |c| c[2]))
                .sum();
            black_box(s)
        })
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);

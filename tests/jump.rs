//! The jump physics through the real plugins: the planner's trajectory, its apparent weight
//! and the force-plate analysis of that weight curve, checked against each other and against
//! closed-form results.

use heft_integration_tests::{heft, read_csv, registry, workspace_root};
use heft_runtime::check::{Overrides, Plan};
use heft_runtime::eval::{Evaluation, evaluate};
use heft_runtime::{check, plan_text, read_graph};

const G: f64 = 9.80665; // standard gravity, exact by definition (3rd CGPM, 1901)

fn summary(plan: &Plan, e: &Evaluation, node: &str, name: &str) -> f64 {
    let i = plan.nodes.iter().position(|n| n.name == node).expect("node");
    let k = plan.nodes[i]
        .ty
        .spec()
        .summaries
        .iter()
        .position(|s| s.name == name)
        .expect("summary");
    e.summaries[i][k]
}

/// Odile's jump at 1000 Hz: planner -> apparent weight -> force-plate analysis.
fn round_trip(threshold_newtons: f64, arms: bool) -> (Plan, Evaluation) {
    let swing = if arms { "160 deg" } else { "-40 deg" };
    let text = format!(
        "format 1\nrate 1000 fps\nframes 0..3499\n\
         odile = trajectory.jump\n    body_mass = 58 kg\n    plan_by = takeoff_speed\n    takeoff_speed = 2.4 m/s\n\
         \x20   landing_depth = 20 cm\n    takeoff_frame = 2000\n    arm_swing_to = {swing}\n\
         weight = weight.apparent\n    mass = 58 kg\n\
         plate = forceplate.analyse\n    flight_threshold = {threshold_newtons} N\n\
         odile.com_acceleration -> weight.com_acceleration\nodile.contact -> weight.contact\n\
         weight.force -> plate.force\n"
    );
    let plan = plan_text("round_trip.graph", &text, &registry(), &Overrides::default()).expect("checks");
    let e = evaluate(&plan, Some(2)).expect("evaluates");
    (plan, e)
}

/// The planner's trajectory, turned into a ground reaction force by F = m (g + a_z) and
/// analysed as a force-plate record by the impulse-momentum method (Linthorne 2001, Am. J.
/// Phys. 69(11):1198-1204), recovers the planned take-off velocity and jump height within
/// 0.5 percent and the flight time within one sample. The plate threshold is 2 N: the record
/// has no noise, and a threshold crossed before the true take-off overstates the take-off
/// velocity by g times the time between crossing and take-off (see the next test).
#[test]
fn planner_weight_and_force_plate_analysis_agree() {
    for arms in [true, false] {
        let (plan, e) = round_trip(2.0, arms);
        let v_plan = summary(&plan, &e, "odile", "takeoff_speed");
        let h_plan = summary(&plan, &e, "odile", "apex_height") - summary(&plan, &e, "odile", "takeoff_height");
        let t_plan = summary(&plan, &e, "odile", "flight_time");
        let v = summary(&plan, &e, "plate", "takeoff_velocity");
        let h_v = summary(&plan, &e, "plate", "height_from_velocity");
        let h_t = summary(&plan, &e, "plate", "height_from_flight_time");
        let t = summary(&plan, &e, "plate", "flight_time");
        assert!(
            ((v - v_plan) / v_plan).abs() < 0.005,
            "arms {arms}: take-off velocity {v} vs planned {v_plan}"
        );
        assert!(
            ((h_v - h_plan) / h_plan).abs() < 0.005,
            "arms {arms}: height {h_v} vs planned {h_plan}"
        );
        assert!(
            (t - t_plan).abs() <= 0.001,
            "arms {arms}: flight time {t} vs planned {t_plan}"
        );
        // Flight-time method h = g t^2 / 8 on the planned flight (closed form for a
        // ballistic flight that lands at take-off height).
        assert!(((h_t - G * t_plan * t_plan / 8.0) / h_t).abs() < 0.01, "{h_t}");
        assert!((summary(&plan, &e, "plate", "body_mass") - 58.0).abs() < 1e-9);
    }
}

/// Passive motion from a force plate: the planner's jump written as a 1000 Hz plate record
/// (F = m (g + a_z)) and read back by forceplate.analyse gives a `centre_of_mass` transform
/// that follows the planned centre of mass (from its standing height) within 2 mm over the
/// whole record, the flight as the exact parabola from the take-off. Measured: 0.12 mm with
/// the arms swung, 0.022 mm without (the trapezoid rule at 1000 Hz and the 2 N threshold, the
/// force falling steeply to zero at take-off).
#[test]
fn a_plate_record_of_the_planned_jump_gives_back_its_centre_of_mass() {
    for arms in [true, false] {
        let (plan, e) = round_trip(2.0, arms);
        let node = |n: &str| plan.nodes.iter().position(|x| x.name == n).expect("node");
        let out = |n: usize, p: &str| {
            plan.nodes[n]
                .ty
                .spec()
                .outputs
                .iter()
                .position(|o| o.name == p)
                .expect("output")
        };
        let (o, p) = (node("odile"), node("plate"));
        let planned = &e.values[o][out(o, "com_position")];
        let read = &e.values[p][out(p, "centre_of_mass")];
        let frames = planned.len() / 3;
        let worst = (0..frames)
            .map(|i| ((read[7 * i + 2] - read[2]) - (planned[3 * i + 2] - planned[2])).abs())
            .fold(0.0, f64::max);
        eprintln!("arms {arms}: plate centre of mass off the plan by at most {worst:e} m");
        assert!(worst < 2e-3, "arms {arms}: {worst} m");
    }
}

/// With the common 20 N threshold the detected take-off comes before the true one, while
/// the body already falls freely; the analysed take-off velocity is then larger by
/// g (t_true - t_detected) (free fall between the two instants).
#[test]
fn a_force_threshold_shifts_take_off_velocity_by_g_times_the_lead() {
    let (plan, e) = round_trip(20.0, true);
    let lead = summary(&plan, &e, "odile", "takeoff_time") - summary(&plan, &e, "plate", "takeoff_time");
    assert!(lead > 0.0 && lead < 0.005, "detected {lead} s early");
    let excess = summary(&plan, &e, "plate", "takeoff_velocity") - summary(&plan, &e, "odile", "takeoff_speed");
    assert!(
        ((excess - G * lead) / (G * lead)).abs() < 0.1,
        "excess {excess} m/s for a lead of {lead} s"
    );
}

/// The apparent weight over the whole jump: quiet standing weighs m g, the flight weighs
/// nothing, and the landing peaks at a few body weights (drop-landing studies report roughly
/// 2 to 6 BW for small heights: common practice, from memory).
#[test]
fn weight_curve_standing_flight_and_landing() {
    let (plan, e) = round_trip(20.0, true);
    let w = plan.nodes.iter().position(|n| n.name == "weight").expect("node");
    let force = &e.values[w][0];
    assert_eq!(force[100], 58.0 * G, "quiet standing weighs m g");
    let to = (summary(&plan, &e, "odile", "takeoff_time") * 1000.0).round() as usize;
    let td = (summary(&plan, &e, "odile", "touchdown_time") * 1000.0).floor() as usize;
    assert!(
        force[to + 1..td].iter().all(|&f| f == 0.0),
        "weightless for the whole flight"
    );
    let peak = summary(&plan, &e, "weight", "peak_body_weights");
    assert!((2.0..=6.0).contains(&peak), "landing peak {peak} BW");
    // Impulse over the contact before take-off equals m v_takeoff (impulse-momentum theorem);
    // the whole record, rest to rest, has no net impulse (within the trapezoid rule's error).
    let impulse = summary(&plan, &e, "weight", "impulse_above_weight");
    assert!(
        impulse.abs() < 0.01 * 58.0 * summary(&plan, &e, "odile", "takeoff_speed"),
        "{impulse} N s"
    );
}

/// The demo graphs: arms swung with the push jump higher than arms swung after take-off,
/// and the late swing leaves the centre-of-mass path an exact parabola in flight.
#[test]
fn arms_with_the_push_jump_higher_than_arms_swung_late() {
    let mut rise = Vec::new();
    for name in ["jump", "jump_late_arms"] {
        let out = tempfile::tempdir().expect("temp dir");
        let o = heft()
            .args(["run", &format!("graphs/{name}.graph"), "--out"])
            .arg(out.path())
            .output()
            .expect("runs");
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        assert!(
            o.stderr.is_empty(),
            "no warnings: {}",
            String::from_utf8_lossy(&o.stderr)
        );
        let s: serde_json::Value =
            serde_json::from_slice(&std::fs::read(out.path().join("run.json")).expect("run.json")).expect("JSON");
        let get = |n: &str| {
            s["summaries"]
                .as_array()
                .expect("summaries")
                .iter()
                .find(|x| x["name"] == n)
                .expect("summary")["value"]
                .as_f64()
                .expect("number")
        };
        rise.push(get("rise"));
        let (t_to, t_td) = (get("takeoff_time"), get("touchdown_time"));
        let (z0, v0) = (get("takeoff_height"), get("takeoff_speed"));
        let (_, com) = read_csv(&out.path().join("com.csv"));
        let mut flight_frames = 0;
        for row in com.iter().filter(|r| r[1] > t_to && r[1] < t_td) {
            let tau = row[1] - t_to;
            let z = z0 + v0 * tau - 0.5 * G * tau * tau;
            assert!(
                ((row[4] - z) / z).abs() < 1e-9,
                "{name} at {} s: {} vs {z}",
                row[1],
                row[4]
            );
            flight_frames += 1;
        }
        assert!(flight_frames >= 10, "{name}: {flight_frames} frames in flight");
        let (_, contact) = read_csv(&out.path().join("odile.contact.csv"));
        assert!(contact.iter().all(|r| (r[2] == 0.0) == (r[1] > t_to && r[1] < t_td)));
    }
    assert!(
        rise[0] > rise[1] * 1.1,
        "with the push {} m, late {} m",
        rise[0],
        rise[1]
    );
}

/// The demo force-plate record is reproducible: graphs/plate_record.graph writes exactly
/// data/odile_plate.csv, and graphs/plate_analysis.graph analyses it.
#[test]
fn demo_plate_record_is_reproducible_and_analysed() {
    let out = tempfile::tempdir().expect("temp dir");
    let o = heft()
        .args(["run", "graphs/plate_record.graph", "--quiet", "--out"])
        .arg(out.path())
        .output()
        .expect("runs");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let fresh = std::fs::read(out.path().join("odile_plate.csv")).expect("written");
    let shipped = std::fs::read(workspace_root().join("data/odile_plate.csv")).expect("shipped");
    assert!(
        fresh == shipped,
        "data/odile_plate.csv differs from what graphs/plate_record.graph writes"
    );

    let (graph, problems) = read_graph(&workspace_root().join("graphs/plate_analysis.graph")).expect("readable");
    let plan = check::check(&graph, problems, &registry(), &Overrides::default()).expect("checks");
    let e = evaluate(&plan, None).expect("evaluates");
    let mass = summary(&plan, &e, "analysis", "body_mass");
    assert!((mass - 58.0).abs() < 1e-9, "{mass}");
    let phase = &e.values[plan.nodes.iter().position(|n| n.name == "analysis").expect("node")][2];
    let mut order: Vec<f64> = phase.to_vec();
    order.dedup();
    assert_eq!(
        order,
        [0.0, 1.0, 2.0, 3.0, 4.0, 5.0],
        "weighing, unweighting, braking, propulsion, flight, landing"
    );
    // The phase file names its codes in its header, so it reads without the node's docs.
    let w = plan
        .writes
        .iter()
        .find(|w| w.stem == "analysis.phase")
        .expect("phase written");
    let text = heft_formats::output::csv_text(&plan, &e, w.node, w.output).expect("csv");
    let header = String::from_utf8(text)
        .expect("utf-8")
        .lines()
        .next()
        .map(str::to_owned);
    assert_eq!(
        header.as_deref(),
        Some(
            "frame,time [s],analysis.phase [code: 0 weighing; 1 unweighting; 2 braking; 3 propulsion; 4 flight; \
             5 landing]"
        )
    );
}

/// A body to collide with, through the real plugins: Odile jumps with a fringe skirt of twelve
/// strips on her waist and a 110 cm sash at her back (long enough to reach the floor), with her
/// every limb and her trunk, head and feet from trajectory.jump's `colliders` (twelve colliders on one input, overlapping at the
/// hips, knees and elbows) and the ground. At every frame no free particle is inside any of
/// the twelve (distances by `round_cone_distance`, the capsules' definition as a union of
/// balls, independent of the nodes' projection) or below the ground, the strands do rest on
/// the body, and the sash lies on the floor.
#[test]
fn skirt_and_sash_stay_outside_the_whole_body() {
    use heft_node_sdk::colliders::read_frame;
    use heft_strand_common::testing::round_cone_distance;
    let text = "format 1\nrate 24 fps\nframes 0..72\n\
        odile = trajectory.jump\n    takeoff_frame = 36\n\
        skirt = strand.euler\n    count = 12\n    placement = ring\n    radius = 16 cm\n    length = 30 cm\n\
        \x20   segments = 8\n    start = settled\n    substeps = 100\n    ground = on\n    start_offset = (0, 0, 10) cm\n\
        sash = xpbd.strand\n    length = 110 cm\n    segments = 22\n    start = settled\n    ground = on\n\
        \x20   start_offset = (-18, 0, 10) cm\n\
        odile.hips -> skirt.anchor\nodile.hips -> sash.anchor\n\
        odile.colliders -> skirt.colliders\nodile.colliders -> sash.colliders\n";
    let plan = plan_text("body.graph", text, &registry(), &Overrides::default()).expect("checks");
    let e = evaluate(&plan, Some(2)).expect("evaluates");
    let node = |name: &str| plan.nodes.iter().position(|n| n.name == name).expect(name);
    let output = |n: usize, port: &str| {
        let k = plan.nodes[n]
            .ty
            .spec()
            .outputs
            .iter()
            .position(|o| o.name == port)
            .expect(port);
        (&e.values[n][k], plan.nodes[n].outputs[k].width())
    };
    let (body, bw) = output(node("odile"), "colliders");
    let frames = plan.timeline.frames();
    let mut lowest_sash = f64::INFINITY;
    let mut nearest = f64::INFINITY;
    for strand in ["skirt", "sash"] {
        let (v, w) = output(node(strand), "positions");
        let per_strand = if strand == "skirt" { 9 } else { 23 };
        for f in 0..frames {
            let list = read_frame(&body[f * bw..(f + 1) * bw]).expect("a whole list");
            assert_eq!(list.len(), 12);
            for p in (0..w / 3).filter(|p| p % per_strand != 0) {
                let x = [v[f * w + 3 * p], v[f * w + 3 * p + 1], v[f * w + 3 * p + 2]];
                for (k, c) in list.iter().enumerate() {
                    let d = round_cone_distance(x, c.start, c.end, c.start_radius, c.end_radius);
                    nearest = nearest.min(d);
                    assert!(
                        d >= -1e-12,
                        "{strand} particle {p} at frame {f} is {d:e} m inside collider {k}"
                    );
                }
                assert!(
                    x[2] >= -1e-12,
                    "{strand} particle {p} at frame {f} is below the ground: {}",
                    x[2]
                );
                if strand == "sash" {
                    lowest_sash = lowest_sash.min(x[2]);
                }
            }
        }
    }
    eprintln!("least distance from the body {nearest:.2e} m; lowest sash particle {lowest_sash:.2e} m");
    assert!(nearest < 1e-6, "the strands do rest on the body: {nearest}");
    assert!(lowest_sash < 1e-3, "the sash reaches the floor: {lowest_sash}");
}

/// The broad-jump example through the real plugins and the CLI: it runs without a warning,
/// its centre of mass (com.csv) moves forward and ends `jump_distance` ahead, its flight is
/// a straight line in x (constant forward speed: free flight, second differences of x zero to
/// 1e-12 m) and `heft audit` finds nothing wrong with it.
#[test]
fn the_broad_jump_example_runs_flies_straight_forward_and_audits_clean() {
    let out = tempfile::tempdir().expect("temp dir");
    let o = heft()
        .args(["run", "graphs/broad_jump.graph", "--out"])
        .arg(out.path())
        .output()
        .expect("runs");
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(o.status.success(), "{err}");
    assert!(!err.contains("warning"), "{err}");
    let (header, rows) = read_csv(&out.path().join("com.csv"));
    let x = header
        .iter()
        .position(|h| h.starts_with("bo.com_position.x"))
        .expect("x column");
    let (_, contact) = read_csv(&out.path().join("bo.contact.csv"));
    let run: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.path().join("run.json")).expect("run.json")).expect("json");
    let distance = run["summaries"]
        .as_array()
        .expect("summaries")
        .iter()
        .find(|s| s["node"] == "bo" && s["name"] == "jump_distance")
        .and_then(|s| s["value"].as_f64())
        .expect("jump_distance");
    assert!((rows[rows.len() - 1][x] - distance).abs() < 1e-9, "{distance}");
    assert!(distance > 1.0, "{distance}");
    let mut straight = 0;
    for i in 1..rows.len() - 1 {
        if contact[i - 1][2] == 0.0 && contact[i][2] == 0.0 && contact[i + 1][2] == 0.0 {
            assert!(
                (rows[i + 1][x] - 2.0 * rows[i][x] + rows[i - 1][x]).abs() < 1e-12,
                "frame {i}"
            );
            straight += 1;
        }
    }
    assert!(straight >= 5, "{straight} flight frames");
    let o = heft()
        .args(["audit", "graphs/broad_jump.graph"])
        .output()
        .expect("runs");
    let text = String::from_utf8_lossy(&o.stdout);
    assert_eq!(o.status.code(), Some(0), "{text}");
    assert!(text.contains("1 flight, 0 errors, 0 warnings"), "{text}");
}

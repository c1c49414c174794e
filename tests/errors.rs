//! Every error class of the graph language: the message, the exact `file:line:column`,
//! and that every problem in a graph is reported, not only the first.
//!
//! Columns are 1-based characters and count the indentation. Parse problems come first
//! (in source order), then the checker's, phase by phase: node declarations, parameters
//! (graph lines, then `--set` values), wires, unconnected inputs, the cycle, output
//! shapes, writes.

use std::sync::LazyLock;

use heft_integration_tests::{fixture_dir, library, registry_with_probe};
use heft_node_sdk::ParamValue;
use heft_runtime::check::{Overrides, Plan};
use heft_runtime::diag::{Problem, render};
use heft_runtime::plan_text;
use heft_runtime::registry::Registry;

/// The real plugins and the test `probe` plugin (the wrong-ABI and no-entry libraries in
/// the fixture folder land in `failures()`).
static REGISTRY: LazyLock<Registry> = LazyLock::new(|| {
    let mut reg = registry_with_probe();
    reg.load_file(&library(fixture_dir(), "heft_test_plugin_wrong_abi"));
    reg.load_file(&library(fixture_dir(), "heft_test_plugin_no_entry"));
    reg
});

const NAME: &str = "t.graph";

/// Lines 1 to 3 of every graph below that is not about them.
const HEAD: &str = "format 1\nrate 24 fps\nframes 1..10\n";

fn plan_with(body: &str, set: &[&str], frames: Option<(i64, i64)>) -> Result<Plan, Vec<Problem>> {
    let overrides = Overrides {
        set: set.iter().map(|s| (*s).to_owned()).collect(),
        frames,
    };
    plan_text(NAME, &format!("{HEAD}{body}"), &REGISTRY, &overrides)
}

/// The problems of a whole graph text, which must fail to check.
fn problems(text: &str) -> Vec<Problem> {
    match plan_text(NAME, text, &REGISTRY, &Overrides::default()) {
        Ok(_) => panic!("the graph checked without problems:\n{text}"),
        Err(p) => p,
    }
}

/// The problems of `HEAD` followed by `body`.
fn body_problems(body: &str) -> Vec<Problem> {
    problems(&format!("{HEAD}{body}"))
}

/// `(file:line:column, message)` of each problem, in the order reported.
fn located(problems: &[Problem]) -> Vec<(String, String)> {
    problems.iter().map(|p| (p.location(), p.message.clone())).collect()
}

/// Owned pairs from string literals, to compare with [`located`].
fn expect(pairs: &[(&str, &str)]) -> Vec<(String, String)> {
    pairs.iter().map(|(l, m)| ((*l).to_owned(), (*m).to_owned())).collect()
}

fn help(p: &Problem) -> &str {
    p.help.as_deref().unwrap_or_else(|| panic!("no help on `{p}`"))
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-12 * b.abs().max(1.0)
}

#[test]
fn registry_has_the_probe_and_the_real_plugins() {
    let names: Vec<&str> = REGISTRY.type_names().collect();
    for ty in [
        "trajectory.ballistic",
        "trajectory.keyed",
        "probe.relay",
        "probe.gauge",
        "probe.cloud",
        "probe.triangle",
    ] {
        assert!(names.contains(&ty), "{ty} missing from {names:?}");
    }
    // The wrong-ABI plugin and the library without an entry point.
    assert_eq!(REGISTRY.failures().len(), 2, "{:?}", REGISTRY.failures());
}

#[test]
fn a_well_formed_graph_plans() {
    let plan = plan_with(
        "a = trajectory.ballistic\n    launch_velocity = (1, 0, 2) m/s\nr = probe.relay\na.position -> r.input\nwrite r.output\n",
        &[],
        None,
    )
    .unwrap_or_else(|p| panic!("{}", render(&p, false)));
    assert_eq!(plan.nodes.len(), 2);
    assert_eq!(plan.levels, vec![vec![0], vec![1]]);
    assert_eq!(plan.timeline.start_frame, 1);
    assert_eq!(plan.timeline.frame_count, 10);
}

#[test]
fn syntax_errors_are_all_reported_with_their_columns() {
    let text = "format 1
rate 24 fps
frames 1..10
  stray = 1
a = trajectory.ballistic
    launch_velocity = (1, 0 2) m/s
    launch_time 0.5 s
    launch_position = (1, 2, 3 m
bogus line
42 = trajectory.ballistic
a.position => a.input
write a.position
";
    let p = problems(text);
    let want = expect(&[
        ("t.graph:4:3", "an indented parameter line outside a node"),
        ("t.graph:6:29", "expected `,` between vector components"),
        ("t.graph:7:17", "expected `=` after the parameter name `launch_time`"),
        ("t.graph:8:33", "expected `)` after three components"),
        ("t.graph:9:1", "unknown statement `bogus`"),
        ("t.graph:10:1", "expected a statement"),
        ("t.graph:11:12", "expected `->` after the output port"),
    ]);
    assert_eq!(located(&p), want);
    assert!(help(&p[4]).contains("statements are `format`"), "{:?}", p[4].help);
    // Windows line ends do not move a column.
    assert_eq!(located(&problems(&text.replace('\n', "\r\n"))), want);
}

#[test]
fn value_and_line_end_syntax_errors() {
    let p = body_problems(
        "a = trajectory.ballistic
    launch_velocity = (1, 0, 2) m/s!
    launch_time = x y
    gravity =
write a.velocity as v extra
write a.position as
c = ballistic
",
    );
    assert_eq!(
        located(&p),
        expect(&[
            ("t.graph:5:33", "`m/s!` is not a unit"),
            ("t.graph:6:21", "unexpected text after the value"),
            ("t.graph:7:14", "expected a value after `=`"),
            (
                "t.graph:8:23",
                "expected `as NAME`, `format FORMAT` or the end of the line"
            ),
            ("t.graph:9:18", "expected a file name after `as`"),
            ("t.graph:10:5", "expected a node type as `plugin.node`"),
        ])
    );
    // A value missing at the very end of a file without a final newline.
    let p = problems("format 1\nrate 24 fps\nframes 1..10\na = trajectory.ballistic\n    gravity =");
    assert_eq!(located(&p), expect(&[("t.graph:5:14", "expected a value after `=`")]));
}

#[test]
fn unknown_node_type_suggests_the_closest() {
    let p = body_problems(
        "a = trajectory.balistic
b = probe.relya
c = nothing.here
d = ballistic
",
    );
    assert_eq!(
        located(&p),
        expect(&[
            // The parse problem comes before the checker's.
            ("t.graph:7:5", "expected a node type as `plugin.node`"),
            ("t.graph:4:5", "unknown node type `trajectory.balistic`"),
            ("t.graph:5:5", "unknown node type `probe.relya`"),
            ("t.graph:6:5", "unknown node type `nothing.here`"),
        ])
    );
    assert!(
        help(&p[1]).starts_with("did you mean `trajectory.ballistic`?"),
        "{}",
        help(&p[1])
    );
    assert!(
        help(&p[2]).starts_with("did you mean `probe.relay`?"),
        "{}",
        help(&p[2])
    );
    // Nothing close: no guess, but the plugin files that failed to load are listed.
    assert!(!help(&p[3]).contains("did you mean"), "{}", help(&p[3]));
    assert!(
        help(&p[3]).contains("some plugin files failed to load"),
        "{}",
        help(&p[3])
    );
    assert_eq!(p[1].label, "unknown node type");
}

#[test]
fn unknown_ports_nodes_and_parameters() {
    let p = body_problems(
        "toss = trajectory.ballistic
    launch_velocty = (1, 0, 2) m/s
    spin = 3
relay = probe.relay
toss.positon -> relay.input
toss.position -> relay.inptu
relay.input -> relay.input
toss.position -> toss.velocity
tos.position -> relay.input
write toss.speed
",
    );
    assert_eq!(
        located(&p),
        expect(&[
            (
                "t.graph:5:5",
                "`trajectory.ballistic` has no parameter `launch_velocty`"
            ),
            ("t.graph:6:5", "`trajectory.ballistic` has no parameter `spin`"),
            (
                "t.graph:8:6",
                "`toss` (trajectory.ballistic) has no output port `positon`"
            ),
            ("t.graph:9:24", "`relay` (probe.relay) has no input port `inptu`"),
            ("t.graph:10:7", "`relay` (probe.relay) has no output port `input`"),
            (
                "t.graph:11:23",
                "`toss` (trajectory.ballistic) has no input port `velocity`"
            ),
            ("t.graph:12:1", "no node named `tos`"),
            // No wire into it survived.
            ("t.graph:7:1", "input `relay.input` is not connected"),
            (
                "t.graph:13:12",
                "`toss` (trajectory.ballistic) has no output port `speed`"
            ),
        ])
    );
    let helps: Vec<&str> = p.iter().map(|p| p.help.as_deref().unwrap_or("")).collect();
    assert_eq!(helps[0], "did you mean `launch_velocity`?");
    assert_eq!(
        helps[1],
        "parameters: launch_position, launch_velocity, launch_time, gravity"
    );
    assert_eq!(helps[2], "did you mean `position`?");
    assert_eq!(helps[3], "did you mean `input`?");
    assert_eq!(helps[4], "`input` is an input; wires run from an output to an input");
    assert_eq!(
        helps[5],
        "`velocity` is an output; wires run from an output to an input"
    );
    assert_eq!(helps[6], "did you mean `toss`?");
    assert_eq!(helps[8], "outputs: position, velocity, acceleration");
}

/// Ports declare their physical dimension; a velocity cannot feed an input that takes a
/// length, even though both are vec3.
#[test]
fn dimension_mismatch() {
    let p = body_problems(
        "toss = trajectory.ballistic
r = probe.relay
toss.velocity -> r.input
",
    );
    assert_eq!(
        located(&p),
        expect(&[(
            "t.graph:6:1",
            "`toss.velocity` carries a velocity (m/s) but `r.input` takes a length (m)"
        )])
    );
}

#[test]
fn kind_mismatch() {
    let p = body_problems(
        "toss = trajectory.ballistic
g = probe.gauge
toss.velocity -> g.value
",
    );
    assert_eq!(
        located(&p),
        expect(&[
            // One mistake, one problem: the refused wire does not also leave `g.value`
            // reported as unconnected.
            ("t.graph:6:1", "`toss.velocity` is vec3 but `g.value` takes scalar"),
        ])
    );
    assert_eq!(p[0].label, "kind mismatch");
}

#[test]
fn shape_mismatch() {
    let graph = |count: u32| {
        format!("c = probe.cloud\n    count = {count}\nt = probe.triangle\nc.points -> t.corners\nwrite t.centroid\n")
    };
    // Three points fit.
    let plan = plan_with(&graph(3), &[], None).unwrap_or_else(|p| panic!("{}", render(&p, false)));
    assert_eq!(plan.nodes[0].outputs[0].to_string(), "3 points");
    let p = body_problems(&graph(4));
    assert_eq!(
        located(&p),
        expect(&[(
            "t.graph:7:1",
            "`c.points` carries 4 points but `t.corners` takes 3 points"
        )])
    );
    assert_eq!(p[0].label, "shape mismatch");
}

#[test]
fn unconnected_inputs() {
    let p = body_problems("r = probe.relay\nt = probe.triangle\nwrite r.output\n");
    assert_eq!(
        located(&p),
        expect(&[
            ("t.graph:4:1", "input `r.input` is not connected"),
            ("t.graph:5:1", "input `t.corners` is not connected"),
        ])
    );
    assert_eq!(help(&p[0]), "add a wire `some_node.output -> r.input` (vec3: In.)");
}

#[test]
fn input_driven_twice_points_at_the_first_driver() {
    let p = body_problems(
        "a = trajectory.ballistic
b = trajectory.keyed
    key = 0 s: (0, 0, 1) m
    key = 1 s: (1, 0, 1) m
r = probe.relay
a.position -> r.input
b.position -> r.input
",
    );
    assert_eq!(
        located(&p),
        expect(&[("t.graph:10:15", "input `r.input` is driven twice")])
    );
    assert_eq!(p[0].related.len(), 1);
    assert_eq!(p[0].related[0].0.location(), "t.graph:9:15");
    assert_eq!(p[0].related[0].1, "first driven here");
}

#[test]
fn cycle_of_two_prints_its_path() {
    let p = body_problems(
        "r1 = probe.relay
r2 = probe.relay
r1.output -> r2.input
r2.output -> r1.input
",
    );
    assert_eq!(
        located(&p),
        expect(&[(
            "t.graph:6:1",
            "the graph has a cycle: r1.output -> r2.input, then r2.output -> r1.input"
        )])
    );
    assert!(p[0].message.contains("r1.output -> r2.input"));
    assert!(p[0].message.contains("r2.output -> r1.input"));
    let related: Vec<String> = p[0].related.iter().map(|(place, _)| place.location()).collect();
    assert_eq!(related, ["t.graph:7:1"]);
}

#[test]
fn cycle_found_from_a_node_behind_it_leaves_that_node_out() {
    let p = body_problems(
        "tail = probe.relay
r1 = probe.relay
r2 = probe.relay
r1.output -> r2.input
r2.output -> r1.input
r2.output -> tail.input
",
    );
    assert_eq!(
        located(&p),
        expect(&[(
            "t.graph:8:1",
            "the graph has a cycle: r2.output -> r1.input, then r1.output -> r2.input"
        )])
    );
    let related: Vec<String> = p[0].related.iter().map(|(place, _)| place.location()).collect();
    assert_eq!(related, ["t.graph:7:1"]);
}

#[test]
fn every_separate_cycle_is_reported_once() {
    let p = body_problems(
        "r1 = probe.relay
r2 = probe.relay
r3 = probe.relay
r4 = probe.relay
r1.output -> r2.input
r2.output -> r1.input
r3.output -> r4.input
r4.output -> r3.input
",
    );
    assert_eq!(
        located(&p),
        expect(&[
            (
                "t.graph:8:1",
                "the graph has a cycle: r1.output -> r2.input, then r2.output -> r1.input"
            ),
            (
                "t.graph:10:1",
                "the graph has a cycle: r3.output -> r4.input, then r4.output -> r3.input"
            ),
        ])
    );
}

#[test]
fn a_rate_ratio_needs_its_denominator() {
    let p = problems("format 1\nrate 24/ fps\nframes 1..2\n");
    assert_eq!(
        located(&p),
        expect(&[(
            "t.graph:2:1",
            "expected a frame rate such as `rate 24 fps` or `rate 24000/1001 fps`"
        )])
    );
}

#[test]
fn node_fed_by_itself_is_a_cycle() {
    let p = body_problems("r = probe.relay\nr.output -> r.input\n");
    assert_eq!(
        located(&p),
        expect(&[("t.graph:5:1", "the graph has a cycle: r.output -> r.input")])
    );
    assert!(p[0].related.is_empty());
}

#[test]
fn out_of_range_wrong_dimension_missing_and_unknown_units() {
    let p = body_problems(
        "a = trajectory.ballistic
    gravity = 120 m/s^2
    launch_velocity = (1, 0, 2) kg
    launch_time = 0.5
    launch_position = (0, 0, 1) furlong
r = probe.relay
    offset = (0, 0, 11) m
a.position -> r.input
",
    );
    assert_eq!(
        located(&p),
        expect(&[
            ("t.graph:5:15", "`gravity` = 120 m/s^2 is out of range"),
            ("t.graph:6:33", "`kg` is a mass, but `launch_velocity` is a velocity"),
            ("t.graph:7:19", "`launch_time` is a time and needs a unit"),
            ("t.graph:8:33", "unknown unit `furlong`"),
            ("t.graph:10:14", "`offset` has a component 11 m out of range"),
        ])
    );
    assert_eq!(help(&p[0]), "valid range: 0 m/s^2 to 100 m/s^2");
    assert_eq!(help(&p[1]), "use one of: m/s, cm/s, mm/s, km/h");
    assert_eq!(help(&p[2]), "write it with one of: s, ms, min");
    assert_eq!(
        help(&p[3]),
        "`launch_position` is a length: use one of m, cm, mm, km, in, ft"
    );
    assert_eq!(help(&p[4]), "valid range of each component: -10 m to 10 m");
}

#[test]
fn bad_counts_and_wrong_value_types() {
    let p = body_problems(
        "c1 = probe.cloud
    count = 0
c2 = probe.cloud
    count = 2.5
c3 = probe.cloud
    count = 3 m
c4 = probe.cloud
    count = many
a = trajectory.ballistic
    gravity = (0, 0, 1) m/s^2
    launch_velocity = 3 m/s
",
    );
    assert_eq!(
        located(&p),
        expect(&[
            ("t.graph:5:13", "`count` = 0 is out of range"),
            ("t.graph:7:13", "`count` takes a whole number"),
            ("t.graph:9:15", "`count` is a count and takes no unit"),
            ("t.graph:11:13", "`count` takes a whole number"),
            ("t.graph:13:15", "`gravity` takes a number (an acceleration)"),
            (
                "t.graph:14:23",
                "`launch_velocity` takes a vector `(x, y, z)` (a velocity)"
            ),
        ])
    );
    assert_eq!(help(&p[0]), "valid range: 1 to 1000");
}

#[test]
fn keyframe_errors() {
    let p = body_problems(
        "k1 = trajectory.keyed
    key = 1 s: (0, 0, 1) m
    key = 0.5 s: (1, 0, 1) m
k2 = trajectory.keyed
    key = 0 s: (0, 0, 1) m
k3 = trajectory.keyed
    key = 0 ms: (0, 0, 1) kg
",
    );
    assert_eq!(
        located(&p),
        expect(&[
            ("t.graph:6:11", "key times must increase from line to line"),
            ("t.graph:7:1", "`k2` needs at least 2 `key` lines, has 1"),
            ("t.graph:10:27", "`kg` is a mass, but `key` is a length"),
            // Its only key line was refused, so it has none.
            ("t.graph:9:1", "`k3` needs a value for `key`"),
        ])
    );
    assert_eq!(p[0].label, "0.5 s is not after 1 s");
}

#[test]
fn set_overrides_replace_graph_values() {
    let plan = plan_with(
        "a = trajectory.ballistic\n    launch_time = 0.2 s\n    launch_velocity = (1, 0, 2) m/s\n",
        &[
            "a.launch_time=0.5 s",
            "a.launch_velocity=(100, 0, 250) cm/s",
            "a.gravity = 5 m/s^2",
            "a.launch_time=600 ms",
        ],
        Some((5, 8)),
    )
    .unwrap_or_else(|p| panic!("{}", render(&p, false)));
    let params = &plan.nodes[0].params;
    // Spec order: launch_position, launch_velocity, launch_time, gravity.
    assert_eq!(params[0], ParamValue::Vec3([0.0, 0.0, 1.0]));
    match &params[1] {
        ParamValue::Vec3(v) => assert!(close(v[0], 1.0) && v[1] == 0.0 && close(v[2], 2.5), "{v:?}"),
        other => panic!("{other:?}"),
    }
    // The later `--set` wins.
    assert!(
        matches!(params[2], ParamValue::Number(t) if close(t, 0.6)),
        "{:?}",
        params[2]
    );
    assert_eq!(params[3], ParamValue::Number(5.0));
    assert_eq!((plan.timeline.start_frame, plan.timeline.frame_count), (5, 4));

    let plan = plan_with("a = trajectory.ballistic\n", &["a.launch_time=0.5 s"], None)
        .unwrap_or_else(|p| panic!("{}", render(&p, false)));
    assert_eq!(plan.nodes[0].params[2], ParamValue::Number(0.5));
}

#[test]
fn bad_set_overrides_point_into_the_set_value() {
    let set = [
        "tos.launch_time=0.5 s",
        "toss.launch_time=fast",
        "toss.launch_time=0.5 kg",
        "toss.spin=1",
        "toss.launch_time=(1, 2) s",
        "nodot=1",
        "toss.launch_time",
    ];
    let p = plan_with("toss = trajectory.ballistic\n", &set, None).expect_err("bad overrides");
    assert_eq!(
        located(&p),
        expect(&[
            // Values that do not parse, in order, ...
            ("--set 5:1:23", "expected `,` between vector components"),
            ("--set 6:1:1", "expected `node.param` before `=`"),
            ("--set 7:1:1", "expected `node.param=VALUE`"),
            // ... then names the graph does not have, then values the parameter refuses.
            ("--set 1:1:1", "no node named `tos` in the graph"),
            ("--set 2:1:18", "`launch_time` takes a number (a time)"),
            ("--set 3:1:22", "`kg` is a mass, but `launch_time` is a time"),
            ("--set 4:1:6", "`trajectory.ballistic` has no parameter `spin`"),
        ])
    );
    assert_eq!(help(&p[3]), "did you mean `toss`?");
}

#[test]
fn missing_header_lines() {
    let p = problems("a = trajectory.ballistic\nwrite a.position\n");
    assert_eq!(
        located(&p),
        expect(&[
            ("t.graph:1:1", "the graph does not say its format version"),
            ("t.graph:1:1", "the graph has no frame rate"),
            ("t.graph:1:1", "the graph has no frame range"),
        ])
    );
    assert_eq!(help(&p[0]), "start the file with `format 1`");
    assert_eq!(help(&p[1]), "add a line such as `rate 24 fps`");
    assert_eq!(help(&p[2]), "add a line such as `frames 1..96`");
}

#[test]
fn unsupported_format_version() {
    let p = problems("format 2\nrate 24 fps\nframes 1..10\n");
    assert_eq!(
        located(&p),
        expect(&[("t.graph:1:8", "format 2 is not known to this heft (it reads format 1)")])
    );
}

#[test]
fn malformed_header_lines() {
    let p = problems("format 1.5\nrate 23.976 fps\nframes 10..1\nrate 24\n");
    assert_eq!(
        located(&p),
        expect(&[
            ("t.graph:1:1", "expected a format version number: `format 1`"),
            (
                "t.graph:2:1",
                "a frame rate is a whole number of frames per second or a ratio of whole numbers"
            ),
            ("t.graph:3:1", "the frame range ends before it starts"),
            (
                "t.graph:4:1",
                "expected a frame rate such as `rate 24 fps` or `rate 24000/1001 fps`"
            ),
            // A malformed header line is reported where it is, not again as missing.
        ])
    );
    assert_eq!(help(&p[1]), "for 23.976 fps write `rate 24000/1001 fps`");
}

#[test]
fn header_lines_given_twice() {
    let p = body_problems("format 1\nrate 25 fps\nframes 1..5\n");
    assert_eq!(
        located(&p),
        expect(&[
            ("t.graph:4:1", "the format version is given twice"),
            ("t.graph:5:1", "the frame rate is given twice"),
            ("t.graph:6:1", "the frame range is given twice"),
        ])
    );
}

#[test]
fn node_declared_twice_parameter_set_twice_and_one_file_written_twice() {
    let p = body_problems(
        "a = trajectory.ballistic
    launch_time = 0.5 s
    launch_time = 1 s
a = trajectory.ballistic
write a.position as path
write a.velocity as path
write a.acceleration
write a.acceleration
",
    );
    assert_eq!(
        located(&p),
        expect(&[
            ("t.graph:7:1", "a node named `a` is declared twice"),
            ("t.graph:6:5", "`launch_time` is set twice"),
            ("t.graph:9:21", "two outputs would be written to `path.csv`"),
            ("t.graph:11:7", "two outputs would be written to `a.acceleration.csv`"),
        ])
    );
    let related: Vec<(String, &str)> = p
        .iter()
        .flat_map(|p| {
            p.related
                .iter()
                .map(|(place, label)| (place.location(), label.as_str()))
        })
        .collect();
    assert_eq!(
        related,
        [
            ("t.graph:4:1".to_owned(), "first declared here"),
            ("t.graph:5:5".to_owned(), "first set here"),
            ("t.graph:8:21".to_owned(), "first written here"),
            ("t.graph:10:7".to_owned(), "first written here"),
        ]
    );
}

/// A `write` line's format: an unknown one is named at its place with the formats heft
/// writes, a missing one at the `format` word; a CSV and a Parquet file of one output are two
/// files, two Parquet files of one name are one too many.
#[test]
fn unknown_and_missing_write_formats_are_located() {
    let p = body_problems(
        "a = trajectory.ballistic
write a.position format feather
write a.velocity format
write a.position as p format parquet
write a.position as p
write a.acceleration format parquet
write a.acceleration format parquet
write a.velocity format csv as v
",
    );
    assert_eq!(
        located(&p),
        expect(&[
            ("t.graph:6:18", "expected a file format after `format`"),
            (
                "t.graph:11:29",
                "expected `as NAME`, `format FORMAT` or the end of the line"
            ),
            ("t.graph:5:25", "`feather` is not a file format heft writes"),
            (
                "t.graph:10:7",
                "two outputs would be written to `a.acceleration.parquet`"
            ),
        ])
    );
    assert_eq!(help(&p[0]), "formats: csv, parquet");
    assert_eq!(
        help(&p[1]),
        "a write reads `write node.port [as NAME] [format FORMAT]`; formats: csv, parquet"
    );
    assert_eq!(help(&p[2]), "formats: csv, parquet");
    // The same output as CSV and as Parquet under one name: two files, both planned.
    let plan = plan_with(
        "a = trajectory.ballistic\nwrite a.position as p format parquet\nwrite a.position as p\n",
        &[],
        None,
    )
    .expect("plans");
    let files: Vec<String> = plan.writes.iter().map(|w| w.file()).collect();
    assert_eq!(files, ["p.parquet", "p.csv"]);
}

#[test]
fn many_different_errors_are_all_reported() {
    let p = body_problems(
        "toss = trajectory.balistic
r = probe.relay
    offset = (0, 0, 1) kg
    ofset = (0, 0, 1) m
g = probe.gauge
r.output -> g.value
nonsense here
write r.outptu
",
    );
    assert_eq!(
        located(&p),
        expect(&[
            ("t.graph:10:1", "unknown statement `nonsense`"),
            ("t.graph:4:8", "unknown node type `trajectory.balistic`"),
            ("t.graph:6:24", "`kg` is a mass, but `offset` is a length"),
            ("t.graph:7:5", "`probe.relay` has no parameter `ofset`"),
            ("t.graph:9:1", "`r.output` is vec3 but `g.value` takes scalar"),
            ("t.graph:5:1", "input `r.input` is not connected"),
            ("t.graph:11:9", "`r` (probe.relay) has no output port `outptu`"),
        ])
    );
    assert_eq!(p.len(), 7);
    assert_eq!(help(&p[3]), "did you mean `offset`?");
    assert_eq!(help(&p[6]), "did you mean `output`?");
}

#[test]
fn rendering_shows_the_line_a_caret_and_the_location() {
    let p = body_problems("a = trajectory.balistic\n");
    let out = render(&p, false);
    assert!(out.contains("t.graph:4:5"), "{out}");
    assert!(out.contains("unknown node type `trajectory.balistic`"), "{out}");
    assert!(out.contains("a = trajectory.balistic"), "{out}");
    assert!(out.contains("did you mean `trajectory.ballistic`?"), "{out}");
    assert!(out.contains("unknown node type"), "{out}");
    assert!(out.ends_with("1 problem found\n"), "{out}");
    // The underline sits under the type name: it starts 4 characters after the line's start.
    let lines: Vec<&str> = out.lines().collect();
    let src = lines
        .iter()
        .position(|l| l.contains("a = trajectory.balistic"))
        .expect("source line");
    let (code, under) = (lines[src], lines[src + 1]);
    let col = code.find("a = ").expect("line text");
    let chars: Vec<char> = under.chars().collect();
    let prefix = code[..col].chars().count();
    assert!(chars.len() > prefix + 4, "{out}");
    assert!(chars[prefix..prefix + 4].iter().all(|c| *c == ' '), "{out}");
    assert!(matches!(chars[prefix + 4], '─' | '┬' | '^'), "{out}");
}

#[test]
fn rendering_shows_related_places_and_set_values() {
    let p = plan_with(
        "a = trajectory.ballistic\nb = trajectory.ballistic\nr = probe.relay\na.position -> r.input\nb.position -> r.input\n",
        &["a.gravity=200 m/s^2"],
        None,
    )
    .expect_err("two problems");
    assert_eq!(
        located(&p),
        expect(&[
            ("--set 1:1:11", "`gravity` = 200 m/s^2 is out of range"),
            ("t.graph:8:15", "input `r.input` is driven twice"),
        ])
    );
    let out = render(&p, false);
    for want in [
        "--set 1:1:11",
        "a.gravity=200 m/s^2",
        "t.graph:8:15",
        "b.position -> r.input",
        "a.position -> r.input",
        "first driven here",
        "second driver",
        "2 problems found",
    ] {
        assert!(out.contains(want), "`{want}` missing from:\n{out}");
    }
}

/// Vector components may carry their own units (`(-10 cm, 0, 2 cm)`); a bare component must
/// be zero; a unit on the components and after the vector is one too many.
#[test]
fn vector_components_with_their_own_units() {
    let plan = plan_with(
        "a = trajectory.ballistic\n    launch_position = (-10 cm, 0, 2 m)\n",
        &[],
        None,
    )
    .expect("plans");
    assert_eq!(plan.nodes[0].params[0], ParamValue::Vec3([-0.1, 0.0, 2.0]));
    let p = body_problems(
        "a = trajectory.ballistic\n    launch_position = (-10 cm, 3, 2 m)\nb = trajectory.ballistic\n    launch_position = (1 cm, 0, 0) m\n",
    );
    assert_eq!(
        located(&p),
        expect(&[
            ("t.graph:5:23", "a component of `launch_position` has no unit"),
            (
                "t.graph:7:26",
                "`launch_position` gives a unit both here and after the vector"
            ),
        ])
    );
}

/// Problems far into a very long line (a generated file) render without fault, showing their
/// neighbourhood of the line with the file's own line and column: a unit typo at column
/// 70 019 (the renderer once panicked past column 65 536).
#[test]
fn a_problem_deep_in_a_long_line_renders_with_its_place() {
    // 1.000...0 with 69 998 zeros: a long but finite number, then a unit typo.
    let body = format!(
        "b = trajectory.ballistic\n    launch_time = 1.{}x s\n",
        "0".repeat(69_998)
    );
    let p = plan_with(&body, &[], None).expect_err("a bad unit");
    assert_eq!(p.len(), 1, "{p:?}");
    assert_eq!(p[0].location(), "t.graph:5:70019");
    let text = render(&p, false);
    assert!(text.contains("[t.graph:5:70019]") && text.contains("… 0000"), "{text}");
    assert!(
        text.len() < 2_000,
        "only the neighbourhood is shown: {} bytes",
        text.len()
    );
}

/// A file of many bad lines is reported at once: every problem is found, the first 20 are
/// drawn and the rest counted, so the report stays small (it was quadratic in the file: 7 s
/// for 176 KB of bad lines). And a name of 100 000 characters gets no "did you mean" (the
/// edit distance is quadratic in the names' lengths: 26 s), just the problem.
#[test]
fn many_problems_and_huge_names_are_reported_at_once() {
    let bad: String = (0..5_000).map(|i| format!("n{i} = no_such.type\n")).collect();
    let p = plan_with(&bad, &[], None).expect_err("bad types");
    assert_eq!(p.len(), 5_000);
    let text = render(&p, false);
    assert!(
        text.ends_with("5000 problems found; the first 20 are shown\n"),
        "{}",
        &text[text.len() - 200..]
    );
    assert!(text.len() < 20 * 1_000, "20 problems drawn: {} bytes", text.len());

    let long = "x".repeat(100_000);
    let p = plan_with("", &[&format!("b.{long}=1")], None).expect_err("an unknown node");
    assert!(
        p.iter()
            .all(|p| p.help.as_deref().is_none_or(|h| !h.contains("did you mean"))),
        "{p:?}"
    );
}

/// Output file names are checked where they are written: a bake path ending in `/` (a folder,
/// not a file) and a name in heft's own `.heft-` space are refused at check time.
#[test]
fn output_names_that_are_folders_or_heft_s_own_are_refused() {
    let p = body_problems(
        "b = trajectory.ballistic\nbake \"bakes/odile.glb/\"\n    b.position\nbake \".heft-lock.glb\"\n    b.position\n",
    );
    assert_eq!(
        located(&p),
        expect(&[
            (
                "t.graph:5:6",
                "`bakes/odile.glb/` is not a file name inside the output folder"
            ),
            (
                "t.graph:7:6",
                "`.heft-lock.glb`: names starting with `.heft-` are heft's own in the output folder"
            ),
        ])
    );
}

/// Edges the fuzzing found, each said for what it is: a rate of 0, a number past the largest
/// f64 (which read as infinity, in a key time, a key vector and a number), a wire from a node
/// with no output named, and frame numbers past 2^53 (which saturated to i64's limit).
#[test]
fn edges_are_named_for_what_they_are() {
    let p = problems("format 1\nrate 0 fps\nframes 1..10\n");
    assert_eq!(
        located(&p),
        expect(&[(
            "t.graph:2:1",
            "a frame rate of 0 has no frames: give frames per second above 0"
        )])
    );
    let p = body_problems(
        "p = trajectory.keyed\n    key = 0 s: (0, 0, 1) m\n    key = 1e309 s: (0, 0, 1) m\n    key = 2 s: (0, 1e400, 1) m\n\
         b = trajectory.ballistic\n    launch_time = 1e999 s\nb -> p.anchor\n",
    );
    let too_large = |n: &str| format!("`{n}` holds a number beyond the largest heft can hold (about 1.8e308)");
    assert_eq!(
        located(&p)[..3],
        expect(&[
            ("t.graph:10:1", "a wire starts at an output, `b.OUTPUT`, not at a node"),
            ("t.graph:6:11", &too_large("key")),
            ("t.graph:7:11", &too_large("key")),
        ])[..]
    );
    assert!(
        located(&p).contains(&("t.graph:9:19".to_owned(), too_large("launch_time"))),
        "{:?}",
        located(&p)
    );
    let p = problems("format 1\nrate 24 fps\nframes -24..492233720368547758078\n");
    assert_eq!(
        located(&p),
        expect(&[("t.graph:3:1", "frame numbers run from -2^53 to 2^53 (9007199254740992)")])
    );
}

/// A bake no package could open, and that heft would need tens of gigabytes to build (4096
/// strands of 255 segments: a million joints), is refused at check time with its size.
#[test]
fn a_bake_too_large_is_refused_with_its_size() {
    let p = body_problems(
        "hair = xpbd.strand\n    count = 4096\n    segments = 255\nbake \"hair.glb\"\n    hair.positions\n",
    );
    assert_eq!(
        located(&p),
        expect(&[(
            "t.graph:7:6",
            "this bake would hold 1048576 joints keyed at 10 frames: more than a bake file takes (65536 joints, \
             32000000 keys in all)"
        )])
    );
}

/// Nodes check their own parameters when the graph is checked (`Node::check`), and the
/// problems point at the lines to change: a crouch deeper than the body allows, at
/// `crouch_depth`; a substep count that cannot be stable for the stiffness, at `substeps`,
/// with the count that is; and, with `substeps` left at its default, at the node.
#[test]
fn nodes_report_their_own_problems_at_check_time_where_they_are() {
    let p = body_problems("odile = trajectory.jump\n    takeoff_frame = 5\n    crouch_depth = 60 cm\n");
    assert_eq!(p.len(), 1, "{p:?}");
    assert_eq!(p[0].location(), "t.graph:6:20");
    assert!(
        p[0].message
            .contains("`crouch_depth` 0.600 m is deeper than a 1.65 m tall body allows"),
        "{}",
        p[0].message
    );

    let p = body_problems("braid = strand.euler\n    segments = 40\n    substeps = 4\n");
    assert_eq!(p.len(), 1, "{p:?}");
    assert_eq!(p[0].location(), "t.graph:6:16");
    assert!(
        p[0].message
            .starts_with("4 substeps make a step of 1.042e-2 s, not below the explicit stability limit"),
        "{}",
        p[0].message
    );
    assert!(help(&p[0]).contains("set `substeps` to at least"), "{}", help(&p[0]));

    let p = body_problems("braid = strand.euler\n    segments = 200\n");
    assert_eq!(p.len(), 1, "{p:?}");
    assert_eq!(p[0].location(), "t.graph:4:1");
    assert_eq!(p[0].label, "`substeps` of this node (its default)");
}

/// A parameter given once: `node.param` takes another node's value (declared before it), of
/// the same kind and dimension, within the taking parameter's own range; a plot's `mass` too.
/// A body's lengths follow its height unless the graph sets them: trajectory.jump declares
/// its crouch, ankle lift and landing depth as 0.18, 0.04 and 0.10 of `body_height`, so a
/// 1.20 m child crouches 0.216 m; a length the graph gives stays as given; `heft help` says
/// how the default is made.
#[test]
fn a_length_default_scales_with_the_body_height() {
    let plan = plan_with(
        "kid = trajectory.jump
    body_height = 120 cm
tall = trajectory.jump
    body_height = 2 m
    crouch_depth = 25 cm
",
        &[],
        None,
    )
    .expect("checks");
    let value = |node: &str, param: &str| {
        let n = plan.nodes.iter().find(|n| n.name == node).expect("node");
        let k = n.ty.spec().params.iter().position(|p| p.name == param).expect("param");
        match n.params[k] {
            ParamValue::Number(x) => x,
            ref other => panic!("{other:?}"),
        }
    };
    assert!((value("kid", "crouch_depth") - 0.18 * 1.2).abs() < 1e-15);
    assert!((value("kid", "takeoff_extension") - 0.04 * 1.2).abs() < 1e-15);
    assert!((value("kid", "landing_depth") - 0.10 * 1.2).abs() < 1e-15);
    assert_eq!(value("tall", "crouch_depth"), 0.25);
    assert!((value("tall", "landing_depth") - 0.10 * 2.0).abs() < 1e-15);
    let jump = plan.nodes.iter().find(|n| n.name == "kid").expect("node");
    let text = heft_runtime::node_docs::describe_type(&jump.ty);
    assert!(
        text.contains("default 0.18 x `body_height` (0.297 m at its default)"),
        "{text}"
    );
}

/// A scaled default that falls outside its parameter's range is a problem at the node, naming
/// the rule and the range (probe.span: `gap` defaults to a quarter of `length`, at most 0.5 m).
#[test]
fn a_scaled_default_out_of_range_is_refused_at_the_node() {
    let p = body_problems("s = probe.span\n    length = 3 m\n");
    assert_eq!(
        located(&p),
        expect(&[(
            "t.graph:4:1",
            "`gap` defaults to 0.25 x `length` = 0.75 m, outside its range 0 m to 0.5 m"
        )])
    );
}

#[test]
fn a_parameter_can_take_an_earlier_node_s_value() {
    let plan = plan_with(
        "odile = trajectory.jump
    body_mass = 61 kg
weight = weight.apparent
    mass = odile.body_mass
odile.com_acceleration -> weight.com_acceleration
odile.contact -> weight.contact
plot \"w.svg\"
    weight.force
    style = body_weights
    mass = odile.body_mass
",
        &[],
        None,
    )
    .expect("checks");
    let w = plan.nodes.iter().find(|n| n.name == "weight").expect("weight");
    let k = w.ty.spec().params.iter().position(|p| p.name == "mass").expect("mass");
    assert_eq!(w.params[k], ParamValue::Number(61.0));
    assert_eq!(plan.plots[0].mass, Some(61.0));

    let p = body_problems(
        "weight = weight.apparent
    mass = odile.body_mass
odile = trajectory.jump
    body_mass = 61 kg
    body_height = odile.body_mass
    rise = odlie.crouch_depth
odile2 = trajectory.jump
    crouch_depth = odile.body_height
plate = forceplate.analyse
    standing_height = odile.body_heigth
    onset_backtrack = odile.body_mass
    flight_threshold = odile.
",
    );
    assert_eq!(
        located(&p)[..7],
        expect(&[
            ("t.graph:15:29", "expected a parameter name after `.`"),
            (
                "t.graph:5:12",
                "`odile` is declared after this node: `mass` can take the value of a node declared before it"
            ),
            (
                "t.graph:8:19",
                "`odile.body_mass` is this node's own parameter: write `body_height`'s value"
            ),
            ("t.graph:9:12", "no node named `odlie` in the graph"),
            (
                "t.graph:11:20",
                "`crouch_depth` = `odile.body_height` = 1.65 m is out of range"
            ),
            ("t.graph:13:23", "`trajectory.jump` has no parameter `body_heigth`"),
            (
                "t.graph:14:23",
                "`odile.body_mass` is a number (a mass), but `onset_backtrack` takes a number (a time)"
            ),
        ])[..]
    );
    assert_eq!(help(&p[3]), "did you mean `odile`?");
    assert_eq!(help(&p[5]), "did you mean `odile.body_height`?");
}

//! The plugin boundary, exercised through real dynamically loaded libraries: the ABI check,
//! files that are not plugins, a node that panics or refuses, NaN detection, name clashes.

use heft_integration_tests::{fixture_dir, library, plugin_dir, registry, registry_with_probe};
use heft_node_sdk::abi::{ABI_MAJOR, ABI_MINOR};
use heft_node_sdk::host::{LoadError, Plugin};
use heft_runtime::check::Overrides;
use heft_runtime::eval::{EvalError, evaluate};
use heft_runtime::plan_text;
use heft_runtime::registry::Registry;

fn with_probe() -> Registry {
    registry_with_probe()
}

#[test]
fn a_plugin_of_another_abi_version_is_refused_naming_file_and_versions() {
    let path = library(fixture_dir(), "heft_test_plugin_wrong_abi");
    let err = Plugin::load(&path).expect_err("ABI 99 must be refused");
    match &err {
        LoadError::AbiMismatch { path: p, plugin, host } => {
            assert_eq!(p, &path);
            assert_eq!((plugin.0, plugin.1), (99, 3));
            assert_eq!((host.0, host.1), (ABI_MAJOR, ABI_MINOR));
        }
        other => panic!("expected an ABI mismatch, got {other:?}"),
    }
    let text = err.to_string();
    assert!(text.contains("libheft_test_plugin_wrong_abi"), "{text}");
    assert!(text.contains("plugin ABI 99.3"), "{text}");
    assert!(
        text.contains(&format!("this heft's ABI {ABI_MAJOR}.{ABI_MINOR}")),
        "{text}"
    );
}

#[test]
fn a_library_without_the_entry_symbol_is_refused() {
    let path = library(fixture_dir(), "heft_test_plugin_no_entry");
    let err = Plugin::load(&path).expect_err("not a plugin");
    assert!(matches!(err, LoadError::MissingEntry { .. }), "{err:?}");
    let text = err.to_string();
    assert!(
        text.contains("not a heft plugin") && text.contains("heft_plugin_entry_v1"),
        "{text}"
    );
}

#[test]
fn a_file_that_is_not_a_library_is_refused_and_discovery_goes_on() {
    let dir = tempfile::tempdir().expect("temp dir");
    let fake = library(dir.path(), "heft_not_really");
    std::fs::write(&fake, "this is text, not machine code\n").expect("write");
    let err = Plugin::load(&fake).expect_err("text is not a library");
    assert!(matches!(err, LoadError::Open { .. }), "{err:?}");
    assert!(err.to_string().contains("cannot open as a plugin library"), "{err}");
    // Discovery records the failure and still loads the real plugins next to it.
    let real = dir.path().join("real");
    std::fs::create_dir(&real).expect("mkdir");
    std::fs::copy(
        library(plugin_dir(), "heft_trajectory"),
        library(&real, "heft_trajectory"),
    )
    .expect("copy");
    let reg = heft_formats::discover(&[dir.path().to_path_buf(), real]);
    assert_eq!(reg.failures().len(), 1);
    assert!(matches!(reg.lookup("trajectory.ballistic"), Ok(Some(_))));
}

#[test]
fn the_real_plugin_describes_itself() {
    let reg = registry();
    let t = reg.lookup("trajectory.keyed").expect("unique").expect("present");
    let plugin = t.plugin().expect("a plugin node type");
    let d = plugin.plugin.descriptor();
    assert_eq!(d.name, "trajectory");
    assert_eq!(d.version, env!("CARGO_PKG_VERSION"));
    assert_eq!(t.spec().outputs.len(), 3);
    assert_eq!(plugin.sha256.len(), 64, "the file hash is recorded");
}

const PANIC_GRAPH: &str = "format 1\nrate 24 fps\nframes 1..10\nboom = probe.explode\nwrite boom.value\n";
const GOOD_GRAPH: &str = "format 1\nrate 24 fps\nframes 1..10\nc = probe.cloud\n    count = 2\nwrite c.points\n";

#[test]
fn a_panicking_node_is_an_error_naming_it_and_the_host_goes_on() {
    let reg = with_probe();
    let plan = plan_text("p.graph", PANIC_GRAPH, &reg, &Overrides::default()).expect("checks");
    for _ in 0..3 {
        let err = evaluate(&plan, Some(1)).expect_err("the node panics");
        match &err {
            EvalError::Node { node, ty, message } => {
                assert_eq!(node, "boom");
                assert_eq!(ty, "probe.explode");
                // The message and its place, said once (the panic itself prints nothing).
                assert!(
                    message.starts_with("the node panicked: index out of bounds")
                        && message.contains("(at tests/fixtures/plugin-probe/src/lib.rs:")
                        && !message.contains("panicked: panicked"),
                    "{message}"
                );
            }
            other => panic!("expected a node error, got {other:?}"),
        }
    }
    // The same process evaluates another graph afterwards.
    let plan = plan_text("g.graph", GOOD_GRAPH, &reg, &Overrides::default()).expect("checks");
    let e = evaluate(&plan, Some(2)).expect("evaluates after the panic");
    assert_eq!(e.values[0][0].len(), 10 * 2 * 3);
    assert_eq!(&e.values[0][0][..6], &[0.0, 0.0, 0.0, 1.0, 0.0, 0.0]);
}

#[test]
fn a_node_can_return_its_own_error() {
    let reg = with_probe();
    let g = "format 1\nrate 24 fps\nframes 1..3\nno = probe.refuse\nwrite no.value\n";
    let plan = plan_text("r.graph", g, &reg, &Overrides::default()).expect("checks");
    let err = evaluate(&plan, None).expect_err("refuses").to_string();
    assert_eq!(
        err,
        "node `no` (probe.refuse) failed: the strand would pass through the collider at frame 12; raise the substeps"
    );
}

#[test]
fn nan_output_names_node_port_column_and_first_bad_frame() {
    let reg = with_probe();
    let g = "format 1\nrate 24 fps\nframes 101..140\nsour = probe.spoil\n    from_frame = 117\nwrite sour.value\n";
    let plan = plan_text("n.graph", g, &reg, &Overrides::default()).expect("checks");
    match evaluate(&plan, None).expect_err("NaN is refused") {
        EvalError::NonFinite {
            node,
            port,
            frame,
            column,
            value,
        } => {
            assert_eq!((node.as_str(), port.as_str(), frame), ("sour", "value", 117));
            assert_eq!(column, "value.z [m]");
            assert_eq!(value, "NaN");
        }
        other => panic!("expected NonFinite, got {other:?}"),
    }
}

#[test]
fn two_plugins_offering_one_node_type_is_an_error_naming_both_files() {
    let dir = tempfile::tempdir().expect("temp dir");
    let original = library(plugin_dir(), "heft_trajectory");
    let copy = library(dir.path(), "heft_trajectory_copy");
    std::fs::copy(&original, &copy).expect("copy the plugin");
    let mut reg = registry();
    reg.load_file(&copy);
    let offers = reg.lookup("trajectory.ballistic").expect_err("two offers");
    assert_eq!(offers.len(), 2);
    let g = "format 1\nrate 24 fps\nframes 1..3\nb = trajectory.ballistic\nwrite b.position\n";
    let problems = plan_text("d.graph", g, &reg, &Overrides::default()).expect_err("ambiguous");
    assert_eq!(problems.len(), 1);
    let p = &problems[0];
    assert_eq!(p.location(), "d.graph:4:5");
    assert!(p.message.contains("offered by more than one plugin"), "{}", p.message);
    let help = p.help.clone().unwrap_or_default();
    assert!(help.contains(&copy.display().to_string()), "{help}");
    assert!(help.contains(&original.display().to_string()), "{help}");
    // Seven nodes of the ambiguous type: one problem, at the first, counting the others.
    let g: String = "format 1\nrate 24 fps\nframes 1..3\n".to_owned()
        + &(0..7)
            .map(|i| format!("b{i} = trajectory.ballistic\n"))
            .collect::<String>();
    let problems = plan_text("d.graph", &g, &reg, &Overrides::default()).expect_err("ambiguous");
    assert_eq!(problems.len(), 1, "{problems:?}");
    assert!(
        problems[0]
            .message
            .ends_with("is offered by more than one plugin (and 6 more nodes of this type)"),
        "{}",
        problems[0].message
    );
}

#[test]
fn the_same_file_reached_twice_is_loaded_once() {
    let dir = tempfile::tempdir().expect("temp dir");
    std::fs::copy(
        library(plugin_dir(), "heft_trajectory"),
        library(dir.path(), "heft_trajectory"),
    )
    .expect("copy");
    let d = dir.path().to_path_buf();
    let reg = heft_formats::discover(&[d.clone(), d.join("."), d]);
    assert_eq!(reg.plugins().len(), 1);
    assert!(matches!(reg.lookup("trajectory.ballistic"), Ok(Some(_))));
}

/// An output a node leaves unwritten is an error naming the node, the output, the column and
/// the first frame it left, not a silent zero.
#[test]
fn an_output_left_unwritten_is_an_error_naming_node_and_port() {
    let reg = with_probe();
    let text = "format 1\nrate 24 fps\nframes 1..10\nlazy = probe.forget\n    frames = 3\nwrite lazy.value\n";
    let plan = plan_text("f.graph", text, &reg, &Overrides::default()).expect("checks");
    match evaluate(&plan, Some(1)).expect_err("unwritten") {
        EvalError::Node { node, message, .. } => {
            assert_eq!(node, "lazy");
            assert!(
                message.contains("did not write its output `value` (column `value.x [m]` at frame 4"),
                "{message}"
            );
        }
        other => panic!("expected a node error, got {other:?}"),
    }
    let plan = plan_text(
        "f.graph",
        &text.replace("frames = 3", "frames = 10"),
        &reg,
        &Overrides::default(),
    )
    .expect("checks");
    evaluate(&plan, Some(1)).expect("all written");
}

/// The host shares its threads among the plugin nodes of a level, which run at the same time:
/// all of them to a node alone, half each to two, one each when there are more nodes than
/// threads, and one at `--threads 1` (a sweep point).
#[test]
fn a_node_is_given_its_share_of_the_threads() {
    let reg = with_probe();
    let graph = |nodes: usize| {
        let mut g = "format 1\nrate 24 fps\nframes 1..2\n".to_owned();
        for k in 0..nodes {
            g += &format!("t{k} = probe.threads\nwrite t{k}.count\n");
        }
        g
    };
    for (nodes, threads, each) in [(1, 4, 4), (2, 4, 2), (3, 4, 1), (2, 5, 2), (1, 1, 1), (4, 3, 1)] {
        let plan = plan_text("t.graph", &graph(nodes), &reg, &Overrides::default()).expect("checks");
        let e = evaluate(&plan, Some(threads)).expect("evaluates");
        for k in 0..nodes {
            assert_eq!(
                e.values[k][0], [each as f64; 2],
                "{nodes} nodes at --threads {threads}: node t{k}"
            );
        }
    }
}

/// A plugin built with panic = "abort" does not build: a panic in it would end heft unnamed.
#[test]
fn a_plugin_built_to_abort_on_panic_does_not_build() {
    let target = fixture_dir().parent().expect("fixture target").to_path_buf();
    let o = heft_integration_tests::fixture_cdylib("heft-test-plugin-probe", &target)
        .args(["--", "-C", "panic=abort"])
        .output()
        .expect("cargo runs");
    assert!(!o.status.success());
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("a heft plugin must be built with panic = \"unwind\""),
        "{err}"
    );
}

/// Two node types of one plugin under one name.
struct First;
struct Second;
fn twin() -> heft_node_sdk::NodeSpec {
    heft_node_sdk::NodeSpec {
        name: "twin".into(),
        doc: "d".into(),
        notes: String::new(),
        inputs: vec![],
        outputs: vec![],
        params: vec![],
        summaries: vec![],
    }
}
impl heft_node_sdk::Node for First {
    fn spec() -> heft_node_sdk::NodeSpec {
        twin()
    }
    fn evaluate(_: &heft_node_sdk::Params, _: &mut heft_node_sdk::Io<'_>) -> Result<(), heft_node_sdk::NodeError> {
        Ok(())
    }
}
impl heft_node_sdk::Node for Second {
    fn spec() -> heft_node_sdk::NodeSpec {
        twin()
    }
    fn evaluate(_: &heft_node_sdk::Params, _: &mut heft_node_sdk::Io<'_>) -> Result<(), heft_node_sdk::NodeError> {
        Ok(())
    }
}
heft_node_sdk::export_plugin!(name: "dup", nodes: [First, Second]);

/// A plugin listing one node type twice is refused, with the type named once.
#[test]
fn a_plugin_listing_a_node_type_twice_is_refused_once() {
    let mut reg = Registry::new();
    reg.add_static(plugin_table(), "dup (linked)").expect("describes");
    assert!(reg.plugins().is_empty());
    assert_eq!(reg.failures().len(), 1);
    let e = reg.failures()[0].to_string();
    assert!(e.contains("plugin `dup` lists the node type `twin` twice"), "{e}");
}

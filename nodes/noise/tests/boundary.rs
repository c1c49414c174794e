//! The plugin through the C ABI, linked statically: the calls the `heft` host makes.

mod common;

use heft_node_sdk::field::FieldView;
use heft_node_sdk::host::Plugin;
use heft_node_sdk::{Node, ParamValue, Params};
use heft_noise::{Gust, Wind, plugin_table};

fn defaults<N: Node>() -> Vec<ParamValue> {
    Params::defaults(&N::spec()).expect("defaults").values().to_vec()
}

#[test]
fn the_plugin_describes_its_nodes_and_evaluates_through_the_boundary() {
    let plugin = Plugin::from_static(plugin_table(), "noise").expect("loads");
    let d = plugin.descriptor();
    assert_eq!(d.name, "noise");
    let names: Vec<&str> = d.nodes.iter().map(|n| n.name.as_str()).collect();
    assert_eq!(names, ["gust", "jitter", "wind"]);
    assert_eq!(d.nodes[2], Wind::spec());

    let tl = common::timeline(5, 3, 24);
    // Wind: N from the node (3 + 8^3), then a field per frame and the peak speed.
    let params = Plugin::encode_params(&defaults::<Wind>()).expect("encodes");
    let points = plugin.output_points(2, &params, tl, &[7], 1).expect("points");
    assert_eq!(points, [515]);
    let mut field = vec![0.0; 3 * 515 * 3];
    let mut summaries = [f64::NAN];
    let warnings = plugin
        .evaluate(
            2,
            &params,
            tl,
            &[(&[], 7)],
            &mut [(&mut field, 3 * 515)],
            &mut summaries,
        )
        .expect("evaluates");
    assert!(warnings.is_empty(), "{warnings:?}");
    let direct = common::run::<Wind>(tl, &[], &[&[]]).expect("direct");
    assert_eq!(field, direct.outputs[0]);
    assert_eq!(summaries.to_vec(), direct.summaries);
    for frame in field.chunks_exact(3 * 515) {
        assert!(FieldView::from_frame(frame).is_ok());
    }

    // Gust: the same values as a direct call, bit for bit.
    let params = Plugin::encode_params(&defaults::<Gust>()).expect("encodes");
    let mut value = vec![0.0; 3];
    plugin
        .evaluate(0, &params, tl, &[], &mut [(&mut value, 1)], &mut [])
        .expect("evaluates");
    let direct = common::run::<Gust>(tl, &[], &[]).expect("direct");
    assert_eq!(
        value.iter().map(|v| v.to_bits()).collect::<Vec<_>>(),
        direct.outputs[0].iter().map(|v| v.to_bits()).collect::<Vec<_>>()
    );
}

#[test]
fn a_node_error_crosses_as_an_error_not_a_panic() {
    let plugin = Plugin::from_static(plugin_table(), "noise").expect("loads");
    let tl = common::timeline(0, 2, 24);
    let params = Plugin::encode_params(&defaults::<heft_noise::Jitter>()).expect("encodes");
    let input = vec![0.0; 14];
    let mut out = vec![0.0; 14];
    let e = plugin
        .evaluate(1, &params, tl, &[(&input, 7)], &mut [(&mut out, 7)], &mut [])
        .expect_err("zero quaternion");
    assert_eq!(e.status, heft_node_sdk::abi::Status::NodeError);
    assert!(e.message.contains("frame 0"), "{}", e.message);
}

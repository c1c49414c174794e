//! `Io::output_pair`: two output buffers at once, in the order asked, with clear errors.
use heft_node_sdk::{Dimension, Io, NodeSpec, PortKind, PortSpec, Timeline};

fn spec() -> NodeSpec {
    NodeSpec {
        name: "pair".into(),
        doc: "Two outputs.".into(),
        outputs: vec![
            PortSpec::new("a", PortKind::Scalar, Dimension::Length, "First."),
            PortSpec::new("b", PortKind::Scalar, Dimension::Length, "Second."),
        ],
        ..NodeSpec::default()
    }
}

#[test]
fn two_outputs_at_once_in_the_order_asked() {
    let spec = spec();
    let tl = Timeline {
        start_frame: 0,
        frame_count: 2,
        rate_num: 24,
        rate_den: 1,
    };
    let (mut a, mut b) = (vec![0.0; 2], vec![0.0; 2]);
    {
        let mut io = Io::new(tl, &spec, Vec::new(), vec![&mut a[..], &mut b[..]], vec![1, 1]);
        let (x, y) = io.output_pair("b", "a").expect("two outputs");
        x[0] = 2.0;
        y[1] = 1.0;
        let e = io.output_pair("a", "a").unwrap_err().0;
        assert!(e.contains("`a` asked for twice"), "{e}");
        let e = io.output_pair("a", "c").unwrap_err().0;
        assert!(e.contains("no output port `c`"), "{e}");
    }
    assert_eq!((a, b), (vec![0.0, 1.0], vec![2.0, 0.0]));
}

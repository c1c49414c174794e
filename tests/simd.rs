//! The XPBD strand nodes run on the widest SIMD instruction set the CPU has, picked at run time,
//! or on the target's portable baseline when `HEFT_SIMD=portable`. Rust neither reassociates
//! nor contracts floating-point arithmetic, so the two paths must give the same bits: the demo
//! jump graph (a braid with a wind field and a head collider) run both ways, with the braid on
//! `xpbd.strand` and on `xpbd.strand_fast`, writes byte-identical files.
use heft_integration_tests::{heft, workspace_root};
use std::path::Path;

fn run(graph: &Path, out: &Path, portable: bool) {
    let mut cmd = heft();
    cmd.args(["run", "--quiet"]).arg(graph).arg("--out").arg(out);
    if portable {
        cmd.env("HEFT_SIMD", "portable");
    } else {
        cmd.env_remove("HEFT_SIMD");
    }
    let o = cmd.output().expect("heft runs");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
}

fn files(dir: &Path) -> Vec<(String, Vec<u8>)> {
    let mut v: Vec<(String, Vec<u8>)> = std::fs::read_dir(dir)
        .expect("output folder")
        .map(|e| e.expect("entry").path())
        .filter(|p| p.extension().is_some_and(|e| e == "csv"))
        .map(|p| {
            (
                p.file_name().unwrap().to_string_lossy().into_owned(),
                std::fs::read(&p).unwrap(),
            )
        })
        .collect();
    v.sort();
    v
}

#[test]
fn the_widest_and_the_portable_instruction_set_give_the_same_bits() {
    let dir = tempfile::tempdir().expect("temp dir");
    let demo = std::fs::read_to_string(workspace_root().join("graphs/jump.graph")).expect("demo graph");
    assert!(
        demo.contains("braid = xpbd.strand "),
        "the demo's braid is an xpbd.strand"
    );
    let f32_graph = dir.path().join("jump_f32.graph");
    std::fs::write(
        &f32_graph,
        demo.replace("braid = xpbd.strand ", "braid = xpbd.strand_fast "),
    )
    .unwrap();
    for (name, graph) in [("f64", workspace_root().join("graphs/jump.graph")), ("f32", f32_graph)] {
        let (a, b) = (
            dir.path().join(format!("{name}_wide")),
            dir.path().join(format!("{name}_portable")),
        );
        run(&graph, &a, false);
        run(&graph, &b, true);
        let (fa, fb) = (files(&a), files(&b));
        assert!(
            fa.iter().any(|(n, _)| n.starts_with("braid")),
            "{name}: the braid is written: {:?}",
            fa.iter().map(|f| &f.0).collect::<Vec<_>>()
        );
        assert_eq!(fa.len(), fb.len());
        for ((na, da), (nb, db)) in fa.iter().zip(&fb) {
            assert_eq!(na, nb);
            assert!(
                da == db,
                "{name}: {na} differs between the widest and the portable instruction set"
            );
        }
    }
}

//! Any bytes as the glTF binary file of a character (seed the corpus with data/juno.glb).
#![no_main]

mod common;

libfuzzer_sys::fuzz_target!(|data: &[u8]| {
    let dir = tempfile::tempdir().expect("temp dir");
    std::fs::write(dir.path().join("c.glb"), data).expect("write");
    let graph = dir.path().join("g.graph");
    std::fs::write(
        &graph,
        "format 1\nrate 24 fps\nframes 0..10\nc = track.character\n    file = \"c.glb\"\nwrite c.root\n",
    )
    .expect("write");
    common::check_file(&graph);
});

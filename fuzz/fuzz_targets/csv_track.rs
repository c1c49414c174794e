//! Any bytes as the CSV file of a force track.
#![no_main]

mod common;

libfuzzer_sys::fuzz_target!(|data: &[u8]| {
    let dir = tempfile::tempdir().expect("temp dir");
    std::fs::write(dir.path().join("plate.csv"), data).expect("write");
    let graph = dir.path().join("g.graph");
    std::fs::write(
        &graph,
        "format 1\nrate 1000 fps\nframes 0..99\nplate = track.force\n    file = \"plate.csv\"\n    \
         time_column = \"time [s]\"\n    column = \"force [N]\"\nwrite plate.value\n",
    )
    .expect("write");
    common::check_file(&graph);
});

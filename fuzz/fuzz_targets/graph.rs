//! Any bytes as a graph file: parsed, checked against the linked plugins, problems rendered.
#![no_main]

mod common;

libfuzzer_sys::fuzz_target!(|data: &[u8]| {
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join("fuzz.graph");
    std::fs::write(&path, data).expect("write");
    common::check_file(&path);
});

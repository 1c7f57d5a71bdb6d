//! A small valid study derived from the bytes: evaluate and render the report files.
#![no_main]

#[path = "../harness.rs"]
mod harness;

libfuzzer_sys::fuzz_target!(|data: &[u8]| {
    let _ = harness::analysis(data);
});

//! Arbitrary bytes as a study file: decode, parse, check, plan and (inline results) analyse.
#![no_main]

#[path = "../harness.rs"]
mod harness;

libfuzzer_sys::fuzz_target!(|data: &[u8]| {
    let _ = harness::study_loader(data);
});

//! Arbitrary bytes as the results.csv of the HPLC example study: read and analyse.
#![no_main]

#[path = "../harness.rs"]
mod harness;

libfuzzer_sys::fuzz_target!(|data: &[u8]| {
    let _ = harness::results_csv(data);
});

//! The fuzz targets' smoke run: every committed corpus file (and every input of a crash that has
//! been fixed) replayed through the same harness functions the cargo-fuzz targets call, on the
//! stable toolchain and without libFuzzer.
//!
//! The long fuzz runs happen outside the test suite (README, "Fuzzing"); this test keeps what
//! they found from coming back, in a few seconds of `cargo test`. How long the once-slow inputs
//! take is measured by the benchmark (`cargo bench --bench analysis -- fuzz-fixed`), not asserted
//! here.

#[path = "../../fuzz/harness.rs"]
mod harness;

use std::panic::{AssertUnwindSafe, catch_unwind};
use std::path::{Path, PathBuf};

use harness::Reached;

/// Committed corpus size limits (the corpus is a seed set, not a fuzzing run's output).
const MAX_CORPUS_FILES: usize = 200;
const MAX_CORPUS_BYTES: u64 = 2 * 1024 * 1024;

fn fuzz_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("fuzz")
}

/// The committed inputs of a target: its corpus seeds and its fixed crash inputs.
fn inputs(target: &str) -> Vec<PathBuf> {
    let mut files = harness::corpus_files(&fuzz_dir().join("corpus").join(target));
    files.extend(harness::corpus_files(
        &fuzz_dir().join("artifacts-fixed").join(target),
    ));
    files
}

/// Runs every input through `harness`; lists every input that panicked, and
/// checks that at least one input got as far as `deepest` (a harness that refuses everything
/// would otherwise pass).
fn replay(target: &str, harness: fn(&[u8]) -> Reached, deepest: Reached) {
    let files = inputs(target);
    assert!(
        !files.is_empty(),
        "no corpus for fuzz target {target} under fuzz/corpus/{target}/"
    );
    let mut failures = Vec::new();
    let mut furthest = Reached::Nothing;
    let mut stages = std::collections::BTreeMap::<Reached, usize>::new();
    for file in &files {
        let bytes = std::fs::read(file).unwrap();
        let outcome = catch_unwind(AssertUnwindSafe(|| harness(&bytes)));
        match outcome {
            Ok(reached) => {
                furthest = furthest.max(reached);
                *stages.entry(reached).or_default() += 1;
            }
            Err(_) => failures.push(format!("{}: panicked", file.display())),
        }
    }
    assert!(
        failures.is_empty(),
        "{} of {} inputs of {target} failed:\n{}",
        failures.len(),
        files.len(),
        failures.join("\n")
    );
    println!(
        "{target}: {} inputs, stage reached: {stages:?}",
        files.len()
    );
    assert_eq!(
        furthest, deepest,
        "no input of {target} got through the whole harness"
    );
}

#[test]
fn study_loader_survives_its_corpus() {
    replay("study_loader", harness::study_loader, Reached::Analysed);
}

#[test]
fn results_csv_survives_its_corpus() {
    replay("results_csv", harness::results_csv, Reached::Analysed);
}

#[test]
fn analysis_survives_its_corpus() {
    replay("analysis", harness::analysis, Reached::Rendered);
}

#[test]
fn committed_corpus_stays_small() {
    let mut count = 0;
    let mut bytes = 0;
    for target in ["study_loader", "results_csv", "analysis"] {
        for file in inputs(target) {
            count += 1;
            bytes += std::fs::metadata(&file).map(|m| m.len()).unwrap_or(0);
        }
    }
    assert!(count < MAX_CORPUS_FILES, "{count} corpus files");
    assert!(bytes < MAX_CORPUS_BYTES, "{bytes} bytes of corpus");
}

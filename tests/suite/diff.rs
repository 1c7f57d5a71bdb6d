//! `plateau diff` through the library: two versions of a study, from two files or from git.
//!
//! The study is tests/fixtures/diff-hplc-rerun, a copy of examples/hplc-assay (a 2^3 full
//! factorial with 3 nominal runs, limit |% effect| ≤ 2 % on the assay). In the re-run the four
//! pH-high runs (3, 4, 7, 8 in standard order) read 0.5 higher. Expected numbers, by hand:
//! - old pH effect: (98.9 + 99.0 + 98.3 + 98.4)/4 − (101.0 + 101.5 + 100.6 + 100.7)/4
//!   = 98.65 − 100.95 = −2.30; new: (99.4 + 99.5 + 98.8 + 98.9)/4 − 100.95 = −1.80;
//! - reference = mean of the nominal runs (99.9 + 99.7 + 99.8)/3 = 99.8, unchanged, so the
//!   percent effect goes from −2.305 % (relevant) to −1.804 % (not relevant);
//! - every other column has two of the changed runs at each level, so no other effect moves.

use std::path::{Path, PathBuf};
use std::process::Command;

use plateau::diff::{self, DiffError, StudyDiff};
use plateau::pipeline;

const FIXTURE: &str = "diff-hplc-rerun";

/// A folder with the study and the given results file as `results.csv`.
fn version(dir: &Path, results: &str) -> PathBuf {
    std::fs::create_dir_all(dir).unwrap();
    let src = crate::common::fixture(FIXTURE);
    std::fs::copy(src.join("study.yaml"), dir.join("study.yaml")).unwrap();
    std::fs::copy(src.join(results), dir.join("results.csv")).unwrap();
    dir.join("study.yaml")
}

fn diff_of(old: &Path, new: &Path) -> StudyDiff {
    let old = pipeline::evaluate(old).unwrap();
    let new = pipeline::evaluate(new).unwrap();
    diff::compare(&old, &new)
}

fn git(dir: &Path, args: &[&str]) {
    let out = Command::new("git")
        .arg("-C")
        .arg(dir)
        .args([
            "-c",
            "user.name=Test",
            "-c",
            "user.email=test@example.invalid",
            "-c",
            "commit.gpgsign=false",
        ])
        .args(args)
        .env("GIT_CONFIG_GLOBAL", "/dev/null")
        .env("GIT_CONFIG_NOSYSTEM", "1")
        .output()
        .expect("git runs");
    assert!(
        out.status.success(),
        "git {args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
}

/// A repository whose first commit has the original results and whose second has the re-run.
fn repository(root: &Path) -> PathBuf {
    git(root, &["init", "-q"]);
    let study = version(&root.join("studies/hplc"), "results.csv");
    git(root, &["add", "."]);
    git(root, &["commit", "-q", "-m", "first run"]);
    version(&root.join("studies/hplc"), "results-rerun.csv");
    git(
        root,
        &["commit", "-q", "-a", "-m", "re-run of the pH-high runs"],
    );
    study
}

/// Response, effect, verdict, old, new.
type Flip<'a> = (
    &'a str,
    Option<&'a str>,
    &'a str,
    Option<bool>,
    Option<bool>,
);

/// Checks the changes the re-run must show (shared by the file and the git comparison).
fn assert_rerun_changes(d: &StudyDiff) {
    // Inputs: the four re-measured assay values, nothing else.
    let runs: Vec<(&str, &str, f64, f64)> = d
        .inputs
        .results
        .iter()
        .map(|c| (c.run.as_str(), c.response.as_str(), c.old[0], c.new[0]))
        .collect();
    assert_eq!(
        runs,
        [
            ("3", "assay", 98.9, 99.4),
            ("4", "assay", 99.0, 99.5),
            ("7", "assay", 98.3, 98.8),
            ("8", "assay", 98.4, 98.9)
        ]
    );
    assert!(
        d.inputs.factors.is_empty() && d.inputs.design.is_empty() && d.inputs.acceptance.is_empty()
    );

    // The changed effect: only pH on the assay, −2.30 → −1.80 (by hand, module comment).
    assert_eq!(d.outputs.effects.len(), 1, "{:?}", d.outputs.effects);
    let e = &d.outputs.effects[0];
    assert_eq!((e.response.as_str(), e.label.as_str()), ("assay", "ph"));
    let (old, new) = (e.old.unwrap(), e.new.unwrap());
    assert!((old.effect - -2.30).abs() < 1e-9 && (new.effect - -1.80).abs() < 1e-9);
    assert!((old.percent - -2.30 / 99.8 * 100.0).abs() < 1e-9);
    assert!((new.percent - -1.80 / 99.8 * 100.0).abs() < 1e-9);

    // The flipped verdicts: the pH effect is no longer relevant, the assay is now robust.
    let flips: Vec<Flip> = d
        .outputs
        .verdicts
        .iter()
        .map(|v| {
            (
                v.response.as_str(),
                v.effect.as_deref(),
                v.verdict.as_str(),
                v.old,
                v.new,
            )
        })
        .collect();
    assert_eq!(
        flips,
        [
            ("assay", Some("ph"), "relevant", Some(true), Some(false)),
            ("assay", None, "robust", Some(false), Some(true))
        ]
    );

    // The changed conclusion sentences.
    let c = &d.outputs.conclusion;
    assert!(
        c.removed
            .iter()
            .any(|s| s.contains("Assay: Mobile-phase pH exceeded the limit with \u{2212}2.30")),
        "{:?}",
        c.removed
    );
    assert!(
        c.added.iter().any(|s| s.starts_with(
            "Assay: No estimated effect, main effect or interaction, exceeded the limit"
        ) && s.contains("Mobile-phase pH with \u{2212}1.80")),
        "{:?}",
        c.added
    );
    assert!(
        c.added
            .iter()
            .any(|s| s.contains("the method is robust for these ranges")),
        "{:?}",
        c.added
    );
    assert!(!d.is_empty());
}

#[test]
fn a_rerun_lists_the_changed_effect_the_flipped_verdict_and_the_changed_sentences() {
    let dir = tempfile::tempdir().unwrap();
    let old = version(&dir.path().join("old"), "results.csv");
    let new = version(&dir.path().join("new"), "results-rerun.csv");
    let d = diff_of(&old, &new);
    assert_rerun_changes(&d);

    let text = diff::text(&d);
    assert!(text.contains("ph"), "{text}");
    assert!(text.contains("\u{2212}2.3 (\u{2212}2.30461 %)"), "{text}");
    assert!(text.contains("\u{2212}1.8 (\u{2212}1.80361 %)"), "{text}");
    assert!(text.contains("verdicts that flipped"), "{text}");
    assert!(
        text.contains("    - Assay: Mobile-phase pH exceeded the limit"),
        "{text}"
    );
    assert!(!text.contains("no changes"), "{text}");
}

#[test]
fn the_json_names_the_flipped_verdict() {
    let dir = tempfile::tempdir().unwrap();
    let old = version(&dir.path().join("old"), "results.csv");
    let new = version(&dir.path().join("new"), "results-rerun.csv");
    let json = serde_json::to_value(diff_of(&old, &new)).unwrap();
    let flips = json["outputs"]["verdicts"].as_array().unwrap();
    assert_eq!(flips[0]["effect"], "ph");
    assert_eq!(flips[0]["verdict"], "relevant");
    assert_eq!(flips[0]["old"], true);
    assert_eq!(flips[0]["new"], false);
    assert_eq!(json["inputs"]["results"][0]["old"][0], 98.9);
}

#[test]
fn identical_files_give_an_empty_diff_that_says_no_changes() {
    let dir = tempfile::tempdir().unwrap();
    let a = version(&dir.path().join("a"), "results.csv");
    let b = version(&dir.path().join("b"), "results.csv");
    let d = diff_of(&a, &b);
    assert!(d.is_empty(), "{}", diff::text(&d));
    assert_eq!(d.old.sha256, d.new.sha256);
    assert!(
        diff::text(&d).contains("\nno changes\n"),
        "{}",
        diff::text(&d)
    );
}

#[test]
fn a_changed_factor_range_and_limit_are_listed_as_inputs() {
    let dir = tempfile::tempdir().unwrap();
    let old = version(&dir.path().join("old"), "results.csv");
    let new = version(&dir.path().join("new"), "results.csv");
    let text = std::fs::read_to_string(&new).unwrap();
    let text = text
        .replace(
            "    nominal: 35\n    delta: 2\n",
            "    nominal: 35\n    delta: 3\n",
        )
        .replace("effect-limit: 2.0", "effect-limit: 2.5");
    std::fs::write(&new, text).unwrap();
    let d = diff_of(&old, &new);
    let factor: Vec<(&str, &str, String, String)> = d
        .inputs
        .factors
        .iter()
        .map(|c| {
            (
                c.item.as_str(),
                c.field.as_str(),
                c.old.to_string(),
                c.new.to_string(),
            )
        })
        .collect();
    assert_eq!(
        factor,
        [
            ("temp", "low", "33.0".to_string(), "32.0".to_string()),
            ("temp", "high", "37.0".to_string(), "38.0".to_string())
        ]
    );
    let limit = d
        .inputs
        .acceptance
        .iter()
        .find(|c| c.field == "effect-limit")
        .unwrap();
    assert_eq!(
        (limit.old.as_f64(), limit.new.as_f64()),
        (Some(2.0), Some(2.5))
    );
    // The same data with a wider limit: −2.30 % is no longer relevant.
    assert!(
        d.outputs
            .verdicts
            .iter()
            .any(|v| v.verdict == "robust" && v.new == Some(true))
    );
    // The limit is also a criterion number.
    assert!(
        d.outputs
            .numbers
            .iter()
            .any(|n| n.quantity == "limit" && n.new == Some(2.5))
    );
    assert!(d.inputs.results.is_empty());
}

#[test]
fn the_working_file_is_compared_with_its_previous_commit() {
    let dir = tempfile::tempdir().unwrap();
    let study = repository(dir.path());
    let rev = diff::load_revision(&study, "HEAD~1").unwrap();
    assert_eq!(rev.repo_path, "studies/hplc/study.yaml");
    assert_eq!(rev.data_path.as_deref(), Some("studies/hplc/results.csv"));
    assert!(rev.text.contains("RS-2026-014"));
    let old = diff::evaluate_revision(&rev).unwrap();
    let new = pipeline::evaluate(&study).unwrap();
    let d = diff::compare(&old, &new)
        .with_labels(rev.label(), "working copy")
        .with_files(rev.file(), study.display().to_string());
    assert_rerun_changes(&d);
    assert!(d.old.label.starts_with("HEAD~1 ("), "{}", d.old.label);
    let text = diff::text(&d);
    assert!(text.contains("old: HEAD~1 ("), "{text}");
    assert!(text.contains("HEAD~1:studies/hplc/study.yaml"), "{text}");
}

#[test]
fn a_revision_reads_the_committed_results_not_the_working_file() {
    let dir = tempfile::tempdir().unwrap();
    let study = repository(dir.path());
    let committed = std::fs::read(study.with_file_name("results.csv")).unwrap();
    std::fs::write(study.with_file_name("results.csv"), "edited since\n").unwrap();
    let rev = diff::load_revision(&study, "HEAD").unwrap();
    let read = plateau::files::Files::read(
        &rev.files,
        std::path::Path::new("studies/hplc/results.csv"),
        u64::MAX,
    );
    assert_eq!(read.unwrap(), committed);
    assert!(diff::evaluate_revision(&rev).is_ok());
}

#[test]
fn the_working_file_against_head_is_empty_after_a_commit() {
    let dir = tempfile::tempdir().unwrap();
    let study = repository(dir.path());
    let rev = diff::load_revision(&study, "HEAD").unwrap();
    let d = diff::compare(
        &diff::evaluate_revision(&rev).unwrap(),
        &pipeline::evaluate(&study).unwrap(),
    );
    assert!(d.is_empty(), "{}", diff::text(&d));
    assert_eq!(d.old.sha256, d.new.sha256);
}

#[test]
fn an_unknown_revision_is_a_clear_error() {
    let dir = tempfile::tempdir().unwrap();
    let study = repository(dir.path());
    let e = diff::load_revision(&study, "v9.9-no-such-tag").unwrap_err();
    assert!(matches!(e, DiffError::UnknownRevision { .. }), "{e:?}");
    let message = e.to_string();
    assert!(
        message.contains("unknown revision `v9.9-no-such-tag`"),
        "{message}"
    );
    assert!(message.contains("HEAD~1"), "{message}");
}

#[test]
fn a_revision_before_the_first_commit_is_a_clear_error() {
    let dir = tempfile::tempdir().unwrap();
    let study = repository(dir.path());
    let e = diff::load_revision(&study, "HEAD~2").unwrap_err();
    assert!(e.to_string().contains("unknown revision `HEAD~2`"), "{e}");
}

#[test]
fn a_study_not_in_the_revision_is_a_clear_error_naming_the_file() {
    let dir = tempfile::tempdir().unwrap();
    let study = repository(dir.path());
    let other = dir.path().join("studies/second/study.yaml");
    version(other.parent().unwrap(), "results.csv");
    git(dir.path(), &["add", "."]);
    git(dir.path(), &["commit", "-q", "-m", "second study"]);
    let e = diff::load_revision(&other, "HEAD~1").unwrap_err();
    assert!(matches!(e, DiffError::NotInRevision { .. }), "{e:?}");
    let message = e.to_string();
    assert!(
        message.contains("studies/second/study.yaml is not a file in revision `HEAD~1`"),
        "{message}"
    );
    // The first study is there.
    assert!(diff::load_revision(&study, "HEAD~1").is_ok());
}

#[test]
fn a_results_file_not_in_the_revision_is_a_clear_error_naming_it() {
    let dir = tempfile::tempdir().unwrap();
    git(dir.path(), &["init", "-q"]);
    let study = version(&dir.path().join("s"), "results.csv");
    // Commit the study without its results file.
    git(dir.path(), &["add", "s/study.yaml"]);
    git(dir.path(), &["commit", "-q", "-m", "plan"]);
    let e = diff::load_revision(&study, "HEAD").unwrap_err();
    let message = e.to_string();
    assert!(
        message.contains("s/results.csv is not a file in revision `HEAD`"),
        "{message}"
    );
}

#[test]
fn a_study_outside_a_repository_is_a_clear_error() {
    let dir = tempfile::tempdir().unwrap();
    let study = version(dir.path(), "results.csv");
    let e = diff::load_revision(&study, "HEAD").unwrap_err();
    assert!(matches!(e, DiffError::NotARepository { .. }), "{e:?}");
    assert!(
        e.to_string().contains("is not inside a git repository"),
        "{e}"
    );
}

#[test]
fn problems_of_an_old_revision_name_the_revision_not_the_copy() {
    let dir = tempfile::tempdir().unwrap();
    git(dir.path(), &["init", "-q"]);
    let study = version(&dir.path().join("s"), "results.csv");
    let good = std::fs::read_to_string(&study).unwrap();
    std::fs::write(
        &study,
        good.replace(
            "delta: 0.1\n    justification: Buffer",
            "delta: -0.1\n    justification: Buffer",
        ),
    )
    .unwrap();
    git(dir.path(), &["add", "."]);
    git(dir.path(), &["commit", "-q", "-m", "broken"]);
    std::fs::write(&study, good).unwrap();
    git(dir.path(), &["commit", "-q", "-a", "-m", "fixed"]);
    let rev = diff::load_revision(&study, "HEAD~1").unwrap();
    let problems = diff::evaluate_revision(&rev).unwrap_err();
    let first = problems.0.first().unwrap();
    assert_eq!(first.file, "HEAD~1:s/study.yaml", "{problems}");
}

/// The behaviours that need typst 0.15: they typeset and read the PDF.
mod typeset {
    use super::*;

    #[test]
    fn the_change_summary_pdf_of_identical_files_says_no_changes() {
        let typst = plateau::report::typst::find(Some(&crate::common::typst_binary())).unwrap();
        let dir = tempfile::tempdir().unwrap();
        let a = version(&dir.path().join("a"), "results.csv");
        let d = diff_of(&a, &a);
        let out = dir.path().join("same.pdf");
        diff::write_pdf(&d, &typst, &out, false).unwrap();
        assert!(crate::common::pdf_text(&out).contains("No changes"));
    }

    #[test]
    fn the_change_summary_pdf_shows_the_flipped_verdict() {
        let typst = plateau::report::typst::find(Some(&crate::common::typst_binary())).unwrap();
        let dir = tempfile::tempdir().unwrap();
        let old = version(&dir.path().join("old"), "results.csv");
        let new = version(&dir.path().join("new"), "results-rerun.csv");
        let d = diff_of(&old, &new).with_labels("first run", "re-run");
        let out = dir.path().join("change.pdf");
        diff::write_pdf(&d, &typst, &out, false).unwrap();
        let text = crate::common::pdf_text(&out);
        assert!(text.contains("RS-2026-014"), "{text}");
        assert!(
            text.contains(&d.old.sha256) && text.contains(&d.new.sha256),
            "{text}"
        );
        let verdict_line = text
            .lines()
            .find(|l| l.contains("relevant") && l.contains("ph"))
            .unwrap_or_else(|| panic!("no verdict row:\n{text}"));
        assert!(
            verdict_line.contains("yes") && verdict_line.contains("no"),
            "{verdict_line}"
        );
        assert!(
            text.lines()
                .any(|l| l.contains("robust") && l.contains("no") && l.contains("yes")),
            "{text}"
        );
        assert!(
            text.contains("Reviewed by") && text.contains("Approved by"),
            "{text}"
        );
        assert!(text.contains("qualified staff"), "{text}");
        // No staging folder is left behind.
        let left: Vec<_> = std::fs::read_dir(dir.path())
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
            .filter(|n| n.starts_with(".diff"))
            .collect();
        assert!(left.is_empty(), "{left:?}");
    }
}

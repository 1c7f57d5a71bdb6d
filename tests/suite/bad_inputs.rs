//! The bad-input suite: every folder under `tests/bad_inputs/` is one faulty (or tricky but
//! valid) study, run through the real `plateau check` binary.
//!
//! A user who feeds plateau a broken file must get a message naming the file, the line and the
//! field, and what would be valid — never a panic, a hang or a silent acceptance. Keeping one
//! small folder per fault makes each case readable on its own and lets a new fault be added
//! without touching this file.
//!
//! Each case folder holds `study.yaml` (its first line a `# fault: ...` comment), any data file
//! it needs, and `expect.txt`:
//! - line 1: the expected exit code;
//! - each further non-empty line: a fragment that must appear in stderr (in stdout when the
//!   expected exit code is 0, where the `ok` lines are printed);
//! - a line starting with `!`: a fragment that must NOT appear (library jargon, knock-on
//!   errors).
//!
//! The binary runs with the case folder as its current directory (`plateau check study.yaml`),
//! so messages name `study.yaml` and `results.csv` relatively.

use std::collections::BTreeSet;
use std::io::Read;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::sync::OnceLock;
use std::time::{Duration, Instant};

/// A case still running after this long is taken as hung (a blocked read, an endless loop),
/// killed and reported, so the suite ends instead of waiting forever. It is a guard against
/// hangs, not a limit on speed: the benchmark (`cargo bench --bench analysis`) measures speed.
const HANG_GUARD: Duration = Duration::from_secs(300);
/// Fewest cases the suite must hold (one per fault listed in the suite's brief).
const MIN_CASES: usize = 40;

/// What `expect.txt` asks for.
#[derive(Debug)]
struct Expectation {
    exit_code: i32,
    present: Vec<String>,
    absent: Vec<String>,
}

/// What the binary did on one case.
#[derive(Debug)]
struct Outcome {
    /// `None` when the process was killed by the timeout or by a signal.
    exit_code: Option<i32>,
    stdout: String,
    stderr: String,
    timed_out: bool,
    elapsed: Duration,
    /// Files that appeared in the case folder during the run.
    new_files: Vec<String>,
}

/// One case folder with its expectation and outcome.
#[derive(Debug)]
struct Case {
    name: String,
    expectation: Result<Expectation, String>,
    outcome: Result<Outcome, String>,
}

fn cases_root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests")
        .join("bad_inputs")
}

/// Case folders in name order, so failures are listed the same way on every run.
fn case_dirs() -> Vec<PathBuf> {
    let root = cases_root();
    let mut dirs: Vec<PathBuf> = std::fs::read_dir(&root)
        .unwrap_or_else(|e| panic!("cannot list {}: {e}", root.display()))
        .filter_map(Result::ok)
        .map(|entry| entry.path())
        .filter(|p| p.is_dir())
        .collect();
    dirs.sort();
    dirs
}

fn parse_expectation(text: &str) -> Result<Expectation, String> {
    let mut lines = text.lines().map(|l| l.trim_end_matches('\r'));
    let first = lines.next().ok_or("expect.txt is empty")?;
    let exit_code = first
        .trim()
        .parse()
        .map_err(|_| format!("expect.txt line 1 `{first}` is not an exit code"))?;
    let mut present = Vec::new();
    let mut absent = Vec::new();
    for line in lines.filter(|l| !l.trim().is_empty()) {
        match line.strip_prefix('!') {
            Some(forbidden) => absent.push(forbidden.to_string()),
            None => present.push(line.to_string()),
        }
    }
    Ok(Expectation {
        exit_code,
        present,
        absent,
    })
}

/// Relative paths of every file under `dir`, to notice output written into a case folder.
fn files_under(dir: &Path) -> BTreeSet<String> {
    let mut out = BTreeSet::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        let Ok(entries) = std::fs::read_dir(&d) else {
            continue;
        };
        for entry in entries.filter_map(Result::ok) {
            let path = entry.path();
            if path.is_dir() {
                stack.push(path);
            } else if let Ok(rel) = path.strip_prefix(dir) {
                out.insert(rel.display().to_string());
            }
        }
    }
    out
}

/// Reads a child's pipe on its own thread so a chatty child cannot block on a full pipe.
fn drain(pipe: Option<impl Read + Send + 'static>) -> std::thread::JoinHandle<String> {
    std::thread::spawn(move || {
        let mut bytes = Vec::new();
        if let Some(mut p) = pipe {
            let _ = p.read_to_end(&mut bytes);
        }
        String::from_utf8_lossy(&bytes).into_owned()
    })
}

/// Messages name files as the binary was given them; drop any absolute case path or `./`
/// prefix so the fragments can be written relative (`study.yaml:14:12:`).
fn normalise(text: &str, dir: &Path) -> String {
    let mut t = text.replace("\r\n", "\n");
    for prefix in [
        format!("{}{}", dir.display(), std::path::MAIN_SEPARATOR),
        format!(".{}", std::path::MAIN_SEPARATOR),
    ] {
        t = t.replace(&prefix, "");
    }
    t
}

fn run_case(dir: &Path) -> Result<Outcome, String> {
    let before = files_under(dir);
    let start = Instant::now();
    let mut child = Command::new(env!("CARGO_BIN_EXE_plateau"))
        .args(["check", "study.yaml"])
        .current_dir(dir)
        .env("NO_COLOR", "1")
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .map_err(|e| format!("cannot start plateau: {e}"))?;
    let stdout = drain(child.stdout.take());
    let stderr = drain(child.stderr.take());
    let mut timed_out = false;
    let status = loop {
        match child.try_wait() {
            Ok(Some(status)) => break Some(status),
            Ok(None) if start.elapsed() > HANG_GUARD => {
                timed_out = true;
                let _ = child.kill();
                let _ = child.wait();
                break None;
            }
            Ok(None) => std::thread::sleep(Duration::from_millis(10)),
            Err(e) => return Err(format!("cannot wait for plateau: {e}")),
        }
    };
    let elapsed = start.elapsed();
    let stdout = stdout.join().unwrap_or_default();
    let stderr = stderr.join().unwrap_or_default();
    let after = files_under(dir);
    Ok(Outcome {
        exit_code: status.and_then(|s| s.code()),
        stdout: normalise(&stdout, dir),
        stderr: normalise(&stderr, dir),
        timed_out,
        elapsed,
        new_files: after.difference(&before).cloned().collect(),
    })
}

/// Every case, run once and shared by the tests below (they run on parallel threads).
fn cases() -> &'static [Case] {
    static CASES: OnceLock<Vec<Case>> = OnceLock::new();
    CASES.get_or_init(|| {
        case_dirs()
            .iter()
            .map(|dir| {
                let name = dir
                    .file_name()
                    .map(|n| n.to_string_lossy().into_owned())
                    .unwrap_or_default();
                let expectation = std::fs::read_to_string(dir.join("expect.txt"))
                    .map_err(|e| format!("cannot read expect.txt: {e}"))
                    .and_then(|t| parse_expectation(&t));
                let outcome = if dir.join("study.yaml").is_file() {
                    run_case(dir)
                } else {
                    Err("the case folder has no study.yaml".to_string())
                };
                Case {
                    name,
                    expectation,
                    outcome,
                }
            })
            .collect()
    })
}

/// Everything wrong with one case, empty when it behaves as expected.
fn mismatches(expectation: &Expectation, outcome: &Outcome) -> Vec<String> {
    let mut out = Vec::new();
    if outcome.timed_out {
        out.push(format!("killed after {} s: hung", HANG_GUARD.as_secs()));
    }
    if outcome.exit_code != Some(expectation.exit_code) {
        out.push(format!(
            "exit code {} instead of {}",
            outcome
                .exit_code
                .map_or_else(|| "none (killed)".to_string(), |c| c.to_string()),
            expectation.exit_code
        ));
    }
    if outcome.stderr.contains("panicked") || outcome.stdout.contains("panicked") {
        out.push("the binary panicked".to_string());
    }
    let (stream_name, stream) = if expectation.exit_code == 0 {
        ("stdout", &outcome.stdout)
    } else {
        ("stderr", &outcome.stderr)
    };
    for fragment in &expectation.present {
        if !stream.contains(fragment.as_str()) {
            out.push(format!("{stream_name} lacks `{fragment}`"));
        }
    }
    for fragment in &expectation.absent {
        if stream.contains(fragment.as_str()) {
            out.push(format!("{stream_name} contains the unwanted `{fragment}`"));
        }
    }
    if !outcome.new_files.is_empty() {
        out.push(format!(
            "files written into the case folder: {}",
            outcome.new_files.join(", ")
        ));
    }
    out
}

/// True when `text` holds `study.yaml:<digit>` or `results.csv:<digit>`.
fn has_location(text: &str) -> bool {
    ["study.yaml:", "results.csv:"].iter().any(|file| {
        text.match_indices(file).any(|(at, _)| {
            text.get(at + file.len()..)
                .and_then(|rest| rest.chars().next())
                .is_some_and(|c| c.is_ascii_digit())
        })
    })
}

fn indent(text: &str) -> String {
    if text.trim().is_empty() {
        return "      (empty)\n".to_string();
    }
    text.lines().map(|l| format!("      {l}\n")).collect()
}

#[test]
fn every_case_gives_its_expected_exit_code_and_message() {
    let mut report = String::new();
    let mut failing = 0;
    for case in cases() {
        let problems = match (&case.expectation, &case.outcome) {
            (Err(e), _) | (_, Err(e)) => vec![e.clone()],
            (Ok(expectation), Ok(outcome)) => mismatches(expectation, outcome),
        };
        if problems.is_empty() {
            continue;
        }
        failing += 1;
        report.push_str(&format!("\n■ {}\n", case.name));
        for p in &problems {
            report.push_str(&format!("    - {p}\n"));
        }
        if let Ok(outcome) = &case.outcome {
            report.push_str(&format!(
                "    exit code {:?} after {:.1} s; stderr:\n{}",
                outcome.exit_code,
                outcome.elapsed.as_secs_f64(),
                indent(&outcome.stderr)
            ));
        }
    }
    assert!(
        failing == 0,
        "{failing} of {} bad-input cases do not behave as expected:\n{report}",
        cases().len()
    );
}

#[test]
fn the_suite_has_enough_cases_and_each_is_complete() {
    let cases = cases();
    assert!(
        cases.len() >= MIN_CASES,
        "only {} cases under {}, expected at least {MIN_CASES}",
        cases.len(),
        cases_root().display()
    );
    let incomplete: Vec<String> = case_dirs()
        .iter()
        .filter(|d| !d.join("study.yaml").is_file() || !d.join("expect.txt").is_file())
        .map(|d| d.display().to_string())
        .collect();
    assert!(
        incomplete.is_empty(),
        "case folders without study.yaml or expect.txt: {incomplete:?}"
    );
}

#[test]
fn every_rejected_case_names_a_file_and_line() {
    let unlocated: Vec<String> = cases()
        .iter()
        .filter(|c| c.expectation.as_ref().is_ok_and(|e| e.exit_code == 1))
        .filter_map(|c| {
            let outcome = c.outcome.as_ref().ok()?;
            (!has_location(&outcome.stderr))
                .then(|| format!("■ {}\n{}", c.name, indent(&outcome.stderr)))
        })
        .collect();
    assert!(
        unlocated.is_empty(),
        "{} rejected case(s) print no `study.yaml:<line>` or `results.csv:<line>`:\n{}",
        unlocated.len(),
        unlocated.join("")
    );
}

#[test]
fn every_case_says_which_fault_it_is() {
    let unlabelled: Vec<String> = case_dirs()
        .iter()
        .filter(|d| {
            let bytes = std::fs::read(d.join("study.yaml")).unwrap_or_default();
            let text = String::from_utf8_lossy(&bytes);
            // An empty study file is itself the fault; its folder name says so.
            !text.is_empty() && !text.contains("# fault: ")
        })
        .map(|d| d.display().to_string())
        .collect();
    assert!(
        unlabelled.is_empty(),
        "studies without a `# fault: ...` line: {unlabelled:?}"
    );
}

#[test]
fn location_finder_needs_a_digit_after_the_file_name() {
    assert!(has_location(
        "error: study.yaml:14:12: factors[1].delta: ..."
    ));
    assert!(has_location("error: results.csv:4: assay: ..."));
    assert!(!has_location("error: study.yaml: wrong type"));
    assert!(!has_location("error: results.csv: file not found"));
}

#[test]
fn expectation_lines_split_into_wanted_and_unwanted_fragments() {
    let e = parse_expectation("1\r\nstudy.yaml:3:1:\n\n!panicked\n").unwrap();
    assert_eq!(e.exit_code, 1);
    assert_eq!(e.present, vec!["study.yaml:3:1:".to_string()]);
    assert_eq!(e.absent, vec!["panicked".to_string()]);
}

// ---------------------------------------------------------------------------------------------
// The published schema against an independent validator.
//
// `tests/fixtures/schema/verdicts.json` holds the verdicts of check-jsonschema (Python
// `jsonschema`, ECMA-262 regexes) on every example, every test study, every bad-input study and
// every study under `tests/fixtures/schema/faults/` (mutations of a valid study, one fault each,
// that JSON Schema can express). It is made by `tests/fixtures/schema/make_schema_verdicts.py`;
// the tests below read it, so they run without Python.

/// Faults among the bad-input cases that JSON Schema can express: the published schema must
/// reject each, so an editor flags what `plateau check` would refuse. (Every study under
/// `tests/fixtures/schema/faults/` is such a fault as well.)
const SCHEMA_EXPRESSIBLE: &[&str] = &[
    "acceptance-limit-zero",
    "acceptance-without-limit",
    "categorical-equal-levels",
    "categorical-one-level",
    "categorical-three-levels",
    "categorical-with-nominal",
    "date-day-month-year",
    "date-february-30",
    "delta-and-low-high",
    "delta-negative",
    "delta-zero",
    "design-kind-unknown",
    "excluded-run-id-blank",
    "excluded-run-id-not-whole",
    "explicit-level-two",
    "explicit-run-id-not-whole",
    "factor-id-reserved-run",
    "full-factorial-with-runs",
    "missing-study-title",
    "no-range",
    "only-low",
    "percent-of-nominal-without-nominal-runs",
    "randomize-seed-too-large",
    "randomize-true",
    "results-file-and-runs",
    "results-neither",
    "schema-version-2",
    "text-control-character",
    "unknown-factor-field",
    "unknown-top-level-field",
    "wrong-type-delta",
];

fn crate_root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// The committed verdicts: study path (relative, `/`-separated) → "valid", "invalid" or
/// "unparsed".
fn verdicts() -> &'static serde_json::Value {
    static VERDICTS: OnceLock<serde_json::Value> = OnceLock::new();
    VERDICTS.get_or_init(|| {
        let path = crate_root().join("tests/fixtures/schema/verdicts.json");
        let text = std::fs::read_to_string(&path)
            .unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()));
        serde_json::from_str(&text).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
    })
}

fn verdict(study: &str) -> Option<&'static str> {
    verdicts()["studies"][study]["verdict"].as_str()
}

/// Relative paths of the study files matching `dir/*/study.yaml` (or `dir/*.yaml` when `flat`).
fn studies_under(dir: &str, flat: bool) -> Vec<String> {
    let mut out: Vec<String> = std::fs::read_dir(crate_root().join(dir))
        .unwrap_or_else(|e| panic!("cannot list {dir}: {e}"))
        .filter_map(Result::ok)
        .filter_map(|entry| {
            let name = entry.file_name().to_string_lossy().into_owned();
            if flat {
                name.ends_with(".yaml").then(|| format!("{dir}/{name}"))
            } else {
                entry
                    .path()
                    .join("study.yaml")
                    .is_file()
                    .then(|| format!("{dir}/{name}/study.yaml"))
            }
        })
        .collect();
    out.sort();
    out
}

#[test]
fn the_schema_verdicts_are_those_of_the_committed_schema_and_studies() {
    let schema = std::fs::read(crate_root().join("schemas/study.schema.json")).unwrap();
    let hash = plateau::study::load::sha256_hex(
        &String::from_utf8_lossy(&schema)
            .replace("\r\n", "\n")
            .into_bytes(),
    );
    assert_eq!(
        verdicts()["schema_sha256"].as_str(),
        Some(hash.as_str()),
        "schemas/study.schema.json changed: run `python3 tests/fixtures/schema/make_schema_verdicts.py` and commit tests/fixtures/schema/verdicts.json"
    );
    // Both schemas were compiled by a second independent implementation too (ajv, strict).
    assert!(
        verdicts()["ajv"]
            .as_str()
            .is_some_and(|s| s.contains("compiles")),
        "verdicts.json was made without --ajv"
    );
    let mut missing = Vec::new();
    for study in ["examples", "tests/fixtures", "tests/bad_inputs"]
        .iter()
        .flat_map(|d| studies_under(d, false))
        .chain(studies_under("tests/fixtures/schema/faults", true))
    {
        if verdict(&study).is_none() {
            missing.push(study);
        }
    }
    assert!(
        missing.is_empty(),
        "studies without a verdict (re-run make_schema_verdicts.py): {missing:?}"
    );
}

#[test]
fn every_example_and_test_study_is_valid_for_the_independent_validator() {
    let studies: Vec<String> = studies_under("examples", false)
        .into_iter()
        .chain(studies_under("tests/fixtures", false))
        .collect();
    assert!(studies.len() >= 4, "too few studies found: {studies:?}");
    let refused: Vec<String> = studies
        .iter()
        .filter(|s| verdict(s) != Some("valid"))
        .map(|s| format!("{s}: {}", verdicts()["studies"][s.as_str()]))
        .collect();
    assert!(
        refused.is_empty(),
        "refused by check-jsonschema: {refused:?}"
    );
}

#[test]
fn every_bad_input_the_independent_validator_rejects_plateau_check_rejects_too() {
    let mut disagreements = Vec::new();
    let mut rejected = 0;
    for case in cases() {
        let study = format!("tests/bad_inputs/{}/study.yaml", case.name);
        if verdict(&study) != Some("invalid") {
            continue;
        }
        rejected += 1;
        let code = case.outcome.as_ref().ok().and_then(|o| o.exit_code);
        if code == Some(0) || code.is_none() {
            disagreements.push(format!("{}: plateau check exit code {code:?}", case.name));
        }
    }
    assert!(
        rejected >= SCHEMA_EXPRESSIBLE.len(),
        "only {rejected} rejected cases"
    );
    assert!(
        disagreements.is_empty(),
        "the schema rejects but `plateau check` accepts: {disagreements:?}"
    );
}

#[test]
fn the_schema_rejects_every_fault_it_can_express() {
    let faults = studies_under("tests/fixtures/schema/faults", true);
    assert!(faults.len() >= 20, "too few schema faults: {faults:?}");
    let mut accepted: Vec<String> = SCHEMA_EXPRESSIBLE
        .iter()
        .map(|case| format!("tests/bad_inputs/{case}/study.yaml"))
        .chain(faults.iter().cloned())
        .filter(|s| verdict(s) != Some("invalid"))
        .collect();
    // Each fault must also be one `plateau check` refuses, naming the file and a line.
    for fault in &faults {
        let out = Command::new(env!("CARGO_BIN_EXE_plateau"))
            .args(["check", fault])
            .current_dir(crate_root())
            .env("NO_COLOR", "1")
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&out.stderr);
        let name = fault.rsplit('/').next().unwrap_or(fault);
        if out.status.code() != Some(1) || !stderr.contains(&format!("{name}:")) {
            accepted.push(format!(
                "{fault}: plateau check exit {:?}, stderr {stderr}",
                out.status.code()
            ));
        }
        // The message says what would be valid; a raw validator message would not.
        if stderr.contains("panicked") || !stderr.contains("expected") {
            accepted.push(format!("{fault}: {stderr}"));
        }
    }
    assert!(
        accepted.is_empty(),
        "faults the schema or `plateau check` let through: {accepted:#?}"
    );
}

fn plateau_in(dir: &Path, args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_plateau"))
        .args(args)
        .current_dir(dir)
        .env("NO_COLOR", "1")
        .output()
        .unwrap()
}

fn read_json(path: &Path) -> serde_json::Value {
    let text = std::fs::read_to_string(path).unwrap();
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

#[test]
fn every_example_analysis_json_matches_the_published_analysis_schema() {
    let schema = read_json(&crate_root().join("schemas/analysis.schema.json"));
    let validator = jsonschema::validator_for(&schema).expect("the analysis schema compiles");
    let examples = studies_under("examples", false);
    assert!(examples.len() >= 4, "too few examples: {examples:?}");
    for study in &examples {
        let out = plateau_in(&crate_root(), &["analyze", "--json", study]);
        assert_eq!(
            out.status.code(),
            Some(0),
            "{study}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        let doc: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
        assert_eq!(
            doc["schema_version"], 1,
            "{study}: the document names its layout version"
        );
        let errors: Vec<String> = validator
            .iter_errors(&doc)
            .map(|e| format!("{}: {e}", e.instance_path()))
            .collect();
        assert!(
            errors.is_empty(),
            "{study}: analyze --json breaks the schema: {errors:#?}"
        );
    }
    // The schema's own version is the document's.
    assert_eq!(schema["properties"]["schema_version"]["const"], 1);
    assert!(schema["$id"].as_str().is_some_and(|id| id.contains("/1/")));
}

#[test]
fn the_independent_validator_accepted_every_starter_study() {
    let starters = verdicts()["starters"]
        .as_object()
        .expect("verdicts.json has `starters` (made with --plateau)");
    assert_eq!(
        starters.len(),
        5,
        "one starter per design kind: {starters:?}"
    );
    for (kind, v) in starters {
        assert_eq!(v["verdict"], "valid", "plateau new --kind {kind}: {v}");
    }
}

#[test]
fn the_independent_validator_accepted_every_example_analysis_json() {
    let analyses = verdicts()["analyses"]
        .as_object()
        .expect("verdicts.json has `analyses` (made with --plateau)");
    for study in studies_under("examples", false) {
        assert_eq!(
            analyses.get(&study).and_then(|v| v["verdict"].as_str()),
            Some("valid"),
            "{study}: check-jsonschema verdict on its analyze --json output"
        );
    }
}

#[test]
fn schema_output_file_is_written_once_and_never_replaced() {
    let dir = tempfile::tempdir().unwrap();
    let first = plateau_in(dir.path(), &["schema", "-o", "study.schema.json"]);
    assert_eq!(
        first.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&first.stderr)
    );
    let written = std::fs::read_to_string(dir.path().join("study.schema.json")).unwrap();
    assert_eq!(written, plateau::study::schema::SCHEMA_TEXT);
    // The same schema again: left alone, and not an error (scripts may run it every time).
    let again = plateau_in(dir.path(), &["schema", "-o", "study.schema.json"]);
    assert_eq!(again.status.code(), Some(0));
    assert!(String::from_utf8_lossy(&again.stdout).contains("already holds this schema"));
    // A different file of that name is kept, and the message says so.
    let other = plateau_in(
        dir.path(),
        &["schema", "--analysis", "-o", "study.schema.json"],
    );
    assert_ne!(other.status.code(), Some(0));
    let stderr = String::from_utf8_lossy(&other.stderr);
    assert!(
        stderr.contains("failed to write") && stderr.contains("is kept"),
        "{stderr}"
    );
    assert_eq!(
        std::fs::read_to_string(dir.path().join("study.schema.json")).unwrap(),
        written
    );
    let analysis = plateau_in(dir.path(), &["schema", "--analysis"]);
    assert_eq!(
        String::from_utf8_lossy(&analysis.stdout),
        std::fs::read_to_string(crate_root().join("schemas/analysis.schema.json")).unwrap()
    );
}

#[test]
fn a_new_study_names_a_schema_file_that_exists_beside_it_and_accepts_it() {
    let dir = tempfile::tempdir().unwrap();
    for (i, kind) in [
        "full-factorial",
        "fractional-factorial",
        "plackett-burman",
        "youden",
        "explicit",
    ]
    .iter()
    .enumerate()
    {
        let sub = dir.path().join(format!("s{i}"));
        std::fs::create_dir(&sub).unwrap();
        let out = plateau_in(&sub, &["new", "study.yaml", "--kind", kind]);
        assert_eq!(
            out.status.code(),
            Some(0),
            "{kind}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        let text = std::fs::read_to_string(sub.join("study.yaml")).unwrap();
        let modeline = text.lines().next().unwrap_or_default();
        let target = modeline
            .strip_prefix("# yaml-language-server: $schema=")
            .unwrap_or_else(|| panic!("{kind}: no modeline in `{modeline}`"));
        // The modeline resolves relative to the study, without a network.
        let beside = sub.join(target);
        assert_eq!(
            std::fs::read_to_string(&beside).unwrap_or_default(),
            plateau::study::schema::SCHEMA_TEXT,
            "{kind}: {} is not the schema",
            beside.display()
        );
        // And the starter is valid for that schema (`parse` checks the data against the
        // built-in schema first) and for `plateau check`; check-jsonschema's verdicts on the
        // starters are asserted below.
        let data = plateau::study::load::parse(&text, "study.yaml");
        assert!(data.is_ok(), "{kind}: {:?}", data.err());
        let check = plateau_in(&sub, &["check", "study.yaml"]);
        assert_eq!(
            check.status.code(),
            Some(0),
            "{kind}: {}",
            String::from_utf8_lossy(&check.stderr)
        );
    }
    // A second study in the same folder leaves the schema file as it is.
    let out = plateau_in(&dir.path().join("s0"), &["new", "second.yaml"]);
    assert_eq!(out.status.code(), Some(0));
    assert!(String::from_utf8_lossy(&out.stdout).contains("already holds this schema"));
}

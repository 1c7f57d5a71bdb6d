//! The protocol workflow through the binary: the protocol and its lock before any result, the
//! lock checked by every command, deviations listed in the report, the executed run order,
//! exclusions for one response, and the reason of a re-approval.

use std::path::{Path, PathBuf};

use crate::common::{example, json_of, pdf_text, plateau, typst_binary};

/// A copy of the hplc-assay example in a temporary folder (the tests change it).
fn study_copy() -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    for name in ["study.yaml", "results.csv"] {
        std::fs::copy(example("hplc-assay").join(name), dir.path().join(name)).unwrap();
    }
    let study = dir.path().join("study.yaml");
    (dir, study)
}

fn typst_arg() -> String {
    typst_binary().display().to_string()
}

/// Writes the protocol of `study` into `<stem>-protocol` and names its lock in the study.
fn lock(study: &Path) {
    plateau(&["protocol", "--typst", &typst_arg()])
        .arg_path(study)
        .ok();
    let mut text = std::fs::read_to_string(study).unwrap();
    text.push_str(
        "protocol:\n  lock: study-protocol/protocol.lock.json\n  number: PR-0001\n  approved: 2026-11-16\n",
    );
    std::fs::write(study, text).unwrap();
}

fn edit(path: &Path, from: &str, to: &str) {
    let text = std::fs::read_to_string(path).unwrap();
    assert!(text.contains(from), "{from:?} not in {}", path.display());
    std::fs::write(path, text.replacen(from, to, 1)).unwrap();
}

/// analysis.json of a report written without the typesetter.
fn analysis(study: &Path, out: &str) -> serde_json::Value {
    let dir = study.parent().unwrap().join(out);
    plateau(&["report", "--no-pdf", "-o"])
        .arg_path(&dir)
        .arg_path(study)
        .ok();
    json_of(&std::fs::read_to_string(dir.join("analysis.json")).unwrap())
}

/// The chapter's Typst source with the markup escapes removed (`PR\-0001` → `PR-0001`).
fn section(dir: &Path) -> String {
    std::fs::read_to_string(dir.join("section.typ"))
        .unwrap()
        .replace('\\', "")
}

/// The planned positions of the hplc-assay runs (its run sheet, `plateau design`).
fn planned_order(study: &Path) -> Vec<(String, usize)> {
    let run = plateau(&["design"]).arg_path(study).ok();
    run.stdout
        .lines()
        .skip(1)
        .map(|l| {
            let mut cells = l.split(',');
            let id = cells.next().unwrap().to_string();
            (id, cells.next().unwrap().parse().unwrap())
        })
        .collect()
}

#[test]
fn two_runs_at_one_executed_position_are_refused() {
    let (dir, study) = study_copy();
    let order = planned_order(&study);
    let original = std::fs::read_to_string(dir.path().join("results.csv")).unwrap();
    let mut csv = String::from("run,order,assay,resolution\n");
    for line in original.lines().skip(1) {
        let cells: Vec<&str> = line.split(',').collect();
        let planned = order.iter().find(|(r, _)| r == cells[0]).unwrap().1;
        let position = if cells[0] == "10" { 1 } else { planned };
        csv.push_str(&format!(
            "{},{position},{},{}\n",
            cells[0], cells[1], cells[2]
        ));
    }
    std::fs::write(dir.path().join("results.csv"), csv).unwrap();
    let run = plateau(&["check"]).arg_path(&study).code(1);
    assert!(run.stderr.contains("both have order `1`"), "{}", run.stderr);
}

#[test]
fn a_run_excluded_for_one_response_is_still_used_for_the_others() {
    let (_dir, study) = study_copy();
    let mut text = std::fs::read_to_string(&study).unwrap();
    text.push_str(
        "excluded:\n  - run: 3\n    response: assay\n    reason: peak integration error\n",
    );
    std::fs::write(&study, text).unwrap();
    let doc = analysis(&study, "excluded");
    let used = |r: usize| -> bool {
        let values = doc["responses"][r]["values"].as_array().unwrap();
        let run = values.iter().find(|v| v["run"] == "3").unwrap();
        !run["excluded"].as_bool().unwrap()
    };
    assert_eq!(doc["responses"][0]["id"], "assay");
    assert!(!used(0), "run 3 is excluded for assay");
    assert!(used(1), "run 3 is used for resolution");
    let notes = |r: usize| doc["responses"][r]["notes"].to_string();
    assert!(notes(0).contains("peak integration error"));
    assert!(!notes(1).contains("peak integration error"));

    edit(
        &study,
        "response: assay\n    reason",
        "response: asay\n    reason",
    );
    let run = plateau(&["check"]).arg_path(&study).code(1);
    assert!(
        run.stderr.contains("unknown response `asay`"),
        "{}",
        run.stderr
    );
    assert!(
        run.stderr.contains("excluded[0].response"),
        "{}",
        run.stderr
    );
}

#[test]
fn inline_results_carry_the_executed_order_and_time_too() {
    let dir = tempfile::tempdir().unwrap();
    let study = dir.path().join("inline.yaml");
    std::fs::write(
        &study,
        "schema: 1
study: { id: T-1, title: Inline, method: M-1, analyst: A. Analyst, date: 2026-11-18 }
factors:
  - { id: temp, name: Column temperature, unit: °C, nominal: 35, delta: 2 }
  - { id: ph, name: pH, nominal: 3.0, delta: 0.1 }
design: { kind: full-factorial, center-points: 1 }
responses:
  - { id: assay, name: Assay }
results:
  runs:
    - { run: 1, assay: 100.1 }
    - { run: 2, assay: 100.3 }
    - { run: 3, assay: 99.1, order: 7, time: \"10:40\" }
    - { run: 4, assay: 99.5 }
    - { run: 5, assay: 100.0 }
",
    )
    .unwrap();
    let doc = analysis(&study, "inline-report");
    assert_eq!(
        doc["order_changes"],
        serde_json::json!([{"run": "3", "planned": 4, "executed": 7, "time": "10:40"}])
    );
    let source = section(&dir.path().join("inline-report"));
    assert!(
        source.contains("== Deviations from the planned run order"),
        "{source}"
    );
}

/// The behaviours that need typst 0.15: they typeset and read the PDF.
mod typeset {
    use super::*;

    #[test]
    fn a_lock_edited_after_it_was_written_is_refused_with_its_name_and_the_remedy() {
        let (dir, study) = study_copy();
        lock(&study);
        plateau(&["check"]).arg_path(&study).ok();
        let lock_file = dir.path().join("study-protocol/protocol.lock.json");
        edit(&lock_file, "\"effect-limit\": 2.0", "\"effect-limit\": 3.0");
        for command in ["check", "analyze"] {
            let run = plateau(&[command]).arg_path(&study).code(1);
            assert!(
                run.stderr.contains(
                    "study-protocol/protocol.lock.json no longer matches its own SHA-256"
                ),
                "{}",
                run.stderr
            );
            assert!(run.stderr.contains("git checkout --"), "{}", run.stderr);
        }
        let run = plateau(&["status"]).arg_path(&study).code(1);
        assert!(run.stdout.contains("invalid"), "{}", run.stdout);
        // Writing the protocol again into the folder of the approved one is refused, too.
        let run = plateau(&["protocol", "--typst", &typst_arg()])
            .arg_path(&study)
            .code(1);
        assert!(run.stderr.contains("no longer matches"), "{}", run.stderr);
    }

    #[test]
    fn a_new_revision_records_its_version_and_the_hash_of_the_report_it_replaces() {
        let (dir, study) = study_copy();
        let out = dir.path().join("report");
        let report = || {
            plateau(&["report", "--typst", &typst_arg(), "-o"])
                .arg_path(&out)
                .arg_path(&study)
                .ok();
        };
        report();
        let first = std::fs::read(out.join("report.pdf")).unwrap();
        let doc = json_of(&std::fs::read_to_string(out.join("analysis.json")).unwrap());
        assert!(
            doc["revision"].is_null(),
            "a first report without a version has no revision"
        );
        edit(&study, "effect-limit: 2.0", "effect-limit: 2.5");
        let mut text = std::fs::read_to_string(&study).unwrap();
        text.push_str("report:\n  version: \"2\"\n");
        std::fs::write(&study, text).unwrap();
        report();
        let second = std::fs::read(out.join("report.pdf")).unwrap();
        let doc = json_of(&std::fs::read_to_string(out.join("analysis.json")).unwrap());
        let previous = plateau::study::load::sha256_hex(&first);
        assert_eq!(doc["revision"]["version"], "2");
        assert_eq!(doc["revision"]["previous_report_sha256"], previous.as_str());
        assert!(pdf_text(&out.join("report.pdf")).contains(&previous));
        // Rebuilt from the same inputs it is the same revision, byte for byte.
        plateau(&["report", "--force", "--typst", &typst_arg(), "-o"])
            .arg_path(&out)
            .arg_path(&study)
            .ok();
        assert_eq!(std::fs::read(out.join("report.pdf")).unwrap(), second);
    }

    #[test]
    fn diff_prints_the_reason_for_the_change_and_its_author() {
        let (dir, old) = study_copy();
        let new = dir.path().join("new.yaml");
        std::fs::copy(&old, &new).unwrap();
        edit(&new, "effect-limit: 2.0", "effect-limit: 2.5");
        let reason = "limit aligned with the revised specification";
        let run = plateau(&["diff", "--reason", reason])
            .arg_path(&old)
            .arg_path(&new)
            .ok();
        assert!(
            run.stdout.contains(&format!(
                "reason for the change: {reason}\nchanged by: I. Marsh\n"
            )),
            "{}",
            run.stdout
        );
        let pdf = dir.path().join("change.pdf");
        let run = plateau(&[
            "diff",
            "--pdf",
            "--typst",
            &typst_arg(),
            "--reason",
            reason,
            "-o",
        ])
        .arg_path(&pdf)
        .arg_path(&old)
        .arg_path(&new)
        .ok();
        assert!(
            run.stdout
                .contains(&format!("reason for the change: {reason}")),
            "{}",
            run.stdout
        );
        let text = pdf_text(&pdf);
        assert!(text.contains("limit aligned with the revised"), "{text}");
        plateau(&["diff", "--reason", " "])
            .arg_path(&old)
            .arg_path(&new)
            .code(2);
    }

    #[test]
    fn every_change_of_a_level_a_criterion_or_the_design_after_the_lock_is_listed() {
        let (dir, study) = study_copy();
        lock(&study);
        edit(&study, "delta: 0.1", "delta: 0.15"); // the pH range (first `delta: 0.1`)
        edit(&study, "effect-limit: 2.0", "effect-limit: 2.5");
        edit(&study, "seed: 20261118", "seed: 20261119");
        let mut text = std::fs::read_to_string(&study).unwrap();
        text.push_str("  deviations:\n    - field: factors[ph]\n      justification: buffer range widened at review\n    - field: factors[flw]\n      justification: a typo in the field\n");
        std::fs::write(&study, text).unwrap();
        let run = plateau(&["check"]).arg_path(&study).ok();
        assert!(
            run.stdout.contains("3 fields of the plan changed since"),
            "{}",
            run.stdout
        );
        assert!(
            run.stdout.contains("factors[ph].delta: 0.1 → 0.15"),
            "{}",
            run.stdout
        );
        assert!(
            run.stderr.contains(
                "warning: protocol.deviations: `factors[flw]` names no field that changed"
            ),
            "{}",
            run.stderr
        );
        let doc = analysis(&study, "changed");
        let rows: Vec<(String, String, String, Option<String>)> = doc["protocol"]["deviations"]
            .as_array()
            .unwrap()
            .iter()
            .map(|d| {
                (
                    d["field"].as_str().unwrap().to_string(),
                    d["protocol"].as_str().unwrap().to_string(),
                    d["study"].as_str().unwrap().to_string(),
                    d["justification"].as_str().map(str::to_string),
                )
            })
            .collect();
        let row = |f: &str, p: &str, s: &str, j: Option<&str>| {
            (
                f.to_string(),
                p.to_string(),
                s.to_string(),
                j.map(str::to_string),
            )
        };
        assert_eq!(
            rows,
            vec![
                row("acceptance[0].effect-limit", "2", "2.5", None),
                row("design.randomize.seed", "20261118", "20261119", None),
                row(
                    "factors[ph].delta",
                    "0.1",
                    "0.15",
                    Some("buffer range widened at review")
                ),
            ]
        );
        let source = section(&dir.path().join("changed"));
        assert!(source.contains("The acceptance criteria were changed after protocol PR-0001"));
        assert!(!source.contains("fixed before the data"));
    }

    #[test]
    fn status_tells_when_the_lock_a_report_was_made_with_is_replaced() {
        let (dir, study) = study_copy();
        lock(&study);
        plateau(&["report", "--no-pdf"]).arg_path(&study).ok();
        plateau(&["status", "--typst", "/nonexistent"])
            .arg_path(&study)
            .ok();
        // A second, valid lock of a changed plan written over the first (e.g. a checkout of
        // another protocol revision): the report was not made under it.
        edit(&study, "delta: 2", "delta: 3");
        let other = dir.path().join("other");
        plateau(&["protocol", "--typst", &typst_arg(), "-o"])
            .arg_path(&other)
            .arg_path(&study)
            .ok();
        edit(&study, "delta: 3", "delta: 2");
        std::fs::copy(
            other.join("protocol.lock.json"),
            dir.path().join("study-protocol/protocol.lock.json"),
        )
        .unwrap();
        let run = plateau(&["status", "--typst", "/nonexistent"])
            .arg_path(&study)
            .code(1);
        assert!(
            run.stdout.contains("protocol lock changed"),
            "{}",
            run.stdout
        );
    }

    #[test]
    fn the_executed_order_is_a_deviation_and_the_drift_check_uses_it() {
        let (dir, study) = study_copy();
        let order = planned_order(&study);
        // Nominal run 10 (planned at position 6) was run last, at position 12. The nominal values
        // are put on the line y = 100 + 0.1·(executed position), so the least-squares slope of the
        // drift check is 0.1 exactly when it uses the executed positions (a line through collinear
        // points; from memory), and not when it uses the planned ones.
        let executed = |id: &str, planned: usize| if id == "10" { 12 } else { planned };
        let original = std::fs::read_to_string(dir.path().join("results.csv")).unwrap();
        let mut csv = String::from("run,order,time,assay,resolution\n");
        for line in original.lines().skip(1) {
            let cells: Vec<&str> = line.split(',').collect();
            let id = cells[0];
            let planned = order.iter().find(|(r, _)| r == id).unwrap().1;
            let position = executed(id, planned);
            let assay = if ["9", "10", "11"].contains(&id) {
                format!("{}", 100.0 + 0.1 * position as f64)
            } else {
                cells[1].to_string()
            };
            let time = if id == "10" { "2026-11-18 16:40" } else { "" };
            csv.push_str(&format!("{id},{position},{time},{assay},{}\n", cells[2]));
        }
        std::fs::write(dir.path().join("results.csv"), csv).unwrap();
        lock(&study);
        let doc = analysis(&study, "executed");
        let slope = doc["responses"][0]["drift"]["check"]["slope"]
            .as_f64()
            .unwrap();
        assert!((slope - 0.1).abs() < 1e-9, "slope {slope}");
        let deviations = doc["protocol"]["deviations"].as_array().unwrap();
        assert_eq!(deviations.len(), 1, "{deviations:?}");
        assert_eq!(deviations[0]["field"], "results[10].order");
        assert_eq!(deviations[0]["protocol"], "6");
        assert_eq!(deviations[0]["study"], "12 (at 2026-11-18 16:40)");
        assert_eq!(doc["order_changes"][0]["executed"], 12);
    }

    #[test]
    fn the_protocol_pdf_and_its_lock_are_written_and_identical_on_a_rerun() {
        let (dir, study) = study_copy();
        let run = plateau(&["protocol", "--typst", &typst_arg()])
            .arg_path(&study)
            .ok();
        assert!(run.stdout.contains("protocol written to"), "{}", run.stdout);
        let out = dir.path().join("study-protocol");
        let mut files: Vec<String> = std::fs::read_dir(&out)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
            .collect();
        files.sort();
        assert_eq!(
            files,
            [
                ".plateau-output",
                "power-assay.csv",
                "power-assay.svg",
                "protocol.lock.json",
                "protocol.pdf",
                "protocol.typ",
                "runsheet.csv"
            ]
        );
        let pdf = std::fs::read(out.join("protocol.pdf")).unwrap();
        let lock = std::fs::read(out.join("protocol.lock.json")).unwrap();
        let text = pdf_text(&out.join("protocol.pdf"));
        for heading in [
            "Objective and scope",
            "Factors and levels",
            "Design",
            "Responses and acceptance criteria",
            "Analysis methods",
            "Planning power",
            "Cautions",
            "Run sheet",
            "Review and approval",
        ] {
            assert!(text.contains(heading), "no {heading:?} in:\n{text}");
        }
        // The lock's hash is printed on the protocol, so the signed paper names the lock.
        let doc = json_of(&String::from_utf8(lock.clone()).unwrap());
        let sha = doc["planning-sha256"].as_str().unwrap();
        assert!(text.contains(sha), "{text}");
        // Results, notes and report frame are not part of the plan.
        assert!(doc["planning"]["results"].is_null());
        assert_eq!(doc["planning"]["factors"][1]["id"], "ph");

        plateau(&["protocol", "--typst", &typst_arg()])
            .arg_path(&study)
            .ok();
        assert_eq!(std::fs::read(out.join("protocol.pdf")).unwrap(), pdf);
        assert_eq!(std::fs::read(out.join("protocol.lock.json")).unwrap(), lock);
    }

    #[test]
    fn without_a_change_the_report_says_there_was_no_deviation_and_that_criteria_were_fixed() {
        let (dir, study) = study_copy();
        let doc = analysis(&study, "before");
        assert!(doc["protocol"].is_null(), "no protocol yet");
        let source = section(&dir.path().join("before"));
        assert!(
            !source.contains("fixed before the data"),
            "no lock, no claim"
        );
        lock(&study);
        let doc = analysis(&study, "after");
        assert_eq!(doc["protocol"]["deviations"], serde_json::json!([]));
        assert_eq!(
            doc["protocol"]["lock_sha256"].as_str().map(str::len),
            Some(64)
        );
        let source = section(&dir.path().join("after"));
        assert!(
            source.contains("== Deviations from the protocol"),
            "{source}"
        );
        assert!(source.contains("there was no deviation from the protocol"));
        assert!(source.contains(
        "The acceptance criteria were fixed before the data, in protocol PR-0001 (approved on 2026-11-16)"
    ));
    }
}

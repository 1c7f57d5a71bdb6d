//! plateau among the tools labs already use: results files as spreadsheets and instruments
//! in European locales save them (separators, decimal commas, encodings).

use std::path::{Path, PathBuf};

use crate::common::{json_of, plateau};

const STUDY: &str = "schema: 1
study:
  id: LT-1
  title: Results file dialects
  method: TM-2
  analyst: A. Tester
  date: 2026-11-18
factors:
  - { id: temp, name: Column temperature, unit: °C, nominal: 35, delta: 2 }
  - { id: ph, name: Buffer pH, nominal: 3.0, delta: 0.1 }
design:
  kind: full-factorial
responses:
  - { id: assay, name: Assay, unit: \"%\", percent-of: mean }
acceptance:
  - { response: assay, effect-limit: 2.0 }
";

/// A study whose results come from `results.csv` holding `bytes`; `extra` is added under
/// `results:`.
fn study_with(dir: &tempfile::TempDir, bytes: &[u8], extra: &str) -> PathBuf {
    std::fs::write(dir.path().join("results.csv"), bytes).unwrap();
    let path = dir.path().join("study.yaml");
    std::fs::write(
        &path,
        format!("{STUDY}results:\n  file: results.csv\n{extra}"),
    )
    .unwrap();
    path
}

/// The assay values the analysis used, by run.
fn used(path: &Path) -> Vec<f64> {
    let doc = json_of(&plateau(&["analyze", "--json"]).arg_path(path).ok().stdout);
    let mut runs: Vec<(u32, f64)> = doc["responses"][0]["values"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| {
            (
                v["run"].as_str().unwrap().parse().unwrap(),
                v["raw"].as_f64().unwrap(),
            )
        })
        .collect();
    runs.sort_by_key(|r| r.0);
    runs.into_iter().map(|r| r.1).collect()
}

const EXPECTED: [f64; 4] = [99.5, 100.1, 98.7, 101.25];

#[test]
fn a_german_spreadsheet_csv_is_read_without_edits() {
    // Semicolons between columns, decimal commas, empty trailing columns, a blank line.
    let dir = tempfile::tempdir().unwrap();
    let csv = "run;assay;;\n1;99,5;;\n2;100,1;;\n\n3;98,7;;\n4;101,25;;\n";
    assert_eq!(used(&study_with(&dir, csv.as_bytes(), "")), EXPECTED);
}

#[test]
fn a_tab_separated_instrument_export_is_read() {
    let dir = tempfile::tempdir().unwrap();
    let csv = "run\tassay\r\n1\t99.5\r\n2\t100.1\r\n3\t98.7\r\n4\t101.25\r\n";
    assert_eq!(used(&study_with(&dir, csv.as_bytes(), "")), EXPECTED);
}

#[test]
fn utf16_with_a_byte_order_mark_is_read() {
    let dir = tempfile::tempdir().unwrap();
    let mut bytes = vec![0xFF, 0xFE];
    for u in "run;assay\r\n1;99,5\r\n2;100,1\r\n3;98,7\r\n4;101,25\r\n".encode_utf16() {
        bytes.extend_from_slice(&u.to_le_bytes());
    }
    assert_eq!(used(&study_with(&dir, &bytes, "")), EXPECTED);
}

#[test]
fn windows_1252_is_refused_until_declared_then_read() {
    // A column-lot level "Säule-1": "ä" is the byte 0xE4 in Windows-1252 (WHATWG Encoding
    // Standard index), invalid on its own in UTF-8.
    let dir = tempfile::tempdir().unwrap();
    let study = STUDY.replace(
        "  - { id: ph, name: Buffer pH, nominal: 3.0, delta: 0.1 }",
        "  - { id: lot, name: Column lot, levels: [Säule-1, Säule-2] }",
    );
    let mut csv = Vec::new();
    for (run, assay, lot) in [
        (1, "99,5", 1),
        (2, "100,1", 1),
        (3, "98,7", 2),
        (4, "101,25", 2),
    ] {
        if run == 1 {
            csv.extend_from_slice(b"run;assay;lot\n");
        }
        csv.extend_from_slice(format!("{run};{assay};S").as_bytes());
        csv.push(0xE4);
        csv.extend_from_slice(format!("ule-{lot}\n").as_bytes());
    }
    std::fs::write(dir.path().join("results.csv"), &csv).unwrap();
    let path = dir.path().join("study.yaml");
    std::fs::write(&path, format!("{study}results:\n  file: results.csv\n")).unwrap();
    let run = plateau(&["check"]).arg_path(&path).code(1);
    assert!(run.stderr.contains("not UTF-8"), "{}", run.stderr);
    assert!(
        run.stderr.contains("encoding: windows-1252"),
        "{}",
        run.stderr
    );
    std::fs::write(
        &path,
        format!("{study}results:\n  file: results.csv\n  encoding: windows-1252\n"),
    )
    .unwrap();
    assert_eq!(used(&path), EXPECTED);
}

#[test]
fn mixed_decimal_marks_are_refused_with_the_dialect_to_state() {
    let dir = tempfile::tempdir().unwrap();
    let csv = "run;assay\n1;99,5\n2;100.1\n3;98,7\n4;101,25\n";
    let run = plateau(&["check"])
        .arg_path(&study_with(&dir, csv.as_bytes(), ""))
        .code(1);
    assert!(run.stderr.contains("both decimal marks"), "{}", run.stderr);
    assert!(run.stderr.contains("decimal: comma"), "{}", run.stderr);
}

#[test]
fn a_declared_separator_and_decimal_are_used() {
    let dir = tempfile::tempdir().unwrap();
    let csv = "run;assay\n1;99.5\n2;100.1\n3;98.7\n4;101.25\n";
    let path = study_with(
        &dir,
        csv.as_bytes(),
        "  separator: semicolon\n  decimal: point\n",
    );
    assert_eq!(used(&path), EXPECTED);
}

#[test]
fn a_bad_number_names_the_dialect_it_was_read_with() {
    let dir = tempfile::tempdir().unwrap();
    let csv = "run;assay\n1;99,5\n2;1.000,1\n3;98,7\n4;101,25\n";
    let run = plateau(&["check"])
        .arg_path(&study_with(&dir, csv.as_bytes(), ""))
        .code(1);
    assert!(run.stderr.contains("results.csv:3"), "{}", run.stderr);
    assert!(
        run.stderr.contains("separator semicolon, decimal comma"),
        "{}",
        run.stderr
    );
}

/// An example copied into `dir`, with its results.
fn example_copy(dir: &Path, name: &str) -> PathBuf {
    let target = dir.join(name);
    std::fs::create_dir_all(&target).unwrap();
    for entry in std::fs::read_dir(crate::common::example(name)).unwrap() {
        let entry = entry.unwrap();
        if entry.file_type().unwrap().is_file() {
            std::fs::copy(entry.path(), target.join(entry.file_name())).unwrap();
        }
    }
    target.join("study.yaml")
}

#[test]
fn status_lists_a_report_whose_study_was_emptied_or_removed() {
    let dir = tempfile::tempdir().unwrap();
    let a = example_copy(dir.path(), "hplc-assay");
    let b = example_copy(dir.path(), "dissolution-youden");
    plateau(&["report", "--no-pdf"]).arg_path(dir.path()).ok();
    std::fs::write(&a, "").unwrap();
    std::fs::remove_file(&b).unwrap();
    let run = plateau(&["status", "--json", "--typst", "/nonexistent"])
        .arg_path(dir.path())
        .code(1);
    let doc = json_of(&run.stdout);
    let states: Vec<(&str, &str)> = doc
        .as_array()
        .unwrap()
        .iter()
        .map(|e| {
            (
                e["state"].as_str().unwrap(),
                e["reasons"][0].as_str().unwrap(),
            )
        })
        .collect();
    assert!(
        states.contains(&("orphaned", "its study file is empty")),
        "{states:?}"
    );
    assert!(
        states.contains(&("orphaned", "its study file is gone")),
        "{states:?}"
    );
}

#[test]
fn status_of_a_folder_without_studies_fails() {
    let dir = tempfile::tempdir().unwrap();
    let run = plateau(&["status", "--typst", "/nonexistent"])
        .arg_path(dir.path())
        .code(1);
    assert!(run.stdout.contains("no-study"), "{}", run.stdout);
}

#[test]
fn a_crlf_checkout_of_the_same_study_is_still_current() {
    let dir = tempfile::tempdir().unwrap();
    let study = example_copy(dir.path(), "hplc-assay");
    plateau(&["report", "--no-pdf"]).arg_path(&study).ok();
    for file in ["study.yaml", "results.csv"] {
        let path = study.parent().unwrap().join(file);
        let text = std::fs::read_to_string(&path).unwrap();
        std::fs::write(&path, text.replace('\n', "\r\n")).unwrap();
    }
    let run = plateau(&["status", "--typst", "/nonexistent"])
        .arg_path(&study)
        .ok();
    assert!(run.stdout.starts_with("current"), "{}", run.stdout);
}

#[test]
fn check_takes_many_files_and_folders_and_reports_each_as_json() {
    let dir = tempfile::tempdir().unwrap();
    let good = example_copy(dir.path(), "hplc-assay");
    let bad = dir.path().join("bad.yaml");
    std::fs::write(&bad, "schema: 1\nstudy: {}\n").unwrap();
    let run = plateau(&["check", "--json"])
        .arg_path(dir.path())
        .arg_path(&good)
        .code(1);
    let doc = json_of(&run.stdout);
    let entries = doc.as_array().unwrap();
    assert_eq!(entries.len(), 3, "{}", run.stdout); // the folder's two studies, then good again
    let bad_entry = entries
        .iter()
        .find(|e| e["study"].as_str().unwrap().ends_with("bad.yaml"))
        .unwrap();
    assert_eq!(bad_entry["ok"], false);
    assert!(bad_entry["errors"][0]["line"].is_number(), "{bad_entry}");
    assert!(entries.iter().any(|e| e["ok"] == true));
}

#[test]
fn a_study_can_be_read_from_standard_input() {
    use std::io::Write;
    let dir = tempfile::tempdir().unwrap();
    let study = example_copy(dir.path(), "hplc-assay");
    let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_plateau"))
        .args(["check", "-"])
        .current_dir(study.parent().unwrap())
        .stdin(std::process::Stdio::piped())
        .stdout(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    child
        .stdin
        .take()
        .unwrap()
        .write_all(&std::fs::read(&study).unwrap())
        .unwrap();
    let out = child.wait_with_output().unwrap();
    assert!(out.status.success());
    assert!(String::from_utf8_lossy(&out.stdout).contains("results: 11 runs"));
}

#[test]
fn report_and_design_speak_json_for_scripts() {
    let dir = tempfile::tempdir().unwrap();
    let study = example_copy(dir.path(), "hplc-assay");
    let run = plateau(&["report", "--no-pdf", "--json"])
        .arg_path(&study)
        .ok();
    assert_eq!(json_of(&run.stdout)[0]["state"], "written");
    let run = plateau(&["report", "--no-pdf", "--json"])
        .arg_path(&study)
        .ok();
    assert_eq!(json_of(&run.stdout)[0]["state"], "current");
    let sheet = json_of(&plateau(&["design", "--json"]).arg_path(&study).ok().stdout);
    assert_eq!(sheet["runs"].as_array().unwrap().len(), 11);
    assert_eq!(sheet["runs"][0]["order"], 1);
}

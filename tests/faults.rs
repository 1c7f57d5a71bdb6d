//! Faults around the report: an unwritable destination, a full disk, a killed run, and study
//! text that tries to make the typesetter do something. Each leaves the previous good report
//! complete, exits non-zero with a clear message, and never runs the text.

mod common;

use std::path::Path;

use common::{example, pdf_text, plateau, typst_binary};

fn copy_example(dir: &Path) -> std::path::PathBuf {
    for f in ["study.yaml", "results.csv"] {
        std::fs::copy(example(&format!("hplc-assay/{f}")), dir.join(f)).unwrap();
    }
    dir.join("study.yaml")
}

#[test]
fn an_output_folder_that_cannot_be_created_is_an_error_naming_it() {
    let dir = tempfile::tempdir().unwrap();
    let blocker = dir.path().join("file");
    std::fs::write(&blocker, "not a folder").unwrap();
    let run = plateau(&["report", "--no-pdf", "-o"])
        .arg_path(&blocker.join("report"))
        .arg_path(&example("hplc-assay/study.yaml"))
        .code(1);
    assert!(run.stderr.contains("failed to write"), "{}", run.stderr);
    assert!(run.stderr.contains("file"), "{}", run.stderr);
}

#[test]
fn a_full_disk_is_an_error_and_leaves_nothing_behind() {
    // /dev/full accepts no data: writing the run sheet there fails like a full disk.
    if !Path::new("/dev/full").exists() {
        panic!(
            "this platform has no /dev/full; the fault needs another way to simulate a full disk"
        );
    }
    let run = plateau(&["design", "--force", "-o", "/dev/full"])
        .arg_path(&example("hplc-assay/study.yaml"))
        .code(1);
    assert!(run.stderr.contains("/dev/full"), "{}", run.stderr);
}

#[test]
fn a_run_killed_during_typesetting_leaves_the_previous_report_complete() {
    let dir = tempfile::tempdir().unwrap();
    let study = copy_example(dir.path());
    let out = dir.path().join("r");
    plateau(&["report", "--no-pdf", "-o"])
        .arg_path(&out)
        .arg_path(&study)
        .ok();
    let before: Vec<(String, Vec<u8>)> = common_files(&out);
    // A typesetter that answers its version, then hangs, stands in for a long compile.
    let stub = dir.path().join("typst");
    std::fs::write(
        &stub,
        "#!/bin/sh\nif [ \"$1\" = --version ]; then echo 'typst 0.15.1 (stub)'; exit 0; fi\nsleep 30\n",
    )
    .unwrap();
    common::make_executable(&stub);
    let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_plateau"))
        .args(["report", "--force", "--typst"])
        .arg(&stub)
        .arg("-o")
        .arg(&out)
        .arg(&study)
        .spawn()
        .unwrap();
    // Wait until the staging folder exists (the typesetter is running), then SIGKILL.
    let deadline = std::time::Instant::now() + std::time::Duration::from_secs(20);
    while std::time::Instant::now() < deadline
        && !std::fs::read_dir(dir.path()).unwrap().any(|e| {
            e.unwrap()
                .file_name()
                .to_string_lossy()
                .starts_with(".r.partial-")
        })
    {
        std::thread::sleep(std::time::Duration::from_millis(20));
    }
    child.kill().unwrap();
    child.wait().unwrap();
    assert_eq!(common_files(&out), before, "the previous report changed");
    // The next run clears the leftover staging folder and succeeds.
    plateau(&["report", "--no-pdf", "--force", "-o"])
        .arg_path(&out)
        .arg_path(&study)
        .ok();
    let leftovers: Vec<String> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .filter(|n| n.starts_with('.'))
        .collect();
    assert!(leftovers.is_empty(), "{leftovers:?}");
    let _ = std::process::Command::new("pkill")
        .args(["-f", stub.to_str().unwrap()])
        .status();
}

fn common_files(dir: &Path) -> Vec<(String, Vec<u8>)> {
    let mut out: Vec<(String, Vec<u8>)> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| {
            let e = e.unwrap();
            (
                e.file_name().to_string_lossy().to_string(),
                std::fs::read(e.path()).unwrap(),
            )
        })
        .collect();
    out.sort();
    out
}

#[test]
fn every_free_text_field_is_printed_literally_and_never_run() {
    let typst = typst_binary();
    let dir = tempfile::tempdir().unwrap();
    // Typst code in every kind of free text: code, import, math, raw, comments, brackets.
    let hostile =
        r#"X#read("/etc/passwd") #import "@preview/a:0.1.0" $x^2$ ] // c /* d ``` raw ```"#;
    let q = format!("'{}'", hostile.replace('\'', "''"));
    // Units are at most 40 characters: a shorter hostile one.
    let u = "'#u $m$ [ ] // /* `r`'";
    let study = format!(
        r#"schema: 1
study: {{ id: T-1, title: {q}, method: {q}, analyst: {q}, date: 2026-01-01, objective: {q} }}
factors:
  - {{ id: temp, name: {q}, unit: {u}, nominal: 35, delta: 2, justification: {q} }}
  - {{ id: lot, name: Column lot, levels: [{q}, 'B #2'] }}
design: {{ kind: full-factorial, center-points: 2 }}
responses:
  - {{ id: assay, name: {q}, unit: {u} }}
acceptance:
  - {{ response: assay, effect-limit: 2, basis: {q} }}
results:
  runs:
    - {{ run: 1, assay: 99.1 }}
    - {{ run: 2, assay: 99.5 }}
    - {{ run: 3, assay: 100.2 }}
    - {{ run: 4, assay: 100.0 }}
    - {{ run: 5, assay: 99.8 }}
    - {{ run: 6, assay: 99.7 }}
excluded: []
report: {{ header: {q}, footer: {q} }}
notes: {q}
"#
    );
    std::fs::write(dir.path().join("study.yaml"), &study).unwrap();
    let out = dir.path().join("r");
    plateau(&["report", "--typst"])
        .arg_path(&typst)
        .arg("-o")
        .arg_path(&out)
        .arg_path(&dir.path().join("study.yaml"))
        .ok();
    let pdf = pdf_text(&out.join("report.pdf"));
    let flat = pdf.split_whitespace().collect::<Vec<_>>().join(" ");
    assert!(!flat.contains("root:x:0:0"), "a file was read");
    let marker = r#"X#read("/etc/passwd") #import "@preview/a:0.1.0" $x^2$ ] // c /* d"#;
    // Title, method, analyst, objective, factor name, justification, level name, response
    // name, basis, header, footer, notes: each at least once.
    let seen = flat.matches(marker).count();
    assert!(
        seen >= 12,
        "the hostile text appears {seen} times literally in:\n{flat}"
    );
    assert!(
        flat.contains("#u $m$ [ ] // /* `r`"),
        "units not literal in:\n{flat}"
    );
    assert!(flat.contains("B #2"), "{flat}");
}

/// A 2^3 study (eight runs, the four values repeated) judged by Lenth's method.
fn tiny_study(values: [f64; 4], percent_of: &str) -> String {
    format!(
        r#"schema: 1
study: {{ id: E-1, title: edge case, method: m, analyst: a, date: 2026-01-01 }}
factors:
  - {{ id: a, name: A, nominal: 0, delta: 1 }}
  - {{ id: b, name: B, nominal: 0, delta: 1 }}
  - {{ id: c, name: C, nominal: 0, delta: 1 }}
design: {{ kind: full-factorial }}
responses:
  - {{ id: resp, name: R, percent-of: {percent_of} }}
acceptance:
  - {{ response: resp, significance: {{ method: lenth }} }}
results:
  runs:
{}"#,
        (0..8)
            .map(|i| format!("    - {{ run: {}, resp: {:e} }}\n", i + 1, values[i % 4]))
            .collect::<String>()
    )
}

fn analyse(text: &str) -> serde_json::Value {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("s.yaml");
    std::fs::write(&path, text).unwrap();
    common::json_of(&plateau(&["analyze", "--json"]).arg_path(&path).ok().stdout)
}

#[test]
fn identical_responses_make_lenth_say_it_cannot_judge_instead_of_dividing_by_zero() {
    let doc = analyse(&tiny_study([5.0, 5.0, 5.0, 5.0], "mean"));
    let lenth = &doc["responses"][0]["criteria"][0];
    assert!(lenth["e_crit"].is_null(), "{lenth}");
    assert!(
        lenth["note"].as_str().unwrap().contains("cannot judge"),
        "{lenth}"
    );
    assert!(doc["responses"][0]["effects"][0]["significant"].is_null());
}

#[test]
fn very_large_and_very_small_magnitudes_give_the_same_relative_results() {
    let base = [1.0, 1.3, 0.9, 1.6];
    let reference = analyse(&tiny_study(base, "mean"));
    for scale in [1e-12, 1e12] {
        let scaled = analyse(&tiny_study(base.map(|v| v * scale), "mean"));
        let (a, b) = (
            &reference["responses"][0]["effects"],
            &scaled["responses"][0]["effects"],
        );
        for (x, y) in a.as_array().unwrap().iter().zip(b.as_array().unwrap()) {
            let (px, py) = (
                x["percent"].as_f64().unwrap(),
                y["percent"].as_f64().unwrap(),
            );
            assert!(
                (px - py).abs() <= 1e-9 * px.abs().max(1.0),
                "scale {scale}: {px} vs {py}"
            );
            assert_eq!(x["significant"], y["significant"], "scale {scale}");
        }
    }
}

#[test]
fn a_percent_effect_against_a_mean_of_zero_is_undefined_not_a_division() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("s.yaml");
    std::fs::write(&path, tiny_study([-1.0, 1.0, 1.0, -1.0], "mean")).unwrap();
    let run = plateau(&["analyze", "--json"]).arg_path(&path).ok();
    let doc: serde_json::Value = serde_json::from_str(&run.stdout).unwrap();
    let effects = doc["responses"][0]["effects"].as_array().unwrap();
    assert!(
        effects.iter().all(|e| e["percent"].is_null()),
        "{effects:?}"
    );
    assert!(
        effects
            .iter()
            .all(|e| e["effect"].as_f64().is_some_and(f64::is_finite))
    );
}

#[test]
fn a_large_full_factorial_reports_with_the_largest_effects_drawn() {
    // 2^9: 511 effects, more than a figure can label; the plots show the upper tail.
    let dir = tempfile::tempdir().unwrap();
    let mut text = String::from(
        "schema: 1\nstudy: { id: L-1, title: large, method: m, analyst: a, date: 2026-01-01 }\nfactors:\n",
    );
    for j in 1..=9 {
        text.push_str(&format!(
            "  - {{ id: f{j}, name: F{j}, nominal: 10, delta: 1 }}\n"
        ));
    }
    text.push_str("design: { kind: full-factorial }\nresponses:\n  - { id: c, name: C, percent-of: mean }\nresults: { file: r.csv }\n");
    let mut csv = String::from("run,c\n");
    for i in 0..512 {
        csv.push_str(&format!(
            "{},{}\n",
            i + 1,
            100.0 + f64::from((i * 37 % 11) as u8) / 10.0
        ));
    }
    std::fs::write(dir.path().join("s.yaml"), text).unwrap();
    std::fs::write(dir.path().join("r.csv"), csv).unwrap();
    plateau(&["report", "--no-pdf"])
        .arg_path(&dir.path().join("s.yaml"))
        .ok();
    let section = std::fs::read_to_string(dir.path().join("s-report/section.typ")).unwrap();
    assert!(
        section.contains("Only the 63 largest are drawn"),
        "caption names the cut"
    );
}

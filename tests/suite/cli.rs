//! End-to-end behaviour of the `plateau` binary: reference cases through load → analyse, the
//! analysis document, the report folder, escaping, and the typesetter's failure modes.

use crate::common::{example, fixture, json_of, pdf_text, plateau, typst_binary};

#[test]
fn pilot_plant_effects_of_box_hunter_hunter_come_out_of_a_yaml_study() {
    // Box, Hunter & Hunter (2005), ch. 5: T = 23.0, C = −5.0, K = 1.5, TC = 1.5, TK = 10.0,
    // CK = 0.0, TCK = 0.5 (values from memory of the book; each also follows by hand from the
    // printed yields).
    let run = plateau(&["analyze", "--json"])
        .arg_path(&fixture("bhh-pilot-plant/study.yaml"))
        .ok();
    let doc = json_of(&run.stdout);
    let effects = &doc["responses"][0]["effects"];
    let expect = [
        ("T", 23.0),
        ("C", -5.0),
        ("K", 1.5),
        ("T×C", 1.5),
        ("T×K", 10.0),
        ("C×K", 0.0),
        ("T×C×K", 0.5),
    ];
    assert_eq!(effects.as_array().map(Vec::len), Some(7));
    for (label, value) in expect {
        let e = effects
            .as_array()
            .unwrap()
            .iter()
            .find(|e| e["label"] == label)
            .unwrap_or_else(|| panic!("no effect {label}"));
        let got = e["effect"].as_f64().unwrap();
        assert!((got - value).abs() < 1e-12, "{label}: {got} vs {value}");
    }
    // Percent of the model intercept 64.25 (the mean of the eight printed yields: the design
    // is orthogonal).
    assert_eq!(doc["responses"][0]["reference"].as_f64(), Some(64.25));
    assert_eq!(doc["responses"][0]["reference_kind"], "model-intercept");
}

#[test]
fn analysis_document_has_the_documented_keys() {
    let run = plateau(&["analyze", "--json"])
        .arg_path(&example("hplc-assay/study.yaml"))
        .ok();
    let doc = json_of(&run.stdout);
    for key in ["id", "title", "sha256"] {
        assert!(doc["study"][key].is_string(), "study.{key}");
    }
    assert_eq!(doc["study"]["sha256"].as_str().map(str::len), Some(64));
    assert_eq!(doc["design"]["kind"], "full-factorial");
    assert_eq!(doc["design"]["runs"], 11);
    assert_eq!(doc["design"]["center_points"], 3);
    let response = &doc["responses"][0];
    for key in ["id", "reference", "reference_kind", "effects", "verdict"] {
        assert!(!response[key].is_null(), "responses[0].{key}");
    }
    let effect = &response["effects"][0];
    assert!(effect["factors"].is_array());
    for key in ["label", "effect", "percent"] {
        assert!(!effect[key].is_null(), "effect.{key}");
    }
    assert!(effect["relevant"].is_boolean());
    // No limit on the second response: relevance is null, not false.
    assert!(doc["responses"][1]["effects"][0]["relevant"].is_null());
    assert!(doc["responses"][1]["verdict"]["robust"].is_null());
}

#[test]
fn example_assay_flags_ph_as_the_only_relevant_factor() {
    let run = plateau(&["analyze", "--json"])
        .arg_path(&example("hplc-assay/study.yaml"))
        .ok();
    let doc = json_of(&run.stdout);
    assert_eq!(doc["non_robust_factors"], serde_json::json!(["ph"]));
    assert_eq!(doc["responses"][0]["verdict"]["robust"], false);
}

#[test]
fn check_prints_ok_lines_for_a_valid_study() {
    let run = plateau(&["check"])
        .arg_path(&example("hplc-assay/study.yaml"))
        .ok();
    assert!(
        run.stdout.lines().all(|l| l.starts_with("ok ")),
        "{}",
        run.stdout
    );
}

#[test]
fn schema_command_prints_the_shipped_schema() {
    let run = plateau(&["schema"]).ok();
    let shipped =
        std::fs::read_to_string(crate::common::root().join("schemas/study.schema.json")).unwrap();
    assert_eq!(run.stdout, shipped);
    assert!(
        json_of(&run.stdout)["$schema"]
            .as_str()
            .unwrap()
            .contains("2020-12")
    );
}

#[test]
fn usage_errors_exit_with_code_2() {
    plateau(&["analyze", "--bogus"]).code(2);
    plateau(&["frobnicate"]).code(2);
}

#[test]
fn report_without_pdf_writes_the_documented_files_and_nothing_else() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("r");
    plateau(&["report", "--no-pdf", "-o"])
        .arg_path(&out)
        .arg_path(&example("hplc-assay/study.yaml"))
        .ok();
    let mut names: Vec<String> = std::fs::read_dir(&out)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .collect();
    names.sort();
    let mut expected: Vec<String> = [
        ".plateau-output",
        "analysis.json",
        "effects-assay.csv",
        "effects-resolution.csv",
        "factors.csv",
        "inputs.json",
        "report.typ",
        "runs.csv",
        "section.typ",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    for response in ["assay", "resolution"] {
        for kind in ["halfnormal", "effect-bars", "main-effects", "run-order"] {
            expected.push(format!("{kind}-{response}.svg"));
            expected.push(format!("{kind}-{response}.csv"));
        }
    }
    expected.sort();
    assert_eq!(names, expected, "no report.pdf without a typesetter");
    // Nothing is left beside the report folder either (no staging folders).
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
}

#[test]
fn an_invalid_study_writes_no_report_folder() {
    let dir = tempfile::tempdir().unwrap();
    let study = dir.path().join("bad.yaml");
    std::fs::write(&study, "schema: 1\nstudy: {}\n").unwrap();
    plateau(&["report", "--no-pdf"]).arg_path(&study).code(1);
    assert!(!dir.path().join("bad-report").exists());
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
}

#[test]
fn a_missing_typesetter_exits_3_and_names_the_install_command() {
    let dir = tempfile::tempdir().unwrap();
    let run = plateau(&["report", "--typst", "/nonexistent/typst", "-o"])
        .arg_path(&dir.path().join("r"))
        .arg_path(&example("hplc-assay/study.yaml"))
        .code(3);
    assert!(
        run.stderr
            .contains("cargo install --locked typst-cli@0.15.1"),
        "{}",
        run.stderr
    );
    assert!(!dir.path().join("r").exists());
}

#[test]
fn a_typesetter_of_the_wrong_version_is_refused_with_exit_3() {
    let dir = tempfile::tempdir().unwrap();
    let fake = dir.path().join("typst");
    std::fs::write(&fake, "#!/bin/sh\necho 'typst 0.11.0 (deadbeef)'\n").unwrap();
    crate::common::make_executable(&fake);
    let run = plateau(&["report", "--typst"])
        .arg_path(&fake)
        .arg("-o")
        .arg_path(&dir.path().join("r"))
        .arg_path(&example("hplc-assay/study.yaml"))
        .code(3);
    assert!(run.stderr.contains("0.11.0"), "{}", run.stderr);
    assert!(run.stderr.contains("0.15."), "{}", run.stderr);
}

#[test]
fn a_failing_typesetter_keeps_the_previous_report_and_exits_3() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("r");
    plateau(&["report", "--no-pdf", "-o"])
        .arg_path(&out)
        .arg_path(&example("hplc-assay/study.yaml"))
        .ok();
    let before = std::fs::read(out.join("report.typ")).unwrap();
    let fake = dir.path().join("typst");
    std::fs::write(
        &fake,
        "#!/bin/sh\nif [ \"$1\" = --version ]; then echo 'typst 0.15.1 (stub)'; exit 0; fi\necho 'report.typ:1:1: error: stub failure' >&2\nexit 1\n",
    )
    .unwrap();
    crate::common::make_executable(&fake);
    let run = plateau(&["report", "--typst"])
        .arg_path(&fake)
        .arg("-o")
        .arg_path(&out)
        .arg_path(&example("hplc-assay/study.yaml"))
        .code(3);
    assert!(run.stderr.contains("stub failure"), "{}", run.stderr);
    assert_eq!(std::fs::read(out.join("report.typ")).unwrap(), before);
    assert_eq!(
        std::fs::read_dir(dir.path()).unwrap().count(),
        2,
        "only r/ and the stub"
    );
}

#[test]
fn diff_of_identical_studies_says_no_changes_and_exits_0() {
    let study = fixture("diff-hplc-rerun/study.yaml");
    let run = plateau(&["diff"]).arg_path(&study).arg_path(&study).ok();
    assert!(
        run.stdout.trim_end().ends_with("no changes"),
        "{}",
        run.stdout
    );
}

#[test]
fn diff_of_a_rerun_lists_the_changed_effect_the_flipped_verdict_and_the_new_sentence() {
    let dir = tempfile::tempdir().unwrap();
    for f in ["study.yaml", "results-rerun.csv", "results.csv"] {
        std::fs::copy(fixture(&format!("diff-hplc-rerun/{f}")), dir.path().join(f)).unwrap();
    }
    let text = std::fs::read_to_string(dir.path().join("study.yaml")).unwrap();
    std::fs::write(
        dir.path().join("rerun.yaml"),
        text.replace("file: results.csv", "file: results-rerun.csv"),
    )
    .unwrap();
    let run = plateau(&["diff"])
        .arg_path(&dir.path().join("study.yaml"))
        .arg_path(&dir.path().join("rerun.yaml"))
        .ok();
    assert!(
        run.stdout.contains("verdicts that flipped"),
        "{}",
        run.stdout
    );
    assert!(run.stdout.contains("relevant  yes  no"), "{}", run.stdout);
    assert!(
        run.stdout.contains("+ Within the tested ranges"),
        "{}",
        run.stdout
    );
    let json = json_of(
        &plateau(&["diff", "--json"])
            .arg_path(&dir.path().join("study.yaml"))
            .arg_path(&dir.path().join("rerun.yaml"))
            .ok()
            .stdout,
    );
    assert!(json["outputs"].is_object(), "{json}");
}

#[test]
fn diff_rev_reads_a_study_with_a_logo_as_committed() {
    let dir = tempfile::tempdir().unwrap();
    let root = dir.path();
    let git = |args: &[&str]| {
        let out = std::process::Command::new("git")
            .arg("-C")
            .arg(root)
            .args([
                "-c",
                "user.name=Test",
                "-c",
                "user.email=test@example.invalid",
            ])
            .args(["-c", "commit.gpgsign=false"])
            .args(args)
            .env("GIT_CONFIG_GLOBAL", "/dev/null")
            .env("GIT_CONFIG_NOSYSTEM", "1")
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
    };
    git(&["init", "-q"]);
    for f in ["study.yaml", "results.csv"] {
        std::fs::copy(example(&format!("hplc-assay/{f}")), root.join(f)).unwrap();
    }
    let study = root.join("study.yaml");
    let mut text = std::fs::read_to_string(&study).unwrap();
    text.push_str("\nreport:\n  logo: logo.svg\n");
    std::fs::write(&study, &text).unwrap();
    std::fs::write(
        root.join("logo.svg"),
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"10\" height=\"10\"/>\n",
    )
    .unwrap();
    git(&["add", "."]);
    git(&["commit", "-q", "-m", "study with a logo"]);
    std::fs::write(&study, text.replace("title:", "title: Revised")).unwrap();
    let run = plateau(&["diff", "--rev", "HEAD"]).arg_path(&study).ok();
    assert!(run.stdout.contains("Revised"), "{}", run.stdout);
}

#[test]
fn an_error_shows_the_study_line_it_points_into_with_the_field_underlined() {
    let run = plateau(&["check"])
        .arg_path(
            &crate::common::root().join("tests/bad_inputs/acceptance-unknown-response/study.yaml"),
        )
        .code(1);
    let lines: Vec<&str> = run.stderr.lines().collect();
    let at = lines
        .iter()
        .position(|l| l.starts_with("error: ") && l.contains(":28:15: acceptance[0].response:"))
        .unwrap_or_else(|| panic!("no one-line error for line 28:\n{}", run.stderr));
    assert_eq!(lines[at + 2], "28 |   - response: assy", "{}", run.stderr);
    assert!(
        lines[at + 3].starts_with("   |               ^^^^ "),
        "the underline sits under `assy`:\n{}",
        run.stderr
    );
}

/// The behaviours that need typst 0.15: they typeset and read the PDF.
mod typeset {
    use super::*;

    #[test]
    fn study_text_is_printed_literally_never_run() {
        let typst = typst_binary();
        let dir = tempfile::tempdir().unwrap();
        let original = std::fs::read_to_string(example("hplc-assay/study.yaml")).unwrap();
        let hostile = r#"Tricky # $ * _ @ < > [ ] \ ~ / #read("/etc/passwd") // not a comment /* nor this */"#;
        let text = original
        .replace(
            "title: Robustness of the RP-HPLC assay of tarvenolide in 50 mg film-coated tablets",
            &format!("title: '{hostile}'"),
        )
        .replace(
            "notes: |\n",
            "notes: |\n  $x^2$ `raw` = heading? - list? 1. enum? #import \"@preview/x:0.1.0\": *\n",
        );
        std::fs::write(dir.path().join("study.yaml"), text).unwrap();
        std::fs::copy(
            example("hplc-assay/results.csv"),
            dir.path().join("results.csv"),
        )
        .unwrap();
        let out = dir.path().join("r");
        plateau(&["report", "--typst"])
            .arg_path(&typst)
            .arg("-o")
            .arg_path(&out)
            .arg_path(&dir.path().join("study.yaml"))
            .ok();
        let pdf = pdf_text(&out.join("report.pdf"));
        let flat = pdf.split_whitespace().collect::<Vec<_>>().join(" ");
        let hostile_flat = hostile.split_whitespace().collect::<Vec<_>>().join(" ");
        assert!(
            flat.contains(&hostile_flat),
            "title not literal in:\n{flat}"
        );
        assert!(
            flat.contains(
                r#"$x^2$ `raw` = heading? - list? 1. enum? #import "@preview/x:0.1.0": *"#
            ),
            "notes not literal in:\n{flat}"
        );
        assert!(!flat.contains("root:x:0:0"), "a file was read");
    }

    #[test]
    fn the_example_report_pdf_shows_effects_verdicts_and_the_conclusion() {
        let typst = typst_binary();
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("r");
        plateau(&["report", "--typst"])
            .arg_path(&typst)
            .arg("-o")
            .arg_path(&out)
            .arg_path(&example("hplc-assay/study.yaml"))
            .ok();
        let text = pdf_text(&out.join("report.pdf"));
        let flat = text.split_whitespace().collect::<Vec<_>>().join(" ");
        // Effects as computed (ph = −2.30 % label claim, −2.30 %), verdicts, conclusion, caution.
        assert!(flat.contains("−2.30"), "{flat}");
        assert!(flat.contains("Beyond the acceptance limit: ph."), "{flat}");
        assert!(
            flat.contains("Mobile-phase pH exceeded the limit with −2.30 % label claim (−2.30 %)."),
            "{flat}"
        );
        assert!(
        flat.contains("The method is not robust over the tested ranges: Mobile-phase pH changes Assay beyond the limit"),
        "{flat}"
    );
        assert!(
            flat.contains("must be reviewed and approved by qualified staff"),
            "{flat}"
        );
        assert!(flat.contains("typst 0.15."), "{flat}");
    }
}

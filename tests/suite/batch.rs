//! Many studies at once: batch reports, staleness, skipping unchanged studies.

use std::path::Path;

use crate::common::{example, plateau};

/// Copies the example studies into `dir` (each in its own folder) and returns their paths.
fn dossier(dir: &Path) -> Vec<std::path::PathBuf> {
    let mut out = Vec::new();
    for name in ["hplc-assay", "gc-ethanol-fractional", "dissolution-youden"] {
        let target = dir.join(name);
        std::fs::create_dir_all(&target).unwrap();
        for file in ["study.yaml", "results.csv"] {
            std::fs::copy(example(&format!("{name}/{file}")), target.join(file)).unwrap();
        }
        out.push(target.join("study.yaml"));
    }
    out
}

#[test]
fn a_batch_with_one_broken_study_reports_the_others_and_exits_1() {
    let dir = tempfile::tempdir().unwrap();
    let studies = dossier(dir.path());
    std::fs::write(
        dir.path().join("gc-ethanol-fractional/results.csv"),
        "run,ethanol\n1,4.0\n",
    )
    .unwrap();
    let run = plateau(&["report", "--no-pdf", "-j", "2"])
        .arg_path(dir.path())
        .code(1);
    assert!(run.stderr.contains("failed   "), "{}", run.stderr);
    assert!(
        run.stderr.contains("gc-ethanol-fractional"),
        "{}",
        run.stderr
    );
    assert!(
        run.stdout
            .contains("3 studies: 2 written, 0 current (skipped), 1 failed"),
        "{}",
        run.stdout
    );
    for (study, expect) in studies.iter().zip([true, false, true]) {
        let report = study.parent().unwrap().join("study-report/report.typ");
        assert_eq!(report.is_file(), expect, "{}", study.display());
    }
}

#[test]
fn status_marks_exactly_the_edited_study_stale_and_report_makes_all_current() {
    let dir = tempfile::tempdir().unwrap();
    dossier(dir.path());
    let run = plateau(&["status"]).arg_path(dir.path()).code(1);
    assert_eq!(run.stdout.matches("missing  ").count(), 3, "{}", run.stdout);
    plateau(&["report", "--no-pdf"]).arg_path(dir.path()).ok();
    let run = plateau(&["status", "--typst", "/nonexistent"])
        .arg_path(dir.path())
        .ok();
    assert_eq!(run.stdout.matches("current  ").count(), 3, "{}", run.stdout);
    // Change one result of one study.
    let csv = dir.path().join("dissolution-youden/results.csv");
    let text = std::fs::read_to_string(&csv).unwrap();
    let edited = text.replacen("\n1,", "\n1,1", 1);
    assert_ne!(text, edited);
    std::fs::write(&csv, edited).unwrap();
    let run = plateau(&["status", "--typst", "/nonexistent"])
        .arg_path(dir.path())
        .code(1);
    assert_eq!(run.stdout.matches("current  ").count(), 2, "{}", run.stdout);
    assert!(
        run.stdout
            .contains("dissolution-youden/study.yaml: results file results.csv changed"),
        "{}",
        run.stdout
    );
    plateau(&["report", "--no-pdf"]).arg_path(dir.path()).ok();
    plateau(&["status", "--typst", "/nonexistent"])
        .arg_path(dir.path())
        .ok();
}

#[test]
fn an_unchanged_study_is_skipped_unless_forced() {
    let dir = tempfile::tempdir().unwrap();
    let studies = dossier(dir.path());
    let study = &studies[0];
    plateau(&["report", "--no-pdf"]).arg_path(study).ok();
    let typ = study.parent().unwrap().join("study-report/report.typ");
    let run = plateau(&["report", "--no-pdf"]).arg_path(study).ok();
    assert!(run.stdout.contains("is current"), "{}", run.stdout);
    // A hand-edited output is reported by status and never replaced without --force.
    std::fs::write(&typ, "tampered").unwrap();
    let status = plateau(&["status", "--typst", "/nonexistent"])
        .arg_path(study)
        .code(1);
    assert!(
        status
            .stdout
            .contains("report.typ was changed after plateau wrote it"),
        "{}",
        status.stdout
    );
    let run = plateau(&["report", "--no-pdf"]).arg_path(study).code(1);
    assert!(
        run.stderr.contains("holds edited files (report.typ)"),
        "{}",
        run.stderr
    );
    assert_eq!(std::fs::read_to_string(&typ).unwrap(), "tampered");
    plateau(&["report", "--no-pdf", "--force"])
        .arg_path(study)
        .ok();
    assert_ne!(std::fs::read_to_string(&typ).unwrap(), "tampered");
}

#[test]
fn output_folder_with_several_studies_is_a_usage_error() {
    let dir = tempfile::tempdir().unwrap();
    dossier(dir.path());
    plateau(&["report", "--no-pdf", "-o", "x"])
        .arg_path(dir.path())
        .code(2);
}

#[test]
fn study_yaml_and_study_yml_in_one_folder_are_refused_naming_both() {
    let dir = tempfile::tempdir().unwrap();
    let studies = dossier(dir.path());
    let folder = studies[0].parent().unwrap();
    std::fs::copy(&studies[0], folder.join("study.yml")).unwrap();
    let run = plateau(&["report", "--no-pdf"])
        .arg_path(dir.path())
        .code(1);
    assert!(run.stderr.contains("study.yaml"), "{}", run.stderr);
    assert!(run.stderr.contains("study.yml "), "{}", run.stderr);
    assert!(
        run.stderr.contains("would both report to"),
        "{}",
        run.stderr
    );
    assert!(!folder.join("study-report").exists());
    // One at a time, the second cannot replace the first's report either.
    plateau(&["report", "--no-pdf"]).arg_path(&studies[0]).ok();
    let run = plateau(&["report", "--no-pdf", "--force"])
        .arg_path(&folder.join("study.yml"))
        .code(1);
    assert!(
        run.stderr.contains("it holds the report of study.yaml"),
        "{}",
        run.stderr
    );
}

#[test]
fn a_fifo_named_like_a_study_does_not_hang_the_search() {
    let dir = tempfile::tempdir().unwrap();
    let studies = dossier(dir.path());
    let fifo = dir.path().join("pipe.yaml");
    let made = std::process::Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .unwrap();
    assert!(made.success());
    // The search skips what is not a regular file: the three studies are found, and the run
    // ends (a blocked open would hang here).
    let run = plateau(&["status"]).arg_path(dir.path()).code(1);
    assert_eq!(run.stdout.lines().count(), studies.len(), "{}", run.stdout);
    plateau(&["report", "--no-pdf"]).arg_path(dir.path()).ok();
    // Named directly, it is refused with a message.
    let run = plateau(&["check"]).arg_path(&fifo).code(1);
    assert!(run.stderr.contains("not a regular file"), "{}", run.stderr);
}

#[test]
fn status_calls_a_no_pdf_report_current_and_tracks_included_templates() {
    let dir = tempfile::tempdir().unwrap();
    let studies = dossier(dir.path());
    let study = &studies[0];
    // A lab template folder whose section template includes another file.
    let templates = dir.path().join("lab");
    plateau(&["templates", "export"]).arg_path(&templates).ok();
    let section = templates.join("section.typ.j2");
    let text = std::fs::read_to_string(&section).unwrap();
    std::fs::write(
        &section,
        format!("{{% include \"extra.typ.j2\" %}}\n{text}"),
    )
    .unwrap();
    std::fs::write(templates.join("extra.typ.j2"), "// lab note one\n").unwrap();
    plateau(&["report", "--no-pdf", "--templates"])
        .arg_path(&templates)
        .arg_path(study)
        .ok();
    // A typesetter is installed (a stub answering its version) but the report has no PDF by
    // choice: it is current.
    let stub = dir.path().join("typst");
    std::fs::write(&stub, "#!/bin/sh\necho 'typst 0.15.1 (stub)'\n").unwrap();
    crate::common::make_executable(&stub);
    let run = plateau(&["status", "--typst"])
        .arg_path(&stub)
        .arg("--templates")
        .arg_path(&templates)
        .arg_path(study)
        .ok();
    assert!(run.stdout.starts_with("current"), "{}", run.stdout);
    std::fs::write(templates.join("extra.typ.j2"), "// lab note two\n").unwrap();
    let run = plateau(&["status", "--templates"])
        .arg_path(&templates)
        .arg_path(study)
        .code(1);
    assert!(
        run.stdout.contains("template extra.typ.j2 changed"),
        "{}",
        run.stdout
    );
}

#[test]
fn a_lab_template_importing_a_typst_package_is_refused_at_load() {
    let dir = tempfile::tempdir().unwrap();
    let studies = dossier(dir.path());
    let templates = dir.path().join("lab");
    plateau(&["templates", "export"]).arg_path(&templates).ok();
    let section = templates.join("section.typ.j2");
    let text = std::fs::read_to_string(&section).unwrap();
    std::fs::write(
        &section,
        format!("#import \"@preview/cetz:0.3.0\": canvas\n{text}"),
    )
    .unwrap();
    let run = plateau(&["report", "--no-pdf", "--templates"])
        .arg_path(&templates)
        .arg_path(&studies[0])
        .code(1);
    assert!(run.stderr.contains("@preview/cetz:0.3.0"), "{}", run.stderr);
    assert!(
        run.stderr.contains("cannot use typst packages"),
        "{}",
        run.stderr
    );
}

//! Lab templates: a lab's copy overrides the built-in templates file by file, errors name the
//! lab file and line, and the templates never reach outside their folder.

use crate::common::{example, plateau};
use crate::report::*;

#[test]
fn a_template_syntax_error_names_the_lab_file_and_line_and_exits_1() {
    let dir = tempfile::tempdir().unwrap();
    let t = lab_templates(dir.path(), "= Robustness study\n\nline two\n{% if %}\n");
    let out = dir.path().join("r");
    let run = plateau(&["report", "--no-pdf", "--templates"])
        .arg_path(&t)
        .arg("-o")
        .arg_path(&out)
        .arg_path(&example(EXAMPLE))
        .code(1);
    assert!(run.stderr.contains("section.typ.j2:4"), "{}", run.stderr);
    assert!(
        run.stderr
            .contains(&t.join("section.typ.j2").display().to_string()),
        "{}",
        run.stderr
    );
    assert!(run.stderr.contains("syntax error"), "{}", run.stderr);
    assert!(!out.exists(), "no report folder after a template error");
}

#[test]
fn an_undefined_variable_in_a_lab_template_names_it_with_file_and_line() {
    let dir = tempfile::tempdir().unwrap();
    let t = lab_templates(dir.path(), "= Robustness study\n\n{{ study.nmae }}\n");
    let run = plateau(&["report", "--no-pdf", "--templates"])
        .arg_path(&t)
        .arg("-o")
        .arg_path(&dir.path().join("r"))
        .arg_path(&example(EXAMPLE))
        .code(1);
    assert!(run.stderr.contains("section.typ.j2:3"), "{}", run.stderr);
    assert!(run.stderr.contains("undefined"), "{}", run.stderr);
}

#[test]
fn a_template_cannot_include_a_file_outside_its_folder() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("outside.typ.j2"), "OUTSIDE").unwrap();
    let t = lab_templates(dir.path(), "{% include \"../outside.typ.j2\" %}\n");
    let run = plateau(&["report", "--no-pdf", "--templates"])
        .arg_path(&t)
        .arg("-o")
        .arg_path(&dir.path().join("r"))
        .arg_path(&example(EXAMPLE))
        .code(1);
    assert!(run.stderr.contains("../outside.typ.j2"), "{}", run.stderr);
    assert!(!dir.path().join("r").exists());
}

#[test]
fn export_templates_writes_every_template_and_refuses_to_overwrite() {
    let dir = tempfile::tempdir().unwrap();
    let target = dir.path().join("t");
    let written = plateau::report::export_templates(&target).unwrap();
    let mut got: Vec<String> = written
        .iter()
        .map(|p| p.file_name().unwrap().to_string_lossy().to_string())
        .collect();
    got.sort();
    let mut expected: Vec<String> = plateau::report::render::BUILT_IN
        .iter()
        .map(|(name, _)| name.to_string())
        .chain(std::iter::once("README.md".to_string()))
        .collect();
    expected.sort();
    assert_eq!(got, expected);
    assert!(got.contains(&"section.typ.j2".to_string()));
    assert_eq!(read(&target.join("section.typ.j2")), built_in_section());
    assert!(read(&target.join("README.md")).contains("section_depth"));
    // A second export changes nothing and names the file in the way.
    std::fs::write(target.join("section.typ.j2"), "mine").unwrap();
    let err = plateau::report::export_templates(&target)
        .unwrap_err()
        .to_string();
    assert!(
        err.contains("report.typ.j2") && err.contains("already exists"),
        "{err}"
    );
    assert_eq!(read(&target.join("section.typ.j2")), "mine");
}

#[test]
fn exported_templates_used_as_they_are_give_the_built_in_report() {
    let dir = tempfile::tempdir().unwrap();
    let t = dir.path().join("t");
    plateau::report::export_templates(&t).unwrap();
    let (a, b) = (dir.path().join("a"), dir.path().join("b"));
    report_no_pdf(&example(EXAMPLE), &a);
    plateau(&["report", "--no-pdf", "--templates"])
        .arg_path(&t)
        .arg("-o")
        .arg_path(&b)
        .arg_path(&example(EXAMPLE))
        .ok();
    for name in ["report.typ", "section.typ"] {
        assert_eq!(read(&a.join(name)), read(&b.join(name)), "{name}");
    }
}

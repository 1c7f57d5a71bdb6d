//! Faults around the report: an unwritable destination, a full disk, a killed run, and study
//! text that tries to make the typesetter do something. Each leaves the previous good report
//! complete, exits non-zero with a clear message, and never runs the text.

use std::path::Path;

use crate::common::{example, pdf_text, plateau, typst_binary};

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
    crate::common::make_executable(&stub);
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
    crate::common::json_of(&plateau(&["analyze", "--json"]).arg_path(&path).ok().stdout)
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

/// A stub typesetter: answers `--version` as typst 0.15.1, then runs `body` for a compile
/// (`$out` is the PDF path typst was asked to write).
fn stub_typst(dir: &Path, name: &str, body: &str) -> std::path::PathBuf {
    let stub = dir.join(name);
    std::fs::write(
        &stub,
        format!(
            "#!/bin/sh\nif [ \"$1\" = --version ]; then echo 'typst 0.15.1 (stub)'; exit 0; fi\nfor a; do out=$a; done\n{body}\n"
        ),
    )
    .unwrap();
    crate::common::make_executable(&stub);
    stub
}

fn names(dir: &Path) -> Vec<String> {
    let mut n: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .collect();
    n.sort();
    n
}

#[test]
fn report_never_replaces_a_folder_it_did_not_write() {
    let dir = tempfile::tempdir().unwrap();
    let signed = dir.path().join("signed");
    std::fs::create_dir(&signed).unwrap();
    std::fs::write(signed.join("approved.pdf"), "signed copy").unwrap();
    let run = plateau(&["report", "--no-pdf", "-o"])
        .arg_path(&signed)
        .arg_path(&example("hplc-assay/study.yaml"))
        .code(1);
    assert!(run.stderr.contains("signed"), "{}", run.stderr);
    assert!(run.stderr.contains("choose a new folder"), "{}", run.stderr);
    assert_eq!(names(&signed), ["approved.pdf"]);
    assert_eq!(names(dir.path()), ["signed"], "no staging left beside it");
}

#[test]
fn report_into_the_study_folder_itself_is_refused_and_the_study_kept() {
    let dir = tempfile::tempdir().unwrap();
    let study = copy_example(dir.path());
    let run = plateau(&["report", "--no-pdf", "-o"])
        .arg_path(dir.path())
        .arg_path(&study)
        .code(1);
    assert!(
        run.stderr.contains("no .plateau-output file"),
        "{}",
        run.stderr
    );
    assert_eq!(names(dir.path()), ["results.csv", "study.yaml"]);
}

#[test]
fn a_file_named_as_the_report_folder_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("r");
    std::fs::write(&file, "keep").unwrap();
    let run = plateau(&["report", "--no-pdf", "-o"])
        .arg_path(&file)
        .arg_path(&example("hplc-assay/study.yaml"))
        .code(1);
    assert!(run.stderr.contains("it is a file"), "{}", run.stderr);
    assert_eq!(std::fs::read_to_string(&file).unwrap(), "keep");
}

#[test]
fn an_earlier_report_is_replaced_but_a_file_added_to_it_stops_the_replacement() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("r");
    let study = example("hplc-assay/study.yaml");
    for _ in 0..2 {
        plateau(&["report", "--no-pdf", "--force", "-o"])
            .arg_path(&out)
            .arg_path(&study)
            .ok();
    }
    assert!(out.join(".plateau-output").is_file());
    std::fs::write(out.join("review-notes.txt"), "mine").unwrap();
    let run = plateau(&["report", "--no-pdf", "--force", "-o"])
        .arg_path(&out)
        .arg_path(&study)
        .code(1);
    assert!(run.stderr.contains("review-notes.txt"), "{}", run.stderr);
    assert_eq!(
        std::fs::read_to_string(out.join("review-notes.txt")).unwrap(),
        "mine"
    );
    assert_eq!(names(dir.path()), ["r"]);
}

#[test]
fn verify_never_replaces_a_folder_it_did_not_write() {
    let dir = tempfile::tempdir().unwrap();
    let stub = stub_typst(dir.path(), "typst", "printf '%%PDF-1.7 stub\\n' > \"$out\"");
    let out = dir.path().join("evidence");
    std::fs::create_dir(&out).unwrap();
    std::fs::write(out.join("raw-data.csv"), "1,2").unwrap();
    let run = plateau(&["verify", "--date", "2026-01-01", "--typst"])
        .arg_path(&stub)
        .arg("-o")
        .arg_path(&out)
        .code(1);
    assert!(run.stderr.contains("choose a new folder"), "{}", run.stderr);
    assert_eq!(names(&out), ["raw-data.csv"]);
    // A new folder is written, and written again over itself.
    let fresh = dir.path().join("record");
    for _ in 0..2 {
        plateau(&["verify", "--date", "2026-01-01", "--typst"])
            .arg_path(&stub)
            .arg("-o")
            .arg_path(&fresh)
            .ok();
    }
    assert!(fresh.join("verification.pdf").is_file());
}

#[test]
fn force_replaces_only_a_run_sheet_or_pdf_plateau_could_have_written() {
    let dir = tempfile::tempdir().unwrap();
    let study = example("hplc-assay/study.yaml");
    let notes = dir.path().join("notes.csv");
    std::fs::write(&notes, "lab notebook").unwrap();
    let run = plateau(&["design", "--force", "-o"])
        .arg_path(&notes)
        .arg_path(&study)
        .code(1);
    assert!(run.stderr.contains("notes.csv"), "{}", run.stderr);
    assert_eq!(std::fs::read_to_string(&notes).unwrap(), "lab notebook");
    let stub = stub_typst(dir.path(), "typst", "printf '%%PDF-1.7 stub\\n' > \"$out\"");
    let run = plateau(&["design", "--pdf", "--force", "--typst"])
        .arg_path(&stub)
        .arg("-o")
        .arg_path(&notes)
        .arg_path(&study)
        .code(1);
    assert!(run.stderr.contains("not a PDF"), "{}", run.stderr);
    assert_eq!(std::fs::read_to_string(&notes).unwrap(), "lab notebook");
    let sheet = dir.path().join("sheet.pdf");
    for _ in 0..2 {
        plateau(&["design", "--pdf", "--force", "--typst"])
            .arg_path(&stub)
            .arg("-o")
            .arg_path(&sheet)
            .arg_path(&study)
            .ok();
    }
    assert!(std::fs::read(&sheet).unwrap().starts_with(b"%PDF-"));
    assert_eq!(names(dir.path()), ["notes.csv", "sheet.pdf", "typst"]);
}

/// Runs a report with the stub and returns the run; the previous report must be unchanged
/// and nothing left beside it.
fn report_with_stub(body: &str, timeout: &str) -> crate::common::Run {
    let dir = tempfile::tempdir().unwrap();
    let study = copy_example(dir.path());
    let out = dir.path().join("r");
    plateau(&["report", "--no-pdf", "-o"])
        .arg_path(&out)
        .arg_path(&study)
        .ok();
    let before = common_files(&out);
    let stub = stub_typst(dir.path(), "typst", body);
    let run = plateau(&["report", "--force", "--typst"])
        .arg_path(&stub)
        .env("PLATEAU_TYPST_TIMEOUT", timeout)
        .arg("-o")
        .arg_path(&out)
        .arg_path(&study)
        .code(3);
    assert_eq!(common_files(&out), before, "the previous report changed");
    assert_eq!(
        names(dir.path()),
        ["r", "results.csv", "study.yaml", "typst"]
    );
    run
}

#[test]
fn a_typesetter_that_succeeds_without_a_pdf_replaces_nothing() {
    let run = report_with_stub("exit 0", "300");
    assert!(run.stderr.contains("was not written"), "{}", run.stderr);
}

#[test]
fn a_typesetter_that_writes_no_pdf_but_garbage_replaces_nothing() {
    let run = report_with_stub("echo garbage > \"$out\"", "300");
    assert!(run.stderr.contains("not a PDF"), "{}", run.stderr);
    let run = report_with_stub(": > \"$out\"", "300");
    assert!(run.stderr.contains("is empty"), "{}", run.stderr);
}

#[test]
fn a_typesetter_that_hangs_is_stopped_at_the_time_limit() {
    // `sleep` runs as a child of the shell: the whole process group must be stopped.
    let run = report_with_stub("sleep 600", "1");
    assert!(
        run.stderr.contains("did not finish within 1 s"),
        "{}",
        run.stderr
    );
    assert!(run.stderr.contains("--typst-timeout"), "{}", run.stderr);
}

#[test]
fn a_typesetter_that_hangs_on_its_version_is_stopped_too() {
    let dir = tempfile::tempdir().unwrap();
    let stub = dir.path().join("typst");
    std::fs::write(&stub, "#!/bin/sh\nsleep 600\n").unwrap();
    crate::common::make_executable(&stub);
    let run = plateau(&["report", "--typst-timeout", "1", "--typst"])
        .arg_path(&stub)
        .arg("-o")
        .arg_path(&dir.path().join("r"))
        .arg_path(&example("hplc-assay/study.yaml"))
        .code(3);
    assert!(run.stderr.contains("--version"), "{}", run.stderr);
    let run = plateau(&["report", "--typst-timeout", "0", "-o"])
        .arg_path(&dir.path().join("r"))
        .arg_path(&example("hplc-assay/study.yaml"))
        .code(2);
    assert!(run.stderr.contains("whole seconds"), "{}", run.stderr);
}

#[test]
fn an_interrupted_report_removes_its_staging_folders_and_keeps_the_previous_report() {
    let dir = tempfile::tempdir().unwrap();
    let study = copy_example(dir.path());
    let out = dir.path().join("r");
    plateau(&["report", "--no-pdf", "-o"])
        .arg_path(&out)
        .arg_path(&study)
        .ok();
    let before = common_files(&out);
    let stub = stub_typst(dir.path(), "typst", "sleep 600");
    for signal in ["INT", "TERM"] {
        let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_plateau"))
            .args(["report", "--force", "--typst"])
            .arg(&stub)
            .arg("-o")
            .arg(&out)
            .arg(&study)
            .env("PLATEAU_TYPST_TIMEOUT", "60")
            .spawn()
            .unwrap();
        let deadline = std::time::Instant::now() + std::time::Duration::from_secs(20);
        // Wait until the typesetter is running: its empty package folder exists.
        while std::time::Instant::now() < deadline
            && !names(dir.path()).iter().any(|n| {
                n.starts_with(".r.partial-")
                    && dir.path().join(n).join(".plateau-no-packages").exists()
            })
        {
            std::thread::sleep(std::time::Duration::from_millis(20));
        }
        std::process::Command::new("kill")
            .arg(format!("-{signal}"))
            .arg(child.id().to_string())
            .status()
            .unwrap();
        let status = child.wait().unwrap();
        use std::os::unix::process::ExitStatusExt;
        let number = if signal == "INT" { 2 } else { 15 };
        assert_eq!(status.signal(), Some(number), "SIG{signal}: {status:?}");
        assert_eq!(common_files(&out), before, "the previous report changed");
        assert_eq!(
            names(dir.path()),
            ["r", "results.csv", "study.yaml", "typst"],
            "after SIG{signal}"
        );
    }
}

/// The example study with a `report: { logo: ... }` line added.
fn study_with_logo(dir: &Path, logo: &str) -> std::path::PathBuf {
    let study = copy_example(dir);
    let mut text = std::fs::read_to_string(&study).unwrap();
    text.push_str(&format!("\nreport:\n  logo: {logo}\n"));
    std::fs::write(&study, text).unwrap();
    study
}

#[test]
fn a_logo_that_is_a_device_or_not_an_image_is_refused_by_check() {
    let dir = tempfile::tempdir().unwrap();
    std::os::unix::fs::symlink("/dev/zero", dir.path().join("zero.png")).unwrap();
    let study = study_with_logo(dir.path(), "zero.png");
    let run = plateau(&["check"]).arg_path(&study).code(1);
    assert!(run.stderr.contains("report.logo"), "{}", run.stderr);
    assert!(run.stderr.contains("not a regular file"), "{}", run.stderr);
    std::fs::remove_file(dir.path().join("zero.png")).unwrap();
    std::fs::write(dir.path().join("zero.png"), "GIF89a not a png").unwrap();
    let run = plateau(&["check"]).arg_path(&study).code(1);
    assert!(
        run.stderr.contains("not a PNG, JPEG or SVG"),
        "{}",
        run.stderr
    );
    // A PNG signature (RFC 2083) is accepted.
    std::fs::write(dir.path().join("zero.png"), b"\x89PNG\r\n\x1a\n rest").unwrap();
    plateau(&["check"]).arg_path(&study).ok();
}

/// A study with `k` factors `f1..fk` and the given `design:` block.
fn many_factors(k: usize, design: &str) -> String {
    let mut text = String::from(
        "schema: 1\nstudy: { id: B-1, title: bounds, method: m, analyst: a, date: 2026-01-01 }\nfactors:\n",
    );
    for j in 1..=k {
        text.push_str(&format!(
            "  - {{ id: f{j}, name: F{j}, nominal: 10, delta: 1 }}\n"
        ));
    }
    text.push_str(design);
    text.push_str("responses:\n  - { id: c, name: C, percent-of: mean }\n");
    text
}

#[test]
fn a_saturated_31_factor_fraction_is_refused_with_the_generator_bound() {
    // 2^(31−26): the 26 interactions of five base factors as generators (once minutes and
    // gigabytes in `check`, enumerating 2^26 − 1 words).
    let base = ["f1", "f2", "f3", "f4", "f5"];
    let mut words = Vec::new();
    for mask in 1u32..32 {
        if mask.count_ones() >= 2 {
            let w: Vec<&str> = (0..5)
                .filter(|i| mask >> i & 1 == 1)
                .map(|i| base[i])
                .collect();
            words.push(w.join("*"));
        }
    }
    let generators: Vec<String> = words
        .iter()
        .enumerate()
        .map(|(i, w)| format!("\"f{} = {w}\"", i + 6))
        .collect();
    let design = format!(
        "design:\n  kind: fractional-factorial\n  generators: [{}]\n",
        generators.join(", ")
    );
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("s.yaml");
    std::fs::write(&path, many_factors(31, &design)).unwrap();
    let run = plateau(&["check"]).arg_path(&path).code(1);
    assert!(run.stderr.contains("26 generators"), "{}", run.stderr);
    assert!(
        run.stderr.contains("at most 16 generators"),
        "{}",
        run.stderr
    );
    assert!(run.stderr.contains("plackett-burman"), "{}", run.stderr);
}

#[test]
fn a_1024_run_explicit_design_is_checked_up_to_the_alias_order() {
    // The explicit listing of a 2^10 full factorial: of its 1,023 contrasts, those up to the
    // alias order (2 by default) are kept: 10 main effects and 45 two-factor interactions.
    let mut design = String::from("design:\n  kind: explicit\n  runs:\n");
    for i in 0..1024u32 {
        let levels: Vec<String> = (0..10)
            .map(|j| format!("f{}: {}", j + 1, if i >> j & 1 == 1 { 1 } else { -1 }))
            .collect();
        design.push_str(&format!(
            "    - {{run: {}, {}}}\n",
            i + 1,
            levels.join(", ")
        ));
    }
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("s.yaml");
    std::fs::write(&path, many_factors(10, &design)).unwrap();
    let run = plateau(&["check"]).arg_path(&path).ok();
    assert!(
        run.stdout
            .contains("1024 runs (1024 two-level, 0 nominal), 55 estimable contrasts"),
        "{}",
        run.stdout
    );
}

#[test]
fn output_into_a_closed_pipe_ends_quietly() {
    // A 2^12 run sheet (about 100 kB) is more than a pipe holds, so the writes meet the
    // closed end.
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("s.yaml");
    std::fs::write(&path, many_factors(12, "design:\n  kind: full-factorial\n")).unwrap();
    let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_plateau"))
        .arg("design")
        .arg(&path)
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    drop(child.stdout.take());
    let out = child.wait_with_output().unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(!stderr.contains("panicked"), "{stderr}");
    use std::os::unix::process::ExitStatusExt;
    assert!(
        out.status.success() || out.status.signal() == Some(13),
        "ended by SIGPIPE (13) or exit 0, not {:?}",
        out.status
    );
}

#[test]
fn csv_cells_a_spreadsheet_would_run_are_neutralised_and_read_back() {
    // Formula triggers from OWASP, "CSV Injection" (common practice); -0.25 stays a number.
    let dir = tempfile::tempdir().unwrap();
    let study = dir.path().join("s.yaml");
    std::fs::write(
        &study,
        r#"schema: 1
study: { id: C-1, title: csv, method: m, analyst: a, date: 2026-01-01 }
factors:
  - { id: lot, name: "=HYPERLINK(1)", levels: ["=cmd|' /C calc'!A0", "-lot B"] }
  - { id: shift, name: "@shift", nominal: 0, delta: 0.25 }
design: { kind: full-factorial }
responses:
  - { id: c, name: C, percent-of: mean }
results: { file: sheet.csv }
"#,
    )
    .unwrap();
    let sheet = dir.path().join("sheet.csv");
    plateau(&["design", "-o"])
        .arg_path(&sheet)
        .arg_path(&study)
        .ok();
    let text = std::fs::read_to_string(&sheet).unwrap();
    assert!(text.contains("'=cmd|' /C calc'!A0"), "{text}");
    assert!(text.contains("'-lot B"), "{text}");
    assert!(text.contains(",-0.25,"), "{text}");
    // Filled in, the sheet reads back as the plan.
    let filled: String = text
        .lines()
        .enumerate()
        .map(|(i, l)| {
            if i == 0 {
                format!("{l}\n")
            } else {
                format!("{l}{}\n", 100 + i)
            }
        })
        .collect();
    std::fs::write(&sheet, filled).unwrap();
    plateau(&["check"]).arg_path(&study).ok();
    let out = dir.path().join("r");
    plateau(&["report", "--no-pdf", "-o"])
        .arg_path(&out)
        .arg_path(&study)
        .ok();
    let factors = std::fs::read_to_string(out.join("factors.csv")).unwrap();
    assert!(factors.contains("'=HYPERLINK(1)"), "{factors}");
    assert!(factors.contains("'@shift"), "{factors}");
}

#[test]
fn a_typesetter_named_by_a_relative_path_is_found_for_the_compile_too() {
    // The compile runs in the staging folder; `--typst tools/typst` must still name the stub.
    let dir = tempfile::tempdir().unwrap();
    copy_example(dir.path());
    std::fs::create_dir(dir.path().join("tools")).unwrap();
    stub_typst(
        &dir.path().join("tools"),
        "typst",
        "printf '%%PDF-1.7 stub\\n' > \"$out\"",
    );
    plateau(&["report", "--typst", "tools/typst", "-o", "r", "study.yaml"])
        .current_dir(dir.path())
        .ok();
    assert!(dir.path().join("r/report.pdf").is_file());
}

/// The behaviours that need typst 0.15: they typeset and read the PDF.
mod typeset {
    use super::*;

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

    #[test]
    fn what_check_accepts_the_typesetter_typesets_line_separators_and_a_date_before_1970() {
        // Both cases pass `plateau check` (tests/bad_inputs); the report must typeset them too.
        let typst = typst_binary();
        for case in ["ok-text-line-separators", "ok-date-before-1970"] {
            let dir = tempfile::tempdir().unwrap();
            let from = crate::common::root().join("tests/bad_inputs").join(case);
            for f in ["study.yaml", "results.csv"] {
                std::fs::copy(from.join(f), dir.path().join(f)).unwrap();
            }
            let out = dir.path().join("r");
            plateau(&["report", "--typst"])
                .arg_path(&typst)
                .arg("-o")
                .arg_path(&out)
                .arg_path(&dir.path().join("study.yaml"))
                .ok();
            let section = std::fs::read_to_string(out.join("section.typ")).unwrap();
            for sep in ['\u{000B}', '\u{000C}', '\u{0085}', '\u{2028}', '\u{2029}'] {
                assert!(
                    !section.contains(sep),
                    "{case}: {sep:?} reached the Typst source"
                );
            }
            assert!(
                pdf_text(&out.join("report.pdf")).contains("Marsh"),
                "{case}"
            );
        }
    }
}

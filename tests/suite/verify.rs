//! The calculation verification record: every reference case passes on this machine, a
//! corrupted expected value fails its case by name, and every case names its source.

use std::path::PathBuf;

use plateau::verify::{self, CaseFile, Options};

fn cases_dir() -> PathBuf {
    crate::common::root().join("verification/cases")
}

fn options() -> Options {
    Options {
        date: Some("2026-01-15".into()),
        typst: None,
    }
}

/// The case files on disk, parsed.
fn disk_cases() -> Vec<(String, CaseFile)> {
    let mut out = Vec::new();
    let mut entries: Vec<_> = std::fs::read_dir(cases_dir())
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|x| x == "yaml"))
        .collect();
    entries.sort();
    for p in entries {
        let name = p.file_name().unwrap().to_string_lossy().to_string();
        let text = std::fs::read_to_string(&p).unwrap();
        out.push((name.clone(), verify::parse_case(&name, &text).unwrap()));
    }
    out
}

#[test]
fn every_reference_case_passes_on_this_machine() {
    let record = verify::run(&options()).unwrap();
    if let Err(e) = record.outcome() {
        panic!("{e}");
    }
    assert_eq!(record.summary.failed, 0);
    assert!(
        record.summary.checks > 100,
        "{} checks",
        record.summary.checks
    );
}

#[test]
fn every_case_file_on_disk_is_embedded_in_the_binary() {
    let on_disk: Vec<String> = disk_cases().into_iter().map(|(n, _)| n).collect();
    let embedded: Vec<String> = verify::EMBEDDED
        .iter()
        .map(|(n, _)| n.to_string())
        .collect();
    assert_eq!(on_disk, embedded, "add new case files to verify::EMBEDDED");
    for (name, text) in verify::EMBEDDED {
        let disk = std::fs::read_to_string(cases_dir().join(name)).unwrap();
        assert_eq!(&disk, text, "{name}");
    }
}

#[test]
fn every_case_names_its_source_and_its_id_is_its_file_name() {
    for (name, case) in disk_cases() {
        assert!(
            case.case.source.trim().len() > 20,
            "{name}: the source must be a full citation or library + version + command"
        );
        assert_eq!(format!("{}.yaml", case.case.id), name);
        for e in &case.expect {
            assert!(
                e.note.as_deref().is_some_and(|n| !n.is_empty()),
                "{name}: {} has no note",
                e.quantity
            );
        }
    }
}

#[test]
fn a_case_without_a_source_is_an_error() {
    let text = std::fs::read_to_string(cases_dir().join("bhh-pilot-plant.yaml")).unwrap();
    let start = text.find("  source:").unwrap();
    let end = start + text[start..].find('\n').unwrap() + 1;
    let stripped = format!("{}{}", &text[..start], &text[end..]);
    let err = verify::parse_case("bhh-pilot-plant.yaml", &stripped)
        .unwrap_err()
        .to_string();
    assert!(err.contains("names no source"), "{err}");
}

#[test]
fn a_corrupted_expected_value_fails_that_case_and_names_it() {
    let mut cases: Vec<CaseFile> = disk_cases().into_iter().map(|(_, c)| c).collect();
    let victim = cases
        .iter_mut()
        .find(|c| c.case.id == "bhh-pilot-plant")
        .unwrap();
    let e = victim
        .expect
        .iter_mut()
        .find(|e| e.quantity == "responses[0].effects[label=T].effect")
        .unwrap();
    e.value = serde_json::json!(23.5);
    let record = verify::run_cases(&cases, &options());
    let failed: Vec<&str> = record
        .cases
        .iter()
        .filter(|c| !c.pass)
        .map(|c| c.id.as_str())
        .collect();
    assert_eq!(failed, ["bhh-pilot-plant"]);
    assert_eq!(record.summary.failed, 1);
    let err = record.outcome().unwrap_err().to_string();
    assert!(err.contains("bhh-pilot-plant"), "{err}");
    assert!(
        err.contains("responses[0].effects[label=T].effect"),
        "{err}"
    );
    assert!(err.contains("23.5"), "{err}");
}

#[test]
fn a_quantity_the_analysis_lacks_fails_instead_of_passing() {
    let mut cases: Vec<CaseFile> = disk_cases()
        .into_iter()
        .map(|(_, c)| c)
        .filter(|c| c.case.id == "fraction-2-3-1")
        .collect();
    cases[0].expect[0].quantity = "design.no_such_field".into();
    let record = verify::run_cases(&cases, &options());
    assert!(!record.passed());
    assert!(record.cases[0].checks[0].computed.is_none());
}

#[test]
fn the_record_identifies_the_installation() {
    let record = verify::run_cases(&[], &options());
    assert_eq!(record.version, env!("CARGO_PKG_VERSION"));
    assert_eq!(record.date, "2026-01-15");
    assert_eq!(record.date_source, "given");
    assert_eq!(record.binary_sha256.as_deref().map(str::len), Some(64));
    assert_eq!(record.platform.os, std::env::consts::OS);
}

// ---- through the binary (needs the `verify` subcommand wired into main.rs) ----------------

#[test]
fn plateau_verify_json_passes_on_this_machine() {
    let run = crate::common::plateau(&["verify", "--json", "--date", "2026-01-15"]).ok();
    let doc = crate::common::json_of(&run.stdout);
    assert_eq!(doc["summary"]["failed"], 0);
    assert_eq!(doc["date"], "2026-01-15");
    assert_eq!(doc["binary_sha256"].as_str().map(str::len), Some(64));
}

/// The behaviours that need typst 0.15: they typeset and read the PDF.
mod typeset {
    use super::*;

    #[test]
    fn the_record_is_typeset_when_typst_is_available() {
        let typst = crate::common::typst_binary();
        let typst = plateau::report::typst::find(Some(&typst)).unwrap();
        let opts = Options {
            date: Some("2026-01-15".into()),
            typst: Some(typst.clone()),
        };
        let record = verify::run(&opts).unwrap();
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("record");
        verify::document::write(&record, &out, Some(&typst)).unwrap();
        for f in ["verification.pdf", "verification.typ", "verification.json"] {
            assert!(out.join(f).is_file(), "{f}");
        }
        let typ = std::fs::read_to_string(out.join("verification.typ")).unwrap();
        assert!(typ.contains("Review and approval"));
        assert!(typ.contains("remains responsible for its own validation"));
    }
}

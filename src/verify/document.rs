//! The typeset verification record: the template context (every number formatted here, so
//! the template only lays out), and the folder with `verification.pdf`, `.typ` and `.json`.
//!
//! The folder is written by [`crate::output`] as the report folder is: never over a folder it
//! did not write, assembled under a unique temporary name, renamed into place when complete.

use std::path::{Path, PathBuf};

use serde::Serialize;
use serde_json::Value;

use super::{CaseKind, VerificationRecord, VerifyError};
use crate::report::{render, typst};

/// The record's PDF file name.
pub const PDF: &str = "verification.pdf";
/// The record's Typst source file name.
pub const TYP: &str = "verification.typ";
/// The record as data.
pub const JSON: &str = "verification.json";

#[derive(Serialize)]
struct Context {
    tool: String,
    version: String,
    binary: String,
    binary_sha256: String,
    platform: String,
    typst_version: String,
    date: String,
    date_source: String,
    passed: bool,
    summary: super::Summary,
    cases: Vec<CaseContext>,
}

#[derive(Serialize)]
struct CaseContext {
    id: String,
    title: String,
    kind: String,
    source: String,
    pass: bool,
    error: Option<String>,
    passed: usize,
    checks: Vec<CheckContext>,
}

#[derive(Serialize)]
struct CheckContext {
    quantity: String,
    expected: String,
    computed: String,
    difference: String,
    tolerance: String,
    pass: bool,
    note: String,
}

/// A value as the record prints it: numbers with up to 12 significant digits (enough to show
/// a difference at the tolerances used), other values as JSON.
pub fn format_value(v: &Value) -> String {
    match v {
        Value::Number(n) => n.as_f64().map_or_else(|| n.to_string(), format_number),
        Value::String(s) => s.clone(),
        other => other.to_string(),
    }
}

/// A number with up to 12 significant digits, plain for moderate magnitudes and in
/// scientific notation otherwise.
pub fn format_number(x: f64) -> String {
    if x == 0.0 {
        return "0".into();
    }
    if !x.is_finite() {
        return x.to_string();
    }
    let mag = x.abs().log10().floor() as i32;
    if (-4..12).contains(&mag) {
        let decimals = (11 - mag).clamp(0, 16) as usize;
        let s = format!("{x:.decimals$}");
        let s = if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            s
        };
        if s == "-0" { "0".into() } else { s }
    } else {
        format!("{x:.11e}")
    }
}

fn context(record: &VerificationRecord) -> Context {
    Context {
        tool: record.tool.clone(),
        version: record.version.clone(),
        binary: record
            .binary
            .clone()
            .unwrap_or_else(|| "(not available)".into()),
        binary_sha256: record
            .binary_sha256
            .clone()
            .unwrap_or_else(|| "(not available)".into()),
        platform: format!("{} / {}", record.platform.os, record.platform.arch),
        typst_version: record
            .typst_version
            .clone()
            .unwrap_or_else(|| "(none)".into()),
        date: record.date.clone(),
        date_source: record.date_source.clone(),
        passed: record.passed(),
        summary: record.summary.clone(),
        cases: record
            .cases
            .iter()
            .map(|c| CaseContext {
                id: c.id.clone(),
                title: c.title.clone(),
                kind: match c.kind {
                    CaseKind::Published => "published",
                    CaseKind::Library => "reference library",
                    CaseKind::Hand => "by hand from a published formula",
                }
                .into(),
                source: c.source.clone(),
                pass: c.pass,
                error: c.error.clone(),
                passed: c.checks.iter().filter(|k| k.pass).count(),
                checks: c
                    .checks
                    .iter()
                    .map(|k| CheckContext {
                        quantity: k.quantity.clone(),
                        expected: format_value(&k.expected),
                        computed: k
                            .computed
                            .as_ref()
                            .map_or_else(|| "(none)".into(), format_value),
                        difference: k
                            .difference
                            .map_or_else(String::new, |d| format!("{d:.2e}")),
                        tolerance: format!("{:.0e}", k.tolerance),
                        pass: k.pass,
                        note: k.note.clone().unwrap_or_default(),
                    })
                    .collect(),
            })
            .collect(),
    }
}

/// The record's Typst source.
pub fn typst_source(record: &VerificationRecord) -> Result<String, VerifyError> {
    let env = render::environment(None);
    let value = minijinja::Value::from(minijinja::value::Serde(&context(record)));
    Ok(render::render(&env, "verify.typ.j2", value)?)
}

/// Writes `dir/verification.typ`, `dir/verification.json` and, with a typesetter,
/// `dir/verification.pdf`; returns `dir`. The PDF's creation date is the record's date.
pub fn write(
    record: &VerificationRecord,
    dir: &Path,
    typst: Option<&typst::Typst>,
) -> Result<PathBuf, VerifyError> {
    let source = typst_source(record)?;
    let json = serde_json::to_string_pretty(record)
        .map_err(|e| VerifyError::write(Path::new(JSON), e))?
        + "\n";
    let files = vec![
        (TYP.to_string(), source.into_bytes()),
        (JSON.to_string(), json.into_bytes()),
    ];
    crate::output::write_folder(dir, "verification record folder", &files, |staging| {
        if let Some(typst) = typst {
            crate::report::typeset(typst, staging, TYP, PDF, &record.date).map_err(
                |e| match e {
                    crate::report::ReportError::Typst(t) => VerifyError::Typst(t),
                    other => VerifyError::write(staging, other),
                },
            )?;
        }
        Ok::<(), VerifyError>(())
    })?;
    Ok(dir.to_path_buf())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_print_with_twelve_significant_digits() {
        assert_eq!(format_number(23.0), "23");
        assert_eq!(format_number(-5.0), "-5");
        assert_eq!(format_number(0.565685424949238), "0.565685424949");
        assert_eq!(format_number(1.25e-7), "1.25000000000e-7");
        assert_eq!(format_number(0.0), "0");
    }
}

//! The change summary as a short PDF a reviewer can attach to a re-approval, typeset with the
//! same sandboxed typst call as the report.

use std::path::Path;

use serde::Serialize;

use super::StudyDiff;
use super::text::{Rows, rows};
use crate::report::{ReportError, render, typst};

#[derive(Serialize)]
struct VersionContext {
    name: &'static str,
    label: String,
    file: String,
    sha256: String,
    data: Option<String>,
    data_sha256: Option<String>,
}

#[derive(Serialize)]
struct Context {
    id: String,
    title: String,
    versions: Vec<VersionContext>,
    empty: bool,
    same_files: bool,
    rows: Rows,
    reason: Option<super::Reason>,
}

fn version(name: &'static str, v: &super::Version) -> VersionContext {
    VersionContext {
        name,
        label: v.label.clone(),
        file: v.file.clone(),
        sha256: v.sha256.clone(),
        data: v.data_file.as_ref().map(|d| d.name.clone()),
        data_sha256: v.data_file.as_ref().map(|d| d.sha256.clone()),
    }
}

fn write_error(path: &Path, e: impl std::fmt::Display) -> ReportError {
    ReportError::Write {
        path: path.display().to_string(),
        cause: e.to_string(),
    }
}

/// Typesets the change summary of `diff` to `out` (a PDF file): study id and title, both
/// versions with their labels and SHA-256, the changes as tables, the caution that the
/// conclusions must be reviewed and approved by qualified staff, and empty signature lines.
///
/// The source is rendered from `diff.typ.j2` (all study text escaped) and compiled in a
/// staging folder beside `out` by the output writer, then renamed, so a failed run never leaves
/// a partial PDF; an existing `out` is replaced only with `force` and only if it is a PDF.
/// The PDF's creation date is the new version's study date.
pub fn write_pdf(
    diff: &StudyDiff,
    typst: &typst::Typst,
    out: &Path,
    force: bool,
) -> Result<(), ReportError> {
    let ctx = Context {
        id: diff.new.id.clone(),
        title: diff.new.title.clone(),
        versions: vec![version("Old", &diff.old), version("New", &diff.new)],
        empty: diff.is_empty(),
        same_files: diff.old.sha256 == diff.new.sha256,
        rows: rows(diff),
        reason: diff.reason.clone(),
    };
    let env = render::environment(None);
    let source = render::render(
        &env,
        "diff.typ.j2",
        minijinja::Value::from(minijinja::value::Serde(&ctx)),
    )?;
    crate::output::write_file(out, crate::output::Kind::Pdf, force, |work| {
        std::fs::write(work.join("diff.typ"), source).map_err(|e| write_error(work, e))?;
        crate::report::typeset(typst, work, "diff.typ", "diff.pdf", &diff.new.date)?;
        Ok::<_, ReportError>(work.join("diff.pdf"))
    })
}

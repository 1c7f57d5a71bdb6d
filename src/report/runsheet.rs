//! The printable run sheet: study id, run order, settings and blank result cells, typeset with
//! the same sandboxed typst call as the report.

use std::path::Path;

use serde::Serialize;

use crate::design::{Design, sheet};
use crate::study::Study;

use super::{ReportError, render, typst};

#[derive(Serialize)]
struct SheetContext {
    id: String,
    title: String,
    method: String,
    date: String,
    design: String,
    header: Vec<String>,
    responses: usize,
    rows: Vec<Vec<String>>,
}

/// Typesets the run sheet to `out` (a PDF file), through the output writer: an existing `out`
/// is replaced only with `force` and only if it is a PDF.
pub fn write_pdf(
    study: &Study,
    design: &Design,
    levels: sheet::Levels,
    typst: &typst::Typst,
    out: &Path,
    force: bool,
) -> Result<(), ReportError> {
    let (header, rows) = sheet::rows(study, design, levels);
    let ctx = SheetContext {
        id: study.info.id.clone(),
        title: study.info.title.clone(),
        method: study.info.method.clone(),
        date: study.info.date.clone(),
        design: format!(
            "{} runs ({} nominal); {}",
            design.runs.len(),
            design.nominal_count(),
            match design.seed {
                Some(s) => format!("randomised run order, seed {s}"),
                None => "standard run order".to_string(),
            }
        ),
        header,
        responses: study.responses.len(),
        rows,
    };
    let env = render::environment(None);
    let source = render::render(
        &env,
        "runsheet.typ.j2",
        minijinja::Value::from(minijinja::value::Serde(&ctx)),
    )?;
    crate::output::write_file(out, crate::output::Kind::Pdf, force, |work| {
        std::fs::write(work.join("runsheet.typ"), source)
            .map_err(|e| ReportError::write(work, e))?;
        super::typeset(
            typst,
            work,
            "runsheet.typ",
            "runsheet.pdf",
            &study.info.date,
        )?;
        Ok::<_, ReportError>(work.join("runsheet.pdf"))
    })
}

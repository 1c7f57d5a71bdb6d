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

/// Typesets the run sheet to `out` (a PDF file).
pub fn write_pdf(
    study: &Study,
    design: &Design,
    levels: sheet::Levels,
    typst: &typst::Typst,
    out: &Path,
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
    let work = tempdir_near(out)?;
    let result = (|| {
        std::fs::write(work.join("runsheet.typ"), source)
            .map_err(|e| ReportError::write(&work, e))?;
        let packages = work.join(".no-packages");
        std::fs::create_dir_all(&packages).map_err(|e| ReportError::write(&packages, e))?;
        let stamp = typst::unix_midnight(&study.info.date).unwrap_or(0);
        typst.compile(&work, "runsheet.typ", "runsheet.pdf", stamp, &packages)?;
        std::fs::rename(work.join("runsheet.pdf"), out).map_err(|e| ReportError::write(out, e))
    })();
    let _ = std::fs::remove_dir_all(&work);
    result
}

fn tempdir_near(out: &Path) -> Result<std::path::PathBuf, ReportError> {
    let parent = out
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or_else(|| Path::new("."));
    let dir = parent.join(format!(".runsheet.partial-{}", std::process::id()));
    std::fs::create_dir_all(&dir).map_err(|e| ReportError::write(&dir, e))?;
    Ok(dir)
}

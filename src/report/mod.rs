//! The report: template context, Typst source, tables, analysis JSON and the typeset PDF, written
//! as one folder.
//!
//! Renderers return bytes; `write` is the one place that touches the file system. The folder is
//! assembled under a temporary name beside its destination and renamed into place only when
//! every file (the PDF included) is complete, so a failure leaves the previous report intact.

pub mod conclusion;
pub mod context;
pub mod escape;
pub mod figures;
pub mod format;
pub mod judging;
pub mod power;
pub mod render;
pub mod runsheet;
pub mod tables;
pub mod typst;

use std::path::{Path, PathBuf};

use crate::pipeline::Evaluated;

pub use render::export_templates;

/// What the report command needs besides the study.
#[derive(Debug, Clone, Default)]
pub struct Options {
    /// Destination folder; default `<study stem>-report/` beside the study file.
    pub out_dir: Option<PathBuf>,
    /// A folder of templates overriding the built-in ones file by file.
    pub templates: Option<PathBuf>,
    /// The typesetter, or `None` for `--no-pdf`.
    pub typst: Option<typst::Typst>,
}

/// A failure while producing a report.
#[derive(Debug, thiserror::Error)]
pub enum ReportError {
    /// A template failed.
    #[error(transparent)]
    Template(#[from] render::TemplateError),
    /// The typesetter failed.
    #[error(transparent)]
    Typst(#[from] typst::TypstError),
    /// A figure could not be drawn.
    #[error(transparent)]
    Figure(#[from] crate::plot::PlotError),
    /// A file that would be written exists already.
    #[error(
        "{path} already exists; plateau never overwrites a template (remove it or choose an empty folder)"
    )]
    Exists {
        /// The path.
        path: String,
    },
    /// A file could not be written.
    #[error("failed to write {path} ({cause})")]
    Write {
        /// The path.
        path: String,
        /// The reason.
        cause: String,
    },
}

impl ReportError {
    fn write(path: &Path, e: impl std::fmt::Display) -> Self {
        Self::Write {
            path: path.display().to_string(),
            cause: e.to_string(),
        }
    }
}

/// The default report folder of a study file: `<stem>-report` beside it.
pub fn default_dir(study_path: &Path) -> PathBuf {
    let stem = study_path
        .file_stem()
        .map(|s| s.to_string_lossy().to_string())
        .unwrap_or_else(|| "study".to_string());
    study_path
        .parent()
        .unwrap_or_else(|| Path::new("."))
        .join(format!("{stem}-report"))
}

/// The files of a report except the PDF, as (name, bytes), in a fixed order: `report.typ`
/// (the standalone document, which `#include`s the chapter), `section.typ` (the chapter, for
/// a dossier to include), the figures, `analysis.json` and the CSV tables.
pub fn render_files(
    evaluated: &Evaluated,
    options: &Options,
) -> Result<Vec<(String, Vec<u8>)>, ReportError> {
    let typst_version = options.typst.as_ref().map(|t| t.version.as_str());
    let figures = figures::build(evaluated)?;
    let ctx = context::build(evaluated, typst_version, &figures);
    let user = options.templates.as_deref();
    let env = render::environment(user);
    let value = minijinja::Value::from(minijinja::value::Serde(&ctx));
    let section =
        render::render(&env, "section.typ.j2", value.clone()).map_err(|e| e.located(user))?;
    let report = render::render(&env, "report.typ.j2", value).map_err(|e| e.located(user))?;
    let mut files = vec![
        ("report.typ".to_string(), report.into_bytes()),
        ("section.typ".to_string(), section.into_bytes()),
    ];
    // Each figure's SVG and, beside it, the CSV of its plotted values.
    files.extend(figures.files());
    let json = serde_json::to_string_pretty(&evaluated.analysis)
        .map_err(|e| ReportError::write(Path::new("analysis.json"), e))?;
    files.push(("analysis.json".to_string(), (json + "\n").into_bytes()));
    files.extend(tables::csv_files(evaluated));
    let record = crate::batch::inputs(
        &evaluated.study,
        options.templates.as_deref(),
        typst_version,
    );
    let record = serde_json::to_string_pretty(&record)
        .map_err(|e| ReportError::write(Path::new(crate::batch::RECORD), e))?;
    files.push((
        crate::batch::RECORD.to_string(),
        (record + "\n").into_bytes(),
    ));
    if let (Some(logo), Some(name)) = (
        &evaluated.study.report.logo,
        context::logo_file_name(&evaluated.study),
    ) {
        let path = evaluated
            .study
            .path
            .parent()
            .unwrap_or_else(|| Path::new("."))
            .join(logo);
        // Bounded like the check's 2 MiB test: the check read the size from the metadata, which
        // a device or a growing file does not honour.
        let shown = path.display().to_string();
        let bytes =
            crate::study::load::read_limited(&path, 2 * 1024 * 1024, &shown).map_err(|d| {
                let cause = d.0.first().map(|d| d.problem.clone()).unwrap_or_default();
                ReportError::write(&path, cause)
            })?;
        files.push((name, bytes));
    }
    Ok(files)
}

/// Writes the report folder and returns its path.
pub fn write(evaluated: &Evaluated, options: &Options) -> Result<PathBuf, ReportError> {
    let files = render_files(evaluated, options)?;
    let dest = options
        .out_dir
        .clone()
        .unwrap_or_else(|| default_dir(&evaluated.study.path));
    let parent = dest
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .map(Path::to_path_buf)
        .unwrap_or_else(|| PathBuf::from("."));
    let name = dest
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_else(|| "report".into());
    std::fs::create_dir_all(&parent).map_err(|e| ReportError::write(&parent, e))?;
    remove_leftovers(&parent, &name);
    let staging = parent.join(format!(".{name}.partial-{}", std::process::id()));
    let result = (|| {
        if staging.exists() {
            std::fs::remove_dir_all(&staging).map_err(|e| ReportError::write(&staging, e))?;
        }
        std::fs::create_dir(&staging).map_err(|e| ReportError::write(&staging, e))?;
        for (file, bytes) in &files {
            let path = staging.join(file);
            std::fs::write(&path, bytes).map_err(|e| ReportError::write(&path, e))?;
        }
        if let Some(typst) = &options.typst {
            let packages = parent.join(format!(".{name}.no-packages-{}", std::process::id()));
            std::fs::create_dir_all(&packages).map_err(|e| ReportError::write(&packages, e))?;
            let stamp = typst::unix_midnight(&evaluated.study.info.date).unwrap_or(0);
            let compiled = typst.compile(&staging, "report.typ", "report.pdf", stamp, &packages);
            let _ = std::fs::remove_dir_all(&packages);
            compiled?;
        }
        replace_dir(&staging, &dest)
    })();
    if result.is_err() {
        let _ = std::fs::remove_dir_all(&staging);
    }
    result.map(|()| dest)
}

/// Removes staging folders a killed run left behind (`.<name>.partial-*`, `.<name>.old-*`),
/// so they never accumulate; the report folder itself is never touched here.
fn remove_leftovers(parent: &Path, name: &str) {
    let Ok(entries) = std::fs::read_dir(parent) else {
        return;
    };
    for entry in entries.flatten() {
        let file = entry.file_name().to_string_lossy().to_string();
        let ours = [".partial-", ".no-packages-", ".old-"]
            .iter()
            .any(|tag| file.starts_with(&format!(".{name}{tag}")));
        if ours && entry.path().is_dir() {
            let _ = std::fs::remove_dir_all(entry.path());
        }
    }
}

/// Moves `staging` to `dest`, replacing an existing report only after the new one is complete.
fn replace_dir(staging: &Path, dest: &Path) -> Result<(), ReportError> {
    if dest.exists() {
        let old = dest.with_file_name(format!(
            ".{}.old-{}",
            dest.file_name()
                .map(|n| n.to_string_lossy().to_string())
                .unwrap_or_default(),
            std::process::id()
        ));
        std::fs::rename(dest, &old).map_err(|e| ReportError::write(dest, e))?;
        if let Err(e) = std::fs::rename(staging, dest) {
            let _ = std::fs::rename(&old, dest);
            return Err(ReportError::write(dest, e));
        }
        let _ = std::fs::remove_dir_all(&old);
        Ok(())
    } else {
        std::fs::rename(staging, dest).map_err(|e| ReportError::write(dest, e))
    }
}

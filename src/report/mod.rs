//! The report: template context, Typst source, tables, analysis JSON and the typeset PDF, written
//! as one folder.
//!
//! Renderers return bytes; `write` hands them to [`crate::output`], the one writer of folders:
//! it refuses a destination that is not an earlier report, assembles the folder under a unique
//! temporary name, and renames it into place only when every file (the PDF included, checked to
//! be a PDF) is complete, so a failure leaves the previous report intact.

pub mod conclusion;
pub mod context;
pub mod design_text;
pub mod escape;
pub mod figures;
pub mod format;
pub mod judging;
pub mod power;
pub mod protocol;
pub mod record;
pub mod references;
pub mod render;
pub mod response_text;
pub mod run_table;
pub mod runsheet;
pub mod tables;
pub mod terminal;
pub mod typst;
pub mod wording;

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
    /// The destination was refused, or could not be written.
    #[error(transparent)]
    Output(#[from] crate::output::OutputError),
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
    render_revision(evaluated, options, None)
}

/// [`render_files`] for a given revision (document version and the report it replaces).
pub fn render_revision(
    evaluated: &Evaluated,
    options: &Options,
    revision: Option<&context::RevisionText>,
) -> Result<Vec<(String, Vec<u8>)>, ReportError> {
    let typst_version = options.typst.as_ref().map(|t| t.version.as_str());
    let figures = figures::build(evaluated)?;
    let mut ctx = context::build(evaluated, typst_version, &figures);
    ctx.revision = revision.cloned();
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
    let mut document = analysis_document(evaluated);
    if let (Some(r), serde_json::Value::Object(map)) = (revision, &mut document) {
        map.insert(
            "revision".into(),
            serde_json::json!({
                "version": r.version,
                "previous_report_sha256": r.previous_sha256,
            }),
        );
    }
    let json = serde_json::to_string_pretty(&document)
        .map_err(|e| ReportError::write(Path::new("analysis.json"), e))?;
    files.push(("analysis.json".to_string(), (json + "\n").into_bytes()));
    files.extend(tables::csv_files(evaluated));
    let mut record = record::inputs(
        &evaluated.study,
        options.templates.as_deref(),
        typst_version,
    );
    record.outputs = files
        .iter()
        .map(|(name, bytes)| (name.clone(), crate::study::load::sha256_hex(bytes)))
        .collect();
    let record = serde_json::to_string_pretty(&record)
        .map_err(|e| ReportError::write(Path::new(record::RECORD), e))?;
    files.push((record::RECORD.to_string(), (record + "\n").into_bytes()));
    if let (Some(bytes), Some(name)) = (
        &evaluated.study.logo,
        context::logo_file_name(&evaluated.study),
    ) {
        files.push((name, bytes.clone()));
    }
    Ok(files)
}

/// The analysis as analysis.json carries it: the analysis, with `protocol` (lock SHA-256 and
/// deviations) when the study names a protocol lock, and `order_changes` when runs were
/// performed out of their planned order.
pub fn analysis_document(evaluated: &Evaluated) -> serde_json::Value {
    let mut doc = serde_json::to_value(&evaluated.analysis).unwrap_or_default();
    if let serde_json::Value::Object(map) = &mut doc {
        if let Some(p) = &evaluated.protocol {
            map.insert(
                "protocol".into(),
                serde_json::to_value(p).unwrap_or_default(),
            );
        }
        if !evaluated.order_changes.is_empty() {
            map.insert(
                "order_changes".into(),
                serde_json::to_value(&evaluated.order_changes).unwrap_or_default(),
            );
        }
    }
    doc
}

/// The report's revision: the document version (`report: version:`) and, when `dest` already
/// holds a report.pdf, its SHA-256 (the revision this report replaces). A rebuild from the same
/// inputs is the same revision: it keeps what the earlier build recorded, so reruns stay
/// byte-identical.
pub fn revision(evaluated: &Evaluated, dest: &Path) -> Option<context::RevisionText> {
    let version = evaluated.study.report.version.clone();
    let previous = previous_report(evaluated, dest);
    (version.is_some() || previous.is_some()).then_some(context::RevisionText {
        version,
        previous_sha256: previous,
    })
}

/// Largest earlier report.pdf hashed (a chapter is far smaller).
const MAX_PREVIOUS_PDF: u64 = 512 * 1024 * 1024;

fn previous_report(evaluated: &Evaluated, dest: &Path) -> Option<String> {
    let pdf = dest.join("report.pdf");
    let shown = pdf.display().to_string();
    let bytes = crate::study::load::read_limited(&pdf, MAX_PREVIOUS_PDF, &shown).ok()?;
    let now = record::inputs(&evaluated.study, None, None);
    let same_inputs =
        record::recorded(dest).is_some_and(|r| r.study.1 == now.study.1 && r.data == now.data);
    if same_inputs {
        let text = std::fs::read_to_string(dest.join("analysis.json")).ok()?;
        let doc: serde_json::Value = serde_json::from_str(&text).ok()?;
        return doc["revision"]["previous_report_sha256"]
            .as_str()
            .map(str::to_string);
    }
    Some(crate::study::load::sha256_hex(&bytes))
}

/// Writes the report folder and returns its path.
pub fn write(evaluated: &Evaluated, options: &Options) -> Result<PathBuf, ReportError> {
    let dest = options
        .out_dir
        .clone()
        .unwrap_or_else(|| default_dir(&evaluated.study.path));
    let own = evaluated
        .study
        .path
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    if let Some(other) = record::recorded(&dest).filter(|r| r.study.0 != own) {
        return Err(crate::output::OutputError::Occupied {
            path: dest.display().to_string(),
            why: format!(
                "it holds the report of {}, not of {own}; one would replace the other",
                other.study.0
            ),
            hint: "give this study its own folder with -o DIR, or rename one of the study files"
                .into(),
        }
        .into());
    }
    // Refused before the figures and templates are rendered, not after.
    crate::output::check_folder(&dest, "report folder")?;
    let revision = revision(evaluated, &dest);
    let files = render_revision(evaluated, options, revision.as_ref())?;
    crate::output::write_folder(&dest, "report folder", &files, |staging| {
        if let Some(typst) = &options.typst {
            typeset(
                typst,
                staging,
                "report.typ",
                "report.pdf",
                &evaluated.study.info.date,
            )?;
            record_pdf(staging)?;
        }
        Ok::<(), ReportError>(())
    })?;
    Ok(dest)
}

/// Adds the typeset PDF's SHA-256 to the input record in the staging folder, so that `status`
/// tells when report.pdf is edited or replaced after plateau wrote it.
fn record_pdf(staging: &Path) -> Result<(), ReportError> {
    let record_path = staging.join(record::RECORD);
    let Some(mut record) = record::recorded(staging) else {
        return Err(ReportError::write(
            &record_path,
            "the input record cannot be read back",
        ));
    };
    let pdf = staging.join("report.pdf");
    record
        .outputs
        .push(("report.pdf".into(), record::file_hash(&pdf)));
    let text =
        serde_json::to_string_pretty(&record).map_err(|e| ReportError::write(&record_path, e))?;
    std::fs::write(&record_path, text + "\n").map_err(|e| ReportError::write(&record_path, e))
}

/// Name of the empty package folder given to typst inside the staging folder (removed after
/// the compile, so it never reaches the output).
pub const NO_PACKAGES: &str = ".plateau-no-packages";

/// Compiles `dir/input` to `dir/output` with an empty package folder inside `dir` (so a
/// template can never download a package; removed afterwards) and the study date as the PDF's
/// creation date.
pub fn typeset(
    typst: &typst::Typst,
    dir: &Path,
    input: &str,
    output: &str,
    date: &str,
) -> Result<(), ReportError> {
    let packages = dir.join(NO_PACKAGES);
    std::fs::create_dir(&packages).map_err(|e| ReportError::write(&packages, e))?;
    let stamp = typst::creation_timestamp(date);
    let compiled = typst.compile(dir, input, output, stamp, &packages);
    std::fs::remove_dir(&packages).map_err(|e| ReportError::write(&packages, e))?;
    compiled?;
    Ok(())
}

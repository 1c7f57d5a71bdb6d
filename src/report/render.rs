//! Rendering the Typst source from templates: built-in ones embedded in the binary, and a lab's
//! own folder overriding them file by file.
//!
//! Every value a template prints goes through the Typst escaper unless Rust marked it safe, so a
//! template author cannot forget to escape study text. Undefined variables are errors, so a typo
//! in a template fails loudly instead of printing nothing.

use std::path::{Path, PathBuf};

use minijinja::{AutoEscape, Environment, UndefinedBehavior, Value};

use super::{ReportError, escape};

/// The built-in templates, by name.
pub const BUILT_IN: &[(&str, &str)] = &[
    (
        "report.typ.j2",
        include_str!("../../templates/report.typ.j2"),
    ),
    (
        "section.typ.j2",
        include_str!("../../templates/section.typ.j2"),
    ),
    (
        "runsheet.typ.j2",
        include_str!("../../templates/runsheet.typ.j2"),
    ),
    ("diff.typ.j2", include_str!("../../templates/diff.typ.j2")),
    (
        "protocol.typ.j2",
        include_str!("../../templates/protocol.typ.j2"),
    ),
    (
        "verify.typ.j2",
        include_str!("../../templates/verify.typ.j2"),
    ),
];

/// The variables the templates receive, for lab template authors (exported with them).
pub const README: &str = include_str!("../../templates/README.md");

/// A template problem, with the template's name and line.
#[derive(Debug, thiserror::Error)]
#[error("template error: {message}")]
pub struct TemplateError {
    /// minijinja's description, which names the template file and line.
    pub message: String,
    /// The template the error is in, as named to the loader (e.g. `section.typ.j2`).
    pub template: Option<String>,
    /// 1-based line in that template.
    pub line: Option<usize>,
}

impl From<minijinja::Error> for TemplateError {
    fn from(e: minijinja::Error) -> Self {
        let mut message = e.to_string();
        if let (Some(name), Some(line)) = (e.name(), e.line())
            && !message.contains(name)
        {
            message = format!("{name}:{line}: {message}");
        }
        Self {
            message,
            template: e.name().map(str::to_string),
            line: e.line(),
        }
    }
}

impl TemplateError {
    /// Adds where the failing template lives: the lab's file when `user_dir` holds one of that
    /// name (so the author knows it is theirs), else a note that it is built in.
    pub fn located(mut self, user_dir: Option<&Path>) -> Self {
        let Some(name) = self.template.clone() else {
            return self;
        };
        let line = self.line.map(|l| format!(":{l}")).unwrap_or_default();
        match user_dir.map(|d| d.join(&name)).filter(|p| p.is_file()) {
            Some(path) => {
                self.message = format!("{}\n  --> {}{line}", self.message, path.display());
            }
            None => {
                self.message = format!(
                    "{}\n  --> built-in template {name}{line} (export the built-in templates with `plateau templates export DIR` to see it)",
                    self.message
                );
            }
        }
        self
    }
}

/// Writes the built-in templates and their README into `dir` (created if missing), for a lab to
/// edit and pass back with `--templates DIR`. Refuses to overwrite: when any of the files
/// exists already, nothing is written and the error names that file.
pub fn export_templates(dir: &Path) -> Result<Vec<PathBuf>, ReportError> {
    let files: Vec<(PathBuf, &str)> = BUILT_IN
        .iter()
        .map(|(name, text)| (dir.join(name), *text))
        .chain(std::iter::once((dir.join("README.md"), README)))
        .collect();
    if let Some((path, _)) = files.iter().find(|(p, _)| p.exists()) {
        return Err(ReportError::Exists {
            path: path.display().to_string(),
        });
    }
    std::fs::create_dir_all(dir).map_err(|e| ReportError::write(dir, e))?;
    let mut written = Vec::with_capacity(files.len());
    for (path, text) in files {
        crate::output::create_new(&path, text.as_bytes()).map_err(|e| match e {
            crate::output::NewFileError::Exists => ReportError::Exists {
                path: path.display().to_string(),
            },
            crate::output::NewFileError::Io(e) => ReportError::write(&path, e),
        })?;
        written.push(path);
    }
    Ok(written)
}

/// Largest lab template read (bytes).
pub const MAX_TEMPLATE_BYTES: u64 = 1024 * 1024;

/// Reads the lab template `name` from `dir`: only a plain relative name, only a regular file,
/// at most [`MAX_TEMPLATE_BYTES`], and never one that imports a typst package (`"@preview/…"`):
/// the report is typeset with an empty package folder, so the import could only fail in typst
/// (or, without that guard, download code).
fn load_lab_template(dir: &Path, name: &str) -> Result<Option<String>, minijinja::Error> {
    let invalid = |msg: String| minijinja::Error::new(minijinja::ErrorKind::InvalidOperation, msg);
    let relative = Path::new(name);
    if relative.is_absolute()
        || relative
            .components()
            .any(|c| !matches!(c, std::path::Component::Normal(_)))
    {
        return Ok(None);
    }
    let path = dir.join(relative);
    let Ok(meta) = std::fs::metadata(&path) else {
        return Ok(None);
    };
    if !meta.is_file() {
        return Err(invalid(format!(
            "{} is not a regular file; expected a template file",
            path.display()
        )));
    }
    let mut text = String::new();
    std::fs::File::open(&path)
        .and_then(|f| {
            std::io::Read::read_to_string(
                &mut std::io::Read::take(f, MAX_TEMPLATE_BYTES + 1),
                &mut text,
            )
        })
        .map_err(|e| invalid(format!("failed to read {} ({e})", path.display())))?;
    if text.len() as u64 > MAX_TEMPLATE_BYTES {
        return Err(invalid(format!(
            "{} is larger than {MAX_TEMPLATE_BYTES} bytes; expected a template file",
            path.display()
        )));
    }
    if let Some(package) = package_import(&text) {
        return Err(invalid(format!(
            "{} imports the typst package `{package}`; lab templates cannot use typst packages (the report is typeset offline with no packages); copy what you need into the template",
            path.display()
        )));
    }
    Ok(Some(text))
}

/// The first typst package a template names (`"@namespace/name:version"`), if any.
pub fn package_import(text: &str) -> Option<String> {
    text.match_indices("\"@").find_map(|(i, _)| {
        let rest = &text[i + 2..];
        let end = rest.find('"').unwrap_or(rest.len());
        let spec = &rest[..end];
        let namespace = spec.split('/').next().unwrap_or_default();
        (spec.contains('/')
            && !namespace.is_empty()
            && namespace
                .chars()
                .all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_'))
        .then(|| format!("@{spec}"))
    })
}

/// The template environment: the user's folder first (if any), then the built-in templates.
pub fn environment(user_dir: Option<&Path>) -> Environment<'static> {
    let mut env = Environment::new();
    env.set_debug(true);
    env.set_auto_reload(false);
    env.set_undefined_behavior(UndefinedBehavior::Strict);
    if let Ok(syntax) = minijinja::syntax::SyntaxConfig::builder()
        .trim_blocks(true)
        .lstrip_blocks(true)
        .build()
    {
        env.set_syntax(syntax);
    }
    let user = user_dir.map(Path::to_path_buf);
    env.set_loader(move |name| {
        if let Some(dir) = &user
            && let Some(source) = load_lab_template(dir, name)?
        {
            return Ok(Some(minijinja::TemplateSource::from(source)));
        }
        Ok(BUILT_IN
            .iter()
            .find(|(n, _)| *n == name)
            .map(|(_, s)| minijinja::TemplateSource::from(*s)))
    });
    env.set_auto_escape_callback(|name| {
        if name.ends_with(".typ.j2") || name.ends_with(".typ") {
            AutoEscape::Custom("typst".into())
        } else {
            AutoEscape::None
        }
    });
    env.set_formatter(|out, state, value| {
        if matches!(state.auto_escape(), AutoEscape::Custom(n) if n == "typst") {
            if value.is_safe() {
                write!(out, "{value}")?;
            } else if !value.is_none() && !value.is_undefined() {
                write!(out, "{}", escape::markup(&value.to_string()))?;
            }
            Ok(())
        } else {
            minijinja::escape_formatter(out, state, value)
        }
    });
    env.add_filter("str", |v: String| {
        Value::from_safe_string(format!("\"{}\"", escape::string_literal(&v)))
    });
    env
}

/// Renders the template `name` with `context`.
pub fn render(env: &Environment<'_>, name: &str, context: Value) -> Result<String, TemplateError> {
    let template = env.get_template(name)?;
    Ok(template.render(context)?)
}

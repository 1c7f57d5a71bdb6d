//! Rendering the Typst source from templates: built-in ones embedded in the binary, and a lab's
//! own folder overriding them file by file.
//!
//! Every value a template prints goes through the Typst escaper unless Rust marked it safe, so a
//! template author cannot forget to escape study text. Undefined variables are errors, so a typo
//! in a template fails loudly instead of printing nothing.

use std::path::Path;

use minijinja::{AutoEscape, Environment, UndefinedBehavior, Value};

use super::escape;

/// The built-in templates, by name.
pub const BUILT_IN: &[(&str, &str)] = &[
    ("report.typ.j2", include_str!("../../templates/report.typ.j2")),
    ("section.typ.j2", include_str!("../../templates/section.typ.j2")),
    ("runsheet.typ.j2", include_str!("../../templates/runsheet.typ.j2")),
];

/// A template problem, with the template's name and line.
#[derive(Debug, thiserror::Error)]
#[error("template error: {message}")]
pub struct TemplateError {
    /// minijinja's description, which names the template file and line.
    pub message: String,
}

impl From<minijinja::Error> for TemplateError {
    fn from(e: minijinja::Error) -> Self {
        let mut message = e.to_string();
        if let (Some(name), Some(line)) = (e.name(), e.line()) {
            if !message.contains(name) {
                message = format!("{name}:{line}: {message}");
            }
        }
        Self { message }
    }
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
    let user = user_dir.map(minijinja::path_loader);
    env.set_loader(move |name| {
        if let Some(load) = &user {
            if let Some(source) = load(name)? {
                return Ok(Some(source));
            }
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
    env.add_filter("str", |v: String| Value::from_safe_string(format!("\"{}\"", escape::string_literal(&v))));
    env
}

/// Renders the template `name` with `context`.
pub fn render(env: &Environment<'_>, name: &str, context: Value) -> Result<String, TemplateError> {
    let template = env.get_template(name)?;
    Ok(template.render(context)?)
}

//! Diagnostics as data: where a problem is (file, line, column, field) and what would be valid.
//!
//! Every check in the loader produces these instead of strings, so that all problems of a file
//! can be collected and printed in one format, `FILE:LINE:COL: FIELD: problem; expected`.

use std::fmt;

/// One step of a field path: a mapping key or a sequence index.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Segment {
    /// A mapping key.
    Key(String),
    /// A position in a sequence (0-based).
    Index(usize),
}

/// The path of a field inside the study file, e.g. `factors[2].delta`.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct FieldPath(pub Vec<Segment>);

impl FieldPath {
    /// The root of the document.
    pub fn root() -> Self {
        Self(Vec::new())
    }

    /// This path extended by a key.
    pub fn key(&self, key: &str) -> Self {
        let mut segments = self.0.clone();
        segments.push(Segment::Key(key.to_string()));
        Self(segments)
    }

    /// This path extended by an index.
    pub fn index(&self, index: usize) -> Self {
        let mut segments = self.0.clone();
        segments.push(Segment::Index(index));
        Self(segments)
    }

    /// A path from keys and indices, e.g. `FieldPath::of(&["factors"]).index(2)`.
    pub fn of(keys: &[&str]) -> Self {
        Self(
            keys.iter()
                .map(|k| Segment::Key((*k).to_string()))
                .collect(),
        )
    }
}

impl fmt::Display for FieldPath {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, segment) in self.0.iter().enumerate() {
            match segment {
                Segment::Key(k) if i == 0 => write!(f, "{k}")?,
                Segment::Key(k) => write!(f, ".{k}")?,
                Segment::Index(n) => write!(f, "[{n}]")?,
            }
        }
        Ok(())
    }
}

/// A problem with a field found by a rule of a later stage (the design rules the loader is
/// given): the check places it in the file and reports it with the study's own problems.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FieldProblem {
    /// The field.
    pub field: FieldPath,
    /// What is wrong.
    pub problem: String,
    /// What would be valid.
    pub expected: Option<String>,
}

/// One problem found in an input file.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct Diagnostic {
    /// The file as the user named it.
    pub file: String,
    /// 1-based line, where known.
    pub line: Option<usize>,
    /// 1-based column, where known.
    pub column: Option<usize>,
    /// The field concerned (dotted path), empty for whole-file problems.
    pub field: String,
    /// What is wrong.
    pub problem: String,
    /// What would be valid.
    pub expected: Option<String>,
    /// The text of the line `line` points into, so the problem can be shown in its context
    /// (see [`Diagnostic::render`]); not part of the JSON form, which names the position.
    #[serde(skip)]
    pub source_line: Option<String>,
}

impl Diagnostic {
    /// A problem with a field; position filled in later by the locator.
    pub fn field(
        file: &str,
        field: &FieldPath,
        problem: impl Into<String>,
        expected: impl Into<Option<String>>,
    ) -> Self {
        Self {
            file: file.to_string(),
            line: None,
            column: None,
            field: field.to_string(),
            problem: problem.into(),
            expected: expected.into(),
            source_line: None,
        }
    }

    /// The same diagnostic at a known position.
    pub fn at(mut self, position: Option<(usize, usize)>) -> Self {
        if let Some((line, column)) = position {
            self.line = Some(line);
            self.column = Some(column);
        }
        self
    }
}

impl fmt::Display for Diagnostic {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file)?;
        if let Some(line) = self.line {
            write!(f, ":{line}")?;
            if let Some(column) = self.column {
                write!(f, ":{column}")?;
            }
        }
        write!(f, ": ")?;
        if !self.field.is_empty() {
            write!(f, "{}: ", self.field)?;
        }
        write!(f, "{}", self.problem)?;
        if let Some(expected) = &self.expected {
            write!(f, "; {expected}")?;
        }
        Ok(())
    }
}

/// All problems found in one input, in file order.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Diagnostics(pub Vec<Diagnostic>);

impl Diagnostics {
    /// True when nothing was found.
    pub fn is_empty(&self) -> bool {
        self.0.is_empty()
    }

    /// Adds one diagnostic.
    pub fn push(&mut self, diagnostic: Diagnostic) {
        self.0.push(diagnostic);
    }

    /// Sorted by position so the user reads them top to bottom; exact duplicates removed.
    pub fn sorted(mut self) -> Self {
        self.0.sort_by(|a, b| {
            (
                a.line.unwrap_or(usize::MAX),
                a.column.unwrap_or(0),
                &a.field,
            )
                .cmp(&(
                    b.line.unwrap_or(usize::MAX),
                    b.column.unwrap_or(0),
                    &b.field,
                ))
        });
        self.0.dedup();
        self
    }
}

impl Diagnostics {
    /// Attaches to every diagnostic of `file` that has a line the text of that line, taken from
    /// `text` (the file's content as it was checked, not as it may be on disk by now).
    pub fn with_source(mut self, file: &str, text: &str) -> Self {
        for d in &mut self.0 {
            if d.file == file
                && d.source_line.is_none()
                && let Some(line) = d.line.and_then(|l| text.lines().nth(l.checked_sub(1)?))
            {
                d.source_line = Some(line.to_string());
            }
        }
        self
    }
}

impl Diagnostic {
    /// The diagnostic for a person: the one-line message (the `FILE:LINE:COL: FIELD: problem;
    /// expected` form that editors and scripts parse), followed by the source line with the
    /// field underlined where the line is known. `styled` adds terminal colours.
    pub fn render(&self, styled: bool) -> String {
        let renderer = if styled {
            annotate_snippets::Renderer::styled()
        } else {
            annotate_snippets::Renderer::plain()
        };
        match self.snippet(&renderer) {
            Some(snippet) => format!("{self}\n{snippet}"),
            None => self.to_string(),
        }
    }

    /// The source line with the problem underlined, or `None` without a source line.
    fn snippet(&self, renderer: &annotate_snippets::Renderer) -> Option<String> {
        use annotate_snippets::{AnnotationKind, Group, Level, Snippet};
        let source = self.source_line.as_deref()?;
        let line = self.line?;
        let span = underline(source, self.column);
        if span.is_empty() {
            return None;
        }
        let label = self.expected.as_deref().unwrap_or(&self.problem);
        let report = &[Group::with_level(Level::ERROR).element(
            Snippet::source(source)
                .line_start(line)
                .annotation(AnnotationKind::Primary.span(span).label(label)),
        )];
        Some(renderer.render(report).trim_end().to_string())
    }
}

/// The byte range to underline: the token starting at the 1-based character `column` (up to a
/// separator of a flow collection, a comment or a key's colon), or the whole line's text when
/// the column is not known (a CSV row).
fn underline(line: &str, column: Option<usize>) -> std::ops::Range<usize> {
    let trimmed_end = line.trim_end().len();
    let Some(column) = column else {
        let start = line.len() - line.trim_start().len();
        return start..trimmed_end.max(start);
    };
    let Some((start, _)) = line.char_indices().nth(column.saturating_sub(1)) else {
        return 0..0;
    };
    let rest = &line[start..];
    let quoted = rest.starts_with('"') || rest.starts_with('\'');
    let len = if quoted {
        let quote = rest.as_bytes()[0] as char;
        rest[1..].find(quote).map_or(rest.len(), |i| i + 2)
    } else {
        // A plain scalar ends at a flow separator, a comment (` #`) or a key's colon (`: `).
        rest.char_indices()
            .find(|&(i, c)| match c {
                ',' | '}' | ']' => true,
                '#' => rest[..i].ends_with(' '),
                ':' => rest[i + 1..].chars().next().is_none_or(|n| n == ' '),
                _ => false,
            })
            .map_or(rest.len(), |(i, _)| i)
    };
    let end = (start + len).min(trimmed_end.max(start));
    let token = line[start..end].trim_end();
    start..start + token.len()
}

impl fmt::Display for Diagnostics {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, d) in self.0.iter().enumerate() {
            if i > 0 {
                writeln!(f)?;
            }
            write!(f, "{d}")?;
        }
        Ok(())
    }
}

impl std::error::Error for Diagnostics {}

/// The valid name closest to a misspelt one (Levenshtein distance at most a third of its
/// length, at least 1), so an unknown field can suggest what was meant.
pub fn closest<'a>(wrong: &str, valid: impl IntoIterator<Item = &'a str>) -> Option<&'a str> {
    let limit = (wrong.chars().count() / 3).max(1);
    valid
        .into_iter()
        .map(|v| (strsim::levenshtein(wrong, v), v))
        .filter(|(d, _)| *d <= limit)
        .min_by_key(|(d, _)| *d)
        .map(|(_, v)| v)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn at(line: usize, column: Option<usize>, source: &str) -> Diagnostic {
        Diagnostic {
            file: "study.yaml".into(),
            line: Some(line),
            column,
            field: "factors[0].delta".into(),
            problem: "must be positive".into(),
            expected: Some("expected a number > 0".into()),
            source_line: Some(source.into()),
        }
    }

    #[test]
    fn a_rendered_diagnostic_keeps_its_one_line_form_first() {
        let text = at(4, Some(12), "    delta: -3").render(false);
        assert_eq!(
            text.lines().next(),
            Some("study.yaml:4:12: factors[0].delta: must be positive; expected a number > 0")
        );
    }

    #[test]
    fn a_rendered_diagnostic_underlines_the_value_on_its_numbered_line() {
        let text = at(4, Some(12), "    delta: -3  # too wide").render(false);
        let lines: Vec<&str> = text.lines().collect();
        let source = lines.iter().position(|l| l.contains("delta: -3")).unwrap();
        assert!(lines[source].trim_start().starts_with("4 |"), "{text}");
        let marks = lines[source + 1];
        let col = lines[source].find("-3").unwrap();
        assert_eq!(marks.find('^'), Some(col), "{text}");
        assert_eq!(marks.matches('^').count(), 2, "{text}");
        assert!(marks.contains("expected a number > 0"), "{text}");
    }

    #[test]
    fn a_key_is_underlined_up_to_its_colon() {
        assert_eq!(underline("  detla: 2", Some(3)), 2..7);
    }

    #[test]
    fn a_time_value_is_underlined_whole() {
        assert_eq!(underline("time: 12:30", Some(7)), 6..11);
    }

    #[test]
    fn a_quoted_value_is_underlined_with_its_quotes() {
        assert_eq!(underline("  id: \"a b\" # x", Some(7)), 6..11);
    }

    #[test]
    fn a_row_without_column_is_underlined_whole() {
        assert_eq!(underline("  N1,99.5,  ", None), 2..10);
    }

    #[test]
    fn a_diagnostic_without_source_renders_as_one_line() {
        let mut d = at(4, Some(12), "");
        d.source_line = None;
        assert_eq!(d.render(false), d.to_string());
    }

    #[test]
    fn the_source_is_attached_from_the_checked_text() {
        let mut d = at(2, Some(1), "");
        d.source_line = None;
        let ds = Diagnostics(vec![d]).with_source("study.yaml", "a: 1\r\nbb: 2\r\n");
        assert_eq!(ds.0[0].source_line.as_deref(), Some("bb: 2"));
    }

    #[test]
    fn field_paths_print_as_dotted_keys_with_indices() {
        let path = FieldPath::of(&["factors"]).index(2).key("delta");
        assert_eq!(path.to_string(), "factors[2].delta");
    }

    #[test]
    fn diagnostic_prints_file_line_column_field_problem_and_expectation() {
        let d = Diagnostic::field(
            "s.yaml",
            &FieldPath::of(&["design", "kind"]),
            "unknown design kind `fractional`",
            Some("expected one of full-factorial, explicit".to_string()),
        )
        .at(Some((12, 9)));
        assert_eq!(
            d.to_string(),
            "s.yaml:12:9: design.kind: unknown design kind `fractional`; expected one of full-factorial, explicit"
        );
    }

    #[test]
    fn closest_name_is_suggested_for_a_small_typo_only() {
        assert_eq!(
            closest("nominl", ["nominal", "name", "delta"]),
            Some("nominal")
        );
        assert_eq!(closest("zzzzzz", ["nominal", "name", "delta"]), None);
    }
}

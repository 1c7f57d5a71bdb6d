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

//! Reading a study file: bytes → text → YAML data → schema check → typed model → semantic checks.
//!
//! Each stage stops the pipeline with every problem it found, positioned in the file, so that a
//! later stage never sees input an earlier one would have rejected.

use std::path::Path;

use sha2::{Digest, Sha256};

use super::diagnostic::{Diagnostic, Diagnostics, FieldPath};
use super::model::StudyFile;
use super::{DesignRules, Study, check, schema};
use crate::files::Files;

/// Largest study file accepted, in bytes (a study of the largest design is far smaller).
pub const MAX_STUDY_BYTES: u64 = 4 * 1024 * 1024;

/// The path that names standard input (`plateau check -`).
pub const STDIN: &str = "-";

/// Loads and checks a study file read through `files` (see [`crate::files`]), with the design
/// stage's `rules` for its design request (`pipeline::load` supplies them); the path `-` reads
/// the study from standard input (files it names are then found from the current folder).
pub fn load_from(rules: DesignRules, files: &dyn Files, path: &Path) -> Result<Study, Diagnostics> {
    if path == Path::new(STDIN) {
        let file_name = "<stdin>".to_string();
        let bytes = stdin_bytes(&file_name)?;
        let text = decode(&bytes, &file_name)?;
        return parse(&text, &file_name)
            .and_then(|study_file| {
                check::study(
                    rules,
                    &crate::files::Disk,
                    Path::new("./<stdin>"),
                    &file_name,
                    &text,
                    sha256_hex(&bytes),
                    study_file,
                )
            })
            .map_err(|d| d.with_source(&file_name, &text));
    }
    let file_name = files.show(path);
    let bytes = read(files, path, MAX_STUDY_BYTES, &file_name)?;
    let text = decode(&bytes, &file_name)?;
    parse(&text, &file_name)
        .and_then(|study_file| {
            check::study(
                rules,
                files,
                path,
                &file_name,
                &text,
                sha256_hex(&bytes),
                study_file,
            )
        })
        .map_err(|d| d.with_source(&file_name, &text))
}

/// Standard input, read once per process: `check` plans and then evaluates the same study.
fn stdin_bytes(file_name: &str) -> Result<Vec<u8>, Diagnostics> {
    static STDIN_BYTES: std::sync::OnceLock<Result<Vec<u8>, String>> = std::sync::OnceLock::new();
    let read = STDIN_BYTES.get_or_init(|| {
        let mut bytes = Vec::new();
        std::io::Read::read_to_end(
            &mut std::io::Read::take(std::io::stdin().lock(), MAX_STUDY_BYTES + 1),
            &mut bytes,
        )
        .map(|_| bytes)
        .map_err(|e| e.to_string())
    });
    let whole = |problem: String, expected: Option<String>| {
        Diagnostics(vec![Diagnostic::field(
            file_name,
            &FieldPath::root(),
            problem,
            expected,
        )])
    };
    match read {
        Err(e) => Err(whole(format!("failed to read standard input ({e})"), None)),
        Ok(b) if b.len() as u64 > MAX_STUDY_BYTES => Err(whole(
            format!("standard input holds more than {MAX_STUDY_BYTES} bytes"),
            Some("a study file of at most 4 MiB".into()),
        )),
        Ok(b) => Ok(b.clone()),
    }
}

/// Parses and schema-checks study text; the typed model on success.
///
/// The text is read twice by design: into a plain value for the schema check, then into the
/// typed model, whose reader is stricter than the plain one: it refuses `0x1F` or `1_000` where a
/// decimal number is wanted, while the plain value takes them as numbers (the bad-input cases
/// `number-hex` and `number-underscore`).
pub fn parse(text: &str, file_name: &str) -> Result<StudyFile, Diagnostics> {
    let data: serde_json::Value = from_yaml(text, file_name)?;
    let problems = schema::check(&data, text, file_name);
    if !problems.is_empty() {
        return Err(problems);
    }
    from_yaml::<StudyFile>(text, file_name)
}

/// Lowercase hex SHA-256 of some bytes (provenance of every input).
pub fn sha256_hex(bytes: &[u8]) -> String {
    let digest = Sha256::digest(bytes);
    digest.iter().map(|b| format!("{b:02x}")).collect()
}

/// Reads a file through `files`; a refusal is a whole-file diagnostic naming `file_name`.
pub fn read(
    files: &dyn Files,
    path: &Path,
    limit: u64,
    file_name: &str,
) -> Result<Vec<u8>, Diagnostics> {
    files.read(path, limit).map_err(|e| {
        Diagnostics(vec![Diagnostic::field(
            file_name,
            &FieldPath::root(),
            e.problem(),
            e.expected(),
        )])
    })
}

/// Reads a file of the working folder (see [`read`]).
pub fn read_limited(path: &Path, limit: u64, file_name: &str) -> Result<Vec<u8>, Diagnostics> {
    read(&crate::files::Disk, path, limit, file_name)
}

/// UTF-8 text from bytes, with the position of the first invalid byte; a leading byte-order
/// mark is dropped (YAML 1.2 §5.2 allows one at the start of a stream).
pub fn decode(bytes: &[u8], file_name: &str) -> Result<String, Diagnostics> {
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    match std::str::from_utf8(bytes) {
        Ok(text) => Ok(text.to_string()),
        Err(e) => {
            let good = bytes.get(..e.valid_up_to()).unwrap_or_default();
            let line = good.iter().filter(|b| **b == b'\n').count() + 1;
            let column = good.iter().rev().take_while(|b| **b != b'\n').count() + 1;
            Err(Diagnostics(vec![
                Diagnostic::field(
                    file_name,
                    &FieldPath::root(),
                    "the file is not valid UTF-8 text",
                    Some("save it as UTF-8".to_string()),
                )
                .at(Some((line, column))),
            ]))
        }
    }
}

fn from_yaml<T: serde::de::DeserializeOwned>(
    text: &str,
    file_name: &str,
) -> Result<T, Diagnostics> {
    let whole = |problem: String, expected: Option<String>, at: Option<(usize, usize)>| {
        Diagnostics(vec![
            Diagnostic::field(file_name, &FieldPath::root(), problem, expected).at(at),
        ])
    };
    if text
        .lines()
        .all(|l| l.trim().is_empty() || l.trim_start().starts_with('#'))
    {
        return Err(whole(
            "the study file is empty".into(),
            Some("expected a study: `schema: 1`, `study:`, `factors:`, `design:`, `responses:` (`plateau new` writes a starter file)".into()),
            Some((1, 1)),
        ));
    }
    if let Some(at) = first_tab_indent(text) {
        return Err(whole(
            "a tab is used for indentation".into(),
            Some("indent with spaces (YAML does not allow tabs for indentation)".into()),
            Some(at),
        ));
    }
    let mut options = serde_saphyr::Options::default();
    // YAML 1.2 core booleans only: `y`, `n`, `yes`, `no`, `on`, `off` stay text, so a
    // response `y` or the levels `[on, off]` are not turned into true/false.
    options.strict_booleans = true;
    if let Some(budget) = options.budget.as_mut() {
        budget.max_nodes = MAX_YAML_NODES;
        budget.max_aliases = 10_000;
    }
    serde_saphyr::from_str_with_options::<T>(text, options).map_err(|e| {
        let position = e
            .location()
            .map(|l| (l.line() as usize, l.column() as usize));
        let message = e.without_snippet().to_string();
        let message = strip_position_prefix(message.lines().next().unwrap_or_default());
        let lower = message.to_lowercase();
        if lower.contains("budget") {
            return whole(
                format!("the YAML expands to more than {MAX_YAML_NODES} nodes (anchors and aliases repeated without bound?)"),
                Some("expected a study file without self-multiplying aliases".into()),
                position,
            );
        }
        // Name the field when the position is a value the typed model rejected.
        let field = position
            .and_then(|(l, c)| super::locate::Locator::new(text).path_at(l, c))
            .unwrap_or_default();
        let scalar = position.and_then(|(l, c)| scalar_at(text, l, c));
        let (problem, expected) = yaml_problem(&message, scalar.as_deref());
        let mut field = field;
        if let (true, Some((l, c))) = (lower.contains("duplicate"), position) {
            // The marked tree refuses the duplicate too: locate its mapping with that line
            // blanked out, then name the key.
            let blanked: String = text
                .lines()
                .enumerate()
                .map(|(i, line)| if i + 1 == l { " ".repeat(line.len()) } else { line.to_string() })
                .collect::<Vec<_>>()
                .join("\n");
            field = super::locate::Locator::new(&blanked)
                .path_at(l, c)
                .unwrap_or_default();
            if let Some(key) = scalar.as_deref().and_then(|s| s.split(':').next()) {
                field = field.key(key.trim());
            }
        }
        Diagnostics(vec![Diagnostic::field(file_name, &field, problem, expected).at(position)])
    })
}

/// Most YAML nodes a study may expand to (large result sets belong in a CSV file).
pub const MAX_YAML_NODES: usize = 250_000;

/// The plain scalar starting at a 1-based position, for messages.
fn scalar_at(text: &str, line: usize, column: usize) -> Option<String> {
    let l = text.lines().nth(line.checked_sub(1)?)?;
    let rest: String = l.chars().skip(column.checked_sub(1)?).collect();
    let token: String = rest
        .chars()
        .take_while(|c| !matches!(c, ',' | '}' | ']' | '#') && *c != '\n')
        .collect();
    let token = token.trim().to_string();
    (!token.is_empty()).then_some(token)
}

/// saphyr reports tabs in indentation with a generic message; this names the fault plainly.
fn first_tab_indent(text: &str) -> Option<(usize, usize)> {
    for (n, line) in text.lines().enumerate() {
        let indent: String = line
            .chars()
            .take_while(|c| *c == ' ' || *c == '\t')
            .collect();
        if let Some(pos) = indent.find('\t') {
            if line.trim_start().starts_with('#') || line.trim().is_empty() {
                continue;
            }
            return Some((n + 1, pos + 1));
        }
    }
    None
}

fn strip_position_prefix(message: &str) -> String {
    let m = message.trim().trim_start_matches("error: ");
    // The position is printed once, in front; drop saphyr's own " at line N, column M".
    let m = match m.rfind(" at line ") {
        Some(i) if m[i..].contains("column") => &m[..i],
        _ => m,
    };
    if let Some(rest) = m.strip_prefix("line ")
        && let Some((_, after)) = rest.split_once(": ")
    {
        return after.to_string();
    }
    m.to_string()
}

fn yaml_problem(message: &str, scalar: Option<&str>) -> (String, Option<String>) {
    let lower = message.to_lowercase();
    let shown = scalar
        .map(|s| format!("`{s}`"))
        .unwrap_or_else(|| "the value".into());
    if lower.contains("duplicate") {
        let key = message
            .split("key:")
            .nth(1)
            .and_then(|r| r.split(',').next())
            .map(str::trim)
            .unwrap_or("");
        (
            format!("duplicate key `{key}`"),
            Some("each key may appear once in a mapping".into()),
        )
    } else if lower.contains("non-finite")
        || scalar.is_some_and(|s| s.parse::<f64>().is_ok_and(|v| !v.is_finite()))
    {
        (
            format!("{shown} is not a finite number"),
            Some("expected a finite decimal number such as 99.5".into()),
        )
    } else if lower.contains("invalid floating point")
        || lower.contains("invalid number")
        || lower.contains("invalid integer")
    {
        (
            format!("{shown} is not a decimal number"),
            Some("expected a plain decimal number such as 16, 0.5 or 1000 (no hexadecimal, no `_` separators, no units)".into()),
        )
    } else if lower.contains("unknown field") {
        (message.to_string(), None)
    } else if lower.contains("multiple yaml documents") {
        (
            "the file holds more than one YAML document (a `---` line starts another)".into(),
            Some("expected one study per file; remove the second document".into()),
        )
    } else if let Some(name) = message
        .split("untagged enum ")
        .nth(1)
        .map(|r| r.split_whitespace().next().unwrap_or_default())
    {
        // serde's name of the Rust type is no help to the user: say which forms are valid.
        let expected = match name {
            "RandomizeSpec" => {
                "expected false or {seed: <whole number from 0 to 18446744073709551615>}"
            }
            "RunsSpec" => {
                "expected a number of runs, or a list of runs `{run: ID, <factor id>: -1 | 0 | 1}`"
            }
            "NominalRunsSpec" => "expected spread, first, last, random or {every: <whole number>}",
            _ => "expected one of the forms the schema describes (`plateau schema`)",
        };
        (
            "the value is not an accepted form".to_string(),
            Some(expected.into()),
        )
    } else {
        (format!("invalid YAML: {message}"), None)
    }
}

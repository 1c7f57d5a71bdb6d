//! Results from a CSV file: the dialect read, rows matched to the plan by run id, factor
//! columns checked against the planned settings.

use std::collections::{BTreeMap, BTreeSet};
use std::path::PathBuf;

use super::{DataFile, Locus, MAX_RESULTS_BYTES, Row, dialect};
use crate::design::Design;
use crate::files::Files;
use crate::study::diagnostic::{Diagnostic, Diagnostics, FieldPath, closest};
use crate::study::load::{self, sha256_hex};
use crate::study::{RunId, Setting, Study};

pub(super) fn rows(
    files: &dyn Files,
    study: &Study,
    design: &Design,
    file: &str,
) -> Result<(Vec<Row>, DataFile), Diagnostics> {
    let base = study
        .path
        .parent()
        .map(PathBuf::from)
        .unwrap_or_else(|| PathBuf::from("."));
    let path = base.join(file);
    let name = files.show(&path);
    let one =
        |line: Option<usize>, field: &str, problem: String, expected: Option<String>| Diagnostic {
            file: name.clone(),
            line,
            column: None,
            field: field.to_string(),
            problem,
            expected,
            source_line: None,
        };
    let bytes = match load::read(files, &path, MAX_RESULTS_BYTES, &name) {
        Ok(b) => b,
        Err(mut d) => {
            // Name the study field that points at the missing file as well.
            let field = FieldPath::of(&["results", "file"]);
            let pointer = study.diagnostic(
                &field,
                format!("the results file `{file}` cannot be read"),
                Some(format!("expected a CSV file at {name}")),
            );
            d.0.insert(0, pointer);
            return Err(d);
        }
    };
    let spec = study.results.as_ref();
    let declared = dialect::Declared {
        separator: spec.and_then(|r| r.separator),
        decimal: spec.and_then(|r| r.decimal),
        encoding: spec.and_then(|r| r.encoding),
    };
    let dialect_error =
        |e: dialect::DialectError| Diagnostics(vec![one(e.line, "", e.problem, Some(e.expected))]);
    let (text, encoding) = dialect::decode(&bytes, declared.encoding).map_err(dialect_error)?;
    let dialect = dialect::sniff(&text, encoding, &declared).map_err(dialect_error)?;
    let data = DataFile {
        name: file.to_string(),
        sha256: sha256_hex(&bytes),
    };
    table(study, design, &name, &text, dialect, &one)
        .map(|rows| (rows, data))
        .map_err(|d| d.with_source(&name, &text))
}

/// Builds the diagnostic of one results-file problem: line (if known), column, problem, what
/// would be valid.
type Complaint<'a> = dyn Fn(Option<usize>, &str, String, Option<String>) -> Diagnostic + 'a;

/// The rows of the decoded CSV text, matched to the plan.
fn table(
    study: &Study,
    design: &Design,
    name: &str,
    text: &str,
    dialect: dialect::Dialect,
    one: &Complaint<'_>,
) -> Result<Vec<Row>, Diagnostics> {
    let dialect_text = dialect.describe();
    // Line numbers come from byte offsets: the csv crate's own line count is one too low for a
    // file with CRLF line ends.
    let newlines: Vec<usize> = text
        .bytes()
        .enumerate()
        .filter(|(_, b)| *b == b'\n')
        .map(|(i, _)| i)
        .collect();
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(true)
        .delimiter(dialect.separator.byte())
        .flexible(true)
        .trim(csv::Trim::All)
        .from_reader(text.as_bytes());
    let mut header: Vec<String> = match reader.headers() {
        Ok(h) => h.iter().map(str::to_string).collect(),
        Err(e) => {
            return Err(Diagnostics(vec![one(
                Some(1),
                "",
                format!("cannot read the CSV header ({e})"),
                None,
            )]));
        }
    };
    let response_ids: Vec<&str> = study.responses.iter().map(|r| r.id.as_str()).collect();
    let factor_ids: Vec<&str> = study.factors.iter().map(|f| f.id.as_str()).collect();
    let mut problems = Diagnostics::default();
    // Spreadsheets add empty columns at the end of a row; they carry nothing.
    while header.last().is_some_and(|h| h.is_empty()) {
        header.pop();
    }
    let Some(run_col) = header.iter().position(|h| h == "run") else {
        return Err(Diagnostics(vec![one(
            Some(1),
            "run",
            format!("the header has no `run` column ({dialect_text})"),
            Some(format!(
                "expected a header such as `run,{}`; if the columns are separated otherwise, state it under `results`: `separator: comma`, `semicolon` or `tab`",
                response_ids.join(",")
            )),
        )]));
    };
    let mut seen = BTreeSet::new();
    for h in &header {
        if !seen.insert(h.as_str()) {
            problems.push(one(
                Some(1),
                h,
                format!("column `{h}` appears twice"),
                Some("expected each column once".into()),
            ));
        }
        if h != "run"
            && h != "order"
            && h != "time"
            && !response_ids.contains(&h.as_str())
            && !factor_ids.contains(&h.as_str())
        {
            let all: Vec<&str> = response_ids
                .iter()
                .chain(factor_ids.iter())
                .copied()
                .collect();
            let hint = closest(h, all.iter().copied())
                .map(|b| format!("did you mean `{b}`? "))
                .unwrap_or_default();
            problems.push(one(
                Some(1),
                h,
                format!("unknown column `{h}`"),
                Some(format!("{hint}expected `run`, the response ids ({}), and optionally `order`, `time` and the factor ids", response_ids.join(", "))),
            ));
        }
    }
    for id in &response_ids {
        if !header.iter().any(|h| h == id) {
            problems.push(one(
                Some(1),
                id,
                format!("the header has no column for response `{id}`"),
                Some(format!("expected a column `{id}`")),
            ));
        }
    }
    if !problems.is_empty() {
        return Err(problems);
    }
    let planned: BTreeMap<&RunId, &crate::design::PlannedRun> =
        design.runs.iter().map(|r| (&r.id, r)).collect();
    let mut rows = Vec::new();
    let mut settings: Vec<SettingCell> = Vec::new();
    for record in reader.records() {
        let record = match record {
            Ok(r) => r,
            Err(e) => {
                let line = e.position().map(|p| line_of(&newlines, p.byte()));
                problems.push(one(
                    line,
                    "",
                    "the row cannot be read as CSV (an unclosed quote?)".to_string(),
                    Some(format!("expected comma-separated fields ({e})")),
                ));
                continue;
            }
        };
        let line = record.position().map(|p| line_of(&newlines, p.byte()));
        if record.iter().all(str::is_empty) {
            continue; // a blank line, e.g. at the end of the file
        }
        let trailing_empty =
            record.len() > header.len() && record.iter().skip(header.len()).all(str::is_empty);
        if record.len() != header.len() && !trailing_empty {
            let decimal_comma = record.len() > header.len()
                && record.iter().zip(record.iter().skip(1)).any(|(a, b)| {
                    !a.is_empty()
                        && a.chars().all(|c| c.is_ascii_digit() || c == '-')
                        && !b.is_empty()
                        && b.chars().all(|c| c.is_ascii_digit())
                });
            problems.push(one(
                line,
                "",
                format!("the row has {} fields but the header has {} ({dialect_text})", record.len(), header.len()),
                Some(if decimal_comma && dialect.separator == dialect::Separator::Comma {
                    "a number seems to use a comma as decimal mark while commas also separate the columns: save the file with `;` between columns (then the decimal comma is read), or write `98.9`, not `98,9`".into()
                } else {
                    format!("expected {} fields: {}", header.len(), header.join(","))
                }),
            ));
            continue;
        }
        let run_text = crate::output::unneutralised(record.get(run_col).unwrap_or_default());
        if run_text.is_empty() {
            problems.push(one(
                line,
                "run",
                "empty run id".into(),
                Some("expected the run id of the planned run".into()),
            ));
            continue;
        }
        let run = RunId::canonical(run_text);
        let mut values = Vec::new();
        for id in &response_ids {
            let col = header.iter().position(|h| h == id).unwrap_or(0);
            let raw_cell = record.get(col).unwrap_or_default();
            let normalised = dialect::normalise_number(raw_cell, dialect.decimal);
            let cell = normalised.as_str();
            match parse_number(cell) {
                Ok(v) => values.push(vec![v]),
                Err(why) => problems.push(one(
                    line,
                    id,
                    format!("run `{run}`: {why} ({dialect_text})"),
                    Some(number_hint(raw_cell, dialect.decimal)),
                )),
            }
        }
        // The executed position: a difference from the plan is recorded (the report lists it
        // as a deviation and the drift check uses it), not refused.
        let mut order = None;
        if let Some(col) = header.iter().position(|h| h == "order") {
            let cell = record.get(col).unwrap_or_default().trim();
            match cell.parse::<usize>() {
                _ if cell.is_empty() => {}
                Ok(n) if n >= 1 => order = Some(n),
                _ => problems.push(one(
                    line,
                    "order",
                    format!("run `{run}`: order `{cell}` is not a position in the run order"),
                    Some("expected the position the run was performed at (1, 2, ...), or an empty cell for the planned one".into()),
                )),
            }
        }
        let time = header
            .iter()
            .position(|h| h == "time")
            .map(|col| record.get(col).unwrap_or_default().trim().to_string())
            .filter(|t| !t.is_empty());
        if let Some(planned_run) = planned.get(&run) {
            for (j, f) in study.factors.iter().enumerate() {
                let Some(col) = header.iter().position(|h| h == &f.id) else {
                    continue;
                };
                let cell = crate::output::unneutralised(record.get(col).unwrap_or_default());
                let expected = planned_run
                    .coded
                    .get(j)
                    .map(|c| f.setting(*c))
                    .unwrap_or(Setting::Level(String::new()));
                let coded = planned_run.coded.get(j).copied();
                settings.push(SettingCell {
                    line,
                    factor: f.id.clone(),
                    run: run.clone(),
                    cell: cell.to_string(),
                    real: setting_matches(cell, &expected),
                    coded_ok: coded.is_some_and(|c| coded_matches(cell, c)),
                    expected: setting_text(&expected),
                    coded,
                });
            }
        }
        rows.push(Row {
            run,
            values,
            at: Locus {
                file: name.to_string(),
                position: line.map(|l| (l, 1)),
                field: "run".into(),
            },
            order,
            time,
        });
    }
    // The sheet is either in real units or, as a whole, the coded one (`plateau design
    // --coded`): a single cell equal to the coded level in a real-unit sheet is a wrong
    // setting (flow logged 1.0 for a run planned at 1.1), not a coded cell.
    let coded_sheet = !settings.is_empty() && settings.iter().all(|s| s.coded_ok);
    for s in settings {
        let ok = if coded_sheet { s.coded_ok } else { s.real };
        if !ok {
            let expected = match (coded_sheet, s.coded) {
                (true, Some(c)) => format!("coded level {c}, as in the whole sheet"),
                _ => format!(
                    "{} as planned (a sheet holds real settings throughout, or coded levels throughout)",
                    s.expected
                ),
            };
            problems.push(one(
                s.line,
                &s.factor,
                format!(
                    "run `{}`: setting `{}` differs from the plan",
                    s.run, s.cell
                ),
                Some(format!("expected {expected}")),
            ));
        }
    }
    if problems.is_empty() {
        Ok(rows)
    } else {
        Err(problems)
    }
}

fn setting_text(s: &Setting) -> String {
    match s {
        Setting::Value(v) => format!("{v}"),
        Setting::Level(l) => format!("`{l}`"),
    }
}

/// The 1-based line of the byte at `offset`, from the offsets of the newlines before it.
fn line_of(newlines: &[usize], offset: u64) -> usize {
    let offset = usize::try_from(offset).unwrap_or(usize::MAX);
    // With CRLF ends the csv crate puts a record's start on the LF of the line before it.
    newlines.partition_point(|&n| n <= offset) + 1
}

/// One factor cell of a results sheet, judged once the whole sheet is read.
struct SettingCell {
    line: Option<usize>,
    factor: String,
    run: RunId,
    cell: String,
    /// Equal to the planned real setting.
    real: bool,
    /// Equal to the planned coded level.
    coded_ok: bool,
    expected: String,
    coded: Option<i8>,
}

fn setting_matches(cell: &str, expected: &Setting) -> bool {
    match expected {
        Setting::Value(v) => match cell.parse::<f64>() {
            Ok(x) => (x - v).abs() <= 1e-9 * v.abs().max(1.0),
            Err(_) => false,
        },
        Setting::Level(l) => cell == l,
    }
}

fn coded_matches(cell: &str, coded: i8) -> bool {
    cell.parse::<f64>().is_ok_and(|x| x == f64::from(coded))
}

/// A finite decimal number in the plain form `[-]digits[.digits][e[-]digits]`.
fn parse_number(cell: &str) -> Result<f64, String> {
    if cell.is_empty() {
        return Err("the value is empty".into());
    }
    let plain = cell
        .chars()
        .all(|c| c.is_ascii_digit() || matches!(c, '.' | '-' | '+' | 'e' | 'E'));
    if !plain {
        return Err(format!("`{cell}` is not a number"));
    }
    match cell.parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(v),
        Ok(_) => Err(format!("`{cell}` is not a finite number")),
        Err(_) => Err(format!("`{cell}` is not a number")),
    }
}

fn number_hint(cell: &str, decimal: dialect::Decimal) -> String {
    if cell.parse::<f64>().is_ok() {
        "expected a finite decimal number such as 99.5".into()
    } else if cell.contains(',') && decimal == dialect::Decimal::Point {
        "expected `.` as the decimal mark (e.g. 99.5); a file with decimal commas needs `;` or tabs between columns, or `decimal: comma` under `results`".into()
    } else if cell.contains('.') && decimal == dialect::Decimal::Comma {
        "expected a decimal comma throughout the file (e.g. 99,5) and no thousands separators; or state `decimal: point` under `results`".into()
    } else if cell.chars().any(|c| c.is_alphabetic() || c == '%')
        && cell.chars().any(|c| c.is_ascii_digit())
    {
        "expected the number alone, without a unit (units belong in the response definition)".into()
    } else {
        "expected a finite decimal number such as 99.5".into()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn plain_numbers_parse_and_others_are_refused() {
        assert_eq!(parse_number("99.5"), Ok(99.5));
        assert_eq!(parse_number("-1e-3"), Ok(-0.001));
        assert!(parse_number("99,5").is_err());
        assert!(parse_number("99.5 %").is_err());
        assert!(parse_number("inf").is_err());
        assert!(parse_number("1e999").is_err());
        assert!(parse_number("NaN").is_err());
        assert!(parse_number("").is_err());
    }
}

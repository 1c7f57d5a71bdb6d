//! The dialect of a results CSV: text encoding, column separator and decimal mark.
//!
//! Spreadsheets and instruments in European locales save `;`-separated files with decimal
//! commas, sometimes tab-separated, UTF-16 or Windows-1252. plateau reads those without edits
//! when the dialect is unambiguous, lets the study state it (`results: { separator, decimal,
//! encoding }`) when it is not, and every refusal says which dialect it saw.

pub use crate::study::dialect::{Decimal, Encoding, Separator};
/// What the study states about the dialect (each part optional).
#[derive(Debug, Clone, Copy, Default)]
pub struct Declared {
    /// Stated separator.
    pub separator: Option<Separator>,
    /// Stated decimal mark.
    pub decimal: Option<Decimal>,
    /// Stated encoding.
    pub encoding: Option<Encoding>,
}

/// The dialect a file is read with, and how each part was found.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Dialect {
    /// Column separator.
    pub separator: Separator,
    /// Decimal mark.
    pub decimal: Decimal,
    /// Encoding.
    pub encoding: Encoding,
}

impl Dialect {
    /// The dialect in words, for messages: `separator ;, decimal comma, UTF-8`.
    pub fn describe(&self) -> String {
        format!(
            "read as: separator {}, decimal {}, encoding {}",
            self.separator.as_str(),
            self.decimal.as_str(),
            self.encoding.as_str()
        )
    }
}

/// A dialect that cannot be read or decided, with what would be valid.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DialectError {
    /// 1-based line, when the problem has one.
    pub line: Option<usize>,
    /// What is wrong.
    pub problem: String,
    /// What would be valid.
    pub expected: String,
}

/// The text of a results file: a byte-order mark decides (UTF-8, UTF-16 LE/BE); otherwise the
/// declared encoding, else UTF-8, refused with a hint when the bytes are not UTF-8.
pub fn decode(
    bytes: &[u8],
    declared: Option<Encoding>,
) -> Result<(String, Encoding), DialectError> {
    if let Some((encoding, bom_len)) = encoding_rs::Encoding::for_bom(bytes) {
        let body = bytes.get(bom_len..).unwrap_or_default();
        let (text, had_errors) = encoding.decode_without_bom_handling(body);
        let ours = if encoding == encoding_rs::UTF_8 {
            Encoding::Utf8
        } else {
            Encoding::Utf16
        };
        if had_errors {
            return Err(DialectError {
                line: None,
                problem: format!(
                    "the file starts with a {} byte-order mark but is not valid {}",
                    ours.as_str(),
                    ours.as_str()
                ),
                expected: "save the file again as UTF-8".into(),
            });
        }
        return Ok((text.into_owned(), ours));
    }
    match declared {
        Some(e @ (Encoding::Windows1252 | Encoding::Latin1)) => {
            let (text, _) = encoding_rs::WINDOWS_1252.decode_without_bom_handling(bytes);
            Ok((text.into_owned(), e))
        }
        Some(Encoding::Utf16) => Err(DialectError {
            line: None,
            problem: "`encoding: utf-16` is declared but the file has no UTF-16 byte-order mark"
                .into(),
            expected: "a UTF-16 file with its byte-order mark, or the encoding the file really has"
                .into(),
        }),
        Some(Encoding::Utf8) | None => match std::str::from_utf8(bytes) {
            Ok(text) => Ok((text.to_string(), Encoding::Utf8)),
            Err(e) => {
                let good = bytes.get(..e.valid_up_to()).unwrap_or_default();
                let line = good.iter().filter(|b| **b == b'\n').count() + 1;
                let byte = bytes.get(e.valid_up_to()).copied().unwrap_or(0);
                Err(DialectError {
                    line: Some(line),
                    problem: format!("the file is not UTF-8 text (byte 0x{byte:02X})"),
                    expected: "UTF-8 (with or without byte-order mark) or UTF-16 with its byte-order mark; a file saved by an older spreadsheet as \"CSV\" is often Windows-1252: declare `encoding: windows-1252` under `results`".into(),
                })
            }
        },
    }
}

/// The separator and decimal mark of `text`: as declared, else the separator under which the
/// header has a `run` column, and the decimal mark the numbers use (a comma only when no cell
/// uses a point, and never with comma-separated columns).
pub fn sniff(text: &str, encoding: Encoding, declared: &Declared) -> Result<Dialect, DialectError> {
    let mut lines = text
        .lines()
        .enumerate()
        .filter(|(_, l)| !l.trim().is_empty());
    let header = lines.next().map(|(_, l)| l).unwrap_or("");
    let separator = match declared.separator {
        Some(s) => s,
        None => {
            let with_run: Vec<Separator> = [Separator::Comma, Separator::Semicolon, Separator::Tab]
                .into_iter()
                .filter(|s| {
                    header
                        .split(s.byte() as char)
                        .any(|f| f.trim().trim_matches('"') == "run")
                        && header.contains(s.byte() as char)
                })
                .collect();
            match with_run.as_slice() {
                [one] => *one,
                [] => Separator::Comma, // the header check names the missing `run` column
                _ => {
                    return Err(DialectError {
                        line: Some(1),
                        problem: "the header can be split by more than one separator".into(),
                        expected:
                            "state it under `results`: `separator: comma`, `semicolon` or `tab`"
                                .into(),
                    });
                }
            }
        }
    };
    let decimal = match declared.decimal {
        Some(d) => d,
        None if separator == Separator::Comma => Decimal::Point,
        None => {
            let (mut comma, mut point) = (None, None);
            for (i, line) in lines {
                for cell in line.split(separator.byte() as char) {
                    let cell = cell.trim().trim_matches('"');
                    if comma.is_none() && is_comma_decimal(cell) {
                        comma = Some(i + 1);
                    }
                    if point.is_none() && is_point_decimal(cell) {
                        point = Some(i + 1);
                    }
                }
            }
            match (comma, point) {
                (Some(c), Some(p)) => {
                    return Err(DialectError {
                        line: Some(c.max(p)),
                        problem: format!(
                            "numbers use both decimal marks (a comma on line {c}, a point on line {p})"
                        ),
                        expected: "one decimal mark throughout, or state it under `results`: `decimal: comma` or `decimal: point`".into(),
                    });
                }
                (Some(_), None) => Decimal::Comma,
                _ => Decimal::Point,
            }
        }
    };
    Ok(Dialect {
        separator,
        decimal,
        encoding,
    })
}

fn is_comma_decimal(cell: &str) -> bool {
    let body = cell.strip_prefix(['-', '+']).unwrap_or(cell);
    let mut parts = body.split(',');
    matches!(
        (parts.next(), parts.next(), parts.next()),
        (Some(a), Some(b), None)
            if !a.is_empty() && !b.is_empty()
                && a.chars().all(|c| c.is_ascii_digit())
                && b.chars().all(|c| c.is_ascii_digit())
    )
}

fn is_point_decimal(cell: &str) -> bool {
    let body = cell.strip_prefix(['-', '+']).unwrap_or(cell);
    let mut parts = body.split('.');
    matches!(
        (parts.next(), parts.next(), parts.next()),
        (Some(a), Some(b), None)
            if a.chars().all(|c| c.is_ascii_digit())
                && b.chars().next().is_some_and(|c| c.is_ascii_digit())
                && b.chars().all(|c| c.is_ascii_digit() || matches!(c, 'e' | 'E' | '+' | '-'))
    )
}

/// A number cell in the dialect's decimal mark, as plain text with a point: `99,5` → `99.5`
/// with a decimal comma; a point in a decimal-comma file (a thousands separator) stays and is
/// refused by the number parser.
pub fn normalise_number(cell: &str, decimal: Decimal) -> String {
    match decimal {
        Decimal::Point => cell.to_string(),
        Decimal::Comma if is_comma_decimal(cell) => cell.replace(',', "."),
        Decimal::Comma => cell.to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sniffed(text: &str) -> Dialect {
        sniff(text, Encoding::Utf8, &Declared::default()).unwrap()
    }

    #[test]
    fn a_german_spreadsheet_file_is_semicolon_and_decimal_comma() {
        let d = sniffed("run;assay;rs\n1;99,5;2,31\n2;100,1;2,4\n");
        assert_eq!(
            (d.separator, d.decimal),
            (Separator::Semicolon, Decimal::Comma)
        );
        assert_eq!(normalise_number("99,5", d.decimal), "99.5");
    }

    #[test]
    fn tab_separated_with_points_is_read_as_such() {
        let d = sniffed("run\tassay\n1\t99.5\n");
        assert_eq!((d.separator, d.decimal), (Separator::Tab, Decimal::Point));
    }

    #[test]
    fn semicolons_with_integers_only_default_to_a_point() {
        let d = sniffed("run;assay\n1;99\n2;100\n");
        assert_eq!(d.decimal, Decimal::Point);
    }

    #[test]
    fn both_decimal_marks_are_refused_naming_the_lines() {
        let e = sniff(
            "run;assay\n1;99,5\n2;100.1\n",
            Encoding::Utf8,
            &Declared::default(),
        )
        .unwrap_err();
        assert!(
            e.problem.contains("line 2") && e.problem.contains("line 3"),
            "{e:?}"
        );
    }

    #[test]
    fn a_declared_dialect_wins() {
        let declared = Declared {
            separator: Some(Separator::Semicolon),
            decimal: Some(Decimal::Point),
            encoding: None,
        };
        let d = sniff("run;assay\n1;99,5\n", Encoding::Utf8, &declared).unwrap();
        assert_eq!(d.decimal, Decimal::Point);
    }

    #[test]
    fn utf16_with_bom_and_windows_1252_decode() {
        // "run,a\n1,ä" in UTF-16 LE with its BOM; "ä" is 0xE4 in Windows-1252 (WHATWG
        // Encoding Standard index).
        let mut bytes = vec![0xFF, 0xFE];
        for u in "run,a\n1,ä".encode_utf16() {
            bytes.extend_from_slice(&u.to_le_bytes());
        }
        assert_eq!(
            decode(&bytes, None).unwrap(),
            ("run,a\n1,ä".to_string(), Encoding::Utf16)
        );
        assert_eq!(
            decode(b"run,a\n1,\xE4", Some(Encoding::Windows1252))
                .unwrap()
                .0,
            "run,a\n1,ä"
        );
        let e = decode(b"run,a\n1,\xE4", None).unwrap_err();
        assert_eq!(e.line, Some(2));
        assert!(e.expected.contains("windows-1252"));
    }
}

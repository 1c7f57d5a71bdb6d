//! The diff as rows of words, shared by the terminal text and the PDF, so both say the same.

use serde_json::Value;

use super::{Change, EffectValue, StudyDiff, Version};
use crate::report::format::{fixed, setting};

/// Significant digits of computed numbers in the diff: enough to see a change in the third
/// decimal of a percent effect, few enough to hide floating-point noise.
const SIGNIFICANT: i32 = 6;

/// A computed number to [`SIGNIFICANT`] digits, trailing zeros dropped, U+2212 for minus.
pub(super) fn number(value: f64) -> String {
    if !value.is_finite() {
        return fixed(value, 0);
    }
    let magnitude = if value == 0.0 {
        0
    } else {
        value.abs().log10().floor() as i32
    };
    let decimals = (SIGNIFICANT - 1 - magnitude).clamp(0, 12) as u32;
    trim(fixed(value, decimals))
}

fn trim(text: String) -> String {
    if !text.contains('.') {
        return text;
    }
    let t = text.trim_end_matches('0').trim_end_matches('.');
    match t {
        "" | "\u{2212}0" => "0".to_string(),
        t => t.to_string(),
    }
}

/// A field value as the reader writes it: numbers as in the study, `(none)` for an absent one.
pub(super) fn value(v: &Value) -> String {
    match v {
        Value::Null => "(none)".to_string(),
        Value::Bool(true) => "yes".to_string(),
        Value::Bool(false) => "no".to_string(),
        Value::Number(n) => n.as_f64().map_or_else(|| n.to_string(), setting),
        Value::String(s) => s.clone(),
        Value::Array(items) if items.is_empty() => "(none)".to_string(),
        Value::Array(items) => items.iter().map(value).collect::<Vec<_>>().join(", "),
        Value::Object(map) => map
            .iter()
            .map(|(k, v)| format!("{k} {}", value(v)))
            .collect::<Vec<_>>()
            .join(", "),
    }
}

fn values(v: &[f64]) -> String {
    if v.is_empty() {
        "(none)".to_string()
    } else {
        v.iter().map(|x| setting(*x)).collect::<Vec<_>>().join("; ")
    }
}

fn effect(v: Option<EffectValue>) -> String {
    v.map_or_else(
        || "(none)".to_string(),
        |e| format!("{} ({} %)", number(e.effect), number(e.percent)),
    )
}

fn verdict(v: Option<bool>) -> String {
    match v {
        Some(true) => "yes",
        Some(false) => "no",
        None => "not judged",
    }
    .to_string()
}

fn option(v: Option<f64>) -> String {
    v.map_or_else(|| "(none)".to_string(), number)
}

/// The diff as tables of words.
#[derive(Debug, Clone, Default, serde::Serialize)]
pub(super) struct Rows {
    /// What, field, old, new.
    pub inputs: Vec<Vec<String>>,
    /// Run, response, old, new.
    pub results: Vec<Vec<String>>,
    /// Response, effect, old, new.
    pub effects: Vec<Vec<String>>,
    /// Response, effect, verdict, old, new.
    pub verdicts: Vec<Vec<String>>,
    /// Response, criterion, quantity, old, new.
    pub numbers: Vec<Vec<String>>,
    /// Conclusion sentences no longer there.
    pub removed: Vec<String>,
    /// Conclusion sentences new.
    pub added: Vec<String>,
}

fn change_rows(out: &mut Vec<Vec<String>>, what: &str, changes: &[Change]) {
    for c in changes {
        let what = if c.item.is_empty() {
            what.to_string()
        } else {
            format!("{what} {}", c.item)
        };
        out.push(vec![what, c.field.clone(), value(&c.old), value(&c.new)]);
    }
}

fn added_removed_rows(out: &mut Vec<Vec<String>>, what: &str, a: &super::AddedRemoved) {
    if !a.added.is_empty() {
        out.push(vec![
            what.to_string(),
            "added".into(),
            String::new(),
            a.added.join(", "),
        ]);
    }
    if !a.removed.is_empty() {
        out.push(vec![
            what.to_string(),
            "removed".into(),
            a.removed.join(", "),
            String::new(),
        ]);
    }
}

pub(super) fn rows(diff: &StudyDiff) -> Rows {
    let i = &diff.inputs;
    let o = &diff.outputs;
    let mut r = Rows::default();
    change_rows(&mut r.inputs, "study", &i.study);
    added_removed_rows(&mut r.inputs, "factors", &i.factors_added_removed);
    change_rows(&mut r.inputs, "factor", &i.factors);
    change_rows(&mut r.inputs, "design", &i.design);
    added_removed_rows(&mut r.inputs, "responses", &i.responses_added_removed);
    change_rows(&mut r.inputs, "response", &i.responses);
    change_rows(&mut r.inputs, "acceptance", &i.acceptance);
    change_rows(&mut r.inputs, "run", &i.excluded);
    added_removed_rows(&mut r.inputs, "results of runs", &i.runs_added_removed);
    r.results = i
        .results
        .iter()
        .map(|c| {
            vec![
                c.run.clone(),
                c.response.clone(),
                values(&c.old),
                values(&c.new),
            ]
        })
        .collect();
    r.effects = o
        .effects
        .iter()
        .map(|e| {
            vec![
                e.response.clone(),
                e.label.clone(),
                effect(e.old),
                effect(e.new),
            ]
        })
        .collect();
    r.verdicts = o
        .verdicts
        .iter()
        .map(|v| {
            vec![
                v.response.clone(),
                v.effect.clone().unwrap_or_else(|| "(response)".to_string()),
                v.verdict.clone(),
                verdict(v.old),
                verdict(v.new),
            ]
        })
        .collect();
    r.numbers = o
        .numbers
        .iter()
        .map(|n| {
            vec![
                n.response.clone(),
                n.criterion.clone(),
                n.quantity.clone(),
                option(n.old),
                option(n.new),
            ]
        })
        .collect();
    r.removed = o.conclusion.removed.clone();
    r.added = o.conclusion.added.clone();
    r
}

/// Columns padded to their widest cell (counted in characters, not bytes: units and the
/// minus sign are multi-byte).
fn table(out: &mut String, header: &[&str], rows: &[Vec<String>]) {
    let mut widths: Vec<usize> = header.iter().map(|h| h.chars().count()).collect();
    for row in rows {
        for (w, cell) in widths.iter_mut().zip(row) {
            *w = (*w).max(cell.chars().count());
        }
    }
    let line = |cells: Vec<&str>| -> String {
        let mut s = String::from("    ");
        let last = cells.len().saturating_sub(1);
        for (k, (cell, w)) in cells.iter().zip(&widths).enumerate() {
            s.push_str(cell);
            if k < last {
                s.push_str(&" ".repeat(w.saturating_sub(cell.chars().count()) + 2));
            }
        }
        s.push('\n');
        s
    };
    out.push_str(&line(header.to_vec()));
    for row in rows {
        out.push_str(&line(row.iter().map(String::as_str).collect()));
    }
}

fn version_lines(out: &mut String, name: &str, v: &Version) {
    out.push_str(&format!("{name}: {}", v.label));
    if v.file != v.label {
        out.push_str(&format!("  {}", v.file));
    }
    out.push_str(&format!("\n     study sha256 {}\n", v.sha256));
    if let Some(d) = &v.data_file {
        out.push_str(&format!("     {} sha256 {}\n", d.name, d.sha256));
    }
}

/// The diff for the terminal: the two versions, then the changed inputs and outputs as
/// tables and the conclusion sentences removed (`-`) and added (`+`); `no changes` when
/// nothing changed.
pub fn text(diff: &StudyDiff) -> String {
    let mut out = format!("study {}: {}\n", diff.new.id, diff.new.title);
    version_lines(&mut out, "old", &diff.old);
    version_lines(&mut out, "new", &diff.new);
    if let Some(r) = &diff.reason {
        out.push_str(&format!(
            "reason for the change: {}\nchanged by: {}\n",
            r.text, r.author
        ));
    }
    if diff.is_empty() {
        out.push_str(if diff.old.sha256 == diff.new.sha256 {
            "\nno changes\n"
        } else {
            "\nno changes in inputs or outputs (the study files differ only in comments or layout)\n"
        });
        return out;
    }
    let r = rows(diff);
    out.push_str("\ninputs\n");
    if r.inputs.is_empty() && r.results.is_empty() {
        out.push_str("  no changes\n");
    }
    if !r.inputs.is_empty() {
        table(&mut out, &["what", "field", "old", "new"], &r.inputs);
    }
    if !r.results.is_empty() {
        out.push_str("  results\n");
        table(&mut out, &["run", "response", "old", "new"], &r.results);
    }
    out.push_str("\noutputs\n");
    if diff.outputs.is_empty() {
        out.push_str("  no changes\n");
    }
    if !r.effects.is_empty() {
        out.push_str("  effects (% effect)\n");
        table(&mut out, &["response", "effect", "old", "new"], &r.effects);
    }
    if !r.verdicts.is_empty() {
        out.push_str("  verdicts that flipped\n");
        table(
            &mut out,
            &["response", "effect", "verdict", "old", "new"],
            &r.verdicts,
        );
    }
    if !r.numbers.is_empty() {
        out.push_str("  criteria\n");
        table(
            &mut out,
            &["response", "criterion", "quantity", "old", "new"],
            &r.numbers,
        );
    }
    if !r.removed.is_empty() || !r.added.is_empty() {
        out.push_str("  conclusion\n");
        for s in &r.removed {
            out.push_str(&format!("    - {s}\n"));
        }
        for s in &r.added {
            out.push_str(&format!("    + {s}\n"));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_keep_six_significant_digits() {
        // 100·(−2.3)/99.8 = −2.304609218…, by hand.
        assert_eq!(number(-2.3 / 99.8 * 100.0), "\u{2212}2.30461");
    }

    #[test]
    fn floating_point_noise_prints_as_the_plain_number() {
        assert_eq!(number(-2.3000000000000043), "\u{2212}2.3");
    }

    #[test]
    fn a_value_that_is_zero_up_to_rounding_prints_as_zero() {
        assert_eq!(number(-7.1e-15), "0");
        assert_eq!(number(0.0), "0");
    }

    #[test]
    fn large_numbers_drop_no_integer_digits() {
        assert_eq!(number(1234567.0), "1234567");
    }

    #[test]
    fn absent_values_read_none() {
        assert_eq!(value(&Value::Null), "(none)");
        assert_eq!(values(&[]), "(none)");
    }

    #[test]
    fn determinations_are_listed_as_written() {
        assert_eq!(values(&[98.9, 99.0]), "98.9; 99");
    }

    #[test]
    fn columns_align_on_characters_not_bytes() {
        let mut out = String::new();
        table(
            &mut out,
            &["a", "b"],
            &[vec!["°C".into(), "x".into()], vec!["ab".into(), "y".into()]],
        );
        let lines: Vec<&str> = out.lines().collect();
        assert_eq!(
            lines[1].chars().position(|c| c == 'x'),
            lines[2].chars().position(|c| c == 'y')
        );
    }
}

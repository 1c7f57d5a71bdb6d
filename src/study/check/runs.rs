//! Run ids, excluded runs, the results section, clashes between ids, and text the report
//! fonts cannot print.

use super::*;

/// The run id of a YAML value in its one canonical form, so that `7`, `7.0`, `"7"` and
/// `" 7 "` are one id (see [`RunId::canonical`]); `Err` says what is wrong with a blank,
/// non-integral, out-of-range or non-scalar id, for a message naming the field.
pub fn run_id(v: &Value) -> Result<RunId, String> {
    match v {
        Value::Number(n) => {
            if let Some(i) = n.as_i64() {
                return Ok(RunId(i.to_string()));
            }
            match n.as_f64() {
                Some(f) if f.abs() < 9.0e15 && f.fract() == 0.0 => {
                    Ok(RunId((f as i64).to_string()))
                }
                Some(f) if f.abs() < 9.0e15 => Err(format!(
                    "run id `{n}` is not a whole number (expected a whole number, or text)"
                )),
                _ => Err(format!(
                    "run id `{n}` is out of range (expected a whole number below 9,000,000,000,000,000, or text)"
                )),
            }
        }
        Value::String(s) if !s.trim().is_empty() => Ok(RunId::canonical(s)),
        Value::String(_) | Value::Null => {
            Err("the run id is blank (expected a whole number, or text)".into())
        }
        _ => Err("the run id is not a number or text (expected a whole number, or text)".into()),
    }
}

pub(super) fn exclusions(
    c: &mut Checker<'_>,
    specs: &[model::ExclusionSpec],
    responses: &[model::ResponseSpec],
) -> Vec<crate::study::Exclusion> {
    let mut seen = BTreeSet::new();
    let mut out = Vec::new();
    for (i, e) in specs.iter().enumerate() {
        let at = FieldPath::of(&["excluded"]).index(i);
        let run = match run_id(&e.run) {
            Ok(run) => run,
            Err(why) => {
                c.report(&at.key("run"), why, None);
                continue;
            }
        };
        let response = match &e.response {
            None => None,
            Some(id) => match responses.iter().position(|r| &r.id == id) {
                Some(r) => Some(r),
                None => {
                    let ids: Vec<&str> = responses.iter().map(|r| r.id.as_str()).collect();
                    c.report(
                        &at.key("response"),
                        format!("unknown response `{id}`"),
                        Some(format!("expected one of {}", ids.join(", "))),
                    );
                    continue;
                }
            },
        };
        // A run is excluded once for every response, or once per response.
        let twice = !seen.insert((run.clone(), response))
            || (response.is_none() && seen.iter().any(|(r, x)| r == &run && x.is_some()))
            || (response.is_some() && seen.contains(&(run.clone(), None)));
        if twice {
            c.report(
                &at.key("run"),
                format!("run `{run}` is excluded twice"),
                Some(
                    "expected each excluded run once (for every response, or once per response)"
                        .into(),
                ),
            );
            continue;
        }
        out.push(crate::study::Exclusion {
            run,
            reason: e.reason.clone(),
            entry: i,
            response,
        });
    }
    out
}

pub(super) fn check_results_spec(c: &mut Checker<'_>, results: &model::ResultsSpec) {
    let at = FieldPath::of(&["results"]);
    match (&results.file, &results.runs) {
        (Some(_), Some(_)) => c.report(
            &at,
            "both `file` and `runs` are given",
            Some("expected the results either in a CSV `file` or inline as `runs`".into()),
        ),
        (None, None) => c.report(
            &at,
            "no results are given",
            Some("expected `file: results.csv` or inline `runs: [{run: 1, <response id>: value}, ...]`".into()),
        ),
        _ => {}
    }
}

pub(super) fn check_id_clashes(c: &mut Checker<'_>, file: &StudyFile) {
    for (i, r) in file.responses.iter().enumerate() {
        if file.factors.iter().any(|f| f.id == r.id) {
            c.report(
                &FieldPath::of(&["responses"]).index(i).key("id"),
                format!("`{}` is already a factor id", r.id),
                Some("expected response ids that differ from the factor ids (they share the results columns)".into()),
            );
        }
    }
}

/// Refuses any text in the study the report fonts cannot print (CJK, emoji, control
/// characters...), naming the field, so that what `check` accepts `report` typesets.
pub(super) fn check_printable(c: &mut Checker<'_>, value: &Value, at: &FieldPath) {
    match value {
        Value::String(text) => {
            if let Some(ch) = crate::study::glyphs::first_unprintable(text) {
                let shown = if ch.is_control() {
                    format!("U+{:04X} (a control character)", u32::from(ch))
                } else {
                    format!("`{ch}` (U+{:04X})", u32::from(ch))
                };
                c.report(
                    at,
                    format!("the character {shown} cannot be printed in the report"),
                    Some("expected characters the report fonts have: Latin, Greek, Cyrillic, Hebrew, Armenian, punctuation, units and mathematical signs; write the text without it".into()),
                );
            }
        }
        Value::Array(items) => {
            for (i, item) in items.iter().enumerate() {
                check_printable(c, item, &at.index(i));
            }
        }
        Value::Object(map) => {
            for (key, item) in map {
                check_printable(c, item, &at.key(key));
            }
        }
        _ => {}
    }
}

//! The comparison of the study as executed with its locked protocol, field by field.
//!
//! Lists are matched by what identifies an entry (a factor or response `id`, an explicit run's
//! `run`), so that a changed level reads `factors[temp].delta`, not a shift of every later
//! entry; other lists are matched by position when their lengths agree, else compared whole.

use std::collections::BTreeSet;

use serde::Serialize;
use serde_json::Value;

use crate::study::Study;

/// One departure from the approved protocol.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Deviation {
    /// The field, e.g. `factors[temp].delta`, `acceptance[0].effect-limit` or
    /// `results[5].order` (a run executed at another position than planned).
    pub field: String,
    /// The value in the protocol (`–` when the field was absent).
    pub protocol: String,
    /// The value in the study (`–` when the field is absent now).
    pub study: String,
    /// The analyst's justification from `protocol: deviations:`, when given.
    pub justification: Option<String>,
}

/// A run performed at another position of the run order than planned.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct OrderChange {
    /// Run id.
    pub run: String,
    /// Planned position.
    pub planned: usize,
    /// Position as executed.
    pub executed: usize,
    /// When it was run, as recorded in the results (`time` column).
    pub time: Option<String>,
}

/// The comparison of a study with its lock, as analysis.json and the report carry it.
#[derive(Debug, Clone, Serialize)]
pub struct ProtocolRecord {
    /// The lock file as named in the study.
    pub lock: String,
    /// SHA-256 of the locked planning content.
    pub lock_sha256: String,
    /// Protocol number.
    pub number: Option<String>,
    /// Approval date.
    pub approved: Option<String>,
    /// Every change of the plan, then every run executed out of its planned order.
    pub deviations: Vec<Deviation>,
}

/// The record of a study whose lock was read; `None` without a protocol.
pub fn record(study: &Study, order: &[OrderChange]) -> Option<ProtocolRecord> {
    let lock = study.lock.as_ref()?;
    let spec = study.protocol.as_ref()?;
    let mut deviations = compare(&lock.planning, &study.planning);
    deviations.extend(order_deviations(order));
    for d in &mut deviations {
        let reasons: Vec<&str> = spec
            .deviations
            .iter()
            .filter(|j| covers(&j.field, &d.field))
            .map(|j| j.justification.as_str())
            .collect();
        if !reasons.is_empty() {
            d.justification = Some(reasons.join("; "));
        }
    }
    Some(ProtocolRecord {
        lock: lock.file.clone(),
        lock_sha256: lock.planning_sha256.clone(),
        number: spec.number.clone(),
        approved: spec.approved.clone(),
        deviations,
    })
}

/// The runs performed out of their planned order, as deviations (`results[5].order`).
pub fn order_deviations(order: &[OrderChange]) -> Vec<Deviation> {
    order
        .iter()
        .map(|c| Deviation {
            field: format!("results[{}].order", c.run),
            protocol: c.planned.to_string(),
            study: match &c.time {
                Some(t) => format!("{} (at {t})", c.executed),
                None => c.executed.to_string(),
            },
            justification: None,
        })
        .collect()
}

/// True when a justification written for `named` applies to the deviation at `field`: the
/// same field, or a part of the study file containing it.
pub fn covers(named: &str, field: &str) -> bool {
    let named = named.trim();
    field == named
        || field
            .strip_prefix(named)
            .is_some_and(|rest| rest.starts_with('.') || rest.starts_with('['))
}

/// Every field whose value differs between the locked plan and the current one.
pub fn compare(locked: &Value, current: &Value) -> Vec<Deviation> {
    let mut out = Vec::new();
    walk(Some(locked), Some(current), "", &mut out);
    out
}

fn join(path: &str, key: &str) -> String {
    if path.is_empty() {
        key.to_string()
    } else {
        format!("{path}.{key}")
    }
}

/// The member that identifies each entry of a list, when every entry of both lists has it.
fn identity(a: &[Value], b: &[Value]) -> Option<&'static str> {
    ["id", "run"].into_iter().find(|key| {
        let keys = |items: &[Value]| -> Option<BTreeSet<String>> {
            let texts: Vec<String> = items
                .iter()
                .map(|v| v.get(*key).map(text))
                .collect::<Option<_>>()?;
            let unique: BTreeSet<String> = texts.iter().cloned().collect();
            (unique.len() == texts.len()).then_some(unique)
        };
        keys(a).is_some() && keys(b).is_some()
    })
}

fn walk(a: Option<&Value>, b: Option<&Value>, path: &str, out: &mut Vec<Deviation>) {
    match (a, b) {
        (Some(Value::Object(x)), Some(Value::Object(y))) => {
            let keys: BTreeSet<&String> = x.keys().chain(y.keys()).collect();
            for k in keys {
                walk(x.get(k), y.get(k), &join(path, k), out);
            }
        }
        (Some(Value::Array(x)), Some(Value::Array(y))) => {
            if let Some(key) = identity(x, y) {
                let id = |v: &Value| v.get(key).map(text).unwrap_or_default();
                let mut ids: Vec<String> = x.iter().map(id).collect();
                for v in y {
                    if !ids.contains(&id(v)) {
                        ids.push(id(v));
                    }
                }
                for i in ids {
                    let find = |items: &[Value]| items.iter().find(|v| id(v) == i).cloned();
                    walk(
                        find(x).as_ref(),
                        find(y).as_ref(),
                        &format!("{path}[{i}]"),
                        out,
                    );
                }
            } else if x.len() == y.len() {
                for (i, (p, q)) in x.iter().zip(y).enumerate() {
                    walk(Some(p), Some(q), &format!("{path}[{i}]"), out);
                }
            } else {
                leaf(a, b, path, out);
            }
        }
        _ => leaf(a, b, path, out),
    }
}

fn leaf(a: Option<&Value>, b: Option<&Value>, path: &str, out: &mut Vec<Deviation>) {
    if a != b {
        out.push(Deviation {
            field: path.to_string(),
            protocol: a.map_or_else(|| "–".to_string(), text),
            study: b.map_or_else(|| "–".to_string(), text),
            justification: None,
        });
    }
}

/// A value as printed in the deviations table: text as it is, whole numbers without `.0`,
/// anything else as compact JSON.
fn text(v: &Value) -> String {
    match v {
        Value::String(s) => s.clone(),
        Value::Number(n) => match n.as_f64() {
            Some(f) if f.fract() == 0.0 && f.abs() < 1e15 && n.is_f64() => format!("{f:.0}"),
            _ => n.to_string(),
        },
        other => super::canonical(other),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    #[test]
    fn lists_are_matched_by_id_and_each_changed_field_is_named() {
        let locked = json!({"factors": [{"id": "temp", "delta": 2.0}, {"id": "ph", "delta": 0.1}],
                            "acceptance": [{"response": "assay", "effect-limit": 2.0}]});
        let current = json!({"factors": [{"id": "ph", "delta": 0.2}, {"id": "temp", "delta": 2.0}],
                             "acceptance": [{"response": "assay", "effect-limit": 2.5}]});
        let d = compare(&locked, &current);
        let fields: Vec<(&str, &str, &str)> = d
            .iter()
            .map(|d| (d.field.as_str(), d.protocol.as_str(), d.study.as_str()))
            .collect();
        assert_eq!(
            fields,
            vec![
                ("acceptance[0].effect-limit", "2", "2.5"),
                ("factors[ph].delta", "0.1", "0.2"),
            ]
        );
        assert!(covers("factors[ph]", "factors[ph].delta"));
        assert!(!covers("factors[p]", "factors[ph].delta"));
    }
}

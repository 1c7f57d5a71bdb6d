//! The run table of the chapter: each run's settings, its values as measured and, where they
//! differ, the values the evaluation used, with the reason of each exclusion.

use std::collections::HashMap;

use serde::Serialize;

use crate::analysis::RunValue;
use crate::pipeline::Evaluated;
use crate::study::Study;

use super::format::{Numbers, setting_of};

/// One row of the run table.
#[derive(Debug, Serialize)]
pub struct RunRow {
    /// Run id.
    pub id: String,
    /// Run order.
    pub order: String,
    /// True for nominal runs.
    pub nominal: bool,
    /// Cells: settings, then per response the value(s) as measured and, where the response
    /// has them, the value used.
    pub cells: Vec<String>,
    /// Why the run was excluded from the evaluation (`None` for a run used).
    pub excluded: Option<String>,
}

/// The response part of the run table: column headers, rows in run order, and whether any
/// `used` column is present.
pub(super) struct RunTable {
    pub(super) columns: Vec<String>,
    pub(super) rows: Vec<RunRow>,
    pub(super) corrected: bool,
}

/// True when the values response `r` used differ from the measured ones: a drift correction
/// was applied, or some run has other than one determination (its mean is used).
pub fn has_used_values(evaluated: &Evaluated, r: usize) -> bool {
    let corrected = evaluated
        .analysis
        .responses
        .get(r)
        .and_then(|a| a.drift.as_ref())
        .is_some_and(|d| d.correction.is_some());
    corrected
        || evaluated
            .data
            .values
            .values()
            .any(|v| v.get(r).is_some_and(|d| d.len() > 1))
}

/// The run table: settings, each response's values as measured (determinations separated by
/// `; `), the value used where it differs, and the reason of each exclusion.
pub(super) fn run_table(evaluated: &Evaluated) -> RunTable {
    let Evaluated {
        study,
        design,
        data,
        analysis,
        ..
    } = evaluated;
    let used: Vec<bool> = (0..analysis.responses.len())
        .map(|r| has_used_values(evaluated, r))
        .collect();
    let mut columns = Vec::new();
    for (r, spec) in study.responses.iter().enumerate() {
        let unit = spec
            .unit
            .as_deref()
            .map(|u| format!(" ({u})"))
            .unwrap_or_default();
        columns.push(format!("{}{unit}", spec.id));
        if used.get(r).copied().unwrap_or(false) {
            columns.push(format!("{} used", spec.id));
        }
    }
    let lookups: Vec<HashMap<&str, &RunValue>> = analysis
        .responses
        .iter()
        .map(|a| a.values.iter().map(|v| (v.run.as_str(), v)).collect())
        .collect();
    let reasons = exclusion_reasons(study);
    let rows = design
        .runs_in_order()
        .into_iter()
        .map(|run| {
            let mut cells: Vec<String> = study
                .factors
                .iter()
                .zip(&run.coded)
                .map(|(f, c)| setting_of(f, *c))
                .collect();
            let excluded = reasons.get(run.id.0.as_str()).map(|r| r.to_string());
            for (r, response) in analysis.responses.iter().enumerate() {
                let numbers = Numbers::of(study, response);
                let text = data
                    .values
                    .get(&run.id)
                    .and_then(|v| v.get(r))
                    .map(|vals| {
                        vals.iter()
                            .map(|v| numbers.measured(*v))
                            .collect::<Vec<_>>()
                            .join("; ")
                    })
                    .unwrap_or_default();
                cells.push(text);
                if used.get(r).copied().unwrap_or(false) {
                    let value = lookups.get(r).and_then(|m| m.get(run.id.0.as_str()));
                    cells.push(match value {
                        Some(v) if v.excluded => "not used".to_string(),
                        Some(v) => numbers.derived(v.value),
                        None => String::new(),
                    });
                }
            }
            RunRow {
                id: run.id.0.clone(),
                order: run.order.to_string(),
                nominal: run.nominal,
                cells,
                excluded,
            }
        })
        .collect();
    RunTable {
        columns,
        rows,
        corrected: used.iter().any(|u| *u),
    }
}

/// Why each excluded run was left out, by run id: the reason, prefixed with the responses it
/// concerns when the run was excluded for some responses only (`for assay only: ...`).
pub fn exclusion_reasons(study: &Study) -> HashMap<&str, String> {
    let mut out: HashMap<&str, String> = HashMap::new();
    for e in &study.excluded {
        let text = match e.response.and_then(|r| study.responses.get(r)) {
            Some(resp) => format!("for {} only: {}", resp.id, e.reason),
            None => e.reason.clone(),
        };
        out.entry(e.run.0.as_str())
            .and_modify(|t| {
                t.push_str("; ");
                t.push_str(&text);
            })
            .or_insert(text);
    }
    out
}

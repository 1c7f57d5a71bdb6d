//! Reading the measured values, inline or from CSV, keyed by run id and matched to the plan.
//!
//! Results are matched by run id, never by position: a missing, duplicated or unknown run is an
//! error naming the run. A CSV written by `plateau design` (with `order` and factor columns) is
//! read back as it is, and its factor settings must agree with the plan.

use std::collections::{BTreeMap, BTreeSet};

use serde_json::Value;

mod csv;
pub mod dialect;

use crate::design::Design;
use crate::files::Files;
use crate::study::check::run_id;
use crate::study::diagnostic::{Diagnostic, Diagnostics, FieldPath, closest};
use crate::study::{RunId, Study};

/// Largest results file accepted, in bytes.
pub const MAX_RESULTS_BYTES: u64 = 64 * 1024 * 1024;

/// The measured values of a study.
#[derive(Debug, Clone)]
pub struct Measurements {
    /// Per run id, per response (in response order), the determinations.
    pub values: BTreeMap<RunId, Vec<Vec<f64>>>,
    /// The data file read, if any: name as given and SHA-256.
    pub data_file: Option<DataFile>,
    /// The position each run was performed at, where the results' `order` column gives one
    /// (the run sheet's column, filled in as run); a run missing here ran as planned.
    pub executed_order: BTreeMap<RunId, usize>,
    /// When each run was performed, where the results' `time` column gives it (text as written).
    pub times: BTreeMap<RunId, String>,
}

/// A data file and its checksum (provenance).
#[derive(Debug, Clone, serde::Serialize)]
pub struct DataFile {
    /// Path as written in the study file.
    pub name: String,
    /// SHA-256 of its bytes.
    pub sha256: String,
}

/// Reads the results of `study` for the runs of `design`.
pub fn read(
    files: &dyn Files,
    study: &Study,
    design: &Design,
) -> Result<Measurements, Diagnostics> {
    let Some(spec) = &study.results else {
        return Err(Diagnostics(vec![study.diagnostic(
            &FieldPath::of(&["results"]),
            "the study has no results yet",
            Some("expected a `results:` section with `file: results.csv` or inline `runs:` (`plateau design` prints the run sheet to fill in)".to_string()),
        )]));
    };
    let determinations = spec.determinations.unwrap_or(1) as usize;
    let (rows, data_file) = match (&spec.file, &spec.runs) {
        (Some(file), _) => {
            let (rows, data) = csv::rows(files, study, design, file)?;
            (rows, Some(data))
        }
        (None, Some(runs)) => (inline_rows(study, runs)?, None),
        (None, None) => (Vec::new(), None),
    };
    let planned: BTreeSet<&RunId> = design.runs.iter().map(|r| &r.id).collect();
    let mut problems = Diagnostics::default();
    let mut values: BTreeMap<RunId, Vec<Vec<f64>>> = BTreeMap::new();
    let mut executed_order: BTreeMap<RunId, usize> = BTreeMap::new();
    let mut times: BTreeMap<RunId, String> = BTreeMap::new();
    let mut positions: BTreeMap<usize, RunId> = BTreeMap::new();
    for row in rows {
        if !planned.contains(&row.run) {
            problems.push(row.at.diagnostic(
                format!(
                    "results for run `{}`, which the design does not have",
                    row.run
                ),
                Some(format!(
                    "expected one of the planned runs {}",
                    run_range(design)
                )),
            ));
            continue;
        }
        if let Some(order) = row.order {
            match executed_order.get(&row.run) {
                Some(first) if *first != order => problems.push(row.at.diagnostic(
                    format!(
                        "run `{}`: order `{order}` differs from the order `{first}` of its first row",
                        row.run
                    ),
                    Some("expected one position per run (its determinations were made in one run)".into()),
                )),
                Some(_) => {}
                None => match positions.get(&order) {
                    Some(other) => problems.push(row.at.diagnostic(
                        format!("runs `{other}` and `{}` both have order `{order}`", row.run),
                        Some("expected each position of the run order once".into()),
                    )),
                    None => {
                        positions.insert(order, row.run.clone());
                        executed_order.insert(row.run.clone(), order);
                    }
                },
            }
        }
        if let Some(time) = &row.time {
            times.entry(row.run.clone()).or_insert_with(|| time.clone());
        }
        let entry = values
            .entry(row.run.clone())
            .or_insert_with(|| vec![Vec::new(); study.responses.len()]);
        let already = entry.first().map_or(0, Vec::len);
        if already + row.values.first().map_or(0, Vec::len) > determinations {
            let expected = if determinations == 1 {
                "expected one row per run (declare `determinations: n` under `results` for replicate determinations)".to_string()
            } else {
                format!("expected {determinations} determinations per run")
            };
            problems.push(row.at.diagnostic(
                format!("run `{}` has more results than declared", row.run),
                Some(expected),
            ));
            continue;
        }
        for (slot, new) in entry.iter_mut().zip(row.values) {
            slot.extend(new);
        }
    }
    for (i, e) in study.excluded.iter().enumerate() {
        if !planned.contains(&e.run) {
            problems.push(study.diagnostic(
                &FieldPath::of(&["excluded"]).index(i).key("run"),
                format!(
                    "run `{}` is excluded but the design does not have it",
                    e.run
                ),
                Some(format!(
                    "expected one of the planned runs {}",
                    run_range(design)
                )),
            ));
        }
    }
    // Located once: each `study.diagnostic` re-parses the whole study text.
    let missing_locus = match &spec.file {
        Some(file) => {
            let field = FieldPath::of(&["results", "file"]);
            let d = study.diagnostic(&field, "", None);
            Locus {
                file: study.file_name.clone(),
                position: d.line.zip(d.column),
                field: format!("{field} ({file})"),
            }
        }
        None => Locus::results(study),
    };
    let missing_at = || missing_locus.clone();
    for run in &design.runs {
        // A run excluded for one response only still has the values of the others.
        let excluded = study
            .excluded
            .iter()
            .any(|e| e.run == run.id && e.response.is_none());
        match values.get(&run.id) {
            None if excluded => {}
            None => problems.push(missing_at().diagnostic(
                format!("no results for run `{}`", run.id),
                Some("expected a result for every planned run".into()),
            )),
            Some(per_response) => {
                for (r, vals) in study.responses.iter().zip(per_response) {
                    if vals.len() != determinations {
                        problems.push(missing_at().diagnostic(
                            format!(
                                "run `{}` has {} determination(s) of `{}`",
                                run.id,
                                vals.len(),
                                r.id
                            ),
                            Some(format!("expected {determinations}, as declared")),
                        ));
                    }
                }
            }
        }
    }
    if !problems.is_empty() {
        return Err(problems);
    }
    // A run given no position keeps its planned one; two runs must not share a position.
    for run in &design.runs {
        if !executed_order.contains_key(&run.id)
            && let Some(other) = positions.get(&run.order)
            && other != &run.id
        {
            problems.push(missing_at().diagnostic(
                format!(
                    "run `{other}` was given order `{}`, the planned position of run `{}`, which has no order of its own",
                    run.order, run.id
                ),
                Some(format!("expected the order run `{}` was performed at as well", run.id)),
            ));
        }
    }
    if !problems.is_empty() {
        return Err(problems);
    }
    // Positions equal to the plan are not recorded as executed ones.
    executed_order.retain(|id, order| design.runs.iter().any(|r| &r.id == id && r.order != *order));
    Ok(Measurements {
        values,
        data_file,
        executed_order,
        times,
    })
}

fn run_range(design: &Design) -> String {
    match (design.runs.first(), design.runs.last()) {
        (Some(a), Some(b)) if design.runs.len() > 4 => format!("({} ... {})", a.id, b.id),
        _ => format!(
            "({})",
            design
                .runs
                .iter()
                .map(|r| r.id.0.as_str())
                .collect::<Vec<_>>()
                .join(", ")
        ),
    }
}

/// Where a result came from, for messages.
#[derive(Clone)]
struct Locus {
    file: String,
    position: Option<(usize, usize)>,
    field: String,
}

impl Locus {
    fn results(study: &Study) -> Self {
        let field = FieldPath::of(&["results"]);
        let d = study.diagnostic(&field, "", None);
        Self {
            file: study.file_name.clone(),
            position: d.line.zip(d.column),
            field: field.to_string(),
        }
    }

    fn diagnostic(&self, problem: String, expected: Option<String>) -> Diagnostic {
        Diagnostic {
            file: self.file.clone(),
            line: self.position.map(|p| p.0),
            column: self.position.map(|p| p.1),
            field: self.field.clone(),
            problem,
            expected,
            source_line: None,
        }
    }
}

struct Row {
    run: RunId,
    values: Vec<Vec<f64>>,
    at: Locus,
    /// Position in the run order as executed (the `order` column), when given.
    order: Option<usize>,
    /// When the run was performed (the `time` column), when given.
    time: Option<String>,
}

fn inline_rows(study: &Study, runs: &[BTreeMap<String, Value>]) -> Result<Vec<Row>, Diagnostics> {
    let ids: Vec<&str> = study.responses.iter().map(|r| r.id.as_str()).collect();
    let mut problems = Diagnostics::default();
    let mut rows = Vec::new();
    // One parse of the study text for every row's position (not one per row).
    let locator = &study.locator;
    for (i, entry) in runs.iter().enumerate() {
        let here = FieldPath::of(&["results", "runs"]).index(i);
        let run = match entry.get("run").map(run_id) {
            Some(Ok(run)) => run,
            Some(Err(why)) => {
                problems.push(study.diagnostic(&here.key("run"), why, None));
                continue;
            }
            None => {
                problems.push(study.diagnostic(&here.key("run"), "missing run id", None));
                continue;
            }
        };
        // `order` and `time`: the position and time the run was performed at, as in the CSV.
        let order = match entry.get("order") {
            None => None,
            Some(v) => match v.as_u64().filter(|n| *n >= 1) {
                Some(n) => Some(n as usize),
                None => {
                    problems.push(study.diagnostic(
                        &here.key("order"),
                        format!("run `{run}`: order `{v}` is not a position in the run order"),
                        Some("expected the position the run was performed at (1, 2, ...)".into()),
                    ));
                    None
                }
            },
        };
        let time = entry.get("time").map(|v| match v {
            Value::String(s) => s.clone(),
            other => other.to_string(),
        });
        for key in entry.keys() {
            if key != "run" && key != "order" && key != "time" && !ids.contains(&key.as_str()) {
                let hint = closest(key, ids.iter().copied())
                    .map(|b| format!("did you mean `{b}`? "))
                    .unwrap_or_default();
                problems.push(study.diagnostic(
                    &here.key(key),
                    format!("unknown response `{key}`"),
                    Some(format!(
                        "{hint}expected one of the response ids: {}",
                        ids.join(", ")
                    )),
                ));
            }
        }
        let declared = study
            .results
            .as_ref()
            .and_then(|r| r.determinations)
            .unwrap_or(1) as usize;
        let mut values = Vec::new();
        for id in &ids {
            let field = here.key(id);
            if let Some(Value::Array(items)) = entry.get(*id)
                && items.len() != declared
            {
                problems.push(study.diagnostic(
                    &field,
                    format!("run `{run}` lists {} determinations of `{id}`", items.len()),
                    Some(if declared == 1 {
                        format!(
                            "expected one number, or declare `determinations: {}` under `results`",
                            items.len()
                        )
                    } else {
                        format!("expected {declared} determinations, as declared")
                    }),
                ));
                values.push(Vec::new());
                continue;
            }
            let vals: Option<Vec<f64>> = match entry.get(*id) {
                Some(Value::Number(n)) => n.as_f64().map(|v| vec![v]),
                Some(Value::Array(items)) => items.iter().map(Value::as_f64).collect(),
                _ => None,
            };
            match vals {
                Some(v) if v.iter().all(|x| x.is_finite()) => values.push(v),
                Some(_) => problems.push(study.diagnostic(
                    &field,
                    "the value is not a finite number",
                    Some("expected a finite number".into()),
                )),
                None => problems.push(
                    study.diagnostic(
                        &field,
                        format!("run `{run}` has no value for `{id}`"),
                        Some(
                            "expected a number (or a list of numbers for several determinations)"
                                .into(),
                        ),
                    ),
                ),
            }
        }
        rows.push(Row {
            run,
            values,
            at: Locus {
                file: study.file_name.clone(),
                position: locator.value(&here.key("run").0),
                field: here.key("run").to_string(),
            },
            order,
            time,
        });
    }
    if problems.is_empty() {
        Ok(rows)
    } else {
        Err(problems.sorted())
    }
}

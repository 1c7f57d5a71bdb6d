//! The computed tables as CSV files (full precision, ASCII `-`), so the numbers can be
//! re-checked outside the PDF and diffed in git.

use crate::pipeline::Evaluated;
use crate::study::{Levels, Setting};

use crate::output::csv_bytes;

/// `factors.csv`, `runs.csv` and one `effects-<response>.csv` per response.
pub fn csv_files(evaluated: &Evaluated) -> Vec<(String, Vec<u8>)> {
    let Evaluated {
        study,
        design,
        data,
        analysis,
        ..
    } = evaluated;
    let mut files = Vec::new();
    let header: Vec<String> = ["id", "name", "unit", "nominal", "low", "high"]
        .iter()
        .map(|s| s.to_string())
        .collect();
    let rows: Vec<Vec<String>> = study
        .factors
        .iter()
        .map(|f| {
            let (n, l, h) = match &f.levels {
                Levels::Numeric { nominal, low, high } => {
                    (nominal.to_string(), low.to_string(), high.to_string())
                }
                Levels::Categorical {
                    nominal,
                    alternative,
                } => (nominal.clone(), nominal.clone(), alternative.clone()),
            };
            vec![
                f.id.clone(),
                f.name.clone(),
                f.unit.clone().unwrap_or_default(),
                n,
                l,
                h,
            ]
        })
        .collect();
    files.push(("factors.csv".to_string(), csv_bytes(&header, &rows)));

    let mut header = vec![
        "run".to_string(),
        "order".to_string(),
        "nominal".to_string(),
    ];
    header.extend(study.factors.iter().map(|f| f.id.clone()));
    // Per response: the determinations as measured, then (where they differ) the value the
    // evaluation used; last, whether the run was excluded and why.
    let used: Vec<bool> = (0..study.responses.len())
        .map(|r| super::run_table::has_used_values(evaluated, r))
        .collect();
    for (r, spec) in study.responses.iter().enumerate() {
        header.push(spec.id.clone());
        if used.get(r).copied().unwrap_or(false) {
            header.push(format!("{}_used", spec.id));
        }
    }
    header.push("excluded".to_string());
    header.push("exclusion_reason".to_string());
    let lookups: Vec<std::collections::HashMap<&str, &crate::analysis::RunValue>> = analysis
        .responses
        .iter()
        .map(|a| a.values.iter().map(|v| (v.run.as_str(), v)).collect())
        .collect();
    let reasons = super::run_table::exclusion_reasons(study);
    let rows: Vec<Vec<String>> =
        design
            .runs_in_order()
            .into_iter()
            .map(|run| {
                let mut row = vec![
                    run.id.0.clone(),
                    run.order.to_string(),
                    run.nominal.to_string(),
                ];
                row.extend(study.factors.iter().zip(&run.coded).map(
                    |(f, c)| match f.setting(*c) {
                        Setting::Value(v) => v.to_string(),
                        Setting::Level(l) => l,
                    },
                ));
                for r in 0..study.responses.len() {
                    let vals = data
                        .values
                        .get(&run.id)
                        .and_then(|v| v.get(r))
                        .map(|v| v.iter().map(f64::to_string).collect::<Vec<_>>().join(";"))
                        .unwrap_or_default();
                    row.push(vals);
                    if used.get(r).copied().unwrap_or(false) {
                        row.push(
                            lookups
                                .get(r)
                                .and_then(|m| m.get(run.id.0.as_str()))
                                .filter(|v| !v.excluded)
                                .map(|v| v.value.to_string())
                                .unwrap_or_default(),
                        );
                    }
                }
                let reason = reasons.get(run.id.0.as_str());
                row.push(reason.is_some().to_string());
                row.push(reason.cloned().unwrap_or_default());
                row
            })
            .collect();
    files.push(("runs.csv".to_string(), csv_bytes(&header, &rows)));

    for r in &analysis.responses {
        let header: Vec<String> = [
            "term",
            "factors",
            "effect",
            "percent",
            "estimable",
            "relevant",
        ]
        .iter()
        .map(|s| s.to_string())
        .collect();
        let rows: Vec<Vec<String>> = r
            .effects
            .iter()
            .map(|e| {
                vec![
                    e.label.clone(),
                    e.factors.join(" "),
                    e.effect.to_string(),
                    e.percent.map(|p| p.to_string()).unwrap_or_default(),
                    e.estimable.to_string(),
                    e.relevant.map_or_else(String::new, |b| b.to_string()),
                ]
            })
            .collect();
        files.push((format!("effects-{}.csv", r.id), csv_bytes(&header, &rows)));
    }
    files
}

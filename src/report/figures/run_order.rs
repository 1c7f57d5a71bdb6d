//! The run-order chart: every run's value in the order performed, with the drift line of
//! the nominal runs and the suitability limits.

use crate::analysis::ResponseAnalysis;
use crate::pipeline::Evaluated;
use crate::plot::{self, PlotError, RefLine};
use crate::report::format::setting;

use super::{Figure, csv_number, csv_of, drift_corrected, excluded_runs_text, titled};

/// Runs above which the run-order chart carries no per-run detail in its caption.
const MANY_RUNS: usize = 200;

pub(super) fn run_order_figure(
    evaluated: &Evaluated,
    response: &ResponseAnalysis,
) -> Result<Option<Figure>, PlotError> {
    let corrected = drift_corrected(response);
    let values: Vec<&crate::analysis::RunValue> = response
        .values
        .iter()
        .filter(|v| v.value.is_finite() && v.raw.is_finite())
        .collect();
    let runs: Vec<plot::Run> = values
        .iter()
        .filter_map(|v| {
            Some(plot::Run {
                order: u32::try_from(v.order).ok()?,
                response: v.value,
                nominal: v.nominal,
                excluded: v.excluded,
            })
        })
        .collect();
    if runs.is_empty() {
        return Ok(None);
    }
    let raw: Vec<plot::RawPoint> = if corrected {
        values
            .iter()
            .filter_map(|v| {
                Some(plot::RawPoint {
                    order: u32::try_from(v.order).ok()?,
                    response: v.raw,
                })
            })
            .collect()
    } else {
        Vec::new()
    };
    let nominal = values.iter().filter(|v| v.nominal).count();
    let excluded = values.iter().filter(|v| v.excluded).count();
    let drift = response
        .drift
        .as_ref()
        .and_then(|d| d.check.as_ref())
        .map(|d| plot::Drift {
            intercept: d.intercept,
            slope: d.slope,
        });
    let limits: Vec<RefLine> = evaluated
        .study
        .suitability
        .iter()
        .filter(|l| {
            evaluated
                .study
                .responses
                .get(l.response)
                .is_some_and(|r| r.id == response.id)
        })
        .flat_map(|l| {
            [
                l.min.map(|v| RefLine {
                    name: format!("min {}", setting(v)),
                    value: v,
                }),
                l.max.map(|v| RefLine {
                    name: format!("max {}", setting(v)),
                    value: v,
                }),
            ]
        })
        .flatten()
        .collect();
    let mut header = vec!["run", "order", "nominal", "excluded", "value_used"];
    if corrected {
        header.push("value_as_measured");
    }
    let rows: Vec<Vec<String>> = values
        .iter()
        .map(|v| {
            let mut row = vec![
                v.run.clone(),
                v.order.to_string(),
                v.nominal.to_string(),
                v.excluded.to_string(),
                csv_number(v.value),
            ];
            if corrected {
                row.push(csv_number(v.raw));
            }
            row
        })
        .collect();
    let csv = csv_of(&header, &rows);
    let svg = plot::run_order(&plot::RunOrder {
        runs,
        raw,
        drift,
        limits,
        x_title: "run order".to_string(),
        y_title: titled(response),
        run_label: "two-level run".to_string(),
        nominal_label: "nominal run".to_string(),
        drift_label: "drift (least squares)".to_string(),
        excluded_label: "excluded run".to_string(),
        raw_label: "as measured".to_string(),
    })?;
    let mut caption = format!(
        "{} of every run in the order performed{}",
        titled(response),
        if corrected {
            ", after drift correction (filled markers, the values the effects were computed from) and as measured before the correction (open grey squares; the dashed drift line is fitted to the nominal runs as measured)"
        } else {
            ""
        }
    );
    if nominal > 0 {
        caption.push_str(&format!(
            "; the {nominal} nominal runs are marked as diamonds and joined, so a trend over time shows"
        ));
    }
    if let Some(ex) = excluded_runs_text(response) {
        caption.push_str(&format!(
            "; {ex}, excluded from the evaluation, {} drawn as {}",
            if excluded == 1 { "is" } else { "are" },
            if excluded == 1 {
                "an open red circle"
            } else {
                "open red circles"
            }
        ));
    }
    let points = values.len() * if corrected { 2 } else { 1 };
    if points > plot::run_order::DENSE_RUNS {
        caption.push_str(&format!(
            "; with {} runs, the two-level runs are drawn as one vertical stroke per pixel column, from the lowest to the highest value falling in it",
            values.len()
        ));
    } else if values.len() > MANY_RUNS {
        caption.push_str(&format!(
            "; with {} runs the markers are drawn small",
            values.len()
        ));
    }
    caption.push('.');
    Ok(Some(Figure {
        response: response.id.clone(),
        kind: "run-order",
        file: format!("run-order-{}.svg", response.id),
        svg,
        csv,
        caption,
        alt: format!(
            "Run-order chart of {}: {} runs plotted in the order performed, {} of them nominal runs{}.",
            response.name,
            values.len(),
            nominal,
            if excluded > 0 {
                format!(" and {excluded} excluded")
            } else {
                String::new()
            }
        ),
    }))
}

//! The main-effects plot: the model's means at the low and the high level of each factor.

use crate::analysis::ResponseAnalysis;
use crate::pipeline::Evaluated;
use crate::plot::{self, PlotError};
use crate::report::format::{Numbers, fixed, setting_of, unit_suffix};

use super::{
    Figure, basis_text, csv_number, csv_of, level_text, model_intercept, short_title, term_effect,
    titled,
};

/// The model's means at the low and high level of a column with effect `e` about intercept
/// `b0`: b0 − E/2 and b0 + E/2, whose difference is E exactly (Box, Hunter & Hunter 2005,
/// §5.8: an effect is the difference of the two level means).
pub(super) fn level_means(b0: f64, e: f64) -> (f64, f64) {
    (b0 - e / 2.0, b0 + e / 2.0)
}

pub(super) fn main_effects_figure(
    evaluated: &Evaluated,
    response: &ResponseAnalysis,
) -> Result<Result<Figure, String>, PlotError> {
    let numbers = Numbers::of(&evaluated.study, response);
    let b0 = model_intercept(response);
    let mut panels = Vec::new();
    let mut rows = Vec::new();
    for factor in &evaluated.study.factors {
        let Some(e) = term_effect(response, &[factor.id.as_str()]) else {
            continue;
        };
        let (mean_low, mean_high) = level_means(b0, e.effect);
        rows.push(vec![
            factor.id.clone(),
            setting_of(factor, -1),
            setting_of(factor, 1),
            csv_number(mean_low),
            csv_number(mean_high),
            csv_number(e.effect),
            csv_number(b0),
        ]);
        panels.push(plot::MainEffectPanel {
            factor: factor.name.clone(),
            low_label: level_text(factor, -1),
            high_label: level_text(factor, 1),
            mean_low,
            mean_high,
        });
    }
    if panels.is_empty() {
        return Ok(Err(format!(
            "No main-effects plot of {}: the effects table has no main effect to draw.",
            response.name
        )));
    }
    if !b0.is_finite() {
        return Ok(Err(format!(
            "No main-effects plot of {}: the model has no finite intercept.",
            response.name
        )));
    }
    let d = numbers.derived_decimals();
    let alt = format!(
        "Main-effects plot of {}: {}.",
        response.name,
        panels
            .iter()
            .map(|p| format!(
                "{} {} at {} and {} at {}",
                p.factor,
                fixed(p.mean_low, d),
                p.low_label,
                fixed(p.mean_high, d),
                p.high_label
            ))
            .collect::<Vec<_>>()
            .join("; ")
    );
    let svg = plot::main_effects(&plot::MainEffects {
        panels,
        grand_mean: b0,
        grand_mean_label: "intercept".to_string(),
        y_title: short_title(response),
    })?;
    let csv = csv_of(
        &[
            "factor",
            "low_level",
            "high_level",
            "mean_low",
            "mean_high",
            "effect",
            "intercept",
        ],
        &rows,
    );
    Ok(Ok(Figure {
        response: response.id.clone(),
        kind: "main-effects",
        file: format!("main-effects-{}.svg", response.id),
        svg,
        csv,
        caption: format!(
            "Model means of {} at the low and the high level of each factor{}: intercept − E/2 and intercept + E/2, so the two points of a factor differ by exactly its main effect E in the effects table. The dashed line is the intercept, {}{}.",
            titled(response),
            basis_text(response),
            numbers.derived(b0),
            unit_suffix(response.unit.as_deref())
        ),
        alt,
    }))
}

//! The bar chart of the absolute percent effects, largest first, against the strictest
//! declared limit.

use crate::analysis::{Effect, LimitSummary, ResponseAnalysis};
use crate::plot::{self, PlotError, RefLine};
use crate::report::format::{fixed, setting};
use crate::study::LimitUnit;

use super::{Figure, MAX_DRAWN, csv_number, csv_of, pct, short_label};

/// The acceptance limit of one response as a |% effect|: the strictest declared limit, an
/// absolute limit L converted to 100·L/|reference|. `None` without a limit.
pub(super) fn percent_limit(response: &ResponseAnalysis) -> Option<f64> {
    strictest_percent(&response.limits, response.reference)
}

/// The strictest of `limits` as a |% effect| against `reference` (see [`percent_limit`]).
pub(super) fn strictest_percent(limits: &[LimitSummary], reference: f64) -> Option<f64> {
    limits
        .iter()
        .map(|l| match l.unit {
            LimitUnit::Percent => l.limit,
            LimitUnit::Absolute => 100.0 * l.limit / reference.abs(),
        })
        .filter(|v| v.is_finite())
        .min_by(f64::total_cmp)
}

pub(super) fn effect_bars_figure(response: &ResponseAnalysis) -> Result<Figure, PlotError> {
    let mut largest: Vec<&Effect> = response.effects.iter().collect();
    largest.sort_by(|a, b| pct(b).abs().total_cmp(&pct(a).abs()));
    largest.truncate(MAX_DRAWN);
    let limit = percent_limit(response);
    let mut rows: Vec<Vec<String>> = largest
        .iter()
        .map(|e| {
            vec![
                "effect".to_string(),
                short_label(e),
                e.label.clone(),
                csv_number(pct(e)),
            ]
        })
        .collect();
    rows.extend(limit.map(|l| {
        vec![
            "acceptance limit".to_string(),
            "limit".to_string(),
            String::new(),
            csv_number(l),
        ]
    }));
    let csv = csv_of(&["series", "label", "term", "percent_effect"], &rows);
    let bars = largest
        .into_iter()
        .map(|e| plot::Bar {
            label: short_label(e),
            value: pct(e),
        })
        .collect();
    let svg = plot::effect_bars(&plot::EffectBars {
        bars,
        limit: limit.map(|value| RefLine {
            name: "limit".to_string(),
            value,
        }),
        x_title: "|effect| (% of the reference)".to_string(),
    })?;
    let caption = format!(
        "Absolute percent effects on {}, largest first{}{}.",
        response.name,
        if response.effects.len() > MAX_DRAWN {
            format!(" (the {MAX_DRAWN} largest of {})", response.effects.len())
        } else {
            String::new()
        },
        match limit {
            Some(l) => format!(
                "; the dashed line is the acceptance limit of {} % and bars beyond it are drawn in red",
                // An absolute limit turned into percent is a computed number: 4 significant
                // figures, as every derived number (a declared percent limit prints as given).
                setting({
                    let scale =
                        10f64.powi(3 - l.abs().max(f64::MIN_POSITIVE).log10().floor() as i32);
                    (l * scale).round() / scale
                })
            ),
            None => "; no acceptance limit was declared".to_string(),
        }
    );
    let mut sorted: Vec<&Effect> = response.effects.iter().collect();
    sorted.sort_by(|a, b| pct(b).abs().total_cmp(&pct(a).abs()));
    let alt = format!(
        "Bar chart of the absolute percent effects on {}: {}.",
        response.name,
        sorted
            .iter()
            .take(5)
            .map(|e| format!("{} {} %", short_label(e), fixed(pct(e).abs(), 2)))
            .collect::<Vec<_>>()
            .join(", ")
            + if sorted.len() > 5 {
                " and smaller ones"
            } else {
                ""
            }
    );
    Ok(Figure {
        response: response.id.clone(),
        kind: "effect-bars",
        file: format!("effect-bars-{}.svg", response.id),
        svg,
        csv,
        caption,
        alt,
    })
}

//! The half-normal plot of the effects (Daniel 1959) and its reference lines: the declared
//! limits as effects and the first statistical criterion.

use crate::analysis::quantile::half_normal_scores;
use crate::analysis::{Effect, LimitSummary, ResponseAnalysis};
use crate::plot::{self, PlotError, RefLine};
use crate::report::format::{Numbers, fixed, setting, unit_suffix};
use crate::report::wording::and_list;
use crate::study::LimitUnit;

use super::{Figure, MAX_DRAWN, csv_number, csv_of, short_label, titled};

/// The vertical reference lines of the half-normal plot of one response, in the response's
/// unit (|E|).
///
/// Today: each declared acceptance limit, a percent limit L converted to an effect as
/// L·|reference|/100 (the inverse of the percent effect 100·E/reference, Vander Heyden et al.,
/// J. Pharm. Biomed. Anal. 24 (2001) 723–753, §6.1). Statistical critical effects (E_crit,
/// Lenth's ME and SME) belong here too, after the limits: the plot colours points beyond the
/// first line, so the practical limit stays first.
pub(super) fn reference_lines(response: &ResponseAnalysis) -> Vec<RefLine> {
    let mut lines = limit_lines(
        &response.limits,
        response.reference,
        response.unit.as_deref(),
    );
    // The first statistical criterion: E_crit, or Lenth's ME and SME.
    if let Some(c) = response
        .criteria
        .iter()
        .find(|c| c.method != "effect-limit")
    {
        match (c.me, c.sme, c.e_crit) {
            (Some(me), Some(sme), _) => {
                lines.push(RefLine {
                    name: "ME".into(),
                    value: me,
                });
                lines.push(RefLine {
                    name: "SME".into(),
                    value: sme,
                });
            }
            (_, _, Some(e)) => lines.push(RefLine {
                name: "E_crit".into(),
                value: e,
            }),
            _ => {}
        }
    }
    lines.retain(|l| l.value.is_finite() && l.value > 0.0);
    lines
}

/// The declared limits as vertical lines in the response's unit (see [`reference_lines`]).
pub(super) fn limit_lines(
    limits: &[LimitSummary],
    reference: f64,
    unit: Option<&str>,
) -> Vec<RefLine> {
    let unit = unit.map(|u| format!(" {u}")).unwrap_or_default();
    limits
        .iter()
        .filter(|l| l.limit.is_finite())
        .map(|l| match l.unit {
            LimitUnit::Percent => RefLine {
                name: format!("limit ({} %)", setting(l.limit)),
                value: l.limit * reference.abs() / 100.0,
            },
            LimitUnit::Absolute => RefLine {
                name: format!("limit ({}{unit})", setting(l.limit)),
                value: l.limit,
            },
        })
        .filter(|l| l.value.is_finite())
        .collect()
}

/// Effects labelled in a half-normal plot of more than [`MAX_DRAWN`] effects (the largest).
pub(super) const LABELLED_OF_MANY: usize = 10;

pub(super) fn half_normal_figure(
    response: &ResponseAnalysis,
    numbers: Numbers,
) -> Result<Figure, PlotError> {
    // Daniel (1959): the i-th smallest of m absolute effects is plotted against the
    // half-normal quantile of (i − 0.5)/m; ties keep design order (stable sort).
    let mut effects: Vec<&Effect> = response.effects.iter().collect();
    effects.sort_by(|a, b| a.effect.abs().total_cmp(&b.effect.abs()));
    let scores = half_normal_scores(effects.len());
    // Scores come from all m effects; a large design draws only its upper tail, where the real
    // effects stand out, so the labels stay readable.
    let skip = effects.len().saturating_sub(MAX_DRAWN);
    // A large design labels only its largest effects; the crowded tail stays unlabelled.
    let unlabelled = if skip > 0 {
        effects.len().saturating_sub(LABELLED_OF_MANY)
    } else {
        0
    };
    let points = effects
        .iter()
        .zip(scores)
        .enumerate()
        .skip(skip)
        .map(|(i, (e, score))| plot::HalfNormalPoint {
            label: if i >= unlabelled {
                short_label(e)
            } else {
                String::new()
            },
            abs_effect: e.effect.abs(),
            score,
        })
        .collect();
    let lines = reference_lines(response);
    let mut rows: Vec<Vec<String>> = effects
        .iter()
        .zip(half_normal_scores(effects.len()))
        .skip(skip)
        .map(|(e, score)| {
            vec![
                "effect".to_string(),
                short_label(e),
                e.label.clone(),
                csv_number(e.effect.abs()),
                csv_number(score),
            ]
        })
        .collect();
    rows.extend(lines.iter().map(|l| {
        vec![
            "reference line".to_string(),
            l.name.clone(),
            String::new(),
            csv_number(l.value),
            String::new(),
        ]
    }));
    let csv = csv_of(
        &["series", "label", "term", "abs_effect", "half_normal_score"],
        &rows,
    );
    let svg = plot::half_normal(&plot::HalfNormal {
        points,
        lines: lines.clone(),
        x_title: match &response.unit {
            Some(u) => format!("|effect| ({u})"),
            None => "|effect|".to_string(),
        },
        y_title: "half-normal score".to_string(),
    })?;
    let dummies = response.effects.iter().filter(|e| e.dummy).count();
    let aliased = response.effects.iter().any(|e| !e.estimable);
    let mut caption = format!(
        "Half-normal plot of the {} absolute effects on {}{}. Effects that are noise lie near a straight line through the origin; real effects stand off to the right.",
        response.effects.len(),
        titled(response),
        if dummies > 0 {
            format!(", dummy columns included ({dummies})")
        } else {
            String::new()
        },
    );
    if response.effects.len() > MAX_DRAWN {
        caption.push_str(&format!(
            " Only the {MAX_DRAWN} largest are drawn, the {LABELLED_OF_MANY} largest labelled; their scores are those among all {}.",
            response.effects.len()
        ));
    }
    let described: Vec<String> = lines
        .iter()
        .map(|l| {
            let what = if l.name.starts_with("limit") {
                "the acceptance limit expressed as an effect".to_string()
            } else if l.name == "E_crit" {
                "the critical effect E_crit of the first statistical criterion".to_string()
            } else {
                format!("Lenth's {}", l.name)
            };
            format!(
                "{what} ({}{})",
                fixed(l.value, numbers.derived_decimals()),
                unit_suffix(response.unit.as_deref())
            )
        })
        .collect();
    if !described.is_empty() {
        caption.push_str(&format!(
            " Vertical lines: {}; points beyond the first are drawn in red.",
            and_list(&described)
        ));
    }
    if aliased {
        caption.push_str(" Aliased columns are labelled with their first term; the alias table gives the whole chain.");
    }
    let largest = effects.last();
    let alt = match largest {
        Some(e) => format!(
            "Half-normal plot of {} absolute effects on {}. The largest is {} with {}{}.{}",
            response.effects.len(),
            response.name,
            short_label(e),
            fixed(e.effect.abs(), numbers.derived_decimals()),
            unit_suffix(response.unit.as_deref()),
            lines
                .first()
                .map(|l| format!(
                    " A vertical line marks the limit at {}{}.",
                    fixed(l.value, numbers.derived_decimals()),
                    unit_suffix(response.unit.as_deref())
                ))
                .unwrap_or_default()
        ),
        None => format!("Half-normal plot of the effects on {}.", response.name),
    };
    Ok(Figure {
        response: response.id.clone(),
        kind: "halfnormal",
        file: format!("halfnormal-{}.svg", response.id),
        svg,
        csv,
        caption,
        alt,
    })
}

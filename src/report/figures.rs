//! The chapter's figures: from the analysed study to one SVG file per picture, each with the
//! caption and the alt text the PDF shows beside it.
//!
//! The plot functions in `crate::plot` draw whatever they are given; this module decides what
//! each figure shows (which effects, which means, which reference lines), so the numbers in a
//! figure are the numbers of the tables. Same input, same bytes: everything is taken in design
//! or run order, never from a hash map.

use crate::analysis::quantile::half_normal_scores;
use crate::analysis::{Effect, LimitSummary, ResponseAnalysis};
use crate::design::PlannedRun;
use crate::pipeline::Evaluated;
use crate::plot::{self, PlotError, RefLine};
use crate::study::{Factor, LimitUnit};

use super::context::setting_of;
use super::format::{fixed, setting};

/// One figure of the chapter.
#[derive(Debug, Clone, PartialEq)]
pub struct Figure {
    /// Id of the response the figure belongs to.
    pub response: String,
    /// What the figure is: `halfnormal`, `effects`, `main-effects`, `interaction`, `run-order`.
    pub kind: &'static str,
    /// File name in the report folder, e.g. `halfnormal-assay.svg`.
    pub file: String,
    /// The SVG document.
    pub svg: String,
    /// Caption printed under the figure (plain text; the template escapes it).
    pub caption: String,
    /// Alternative text for readers who cannot see the picture (PDF/UA, screen readers).
    pub alt: String,
}

/// Every figure of the chapter, response by response, in the order the chapter shows them:
/// half-normal plot, bar chart of |% effect|, main effects, interactions, run order.
///
/// Errors: a plot function refused its input (only possible for values no valid study
/// produces, e.g. a NaN mean).
pub fn build(evaluated: &Evaluated) -> Result<Vec<Figure>, PlotError> {
    let mut out = Vec::new();
    for (r, response) in evaluated.analysis.responses.iter().enumerate() {
        let means = run_means(evaluated, r);
        if !response.effects.is_empty() {
            out.push(half_normal_figure(response)?);
            out.push(effect_bars_figure(response)?);
        }
        if let Some(f) = main_effects_figure(evaluated, response, &means)? {
            out.push(f);
        }
        out.extend(interaction_figures(evaluated, response, &means)?);
        if let Some(f) = run_order_figure(evaluated, response, &means)? {
            out.push(f);
        }
    }
    Ok(out)
}

/// The vertical reference lines of the half-normal plot of one response, in the response's
/// unit (|E|).
///
/// Today: each declared acceptance limit, a percent limit L converted to an effect as
/// L·|reference|/100 (the inverse of the percent effect 100·E/reference, Vander Heyden et al.,
/// J. Pharm. Biomed. Anal. 24 (2001) 723–753, §6.1). Statistical critical effects (E_crit,
/// Lenth's ME and SME) belong here too, after the limits: the plot colours points beyond the
/// first line, so the practical limit stays first.
pub fn reference_lines(response: &ResponseAnalysis) -> Vec<RefLine> {
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
pub fn limit_lines(limits: &[LimitSummary], reference: f64, unit: Option<&str>) -> Vec<RefLine> {
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

/// The acceptance limit of one response as a |% effect|: the strictest declared limit, an
/// absolute limit L converted to 100·L/|reference|. `None` without a limit.
pub fn percent_limit(response: &ResponseAnalysis) -> Option<f64> {
    strictest_percent(&response.limits, response.reference)
}

/// The strictest of `limits` as a |% effect| against `reference` (see [`percent_limit`]).
pub fn strictest_percent(limits: &[LimitSummary], reference: f64) -> Option<f64> {
    limits
        .iter()
        .map(|l| match l.unit {
            LimitUnit::Percent => l.limit,
            LimitUnit::Absolute => 100.0 * l.limit / reference.abs(),
        })
        .filter(|v| v.is_finite())
        .min_by(f64::total_cmp)
}

/// The label of an effect in a figure: its own term (`temp×ph`, `d1`), not the whole alias
/// chain, which the alias table and the effects table print in full.
pub fn short_label(effect: &Effect) -> String {
    effect.factors.join("×")
}

fn titled(response: &ResponseAnalysis) -> String {
    match &response.unit {
        Some(u) => format!("{} ({u})", response.name),
        None => response.name.clone(),
    }
}

/// Most characters of an axis title along a short panel; longer response names give way to the
/// response id (the caption carries the full name).
const SHORT_TITLE_CHARS: usize = 28;

fn short_title(response: &ResponseAnalysis) -> String {
    let full = titled(response);
    if full.chars().count() <= SHORT_TITLE_CHARS {
        return full;
    }
    match &response.unit {
        Some(u) => format!("{} ({u})", response.id),
        None => response.id.clone(),
    }
}

fn unit_suffix(response: &ResponseAnalysis) -> String {
    response
        .unit
        .as_deref()
        .map(|u| format!(" {u}"))
        .unwrap_or_default()
}

/// Mean of each run's determinations for response `r`, indexed like `design.runs`
/// (`None` when the run has no value).
fn run_means(evaluated: &Evaluated, r: usize) -> Vec<Option<f64>> {
    evaluated
        .design
        .runs
        .iter()
        .map(|run| {
            let vals = evaluated.data.values.get(&run.id)?.get(r)?;
            if vals.is_empty() {
                return None;
            }
            let m = vals.iter().sum::<f64>() / vals.len() as f64;
            m.is_finite().then_some(m)
        })
        .collect()
}

fn mean(values: impl Iterator<Item = f64>) -> Option<f64> {
    let (sum, n) = values.fold((0.0, 0usize), |(s, n), v| (s + v, n + 1));
    (n > 0).then(|| sum / n as f64)
}

/// Mean response of the two-level runs for which `keep(coded levels)` holds.
fn mean_where(
    runs: &[PlannedRun],
    means: &[Option<f64>],
    keep: impl Fn(&[i8]) -> bool,
) -> Option<f64> {
    mean(
        runs.iter()
            .zip(means)
            .filter(|(run, _)| !run.nominal && keep(&run.coded))
            .filter_map(|(_, m)| *m),
    )
}

/// A level as a reader sees it in a figure: `33 °C`, `2.9`, `L-0412`.
fn level_text(factor: &Factor, coded: i8) -> String {
    let text = setting_of(factor, coded);
    match (factor.is_numeric(), &factor.unit) {
        (true, Some(u)) => format!("{text} {u}"),
        _ => text,
    }
}

/// Most effects drawn in one half-normal plot or bar chart.
pub const MAX_DRAWN: usize = 63;

fn half_normal_figure(response: &ResponseAnalysis) -> Result<Figure, PlotError> {
    // Daniel (1959): the i-th smallest of m absolute effects is plotted against the
    // half-normal quantile of (i − 0.5)/m; ties keep design order (stable sort).
    let mut effects: Vec<&Effect> = response.effects.iter().collect();
    effects.sort_by(|a, b| a.effect.abs().total_cmp(&b.effect.abs()));
    let scores = half_normal_scores(effects.len());
    // Scores come from all m effects; a large design draws only its upper tail, where the real
    // effects stand out, so the labels stay readable.
    let skip = effects.len().saturating_sub(MAX_DRAWN);
    let points = effects
        .iter()
        .zip(scores)
        .skip(skip)
        .map(|(e, score)| plot::HalfNormalPoint {
            label: short_label(e),
            abs_effect: e.effect.abs(),
            score,
        })
        .collect();
    let lines = reference_lines(response);
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
            " Only the {MAX_DRAWN} largest are drawn; their scores are those among all {}.",
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
                fixed(l.value, response.decimals + 1),
                unit_suffix(response)
            )
        })
        .collect();
    if !described.is_empty() {
        caption.push_str(&format!(
            " Vertical lines: {}; points beyond the first are drawn in red.",
            crate::report::conclusion::and_list(&described)
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
            fixed(e.effect.abs(), response.decimals + 1),
            unit_suffix(response),
            lines
                .first()
                .map(|l| format!(
                    " A vertical line marks the limit at {}{}.",
                    fixed(l.value, response.decimals + 1),
                    unit_suffix(response)
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
        caption,
        alt,
    })
}

fn effect_bars_figure(response: &ResponseAnalysis) -> Result<Figure, PlotError> {
    let mut largest: Vec<&Effect> = response.effects.iter().collect();
    largest.sort_by(|a, b| pct(b).abs().total_cmp(&pct(a).abs()));
    largest.truncate(MAX_DRAWN);
    let bars = largest
        .into_iter()
        .map(|e| plot::Bar {
            label: short_label(e),
            value: pct(e),
        })
        .collect();
    let limit = percent_limit(response);
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
                setting(l)
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
        kind: "effects",
        file: format!("effects-{}.svg", response.id),
        svg,
        caption,
        alt,
    })
}

fn main_effects_figure(
    evaluated: &Evaluated,
    response: &ResponseAnalysis,
    means: &[Option<f64>],
) -> Result<Option<Figure>, PlotError> {
    let runs = &evaluated.design.runs;
    let mut panels = Vec::new();
    for (j, factor) in evaluated.study.factors.iter().enumerate() {
        let low = mean_where(runs, means, |c| c.get(j) == Some(&-1));
        let high = mean_where(runs, means, |c| c.get(j) == Some(&1));
        if let (Some(mean_low), Some(mean_high)) = (low, high) {
            panels.push(plot::MainEffectPanel {
                factor: factor.name.clone(),
                low_label: level_text(factor, -1),
                high_label: level_text(factor, 1),
                mean_low,
                mean_high,
            });
        }
    }
    let Some(grand_mean) = mean_where(runs, means, |_| true) else {
        return Ok(None);
    };
    if panels.is_empty() {
        return Ok(None);
    }
    let alt = format!(
        "Main-effects plot of {}: {}.",
        response.name,
        panels
            .iter()
            .map(|p| format!(
                "{} {} at {} and {} at {}",
                p.factor,
                fixed(p.mean_low, response.decimals + 1),
                p.low_label,
                fixed(p.mean_high, response.decimals + 1),
                p.high_label
            ))
            .collect::<Vec<_>>()
            .join("; ")
    );
    let svg = plot::main_effects(&plot::MainEffects {
        panels,
        grand_mean,
        grand_mean_label: "mean of the two-level runs".to_string(),
        y_title: short_title(response),
    })?;
    Ok(Some(Figure {
        response: response.id.clone(),
        kind: "main-effects",
        file: format!("main-effects-{}.svg", response.id),
        svg,
        caption: format!(
            "Mean {} at the low and the high level of each factor (two-level runs only); the difference is the main effect. The dashed line is the mean of the two-level runs.",
            titled(response)
        ),
        alt,
    }))
}

/// Two-factor interactions worth a picture: estimable (no other term of the orders shown
/// shares the column, so the picture is of this interaction alone) and relevant or
/// significant, or listed under `figures.interactions` in the study (then an alias chain, if
/// any, is named on the figure).
fn interaction_figures(
    evaluated: &Evaluated,
    response: &ResponseAnalysis,
    means: &[Option<f64>],
) -> Result<Vec<Figure>, PlotError> {
    let study = &evaluated.study;
    let design = &evaluated.design;
    let mut out = Vec::new();
    for e in &response.effects {
        let mask = e
            .factors
            .iter()
            .filter_map(|id| study.factors.iter().position(|f| &f.id == id))
            .fold(0u64, |m, i| m | 1u64 << i);
        let listed = study.figure_interactions.contains(&mask)
            || e.aliases.iter().any(|chain| {
                let m = chain
                    .iter()
                    .filter_map(|id| study.factors.iter().position(|f| &f.id == id))
                    .fold(0u64, |m, i| m | 1u64 << i);
                study.figure_interactions.contains(&m)
            });
        let notable = e.relevant == Some(true) || e.significant == Some(true);
        if e.order != 2 || e.dummy || !(listed || (e.estimable && notable)) {
            continue;
        }
        let index = |id: &str| study.factors.iter().position(|f| f.id == id);
        let (Some(ia), Some(ib)) = (
            e.factors.first().and_then(|a| index(a)),
            e.factors.get(1).and_then(|b| index(b)),
        ) else {
            continue;
        };
        let (Some(fa), Some(fb)) = (study.factors.get(ia), study.factors.get(ib)) else {
            continue;
        };
        let mut cells = [[0.0; 2]; 2];
        let mut complete = true;
        for (bi, bl) in [-1i8, 1].iter().enumerate() {
            for (ai, al) in [-1i8, 1].iter().enumerate() {
                match mean_where(&design.runs, means, |c| {
                    c.get(ia) == Some(al) && c.get(ib) == Some(bl)
                }) {
                    Some(m) => cells[bi][ai] = m,
                    None => complete = false,
                }
            }
        }
        if !complete {
            continue;
        }
        let note = if !e.estimable {
            format!("aliased: this column estimates {}", e.label)
        } else if design.complete_factorial {
            "full factorial: no other term shares this column".to_string()
        } else {
            format!(
                "no other term up to order {} shares this column",
                design.structure.alias_order
            )
        };
        let svg = plot::interaction(&plot::Interaction {
            factor_a: fa.name.clone(),
            a_levels: [level_text(fa, -1), level_text(fa, 1)],
            factor_b: fb.name.clone(),
            b_levels: [level_text(fb, -1), level_text(fb, 1)],
            means: cells,
            y_title: titled(response),
            note: Some(note.clone()),
        })?;
        let d = response.decimals + 1;
        let alt = format!(
            "Interaction plot of {} and {} on {}: at {} the means are {} and {} for {} and {}; at {} they are {} and {}.",
            fa.name,
            fb.name,
            response.name,
            level_text(fb, -1),
            fixed(cells[0][0], d),
            fixed(cells[0][1], d),
            level_text(fa, -1),
            level_text(fa, 1),
            level_text(fb, 1),
            fixed(cells[1][0], d),
            fixed(cells[1][1], d),
        );
        out.push(Figure {
            response: response.id.clone(),
            kind: "interaction",
        file: format!("interaction-{}-{}-{}.svg", response.id, fa.id, fb.id),
            svg,
            caption: format!(
                "Interaction {}×{} on {}: mean response at the four combinations of the two factors' levels ({}; interaction effect {}{}, {} %). Non-parallel lines show the interaction.",
                fa.id,
                fb.id,
                response.name,
                note,
                fixed(e.effect, d),
                unit_suffix(response),
                fixed(pct(e), 2)
            ),
            alt,
        });
    }
    Ok(out)
}

fn run_order_figure(
    evaluated: &Evaluated,
    response: &ResponseAnalysis,
    means: &[Option<f64>],
) -> Result<Option<Figure>, PlotError> {
    let runs: Vec<plot::Run> = evaluated
        .design
        .runs
        .iter()
        .zip(means)
        .filter_map(|(run, m)| {
            Some(plot::Run {
                order: u32::try_from(run.order).ok()?,
                response: (*m)?,
                nominal: run.nominal,
            })
        })
        .collect();
    if runs.is_empty() {
        return Ok(None);
    }
    let nominal = runs.iter().filter(|r| r.nominal).count();
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
    let svg = plot::run_order(&plot::RunOrder {
        runs,
        drift,
        limits,
        x_title: "run order".to_string(),
        y_title: titled(response),
        run_label: "two-level run".to_string(),
        nominal_label: "nominal run".to_string(),
        drift_label: "drift (least squares)".to_string(),
    })?;
    let caption = format!(
        "{} of every run in the order performed{}.",
        titled(response),
        if nominal > 0 {
            format!(
                "; the {nominal} nominal runs are marked as diamonds and joined, so a trend over time shows"
            )
        } else {
            String::new()
        }
    );
    Ok(Some(Figure {
        response: response.id.clone(),
        kind: "run-order",
        file: format!("run-order-{}.svg", response.id),
        svg,
        caption,
        alt: format!(
            "Run-order chart of {}: {} runs plotted in the order performed, {} of them nominal runs.",
            response.name,
            evaluated.design.runs.len(),
            nominal
        ),
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn limit(limit: f64, unit: LimitUnit) -> LimitSummary {
        LimitSummary {
            limit,
            unit,
            basis: None,
        }
    }

    #[test]
    fn a_percent_limit_becomes_an_effect_of_limit_times_reference_over_100() {
        // 2 % of 99.8 is 1.996 (arithmetic).
        let lines = limit_lines(
            &[limit(2.0, LimitUnit::Percent)],
            99.8,
            Some("% label claim"),
        );
        assert_eq!(lines.len(), 1);
        assert!((lines[0].value - 1.996).abs() < 1e-12);
        assert_eq!(lines[0].name, "limit (2 %)");
    }

    #[test]
    fn an_absolute_limit_is_drawn_as_declared() {
        let limits = [limit(0.5, LimitUnit::Absolute)];
        let lines = limit_lines(&limits, 99.8, Some("mg"));
        assert_eq!(lines[0].value, 0.5);
        assert_eq!(lines[0].name, "limit (0.5 mg)");
        // 0.5 of 99.8 is 0.50100… % (arithmetic).
        assert!((strictest_percent(&limits, 99.8).unwrap() - 50.0 / 99.8).abs() < 1e-12);
    }

    #[test]
    fn the_strictest_of_several_limits_is_drawn_on_the_bar_chart() {
        // 1.0 absolute against 50 is 2 %, stricter than 3 % (arithmetic).
        let limits = [
            limit(3.0, LimitUnit::Percent),
            limit(1.0, LimitUnit::Absolute),
        ];
        assert!((strictest_percent(&limits, 50.0).unwrap() - 2.0).abs() < 1e-12);
    }

    #[test]
    fn no_limit_means_no_reference_line() {
        assert!(limit_lines(&[], 99.8, None).is_empty());
        assert_eq!(strictest_percent(&[], 99.8), None);
    }

    #[test]
    fn a_zero_reference_gives_no_percent_limit_instead_of_infinity() {
        assert_eq!(
            strictest_percent(&[limit(1.0, LimitUnit::Absolute)], 0.0),
            None
        );
    }
}

/// A percent effect, NaN when undefined (a zero reference): NaN sorts last and prints as "–".
fn pct(e: &crate::analysis::Effect) -> f64 {
    e.percent.unwrap_or(f64::NAN)
}

//! The chapter's figures: from the analysed study to one SVG file per picture, each with the
//! caption and the alt text the PDF shows beside it.
//!
//! The plot functions in `crate::plot` draw whatever they are given; this module decides what
//! each figure shows (which effects, which means, which reference lines), so the numbers in a
//! figure are the numbers of the tables. Same input, same bytes: everything is taken in design
//! or run order, never from a hash map.

use crate::analysis::quantile::half_normal_scores;
use crate::analysis::{Effect, LimitSummary, ResponseAnalysis};
use crate::pipeline::Evaluated;
use crate::plot::{self, PlotError, RefLine};
use crate::study::{Factor, LimitUnit};

use super::format::{Numbers, fixed, setting, setting_of, unit_suffix};

/// One figure of the chapter.
#[derive(Debug, Clone, PartialEq)]
pub struct Figure {
    /// Id of the response the figure belongs to.
    pub response: String,
    /// What the figure is: `halfnormal`, `effect-bars`, `main-effects`, `interaction`,
    /// `run-order`.
    pub kind: &'static str,
    /// File name in the report folder, e.g. `halfnormal-assay.svg`.
    pub file: String,
    /// The SVG document.
    pub svg: String,
    /// The plotted values as CSV (named columns, full precision, ASCII), written beside the
    /// SVG as [`Figure::csv_file`] so a reviewer can trace every point.
    pub csv: Vec<u8>,
    /// Caption printed under the figure (plain text; the template escapes it).
    pub caption: String,
    /// Alternative text for readers who cannot see the picture (PDF/UA, screen readers).
    pub alt: String,
}

impl Figure {
    /// The name of the CSV file beside the SVG: `X.svg` → `X.csv`.
    pub fn csv_file(&self) -> String {
        match self.file.strip_suffix(".svg") {
            Some(stem) => format!("{stem}.csv"),
            None => format!("{}.csv", self.file),
        }
    }
}

/// A figure the chapter would show but cannot draw meaningfully, with the reason the chapter
/// prints in its place.
#[derive(Debug, Clone, PartialEq)]
pub struct Omitted {
    /// Id of the response.
    pub response: String,
    /// What the figure would have been (as [`Figure::kind`]).
    pub kind: &'static str,
    /// One sentence saying which figure and why, e.g. `No half-normal plot: ...`.
    pub reason: String,
}

/// The chapter's figures: those drawn and those it explains away.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Figures {
    /// Drawn figures, in the order the chapter shows them.
    pub drawn: Vec<Figure>,
    /// Figures not drawn, each with its reason.
    pub omitted: Vec<Omitted>,
}

impl Figures {
    /// The files to write: each figure's SVG and, beside it, its CSV.
    pub fn files(&self) -> Vec<(String, Vec<u8>)> {
        self.drawn
            .iter()
            .flat_map(|f| {
                [
                    (f.file.clone(), f.svg.clone().into_bytes()),
                    (f.csv_file(), f.csv.clone()),
                ]
            })
            .collect()
    }
}

/// Fewest effects for a half-normal plot. Our rule: 7, the contrasts of the smallest
/// two-level screening design (8 runs); with fewer points no line of noise effects can be
/// seen for a real effect to stand off (Daniel 1959 judges the plot by that line).
pub const MIN_HALF_NORMAL: usize = 7;

/// Every figure of the chapter, response by response, in the order the chapter shows them:
/// half-normal plot, bar chart of |% effect|, main effects, interactions, run order; and the
/// figures that cannot be drawn, with the reason.
///
/// Every plotted value is one the analysis used: effects from the effects table, means from
/// the model (intercept ± E/2), run values after exclusion and drift correction.
///
/// Errors: a plot function refused its input (only possible for values no valid study
/// produces, e.g. a NaN mean).
pub fn build(evaluated: &Evaluated) -> Result<Figures, PlotError> {
    let mut out = Figures::default();
    for response in &evaluated.analysis.responses {
        if response.effects.is_empty() {
            out.omitted.push(Omitted {
                response: response.id.clone(),
                kind: "halfnormal",
                reason: format!(
                    "No half-normal plot or bar chart of the effects on {}: the analysis estimated no effects.",
                    response.name
                ),
            });
        } else {
            if response.effects.len() < MIN_HALF_NORMAL {
                out.omitted.push(Omitted {
                    response: response.id.clone(),
                    kind: "halfnormal",
                    reason: format!(
                        "No half-normal plot of the effects on {}: {} effects are fewer than the {MIN_HALF_NORMAL} this chapter requires, too few for the noise effects to form a line that a real effect could stand off.",
                        response.name,
                        response.effects.len()
                    ),
                });
            } else {
                out.drawn.push(half_normal_figure(
                    response,
                    Numbers::of(&evaluated.study, response),
                )?);
            }
            out.drawn.push(effect_bars_figure(response)?);
        }
        match main_effects_figure(evaluated, response)? {
            Ok(f) => out.drawn.push(f),
            Err(reason) => out.omitted.push(Omitted {
                response: response.id.clone(),
                kind: "main-effects",
                reason,
            }),
        }
        let (drawn, omitted) = interaction_figures(evaluated, response)?;
        out.drawn.extend(drawn);
        out.omitted.extend(omitted);
        match run_order_figure(evaluated, response)? {
            Some(f) => out.drawn.push(f),
            None => out.omitted.push(Omitted {
                response: response.id.clone(),
                kind: "run-order",
                reason: format!(
                    "No run-order chart of {}: no run has a value.",
                    response.name
                ),
            }),
        }
    }
    Ok(out)
}

/// The intercept the model-based means are drawn about: b₀ of the response's one fitted
/// model (the mean of the two-level runs for an orthogonal design without exclusions).
pub fn model_intercept(r: &ResponseAnalysis) -> f64 {
    r.intercept
}

/// The model's means at the low and high level of a column with effect `e` about intercept
/// `b0`: b0 − E/2 and b0 + E/2, whose difference is E exactly (Box, Hunter & Hunter 2005,
/// §5.8: an effect is the difference of the two level means).
pub fn level_means(b0: f64, e: f64) -> (f64, f64) {
    (b0 - e / 2.0, b0 + e / 2.0)
}

/// The model's mean of the cell (a, b) (coded ±1) of a two-factor interaction:
/// b0 + a·E_A/2 + b·E_B/2 + a·b·E_AB/2, so that the cell means reproduce E_A, E_B and E_AB of
/// the effects table (Box, Hunter & Hunter 2005, §5.8).
pub fn cell_mean(b0: f64, e_a: f64, e_b: f64, e_ab: f64, a: i8, b: i8) -> f64 {
    let (a, b) = (f64::from(a), f64::from(b));
    b0 + a * e_a / 2.0 + b * e_b / 2.0 + a * b * e_ab / 2.0
}

/// The effect of exactly the term made of `ids` (any order), if the table has one.
fn term_effect<'a>(response: &'a ResponseAnalysis, ids: &[&str]) -> Option<&'a Effect> {
    response.effects.iter().find(|e| {
        !e.dummy
            && e.factors.len() == ids.len()
            && ids.iter().all(|id| e.factors.iter().any(|f| f == id))
    })
}

/// Full-precision text of a number for the CSV files (ASCII `-`, shortest exact form).
fn csv_number(x: f64) -> String {
    x.to_string()
}

fn csv_of(header: &[&str], rows: &[Vec<String>]) -> Vec<u8> {
    let header: Vec<String> = header.iter().map(|h| h.to_string()).collect();
    crate::output::csv_bytes(&header, rows)
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

/// Effects labelled in a half-normal plot of more than [`MAX_DRAWN`] effects (the largest).
pub const LABELLED_OF_MANY: usize = 10;

fn half_normal_figure(response: &ResponseAnalysis, numbers: Numbers) -> Result<Figure, PlotError> {
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

fn effect_bars_figure(response: &ResponseAnalysis) -> Result<Figure, PlotError> {
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

/// Runs left out of the evaluation of `response`, as `run 4` / `runs 4 and 7`, or `None`.
fn excluded_runs_text(response: &ResponseAnalysis) -> Option<String> {
    let ids: Vec<String> = response
        .values
        .iter()
        .filter(|v| v.excluded)
        .map(|v| v.run.clone())
        .collect();
    match ids.len() {
        0 => None,
        1 => Some(format!("run {}", ids.join(""))),
        _ => Some(format!(
            "runs {}",
            crate::report::conclusion::and_list(&ids)
        )),
    }
}

/// True when the analysis corrected the values of `response` for drift.
fn drift_corrected(response: &ResponseAnalysis) -> bool {
    response
        .drift
        .as_ref()
        .is_some_and(|d| d.correction.is_some())
}

/// What the model-based means rest on, for captions: the exclusions and the drift correction.
fn basis_text(response: &ResponseAnalysis) -> String {
    let mut parts = Vec::new();
    if drift_corrected(response) {
        parts.push("drift-corrected values".to_string());
    }
    if let Some(ex) = excluded_runs_text(response) {
        parts.push(format!("{ex} excluded"));
    }
    if parts.is_empty() {
        String::new()
    } else {
        format!(" ({})", parts.join("; "))
    }
}

fn main_effects_figure(
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

/// The factor indices of a term mask, lowest first.
fn mask_factors(mask: u64, n: usize) -> Vec<usize> {
    (0..n.min(64)).filter(|i| mask >> i & 1 == 1).collect()
}

/// The term mask of a list of factor ids.
fn ids_mask(study: &crate::study::Study, ids: &[String]) -> u64 {
    ids.iter()
        .filter_map(|id| study.factors.iter().position(|f| &f.id == id))
        .fold(0u64, |m, i| m | 1u64 << i)
}

/// Two-factor interactions worth a picture: estimable (no other term of the orders shown
/// shares the column, so the picture is of this interaction alone) and relevant or
/// significant, or listed under `figures.interactions` in the study. A listed interaction
/// whose column is shared (aliased) or not estimated is not drawn; the chapter says why and
/// names the chain, since four cell means would show the whole chain, not this term.
fn interaction_figures(
    evaluated: &Evaluated,
    response: &ResponseAnalysis,
) -> Result<(Vec<Figure>, Vec<Omitted>), PlotError> {
    let study = &evaluated.study;
    let mut drawn = Vec::new();
    let mut omitted = Vec::new();
    let mut wanted: Vec<&Effect> = Vec::new();
    for e in &response.effects {
        let notable = e.relevant == Some(true) || e.significant == Some(true);
        if e.order == 2 && !e.dummy && e.estimable && notable {
            wanted.push(e);
        }
    }
    for &mask in &study.figure_interactions {
        let ids: Vec<&Factor> = mask_factors(mask, study.factors.len())
            .into_iter()
            .filter_map(|i| study.factors.get(i))
            .collect();
        let name = ids
            .iter()
            .map(|f| f.id.as_str())
            .collect::<Vec<_>>()
            .join("×");
        let own = response
            .effects
            .iter()
            .find(|e| e.order == 2 && !e.dummy && ids_mask(study, &e.factors) == mask);
        let sharing = response
            .effects
            .iter()
            .find(|e| e.aliases.iter().any(|chain| ids_mask(study, chain) == mask));
        match (own, sharing) {
            (Some(e), _) if e.estimable => {
                if !wanted.iter().any(|w| std::ptr::eq(*w, e)) {
                    wanted.push(e);
                }
            }
            (Some(e), _) | (None, Some(e)) => omitted.push(Omitted {
                response: response.id.clone(),
                kind: "interaction",
                reason: format!(
                    "No interaction plot of {name} on {}, although the study asks for one: its column is shared with other terms (alias chain {}), so cell means would show the sum of the whole chain, not {name} alone.",
                    response.name, e.label
                ),
            }),
            (None, None) => omitted.push(Omitted {
                response: response.id.clone(),
                kind: "interaction",
                reason: format!(
                    "No interaction plot of {name} on {}, although the study asks for one: the analysis estimates no column for this interaction.",
                    response.name
                ),
            }),
        }
    }
    // Design order of the effects table, whatever order the study listed them in.
    wanted.sort_by_key(|w| {
        response
            .effects
            .iter()
            .position(|e| std::ptr::eq(e, *w))
            .unwrap_or(usize::MAX)
    });
    for e in wanted {
        match interaction_figure(evaluated, response, e)? {
            Ok(f) => drawn.push(f),
            Err(reason) => omitted.push(Omitted {
                response: response.id.clone(),
                kind: "interaction",
                reason,
            }),
        }
    }
    Ok((drawn, omitted))
}

fn interaction_figure(
    evaluated: &Evaluated,
    response: &ResponseAnalysis,
    e: &Effect,
) -> Result<Result<Figure, String>, PlotError> {
    let study = &evaluated.study;
    let design = &evaluated.design;
    let numbers = Numbers::of(study, response);
    let find = |id: &str| study.factors.iter().find(|f| f.id == id);
    let (Some(fa), Some(fb)) = (
        e.factors.first().and_then(|a| find(a)),
        e.factors.get(1).and_then(|b| find(b)),
    ) else {
        return Ok(Err(format!(
            "No interaction plot of {} on {}: it does not name two factors of the study.",
            e.label, response.name
        )));
    };
    let (Some(ea), Some(eb)) = (
        term_effect(response, &[fa.id.as_str()]),
        term_effect(response, &[fb.id.as_str()]),
    ) else {
        return Ok(Err(format!(
            "No interaction plot of {}×{} on {}: the effects table lacks a main effect of {} or {}, which the cell means need.",
            fa.id, fb.id, response.name, fa.id, fb.id
        )));
    };
    let b0 = model_intercept(response);
    let mut cells = [[0.0; 2]; 2];
    let mut rows = Vec::new();
    for (bi, bl) in [-1i8, 1].into_iter().enumerate() {
        for (ai, al) in [-1i8, 1].into_iter().enumerate() {
            let m = cell_mean(b0, ea.effect, eb.effect, e.effect, al, bl);
            cells[bi][ai] = m;
            rows.push(vec![
                setting_of(fa, al),
                setting_of(fb, bl),
                al.to_string(),
                bl.to_string(),
                csv_number(m),
            ]);
        }
    }
    let header_a = format!("{}_level", fa.id);
    let header_b = format!("{}_level", fb.id);
    let coded_a = format!("{}_coded", fa.id);
    let coded_b = format!("{}_coded", fb.id);
    let csv = csv_of(&[&header_a, &header_b, &coded_a, &coded_b, "mean"], &rows);
    let note = if design.complete_factorial {
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
    let d = numbers.derived_decimals();
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
    Ok(Ok(Figure {
        response: response.id.clone(),
        kind: "interaction",
        file: format!("interaction-{}-{}-{}.svg", response.id, fa.id, fb.id),
        svg,
        csv,
        caption: format!(
            "Interaction {}×{} on {}: model means at the four combinations of the two factors' levels{}, intercept ± E({})/2 ± E({})/2 ± E({}×{})/2, so the plot reproduces the tabulated effects ({}; interaction effect {}{}, {} %). Non-parallel lines show the interaction.",
            fa.id,
            fb.id,
            response.name,
            basis_text(response),
            fa.id,
            fb.id,
            fa.id,
            fb.id,
            note,
            numbers.derived(e.effect),
            unit_suffix(response.unit.as_deref()),
            fixed(pct(e), crate::report::conclusion::PERCENT_DECIMALS)
        ),
        alt,
    }))
}

/// Runs above which the run-order chart carries no per-run detail in its caption.
const MANY_RUNS: usize = 200;

fn run_order_figure(
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

/// A percent effect, NaN when undefined (a zero reference): NaN sorts last and prints as "–".
fn pct(e: &crate::analysis::Effect) -> f64 {
    e.percent.unwrap_or(f64::NAN)
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

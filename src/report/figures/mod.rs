//! The chapter's figures: from the analysed study to one SVG file per picture, each with the
//! caption and the alt text the PDF shows beside it.
//!
//! The plot functions in `crate::plot` draw whatever they are given; this module decides what
//! each figure shows (which effects, which means, which reference lines), so the numbers in a
//! figure are the numbers of the tables. Same input, same bytes: everything is taken in design
//! or run order, never from a hash map.
//!
//! One file per kind of figure; this file holds what they share: the figure types, the order
//! the chapter shows them in, labels, titles and the CSV beside each SVG.

mod effect_bars;
mod half_normal;
mod interaction;
mod main_effects;
mod run_order;

use crate::analysis::{Effect, ResponseAnalysis};
use crate::pipeline::Evaluated;
use crate::plot::PlotError;
use crate::study::Factor;

use super::format::{Numbers, setting_of};

use effect_bars::effect_bars_figure;
use half_normal::half_normal_figure;
use interaction::interaction_figures;
use main_effects::main_effects_figure;
use run_order::run_order_figure;

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
        _ => Some(format!("runs {}", super::wording::and_list(&ids))),
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

/// A percent effect, NaN when undefined (a zero reference): NaN sorts last and prints as "–".
fn pct(e: &crate::analysis::Effect) -> f64 {
    e.percent.unwrap_or(f64::NAN)
}

#[cfg(test)]
mod tests {
    use crate::analysis::LimitSummary;
    use crate::study::LimitUnit;

    use super::effect_bars::strictest_percent;
    use super::half_normal::limit_lines;

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

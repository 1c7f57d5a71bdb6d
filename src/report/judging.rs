//! The statistical parts of the chapter as printable text: criteria with their numbers, the
//! second verdict, ANOVA, curvature, drift, worst case and system-suitability limit, operating
//! ranges and uncertainty contributions.

use serde::Serialize;

use crate::analysis::ResponseAnalysis;
use crate::analysis::decision::{Distribution, WorseLevel};
use crate::study::Study;

use super::format::{
    Numbers, RATE_DIGITS, SIGNIFICANT, UNCERTAINTY_DIGITS, factor_decimals, factor_unit, fixed,
    p_cell, p_clause, setting, sig, statistic,
};
use super::wording::{factor_name, note_text, precaution_text, significance_text};

/// The statistical blocks of one response.
#[derive(Debug, Default, Serialize)]
pub struct JudgingText {
    /// Each statistical criterion in words with its numbers.
    pub criteria: Vec<String>,
    /// Short names of the statistical criteria (table column headers).
    pub columns: Vec<String>,
    /// Per effect row, one cell per statistical criterion (`yes`, `no`, `–`).
    pub cells: Vec<Vec<String>>,
    /// The statistical verdict in words.
    pub verdict: Option<String>,
    /// ANOVA table rows: source, SS, df, MS, F, p.
    pub anova: Vec<[String; 6]>,
    /// Notes under the ANOVA table.
    pub anova_notes: Vec<String>,
    /// The criteria that judge the effects when the ANOVA is not one of them (the table is
    /// then shown for information, and its p-values need not match the significance column).
    pub anova_beside: Option<String>,
    /// Curvature in words.
    pub curvature: Option<String>,
    /// Drift in words.
    pub drift: Option<String>,
    /// Worst case and proposed limit in words.
    pub worst_case: Option<String>,
    /// Worst-case settings: factor, effect, level.
    pub worst_rows: Vec<[String; 3]>,
    /// Operating ranges: factor, criterion, proposed range, tested range.
    pub ranges: Vec<[String; 4]>,
    /// Precautions for categorical factors.
    pub precautions: Vec<String>,
    /// Uncertainty rows: factor, ±a, distribution, u(x), c, u_i(y).
    pub uncertainty: Vec<[String; 6]>,
    /// Combined standard uncertainty.
    pub combined: Option<String>,
    /// Remarks of the analysis (excluded runs, least squares, ...).
    pub notes: Vec<String>,
}

/// A proposed operating range `low to high`: one decimal more than the factor's levels need
/// (the chapter's number rule), rounded inward so the printed range never allows more than
/// the computed one (32.24 to 37.76 °C beside levels 33 and 37 °C prints as 32.3 to 37.7).
pub fn proposed_range_text(study: &Study, id: &str, low: f64, high: f64) -> String {
    let decimals = study
        .factors
        .iter()
        .find(|f| f.id == id)
        .map_or(2, |f| factor_decimals(f) + 1);
    let scale = 10f64.powi(decimals as i32);
    // The 1e-9 keeps a bound that is already on the grid (2.95 computed as 2.9500000000000002).
    let lo = (low * scale - 1e-9).ceil() / scale;
    let hi = (high * scale + 1e-9).floor() / scale;
    format!("{} to {}", fixed(lo, decimals), fixed(hi, decimals))
}

/// Builds the statistical blocks of a response.
pub fn build(study: &Study, r: &ResponseAnalysis) -> JudgingText {
    let numbers = Numbers::of(study, r);
    let d = numbers.derived_decimals();
    let unit = r
        .unit
        .as_deref()
        .map(|u| format!(" {u}"))
        .unwrap_or_default();
    let mut out = JudgingText {
        notes: r.notes.iter().map(|n| note_text(study, r, n)).collect(),
        ..JudgingText::default()
    };
    let statistical: Vec<&crate::analysis::judge::CriterionSummary> = r
        .criteria
        .iter()
        .filter(|c| c.method != "effect-limit")
        .collect();
    for c in &statistical {
        out.criteria.push(significance_text(r, c));
        out.columns.push(match c.method.as_str() {
            "precision" => "Sig. (s)".to_string(),
            "dummies" => "Sig. (dummies)".to_string(),
            "negligible" => "Sig. (negl.)".to_string(),
            "dong" => "Sig. (Dong)".to_string(),
            "lenth" => "Sig. (Lenth)".to_string(),
            "anova" => "Sig. (ANOVA)".to_string(),
            other => other.to_string(),
        });
    }
    for e in &r.effects {
        let cells = e
            .significance
            .iter()
            .enumerate()
            .map(|(i, v)| match v {
                Some(true) if i == 0 && e.exceeds_sme == Some(true) => "yes (SME)".to_string(),
                Some(true) => "yes".to_string(),
                Some(false) => "no".to_string(),
                None => "–".to_string(),
            })
            .collect();
        out.cells.push(cells);
    }
    if let Some(first) = statistical.first() {
        out.verdict = Some(if first.e_crit.is_none() {
            format!(
                "The first statistical criterion could not judge: {}.",
                first.note.clone().unwrap_or_default()
            )
        } else if r.verdict.significant_terms.is_empty()
            && !r
                .effects
                .iter()
                .any(|e| !e.estimable && e.significant == Some(true))
        {
            "Statistically, no estimated effect is significant.".to_string()
        } else {
            format!(
                "Statistically significant: {}.",
                r.effects
                    .iter()
                    .filter(|e| !e.dummy && e.significant == Some(true))
                    .map(|e| if e.order == 1 && e.estimable {
                        factor_name(study, &e.label)
                    } else {
                        e.label.clone()
                    })
                    .collect::<Vec<_>>()
                    .join(", ")
            )
        });
    }
    if let Some(a) = &r.anova {
        let row = |x: &crate::analysis::anova::AnovaRow| {
            [
                x.source.clone(),
                sig(x.ss, SIGNIFICANT),
                x.df.to_string(),
                x.ms.map_or_else(|| "–".into(), |v| sig(v, SIGNIFICANT)),
                x.f.map_or_else(|| "–".into(), |v| sig(v, SIGNIFICANT)),
                p_cell(x.p),
            ]
        };
        for t in &a.terms {
            out.anova.push(row(t));
        }
        if let Some(cv) = &a.curvature {
            out.anova.push(row(cv));
        }
        if a.lack_of_fit.df > 0 {
            out.anova.push(row(&a.lack_of_fit));
        }
        out.anova.push(row(&a.pure_error));
        out.anova.push(row(&a.total));
        out.anova_notes.extend(a.note.clone());
        let declared: Vec<&str> = r
            .criteria
            .iter()
            .filter(|c| c.method != "effect-limit")
            .map(|c| c.method.as_str())
            .collect();
        if !declared.contains(&"anova") {
            out.anova_beside = Some(if declared.is_empty() {
                "the study declares no statistical criterion".to_string()
            } else {
                format!(
                    "the effects are judged by the declared criteria ({}), not by these F tests",
                    declared.join(", ")
                )
            });
        }
        out.anova_notes.extend(a.warnings.iter().cloned());
    }
    if let Some(c) = r.curvature.as_ref().filter(|c| c.t.is_none()) {
        // Without a usable error there is no test to print, only the difference and why.
        out.curvature = Some(format!(
            "Curvature: the model's prediction at the nominal setting minus the mean of the {} nominal runs = {}{unit}; {}.",
            c.n_centre,
            fixed(c.difference, d),
            c.note.as_deref().unwrap_or("it cannot be tested")
        ));
    } else if let Some(c) = &r.curvature {
        out.curvature = Some(format!(
            "Curvature: the model's prediction at the nominal setting minus the mean of the {} nominal runs = {}{unit}, SE = {}{unit}, t = {}, df = {}, {} (error from {}).",
            c.n_centre,
            fixed(c.difference, d),
            sig(c.se, SIGNIFICANT),
            c.t.map_or_else(|| "–".into(), statistic),
            setting(c.df),
            p_clause(c.p),
            match (r.error.df_replicates > 0, r.error.df_nominal > 0) {
                (true, true) => "the replicated runs and the nominal runs",
                (true, false) => "the replicated runs",
                _ if r.error.nominal_about_drift => "the nominal runs about their drift line",
                _ => "the nominal runs",
            }
        ));
    }
    if let Some(dr) = &r.drift {
        out.drift = Some(match (&dr.check, &dr.note) {
            (Some(c), _) => format!(
                "Drift: the {} nominal runs change by {}{unit} per run in the run order (SE {}{unit} per run, t = {}, df = {}, {}){}.",
                c.n,
                sig(c.slope, RATE_DIGITS),
                sig(c.se_slope, RATE_DIGITS),
                c.t.map_or_else(|| "–".into(), statistic),
                c.df,
                p_clause(c.p),
                match dr.correction {
                    Some(crate::analysis::drift::CorrectionMode::Additive) => "; responses were corrected additively by interpolating between neighbouring nominal runs",
                    Some(crate::analysis::drift::CorrectionMode::Relative) => "; responses were corrected relatively by interpolating between neighbouring nominal runs",
                    None => "; no correction was applied",
                }
            ),
            (None, Some(n)) => format!("Drift: {n}."),
            (None, None) => String::new(),
        })
        .filter(|s| !s.is_empty());
    }
    if let Some(w) = &r.worst_case {
        let lower = w.prediction.direction == crate::analysis::decision::Direction::Lower;
        out.worst_case = Some(format!(
            "Worst case within the studied domain, from the {} effects{}: {} = {}{unit}{}. Proposed system-suitability limit: {} {}{unit}.",
            if w.basis == "all" {
                "main"
            } else {
                w.basis.as_str()
            },
            if w.interactions.is_empty() {
                String::new()
            } else {
                format!(" and the interactions {}", w.interactions.join(", "))
            },
            if w.interactions.is_empty() {
                format!(
                    "ŷ = b₀ {} Σ|E|/2 = {} {} Σ|E|/2",
                    if lower { "−" } else { "+" },
                    fixed(w.prediction.mean, d),
                    if lower { "−" } else { "+" }
                )
            } else {
                "ŷ at the worst corner of the fitted model".to_string()
            },
            numbers.measured(w.prediction.predicted),
            match (w.min, w.max, w.meets) {
                (Some(m), _, Some(true)) =>
                    format!(", which meets the required minimum {}", setting(m)),
                (Some(m), _, Some(false)) => format!(
                    ", below the required minimum {}: the method does not meet it over the whole domain",
                    setting(m)
                ),
                (None, Some(m), Some(true)) =>
                    format!(", which meets the allowed maximum {}", setting(m)),
                (None, Some(m), Some(false)) => format!(
                    ", above the allowed maximum {}: the method does not meet it over the whole domain",
                    setting(m)
                ),
                _ => String::new(),
            },
            if lower { "≥" } else { "≤" },
            numbers.measured(w.proposed_limit),
        ));
        for f in &w.prediction.factors {
            out.worst_rows.push([
                factor_name(study, &f.label),
                fixed(f.effect, d),
                match f.level {
                    WorseLevel::High => "high (+1)".into(),
                    WorseLevel::Low => "low (−1)".into(),
                    WorseLevel::Either => "either".into(),
                },
            ]);
        }
    }
    for c in &r.control_ranges {
        match precaution_text(study, r, c) {
            Some(s) => out.precautions.push(s),
            None => {
                let u = factor_unit(study, &c.factor);
                out.ranges.push([
                    factor_name(study, &c.factor),
                    if c.basis == "relevance" {
                        "acceptance limit".into()
                    } else if r.verdict.robust.is_some() {
                        "statistical criterion (for information)".into()
                    } else {
                        "statistical criterion".into()
                    },
                    match (c.low, c.high) {
                        (Some(lo), Some(hi)) => {
                            format!("{}{u}", proposed_range_text(study, &c.factor, lo, hi))
                        }
                        _ => "–".into(),
                    },
                    format!(
                        "{} to {}{u}",
                        c.tested_low.map(setting).unwrap_or_default(),
                        c.tested_high.map(setting).unwrap_or_default()
                    ),
                ]);
            }
        }
    }
    if let Some(u) = &r.uncertainty {
        for row in &u.rows {
            let fu = factor_unit(study, &row.factor);
            out.uncertainty.push([
                factor_name(study, &row.factor),
                format!("±{}{fu}", setting(row.routine)),
                match row.distribution {
                    Distribution::Rectangular => "rectangular (a/√3)".into(),
                    Distribution::Triangular => "triangular (a/√6)".into(),
                    Distribution::Normal => "normal, 95 % (a/1.96)".into(),
                },
                format!("{}{fu}", sig(row.contribution.u_x, UNCERTAINTY_DIGITS)),
                sig(row.contribution.c, SIGNIFICANT),
                format!("{}{unit}", sig(row.contribution.u_y, UNCERTAINTY_DIGITS)),
            ]);
        }
        out.combined = Some(format!("{}{unit}", sig(u.combined, UNCERTAINTY_DIGITS)));
    }
    out
}

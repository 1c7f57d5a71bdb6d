//! One block per response: the reference of the percent effects, the effects table with its
//! limits, the verdict in words, and the figures placed with it.

use std::collections::BTreeSet;

use serde::Serialize;

use crate::analysis::{Outcome, ResponseAnalysis};
use crate::pipeline::Evaluated;
use crate::study::{LimitUnit, PercentOf};

use super::conclusion;
use super::figures::Figures;
use super::format::{Numbers, percent_effect, setting};

/// One response block.
#[derive(Debug, Serialize)]
pub struct ResponseText {
    /// Id.
    pub id: String,
    /// Name.
    pub name: String,
    /// Unit or empty.
    pub unit: String,
    /// The reference for percent effects in words.
    pub reference: String,
    /// The criterion in words, if any.
    pub criterion: Option<String>,
    /// Effects table.
    pub effects: Vec<EffectRow>,
    /// Verdict in words.
    pub verdict: String,
    /// True when any effect column is aliased.
    pub has_aliased: bool,
    /// True when the table has dummy columns.
    pub has_dummies: bool,
    /// The figures of this response, in the order they are placed.
    pub figures: Vec<FigureText>,
    /// Figures this response would have but which cannot be drawn meaningfully, each as a
    /// sentence saying which and why.
    pub figures_omitted: Vec<String>,
    /// True when the effects table needs its own limit column (the limit differs between
    /// rows); otherwise the limit is said once, in `limit_note`.
    pub limit_column: bool,
    /// The one limit that applies to every judged row, as a sentence (when `limit_column` is
    /// false and a limit applies).
    pub limit_note: Option<String>,
    /// Role: `assay` or `suitability`.
    pub role: String,
    /// Statistical criteria, ANOVA, curvature, drift, worst case, ranges, uncertainty.
    pub judging: super::judging::JudgingText,
}

/// One effects-table row.
#[derive(Debug, Serialize)]
pub struct EffectRow {
    /// Term label (whole chain when aliased).
    pub term: String,
    /// Effect in the response unit.
    pub effect: String,
    /// Percent effect.
    pub percent: String,
    /// Limit in the table's unit, or empty.
    pub limit: String,
    /// `yes`, `no` or `–`.
    pub relevant: String,
    /// True for an aliased column.
    pub aliased: bool,
    /// True for a dummy column.
    pub dummy: bool,
}

/// One figure as the template places it.
#[derive(Debug, Serialize)]
pub struct FigureText {
    /// What the figure is: `halfnormal`, `effects`, `main-effects`, `interaction` or
    /// `run-order` (templates may size them differently).
    pub kind: String,
    /// File name beside the Typst source (relative, forward slashes).
    pub file: String,
    /// Caption.
    pub caption: String,
    /// Alternative text.
    pub alt: String,
}

/// Every response's block, in study order.
pub(super) fn responses_text(evaluated: &Evaluated, figures: &Figures) -> Vec<ResponseText> {
    let Evaluated {
        study, analysis, ..
    } = evaluated;
    analysis
        .responses
        .iter()
        .zip(&study.responses)
        .map(|(r, spec)| {
            let numbers = Numbers::new(r, spec.decimals);
            let unit = r.unit.clone().unwrap_or_default();
            let effects = effect_rows(r, numbers, &unit);
            let (limit_column, limit_note) = limit_layout(&effects);
            ResponseText {
                role: r.role.clone(),
                judging: super::judging::build(study, r),
                id: r.id.clone(),
                name: r.name.clone(),
                reference: reference_text(r, spec.percent_of, numbers, &unit),
                unit,
                criterion: conclusion::limit_text(r),
                has_aliased: effects.iter().any(|e| e.aliased),
                has_dummies: effects.iter().any(|e| e.dummy),
                figures_omitted: figures
                    .omitted
                    .iter()
                    .filter(|o| o.response == r.id)
                    .map(|o| o.reason.clone())
                    .collect(),
                limit_column,
                limit_note,
                figures: figures
                    .drawn
                    .iter()
                    .filter(|f| f.response == r.id)
                    .map(|f| FigureText {
                        kind: f.kind.to_string(),
                        file: f.file.clone(),
                        caption: f.caption.clone(),
                        alt: f.alt.clone(),
                    })
                    .collect(),
                effects,
                verdict: verdict_text(r),
            }
        })
        .collect()
}

/// The value percent effects are taken against, in words with its number and unit.
fn reference_text(
    r: &ResponseAnalysis,
    percent_of: PercentOf,
    numbers: Numbers,
    unit: &str,
) -> String {
    let unit = if unit.is_empty() {
        String::new()
    } else {
        format!(" {unit}")
    };
    match (r.reference_kind.as_str(), percent_of) {
        ("nominal-mean", _) => format!(
            "mean of the nominal runs, {}{unit}",
            numbers.derived(r.reference),
        ),
        (_, PercentOf::Mean) | (_, PercentOf::Nominal) => format!(
            "{}, {}{unit}",
            if r.fit.orthogonal {
                "intercept of the fitted model (the mean of the two-level runs)"
            } else {
                "intercept of the fitted model (least squares: not the raw mean of the runs left)"
            },
            numbers.derived(r.reference),
        ),
    }
}

/// The effects table: one row per estimated column, with the limit it was judged against.
fn effect_rows(r: &ResponseAnalysis, numbers: Numbers, unit: &str) -> Vec<EffectRow> {
    let limit_cell = |relevant: Option<bool>| -> String {
        if relevant.is_none() {
            return String::new();
        }
        r.limits
            .iter()
            .map(|l| match l.unit {
                LimitUnit::Percent => format!("{} %", setting(l.limit)),
                LimitUnit::Absolute => format!("{} {unit}", setting(l.limit)).trim().to_string(),
            })
            .collect::<Vec<_>>()
            .join(", ")
    };
    r.effects
        .iter()
        .map(|e| EffectRow {
            term: e.label.clone(),
            effect: numbers.derived(e.effect),
            percent: percent_effect(e.percent),
            limit: limit_cell(e.relevant),
            relevant: match e.relevant {
                Some(true) => "yes".into(),
                Some(false) => "no".into(),
                None => "–".into(),
            },
            aliased: !e.estimable,
            dummy: e.dummy,
        })
        .collect()
}

/// Whether the table needs its own limit column (the limit differs between rows) and, when it
/// does not, the one limit said once under the table.
fn limit_layout(effects: &[EffectRow]) -> (bool, Option<String>) {
    let limits: BTreeSet<&str> = effects
        .iter()
        .filter(|e| !e.limit.is_empty())
        .map(|e| e.limit.as_str())
        .collect();
    let limit_column = limits.len() > 1;
    let limit_note = match limits.iter().next() {
        Some(l) if !limit_column => Some(format!(
            "Limit for every judged term: {l}{}.",
            if effects.iter().any(|e| e.limit.is_empty()) {
                " (terms marked “–” are not judged)"
            } else {
                ""
            }
        )),
        _ => None,
    };
    (limit_column, limit_note)
}

/// The verdict of one response in one or two sentences.
fn verdict_text(r: &ResponseAnalysis) -> String {
    let chains: Vec<String> = r
        .verdict
        .unresolved
        .iter()
        .map(|c| c.label.clone())
        .collect();
    match r.verdict.outcome {
        Outcome::Robust => {
            "No estimated effect, main effect or interaction, exceeds the acceptance limit."
                .to_string()
        }
        Outcome::NotRobust => {
            let mut s = format!(
                "Beyond the acceptance limit: {}.",
                r.verdict.relevant_terms.join(", ")
            );
            if !chains.is_empty() {
                s.push_str(&format!(
                    " Also beyond it, but aliased (the design cannot tell which term is responsible): {}.",
                    chains.join("; ")
                ));
            }
            s
        }
        Outcome::Unresolved => format!(
            "Beyond the acceptance limit, but aliased (the design cannot tell which term is responsible): {}.",
            chains.join("; ")
        ),
        Outcome::StatisticalOnly | Outcome::NotJudged if r.limits.is_empty() => {
            "No acceptance limit was declared for this response.".to_string()
        }
        _ => "The acceptance limit cannot be applied: percent effects are undefined for a zero reference.".to_string(),
    }
}

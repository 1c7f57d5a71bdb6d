//! What follows from the verdict: the worst case of a suitability response, operating ranges
//! for the factors that need control, uncertainty contributions and the routine risk.

use super::criterion::Method;
use super::decision::{self, Direction};
use super::model::Fit;
use super::summary::{
    ControlRange, CriterionSummary, ErrorEstimate, UncertaintyRow, UncertaintySummary,
    WorstCaseSummary,
};
use super::{Effect, Verdict};
use crate::design::Design;
use crate::study::{Levels, LimitUnit, Study};

/// Worst case within the studied domain, from the model: the intercept moved by the chosen
/// terms at the corner that worsens the response. With main effects only this is
/// ŷ = b₀ ∓ Σ|E_i|/2 (Vander Heyden et al., J. Chromatogr. A 845 (1999) 145–154); clean
/// interactions judged on the same basis are included by searching the corners of their
/// factors.
pub(super) fn worst_case(
    design: &Design,
    effects: &[Effect],
    intercept: f64,
    limits: &[&crate::study::SuitabilityLimit],
    decimals: u32,
    has_significance: bool,
    has_relevance: bool,
) -> Option<WorstCaseSummary> {
    let min = limits.iter().find_map(|l| l.min);
    let max = limits.iter().find_map(|l| l.max);
    let direction = if max.is_some() && min.is_none() {
        Direction::Higher
    } else {
        Direction::Lower
    };
    let candidates: Vec<&Effect> = effects.iter().filter(|e| !e.dummy).collect();
    let (chosen, basis): (Vec<&Effect>, &str) = if has_significance {
        (
            candidates
                .iter()
                .copied()
                .filter(|e| e.significant == Some(true))
                .collect(),
            "significant",
        )
    } else if has_relevance {
        (
            candidates
                .iter()
                .copied()
                .filter(|e| e.relevant == Some(true))
                .collect(),
            "relevant",
        )
    } else {
        (
            candidates
                .iter()
                .copied()
                .filter(|e| e.order == 1)
                .collect(),
            "all",
        )
    };
    // Main-effect columns (aliased or not) act on their factor; clean interactions join the
    // search; an aliased interaction column has no one term to place, so it is left out.
    let mains: Vec<&Effect> = chosen.iter().copied().filter(|e| e.order == 1).collect();
    let interactions: Vec<&Effect> = chosen
        .iter()
        .copied()
        .filter(|e| e.order > 1 && e.estimable)
        .collect();
    let list: Vec<(String, f64)> = mains.iter().map(|e| (e.label.clone(), e.effect)).collect();
    let prediction = if interactions.is_empty() {
        decision::worst_case(intercept, &list, direction).ok()?
    } else {
        let terms: Vec<(Vec<String>, f64)> = mains
            .iter()
            .chain(interactions.iter())
            .map(|e| (e.factors.clone(), e.effect))
            .collect();
        decision::worst_corner(intercept, &terms, direction).ok()?
    };
    let _ = design;
    let scale = 10f64.powi(decimals as i32);
    // Rounded outward to the response's decimals, after removing binary floating-point noise
    // (1.08 computed as 1.0799999999999998 must stay 1.08).
    let scaled = (prediction.predicted * scale * 1e6).round() / 1e6;
    let proposed = match direction {
        Direction::Lower => scaled.floor() / scale,
        Direction::Higher => scaled.ceil() / scale,
    };
    let meets = match (min, max) {
        (None, None) => None,
        _ => Some(
            min.is_none_or(|m| prediction.predicted >= m)
                && max.is_none_or(|m| prediction.predicted <= m),
        ),
    };
    Some(WorstCaseSummary {
        prediction,
        basis: basis.to_string(),
        interactions: interactions.iter().map(|e| e.label.clone()).collect(),
        min,
        max,
        meets,
        proposed_limit: proposed,
    })
}

/// Operating ranges for the factors that need control: each factor of a clean term beyond
/// the limit (relevance) or significant (significance), from its largest conditional effect
/// |E_main| + Σ|E_interaction| over the clean interactions of the factor judged on the same
/// basis, kept under the threshold by the non-significance interval (Vander Heyden et al.
/// 2001 §6.3), then clipped to the tested range.
pub(super) fn control_ranges(
    study: &Study,
    effects: &[Effect],
    criteria: &[CriterionSummary],
    reference: f64,
    percent_defined: bool,
    verdict: &Verdict,
) -> Vec<ControlRange> {
    let limit_abs = criteria
        .iter()
        .filter(|c| c.method == "effect-limit")
        .filter_map(|c| match c.unit {
            Some(LimitUnit::Percent) if percent_defined => {
                c.limit.map(|l| l * reference.abs() / 100.0)
            }
            Some(LimitUnit::Percent) => None,
            Some(LimitUnit::Absolute) => c.limit,
            None => None,
        })
        .reduce(f64::min);
    let mut out = Vec::new();
    for f in &study.factors {
        let main = effects
            .iter()
            .find(|e| e.order == 1 && e.estimable && e.factors.first() == Some(&f.id));
        for basis in ["relevance", "significance"] {
            let judged = |e: &Effect| {
                if basis == "relevance" {
                    e.relevant == Some(true)
                } else {
                    e.significant == Some(true)
                }
            };
            let needs = if basis == "relevance" {
                &verdict.relevant_factors
            } else {
                &verdict.significant_factors
            };
            if !needs.contains(&f.id) {
                continue;
            }
            let partners: Vec<&Effect> = effects
                .iter()
                .filter(|e| e.order > 1 && e.estimable && !e.dummy && judged(e))
                .filter(|e| e.factors.contains(&f.id))
                .collect();
            let main_effect = main.map_or(0.0, |e| e.effect.abs());
            let conditional = main_effect + partners.iter().map(|e| e.effect.abs()).sum::<f64>();
            let threshold = if basis == "relevance" {
                limit_abs
            } else {
                // The main effect's own threshold (its SE ratio included), else the design's.
                main.and_then(|e| e.e_crit).or_else(|| {
                    criteria
                        .iter()
                        .find(|c| c.method != "effect-limit")
                        .and_then(|c| c.e_crit)
                })
            };
            let interactions = partners.iter().map(|e| e.label.clone()).collect();
            match &f.levels {
                Levels::Numeric { nominal, low, high } => {
                    let range = threshold.and_then(|t| {
                        decision::non_significance_interval(conditional, t, *low, *high, *nominal)
                    });
                    let clipped_range = range.map(|(a, b)| (a.max(*low), b.min(*high)));
                    out.push(ControlRange {
                        factor: f.id.clone(),
                        basis: basis.into(),
                        conditional_effect: conditional,
                        interactions,
                        threshold,
                        low: clipped_range.map(|r| r.0),
                        high: clipped_range.map(|r| r.1),
                        tested_low: Some(*low),
                        tested_high: Some(*high),
                        clipped: range != clipped_range,
                        levels: None,
                    });
                }
                Levels::Categorical {
                    nominal,
                    alternative,
                } => out.push(ControlRange {
                    factor: f.id.clone(),
                    basis: basis.into(),
                    conditional_effect: conditional,
                    interactions,
                    threshold,
                    low: None,
                    high: None,
                    tested_low: None,
                    tested_high: None,
                    clipped: false,
                    levels: Some([nominal.clone(), alternative.clone()]),
                }),
            }
        }
    }
    out
}

pub(super) fn uncertainty(study: &Study, effects: &[Effect]) -> Option<UncertaintySummary> {
    let mut rows = Vec::new();
    for f in &study.factors {
        let Some((a, distribution)) = f.routine else {
            continue;
        };
        let Levels::Numeric { low, high, .. } = f.levels else {
            continue;
        };
        let Some(e) = effects
            .iter()
            .find(|e| e.order == 1 && e.factors.first() == Some(&f.id))
        else {
            continue;
        };
        if let Ok(contribution) = decision::uncertainty(e.effect, low, high, a, distribution) {
            rows.push(UncertaintyRow {
                factor: f.id.clone(),
                routine: a,
                distribution,
                contribution,
            });
        }
    }
    if rows.is_empty() {
        return None;
    }
    let contributions: Vec<decision::Contribution> =
        rows.iter().map(|r| r.contribution.clone()).collect();
    Some(UncertaintySummary {
        combined: decision::combined(&contributions),
        rows,
    })
}

/// Routine risk from the model: main effects and the clean interactions judged relevant or
/// significant, with the run-to-run error of the study (pure error; else the precision rule's
/// s/√n; else the fit's residual).
pub(super) fn routine_risk(
    study: &Study,
    r: usize,
    fit: &Fit,
    effects: &[Effect],
    error: &ErrorEstimate,
    suitability: &[&crate::study::SuitabilityLimit],
) -> Option<super::risk::RoutineRisk> {
    use super::risk::{ErrorSource, Term};
    let min = suitability.iter().find_map(|l| l.min);
    let max = suitability.iter().find_map(|l| l.max);
    let index = |id: &String| study.factors.iter().position(|f| &f.id == id);
    let terms: Vec<Term> = effects
        .iter()
        .filter(|e| !e.dummy && !e.effect.is_nan())
        .filter(|e| {
            e.order == 1
                || (e.estimable && (e.relevant == Some(true) || e.significant == Some(true)))
        })
        .filter_map(|e| {
            let factors: Option<Vec<usize>> = e.factors.iter().map(index).collect();
            Some(Term {
                label: e.label.clone(),
                b: e.effect / 2.0,
                factors: factors?,
            })
        })
        .collect();
    let precision = study
        .significance
        .iter()
        .find(|s| s.response == r && s.method == Method::Precision)
        .and_then(|s| s.s.map(|sd| sd / (s.determinations.max(1) as f64).sqrt()));
    let err = match (error.s.filter(|_| error.df > 0), precision) {
        (Some(s), _) => (s, ErrorSource::PureError),
        (None, Some(s)) => (s, ErrorSource::PrecisionRule),
        (None, None) if fit.df_residual() > 0 => (
            (fit.rss / fit.df_residual() as f64).sqrt(),
            ErrorSource::Residual,
        ),
        (None, None) => (0.0, ErrorSource::None),
    };
    super::risk::routine_risk(study, fit.intercept, &terms, (min, max), err)
}

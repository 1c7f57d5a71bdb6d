//! The typed judgment of a response: what was found, on every estimated term, as data.
//!
//! The report turns these values into sentences; nothing here is English prose, so the
//! verdict, the tables and the figures are read from one fit and cannot disagree.

use serde::Serialize;

use super::Effect;
use super::drift::CorrectionMode;
use crate::design::Design;
use crate::study::Study;

/// What the judgment of one response comes to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Outcome {
    /// Practical limits declared and no estimated term exceeds them.
    Robust,
    /// A term whose estimate belongs to it alone (a main effect or a clean interaction)
    /// exceeds a practical limit.
    NotRobust,
    /// Only alias chains exceed a practical limit: the design cannot tell which of their
    /// terms is responsible until follow-up runs separate them.
    Unresolved,
    /// No practical limit was declared; only statistical criteria judge the effects.
    StatisticalOnly,
    /// No rule applies (none declared, or the declared limit cannot be applied).
    NotJudged,
}

/// Follow-up runs that separate an alias chain (Box, Hunter & Hunter 2005 §6.8–6.9;
/// Montgomery, Design and Analysis of Experiments, §8.6).
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case", tag = "kind")]
pub enum FollowUp {
    /// Repeat every two-level run with all signs switched: in a resolution III fraction this
    /// frees every main effect from the two-factor interactions.
    FullFoldOver {
        /// Runs to add (one replicate of the two-level part).
        runs: usize,
    },
    /// Repeat every two-level run with the signs of one factor switched: frees that factor's
    /// main effect and its two-factor interactions.
    FoldOnFactor {
        /// The factor whose signs are switched.
        factor: String,
        /// Runs to add.
        runs: usize,
    },
}

/// An alias chain judged relevant (or significant) whose terms the design cannot separate.
#[derive(Debug, Clone, Serialize)]
pub struct UnresolvedChain {
    /// Label of the column (the whole chain).
    pub label: String,
    /// Every term sharing the column, each as a list of factor ids.
    pub terms: Vec<Vec<String>>,
    /// Every factor appearing in the chain (file order): any of them may be responsible.
    pub factors: Vec<String>,
    /// The column's effect.
    pub effect: f64,
    /// Beyond the practical limit.
    pub relevant: bool,
    /// Statistically significant.
    pub significant: bool,
    /// The runs that would separate the chain.
    pub follow_up: FollowUp,
}

/// A fact the reader must know, as data; the report words it.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(rename_all = "kebab-case", tag = "kind")]
pub enum Note {
    /// A run was left out of the evaluation.
    ExcludedRun {
        /// Run id.
        run: String,
        /// The reason given in the study.
        reason: String,
    },
    /// The runs used are not orthogonal (a run excluded, or a non-orthogonal matrix given):
    /// effects are least-squares estimates and their standard errors differ.
    LeastSquares {
        /// Columns the runs used cannot estimate (labels).
        dropped: Vec<String>,
    },
    /// Effects were computed on drift-corrected values.
    DriftCorrected {
        /// The correction.
        mode: CorrectionMode,
    },
    /// The nominal runs drift significantly and no correction was applied: the drift inflates
    /// the error estimate and may bias effects that follow the run order.
    DriftNotCorrected {
        /// Slope of the nominal runs, response units per step of run order.
        slope: f64,
        /// Its two-sided p-value.
        p: f64,
    },
    /// Percent effects are undefined: the reference is zero (or missing).
    PercentUndefined {
        /// `nominal-mean` or `model-intercept`.
        reference_kind: String,
        /// Its value.
        reference: f64,
    },
    /// A percent limit was declared but percent effects are undefined, so it cannot judge.
    PercentLimitNotApplicable,
    /// The reference is negative: percent effects are taken against its magnitude, so a
    /// percent effect has the sign of the effect.
    NegativeReference {
        /// Its value.
        reference: f64,
    },
    /// A categorical factor sits at its nominal level in the nominal runs: the curvature
    /// check covers only the numeric factors.
    CurvatureNumericOnly,
    /// No numeric factor: the nominal runs are a corner of the design, so no curvature.
    NoCurvatureAllCategorical,
    /// Repeat determinations were averaged per run; their spread is repeatability, not the
    /// error that judges effects.
    DeterminationsAveraged {
        /// Determinations per run.
        determinations: usize,
    },
    /// A least-squares fit of a large design left its higher-order columns out (pooled into
    /// the residual) to stay within its column limit.
    TermsNotFitted {
        /// Columns left out.
        count: usize,
        /// The column limit of a least-squares fit.
        limit: usize,
    },
    /// An operating range was clipped to the tested range.
    RangeClipped {
        /// Factor id.
        factor: String,
    },
}

/// The verdict on one response, computed on every estimated term.
#[derive(Debug, Clone, Serialize)]
pub struct Verdict {
    /// What the judgment comes to.
    pub outcome: Outcome,
    /// Practical verdict: true when no estimated term (clean or aliased) exceeds the limit;
    /// `null` when no limit applies.
    pub robust: Option<bool>,
    /// Statistical verdict: true when no estimated term is significant; `null` when no
    /// statistical criterion could judge.
    pub no_significant_effect: Option<bool>,
    /// Factors (ids) of clean terms beyond the practical limit, main effects and
    /// interactions alike: these need control.
    pub relevant_factors: Vec<String>,
    /// Factors (ids) of clean significant terms.
    pub significant_factors: Vec<String>,
    /// Clean terms beyond the practical limit (labels).
    pub relevant_terms: Vec<String>,
    /// Clean interactions beyond the practical limit (labels).
    pub relevant_interactions: Vec<String>,
    /// Clean terms that are significant (labels).
    pub significant_terms: Vec<String>,
    /// Clean terms that are statistically significant but within the practical limit
    /// (labels): a real but practically unimportant change.
    pub significant_not_relevant: Vec<String>,
    /// Alias chains beyond the limit (or significant, without a limit) that the design
    /// cannot resolve.
    pub unresolved: Vec<UnresolvedChain>,
}

/// The verdict on every estimated term.
pub(super) fn verdict(
    study: &Study,
    design: &Design,
    effects: &[Effect],
    practical: bool,
    no_statistics: bool,
) -> Verdict {
    let real = |e: &&Effect| !e.dummy;
    let clean: Vec<&Effect> = effects
        .iter()
        .filter(real)
        .filter(|e| e.estimable)
        .collect();
    let in_file_order = |set: &dyn Fn(&str) -> bool| -> Vec<String> {
        study
            .factors
            .iter()
            .filter(|f| set(&f.id))
            .map(|f| f.id.clone())
            .collect()
    };
    let relevant_terms: Vec<&Effect> = if practical {
        clean
            .iter()
            .copied()
            .filter(|e| e.relevant == Some(true))
            .collect()
    } else {
        Vec::new()
    };
    let significant_terms: Vec<&Effect> = clean
        .iter()
        .copied()
        .filter(|e| e.significant == Some(true))
        .collect();
    let relevant_factors = in_file_order(&|id| {
        relevant_terms
            .iter()
            .any(|e| e.factors.iter().any(|f| f == id))
    });
    let significant_factors = in_file_order(&|id| {
        significant_terms
            .iter()
            .any(|e| e.factors.iter().any(|f| f == id))
    });
    let unresolved: Vec<UnresolvedChain> = effects
        .iter()
        .filter(real)
        .filter(|e| !e.estimable)
        .filter(|e| {
            if practical {
                e.relevant == Some(true)
            } else {
                e.significant == Some(true)
            }
        })
        .map(|e| {
            let mut terms = vec![e.factors.clone()];
            terms.extend(e.aliases.iter().cloned());
            let factors = in_file_order(&|id| terms.iter().any(|t| t.iter().any(|f| f == id)));
            UnresolvedChain {
                label: e.label.clone(),
                follow_up: follow_up(design, &terms),
                terms,
                factors,
                effect: e.effect,
                relevant: e.relevant == Some(true),
                significant: e.significant == Some(true),
            }
        })
        .collect();
    let judged_statistically = effects.iter().any(|e| e.significant.is_some());
    let any_significant = effects
        .iter()
        .filter(real)
        .any(|e| e.significant == Some(true));
    let outcome = if practical {
        if !relevant_terms.is_empty() {
            Outcome::NotRobust
        } else if !unresolved.is_empty() {
            Outcome::Unresolved
        } else {
            Outcome::Robust
        }
    } else if judged_statistically && !no_statistics {
        Outcome::StatisticalOnly
    } else {
        Outcome::NotJudged
    };
    Verdict {
        outcome,
        robust: practical.then_some(relevant_terms.is_empty() && unresolved.is_empty()),
        no_significant_effect: judged_statistically.then_some(!any_significant),
        relevant_factors,
        significant_factors,
        relevant_interactions: relevant_terms
            .iter()
            .filter(|e| e.order > 1)
            .map(|e| e.label.clone())
            .collect(),
        relevant_terms: relevant_terms.iter().map(|e| e.label.clone()).collect(),
        significant_terms: significant_terms.iter().map(|e| e.label.clone()).collect(),
        significant_not_relevant: if practical {
            significant_terms
                .iter()
                .filter(|e| e.relevant == Some(false))
                .map(|e| e.label.clone())
                .collect()
        } else {
            Vec::new()
        },
        unresolved,
    }
}

/// The follow-up runs that separate a chain: a full fold-over when the chain holds a main
/// effect (it frees every main effect from the two-factor interactions), otherwise a fold on
/// one factor of the chain's first interaction (it frees that factor's two-factor
/// interactions) — Montgomery, Design and Analysis of Experiments, §8.6; Box, Hunter & Hunter
/// 2005 §6.8–6.9.
pub(super) fn follow_up(design: &Design, terms: &[Vec<String>]) -> FollowUp {
    let runs = design.base_runs.max(1);
    if terms.iter().any(|t| t.len() == 1) {
        return FollowUp::FullFoldOver { runs };
    }
    match terms.first().and_then(|t| t.first()) {
        Some(f) => FollowUp::FoldOnFactor {
            factor: f.clone(),
            runs,
        },
        None => FollowUp::FullFoldOver { runs },
    }
}

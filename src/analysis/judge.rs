//! One response from data to verdicts, through one fitted model.
//!
//! The steps, in the order of the reasoning: run means (determinations averaged), the drift of
//! the nominal runs and its correction, the least-squares fit of the two-level run means on
//! the estimable columns, the error estimate (replicated whole runs and nominal runs only),
//! the declared criteria, the ANOVA and the curvature from the same fit, the typed verdict
//! on every term, then worst case, operating ranges and uncertainty. Each step calls the pure
//! functions of its own module; this file only decides what feeds what.

use std::collections::BTreeMap;

use serde::Serialize;

use super::criterion::{Critical, Method};
use super::decision::{self, Direction};
use super::model::Fit;
use super::verdict::{FollowUp, Note, Outcome, UnresolvedChain, Verdict};
use super::{
    Effect, LimitSummary, ResponseAnalysis, RunValue, anova, curvature, data_decimals, drift,
    effects, mean,
};
use crate::design::{Design, TermMask, term_factors, term_order};
use crate::study::results::Measurements;
use crate::study::{FieldPath, Levels, LimitUnit, PercentOf, Study, model::Role};

/// A problem found while analysing, with the field it concerns.
pub struct Problem {
    /// The field.
    pub field: FieldPath,
    /// What is wrong.
    pub problem: String,
    /// What would be valid.
    pub expected: Option<String>,
}

fn problem(field: FieldPath, problem: impl Into<String>, expected: impl Into<String>) -> Problem {
    Problem {
        field,
        problem: problem.into(),
        expected: Some(expected.into()),
    }
}

/// One declared criterion and its numbers.
///
/// For a statistical criterion, `se` and `e_crit` are those of an effect of an orthogonal
/// design with the same number of runs; an effect whose column lost orthogonality (a run
/// excluded) has its own threshold `e_crit × se_ratio` (see [`Effect::se_ratio`]).
#[derive(Debug, Clone, Serialize)]
pub struct CriterionSummary {
    /// `effect-limit` or a significance method (`precision`, `dummies`, ...).
    pub method: String,
    /// Significance level (statistical criteria).
    pub alpha: Option<f64>,
    /// Standard error of an effect (Lenth: the PSE).
    pub se: Option<f64>,
    /// Degrees of freedom.
    pub df: Option<f64>,
    /// Critical effect (Lenth: ME).
    pub e_crit: Option<f64>,
    /// Lenth's pseudo standard error.
    pub pse: Option<f64>,
    /// Lenth's margin of error.
    pub me: Option<f64>,
    /// Lenth's simultaneous margin of error.
    pub sme: Option<f64>,
    /// Effect limit (effect-limit).
    pub limit: Option<f64>,
    /// Its unit (effect-limit).
    pub unit: Option<LimitUnit>,
    /// Basis of the limit, or source of s.
    pub basis: Option<String>,
    /// Determinations averaged per run (precision: the n of SE(E) = 2s/√(N·n)).
    pub determinations: Option<usize>,
    /// The columns whose effects estimated the error (dummies, negligible terms, Dong).
    pub error_terms: Vec<String>,
    /// Why the method could not judge, if it could not.
    pub note: Option<String>,
}

/// Drift of the nominal runs over the run order.
#[derive(Debug, Clone, Serialize)]
pub struct DriftSummary {
    /// The regression of the nominal runs on run order.
    pub check: Option<drift::Drift>,
    /// Why no test was possible, if so.
    pub note: Option<String>,
    /// The correction applied, if any.
    pub correction: Option<drift::CorrectionMode>,
    /// The drift is significant (p < 0.05) and was not corrected.
    pub uncorrected_significant: bool,
}

/// The error that judges effects: the scatter of whole runs repeated at one setting.
#[derive(Debug, Clone, Serialize)]
pub struct ErrorEstimate {
    /// Pooled sum of squares.
    pub ss: f64,
    /// Its degrees of freedom.
    pub df: usize,
    /// Of the sum of squares, the scatter of replicated two-level runs.
    pub ss_replicates: f64,
    /// Of the sum of squares, the nominal runs' part.
    pub ss_nominal: f64,
    /// Of the degrees of freedom, from replicated two-level runs.
    pub df_replicates: usize,
    /// Of those, from the nominal runs (n_C − 1, or n_C − 2 about the drift line when the
    /// values were drift-corrected).
    pub df_nominal: usize,
    /// True when the nominal runs' part is their scatter about the drift line (a correction
    /// forces the corrected nominal runs equal, so their own spread is no error estimate).
    pub nominal_about_drift: bool,
    /// √(SS/df); `None` without degrees of freedom.
    pub s: Option<f64>,
}

/// Spread of repeat determinations within runs: the repeatability of the measurement, never
/// used as the error that judges effects (that would be pseudo-replication).
#[derive(Debug, Clone, Serialize)]
pub struct Repeatability {
    /// Determinations per run.
    pub determinations: usize,
    /// Pooled within-run standard deviation.
    pub s: f64,
    /// Its degrees of freedom Σ(n_i − 1).
    pub df: usize,
}

/// Worst case of a suitability response within the studied domain.
#[derive(Debug, Clone, Serialize)]
pub struct WorstCaseSummary {
    /// The prediction and the factor settings that produce it.
    pub prediction: decision::WorstCase,
    /// Which effects were used (`significant`, `relevant`, or `all`).
    pub basis: String,
    /// Clean interactions included in the prediction (labels).
    pub interactions: Vec<String>,
    /// The declared lower limit.
    pub min: Option<f64>,
    /// The declared upper limit.
    pub max: Option<f64>,
    /// Whether the worst case still meets the declared limit(s).
    pub meets: Option<bool>,
    /// Proposed system-suitability limit: the worst case rounded outward to the response's
    /// decimals.
    pub proposed_limit: f64,
}

/// A proposed operating range for one factor that needs control.
#[derive(Debug, Clone, Serialize)]
pub struct ControlRange {
    /// Factor id.
    pub factor: String,
    /// `significance` or `relevance`: which criterion the range keeps the effect under.
    pub basis: String,
    /// The effect the range is computed from: |E| of the main effect plus |E| of every clean
    /// interaction of the factor judged on the same basis (its largest conditional effect).
    pub conditional_effect: f64,
    /// The interactions (labels) included in `conditional_effect`.
    pub interactions: Vec<String>,
    /// The threshold the effect is kept under, in response units.
    pub threshold: Option<f64>,
    /// Lower end (numeric factors).
    pub low: Option<f64>,
    /// Upper end (numeric factors).
    pub high: Option<f64>,
    /// Tested levels.
    pub tested_low: Option<f64>,
    /// Tested levels.
    pub tested_high: Option<f64>,
    /// True when the range was cut back to the tested range (no extrapolation).
    pub clipped: bool,
    /// Categorical factors: the nominal and the alternative level.
    pub levels: Option<[String; 2]>,
}

/// One factor's uncertainty contribution.
#[derive(Debug, Clone, Serialize)]
pub struct UncertaintyRow {
    /// Factor id.
    pub factor: String,
    /// Routine variation ±a.
    pub routine: f64,
    /// Its distribution.
    pub distribution: decision::Distribution,
    /// c, u(x), u_i(y).
    pub contribution: decision::Contribution,
}

/// The uncertainty table of a response.
#[derive(Debug, Clone, Serialize)]
pub struct UncertaintySummary {
    /// One row per factor with a routine variation.
    pub rows: Vec<UncertaintyRow>,
    /// √Σu_i².
    pub combined: f64,
}

/// The runs of one response as the analysis uses them.
struct Runs {
    /// Mean of the determinations per run, design order (NaN when missing).
    raw: Vec<f64>,
    /// After drift correction (equal to `raw` without one).
    values: Vec<f64>,
    /// Not excluded.
    used: Vec<bool>,
}

/// Analyses response `r`.
pub fn analyse_response(
    study: &Study,
    design: &Design,
    data: &Measurements,
    r: usize,
) -> Result<ResponseAnalysis, Problem> {
    let Some(response) = study.responses.get(r) else {
        return Err(problem(
            FieldPath::of(&["responses"]),
            format!("no response number {}", r + 1),
            "expected a declared response",
        ));
    };
    let mut notes: Vec<Note> = study
        .excluded
        .iter()
        .filter(|e| e.applies_to(r))
        .map(|e| Note::ExcludedRun {
            run: e.run.0.clone(),
            reason: e.reason.clone(),
        })
        .collect();

    // 1. Run means and the runs used.
    // An exclusion naming another response leaves this response's value in use.
    let excluded = |id: &crate::study::RunId| {
        study
            .excluded
            .iter()
            .any(|e| &e.run == id && e.applies_to(r))
    };
    let raw: Vec<f64> = design
        .runs
        .iter()
        .map(|run| {
            data.values
                .get(&run.id)
                .and_then(|v| v.get(r))
                .map_or(f64::NAN, |vals| mean(vals))
        })
        .collect();
    let used: Vec<bool> = design.runs.iter().map(|run| !excluded(&run.id)).collect();
    let repeatability = repeatability(design, data, r, &used);
    if let Some(rep) = &repeatability {
        notes.push(Note::DeterminationsAveraged {
            determinations: rep.determinations,
        });
    }

    // 2. Drift of the nominal runs, and the correction when the study asks for it.
    let nominal_points: Vec<(f64, f64)> = design
        .runs
        .iter()
        .zip(&raw)
        .zip(&used)
        .filter(|((run, _), u)| run.nominal && **u)
        .map(|((run, y), _)| (run.order as f64, *y))
        .collect();
    let correction = study.design.drift_correction;
    let drift_summary = (!nominal_points.is_empty()).then(|| {
        let (check, note) = match drift::drift_check(&nominal_points) {
            Ok(d) => (Some(d), None),
            Err(e) => (None, Some(format!("no drift test: {e}"))),
        };
        let uncorrected_significant = correction.is_none()
            && check
                .as_ref()
                .and_then(|d| d.p)
                .is_some_and(|p| p < DRIFT_ALPHA);
        DriftSummary {
            check,
            note,
            correction,
            uncorrected_significant,
        }
    });
    if let Some(d) = drift_summary.as_ref().filter(|d| d.uncorrected_significant)
        && let Some(c) = &d.check
    {
        notes.push(Note::DriftNotCorrected {
            slope: c.slope,
            p: c.p.unwrap_or(f64::NAN),
        });
    }
    let values: Vec<f64> = match correction {
        None => raw.clone(),
        Some(mode) => {
            notes.push(Note::DriftCorrected { mode });
            let points: Vec<(f64, f64)> = design
                .runs
                .iter()
                .zip(&raw)
                .map(|(run, y)| (run.order as f64, *y))
                .collect();
            drift::correct(&points, &nominal_points, mode).map_err(|e| {
                problem(
                    FieldPath::of(&["design", "drift-correction"]),
                    format!("the drift correction of `{}` is not possible: {e}", response.id),
                    "expected at least two nominal runs spread over the run order (nominal-runs: spread or {every: k})",
                )
            })?
        }
    };
    let runs = Runs { raw, values, used };

    // 3. The fit of the two-level run means.
    let (rows, y, nominal_y) = split_runs(design, &runs);
    let blocks: Vec<u8> = design
        .runs
        .iter()
        .zip(&runs.used)
        .filter(|(run, u)| **u && !run.nominal)
        .map(|(run, _)| run.block)
        .collect();
    let two_level_excluded = design
        .runs
        .iter()
        .zip(&runs.used)
        .any(|(run, u)| !run.nominal && !*u);
    let fit = fit_model(design, &rows, &blocks, &y, two_level_excluded).ok_or_else(|| {
        problem(
            FieldPath::of(&["excluded"]),
            format!(
                "`{}` cannot be analysed: no two-level run is left to estimate effects",
                response.id
            ),
            "expected fewer excluded runs",
        )
    })?;
    if !fit.orthogonal || !fit.dropped.is_empty() {
        notes.push(Note::LeastSquares {
            dropped: fit.dropped.iter().map(|t| design.label(*t)).collect(),
        });
    }
    let fitted_terms = fit.terms.len() + fit.dropped.len();
    let offered = design.contrasts.len() + usize::from(fit.terms.contains(&BLOCK_TERM));
    if !fit.orthogonal && fitted_terms < offered {
        notes.push(Note::TermsNotFitted {
            count: offered - fitted_terms,
            limit: MAX_LEAST_SQUARES_TERMS,
        });
    }
    let block_effect = fit.effect(BLOCK_TERM).map(|e| super::BlockEffect {
        effect: e,
        se_ratio: fit
            .c(BLOCK_TERM)
            .map_or(f64::NAN, |c| (fit.n as f64 * c).sqrt()),
    });
    let n_fit = fit.n;

    // 4. The error estimate: replicated whole runs and nominal runs (about the drift line when
    //    the values were corrected).
    let error = error_estimate(design, &runs, &nominal_points, correction.is_some());

    // 5. The percent reference: the nominal-run mean, or the model's intercept.
    let nominal_mean = (!nominal_y.is_empty()).then(|| mean(&nominal_y));
    let (reference, reference_kind) = match (response.percent_of, nominal_mean) {
        (PercentOf::Nominal, Some(m)) => (m, "nominal-mean"),
        _ => (fit.intercept, "model-intercept"),
    };
    let percent_defined = reference != 0.0 && reference.is_finite();
    if !percent_defined {
        notes.push(Note::PercentUndefined {
            reference_kind: reference_kind.into(),
            reference,
        });
    } else if reference < 0.0 {
        notes.push(Note::NegativeReference { reference });
    }

    // 6. Effects, one per column of the fit.
    let mut effect_list = build_effects(study, design, &fit, reference, percent_defined);

    // 7. Practical relevance.
    let limits: Vec<&crate::study::EffectLimit> =
        study.limits.iter().filter(|l| l.response == r).collect();
    let percent_limit_unusable =
        !percent_defined && limits.iter().any(|l| l.unit == LimitUnit::Percent);
    if percent_limit_unusable {
        notes.push(Note::PercentLimitNotApplicable);
    }
    for (_, e) in effect_list.iter_mut() {
        if !limits.is_empty() && !e.dummy {
            e.relevant = relevance(e, &limits);
        }
    }
    let mut criteria: Vec<CriterionSummary> = limits
        .iter()
        .map(|l| CriterionSummary {
            method: "effect-limit".into(),
            alpha: None,
            se: None,
            df: None,
            e_crit: None,
            pse: None,
            me: None,
            sme: None,
            limit: Some(l.limit),
            unit: Some(l.unit),
            basis: l.basis.clone(),
            determinations: None,
            error_terms: Vec::new(),
            note: None,
        })
        .collect();

    // 8. Statistical criteria, each effect judged against its own threshold.
    for rule in study.significance.iter().filter(|s| s.response == r) {
        let field = FieldPath::of(&["acceptance"])
            .index(rule.entry)
            .key("significance");
        let (critical, error_terms, error_masks) =
            critical_for(study, design, rule, &effect_list, n_fit, &error, &field)?;
        let first = effect_list
            .first()
            .is_none_or(|(_, e)| e.significance.is_empty());
        for (contrast, e) in effect_list.iter_mut() {
            let is_error = e.dummy
                || error_masks
                    .iter()
                    .any(|m| contrast.chain.iter().any(|(t, _)| t == m));
            let threshold = critical.e_crit.map(|c| c * e.se_ratio);
            let verdict = if is_error || e.effect.is_nan() {
                None
            } else {
                threshold.map(|t| e.effect.abs() > t)
            };
            e.significance.push(verdict);
            if first {
                e.significant = verdict;
                e.e_crit = if is_error { None } else { threshold };
                if rule.method == Method::Lenth && !is_error {
                    e.exceeds_sme = critical.sme.map(|s| e.effect.abs() > s * e.se_ratio);
                }
            }
        }
        criteria.push(CriterionSummary {
            method: crate::study::check::method_text(rule.method).into(),
            alpha: Some(critical.alpha),
            se: critical.se,
            df: critical.df,
            e_crit: critical.e_crit,
            pse: critical.pse,
            me: critical.me,
            sme: critical.sme,
            limit: None,
            unit: None,
            basis: rule.source.clone(),
            determinations: (rule.method == Method::Precision).then_some(rule.determinations),
            error_terms,
            note: critical.note.clone(),
        });
    }

    // 9. Curvature and ANOVA from the same fit and error.
    let x0 = nominal_point(study, design, &fit);
    let numeric = study.factors.iter().any(|f| f.is_numeric());
    let curvature_result = if nominal_y.is_empty() {
        None
    } else if !numeric {
        notes.push(Note::NoCurvatureAllCategorical);
        None
    } else {
        if study.factors.iter().any(|f| !f.is_numeric()) {
            notes.push(Note::CurvatureNumericOnly);
        }
        let (predicted, variance) = fit.predict(&x0);
        // A corrected centre is the first nominal run's level: one value, not a mean of n_C.
        let n_centre_eff = if correction.is_some() {
            1.0
        } else {
            nominal_y.len() as f64
        };
        curvature::from_model(
            predicted,
            variance,
            fit.n,
            &nominal_y,
            n_centre_eff,
            error.s.unwrap_or(0.0),
            error.df as f64,
        )
        .ok()
    };
    let anova_table = (error.df > 0)
        .then(|| anova_from_fit(design, &fit, &error, curvature_result.as_ref(), &runs));
    let anova_table = match anova_table {
        Some(Ok(t)) => Some(t),
        _ => None,
    };

    let effects_out: Vec<Effect> = effect_list.into_iter().map(|(_, e)| e).collect();

    // 10. The verdict on every term.
    let judged_practically = !limits.is_empty() && !percent_limit_unusable;
    let verdict = verdict(
        study,
        design,
        &effects_out,
        judged_practically,
        !study.significance.iter().any(|s| s.response == r),
    );

    // 11. Worst case of a suitability response, from the model.
    let suitability: Vec<&crate::study::SuitabilityLimit> = study
        .suitability
        .iter()
        .filter(|s| s.response == r)
        .collect();
    let decimals = response.decimals.unwrap_or_else(|| {
        let all: Vec<f64> = data
            .values
            .values()
            .filter_map(|v| v.get(r))
            .flatten()
            .copied()
            .collect();
        data_decimals(&all)
    });
    let has_significance = effects_out.iter().any(|e| e.significant.is_some());
    let worst = if response.role == Role::Suitability || !suitability.is_empty() {
        worst_case(
            design,
            &effects_out,
            fit.intercept,
            &suitability,
            decimals,
            has_significance,
            judged_practically,
        )
    } else {
        None
    };

    // 12. Operating ranges for the factors that need control, and uncertainty.
    let control_ranges = if response.role == Role::Assay {
        control_ranges(
            study,
            &effects_out,
            &criteria,
            reference,
            percent_defined,
            &verdict,
        )
    } else {
        Vec::new() // a suitability response is expected to move; its limit comes from the worst case
    };
    for c in control_ranges.iter().filter(|c| c.clipped) {
        notes.push(Note::RangeClipped {
            factor: c.factor.clone(),
        });
    }
    let uncertainty = if response.role == Role::Assay {
        uncertainty(study, &effects_out)
    } else {
        None // the uncertainty budget is for results; suitability responses set limits instead
    };
    let routine_risk = routine_risk(study, r, &fit, &effects_out, &error, &suitability);

    // Indices sorted by run order, so each run's values are found without a search.
    let mut in_order: Vec<(usize, &crate::design::PlannedRun)> =
        design.runs.iter().enumerate().collect();
    in_order.sort_by_key(|(_, run)| run.order);
    let run_values = in_order
        .into_iter()
        .map(|(i, run)| RunValue {
            run: run.id.0.clone(),
            order: run.order,
            nominal: run.nominal,
            excluded: !runs.used.get(i).copied().unwrap_or(true),
            raw: runs.raw.get(i).copied().unwrap_or(f64::NAN),
            value: runs.values.get(i).copied().unwrap_or(f64::NAN),
        })
        .collect();

    Ok(ResponseAnalysis {
        id: response.id.clone(),
        name: response.name.clone(),
        unit: response.unit.clone(),
        reference,
        reference_kind: reference_kind.to_string(),
        intercept: fit.intercept,
        design_mean: fit.intercept,
        nominal_mean,
        nominal_prediction: (!nominal_y.is_empty()).then(|| fit.predict(&x0).0),
        decimals,
        role: match response.role {
            Role::Assay => "assay".into(),
            Role::Suitability => "suitability".into(),
        },
        values: run_values,
        fit: super::FitSummary {
            runs: fit.n,
            terms: fit.terms.len(),
            df_residual: fit.df_residual(),
            rss: fit.rss,
            orthogonal: fit.orthogonal,
            dropped: fit.dropped.iter().map(|t| design.label(*t)).collect(),
        },
        error,
        repeatability,
        effects: effects_out,
        limits: limits
            .iter()
            .map(|l| LimitSummary {
                limit: l.limit,
                unit: l.unit,
                basis: l.basis.clone(),
            })
            .collect(),
        criteria,
        anova: anova_table,
        curvature: curvature_result,
        drift: drift_summary,
        worst_case: worst,
        control_ranges,
        uncertainty,
        routine_risk,
        block_effect,
        verdict,
        notes,
    })
}

/// Routine risk from the model: main effects and the clean interactions judged relevant or
/// significant, with the run-to-run error of the study (pure error; else the precision rule's
/// s/√n; else the fit's residual).
fn routine_risk(
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

/// Significance level of the drift test that flags an uncorrected drift (common practice).
pub const DRIFT_ALPHA: f64 = 0.05;

/// The fit's column for the block of follow-up runs: −1 in block 1, +1 in block 2 (a term
/// mask above every factor column, so it never names a factor).
pub const BLOCK_TERM: TermMask = 1 << 63;

/// The used two-level runs (coded rows and values) and the used nominal values.
fn split_runs<'a>(design: &'a Design, runs: &Runs) -> (Vec<&'a [i8]>, Vec<f64>, Vec<f64>) {
    let mut rows: Vec<&[i8]> = Vec::new();
    let mut y = Vec::new();
    let mut nominal_y = Vec::new();
    for ((run, v), u) in design.runs.iter().zip(&runs.values).zip(&runs.used) {
        if !*u {
            continue;
        }
        if run.nominal {
            nominal_y.push(*v);
        } else {
            rows.push(run.coded.as_slice());
            y.push(*v);
        }
    }
    (rows, y, nominal_y)
}

/// The fit of the two-level run means: by the fast transform or direct contrasts when the
/// runs used are the orthogonal design as planned, by least squares otherwise.
fn fit_model(
    design: &Design,
    rows: &[&[i8]],
    blocks: &[u8],
    y: &[f64],
    excluded: bool,
) -> Option<Fit> {
    if y.is_empty() {
        return None;
    }
    let blocked = blocks.iter().any(|b| *b != 1);
    if !design.least_squares && !excluded && !blocked {
        let all = design
            .complete_factorial
            .then(|| fwht_effects(design, y))
            .flatten();
        let mut terms = Vec::with_capacity(design.contrasts.len());
        let mut values = Vec::with_capacity(design.contrasts.len());
        for c in &design.contrasts {
            let e = match &all {
                Some(all) => all.get(c.term as usize).copied(),
                None => effects::effect(rows, y, c.term),
            };
            if let Some(e) = e {
                terms.push(c.term);
                values.push(e);
            }
        }
        return Some(Fit::orthogonal(y, terms, &values));
    }
    // The block column comes first: a factor column confounded with the blocks is the one
    // left out (and named), never the block.
    let block_column = blocked.then(|| {
        (
            BLOCK_TERM,
            blocks
                .iter()
                .map(|b| if *b == 1 { -1.0 } else { 1.0 })
                .collect::<Vec<f64>>(),
        )
    });
    let columns: Vec<(TermMask, Vec<f64>)> = block_column
        .into_iter()
        .chain(least_squares_terms(design).into_iter().map(|c| {
            (
                c.term,
                rows.iter()
                    .map(|row| f64::from(effects::column_value(row, c.term)))
                    .collect(),
            )
        }))
        .collect();
    Fit::least_squares(&columns, y)
}

/// Most columns a least-squares fit is offered: Gram–Schmidt costs N·p², so a 2^14 with one
/// run excluded (16,383 columns) would take hours; above this, terms above the second order
/// (then above the first) are left out of the fit and pooled into its residual.
pub const MAX_LEAST_SQUARES_TERMS: usize = 256;

/// The design's columns a least-squares fit is offered, in order (see
/// [`MAX_LEAST_SQUARES_TERMS`]).
fn least_squares_terms(design: &Design) -> Vec<&crate::design::Contrast> {
    let mut offered: Vec<&crate::design::Contrast> = design.contrasts.iter().collect();
    for order in [2, 1] {
        if offered.len() > MAX_LEAST_SQUARES_TERMS {
            offered.retain(|c| term_order(c.term) <= order);
        }
    }
    offered
}

/// The model row of the nominal runs: numeric factors (and dummy columns) at 0, a categorical
/// factor at its nominal level, coded −1 — the level the runs really had.
fn nominal_point(study: &Study, design: &Design, fit: &Fit) -> Vec<f64> {
    let level = |j: usize| -> f64 {
        match study.factors.get(j).map(|f| &f.levels) {
            Some(Levels::Categorical { .. }) => -1.0,
            _ => 0.0,
        }
    };
    let _ = design;
    fit.terms
        .iter()
        .map(|t| {
            if *t == BLOCK_TERM {
                -1.0 // nominal runs belong to the first runs
            } else {
                term_factors(*t).into_iter().map(level).product()
            }
        })
        .collect()
}

fn build_effects<'d>(
    study: &Study,
    design: &'d Design,
    fit: &Fit,
    reference: f64,
    percent_defined: bool,
) -> Vec<(&'d crate::design::Contrast, Effect)> {
    let n = fit.n as f64;
    let mut out = Vec::with_capacity(fit.terms.len());
    for contrast in &design.contrasts {
        let (Some(e), Some(c)) = (fit.effect(contrast.term), fit.c(contrast.term)) else {
            continue;
        };
        let dummy = term_factors(contrast.term)
            .iter()
            .any(|&j| j >= study.factors.len());
        let label = if contrast.is_clean() {
            design.label(contrast.term)
        } else {
            contrast
                .chain
                .iter()
                .map(|(t, s)| format!("{}{}", if *s < 0 { "−" } else { "" }, design.label(*t)))
                .collect::<Vec<_>>()
                .join(" = ")
        };
        out.push((
            contrast,
            Effect {
                factors: ids(design, contrast.term),
                label,
                order: term_order(contrast.term),
                effect: e,
                // Against the reference's magnitude, so the percent effect keeps the sign of
                // the effect when the reference is negative.
                percent: percent_defined.then(|| 100.0 * e / reference.abs()),
                se_ratio: (n * c).sqrt(),
                estimable: contrast.is_clean(),
                dummy,
                aliases: contrast
                    .chain
                    .iter()
                    .skip(1)
                    .map(|(t, _)| ids(design, *t))
                    .collect(),
                relevant: None,
                significant: None,
                e_crit: None,
                significance: Vec::new(),
                exceeds_sme: None,
            },
        ));
    }
    out
}

/// Beyond any declared limit; `None` when no declared limit can judge the effect (a percent
/// limit without a percent effect).
fn relevance(e: &Effect, limits: &[&crate::study::EffectLimit]) -> Option<bool> {
    let mut judged = false;
    let mut beyond = false;
    for l in limits {
        match l.unit {
            LimitUnit::Percent => {
                if let Some(p) = e.percent {
                    judged = true;
                    beyond |= p.abs() > l.limit;
                }
            }
            LimitUnit::Absolute => {
                judged = true;
                beyond |= e.effect.abs() > l.limit;
            }
        }
    }
    judged.then_some(beyond)
}

fn ids(design: &Design, t: TermMask) -> Vec<String> {
    term_factors(t)
        .into_iter()
        .filter_map(|i| design.column_ids.get(i).cloned())
        .collect()
}

/// Pooled within-run spread of the determinations of the used runs.
fn repeatability(
    design: &Design,
    data: &Measurements,
    r: usize,
    used: &[bool],
) -> Option<Repeatability> {
    let mut ss = 0.0;
    let mut df = 0usize;
    let mut most = 0usize;
    for (run, u) in design.runs.iter().zip(used) {
        if !*u {
            continue;
        }
        let Some(vals) = data.values.get(&run.id).and_then(|v| v.get(r)) else {
            continue;
        };
        most = most.max(vals.len());
        if vals.len() >= 2 {
            let m = mean(vals);
            ss += vals.iter().map(|v| (v - m) * (v - m)).sum::<f64>();
            df += vals.len() - 1;
        }
    }
    (df > 0).then(|| Repeatability {
        determinations: most,
        s: (ss / df as f64).sqrt(),
        df,
    })
}

/// Pure error from whole runs repeated at one setting: replicated two-level runs grouped by
/// their coded levels, and the nominal runs — about the drift line when corrected.
fn error_estimate(
    design: &Design,
    runs: &Runs,
    nominal_points: &[(f64, f64)],
    corrected: bool,
) -> ErrorEstimate {
    let mut groups: BTreeMap<(u8, &[i8]), Vec<f64>> = BTreeMap::new();
    for ((run, v), u) in design.runs.iter().zip(&runs.values).zip(&runs.used) {
        if *u && !run.nominal {
            groups
                .entry((run.block, run.coded.as_slice()))
                .or_default()
                .push(*v);
        }
    }
    let (mut ss, mut df_rep) = (0.0, 0usize);
    for g in groups.values().filter(|g| g.len() >= 2) {
        let m = mean(g);
        ss += g.iter().map(|v| (v - m) * (v - m)).sum::<f64>();
        df_rep += g.len() - 1;
    }
    let (ss_nom, df_nom) = nominal_error(nominal_points, corrected);
    let df = df_rep + df_nom;
    let total = ss + ss_nom;
    ErrorEstimate {
        ss: total,
        ss_replicates: ss,
        ss_nominal: ss_nom,
        df,
        df_replicates: df_rep,
        df_nominal: df_nom,
        nominal_about_drift: corrected && df_nom > 0,
        s: (df > 0).then(|| (total / df as f64).sqrt()),
    }
}

/// The nominal runs' share of the error: their spread about their mean (n − 1 df), or, when
/// the values were drift-corrected, about their least-squares line over run order (n − 2 df).
fn nominal_error(points: &[(f64, f64)], corrected: bool) -> (f64, usize) {
    let n = points.len();
    if corrected {
        if n < 3 {
            return (0.0, 0);
        }
        let nf = n as f64;
        let xm = points.iter().map(|p| p.0).sum::<f64>() / nf;
        let ym = points.iter().map(|p| p.1).sum::<f64>() / nf;
        let sxx: f64 = points.iter().map(|p| (p.0 - xm).powi(2)).sum();
        if sxx <= 0.0 {
            return (0.0, 0);
        }
        let sxy: f64 = points.iter().map(|p| (p.0 - xm) * (p.1 - ym)).sum();
        let b = sxy / sxx;
        let ss = points
            .iter()
            .map(|p| (p.1 - ym - b * (p.0 - xm)).powi(2))
            .sum();
        (ss, n - 2)
    } else {
        if n < 2 {
            return (0.0, 0);
        }
        let m = points.iter().map(|p| p.1).sum::<f64>() / n as f64;
        (points.iter().map(|p| (p.1 - m).powi(2)).sum(), n - 1)
    }
}

/// The ANOVA of the fit: type III sums of squares of the terms, curvature, lack of fit and
/// pure error, F against pure error (Montgomery, Design and Analysis of Experiments, ch. 6).
fn anova_from_fit(
    design: &Design,
    fit: &Fit,
    error: &ErrorEstimate,
    curvature: Option<&curvature::Curvature>,
    runs: &Runs,
) -> Result<anova::AnovaTable, super::quantile::StatError> {
    let terms: Vec<(String, f64)> = fit
        .terms
        .iter()
        .filter_map(|t| {
            let label = if *t == BLOCK_TERM {
                "block".to_string()
            } else {
                design.label(*t)
            };
            fit.term_ss(*t).map(|ss| (label, ss))
        })
        .collect();
    let all_used: Vec<f64> = runs
        .values
        .iter()
        .zip(&runs.used)
        .filter(|(_, u)| **u)
        .map(|(v, _)| *v)
        .collect();
    let m = mean(&all_used);
    let total: f64 = all_used.iter().map(|v| (v - m).powi(2)).sum();
    anova::table(anova::Parts {
        terms,
        curvature_ss: curvature.map(|c| c.ss_curvature),
        residual_ss: fit.rss,
        residual_df: fit.df_residual(),
        replicate_ss: error.ss_replicates,
        replicate_df: error.df_replicates,
        nominal_ss: error.ss_nominal,
        nominal_df: error.df_nominal,
        total_ss: total,
        n_observations: all_used.len(),
    })
}

/// The verdict on every estimated term.
fn verdict(
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
fn follow_up(design: &Design, terms: &[Vec<String>]) -> FollowUp {
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

/// The critical effect of one significance rule (for an orthogonal effect: each effect's own
/// threshold is this times its `se_ratio`), the labels of the error columns, and their masks.
///
/// Methods that estimate the error from effects (dummies, negligible terms, Dong, Lenth) use
/// standardised effects E_j/se_ratio_j, so that after an exclusion every effect enters with
/// the scale of an orthogonal one.
fn critical_for(
    study: &Study,
    design: &Design,
    rule: &crate::study::SignificanceRule,
    effects: &[(&crate::design::Contrast, Effect)],
    n_fit: usize,
    error: &ErrorEstimate,
    field: &FieldPath,
) -> Result<(Critical, Vec<String>, Vec<TermMask>), Problem> {
    let stat = |e: super::quantile::StatError| {
        problem(
            field.clone(),
            format!("the criterion cannot be computed: {e}"),
            "see the method's requirements in the README",
        )
    };
    let standardised = |e: &Effect| e.effect / e.se_ratio;
    match rule.method {
        Method::Precision => {
            let (Some(s), Some(df)) = (rule.s, rule.df) else {
                return Err(problem(
                    field.clone(),
                    "method precision needs `s` and `df`",
                    "expected both",
                ));
            };
            let c = Critical::from_precision(s, df, n_fit, rule.determinations, rule.alpha)
                .map_err(stat)?;
            Ok((c, Vec::new(), Vec::new()))
        }
        Method::Dummies => {
            let dummies: Vec<&Effect> =
                effects.iter().map(|(_, e)| e).filter(|e| e.dummy).collect();
            if dummies.is_empty() {
                return Err(problem(
                    field.key("method"),
                    format!(
                        "the design has no dummy columns ({} factors fill all its columns)",
                        study.factors.len()
                    ),
                    "expected kind plackett-burman with `dummies: k` (or a smaller number of factors), or another method",
                ));
            }
            let values: Vec<f64> = dummies.iter().map(|e| standardised(e)).collect();
            let c =
                Critical::from_error_effects(&values, rule.alpha, Method::Dummies).map_err(stat)?;
            Ok((
                c,
                dummies.iter().map(|e| e.label.clone()).collect(),
                Vec::new(),
            ))
        }
        Method::Negligible => {
            let mut values = Vec::new();
            let mut labels = Vec::new();
            let mut masks = Vec::new();
            for (j, (text, mask)) in rule.terms.iter().enumerate() {
                let Some((contrast, e)) = effects
                    .iter()
                    .find(|(c, _)| c.chain.iter().any(|(t, _)| t == mask))
                else {
                    return Err(problem(
                        field.key("terms").index(j),
                        format!("the design has no column for `{text}`"),
                        "expected a term the design estimates (see the alias table)",
                    ));
                };
                if term_order(contrast.term) == 1 {
                    return Err(problem(
                        field.key("terms").index(j),
                        format!(
                            "`{text}` shares its column with the main effect {}",
                            design.label(contrast.term)
                        ),
                        "expected terms whose column carries no main effect",
                    ));
                }
                if !masks.contains(&contrast.term) {
                    values.push(standardised(e));
                    labels.push(e.label.clone());
                    masks.push(contrast.term);
                }
            }
            let c = Critical::from_error_effects(&values, rule.alpha, Method::Negligible)
                .map_err(stat)?;
            Ok((c, labels, masks))
        }
        Method::Dong | Method::Lenth => {
            let values: Vec<f64> = effects.iter().map(|(_, e)| standardised(e)).collect();
            let c = if rule.method == Method::Dong {
                Critical::dong(&values, rule.alpha)
            } else {
                Critical::lenth(&values, rule.alpha)
            }
            .map_err(stat)?;
            Ok((c, Vec::new(), Vec::new()))
        }
        Method::Anova => {
            let Some(s) = error.s.filter(|_| error.df > 0) else {
                return Err(problem(
                    field.key("method"),
                    "method anova needs pure error from whole runs repeated at one setting, and the design has none (repeat determinations of one run measure repeatability, not the run-to-run error)",
                    "expected replicates ≥ 2 or at least two nominal runs (three with a drift correction)",
                ));
            };
            let c =
                Critical::from_pure_error(s, error.df as f64, n_fit, rule.alpha).map_err(stat)?;
            Ok((c, Vec::new(), Vec::new()))
        }
    }
}

/// Worst case within the studied domain, from the model: the intercept moved by the chosen
/// terms at the corner that worsens the response. With main effects only this is
/// ŷ = b₀ ∓ Σ|E_i|/2 (Vander Heyden et al., J. Chromatogr. A 845 (1999) 145–154); clean
/// interactions judged on the same basis are included by searching the corners of their
/// factors.
fn worst_case(
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
fn control_ranges(
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

fn uncertainty(study: &Study, effects: &[Effect]) -> Option<UncertaintySummary> {
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

/// Effects of a complete factorial by the fast transform, replicates averaged first.
fn fwht_effects(design: &Design, two_level_y: &[f64]) -> Option<Vec<f64>> {
    let n = design.base_runs;
    if n == 0 || two_level_y.len() != n * design.replicates {
        return None;
    }
    let mut y = vec![0.0; n];
    for (i, v) in two_level_y.iter().enumerate() {
        y[i % n] += v / design.replicates as f64;
    }
    effects::all_effects_fwht(&y)
}

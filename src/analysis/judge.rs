//! One response from data to verdicts, through one fitted model.
//!
//! The steps, in the order of the reasoning: run means (determinations averaged), the drift of
//! the nominal runs and its correction, the least-squares fit of the two-level run means on
//! the estimable columns, the error estimate (replicated whole runs and nominal runs only),
//! the declared criteria, the ANOVA and the curvature from the same fit, the typed verdict
//! on every term, then worst case, operating ranges and uncertainty. Each step calls the pure
//! functions of its own module; this file only decides what feeds what.

use super::criteria::{critical_for, relevance};
use super::criterion::Method;
use super::model::Fit;
use super::observations::{
    BLOCK_TERM, Runs, error_estimate, fit_model, nominal_point, repeatability, split_runs,
};
use super::proposals::{control_ranges, routine_risk, uncertainty, worst_case};
use super::verdict::Note;
use super::verdict::verdict;
use super::{
    Effect, LimitSummary, ResponseAnalysis, RunValue, anova, curvature, data_decimals, drift, mean,
};
use crate::design::{Design, Word};
use crate::measurements::Measurements;
use crate::study::{FieldPath, LimitUnit, PercentOf, Study, model::Role};

pub use super::observations::{DRIFT_ALPHA, MAX_LEAST_SQUARES_TERMS};
pub use super::summary::{
    ControlRange, CriterionSummary, DriftSummary, ErrorEstimate, Repeatability, UncertaintyRow,
    UncertaintySummary, WorstCaseSummary,
};

/// A problem found while analysing, with the field it concerns.
pub struct Problem {
    /// The field.
    pub field: FieldPath,
    /// What is wrong.
    pub problem: String,
    /// What would be valid.
    pub expected: Option<String>,
}

pub(super) fn problem(
    field: FieldPath,
    problem: impl Into<String>,
    expected: impl Into<String>,
) -> Problem {
    Problem {
        field,
        problem: problem.into(),
        expected: Some(expected.into()),
    }
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
                    .any(|m| contrast.chain.iter().any(|c| c.word == *m));
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
            method: rule.method.as_str().into(),
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

pub(super) fn build_effects<'d>(
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
        let dummy = contrast
            .term
            .factors()
            .iter()
            .any(|&j| j >= study.factors.len());
        let label = if contrast.is_clean() {
            design.label(contrast.term)
        } else {
            contrast
                .chain
                .iter()
                .map(|m| {
                    let sign = if m.sign < 0 { "−" } else { "" };
                    format!("{sign}{}", design.label(m.word))
                })
                .collect::<Vec<_>>()
                .join(" = ")
        };
        out.push((
            contrast,
            Effect {
                factors: ids(design, contrast.term),
                label,
                order: contrast.term.order(),
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
                    .map(|m| ids(design, m.word))
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

pub(super) fn ids(design: &Design, t: Word) -> Vec<String> {
    t.factors()
        .into_iter()
        .filter_map(|i| design.column_ids.get(i).cloned())
        .collect()
}

/// The ANOVA of the fit: type III sums of squares of the terms, curvature, lack of fit and
/// pure error, F against pure error (Montgomery, Design and Analysis of Experiments, ch. 6).
pub(super) fn anova_from_fit(
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

//! One response from data to verdicts, through one fitted model.
//!
//! The steps, in the order of the reasoning: run means (determinations averaged), the drift of
//! the nominal runs and its correction, the least-squares fit of the two-level run means on
//! the estimable columns, the error estimate (replicated whole runs and nominal runs only),
//! the declared criteria, the ANOVA and the curvature from the same fit, the typed verdict
//! on every term, then worst case, operating ranges and uncertainty. Each step is a named
//! function returning typed data, here or in its own module; [`analyse_response`] only decides
//! what feeds what.

use super::criteria::{critical_for, relevance};
use super::criterion::Method;
use super::effect_rows::build_effects;
use super::model::Fit;
use super::observations::{
    BLOCK_TERM, Runs, error_estimate, fit_model, nominal_point, repeatability, split_runs,
};
use super::proposals::{control_ranges, routine_risk, uncertainty, worst_case};
use super::verdict::Note;
use super::verdict::verdict;
use super::{
    BlockEffect, Effect, FitSummary, LimitSummary, ResponseAnalysis, RunValue, anova, curvature,
    data_decimals, drift, mean,
};
use crate::design::{Contrast, Design, PlannedRun};
use crate::measurements::Measurements;
use crate::study::{
    EffectLimit, FieldPath, LimitUnit, PercentOf, Response, RunId, Study, SuitabilityLimit,
    model::Role,
};

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

/// Analyses response `r`: each numbered step is a function of the steps before it.
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
    let mut notes = exclusion_notes(study, r);

    // 1. Run means and the runs used.
    let (raw, used) = run_means(study, design, data, r);
    let repeatability = repeatability(design, data, r, &used);
    if let Some(rep) = &repeatability {
        notes.push(Note::DeterminationsAveraged {
            determinations: rep.determinations,
        });
    }

    // 2. Drift of the nominal runs, and the correction when the study asks for it.
    let correction = study.design.drift_correction;
    let drift = drift_step(design, response, correction, raw, used)?;
    notes.extend(drift.notes);
    let (runs, nominal_points) = (drift.runs, drift.nominal_points);

    // 3. The fit of the two-level run means.
    let (fit, nominal_y) = fit_runs(design, response, &runs)?;
    notes.extend(fit_notes(design, &fit));
    let block_effect = block_effect(&fit);

    // 4. The error estimate: replicated whole runs and nominal runs (about the drift line when
    //    the values were corrected).
    let error = error_estimate(design, &runs, &nominal_points, correction.is_some());

    // 5. The percent reference: the nominal-run mean, or the model's intercept.
    let nominal_mean = (!nominal_y.is_empty()).then(|| mean(&nominal_y));
    let reference = percent_reference(response.percent_of, nominal_mean, fit.intercept);
    notes.extend(reference.note());

    // 6. Effects, one per column of the fit.
    let mut effect_list = build_effects(study, design, &fit, reference.value, reference.defined);

    // 7. Practical relevance.
    let limits: Vec<&EffectLimit> = study.limits.iter().filter(|l| l.response == r).collect();
    let percent_limit_unusable =
        !reference.defined && limits.iter().any(|l| l.unit == LimitUnit::Percent);
    if percent_limit_unusable {
        notes.push(Note::PercentLimitNotApplicable);
    }
    if !limits.is_empty() {
        for (_, e) in effect_list.iter_mut().filter(|(_, e)| !e.dummy) {
            e.relevant = relevance(e, &limits);
        }
    }
    let mut criteria: Vec<CriterionSummary> = limits.iter().map(|l| limit_criterion(l)).collect();

    // 8. Statistical criteria, each effect judged against its own threshold.
    criteria.extend(statistical_criteria(
        study,
        design,
        r,
        &mut effect_list,
        fit.n,
        &error,
    )?);

    // 9. Curvature and ANOVA from the same fit and error.
    let x0 = nominal_point(study, design, &fit);
    let (curvature_result, curvature_note) =
        curvature_of(study, &fit, &x0, &nominal_y, correction.is_some(), &error);
    notes.extend(curvature_note);
    let anova_table = (error.df > 0)
        .then(|| anova::from_fit(design, &fit, &error, curvature_result.as_ref(), &runs))
        .and_then(Result::ok);

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
    let suitability: Vec<&SuitabilityLimit> = study
        .suitability
        .iter()
        .filter(|s| s.response == r)
        .collect();
    let decimals = response_decimals(response, data, r);
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
            reference.value,
            reference.defined,
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

    Ok(ResponseAnalysis {
        id: response.id.clone(),
        name: response.name.clone(),
        unit: response.unit.clone(),
        reference: reference.value,
        reference_kind: reference.kind.to_string(),
        intercept: fit.intercept,
        design_mean: fit.intercept,
        nominal_mean,
        nominal_prediction: (!nominal_y.is_empty()).then(|| fit.predict(&x0).0),
        decimals,
        role: match response.role {
            Role::Assay => "assay".into(),
            Role::Suitability => "suitability".into(),
        },
        values: run_values(design, &runs),
        fit: fit_summary(design, &fit),
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
        drift: drift.summary,
        worst_case: worst,
        control_ranges,
        uncertainty,
        routine_risk,
        block_effect,
        verdict,
        notes,
    })
}

/// One note per run left out of this response's evaluation.
fn exclusion_notes(study: &Study, r: usize) -> Vec<Note> {
    study
        .excluded
        .iter()
        .filter(|e| e.applies_to(r))
        .map(|e| Note::ExcludedRun {
            run: e.run.0.clone(),
            reason: e.reason.clone(),
        })
        .collect()
}

/// Each run's mean of the determinations of response `r` (design order, NaN when missing),
/// and whether the run is used. An exclusion naming another response leaves this response's
/// value in use.
fn run_means(
    study: &Study,
    design: &Design,
    data: &Measurements,
    r: usize,
) -> (Vec<f64>, Vec<bool>) {
    let excluded = |id: &RunId| {
        study
            .excluded
            .iter()
            .any(|e| &e.run == id && e.applies_to(r))
    };
    let raw = design
        .runs
        .iter()
        .map(|run| {
            data.values
                .get(&run.id)
                .and_then(|v| v.get(r))
                .map_or(f64::NAN, |vals| mean(vals))
        })
        .collect();
    let used = design.runs.iter().map(|run| !excluded(&run.id)).collect();
    (raw, used)
}

/// The runs after the drift step, with what it found.
struct DriftStep {
    /// The runs, corrected when the study asks for a correction.
    runs: Runs,
    /// The used nominal runs as (run order, value as measured).
    nominal_points: Vec<(f64, f64)>,
    /// The drift test and the correction, when there are nominal runs.
    summary: Option<DriftSummary>,
    /// An uncorrected significant drift, or the correction applied.
    notes: Vec<Note>,
}

/// The drift of the used nominal runs over the run order, and the correction of every run
/// when the study asks for one.
fn drift_step(
    design: &Design,
    response: &Response,
    correction: Option<drift::CorrectionMode>,
    raw: Vec<f64>,
    used: Vec<bool>,
) -> Result<DriftStep, Problem> {
    let mut notes = Vec::new();
    let nominal_points: Vec<(f64, f64)> = design
        .runs
        .iter()
        .zip(&raw)
        .zip(&used)
        .filter(|((run, _), u)| run.nominal && **u)
        .map(|((run, y), _)| (run.order as f64, *y))
        .collect();
    let summary = (!nominal_points.is_empty()).then(|| {
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
    if let Some(d) = summary.as_ref().filter(|d| d.uncorrected_significant)
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
    Ok(DriftStep {
        runs: Runs { raw, values, used },
        nominal_points,
        summary,
        notes,
    })
}

/// The one fit of the used two-level run means, and the used nominal values beside it.
fn fit_runs(design: &Design, response: &Response, runs: &Runs) -> Result<(Fit, Vec<f64>), Problem> {
    let (rows, y, nominal_y) = split_runs(design, runs);
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
    Ok((fit, nominal_y))
}

/// What the reader must know about the fit: least squares (and the columns it could not
/// estimate), and terms left out of a least-squares fit.
fn fit_notes(design: &Design, fit: &Fit) -> Vec<Note> {
    let mut notes = Vec::new();
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
    notes
}

/// The shift of the follow-up block, when the fit has a block column.
fn block_effect(fit: &Fit) -> Option<BlockEffect> {
    fit.effect(BLOCK_TERM).map(|e| BlockEffect {
        effect: e,
        se_ratio: fit
            .c(BLOCK_TERM)
            .map_or(f64::NAN, |c| (fit.n as f64 * c).sqrt()),
    })
}

/// The value percent effects are taken against.
struct PercentReference {
    /// The value.
    value: f64,
    /// `nominal-mean` or `model-intercept`.
    kind: &'static str,
    /// False for a zero or non-finite reference: percent effects are then undefined.
    defined: bool,
}

impl PercentReference {
    /// The note a reader needs about the reference: undefined percent effects, or a negative
    /// reference.
    fn note(&self) -> Option<Note> {
        if !self.defined {
            Some(Note::PercentUndefined {
                reference_kind: self.kind.into(),
                reference: self.value,
            })
        } else if self.value < 0.0 {
            Some(Note::NegativeReference {
                reference: self.value,
            })
        } else {
            None
        }
    }
}

/// The mean of the nominal runs when the study asks for it and there are any, else the
/// model's intercept.
fn percent_reference(
    percent_of: PercentOf,
    nominal_mean: Option<f64>,
    intercept: f64,
) -> PercentReference {
    let (value, kind) = match (percent_of, nominal_mean) {
        (PercentOf::Nominal, Some(m)) => (m, "nominal-mean"),
        _ => (intercept, "model-intercept"),
    };
    PercentReference {
        value,
        kind,
        defined: value != 0.0 && value.is_finite(),
    }
}

/// A declared practical limit as a criterion row.
fn limit_criterion(l: &EffectLimit) -> CriterionSummary {
    CriterionSummary {
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
    }
}

/// Every statistical criterion of response `r`, in the study's order; each effect gets one
/// verdict per criterion, and the first criterion also sets its `significant`, `e_crit` and
/// (Lenth) `exceeds_sme`.
fn statistical_criteria(
    study: &Study,
    design: &Design,
    r: usize,
    effect_list: &mut [(&Contrast, Effect)],
    n_fit: usize,
    error: &ErrorEstimate,
) -> Result<Vec<CriterionSummary>, Problem> {
    let mut criteria = Vec::new();
    for rule in study.significance.iter().filter(|s| s.response == r) {
        let field = FieldPath::of(&["acceptance"])
            .index(rule.entry)
            .key("significance");
        let (critical, error_terms, error_masks) =
            critical_for(study, design, rule, effect_list, n_fit, error, &field)?;
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
    Ok(criteria)
}

/// The curvature test of the nominal runs against the model's prediction at the nominal
/// setting, with the note a reader needs when categorical factors limit it.
fn curvature_of(
    study: &Study,
    fit: &Fit,
    x0: &[f64],
    nominal_y: &[f64],
    corrected: bool,
    error: &ErrorEstimate,
) -> (Option<curvature::Curvature>, Option<Note>) {
    if nominal_y.is_empty() {
        return (None, None);
    }
    if !study.factors.iter().any(|f| f.is_numeric()) {
        return (None, Some(Note::NoCurvatureAllCategorical));
    }
    let note = study
        .factors
        .iter()
        .any(|f| !f.is_numeric())
        .then_some(Note::CurvatureNumericOnly);
    let (predicted, variance) = fit.predict(x0);
    // A corrected centre is the first nominal run's level: one value, not a mean of n_C.
    let n_centre_eff = if corrected {
        1.0
    } else {
        nominal_y.len() as f64
    };
    let result = curvature::from_model(
        predicted,
        variance,
        fit.n,
        nominal_y,
        n_centre_eff,
        error.s.unwrap_or(0.0),
        error.df as f64,
    )
    .ok();
    (result, note)
}

/// Decimal places of response `r`: declared, or found in its values.
fn response_decimals(response: &Response, data: &Measurements, r: usize) -> u32 {
    response.decimals.unwrap_or_else(|| {
        let all: Vec<f64> = data
            .values
            .values()
            .filter_map(|v| v.get(r))
            .flatten()
            .copied()
            .collect();
        data_decimals(&all)
    })
}

/// Every run's value in run order: as measured, as used, and whether it was used.
fn run_values(design: &Design, runs: &Runs) -> Vec<RunValue> {
    // Indices sorted by run order, so each run's values are found without a search.
    let mut in_order: Vec<(usize, &PlannedRun)> = design.runs.iter().enumerate().collect();
    in_order.sort_by_key(|(_, run)| run.order);
    in_order
        .into_iter()
        .map(|(i, run)| RunValue {
            run: run.id.0.clone(),
            order: run.order,
            nominal: run.nominal,
            excluded: !runs.used.get(i).copied().unwrap_or(true),
            raw: runs.raw.get(i).copied().unwrap_or(f64::NAN),
            value: runs.values.get(i).copied().unwrap_or(f64::NAN),
        })
        .collect()
}

/// The fitted model in numbers.
fn fit_summary(design: &Design, fit: &Fit) -> FitSummary {
    FitSummary {
        runs: fit.n,
        terms: fit.terms.len(),
        df_residual: fit.df_residual(),
        rss: fit.rss,
        orthogonal: fit.orthogonal,
        dropped: fit.dropped.iter().map(|t| design.label(*t)).collect(),
    }
}

//! One response from data to verdicts: run values (drift-corrected if asked), effects, the
//! declared criteria with their numbers, ANOVA, curvature, worst case, control ranges and
//! uncertainty contributions.
//!
//! Each step calls the pure functions of its own module; this file only decides what feeds
//! what, so the order of the reasoning can be read top to bottom.

use std::collections::BTreeMap;

use serde::Serialize;

use super::criterion::{self, Critical, Method};
use super::decision::{self, Direction};
use super::{
    Effect, LimitSummary, ResponseAnalysis, RunValue, Verdict, anova, curvature, data_decimals,
    drift, effects, mean,
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
}

/// Worst case of a suitability response within the studied domain.
#[derive(Debug, Clone, Serialize)]
pub struct WorstCaseSummary {
    /// The prediction and the factor settings that produce it.
    pub prediction: decision::WorstCase,
    /// Which effects were used (`significant`, `relevant`, or `all main effects`).
    pub basis: String,
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

/// A proposed operating range for one factor.
#[derive(Debug, Clone, Serialize)]
pub struct ControlRange {
    /// Factor id.
    pub factor: String,
    /// `significance` or `relevance`: which criterion the range keeps the effect under.
    pub basis: String,
    /// Lower end (numeric factors).
    pub low: Option<f64>,
    /// Upper end (numeric factors).
    pub high: Option<f64>,
    /// Tested levels.
    pub tested_low: Option<f64>,
    /// Tested levels.
    pub tested_high: Option<f64>,
    /// For categorical factors: the precaution to write into the procedure.
    pub statement: Option<String>,
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

/// Analyses response `r`.
pub fn analyse_response(
    study: &Study,
    design: &Design,
    data: &Measurements,
    r: usize,
) -> Result<ResponseAnalysis, Problem> {
    let response = &study.responses[r];
    let at = FieldPath::of(&["responses"]).index(r);
    let excluded = |id: &crate::study::RunId| study.excluded.iter().any(|e| &e.run == id);
    let mut notes = Vec::new();

    // 1. Run values (means of determinations), in design order.
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

    // 2. Drift from the nominal runs, and the correction when the study asks for it.
    let nominal_points: Vec<(f64, f64)> = design
        .runs
        .iter()
        .zip(&raw)
        .zip(&used)
        .filter(|((run, _), u)| run.nominal && **u)
        .map(|((run, y), _)| (run.order as f64, *y))
        .collect();
    let drift_summary = if nominal_points.is_empty() {
        None
    } else {
        let (check, note) = match drift::drift_check(&nominal_points) {
            Ok(d) => (Some(d), None),
            Err(e) => (None, Some(format!("no drift test: {e}"))),
        };
        Some(DriftSummary {
            check,
            note,
            correction: study.design.drift_correction,
        })
    };
    let values: Vec<f64> = match study.design.drift_correction {
        None => raw.clone(),
        Some(mode) => {
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
    if study.design.drift_correction.is_some() {
        notes.push(
            "Effects were computed on drift-corrected values; the run table shows both.".into(),
        );
    }

    // 3. The two-level runs that enter the effects.
    let mut rows: Vec<&[i8]> = Vec::new();
    let mut y: Vec<f64> = Vec::new();
    let mut nominal_y = Vec::new();
    for ((run, v), u) in design.runs.iter().zip(&values).zip(&used) {
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
    let two_level_excluded = design
        .runs
        .iter()
        .zip(&used)
        .any(|(run, u)| !run.nominal && !*u);
    for e in &study.excluded {
        notes.push(format!("Run {} was excluded: {}", e.run, e.reason));
    }
    let design_mean = mean(&y);
    let nominal_mean = (!nominal_y.is_empty()).then(|| mean(&nominal_y));
    let (reference, reference_kind) = match (response.percent_of, nominal_mean) {
        (PercentOf::Nominal, Some(m)) => (m, "nominal-mean"),
        _ => (design_mean, "design-mean"),
    };
    if reference == 0.0 || !reference.is_finite() {
        return Err(problem(
            at.key("percent-of"),
            format!(
                "percent effects of `{}` cannot be taken against a {} of {}",
                response.id,
                if reference_kind == "nominal-mean" {
                    "nominal-run mean"
                } else {
                    "design mean"
                },
                if reference.is_finite() {
                    reference.to_string()
                } else {
                    "(none)".into()
                }
            ),
            if reference_kind == "nominal-mean" {
                "expected a reference different from zero; use `percent-of: mean`, or judge the response with an absolute limit (`unit: absolute`)"
            } else {
                "expected a reference different from zero; judge the response with an absolute limit (`unit: absolute`)"
            },
        ));
    }

    // 4. Effects: fast transform, direct contrasts, or least squares when balance is lost.
    let fast = (design.complete_factorial && !two_level_excluded)
        .then(|| fwht_effects(design, &y))
        .flatten();
    let fitted = if design.least_squares || two_level_excluded {
        let (map, dropped) = least_squares(design, &rows, &y);
        if !dropped.is_empty() {
            notes.push(format!(
                "Without the excluded run(s) these columns cannot be estimated: {}.",
                dropped.join(", ")
            ));
        }
        notes.push("The design is not orthogonal (a run is excluded or the matrix was given so): effects are least-squares estimates, E = 2b.".into());
        Some(map)
    } else {
        None
    };
    let mut effect_list = Vec::with_capacity(design.contrasts.len());
    for contrast in &design.contrasts {
        let e = match (&fast, &fitted) {
            (Some(all), _) => all.get(contrast.term as usize).copied(),
            (None, Some(map)) => map.get(&contrast.term).copied(),
            (None, None) => effects::effect(&rows, &y, contrast.term),
        };
        let Some(e) = e else { continue };
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
        effect_list.push((
            contrast,
            Effect {
                factors: ids(design, contrast.term),
                label,
                order: term_order(contrast.term),
                effect: e,
                percent: 100.0 * e / reference,
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
                significance: Vec::new(),
                exceeds_sme: None,
            },
        ));
    }

    // 5. Practical relevance.
    let limits: Vec<&crate::study::EffectLimit> =
        study.limits.iter().filter(|l| l.response == r).collect();
    for (_, e) in effect_list.iter_mut() {
        if !limits.is_empty() && !e.dummy {
            e.relevant = Some(limits.iter().any(|l| match l.unit {
                LimitUnit::Percent => e.percent.abs() > l.limit,
                LimitUnit::Absolute => e.effect.abs() > l.limit,
            }));
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
            error_terms: Vec::new(),
            note: None,
        })
        .collect();

    // 6. ANOVA with pure error (replicated settings: replicates, determinations, nominal runs).
    let anova_table = anova_for(design, data, r, &used, &values, &raw);

    // 7. Statistical criteria.
    let n_two_level = y.len();
    for rule in study.significance.iter().filter(|s| s.response == r) {
        let field = FieldPath::of(&["acceptance"])
            .index(rule.entry)
            .key("significance");
        let (critical, error_terms, error_masks) = critical_for(
            study,
            design,
            rule,
            &effect_list,
            n_two_level,
            &anova_table,
            &field,
        )?;
        for (contrast, e) in effect_list.iter_mut() {
            let is_error = e.dummy
                || error_masks
                    .iter()
                    .any(|m| contrast.chain.iter().any(|(t, _)| t == m));
            let verdict = if is_error {
                None
            } else {
                criterion::judge(e.effect, &critical)
            };
            e.significance.push(verdict);
            if e.significance.len() == 1 {
                e.significant = verdict;
                if rule.method == Method::Lenth && !is_error {
                    e.exceeds_sme = criterion::exceeds_sme(e.effect, &critical);
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
            error_terms,
            note: critical.note.clone(),
        });
    }
    let effects_out: Vec<Effect> = effect_list.into_iter().map(|(_, e)| e).collect();

    // 8. Curvature from the nominal runs.
    let curvature_result = if nominal_y.is_empty() || y.is_empty() {
        None
    } else if nominal_y.len() >= 2 {
        curvature::curvature(&y, &nominal_y).ok()
    } else {
        anova_table
            .as_ref()
            .filter(|t| t.pure_error.df > 0)
            .and_then(|t| {
                let s = t.pure_error.ms?.sqrt();
                curvature::curvature_with_error(&y, &nominal_y, s, t.pure_error.df as f64).ok()
            })
    };
    if curvature_result.is_some() && study.factors.iter().any(|f| !f.is_numeric()) {
        notes.push("Nominal runs set categorical factors to their nominal level, so the curvature estimate also contains half of those factors' effects.".into());
    }

    // 9. Verdicts.
    let main_real = |e: &&Effect| e.order == 1 && !e.dummy;
    let relevant_factors: Vec<String> = effects_out
        .iter()
        .filter(main_real)
        .filter(|e| e.relevant == Some(true))
        .flat_map(|e| e.factors.clone())
        .collect();
    let significant_factors: Vec<String> = effects_out
        .iter()
        .filter(main_real)
        .filter(|e| e.significant == Some(true))
        .flat_map(|e| e.factors.clone())
        .collect();
    let has_significance = effects_out.iter().any(|e| e.significant.is_some());
    let verdict = Verdict {
        robust: (!limits.is_empty()).then_some(relevant_factors.is_empty()),
        no_significant_effect: has_significance.then_some(significant_factors.is_empty()),
        significant_factors: significant_factors.clone(),
        relevant_factors: relevant_factors.clone(),
        relevant_interactions: effects_out
            .iter()
            .filter(|e| e.order > 1 && e.relevant == Some(true))
            .map(|e| e.label.clone())
            .collect(),
    };

    // 10. Worst case of a suitability response.
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
    let worst = if response.role == Role::Suitability || !suitability.is_empty() {
        worst_case(
            &effects_out,
            design_mean,
            &suitability,
            decimals,
            has_significance,
            !limits.is_empty(),
        )
    } else {
        None
    };

    // 11. Control ranges for factors with significant or relevant effects.
    let control_ranges = if response.role == Role::Assay {
        control_ranges(study, &effects_out, &criteria, reference)
    } else {
        Vec::new() // a suitability response is expected to move; its limit comes from the worst case
    };

    // 12. Uncertainty contributions.
    let uncertainty = if response.role == Role::Assay {
        uncertainty(study, &effects_out)
    } else {
        None // the uncertainty budget is for results; suitability responses set limits instead
    };

    // Indices sorted by run order, so each run's values are found without a search (a search
    // per run made this step quadratic: seconds for a 2^15 design).
    let mut in_order: Vec<(usize, &crate::design::PlannedRun)> =
        design.runs.iter().enumerate().collect();
    in_order.sort_by_key(|(_, run)| run.order);
    let run_values = in_order
        .into_iter()
        .map(|(i, run)| RunValue {
            run: run.id.0.clone(),
            order: run.order,
            nominal: run.nominal,
            excluded: !used.get(i).copied().unwrap_or(true),
            raw: raw.get(i).copied().unwrap_or(f64::NAN),
            value: values.get(i).copied().unwrap_or(f64::NAN),
        })
        .collect();

    Ok(ResponseAnalysis {
        id: response.id.clone(),
        name: response.name.clone(),
        unit: response.unit.clone(),
        reference,
        reference_kind: reference_kind.to_string(),
        design_mean,
        nominal_mean,
        decimals,
        role: match response.role {
            Role::Assay => "assay".into(),
            Role::Suitability => "suitability".into(),
        },
        values: run_values,
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
        verdict,
        notes,
    })
}

fn ids(design: &Design, t: TermMask) -> Vec<String> {
    term_factors(t)
        .into_iter()
        .filter_map(|i| design.column_ids.get(i).cloned())
        .collect()
}

/// The critical effect of one significance rule, the labels of the error columns, and their
/// masks.
fn critical_for(
    study: &Study,
    design: &Design,
    rule: &crate::study::SignificanceRule,
    effects: &[(&crate::design::Contrast, Effect)],
    n_two_level: usize,
    anova_table: &Option<anova::AnovaTable>,
    field: &FieldPath,
) -> Result<(Critical, Vec<String>, Vec<TermMask>), Problem> {
    let stat = |e: super::quantile::StatError| {
        problem(
            field.clone(),
            format!("the criterion cannot be computed: {e}"),
            "see the method's requirements in the README",
        )
    };
    match rule.method {
        Method::Precision => {
            let (Some(s), Some(df)) = (rule.s, rule.df) else {
                return Err(problem(
                    field.clone(),
                    "method precision needs `s` and `df`",
                    "expected both",
                ));
            };
            let c = Critical::from_precision(s, df, n_two_level, rule.determinations, rule.alpha)
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
            let values: Vec<f64> = dummies.iter().map(|e| e.effect).collect();
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
                    values.push(e.effect);
                    labels.push(e.label.clone());
                    masks.push(contrast.term);
                }
            }
            let c = Critical::from_error_effects(&values, rule.alpha, Method::Negligible)
                .map_err(stat)?;
            Ok((c, labels, masks))
        }
        Method::Dong | Method::Lenth => {
            let values: Vec<f64> = effects.iter().map(|(_, e)| e.effect).collect();
            let c = if rule.method == Method::Dong {
                Critical::dong(&values, rule.alpha)
            } else {
                Critical::lenth(&values, rule.alpha)
            }
            .map_err(stat)?;
            Ok((c, Vec::new(), Vec::new()))
        }
        Method::Anova => {
            let Some(table) = anova_table.as_ref().filter(|t| t.pure_error.df > 0) else {
                return Err(problem(
                    field.key("method"),
                    "method anova needs pure error, and the design has no replicated setting",
                    "expected replicates ≥ 2, several determinations per run, or at least two nominal runs",
                ));
            };
            let ms = table.pure_error.ms.unwrap_or(f64::NAN);
            let determinations: usize = table.n_observations_two_level.max(n_two_level);
            let c = Critical::from_pure_error(
                ms.sqrt(),
                table.pure_error.df as f64,
                determinations,
                rule.alpha,
            )
            .map_err(stat)?;
            Ok((c, Vec::new(), Vec::new()))
        }
    }
}

/// ANOVA of one response when some setting is replicated.
fn anova_for(
    design: &Design,
    data: &Measurements,
    r: usize,
    used: &[bool],
    values: &[f64],
    raw: &[f64],
) -> Option<anova::AnovaTable> {
    let mut observations = Vec::new();
    for (i, run) in design.runs.iter().enumerate() {
        if !used.get(i).copied().unwrap_or(false) {
            continue;
        }
        let shift = values.get(i).copied().unwrap_or(0.0) - raw.get(i).copied().unwrap_or(0.0);
        if let Some(vals) = data.values.get(&run.id).and_then(|v| v.get(r)) {
            for v in vals {
                observations.push((i, v + shift));
            }
        }
    }
    let mut settings: BTreeMap<&[i8], usize> = BTreeMap::new();
    for (i, _) in &observations {
        if let Some(run) = design.runs.get(*i) {
            *settings.entry(run.coded.as_slice()).or_default() += 1;
        }
    }
    if settings.values().all(|n| *n < 2) {
        return None;
    }
    let columns: Vec<(String, Vec<f64>)> = design
        .contrasts
        .iter()
        .map(|c| {
            (
                design.label(c.term),
                design
                    .runs
                    .iter()
                    .map(|run| f64::from(effects::column_value(&run.coded, c.term)))
                    .collect(),
            )
        })
        .collect();
    let mut table = anova::anova(&columns, &observations, design.runs.len()).ok()?;
    table.n_observations_two_level = observations
        .iter()
        .filter(|(i, _)| design.runs.get(*i).is_some_and(|run| !run.nominal))
        .count();
    Some(table)
}

fn worst_case(
    effects: &[Effect],
    mean: f64,
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
    let mains: Vec<&Effect> = effects
        .iter()
        .filter(|e| e.order == 1 && !e.dummy)
        .collect();
    let (chosen, basis): (Vec<&Effect>, &str) = if has_significance {
        (
            mains
                .iter()
                .copied()
                .filter(|e| e.significant == Some(true))
                .collect(),
            "significant main effects",
        )
    } else if has_relevance {
        (
            mains
                .iter()
                .copied()
                .filter(|e| e.relevant == Some(true))
                .collect(),
            "relevant main effects",
        )
    } else {
        (
            mains.clone(),
            "all main effects (no criterion declared for this response)",
        )
    };
    let list: Vec<(String, f64)> = chosen.iter().map(|e| (e.label.clone(), e.effect)).collect();
    let prediction = decision::worst_case(mean, &list, direction).ok()?;
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
        min,
        max,
        meets,
        proposed_limit: proposed,
    })
}

fn control_ranges(
    study: &Study,
    effects: &[Effect],
    criteria: &[CriterionSummary],
    reference: f64,
) -> Vec<ControlRange> {
    let e_crit = criteria
        .iter()
        .find(|c| c.method != "effect-limit")
        .and_then(|c| c.e_crit);
    let limit_abs = criteria
        .iter()
        .filter(|c| c.method == "effect-limit")
        .filter_map(|c| match c.unit {
            Some(LimitUnit::Percent) => c.limit.map(|l| l * reference.abs() / 100.0),
            Some(LimitUnit::Absolute) => c.limit,
            None => None,
        })
        .reduce(f64::min);
    let mut out = Vec::new();
    for e in effects.iter().filter(|e| e.order == 1 && !e.dummy) {
        let Some(id) = e.factors.first() else {
            continue;
        };
        let Some(f) = study.factors.iter().find(|f| &f.id == id) else {
            continue;
        };
        let mut bases = Vec::new();
        if e.relevant == Some(true) {
            bases.push((limit_abs, "relevance"));
        }
        if e.significant == Some(true) {
            bases.push((e_crit, "significance"));
        }
        for (threshold, basis) in bases {
            match &f.levels {
            Levels::Numeric { nominal, low, high } => {
                let range = threshold.and_then(|t| decision::non_significance_interval(e.effect, t, *low, *high, *nominal));
                out.push(ControlRange {
                    factor: f.id.clone(),
                    basis: basis.into(),
                    low: range.map(|r| r.0),
                    high: range.map(|r| r.1),
                    tested_low: Some(*low),
                    tested_high: Some(*high),
                    statement: None,
                });
            }
            Levels::Categorical { nominal, alternative } => out.push(ControlRange {
                factor: f.id.clone(),
                basis: basis.into(),
                low: None,
                high: None,
                tested_low: None,
                tested_high: None,
                statement: Some(format!(
                    "{} changes the result between `{nominal}` and `{alternative}`: only the level(s) qualified in this study may be used, and a change of {} needs its own comparison",
                    f.name,
                    f.name.to_lowercase()
                )),
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

/// Least-squares effects E = 2b of the design's contrasts over the runs used, adding columns
/// in order (main effects first) while they stay estimable; returns the effects by term and
/// the labels of the columns that had to be left out.
fn least_squares(
    design: &Design,
    rows: &[&[i8]],
    y: &[f64],
) -> (BTreeMap<TermMask, f64>, Vec<String>) {
    let n = rows.len();
    let mut kept: Vec<TermMask> = Vec::new();
    let mut dropped = Vec::new();
    let matrix = |terms: &[TermMask]| {
        nalgebra::DMatrix::from_fn(n, terms.len() + 1, |i, j| {
            if j == 0 {
                1.0
            } else {
                f64::from(effects::column_value(
                    rows.get(i).copied().unwrap_or(&[]),
                    terms[j - 1],
                ))
            }
        })
    };
    for c in &design.contrasts {
        let mut trial = kept.clone();
        trial.push(c.term);
        if trial.len() + 1 > n || matrix(&trial).svd(false, false).rank(1e-9) < trial.len() + 1 {
            dropped.push(design.label(c.term));
        } else {
            kept = trial;
        }
    }
    // Normal equations by Cholesky: XᵀX of a two-level design is well conditioned, and this
    // avoids an SVD solve that returned wrong coefficients for some tall ±1 matrices.
    let x = matrix(&kept);
    let yv = nalgebra::DVector::from_column_slice(y);
    let xtx = x.transpose() * &x;
    let xty = x.transpose() * yv;
    let mut out = BTreeMap::new();
    if let Some(chol) = xtx.cholesky() {
        let b = chol.solve(&xty);
        for (j, t) in kept.iter().enumerate() {
            out.insert(*t, 2.0 * b[j + 1]);
        }
    }
    (out, dropped)
}

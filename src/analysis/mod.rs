//! Analysis: every number the report shows, computed from the study, its design and its data.
//!
//! Templates only format; nothing is computed in them. Numbers are kept at full precision here
//! and rounded only when the report prints them.

pub mod anova;
pub mod criterion;
pub mod curvature;
pub mod decision;
pub mod drift;
pub mod effects;
pub mod quantile;
pub mod text;

use serde::Serialize;

use crate::design::{Design, TermMask, term_factors, term_order};
use crate::study::results::{DataFile, Measurements};
use crate::study::{Diagnostics, FieldPath, LimitUnit, PercentOf, Study};

/// The whole analysis of one study (the `analysis.json` document).
#[derive(Debug, Clone, Serialize)]
pub struct Analysis {
    /// Which study this is.
    pub study: StudySummary,
    /// What the design was.
    pub design: DesignSummary,
    /// One entry per response.
    pub responses: Vec<ResponseAnalysis>,
    /// Factors with a relevant main effect on any response (ids, file order).
    pub non_robust_factors: Vec<String>,
    /// Where the numbers come from.
    pub provenance: Provenance,
}

/// Identification of the study.
#[derive(Debug, Clone, Serialize)]
pub struct StudySummary {
    /// Study id.
    pub id: String,
    /// Title.
    pub title: String,
    /// SHA-256 of the study file.
    pub sha256: String,
}

/// The design in numbers.
#[derive(Debug, Clone, Serialize)]
pub struct DesignSummary {
    /// Kind (`full-factorial`, `explicit`, ...).
    pub kind: String,
    /// All runs, nominal runs included.
    pub runs: usize,
    /// Two-level runs (all replicates).
    pub two_level_runs: usize,
    /// Nominal (centre) runs.
    pub center_points: usize,
    /// Replicates of the two-level part.
    pub replicates: usize,
    /// Seed of the run order, if randomised.
    pub seed: Option<u64>,
    /// For each estimated column, its alias chain as lists of factor-id lists.
    pub aliases: Vec<AliasEntry>,
}

/// One estimated column and every term it estimates.
#[derive(Debug, Clone, Serialize)]
pub struct AliasEntry {
    /// Label of the column (its lowest-order term).
    pub label: String,
    /// The terms sharing the column, each as a list of factor ids.
    pub chain: Vec<Vec<String>>,
}

/// Inputs and tools, for the provenance block.
#[derive(Debug, Clone, Serialize)]
pub struct Provenance {
    /// plateau version.
    pub plateau_version: String,
    /// The study file as named.
    pub study_file: String,
    /// SHA-256 of the study file.
    pub study_sha256: String,
    /// The results file, if the results came from one.
    pub data_file: Option<DataFile>,
}

/// The analysis of one response.
#[derive(Debug, Clone, Serialize)]
pub struct ResponseAnalysis {
    /// Response id.
    pub id: String,
    /// Name.
    pub name: String,
    /// Unit.
    pub unit: Option<String>,
    /// The value percent effects are taken against.
    pub reference: f64,
    /// `nominal-mean` (mean of the nominal runs) or `design-mean` (mean of the two-level runs).
    pub reference_kind: String,
    /// Mean of the two-level runs.
    pub design_mean: f64,
    /// Mean of the nominal runs, if there are any.
    pub nominal_mean: Option<f64>,
    /// Decimal places of the data (declared or found), for the report.
    pub decimals: u32,
    /// Effects, main effects first.
    pub effects: Vec<Effect>,
    /// The practical limits declared for this response.
    pub limits: Vec<LimitSummary>,
    /// The verdict.
    pub verdict: Verdict,
}

/// One effect.
#[derive(Debug, Clone, Serialize)]
pub struct Effect {
    /// Factor ids of the term (one for a main effect).
    pub factors: Vec<String>,
    /// Label, e.g. `temp×ph`; for an aliased column the whole chain, e.g. `C = A×B`.
    pub label: String,
    /// Order of the term (1 = main effect).
    pub order: u32,
    /// E = ȳ(+) − ȳ(−), in the response's unit.
    pub effect: f64,
    /// 100·E / reference.
    pub percent: f64,
    /// True when no other term of the order shown shares the column.
    pub estimable: bool,
    /// True for a dummy column (no factor assigned; its effect estimates error).
    pub dummy: bool,
    /// The other terms sharing the column (factor-id lists).
    pub aliases: Vec<Vec<String>>,
    /// |effect| (or |% effect|) above the declared limit; `null` when no limit applies.
    pub relevant: Option<bool>,
}

/// A declared practical limit.
#[derive(Debug, Clone, Serialize)]
pub struct LimitSummary {
    /// The limit value.
    pub limit: f64,
    /// `percent` or `absolute`.
    pub unit: LimitUnit,
    /// Where it comes from.
    pub basis: Option<String>,
}

/// The verdict on one response.
#[derive(Debug, Clone, Serialize)]
pub struct Verdict {
    /// True when no main effect is relevant; `null` when no limit was declared.
    pub robust: Option<bool>,
    /// Factors (ids) whose main effect is relevant.
    pub relevant_factors: Vec<String>,
    /// Interactions (labels) that are relevant.
    pub relevant_interactions: Vec<String>,
}

/// Analyses a study whose design and measurements are known.
pub fn analyse(study: &Study, design: &Design, data: &Measurements) -> Result<Analysis, Diagnostics> {
    let mut responses = Vec::new();
    let mut problems = Diagnostics::default();
    for (r, response) in study.responses.iter().enumerate() {
        match analyse_response(study, design, data, r) {
            Ok(a) => responses.push(a),
            Err(problem) => problems.push(study.diagnostic(
                &FieldPath::of(&["responses"]).index(r).key("percent-of"),
                problem.0,
                Some(problem.1),
            )),
        }
        let _ = response;
    }
    if !problems.is_empty() {
        return Err(problems);
    }
    let mut non_robust = Vec::new();
    for f in &study.factors {
        if responses
            .iter()
            .any(|r| r.verdict.relevant_factors.contains(&f.id))
        {
            non_robust.push(f.id.clone());
        }
    }
    Ok(Analysis {
        study: StudySummary {
            id: study.info.id.clone(),
            title: study.info.title.clone(),
            sha256: study.sha256.clone(),
        },
        design: design_summary(design),
        responses,
        non_robust_factors: non_robust,
        provenance: Provenance {
            plateau_version: env!("CARGO_PKG_VERSION").to_string(),
            study_file: study
                .path
                .file_name()
                .map_or_else(|| study.file_name.clone(), |n| n.to_string_lossy().to_string()),
            study_sha256: study.sha256.clone(),
            data_file: data.data_file.clone(),
        },
    })
}

fn design_summary(design: &Design) -> DesignSummary {
    let ids = |t: TermMask| -> Vec<String> {
        term_factors(t)
            .into_iter()
            .filter_map(|i| design.column_ids.get(i).cloned())
            .collect()
    };
    DesignSummary {
        kind: serde_json::to_value(design.kind)
            .ok()
            .and_then(|v| v.as_str().map(str::to_string))
            .unwrap_or_default(),
        runs: design.runs.len(),
        two_level_runs: design.runs.iter().filter(|r| !r.nominal).count(),
        center_points: design.nominal_count(),
        replicates: design.replicates,
        seed: design.seed,
        aliases: design
            .contrasts
            .iter()
            .map(|c| AliasEntry {
                label: design.label(c.term),
                chain: c.chain.iter().map(|(t, _)| ids(*t)).collect(),
            })
            .collect(),
    }
}

/// Per-run means of one response, in the order of `design.runs`.
fn run_means(design: &Design, data: &Measurements, r: usize) -> Vec<f64> {
    design
        .runs
        .iter()
        .map(|run| {
            data.values
                .get(&run.id)
                .and_then(|v| v.get(r))
                .map(|vals| mean(vals))
                .unwrap_or(f64::NAN)
        })
        .collect()
}

fn mean(values: &[f64]) -> f64 {
    if values.is_empty() {
        return f64::NAN;
    }
    values.iter().sum::<f64>() / values.len() as f64
}

/// Decimal places needed to show every value exactly (at most 6).
pub fn data_decimals(values: &[f64]) -> u32 {
    (0..=6)
        .find(|d| {
            let scale = 10f64.powi(*d as i32);
            values
                .iter()
                .all(|v| ((v * scale).round() - v * scale).abs() < 1e-6 * scale.max(1.0))
        })
        .unwrap_or(6)
}

fn analyse_response(
    study: &Study,
    design: &Design,
    data: &Measurements,
    r: usize,
) -> Result<ResponseAnalysis, (String, String)> {
    let response = &study.responses[r];
    let means = run_means(design, data, r);
    let (two_level_rows, two_level_y): (Vec<&[i8]>, Vec<f64>) = design
        .runs
        .iter()
        .zip(&means)
        .filter(|(run, _)| !run.nominal)
        .map(|(run, y)| (run.coded.as_slice(), *y))
        .unzip();
    let nominal_y: Vec<f64> = design
        .runs
        .iter()
        .zip(&means)
        .filter(|(run, _)| run.nominal)
        .map(|(_, y)| *y)
        .collect();
    let design_mean = mean(&two_level_y);
    let nominal_mean = (!nominal_y.is_empty()).then(|| mean(&nominal_y));
    let (reference, reference_kind) = match (response.percent_of, nominal_mean) {
        (PercentOf::Nominal, Some(m)) => (m, "nominal-mean"),
        _ => (design_mean, "design-mean"),
    };
    if reference == 0.0 || !reference.is_finite() {
        return Err((
            format!(
                "percent effects of `{}` cannot be taken against a {} of {reference}",
                response.id,
                if reference_kind == "nominal-mean" { "nominal-run mean" } else { "design mean" }
            ),
            "expected a reference different from zero; judge this response with an absolute limit (`unit: absolute`) instead".into(),
        ));
    }
    let fast = if design.complete_factorial {
        fwht_effects(design, &two_level_y)
    } else {
        None
    };
    let fitted = if design.least_squares {
        Some(least_squares_effects(&two_level_rows, &two_level_y, design.k())?)
    } else {
        None
    };
    let limits: Vec<&crate::study::EffectLimit> =
        study.limits.iter().filter(|l| l.response == r).collect();
    let mut effects = Vec::with_capacity(design.contrasts.len());
    for contrast in &design.contrasts {
        let e = match (&fast, &fitted) {
            (Some(all), _) => all.get(contrast.term as usize).copied(),
            (None, Some(map)) => map.get(&contrast.term).copied(),
            (None, None) => effects::effect(&two_level_rows, &two_level_y, contrast.term),
        };
        let Some(e) = e else { continue };
        let percent = 100.0 * e / reference;
        let dummy = term_factors(contrast.term)
            .iter()
            .any(|&j| j >= study.factors.len());
        let relevant = (!limits.is_empty() && !dummy).then(|| {
            limits.iter().any(|l| match l.unit {
                LimitUnit::Percent => percent.abs() > l.limit,
                LimitUnit::Absolute => e.abs() > l.limit,
            })
        });
        let ids = |t: TermMask| -> Vec<String> {
            term_factors(t)
                .into_iter()
                .filter_map(|i| design.column_ids.get(i).cloned())
                .collect()
        };
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
        effects.push(Effect {
            factors: ids(contrast.term),
            label,
            order: term_order(contrast.term),
            effect: e,
            percent,
            estimable: contrast.is_clean(),
            dummy,
            aliases: contrast.chain.iter().skip(1).map(|(t, _)| ids(*t)).collect(),
            relevant,
        });
    }
    let verdict = Verdict {
        robust: (!limits.is_empty()).then(|| {
            !effects
                .iter()
                .any(|e| e.order == 1 && !e.dummy && e.relevant == Some(true))
        }),
        relevant_factors: effects
            .iter()
            .filter(|e| e.order == 1 && !e.dummy && e.relevant == Some(true))
            .flat_map(|e| e.factors.clone())
            .collect(),
        relevant_interactions: effects
            .iter()
            .filter(|e| e.order > 1 && e.relevant == Some(true))
            .map(|e| e.label.clone())
            .collect(),
    };
    let all_values: Vec<f64> = data
        .values
        .values()
        .filter_map(|v| v.get(r))
        .flatten()
        .copied()
        .collect();
    Ok(ResponseAnalysis {
        id: response.id.clone(),
        name: response.name.clone(),
        unit: response.unit.clone(),
        reference,
        reference_kind: reference_kind.to_string(),
        design_mean,
        nominal_mean,
        decimals: response.decimals.unwrap_or_else(|| data_decimals(&all_values)),
        effects,
        limits: limits
            .iter()
            .map(|l| LimitSummary {
                limit: l.limit,
                unit: l.unit,
                basis: l.basis.clone(),
            })
            .collect(),
        verdict,
    })
}

/// Main effects of a non-orthogonal two-level design by least squares: y = b0 + Σ b_j x_j,
/// E_j = 2·b_j (so that E keeps its meaning of a change from −1 to +1), keyed by term mask.
fn least_squares_effects(
    rows: &[&[i8]],
    y: &[f64],
    k: usize,
) -> Result<std::collections::BTreeMap<TermMask, f64>, (String, String)> {
    let n = rows.len();
    let x = nalgebra::DMatrix::from_fn(n, k + 1, |i, j| {
        if j == 0 {
            1.0
        } else {
            f64::from(rows.get(i).and_then(|r| r.get(j - 1)).copied().unwrap_or(0))
        }
    });
    let yv = nalgebra::DVector::from_column_slice(y);
    let svd = x.svd(true, true);
    let rank = svd.rank(1e-9);
    if rank < k + 1 {
        return Err((
            format!("the design matrix has rank {rank}, so {} coefficients cannot all be estimated", k + 1),
            "expected runs whose factor columns are linearly independent".into(),
        ));
    }
    let b = svd
        .solve(&yv, 1e-12)
        .map_err(|e| (format!("least squares failed ({e})"), String::new()))?;
    Ok((0..k).map(|j| (1u64 << j, 2.0 * b[j + 1])).collect())
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

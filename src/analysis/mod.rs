//! Analysis: every number the report shows, computed from the study, its design and its data.
//!
//! Templates only format; nothing is computed in them. Numbers are kept at full precision here
//! and rounded only when the report prints them.

pub mod anova;
pub mod criteria;
pub mod criterion;
pub mod curvature;
pub mod decision;
pub mod drift;
mod effect_rows;
pub mod effects;
pub mod judge;
pub mod model;
pub mod observations;
pub mod power;
pub mod proposals;
pub mod quantile;
pub mod risk;
pub mod summary;

pub mod verdict;

pub use verdict::{FollowUp, Note, Outcome, UnresolvedChain, Verdict};

use serde::Serialize;

use crate::design::Design;
use crate::measurements::{DataFile, Measurements};
use crate::study::{Diagnostics, LimitUnit, Study};

/// The whole analysis of one study (the `analysis.json` document).
#[derive(Debug, Clone, Serialize)]
pub struct Analysis {
    /// Version of this document's layout (schemas/analysis.schema.json); raised when a field
    /// changes meaning or is removed, so that scripts reading analysis.json can tell.
    pub schema_version: u32,
    /// Which study this is.
    pub study: StudySummary,
    /// What the design was.
    pub design: DesignSummary,
    /// One entry per response.
    pub responses: Vec<ResponseAnalysis>,
    /// Factors of a clean term (main effect or interaction) beyond the practical limit on
    /// any assay response (ids, file order): these need control.
    pub non_robust_factors: Vec<String>,
    /// Factors of a clean significant term on any assay response (ids, file order).
    pub significant_factors: Vec<String>,
    /// Alias chains beyond the limit on an assay response that the design cannot resolve,
    /// with the follow-up runs that would.
    pub unresolved: Vec<UnresolvedSummary>,
    /// Power of the planned design to detect each declared limit (responses with a
    /// precision rule or a planning estimate).
    pub power: Option<power::PowerAnalysis>,
    /// Where the numbers come from.
    pub provenance: Provenance,
}

/// An unresolved alias chain of one response.
#[derive(Debug, Clone, Serialize)]
pub struct UnresolvedSummary {
    /// Response id.
    pub response: String,
    /// The chain.
    pub chain: UnresolvedChain,
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
    /// How many runs of each sort (serialized inline: `runs`, `two_level_runs`, ...).
    #[serde(flatten)]
    pub counts: RunCounts,
    /// Seed of the run order, if randomised.
    pub seed: Option<u64>,
    /// Generators, defining relation, resolution, fold-over and aliasing, as planned
    /// (serialized inline: `generators`, `resolution`, ...).
    #[serde(flatten)]
    pub structure: crate::design::Structure,
    /// Dummy columns (ids).
    pub dummies: Vec<String>,
    /// Effects by least squares (a non-orthogonal explicit design).
    pub least_squares: bool,
    /// For each estimated column, its alias chain as lists of factor-id lists.
    pub aliases: Vec<AliasEntry>,
}

/// How many runs a design has, of each sort; the analysis document and the chapter's design
/// paragraph both say these.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct RunCounts {
    /// All runs, nominal runs included.
    pub runs: usize,
    /// Two-level runs (all replicates).
    pub two_level_runs: usize,
    /// Nominal (centre) runs.
    pub center_points: usize,
    /// Replicates of the two-level part.
    pub replicates: usize,
}

impl RunCounts {
    /// The counts of a planned design.
    pub fn of(design: &Design) -> Self {
        Self {
            runs: design.runs.len(),
            two_level_runs: design.runs.iter().filter(|r| !r.nominal).count(),
            center_points: design.nominal_count(),
            replicates: design.replicates,
        }
    }
}

/// Ids of a design's dummy columns (no factor assigned), in column order.
pub fn dummy_ids(design: &Design) -> Vec<String> {
    design
        .column_ids
        .iter()
        .skip(design.k().saturating_sub(design.dummies))
        .cloned()
        .collect()
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
    /// The value percent effects are taken against (percent effects are undefined when it
    /// is zero).
    pub reference: f64,
    /// `nominal-mean` (mean of the nominal runs used) or `model-intercept` (b₀ of the fit).
    pub reference_kind: String,
    /// The model's intercept b₀: the predicted response at the centre of the coded cube
    /// (the mean of the two-level runs when the design is orthogonal).
    pub intercept: f64,
    /// The same as `intercept` (kept for readers of earlier analysis documents).
    pub design_mean: f64,
    /// Mean of the nominal runs used, if there are any.
    pub nominal_mean: Option<f64>,
    /// The model's prediction at the nominal setting (categorical factors at their nominal
    /// level), if there are nominal runs.
    pub nominal_prediction: Option<f64>,
    /// Decimal places of the data (declared or found), for the report.
    pub decimals: u32,
    /// `assay` or `suitability`.
    pub role: String,
    /// Every run's value in run order (raw and, with a drift correction, corrected).
    pub values: Vec<RunValue>,
    /// The fitted model.
    pub fit: FitSummary,
    /// The error that judges effects (whole runs repeated at one setting).
    pub error: judge::ErrorEstimate,
    /// Spread of repeat determinations within runs, when there are several per run.
    pub repeatability: Option<judge::Repeatability>,
    /// Effects, main effects first.
    pub effects: Vec<Effect>,
    /// The practical limits declared for this response.
    pub limits: Vec<LimitSummary>,
    /// Every criterion (effect limits and statistical ones) with its numbers.
    pub criteria: Vec<judge::CriterionSummary>,
    /// ANOVA with pure error, when the design has replicated settings.
    pub anova: Option<anova::AnovaTable>,
    /// Curvature from the nominal runs.
    pub curvature: Option<curvature::Curvature>,
    /// Drift seen in the nominal runs.
    pub drift: Option<judge::DriftSummary>,
    /// Worst case within the studied domain (suitability responses).
    pub worst_case: Option<judge::WorstCaseSummary>,
    /// Operating ranges proposed for factors with significant or relevant effects.
    pub control_ranges: Vec<judge::ControlRange>,
    /// Uncertainty contributions of the factors with a routine variation.
    pub uncertainty: Option<judge::UncertaintySummary>,
    /// Probability that a routine run falls outside the response's min/max limits.
    pub routine_risk: Option<risk::RoutineRisk>,
    /// The shift between block 2 (follow-up runs) and block 1, when there are two blocks.
    pub block_effect: Option<BlockEffect>,
    /// The verdict.
    pub verdict: Verdict,
    /// Facts the reader must see (excluded runs, least squares, drift, references), as data.
    pub notes: Vec<Note>,
}

/// The shift of the follow-up runs (block 2) against the first runs (block 1).
#[derive(Debug, Clone, Serialize)]
pub struct BlockEffect {
    /// Mean of block 2 minus mean of block 1, adjusted for the factor effects (2b).
    pub effect: f64,
    /// Its SE relative to an orthogonal effect of the same runs.
    pub se_ratio: f64,
}

/// The one fitted model of a response.
#[derive(Debug, Clone, Serialize)]
pub struct FitSummary {
    /// Two-level run means fitted.
    pub runs: usize,
    /// Terms with a coefficient (intercept not counted).
    pub terms: usize,
    /// Residual degrees of freedom.
    pub df_residual: usize,
    /// Residual sum of squares.
    pub rss: f64,
    /// XᵀX diagonal: every SE(E) equals 2s/√N.
    pub orthogonal: bool,
    /// Columns the runs used cannot estimate (labels).
    pub dropped: Vec<String>,
}

/// One run's value of a response.
#[derive(Debug, Clone, Serialize)]
pub struct RunValue {
    /// Run id.
    pub run: String,
    /// Run order.
    pub order: usize,
    /// Nominal run.
    pub nominal: bool,
    /// Excluded from the evaluation.
    pub excluded: bool,
    /// Mean of the determinations as measured.
    pub raw: f64,
    /// After drift correction (equal to `raw` without one).
    pub value: f64,
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
    /// 100·E / |reference|; `null` when the reference is zero.
    pub percent: Option<f64>,
    /// SE of this effect over that of an effect of an orthogonal design with the same runs,
    /// √(N·[(XᵀX)⁻¹]_jj): 1 when the runs used are orthogonal, above 1 after an exclusion.
    pub se_ratio: f64,
    /// True when no other term of the order shown shares the column.
    pub estimable: bool,
    /// True for a dummy column (no factor assigned; its effect estimates error).
    pub dummy: bool,
    /// The other terms sharing the column (factor-id lists).
    pub aliases: Vec<Vec<String>>,
    /// |effect| (or |% effect|) above the declared limit; `null` when no limit applies.
    pub relevant: Option<bool>,
    /// |effect| above the first statistical criterion's E_crit (Lenth: ME); `null` when none
    /// applies or the column estimates error.
    pub significant: Option<bool>,
    /// This effect's critical effect under the first statistical criterion (its E_crit times
    /// `se_ratio`).
    pub e_crit: Option<f64>,
    /// One verdict per statistical criterion, in `criteria` order of the significance rules.
    pub significance: Vec<Option<bool>>,
    /// Lenth only: |effect| above the simultaneous margin of error SME.
    pub exceeds_sme: Option<bool>,
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

/// Analyses a study whose design and measurements are known.
pub fn analyse(
    study: &Study,
    design: &Design,
    data: &Measurements,
) -> Result<Analysis, Diagnostics> {
    let mut responses = Vec::new();
    let mut problems = Diagnostics::default();
    for r in 0..study.responses.len() {
        match judge::analyse_response(study, design, data, r) {
            Ok(a) => responses.push(a),
            Err(problem) => {
                problems.push(study.diagnostic(&problem.field, problem.problem, problem.expected))
            }
        }
    }
    if !problems.is_empty() {
        return Err(problems);
    }
    let assay = |r: &&ResponseAnalysis| r.role == "assay";
    let unresolved: Vec<UnresolvedSummary> = responses
        .iter()
        .filter(assay)
        .flat_map(|r| {
            r.verdict.unresolved.iter().map(|c| UnresolvedSummary {
                response: r.id.clone(),
                chain: c.clone(),
            })
        })
        .collect();
    let non_robust: Vec<String> = study
        .factors
        .iter()
        .filter(|f| {
            responses
                .iter()
                .filter(assay)
                .any(|r| r.verdict.relevant_factors.contains(&f.id))
        })
        .map(|f| f.id.clone())
        .collect();
    let significant: Vec<String> = study
        .factors
        .iter()
        .filter(|f| {
            responses
                .iter()
                .filter(assay)
                .any(|r| r.verdict.significant_factors.contains(&f.id))
        })
        .map(|f| f.id.clone())
        .collect();
    Ok(Analysis {
        schema_version: 1,
        study: StudySummary {
            id: study.info.id.clone(),
            title: study.info.title.clone(),
            sha256: study.sha256.clone(),
        },
        design: design_summary(design),
        responses,
        non_robust_factors: non_robust,
        significant_factors: significant,
        unresolved,
        power: power::analyse(study, design, power::DEFAULT_TARGET).ok(),
        provenance: Provenance {
            plateau_version: env!("CARGO_PKG_VERSION").to_string(),
            study_file: study.path.file_name().map_or_else(
                || study.file_name.clone(),
                |n| n.to_string_lossy().to_string(),
            ),
            study_sha256: study.sha256.clone(),
            data_file: data.data_file.clone(),
        },
    })
}

fn design_summary(design: &Design) -> DesignSummary {
    DesignSummary {
        kind: design.kind.as_str().to_string(),
        counts: RunCounts::of(design),
        seed: design.seed,
        structure: design.structure.clone(),
        dummies: dummy_ids(design),
        least_squares: design.least_squares,
        aliases: design
            .contrasts
            .iter()
            .map(|c| AliasEntry {
                label: design.label(c.term),
                chain: c
                    .chain
                    .iter()
                    .map(|m| effect_rows::ids(design, m.word))
                    .collect(),
            })
            .collect(),
    }
}

/// Arithmetic mean (NaN for no values).
pub fn mean(values: &[f64]) -> f64 {
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

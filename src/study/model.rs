//! The study file as the user writes it: serde types that mirror `schemas/study.schema.json`.
//!
//! Every type denies unknown fields so that a typo is an error, never a silently ignored
//! setting. Fields whose meaning depends on another field (a numeric against a categorical
//! factor, `runs` as a count or as a list) are kept flat here and sorted out by the semantic
//! checks in `study::check`, which can then name the offending field and its line.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

/// The whole study file.
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct StudyFile {
    /// Version of the study-file format; only `1` exists.
    pub schema: u32,
    /// Identification of the study.
    pub study: StudyInfo,
    /// The operating parameters varied in the study.
    pub factors: Vec<FactorSpec>,
    /// How the runs are planned.
    pub design: DesignSpec,
    /// What is measured in each run.
    pub responses: Vec<ResponseSpec>,
    /// Acceptance rules: the criteria the effects are judged by.
    #[serde(default)]
    pub acceptance: Vec<AcceptanceSpec>,
    /// The measured values, inline or in a CSV file (absent while the study is planned).
    #[serde(default)]
    pub results: Option<ResultsSpec>,
    /// Runs left out of the evaluation, each with its reason (printed in the report).
    #[serde(default)]
    pub excluded: Vec<ExclusionSpec>,
    /// The approved protocol the study is executed against (its lock file).
    #[serde(default)]
    pub protocol: Option<ProtocolSpec>,
    /// How the chapter fits the laboratory's dossier.
    #[serde(default)]
    pub report: Option<ReportSpec>,
    /// Extra figures.
    #[serde(default)]
    pub figures: Option<FiguresSpec>,
    /// Free text by the analyst; printed literally in the report.
    #[serde(default)]
    pub notes: Option<String>,
}

/// The `figures` section.
#[derive(Debug, Clone, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct FiguresSpec {
    /// Two-factor interactions to plot in any case, e.g. `temp×ph`.
    #[serde(default)]
    pub interactions: Vec<String>,
}

/// The `report` section: dossier numbering and the laboratory's document frame.
#[derive(Debug, Clone, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct ReportSpec {
    /// Section number of the chapter in the dossier, e.g. `7.4`.
    #[serde(default)]
    pub section: Option<String>,
    /// Document number.
    #[serde(default)]
    pub document: Option<String>,
    /// Document version.
    #[serde(default)]
    pub version: Option<String>,
    /// Page header text.
    #[serde(default)]
    pub header: Option<String>,
    /// Page footer text.
    #[serde(default)]
    pub footer: Option<String>,
    /// Logo image (PNG, JPEG or SVG) relative to the study file.
    #[serde(default)]
    pub logo: Option<String>,
}

/// A run left out of the evaluation.
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct ExclusionSpec {
    /// Run id.
    pub run: serde_json::Value,
    /// Why the run is excluded.
    pub reason: String,
    /// The one response the run is excluded for (a fault that spoils one measurement but not
    /// the others); absent: every response.
    #[serde(default)]
    pub response: Option<String>,
}

/// The `protocol` section: which approved plan the study follows, and why it departs from it.
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct ProtocolSpec {
    /// The lock file written by `plateau protocol`, relative to the study file.
    pub lock: String,
    /// Protocol number in the laboratory's document system.
    #[serde(default)]
    pub number: Option<String>,
    /// Date the protocol was approved, `YYYY-MM-DD`.
    #[serde(default)]
    pub approved: Option<String>,
    /// The analyst's justification of each change from the locked plan.
    #[serde(default)]
    pub deviations: Vec<DeviationSpec>,
}

/// The justification of one change from the locked plan.
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct DeviationSpec {
    /// The changed field as the deviations section names it (`factors[temp].delta`), or a
    /// part of it (`factors[temp]`) to cover all its changes.
    pub field: String,
    /// Why the change was made.
    pub justification: String,
}

/// Where the study's data come from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum SourceKind {
    /// A robustness study run for the validation (the default).
    Validation,
    /// Data from method development (ICH Q14 allows robustness to be shown there).
    Development,
}

/// How a factor's routine variation ±a is distributed (one type for the study file and the
/// analysis).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Distribution {
    /// Equally likely anywhere in ±a: u = a/√3 (GUM JCGM 100:2008 §4.3.7).
    Rectangular,
    /// Most likely at the centre, zero at ±a: u = a/√6 (GUM §4.3.9).
    Triangular,
    /// ±a read as a 95 % interval of a normal distribution: u = a/1.96 (GUM §4.3.4).
    Normal,
}

impl Distribution {
    /// The name as written in the study file.
    pub fn as_str(self) -> &'static str {
        match self {
            Distribution::Rectangular => "rectangular",
            Distribution::Triangular => "triangular",
            Distribution::Normal => "normal",
        }
    }
}

/// Drift correction from the nominal runs (one type for the study file and the analysis).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum CorrectionMode {
    /// y_corr = y − (ŷ_nom(t) − y_nom(t₀)).
    Additive,
    /// y_corr = y · y_nom(t₀)/ŷ_nom(t).
    Relative,
}

impl CorrectionMode {
    /// The name as written in the study file.
    pub fn as_str(self) -> &'static str {
        match self {
            CorrectionMode::Additive => "additive",
            CorrectionMode::Relative => "relative",
        }
    }
}

/// What a response is for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Role {
    /// Decides whether the method is robust (the default).
    Assay,
    /// Expected to move; its worst case sets a system-suitability limit.
    Suitability,
}

/// How a critical effect is obtained (one type for the study file and the analysis).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Method {
    /// From a known standard deviation.
    Precision,
    /// From the dummy columns.
    Dummies,
    /// From terms declared negligible.
    Negligible,
    /// Dong's algorithm.
    Dong,
    /// Lenth's method.
    Lenth,
    /// ANOVA with pure error.
    Anova,
}

impl Method {
    /// The name as written in the study file.
    pub fn as_str(self) -> &'static str {
        match self {
            Method::Precision => "precision",
            Method::Dummies => "dummies",
            Method::Negligible => "negligible",
            Method::Dong => "dong",
            Method::Lenth => "lenth",
            Method::Anova => "anova",
        }
    }
}

/// `significance: {method, alpha, ...}`.
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct SignificanceSpec {
    /// The error model.
    pub method: Method,
    /// Significance level (default 0.05).
    #[serde(default)]
    pub alpha: Option<f64>,
    /// Standard deviation (method precision).
    #[serde(default)]
    pub s: Option<f64>,
    /// Its degrees of freedom (method precision).
    #[serde(default)]
    pub df: Option<f64>,
    /// Where s comes from (method precision).
    #[serde(default)]
    pub source: Option<String>,
    /// Determinations averaged per run (method precision; default 1).
    #[serde(default)]
    pub determinations: Option<u32>,
    /// Terms assumed negligible (method negligible), e.g. `temp×ph×flow`.
    #[serde(default)]
    pub terms: Option<Vec<String>>,
}

/// Identification of the study.
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct StudyInfo {
    /// Study identifier, e.g. a protocol number.
    pub id: String,
    /// Title of the study.
    pub title: String,
    /// The analytical method studied (name and version).
    pub method: String,
    /// Who carried out the study.
    pub analyst: String,
    /// Date of the study, `YYYY-MM-DD`; also pins the PDF creation date.
    pub date: String,
    /// What the study has to show.
    #[serde(default)]
    pub objective: Option<String>,
    /// `validation` (default) or `development`.
    #[serde(default)]
    pub source: Option<SourceKind>,
    /// The development study the data come from (with `source: development`).
    #[serde(default)]
    pub source_reference: Option<String>,
}

/// One factor: numeric (`nominal` with `delta` or `low`/`high`) or categorical (`levels`).
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct FactorSpec {
    /// Short identifier used in designs, results and labels.
    pub id: String,
    /// Name as printed in the report.
    pub name: String,
    /// Unit of the levels (numeric factors).
    #[serde(default)]
    pub unit: Option<String>,
    /// Nominal (method) setting of a numeric factor.
    #[serde(default)]
    pub nominal: Option<f64>,
    /// Symmetric half-range: levels are `nominal ± delta`.
    #[serde(default)]
    pub delta: Option<f64>,
    /// Low level (with `high`), for asymmetric ranges.
    #[serde(default)]
    pub low: Option<f64>,
    /// High level (with `low`).
    #[serde(default)]
    pub high: Option<f64>,
    /// The two levels of a categorical factor; the first is the nominal one.
    #[serde(default)]
    pub levels: Option<Vec<String>>,
    /// Why this range was chosen.
    #[serde(default)]
    pub justification: Option<String>,
    /// Expected variation in routine use, ± value in the factor's unit.
    #[serde(default)]
    pub routine: Option<f64>,
    /// Distribution of the routine variation (default rectangular).
    #[serde(default)]
    pub distribution: Option<Distribution>,
}

/// The kinds of design the study file can ask for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum DesignKind {
    /// All 2^k combinations, run ids in standard order.
    FullFactorial,
    /// A regular 2^(k−p) fraction from generators or from the catalogue.
    FractionalFactorial,
    /// A Plackett–Burman design; unassigned columns become dummy factors.
    PlackettBurman,
    /// The Youden–Steiner ruggedness design: 7 columns in 8 runs.
    Youden,
    /// A design planned elsewhere, given run by run in coded levels.
    Explicit,
}

impl DesignKind {
    /// The kind as written in the study file.
    pub fn as_str(self) -> &'static str {
        match self {
            DesignKind::FullFactorial => "full-factorial",
            DesignKind::FractionalFactorial => "fractional-factorial",
            DesignKind::PlackettBurman => "plackett-burman",
            DesignKind::Youden => "youden",
            DesignKind::Explicit => "explicit",
        }
    }
}

/// Where the nominal (centre) runs go in the run order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum NominalPlacement {
    /// Spread evenly: at the start, at the end and at regular intervals between (drift check).
    Spread,
    /// All at the start.
    First,
    /// All at the end.
    Last,
    /// Shuffled with the other runs.
    Random,
}

/// The `nominal-runs` setting: a named placement or `{every: k}`.
#[derive(Debug, Clone, Copy, Deserialize, Serialize)]
#[serde(untagged)]
pub enum NominalRunsSpec {
    /// `spread`, `first`, `last` or `random`.
    Named(NominalPlacement),
    /// A nominal run first and then after every k two-level runs.
    Every(EverySpec),
}

/// `{every: k}`.
#[derive(Debug, Clone, Copy, Deserialize, Serialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct EverySpec {
    /// Two-level runs between nominal runs.
    pub every: u32,
}

/// `runs:` — a number of runs (generated designs) or the run list (explicit designs).
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(untagged)]
pub enum RunsSpec {
    /// Number of two-level runs.
    Count(u64),
    /// Runs of an explicit design.
    List(Vec<BTreeMap<String, serde_json::Value>>),
}

/// The `randomize` setting: `false`, or `{seed: n}`.
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(untagged)]
pub enum RandomizeSpec {
    /// `false` keeps standard order (`true` is rejected: a seed is required).
    Flag(bool),
    /// Shuffle with this seed.
    Seeded(SeedSpec),
}

/// `{seed: n}`.
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct SeedSpec {
    /// Seed of the portable ChaCha20 generator.
    pub seed: u64,
}

/// The `design` section.
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct DesignSpec {
    /// Kind of design.
    pub kind: DesignKind,
    /// Number of runs (fractional factorial, Plackett–Burman) or the run list (explicit).
    #[serde(default)]
    pub runs: Option<RunsSpec>,
    /// Generators of a fractional factorial, e.g. `E = ABCD` or `lot = temp*ph`.
    #[serde(default)]
    pub generators: Option<Vec<String>>,
    /// Smallest acceptable resolution (catalogue choice of a fractional factorial).
    #[serde(default)]
    pub resolution: Option<u32>,
    /// At least this many dummy columns (Plackett–Burman, Youden).
    #[serde(default)]
    pub dummies: Option<u32>,
    /// Add the mirror-image runs (full fold-over).
    #[serde(default)]
    pub foldover: Option<bool>,
    /// Highest interaction order shown in alias chains (default 2).
    #[serde(default)]
    pub alias_order: Option<u32>,
    /// Accept a non-orthogonal explicit design; effects then come from least squares.
    #[serde(default)]
    pub allow_nonorthogonal: Option<bool>,
    /// Number of nominal (centre) runs added.
    #[serde(default)]
    pub center_points: Option<u32>,
    /// Where the nominal runs go in the run order.
    #[serde(default)]
    pub nominal_runs: Option<NominalRunsSpec>,
    /// How many times the whole two-level design is run.
    #[serde(default)]
    pub replicates: Option<u32>,
    /// Run order: `false` (standard order) or `{seed: n}`.
    #[serde(default)]
    pub randomize: Option<RandomizeSpec>,
    /// Correct the responses for drift seen in the nominal runs.
    #[serde(default)]
    pub drift_correction: Option<CorrectionMode>,
}

/// Which value percent effects are taken against.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum PercentOf {
    /// Mean of the nominal runs.
    Nominal,
    /// Mean of the two-level runs.
    Mean,
}

/// One measured response.
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct ResponseSpec {
    /// Identifier used in results and acceptance rules.
    pub id: String,
    /// Name as printed.
    pub name: String,
    /// Unit of the values.
    #[serde(default)]
    pub unit: Option<String>,
    /// Reference for percent effects; default `nominal` when there are nominal runs, else `mean`.
    #[serde(default)]
    pub percent_of: Option<PercentOf>,
    /// Decimal places for the report; default from the data.
    #[serde(default)]
    pub decimals: Option<u32>,
    /// `assay` (default) or `suitability`.
    #[serde(default)]
    pub role: Option<Role>,
    /// Planning estimates for `plateau power`.
    #[serde(default)]
    pub planning: Option<Planning>,
}

/// Planning estimates of a response, before any result.
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct Planning {
    /// Expected standard deviation of one determination.
    #[serde(default)]
    pub sd: Option<f64>,
    /// Its degrees of freedom (none: taken as known).
    #[serde(default)]
    pub df: Option<f64>,
    /// Expected response level, for percent limits.
    #[serde(default)]
    pub level: Option<f64>,
    /// Where the estimate comes from.
    #[serde(default)]
    pub source: Option<String>,
}

/// Unit of an effect limit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum LimitUnit {
    /// Limit on |% effect|.
    Percent,
    /// Limit on |effect| in the response's unit.
    Absolute,
}

/// One acceptance rule.
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct AcceptanceSpec {
    /// The response the rule applies to.
    pub response: String,
    /// Largest acceptable |effect| (percent by default).
    #[serde(default)]
    pub effect_limit: Option<f64>,
    /// Unit of `effect-limit`.
    #[serde(default)]
    pub unit: Option<LimitUnit>,
    /// Where the limit comes from (e.g. a repeatability limit r = 2.8 s_r).
    #[serde(default)]
    pub basis: Option<String>,
    /// A statistical criterion.
    #[serde(default)]
    pub significance: Option<SignificanceSpec>,
    /// Lowest acceptable value of a system-suitability response.
    #[serde(default)]
    pub min: Option<f64>,
    /// Highest acceptable value of a system-suitability response.
    #[serde(default)]
    pub max: Option<f64>,
}

/// The `results` section: a CSV file or inline runs.
#[derive(Debug, Clone, Deserialize, Serialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct ResultsSpec {
    /// CSV file relative to the study file: columns `run`, response ids (and optionally the
    /// run sheet's `order` and factor columns).
    #[serde(default)]
    pub file: Option<String>,
    /// Inline results: `{run: ID, <response id>: value}`.
    #[serde(default)]
    pub runs: Option<Vec<BTreeMap<String, serde_json::Value>>>,
    /// Determinations per run (repeated CSV rows or inline lists); default 1.
    #[serde(default)]
    pub determinations: Option<u32>,
    /// Column separator of the CSV, when it cannot be told from its header.
    #[serde(default)]
    pub separator: Option<super::dialect::Separator>,
    /// Decimal mark of the CSV's numbers, when it cannot be told from them.
    #[serde(default)]
    pub decimal: Option<super::dialect::Decimal>,
    /// Text encoding of the CSV, when it has no byte-order mark and is not UTF-8.
    #[serde(default)]
    pub encoding: Option<super::dialect::Encoding>,
}

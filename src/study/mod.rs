//! The study: the checked, typed form of one study file, ready for planning and analysis.
//!
//! `load` takes a path and gives either a `Study` whose every field has passed the schema and
//! the semantic checks, or all the problems found, each with file, line and field.

pub mod check;
pub mod diagnostic;
pub mod dialect;
pub mod glyphs;
pub mod load;
pub mod locate;
pub mod model;
pub mod planning;
pub mod schema;

use std::path::PathBuf;

pub use diagnostic::{Diagnostic, Diagnostics, FieldPath, FieldProblem};

/// The rules of a design request that only the design stage knows (which fraction, which
/// Plackett–Burman size): handed to the loader, so that a study file's design problems are
/// reported with all its other problems while the study stage names no later stage.
pub type DesignRules = fn(&DesignRequest, &[&str]) -> Vec<FieldProblem>;
pub use model::{DesignKind, LimitUnit, PercentOf};

/// A run identifier as the run sheet prints it (integers are kept as their decimal text).
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord, Hash, serde::Serialize)]
pub struct RunId(pub String);

impl RunId {
    /// The one form a run id is compared in: the text trimmed, and a number written in
    /// decimal (`7`, `+7`, `007`, `7.0`, `7e0`) as its whole-number value `7`, so that the
    /// same run written as a YAML number, a YAML string or a CSV cell is one id. Text that is
    /// not a whole number within ±9·10^15 (exact in a double) is kept as written.
    pub fn canonical(text: &str) -> RunId {
        let t = text.trim();
        let numeric = !t.is_empty()
            && t.bytes()
                .all(|b| b.is_ascii_digit() || matches!(b, b'+' | b'-' | b'.' | b'e' | b'E'))
            && t.bytes().any(|b| b.is_ascii_digit());
        if numeric {
            if let Ok(i) = t.parse::<i64>() {
                return RunId(i.to_string());
            }
            if let Ok(f) = t.parse::<f64>()
                && f.fract() == 0.0
                && f.abs() < 9.0e15
            {
                return RunId(format!("{}", f as i64));
            }
        }
        RunId(t.to_string())
    }
}

impl std::fmt::Display for RunId {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}

/// A checked study.
#[derive(Debug, Clone)]
pub struct Study {
    /// The study file's path as given on the command line.
    pub path: PathBuf,
    /// The file name used in messages.
    pub file_name: String,
    /// The text of the study file (kept to locate fields in later checks).
    pub text: String,
    /// SHA-256 of the study file's bytes, lowercase hex.
    pub sha256: String,
    /// Identification.
    pub info: model::StudyInfo,
    /// Factors in file order.
    pub factors: Vec<Factor>,
    /// The planned design as requested.
    pub design: DesignRequest,
    /// Responses in file order.
    pub responses: Vec<Response>,
    /// Practical limits on effects.
    pub limits: Vec<EffectLimit>,
    /// Statistical criteria.
    pub significance: Vec<SignificanceRule>,
    /// Limits on system-suitability responses.
    pub suitability: Vec<SuitabilityLimit>,
    /// Runs left out of the evaluation.
    pub excluded: Vec<Exclusion>,
    /// Where the data come from.
    pub source: model::SourceKind,
    /// Dossier numbering and document frame.
    pub report: model::ReportSpec,
    /// Two-factor interactions to plot in any case (term masks).
    pub figure_interactions: Vec<u64>,
    /// Where the results come from (`None` while the study is being planned).
    pub results: Option<model::ResultsSpec>,
    /// Analyst notes.
    pub notes: Option<String>,
    /// The approved protocol the study follows (`protocol:`), if any.
    pub protocol: Option<model::ProtocolSpec>,
    /// The planning content of the study file (everything but results, exclusions, notes,
    /// report frame and protocol), in the canonical form a protocol lock holds.
    pub planning: serde_json::Value,
    /// The protocol lock, read and checked against its own hash (set by `pipeline::plan`).
    pub lock: Option<planning::Lock>,
    /// The logo's bytes as checked (`report.logo`), embedded by the report as read here.
    pub logo: Option<Vec<u8>>,
    /// The positions of the study file's fields, parsed once, for every later diagnostic.
    pub locator: locate::Locator,
}

/// A factor with its two levels resolved.
#[derive(Debug, Clone, serde::Serialize)]
pub struct Factor {
    /// Identifier.
    pub id: String,
    /// Printed name.
    pub name: String,
    /// Unit of numeric levels.
    pub unit: Option<String>,
    /// The levels.
    pub levels: Levels,
    /// Why the range was chosen.
    pub justification: Option<String>,
    /// Expected routine variation ±a and its distribution.
    pub routine: Option<(f64, model::Distribution)>,
}

/// The levels of a factor.
#[derive(Debug, Clone, serde::Serialize)]
#[serde(tag = "type", rename_all = "kebab-case")]
pub enum Levels {
    /// A numeric factor: low < nominal < high (nominal may sit anywhere inside the range).
    Numeric {
        /// Method setting.
        nominal: f64,
        /// Coded −1.
        low: f64,
        /// Coded +1.
        high: f64,
    },
    /// A categorical factor: coded −1 is the nominal level, +1 the alternative.
    Categorical {
        /// The nominal level (coded −1, also used in nominal runs).
        nominal: String,
        /// The alternative level (coded +1).
        alternative: String,
    },
}

impl Factor {
    /// The setting at a coded level (−1, 0 = nominal, +1) as printed in run tables.
    pub fn setting(&self, coded: i8) -> Setting {
        match &self.levels {
            Levels::Numeric { nominal, low, high } => Setting::Value(match coded {
                c if c < 0 => *low,
                0 => *nominal,
                _ => *high,
            }),
            Levels::Categorical {
                nominal,
                alternative,
            } => Setting::Level(if coded > 0 {
                alternative.clone()
            } else {
                nominal.clone()
            }),
        }
    }

    /// True for numeric factors.
    pub fn is_numeric(&self) -> bool {
        matches!(self.levels, Levels::Numeric { .. })
    }
}

/// A factor setting in real units.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
#[serde(untagged)]
pub enum Setting {
    /// Numeric setting.
    Value(f64),
    /// Categorical level.
    Level(String),
}

/// Where the nominal runs go in the run order.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Placement {
    /// At the start, at the end and evenly between.
    Spread,
    /// All first.
    First,
    /// All last.
    Last,
    /// Shuffled with the other runs.
    Random,
    /// One first, then one after every k two-level runs.
    Every(usize),
}

/// The design section after checking.
#[derive(Debug, Clone)]
pub struct DesignRequest {
    /// Kind of design.
    pub kind: DesignKind,
    /// Runs of an explicit design.
    pub explicit_runs: Vec<ExplicitRun>,
    /// Generators as written (`generators:`), for a fractional factorial.
    pub generators: Option<Vec<String>>,
    /// The resolution asked for (`resolution:`), for a fractional factorial.
    pub resolution: Option<u32>,
    /// The run count asked for (`runs: N`) of a generated design.
    pub runs: Option<usize>,
    /// Dummy columns asked for (`dummies:`) of a Plackett–Burman design.
    pub dummies: usize,
    /// Add the mirror-image runs.
    pub foldover: bool,
    /// Highest interaction order in alias chains.
    pub alias_order: u32,
    /// Least squares for a non-orthogonal explicit design.
    pub allow_nonorthogonal: bool,
    /// Nominal runs to add (generated designs).
    pub center_points: usize,
    /// Where nominal runs go.
    pub nominal_runs: Placement,
    /// Replicates of the two-level part.
    pub replicates: usize,
    /// Seed for the run order, `None` for standard order.
    pub seed: Option<u64>,
    /// Drift correction from the nominal runs.
    pub drift_correction: Option<model::CorrectionMode>,
}

/// One run of an explicit design.
#[derive(Debug, Clone)]
pub struct ExplicitRun {
    /// Block: 1, or 2 for follow-up runs.
    pub block: u8,
    /// Run id.
    pub id: RunId,
    /// Executed position, if given.
    pub order: Option<usize>,
    /// Coded level per factor, in factor order.
    pub levels: Vec<i8>,
}

/// A response after checking.
#[derive(Debug, Clone, serde::Serialize)]
pub struct Response {
    /// Identifier.
    pub id: String,
    /// Printed name.
    pub name: String,
    /// Unit.
    pub unit: Option<String>,
    /// Reference for percent effects.
    pub percent_of: PercentOf,
    /// Decimal places requested for the report.
    pub decimals: Option<u32>,
    /// Assay (decides robustness) or suitability (sets limits).
    pub role: model::Role,
    /// Planning estimates for `plateau power`.
    pub planning: Option<Planning>,
}

/// A statistical criterion for the effects of one response.
#[derive(Debug, Clone, serde::Serialize)]
pub struct SignificanceRule {
    /// Index of the response.
    pub response: usize,
    /// Position of the rule in `acceptance` (for messages).
    pub entry: usize,
    /// The error model.
    pub method: model::Method,
    /// Significance level.
    pub alpha: f64,
    /// Known standard deviation (precision).
    pub s: Option<f64>,
    /// Its degrees of freedom (precision).
    pub df: Option<f64>,
    /// Where s comes from.
    pub source: Option<String>,
    /// Determinations averaged per run (precision).
    pub determinations: usize,
    /// Terms declared negligible, as written and as a term mask.
    pub terms: Vec<(String, u64)>,
}

/// Limits on a system-suitability response.
#[derive(Debug, Clone, serde::Serialize)]
pub struct SuitabilityLimit {
    /// Index of the response.
    pub response: usize,
    /// Lowest acceptable value.
    pub min: Option<f64>,
    /// Highest acceptable value.
    pub max: Option<f64>,
}

/// A run left out of the evaluation.
#[derive(Debug, Clone, serde::Serialize)]
pub struct Exclusion {
    /// Run id.
    pub run: RunId,
    /// Why.
    pub reason: String,
    /// Position in `excluded` (for messages).
    pub entry: usize,
    /// The one response (index) the run is excluded for; `None`: every response.
    pub response: Option<usize>,
}

impl Exclusion {
    /// True when the exclusion removes the run from response `r`.
    pub fn applies_to(&self, r: usize) -> bool {
        self.response.is_none_or(|x| x == r)
    }
}

/// A practical limit on the effects of one response.
#[derive(Debug, Clone, serde::Serialize)]
pub struct EffectLimit {
    /// Index of the response.
    pub response: usize,
    /// Largest acceptable |effect| (or |% effect|).
    pub limit: f64,
    /// Percent or absolute.
    pub unit: LimitUnit,
    /// Where the limit comes from.
    pub basis: Option<String>,
}

impl Study {
    /// A diagnostic about `field` in this study file, located at the field's value.
    pub fn diagnostic(
        &self,
        field: &FieldPath,
        problem: impl Into<String>,
        expected: impl Into<Option<String>>,
    ) -> Diagnostic {
        Diagnostic::field(&self.file_name, field, problem, expected)
            .at(self.locator.value(&field.0))
    }
}

/// Planning estimates of a response (`responses[].planning`).
#[derive(Debug, Clone, serde::Serialize)]
pub struct Planning {
    /// Expected standard deviation of one determination (NaN when only a level is given).
    pub sd: f64,
    /// Its degrees of freedom (none: taken as known).
    pub df: Option<f64>,
    /// Expected response level, for percent limits.
    pub level: Option<f64>,
    /// Where the estimate comes from.
    pub source: Option<String>,
}

#[cfg(test)]
mod run_id_tests {
    use super::RunId;

    #[test]
    fn one_canonical_form_for_a_run_id() {
        for text in ["7", " 7 ", "+7", "007", "7.0", "7e0"] {
            assert_eq!(RunId::canonical(text), RunId("7".into()), "{text}");
        }
        assert_eq!(RunId::canonical("7.5"), RunId("7.5".into()));
        assert_eq!(RunId::canonical("R7"), RunId("R7".into()));
        assert_eq!(RunId::canonical("1e300"), RunId("1e300".into()));
    }
}

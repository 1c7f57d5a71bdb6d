//! The numbers of one response's judgment as the analysis document carries them: criteria,
//! drift, the error estimate, repeatability, worst case, operating ranges and uncertainty.

use serde::Serialize;

use super::{decision, drift};
use crate::study::LimitUnit;

/// One declared criterion and its numbers.
///
/// For a statistical criterion, `se` and `e_crit` are those of an effect of an orthogonal
/// design with the same number of runs; an effect whose column lost orthogonality (a run
/// excluded) has its own threshold `e_crit × se_ratio` (see `Effect::se_ratio`).
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

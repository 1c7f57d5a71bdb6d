//! What changed between two versions of a study: in the inputs (metadata, factors, design,
//! criteria, results per run) and in the outputs (effects, verdicts, criteria numbers and the
//! conclusion sentences), so a reviewer re-approving a study sees exactly what a re-run moved.
//!
//! Both versions go through the normal pipeline unchanged; this module only compares the two
//! [`crate::pipeline::Evaluated`] values. An older version kept in git is read from the
//! repository into memory by [`load_revision`] (the study, its results and the files it names,
//! as committed) and goes through the same pipeline through [`crate::files::InMemory`].

mod compare;
mod git;
mod pdf;
mod text;

use serde::Serialize;
use serde_json::Value;

use crate::measurements::DataFile;

pub use compare::compare;
pub use git::{DiffError, Revision, evaluate_revision, load_revision};
pub use pdf::write_pdf;
pub use text::text;

/// Two numbers count as equal when they differ by no more than this fraction of their scale.
///
/// Effects are sums of differences of measured values, so rounding in the last bits moves them
/// by about 1e-15 of the response's size; 1e-12 keeps such noise out of the diff while any real
/// change in a result (at least one unit in the last decimal of the data) shows.
pub const RELATIVE_TOLERANCE: f64 = 1e-12;

/// All changes between an old and a new version of a study.
#[derive(Debug, Clone, Serialize)]
pub struct StudyDiff {
    /// The old version.
    pub old: Version,
    /// The new version.
    pub new: Version,
    /// What changed in what the user wrote and measured.
    pub inputs: Inputs,
    /// What changed in what plateau computed from it.
    pub outputs: Outputs,
    /// Why the study was changed (`diff --reason`), for the re-approval.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub reason: Option<Reason>,
}

/// The reason for a change, as the re-approval records it.
#[derive(Debug, Clone, Serialize)]
pub struct Reason {
    /// The reason as given.
    pub text: String,
    /// Who made the change: the analyst of the new version.
    pub author: String,
}

/// Identification of one compared version.
#[derive(Debug, Clone, Serialize)]
pub struct Version {
    /// How the version is named to the reader: the file as given, or `REV (commit)`.
    pub label: String,
    /// The study file (as given, or as named in the repository).
    pub file: String,
    /// Study id.
    pub id: String,
    /// Title.
    pub title: String,
    /// Study date (`YYYY-MM-DD`).
    pub date: String,
    /// SHA-256 of the study file.
    pub sha256: String,
    /// The results file and its SHA-256, when results came from one.
    pub data_file: Option<DataFile>,
}

/// One field that has another value in the new version (`null` where a side has none).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Change {
    /// What the field belongs to: a factor or response id, a run id; empty for the study and
    /// the design as a whole.
    pub item: String,
    /// The field, e.g. `nominal`, `effect-limit`, `seed`.
    pub field: String,
    /// Old value.
    pub old: Value,
    /// New value.
    pub new: Value,
}

/// Items (factors, responses, runs) present in only one version.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct AddedRemoved {
    /// Ids only in the new version.
    pub added: Vec<String>,
    /// Ids only in the old version.
    pub removed: Vec<String>,
}

impl AddedRemoved {
    /// True when nothing was added or removed.
    pub fn is_empty(&self) -> bool {
        self.added.is_empty() && self.removed.is_empty()
    }
}

/// A measured value that changed (runs present in both versions).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ResultChange {
    /// Run id.
    pub run: String,
    /// Response id.
    pub response: String,
    /// Old determinations (empty when the old version has none for this response).
    pub old: Vec<f64>,
    /// New determinations.
    pub new: Vec<f64>,
}

/// Changes in the inputs.
#[derive(Debug, Clone, Default, Serialize)]
pub struct Inputs {
    /// Study metadata (id, title, method, analyst, date, objective, source, report frame, notes).
    pub study: Vec<Change>,
    /// Factors added or removed (ids).
    pub factors_added_removed: AddedRemoved,
    /// Factors in both versions whose fields changed (`item` = factor id).
    pub factors: Vec<Change>,
    /// Design (kind, generators, runs, centre points, replicates, seed, factor order...).
    pub design: Vec<Change>,
    /// Responses added or removed (ids).
    pub responses_added_removed: AddedRemoved,
    /// Responses in both versions whose fields changed (`item` = response id).
    pub responses: Vec<Change>,
    /// Acceptance criteria: limits, methods, alpha... (`item` = response id).
    pub acceptance: Vec<Change>,
    /// Excluded runs and their reasons (`item` = run id).
    pub excluded: Vec<Change>,
    /// Runs with results in only one version.
    pub runs_added_removed: AddedRemoved,
    /// Results that changed, run by run.
    pub results: Vec<ResultChange>,
}

impl Inputs {
    /// True when no input changed.
    pub fn is_empty(&self) -> bool {
        self.study.is_empty()
            && self.factors_added_removed.is_empty()
            && self.factors.is_empty()
            && self.design.is_empty()
            && self.responses_added_removed.is_empty()
            && self.responses.is_empty()
            && self.acceptance.is_empty()
            && self.excluded.is_empty()
            && self.runs_added_removed.is_empty()
            && self.results.is_empty()
    }
}

/// An effect and its percent effect.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct EffectValue {
    /// E in the response's unit.
    pub effect: f64,
    /// 100·E / reference.
    pub percent: f64,
}

/// An effect that moved (or exists in only one version).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EffectChange {
    /// Response id.
    pub response: String,
    /// Effect label, e.g. `ph` or `temp×ph`.
    pub label: String,
    /// Old value (`null` when the old version has no such effect).
    pub old: Option<EffectValue>,
    /// New value.
    pub new: Option<EffectValue>,
}

/// A verdict with another value in the new version.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct VerdictFlip {
    /// Response id.
    pub response: String,
    /// The effect label for a per-effect verdict; `null` for a verdict on the response.
    pub effect: Option<String>,
    /// `relevant`, `significant`, `robust`, `no significant effect` or `worst case meets limit`.
    pub verdict: String,
    /// Old verdict (`null`: not judged).
    pub old: Option<bool>,
    /// New verdict.
    pub new: Option<bool>,
}

/// A computed number of a criterion (or the percent reference) that changed.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NumberChange {
    /// Response id.
    pub response: String,
    /// The criterion (`effect-limit`, `lenth`, `precision`, ...), or `percent reference`.
    pub criterion: String,
    /// The quantity: `E_crit`, `ME`, `SME`, `PSE`, `s_E`, `df`, `limit`, `reference`.
    pub quantity: String,
    /// Old value (`null`: not available).
    pub old: Option<f64>,
    /// New value.
    pub new: Option<f64>,
}

/// Conclusion sentences in only one version (compared as lists, order ignored).
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct SentenceChanges {
    /// Sentences of the old conclusion that the new one no longer has.
    pub removed: Vec<String>,
    /// Sentences of the new conclusion that the old one did not have.
    pub added: Vec<String>,
}

/// Changes in the outputs.
#[derive(Debug, Clone, Default, Serialize)]
pub struct Outputs {
    /// Effects that moved beyond [`RELATIVE_TOLERANCE`].
    pub effects: Vec<EffectChange>,
    /// Verdicts that flipped.
    pub verdicts: Vec<VerdictFlip>,
    /// Criteria numbers that changed.
    pub numbers: Vec<NumberChange>,
    /// Conclusion sentences that changed.
    pub conclusion: SentenceChanges,
}

impl Outputs {
    /// True when no output changed.
    pub fn is_empty(&self) -> bool {
        self.effects.is_empty()
            && self.verdicts.is_empty()
            && self.numbers.is_empty()
            && self.conclusion.removed.is_empty()
            && self.conclusion.added.is_empty()
    }
}

impl StudyDiff {
    /// True when neither inputs nor outputs changed (the files may still differ in comments or
    /// layout; compare [`Version::sha256`] for that).
    pub fn is_empty(&self) -> bool {
        self.inputs.is_empty() && self.outputs.is_empty()
    }

    /// The same diff with the versions named for the reader, e.g. `HEAD~1 (3f2a9c1)` and
    /// `working copy`.
    pub fn with_labels(mut self, old: impl Into<String>, new: impl Into<String>) -> Self {
        self.old.label = old.into();
        self.new.label = new.into();
        self
    }

    /// The same diff with the reason for the change and its author.
    pub fn with_reason(mut self, text: impl Into<String>, author: impl Into<String>) -> Self {
        self.reason = Some(Reason {
            text: text.into(),
            author: author.into(),
        });
        self
    }

    /// The same diff with the file names to print (the old version of a revision lives in a
    /// temporary folder; the reader wants its name in the repository).
    pub fn with_files(mut self, old: impl Into<String>, new: impl Into<String>) -> Self {
        self.old.file = old.into();
        self.new.file = new.into();
        self
    }
}

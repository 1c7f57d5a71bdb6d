//! Planning: from the study's design section to the coded run list, run order and contrasts.
//!
//! A `Design` knows every run (stable id in standard order, separate run order, coded levels)
//! and every contrast column the runs can estimate, each with its alias chain, so the analysis
//! never has to guess what a column means.

pub mod aliasing;
pub mod catalogue;
pub mod construction;
mod contrasts;
pub mod fraction;
pub mod generator;
pub mod order;
pub mod plackett_burman;
mod plan;
pub mod sheet;
pub mod word;

use crate::study::{DesignKind, Diagnostics, FieldPath, RunId, Study};

pub use word::{SignedWord, Word};

/// One planned run.
#[derive(Debug, Clone, serde::Serialize)]
pub struct PlannedRun {
    /// Stable id (standard order).
    pub id: RunId,
    /// Position in the executed run order, 1-based.
    pub order: usize,
    /// Coded level per factor column: −1, +1, or 0 in a nominal run.
    pub coded: Vec<i8>,
    /// True for nominal (centre) runs.
    pub nominal: bool,
    /// Replicate number of the two-level part, 1-based (0 for nominal runs).
    pub replicate: usize,
    /// Block (1, or 2 for the follow-up runs of an explicit design): the fit carries a block
    /// column so that a shift between the two sets of runs is not taken for an effect.
    pub block: u8,
}

/// One estimable contrast column and the effects it carries (its alias chain).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Contrast {
    /// The term the column is named after: the lowest-order member of its chain (ties broken
    /// by display order).
    pub term: Word,
    /// Every term sharing this column (up to the order shown), with its sign relative to
    /// `term`; the first is `term` itself with sign +1 (kept even when its order exceeds the
    /// order shown, so a chain is never empty).
    pub chain: Vec<SignedWord>,
}

impl Contrast {
    /// A column that estimates `term` alone.
    pub fn clean(term: Word) -> Contrast {
        Contrast {
            term,
            chain: vec![SignedWord::plus(term)],
        }
    }

    /// True when no other term shares the column, so the estimate belongs to `term` alone.
    pub fn is_clean(&self) -> bool {
        self.chain.len() == 1
    }
}

/// What a regular fraction or a screening array is, for the report and the JSON.
#[derive(Debug, Clone, Default, serde::Serialize)]
pub struct Structure {
    /// Generators as written (letters or factor ids).
    pub generators: Vec<String>,
    /// Where the generators came from, when chosen from the catalogue.
    pub catalogue: Option<String>,
    /// The defining relation, e.g. `I = ABCDE`, words in factor ids joined by `×`.
    pub defining_relation: Vec<String>,
    /// Resolution (length of the shortest defining word); `None` for full factorials and
    /// non-regular designs.
    pub resolution: Option<u32>,
    /// Word-length pattern (A_3, A_4, ...).
    pub word_length_pattern: Vec<usize>,
    /// True when the design is the Youden–Steiner 7-factors-in-8-runs arrangement.
    pub youden: bool,
    /// True when the mirror-image runs were added.
    pub folded: bool,
    /// Highest interaction order shown in alias chains.
    pub alias_order: u32,
    /// Partial aliasing of two-factor interactions with main effects (non-regular designs).
    pub partial_aliases: Vec<PartialAliasText>,
}

/// One interaction partially aliased with a main effect.
#[derive(Debug, Clone, serde::Serialize)]
pub struct PartialAliasText {
    /// The two factors of the interaction.
    pub interaction: Vec<String>,
    /// The main-effect column it leaks into.
    pub with: String,
    /// Correlation of the two columns.
    pub correlation: f64,
}

/// The planned design.
#[derive(Debug, Clone)]
pub struct Design {
    /// Kind as requested.
    pub kind: DesignKind,
    /// Ids of the columns, in order: the study factors, then dummy columns `d1, d2, ...`.
    pub column_ids: Vec<String>,
    /// Number of dummy columns (at the end of `column_ids`).
    pub dummies: usize,
    /// Generators, defining relation, resolution, aliasing.
    pub structure: Structure,
    /// Effects come from least squares (a non-orthogonal explicit design).
    pub least_squares: bool,
    /// All runs, sorted by run id (standard order).
    pub runs: Vec<PlannedRun>,
    /// Two-level runs per replicate.
    pub base_runs: usize,
    /// Replicates of the two-level part.
    pub replicates: usize,
    /// Estimable contrasts, main effects first.
    pub contrasts: Vec<Contrast>,
    /// True when the two-level runs are the complete 2^k in standard order, once per replicate
    /// (effects may then be computed with the fast Walsh–Hadamard transform).
    pub complete_factorial: bool,
    /// The seed of the run order, if randomised.
    pub seed: Option<u64>,
}

impl Design {
    /// Number of factor columns.
    pub fn k(&self) -> usize {
        self.column_ids.len()
    }

    /// Number of nominal runs.
    pub fn nominal_count(&self) -> usize {
        self.runs.iter().filter(|r| r.nominal).count()
    }

    /// Label of a term from factor ids, joined by `×` (e.g. `temp×ph`).
    pub fn label(&self, term: Word) -> String {
        term.factors()
            .into_iter()
            .filter_map(|i| self.column_ids.get(i).map(String::as_str))
            .collect::<Vec<_>>()
            .join("×")
    }

    /// The alias chain of a contrast in factor ids, e.g. `temp×ph = −flow`: the words
    /// sharing its column, each with its sign relative to the first.
    pub fn chain_label(&self, contrast: &Contrast) -> String {
        contrast
            .chain
            .iter()
            .map(|m| {
                let sign = if m.sign < 0 { "\u{2212}" } else { "" };
                format!("{sign}{}", self.label(m.word))
            })
            .collect::<Vec<_>>()
            .join(" = ")
    }

    /// Runs in executed order.
    pub fn runs_in_order(&self) -> Vec<&PlannedRun> {
        let mut runs: Vec<&PlannedRun> = self.runs.iter().collect();
        runs.sort_by_key(|r| r.order);
        runs
    }
}

pub use contrasts::contrasts_from_matrix;
pub use plan::plan;

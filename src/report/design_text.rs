//! The design in words for the chapter and the protocol: kind, runs, generators, defining
//! relation, resolution, alias chains and partial aliasing, nominal-run placement.

use serde::Serialize;

use crate::analysis::{RunCounts, dummy_ids};
use crate::pipeline::Evaluated;

use super::format::{fixed, superscript};
use super::wording::and_list;

/// The design in words.
#[derive(Debug, Serialize)]
pub struct DesignText {
    /// e.g. "full factorial 2³", "fractional factorial 2⁵⁻¹, resolution V".
    pub kind: String,
    /// How many runs of each sort (templates read `design.runs`, `design.two_level_runs`, ...).
    #[serde(flatten)]
    pub counts: RunCounts,
    /// How the run order was set.
    pub order: String,
    /// Generators as written or taken from the catalogue (empty for other designs).
    pub generators: Vec<String>,
    /// Where the generators came from, when chosen from the catalogue.
    pub catalogue: Option<String>,
    /// The letters generators may be written in, with their columns, e.g. `A = temp, B = ph`
    /// (only when there are generators).
    pub letters: Option<String>,
    /// The defining relation, `I = w1 = w2 = ...`, when the design is a regular fraction.
    pub defining_relation: Option<String>,
    /// Resolution in Roman numerals (`IV`), when defined.
    pub resolution: Option<String>,
    /// Word-length pattern: number of defining words of each length from 3 on.
    pub word_length_pattern: Vec<WordCount>,
    /// Highest interaction order shown in alias chains.
    pub alias_order: u32,
    /// Columns shared by more than one term (only these; empty when every column is clean).
    pub alias_rows: Vec<AliasRow>,
    /// Ids of the dummy columns (no factor assigned).
    pub dummies: Vec<String>,
    /// Partial aliasing of two-factor interactions with each main effect (Plackett–Burman).
    pub partial_aliases: Vec<PartialAliasRow>,
    /// Where the nominal runs are in the run order, in words (`None` without nominal runs).
    pub nominal_runs: Option<String>,
    /// True for a Plackett–Burman design.
    pub plackett_burman: bool,
    /// True for the Youden–Steiner arrangement.
    pub youden: bool,
}

/// One entry of the word-length pattern.
#[derive(Debug, Serialize)]
pub struct WordCount {
    /// Word length (3, 4, ...).
    pub length: usize,
    /// Number of defining words of that length.
    pub count: usize,
}

/// One shared column of the alias table.
#[derive(Debug, Serialize)]
pub struct AliasRow {
    /// The column's name (its lowest-order term).
    pub column: String,
    /// Every term it estimates, joined by ` = ` with signs, e.g. `temp = −ph×flow`.
    pub chain: String,
}

/// Partial aliasing of one main effect.
#[derive(Debug, Serialize)]
pub struct PartialAliasRow {
    /// The factor id of the main effect.
    pub factor: String,
    /// How many two-factor interactions are correlated with it.
    pub count: usize,
    /// The distinct |r| values, largest first, e.g. `0.33`.
    pub correlations: String,
}

pub(crate) fn design_text(evaluated: &Evaluated) -> DesignText {
    design_words(&evaluated.study, &evaluated.design)
}

/// The design in words, from the plan alone (the report and the protocol share it).
pub fn design_words(study: &crate::study::Study, design: &crate::design::Design) -> DesignText {
    let st = &design.structure;
    let k = study.factors.len();
    let kind = match design.kind {
        crate::study::DesignKind::FullFactorial => {
            format!("full factorial 2{}", superscript(&k.to_string()))
        }
        crate::study::DesignKind::FractionalFactorial => {
            let p = st.generators.len();
            format!(
                "fractional factorial 2{}{}{}",
                superscript(&format!("{}\u{2212}{p}", design.k())),
                st.resolution
                    .map(|r| format!(", resolution {}", crate::design::catalogue::roman(r)))
                    .unwrap_or_default(),
                if st.youden {
                    " (the Youden–Steiner ruggedness design)"
                } else {
                    ""
                }
            )
        }
        crate::study::DesignKind::Youden => format!(
            "Youden–Steiner ruggedness design, 7 columns in 8 runs{}",
            if design.dummies > 0 {
                format!(" ({} dummy columns)", design.dummies)
            } else {
                String::new()
            }
        ),
        crate::study::DesignKind::PlackettBurman => format!(
            "Plackett–Burman design of {} runs{}",
            design.base_runs / if st.folded { 2 } else { 1 },
            if design.dummies > 0 {
                format!(" with {} dummy columns", design.dummies)
            } else {
                String::new()
            }
        ),
        crate::study::DesignKind::Explicit => {
            format!("explicit two-level design of {} runs", design.base_runs)
        }
    };
    let kind = if st.folded {
        format!("{kind}, folded over (mirror-image runs added)")
    } else {
        kind
    };
    let order = match design.seed {
        Some(seed) => format!("randomised (ChaCha20, seed {seed})"),
        None => "standard order (not randomised)".to_string(),
    };
    let defining_relation = (!st.defining_relation.is_empty()).then(|| {
        let words: Vec<&str> = st
            .defining_relation
            .iter()
            .map(|w| w.strip_prefix("I = ").unwrap_or(w))
            .collect();
        format!("I = {}", words.join(" = "))
    });
    let alias_rows = design
        .contrasts
        .iter()
        .filter(|c| !c.is_clean())
        .map(|c| AliasRow {
            column: design.label(c.term),
            chain: design.chain_label(c),
        })
        .collect();
    DesignText {
        kind,
        counts: RunCounts::of(design),
        order,
        generators: st.generators.clone(),
        catalogue: st.catalogue.clone(),
        letters: (!st.generators.is_empty()).then(|| {
            design
                .column_ids
                .iter()
                .enumerate()
                .map(|(i, id)| format!("{} = {id}", crate::design::word::factor_label(i)))
                .collect::<Vec<_>>()
                .join(", ")
        }),
        defining_relation,
        resolution: st.resolution.map(crate::design::catalogue::roman),
        word_length_pattern: st
            .word_length_pattern
            .iter()
            .enumerate()
            .map(|(i, count)| WordCount {
                length: i + 3,
                count: *count,
            })
            .collect(),
        alias_order: st.alias_order,
        alias_rows,
        dummies: dummy_ids(design),
        partial_aliases: partial_alias_rows(study, design),
        nominal_runs: nominal_runs_text(design),
        plackett_burman: design.kind == crate::study::DesignKind::PlackettBurman,
        youden: design.kind == crate::study::DesignKind::Youden || st.youden,
    }
}

/// Partial aliases grouped by main effect, in factor order, with the distinct |r| values.
pub(crate) fn partial_alias_rows(
    study: &crate::study::Study,
    design: &crate::design::Design,
) -> Vec<PartialAliasRow> {
    let st = &design.structure;
    study
        .factors
        .iter()
        .filter_map(|f| {
            let mut rs: Vec<f64> = st
                .partial_aliases
                .iter()
                .filter(|p| p.with == f.id && p.correlation.is_finite())
                .map(|p| p.correlation.abs())
                .collect();
            if rs.is_empty() {
                return None;
            }
            let count = rs.len();
            rs.sort_by(|a, b| b.total_cmp(a));
            let mut texts: Vec<String> = rs.iter().map(|r| fixed(*r, 2)).collect();
            texts.dedup();
            Some(PartialAliasRow {
                factor: f.id.clone(),
                count,
                correlations: texts.join(", "),
            })
        })
        .collect()
}

/// `runs 9, 10 and 11, performed at positions 1, 6 and 11 of the run order`.
pub(crate) fn nominal_runs_text(design: &crate::design::Design) -> Option<String> {
    let nominal: Vec<&crate::design::PlannedRun> = design
        .runs_in_order()
        .into_iter()
        .filter(|r| r.nominal)
        .collect();
    if nominal.is_empty() {
        return None;
    }
    let ids: Vec<String> = nominal.iter().map(|r| r.id.0.clone()).collect();
    let positions: Vec<String> = nominal.iter().map(|r| r.order.to_string()).collect();
    Some(format!(
        "{} {}, performed at {} {} of the run order",
        if ids.len() == 1 { "run" } else { "runs" },
        and_list(&ids),
        if positions.len() == 1 {
            "position"
        } else {
            "positions"
        },
        and_list(&positions)
    ))
}

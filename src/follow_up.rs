//! Follow-up runs that separate unresolved alias chains: a fold-over of the two-level runs,
//! written as a new study file that holds both sets of runs (block 1: the first study's runs
//! and results; block 2: the new runs), so that one analysis combines them and estimates the
//! shift between the two blocks (Box, Hunter & Hunter, Statistics for Experimenters, 2nd ed.
//! 2005, §6.8–6.9; Montgomery, Design and Analysis of Experiments, §8.6).
//!
//! The new file is written from the first study's text: its factors, responses, acceptance,
//! exclusions and figure requests are copied verbatim, the design becomes the explicit list of
//! both blocks, and block 1's results are copied inline. Block 2's result lines are written as
//! comments for the analyst to fill in as the runs are measured.

use crate::analysis::FollowUp;
use crate::design::{Design, order};
use crate::pipeline::Evaluated;
use crate::study::Study;

/// Why no follow-up can be written.
#[derive(Debug, thiserror::Error)]
pub enum FollowUpError {
    /// Nothing to separate and nothing asked.
    #[error(
        "the analysis has no unresolved alias chain\nhint: name the term to free with --separate TERM (factor ids joined by × or *)"
    )]
    NothingToSeparate,
    /// The term named is not made of the study's factors.
    #[error(
        "--separate {0}: unknown factor `{1}`\nhint: expected factor ids joined by × or *, from: {2}"
    )]
    UnknownFactor(String, String, String),
    /// The design is not one a fold-over applies to.
    #[error("{0}")]
    Design(String),
}

/// The fold chosen: every factor, or one.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Fold {
    /// Every sign switched.
    All,
    /// The signs of one factor (index) switched.
    Factor(usize),
}

/// The fold that separates what `separate` names (a main effect: fold on its factor; an
/// interaction: fold on its first factor), or, without it, the analysis's unresolved chains
/// (a full fold-over when any chain holds a main effect, else the fold its first chain
/// proposes).
pub fn choose(evaluated: &Evaluated, separate: Option<&str>) -> Result<Fold, FollowUpError> {
    let study = &evaluated.study;
    let ids: Vec<&str> = study.factors.iter().map(|f| f.id.as_str()).collect();
    if let Some(term) = separate {
        let first = term
            .split(['×', '*'])
            .map(str::trim)
            .find(|s| !s.is_empty())
            .unwrap_or("");
        let index = ids.iter().position(|id| *id == first).ok_or_else(|| {
            FollowUpError::UnknownFactor(term.to_string(), first.to_string(), ids.join(", "))
        })?;
        for part in term.split(['×', '*']).map(str::trim) {
            if !ids.contains(&part) {
                return Err(FollowUpError::UnknownFactor(
                    term.to_string(),
                    part.to_string(),
                    ids.join(", "),
                ));
            }
        }
        return Ok(Fold::Factor(index));
    }
    let chains: Vec<&FollowUp> = evaluated
        .analysis
        .responses
        .iter()
        .flat_map(|r| r.verdict.unresolved.iter().map(|c| &c.follow_up))
        .collect();
    if chains
        .iter()
        .any(|f| matches!(f, FollowUp::FullFoldOver { .. }))
    {
        return Ok(Fold::All);
    }
    match chains.first() {
        Some(FollowUp::FoldOnFactor { factor, .. }) => ids
            .iter()
            .position(|id| id == factor)
            .map(Fold::Factor)
            .ok_or(FollowUpError::NothingToSeparate),
        _ => Err(FollowUpError::NothingToSeparate),
    }
}

/// The top-level sections copied verbatim from the first study.
const COPIED: [&str; 5] = ["factors", "responses", "acceptance", "excluded", "figures"];

/// The text of the follow-up study file.
pub fn study_text(
    evaluated: &Evaluated,
    fold: &Fold,
    first_file: &str,
) -> Result<String, FollowUpError> {
    let study = &evaluated.study;
    let design = &evaluated.design;
    if design.runs.iter().any(|r| r.block != 1) {
        return Err(FollowUpError::Design(
            "the study already holds follow-up runs (block 2); a further fold-over is not supported".into(),
        ));
    }
    let k = study.factors.len();
    let description = match fold {
        Fold::All => "a full fold-over (every factor's signs switched)".to_string(),
        Fold::Factor(j) => format!(
            "a fold-over on {} (its signs switched)",
            study.factors.get(*j).map_or("?", |f| f.id.as_str())
        ),
    };
    let mut out = String::new();
    out.push_str(&format!(
        "# Follow-up runs of study {} ({first_file}, SHA-256 {}): {description}, written by plateau follow-up.\n",
        study.info.id, study.sha256
    ));
    out.push_str("# Block 1 repeats the first study's runs with their results; block 2 holds the new runs.\n");
    out.push_str("# Fill in block 2's results below as the runs are measured, then run `plateau report` on this file.\n");
    out.push_str("schema: 1\nstudy:\n");
    let info = &study.info;
    out.push_str(&format!(
        "  id: {}\n",
        yaml_string(&format!("{}-F", info.id))
    ));
    out.push_str(&format!(
        "  title: {}\n",
        yaml_string(&format!("{} — follow-up runs", info.title))
    ));
    out.push_str(&format!("  method: {}\n", yaml_string(&info.method)));
    out.push_str(&format!("  analyst: {}\n", yaml_string(&info.analyst)));
    out.push_str(&format!("  date: {}\n", info.date));
    out.push_str(&format!(
        "  objective: {}\n",
        yaml_string(&format!(
            "Separate the alias chains of study {} by {description}.",
            info.id
        ))
    ));
    for key in COPIED {
        if let Some(section) = top_level_section(&study.text, key) {
            out.push_str(&section);
            if !section.ends_with('\n') {
                out.push('\n');
            }
        }
    }
    // The design: both blocks, explicitly.
    out.push_str("design:\n  kind: explicit\n");
    out.push_str(&format!(
        "  alias-order: {}\n",
        study.design.alias_order.max(1)
    ));
    out.push_str("  runs:\n");
    let ids = |coded: &[i8]| -> String {
        study
            .factors
            .iter()
            .zip(coded)
            .map(|(f, c)| format!("{}: {c}", yaml_key(&f.id)))
            .collect::<Vec<_>>()
            .join(", ")
    };
    for run in design.runs_in_order() {
        out.push_str(&format!(
            "    - {{ run: {}, block: 1, order: {}, {} }}\n",
            run_text(&run.id.0),
            run.order,
            ids(&run.coded[..k.min(run.coded.len())])
        ));
    }
    let new_runs = folded_runs(design, fold, k);
    let first_max = design
        .runs
        .iter()
        .filter_map(|r| r.id.0.parse::<u64>().ok())
        .max()
        .unwrap_or(design.runs.len() as u64);
    let mut orders: Vec<usize> = (1..=new_runs.len()).collect();
    let mut rng = order::generator(design.seed.unwrap_or(0) ^ 0x466f_6c64); // "Fold"
    order::shuffle(&mut orders, &mut rng);
    let offset = design.runs.len();
    for (i, (coded, o)) in new_runs.iter().zip(&orders).enumerate() {
        out.push_str(&format!(
            "    - {{ run: {}, block: 2, order: {}, {} }}\n",
            first_max + 1 + i as u64,
            offset + o,
            ids(coded)
        ));
    }
    // Results: block 1 as measured, block 2 to be filled in.
    let determinations = study
        .results
        .as_ref()
        .and_then(|r| r.determinations)
        .unwrap_or(1);
    out.push_str("results:\n");
    if determinations != 1 {
        out.push_str(&format!("  determinations: {determinations}\n"));
    }
    out.push_str("  runs:\n");
    out.push_str(&format!(
        "    # block 1: measured in study {}\n",
        study.info.id
    ));
    for run in &design.runs {
        let Some(values) = evaluated.data.values.get(&run.id) else {
            continue;
        };
        let cells: Vec<String> = study
            .responses
            .iter()
            .zip(values)
            .map(|(resp, v)| format!("{}: {}", yaml_key(&resp.id), values_text(v)))
            .collect();
        out.push_str(&format!(
            "    - {{ run: {}, {} }}\n",
            run_text(&run.id.0),
            cells.join(", ")
        ));
    }
    out.push_str("    # block 2: remove the `#` of each line and write the measured values\n");
    for i in 0..new_runs.len() {
        let cells: Vec<String> = study
            .responses
            .iter()
            .map(|resp| format!("{}: ", yaml_key(&resp.id)))
            .collect();
        out.push_str(&format!(
            "    # - {{ run: {}, {}}}\n",
            first_max + 1 + i as u64,
            cells.join(", ")
        ));
    }
    Ok(out)
}

/// The two-level runs of one replicate, folded.
fn folded_runs(design: &Design, fold: &Fold, k: usize) -> Vec<Vec<i8>> {
    design
        .runs
        .iter()
        .filter(|r| !r.nominal && r.replicate <= 1)
        .map(|r| {
            r.coded
                .iter()
                .take(k)
                .enumerate()
                .map(|(j, c)| match fold {
                    Fold::All => -c,
                    Fold::Factor(f) if *f == j => -c,
                    Fold::Factor(_) => *c,
                })
                .collect()
        })
        .collect()
}

fn values_text(v: &[f64]) -> String {
    match v {
        [one] => format!("{one}"),
        many => format!(
            "[{}]",
            many.iter()
                .map(|x| format!("{x}"))
                .collect::<Vec<_>>()
                .join(", ")
        ),
    }
}

/// A run id as written: a plain integer when it is one, quoted text otherwise.
fn run_text(id: &str) -> String {
    if id.parse::<u64>().is_ok() {
        id.to_string()
    } else {
        yaml_string(id)
    }
}

/// A string as a YAML double-quoted scalar (JSON escaping is valid YAML).
fn yaml_string(s: &str) -> String {
    serde_json::to_string(s).unwrap_or_else(|_| "\"\"".into())
}

/// A mapping key: plain when it is a simple identifier, quoted otherwise.
fn yaml_key(s: &str) -> String {
    if !s.is_empty()
        && s.chars()
            .all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-')
        && s.chars().next().is_some_and(|c| c.is_ascii_alphabetic())
    {
        s.to_string()
    } else {
        yaml_string(s)
    }
}

/// A top-level block of a YAML document: from the line `key:` at column 0 to the next line
/// that starts another top-level key (comments and blank lines inside are kept).
fn top_level_section(text: &str, key: &str) -> Option<String> {
    let mut out = String::new();
    let mut inside = false;
    for line in text.lines() {
        let starts_key = line
            .chars()
            .next()
            .is_some_and(|c| !c.is_whitespace() && c != '#' && c != '-');
        if starts_key {
            if inside {
                break;
            }
            inside = line
                .strip_prefix(key)
                .is_some_and(|rest| rest.trim_start().starts_with(':'));
        }
        if inside {
            out.push_str(line);
            out.push('\n');
        }
    }
    (!out.is_empty()).then(|| out.trim_end().to_string() + "\n")
}

/// The study's checked text is needed: a helper for callers holding only a [`Study`].
pub fn first_file_name(study: &Study) -> String {
    study.path.file_name().map_or_else(
        || study.file_name.clone(),
        |n| n.to_string_lossy().to_string(),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_top_level_section_runs_to_the_next_key() {
        let text =
            "schema: 1\nfactors:\n  - { id: a }\n  # note\n  - { id: b }\nresponses:\n  - x\n";
        assert_eq!(
            top_level_section(text, "factors").unwrap(),
            "factors:\n  - { id: a }\n  # note\n  - { id: b }\n"
        );
        assert!(top_level_section(text, "acceptance").is_none());
        assert!(top_level_section(text, "factor").is_none());
    }
}

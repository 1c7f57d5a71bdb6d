//! The conclusion, written from the typed verdicts: what was tested, one short block per
//! response, one overall verdict, the proposals that follow, and what the study cannot show.
//!
//! It never says "robust" without the ranges and the criterion (Vander Heyden et al., J. Pharm.
//! Biomed. Anal. 24 (2001) 723–753, §7), never claims what plateau cannot know (for instance
//! when the criteria were fixed), and never calls a factor robust while proposing to narrow
//! its range.

use crate::analysis::{Analysis, Effect, Note, Outcome, ResponseAnalysis};
use crate::study::Study;

use super::format::{factor_unit, fixed, setting, unit_suffix};

pub use super::wording::{
    and_list, follow_up_text, limit_text, note_text, p_text, precaution_text, range_text,
    significance_text,
};
use super::wording::{
    capitalise, count_word, effect_words, factor_name, p_relation, percent_words, probability_text,
    thousands,
};

/// The conclusion: what was tested, one block per response, one overall verdict, the
/// proposals that follow, and what the study cannot show.
#[derive(Debug, Clone, serde::Serialize)]
pub struct Conclusion {
    /// The factors and ranges tested.
    pub scope: Vec<String>,
    /// One short block per response.
    pub responses: Vec<ResponseBlock>,
    /// The overall verdict.
    pub overall: Vec<String>,
    /// Proposed operating ranges, precautions and system-suitability limits (proposals for
    /// the method owner, not decisions).
    pub proposals: Vec<String>,
    /// Informational ranges from statistical significance alone.
    pub informational: Vec<String>,
    /// What the study cannot show.
    pub limitations: Vec<String>,
}

/// The conclusion about one response.
#[derive(Debug, Clone, serde::Serialize)]
pub struct ResponseBlock {
    /// Response name.
    pub name: String,
    /// The outcome in a few words.
    pub outcome: String,
    /// What was judged, against what, and what was found.
    pub sentences: Vec<String>,
}

/// Whether the criteria were fixed before the data: said only when the study names a protocol
/// lock that matches its own hash (checked when the study was planned), and then either that
/// the criteria are the locked ones or that they were changed since.
fn protocol_sentence(study: &Study) -> Option<String> {
    let lock = study.lock.as_ref()?;
    let spec = study.protocol.as_ref()?;
    let name = match &spec.number {
        Some(n) => format!("protocol {n}"),
        None => "the protocol".to_string(),
    };
    let approved = spec
        .approved
        .as_ref()
        .map(|d| format!(" (approved on {d})"))
        .unwrap_or_default();
    let changed = crate::protocol::deviations::compare(&lock.planning, &study.planning)
        .iter()
        .any(|d| d.field == "acceptance" || d.field.starts_with("acceptance["));
    Some(if changed {
        format!(
            "The acceptance criteria were changed after {name}{approved} was locked; the changes are listed with the deviations from the protocol."
        )
    } else {
        format!(
            "The acceptance criteria were fixed before the data, in {name}{approved}: they are those of its locked plan."
        )
    })
}

/// The sentences of the conclusion in reading order (for the terminal and for `diff`).
pub fn sentences(study: &Study, analysis: &Analysis) -> Vec<String> {
    let c = build(study, analysis);
    let mut out = c.scope;
    for b in c.responses {
        out.extend(b.sentences.into_iter().map(|s| format!("{}: {s}", b.name)));
    }
    out.extend(c.overall);
    out.extend(c.proposals.into_iter().map(|p| format!("Proposed: {p}")));
    out.extend(
        c.informational
            .into_iter()
            .map(|p| format!("For information: {p}")),
    );
    out.extend(c.limitations);
    out
}

/// The conclusion, built from the typed verdicts only.
pub fn build(study: &Study, analysis: &Analysis) -> Conclusion {
    let mut scope = Vec::new();
    if study.source == crate::study::model::SourceKind::Development {
        scope.push(format!(
            "The data come from method development{}, as ICH Q14 allows for showing robustness.",
            study
                .info
                .source_reference
                .as_ref()
                .map(|r| format!(" ({r})"))
                .unwrap_or_default()
        ));
    }
    let ranges: Vec<String> = study
        .factors
        .iter()
        .map(|f| format!("{} {}", f.name, range_text(study, &f.id)))
        .collect();
    scope.push(format!(
        "{} {} varied in {} two-level runs{}: {}.",
        count_word(study.factors.len()),
        if study.factors.len() == 1 {
            "factor was"
        } else {
            "factors were"
        },
        analysis.design.counts.two_level_runs,
        match analysis.design.counts.center_points {
            0 => String::new(),
            1 => " and one nominal run".to_string(),
            n => format!(" and {n} nominal runs"),
        },
        ranges.join("; ")
    ));
    if let Some(sentence) = protocol_sentence(study) {
        scope.push(sentence);
    }
    let mut proposals = Vec::new();
    let mut informational = Vec::new();
    let responses = analysis
        .responses
        .iter()
        .map(|r| response_block(study, r, &mut proposals, &mut informational))
        .collect();
    Conclusion {
        scope,
        responses,
        overall: overall(study, analysis),
        proposals,
        informational,
        limitations: limitations(analysis),
    }
}

fn outcome_words(r: &ResponseAnalysis) -> &'static str {
    match r.verdict.outcome {
        Outcome::Robust => "within the limit",
        Outcome::NotRobust => "beyond the limit",
        Outcome::Unresolved => "unresolved alias chain",
        Outcome::StatisticalOnly => "statistical criterion only",
        Outcome::NotJudged => "not judged",
    }
}

/// A term's name for prose: a factor's name, or the factors of an interaction joined by ×.
fn term_name(study: &Study, e: &Effect) -> String {
    if e.estimable {
        let names: Vec<String> = e.factors.iter().map(|id| factor_name(study, id)).collect();
        if names.len() == 1 {
            names.concat()
        } else {
            format!("the interaction {}", names.join(" × "))
        }
    } else {
        format!("the column {}", e.label)
    }
}

fn response_block(
    study: &Study,
    r: &ResponseAnalysis,
    proposals: &mut Vec<String>,
    informational: &mut Vec<String>,
) -> ResponseBlock {
    let mut out = Vec::new();
    let criterion = limit_text(r);
    let statistical: Vec<&crate::analysis::judge::CriterionSummary> = r
        .criteria
        .iter()
        .filter(|c| c.method != "effect-limit")
        .collect();
    let real: Vec<&Effect> = r.effects.iter().filter(|e| !e.dummy).collect();
    match (&criterion, statistical.first()) {
        (Some(c), Some(s)) => out.push(format!(
            "Judged against {c}, and statistically by {}.",
            significance_text(r, s)
        )),
        (Some(c), None) => out.push(format!("Judged against {c}.")),
        (None, Some(s)) => out.push(format!(
            "No practical limit was declared; judged statistically by {}.",
            significance_text(r, s)
        )),
        (None, None) if r.worst_case.is_none() => {
            out.push(
                "No acceptance rule was declared, so its effects are reported without a verdict."
                    .into(),
            );
        }
        (None, None) => {}
    }
    match r.verdict.outcome {
        Outcome::Robust => {
            let largest = real
                .iter()
                .max_by(|a, b| a.effect.abs().total_cmp(&b.effect.abs()));
            let mut s =
                "No estimated effect, main effect or interaction, exceeded the limit".to_string();
            if let Some(e) = largest {
                s.push_str(&format!(
                    "; the largest was that of {} with {}",
                    term_name(study, e),
                    effect_words(r, e)
                ));
            }
            s.push('.');
            out.push(s);
        }
        Outcome::NotRobust => {
            for e in real
                .iter()
                .filter(|e| e.estimable && e.relevant == Some(true))
            {
                out.push(format!(
                    "{} exceeded the limit with {}.",
                    capitalise(&term_name(study, e)),
                    effect_words(r, e)
                ));
            }
        }
        Outcome::NotJudged => {
            if r.notes
                .iter()
                .any(|n| matches!(n, Note::PercentLimitNotApplicable))
            {
                out.push("The percent limit cannot be applied because the reference is zero, so the response is not judged against it.".into());
            }
        }
        Outcome::Unresolved | Outcome::StatisticalOnly => {}
    }
    for chain in &r.verdict.unresolved {
        let e = real.iter().find(|e| e.label == chain.label);
        out.push(format!(
            "The column {} {} with {}; the design cannot tell which of its terms is responsible ({} are all candidates). {}",
            chain.label,
            if chain.relevant { "exceeded the limit" } else { "is significant" },
            e.map(|e| effect_words(r, e)).unwrap_or_default(),
            and_list(&chain.factors.iter().map(|id| factor_name(study, id)).collect::<Vec<_>>()),
            follow_up_text(study, &chain.follow_up)
        ));
    }
    if let Some(first) = statistical.first() {
        let significant: Vec<String> = real
            .iter()
            .filter(|e| e.significant == Some(true))
            .map(|e| term_name(study, e))
            .collect();
        if first.e_crit.is_none() {
            out.push("The statistical criterion could not judge the effects.".into());
        } else if significant.is_empty() {
            out.push("No effect is statistically significant.".into());
        } else if criterion.is_none() {
            out.push(format!(
                "Statistically significant: {}.",
                and_list(&significant)
            ));
        }
        let not_relevant: Vec<String> = real
            .iter()
            .filter(|e| e.estimable && e.significant == Some(true) && e.relevant == Some(false))
            .map(|e| term_name(study, e))
            .collect();
        if !not_relevant.is_empty() {
            out.push(format!(
                "{} {} statistically significant but within the practical limit: a real change too small to matter for this method.",
                capitalise(&and_list(&not_relevant)),
                if not_relevant.len() == 1 { "is" } else { "are" }
            ));
        }
    }
    if let Some(w) = &r.worst_case {
        let unit = unit_suffix(r.unit.as_deref());
        let limit = match (w.min, w.max) {
            (Some(m), _) => format!(" against the limit ≥ {}{unit}", setting(m)),
            (None, Some(m)) => format!(" against the limit ≤ {}{unit}", setting(m)),
            _ => String::new(),
        };
        let lower = w.prediction.direction == crate::analysis::decision::Direction::Lower;
        out.push(format!(
            "Worst case within the studied domain, from the {} effects{}: {}{unit}{limit}{}.",
            w.basis,
            if w.interactions.is_empty() {
                String::new()
            } else {
                " and interactions".to_string()
            },
            fixed(w.prediction.predicted, r.decimals),
            match w.meets {
                Some(true) => ", which still meets it",
                Some(false) => ", which does not meet it",
                None => "",
            },
        ));
        proposals.push(format!(
            "system-suitability limit for {}: {} {}{unit} (the worst case rounded outward to the data's decimals)",
            r.name,
            if lower { "≥" } else { "≤" },
            fixed(w.proposed_limit, r.decimals),
        ));
    }
    for c in &r.control_ranges {
        let both = r
            .control_ranges
            .iter()
            .any(|o| o.factor == c.factor && o.basis == "relevance");
        if c.basis == "significance" && both {
            continue;
        }
        let text = match precaution_text(study, r, c) {
            Some(t) => Some(t.trim_end_matches('.').to_string()),
            None => range_proposal(study, r, c),
        };
        let Some(text) = text else { continue };
        if c.basis == "relevance" {
            proposals.push(text);
        } else if r.verdict.outcome == Outcome::StatisticalOnly {
            proposals.push(format!("{text} (from statistical significance alone)"));
        } else {
            informational.push(text);
        }
    }
    if let Some(d) = r.drift.as_ref()
        && let Some(check) = &d.check
        && check
            .p
            .is_some_and(|p| p < crate::analysis::judge::DRIFT_ALPHA)
    {
        out.push(format!(
            "The nominal runs drifted by {}{} per run of the run order (p {}){}.",
            crate::report::format::signed(check.slope, r.decimals + 2),
            unit_suffix(r.unit.as_deref()),
            p_relation(check.p.unwrap_or(f64::NAN)),
            if d.correction.is_some() {
                "; the effects were computed on drift-corrected values"
            } else {
                "; no correction was applied, so the drift inflates the error estimate"
            }
        ));
    }
    if let Some(c) = &r.curvature
        && c.p.is_some_and(|p| p < 0.05)
    {
        out.push(format!(
            "The nominal runs differ significantly from the model's prediction at the nominal setting (curvature {}{}, p {}): the response is not linear between the levels.",
            crate::report::format::signed(c.difference, r.decimals + 1),
            unit_suffix(r.unit.as_deref()),
            p_relation(c.p.unwrap_or(f64::NAN))
        ));
    }
    if let Some(b) = &r.block_effect {
        out.push(format!(
            "The follow-up runs (block 2) sit {}{} from the first runs; the block column of the model takes this shift out of every effect.",
            crate::report::format::signed(b.effect, r.decimals + 1),
            unit_suffix(r.unit.as_deref())
        ));
    }
    if let Some(k) = &r.routine_risk {
        let limit = match (k.min, k.max) {
            (Some(lo), Some(hi)) => format!(
                "outside {} to {}{}",
                setting(lo),
                setting(hi),
                unit_suffix(r.unit.as_deref())
            ),
            (Some(lo), None) => format!("below {}{}", setting(lo), unit_suffix(r.unit.as_deref())),
            (None, Some(hi)) => format!("above {}{}", setting(hi), unit_suffix(r.unit.as_deref())),
            (None, None) => String::new(),
        };
        out.push(format!(
            "With the routine variation of {} and the run-to-run scatter of this study, {}",
            and_list(&k.factors.iter().map(|f| factor_name(study, &f.factor)).collect::<Vec<_>>()),
            if k.probability > 0.0 {
                format!(
                    "a routine run falls {limit} with a probability of {} (Monte Carlo, {} draws, standard error {}).",
                    probability_text(k.probability),
                    thousands(k.draws),
                    probability_text(k.mc_se),
                )
            } else {
                // No draw outside: the 95 % upper bound is 3/M ("rule of three", Hanley &
                // Lippman-Hand, JAMA 249 (1983) 1743–1745, from memory).
                format!(
                    "no routine run of {} Monte Carlo draws fell {limit}: the probability is below {} (95 % upper bound).",
                    thousands(k.draws),
                    probability_text(3.0 / k.draws as f64),
                )
            }
        ));
    }
    if let Some(u) = &r.uncertainty {
        out.push(format!(
            "The routine variation of {} contributes a combined standard uncertainty of {}{}.",
            and_list(
                &u.rows
                    .iter()
                    .map(|row| factor_name(study, &row.factor))
                    .collect::<Vec<_>>()
            ),
            fixed(u.combined, r.decimals + 1),
            unit_suffix(r.unit.as_deref())
        ));
    }
    ResponseBlock {
        name: r.name.clone(),
        outcome: outcome_words(r).to_string(),
        sentences: out,
    }
}

/// A proposed numeric range, rounded inward to one decimal more than the tested levels.
fn range_proposal(
    study: &Study,
    r: &ResponseAnalysis,
    c: &crate::analysis::judge::ControlRange,
) -> Option<String> {
    let (lo, hi) = (c.low?, c.high?);
    let f = study.factors.iter().find(|f| f.id == c.factor)?;
    let crate::study::Levels::Numeric { low, high, .. } = f.levels else {
        return None;
    };
    let unit = factor_unit(study, &c.factor);
    let why = if c.basis == "relevance" {
        "keeps its effect within the acceptance limit"
    } else {
        "keeps its effect below the critical effect"
    };
    let interactions = if c.interactions.is_empty() {
        String::new()
    } else {
        format!(
            ", counting its interaction{} {}",
            if c.interactions.len() == 1 { "" } else { "s" },
            and_list(&c.interactions)
        )
    };
    Some(format!(
        "{} {}{unit} for {} ({why}{interactions}, assuming a linear effect; tested {} to {}{unit}{})",
        f.name,
        super::judging::proposed_range_text(study, &c.factor, lo, hi),
        r.name,
        setting(low),
        setting(high),
        if c.clipped {
            "; cut back to the tested range"
        } else {
            ""
        }
    ))
}

/// The overall verdict over the assay responses.
fn overall(study: &Study, analysis: &Analysis) -> Vec<String> {
    let mut out = Vec::new();
    let judged: Vec<&ResponseAnalysis> = analysis
        .responses
        .iter()
        .filter(|r| r.role == "assay" && r.verdict.robust.is_some())
        .collect();
    if judged.is_empty() {
        if analysis.responses.iter().any(|r| r.role == "assay") {
            out.push("No practical acceptance limit was applied to an assay response, so this chapter makes no statement about the method's robustness.".into());
        }
        return out;
    }
    let names = and_list(&judged.iter().map(|r| r.name.clone()).collect::<Vec<_>>());
    let suspects: Vec<String> = study
        .factors
        .iter()
        .filter(|f| {
            analysis
                .unresolved
                .iter()
                .any(|u| u.chain.factors.contains(&f.id))
        })
        .map(|f| f.id.clone())
        .collect();
    let control: Vec<String> = analysis
        .non_robust_factors
        .iter()
        .map(|id| factor_name(study, id))
        .collect();
    if control.is_empty() && suspects.is_empty() {
        out.push(format!(
            "Within the tested ranges and under the stated criteria, no factor had a relevant effect on {names}: the method is robust for these ranges."
        ));
        return out;
    }
    if !control.is_empty() {
        out.push(format!(
            "The method is not robust over the tested ranges: {} {} {names} beyond the limit, so {} {} control within the proposed {} below.",
            and_list(&control),
            if control.len() == 1 { "changes" } else { "change" },
            if control.len() == 1 { "it" } else { "they" },
            if control.len() == 1 { "needs" } else { "need" },
            if control.len() == 1 { "range or precaution" } else { "ranges or precautions" },
        ));
    }
    if !suspects.is_empty() {
        let only_suspects: Vec<String> = suspects
            .iter()
            .filter(|id| !analysis.non_robust_factors.contains(id))
            .map(|id| factor_name(study, id))
            .collect();
        if !only_suspects.is_empty() {
            out.push(format!(
                "Whether the method is robust to {} cannot be decided from this design: a relevant alias chain involves {}; the follow-up runs above would decide it.",
                and_list(&only_suspects),
                if only_suspects.len() == 1 { "it" } else { "them" }
            ));
        }
    }
    let clear: Vec<String> = study
        .factors
        .iter()
        .filter(|f| !analysis.non_robust_factors.contains(&f.id) && !suspects.contains(&f.id))
        .map(|f| f.name.clone())
        .collect();
    if !clear.is_empty() {
        out.push(format!(
            "{} had no relevant effect on {names} within the tested ranges.",
            and_list(&clear)
        ));
    }
    out
}

/// What the design could not see: aliasing, and the smallest effect it could detect.
fn limitations(analysis: &Analysis) -> Vec<String> {
    let mut out = Vec::new();
    let two_level = analysis.design.counts.two_level_runs;
    match (analysis.design.kind.as_str(), analysis.design.structure.resolution) {
        ("plackett-burman", _) => out.push(
            "A Plackett–Burman design estimates main effects only: two-factor interactions are partially aliased with them and cannot be seen.".to_string(),
        ),
        (_, Some(3)) => out.push(
            "The design is of resolution III: main effects are aliased with two-factor interactions, which it cannot separate from them.".to_string(),
        ),
        (_, Some(4)) => out.push(
            "The design is of resolution IV: main effects are free of two-factor interactions, but two-factor interactions are aliased with each other.".to_string(),
        ),
        _ => {}
    }
    let detectable: Vec<String> = analysis
        .responses
        .iter()
        .filter_map(|r| {
            let c = r.criteria.iter().find(|c| c.method != "effect-limit")?;
            let e = c.e_crit?;
            Some(format!(
                "{}{} for {}",
                fixed(e, r.decimals + 1),
                unit_suffix(r.unit.as_deref()),
                r.name
            ))
        })
        .collect();
    if let Some(p) = &analysis.power {
        for r in p.responses.iter().filter(|r| r.mde.is_some()) {
            let unit = r
                .unit
                .as_deref()
                .map(|u| format!(" {u}"))
                .unwrap_or_default();
            let mut s = format!(
                "Planning power for {}: with s = {}{unit} per determination, an effect of {}{unit} is detected with {} probability",
                r.name,
                crate::report::format::fixed(r.precision.as_ref().map_or(f64::NAN, |p| p.s), 3),
                crate::report::format::fixed(r.mde.unwrap_or(f64::NAN), 3),
                percent_words(p.target)
            );
            if let (Some(l), Some(pw)) = (r.limit, r.power) {
                s.push_str(&format!(
                    ", and an effect as large as the limit ({}{unit}) with {} probability",
                    crate::report::format::fixed(l, 3),
                    percent_words(pw)
                ));
            }
            s.push_str(" (noncentral t).");
            out.push(s);
        }
    }
    let mut s = format!(
        "An effect below the limit is not proof that no effect exists: these conclusions hold for the ranges tested, the {two_level} two-level runs performed and the criteria stated"
    );
    if !detectable.is_empty() {
        s.push_str(&format!(
            "; effects smaller than the critical effects ({}) could not be told apart from the run-to-run scatter",
            detectable.join("; ")
        ));
    }
    s.push('.');
    out.push(s);
    out
}

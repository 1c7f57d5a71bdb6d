//! The conclusion paragraph, written from the verdicts as plain sentences.
//!
//! It states what was tested (factors and ranges), under which declared criterion, which effects
//! were relevant, and what the study cannot show; it never says "robust" without the ranges and
//! the criterion (Vander Heyden et al., J. Pharm. Biomed. Anal. 24 (2001) 723–753, §7).

use crate::analysis::{Analysis, Effect, Note, ResponseAnalysis};
use crate::study::{LimitUnit, Study};

use super::format::{fixed, setting};

/// Percent effects are printed with this many decimals.
pub const PERCENT_DECIMALS: u32 = 2;

/// The tested range of a factor in words, e.g. `33 to 37 °C` or `L-0412 and L-0587`.
pub fn range_text(study: &Study, factor_id: &str) -> String {
    let Some(f) = study.factors.iter().find(|f| f.id == factor_id) else {
        return String::new();
    };
    match &f.levels {
        crate::study::Levels::Numeric { low, high, .. } => {
            let unit = f
                .unit
                .as_deref()
                .map(|u| format!(" {u}"))
                .unwrap_or_default();
            format!("{} to {}{unit}", setting(*low), setting(*high))
        }
        crate::study::Levels::Categorical {
            nominal,
            alternative,
        } => format!("{nominal} and {alternative}"),
    }
}

fn factor_name(study: &Study, id: &str) -> String {
    study
        .factors
        .iter()
        .find(|f| f.id == id)
        .map_or_else(|| id.to_string(), |f| f.name.clone())
}

/// The acceptance criterion of a response in words.
pub fn limit_text(response: &ResponseAnalysis) -> Option<String> {
    let parts: Vec<String> = response
        .limits
        .iter()
        .map(|l| {
            let value = match l.unit {
                LimitUnit::Percent => format!("|% effect| ≤ {} %", setting(l.limit)),
                LimitUnit::Absolute => format!(
                    "|effect| ≤ {}{}",
                    setting(l.limit),
                    response
                        .unit
                        .as_deref()
                        .map(|u| format!(" {u}"))
                        .unwrap_or_default()
                ),
            };
            match &l.basis {
                Some(b) => format!("{value} ({b})"),
                None => format!("{value} (basis not stated)"),
            }
        })
        .collect();
    (!parts.is_empty()).then(|| parts.join(" and "))
}

fn effect_words(response: &ResponseAnalysis, e: &Effect) -> String {
    let unit = response
        .unit
        .as_deref()
        .map(|u| format!(" {u}"))
        .unwrap_or_default();
    format!(
        "{}{unit} ({} %)",
        fixed(e.effect, response.decimals + 1),
        fixed(e.percent.unwrap_or(f64::NAN), PERCENT_DECIMALS)
    )
}

/// A statistical criterion in words, e.g. `Lenth's method (α = 0.05, ME = 0.45, SME = 0.97)`.
pub fn significance_text(
    response: &ResponseAnalysis,
    c: &crate::analysis::judge::CriterionSummary,
) -> String {
    let d = response.decimals + 1;
    let alpha = c
        .alpha
        .map(|a| format!("α = {}", setting(a)))
        .unwrap_or_default();
    let df =
        c.df.map(|v| format!(", df = {}", trim(v)))
            .unwrap_or_default();
    let numbers = match (c.me, c.sme, c.e_crit) {
        (Some(me), Some(sme), _) => format!(
            "{alpha}{df}, PSE = {}, ME = {}, SME = {}",
            fixed(c.pse.unwrap_or(f64::NAN), d),
            fixed(me, d),
            fixed(sme, d)
        ),
        (_, _, Some(e)) => format!(
            "{alpha}{df}, SE(E) = {}, E_crit = {}",
            fixed(c.se.unwrap_or(f64::NAN), d),
            fixed(e, d)
        ),
        _ => format!(
            "{alpha}{df}; {}",
            c.note
                .clone()
                .unwrap_or_else(|| "the method could not judge".into())
        ),
    };
    let name = match c.method.as_str() {
        "precision" => format!(
            "critical effect from the known precision{}",
            c.basis
                .as_ref()
                .map(|b| format!(" ({b})"))
                .unwrap_or_default()
        ),
        "dummies" => "critical effect from the dummy columns".to_string(),
        "negligible" => format!(
            "critical effect from the terms declared negligible ({})",
            c.error_terms.join(", ")
        ),
        "dong" => "Dong's algorithm".to_string(),
        "lenth" => "Lenth's method".to_string(),
        "anova" => "critical effect from the pure error (ANOVA)".to_string(),
        other => other.to_string(),
    };
    format!("{name} ({numbers})")
}

/// A number with up to 4 significant decimals and no trailing zeros (degrees of freedom).
fn trim(v: f64) -> String {
    let t = format!("{v:.2}");
    let t = t.trim_end_matches('0').trim_end_matches('.');
    t.to_string()
}

fn factor_unit(study: &Study, id: &str) -> String {
    study
        .factors
        .iter()
        .find(|f| f.id == id)
        .and_then(|f| f.unit.clone())
        .map(|u| format!(" {u}"))
        .unwrap_or_default()
}

/// The sentences of the conclusion, in reading order.
pub fn sentences(study: &Study, analysis: &Analysis) -> Vec<String> {
    let mut out = Vec::new();
    let ranges: Vec<String> = study
        .factors
        .iter()
        .map(|f| format!("{} {}", f.name, range_text(study, &f.id)))
        .collect();
    let two_level = analysis.design.two_level_runs;
    if study.source == crate::study::model::SourceKind::Development {
        out.push(format!(
            "The data come from method development{}, as ICH Q14 allows for showing robustness.",
            study
                .info
                .source_reference
                .as_ref()
                .map(|r| format!(" ({r})"))
                .unwrap_or_default()
        ));
    }
    out.push(format!(
        "{} factors were varied in {} two-level runs{}: {}.",
        count_word(study.factors.len()),
        two_level,
        if analysis.design.center_points > 0 {
            format!(" and {} nominal runs", analysis.design.center_points)
        } else {
            String::new()
        },
        ranges.join("; ")
    ));
    for response in &analysis.responses {
        let mains: Vec<&Effect> = response
            .effects
            .iter()
            .filter(|e| e.order == 1 && !e.dummy)
            .collect();
        let criterion = limit_text(response);
        let statistical: Vec<&crate::analysis::judge::CriterionSummary> = response
            .criteria
            .iter()
            .filter(|c| c.method != "effect-limit")
            .collect();
        if criterion.is_none() && statistical.is_empty() && response.worst_case.is_none() {
            out.push(format!(
                "{}: no acceptance rule was declared, so its effects are reported without a verdict.",
                response.name
            ));
            continue;
        }
        if let Some(criterion) = &criterion {
            let relevant: Vec<&Effect> = mains
                .iter()
                .copied()
                .filter(|e| e.relevant == Some(true))
                .collect();
            if relevant.is_empty() {
                let largest = mains
                    .iter()
                    .max_by(|a, b| a.effect.abs().total_cmp(&b.effect.abs()));
                let mut s = format!(
                    "{}: no main effect exceeded the acceptance criterion {criterion}",
                    response.name
                );
                if let Some(e) = largest {
                    s.push_str(&format!(
                        "; the largest was that of {} with {}",
                        factor_name(study, e.factors.first().map_or("", String::as_str)),
                        effect_words(response, e)
                    ));
                }
                s.push('.');
                out.push(s);
            } else {
                for e in &relevant {
                    let id = e.factors.first().map_or("", String::as_str);
                    out.push(format!(
                        "{}: {} had a relevant effect of {} when changed from {}, beyond the acceptance criterion {criterion}.",
                        response.name,
                        factor_name(study, id),
                        effect_words(response, e),
                        range_text(study, id)
                    ));
                }
            }
        }
        if let Some(first) = statistical.first() {
            let significant: Vec<String> = mains
                .iter()
                .filter(|e| e.significant == Some(true))
                .map(|e| factor_name(study, e.factors.first().map_or("", String::as_str)))
                .collect();
            let verdict = if first.e_crit.is_none() {
                "could not be judged".to_string()
            } else if significant.is_empty() {
                "showed no significant main effect".to_string()
            } else {
                format!(
                    "showed significant main effects of {}",
                    and_list(&significant)
                )
            };
            out.push(format!(
                "{}: judged by the {}, the study {verdict}.",
                response.name,
                significance_text(response, first)
            ));
        }
        for e in response
            .effects
            .iter()
            .filter(|e| e.order > 1 && e.relevant == Some(true))
        {
            out.push(format!(
                "{}: the interaction column {} also exceeded the criterion with {}{}.",
                response.name,
                e.label,
                effect_words(response, e),
                if e.estimable {
                    String::new()
                } else {
                    "; it is aliased, so its estimate belongs to the whole chain".to_string()
                }
            ));
        }
        if let Some(w) = &response.worst_case {
            let unit = response
                .unit
                .as_deref()
                .map(|u| format!(" {u}"))
                .unwrap_or_default();
            let settings: Vec<String> = w
                .prediction
                .factors
                .iter()
                .map(|f| {
                    format!(
                        "{} {}",
                        f.label,
                        match f.level {
                            crate::analysis::decision::WorseLevel::High => "high",
                            crate::analysis::decision::WorseLevel::Low => "low",
                            crate::analysis::decision::WorseLevel::Either => "either level",
                        }
                    )
                })
                .collect();
            let limit = match (w.min, w.max) {
                (Some(m), _) => format!(" against the limit ≥ {}{unit}", setting(m)),
                (None, Some(m)) => format!(" against the limit ≤ {}{unit}", setting(m)),
                _ => String::new(),
            };
            let lower = w.prediction.direction == crate::analysis::decision::Direction::Lower;
            out.push(format!(
                "{}: the worst case within the studied domain, from the {}{}, is {}{unit}{limit}{}; proposed system-suitability limit: {} {}{unit}.",
                response.name,
                w.basis,
                if settings.is_empty() { String::new() } else { format!(" ({})", settings.join(", ")) },
                fixed(w.prediction.predicted, response.decimals),
                match w.meets {
                    Some(true) => ", which still meets it",
                    Some(false) => ", which does not meet it: the factors above must be controlled more tightly",
                    None => "",
                },
                if lower { "≥" } else { "≤" },
                fixed(w.proposed_limit, response.decimals),
            ));
        }
        let mut ranges = Vec::new();
        for c in &response.control_ranges {
            let name = factor_name(study, &c.factor);
            let unit = factor_unit(study, &c.factor);
            // Where both criteria give a range, the practical one decides the procedure.
            let both = response
                .control_ranges
                .iter()
                .any(|o| o.factor == c.factor && o.basis == "relevance");
            if c.basis == "significance" && both {
                continue;
            }
            match (precaution_text(study, c), c.low, c.high) {
                (Some(text), _, _) => out.push(text),
                (None, Some(lo), Some(hi)) => ranges.push(format!(
                    "{name} {} to {}{unit} ({} criterion; tested {} to {}{unit})",
                    setting(round_sig(lo, 4)),
                    setting(round_sig(hi, 4)),
                    if c.basis == "relevance" {
                        "acceptance"
                    } else {
                        "statistical"
                    },
                    c.tested_low.map(setting).unwrap_or_default(),
                    c.tested_high.map(setting).unwrap_or_default(),
                )),
                _ => {}
            }
        }
        if !ranges.is_empty() {
            out.push(format!(
                "{}: proposed operating ranges that keep each effect below its criterion, assuming linear effects: {}.",
                response.name,
                ranges.join("; ")
            ));
        }
        if let Some(d) = response.drift.as_ref().and_then(|d| d.check.as_ref())
            && d.p.is_some_and(|p| p < 0.05)
        {
            out.push(format!(
                "{}: the nominal runs drifted by {} per run (p = {}){}.",
                response.name,
                crate::report::format::signed(d.slope, response.decimals + 2),
                fixed(d.p.unwrap_or(f64::NAN), 3),
                if response
                    .drift
                    .as_ref()
                    .is_some_and(|d| d.correction.is_some())
                {
                    "; the effects were computed on drift-corrected values"
                } else {
                    "; the effects were not corrected for it"
                }
            ));
        }
        if let Some(c) = &response.curvature
            && c.p.is_some_and(|p| p < 0.05)
        {
            out.push(format!(
                    "{}: the nominal runs differ significantly from the mean of the two-level runs (curvature {}, p = {}): the response is not linear between the levels.",
                    response.name,
                    crate::report::format::signed(c.difference, response.decimals + 1),
                    fixed(c.p.unwrap_or(f64::NAN), 3)
                ));
        }
        if let Some(u) = &response.uncertainty {
            out.push(format!(
                "{}: the routine variation of {} contributes a combined standard uncertainty of {}{}.",
                response.name,
                and_list(&u.rows.iter().map(|r| factor_name(study, &r.factor)).collect::<Vec<_>>()),
                fixed(u.combined, response.decimals + 1),
                response.unit.as_deref().map(|u| format!(" {u}")).unwrap_or_default()
            ));
        }
    }
    let judged: Vec<&ResponseAnalysis> = analysis
        .responses
        .iter()
        .filter(|r| r.verdict.robust.is_some() && r.role == "assay")
        .collect();
    if !judged.is_empty() {
        let robust_factors: Vec<String> = study
            .factors
            .iter()
            .filter(|f| !analysis.non_robust_factors.contains(&f.id))
            .map(|f| f.name.clone())
            .collect();
        let names: Vec<&str> = judged.iter().map(|r| r.name.as_str()).collect();
        if analysis.non_robust_factors.is_empty() {
            out.push(format!(
                "Within the tested ranges and under the criteria declared before the data were seen, none of the factors had a relevant effect on {}; the method is robust for these ranges.",
                and_list(&names.iter().map(|s| s.to_string()).collect::<Vec<_>>())
            ));
        } else {
            let critical: Vec<String> = analysis
                .non_robust_factors
                .iter()
                .map(|id| factor_name(study, id))
                .collect();
            out.push(format!(
                "The method is not robust to {} over the tested range: {} must be controlled more tightly than it was varied here.",
                and_list(&critical),
                if critical.len() == 1 { "this parameter" } else { "these parameters" }
            ));
            if !robust_factors.is_empty() {
                out.push(format!(
                    "{} had no relevant effect on {} within the tested ranges.",
                    and_list(&robust_factors),
                    and_list(&names.iter().map(|s| s.to_string()).collect::<Vec<_>>())
                ));
            }
        }
    }
    out.extend(limitations(study, analysis));
    out
}

/// What the design could not see: aliasing, and the smallest effect it could detect.
fn limitations(study: &Study, analysis: &Analysis) -> Vec<String> {
    let _ = study;
    let mut out = Vec::new();
    let two_level = analysis.design.two_level_runs;
    match (analysis.design.kind.as_str(), analysis.design.resolution) {
        ("plackett-burman", _) => out.push(
            "A Plackett–Burman design estimates main effects only: two-factor interactions are partially aliased with them and cannot be seen.".to_string(),
        ),
        (_, Some(3)) => out.push(
            "The design is of resolution III: main effects are aliased with two-factor interactions, which it cannot see; the effects assume those interactions negligible.".to_string(),
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
            Some(
                format!(
                    "{} {}",
                    fixed(e, r.decimals + 1),
                    r.unit.clone().unwrap_or_default()
                )
                .trim()
                .to_string()
                    + &format!(" for {}", r.name),
            )
        })
        .collect();
    let mut s = format!(
        "An effect below the limit is not proof that no effect exists: these conclusions hold for the ranges tested, the {two_level} two-level runs performed and the criteria stated"
    );
    if !detectable.is_empty() {
        s.push_str(&format!(
            "; smaller effects than the critical effects ({}) could not be told apart from the measurement scatter",
            detectable.join("; ")
        ));
    }
    s.push('.');
    out.push(s);
    out
}

/// A count at the start of a sentence: a word up to twelve (common practice in technical
/// writing), digits beyond.
fn count_word(n: usize) -> String {
    const WORDS: [&str; 13] = [
        "No", "One", "Two", "Three", "Four", "Five", "Six", "Seven", "Eight", "Nine", "Ten",
        "Eleven", "Twelve",
    ];
    WORDS
        .get(n)
        .map_or_else(|| n.to_string(), |w| (*w).to_string())
}

/// Items joined as prose: `a`, `a and b`, `a, b and c`.
pub fn and_list(items: &[String]) -> String {
    match items {
        [] => String::new(),
        [one] => one.clone(),
        [init @ .., last] => format!("{} and {last}", init.join(", ")),
    }
}

/// `x` rounded to `digits` significant digits.
fn round_sig(x: f64, digits: i32) -> f64 {
    if x == 0.0 || !x.is_finite() {
        return x;
    }
    let scale = 10f64.powi(digits - 1 - x.abs().log10().floor() as i32);
    (x * scale).round() / scale
}

/// A typed analysis note in words, for the judging section.
pub fn note_text(study: &Study, response: &ResponseAnalysis, note: &Note) -> String {
    let unit = response
        .unit
        .as_deref()
        .map(|u| format!(" {u}"))
        .unwrap_or_default();
    let d = response.decimals + 1;
    match note {
        Note::ExcludedRun { run, reason } => {
            format!("Run {run} was excluded from the evaluation: {reason}.")
        }
        Note::LeastSquares { dropped } if dropped.is_empty() => "The runs used are not orthogonal (a run was excluded, or the matrix was given so): effects are least-squares estimates, E = 2b, and each has its own standard error.".to_string(),
        Note::LeastSquares { dropped } => format!(
            "The runs used are not orthogonal: effects are least-squares estimates, E = 2b, each with its own standard error; these columns cannot be estimated from the runs used: {}.",
            and_list(dropped)
        ),
        Note::DriftCorrected { mode } => format!(
            "Effects were computed on {} drift-corrected values; the run table shows the measured and the corrected values.",
            match mode {
                crate::analysis::drift::CorrectionMode::Additive => "additively",
                crate::analysis::drift::CorrectionMode::Relative => "relatively",
            }
        ),
        Note::DriftNotCorrected { slope, p } => format!(
            "The nominal runs drift ({}{unit} per run in the run order, p = {}) and no correction was applied: the drift inflates the error estimate and may bias effects that follow the run order.",
            fixed(*slope, d + 1),
            p_text(*p)
        ),
        Note::PercentUndefined { reference_kind, .. } => format!(
            "Percent effects are not defined: the {} is zero.",
            if reference_kind == "nominal-mean" { "mean of the nominal runs" } else { "model intercept" }
        ),
        Note::PercentLimitNotApplicable => "The percent limit cannot be applied because percent effects are not defined; the response is not judged against it.".to_string(),
        Note::NegativeReference { reference } => format!(
            "The reference is negative ({}{unit}): percent effects are taken against its magnitude, so each has the sign of its effect.",
            fixed(*reference, d)
        ),
        Note::CurvatureNumericOnly => "Nominal runs hold each categorical factor at its nominal level; the curvature check compares them with the model's prediction at that level and so covers the numeric factors only.".to_string(),
        Note::NoCurvatureAllCategorical => "Every factor is categorical: the nominal runs repeat one corner of the design, so there is no curvature to check.".to_string(),
        Note::DeterminationsAveraged { determinations } => format!(
            "The {determinations} determinations of each run were averaged; their spread is the repeatability of the measurement and is not used as the error that judges effects."
        ),
        Note::RangeClipped { factor } => format!(
            "The operating range of {} was cut back to the tested range: plateau does not extrapolate beyond the levels studied.",
            factor_name(study, factor)
        ),
    }
}

/// A p-value as printed: three decimals, or `< 0.001`.
pub fn p_text(p: f64) -> String {
    if !p.is_finite() {
        "–".into()
    } else if p < 0.001 {
        "< 0.001".into()
    } else {
        format!("{p:.3}")
    }
}

/// The precaution for a categorical factor that needs control, or `None` for a numeric one.
pub fn precaution_text(study: &Study, c: &crate::analysis::judge::ControlRange) -> Option<String> {
    let [nominal, alternative] = c.levels.as_ref()?;
    let name = factor_name(study, &c.factor);
    Some(format!(
        "{name} changes the result between {nominal} and {alternative}: use only the level(s) qualified in this study; another {} needs its own comparison.",
        name.to_lowercase()
    ))
}

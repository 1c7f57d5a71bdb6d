//! The conclusion paragraph, written from the verdicts as plain sentences.
//!
//! It states what was tested (factors and ranges), under which declared criterion, which effects
//! were relevant, and what the study cannot show; it never says "robust" without the ranges and
//! the criterion (Vander Heyden et al., J. Pharm. Biomed. Anal. 24 (2001) 723–753, §7).

use crate::analysis::{Analysis, Effect, ResponseAnalysis};
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
            let unit = f.unit.as_deref().map(|u| format!(" {u}")).unwrap_or_default();
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
                    response.unit.as_deref().map(|u| format!(" {u}")).unwrap_or_default()
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
        fixed(e.percent, PERCENT_DECIMALS)
    )
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
    out.push(format!(
        "{} factors were varied in {} two-level runs{}: {}.",
        study.factors.len(),
        two_level,
        if analysis.design.center_points > 0 {
            format!(" and {} nominal runs", analysis.design.center_points)
        } else {
            String::new()
        },
        ranges.join("; ")
    ));
    for response in &analysis.responses {
        let Some(criterion) = limit_text(response) else {
            out.push(format!(
                "{}: no acceptance rule was declared, so its effects are reported without a verdict.",
                response.name
            ));
            continue;
        };
        let mains: Vec<&Effect> = response
            .effects
            .iter()
            .filter(|e| e.order == 1 && !e.dummy)
            .collect();
        let relevant: Vec<&Effect> = mains
            .iter()
            .copied()
            .filter(|e| e.relevant == Some(true))
            .collect();
        if relevant.is_empty() {
            let largest = mains
                .iter()
                .max_by(|a, b| a.percent.abs().total_cmp(&b.percent.abs()));
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
    }
    let judged: Vec<&ResponseAnalysis> = analysis
        .responses
        .iter()
        .filter(|r| r.verdict.robust.is_some())
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
                names.join(", ")
            ));
        } else {
            let critical: Vec<String> = analysis
                .non_robust_factors
                .iter()
                .map(|id| factor_name(study, id))
                .collect();
            out.push(format!(
                "The method is not robust to {} over the tested range: {} must be controlled more tightly than it was varied here.",
                critical.join(", "),
                if critical.len() == 1 { "this parameter" } else { "these parameters" }
            ));
            if !robust_factors.is_empty() {
                out.push(format!(
                    "{} had no relevant effect on {} within the tested ranges.",
                    robust_factors.join(", "),
                    names.join(", ")
                ));
            }
        }
        out.push(format!(
            "An effect below the limit is not proof that no effect exists: these conclusions hold for the ranges tested, the {two_level} two-level runs performed and the criteria stated."
        ));
    }
    out
}

//! The words of the chapter that several sections share: criteria, effects, p-values,
//! probabilities, notes, precautions and lists, each written one way everywhere.

use crate::analysis::{Effect, FollowUp, Note, ResponseAnalysis};
use crate::study::{LimitUnit, Study};

use super::format::{fixed, percent_effect, setting, unit_suffix};

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

pub(crate) fn factor_name(study: &Study, id: &str) -> String {
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

pub(crate) fn effect_words(response: &ResponseAnalysis, e: &Effect) -> String {
    format!(
        "{}{} ({} %)",
        fixed(e.effect, response.decimals + 1),
        unit_suffix(response.unit.as_deref()),
        percent_effect(e.percent)
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
pub(crate) fn trim(v: f64) -> String {
    let t = format!("{v:.2}");
    let t = t.trim_end_matches('0').trim_end_matches('.');
    t.to_string()
}

pub(crate) fn capitalise(text: &str) -> String {
    let mut chars = text.chars();
    match chars.next() {
        Some(c) => c.to_uppercase().chain(chars).collect(),
        None => String::new(),
    }
}

/// A count with thousands separated by commas (100,000).
pub(crate) fn thousands(n: usize) -> String {
    let digits = n.to_string();
    let mut out = String::new();
    for (i, c) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i).is_multiple_of(3) {
            out.push(',');
        }
        out.push(c);
    }
    out
}

/// A probability as a percentage with two significant figures (at least 0.001 %).
pub(crate) fn probability_text(p: f64) -> String {
    if p <= 0.0 {
        "0 %".into()
    } else if p < 1e-5 {
        "< 0.001 %".into()
    } else {
        let pct = 100.0 * p;
        let d = (1 - pct.log10().floor() as i32).clamp(0, 3) as u32;
        format!("{} %", fixed(pct, d))
    }
}

/// A probability in words for prose: `80 %`, `> 99.9 %`.
pub(crate) fn percent_words(p: f64) -> String {
    if p > 0.999 {
        "more than 99.9 %".into()
    } else {
        // Whole percent, but never rounded up to a certainty it is not (99.6 % stays 99.6 %).
        format!(
            "{} %",
            fixed(100.0 * p, if (0.1..0.99).contains(&p) { 0 } else { 1 })
        )
    }
}

/// `= 0.012` or `< 0.001`.
pub(crate) fn p_relation(p: f64) -> String {
    let t = p_text(p);
    if t.starts_with('<') {
        t
    } else {
        format!("= {t}")
    }
}

/// The follow-up runs in words.
pub fn follow_up_text(study: &Study, f: &FollowUp) -> String {
    match f {
        FollowUp::FullFoldOver { runs } => format!(
            "Proposed follow-up: a full fold-over, {runs} runs repeating the two-level runs with every sign switched, analysed together with these runs."
        ),
        FollowUp::FoldOnFactor { factor, runs } => format!(
            "Proposed follow-up: a fold-over on {}, {runs} runs repeating the two-level runs with the levels of {} switched, analysed together with these runs.",
            factor_name(study, factor),
            factor_name(study, factor)
        ),
    }
}

/// A count at the start of a sentence: a word up to twelve (common practice in technical
/// writing), digits beyond.
pub(crate) fn count_word(n: usize) -> String {
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

/// The scope of a study in one sentence: factors, responses and runs, as planned (protocol)
/// or as done (report).
pub fn scope_sentence(study: &Study, runs: usize, planned: bool) -> String {
    let factors: Vec<String> = study.factors.iter().map(|f| f.name.clone()).collect();
    let responses: Vec<String> = study.responses.iter().map(|r| r.name.clone()).collect();
    let plural = |n: usize, one: &str, many: &str| if n == 1 { one } else { many }.to_string();
    format!(
        "The study {} {} operating {} of method {} ({}) around their nominal settings and {} {} {} ({}) in {} runs.",
        if planned { "will vary" } else { "varied" },
        study.factors.len(),
        plural(study.factors.len(), "parameter", "parameters"),
        study.info.method,
        and_list(&factors),
        if planned { "record" } else { "recorded" },
        study.responses.len(),
        plural(study.responses.len(), "response", "responses"),
        and_list(&responses),
        runs
    )
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
            "The nominal runs drift ({}{unit} per run in the run order, p {}) and no correction was applied: the drift inflates the error estimate and may bias effects that follow the run order.",
            fixed(*slope, d + 1),
            p_relation(*p)
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
        Note::TermsNotFitted { count, limit } => format!(
            "The least-squares fit takes at most {limit} columns: {count} higher-order interaction columns were left out of it and pooled into its residual."
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

/// The precaution for a categorical factor that needs control, or `None` for a numeric one;
/// a statistically significant change within a declared practical limit is stated for
/// information only.
pub fn precaution_text(
    study: &Study,
    r: &ResponseAnalysis,
    c: &crate::analysis::judge::ControlRange,
) -> Option<String> {
    let [nominal, alternative] = c.levels.as_ref()?;
    let name = factor_name(study, &c.factor);
    if c.basis != "relevance" && r.verdict.robust.is_some() {
        return Some(format!(
            "{name} shifts {} between {nominal} and {alternative} by a statistically significant amount within the practical limit (for information; no precaution follows from it).",
            r.name
        ));
    }
    Some(format!(
        "{name} changes the result between {nominal} and {alternative}: use only the level(s) qualified in this study; another {} needs its own comparison.",
        name.to_lowercase()
    ))
}

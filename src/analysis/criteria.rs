//! The declared criteria applied to the fitted effects: practical relevance against the
//! limits, and the critical effect of each significance rule on the standardised effects.

use super::Effect;
use super::criterion::{Critical, Method};
use super::judge::{Problem, problem};
use super::summary::ErrorEstimate;
use crate::design::{Design, Word};
use crate::study::{FieldPath, LimitUnit, Study};

/// Beyond any declared limit; `None` when no declared limit can judge the effect (a percent
/// limit without a percent effect).
pub(super) fn relevance(e: &Effect, limits: &[&crate::study::EffectLimit]) -> Option<bool> {
    let mut judged = false;
    let mut beyond = false;
    for l in limits {
        match l.unit {
            LimitUnit::Percent => {
                if let Some(p) = e.percent {
                    judged = true;
                    beyond |= p.abs() > l.limit;
                }
            }
            LimitUnit::Absolute => {
                judged = true;
                beyond |= e.effect.abs() > l.limit;
            }
        }
    }
    judged.then_some(beyond)
}

/// The critical effect of one significance rule (for an orthogonal effect: each effect's own
/// threshold is this times its `se_ratio`), the labels of the error columns, and their masks.
///
/// Methods that estimate the error from effects (dummies, negligible terms, Dong, Lenth) use
/// standardised effects E_j/se_ratio_j, so that after an exclusion every effect enters with
/// the scale of an orthogonal one.
pub(super) fn critical_for(
    study: &Study,
    design: &Design,
    rule: &crate::study::SignificanceRule,
    effects: &[(&crate::design::Contrast, Effect)],
    n_fit: usize,
    error: &ErrorEstimate,
    field: &FieldPath,
) -> Result<(Critical, Vec<String>, Vec<Word>), Problem> {
    let stat = |e: super::quantile::StatError| {
        problem(
            field.clone(),
            format!("the criterion cannot be computed: {e}"),
            "see the method's requirements in the README",
        )
    };
    let standardised = |e: &Effect| e.effect / e.se_ratio;
    match rule.method {
        Method::Precision => {
            let (Some(s), Some(df)) = (rule.s, rule.df) else {
                return Err(problem(
                    field.clone(),
                    "method precision needs `s` and `df`",
                    "expected both",
                ));
            };
            let c = Critical::from_precision(s, df, n_fit, rule.determinations, rule.alpha)
                .map_err(stat)?;
            Ok((c, Vec::new(), Vec::new()))
        }
        Method::Dummies => {
            let dummies: Vec<&Effect> =
                effects.iter().map(|(_, e)| e).filter(|e| e.dummy).collect();
            if dummies.is_empty() {
                return Err(problem(
                    field.key("method"),
                    format!(
                        "the design has no dummy columns ({} factors fill all its columns)",
                        study.factors.len()
                    ),
                    "expected kind plackett-burman with `dummies: k` (or a smaller number of factors), or another method",
                ));
            }
            let values: Vec<f64> = dummies.iter().map(|e| standardised(e)).collect();
            let c =
                Critical::from_error_effects(&values, rule.alpha, Method::Dummies).map_err(stat)?;
            Ok((
                c,
                dummies.iter().map(|e| e.label.clone()).collect(),
                Vec::new(),
            ))
        }
        Method::Negligible => {
            let mut values = Vec::new();
            let mut labels = Vec::new();
            let mut masks = Vec::new();
            for (j, (text, mask)) in rule.terms.iter().enumerate() {
                let Some((contrast, e)) = effects
                    .iter()
                    .find(|(c, _)| c.chain.iter().any(|m| m.word.0 == *mask))
                else {
                    return Err(problem(
                        field.key("terms").index(j),
                        format!("the design has no column for `{text}`"),
                        "expected a term the design estimates (see the alias table)",
                    ));
                };
                if contrast.term.order() == 1 {
                    return Err(problem(
                        field.key("terms").index(j),
                        format!(
                            "`{text}` shares its column with the main effect {}",
                            design.label(contrast.term)
                        ),
                        "expected terms whose column carries no main effect",
                    ));
                }
                if !masks.contains(&contrast.term) {
                    values.push(standardised(e));
                    labels.push(e.label.clone());
                    masks.push(contrast.term);
                }
            }
            let c = Critical::from_error_effects(&values, rule.alpha, Method::Negligible)
                .map_err(stat)?;
            Ok((c, labels, masks))
        }
        Method::Dong | Method::Lenth => {
            let values: Vec<f64> = effects.iter().map(|(_, e)| standardised(e)).collect();
            let c = if rule.method == Method::Dong {
                Critical::dong(&values, rule.alpha)
            } else {
                Critical::lenth(&values, rule.alpha)
            }
            .map_err(stat)?;
            Ok((c, Vec::new(), Vec::new()))
        }
        Method::Anova => {
            let Some(s) = error.s.filter(|_| error.df > 0) else {
                return Err(problem(
                    field.key("method"),
                    "method anova needs pure error from whole runs repeated at one setting, and the design has none (repeat determinations of one run measure repeatability, not the run-to-run error)",
                    "expected replicates ≥ 2 or at least two nominal runs (three with a drift correction)",
                ));
            };
            let c =
                Critical::from_pure_error(s, error.df as f64, n_fit, rule.alpha).map_err(stat)?;
            Ok((c, Vec::new(), Vec::new()))
        }
    }
}

//! The responses and the acceptance criteria: practical limits, statistical rules and
//! system-suitability limits, each tied to a declared response; the interaction terms named.

use super::*;

pub(super) fn responses(
    c: &mut Checker<'_>,
    file: &StudyFile,
    design: &DesignRequest,
    design_ok: bool,
) -> Vec<Response> {
    let has_nominal = match design.kind {
        DesignKind::Explicit => design
            .explicit_runs
            .iter()
            .any(|r| r.levels.iter().all(|l| *l == 0)),
        _ => design.center_points > 0,
    };
    let mut seen = BTreeSet::new();
    let mut out = Vec::new();
    for (i, r) in file.responses.iter().enumerate() {
        let at = FieldPath::of(&["responses"]).index(i);
        if !seen.insert(r.id.clone()) {
            c.report(
                &at.key("id"),
                format!("duplicate response id `{}`", r.id),
                Some("expected each response id once".into()),
            );
        }
        if RESERVED_IDS.contains(&r.id.as_str()) {
            c.report(
                &at.key("id"),
                format!("`{}` is reserved for a results column", r.id),
                Some("expected another id".into()),
            );
        }
        let percent_of = match r.percent_of {
            Some(PercentOf::Nominal) if !has_nominal && design_ok => {
                c.report(
                    &at.key("percent-of"),
                    "percent effects against the nominal runs need nominal runs, and the design has none",
                    Some("add `center-points` to the design, or use `percent-of: mean`".into()),
                );
                PercentOf::Mean
            }
            Some(p) => p,
            None if has_nominal => PercentOf::Nominal,
            None => PercentOf::Mean,
        };
        out.push(Response {
            id: r.id.clone(),
            name: r.name.clone(),
            unit: r.unit.clone(),
            percent_of,
            decimals: r.decimals,
            role: r.role.unwrap_or(model::Role::Assay),
            planning: r
                .planning
                .as_ref()
                .map(|p| crate::study::Planning {
                    sd: p.sd.unwrap_or(f64::NAN),
                    df: p.df,
                    level: p.level,
                    source: p.source.clone(),
                })
                .filter(|p| p.sd.is_finite() || p.level.is_some()),
        });
    }
    out
}

type Rules = (
    Vec<EffectLimit>,
    Vec<SignificanceRule>,
    Vec<SuitabilityLimit>,
);

pub(super) fn acceptance(c: &mut Checker<'_>, file: &StudyFile, responses: &[Response]) -> Rules {
    use model::Method;
    let mut limits = Vec::new();
    let mut significance = Vec::new();
    let mut suitability = Vec::new();
    let ids: Vec<&str> = responses.iter().map(|r| r.id.as_str()).collect();
    let factor_ids: Vec<&str> = file.factors.iter().map(|f| f.id.as_str()).collect();
    for (i, a) in file.acceptance.iter().enumerate() {
        let at = FieldPath::of(&["acceptance"]).index(i);
        let Some(response) = ids.iter().position(|id| *id == a.response) else {
            let hint = closest(&a.response, ids.iter().copied())
                .map(|b| format!("did you mean `{b}`? "))
                .unwrap_or_default();
            c.report(
                &at.key("response"),
                format!("unknown response `{}`", a.response),
                Some(format!(
                    "{hint}expected one of the response ids: {}",
                    ids.join(", ")
                )),
            );
            continue;
        };
        let kinds = [
            a.effect_limit.is_some(),
            a.significance.is_some(),
            a.min.is_some() || a.max.is_some(),
        ]
        .iter()
        .filter(|k| **k)
        .count();
        if kinds == 0 {
            c.report(
                &at,
                "the acceptance rule sets no limit",
                Some("expected `effect-limit: <number>`, `significance: {method: ...}` or `min:`/`max:`".into()),
            );
            continue;
        }
        if kinds > 1 {
            c.report(
                &at,
                "one acceptance entry mixes several rules",
                Some("expected one rule per entry (effect-limit, significance, or min/max); list several entries for one response".into()),
            );
            continue;
        }
        if a.effect_limit.is_none() && (a.unit.is_some() || a.basis.is_some()) {
            let name = if a.unit.is_some() { "unit" } else { "basis" };
            c.report(
                &at.key(name),
                format!("`{name}` belongs to an `effect-limit`"),
                Some("expected it next to `effect-limit`".into()),
            );
        }
        if let Some(limit) = a.effect_limit {
            limits.push(EffectLimit {
                response,
                limit,
                unit: a.unit.unwrap_or(LimitUnit::Percent),
                basis: a.basis.clone(),
            });
        }
        if let (Some(min), Some(max)) = (a.min, a.max)
            && min >= max
        {
            c.report(
                &at.key("min"),
                format!("min ({min}) is not below max ({max})"),
                Some("expected min < max".into()),
            );
        }
        if a.min.is_some() || a.max.is_some() {
            suitability.push(SuitabilityLimit {
                response,
                min: a.min,
                max: a.max,
            });
        }
        let Some(sig) = &a.significance else { continue };
        let here = at.key("significance");
        let method = sig.method;
        let only_for = |c: &mut Checker<'_>, name: &str, present: bool, owner: &str| {
            if present {
                c.report(
                    &here.key(name),
                    format!("`{name}` does not apply to method {}", method.as_str()),
                    Some(format!("`{name}` belongs to method {owner}")),
                );
            }
        };
        if method != Method::Precision {
            only_for(c, "s", sig.s.is_some(), "precision");
            only_for(c, "df", sig.df.is_some(), "precision");
            only_for(c, "source", sig.source.is_some(), "precision");
            only_for(
                c,
                "determinations",
                sig.determinations.is_some(),
                "precision",
            );
        }
        if method != Method::Negligible {
            only_for(c, "terms", sig.terms.is_some(), "negligible");
        }
        if method == Method::Precision {
            for (name, present) in [("s", sig.s.is_some()), ("df", sig.df.is_some())] {
                if !present {
                    c.report(
                        &here.key(name),
                        format!("method precision needs `{name}`"),
                        Some("expected `s` (the standard deviation), `df` (its degrees of freedom) and `source` (where it comes from)".into()),
                    );
                }
            }
        }
        if let Some(df) = sig.df.filter(|df| *df < 1.0) {
            c.report(
                &here.key("df"),
                format!("{df} degrees of freedom are too few for a t quantile"),
                Some(
                    "expected at least 1 (the degrees of freedom of the standard deviation `s`)"
                        .into(),
                ),
            );
        }
        // Run means average the results' determinations: the precision rule's n is that number
        // unless stated, and a different number would judge effects with the wrong SE.
        let results_n = file.results.as_ref().and_then(|r| r.determinations);
        if method == Method::Precision
            && let (Some(stated), Some(measured)) = (sig.determinations, results_n)
            && stated != measured
        {
            c.report(
                &here.key("determinations"),
                format!(
                    "the rule averages {stated} determinations per run, but `results.determinations` is {measured}"
                ),
                Some(format!(
                    "expected {measured} (or leave `determinations` out: it defaults to the results' determinations)"
                )),
            );
        }
        let mut terms = Vec::new();
        if method == Method::Negligible {
            match &sig.terms {
                None => c.report(
                    &here.key("terms"),
                    "method negligible needs the list of terms assumed negligible",
                    Some(
                        "expected e.g. `terms: [temp×ph×flow]` (factor ids joined by × or *)"
                            .into(),
                    ),
                ),
                Some(list) => {
                    for (j, t) in list.iter().enumerate() {
                        match parse_term(t, &factor_ids) {
                            Ok(mask) => terms.push((t.clone(), mask)),
                            Err(e) => c.report(
                                &here.key("terms").index(j),
                                e,
                                Some(format!(
                                    "expected factor ids joined by × or *, from: {}",
                                    factor_ids.join(", ")
                                )),
                            ),
                        }
                    }
                }
            }
        }
        significance.push(SignificanceRule {
            response,
            entry: i,
            method,
            alpha: sig.alpha.unwrap_or(0.05),
            s: sig.s,
            df: sig.df,
            source: sig.source.clone(),
            determinations: sig.determinations.or(results_n).unwrap_or(1) as usize,
            terms,
        });
    }
    (limits, significance, suitability)
}

/// A term written as factor ids joined by `×`, `*` or `x` surrounded by spaces.
pub fn parse_term(text: &str, factor_ids: &[&str]) -> Result<u64, String> {
    let mut mask = 0u64;
    let parts: Vec<&str> = text
        .split(['×', '*'])
        .map(str::trim)
        .filter(|p| !p.is_empty())
        .collect();
    if parts.is_empty() {
        return Err(format!("`{text}` names no factor"));
    }
    for part in parts {
        let Some(i) = factor_ids.iter().position(|f| *f == part) else {
            return Err(format!("`{part}` in `{text}` is not a factor id"));
        };
        let bit = 1u64 << i;
        if mask & bit != 0 {
            return Err(format!("`{part}` appears twice in `{text}`"));
        }
        mask |= bit;
    }
    Ok(mask)
}

//! The factors: ids, names, and two levels from nominal ± delta, low/high or categories.

use super::*;

pub(super) fn factors(c: &mut Checker<'_>, specs: &[model::FactorSpec]) -> Vec<Factor> {
    let mut out = Vec::new();
    let mut seen = BTreeSet::new();
    if specs.len() > MAX_FACTORS {
        c.report(
            &FieldPath::of(&["factors"]),
            format!("{} factors is more than plateau handles", specs.len()),
            Some(format!("expected at most {MAX_FACTORS} factors")),
        );
    }
    for (i, f) in specs.iter().enumerate() {
        let at = FieldPath::of(&["factors"]).index(i);
        if !seen.insert(f.id.clone()) {
            c.report(
                &at.key("id"),
                format!("duplicate factor id `{}`", f.id),
                Some("expected each factor id once".into()),
            );
        }
        if RESERVED_IDS.contains(&f.id.as_str()) {
            c.report(
                &at.key("id"),
                format!("`{}` is reserved for a results column", f.id),
                Some("expected another id".into()),
            );
        }
        if let Some(levels) = factor_levels(c, f, &at) {
            out.push(Factor {
                id: f.id.clone(),
                name: f.name.clone(),
                unit: f.unit.clone(),
                levels,
                justification: f.justification.clone(),
                routine: f.routine.map(|a| {
                    (
                        a,
                        f.distribution.unwrap_or(model::Distribution::Rectangular),
                    )
                }),
            });
        }
    }
    out
}

pub(super) fn factor_levels(
    c: &mut Checker<'_>,
    f: &model::FactorSpec,
    at: &FieldPath,
) -> Option<Levels> {
    if let Some(levels) = &f.levels {
        for (name, present) in [
            ("nominal", f.nominal.is_some()),
            ("delta", f.delta.is_some()),
            ("low", f.low.is_some()),
            ("high", f.high.is_some()),
        ] {
            if present {
                c.report(
                    &at.key(name),
                    format!("a categorical factor (with `levels`) has no `{name}`"),
                    Some("expected either `levels` or numeric `nominal` with `delta` or `low`/`high`".into()),
                );
            }
        }
        return match levels.as_slice() {
            [a, b] if a != b => Some(Levels::Categorical {
                nominal: a.clone(),
                alternative: b.clone(),
            }),
            [a, _] => {
                c.report(
                    &at.key("levels"),
                    format!("both levels are `{a}`"),
                    Some("expected two different level names".into()),
                );
                None
            }
            other => {
                c.report(
                    &at.key("levels"),
                    format!("a categorical factor has {} level(s)", other.len()),
                    Some("expected exactly two levels, the nominal one first".into()),
                );
                None
            }
        };
    }
    let Some(nominal) = f.nominal else {
        c.report(
            &at.key("nominal"),
            "missing required field `nominal`",
            Some("a numeric factor needs `nominal` with `delta` or `low`/`high`; a categorical one needs `levels`".into()),
        );
        return None;
    };
    let (low, high) = match (f.delta, f.low, f.high) {
        (Some(d), None, None) => (tidy(nominal - d), tidy(nominal + d)),
        (None, Some(l), Some(h)) => (l, h),
        (Some(_), _, _) => {
            c.report(
                &at.key("delta"),
                "`delta` and `low`/`high` are both given",
                Some("expected either `delta` or both `low` and `high`".into()),
            );
            return None;
        }
        (None, None, None) => {
            c.report(
                at,
                "the factor has no range",
                Some("expected `delta` or both `low` and `high`".into()),
            );
            return None;
        }
        (None, l, _) => {
            let missing = if l.is_some() { "high" } else { "low" };
            c.report(
                &at.key(missing),
                format!("missing `{missing}`"),
                Some("expected both `low` and `high`".into()),
            );
            return None;
        }
    };
    if low >= high {
        c.report(
            &at.key("low"),
            format!("low ({low}) is not below high ({high})"),
            Some("expected low < high".into()),
        );
        return None;
    }
    if nominal < low || nominal > high {
        c.report(
            &at.key("nominal"),
            format!("nominal ({nominal}) lies outside the range {low} to {high}"),
            Some("expected low ≤ nominal ≤ high".into()),
        );
        return None;
    }
    Some(Levels::Numeric { nominal, low, high })
}

/// A level computed as nominal ± delta, rounded to 12 significant digits so that binary
/// floating point does not print 3.0 − 0.1 as 2.9000000000000004.
pub(super) fn tidy(x: f64) -> f64 {
    if x == 0.0 || !x.is_finite() {
        return x;
    }
    let digits = 12 - 1 - x.abs().log10().floor() as i32;
    let scale = 10f64.powi(digits.clamp(-300, 300));
    (x * scale).round() / scale
}

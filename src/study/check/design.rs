//! The design section as the study states it (kind, runs, nominal runs, order, drift
//! correction) and the runs of an explicit design; the choices only the design can make are the
//! design stage's rules, run by [`super::study`].

use super::*;

pub(super) fn design(
    c: &mut Checker<'_>,
    spec: &model::DesignSpec,
    factors: &[model::FactorSpec],
) -> DesignRequest {
    let at = FieldPath::of(&["design"]);
    let seed = match &spec.randomize {
        None | Some(model::RandomizeSpec::Flag(false)) => None,
        Some(model::RandomizeSpec::Flag(true)) => {
            c.report(
                &at.key("randomize"),
                "`randomize: true` gives no seed, so the run order could not be reproduced",
                Some("expected `randomize: {seed: <number>}` or `randomize: false`".into()),
            );
            None
        }
        Some(model::RandomizeSpec::Seeded(s)) => Some(s.seed),
    };
    let nominal_runs = match spec.nominal_runs {
        None | Some(model::NominalRunsSpec::Named(NominalPlacement::Spread)) => Placement::Spread,
        Some(model::NominalRunsSpec::Named(NominalPlacement::First)) => Placement::First,
        Some(model::NominalRunsSpec::Named(NominalPlacement::Last)) => Placement::Last,
        Some(model::NominalRunsSpec::Named(NominalPlacement::Random)) => Placement::Random,
        Some(model::NominalRunsSpec::Every(e)) => Placement::Every(e.every.max(1) as usize),
    };
    if nominal_runs == Placement::Random && seed.is_none() {
        c.report(
            &at.key("nominal-runs"),
            "`nominal-runs: random` needs a randomised run order",
            Some(
                "add `randomize: {seed: <number>}`, or choose spread, first, last or {every: k}"
                    .into(),
            ),
        );
    }
    let k = factors.len();
    let count = match &spec.runs {
        Some(model::RunsSpec::Count(n)) => Some(*n as usize),
        _ => None,
    };
    let mut request = DesignRequest {
        kind: spec.kind,
        explicit_runs: Vec::new(),
        generators: spec.generators.clone(),
        resolution: spec.resolution,
        runs: count,
        dummies: spec.dummies.unwrap_or(0) as usize,
        foldover: spec.foldover.unwrap_or(false),
        alias_order: spec.alias_order.unwrap_or(2),
        allow_nonorthogonal: spec.allow_nonorthogonal.unwrap_or(false),
        center_points: spec.center_points.unwrap_or(0) as usize,
        nominal_runs,
        replicates: spec.replicates.unwrap_or(1) as usize,
        seed,
        drift_correction: spec.drift_correction,
    };
    let kind_name = spec.kind.as_str();
    let not_here = |c: &mut Checker<'_>, name: &str, present: bool, hint: &str| {
        if present {
            c.report(
                &at.key(name),
                format!("`{name}` does not apply to kind {kind_name}"),
                Some(hint.to_string()),
            );
        }
    };
    let is_list = matches!(spec.runs, Some(model::RunsSpec::List(_)));
    if spec.kind != DesignKind::Explicit {
        not_here(
            c,
            "allow-nonorthogonal",
            spec.allow_nonorthogonal.is_some(),
            "only an explicit design can be non-orthogonal",
        );
        if is_list {
            c.report(
                &at.key("runs"),
                format!("a {kind_name} design is generated, so it takes no run list"),
                Some("remove the list, or use `kind: explicit` to give the runs yourself".into()),
            );
        }
    }
    if !matches!(spec.kind, DesignKind::FractionalFactorial) {
        not_here(
            c,
            "generators",
            spec.generators.is_some(),
            "generators belong to kind fractional-factorial",
        );
        not_here(
            c,
            "resolution",
            spec.resolution.is_some(),
            "resolution belongs to kind fractional-factorial",
        );
    }
    if !matches!(spec.kind, DesignKind::PlackettBurman | DesignKind::Youden) {
        not_here(
            c,
            "dummies",
            spec.dummies.is_some(),
            "dummy columns belong to kinds plackett-burman and youden",
        );
    }
    match spec.kind {
        DesignKind::FullFactorial => {
            not_here(
                c,
                "runs",
                count.is_some(),
                "a full factorial of k factors has 2^k runs",
            );
            not_here(
                c,
                "foldover",
                spec.foldover.is_some(),
                "a full factorial has no aliasing to break",
            );
            if k > MAX_FULL_FACTORIAL_FACTORS {
                c.report(
                    &at.key("kind"),
                    format!("a full factorial of {k} factors has too many runs"),
                    Some(format!(
                        "expected at most {MAX_FULL_FACTORIAL_FACTORS} factors for a full factorial; use kind fractional-factorial or plackett-burman"
                    )),
                );
            }
        }
        // The choice of fraction, Plackett–Burman size and Youden arrangement is the design
        // stage's (the design rules the loader is given); here only what the study states.
        DesignKind::FractionalFactorial | DesignKind::PlackettBurman => {}
        DesignKind::Youden => {
            not_here(
                c,
                "runs",
                count.is_some(),
                "the Youden–Steiner design has 8 runs",
            );
        }
        DesignKind::Explicit => {
            not_here(
                c,
                "center-points",
                spec.center_points.is_some(),
                "list every run, nominal runs as rows with each factor at 0",
            );
            not_here(
                c,
                "replicates",
                spec.replicates.is_some(),
                "list every run of an explicit design",
            );
            not_here(
                c,
                "foldover",
                spec.foldover.is_some(),
                "list the mirror-image runs yourself",
            );
            not_here(
                c,
                "runs",
                count.is_some(),
                "expected `runs:` as a list of `{run: ID, <factor id>: -1 | 0 | 1}`",
            );
            request.explicit_runs = explicit_runs(c, spec, factors, &at.key("runs"));
        }
    }
    request
}

pub(super) fn explicit_runs(
    c: &mut Checker<'_>,
    spec: &model::DesignSpec,
    factors: &[model::FactorSpec],
    at: &FieldPath,
) -> Vec<ExplicitRun> {
    let Some(model::RunsSpec::List(rows)) = &spec.runs else {
        c.report(
            at,
            "an explicit design needs its runs",
            Some("expected `runs:` as a list of `{run: ID, <factor id>: -1 | 0 | 1}`".into()),
        );
        return Vec::new();
    };
    if rows.len() < 2 || rows.len() > MAX_EXPLICIT_RUNS {
        c.report(
            at,
            format!("{} run(s) listed", rows.len()),
            Some(format!("expected between 2 and {MAX_EXPLICIT_RUNS} runs")),
        );
    }
    let ids: Vec<&str> = factors.iter().map(|f| f.id.as_str()).collect();
    let mut seen = BTreeSet::new();
    let mut orders = BTreeSet::new();
    let mut out = Vec::new();
    for (i, row) in rows.iter().enumerate() {
        let here = at.index(i);
        let id = match row.get("run").map(run_id) {
            Some(Ok(id)) => id,
            Some(Err(why)) => {
                c.report(&here.key("run"), why, None);
                continue;
            }
            None => continue, // the schema has reported it
        };
        if !seen.insert(id.clone()) {
            c.report(
                &here.key("run"),
                format!("duplicate run id `{id}`"),
                Some("expected each run id once".into()),
            );
        }
        let order = row.get("order").and_then(Value::as_u64).map(|o| o as usize);
        if let Some(o) = order
            && !orders.insert(o)
        {
            c.report(
                &here.key("order"),
                format!("run order {o} is given twice"),
                Some("expected each position in the run order once".into()),
            );
        }
        for key in row.keys() {
            if key != "run" && key != "order" && key != "block" && !ids.contains(&key.as_str()) {
                let hint = closest(key, ids.iter().copied())
                    .map(|b| format!("did you mean `{b}`? "))
                    .unwrap_or_default();
                c.report(
                    &here.key(key),
                    format!("unknown factor `{key}`"),
                    Some(format!(
                        "{hint}expected one of the factor ids: {}",
                        ids.join(", ")
                    )),
                );
            }
        }
        let mut levels = Vec::with_capacity(factors.len());
        for f in factors {
            match row.get(&f.id).and_then(Value::as_i64) {
                Some(v @ -1..=1) => levels.push(v as i8),
                _ => {
                    c.report(
                        &here,
                        format!("run `{id}` has no level for factor `{}`", f.id),
                        Some("expected every factor at -1, 0 or 1".into()),
                    );
                }
            }
        }
        if levels.len() == factors.len() {
            let zeros = levels.iter().filter(|l| **l == 0).count();
            if zeros != 0 && zeros != levels.len() {
                c.report(
                    &here,
                    format!("run `{id}` mixes nominal (0) and ±1 levels"),
                    Some("expected a two-level run (every factor at -1 or 1) or a nominal run (every factor at 0)".into()),
                );
            }
            let block = match row.get("block") {
                None => 1,
                Some(v) => match v.as_u64() {
                    Some(b @ 1..=2) => b as u8,
                    _ => {
                        c.report(
                            &here.key("block"),
                            format!("block `{v}` of run `{id}`"),
                            Some("expected 1 (the first runs) or 2 (the follow-up runs)".into()),
                        );
                        1
                    }
                },
            };
            out.push(ExplicitRun {
                id,
                order,
                levels,
                block,
            });
        }
    }
    if !orders.is_empty() && orders.len() != rows.len() {
        c.report(
            at,
            "`order` is given for some runs but not for all",
            Some("expected `order` on every run or on none".into()),
        );
    }
    out
}

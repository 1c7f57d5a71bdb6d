//! From the study's design request to the planned design: the two-level runs of each kind,
//! replicates, nominal runs, the run order and the structure the report states.

use super::*;

/// Plans the design of a study.
pub fn plan(study: &Study) -> Result<Design, Diagnostics> {
    use construction::Construction;
    let ids: Vec<&str> = study.factors.iter().map(|f| f.id.as_str()).collect();
    let chosen = construction::choose(&study.design, &ids).map_err(|problems| {
        Diagnostics(
            problems
                .into_iter()
                .map(|p| study.diagnostic(&p.field, p.problem, p.expected))
                .collect(),
        )
    })?;
    let design = match chosen {
        Construction::Full => full_factorial(study),
        Construction::Fraction {
            fraction,
            generators,
            catalogue,
        } => regular_fraction(study, &fraction, generators, catalogue)?,
        Construction::PlackettBurman { runs } => plackett_burman(study, runs)?,
        Construction::Explicit => explicit(study)?,
    };
    check_nominal_placement(study, &design)?;
    Ok(design)
}

pub(super) fn check_nominal_placement(study: &Study, design: &Design) -> Result<(), Diagnostics> {
    if let crate::study::Placement::Every(k) = study.design.nominal_runs {
        let m = design.runs.iter().filter(|r| !r.nominal).count();
        let needed = m / k + 1;
        let have = design.nominal_count();
        if have != needed {
            return Err(Diagnostics(vec![study.diagnostic(
                &FieldPath::of(&["design", "center-points"]),
                format!(
                    "`nominal-runs: {{every: {k}}}` over {m} two-level runs places {needed} nominal runs, but {have} are planned"
                ),
                Some(format!("expected center-points: {needed}, or another spacing")),
            )]));
        }
    }
    Ok(())
}

/// Ids of the dummy columns.
pub(super) fn dummy_ids(count: usize) -> Vec<String> {
    (1..=count).map(|i| format!("d{i}")).collect()
}

/// Two-level runs of one replicate repeated `replicates` times, ids continuing across
/// replicates.
pub(super) fn replicate_rows(rows: &[Vec<i8>], replicates: usize) -> Vec<(RunId, Vec<i8>, usize)> {
    let n = rows.len();
    let mut out = Vec::with_capacity(n * replicates);
    for r in 0..replicates {
        for (i, row) in rows.iter().enumerate() {
            out.push((RunId((r * n + i + 1).to_string()), row.clone(), r + 1));
        }
    }
    out
}

pub(super) fn nominal_ids(study: &Study, after: usize) -> Vec<RunId> {
    (0..study.design.center_points)
        .map(|c| RunId((after + c + 1).to_string()))
        .collect()
}

pub(super) fn words_text(ids: &[String], word: crate::design::word::SignedWord) -> String {
    let names: Vec<&str> = word
        .word
        .factors()
        .into_iter()
        .filter_map(|i| ids.get(i).map(String::as_str))
        .collect();
    format!(
        "{}{}",
        if word.sign < 0 { "−" } else { "" },
        names.join("×")
    )
}

pub(super) fn regular_fraction(
    study: &Study,
    fraction: &crate::design::fraction::Fraction,
    generators: Vec<String>,
    catalogue: Option<String>,
) -> Result<Design, Diagnostics> {
    let request = &study.design;
    let k_study = study.factors.len();
    let dummies = fraction.k.saturating_sub(k_study);
    let mut ids: Vec<String> = study.factors.iter().map(|f| f.id.clone()).collect();
    ids.extend(dummy_ids(dummies));
    let alias_order = request.alias_order.max(1);
    let (rows, defining, resolution, wlp, contrasts) = if request.foldover {
        let folded = fraction.fold_over().map_err(|e| {
            Diagnostics(vec![study.diagnostic(
                &FieldPath::of(&["design", "foldover"]),
                e.to_string(),
                None,
            )])
        })?;
        (
            folded.runs.clone(),
            folded.defining_relation.clone(),
            folded.resolution,
            folded.word_length_pattern.clone(),
            folded.contrasts(alias_order),
        )
    } else {
        (
            fraction.matrix(),
            fraction.defining_relation.clone(),
            fraction.resolution,
            fraction.word_length_pattern.clone(),
            fraction.contrasts(alias_order),
        )
    };
    let n = rows.len();
    let replicates = request.replicates.max(1);
    let structure = Structure {
        generators,
        catalogue,
        defining_relation: defining
            .iter()
            .map(|w| format!("I = {}", words_text(&ids, *w)))
            .collect(),
        resolution,
        word_length_pattern: wlp,
        youden: !request.foldover && crate::design::fraction::is_youden_steiner(fraction),
        folded: request.foldover,
        alias_order,
        partial_aliases: Vec::new(),
    };
    let two_level = replicate_rows(&rows, replicates);
    let nominal = nominal_ids(study, n * replicates);
    let mut design = assemble(study, two_level, nominal, n, replicates, contrasts, false);
    design.column_ids = ids;
    design.dummies = dummies;
    design.structure = structure;
    Ok(design)
}

pub(super) fn plackett_burman(study: &Study, n: usize) -> Result<Design, Diagnostics> {
    let request = &study.design;
    let matrix = crate::design::plackett_burman::matrix(n).map_err(|e| {
        Diagnostics(vec![study.diagnostic(
            &FieldPath::of(&["design", "runs"]),
            e.to_string(),
            None,
        )])
    })?;
    let k = study.factors.len();
    let columns = n.saturating_sub(1);
    let dummies = columns.saturating_sub(k);
    let mut ids: Vec<String> = study.factors.iter().map(|f| f.id.clone()).collect();
    ids.extend(dummy_ids(dummies));
    let mut rows = matrix;
    if request.foldover {
        let mirror: Vec<Vec<i8>> = rows
            .iter()
            .map(|r| r.iter().map(|v| -v).collect())
            .collect();
        rows.extend(mirror);
    }
    let contrasts = (0..columns)
        .map(|j| Contrast::clean(Word(1u64 << j)))
        .collect();
    let factor_cols: Vec<usize> = (0..k).collect();
    let partial = crate::design::aliasing::interaction_correlations(&rows, &factor_cols)
        .into_iter()
        .filter(|p| p.with.0.count_ones() == 1 && (p.with.0.trailing_zeros() as usize) < k)
        .map(|p| PartialAliasText {
            interaction: p
                .interaction
                .factors()
                .into_iter()
                .filter_map(|i| ids.get(i).cloned())
                .collect(),
            with: ids
                .get(p.with.0.trailing_zeros() as usize)
                .cloned()
                .unwrap_or_default(),
            correlation: p.correlation,
        })
        .collect();
    let structure = Structure {
        folded: request.foldover,
        alias_order: 1,
        partial_aliases: partial,
        ..Structure::default()
    };
    let base = rows.len();
    let replicates = request.replicates.max(1);
    let two_level = replicate_rows(&rows, replicates);
    let nominal = nominal_ids(study, base * replicates);
    let mut design = assemble(
        study, two_level, nominal, base, replicates, contrasts, false,
    );
    design.column_ids = ids;
    design.dummies = dummies;
    design.structure = structure;
    Ok(design)
}

pub(super) fn full_factorial(study: &Study) -> Design {
    let k = study.factors.len();
    let n = 1usize << k;
    let replicates = study.design.replicates.max(1);
    let mut two_level = Vec::with_capacity(n * replicates);
    for r in 0..replicates {
        for i in 0..n {
            let coded = (0..k)
                .map(|j| if i >> j & 1 == 1 { 1 } else { -1 })
                .collect();
            two_level.push((RunId((r * n + i + 1).to_string()), coded, r + 1));
        }
    }
    let mut contrasts: Vec<Contrast> = (1..(1u64 << k)).map(|m| Contrast::clean(Word(m))).collect();
    contrasts.sort_by(|a, b| word::display_cmp(&a.term, &b.term));
    let nominal_ids: Vec<RunId> = (0..study.design.center_points)
        .map(|c| RunId((n * replicates + c + 1).to_string()))
        .collect();
    assemble(
        study,
        two_level,
        nominal_ids,
        n,
        replicates,
        contrasts,
        true,
    )
}

/// Builds the run list with its order from the two-level runs and the nominal run ids.
pub(super) fn assemble(
    study: &Study,
    two_level: Vec<(RunId, Vec<i8>, usize)>,
    nominal_ids: Vec<RunId>,
    base_runs: usize,
    replicates: usize,
    contrasts: Vec<Contrast>,
    complete_factorial: bool,
) -> Design {
    let k = two_level.first().map_or(study.factors.len(), |r| r.1.len());
    let orders = order::run_order(
        two_level.len(),
        nominal_ids.len(),
        study.design.nominal_runs,
        study.design.seed,
    );
    let mut runs: Vec<PlannedRun> = two_level
        .into_iter()
        .map(|(id, coded, replicate)| PlannedRun {
            block: 1,
            id,
            order: 0,
            coded,
            nominal: false,
            replicate,
        })
        .chain(nominal_ids.into_iter().map(|id| PlannedRun {
            block: 1,
            id,
            order: 0,
            coded: vec![0; k],
            nominal: true,
            replicate: 0,
        }))
        .collect();
    for (run, order) in runs.iter_mut().zip(orders) {
        run.order = order;
    }
    Design {
        kind: study.design.kind,
        column_ids: study.factors.iter().map(|f| f.id.clone()).collect(),
        dummies: 0,
        structure: Structure {
            alias_order: k as u32,
            ..Structure::default()
        },
        least_squares: false,
        runs,
        base_runs,
        replicates,
        contrasts,
        complete_factorial,
        seed: study.design.seed,
    }
}

pub(super) fn explicit(study: &Study) -> Result<Design, Diagnostics> {
    let k = study.factors.len();
    let at = FieldPath::of(&["design", "runs"]);
    let two_level: Vec<&crate::study::ExplicitRun> = study
        .design
        .explicit_runs
        .iter()
        .filter(|r| r.levels.iter().any(|l| *l != 0))
        .collect();
    let mut problems = Diagnostics::default();
    let matrix: Vec<Vec<i8>> = two_level.iter().map(|r| r.levels.clone()).collect();
    for (j, f) in study.factors.iter().enumerate() {
        let plus = matrix.iter().filter(|row| row.get(j) == Some(&1)).count();
        let minus = matrix.len() - plus;
        if plus != minus {
            problems.push(study.diagnostic(
                &at,
                format!(
                    "factor `{}` is not balanced: {plus} run(s) at +1 and {minus} at −1",
                    f.id
                ),
                Some("expected as many runs at +1 as at −1 for every factor".to_string()),
            ));
        }
    }
    for a in 0..k {
        for b in a + 1..k {
            let dot: i64 = matrix
                .iter()
                .map(|row| i64::from(row[a]) * i64::from(row[b]))
                .sum();
            if dot != 0 {
                problems.push(study.diagnostic(
                    &at,
                    format!(
                        "the columns of `{}` and `{}` are not orthogonal (their product sums to {dot})",
                        study.factors[a].id, study.factors[b].id
                    ),
                    Some("expected an orthogonal two-level design, in which every pair of factor columns has product sum 0".to_string()),
                ));
            }
        }
    }
    let allowed = study.design.allow_nonorthogonal;
    if allowed {
        problems = Diagnostics::default();
    }
    if matrix.is_empty() {
        problems.push(study.diagnostic(
            &at,
            "the design has no two-level runs",
            Some("expected runs with every factor at -1 or 1".to_string()),
        ));
    }
    if !problems.is_empty() {
        return Err(problems.sorted());
    }
    let orthogonal = is_orthogonal(&matrix, k);
    let alias_order = study.design.alias_order.max(1);
    let contrasts = if orthogonal {
        // Chains shown up to the declared alias order, as for a regular fraction.
        let mut contrasts = contrasts_from_matrix(&matrix, k);
        contrasts.retain(|c| c.term.order() <= alias_order);
        for c in &mut contrasts {
            c.chain.retain(|m| m.word.order() <= alias_order);
        }
        contrasts
    } else {
        // Only main effects can be fitted by least squares from a non-orthogonal matrix.
        (0..k).map(|j| Contrast::clean(Word(1u64 << j))).collect()
    };
    let n = matrix.len();
    let mut runs: Vec<PlannedRun> = Vec::new();
    let explicit_order = study.design.explicit_runs.iter().all(|r| r.order.is_some());
    let generated = order::run_order(
        two_level.len(),
        study.design.explicit_runs.len() - two_level.len(),
        study.design.nominal_runs,
        study.design.seed,
    );
    let (mut t, mut c) = (0usize, two_level.len());
    for r in &study.design.explicit_runs {
        let nominal = r.levels.iter().all(|l| *l == 0);
        let slot = if nominal {
            c += 1;
            c - 1
        } else {
            t += 1;
            t - 1
        };
        let order = if explicit_order {
            r.order.unwrap_or(0)
        } else {
            generated.get(slot).copied().unwrap_or(slot + 1)
        };
        runs.push(PlannedRun {
            block: r.block,
            id: r.id.clone(),
            order,
            coded: r.levels.clone(),
            nominal,
            replicate: usize::from(!nominal),
        });
    }
    check_explicit_order(study, &runs)?;
    Ok(Design {
        kind: DesignKind::Explicit,
        column_ids: study.factors.iter().map(|f| f.id.clone()).collect(),
        dummies: 0,
        structure: Structure {
            alias_order: if orthogonal { alias_order } else { 1 },
            ..Structure::default()
        },
        least_squares: !orthogonal,
        runs,
        base_runs: n,
        replicates: 1,
        contrasts,
        complete_factorial: false,
        seed: study.design.seed,
    })
}

/// True when every factor column is balanced and every pair of columns orthogonal.
pub(super) fn is_orthogonal(matrix: &[Vec<i8>], k: usize) -> bool {
    let col = |j: usize| {
        matrix
            .iter()
            .map(move |row| i64::from(row.get(j).copied().unwrap_or(0)))
    };
    (0..k).all(|a| col(a).sum::<i64>() == 0)
        && (0..k)
            .all(|a| (a + 1..k).all(|b| col(a).zip(col(b)).map(|(x, y)| x * y).sum::<i64>() == 0))
}

fn check_explicit_order(study: &Study, runs: &[PlannedRun]) -> Result<(), Diagnostics> {
    let mut orders: Vec<usize> = runs.iter().map(|r| r.order).collect();
    orders.sort_unstable();
    if orders.iter().enumerate().any(|(i, o)| *o != i + 1) {
        return Err(Diagnostics(vec![study.diagnostic(
            &FieldPath::of(&["design", "runs"]),
            "the run orders are not 1, 2, ..., n",
            Some(format!(
                "expected each position from 1 to {} exactly once",
                runs.len()
            )),
        )]));
    }
    Ok(())
}

//! Planning: from the study's design section to the coded run list, run order and contrasts.
//!
//! A `Design` knows every run (stable id in standard order, separate run order, coded levels)
//! and every contrast column the runs can estimate, each with its alias chain, so the analysis
//! never has to guess what a column means.

pub mod aliasing;
pub mod catalogue;
pub mod construction;
pub mod fraction;
pub mod generator;
pub mod order;
pub mod plackett_burman;
pub mod sheet;
pub mod word;

use crate::study::{DesignKind, Diagnostic, Diagnostics, FieldPath, RunId, Study};

/// A term (main effect or interaction) as a bit set of factor indices.
pub type TermMask = u64;

/// One planned run.
#[derive(Debug, Clone, serde::Serialize)]
pub struct PlannedRun {
    /// Stable id (standard order).
    pub id: RunId,
    /// Position in the executed run order, 1-based.
    pub order: usize,
    /// Coded level per factor column: −1, +1, or 0 in a nominal run.
    pub coded: Vec<i8>,
    /// True for nominal (centre) runs.
    pub nominal: bool,
    /// Replicate number of the two-level part, 1-based (0 for nominal runs).
    pub replicate: usize,
    /// Block (1, or 2 for the follow-up runs of an explicit design): the fit carries a block
    /// column so that a shift between the two sets of runs is not taken for an effect.
    pub block: u8,
}

/// One estimable contrast column and what it estimates.
#[derive(Debug, Clone, serde::Serialize)]
pub struct Contrast {
    /// The term the column is named after (lowest order in its chain).
    pub term: TermMask,
    /// Every term sharing this column (up to the order shown), with its sign relative to `term`;
    /// the first is `term` itself.
    pub chain: Vec<(TermMask, i8)>,
}

impl Contrast {
    /// True when no other term shares the column, so the estimate belongs to `term` alone.
    pub fn is_clean(&self) -> bool {
        self.chain.len() == 1
    }
}

/// What a regular fraction or a screening array is, for the report and the JSON.
#[derive(Debug, Clone, Default, serde::Serialize)]
pub struct Structure {
    /// Generators as written (letters or factor ids).
    pub generators: Vec<String>,
    /// Where the generators came from, when chosen from the catalogue.
    pub catalogue: Option<String>,
    /// The defining relation, e.g. `I = ABCDE`, words in factor ids joined by `×`.
    pub defining_relation: Vec<String>,
    /// Resolution (length of the shortest defining word); `None` for full factorials and
    /// non-regular designs.
    pub resolution: Option<u32>,
    /// Word-length pattern (A_3, A_4, ...).
    pub word_length_pattern: Vec<usize>,
    /// True when the design is the Youden–Steiner 7-factors-in-8-runs arrangement.
    pub youden: bool,
    /// True when the mirror-image runs were added.
    pub folded: bool,
    /// Highest interaction order shown in alias chains.
    pub alias_order: u32,
    /// Partial aliasing of two-factor interactions with main effects (non-regular designs).
    pub partial_aliases: Vec<PartialAliasText>,
}

/// One interaction partially aliased with a main effect.
#[derive(Debug, Clone, serde::Serialize)]
pub struct PartialAliasText {
    /// The two factors of the interaction.
    pub interaction: Vec<String>,
    /// The main-effect column it leaks into.
    pub with: String,
    /// Correlation of the two columns.
    pub correlation: f64,
}

/// The planned design.
#[derive(Debug, Clone)]
pub struct Design {
    /// Kind as requested.
    pub kind: DesignKind,
    /// Ids of the columns, in order: the study factors, then dummy columns `d1, d2, ...`.
    pub column_ids: Vec<String>,
    /// Number of dummy columns (at the end of `column_ids`).
    pub dummies: usize,
    /// Generators, defining relation, resolution, aliasing.
    pub structure: Structure,
    /// Effects come from least squares (a non-orthogonal explicit design).
    pub least_squares: bool,
    /// All runs, sorted by run id (standard order).
    pub runs: Vec<PlannedRun>,
    /// Two-level runs per replicate.
    pub base_runs: usize,
    /// Replicates of the two-level part.
    pub replicates: usize,
    /// Estimable contrasts, main effects first.
    pub contrasts: Vec<Contrast>,
    /// True when the two-level runs are the complete 2^k in standard order, once per replicate
    /// (effects may then be computed with the fast Walsh–Hadamard transform).
    pub complete_factorial: bool,
    /// The seed of the run order, if randomised.
    pub seed: Option<u64>,
}

impl Design {
    /// Number of factor columns.
    pub fn k(&self) -> usize {
        self.column_ids.len()
    }

    /// Number of nominal runs.
    pub fn nominal_count(&self) -> usize {
        self.runs.iter().filter(|r| r.nominal).count()
    }

    /// Label of a term from factor ids, joined by `×` (e.g. `temp×ph`).
    pub fn label(&self, term: TermMask) -> String {
        term_factors(term)
            .into_iter()
            .filter_map(|i| self.column_ids.get(i).map(String::as_str))
            .collect::<Vec<_>>()
            .join("×")
    }

    /// Runs in executed order.
    pub fn runs_in_order(&self) -> Vec<&PlannedRun> {
        let mut runs: Vec<&PlannedRun> = self.runs.iter().collect();
        runs.sort_by_key(|r| r.order);
        runs
    }
}

/// The factor indices of a term, ascending.
pub fn term_factors(term: TermMask) -> Vec<usize> {
    (0..64).filter(|i| term >> i & 1 == 1).collect()
}

/// The order of a term (number of factors).
pub fn term_order(term: TermMask) -> u32 {
    term.count_ones()
}

/// Display order of terms: by order, then by factor indices (A, B, AB, AC, BC, ABC).
pub fn term_cmp(a: TermMask, b: TermMask) -> std::cmp::Ordering {
    term_order(a)
        .cmp(&term_order(b))
        .then_with(|| term_factors(a).cmp(&term_factors(b)))
}

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

fn check_nominal_placement(study: &Study, design: &Design) -> Result<(), Diagnostics> {
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
fn dummy_ids(count: usize) -> Vec<String> {
    (1..=count).map(|i| format!("d{i}")).collect()
}

/// Two-level runs of one replicate repeated `replicates` times, ids continuing across
/// replicates.
fn replicate_rows(rows: &[Vec<i8>], replicates: usize) -> Vec<(RunId, Vec<i8>, usize)> {
    let n = rows.len();
    let mut out = Vec::with_capacity(n * replicates);
    for r in 0..replicates {
        for (i, row) in rows.iter().enumerate() {
            out.push((RunId((r * n + i + 1).to_string()), row.clone(), r + 1));
        }
    }
    out
}

fn nominal_ids(study: &Study, after: usize) -> Vec<RunId> {
    (0..study.design.center_points)
        .map(|c| RunId((after + c + 1).to_string()))
        .collect()
}

fn words_text(ids: &[String], word: crate::design::word::SignedWord) -> String {
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

fn regular_fraction(
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
    let contrasts: Vec<Contrast> = contrasts
        .into_iter()
        .map(|c| Contrast {
            term: c.column.0,
            chain: c.chain.iter().map(|w| (w.word.0, w.sign)).collect(),
        })
        .collect();
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

fn plackett_burman(study: &Study, n: usize) -> Result<Design, Diagnostics> {
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
        .map(|j| Contrast {
            term: 1u64 << j,
            chain: vec![(1u64 << j, 1)],
        })
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

fn full_factorial(study: &Study) -> Design {
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
    let mut contrasts: Vec<Contrast> = (1..(1u64 << k))
        .map(|m| Contrast {
            term: m,
            chain: vec![(m, 1)],
        })
        .collect();
    contrasts.sort_by(|a, b| term_cmp(a.term, b.term));
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
fn assemble(
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

fn explicit(study: &Study) -> Result<Design, Diagnostics> {
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
        contrasts.retain(|c| term_order(c.term) <= alias_order);
        for c in &mut contrasts {
            c.chain.retain(|(t, _)| term_order(*t) <= alias_order);
        }
        contrasts
    } else {
        // Only main effects can be fitted by least squares from a non-orthogonal matrix.
        (0..k)
            .map(|j| Contrast {
                term: 1u64 << j,
                chain: vec![(1u64 << j, 1)],
            })
            .collect()
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
    if let Err(d) = check_explicit_order(study, &runs) {
        return Err(Diagnostics(vec![d]));
    }
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
fn is_orthogonal(matrix: &[Vec<i8>], k: usize) -> bool {
    let col = |j: usize| {
        matrix
            .iter()
            .map(move |row| i64::from(row.get(j).copied().unwrap_or(0)))
    };
    (0..k).all(|a| col(a).sum::<i64>() == 0)
        && (0..k)
            .all(|a| (a + 1..k).all(|b| col(a).zip(col(b)).map(|(x, y)| x * y).sum::<i64>() == 0))
}

fn check_explicit_order(study: &Study, runs: &[PlannedRun]) -> Result<(), Diagnostic> {
    let mut orders: Vec<usize> = runs.iter().map(|r| r.order).collect();
    orders.sort_unstable();
    if orders.iter().enumerate().any(|(i, o)| *o != i + 1) {
        return Err(study.diagnostic(
            &FieldPath::of(&["design", "runs"]),
            "the run orders are not 1, 2, ..., n",
            Some(format!(
                "expected each position from 1 to {} exactly once",
                runs.len()
            )),
        ));
    }
    Ok(())
}

/// Largest number of terms examined when searching an explicit design for estimable
/// interactions (all terms up to the order that stays within this count).
const MAX_TERMS_SEARCHED: usize = 1 << 14;

/// The contrasts an arbitrary two-level matrix can estimate: main effects, then every
/// interaction whose column is orthogonal to all kept columns; interactions whose column equals
/// a kept one (up to sign) join its alias chain. Interactions only partially correlated with a
/// kept column are not estimable and are left out.
pub fn contrasts_from_matrix(matrix: &[Vec<i8>], k: usize) -> Vec<Contrast> {
    let n = matrix.len();
    let k = k.min(63);
    let mut terms: Vec<TermMask> = Vec::new();
    for order in 1..=k {
        let count = binomial(k, order);
        if terms.len() + count > MAX_TERMS_SEARCHED {
            break;
        }
        terms.extend(masks_of_order(k, order));
    }
    terms.sort_by(|a, b| term_cmp(*a, *b));
    // Each column of ±1 as a bit pattern (bit set = −1): a term's column is the XOR of its
    // factors' patterns, and the dot product of two columns is n − 2·popcount(a XOR b), so the
    // search over every kept column costs n/64 word operations per pair, not n products.
    let factor_bits: Vec<Vec<u64>> = (0..k)
        .map(|j| {
            let mut bits = vec![0u64; n.div_ceil(64)];
            for (r, row) in matrix.iter().enumerate() {
                if row.get(j).copied().unwrap_or(1) < 0 {
                    bits[r / 64] |= 1 << (r % 64);
                }
            }
            bits
        })
        .collect();
    let words = n.div_ceil(64);
    let n_i = n as i64;
    let regular = is_regular(matrix, k);
    let mut kept: Vec<(Contrast, Vec<u64>)> = Vec::new();
    // A column equal to a kept one up to sign is found by its pattern normalised to start
    // with +1 (bit 0 clear).
    let mut by_pattern: std::collections::HashMap<Vec<u64>, usize> =
        std::collections::HashMap::new();
    let normalise = |bits: &[u64]| -> (Vec<u64>, bool) {
        let flipped = bits.first().is_some_and(|w| w & 1 == 1);
        let mut out = bits.to_vec();
        if flipped {
            for (w, word) in out.iter_mut().enumerate() {
                *word = !*word & valid_mask(n, w);
            }
        }
        (out, flipped)
    };
    'terms: for term in terms {
        let mut col = vec![0u64; words];
        for j in term_factors(term) {
            if let Some(f) = factor_bits.get(j) {
                for (c, b) in col.iter_mut().zip(f) {
                    *c ^= *b;
                }
            }
        }
        let minus = col.iter().map(|w| i64::from(w.count_ones())).sum::<i64>();
        let sum = n_i - 2 * minus;
        if sum.unsigned_abs() as usize == n {
            continue; // aliased with the mean: part of the defining relation
        }
        let (pattern, flipped) = normalise(&col);
        if let Some(&at) = by_pattern.get(&pattern) {
            let kept_flipped = kept[at].1.first().is_some_and(|w| w & 1 == 1);
            let sign = if flipped == kept_flipped { 1 } else { -1 };
            kept[at].0.chain.push((term, sign));
            continue 'terms;
        }
        // With n − 1 mutually orthogonal columns kept the basis is complete: any other column
        // is aliased (found above) or not orthogonal to some kept one.
        if kept.len() + 1 >= n || sum != 0 {
            continue;
        }
        // In a regular design two term columns are aliased or orthogonal, never in between,
        // so the search over the kept columns is needed only for other designs.
        for (_, kept_col) in kept.iter().filter(|_| !regular) {
            let mut differ = 0i64;
            for w in 0..words {
                differ += i64::from((col[w] ^ kept_col[w]).count_ones());
            }
            if n_i - 2 * differ != 0 {
                continue 'terms;
            }
        }
        by_pattern.insert(pattern, kept.len());
        kept.push((
            Contrast {
                term,
                chain: vec![(term, 1)],
            },
            col,
        ));
    }
    kept.into_iter().map(|(c, _)| c).collect()
}

/// Whether the rows (all ±1) form a regular two-level design: a coset of a linear subspace of
/// GF(2)^k, as every full factorial and regular fraction is (Box, Hunter & Hunter 2005, ch. 6).
/// Then every term column is balanced or constant over the rows, so two term columns are
/// either aliased or orthogonal.
fn is_regular(matrix: &[Vec<i8>], k: usize) -> bool {
    let n = matrix.len();
    if n == 0 || !n.is_power_of_two() || k > 63 {
        return false;
    }
    let mut rows = Vec::with_capacity(n);
    for row in matrix {
        let mut m = 0u64;
        for j in 0..k {
            match row.get(j) {
                Some(-1) => m |= 1 << j,
                Some(1) => {}
                _ => return false,
            }
        }
        rows.push(m);
    }
    let r0 = rows[0];
    let distinct: std::collections::HashSet<u64> = rows.iter().map(|r| r ^ r0).collect();
    if distinct.len() != n {
        return false;
    }
    // Rank of the differences by elimination over GF(2); distinct elements of a span of rank
    // m number at most 2^m, so n = 2^rank means the rows are the whole coset.
    let mut basis: Vec<u64> = Vec::new();
    for &d in &distinct {
        let mut v = d;
        for &b in &basis {
            v = v.min(v ^ b);
        }
        if v != 0 {
            basis.push(v);
            basis.sort_unstable_by(|a, b| b.cmp(a));
        }
    }
    1usize.checked_shl(basis.len() as u32) == Some(n)
}

/// The bits of word `w` that stand for one of the `n` rows.
fn valid_mask(n: usize, w: usize) -> u64 {
    let rows = n.saturating_sub(w * 64);
    if rows >= 64 {
        u64::MAX
    } else {
        (1u64 << rows) - 1
    }
}

/// Every mask of `k` bits with exactly `order` set, in increasing order (Gosper's hack,
/// HAKMEM item 175), without visiting the other 2^k masks.
fn masks_of_order(k: usize, order: usize) -> Vec<TermMask> {
    let mut out = Vec::new();
    if order == 0 || order > k || k > 63 {
        return out;
    }
    let limit: u64 = 1 << k;
    let mut m: u64 = (1 << order) - 1;
    while m < limit {
        out.push(m);
        let c = m & m.wrapping_neg();
        let r = m + c;
        m = (((r ^ m) >> 2) / c) | r;
    }
    out
}

fn binomial(n: usize, k: usize) -> usize {
    (0..k).fold(1usize, |acc, i| acc.saturating_mul(n - i) / (i + 1))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_regular_shortcut_is_taken_only_for_regular_designs() {
        // A 2^4 full factorial is regular; the 12-run Plackett–Burman design is not (its
        // interaction columns are partially correlated with main effects; Plackett & Burman,
        // Biometrika 33 (1946) 305–325).
        let full: Vec<Vec<i8>> = (0..16)
            .map(|i| {
                (0..4)
                    .map(|j| if i >> j & 1 == 1 { -1 } else { 1 })
                    .collect()
            })
            .collect();
        assert!(is_regular(&full, 4));
        assert_eq!(contrasts_from_matrix(&full, 4).len(), 15);
        let pb = plackett_burman::matrix(12).unwrap();
        assert!(!is_regular(&pb, 11));
        let contrasts = contrasts_from_matrix(&pb, 11);
        assert_eq!(contrasts.len(), 11, "main effects only");
        assert!(contrasts.iter().all(|c| c.term.count_ones() == 1));
        assert_eq!(masks_of_order(4, 2), vec![3, 5, 6, 9, 10, 12]);
    }

    #[test]
    fn terms_sort_by_order_then_factors() {
        let mut terms = vec![0b111, 0b110, 0b010, 0b011, 0b001, 0b101, 0b100];
        terms.sort_by(|a, b| term_cmp(*a, *b));
        assert_eq!(terms, vec![0b001, 0b010, 0b100, 0b011, 0b101, 0b110, 0b111]);
    }

    #[test]
    fn a_full_factorial_matrix_estimates_every_term_cleanly() {
        let matrix: Vec<Vec<i8>> = (0..8)
            .map(|i| {
                (0..3)
                    .map(|j| if i >> j & 1 == 1 { 1 } else { -1 })
                    .collect()
            })
            .collect();
        let contrasts = contrasts_from_matrix(&matrix, 3);
        assert_eq!(contrasts.len(), 7);
        assert!(contrasts.iter().all(Contrast::is_clean));
    }

    #[test]
    fn the_half_fraction_with_i_equal_abc_aliases_ab_with_c() {
        // 2^(3−1) with C = AB (Box, Hunter & Hunter 2005, ch. 6): the AB column is the C column.
        let matrix: Vec<Vec<i8>> = (0..4)
            .map(|i| {
                let a = if i & 1 == 1 { 1 } else { -1 };
                let b = if i & 2 == 2 { 1 } else { -1 };
                vec![a, b, a * b]
            })
            .collect();
        let contrasts = contrasts_from_matrix(&matrix, 3);
        assert_eq!(contrasts.len(), 3);
        let c = contrasts.iter().find(|c| c.term == 0b100).unwrap();
        assert_eq!(c.chain, vec![(0b100, 1), (0b011, 1)]);
    }
}

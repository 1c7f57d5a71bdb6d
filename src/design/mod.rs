//! Planning: from the study's design section to the coded run list, run order and contrasts.
//!
//! A `Design` knows every run (stable id in standard order, separate run order, coded levels)
//! and every contrast column the runs can estimate, each with its alias chain, so the analysis
//! never has to guess what a column means.

pub mod aliasing;
pub mod catalogue;
pub mod fraction;
pub mod order;
pub mod plackett_burman;
pub mod word;

use crate::study::{
    DesignKind, Diagnostic, Diagnostics, FieldPath, RunId, Study,
};

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

/// The planned design.
#[derive(Debug, Clone)]
pub struct Design {
    /// Kind as requested.
    pub kind: DesignKind,
    /// Factor ids of the columns, in order (study factors).
    pub column_ids: Vec<String>,
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
    match study.design.kind {
        DesignKind::FullFactorial => Ok(full_factorial(study)),
        DesignKind::Explicit => explicit(study),
    }
}

fn full_factorial(study: &Study) -> Design {
    let k = study.factors.len();
    let n = 1usize << k;
    let replicates = study.design.replicates.max(1);
    let mut two_level = Vec::with_capacity(n * replicates);
    for r in 0..replicates {
        for i in 0..n {
            let coded = (0..k).map(|j| if i >> j & 1 == 1 { 1 } else { -1 }).collect();
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
    assemble(study, two_level, nominal_ids, n, replicates, contrasts, true)
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
    let k = study.factors.len();
    let orders = order::run_order(
        two_level.len(),
        nominal_ids.len(),
        study.design.nominal_runs,
        study.design.seed,
    );
    let mut runs: Vec<PlannedRun> = two_level
        .into_iter()
        .map(|(id, coded, replicate)| PlannedRun {
            id,
            order: 0,
            coded,
            nominal: false,
            replicate,
        })
        .chain(nominal_ids.into_iter().map(|id| PlannedRun {
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
    let contrasts = contrasts_from_matrix(&matrix, k);
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
        runs,
        base_runs: n,
        replicates: 1,
        contrasts,
        complete_factorial: false,
        seed: study.design.seed,
    })
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
    let column = |term: TermMask| -> Vec<i8> {
        matrix
            .iter()
            .map(|row| {
                term_factors(term)
                    .iter()
                    .map(|&j| row.get(j).copied().unwrap_or(0))
                    .product()
            })
            .collect()
    };
    let mut terms: Vec<TermMask> = Vec::new();
    let mut max_order = 0;
    for order in 1..=k as u32 {
        let count = binomial(k, order as usize);
        if terms.len() + count > MAX_TERMS_SEARCHED {
            break;
        }
        max_order = order;
        terms.extend((1..(1u64 << k)).filter(|m| m.count_ones() == order));
    }
    let _ = max_order;
    terms.sort_by(|a, b| term_cmp(*a, *b));
    let mut kept: Vec<(Contrast, Vec<i8>)> = Vec::new();
    'terms: for term in terms {
        let col = column(term);
        let sum: i64 = col.iter().map(|v| i64::from(*v)).sum();
        if sum.unsigned_abs() as usize == n {
            continue; // aliased with the mean: part of the defining relation
        }
        let mut orthogonal = true;
        for (contrast, kept_col) in kept.iter_mut() {
            let dot: i64 = col
                .iter()
                .zip(kept_col.iter())
                .map(|(a, b)| i64::from(*a) * i64::from(*b))
                .sum();
            if dot.unsigned_abs() as usize == n {
                contrast.chain.push((term, if dot > 0 { 1 } else { -1 }));
                continue 'terms;
            }
            if dot != 0 {
                orthogonal = false;
            }
        }
        if orthogonal && sum == 0 {
            kept.push((
                Contrast {
                    term,
                    chain: vec![(term, 1)],
                },
                col,
            ));
        }
    }
    kept.into_iter().map(|(c, _)| c).collect()
}

fn binomial(n: usize, k: usize) -> usize {
    (0..k).fold(1usize, |acc, i| acc.saturating_mul(n - i) / (i + 1))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn terms_sort_by_order_then_factors() {
        let mut terms = vec![0b111, 0b110, 0b010, 0b011, 0b001, 0b101, 0b100];
        terms.sort_by(|a, b| term_cmp(*a, *b));
        assert_eq!(terms, vec![0b001, 0b010, 0b100, 0b011, 0b101, 0b110, 0b111]);
    }

    #[test]
    fn a_full_factorial_matrix_estimates_every_term_cleanly() {
        let matrix: Vec<Vec<i8>> = (0..8)
            .map(|i| (0..3).map(|j| if i >> j & 1 == 1 { 1 } else { -1 }).collect())
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

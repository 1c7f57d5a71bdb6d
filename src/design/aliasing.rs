//! Checks and alias structure for any two-level matrix, read from the columns themselves:
//! used for explicit (user-given) designs and for the non-regular Plackett–Burman arrays,
//! where alias chains from a defining relation do not exist.

use serde::Serialize;

use super::word::{MAX_FACTORS, Word};

/// A cell that is not a coded level −1 or +1.
#[derive(Clone, Copy, PartialEq, Debug, Serialize)]
pub struct BadLevel {
    /// Row index (0-based).
    pub row: usize,
    /// Column index (0-based).
    pub column: usize,
    /// The value found (may be NaN).
    pub value: f64,
}

/// Result of [`check_two_level`]: what keeps a matrix from being a balanced orthogonal
/// two-level design. Empty lists mean the property holds.
#[derive(Clone, PartialEq, Debug, Serialize)]
pub struct Report {
    /// Number of rows (runs).
    pub rows: usize,
    /// Number of columns (of the first row).
    pub columns: usize,
    /// Rows whose length differs from the first row.
    pub ragged_rows: Vec<usize>,
    /// Cells that are not −1 or +1.
    pub bad_levels: Vec<BadLevel>,
    /// Columns (with only ±1) whose count of +1 differs from the count of −1.
    pub unbalanced: Vec<usize>,
    /// Pairs of columns (with only ±1) whose dot product is not zero.
    pub non_orthogonal: Vec<(usize, usize)>,
}

impl Report {
    /// True when the matrix has runs and is rectangular, two-level, balanced and orthogonal.
    pub fn is_ok(&self) -> bool {
        self.rows > 0
            && self.columns > 0
            && self.ragged_rows.is_empty()
            && self.bad_levels.is_empty()
            && self.unbalanced.is_empty()
            && self.non_orthogonal.is_empty()
    }
}

/// Checks levels, balance and orthogonality of a coded two-level matrix.
///
/// A column is balanced when it holds as many +1 as −1; two columns are orthogonal when
/// Σ x_i·x_j = 0, so that XᵀX = N·I and every effect is estimated independently with the same
/// variance (Box, Hunter & Hunter 2005, ch. 5; Plackett & Burman 1946). Levels are compared
/// with a tolerance of 1e−9. Columns holding any other value are reported under `bad_levels`
/// and left out of the balance and orthogonality checks.
pub fn check_two_level(matrix: &[Vec<f64>]) -> Report {
    let rows = matrix.len();
    let columns = matrix.first().map_or(0, Vec::len);
    let ragged_rows: Vec<usize> = matrix
        .iter()
        .enumerate()
        .filter(|(_, r)| r.len() != columns)
        .map(|(i, _)| i)
        .collect();
    let mut bad_levels = Vec::new();
    let mut coded: Vec<Option<Vec<i8>>> = Vec::with_capacity(columns);
    for j in 0..columns {
        let mut col = Vec::with_capacity(rows);
        let mut ok = true;
        for (i, row) in matrix.iter().enumerate() {
            match row.get(j) {
                Some(&v) if (v - 1.0).abs() <= 1e-9 => col.push(1i8),
                Some(&v) if (v + 1.0).abs() <= 1e-9 => col.push(-1i8),
                Some(&v) => {
                    bad_levels.push(BadLevel {
                        row: i,
                        column: j,
                        value: v,
                    });
                    ok = false;
                }
                None => ok = false,
            }
        }
        coded.push(ok.then_some(col));
    }
    let unbalanced = coded
        .iter()
        .enumerate()
        .filter_map(|(j, c)| c.as_ref().map(|c| (j, c)))
        .filter(|(_, c)| c.iter().map(|&v| i64::from(v)).sum::<i64>() != 0)
        .map(|(j, _)| j)
        .collect();
    let mut non_orthogonal = Vec::new();
    for a in 0..columns {
        for b in (a + 1)..columns {
            if let (Some(Some(x)), Some(Some(y))) = (coded.get(a), coded.get(b)) {
                let dot: i64 = x.iter().zip(y).map(|(&p, &q)| i64::from(p * q)).sum();
                if dot != 0 {
                    non_orthogonal.push((a, b));
                }
            }
        }
    }
    Report {
        rows,
        columns,
        ragged_rows,
        bad_levels,
        unbalanced,
        non_orthogonal,
    }
}

/// A two-factor interaction column partly aliased with a main-effect column.
#[derive(Clone, Copy, PartialEq, Debug, Serialize)]
pub struct PartialAlias {
    /// The two-factor interaction (two column indices).
    pub interaction: Word,
    /// The main-effect column.
    pub with: Word,
    /// Pearson correlation between the two columns.
    pub correlation: f64,
}

fn column_of(matrix: &[Vec<i8>], term: Word) -> Option<Vec<f64>> {
    let factors = term.factors();
    matrix
        .iter()
        .map(|row| {
            factors
                .iter()
                .try_fold(1.0f64, |acc, &i| row.get(i).map(|&v| acc * f64::from(v)))
        })
        .collect()
}

fn correlation(x: &[f64], y: &[f64]) -> Option<f64> {
    let n = x.len() as f64;
    if x.is_empty() || x.len() != y.len() {
        return None;
    }
    let mx = x.iter().sum::<f64>() / n;
    let my = y.iter().sum::<f64>() / n;
    let sxy: f64 = x.iter().zip(y).map(|(a, b)| (a - mx) * (b - my)).sum();
    let sxx: f64 = x.iter().map(|a| (a - mx).powi(2)).sum();
    let syy: f64 = y.iter().map(|b| (b - my).powi(2)).sum();
    let denom = (sxx * syy).sqrt();
    (denom > 0.0).then(|| sxy / denom)
}

/// Correlation of every two-factor interaction of the listed columns with every listed
/// main-effect column, reporting |r| > 1e−12.
///
/// r = Σ(u − ū)(v − v̄) / √(Σ(u − ū)² Σ(v − v̄)²) for the product column u = x_a·x_b and a
/// main-effect column v; for balanced ±1 columns this is u·v / N. In the 12-run
/// Plackett–Burman design each 2FI has r = ±1/3 with every main effect not in it (Lin &
/// Draper, Technometrics 34 (1992) 423–428; Box, Hunter & Hunter 2005, ch. 7; both from
/// memory, the value itself is checked by a test on the array). To see how
/// interactions load on dummy columns, list the dummy columns too. Indices outside the matrix
/// are skipped; a constant interaction column (aliased with the mean) is skipped.
pub fn interaction_correlations(matrix: &[Vec<i8>], factors: &[usize]) -> Vec<PartialAlias> {
    let width = matrix.first().map_or(0, Vec::len);
    let usable: Vec<usize> = factors
        .iter()
        .copied()
        .filter(|&i| i < width && i < MAX_FACTORS)
        .collect();
    let mut out = Vec::new();
    for (ia, &a) in usable.iter().enumerate() {
        for &b in usable.iter().skip(ia + 1) {
            if a == b {
                continue;
            }
            let interaction = Word::single(a).times(Word::single(b));
            let Some(u) = column_of(matrix, interaction) else {
                continue;
            };
            for &m in &usable {
                let with = Word::single(m);
                let Some(v) = column_of(matrix, with) else {
                    continue;
                };
                if let Some(r) = correlation(&u, &v)
                    && r.abs() > 1e-12
                {
                    out.push(PartialAlias {
                        interaction,
                        with,
                        correlation: r,
                    });
                }
            }
        }
    }
    out
}

/// Groups every term up to `max_order` (over all columns of the matrix) whose product columns
/// are identical up to sign; each group sorted in display order, groups ordered by their first
/// member. Terms whose product column is constant (aliased with the mean) are left out: they
/// are not contrasts. Brute force over Σ C(k, j), j ≤ max_order, terms: the independent check
/// of the algebraic alias chains in the tests.
#[cfg(test)]
pub(crate) fn chains_by_brute_force(matrix: &[Vec<i8>], max_order: u32) -> Vec<Vec<Word>> {
    use super::word::{display_cmp, terms_of_order};
    use std::collections::HashMap;
    let k = matrix.first().map_or(0, Vec::len).min(MAX_FACTORS);
    let max_order = max_order.min(k as u32);
    let mut groups: HashMap<Vec<i8>, Vec<Word>> = HashMap::new();
    for term in (1..=max_order).flat_map(|order| terms_of_order(k, order)) {
        let factors = term.factors();
        let Some(mut col) = matrix
            .iter()
            .map(|row| {
                factors
                    .iter()
                    .try_fold(1i8, |acc, &i| row.get(i).map(|&v| acc * v))
            })
            .collect::<Option<Vec<i8>>>()
        else {
            continue;
        };
        if col.iter().all(|&v| v == col[0]) {
            continue;
        }
        if col.first().is_some_and(|&v| v < 0) {
            col.iter_mut().for_each(|v| *v = -*v);
        }
        groups.entry(col).or_default().push(term);
    }
    let mut out: Vec<Vec<Word>> = groups
        .into_values()
        .map(|mut g| {
            g.sort_by(display_cmp);
            g
        })
        .collect();
    out.sort_by(|a, b| match (a.first(), b.first()) {
        (Some(x), Some(y)) => display_cmp(x, y),
        _ => a.len().cmp(&b.len()),
    });
    out
}

#[cfg(test)]
mod tests {
    use super::super::plackett_burman;
    use super::super::word::letter_index;
    use super::*;

    fn w(s: &str) -> Word {
        Word::from_factors(
            &s.chars()
                .map(|c| letter_index(c).unwrap())
                .collect::<Vec<_>>(),
        )
    }

    #[test]
    fn full_factorial_two_factors_is_ok() {
        let m = vec![
            vec![-1.0, -1.0],
            vec![1.0, -1.0],
            vec![-1.0, 1.0],
            vec![1.0, 1.0],
        ];
        assert!(check_two_level(&m).is_ok());
    }

    #[test]
    fn reports_unbalanced_and_non_orthogonal_columns() {
        let m = vec![
            vec![1.0, 1.0, -1.0],
            vec![1.0, 1.0, 1.0],
            vec![-1.0, 1.0, -1.0],
            vec![-1.0, -1.0, 1.0],
        ];
        let r = check_two_level(&m);
        assert_eq!(r.unbalanced, vec![1]);
        assert_eq!(r.non_orthogonal, vec![(0, 1), (1, 2)]); // dots 2 and −2 by hand
        assert!(!r.is_ok());
    }

    #[test]
    fn reports_bad_levels_including_nan_and_ragged_rows() {
        let m = vec![vec![1.0, 0.0], vec![-1.0, f64::NAN], vec![1.0]];
        let r = check_two_level(&m);
        assert_eq!(r.ragged_rows, vec![2]);
        assert_eq!(r.bad_levels.len(), 2);
        assert_eq!(r.bad_levels[0].column, 1);
        assert!(!r.is_ok());
    }

    #[test]
    fn empty_matrix_is_not_ok() {
        assert!(!check_two_level(&[]).is_ok());
    }

    #[test]
    fn pb12_two_factor_interactions_correlate_one_third_with_other_main_effects() {
        // Lin & Draper (1992) Technometrics 34, 423-428 (from memory; also common practice,
        // Box, Hunter & Hunter 2005 ch. 7, section from memory): in the 12-run Plackett-Burman design every 2FI column has correlation +-1/3 with each
        // main effect not in the interaction, and 0 with its own two factors.
        let m = plackett_burman::matrix(12).unwrap();
        let factors: Vec<usize> = (0..11).collect();
        let partial = interaction_correlations(&m, &factors);
        assert_eq!(partial.len(), 55 * 9);
        for p in &partial {
            assert!((p.correlation.abs() - 1.0 / 3.0).abs() < 1e-12, "{p:?}");
            assert_eq!(p.interaction.times(p.with).order(), 3);
        }
    }

    #[test]
    fn regular_fraction_interaction_is_fully_correlated_with_its_alias() {
        // 2^(3-1) with C = AB: column AB equals C (r = 1), Box, Hunter & Hunter ch. 6.
        let m = vec![
            vec![-1, -1, 1],
            vec![1, -1, -1],
            vec![-1, 1, -1],
            vec![1, 1, 1],
        ];
        let p = interaction_correlations(&m, &[0, 1, 2]);
        let ab = p.iter().find(|p| p.interaction == w("AB")).unwrap();
        assert_eq!(ab.with, w("C"));
        assert!((ab.correlation - 1.0).abs() < 1e-12);
    }

    #[test]
    fn brute_force_groups_aliases_of_half_fraction() {
        // 2^(3-1), I = ABC: A = BC, B = AC, C = AB (Box, Hunter & Hunter ch. 6).
        let m = vec![
            vec![-1, -1, 1],
            vec![1, -1, -1],
            vec![-1, 1, -1],
            vec![1, 1, 1],
        ];
        let chains = chains_by_brute_force(&m, 3);
        assert_eq!(
            chains,
            vec![
                vec![w("A"), w("BC")],
                vec![w("B"), w("AC")],
                vec![w("C"), w("AB")]
            ]
        );
    }
}

//! The contrasts a two-level matrix estimates, read from its columns: the alias chains of a
//! regular design, and the check that a matrix is regular.

use super::*;

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
    let mut terms: Vec<Word> = Vec::new();
    for order in 1..=k {
        let count = binomial(k, order);
        if terms.len() + count > MAX_TERMS_SEARCHED {
            break;
        }
        terms.extend(word::terms_of_order(k, order as u32));
    }
    terms.sort_by(word::display_cmp);
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
        for j in term.factors() {
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
            kept[at].0.chain.push(SignedWord { word: term, sign });
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
        kept.push((Contrast::clean(term), col));
    }
    kept.into_iter().map(|(c, _)| c).collect()
}

/// Whether the rows (all ±1) form a regular two-level design: a coset of a linear subspace of
/// GF(2)^k, as every full factorial and regular fraction is (Box, Hunter & Hunter 2005, ch. 6).
/// Then every term column is balanced or constant over the rows, so two term columns are
/// either aliased or orthogonal.
pub(super) fn is_regular(matrix: &[Vec<i8>], k: usize) -> bool {
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
pub(super) fn valid_mask(n: usize, w: usize) -> u64 {
    let rows = n.saturating_sub(w * 64);
    if rows >= 64 {
        u64::MAX
    } else {
        (1u64 << rows) - 1
    }
}

pub(super) fn binomial(n: usize, k: usize) -> usize {
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
        assert!(contrasts.iter().all(|c| c.term.0.count_ones() == 1));
        assert_eq!(
            word::terms_of_order(4, 2),
            [3, 5, 6, 9, 10, 12].map(Word).to_vec()
        );
    }

    #[test]
    fn terms_sort_by_order_then_factors() {
        let mut terms = [0b111, 0b110, 0b010, 0b011, 0b001, 0b101, 0b100].map(Word);
        terms.sort_by(word::display_cmp);
        assert_eq!(
            terms,
            [0b001, 0b010, 0b100, 0b011, 0b101, 0b110, 0b111].map(Word)
        );
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
        let c = contrasts.iter().find(|c| c.term == Word(0b100)).unwrap();
        let member = |bits, sign| SignedWord {
            word: Word(bits),
            sign,
        };
        assert_eq!(c.chain, vec![member(0b100, 1), member(0b011, 1)]);
    }
}

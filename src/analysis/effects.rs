//! Effects of two-level contrasts: E = ȳ(+) − ȳ(−) (Box, Hunter & Hunter, Statistics for
//! Experimenters, 2nd ed. 2005, ch. 5), never the regression coefficient b = E/2.
//!
//! Two ways to the same numbers: the direct mean difference for any set of contrast columns,
//! and the fast Walsh–Hadamard transform for a complete 2^k in standard order, which gives all
//! 2^k − 1 effects in O(N log N) (Yates 1937's algorithm is the same butterfly).

use crate::design::Word;

/// The ±1 value of a term's column in one run (0 when any factor sits at its nominal level).
pub fn column_value(coded: &[i8], term: Word) -> i8 {
    // Walks the set bits directly: this runs once per run and term, so no allocation here.
    let mut value = 1i8;
    let mut rest = term.0;
    while rest != 0 {
        value *= coded
            .get(rest.trailing_zeros() as usize)
            .copied()
            .unwrap_or(0);
        rest &= rest - 1;
    }
    value
}

/// E = ȳ(+) − ȳ(−) of one contrast over two-level runs (`coded` levels, `y` run means).
/// `None` when one side is empty.
pub fn effect(rows: &[&[i8]], y: &[f64], term: Word) -> Option<f64> {
    let (mut plus, mut n_plus, mut minus, mut n_minus) = (0.0, 0usize, 0.0, 0usize);
    for (coded, value) in rows.iter().zip(y) {
        match column_value(coded, term) {
            1 => {
                plus += value;
                n_plus += 1;
            }
            -1 => {
                minus += value;
                n_minus += 1;
            }
            _ => {}
        }
    }
    (n_plus > 0 && n_minus > 0).then(|| plus / n_plus as f64 - minus / n_minus as f64)
}

/// All 2^k − 1 effects of a complete 2^k factorial from its responses in standard order (the
/// first factor alternating fastest), indexed by term mask (index 0, the mean, is set to the
/// grand mean). Uses the in-place Walsh–Hadamard butterfly; the sign of a term of odd order is
/// flipped because the transform's kernel (−1)^(i·m) puts −1 at the +1 level.
pub fn all_effects_fwht(y: &[f64]) -> Option<Vec<f64>> {
    let n = y.len();
    if n < 2 || !n.is_power_of_two() {
        return None;
    }
    let mut h = y.to_vec();
    let mut len = 1;
    while len < n {
        for start in (0..n).step_by(2 * len) {
            for i in start..start + len {
                let (a, b) = (h[i], h[i + len]);
                h[i] = a + b;
                h[i + len] = a - b;
            }
        }
        len *= 2;
    }
    let scale = 2.0 / n as f64;
    Some(
        h.iter()
            .enumerate()
            .map(|(m, v)| {
                if m == 0 {
                    v / n as f64
                } else if (m as u64).count_ones() % 2 == 1 {
                    -v * scale
                } else {
                    v * scale
                }
            })
            .collect(),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Box, Hunter & Hunter (2005), ch. 5, pilot-plant experiment: factors T, C, K, yields in
    /// standard order. Effects T = 23.0, C = −5.0, K = 1.5, TC = 1.5, TK = 10.0, CK = 0.0,
    /// TCK = 0.5 (values from memory of the book's table; they also follow by hand from the
    /// yields, e.g. T = (72+68+83+80)/4 − (60+54+52+45)/4 = 75.75 − 52.75 = 23.0).
    const PILOT_PLANT: [f64; 8] = [60.0, 72.0, 54.0, 68.0, 52.0, 83.0, 45.0, 80.0];

    #[test]
    fn fwht_gives_the_pilot_plant_effects_of_box_hunter_hunter() {
        let e = all_effects_fwht(&PILOT_PLANT).unwrap();
        let expect = [
            (0b001, 23.0),
            (0b010, -5.0),
            (0b100, 1.5),
            (0b011, 1.5),
            (0b101, 10.0),
            (0b110, 0.0),
            (0b111, 0.5),
        ];
        for (m, v) in expect {
            assert!((e[m] - v).abs() < 1e-12, "term {m:b}: {} vs {v}", e[m]);
        }
        assert!((e[0] - 64.25).abs() < 1e-12);
    }

    #[test]
    fn direct_mean_difference_agrees_with_fwht_on_the_pilot_plant() {
        let coded: Vec<Vec<i8>> = (0..8)
            .map(|i| {
                (0..3)
                    .map(|j| if i >> j & 1 == 1 { 1 } else { -1 })
                    .collect()
            })
            .collect();
        let rows: Vec<&[i8]> = coded.iter().map(Vec::as_slice).collect();
        let fast = all_effects_fwht(&PILOT_PLANT).unwrap();
        for m in 1..8u64 {
            let direct = effect(&rows, &PILOT_PLANT, Word(m)).unwrap();
            assert!((direct - fast[m as usize]).abs() < 1e-12);
        }
    }

    #[test]
    fn effect_of_a_column_with_one_empty_side_is_none() {
        let coded = [vec![1i8], vec![1]];
        let rows: Vec<&[i8]> = coded.iter().map(Vec::as_slice).collect();
        assert_eq!(effect(&rows, &[1.0, 2.0], Word(1)), None);
    }
}

//! Plackett–Burman two-level screening arrays: N runs (a multiple of 4) for up to N − 1
//! factors, built from the generating rows published by Plackett & Burman (1946).
//!
//! Source of the rows: R. L. Plackett & J. P. Burman, "The design of optimum multifactorial
//! experiments", Biometrika 33 (1946) 305–325. The original scan was not available here; the
//! rows below were transcribed from two independent secondary copies of that table that agree
//! sign for sign, and every resulting matrix is verified (XᵀX = N·I, balanced columns) by the
//! tests rather than trusted.

use thiserror::Error;

/// Run counts available. 8–36 and 44, 48 from Plackett & Burman's cyclic rows (28 from their
/// 9×27 block table), 40 by doubling the 20-run array, 64 by doubling the 32-run array.
pub const SIZES: &[usize] = &[8, 12, 16, 20, 24, 28, 32, 36, 40, 44, 48, 64];

/// Why no array was built.
#[derive(Clone, PartialEq, Eq, Debug, Error)]
pub enum PbError {
    /// The run count is not one of [`SIZES`].
    #[error("no Plackett-Burman design with {runs} runs; expected one of {sizes}")]
    UnsupportedSize {
        /// Requested runs.
        runs: usize,
        /// The available sizes, comma separated.
        sizes: String,
    },
}

/// Plackett & Burman (1946) first rows ("+" = high level) for the cyclic arrays: rows
/// 2..N−1 are cyclic shifts of the first, and a last row of minus signs completes the array.
pub const GENERATING_ROWS: &[(usize, &str)] = &[
    (8, "+++-+--"),
    (12, "++-+++---+-"),
    (16, "++++-+-++--+---"),
    (20, "++--++++-+-+----++-"),
    (24, "+++++-+-++--++--+-+----"),
    (32, "----+-+-+++-++---+++++--++-+--+"),
    (36, "-+-+++---+++++-+++--+----+-+-++--+-"),
    (44, "++--+-+--+++-+++++---+-+++-----+---++-+-++-"),
    (48, "+++++-++++--+-+-+++--+--++-++---+-+-++----+----"),
];

/// Plackett & Burman (1946) 28-run array: nine rows of three 9-column blocks. The full array
/// is these nine rows, then the same rows with the blocks moved cyclically one place to the
/// right, then two places, then a row of minus signs.
pub const ROWS_28: [&str; 9] = [
    "+-++++----+---+--+++-+-++-+",
    "++-+++-----++--+---++++-++-",
    "-+++++---+---+--+-+-+-++-++",
    "---+-++++--+-+---++-+++-+-+",
    "---++-++++----++--++--++++-",
    "----+++++-+-+---+--+++-+-++",
    "+++---+-+--+--+-+-+-++-+++-",
    "+++---++-+--+----+++-++--++",
    "+++----++-+--+-+---++-+++-+",
];

fn signs(row: &str) -> Vec<i8> {
    row.chars()
        .filter_map(|c| match c {
            '+' => Some(1),
            '-' => Some(-1),
            _ => None,
        })
        .collect()
}

/// Cyclic array: row i is the generating row shifted i places to the right
/// (row_i[j] = g[(j − i) mod (N − 1)]), then a row of −1.
fn cyclic(row: &str) -> Vec<Vec<i8>> {
    let g = signs(row);
    let m = g.len();
    let mut out: Vec<Vec<i8>> = (0..m)
        .map(|i| (0..m).map(|j| g[(j + m - i) % m]).collect())
        .collect();
    out.push(vec![-1; m]);
    out
}

fn block_array_28() -> Vec<Vec<i8>> {
    let rows: Vec<Vec<i8>> = ROWS_28.iter().map(|r| signs(r)).collect();
    let mut out = Vec::with_capacity(28);
    for shift in 0..3 {
        for row in &rows {
            let mut new = Vec::with_capacity(27);
            for block in 0..3 {
                let from = (block + 3 - shift) % 3;
                new.extend_from_slice(&row[from * 9..from * 9 + 9]);
            }
            out.push(new);
        }
    }
    out.push(vec![-1; 27]);
    out
}

/// Doubling (Sylvester's construction applied to a Hadamard matrix): with H = [1 | X] the
/// N × N Hadamard matrix of an N-run array X, H₂ = [[H, H], [H, −H]] is a 2N Hadamard matrix;
/// its first column (all +1) is dropped, leaving 2N − 1 balanced orthogonal columns
/// (Plackett & Burman 1946 obtain N = 40 from N = 20 this way).
fn doubled(x: &[Vec<i8>]) -> Vec<Vec<i8>> {
    let h: Vec<Vec<i8>> = x
        .iter()
        .map(|r| std::iter::once(1).chain(r.iter().copied()).collect())
        .collect();
    let mut out = Vec::with_capacity(2 * h.len());
    for r in &h {
        out.push(r.iter().chain(r.iter()).copied().skip(1).collect());
    }
    for r in &h {
        out.push(
            r.iter()
                .copied()
                .chain(r.iter().map(|v| -v))
                .skip(1)
                .collect(),
        );
    }
    out
}

/// The N-run Plackett–Burman array: N rows × (N − 1) columns of ±1, columns balanced and
/// mutually orthogonal (XᵀX = N·I).
///
/// Construction by N: cyclic shifts of the published first row plus a row of minus signs
/// (8, 12, 16, 20, 24, 32, 36, 44, 48; Plackett & Burman 1946); the 28-run block table; 40 =
/// doubled 20 and 64 = doubled 32 (see `doubled`). The 16- and 32-run arrays are PB's cyclic
/// ones, equivalent to the regular 2^(15−11) and 2^(31−26) fractions up to row and column
/// permutation and sign.
pub fn matrix(n: usize) -> Result<Vec<Vec<i8>>, PbError> {
    if let Some((_, row)) = GENERATING_ROWS.iter().find(|(size, _)| *size == n) {
        return Ok(cyclic(row));
    }
    match n {
        28 => Ok(block_array_28()),
        40 => matrix(20).map(|x| doubled(&x)),
        64 => matrix(32).map(|x| doubled(&x)),
        _ => Err(PbError::UnsupportedSize {
            runs: n,
            sizes: SIZES
                .iter()
                .map(|s| s.to_string())
                .collect::<Vec<_>>()
                .join(", "),
        }),
    }
}

/// The smallest N in [`SIZES`] with N − 1 ≥ `columns_needed`; `None` beyond 63 columns.
pub fn smallest_size(columns_needed: usize) -> Option<usize> {
    SIZES.iter().copied().find(|&n| n > columns_needed)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_size_is_balanced_and_orthogonal() {
        // Plackett & Burman (1946): X^T X = N I and N/2 plus signs in every column.
        for &n in SIZES {
            let x = matrix(n).unwrap();
            assert_eq!(x.len(), n, "rows of {n}");
            assert!(x.iter().all(|r| r.len() == n - 1), "columns of {n}");
            for a in 0..n - 1 {
                let plus = x.iter().filter(|r| r[a] == 1).count();
                assert_eq!(plus, n / 2, "balance of column {a} in N = {n}");
                for b in 0..n - 1 {
                    let dot: i32 = x.iter().map(|r| i32::from(r[a] * r[b])).sum();
                    let expected = if a == b { n as i32 } else { 0 };
                    assert_eq!(dot, expected, "columns {a},{b} in N = {n}");
                }
            }
        }
    }

    #[test]
    fn first_rows_are_the_published_generating_rows() {
        // Plackett & Burman (1946), Biometrika 33, 305-325, table of first rows (via two
        // agreeing secondary copies). Each row below is written out again independently of
        // GENERATING_ROWS, so a typo in either copy fails the test.
        let printed = [
            (8, "+ + + - + - -"),
            (12, "+ + - + + + - - - + -"),
            (16, "+ + + + - + - + + - - + - - -"),
            (20, "+ + - - + + + + - + - + - - - - + + -"),
            (24, "+ + + + + - + - + + - - + + - - + - + - - - -"),
            (
                32,
                "- - - - + - + - + + + - + + - - - + + + + + - - + + - + - - +",
            ),
            (
                36,
                "- + - + + + - - - + + + + + - + + + - - + - - - - + - + - + + - - + -",
            ),
            (
                44,
                "+ + - - + - + - - + + + - + + + + + - - - + - + + + - - - - - + - - - + + - + - + + -",
            ),
            (
                48,
                "+ + + + + - + + + + - - + - + - + + + - - + - - + + - + + - - - + - + - + + - - - - + - - - -",
            ),
        ];
        for (n, row) in printed {
            let x = matrix(n).unwrap();
            assert_eq!(x[0], signs(row), "first row of N = {n}");
            assert!(x[n - 1].iter().all(|&v| v == -1), "last row of N = {n}");
        }
    }

    #[test]
    fn twelve_run_second_row_is_a_cyclic_shift() {
        // R. Plasun, doctoral dissertation, TU Wien, Table 3.6 (year not confirmed) prints the
        // 12-run design with row 2 = row 1 shifted right by one: - + + - + + + - - - +.
        let x = matrix(12).unwrap();
        assert_eq!(x[1], signs("- + + - + + + - - - +"));
    }

    #[test]
    fn twenty_eight_run_first_rows_are_the_published_block_rows() {
        // Plackett & Burman (1946) 28-run table, first row (via secondary copies).
        let x = matrix(28).unwrap();
        assert_eq!(
            x[0],
            signs("+ - + + + + - - - - + - - - + - - + + + - + - + + - +")
        );
        assert_eq!(
            x[8],
            signs("+ + + - - - - + + - + - - + - + - - - + + - + + + - +")
        );
    }

    #[test]
    fn unsupported_size_lists_valid_sizes() {
        let e = matrix(10).unwrap_err();
        assert!(e.to_string().contains("expected one of 8, 12, 16"));
    }

    #[test]
    fn smallest_size_fits_the_columns() {
        assert_eq!(smallest_size(7), Some(8));
        assert_eq!(smallest_size(8), Some(12));
        assert_eq!(smallest_size(11), Some(12));
        assert_eq!(smallest_size(0), Some(8));
        assert_eq!(smallest_size(63), Some(64));
        assert_eq!(smallest_size(64), None);
    }
}

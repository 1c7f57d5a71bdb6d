//! The one fitted model of a response: run means regressed on the estimable contrast columns.
//!
//! Every number the report shows for a response (effects, their standard errors, the ANOVA,
//! the curvature, the worst case, the ranges) is read from this fit, so no table can
//! contradict another. E_j = 2·b_j and SE(E_j) = 2·s·√[(XᵀX)⁻¹]_jj (Box, Hunter & Hunter,
//! Statistics for Experimenters, 2nd ed. 2005, ch. 5–6; Montgomery, Design and Analysis of
//! Experiments, ch. 6 and 10); for an orthogonal, balanced design [(XᵀX)⁻¹]_jj = 1/N and the
//! familiar SE(E) = 2s/√N follows.

use nalgebra::{DMatrix, DVector};

use crate::design::Word;

/// Relative size below which a column is taken as a linear combination of the columns kept
/// before it (Gram–Schmidt residual norm over the column's own norm).
const DEPENDENCE_TOLERANCE: f64 = 1e-9;

/// A least-squares fit y = b₀ + Σ b_j x_j over the kept terms.
#[derive(Debug, Clone)]
pub struct Fit {
    /// The terms with a coefficient, in the order they were offered.
    pub terms: Vec<Word>,
    /// Terms offered but left out because the runs used cannot separate them from the terms
    /// kept before them.
    pub dropped: Vec<Word>,
    /// b₀ (the intercept: the predicted response at the centre of the coded cube).
    pub intercept: f64,
    /// b_j per kept term, in `terms` order.
    pub coefficients: Vec<f64>,
    /// [(XᵀX)⁻¹]_jj per kept term, in `terms` order.
    pub c_diag: Vec<f64>,
    /// Number of observations (run means).
    pub n: usize,
    /// Residual sum of squares Σ(y − ŷ)².
    pub rss: f64,
    /// True when XᵀX is diagonal (orthogonal, balanced columns): then c_jj = 1/N.
    pub orthogonal: bool,
    /// (XᵀX)⁻¹ with the intercept first, for predictions; `None` for an orthogonal fit
    /// (diagonal 1/N).
    inverse: Option<DMatrix<f64>>,
}

impl Fit {
    /// The fit of an orthogonal, balanced design from its effects: b₀ = ȳ, b_j = E_j/2,
    /// c_jj = 1/N, RSS = Σ(y − ȳ)² − N·Σb_j² (the columns are orthogonal, so each removes
    /// N·b_j² from the total).
    pub fn orthogonal(y: &[f64], terms: Vec<Word>, effects: &[f64]) -> Fit {
        let n = y.len();
        let nf = n as f64;
        let mean = y.iter().sum::<f64>() / nf;
        let total: f64 = y.iter().map(|v| (v - mean) * (v - mean)).sum();
        let coefficients: Vec<f64> = effects.iter().map(|e| e / 2.0).collect();
        let explained: f64 = coefficients.iter().map(|b| nf * b * b).sum();
        // A saturated fit leaves only rounding noise: clamp it, relative to the total.
        let rss = (total - explained).max(0.0);
        let rss = if rss <= 1e-12 * total.max(f64::MIN_POSITIVE) {
            0.0
        } else {
            rss
        };
        Fit {
            c_diag: vec![1.0 / nf; terms.len()],
            terms,
            dropped: Vec::new(),
            intercept: mean,
            coefficients,
            n,
            rss,
            orthogonal: true,
            inverse: None,
        }
    }

    /// Least squares over `columns` (term, its value in each observation), offered in
    /// order: a column is kept when it is not a linear combination of the intercept and the
    /// columns kept before it (modified Gram–Schmidt), so main effects, offered first, are
    /// kept before the interactions they could be confused with. `None` when there are no
    /// observations.
    pub fn least_squares(columns: &[(Word, Vec<f64>)], y: &[f64]) -> Option<Fit> {
        let n = y.len();
        if n == 0 {
            return None;
        }
        let mut basis: Vec<Vec<f64>> = vec![vec![1.0 / (n as f64).sqrt(); n]];
        let mut kept: Vec<usize> = Vec::new();
        let mut dropped = Vec::new();
        for (i, (term, values)) in columns.iter().enumerate() {
            let norm0 = values.iter().map(|v| v * v).sum::<f64>().sqrt();
            let mut r = values.clone();
            for q in &basis {
                let dot: f64 = r.iter().zip(q).map(|(a, b)| a * b).sum();
                for (ri, qi) in r.iter_mut().zip(q) {
                    *ri -= dot * qi;
                }
            }
            let norm = r.iter().map(|v| v * v).sum::<f64>().sqrt();
            if basis.len() < n && norm0 > 0.0 && norm > DEPENDENCE_TOLERANCE * norm0 {
                for v in &mut r {
                    *v /= norm;
                }
                basis.push(r);
                kept.push(i);
            } else {
                dropped.push(*term);
            }
        }
        let p = kept.len() + 1;
        let x = DMatrix::from_fn(n, p, |row, j| {
            if j == 0 {
                1.0
            } else {
                columns
                    .get(kept[j - 1])
                    .and_then(|(_, v)| v.get(row))
                    .copied()
                    .unwrap_or(0.0)
            }
        });
        let yv = DVector::from_column_slice(y);
        let xtx = x.transpose() * &x;
        let inverse = xtx.clone().cholesky()?.inverse();
        let b = &inverse * (x.transpose() * &yv);
        let fitted = &x * &b;
        let rss: f64 = yv
            .iter()
            .zip(fitted.iter())
            .map(|(a, f)| (a - f).powi(2))
            .sum();
        let scale = xtx.diagonal().max().max(1.0);
        let orthogonal =
            (0..p).all(|i| (0..p).all(|j| i == j || xtx[(i, j)].abs() <= 1e-9 * scale));
        Some(Fit {
            terms: kept.iter().map(|&i| columns[i].0).collect(),
            dropped,
            intercept: b[0],
            coefficients: (1..p).map(|j| b[j]).collect(),
            c_diag: (1..p).map(|j| inverse[(j, j)]).collect(),
            n,
            rss: if rss < 1e-24 { 0.0 } else { rss },
            orthogonal,
            inverse: Some(inverse),
        })
    }

    /// Residual degrees of freedom n − p.
    pub fn df_residual(&self) -> usize {
        self.n.saturating_sub(self.terms.len() + 1)
    }

    /// The effect E_j = 2·b_j of a kept term.
    pub fn effect(&self, term: Word) -> Option<f64> {
        let j = self.terms.iter().position(|t| *t == term)?;
        self.coefficients.get(j).map(|b| 2.0 * b)
    }

    /// [(XᵀX)⁻¹]_jj of a kept term.
    pub fn c(&self, term: Word) -> Option<f64> {
        let j = self.terms.iter().position(|t| *t == term)?;
        self.c_diag.get(j).copied()
    }

    /// The prediction x₀ᵀb at a point given as the value of every kept term's column
    /// (`x0[j]` for `terms[j]`), and x₀ᵀ(XᵀX)⁻¹x₀ (its variance over σ²), the intercept
    /// included.
    pub fn predict(&self, x0: &[f64]) -> (f64, f64) {
        let value = self.intercept
            + self
                .coefficients
                .iter()
                .zip(x0)
                .map(|(b, x)| b * x)
                .sum::<f64>();
        let variance = match &self.inverse {
            None => {
                let c0 = 1.0 / self.n as f64;
                c0 + x0
                    .iter()
                    .zip(&self.c_diag)
                    .map(|(x, c)| x * x * c)
                    .sum::<f64>()
            }
            Some(inv) => {
                let full: Vec<f64> = std::iter::once(1.0).chain(x0.iter().copied()).collect();
                let mut v = 0.0;
                for (i, a) in full.iter().enumerate() {
                    for (j, b) in full.iter().enumerate() {
                        v += a * b * inv[(i, j)];
                    }
                }
                v
            }
        };
        (value, variance)
    }

    /// Type III sum of squares of one kept term, b_j²/[(XᵀX)⁻¹]_jj: the rise of the residual
    /// sum of squares when the term is dropped (Searle, Linear Models, 1971, §5.5 from memory, the
    /// one-degree-of-freedom case; equal to N·E²/4 in an orthogonal design).
    pub fn term_ss(&self, term: Word) -> Option<f64> {
        let j = self.terms.iter().position(|t| *t == term)?;
        let b = self.coefficients.get(j)?;
        let c = self.c_diag.get(j)?;
        (*c > 0.0).then(|| b * b / c)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn column(rows: &[[f64; 2]], j: usize) -> Vec<f64> {
        rows.iter().map(|r| r[j]).collect()
    }

    #[test]
    fn orthogonal_and_least_squares_fits_agree_on_a_complete_2_2() {
        // 2² in standard order, y = 10 + 1·A − 2·B + 0.5·AB exactly plus one residual pattern
        // orthogonal to all columns is impossible in 4 runs, so the fit is exact (hand check).
        let rows = [[-1.0, -1.0], [1.0, -1.0], [-1.0, 1.0], [1.0, 1.0]];
        let y: Vec<f64> = rows
            .iter()
            .map(|r| 10.0 + r[0] - 2.0 * r[1] + 0.5 * r[0] * r[1])
            .collect();
        let ab: Vec<f64> = rows.iter().map(|r| r[0] * r[1]).collect();
        let (a, b) = (Word(1), Word(2));
        let cols = vec![(a, column(&rows, 0)), (b, column(&rows, 1)), (Word(3), ab)];
        let ls = Fit::least_squares(&cols, &y).unwrap();
        assert!(ls.orthogonal);
        assert!((ls.effect(a).unwrap() - 2.0).abs() < 1e-12);
        assert!((ls.effect(b).unwrap() + 4.0).abs() < 1e-12);
        assert!((ls.effect(Word(3)).unwrap() - 1.0).abs() < 1e-12);
        assert!((ls.c(a).unwrap() - 0.25).abs() < 1e-12);
        let orth = Fit::orthogonal(&y, [1, 2, 3].map(Word).to_vec(), &[2.0, -4.0, 1.0]);
        assert_eq!(orth.rss, 0.0);
        assert!((orth.intercept - ls.intercept).abs() < 1e-12);
        assert_eq!(
            orth.predict(&[0.0, 0.0, 0.0]).1,
            ls.predict(&[0.0, 0.0, 0.0]).1
        );
    }

    #[test]
    fn a_column_equal_to_another_is_dropped_and_named() {
        let a = vec![-1.0, 1.0, -1.0, 1.0, 1.0];
        let y = vec![1.0, 2.0, 1.5, 2.5, 2.0];
        let fit = Fit::least_squares(&[(Word(1), a.clone()), (Word(2), a)], &y).unwrap();
        assert_eq!(fit.terms, vec![Word(1)]);
        assert_eq!(fit.dropped, vec![Word(2)]);
        assert_eq!(fit.df_residual(), 3);
    }
}

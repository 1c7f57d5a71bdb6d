//! Time drift of the response, seen in nominal runs repeated through the run order, and
//! its correction: a drifting instrument must not be mistaken for a factor effect.

use serde::Serialize;

use super::quantile::{StatError, t_sf_two_sided};

/// Least-squares trend of the nominal runs against run order.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Drift {
    /// Number of nominal runs.
    pub n: usize,
    /// Change of the response per step of run order.
    pub slope: f64,
    /// Fitted response at order 0.
    pub intercept: f64,
    /// Standard error of the slope.
    pub se_slope: f64,
    /// t = slope/SE; `None` when the nominal runs lie exactly on a line.
    pub t: Option<f64>,
    /// Residual degrees of freedom n − 2.
    pub df: usize,
    /// Two-sided p-value of t; `None` with `t`.
    pub p: Option<f64>,
    /// Why t and p are missing, if they are.
    pub note: Option<String>,
}

/// How the drift correction is applied (defined once, with the study file).
pub use crate::study::model::CorrectionMode;

/// Fewest nominal runs for a drift test (two leave no degree of freedom).
pub const MIN_NOMINAL_FOR_TEST: usize = 3;

/// Linear drift test on `(run order, y)` of the nominal runs: ordinary least-squares slope
/// b = Sxy/Sxx, intercept ȳ − b·x̄, SE(b) = √(RSS/(n − 2)/Sxx), t = b/SE(b), two-sided p on
/// n − 2 df (Vander Heyden et al., J. Pharm. Biomed. Anal. 24 (2001) 723–753, §5.2, for the
/// use of nominal runs to detect drift; the regression test itself is textbook least
/// squares). Needs ≥ 3 nominal runs at ≥ 2 distinct orders.
pub fn drift_check(nominal: &[(f64, f64)]) -> Result<Drift, StatError> {
    let n = nominal.len();
    if n < MIN_NOMINAL_FOR_TEST {
        return Err(StatError::TooFew {
            what: "nominal runs for a drift test",
            got: n,
            need: MIN_NOMINAL_FOR_TEST,
        });
    }
    check_pairs(nominal, "nominal run")?;
    let nf = n as f64;
    let xm = nominal.iter().map(|p| p.0).sum::<f64>() / nf;
    let ym = nominal.iter().map(|p| p.1).sum::<f64>() / nf;
    let sxx: f64 = nominal.iter().map(|p| (p.0 - xm) * (p.0 - xm)).sum();
    if sxx.is_nan() || sxx <= 0.0 {
        return Err(StatError::Shape(
            "all nominal runs share one run order: a drift cannot be estimated".into(),
        ));
    }
    let sxy: f64 = nominal.iter().map(|p| (p.0 - xm) * (p.1 - ym)).sum();
    let slope = sxy / sxx;
    let intercept = ym - slope * xm;
    let rss: f64 = nominal
        .iter()
        .map(|p| (p.1 - intercept - slope * p.0).powi(2))
        .sum();
    let df = n - 2;
    let se = (rss / df as f64 / sxx).sqrt();
    // A residual at rounding level (three points on one line) is no scatter: the slope then
    // has no standard error, rather than a t of 10^14.
    let syy: f64 = nominal.iter().map(|p| (p.1 - ym) * (p.1 - ym)).sum();
    let exact = rss <= 1e-20 * syy.max(nominal.iter().map(|p| p.1 * p.1).sum::<f64>());
    let (t, p, note) = if se > 0.0 && !exact {
        let t = slope / se;
        (Some(t), Some(t_sf_two_sided(t, df as f64)?), None)
    } else {
        (
            None,
            None,
            Some("the nominal runs lie exactly on a line: the slope has no standard error".into()),
        )
    };
    Ok(Drift {
        n,
        slope,
        intercept,
        // Rounding noise of an exact line is no standard error.
        se_slope: if exact { 0.0 } else { se },
        t,
        df,
        p,
        note,
    })
}

/// Drift-corrected responses for `values` = `(run order, y)`, using the nominal runs
/// `(run order, y)` (Vander Heyden et al. 2001 §5.2):
/// additive y_corr = y − (ŷ_nom(t) − y_nom(t₀)); relative y_corr = y·y_nom(t₀)/ŷ_nom(t),
/// where ŷ_nom(t) interpolates linearly between the neighbouring nominal runs and t₀ is the
/// first nominal run, so every response is expressed at the level of the start.
///
/// Before the first or after the last nominal run ŷ_nom is held at the nearest nominal
/// value (no extrapolation: a trend outside the bracketing runs is not observed). Nominal
/// runs sharing one order are averaged first. Needs ≥ 2 nominal orders; relative mode needs
/// ŷ_nom ≠ 0.
pub fn correct(
    values: &[(f64, f64)],
    nominal: &[(f64, f64)],
    mode: CorrectionMode,
) -> Result<Vec<f64>, StatError> {
    check_pairs(values, "run")?;
    check_pairs(nominal, "nominal run")?;
    let nom = merge_by_order(nominal);
    if nom.len() < 2 {
        return Err(StatError::TooFew {
            what: "nominal runs at distinct orders for a drift correction",
            got: nom.len(),
            need: 2,
        });
    }
    let y0 = nom[0].1;
    values
        .iter()
        .map(|&(t, y)| {
            let yhat = interpolate(&nom, t);
            match mode {
                CorrectionMode::Additive => Ok(y - (yhat - y0)),
                CorrectionMode::Relative => {
                    if yhat == 0.0 {
                        Err(StatError::OutOfRange {
                            what: "the interpolated nominal response for relative correction",
                            expected: "non-zero",
                            value: yhat,
                        })
                    } else {
                        Ok(y * y0 / yhat)
                    }
                }
            }
        })
        .collect()
}

fn check_pairs(pairs: &[(f64, f64)], what: &'static str) -> Result<(), StatError> {
    for &(t, y) in pairs {
        if !t.is_finite() {
            return Err(StatError::NotFinite {
                what: "a run order",
                value: t,
            });
        }
        if !y.is_finite() {
            return Err(StatError::NotFinite { what, value: y });
        }
    }
    Ok(())
}

/// Nominal runs sorted by order, runs sharing an order replaced by their mean.
fn merge_by_order(nominal: &[(f64, f64)]) -> Vec<(f64, f64)> {
    let mut sorted = nominal.to_vec();
    sorted.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut out: Vec<(f64, f64, usize)> = Vec::new();
    for (t, y) in sorted {
        match out.last_mut() {
            Some(last) if last.0 == t => {
                last.1 += y;
                last.2 += 1;
            }
            _ => out.push((t, y, 1)),
        }
    }
    out.into_iter().map(|(t, s, k)| (t, s / k as f64)).collect()
}

/// Piecewise-linear interpolation in sorted, distinct nodes; constant outside.
fn interpolate(nodes: &[(f64, f64)], t: f64) -> f64 {
    let (first, last) = match (nodes.first(), nodes.last()) {
        (Some(f), Some(l)) => (*f, *l),
        _ => return f64::NAN,
    };
    if t <= first.0 {
        return first.1;
    }
    if t >= last.0 {
        return last.1;
    }
    for w in nodes.windows(2) {
        let (a, b) = (w[0], w[1]);
        if t <= b.0 {
            return a.1 + (b.1 - a.1) * (t - a.0) / (b.0 - a.0);
        }
    }
    last.1
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::Value;

    // Reference values from scipy.stats.linregress: tests/fixtures/stats/
    // make_stats_fixtures.py, function drift(); versions in the file.
    const FIXTURE: &str = include_str!("../../tests/fixtures/stats/drift.json");

    fn nominal(c: &Value) -> Vec<(f64, f64)> {
        c["nominal"]
            .as_array()
            .unwrap()
            .iter()
            .map(|p| (p[0].as_f64().unwrap(), p[1].as_f64().unwrap()))
            .collect()
    }

    fn close(got: f64, want: f64) -> bool {
        (got - want).abs() <= 1e-10 * want.abs().max(1e-6)
    }

    #[test]
    fn drift_check_matches_scipy_linregress_and_flags_drift() {
        let fx: Value = serde_json::from_str(FIXTURE).unwrap();
        let c = &fx["drifting"];
        let d = drift_check(&nominal(c)).unwrap();
        assert!(close(d.slope, c["slope"].as_f64().unwrap()));
        assert!(close(d.intercept, c["intercept"].as_f64().unwrap()));
        assert!(close(d.se_slope, c["se_slope"].as_f64().unwrap()));
        assert!(close(d.p.unwrap(), c["p"].as_f64().unwrap()), "{d:?}");
        assert_eq!(d.df, 3);
        assert!(d.p.unwrap() < 0.05);
    }

    #[test]
    fn drift_check_on_flat_nominal_runs_finds_no_drift() {
        let fx: Value = serde_json::from_str(FIXTURE).unwrap();
        let c = &fx["flat"];
        let d = drift_check(&nominal(c)).unwrap();
        assert!(close(d.p.unwrap(), c["p"].as_f64().unwrap()));
        assert!(d.p.unwrap() > 0.05);
    }

    #[test]
    fn drift_check_needs_three_runs_at_two_orders() {
        assert!(matches!(
            drift_check(&[(1.0, 2.0), (2.0, 3.0)]),
            Err(StatError::TooFew { need: 3, .. })
        ));
        assert!(matches!(
            drift_check(&[(1.0, 2.0), (1.0, 3.0), (1.0, 2.5)]),
            Err(StatError::Shape(_))
        ));
    }

    #[test]
    fn exact_line_has_no_t_but_a_note() {
        let d = drift_check(&[(1.0, 1.0), (2.0, 2.0), (3.0, 3.0)]).unwrap();
        assert_eq!(d.t, None);
        assert!(d.note.is_some());
    }

    // Invented drift-free 2^2 responses in run order 2..5, nominal runs at 1, 6 and 11.
    const CLEAN: [(f64, f64); 4] = [(2.0, 10.0), (3.0, 12.0), (4.0, 11.0), (5.0, 14.0)];
    const LEVELS_A: [f64; 4] = [-1.0, 1.0, -1.0, 1.0];

    fn effect(y: &[f64]) -> f64 {
        let plus: f64 = y
            .iter()
            .zip(LEVELS_A)
            .filter(|(_, a)| *a > 0.0)
            .map(|(v, _)| v)
            .sum();
        let minus: f64 = y
            .iter()
            .zip(LEVELS_A)
            .filter(|(_, a)| *a < 0.0)
            .map(|(v, _)| v)
            .sum();
        (plus - minus) / 2.0
    }

    #[test]
    fn additive_correction_removes_a_known_linear_drift_exactly() {
        let d = |t: f64| -0.37 * (t - 1.0); // drift relative to the first nominal run
        let nominal: Vec<(f64, f64)> = [1.0, 6.0, 11.0].iter().map(|&t| (t, 50.0 + d(t))).collect();
        let drifted: Vec<(f64, f64)> = CLEAN.iter().map(|&(t, y)| (t, y + d(t))).collect();
        let corr = correct(&drifted, &nominal, CorrectionMode::Additive).unwrap();
        for (c, (_, y)) in corr.iter().zip(CLEAN) {
            assert!((c - y).abs() < 1e-12, "{c} vs {y}");
        }
        let clean: Vec<f64> = CLEAN.iter().map(|p| p.1).collect();
        assert!((effect(&corr) - effect(&clean)).abs() < 1e-12);
        let raw: Vec<f64> = drifted.iter().map(|p| p.1).collect();
        assert!((effect(&raw) - effect(&clean)).abs() > 0.1); // the drift did bias A
    }

    #[test]
    fn relative_correction_removes_a_known_proportional_drift_exactly() {
        let g = |t: f64| 1.0 - 0.004 * (t - 1.0);
        let nominal: Vec<(f64, f64)> = [1.0, 6.0, 11.0].iter().map(|&t| (t, 50.0 * g(t))).collect();
        let drifted: Vec<(f64, f64)> = CLEAN.iter().map(|&(t, y)| (t, y * g(t))).collect();
        let corr = correct(&drifted, &nominal, CorrectionMode::Relative).unwrap();
        for (c, (_, y)) in corr.iter().zip(CLEAN) {
            assert!((c - y).abs() < 1e-12, "{c} vs {y}");
        }
    }

    #[test]
    fn outside_the_nominal_runs_the_nearest_nominal_value_is_used() {
        let nominal = [(2.0, 10.0), (4.0, 12.0)];
        let corr = correct(
            &[(1.0, 5.0), (6.0, 5.0), (3.0, 5.0)],
            &nominal,
            CorrectionMode::Additive,
        )
        .unwrap();
        assert_eq!(corr, vec![5.0, 3.0, 4.0]);
    }

    #[test]
    fn nominal_runs_at_one_order_are_averaged() {
        let nominal = [(1.0, 10.0), (1.0, 12.0), (3.0, 13.0)];
        // y_nom(t₀) = 11, ŷ_nom(2) = 12: additive correction −1.
        let corr = correct(&[(2.0, 20.0)], &nominal, CorrectionMode::Additive).unwrap();
        assert_eq!(corr, vec![19.0]);
    }

    #[test]
    fn correction_errors_on_too_few_nominal_or_zero_level() {
        assert!(matches!(
            correct(&[(1.0, 1.0)], &[(1.0, 2.0)], CorrectionMode::Additive),
            Err(StatError::TooFew { .. })
        ));
        assert!(
            correct(
                &[(1.0, 1.0)],
                &[(0.0, 0.0), (2.0, 0.0)],
                CorrectionMode::Relative
            )
            .is_err()
        );
        assert!(
            correct(
                &[(f64::NAN, 1.0)],
                &[(0.0, 1.0), (2.0, 1.0)],
                CorrectionMode::Additive
            )
            .is_err()
        );
    }
}

//! Guarded distribution functions (t, normal, F): statrs panics on a NaN probability and
//! hangs at infinite degrees of freedom, so every caller in plateau goes through here.

use statrs::distribution::{ContinuousCDF, FisherSnedecor, Normal, StudentsT};
use thiserror::Error;

/// Above this many degrees of freedom the t quantile is taken from the normal quantile
/// with a Cornish–Fisher correction: statrs loses accuracy there (2e-5 relative at 1e5 df)
/// and never returns at infinite df (TOOLCHAIN.md §6).
pub const LARGE_DF: f64 = 1.0e4;

/// What can go wrong in plateau's statistics of judging effects.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum StatError {
    /// A probability outside the open interval (0, 1), or NaN.
    #[error("invalid probability {p} (expected a number strictly between 0 and 1)")]
    Probability {
        /// The value received.
        p: f64,
    },
    /// Degrees of freedom that are not positive, or NaN.
    #[error("invalid degrees of freedom {df} for {what} (expected a number greater than 0)")]
    DegreesOfFreedom {
        /// Which distribution or quantity.
        what: &'static str,
        /// The value received.
        df: f64,
    },
    /// Fewer than one degree of freedom for a t quantile: the inversion is not reliable
    /// there, and no criterion of a screening study rests on less than one.
    #[error("invalid degrees of freedom {df} for {what} (expected at least 1)")]
    BelowOneDegree {
        /// Which quantity.
        what: &'static str,
        /// The value received.
        df: f64,
    },
    /// A significance level outside (0, 0.5].
    #[error("invalid significance level alpha = {alpha} (expected 0 < alpha <= 0.5, e.g. 0.05)")]
    Alpha {
        /// The value received.
        alpha: f64,
    },
    /// A value that must be a finite number is NaN or infinite.
    #[error("{what} is not a finite number ({value})")]
    NotFinite {
        /// Which input.
        what: &'static str,
        /// The value received.
        value: f64,
    },
    /// A value that must be positive (or non-negative) is not.
    #[error("{what} must be {expected}, got {value}")]
    OutOfRange {
        /// Which input.
        what: &'static str,
        /// What would be valid, e.g. "greater than 0".
        expected: &'static str,
        /// The value received.
        value: f64,
    },
    /// Too few values for the method.
    #[error("{what}: got {got}, need at least {need}")]
    TooFew {
        /// What was counted.
        what: &'static str,
        /// How many were given.
        got: usize,
        /// The minimum that would be valid.
        need: usize,
    },
    /// Inputs whose sizes or indices do not fit together.
    #[error("{0}")]
    Shape(String),
    /// The least-squares model cannot be fitted because columns are aliased or constant.
    #[error("the model matrix is rank deficient ({0}); drop an aliased term or add runs")]
    RankDeficient(String),
    /// A constructor was asked for a method it does not implement.
    #[error("method {got} cannot be used here (expected {expected})")]
    Method {
        /// The method received.
        got: &'static str,
        /// The methods that would be valid.
        expected: &'static str,
    },
}

fn check_p(p: f64) -> Result<(), StatError> {
    // `!(p > 0 && p < 1)` also rejects NaN, which statrs would panic on.
    if !(p > 0.0 && p < 1.0) {
        return Err(StatError::Probability { p });
    }
    Ok(())
}

fn check_df(what: &'static str, df: f64) -> Result<(), StatError> {
    if df.is_nan() || df <= 0.0 {
        return Err(StatError::DegreesOfFreedom { what, df });
    }
    Ok(())
}

/// Standard normal quantile Φ⁻¹(p) for 0 < p < 1.
pub fn normal_quantile(p: f64) -> Result<f64, StatError> {
    check_p(p)?;
    Ok(Normal::standard().inverse_cdf(p))
}

/// Quantile t(p, ν) of Student's t distribution; ν may be any real number ≥ 1 (Lenth's
/// d = m/3 is not an integer) or +∞.
///
/// For ν > [`LARGE_DF`] the Cornish–Fisher expansion about the normal quantile z is used
/// (Abramowitz & Stegun 1964, Handbook of Mathematical Functions, 26.7.5):
/// t ≈ z + g₁/ν + g₂/ν² + g₃/ν³ + g₄/ν⁴ with g₁ = (z³ + z)/4,
/// g₂ = (5z⁵ + 16z³ + 3z)/96, g₃ = (3z⁷ + 19z⁵ + 17z³ − 15z)/384,
/// g₄ = (79z⁹ + 776z⁷ + 1482z⁵ − 1920z³ − 945z)/92160 (coefficients from memory; the test
/// against scipy at 2·10⁴ … 10⁹ df confirms g₁ and g₂ to 1e-10 relative, while g₃ and g₄
/// contribute less than 1e-11 above 10⁴ df and are not resolved by it).
pub fn t_quantile(p: f64, df: f64) -> Result<f64, StatError> {
    check_p(p)?;
    check_df("the t distribution", df)?;
    if df < 1.0 {
        return Err(StatError::BelowOneDegree {
            what: "the t quantile",
            df,
        });
    }
    if df > LARGE_DF {
        let z = normal_quantile(p)?;
        if df.is_infinite() {
            return Ok(z);
        }
        let z2 = z * z;
        let g1 = (z2 + 1.0) * z / 4.0;
        let g2 = ((5.0 * z2 + 16.0) * z2 + 3.0) * z / 96.0;
        let g3 = (((3.0 * z2 + 19.0) * z2 + 17.0) * z2 - 15.0) * z / 384.0;
        let g4 = ((((79.0 * z2 + 776.0) * z2 + 1482.0) * z2 - 1920.0) * z2 - 945.0) * z / 92160.0;
        return Ok(z + (g1 + (g2 + (g3 + g4 / df) / df) / df) / df);
    }
    let t = StudentsT::new(0.0, 1.0, df).map_err(|_| StatError::DegreesOfFreedom {
        what: "the t distribution",
        df,
    })?;
    Ok(t.inverse_cdf(p))
}

/// Two-sided p-value of a t statistic: 2·P(T_ν > |t|), computed from the survival
/// function (never 1 − cdf, which loses the tail). ν real > 0 or +∞.
pub fn t_sf_two_sided(t: f64, df: f64) -> Result<f64, StatError> {
    if t.is_nan() {
        return Err(StatError::NotFinite {
            what: "the t statistic",
            value: t,
        });
    }
    check_df("the t distribution", df)?;
    if t.is_infinite() {
        return Ok(0.0);
    }
    let a = t.abs();
    let p = if df.is_infinite() {
        2.0 * Normal::standard().sf(a)
    } else {
        let dist = StudentsT::new(0.0, 1.0, df).map_err(|_| StatError::DegreesOfFreedom {
            what: "the t distribution",
            df,
        })?;
        2.0 * dist.sf(a)
    };
    Ok(p.min(1.0))
}

/// Upper-tail probability P(F_{d1,d2} > x), the p-value of an F test, from the survival
/// function (`1 − cdf` is useless in the tail, TOOLCHAIN.md §6). x ≤ 0 gives 1.
pub fn f_sf(x: f64, d1: f64, d2: f64) -> Result<f64, StatError> {
    if x.is_nan() {
        return Err(StatError::NotFinite {
            what: "the F statistic",
            value: x,
        });
    }
    check_df("the F numerator", d1)?;
    check_df("the F denominator", d2)?;
    if !d1.is_finite() || !d2.is_finite() {
        return Err(StatError::OutOfRange {
            what: "F degrees of freedom",
            expected: "finite",
            value: if d1.is_finite() { d2 } else { d1 },
        });
    }
    if x <= 0.0 {
        return Ok(1.0);
    }
    if x.is_infinite() {
        return Ok(0.0);
    }
    let f = FisherSnedecor::new(d1, d2).map_err(|_| StatError::DegreesOfFreedom {
        what: "the F distribution",
        df: d1,
    })?;
    Ok(f.sf(x))
}

/// Half-normal plotting positions for m absolute effects sorted ascending:
/// q_i = Φ⁻¹(0.5 + 0.5·(i − 0.5)/m), i = 1..m.
///
/// This is the form attributed to Daniel (1959), Technometrics 1, 311–341 (verify: the
/// exact plotting position in the paper was not checked against the original). Empty for
/// m = 0.
pub fn half_normal_scores(m: usize) -> Vec<f64> {
    let mf = m as f64;
    (1..=m)
        .map(|i| {
            let p = 0.5 + 0.5 * (i as f64 - 0.5) / mf;
            // p lies in (0.5, 1) for every i in 1..=m, so the quantile cannot fail.
            Normal::standard().inverse_cdf(p)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::Value;

    // All reference values: scipy (version in the file), produced by
    // tests/fixtures/stats/make_stats_fixtures.py, function quantiles().
    const FIXTURE: &str = include_str!("../../tests/fixtures/stats/quantile.json");

    fn fixture() -> Value {
        serde_json::from_str(FIXTURE).unwrap()
    }

    fn f(v: &Value, k: &str) -> f64 {
        v[k].as_f64().unwrap()
    }

    fn close(got: f64, want: f64, rel: f64) -> bool {
        (got - want).abs() <= rel * want.abs().max(1e-300)
    }

    #[test]
    fn t_quantile_matches_scipy_at_integer_df() {
        let fx = fixture();
        let rows = fx["t_ppf"].as_array().unwrap();
        assert_eq!(rows.len(), 45);
        for r in rows {
            let got = t_quantile(f(r, "p"), f(r, "df")).unwrap();
            assert!(close(got, f(r, "value"), 1e-11), "{r} got {got}");
        }
    }

    #[test]
    fn t_quantile_matches_scipy_at_lenth_non_integer_df_and_gamma() {
        let fx = fixture();
        for r in fx["lenth_t"].as_array().unwrap() {
            let d = f(r, "d");
            let alpha = f(r, "alpha");
            let me = t_quantile(1.0 - alpha / 2.0, d).unwrap();
            let sme = t_quantile(f(r, "gamma"), d).unwrap();
            assert!(close(me, f(r, "t_me"), 1e-10), "{r} me {me}");
            assert!(close(sme, f(r, "t_sme"), 1e-9), "{r} sme {sme}");
        }
    }

    #[test]
    fn t_quantile_matches_scipy_at_real_and_huge_df() {
        let fx = fixture();
        for r in fx["t_ppf_real"].as_array().unwrap() {
            if f(r, "df") < 1.0 {
                // Below one degree of freedom plateau refuses rather than invert unreliably.
                assert!(matches!(
                    t_quantile(f(r, "p"), f(r, "df")),
                    Err(StatError::BelowOneDegree { .. })
                ));
                continue;
            }
            let got = t_quantile(f(r, "p"), f(r, "df")).unwrap();
            assert!(close(got, f(r, "value"), 1e-10), "{r} got {got}");
        }
    }

    #[test]
    fn t_quantile_at_infinite_df_is_the_normal_quantile() {
        // scipy 1.17: norm.ppf(0.975) = 1.959963984540054 (also TOOLCHAIN.md §6).
        let got = t_quantile(0.975, f64::INFINITY).unwrap();
        assert!(close(got, 1.959963984540054, 1e-14));
    }

    #[test]
    fn t_quantile_rejects_bad_probability_and_df() {
        for p in [0.0, 1.0, -0.1, 1.5, f64::NAN] {
            assert!(matches!(
                t_quantile(p, 5.0),
                Err(StatError::Probability { .. })
            ));
        }
        for df in [0.0, -1.0, f64::NAN, f64::NEG_INFINITY] {
            assert!(matches!(
                t_quantile(0.9, df),
                Err(StatError::DegreesOfFreedom { .. })
            ));
        }
    }

    #[test]
    fn normal_quantile_matches_scipy() {
        let fx = fixture();
        for r in fx["norm_ppf"].as_array().unwrap() {
            let got = normal_quantile(f(r, "p")).unwrap();
            let want = f(r, "value");
            assert!(
                (got - want).abs() <= 1e-13 + 1e-13 * want.abs(),
                "{r} got {got}"
            );
        }
    }

    #[test]
    fn f_sf_matches_scipy_including_the_far_tail() {
        let fx = fixture();
        for r in fx["f_sf"].as_array().unwrap() {
            let got = f_sf(f(r, "x"), f(r, "d1"), f(r, "d2")).unwrap();
            assert!(close(got, f(r, "value"), 1e-10), "{r} got {got}");
        }
    }

    #[test]
    fn f_sf_rejects_nan_and_bad_df() {
        assert!(f_sf(f64::NAN, 1.0, 2.0).is_err());
        assert!(f_sf(1.0, 0.0, 2.0).is_err());
        assert!(f_sf(1.0, 1.0, f64::INFINITY).is_err());
    }

    #[test]
    fn t_sf_two_sided_matches_scipy() {
        let fx = fixture();
        for r in fx["t_sf_two_sided"].as_array().unwrap() {
            let got = t_sf_two_sided(f(r, "t"), f(r, "df")).unwrap();
            assert!(close(got, f(r, "value"), 1e-9), "{r} got {got}");
        }
    }

    #[test]
    fn half_normal_scores_match_scipy() {
        let fx = fixture();
        for m in [1usize, 7, 15] {
            let want: Vec<f64> = fx["half_normal_scores"][m.to_string()]
                .as_array()
                .unwrap()
                .iter()
                .map(|v| v.as_f64().unwrap())
                .collect();
            let got = half_normal_scores(m);
            assert_eq!(got.len(), m);
            for (g, w) in got.iter().zip(&want) {
                assert!(close(*g, *w, 1e-12), "m={m} {g} vs {w}");
            }
        }
        assert!(half_normal_scores(0).is_empty());
    }
}

//! Critical effects: the threshold |E| must pass to be called statistically significant,
//! from each of the error estimates a robustness study may declare in advance.
//!
//! Effects are E = ȳ(+) − ȳ(−), never regression coefficients b = E/2. The formulas follow
//! Vander Heyden et al., J. Pharm. Biomed. Anal. 24 (2001) 723–753, §6.2 (see METHODS.md).

use serde::Serialize;

use super::quantile::{StatError, t_quantile};

/// Fewest error effects (dummy factors or declared-negligible terms) accepted: one gives
/// ν = 1 and a very wide t(0.975, 1) = 12.71, which is honest; the study decides whether
/// that is enough.
pub const MIN_ERROR_EFFECTS: usize = 1;

/// Fewest contrasts for Lenth's and Dong's methods: seven, the contrasts of an 8-run
/// design. Both methods estimate the error from the effects they assume inactive, which
/// needs a majority of inactive effects and enough of them for a median; Lenth (1989)
/// tabulates and simulates his method from m = 7 contrasts upward (from memory), and the
/// same floor is used for Dong's method.
pub const MIN_PSEUDO_CONTRASTS: usize = 7;

/// Note used when an error estimate is exactly zero.
pub const NOTE_ALL_ZERO: &str = "the method cannot judge: all effects are zero (PSE = 0)";

/// How the critical effect was obtained (defined once, with the study file).
pub use crate::study::model::Method;

/// A critical effect and the numbers it was derived from.
///
/// `e_crit` is `None` when the method cannot judge (zero error estimate); `note` then
/// says why. For Lenth's method `e_crit` equals the margin of error `me`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Critical {
    /// How the threshold was obtained.
    pub method: Method,
    /// Two-sided significance level.
    pub alpha: f64,
    /// Standard error of an effect (for Lenth: the PSE; for Dong: s1).
    pub se: Option<f64>,
    /// Degrees of freedom of the t quantile (Lenth: d = m/3, not an integer).
    pub df: Option<f64>,
    /// Critical effect: |E| above it is significant.
    pub e_crit: Option<f64>,
    /// Initial robust scale s0 = 1.5·median|E| (Lenth, Dong).
    pub s0: Option<f64>,
    /// Number of effects the error estimate rests on (error effects, or effects kept by Dong).
    pub n_used: Option<usize>,
    /// Lenth's pseudo standard error.
    pub pse: Option<f64>,
    /// Lenth's margin of error.
    pub me: Option<f64>,
    /// Lenth's simultaneous margin of error.
    pub sme: Option<f64>,
    /// Why the method could not judge, or a caveat.
    pub note: Option<String>,
}

impl Critical {
    fn empty(method: Method, alpha: f64) -> Self {
        Critical {
            method,
            alpha,
            se: None,
            df: None,
            e_crit: None,
            s0: None,
            n_used: None,
            pse: None,
            me: None,
            sme: None,
            note: None,
        }
    }

    /// Critical effect from a known precision: SE(E) = 2s/√(N·n), E_crit = t(1−α/2, ν)·SE(E),
    /// with N the number of two-level runs and n the true replicate determinations averaged
    /// per run (Vander Heyden et al. 2001 §6.2.2.1). ν may be real or +∞ (σ known).
    ///
    /// s = 0 is not an error: the result has `e_crit = None` and a note.
    pub fn from_precision(
        s: f64,
        df: f64,
        n_runs: usize,
        determinations_per_run: usize,
        alpha: f64,
    ) -> Result<Critical, StatError> {
        check_alpha(alpha)?;
        if n_runs < 2 {
            return Err(StatError::TooFew {
                what: "two-level runs for SE(E)",
                got: n_runs,
                need: 2,
            });
        }
        if determinations_per_run < 1 {
            return Err(StatError::TooFew {
                what: "determinations per run",
                got: determinations_per_run,
                need: 1,
            });
        }
        from_sd(
            Method::Precision,
            s,
            df,
            (n_runs * determinations_per_run) as f64,
            alpha,
        )
    }

    /// Critical effect from the pure-error standard deviation s_pe = √MS_pe of a replicated
    /// design with ν_pe degrees of freedom and N_det factorial determinations:
    /// SE(E) = 2·s_pe/√N_det, E_crit = t(1−α/2, ν_pe)·SE(E) (balanced design; the same
    /// formula as [`Critical::from_precision`] with n = 1).
    pub fn from_pure_error(
        s_pe: f64,
        df_pe: f64,
        n_factorial_determinations: usize,
        alpha: f64,
    ) -> Result<Critical, StatError> {
        check_alpha(alpha)?;
        if n_factorial_determinations < 2 {
            return Err(StatError::TooFew {
                what: "factorial determinations for SE(E)",
                got: n_factorial_determinations,
                need: 2,
            });
        }
        from_sd(
            Method::Anova,
            s_pe,
            df_pe,
            n_factorial_determinations as f64,
            alpha,
        )
    }

    /// Critical effect from effects that estimate only error — dummy-factor effects or terms
    /// declared negligible in advance: SE(E) = √(ΣE_d²/n_d), ν = n_d,
    /// E_crit = t(1−α/2, n_d)·SE(E) (Vander Heyden et al. 2001 §6.2.2.2).
    ///
    /// `method` must be [`Method::Dummies`] or [`Method::Negligible`].
    pub fn from_error_effects(
        error_effects: &[f64],
        alpha: f64,
        method: Method,
    ) -> Result<Critical, StatError> {
        check_alpha(alpha)?;
        if !matches!(method, Method::Dummies | Method::Negligible) {
            return Err(StatError::Method {
                got: method.as_str(),
                expected: "dummies or negligible",
            });
        }
        check_effects(error_effects, "error effect")?;
        let n = error_effects.len();
        if n < MIN_ERROR_EFFECTS {
            return Err(StatError::TooFew {
                what: "error effects (dummy factors or negligible terms)",
                got: n,
                need: MIN_ERROR_EFFECTS,
            });
        }
        let se = (error_effects.iter().map(|e| e * e).sum::<f64>() / n as f64).sqrt();
        let mut c = Critical::empty(method, alpha);
        c.n_used = Some(n);
        c.df = Some(n as f64);
        c.se = Some(se);
        if se == 0.0 {
            c.note = Some("the method cannot judge: all error effects are zero (SE = 0)".into());
            return Ok(c);
        }
        c.e_crit = Some(t_quantile(1.0 - alpha / 2.0, n as f64)? * se);
        Ok(c)
    }

    /// Dong's algorithm (Dong, Statistica Sinica 3 (1993) 209–217): s0 = 1.5·median|E|;
    /// keep the m effects with |E| ≤ 2.5·s0; s1 = √(ΣE_k²/m); E_crit = t(1−α/2, m)·s1.
    ///
    /// The df = m (number of retained effects) follows METHODS.md and Vander Heyden et al.
    /// 2001; it was not confirmed against Dong's paper itself (verify).
    pub fn dong(effects: &[f64], alpha: f64) -> Result<Critical, StatError> {
        check_alpha(alpha)?;
        check_effects(effects, "effect")?;
        check_count(effects.len())?;
        let abs: Vec<f64> = effects.iter().map(|e| e.abs()).collect();
        let s0 = 1.5 * median(&abs);
        let mut c = Critical::empty(Method::Dong, alpha);
        c.s0 = Some(s0);
        if s0 == 0.0 {
            c.note = Some(zero_note(&abs));
            return Ok(c);
        }
        let kept: Vec<f64> = abs.iter().copied().filter(|a| *a <= 2.5 * s0).collect();
        let m = kept.len();
        // s0 > 0 puts the median itself in `kept`, so m ≥ 1 and s1 > 0.
        let s1 = (kept.iter().map(|a| a * a).sum::<f64>() / m as f64).sqrt();
        c.n_used = Some(m);
        c.df = Some(m as f64);
        c.se = Some(s1);
        c.e_crit = Some(t_quantile(1.0 - alpha / 2.0, m as f64)? * s1);
        Ok(c)
    }

    /// Lenth's method (Lenth, Technometrics 31 (1989) 469–473), m contrasts c:
    /// s0 = 1.5·median|c|; PSE = 1.5·median{|c| : |c| < 2.5·s0}; d = m/3;
    /// ME = t(1−α/2, d)·PSE; SME = t(γ, d)·PSE with γ = (1 + (1−α)^(1/m))/2.
    ///
    /// PSE = 0 (e.g. all effects zero) is not an error: `e_crit`, `me`, `sme` are `None`
    /// and the note says the method cannot judge.
    pub fn lenth(effects: &[f64], alpha: f64) -> Result<Critical, StatError> {
        check_alpha(alpha)?;
        check_effects(effects, "effect")?;
        let m = effects.len();
        check_count(m)?;
        let abs: Vec<f64> = effects.iter().map(|e| e.abs()).collect();
        let s0 = 1.5 * median(&abs);
        let d = m as f64 / 3.0;
        let mut c = Critical::empty(Method::Lenth, alpha);
        c.s0 = Some(s0);
        c.df = Some(d);
        // Lenth's trimming is strict (<), Dong's is ≤: both as published in METHODS.md.
        let kept: Vec<f64> = abs.iter().copied().filter(|a| *a < 2.5 * s0).collect();
        let pse = if kept.is_empty() {
            0.0
        } else {
            1.5 * median(&kept)
        };
        c.n_used = Some(kept.len());
        c.pse = Some(pse);
        c.se = Some(pse);
        if pse == 0.0 {
            c.note = Some(zero_note(&abs));
            return Ok(c);
        }
        let gamma = (1.0 + (1.0 - alpha).powf(1.0 / m as f64)) / 2.0;
        let me = t_quantile(1.0 - alpha / 2.0, d)? * pse;
        let sme = t_quantile(gamma, d)? * pse;
        c.me = Some(me);
        c.sme = Some(sme);
        c.e_crit = Some(me);
        Ok(c)
    }
}

/// Statistical verdict on one effect: `Some(|E| > E_crit)` (for Lenth E_crit is the ME);
/// `None` when the criterion cannot judge or the effect is not a number.
pub fn judge(effect: f64, critical: &Critical) -> Option<bool> {
    if effect.is_nan() {
        return None;
    }
    critical.e_crit.map(|e| effect.abs() > e)
}

/// Whether |E| exceeds Lenth's simultaneous margin of error (SME); `None` for other methods,
/// when Lenth cannot judge, or for a NaN effect.
pub fn exceeds_sme(effect: f64, critical: &Critical) -> Option<bool> {
    if effect.is_nan() {
        return None;
    }
    critical.sme.map(|s| effect.abs() > s)
}

fn from_sd(
    method: Method,
    s: f64,
    df: f64,
    n_total: f64,
    alpha: f64,
) -> Result<Critical, StatError> {
    if !s.is_finite() {
        return Err(StatError::NotFinite {
            what: "the standard deviation",
            value: s,
        });
    }
    if s < 0.0 {
        return Err(StatError::OutOfRange {
            what: "the standard deviation",
            expected: "0 or more",
            value: s,
        });
    }
    if df.is_nan() || df <= 0.0 {
        return Err(StatError::DegreesOfFreedom {
            what: "the standard deviation",
            df,
        });
    }
    let mut c = Critical::empty(method, alpha);
    let se = 2.0 * s / n_total.sqrt();
    c.se = Some(se);
    c.df = Some(df);
    if s == 0.0 {
        c.note = Some("the method cannot judge: the standard deviation is zero (SE = 0)".into());
        return Ok(c);
    }
    c.e_crit = Some(t_quantile(1.0 - alpha / 2.0, df)? * se);
    Ok(c)
}

fn check_alpha(alpha: f64) -> Result<(), StatError> {
    if !(alpha > 0.0 && alpha <= 0.5) {
        return Err(StatError::Alpha { alpha });
    }
    Ok(())
}

fn check_effects(effects: &[f64], what: &'static str) -> Result<(), StatError> {
    match effects.iter().find(|e| !e.is_finite()) {
        Some(&value) => Err(StatError::NotFinite { what, value }),
        None => Ok(()),
    }
}

fn check_count(m: usize) -> Result<(), StatError> {
    if m < MIN_PSEUDO_CONTRASTS {
        return Err(StatError::TooFew {
            what: "effects for a pseudo standard error",
            got: m,
            need: MIN_PSEUDO_CONTRASTS,
        });
    }
    Ok(())
}

fn zero_note(abs: &[f64]) -> String {
    if abs.iter().all(|a| *a == 0.0) {
        NOTE_ALL_ZERO.to_string()
    } else {
        "the method cannot judge: most effects are exactly zero (PSE = 0)".to_string()
    }
}

/// Median of finite values (callers check finiteness); 0 for an empty slice.
fn median(values: &[f64]) -> f64 {
    let mut v = values.to_vec();
    v.sort_by(f64::total_cmp);
    let n = v.len();
    match n {
        0 => 0.0,
        _ if n % 2 == 1 => v[n / 2],
        _ => 0.5 * (v[n / 2 - 1] + v[n / 2]),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::Value;

    // Reference values from scipy/numpy: tests/fixtures/stats/make_stats_fixtures.py,
    // function criterion(); versions recorded in the JSON file.
    const FIXTURE: &str = include_str!("../../tests/fixtures/stats/criterion.json");

    fn fixture() -> Value {
        serde_json::from_str(FIXTURE).unwrap()
    }

    fn vec_of(v: &Value) -> Vec<f64> {
        v.as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_f64().unwrap())
            .collect()
    }

    fn close(got: f64, want: f64) -> bool {
        (got - want).abs() <= 1e-10 * want.abs().max(1.0)
    }

    // Box, Hunter & Hunter (2005), Statistics for Experimenters 2nd ed., Table 5.11 p. 200
    // (2^4 process development, conversion %), in Yates order
    // C, T, CT, P, CP, TP, CTP, c, Cc, Tc, CTc, Pc, CPc, TPc, CTPc.
    const BHH_5_11: [f64; 15] = [
        -8.0, 24.0, 1.0, -2.25, 0.75, -1.25, -0.75, -5.5, 0.0, 4.5, 0.5, -0.25, -0.25, -0.75, -0.25,
    ];

    #[test]
    fn lenth_pse_of_bhh_table_5_11_is_1_125_by_hand() {
        // Hand check on the published effects: sorted |c| = 0, .25, .25, .25, .5, .75, .75,
        // .75, 1, 1.25, 2.25, 4.5, 5.5, 8, 24; median .75, s0 = 1.125; trimming |c| < 2.8125
        // leaves 11 values with median .75, so PSE = 1.125.
        let c = Critical::lenth(&BHH_5_11, 0.05).unwrap();
        assert_eq!(c.s0, Some(1.125));
        assert_eq!(c.pse, Some(1.125));
        assert_eq!(c.n_used, Some(11));
    }

    #[test]
    fn lenth_me_and_sme_match_scipy_on_bhh_table_5_11() {
        let fx = fixture();
        assert_eq!(vec_of(&fx["bhh_table_5_11_effects"]), BHH_5_11.to_vec());
        for alpha in ["0.05", "0.01"] {
            let want = &fx["lenth"][alpha]["bhh"];
            let c = Critical::lenth(&BHH_5_11, alpha.parse().unwrap()).unwrap();
            assert!(close(c.df.unwrap(), want["d"].as_f64().unwrap()));
            assert!(close(c.me.unwrap(), want["me"].as_f64().unwrap()), "{c:?}");
            assert!(
                close(c.sme.unwrap(), want["sme"].as_f64().unwrap()),
                "{c:?}"
            );
            assert_eq!(c.e_crit, c.me);
        }
    }

    #[test]
    fn lenth_flags_temperature_in_bhh_table_5_11() {
        // ME = 2.892, SME = 5.871 (scipy fixture): T = 24 and C = −8 pass both, c = −5.5
        // passes only the ME, P = −2.25 passes neither.
        let c = Critical::lenth(&BHH_5_11, 0.05).unwrap();
        assert_eq!(judge(24.0, &c), Some(true));
        assert_eq!(exceeds_sme(24.0, &c), Some(true));
        assert_eq!(judge(-5.5, &c), Some(true));
        assert_eq!(exceeds_sme(-5.5, &c), Some(false));
        assert_eq!(judge(-2.25, &c), Some(false));
    }

    #[test]
    fn lenth_flags_nothing_among_quiet_effects() {
        let fx = fixture();
        let quiet = vec_of(&fx["quiet_effects"]);
        let c = Critical::lenth(&quiet, 0.05).unwrap();
        let want = &fx["lenth"]["0.05"]["quiet"];
        assert!(close(c.pse.unwrap(), want["pse"].as_f64().unwrap()));
        assert!(close(c.me.unwrap(), want["me"].as_f64().unwrap()));
        assert!(quiet.iter().all(|e| judge(*e, &c) == Some(false)));
    }

    #[test]
    fn lenth_with_all_effects_zero_cannot_judge() {
        let c = Critical::lenth(&[0.0; 7], 0.05).unwrap();
        assert_eq!(c.e_crit, None);
        assert_eq!(c.me, None);
        assert_eq!(c.note.as_deref(), Some(NOTE_ALL_ZERO));
        assert_eq!(judge(1.0, &c), None);
    }

    #[test]
    fn lenth_with_mostly_zero_effects_cannot_judge() {
        let c = Critical::lenth(&[0.0, 0.0, 0.0, 0.0, 1.0, 2.0, 3.0], 0.05).unwrap();
        assert_eq!(c.e_crit, None);
        assert!(c.note.unwrap().contains("cannot judge"));
    }

    #[test]
    fn dong_matches_scipy_on_bhh_table_5_11_and_flags_temperature() {
        let fx = fixture();
        for alpha in ["0.05", "0.01"] {
            let want = &fx["dong"][alpha]["bhh"];
            let c = Critical::dong(&BHH_5_11, alpha.parse().unwrap()).unwrap();
            assert_eq!(c.n_used, Some(want["m"].as_u64().unwrap() as usize));
            assert!(close(c.se.unwrap(), want["s1"].as_f64().unwrap()));
            assert!(
                close(c.e_crit.unwrap(), want["e_crit"].as_f64().unwrap()),
                "{c:?}"
            );
        }
        let c = Critical::dong(&BHH_5_11, 0.05).unwrap();
        assert_eq!(judge(24.0, &c), Some(true));
        assert_eq!(judge(-2.25, &c), Some(true)); // 2.25 > E_crit = 2.072
        assert_eq!(judge(1.25, &c), Some(false));
    }

    #[test]
    fn dong_flags_nothing_among_quiet_effects() {
        let fx = fixture();
        let quiet = vec_of(&fx["quiet_effects"]);
        let c = Critical::dong(&quiet, 0.05).unwrap();
        assert!(close(
            c.e_crit.unwrap(),
            fx["dong"]["0.05"]["quiet"]["e_crit"].as_f64().unwrap()
        ));
        assert!(quiet.iter().all(|e| judge(*e, &c) == Some(false)));
    }

    #[test]
    fn dong_keeps_effects_equal_to_the_cut_off() {
        // median |E| = 1, s0 = 1.5, cut-off 3.75: the effect of exactly 3.75 is kept (≤).
        let c = Critical::dong(&[1.0, 1.0, 1.0, 3.75, 0.5, 0.5, 1.0], 0.05).unwrap();
        assert_eq!(c.n_used, Some(7));
    }

    #[test]
    fn dong_with_all_effects_zero_cannot_judge() {
        let c = Critical::dong(&[0.0; 7], 0.05).unwrap();
        assert_eq!(c.e_crit, None);
        assert_eq!(c.note.as_deref(), Some(NOTE_ALL_ZERO));
    }

    #[test]
    fn dummies_critical_effect_matches_scipy_and_flags_large_effect() {
        let fx = fixture();
        let d = &fx["dummies"];
        let c =
            Critical::from_error_effects(&vec_of(&d["effects"]), 0.05, Method::Dummies).unwrap();
        assert!(close(c.se.unwrap(), d["se"].as_f64().unwrap()));
        assert_eq!(c.df, Some(3.0));
        let e_crit = d["e_crit_0.05"].as_f64().unwrap(); // 0.7324
        assert!(close(c.e_crit.unwrap(), e_crit));
        assert_eq!(judge(1.0, &c), Some(true));
        assert_eq!(judge(-0.5, &c), Some(false));
    }

    #[test]
    fn negligible_terms_use_the_same_formula_as_dummies() {
        let e = [0.12, -0.31, 0.22];
        let a = Critical::from_error_effects(&e, 0.05, Method::Dummies).unwrap();
        let b = Critical::from_error_effects(&e, 0.05, Method::Negligible).unwrap();
        assert_eq!(a.e_crit, b.e_crit);
        assert_eq!(b.method, Method::Negligible);
    }

    #[test]
    fn error_effects_reject_empty_input_and_wrong_method() {
        assert!(matches!(
            Critical::from_error_effects(&[], 0.05, Method::Dummies),
            Err(StatError::TooFew { need: 1, .. })
        ));
        assert!(matches!(
            Critical::from_error_effects(&[0.1], 0.05, Method::Lenth),
            Err(StatError::Method { .. })
        ));
    }

    #[test]
    fn precision_se_is_2s_over_root_n() {
        // Known s = 0.8, N = 8: SE(E) = 2·0.8/√8 = 0.565685… (hand-checkable), and with two
        // determinations per run 2·0.8/√16 = 0.4 exactly.
        let fx = fixture();
        let p = &fx["precision"];
        let c1 = Critical::from_precision(0.8, 10.0, 8, 1, 0.05).unwrap();
        assert!(close(c1.se.unwrap(), p["se_n1"].as_f64().unwrap()));
        assert!(close(
            c1.e_crit.unwrap(),
            p["e_crit_n1_0.05"].as_f64().unwrap()
        ));
        let c2 = Critical::from_precision(0.8, 10.0, 8, 2, 0.05).unwrap();
        assert!(close(c2.se.unwrap(), 0.4));
        assert!(close(
            c2.e_crit.unwrap(),
            p["e_crit_n2_0.05"].as_f64().unwrap()
        ));
    }

    #[test]
    fn precision_flags_effect_above_and_not_below_e_crit() {
        // E_crit = t(0.975, 10)·0.5657 = 1.2604 (scipy fixture).
        let c = Critical::from_precision(0.8, 10.0, 8, 1, 0.05).unwrap();
        assert_eq!(judge(1.3, &c), Some(true));
        assert_eq!(judge(-1.2, &c), Some(false));
    }

    #[test]
    fn pure_error_flags_effect_above_and_not_below_e_crit() {
        let c = Critical::from_pure_error(0.8, 10.0, 8, 0.05).unwrap();
        assert_eq!(c.method, Method::Anova);
        assert_eq!(judge(1.3, &c), Some(true));
        assert_eq!(judge(1.2, &c), Some(false));
    }

    #[test]
    fn precision_with_non_positive_df_is_an_error() {
        assert!(matches!(
            Critical::from_precision(0.8, 0.0, 8, 1, 0.05),
            Err(StatError::DegreesOfFreedom { .. })
        ));
        assert!(Critical::from_precision(f64::NAN, 5.0, 8, 1, 0.05).is_err());
        assert!(Critical::from_precision(0.8, 5.0, 1, 1, 0.05).is_err());
    }

    #[test]
    fn precision_of_zero_cannot_judge() {
        let c = Critical::from_precision(0.0, 5.0, 8, 1, 0.05).unwrap();
        assert_eq!(c.e_crit, None);
        assert!(c.note.is_some());
    }

    #[test]
    fn alpha_outside_zero_to_half_is_an_error() {
        for alpha in [0.0, -0.05, 0.6, 1.0, f64::NAN] {
            assert!(matches!(
                Critical::lenth(&BHH_5_11, alpha),
                Err(StatError::Alpha { .. })
            ));
            assert!(matches!(
                Critical::from_precision(1.0, 5.0, 8, 1, alpha),
                Err(StatError::Alpha { .. })
            ));
        }
        assert!(Critical::lenth(&BHH_5_11, 0.5).is_ok());
    }

    #[test]
    fn too_few_contrasts_is_an_error_naming_the_minimum() {
        let err = Critical::lenth(&[1.0, 2.0], 0.05).unwrap_err();
        assert_eq!(
            err,
            StatError::TooFew {
                what: "effects for a pseudo standard error",
                got: 2,
                need: 7
            }
        );
        assert!(err.to_string().contains("need at least 7"));
        assert!(Critical::dong(&[1.0], 0.05).is_err());
    }

    #[test]
    fn nan_effect_is_an_error_not_a_panic() {
        assert!(matches!(
            Critical::lenth(&[1.0, f64::NAN, 2.0], 0.05),
            Err(StatError::NotFinite { .. })
        ));
        let c = Critical::lenth(&BHH_5_11, 0.05).unwrap();
        assert_eq!(judge(f64::NAN, &c), None);
    }

    #[test]
    fn method_serialises_as_kebab_case() {
        let c = Critical::lenth(&BHH_5_11, 0.05).unwrap();
        let v = serde_json::to_value(&c).unwrap();
        assert_eq!(v["method"], "lenth");
        assert!(v.get("e_crit").is_some());
        assert_eq!(serde_json::to_value(Method::Anova).unwrap(), "anova");
    }
}

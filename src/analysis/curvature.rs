//! Curvature check from centre points: do the nominal (centre) runs sit on the plane
//! through the factorial runs? A robustness study needs this before it trusts effects
//! estimated from the corners only.

use serde::Serialize;

use super::quantile::{StatError, t_sf_two_sided};

/// Result of the curvature test.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Curvature {
    /// Number of factorial values n_F.
    pub n_factorial: usize,
    /// Number of centre values n_C.
    pub n_centre: usize,
    /// Mean of the factorial values ȳ_F.
    pub factorial_mean: f64,
    /// Mean of the centre values ȳ_C.
    pub centre_mean: f64,
    /// Curvature estimate ȳ_F − ȳ_C.
    pub difference: f64,
    /// Pure-error standard deviation used.
    pub s: f64,
    /// Its degrees of freedom (n_C − 1 when taken from the centre points).
    pub df: f64,
    /// Whether s came from the centre points (`false`: supplied by the caller).
    pub s_from_centre_points: bool,
    /// SE(ȳ_F − ȳ_C) = s·√(1/n_F + 1/n_C).
    pub se: f64,
    /// t = (ȳ_F − ȳ_C)/SE; `None` when s = 0.
    pub t: Option<f64>,
    /// Two-sided p-value of t; `None` when s = 0.
    pub p: Option<f64>,
    /// SS_curvature = n_F·n_C·(ȳ_F − ȳ_C)²/(n_F + n_C), one degree of freedom.
    pub ss_curvature: f64,
    /// F = SS_curvature/s² = t², on 1 and ν df (same p as the t test); `None` when s = 0.
    pub f: Option<f64>,
    /// Why t and p are missing, if they are.
    pub note: Option<String>,
}

/// Curvature test with pure error from the centre points:
/// ȳ_F − ȳ_C, s² the variance of the centre values with n_C − 1 df,
/// SE = s·√(1/n_F + 1/n_C), t = (ȳ_F − ȳ_C)/SE, two-sided p on n_C − 1 df.
/// Equivalently SS_curvature = n_F n_C (ȳ_F − ȳ_C)²/(n_F + n_C) and F = SS/s² on 1 and
/// n_C − 1 df (Montgomery, Design and Analysis of Experiments, ch. 6, "Addition of center
/// points to the 2^k design").
///
/// `factorial` holds one value per factorial run (the run mean if a run has several
/// determinations); n_F is their count. Needs n_F ≥ 1 and n_C ≥ 2.
pub fn curvature(factorial: &[f64], centre: &[f64]) -> Result<Curvature, StatError> {
    check(factorial, "factorial values", 1)?;
    check(centre, "centre-point values", 2)?;
    let yc = mean(centre);
    let nc = centre.len();
    let s = (centre.iter().map(|v| (v - yc) * (v - yc)).sum::<f64>() / (nc - 1) as f64).sqrt();
    build(factorial, centre, s, (nc - 1) as f64, true)
}

/// Curvature test with an external pure-error standard deviation `s` on `df` degrees of
/// freedom (e.g. from replicated factorial runs or the method's repeatability); otherwise
/// as [`curvature`]. Needs n_F ≥ 1 and n_C ≥ 1.
pub fn curvature_with_error(
    factorial: &[f64],
    centre: &[f64],
    s: f64,
    df: f64,
) -> Result<Curvature, StatError> {
    check(factorial, "factorial values", 1)?;
    check(centre, "centre-point values", 1)?;
    if !s.is_finite() || s < 0.0 {
        return Err(StatError::OutOfRange {
            what: "the pure-error standard deviation",
            expected: "a finite number of 0 or more",
            value: s,
        });
    }
    if df.is_nan() || df <= 0.0 {
        return Err(StatError::DegreesOfFreedom {
            what: "the pure-error standard deviation",
            df,
        });
    }
    build(factorial, centre, s, df, false)
}

/// Curvature from the fitted model: the model's prediction at the nominal setting ŷ₀ (from
/// the two-level runs; with numeric factors only this is the intercept) against the nominal
/// runs' mean ȳ_C. d = ŷ₀ − ȳ_C; SE = s·√(x₀ᵀ(XᵀX)⁻¹x₀ + 1/n_C); t = d/SE on the error's
/// df; SS = d²/(x₀ᵀ(XᵀX)⁻¹x₀ + 1/n_C). For an orthogonal design with numeric factors
/// x₀ᵀ(XᵀX)⁻¹x₀ = 1/n_F and this is Montgomery's test (Design and Analysis of Experiments,
/// ch. 6, "Addition of center points to the 2^k design").
///
/// `n_centre_eff` is the number of independent values behind ȳ_C (n_C, or 1 when a drift
/// correction expressed every nominal run at the first one's level). `s = 0` or `df = 0`
/// give no test (the note says why).
pub fn from_model(
    predicted: f64,
    variance_factor: f64,
    n_factorial: usize,
    centre: &[f64],
    n_centre_eff: f64,
    s: f64,
    df: f64,
) -> Result<Curvature, StatError> {
    check(centre, "centre-point values", 1)?;
    if !predicted.is_finite() || !variance_factor.is_finite() || variance_factor <= 0.0 {
        return Err(StatError::NotFinite {
            what: "the model prediction at the nominal setting",
            value: predicted,
        });
    }
    let yc = mean(centre);
    let d = predicted - yc;
    let factor = variance_factor + 1.0 / n_centre_eff.max(1.0);
    let se = s * factor.sqrt();
    let ss = d * d / factor;
    let testable = s > 0.0 && df > 0.0 && s.is_finite();
    let (t, p, f, note) = if testable {
        let t = d / se;
        (
            Some(t),
            Some(t_sf_two_sided(t, df)?),
            Some(ss / (s * s)),
            None,
        )
    } else {
        (
            None,
            None,
            None,
            Some(if df > 0.0 {
                "pure error is zero: the curvature cannot be tested".to_string()
            } else {
                "no pure error (no replicated runs and fewer than two nominal runs): the curvature cannot be tested".to_string()
            }),
        )
    };
    Ok(Curvature {
        n_factorial,
        n_centre: centre.len(),
        factorial_mean: predicted,
        centre_mean: yc,
        difference: d,
        s,
        df,
        s_from_centre_points: false,
        se,
        t,
        p,
        ss_curvature: ss,
        f,
        note,
    })
}

fn build(
    factorial: &[f64],
    centre: &[f64],
    s: f64,
    df: f64,
    from_centre: bool,
) -> Result<Curvature, StatError> {
    let (nf, nc) = (factorial.len() as f64, centre.len() as f64);
    let (yf, yc) = (mean(factorial), mean(centre));
    let d = yf - yc;
    let se = s * (1.0 / nf + 1.0 / nc).sqrt();
    let ss = nf * nc * d * d / (nf + nc);
    let (t, p, f, note) = if s > 0.0 {
        let t = d / se;
        (
            Some(t),
            Some(t_sf_two_sided(t, df)?),
            Some(ss / (s * s)),
            None,
        )
    } else {
        (
            None,
            None,
            None,
            Some("pure error is zero: the curvature cannot be tested".to_string()),
        )
    };
    Ok(Curvature {
        n_factorial: factorial.len(),
        n_centre: centre.len(),
        factorial_mean: yf,
        centre_mean: yc,
        difference: d,
        s,
        df,
        s_from_centre_points: from_centre,
        se,
        t,
        p,
        ss_curvature: ss,
        f,
        note,
    })
}

fn check(values: &[f64], what: &'static str, need: usize) -> Result<(), StatError> {
    if values.len() < need {
        return Err(StatError::TooFew {
            what,
            got: values.len(),
            need,
        });
    }
    match values.iter().find(|v| !v.is_finite()) {
        Some(&value) => Err(StatError::NotFinite { what, value }),
        None => Ok(()),
    }
}

fn mean(v: &[f64]) -> f64 {
    v.iter().sum::<f64>() / v.len() as f64
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::Value;

    // Reference values from numpy/scipy: tests/fixtures/stats/make_stats_fixtures.py,
    // function curvature(); versions in the file.
    const FIXTURE: &str = include_str!("../../tests/fixtures/stats/curvature.json");

    fn fx() -> Value {
        serde_json::from_str(FIXTURE).unwrap()
    }

    fn vals(v: &Value) -> Vec<f64> {
        v.as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_f64().unwrap())
            .collect()
    }

    fn close(got: f64, want: f64) -> bool {
        (got - want).abs() <= 1e-10 * want.abs().max(1e-3)
    }

    fn check_case(c: &Value) -> Curvature {
        let r = curvature(&vals(&c["factorial"]), &vals(&c["centre"])).unwrap();
        assert!(close(r.difference, c["diff"].as_f64().unwrap()));
        assert!(close(r.s, c["s"].as_f64().unwrap()));
        assert!(close(r.se, c["se"].as_f64().unwrap()));
        assert!(close(r.t.unwrap(), c["t"].as_f64().unwrap()));
        assert!(close(r.p.unwrap(), c["p"].as_f64().unwrap()), "{r:?}");
        assert!(close(r.ss_curvature, c["ss_curvature"].as_f64().unwrap()));
        assert!(close(r.f.unwrap(), c["f"].as_f64().unwrap()));
        // The F form gives the same p as the t form (scipy f.sf in the fixture).
        assert!(close(r.p.unwrap(), c["p_f"].as_f64().unwrap()));
        r
    }

    #[test]
    fn montgomery_runger_yield_example_shows_no_curvature() {
        // Data: Montgomery & Runger, Applied Statistics and Probability for Engineers (3rd
        // ed.), supplemental ch. 14, Example S14-2 / Fig. S14-4 (2^2 + 5 centre points).
        // By hand: ȳ_F = 40.425, ȳ_C = 40.46, SS_curvature = 4·5·0.035²/9 = 0.00272; the
        // printed 0.0027 is from memory (page not seen). Other numbers: scipy fixture.
        let r = check_case(&fx()["montgomery_runger_s14_2"]);
        assert!((r.factorial_mean - 40.425).abs() < 1e-12);
        assert!((r.centre_mean - 40.46).abs() < 1e-12);
        assert!((r.ss_curvature - 0.0027).abs() < 5e-5);
        assert_eq!(r.df, 4.0);
        assert!(r.p.unwrap() > 0.05);
    }

    #[test]
    fn invented_curved_response_is_flagged() {
        let r = check_case(&fx()["invented_curved"]);
        assert!(r.p.unwrap() < 0.01);
    }

    #[test]
    fn external_pure_error_matches_scipy() {
        let f = fx();
        let c = &f["montgomery_runger_s14_2"];
        let e = &f["external_error"];
        let r =
            curvature_with_error(&vals(&c["factorial"]), &vals(&c["centre"]), 0.25, 12.0).unwrap();
        assert!(!r.s_from_centre_points);
        assert!(close(r.se, e["se"].as_f64().unwrap()));
        assert!(close(r.p.unwrap(), e["p"].as_f64().unwrap()));
    }

    #[test]
    fn identical_centre_points_cannot_test() {
        let r = curvature(&[1.0, 2.0, 3.0, 4.0], &[2.0, 2.0, 2.0]).unwrap();
        assert_eq!(r.t, None);
        assert!(r.note.is_some());
    }

    #[test]
    fn one_centre_point_is_too_few_for_internal_error() {
        let err = curvature(&[1.0, 2.0], &[1.5]).unwrap_err();
        assert!(matches!(err, StatError::TooFew { need: 2, .. }));
        assert!(curvature(&[], &[1.0, 2.0]).is_err());
        assert!(curvature(&[1.0], &[1.0, f64::NAN]).is_err());
    }
}

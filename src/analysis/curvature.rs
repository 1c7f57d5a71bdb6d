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

    /// The orthogonal, all-numeric case: the model's prediction at the centre is ȳ_F with
    /// x₀ᵀ(XᵀX)⁻¹x₀ = 1/n_F, and the centre points give s on n_C − 1 df.
    fn centre_point_test(factorial: &[f64], centre: &[f64]) -> Curvature {
        let nf = factorial.len();
        let yc = mean(centre);
        let nc = centre.len() as f64;
        let s = (centre.iter().map(|v| (v - yc).powi(2)).sum::<f64>() / (nc - 1.0)).sqrt();
        from_model(
            mean(factorial),
            1.0 / nf as f64,
            nf,
            centre,
            nc,
            s,
            nc - 1.0,
        )
        .unwrap()
    }

    fn check_case(c: &Value) -> Curvature {
        let r = centre_point_test(&vals(&c["factorial"]), &vals(&c["centre"]));
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
        let fac = vals(&c["factorial"]);
        let cen = vals(&c["centre"]);
        let r = from_model(mean(&fac), 0.25, 4, &cen, cen.len() as f64, 0.25, 12.0).unwrap();
        assert!(close(r.se, e["se"].as_f64().unwrap()));
        assert!(close(r.p.unwrap(), e["p"].as_f64().unwrap()));
    }

    #[test]
    fn identical_centre_points_cannot_test() {
        let r = centre_point_test(&[1.0, 2.0, 3.0, 4.0], &[2.0, 2.0, 2.0]);
        assert_eq!(r.t, None);
        assert!(r.note.is_some());
    }

    #[test]
    fn a_prediction_that_is_not_finite_is_refused() {
        assert!(from_model(f64::NAN, 0.25, 4, &[1.0, 2.0], 2.0, 0.1, 1.0).is_err());
        assert!(from_model(1.0, 0.25, 4, &[], 0.0, 0.1, 1.0).is_err());
        assert!(from_model(1.0, 0.25, 4, &[1.0, f64::NAN], 2.0, 0.1, 1.0).is_err());
    }
}

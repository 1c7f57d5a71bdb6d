//! Planning with power: before any result, can the design detect an effect as large as the
//! declared limit? A screening design too small for the method's precision calls everything
//! "robust"; this module says so before the study is run.
//!
//! Power of the two-sided t test of an effect δ with standard error SE and ν degrees of
//! freedom: P(|T'| > t(1 − α/2, ν)), T' noncentral t with ν df and noncentrality δ/SE
//! (Lenth, "Some practical guidelines for effective sample size determination", Am. Stat. 55
//! (2001) 187–193). The noncentral t distribution function is computed exactly by the series
//! of Lenth, "Cumulative distribution function of the non-central t distribution", Appl.
//! Statist. 38 (1989) 185–189 (algorithm AS 243), checked against scipy.stats.nct.

use serde::Serialize;
use statrs::distribution::{ContinuousCDF, Normal};
use statrs::function::beta::beta_reg;
use statrs::function::gamma::ln_gamma;

use super::quantile::{StatError, t_quantile};
use crate::design::{Design, catalogue, plackett_burman};
use crate::study::{LimitUnit, Study};

/// Power asked of a design unless stated (common practice in sample-size planning).
pub const DEFAULT_TARGET: f64 = 0.8;

/// Largest full factorial offered as a candidate (2^10 = 1,024 runs).
const MAX_FULL_FACTORIAL_CANDIDATE: usize = 10;

/// P(T' ≤ t) for the noncentral t distribution with `df` degrees of freedom (any real > 0,
/// or +∞) and noncentrality `delta`, by the series of AS 243 (Lenth 1989), accurate to about
/// 1e-12; `df = +∞` gives the normal Φ(t − δ).
pub fn nct_cdf(t: f64, df: f64, delta: f64) -> Result<f64, StatError> {
    if !t.is_finite() || !delta.is_finite() {
        return Err(StatError::NotFinite {
            what: "the noncentral t argument",
            value: if t.is_finite() { delta } else { t },
        });
    }
    if df.is_nan() || df <= 0.0 {
        return Err(StatError::DegreesOfFreedom {
            what: "the noncentral t distribution",
            df,
        });
    }
    let normal = Normal::standard();
    if df.is_infinite() {
        return Ok(normal.cdf(t - delta));
    }
    // For t < 0: P(T' ≤ t; δ) = 1 − P(T' ≤ −t; −δ).
    let (tt, del, negative) = if t < 0.0 {
        (-t, -delta, true)
    } else {
        (t, delta, false)
    };
    let mut tnc = 0.0;
    if tt > 0.0 {
        const ERRMAX: f64 = 1e-13;
        const ITRMAX: u32 = 2000;
        let x = tt * tt / (tt * tt + df);
        let lambda = del * del;
        let mut p = 0.5 * (-0.5 * lambda).exp();
        let mut q = (2.0 / std::f64::consts::PI).sqrt() * p * del;
        let mut s = 0.5 - p;
        let mut a = 0.5;
        let b = 0.5 * df;
        let rxb = (1.0 - x).powf(b);
        let albeta = ln_gamma(a) + ln_gamma(b) - ln_gamma(a + b);
        let mut xodd = beta_reg(a, b, x);
        let mut godd = 2.0 * rxb * (a * x.ln() - albeta).exp();
        let mut xeven = 1.0 - rxb;
        let mut geven = b * x * rxb;
        tnc = p * xodd + q * xeven;
        let mut en = 1.0;
        for _ in 0..ITRMAX {
            a += 1.0;
            xodd -= godd;
            xeven -= geven;
            godd *= x * (a + b - 1.0) / a;
            geven *= x * (a + b - 0.5) / (a + 0.5);
            p *= lambda / (2.0 * en);
            q *= lambda / (2.0 * en + 1.0);
            s -= p;
            en += 1.0;
            tnc += p * xodd + q * xeven;
            if 2.0 * s * (xodd - godd) <= ERRMAX {
                break;
            }
        }
    }
    tnc += normal.cdf(-del);
    let cdf = if negative { 1.0 - tnc } else { tnc };
    Ok(cdf.clamp(0.0, 1.0))
}

/// Power of the two-sided t test at level `alpha` for an effect `effect` with standard error
/// `se` on `df` degrees of freedom: P(T' > t_c) + P(T' < −t_c), t_c = t(1 − α/2, ν).
pub fn power(effect: f64, se: f64, df: f64, alpha: f64) -> Result<f64, StatError> {
    if !(se > 0.0 && se.is_finite()) {
        return Err(StatError::OutOfRange {
            what: "the standard error of an effect",
            expected: "greater than 0",
            value: se,
        });
    }
    let tc = t_quantile(1.0 - alpha / 2.0, df)?;
    let ncp = effect.abs() / se;
    Ok((1.0 - nct_cdf(tc, df, ncp)? + nct_cdf(-tc, df, ncp)?).clamp(0.0, 1.0))
}

/// The smallest |effect| detected with probability `target` (the minimum detectable
/// effect), by bisection on the noncentrality to 1e-10 relative.
pub fn minimum_detectable(se: f64, df: f64, alpha: f64, target: f64) -> Result<f64, StatError> {
    if !(target > alpha && target < 1.0) {
        return Err(StatError::OutOfRange {
            what: "the target power",
            expected: "above alpha and below 1",
            value: target,
        });
    }
    let (mut lo, mut hi) = (0.0, 1.0);
    while power(hi * se, se, df, alpha)? < target {
        hi *= 2.0;
        if hi > 1e6 {
            return Err(StatError::Shape(
                "the target power cannot be reached".into(),
            ));
        }
    }
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if power(mid * se, se, df, alpha)? < target {
            lo = mid;
        } else {
            hi = mid;
        }
        if hi - lo <= 1e-10 * hi {
            break;
        }
    }
    Ok(hi * se)
}

/// Where the standard deviation of a run comes from.
#[derive(Debug, Clone, Serialize)]
pub struct Precision {
    /// Standard deviation of one determination.
    pub s: f64,
    /// Its degrees of freedom (`null`: treated as known, ν = ∞).
    pub df: Option<f64>,
    /// Determinations averaged per run.
    pub determinations: usize,
    /// `precision-rule` or `planning-estimate`.
    pub from: String,
    /// Where the value comes from, as stated.
    pub source: Option<String>,
}

/// One design that could study the same factors.
#[derive(Debug, Clone, Serialize)]
pub struct Candidate {
    /// `full-factorial`, `fractional-factorial` or `plackett-burman`.
    pub kind: String,
    /// Two-level runs, replicates included.
    pub runs: usize,
    /// Resolution of a regular fraction or full factorial (`null` for Plackett–Burman).
    pub resolution: Option<u32>,
    /// Generators of a catalogue fraction.
    pub generators: Vec<String>,
    /// SE of an effect.
    pub se: f64,
    /// Minimum detectable effect at the target power.
    pub mde: f64,
    /// Power to detect the limit, when there is one.
    pub power: Option<f64>,
    /// The design the study plans.
    pub planned: bool,
}

/// Why a response's power cannot be computed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum PowerGap {
    /// No precision rule and no planning estimate of the standard deviation.
    NoPrecision,
    /// A percent limit without an expected response level to turn it into units.
    NoExpectedLevel,
    /// No effect limit declared: only the minimum detectable effect is given.
    NoLimit,
}

/// The planning answer for one response.
#[derive(Debug, Clone, Serialize)]
pub struct ResponsePower {
    /// Response id.
    pub id: String,
    /// Name.
    pub name: String,
    /// Unit.
    pub unit: Option<String>,
    /// The precision the answer rests on.
    pub precision: Option<Precision>,
    /// Significance level.
    pub alpha: f64,
    /// The strictest declared limit in response units.
    pub limit: Option<f64>,
    /// SE of an effect for the planned design.
    pub se: Option<f64>,
    /// Power to detect an effect as large as the limit.
    pub power: Option<f64>,
    /// Minimum detectable effect at the target power.
    pub mde: Option<f64>,
    /// The same for other designs of these factors.
    pub candidates: Vec<Candidate>,
    /// What is missing, if anything.
    pub gaps: Vec<PowerGap>,
}

/// The planning answer of a study.
#[derive(Debug, Clone, Serialize)]
pub struct PowerAnalysis {
    /// The power asked of the design.
    pub target: f64,
    /// Two-level runs planned (replicates included).
    pub planned_runs: usize,
    /// One entry per response.
    pub responses: Vec<ResponsePower>,
}

/// Power and minimum detectable effects of the planned design and of its alternatives, for
/// every response with a precision (a precision rule, or `planning.sd`).
pub fn analyse(study: &Study, design: &Design, target: f64) -> Result<PowerAnalysis, StatError> {
    let k = study.factors.len();
    let reps = design.replicates.max(1);
    let planned_runs = design.runs.iter().filter(|r| !r.nominal).count();
    let determinations = study
        .results
        .as_ref()
        .and_then(|r| r.determinations)
        .unwrap_or(1) as usize;
    let mut responses = Vec::new();
    for (r, response) in study.responses.iter().enumerate() {
        let rule = study
            .significance
            .iter()
            .find(|s| s.response == r && s.method == crate::analysis::criterion::Method::Precision);
        let precision = match (rule, &response.planning) {
            (Some(rule), _) => rule.s.map(|s| Precision {
                s,
                df: rule.df,
                determinations: rule.determinations,
                from: "precision-rule".into(),
                source: rule.source.clone(),
            }),
            (None, Some(p)) if p.sd.is_finite() => Some(Precision {
                s: p.sd,
                df: p.df,
                determinations,
                from: "planning-estimate".into(),
                source: p.source.clone(),
            }),
            (None, _) => None,
        };
        let alpha = study
            .significance
            .iter()
            .find(|s| s.response == r)
            .map_or(0.05, |s| s.alpha);
        let mut gaps = Vec::new();
        let level = response.planning.as_ref().and_then(|p| p.level);
        let limits: Vec<f64> = study
            .limits
            .iter()
            .filter(|l| l.response == r)
            .filter_map(|l| match l.unit {
                LimitUnit::Absolute => Some(l.limit),
                LimitUnit::Percent => level.map(|m| l.limit * m.abs() / 100.0),
            })
            .collect();
        let has_limit = study.limits.iter().any(|l| l.response == r);
        if !has_limit {
            gaps.push(PowerGap::NoLimit);
        } else if limits.is_empty() {
            gaps.push(PowerGap::NoExpectedLevel);
        }
        let limit = limits.into_iter().reduce(f64::min);
        let Some(p) = precision else {
            gaps.push(PowerGap::NoPrecision);
            responses.push(ResponsePower {
                id: response.id.clone(),
                name: response.name.clone(),
                unit: response.unit.clone(),
                precision: None,
                alpha,
                limit,
                se: None,
                power: None,
                mde: None,
                candidates: Vec::new(),
                gaps,
            });
            continue;
        };
        let df = p.df.unwrap_or(f64::INFINITY);
        let se_for = |runs: usize| 2.0 * p.s / ((runs * p.determinations.max(1)) as f64).sqrt();
        let evaluate = |runs: usize| -> Result<(f64, f64, Option<f64>), StatError> {
            let se = se_for(runs);
            let mde = minimum_detectable(se, df, alpha, target)?;
            let pw = limit.map(|l| power(l, se, df, alpha)).transpose()?;
            Ok((se, mde, pw))
        };
        let (se, mde, pw) = evaluate(planned_runs)?;
        let mut candidates = Vec::new();
        for c in candidate_designs(k) {
            let runs = c.0 * reps;
            let (se, mde, power) = evaluate(runs)?;
            candidates.push(Candidate {
                kind: c.1.into(),
                runs,
                resolution: c.2,
                generators: c.3,
                se,
                mde,
                power,
                planned: runs == planned_runs && c.1 == kind_name(study),
            });
        }
        responses.push(ResponsePower {
            id: response.id.clone(),
            name: response.name.clone(),
            unit: response.unit.clone(),
            precision: Some(p),
            alpha,
            limit,
            se: Some(se),
            power: pw,
            mde: Some(mde),
            candidates,
            gaps,
        });
    }
    Ok(PowerAnalysis {
        target,
        planned_runs,
        responses,
    })
}

fn kind_name(study: &Study) -> &'static str {
    match study.design.kind {
        crate::study::DesignKind::FullFactorial => "full-factorial",
        crate::study::DesignKind::FractionalFactorial | crate::study::DesignKind::Youden => {
            "fractional-factorial"
        }
        crate::study::DesignKind::PlackettBurman => "plackett-burman",
        crate::study::DesignKind::Explicit => "explicit",
    }
}

/// Designs for `k` factors: the full factorial (up to 2^10), each catalogue fraction, and
/// the four smallest Plackett–Burman sizes with room for the factors; as (runs, kind,
/// resolution, generators), by runs.
fn candidate_designs(k: usize) -> Vec<(usize, &'static str, Option<u32>, Vec<String>)> {
    let mut out = Vec::new();
    if k <= MAX_FULL_FACTORIAL_CANDIDATE {
        out.push((1usize << k, "full-factorial", None, Vec::new()));
    }
    for e in catalogue::entries().iter().filter(|e| e.factors == k) {
        out.push((
            e.runs,
            "fractional-factorial",
            Some(e.resolution),
            e.generators.iter().map(|g| g.to_string()).collect(),
        ));
    }
    for &n in plackett_burman::SIZES.iter().filter(|&&n| n > k).take(4) {
        out.push((n, "plackett-burman", None, Vec::new()));
    }
    out.sort_by_key(|c| c.0);
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::Value;

    // scipy.stats.nct values: tests/fixtures/stats/power.json, made by
    // python3 tests/fixtures/stats/make_stats_fixtures.py (versions in the file).
    const FIXTURE: &str = include_str!("../../tests/fixtures/stats/power.json");

    fn fx() -> Value {
        serde_json::from_str(FIXTURE).unwrap()
    }

    fn f(v: &Value, k: &str) -> f64 {
        v[k].as_f64().unwrap()
    }

    #[test]
    fn noncentral_t_cdf_matches_scipy() {
        for r in fx()["nct_cdf"].as_array().unwrap() {
            let got = nct_cdf(f(r, "t"), f(r, "df"), f(r, "nc")).unwrap();
            let want = f(r, "value");
            assert!((got - want).abs() <= 1e-10, "{r}: got {got}");
        }
    }

    #[test]
    fn power_matches_scipy() {
        for r in fx()["power"].as_array().unwrap() {
            let got = power(f(r, "effect"), f(r, "se"), f(r, "df"), f(r, "alpha")).unwrap();
            assert!((got - f(r, "value")).abs() <= 1e-9, "{r}: got {got}");
        }
    }

    #[test]
    fn minimum_detectable_effect_gives_the_target_power() {
        for r in fx()["mde"].as_array().unwrap() {
            let got =
                minimum_detectable(f(r, "se"), f(r, "df"), f(r, "alpha"), f(r, "target")).unwrap();
            assert!(
                (got - f(r, "value")).abs() <= 1e-7 * f(r, "value"),
                "{r}: got {got}"
            );
        }
    }

    #[test]
    fn infinite_df_is_the_normal_distribution() {
        // Φ(1.96 − 0) = 0.9750021048517795 (scipy.stats.norm.cdf(1.96), scipy 1.17.1).
        let got = nct_cdf(1.96, f64::INFINITY, 0.0).unwrap();
        assert!((got - 0.9750021048517795).abs() < 1e-9, "{got}");
    }
}

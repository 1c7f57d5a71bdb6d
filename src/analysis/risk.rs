//! Routine risk: how likely a routine run falls outside a response's limits, given how much
//! each factor really varies in routine use (its `routine` ± a and distribution), the fitted
//! model and the run-to-run error the study measured.
//!
//! The factors' routine variations are propagated through the fitted model by Monte Carlo
//! (JCGM 101:2008, GUM Supplement 1) with a fixed seed, so the same study gives the same
//! number; the number of draws and the Monte Carlo standard error √(p(1 − p)/M) are reported
//! with the probability.

use rand_core::RngCore;
use serde::Serialize;

use super::decision::Distribution;
use crate::design::order;
use crate::study::{Levels, Study};

/// Monte Carlo draws per response (the Monte Carlo standard error of a probability is at
/// most 0.5/√M = 0.0016).
pub const DRAWS: usize = 100_000;

/// Seed of the draws (fixed: the report must be reproducible byte for byte).
pub const SEED: u64 = 20_081_101;

/// One factor's routine variation, in coded units about the nominal setting.
#[derive(Debug, Clone, Serialize)]
pub struct RoutineFactor {
    /// Factor id.
    pub factor: String,
    /// Routine half-width a, in the factor's unit.
    pub routine: f64,
    /// Its distribution.
    pub distribution: Distribution,
}

/// Where the run-to-run error came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum ErrorSource {
    /// The pure error of repeated runs.
    PureError,
    /// The precision rule's s (divided by √n for n determinations per run).
    PrecisionRule,
    /// The residual of the fit.
    Residual,
    /// No estimate: only the factors' variation is propagated.
    None,
}

/// The probability that a routine run falls outside the limits.
#[derive(Debug, Clone, Serialize)]
pub struct RoutineRisk {
    /// Lower limit.
    pub min: Option<f64>,
    /// Upper limit.
    pub max: Option<f64>,
    /// Factors varied (the others held at nominal).
    pub factors: Vec<RoutineFactor>,
    /// Model terms used (labels): the main effects and the clean interactions judged relevant
    /// or significant.
    pub terms: Vec<String>,
    /// Standard deviation of the run-to-run error added to each draw.
    pub error_sd: f64,
    /// Its source.
    pub error_source: ErrorSource,
    /// Probability of a result below `min` or above `max`.
    pub probability: f64,
    /// Monte Carlo standard error of `probability`.
    pub mc_se: f64,
    /// Number of draws.
    pub draws: usize,
    /// Seed of the draws.
    pub seed: u64,
}

/// A term of the model: b (half the effect) and the factor indices of its column.
pub struct Term {
    /// Label.
    pub label: String,
    /// Coefficient b = E/2.
    pub b: f64,
    /// Factor indices.
    pub factors: Vec<usize>,
}

/// Routine risk of one response; `None` when there is no limit or no factor varies.
pub fn routine_risk(
    study: &Study,
    intercept: f64,
    terms: &[Term],
    limits: (Option<f64>, Option<f64>),
    error: (f64, ErrorSource),
) -> Option<RoutineRisk> {
    let (min, max) = limits;
    if min.is_none() && max.is_none() {
        return None;
    }
    // Per factor: (centre, half-range, nominal, routine a, distribution) for numeric factors
    // with a routine variation; others sit at their nominal setting.
    struct Varied {
        index: usize,
        nominal_coded: f64,
        a_coded: f64,
        distribution: Distribution,
    }
    let mut varied = Vec::new();
    let mut fixed = vec![0.0; study.factors.len()];
    let mut routine = Vec::new();
    for (i, f) in study.factors.iter().enumerate() {
        match &f.levels {
            Levels::Numeric { nominal, low, high } => {
                let mid = (low + high) / 2.0;
                let half = (high - low) / 2.0;
                let nominal_coded = (nominal - mid) / half;
                if let Some(slot) = fixed.get_mut(i) {
                    *slot = nominal_coded;
                }
                if let Some((a, d)) = f.routine {
                    varied.push(Varied {
                        index: i,
                        nominal_coded,
                        a_coded: a / half,
                        distribution: d,
                    });
                    routine.push(RoutineFactor {
                        factor: f.id.clone(),
                        routine: a,
                        distribution: d,
                    });
                }
            }
            Levels::Categorical { .. } => {
                if let Some(slot) = fixed.get_mut(i) {
                    *slot = -1.0; // the nominal level
                }
            }
        }
    }
    if varied.is_empty() {
        return None;
    }
    let mut rng = order::generator(SEED);
    let mut uniform = || (rng.next_u64() >> 11) as f64 / (1u64 << 53) as f64;
    let mut x = fixed.clone();
    let mut outside = 0usize;
    let (error_sd, error_source) = error;
    for _ in 0..DRAWS {
        for v in &varied {
            let u = match v.distribution {
                Distribution::Rectangular => 2.0 * uniform() - 1.0,
                Distribution::Triangular => uniform() + uniform() - 1.0,
                Distribution::Normal => standard_normal(&mut uniform) / 1.96,
            };
            if let Some(slot) = x.get_mut(v.index) {
                *slot = v.nominal_coded + v.a_coded * u;
            }
        }
        let mut y = intercept;
        for t in terms {
            y += t.b
                * t.factors
                    .iter()
                    .map(|&j| x.get(j).copied().unwrap_or(0.0))
                    .product::<f64>();
        }
        if error_sd > 0.0 {
            y += error_sd * standard_normal(&mut uniform);
        }
        if min.is_some_and(|m| y < m) || max.is_some_and(|m| y > m) {
            outside += 1;
        }
    }
    let p = outside as f64 / DRAWS as f64;
    Some(RoutineRisk {
        min,
        max,
        factors: routine,
        terms: terms.iter().map(|t| t.label.clone()).collect(),
        error_sd,
        error_source,
        probability: p,
        mc_se: (p * (1.0 - p) / DRAWS as f64).sqrt(),
        draws: DRAWS,
        seed: SEED,
    })
}

/// A standard normal deviate by the Box–Muller transform (Box & Muller, Ann. Math. Statist.
/// 29 (1958) 610–611), from two uniforms in (0, 1].
fn standard_normal(uniform: &mut impl FnMut() -> f64) -> f64 {
    let u1 = 1.0 - uniform(); // (0, 1]: the logarithm stays finite
    let u2 = uniform();
    (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
}

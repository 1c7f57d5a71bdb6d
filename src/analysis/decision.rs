//! What a robustness study concludes from its effects: worst-case system-suitability
//! predictions, non-significance intervals of factors, and uncertainty contributions.

use serde::Serialize;

use super::quantile::StatError;

/// Which direction of the response is worse.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Direction {
    /// Lower is worse (e.g. resolution, plate count).
    Lower,
    /// Higher is worse (e.g. tailing factor, run time).
    Higher,
}

/// The coded level of a factor that moves the response in the worse direction.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum WorseLevel {
    /// The −1 level.
    Low,
    /// The +1 level.
    High,
    /// The effect is zero: neither level is worse.
    Either,
}

/// One factor's part in the worst case.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WorstFactor {
    /// Factor label.
    pub label: String,
    /// Its effect E.
    pub effect: f64,
    /// The level that worsens the response.
    pub level: WorseLevel,
}

/// Worst-case prediction within the studied domain.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WorstCase {
    /// The mean the prediction starts from.
    pub mean: f64,
    /// Direction that is worse.
    pub direction: Direction,
    /// ȳ ∓ Σ|E_i|/2.
    pub predicted: f64,
    /// Per factor, the level to set.
    pub factors: Vec<WorstFactor>,
}

/// Worst case of a response: ŷ_worst = ȳ − Σ|E_i|/2 when lower is worse, ȳ + Σ|E_i|/2 when
/// higher is worse, each factor at the level that worsens the response (Vander Heyden et
/// al., J. Chromatogr. A 845 (1999) 145–154). Pass only the effects the study judged
/// relevant or significant; half an effect because each factor moves from the centre to
/// one level.
pub fn worst_case(
    mean: f64,
    effects: &[(String, f64)],
    direction: Direction,
) -> Result<WorstCase, StatError> {
    if !mean.is_finite() {
        return Err(StatError::NotFinite {
            what: "the mean response",
            value: mean,
        });
    }
    if let Some((_, e)) = effects.iter().find(|(_, e)| !e.is_finite()) {
        return Err(StatError::NotFinite {
            what: "an effect",
            value: *e,
        });
    }
    let half: f64 = effects.iter().map(|(_, e)| e.abs()).sum::<f64>() / 2.0;
    let predicted = match direction {
        Direction::Lower => mean - half,
        Direction::Higher => mean + half,
    };
    let factors = effects
        .iter()
        .map(|(label, e)| {
            // A positive effect raises y at +1; lower-is-worse then wants −1.
            let raises_at_high = *e > 0.0;
            let level = if *e == 0.0 {
                WorseLevel::Either
            } else if raises_at_high == (direction == Direction::Higher) {
                WorseLevel::High
            } else {
                WorseLevel::Low
            };
            WorstFactor {
                label: label.clone(),
                effect: *e,
                level,
            }
        })
        .collect();
    Ok(WorstCase {
        mean,
        direction,
        predicted,
        factors,
    })
}

/// Most factors whose corners [`worst_corner`] searches (2^16 corners).
pub const MAX_CORNER_FACTORS: usize = 16;

/// Worst case of a model with interactions: the prediction b₀ + Σ_T (E_T/2)·x_T over every
/// corner of the factors involved (x_T the product of the factors' ±1 levels), the lowest
/// (or highest) kept. `terms` are (factor ids, effect); a main effect has one id. For main
/// effects only this equals [`worst_case`]. Ties keep the first corner in standard order.
pub fn worst_corner(
    intercept: f64,
    terms: &[(Vec<String>, f64)],
    direction: Direction,
) -> Result<WorstCase, StatError> {
    if !intercept.is_finite() {
        return Err(StatError::NotFinite {
            what: "the intercept",
            value: intercept,
        });
    }
    let mut factors: Vec<String> = Vec::new();
    for (ids, e) in terms {
        if !e.is_finite() {
            return Err(StatError::NotFinite {
                what: "an effect",
                value: *e,
            });
        }
        for id in ids {
            if !factors.contains(id) {
                factors.push(id.clone());
            }
        }
    }
    if factors.len() > MAX_CORNER_FACTORS {
        return Err(StatError::Shape(format!(
            "{} factors in the worst-case corner search; at most {MAX_CORNER_FACTORS}",
            factors.len()
        )));
    }
    let index: Vec<Vec<usize>> = terms
        .iter()
        .map(|(ids, _)| {
            ids.iter()
                .filter_map(|id| factors.iter().position(|f| f == id))
                .collect()
        })
        .collect();
    let mut best: Option<(f64, u32)> = None;
    for corner in 0u32..(1u32 << factors.len()) {
        let level = |j: usize| if corner >> j & 1 == 1 { 1.0 } else { -1.0 };
        let value = intercept
            + terms
                .iter()
                .zip(&index)
                .map(|((_, e), js)| e / 2.0 * js.iter().map(|&j| level(j)).product::<f64>())
                .sum::<f64>();
        let better = match (best, direction) {
            (None, _) => true,
            (Some((b, _)), Direction::Lower) => value < b,
            (Some((b, _)), Direction::Higher) => value > b,
        };
        if better {
            best = Some((value, corner));
        }
    }
    let (predicted, corner) = best.unwrap_or((intercept, 0));
    let main = |id: &str| {
        terms
            .iter()
            .find(|(ids, _)| ids.len() == 1 && ids[0] == id)
            .map_or(0.0, |(_, e)| *e)
    };
    Ok(WorstCase {
        mean: intercept,
        direction,
        predicted,
        factors: factors
            .iter()
            .enumerate()
            .map(|(j, id)| WorstFactor {
                label: id.clone(),
                effect: main(id),
                level: if corner >> j & 1 == 1 {
                    WorseLevel::High
                } else {
                    WorseLevel::Low
                },
            })
            .collect(),
    })
}

/// Non-significance interval of a quantitative factor, assuming the response is linear in
/// it: the width over which |E| stays below E_crit is w = (E_crit/|E|)·(high − low), and the
/// interval is nominal ± w/2 (Vander Heyden et al., J. Pharm. Biomed. Anal. 24 (2001)
/// 723–753, §6.3; the exact form there was not confirmed: verify).
///
/// `None` when |E| ≤ E_crit (the effect is not significant: the whole tested range
/// low..high is already fine), and when an input is not finite, E_crit ≤ 0 or high ≤ low.
pub fn non_significance_interval(
    effect: f64,
    e_crit: f64,
    low: f64,
    high: f64,
    nominal: f64,
) -> Option<(f64, f64)> {
    if ![effect, e_crit, low, high, nominal]
        .iter()
        .all(|v| v.is_finite())
        || e_crit <= 0.0
        || high <= low
    {
        return None;
    }
    if effect.abs() <= e_crit {
        return None;
    }
    let w = e_crit / effect.abs() * (high - low);
    Some((nominal - w / 2.0, nominal + w / 2.0))
}

/// How the routine variation ±a of a factor is distributed (defined once, with the study file).
pub use crate::study::model::Distribution;

/// One factor's contribution to the measurement uncertainty.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Contribution {
    /// Sensitivity coefficient c = E/(high − low), response units per factor unit.
    pub c: f64,
    /// Standard uncertainty of the factor in routine use, u(x).
    pub u_x: f64,
    /// Contribution to the response, u_i(y) = |c|·u(x).
    pub u_y: f64,
}

/// Uncertainty contribution of a factor from its robustness effect: c = E/(high − low),
/// u(x) from the routine half-width a by `distribution`, u_i(y) = |c|·u(x) (Barwick &
/// Ellison, VAM protocol for uncertainty evaluation from validation data, 2000;
/// Eurachem/CITAC Guide CG4, QUAM:2012). The divisors √3, √6 and 1.96 are the GUM's
/// (JCGM 100:2008 §4.3.7, §4.3.9, §4.3.4; section numbers from memory).
pub fn uncertainty(
    effect: f64,
    low: f64,
    high: f64,
    routine_half_width: f64,
    distribution: Distribution,
) -> Result<Contribution, StatError> {
    for (what, v) in [
        ("the effect", effect),
        ("the low level", low),
        ("the high level", high),
        ("the routine half-width", routine_half_width),
    ] {
        if !v.is_finite() {
            return Err(StatError::NotFinite { what, value: v });
        }
    }
    if high <= low {
        return Err(StatError::OutOfRange {
            what: "the high level minus the low level",
            expected: "greater than 0",
            value: high - low,
        });
    }
    if routine_half_width < 0.0 {
        return Err(StatError::OutOfRange {
            what: "the routine half-width",
            expected: "0 or more",
            value: routine_half_width,
        });
    }
    let c = effect / (high - low);
    let divisor = match distribution {
        Distribution::Rectangular => 3f64.sqrt(),
        Distribution::Triangular => 6f64.sqrt(),
        Distribution::Normal => 1.96,
    };
    let u_x = routine_half_width / divisor;
    Ok(Contribution {
        c,
        u_x,
        u_y: c.abs() * u_x,
    })
}

/// Combined standard uncertainty of independent contributions, √Σu_i(y)² (GUM §5.1.2 with
/// uncorrelated inputs).
pub fn combined(contributions: &[Contribution]) -> f64 {
    contributions
        .iter()
        .map(|c| c.u_y * c.u_y)
        .sum::<f64>()
        .sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn effects() -> Vec<(String, f64)> {
        vec![
            ("pH".into(), -0.8),
            ("temperature".into(), 0.4),
            ("flow".into(), 0.0),
        ]
    }

    #[test]
    fn worst_corner_with_main_effects_only_equals_the_closed_form() {
        let terms: Vec<(Vec<String>, f64)> =
            effects().into_iter().map(|(l, e)| (vec![l], e)).collect();
        let w = worst_corner(2.5, &terms, Direction::Lower).unwrap();
        assert!((w.predicted - 1.9).abs() < 1e-12);
    }

    #[test]
    fn worst_corner_counts_an_interaction() {
        // y = 10 + 0.5·A·B only (E_AB = 1): the lowest corner is A = −B, ŷ = 9.5 (hand check).
        let terms = vec![(vec!["A".to_string(), "B".to_string()], 1.0)];
        let w = worst_corner(10.0, &terms, Direction::Lower).unwrap();
        assert!((w.predicted - 9.5).abs() < 1e-12);
        assert_ne!(w.factors[0].level, w.factors[1].level);
    }

    #[test]
    fn worst_case_lower_subtracts_half_the_absolute_effects() {
        // Hand check: Σ|E| = 1.2, ŷ_worst = 2.5 − 0.6 = 1.9.
        let w = worst_case(2.5, &effects(), Direction::Lower).unwrap();
        assert!((w.predicted - 1.9).abs() < 1e-12);
        assert_eq!(w.factors[0].level, WorseLevel::High); // E < 0: +1 lowers y
        assert_eq!(w.factors[1].level, WorseLevel::Low); // E > 0: −1 lowers y
        assert_eq!(w.factors[2].level, WorseLevel::Either);
    }

    #[test]
    fn worst_case_higher_adds_half_the_absolute_effects() {
        let w = worst_case(1.2, &effects(), Direction::Higher).unwrap();
        assert!((w.predicted - 1.8).abs() < 1e-12);
        assert_eq!(w.factors[0].level, WorseLevel::Low);
        assert_eq!(w.factors[1].level, WorseLevel::High);
    }

    #[test]
    fn worst_case_rejects_nan() {
        assert!(worst_case(f64::NAN, &effects(), Direction::Lower).is_err());
        assert!(worst_case(1.0, &[("x".into(), f64::NAN)], Direction::Lower).is_err());
    }

    #[test]
    fn non_significance_interval_scales_the_range_by_e_crit_over_e() {
        // Hand check: pH 2.8..3.2, E = 2·E_crit → w = 0.2, interval 3.0 ± 0.1.
        let (a, b) = non_significance_interval(-1.0, 0.5, 2.8, 3.2, 3.0).unwrap();
        assert!((a - 2.9).abs() < 1e-12 && (b - 3.1).abs() < 1e-12);
    }

    #[test]
    fn non_significant_effect_has_no_interval() {
        assert_eq!(non_significance_interval(0.5, 0.5, 2.8, 3.2, 3.0), None);
        assert_eq!(non_significance_interval(1.0, 0.5, 3.2, 2.8, 3.0), None);
        assert_eq!(
            non_significance_interval(f64::NAN, 0.5, 2.8, 3.2, 3.0),
            None
        );
    }

    #[test]
    fn rectangular_divisor_matches_quam_appendix_e1_example() {
        // Eurachem/CITAC QUAM:2012 Appendix E.1 example: a = 1.5 rectangular gives
        // u = 1.5/√3 = 0.87 (printed to two decimals).
        let c = uncertainty(2.0, 0.0, 1.0, 1.5, Distribution::Rectangular).unwrap();
        assert!((c.u_x - 0.87).abs() < 0.005);
        assert!((c.u_x - 1.5 / 3f64.sqrt()).abs() < 1e-15);
    }

    #[test]
    fn normal_95_divisor_is_1_96_and_triangular_is_root_6() {
        // 1.960 for a 95 % interval: NIST TN 1297 §4.3 (same rule as GUM §4.3.4);
        // √6 for triangular: GUM §4.3.9 (from memory).
        let n = uncertainty(1.0, 0.0, 1.0, 1.96, Distribution::Normal).unwrap();
        assert!((n.u_x - 1.0).abs() < 1e-15);
        let t = uncertainty(1.0, 0.0, 1.0, 6f64.sqrt(), Distribution::Triangular).unwrap();
        assert!((t.u_x - 1.0).abs() < 1e-15);
    }

    #[test]
    fn contribution_uses_sensitivity_per_factor_unit() {
        // Hand check: E = −0.6 % over pH 2.8..3.2 → c = −1.5 %/pH; routine ±0.05 pH
        // rectangular → u(x) = 0.028868; u(y) = 0.043301.
        let c = uncertainty(-0.6, 2.8, 3.2, 0.05, Distribution::Rectangular).unwrap();
        assert!((c.c + 1.5).abs() < 1e-12);
        assert!((c.u_y - 1.5 * 0.05 / 3f64.sqrt()).abs() < 1e-12);
    }

    #[test]
    fn combined_is_root_sum_of_squares() {
        let a = Contribution {
            c: 1.0,
            u_x: 0.3,
            u_y: 0.3,
        };
        let b = Contribution {
            c: 1.0,
            u_x: 0.4,
            u_y: 0.4,
        };
        assert!((combined(&[a, b]) - 0.5).abs() < 1e-15);
        assert_eq!(combined(&[]), 0.0);
    }

    #[test]
    fn uncertainty_rejects_reversed_levels_and_negative_width() {
        assert!(uncertainty(1.0, 3.2, 2.8, 0.1, Distribution::Rectangular).is_err());
        assert!(uncertainty(1.0, 2.8, 3.2, -0.1, Distribution::Rectangular).is_err());
        assert!(uncertainty(f64::NAN, 2.8, 3.2, 0.1, Distribution::Rectangular).is_err());
    }
}

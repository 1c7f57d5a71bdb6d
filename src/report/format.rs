//! Numbers as a reader of a validation report expects them: fixed decimals, a real minus sign
//! (U+2212), never `-0.00`, `NaN` or `inf`.
//!
//! The chapter's number rule (also in the README's methods section):
//! - a quantity in a response's unit (measured values, means, reference, effects, limits,
//!   worst case) prints with the response's declared `decimals` when the study declares them;
//!   otherwise measured values keep the decimals found in the data and derived quantities get
//!   one decimal more ([`Numbers`]);
//! - quantities without a natural unit or in squared units (sums of squares, mean squares, F,
//!   standard errors, sensitivity coefficients) print with 4 significant figures, switching
//!   to `a.bcd × 10ⁿ` outside 0.0001 ≤ |x| < 10⁶ ([`sig`]); a drift rate per run prints with 3
//!   and carries the response's unit; standard uncertainties print with 2 (JCGM 100:2008,
//!   §7.2.6: "at most two significant digits");
//! - proposed factor ranges print with one decimal more than the factor's levels;
//! - t statistics print with 2 decimals ([`statistic`]), p-values with 3, below 0.001 as `p < 0.001` ([`p_clause`]).
//!
//! Only the typeset chapter uses these forms: CSV and JSON keep full precision and ASCII `-`.

use crate::study::{Factor, Levels, Setting, Study};

/// `value` rounded to `decimals` places, with U+2212 for negative values; `–` (en dash) for a
/// value that is not finite, so that no `NaN` ever reaches a report.
pub fn fixed(value: f64, decimals: u32) -> String {
    if !value.is_finite() {
        return "–".to_string();
    }
    let text = format!("{:.*}", decimals as usize, value);
    match text.strip_prefix('-') {
        Some(rest) if rest.chars().all(|c| c == '0' || c == '.') => rest.to_string(),
        Some(rest) => format!("\u{2212}{rest}"),
        None => text,
    }
}

/// Like [`fixed`] but with an explicit `+` for positive values (signed effects in prose).
pub fn signed(value: f64, decimals: u32) -> String {
    let text = fixed(value, decimals);
    if value.is_finite()
        && !text.starts_with('\u{2212}')
        && text.chars().any(|c| c.is_ascii_digit() && c != '0')
    {
        format!("+{text}")
    } else {
        text
    }
}

/// A level or setting as written in the study (shortest form that reads back to the value).
pub fn setting(value: f64) -> String {
    if !value.is_finite() {
        return "–".to_string();
    }
    let text = format!("{value}");
    match text.strip_prefix('-') {
        Some(rest) => format!("\u{2212}{rest}"),
        None => text,
    }
}

/// Percent effects are printed with this many decimals.
pub const PERCENT_DECIMALS: u32 = 2;

/// A percent effect as printed, with [`PERCENT_DECIMALS`] decimals; `–` when it is undefined
/// (a zero reference).
pub fn percent_effect(percent: Option<f64>) -> String {
    fixed(percent.unwrap_or(f64::NAN), PERCENT_DECIMALS)
}

/// Significant figures of SS, MS, F, t, standard errors and coefficients in the chapter.
pub const SIGNIFICANT: u32 = 4;

/// Significant figures of a drift rate per run.
pub const RATE_DIGITS: u32 = 3;

/// Significant figures of a standard uncertainty (JCGM 100:2008, §7.2.6).
pub const UNCERTAINTY_DIGITS: u32 = 2;

/// `value` with `digits` significant figures: fixed decimals within 0.0001 ≤ |x| < 10⁶, else
/// `a.bcd × 10ⁿ`, so that a sum of squares never prints as a wall of digits (94525520000 →
/// `9.453 × 10¹⁰`). Zero prints as `0`.
pub fn sig(value: f64, digits: u32) -> String {
    if !value.is_finite() {
        return fixed(value, 0);
    }
    if value == 0.0 {
        return "0".to_string();
    }
    let digits = digits.max(1);
    let magnitude = value.abs().log10().floor() as i32;
    if !(-4..6).contains(&magnitude) {
        let mantissa = value / 10f64.powi(magnitude);
        // Rounding may carry 9.9995 to 10.000: renormalise once.
        let (mantissa, magnitude) = if fixed(mantissa.abs(), digits - 1).starts_with("10") {
            (mantissa / 10.0, magnitude + 1)
        } else {
            (mantissa, magnitude)
        };
        return format!(
            "{} × 10{}",
            fixed(mantissa, digits - 1),
            superscript(&magnitude.to_string())
        );
    }
    let decimals = (digits as i32 - 1 - magnitude).max(0) as u32;
    fixed(value, decimals)
}

/// A test statistic (t) with 2 decimals, the usual precision of a tabulated t; beyond 10⁶
/// (a residual of exactly zero divided by rounding noise) as a power of ten ([`sig`]).
pub fn statistic(t: f64) -> String {
    if t.is_finite() && t.abs() >= 1e6 {
        sig(t, SIGNIFICANT)
    } else {
        fixed(t, 2)
    }
}

/// A p-value as a clause: `p = 0.012`, `p < 0.001`; `p = –` when there is none.
pub fn p_clause(p: Option<f64>) -> String {
    match p {
        Some(p) if p.is_finite() && p < 0.001 => "p < 0.001".to_string(),
        Some(p) => format!("p = {}", fixed(p, 3)),
        None => "p = –".to_string(),
    }
}

/// A p-value for a table cell: `0.012`, `< 0.001`, `–`.
pub fn p_cell(p: Option<f64>) -> String {
    match p {
        Some(p) if p.is_finite() && p < 0.001 => "< 0.001".to_string(),
        Some(p) => fixed(p, 3),
        None => "–".to_string(),
    }
}

/// How one response's numbers in its own unit are printed (see the module's rule).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Numbers {
    /// Decimals of the data: declared, or found in the values.
    pub decimals: u32,
    /// True when the study declares `decimals` for the response.
    pub declared: bool,
}

impl Numbers {
    /// The rule of response `r`; `declared` is the study's `decimals` for it, if any.
    pub fn new(r: &crate::analysis::ResponseAnalysis, declared: Option<u32>) -> Self {
        Self {
            decimals: declared.unwrap_or(r.decimals),
            declared: declared.is_some(),
        }
    }

    /// The rule of response `r` as the study declares it (looked up by id).
    pub fn of(study: &crate::study::Study, r: &crate::analysis::ResponseAnalysis) -> Self {
        let declared = study
            .responses
            .iter()
            .find(|s| s.id == r.id)
            .and_then(|s| s.decimals);
        Self::new(r, declared)
    }

    /// Decimals of derived quantities (means, effects, limits): the declared decimals, else
    /// one more than the data.
    pub fn derived_decimals(&self) -> u32 {
        if self.declared {
            self.decimals
        } else {
            self.decimals + 1
        }
    }

    /// A measured value.
    pub fn measured(&self, x: f64) -> String {
        fixed(x, self.decimals)
    }

    /// A derived quantity in the response's unit.
    pub fn derived(&self, x: f64) -> String {
        fixed(x, self.derived_decimals())
    }
}

/// Digits and minus signs as Unicode superscripts (`5−1` → `⁵⁻¹`), so that `2⁵⁻¹` reads as a
/// power in running text without Typst markup; other characters are kept.
pub fn superscript(text: &str) -> String {
    text.chars()
        .map(|c| match c {
            '0' => '⁰',
            '1' => '¹',
            '2' => '²',
            '3' => '³',
            '4' => '⁴',
            '5' => '⁵',
            '6' => '⁶',
            '7' => '⁷',
            '8' => '⁸',
            '9' => '⁹',
            '-' | '\u{2212}' => '⁻',
            c => c,
        })
        .collect()
}

/// Decimal places that show every level of a numeric factor exactly (2.9, 3, 3.1 → 1), so that
/// a factor's levels line up in tables and figures (`3.0`, not `3`, between `2.9` and `3.1`).
pub fn factor_decimals(f: &Factor) -> u32 {
    match &f.levels {
        Levels::Numeric { nominal, low, high } => {
            crate::analysis::data_decimals(&[*low, *nominal, *high])
        }
        Levels::Categorical { .. } => 0,
    }
}

/// A factor's setting at a coded level (−1, 0, +1) as printed, without unit.
pub fn setting_of(f: &Factor, coded: i8) -> String {
    match f.setting(coded) {
        Setting::Value(v) => fixed(v, factor_decimals(f)),
        Setting::Level(l) => l,
    }
}

/// A factor's nominal setting with its unit.
pub fn nominal_text(f: &Factor) -> String {
    match (&f.levels, &f.unit) {
        (Levels::Numeric { .. }, Some(u)) => format!("{} {u}", setting_of(f, 0)),
        _ => setting_of(f, 0),
    }
}

/// ` unit` after a number, or nothing for a quantity without a unit.
pub fn unit_suffix(unit: Option<&str>) -> String {
    unit.map(|u| format!(" {u}")).unwrap_or_default()
}

/// ` unit` of the factor with id `id`, or nothing (no unit, or no such factor).
pub fn factor_unit(study: &Study, id: &str) -> String {
    unit_suffix(
        study
            .factors
            .iter()
            .find(|f| f.id == id)
            .and_then(|f| f.unit.as_deref()),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_large_sum_of_squares_prints_with_four_significant_figures_and_a_power_of_ten() {
        // 94525520000 = 9.452552 × 10^10 (arithmetic).
        assert_eq!(sig(94_525_520_000.0, 4), "9.453 × 10¹⁰");
    }

    #[test]
    fn significant_figures_keep_trailing_zeros_in_the_fixed_range() {
        assert_eq!(sig(12.0, 4), "12.00");
        assert_eq!(sig(0.0123456, 4), "0.01235");
        assert_eq!(sig(-1234.6, 4), "\u{2212}1235");
        assert_eq!(sig(0.0, 4), "0");
    }

    #[test]
    fn tiny_values_switch_to_a_power_of_ten() {
        assert_eq!(sig(0.000012345, 3), "1.23 × 10⁻⁵");
        assert_eq!(sig(9.9996e-5, 4), "1.000 × 10⁻⁴");
    }

    #[test]
    fn a_t_statistic_prints_with_two_decimals_and_never_as_a_wall_of_digits() {
        assert_eq!(statistic(-2.099e-13), "0.00");
        assert_eq!(statistic(12.1244), "12.12");
        assert_eq!(statistic(20_984_102_331_795.53), "2.098 × 10¹³");
    }

    #[test]
    fn a_p_value_below_one_in_a_thousand_prints_as_p_below_0_001() {
        assert_eq!(p_clause(Some(3.0e-14)), "p < 0.001");
        assert_eq!(p_clause(Some(0.8695)), "p = 0.870");
        assert_eq!(p_cell(Some(0.0004)), "< 0.001");
    }

    #[test]
    fn declared_decimals_are_used_for_derived_values_too() {
        let n = Numbers {
            decimals: 0,
            declared: true,
        };
        assert_eq!(n.derived(206_700.04), "206700");
        let found = Numbers {
            decimals: 1,
            declared: false,
        };
        assert_eq!(found.derived(99.84), "99.84");
    }

    #[test]
    fn negative_numbers_use_the_minus_sign() {
        assert_eq!(fixed(-1.234, 2), "\u{2212}1.23");
    }

    #[test]
    fn negative_zero_after_rounding_prints_as_zero() {
        assert_eq!(fixed(-0.0004, 2), "0.00");
        assert_eq!(fixed(-0.0, 1), "0.0");
    }

    #[test]
    fn non_finite_values_never_print_as_nan_or_inf() {
        assert_eq!(fixed(f64::NAN, 2), "–");
        assert_eq!(fixed(f64::INFINITY, 2), "–");
    }

    #[test]
    fn signed_values_carry_plus_or_minus() {
        assert_eq!(signed(2.5, 1), "+2.5");
        assert_eq!(signed(-2.5, 1), "\u{2212}2.5");
        assert_eq!(signed(0.0, 1), "0.0");
    }
}

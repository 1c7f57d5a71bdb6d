//! Numbers as a reader of a validation report expects them: fixed decimals, a real minus sign
//! (U+2212), never `-0.00`, `NaN` or `inf`.

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

#[cfg(test)]
mod tests {
    use super::*;

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

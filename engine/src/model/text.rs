//! Values shown to people inside messages: numbers with at most six significant digits
//! and user text with its control characters escaped, so that every message stays one
//! readable line.

use std::borrow::Cow;

/// A number for a message: at most six significant digits, plain decimals for everyday
/// magnitudes ("0.25", "45", "-10000") and exponent form for huge or tiny ones ("1e308",
/// "1.23457e-7"); "NaN", "inf" and "-inf" as Rust writes them.
pub fn fmt_num(v: f64) -> String {
    if !v.is_finite() || v == 0.0 {
        return format!("{v}");
    }
    // Six significant digits in exponent form first: the exponent after rounding decides
    // the notation (999999.9 rounds to 1e6).
    let sci = format!("{v:.5e}");
    let (mantissa, exp) = sci.split_once('e').unwrap_or((&sci, "0"));
    let exp: i32 = exp.parse().unwrap_or(0);
    if !(-3..6).contains(&exp) {
        return format!("{}e{exp}", trim_zeros(mantissa));
    }
    let decimals = (5 - exp).max(0) as usize;
    trim_zeros(&format!("{v:.decimals$}")).to_string()
}

/// `s` without trailing zeros after a decimal point (and without a bare point).
fn trim_zeros(s: &str) -> &str {
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.')
    } else {
        s
    }
}

/// `s` with its control characters (line breaks, tabs, escape...) written as escapes
/// (`\n`, `\t`, `\u{1b}`); everything else, quotes and non-ASCII letters included, as is.
pub fn escape_controls(s: &str) -> Cow<'_, str> {
    if !s.chars().any(char::is_control) {
        return Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        if c.is_control() {
            out.extend(c.escape_debug());
        } else {
            out.push(c);
        }
    }
    Cow::Owned(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_for_people() {
        for (v, s) in [
            (0.0, "0"),
            (45.0, "45"),
            (-10000.0, "-10000"),
            (0.25, "0.25"),
            (0.001, "0.001"),
            (0.1 + 0.2, "0.3"),
            (12.3456789, "12.3457"),
            (999999.9, "1e6"),
            (1e308, "1e308"),
            (-1.5e20, "-1.5e20"),
            (1.234567e-7, "1.23457e-7"),
            (f64::NAN, "NaN"),
            (f64::INFINITY, "inf"),
        ] {
            assert_eq!(fmt_num(v), s, "{v}");
        }
    }

    #[test]
    fn control_characters_escaped() {
        assert_eq!(escape_controls("R1"), "R1");
        assert_eq!(escape_controls("R\n1\t\u{1b}"), "R\\n1\\t\\u{1b}");
        assert_eq!(escape_controls("Ω \"q\""), "Ω \"q\"");
    }
}

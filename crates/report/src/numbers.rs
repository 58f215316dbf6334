//! How numbers are printed in every report.

/// p in APA style: three decimals, no leading zero, `< .001` below that.
pub fn apa_p(p: f64) -> String {
    if p.is_nan() {
        return "–".into();
    }
    if p < 0.001 {
        return "< .001".into();
    }
    let s = format!("{p:.3}");
    match s.strip_prefix('0') {
        Some(rest) => rest.to_string(),
        None => s, // "1.000"
    }
}

/// A coefficient-sized number: four decimals in the ordinary range, scientific
/// notation for very large or very small magnitudes.
pub fn number(x: f64) -> String {
    if x.is_nan() {
        return "–".into();
    }
    if x == x.trunc() && x.abs() < 1e9 && x.abs() >= 1.0 {
        // Counts and whole df print without decimals.
        return format!("{x:.0}");
    }
    let a = x.abs();
    if a != 0.0 && !(1e-4..1e6).contains(&a) {
        format!("{x:.3e}")
    } else {
        format!("{x:.4}")
    }
}

/// A data value such as an end of the observed range: four decimals at most,
/// trailing zeros dropped (`0`, `1`, `0.211`).
pub fn plain(x: f64) -> String {
    if !x.is_finite() {
        return number(x);
    }
    let s = format!("{x:.4}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".into()
    } else {
        s.to_string()
    }
}

/// Decimals for one row of a coefficient table: enough for the SE to show three
/// significant digits, at least four, at most eight, so a small coefficient
/// such as a squared term is not printed as a row of zeros.
pub fn row_decimals(std_error: f64) -> usize {
    if !std_error.is_finite() || std_error <= 0.0 {
        return 4;
    }
    let d = 2 - std_error.log10().floor() as i64;
    d.clamp(4, 8) as usize
}

/// A number with the given decimals (scientific outside the readable range).
pub fn fixed(x: f64, decimals: usize) -> String {
    if x.is_nan() {
        return "–".into();
    }
    let a = x.abs();
    if a >= 1e6 {
        return format!("{x:.3e}");
    }
    format!("{x:.decimals$}")
}

/// A statistic such as t or F: two decimals.
pub fn stat(x: f64) -> String {
    if x.is_nan() {
        "–".into()
    } else {
        format!("{x:.2}")
    }
}

/// A share such as R²: three decimals without the leading zero.
pub fn share(x: f64) -> String {
    let s = format!("{x:.3}");
    if let Some(rest) = s.strip_prefix("0.") {
        format!(".{rest}")
    } else if let Some(rest) = s.strip_prefix("-0.") {
        format!("-.{rest}")
    } else {
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn p_values_follow_apa() {
        assert_eq!(apa_p(0.0004), "< .001");
        assert_eq!(apa_p(0.0312), ".031");
        assert_eq!(apa_p(0.5), ".500");
        assert_eq!(apa_p(1.0), "1.000");
    }

    #[test]
    fn numbers_keep_four_decimals_or_go_scientific() {
        assert_eq!(number(0.110124), "0.1101");
        assert_eq!(number(-2.5), "-2.5000");
        assert_eq!(number(399.0), "399");
        assert_eq!(number(0.00001234), "1.234e-5");
        assert_eq!(share(0.9123), ".912");
        assert_eq!(plain(0.0), "0");
        assert_eq!(plain(1.0), "1");
        assert_eq!(plain(0.21100001), "0.211");
        assert_eq!(plain(-0.00001), "0");
        assert_eq!(row_decimals(0.0011), 5);
        assert_eq!(row_decimals(0.35), 4);
        assert_eq!(fixed(-0.019702, row_decimals(0.00109)), "-0.01970");
    }
}

//! Numbers with SI prefixes ("10.00 MHz", "100f"): written for people and read from options; below every
//! stage, so the analysis can name frequencies in its warnings without importing the report.

/// Formats a value with an SI prefix and unit, e.g. `si(10.0e6, "Hz", 4)` → "10.00 MHz".
pub fn si(value: f64, unit: &str, significant: usize) -> String {
    if !value.is_finite() {
        return "—".to_string();
    }
    const PREFIXES: [(f64, &str); 9] = [
        (1e12, "T"),
        (1e9, "G"),
        (1e6, "M"),
        (1e3, "k"),
        (1.0, ""),
        (1e-3, "m"),
        (1e-6, "µ"),
        (1e-9, "n"),
        (1e-12, "p"),
    ];
    let mag = value.abs();
    let (scale, prefix) = if value == 0.0 {
        (1.0, "")
    } else {
        PREFIXES
            .iter()
            .copied()
            .find(|(s, _)| mag >= *s * 0.999_999_5)
            .unwrap_or((1e-15, "f"))
    };
    let v = value / scale;
    let int_digits = if v.abs() < 1.0 {
        1
    } else {
        v.abs().log10().floor() as usize + 1
    };
    let decimals = significant.saturating_sub(int_digits);
    format!("{v:.decimals$} {prefix}{unit}")
}

/// Parses a number with an optional SI prefix and unit: "100e6", "100M", "100 MHz", "2.5k".
pub fn parse_si(text: &str) -> Option<f64> {
    let t = text.trim();
    let t = t
        .strip_suffix("Hz")
        .or_else(|| t.strip_suffix("hz"))
        .or_else(|| t.strip_suffix('s'))
        .unwrap_or(t)
        .trim_end();
    // Decimal exponent of the prefix; negative ones divide so that "3n" is exactly 3e-9.
    let exp = match t.chars().last()? {
        'T' => 12,
        'G' => 9,
        'M' => 6,
        'k' | 'K' => 3,
        'm' => -3,
        'u' => -6,
        'n' => -9,
        'p' => -12,
        'f' => -15,
        _ => 0,
    };
    let num = if exp == 0 { t } else { &t[..t.len() - 1] };
    let v: f64 = num.trim().parse().ok()?;
    let r = if exp >= 0 {
        v * 10f64.powi(exp)
    } else {
        v / 10f64.powi(-exp)
    };
    r.is_finite().then_some(r)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn formats_with_prefixes() {
        assert_eq!(si(10.0e6, "Hz", 4), "10.00 MHz");
        assert_eq!(si(43_994_140.625, "Hz", 6), "43.9941 MHz");
        assert_eq!(si(999.0, "Hz", 3), "999 Hz");
        assert_eq!(si(1.0e-13, "s", 3), "100 fs");
        assert_eq!(si(0.0, "Hz", 3), "0.00 Hz");
    }

    #[test]
    fn parses_prefixes() {
        assert_eq!(parse_si("100M"), Some(100e6));
        assert_eq!(parse_si("100 MHz"), Some(100e6));
        assert_eq!(parse_si("2.5k"), Some(2500.0));
        assert_eq!(parse_si("1e-12"), Some(1e-12));
        assert_eq!(parse_si("100f"), Some(100e-15));
        assert_eq!(parse_si("3n"), Some(3e-9));
        assert_eq!(parse_si("abc"), None);
        assert_eq!(parse_si(""), None);
    }
}

//! Number formatting for people: SI prefixes for frequencies, fixed decimals for dB, "—" for absent values.

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
    let (scale, prefix) = PREFIXES
        .iter()
        .copied()
        .find(|(s, _)| mag >= *s * 0.999_999_5)
        .unwrap_or((1e-15, "f"));
    let v = if value == 0.0 { 0.0 } else { value / scale };
    let int_digits = if v.abs() < 1.0 {
        1
    } else {
        v.abs().log10().floor() as usize + 1
    };
    let decimals = significant.saturating_sub(int_digits);
    format!("{v:.decimals$} {prefix}{unit}")
}

/// Formats an optional figure with fixed decimals, or "—".
pub fn fixed(value: Option<f64>, decimals: usize) -> String {
    match value {
        Some(v) if v.is_finite() => format!("{v:.decimals$}"),
        _ => "—".to_string(),
    }
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
    let (num, mult) = match t.chars().last()? {
        'T' => (&t[..t.len() - 1], 1e12),
        'G' => (&t[..t.len() - 1], 1e9),
        'M' => (&t[..t.len() - 1], 1e6),
        'k' | 'K' => (&t[..t.len() - 1], 1e3),
        'm' => (&t[..t.len() - 1], 1e-3),
        'u' => (&t[..t.len() - 1], 1e-6),
        'n' => (&t[..t.len() - 1], 1e-9),
        'p' => (&t[..t.len() - 1], 1e-12),
        'f' => (&t[..t.len() - 1], 1e-15),
        _ => (t, 1.0),
    };
    let v: f64 = num.trim().parse().ok()?;
    let r = v * mult;
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

//! Number formatting for people: SI prefixes for frequencies, fixed decimals for dB, "—" for absent values.

use crate::figures::Unit;
pub use crate::si::{parse_si, si};

/// Formats an optional figure with fixed decimals, or "—".
pub fn fixed(value: Option<f64>, decimals: usize) -> String {
    match value {
        Some(v) if v.is_finite() => format!("{v:.decimals$}"),
        _ => "—".to_string(),
    }
}

/// A one-sigma uncertainty to `decimals` fixed decimals, or with more when those would show it as
/// zero (one significant digit, at most 6 decimals): "0.05", "0.0003".
pub fn sigma(value: f64, decimals: usize) -> String {
    let needed = if value > 0.0 && value.is_finite() {
        (-value.log10()).ceil().max(0.0) as usize
    } else {
        decimals
    };
    let d = decimals.max(needed.min(6));
    format!("{value:.d$}")
}

/// A figure's value with its unit for people: a frequency with an SI prefix and `digits` significant
/// digits ("10.00 MHz"), any other value with `digits` fixed decimals and the unit's symbol
/// ("71.23 dB"); "—" stands for an absent value.
pub fn with_unit(value: Option<f64>, unit: Unit, digits: usize) -> String {
    match unit {
        Unit::Hz => value.map_or("—".to_string(), |v| si(v, unit.symbol(), digits)),
        _ if unit.symbol().is_empty() => fixed(value, digits),
        _ => format!("{} {}", fixed(value, digits), unit.symbol()),
    }
}

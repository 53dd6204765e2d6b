//! JSON output: one array, one object per record in input order (the stable contract in the README).

use crate::analysis::Analysis;

/// Serialises the results as a pretty JSON array. Figures that cannot be computed are `null`.
pub fn to_json(results: &[Analysis]) -> String {
    // Analysis holds only plain data, Option<f64> for figures and finite floats: this cannot fail.
    let mut s = serde_json::to_string_pretty(results).expect("plain data serialises");
    s.push('\n');
    s
}

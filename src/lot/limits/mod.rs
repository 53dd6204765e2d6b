//! Limit tables and verdicts: low and high bounds per condition and metric (a CSV file kept in a
//! spreadsheet), the pass/fail verdict they give one result, and limit proposals from a characterisation
//! run with the statistics behind them (mean, sample σ, percentiles, shape, Cpk).
//!
//! # Limit table
//! A CSV file with a header row naming the columns `condition`, `metric`, `low`, `high`, `unit` and,
//! optionally, `guardband` and `guard_sigmas` (any order, names compared without regard to case). Lines starting with `#`
//! and blank rows (also rows of empty cells, as spreadsheets export them) are skipped; a UTF-8 byte-order
//! mark is ignored; `;` is the delimiter when the header has a `;` and no `,`. Row numbers in errors are
//! the file's line numbers (the header is row 1 when it is the first line).
//! - `condition`: a condition name of the bench plan, or `*` for every condition. A row for a named
//!   condition replaces the `*` row of the same metric for that condition.
//! - `metric`: a column name of the results CSV, i.e. the flattened JSON name of a figure of the result
//!   record (`spectrum.snr_db`, `spectrum.sfdr_dbc`, `fit.enob_bits`, `spectrum.harmonics.h3.dbc`), or
//!   any tail of it cut at a dot that exactly one metric ends with (`snr_db`, `sfdr_dbc`, `h3.dbc`).
//!   `enob_bits` and `sinad_db` name both a fit and a spectral figure and are refused as ambiguous. Only
//!   figures with a unit are metrics ([`Metric::of`], from the figure table [`crate::figures`]).
//! - `low`, `high`: numbers in the metric's unit; an empty cell is no bound; at least one bound.
//! - `unit`: the metric's unit as the figure table gives it (dB, dBc, dBFS, dBFS/Hz, bits, Hz, codes,
//!   ...), compared without regard to case; an empty cell skips the check.
//! - `guardband`: a margin ≥ 0 in the metric's unit (empty: 0); the test limits are low + guardband and
//!   high − guardband, so a value between a stated limit and its tightened limit fails "only inside the
//!   guardband".
//! - `guard_sigmas`: a guardband k ≥ 0 in standard uncertainties of each record's own measurement
//!   (empty: 0), on a metric that carries an uncertainty (`spectrum.uncertainty.snr_db` for
//!   `spectrum.snr_db`). A record passes only when it clears the stated limit by `guardband + k·σ`,
//!   σ being the one-sigma uncertainty that record states for the figure; so a figure measured from a
//!   short or noisy record needs more margin than the same value measured well. A record that states
//!   no σ for the figure cannot show it clears the guardband and fails inside it.
//!
//! # Verdicts
//! Each limit gives one [`Check`]: `fail` outside the stated limits, `guardband` inside them but outside
//! the tightened ones (its `guardband` is the one applied to that record, k·σ included; its reason
//! says "within 2σ of the low limit" for a sigma guardband), `no_value` when the result has no value for the metric (a figure that could not
//! be computed cannot be shown to pass, so it counts as a failure), else `pass`. A result's
//! [`Verdict`] is `fail` when any check fails or has no value, `fail_guardband` when the only failures
//! are inside guardbands, `pass` when every check passes, `untested` when no limit applies and `error`
//! when the record could not be analysed. The margin of a check is the signed distance from the nearest
//! stated limit, positive inside: value − low, or high − value.
//!
//! # Layout
//! `table.rs` reads and writes limit tables and resolves their metric names, `verdict.rs` applies the
//! limits (checks, outcomes, verdicts, guardbands as applied), `proposals.rs` proposes limits from a
//! characterisation run (statistics from [`crate::stats`], Cpk).

mod proposals;
mod table;
mod verdict;

pub use proposals::{
    default_metrics, proposal_table, propose, read_results, Characterisation, Existing,
    GuardbandRule, Margin, Method, Proposal, ProposalSettings, ResultRow,
};
pub use table::{Catalogue, Limit, LimitTable, Metric};
pub use verdict::{Bound, Check, CheckOutcome, Outcome, Verdict};

/// A number for people: at most 6 significant digits, trailing zeros dropped, exponent form below
/// 1e-4 and from 1e15 in magnitude.
pub fn format_value(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return if v.is_finite() {
            "0".to_string()
        } else {
            v.to_string()
        };
    }
    let mag = v.abs();
    if !(1e-4..1e15).contains(&mag) {
        return format!("{v:.5e}");
    }
    let exp = mag.log10().floor() as i32;
    let decimals = (5 - exp).max(0) as usize;
    let s = format!("{v:.decimals$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn format_value_is_short() {
        assert_eq!(format_value(60.0), "60");
        assert_eq!(format_value(52.612345678), "52.6123");
        assert_eq!(format_value(-0.25), "-0.25");
        assert_eq!(format_value(100e6), "100000000");
        assert_eq!(format_value(2e-6), "2.00000e-6");
    }
}

//! `spurline verify`: run the built-in reference suite on this build and print its table.

use super::{EXIT_FAIL, EXIT_OK};
use clap::Args;
use spurline::VerifyRow as Row;

/// Arguments of `verify`.
#[derive(Debug, Args)]
pub struct VerifyArgs {
    /// Print the table as a JSON array, one object per check, instead of text.
    #[arg(long)]
    pub json: bool,
}

/// Runs `verify`: exit status 0 when every check passes, 1 otherwise.
pub fn run(args: VerifyArgs) -> i32 {
    let rows = spurline::verify();
    if args.json {
        // Rows hold plain data and Option<f64>: serialisation cannot fail.
        let mut s = serde_json::to_string_pretty(&rows).expect("plain data serialises");
        s.push('\n');
        print!("{s}");
    } else {
        print!("{}", render(&rows));
    }
    if spurline::all_pass(&rows) {
        EXIT_OK
    } else {
        EXIT_FAIL
    }
}

/// Decimals that show a value to a tenth of the tolerance; shortest exact form when the tolerance is 0.
fn shown(v: f64, tolerance: f64) -> String {
    if tolerance > 0.0 {
        let decimals = (-(tolerance.log10())).ceil().clamp(0.0, 11.0) as usize + 1;
        format!("{v:.decimals$}")
    } else {
        format!("{v}")
    }
}

/// A tolerance to two significant digits.
fn tolerance_text(t: f64) -> String {
    if t > 0.0 && t.is_finite() {
        let decimals = (1.0 - t.log10().floor()).clamp(0.0, 12.0) as usize;
        format!("±{t:.decimals$}")
    } else {
        format!("±{t}")
    }
}

/// The plain text table: one line per check, then the count.
fn render(rows: &[Row]) -> String {
    let width = rows
        .iter()
        .map(|r| r.check.chars().count())
        .max()
        .unwrap_or(5);
    let mut s = format!(
        "{:<8}{:<width$}  {:>16}  {:>16}  {:>12}  {:<7}{}\n",
        "result", "check", "expected", "measured", "tolerance", "unit", "source"
    );
    for r in rows {
        let measured = r
            .measured
            .map_or("—".to_string(), |m| shown(m, r.tolerance));
        s.push_str(&format!(
            "{:<8}{:<width$}  {:>16}  {:>16}  {:>12}  {:<7}{}\n",
            if r.pass { "pass" } else { "FAIL" },
            r.check,
            shown(r.expected, r.tolerance),
            measured,
            tolerance_text(r.tolerance),
            r.unit,
            r.source
        ));
        if let Some(note) = &r.note {
            s.push_str(&format!("        {note}\n"));
        }
    }
    let passed = rows.iter().filter(|r| r.pass).count();
    s.push_str(&format!(
        "{passed} of {} checks passed{}\n",
        rows.len(),
        if passed == rows.len() {
            ""
        } else {
            ": this build does not reproduce the reference figures"
        }
    ));
    s
}

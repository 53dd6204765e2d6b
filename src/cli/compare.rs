//! `spurline compare`: two lot runs (board revisions), per condition and metric, with statistics.

use super::{EXIT_ERROR, EXIT_OK};
use clap::Args;
use spurline::Error;
use spurline::{compare, read_run, write_comparison, CompareSettings};
use std::path::PathBuf;

/// Arguments of `compare`.
#[derive(Debug, Args)]
pub struct CompareArgs {
    /// Run A: a `spurline batch` output folder (the reference revision).
    pub run_a: PathBuf,
    /// Run B: the revision compared against A.
    pub run_b: PathBuf,
    /// Base verdicts on the paired t test over devices present in both runs.
    #[arg(long)]
    pub paired: bool,
    /// Minimum meaningful change: a number for every metric, or METRIC=VALUE (repeatable), e.g.
    /// spectrum.sfdr_dbc=0.5. Default 0.2 in each metric's unit.
    #[arg(long = "min-change")]
    pub min_change: Vec<String>,
    /// Output folder for comparison.csv, comparison.json and comparison.html (default: RUN_B/compare).
    #[arg(long)]
    pub out: Option<PathBuf>,
}

/// Runs `compare`.
pub fn run(args: CompareArgs) -> i32 {
    match go(&args) {
        Ok(()) => EXIT_OK,
        Err(e) => {
            super::fail(&e);
            EXIT_ERROR
        }
    }
}

fn go(args: &CompareArgs) -> Result<(), Error> {
    let mut settings = CompareSettings {
        paired: args.paired,
        ..CompareSettings::default()
    };
    for m in &args.min_change {
        let bad = || {
            Error::setting(
                "min-change",
                "a number or METRIC=VALUE with VALUE ≥ 0",
                m.clone(),
            )
        };
        match m.split_once('=') {
            Some((k, v)) => {
                let v: f64 = v.trim().parse().map_err(|_| bad())?;
                if !(v >= 0.0 && v.is_finite()) || spurline::better_direction(k.trim()).is_none() {
                    return Err(Error::setting(
                        "min-change",
                        "a figure-of-merit column such as spectrum.snr_db and a value ≥ 0",
                        m.clone(),
                    ));
                }
                settings.min_change.insert(k.trim().to_string(), v);
            }
            None => {
                let v: f64 = m.trim().parse().map_err(|_| bad())?;
                if !(v >= 0.0 && v.is_finite()) {
                    return Err(bad());
                }
                settings.default_min_change = v;
            }
        }
    }
    let a = read_run(&args.run_a)?;
    let b = read_run(&args.run_b)?;
    let c = compare(&a, &b, &settings);
    let out = args
        .out
        .clone()
        .unwrap_or_else(|| args.run_b.join("compare"));
    std::fs::create_dir_all(&out).map_err(|e| {
        Error::new(
            spurline::ErrorKind::Output,
            out.display().to_string(),
            spurline::Location::Whole,
            "a writable folder",
            e.to_string(),
        )
    })?;
    write_comparison(&out, &c, &a, &b)?;
    for w in &c.warnings {
        println!("warning: {w}");
    }
    for line in &c.summary {
        println!("{line}");
    }
    println!();
    println!(
        "{:<10} {:<30} {:>9} {:>9} {:>9} {:>8}  {:<22} why",
        "condition", "metric", "mean A", "mean B", "B − A", "p", "verdict"
    );
    for r in &c.rows {
        let t = if r.decided_by.as_deref() == Some("paired") {
            r.paired.as_ref()
        } else {
            r.welch.as_ref()
        };
        let (diff, p) = match (&r.by_uncertainty, t) {
            (Some(u), _) if r.decided_by.as_deref() == Some("record uncertainty") => {
                (Some(u.difference), Some(u.p_value))
            }
            (_, Some(t)) => (Some(t.difference), Some(t.p_value)),
            _ => (None, None),
        };
        println!(
            "{:<10} {:<30} {:>9} {:>9} {:>9} {:>8}  {:<22} {}",
            r.condition,
            r.metric,
            r.a.as_ref()
                .map_or("—".into(), |s| format!("{:.3}", s.mean)),
            r.b.as_ref()
                .map_or("—".into(), |s| format!("{:.3}", s.mean)),
            diff.map_or("—".into(), |d| format!("{d:+.3}")),
            p.map_or("—".into(), |p| format!("{p:.2e}")),
            r.verdict.words(),
            r.reason
        );
    }
    if !c.left_out.is_empty() {
        println!("left out:");
        for l in &c.left_out {
            println!("  {l}");
        }
    }
    println!("wrote {}", out.join("comparison.html").display());
    Ok(())
}

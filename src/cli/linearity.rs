//! `spurline linearity`: the sine-wave code-density (histogram) test over one or more records: DNL, INL,
//! missing codes and the sample-count advice, as a table or JSON, with optional SVG plots.

use super::{ReadArgs, EXIT_ERROR, EXIT_OK};
use clap::Args;
use spurline::Error;
use spurline::{
    analyze_histogram, phase_coverage, write_linearity_plots, AtCode, CodeHistogram, Extremes,
    Linearity, LinearitySettings, PhaseCoverage,
};
use spurline::{read_record, read_sidecar};
use std::fmt::Write as _;
use std::path::PathBuf;

/// Arguments of `linearity`.
#[derive(Debug, Args)]
#[command(
    after_help = "The sine must overdrive the converter: both end codes must absorb the sine's tails. \
                  Overdrive only within the device's absolute maximum input ratings."
)]
pub struct LinearityArgs {
    /// Record files of the same converter and input (text, CSV or raw binary; a JSON sidecar next to
    /// each is read when present). Their codes go into one histogram.
    #[arg(required = true)]
    pub files: Vec<PathBuf>,
    #[command(flatten)]
    pub read: ReadArgs,
    /// Print the result as one JSON object (with per-code results) instead of a table.
    #[arg(long)]
    pub json: bool,
    /// Two-sided confidence level of the sample-count advice.
    #[arg(long, default_value_t = 0.95)]
    pub confidence: f64,
    /// DNL uncertainty the sample-count advice is for, in LSB.
    #[arg(long, default_value_t = 0.1)]
    pub dnl_uncertainty: f64,
    /// Write dnl.svg and inl.svg (DNL and INL against code) into this folder.
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    /// The old name of --out (warns).
    #[arg(long = "plot", value_name = "DIR", hide = true, conflicts_with = "out")]
    pub plot_old: Option<PathBuf>,
}

/// Runs `linearity`.
pub fn run(mut args: LinearityArgs) -> i32 {
    args.out = super::renamed(args.out.take(), args.plot_old.take(), "--plot", "--out");
    match go(&args) {
        Ok(text) => {
            print!("{text}");
            EXIT_OK
        }
        Err(errors) => {
            for e in &errors {
                super::fail(e);
            }
            EXIT_ERROR
        }
    }
}

fn go(args: &LinearityArgs) -> Result<String, Vec<Error>> {
    let ingest = args.read.settings().map_err(|e| vec![e])?;
    let settings = LinearitySettings {
        confidence: args.confidence,
        dnl_uncertainty_lsb: args.dnl_uncertainty,
    };
    settings.validate().map_err(|e| vec![e])?;
    let mut records = Vec::new();
    let mut errors = Vec::new();
    for path in &args.files {
        let mut file_settings = ingest.clone();
        // The histogram does not depend on the sample rate; a record without one is read with a
        // placeholder rather than refused.
        if file_settings.meta.sample_rate_hz.is_none() {
            match read_sidecar(path) {
                Ok(Some(s)) if s.sample_rate_hz.is_some() => {}
                Ok(_) => file_settings.meta.sample_rate_hz = Some(1.0),
                Err(e) => {
                    errors.push(e);
                    continue;
                }
            }
        }
        // Ingest warnings are not repeated: clipping is expected of an overdriven sine, and the test
        // reports missing codes and the end-code counts itself.
        match read_record(path, &file_settings) {
            Ok(ing) => records.push(ing.record),
            Err(e) => errors.push(e),
        }
    }
    if !errors.is_empty() {
        return Err(errors);
    }
    let bits = records[0].bits;
    let mut hist = CodeHistogram::new(bits).map_err(|e| vec![e.with_path(&records[0].source)])?;
    for r in &records {
        hist.add_record(r).map_err(|e| vec![e])?;
    }
    let mut result = analyze_histogram(&hist, &settings).map_err(|e| vec![e])?;
    result.phases = phase_coverage(&records, settings.dnl_uncertainty_lsb).map_err(|e| vec![e])?;
    if let Some(p) = result.phases.filter(|p| !p.sufficient) {
        eprintln!(
            "warning: {}",
            phase_warning(&p, settings.dnl_uncertainty_lsb)
        );
    }
    let mut out = if args.json {
        let mut s = serde_json::to_string_pretty(&result).expect("plain data serialises");
        s.push('\n');
        s
    } else {
        render(&result)
    };
    if let Some(dir) = &args.out {
        let paths = write_linearity_plots(&result, dir).map_err(|e| vec![e])?;
        if !args.json {
            let shown: Vec<String> = paths.iter().map(|p| p.display().to_string()).collect();
            let _ = writeln!(out, "plots: {}", shown.join(", "));
        }
    }
    Ok(out)
}

/// One cell of the figures table, from one basis's extremes.
type Cell = fn(&Extremes) -> String;

fn at(v: &AtCode, decimals: usize) -> String {
    format!("{:+.decimals$} at code {}", v.value_lsb, v.code)
}

/// The result as a table for people.
fn render(r: &Linearity) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "linearity (sine-wave code-density test, IEEE Std 1241): {} record{}, {} samples, {} bits",
        r.sources.len(),
        if r.sources.len() == 1 { "" } else { "s" },
        r.samples,
        r.bits
    );
    let _ = writeln!(s, "  records: {}", r.sources.join(", "));
    let _ = writeln!(
        s,
        "  sine from the end codes: amplitude {:.3} LSB, offset {:+.3} LSB; it reaches {:.2} LSB \
         below the first and {:.2} LSB above the last transition level",
        r.sine.amplitude_lsb,
        r.sine.offset_lsb,
        r.sine.overdrive_low_lsb,
        r.sine.overdrive_high_lsb
    );
    for (name, e) in [("lowest", &r.low_end), ("highest", &r.high_end)] {
        let _ = writeln!(
            s,
            "  {name} code {}: {} hits (next code {}; an ideal next code would get {:.1})",
            e.code, e.hits, e.neighbour_hits, e.neighbour_expected_hits
        );
    }
    let missing = if r.missing_codes.is_empty() {
        "none".to_string()
    } else {
        let list: Vec<String> = r.missing_codes.iter().map(|c| c.to_string()).collect();
        format!("{} ({})", r.missing_codes.len(), list.join(", "))
    };
    let _ = writeln!(s, "  missing codes: {missing}");
    let _ = writeln!(s, "  {:<22}{:<28}best fit", "LSB", "terminal (end-point)");
    let rows: [(&str, Cell); 7] = [
        ("code width", |e| format!("{:.5}", e.code_width_lsb)),
        ("DNL max", |e| at(&e.dnl_max, 3)),
        ("DNL min", |e| at(&e.dnl_min, 3)),
        ("worst DNL", |e| at(&e.dnl_worst, 3)),
        ("INL max", |e| at(&e.inl_max, 3)),
        ("INL min", |e| at(&e.inl_min, 3)),
        ("worst INL", |e| at(&e.inl_worst, 3)),
    ];
    for (label, f) in rows {
        let _ = writeln!(s, "  {label:<22}{:<28}{}", f(&r.terminal), f(&r.best_fit));
    }
    let a = &r.advice;
    let _ = writeln!(
        s,
        "  samples: {} needed for a DNL uncertainty of ±{} LSB at confidence {} (Z = {:.3}); {} given: \
         {} (they reach ±{:.3} LSB)",
        a.required_samples,
        a.dnl_uncertainty_lsb,
        a.confidence,
        a.z,
        a.samples,
        if a.sufficient { "enough" } else { "NOT enough" },
        a.achieved_dnl_uncertainty_lsb
    );
    if let Some(p) = &r.phases {
        let _ = writeln!(
            s,
            "  phases: fin/fs = {:.9}; {} distinct sampling phases, {} needed for ±{} LSB: {}",
            p.fin_over_fs,
            p.distinct_phases,
            p.required_phases,
            a.dnl_uncertainty_lsb,
            if p.sufficient { "enough" } else { "NOT enough" }
        );
        if !p.sufficient {
            let _ = writeln!(s, "  warning: {}", phase_warning(p, a.dnl_uncertainty_lsb));
        }
    }
    s
}

/// The warning for too few sampling phases: the figures it touches, why, and the fix.
fn phase_warning(p: &PhaseCoverage, dnl_lsb: f64) -> String {
    format!(
        "only {} distinct sampling phases (fin/fs = {:.9}): the histogram repeats their pattern, so DNL, \
         INL and missing codes can be off by up to ±{:.3} LSB whatever the sample count ({} phases needed \
         for ±{dnl_lsb} LSB); choose fin/fs = M/N with M and N coprime and N at least that, for example \
         with `spurline plan --histogram-bits`",
        p.distinct_phases, p.fin_over_fs, p.phase_dnl_error_lsb, p.required_phases
    )
}

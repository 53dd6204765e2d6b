//! `spurline limits`: propose limits per condition and metric from a characterisation run, with the
//! statistics behind them, and the capability (Cpk) of the run against an existing limit table.

use super::EXIT_OK;
use clap::Args;
use spurline::read_results;
use spurline::Error;
use spurline::{
    default_metrics, format_value, proposal_table, propose, GuardbandRule, LimitTable, Method,
    Proposal, ProposalSettings,
};
use std::path::PathBuf;

/// Arguments of `limits`.
#[derive(Debug, Args)]
#[command(
    after_help = "Limits: --method sigma puts them at mean ± K·σ (sample σ, n − 1), --method percentile at \
                  the P-th and (100 − P)-th percentiles (linear interpolation between closest ranks). \
                  Metrics where only one direction is bad get one limit: a low one for SNR, SINAD, SFDR \
                  and ENOB, a high one for THD, harmonic and spur levels, the noise floor and the fit \
                  residual (--two-sided gives both). The shape is reported when it is clearly not normal: at least 8 values and \
                  a Jarque-Bera p-value below 0.01."
)]
pub struct LimitsArgs {
    /// Results of a characterisation run: a batch output folder, its summary.csv, or results.json files.
    #[arg(required = true)]
    pub results: Vec<PathBuf>,
    /// Where the limits go: sigma (mean ± K·σ) or percentile.
    #[arg(long, default_value = "sigma", value_parser = ["sigma", "percentile"])]
    pub method: String,
    /// Standard deviations from the mean (sigma method).
    #[arg(long, default_value_t = 6.0, allow_hyphen_values = true)]
    pub k: f64,
    /// Percent in each tail (percentile method); 0.135 is the tail beyond 3σ of a normal distribution.
    #[arg(long, default_value_t = 0.135)]
    pub percentile: f64,
    /// Propose both limits even where only one direction is bad.
    #[arg(long)]
    pub two_sided: bool,
    /// Guardband, [METRIC=]VALUE in the metric's unit or [METRIC=]Nsigma (repeatable; a rule naming a
    /// metric wins over one without).
    #[arg(long)]
    pub guardband: Vec<String>,
    /// Metric to propose limits for, full or short name (repeatable) [default: SNR, SINAD, THD, SFDR,
    /// ENOB (spectral and fit) and noise floor, plus every metric of --existing].
    #[arg(long = "metric")]
    pub metrics: Vec<String>,
    /// An existing limit table: report the Cpk of each metric against it.
    #[arg(long)]
    pub existing: Option<PathBuf>,
    /// Write the proposed limit table (CSV that `batch --limits` reads) to this file.
    #[arg(long)]
    pub out: Option<PathBuf>,
}

/// Runs `limits`.
pub fn run(args: LimitsArgs) -> i32 {
    match go(&args) {
        Ok(()) => EXIT_OK,
        Err(e) => super::fail(&e),
    }
}

fn go(args: &LimitsArgs) -> Result<(), Error> {
    let method = if args.method == "percentile" {
        if !(args.percentile > 0.0 && args.percentile < 50.0) {
            return Err(Error::setting(
                "percentile",
                "a percent in each tail between 0 and 50",
                args.percentile.to_string(),
            ));
        }
        Method::Percentile {
            percent: args.percentile,
        }
    } else {
        if !(args.k.is_finite() && args.k > 0.0) {
            return Err(Error::setting(
                "k",
                "a positive number of standard deviations",
                args.k.to_string(),
            ));
        }
        Method::Sigma { k: args.k }
    };
    let data = read_results(&args.results)?;
    if let Some(note) = spurline::dropped_note(&data.dropped) {
        eprintln!("warning: {note}");
    }
    if data.rows.is_empty() {
        return Err(Error::setting(
            "results",
            "at least one analysed result (error rows are left out)",
            "none",
        ));
    }
    let existing = match &args.existing {
        None => None,
        Some(p) => Some(LimitTable::read(p, &data.scope())?),
    };
    let resolve = |name: &str, key: &str| -> Result<String, Error> {
        data.catalogue
            .resolve(name)
            .map(|m| m.name.clone())
            .map_err(|cands| {
                let found = if cands.is_empty() {
                    format!("'{name}', which is no metric of the results")
                } else {
                    let names: Vec<&str> = cands.iter().map(|m| m.name.as_str()).collect();
                    format!("'{name}', which could be {}", names.join(" or "))
                };
                Error::setting(
                    key,
                    "a metric of the results (full or unambiguous short name)",
                    found,
                )
            })
    };
    let mut metrics: Vec<String> = Vec::new();
    if args.metrics.is_empty() {
        for m in default_metrics() {
            if data.catalogue.get(m).is_some() {
                metrics.push(m.to_string());
            }
        }
    }
    for m in &args.metrics {
        let full = resolve(m, "metric")?;
        if !metrics.contains(&full) {
            metrics.push(full);
        }
    }
    if let Some(t) = &existing {
        for l in &t.limits {
            if !metrics.contains(&l.metric) {
                metrics.push(l.metric.clone());
            }
        }
    }
    let mut guardband = Vec::new();
    for g in &args.guardband {
        let mut rule: GuardbandRule = g.parse()?;
        if let Some(m) = &rule.metric {
            rule.metric = Some(resolve(m, "guardband")?);
        }
        guardband.push(rule);
    }
    let settings = ProposalSettings {
        method,
        two_sided: args.two_sided,
        guardband,
    };
    let proposals = propose(&data, &metrics, &settings, existing.as_ref());
    let devices = {
        let mut d: Vec<&str> = data.rows.iter().map(|r| r.device.as_str()).collect();
        d.sort_unstable();
        d.dedup();
        d.len()
    };
    let how = match method {
        Method::Sigma { k } => format!("mean ± {}·σ", format_value(k)),
        Method::Percentile { percent } => format!(
            "the {}th and {}th percentiles",
            format_value(percent),
            format_value(100.0 - percent)
        ),
    };
    println!(
        "limits from {} results of {devices} devices under {} conditions: {how}, {}",
        data.rows.len(),
        data.conditions.len(),
        if args.two_sided {
            "two-sided"
        } else {
            "one-sided where only one direction is bad"
        }
    );
    print!("{}", render(&proposals, existing.is_some()));
    if let Some(path) = &args.out {
        let table = proposal_table(&proposals, &path.display().to_string());
        spurline::write_atomic(path, table.to_csv().as_bytes())?;
        println!("wrote {} ({} limits)", path.display(), table.limits.len());
    }
    Ok(())
}

/// The proposal as an aligned text table, one line per condition and metric, then the shape notes.
fn render(proposals: &[Proposal], with_cpk: bool) -> String {
    let opt = |v: Option<f64>| v.map_or("—".to_string(), format_value);
    let mut head = vec![
        "condition",
        "metric",
        "unit",
        "n",
        "mean",
        "std",
        "min",
        "max",
        "low",
        "high",
        "guardband",
    ];
    if with_cpk {
        head.extend(["limit low", "limit high", "Cpk"]);
    }
    head.push("shape");
    let mut rows: Vec<Vec<String>> = vec![head.iter().map(|s| s.to_string()).collect()];
    for p in proposals {
        let s = p.stats.as_ref().map(|d| &d.summary);
        let mut r = vec![
            p.condition.clone(),
            p.metric.clone(),
            p.unit.to_string(),
            s.map_or("0".into(), |s| s.n.to_string()),
            opt(s.map(|s| s.mean)),
            opt(s.and_then(|s| s.std)),
            opt(s.map(|s| s.min)),
            opt(s.map(|s| s.max)),
            opt(p.low),
            opt(p.high),
            format_value(p.guardband),
        ];
        if with_cpk {
            let e = p.existing.as_ref();
            r.push(opt(e.and_then(|e| e.low)));
            r.push(opt(e.and_then(|e| e.high)));
            r.push(e.map_or("no limit".into(), |e| {
                e.cpk.map_or("—".into(), |c| format!("{c:.3}"))
            }));
        }
        r.push(match (&p.shape, &p.note, s) {
            (_, Some(note), _) => note.clone(),
            (Some(shape), _, _) => shape.clone(),
            (None, None, Some(s)) if s.n < spurline::SHAPE_MIN_N => {
                "too few values to judge".into()
            }
            _ => "no clear departure from normal".into(),
        });
        rows.push(r);
    }
    let widths: Vec<usize> = (0..rows[0].len())
        .map(|i| rows.iter().map(|r| r[i].chars().count()).max().unwrap_or(0))
        .collect();
    let mut out = String::new();
    for r in &rows {
        let cells: Vec<String> = r
            .iter()
            .zip(&widths)
            .map(|(c, w)| format!("{c:<w$}"))
            .collect();
        out.push_str(cells.join("  ").trim_end());
        out.push('\n');
    }
    out
}

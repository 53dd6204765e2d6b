//! `spurline trend`: control charts of the lots in a results store, per condition and metric, with
//! the run rules and each lot's Cpk; exit status 1 when a rule fires, so a scheduler can alert.

use super::{EXIT_FAIL, EXIT_OK};
use clap::Args;
use spurline::{figures, trend, write_trend, ChartKind, Store, StoreUrl, TrendSettings};
use std::path::PathBuf;

/// Arguments of `trend`.
#[derive(Debug, Args)]
#[command(
    after_help = "Rules (flagged at the lot that completes the pattern): WE1 one lot beyond 3σ, WE2 2 of 3 \
                  beyond 2σ on one side, WE3 4 of 5 beyond 1σ on one side, WE4 8 in a row on one side \
                  (Western Electric handbook, 1956); N2 9 in a row on one side, N3 6 in a row rising \
                  or falling, N4 14 in a row alternating, N7 15 in a row within 1σ, N8 8 in a row \
                  beyond 1σ on either side (Nelson, 1984)."
)]
pub struct TrendArgs {
    /// The store: a SQLite file or a PostgreSQL URL.
    pub store: String,
    /// Output folder [default: reports/trend].
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Lots (the oldest) the control limits come from.
    #[arg(long, default_value_t = 20)]
    pub baseline: usize,
    /// The chart: lots (individuals chart of lot means, σ from their moving ranges) or xbar (X̄
    /// chart, σ from the spread within lots).
    #[arg(long, default_value = "lots")]
    pub chart: String,
    /// A metric to chart (figure key or a unique tail: snr_db); repeat for more [default: the
    /// headline figures and every metric a stored lot has a limit on].
    #[arg(long)]
    pub metric: Vec<String>,
    /// Only this condition.
    #[arg(long)]
    pub condition: Option<String>,
}

/// Runs `trend`.
pub fn run(args: TrendArgs) -> i32 {
    let go = || -> Result<i32, spurline::Error> {
        let chart: ChartKind = args.chart.parse()?;
        if args.baseline < 2 {
            return Err(spurline::Error::setting(
                "--baseline",
                "2 or more lots",
                args.baseline.to_string(),
            ));
        }
        let metrics = args
            .metric
            .iter()
            .map(|m| {
                figures::find(m).map(|c| c.key()).map_err(|_| {
                    spurline::Error::setting("--metric", "a figure key or a unique tail of one", m)
                })
            })
            .collect::<Result<Vec<String>, _>>()?;
        let url: StoreUrl = args.store.parse()?;
        let mut store = Store::open(&url)?;
        let settings = TrendSettings {
            baseline: args.baseline,
            chart,
            metrics,
            condition: args.condition.clone(),
            ..TrendSettings::default()
        };
        let t = trend(&mut store, &settings)?;
        let out = args
            .out
            .clone()
            .unwrap_or_else(|| PathBuf::from("reports/trend"));
        write_trend(&out, &t)?;
        for c in &t.charts {
            let fired = c.fired();
            if !fired.is_empty() {
                let names: Vec<&str> = fired.iter().map(|r| r.name()).collect();
                println!("{} / {}: {}", c.condition, c.metric, names.join(" "));
            }
        }
        for l in &t.left_out {
            eprintln!("spurline: not charted: {l}");
        }
        println!(
            "{} lots, {} charts, {} with a run rule fired; trend in {}",
            t.lots,
            t.charts.len(),
            t.charts.iter().filter(|c| !c.fired().is_empty()).count(),
            out.display()
        );
        Ok(if t.any_rule() { EXIT_FAIL } else { EXIT_OK })
    };
    match go() {
        Ok(code) => code,
        Err(e) => super::fail(&e),
    }
}

//! The production half of `spurline demo`, a scenario of our own: twelve simulated 12-bit converters
//! (d01..d12) are built on two board revisions. Revision A has the original sampling clock; revision B
//! has a cleaner clock (less aperture jitter) but a new regulator that lifts the third harmonic. Each
//! device is captured at three input frequencies, the two lots are run against one limit table, and the
//! revisions are compared device by device. Both lots are recorded into a results store
//! (`store.sqlite`, made afresh each run) and charted lot against lot (`trend/`).

use rand::{Rng, SeedableRng};
use spurline::LimitTable;
use spurline::{compare, read_run, write_comparison, Change, CompareSettings};
use spurline::{file_fingerprint, trend, write_trend, ChartKind, TrendSettings};
use spurline::{run_lot, BatchOptions, BenchPlan, Plots};
use spurline::{synthesize, write_record, OutputLayout, SynthFrequency, SynthSettings};
use spurline::{write_sidecar, Sidecar};
use spurline::{Error, ErrorKind, Location};
use spurline::{LotRecord, RunInfo, Store, StoreUrl};
use std::path::Path;

const DEVICES: usize = 12;
const CONDITIONS: [(&str, f64); 3] = [("fin_05M", 5.1e6), ("fin_21M", 21.3e6), ("fin_47M", 47.3e6)];
/// (revision, aperture jitter s, third-harmonic level dBc)
const REVISIONS: [(&str, f64, f64); 2] = [("rev-a", 900e-15, -81.0), ("rev-b", 250e-15, -77.5)];

const LIMITS: &str = "# Limits of the demo lot. Empty cell: no bound; * : every condition.
condition,metric,low,high,unit,guardband
*,spectrum.snr_db,66,,dB,0.5
*,spectrum.sfdr_dbc,76,,dBc,
*,spectrum.enob_bits,10.6,,bits,
";

fn plan_text(revision: &str) -> String {
    let mut s = format!(
        "# Bench plan of the demo lot, board {revision}: records written by `spurline demo`.
title = \"demo lot · board {revision}\"

[converter]
bits = 12
sample_rate_hz = \"100M\"
format = \"i16le\"

[analysis]
window = \"auto\"
harmonics = 7

[records]
pattern = \"records/{{device}}/{{condition}}.bin\"
"
    );
    for (name, fin) in CONDITIONS {
        s.push_str(&format!(
            "\n[[condition]]\nname = \"{name}\"\nfin_hz = {fin}\namplitude_dbfs = -1.0\n"
        ));
    }
    s
}

fn io(path: &Path, e: std::io::Error) -> Error {
    Error::new(
        ErrorKind::Output,
        path.display().to_string(),
        Location::Whole,
        "a writable output",
        e.to_string(),
    )
}

/// Writes both lots, runs them, compares them; prints the yields and the changes.
pub fn run(out: &Path) -> Result<(), Error> {
    let limits_path = out.join("limits.csv");
    std::fs::create_dir_all(out).map_err(|e| io(out, e))?;
    std::fs::write(&limits_path, LIMITS).map_err(|e| io(&limits_path, e))?;
    // Device-to-device spread: the same parts (same seed per device) on both boards.
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(20261201);
    let parts: Vec<(f64, f64)> = (0..DEVICES)
        .map(|_| (rng.gen_range(0.22..0.36), rng.gen_range(-1.5..1.5)))
        .collect();
    let mut runs = Vec::new();
    let mut plans = Vec::new();
    for (ri, (rev, jitter, h3)) in REVISIONS.iter().enumerate() {
        let lot_dir = out.join(format!("lot-{rev}"));
        for (d, (noise, h3_spread)) in parts.iter().enumerate() {
            let dev = format!("d{:02}", d + 1);
            let dir = lot_dir.join("records").join(&dev);
            std::fs::create_dir_all(&dir).map_err(|e| io(&dir, e))?;
            for (ci, (cond, fin)) in CONDITIONS.iter().enumerate() {
                let s = SynthSettings {
                    bits: 12,
                    sample_rate_hz: 100e6,
                    samples: 4096,
                    amplitude_dbfs: -1.0,
                    frequency: SynthFrequency::NearestCoherent(*fin),
                    phase_rad: 0.2 * (d + ci) as f64,
                    noise_rms_codes: *noise,
                    harmonics_dbc: vec![(2, -86.0 + h3_spread), (3, h3 + h3_spread)],
                    jitter_rms_s: *jitter,
                    seed: 5000 + (ri * 1000 + d * 10 + ci) as u64,
                    ..SynthSettings::default()
                };
                let made = synthesize(&s)?;
                let path = dir.join(format!("{cond}.bin"));
                let layout = OutputLayout::Binary {
                    word_bytes: 2,
                    big_endian: false,
                    offset_binary: false,
                };
                write_record(&path, &made.record, &layout)?;
                write_sidecar(
                    &path,
                    &Sidecar {
                        // The plan gives these too; in the sidecar they let the comparison re-read
                        // a record on its own for the spectrum overlay.
                        sample_rate_hz: Some(100e6),
                        bits: Some(12),
                        format: Some("i16le".to_string()),
                        generator: Some(serde_json::to_value(&s).expect("plain data serialises")),
                        ..Sidecar::default()
                    },
                )?;
            }
        }
        let plan_path = lot_dir.join("plan.toml");
        std::fs::write(&plan_path, plan_text(rev)).map_err(|e| io(&plan_path, e))?;
        let plan = BenchPlan::read(&plan_path)?;
        let lot = plan.locate()?;
        let scope = plan.limit_scope();
        let limits = LimitTable::read(&limits_path, &scope)?;
        let results_dir = lot_dir.join("results");
        let counts = run_lot(
            &plan,
            &lot,
            Some(&limits),
            &BatchOptions {
                out: results_dir.clone(),
                jobs: 2,
                plots: Plots::Failures,
            },
            &(),
        )?;
        println!(
            "board {rev}: {} devices × {} conditions: {} pass, {} fail, {} fail inside a guardband, {} errors; yield {:.1} %  ({})",
            counts.devices,
            CONDITIONS.len(),
            counts.passed,
            counts.failed,
            counts.failed_guardband,
            counts.errors,
            100.0 * counts.passed as f64 / counts.results.max(1) as f64,
            results_dir.join("yield.csv").display()
        );
        runs.push(results_dir);
        plans.push(plan_path);
    }
    record_and_trend(out, &runs, &plans, &limits_path)?;
    let (a, b) = (read_run(&runs[0])?, read_run(&runs[1])?);
    let c = compare(
        &a,
        &b,
        &CompareSettings {
            paired: true,
            ..CompareSettings::default()
        },
    );
    let cmp_dir = out.join("compare");
    std::fs::create_dir_all(&cmp_dir).map_err(|e| io(&cmp_dir, e))?;
    write_comparison(&cmp_dir, &c, &a, &b)?;
    println!("\nrev-b against rev-a (paired, 12 devices; changes of at least 0.2):");
    for r in c
        .rows
        .iter()
        .filter(|r| matches!(r.verdict, Change::Better | Change::Worse))
    {
        println!(
            "  {:<8} {:<28} {:<6} {}",
            r.condition,
            r.metric,
            if r.verdict == Change::Better {
                "better"
            } else {
                "worse"
            },
            r.reason
        );
    }
    println!("wrote {}", cmp_dir.join("comparison.html").display());
    Ok(())
}

/// When the scenario's lots ran (fixed, so the demo's files are the same every run): rev-a on the
/// first bench day, rev-b four weeks later.
const RUN_TIMES: [(&str, &str); 2] = [
    ("2026-11-02T08:00:00Z", "2026-11-02T08:40:00Z"),
    ("2026-11-30T08:00:00Z", "2026-11-30T08:40:00Z"),
];

/// Records both lots into a fresh store under `out` and draws their trend page: an X̄ chart of the
/// two lots (σ from the spread within each lot, both lots as the baseline), where the revision
/// change shows as a shift.
fn record_and_trend(
    out: &Path,
    runs: &[std::path::PathBuf],
    plans: &[std::path::PathBuf],
    limits_path: &Path,
) -> Result<(), Error> {
    let store_path = out.join("store.sqlite");
    // A fresh store each run: the same lots would otherwise be refused as already recorded.
    for suffix in ["", "-wal", "-shm", "-journal"] {
        let p = out.join(format!("store.sqlite{suffix}"));
        if p.is_file() {
            std::fs::remove_file(&p).map_err(|e| io(&p, e))?;
        }
    }
    let url = StoreUrl::Sqlite(store_path.clone());
    let mut store = Store::open(&url)?;
    for (((rev, _, _), (dir, plan_path)), (start, end)) in
        REVISIONS.iter().zip(runs.iter().zip(plans)).zip(RUN_TIMES)
    {
        let plan = BenchPlan::read(plan_path)?;
        let limits = LimitTable::read(limits_path, &plan.limit_scope())?;
        let mut info = RunInfo::now(rev);
        info.title = plan.title.clone().unwrap_or_else(|| rev.to_string());
        info.plan_fingerprint = Some(file_fingerprint(plan_path)?);
        info.limits_fingerprint = Some(file_fingerprint(limits_path)?);
        info.started_at = Some(start.to_string());
        info.ended_at = end.to_string();
        // The scenario's bench, not this machine: the store's bytes do not depend on where the
        // demo runs.
        info.host = "demo-bench".to_string();
        let lot = LotRecord::from_folder(dir, info, Some(&limits))?;
        store.record(&lot)?;
    }
    drop(store);
    let mut store = Store::open(&url)?;
    let t = trend(
        &mut store,
        &TrendSettings {
            baseline: REVISIONS.len(),
            chart: ChartKind::Xbar,
            ..TrendSettings::default()
        },
    )?;
    drop(store);
    let trend_dir = out.join("trend");
    write_trend(&trend_dir, &t)?;
    println!(
        "\nrecorded both lots into {}; X-bar charts of the two lots, {} of {} with a run rule fired \
         (the revision change):",
        store_path.display(),
        t.charts.iter().filter(|c| !c.fired().is_empty()).count(),
        t.charts.len()
    );
    for c in t.charts.iter().filter(|c| !c.fired().is_empty()) {
        let names: Vec<&str> = c.fired().iter().map(|r| r.name()).collect();
        println!("  {:<8} {:<28} {}", c.condition, c.metric, names.join(" "));
    }
    println!("wrote {}", trend_dir.join("index.html").display());
    Ok(())
}

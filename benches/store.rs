//! Benchmark of the results store (SQLite): recording a 1,000-device × 4-condition lot beyond the
//! lot's own run (target under 1 s), `trend` over 200 stored lots of that size (target under 2 s:
//! reading the store, the charts' statistics and writing the SVG, CSV, JSON and HTML), and the store's
//! size per stored figure.
//!
//! Run: `cargo bench --bench store`. One pass, timed by the wall clock (each step runs once per store
//! and is long enough for the clock). The records are short (2^12 samples): recording and charting
//! cost the same whatever the record length, and the lot's own run is reported beside them.
//! The 200 lots are the first lot's summary with every figure moved by a slow drift and a lot-to-lot
//! step (so that the charts have spread, as real lots do), each a new run a day apart.

// The same allocator as the binary, so the figures are the tool's.
#[global_allocator]
static ALLOC: mimalloc::MiMalloc = mimalloc::MiMalloc;
use spurline::{rfc3339, run_lot, trend, write_trend, BatchOptions, BenchPlan, Plots};
use spurline::{synthesize, write_record, OutputLayout, SynthFrequency, SynthSettings};
use spurline::{Catalogue, LimitTable, LotRecord, RunInfo, Store, StoreUrl, TrendSettings};
use std::fmt::Write;
use std::path::Path;
use std::time::Instant;

const DEVICES: usize = 1000;
const CONDITIONS: usize = 4;
const SAMPLES: usize = 1 << 12;
/// Lots stored (`STORE_LOTS` overrides, for a quick look at the first lot's figures).
const LOTS: usize = 200;
/// The first lot's end: 2026-01-05T00:00:00Z; one lot a day after it.
const FIRST_END: u64 = 1_767_571_200;

fn main() {
    let dir = tempfile::tempdir().unwrap();
    let (plan, limits) = make_lot(dir.path());
    let lot = plan.locate().unwrap();
    let options = BatchOptions {
        out: dir.path().join("lot000"),
        jobs: 2,
        plots: Plots::None,
    };
    let t = Instant::now();
    run_lot(&plan, &lot, Some(&limits), &options, &()).unwrap();
    let run_s = t.elapsed().as_secs_f64();
    println!(
        "lot run: {} records ({DEVICES} devices × {CONDITIONS} conditions, 2^12 samples, --jobs 2) in {run_s:.2} s",
        DEVICES * CONDITIONS
    );

    let store_path = dir.path().join("store.sqlite");
    let url = StoreUrl::Sqlite(store_path.clone());
    let info = |i: usize| RunInfo {
        ended_at: rfc3339(FIRST_END + 86_400 * i as u64),
        ..RunInfo::now(&format!("lot{i:03}"))
    };
    // The first lot into a new store: opening (and creating) the store, reading the lot folder and
    // writing it in one transaction, as `batch --store` does after its run.
    let t = Instant::now();
    let mut store = Store::open(&url).unwrap();
    let first = LotRecord::from_folder(&options.out, info(0), Some(&limits)).unwrap();
    let read_s = t.elapsed().as_secs_f64();
    let rec = store.record(&first).unwrap();
    let record_s = t.elapsed().as_secs_f64();
    println!(
        "record one lot: {} results, {} figures in {record_s:.3} s beyond the run ({read_s:.3} s opening the store and reading the lot folder, the rest writing; target < 1 s)",
        rec.results, rec.figures
    );

    let summary = std::fs::read_to_string(options.out.join("summary.csv")).unwrap();
    let failures = std::fs::read(options.out.join("failures.csv")).ok();
    let mut figures = rec.figures;
    let mut slowest: f64 = record_s;
    let t_all = Instant::now();
    let lots: usize = std::env::var("STORE_LOTS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(LOTS);
    for i in 1..lots {
        let folder = dir.path().join(format!("lot{i:03}"));
        std::fs::create_dir_all(&folder).unwrap();
        std::fs::write(folder.join("summary.csv"), drifted(&summary, i)).unwrap();
        if let Some(f) = &failures {
            std::fs::write(folder.join("failures.csv"), f).unwrap();
        }
        let t = Instant::now();
        let lot = LotRecord::from_folder(&folder, info(i), Some(&limits)).unwrap();
        figures += store.record(&lot).unwrap().figures;
        slowest = slowest.max(t.elapsed().as_secs_f64());
        std::fs::remove_dir_all(&folder).unwrap();
    }
    println!(
        "record {} more lots: {:.1} s in all, slowest {slowest:.3} s",
        lots - 1,
        t_all.elapsed().as_secs_f64()
    );
    drop(store);
    let bytes = std::fs::metadata(&store_path).unwrap().len();
    println!(
        "store: {lots} lots, {figures} figures, {:.1} MB, {:.1} bytes per stored figure (results, warnings, limits and statistics included)",
        bytes as f64 / 1e6,
        bytes as f64 / figures as f64
    );

    let t = Instant::now();
    let mut store = Store::open(&url).unwrap();
    let tr = trend(&mut store, &TrendSettings::default()).unwrap();
    let query_s = t.elapsed().as_secs_f64();
    write_trend(&dir.path().join("trend"), &tr).unwrap();
    let trend_s = t.elapsed().as_secs_f64();
    println!(
        "trend over {lots} lots: {} charts in {trend_s:.2} s ({query_s:.2} s reading and computing, the rest writing SVG, CSV, JSON, HTML; target < 2 s)",
        tr.charts.len()
    );
}

/// The summary with every figure cell moved: a slow drift over the lots and a lot-to-lot step, in
/// units of a hundredth of the cell's own magnitude at most (the cells stay plausible and limits keep
/// their verdicts mostly). Text cells and the first columns (device, condition, source) are kept.
fn drifted(summary: &str, lot: usize) -> String {
    let mut r = csv::Reader::from_reader(summary.as_bytes());
    let headers = r.headers().unwrap().clone();
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(&headers).unwrap();
    let shift = 0.004 * (lot as f64 / 17.0).sin() + 0.002 * ((lot * 7919) % 13) as f64 / 13.0;
    for row in r.records() {
        let row = row.unwrap();
        let cells: Vec<String> = row
            .iter()
            .zip(headers.iter())
            .map(|(cell, head)| {
                let figure = head.starts_with("spectrum.") || head.starts_with("fit.");
                match cell.parse::<f64>() {
                    Ok(v) if figure && v.is_finite() && !head.contains("uncertainty") => {
                        format!("{}", v * (1.0 + shift))
                    }
                    _ => cell.to_string(),
                }
            })
            .collect();
        w.write_record(&cells).unwrap();
    }
    String::from_utf8(w.into_inner().unwrap()).unwrap()
}

/// Writes the records and the plan of a lot into `dir` and reads the plan back, with a limit table.
fn make_lot(dir: &Path) -> (BenchPlan, LimitTable) {
    let mut plan = String::from(
        "[converter]\nbits = 14\nsample_rate_hz = 100e6\nformat = \"i16le\"\n\n\
         [records]\npattern = \"r/{device}/{condition}.bin\"\n",
    );
    let mut fins = Vec::new();
    for k in 0..CONDITIONS {
        let rec = synthesize(&SynthSettings {
            bits: 14,
            samples: SAMPLES,
            frequency: SynthFrequency::NearestCoherent(1.1e6 + 11.3e6 * k as f64),
            ..SynthSettings::default()
        })
        .unwrap();
        fins.push(rec.frequency_hz);
        let _ = write!(
            plan,
            "\n[[condition]]\nname = \"c{k}\"\nfin_hz = {}\namplitude_dbfs = -1.0\n",
            rec.frequency_hz
        );
    }
    std::fs::write(dir.join("plan.toml"), &plan).unwrap();
    let layout = OutputLayout::Binary {
        word_bytes: 2,
        big_endian: false,
        offset_binary: false,
    };
    for d in 0..DEVICES {
        let folder = dir.join(format!("r/d{d:04}"));
        std::fs::create_dir_all(&folder).unwrap();
        for (k, &fin) in fins.iter().enumerate() {
            let rec = synthesize(&SynthSettings {
                bits: 14,
                samples: SAMPLES,
                frequency: SynthFrequency::Hz(fin),
                noise_rms_codes: 1.0 + 0.001 * d as f64,
                harmonics_dbc: vec![(2, -85.0), (3, -80.0 - 0.005 * d as f64)],
                seed: (d * CONDITIONS + k) as u64,
                ..SynthSettings::default()
            })
            .unwrap()
            .record;
            write_record(&folder.join(format!("c{k}.bin")), &rec, &layout).unwrap();
        }
    }
    let plan = BenchPlan::read(&dir.join("plan.toml")).unwrap();
    let scope: Vec<(String, Catalogue)> = plan
        .conditions
        .iter()
        .map(|c| (c.name.clone(), Catalogue::for_harmonics(10)))
        .collect();
    let limits = LimitTable::parse(
        "condition,metric,low,high,unit,guardband\n*,snr_db,70,,dB,0.5\n*,sfdr_dbc,78,,dBc,\n\
         *,thd_dbc,,-70,dBc,\n*,spectrum.enob_bits,11,,bits,\n",
        "limits.csv",
        &scope,
    )
    .unwrap();
    (plan, limits)
}

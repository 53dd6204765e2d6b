//! Benchmark of a batch run: a lot of 1,000 raw binary records of 2^14 samples (100 devices × 10
//! conditions, 14-bit, coherent), limits applied, no plots, on 2 worker threads; target ≥ 2,000
//! records per second. Beside it, the single-thread cost of each step of one result (read, analyse,
//! flatten and judge, summary line) to show where the time goes.
//!
//! Run: `cargo bench --bench batch` (criterion prints the throughput in elements = records per second).

use criterion::{criterion_group, criterion_main, Criterion, Throughput};

// The same allocator as the binary, so the figures are the tool's.
#[global_allocator]
static ALLOC: mimalloc::MiMalloc = mimalloc::MiMalloc;
use spurline::{analyze, AnalysisSettings};
use spurline::{run_lot, BatchOptions, BenchPlan, Plots};
use spurline::{synthesize, write_record, OutputLayout, SynthFrequency, SynthSettings};
use spurline::{Catalogue, LimitTable};
use std::collections::HashMap;
use std::fmt::Write;

const DEVICES: usize = 100;
const CONDITIONS: usize = 10;
const SAMPLES: usize = 1 << 14;

fn bench(c: &mut Criterion) {
    let dir = tempfile::tempdir().unwrap();
    let mut plan = String::from(
        "[converter]\nbits = 14\nsample_rate_hz = 100e6\nformat = \"i16le\"\n\n\
         [records]\npattern = \"r/{device}/{condition}.bin\"\n",
    );
    let mut fins = Vec::new();
    for k in 0..CONDITIONS {
        let target = 1.1e6 + 4.7e6 * k as f64;
        let rec = synthesize(&SynthSettings {
            bits: 14,
            samples: SAMPLES,
            frequency: SynthFrequency::NearestCoherent(target),
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
    std::fs::write(dir.path().join("plan.toml"), &plan).unwrap();
    for d in 0..DEVICES {
        let folder = dir.path().join(format!("r/d{d:03}"));
        std::fs::create_dir_all(&folder).unwrap();
        for (k, &fin) in fins.iter().enumerate() {
            let rec = synthesize(&SynthSettings {
                bits: 14,
                samples: SAMPLES,
                frequency: SynthFrequency::Hz(fin),
                noise_rms_codes: 1.0 + 0.01 * d as f64,
                harmonics_dbc: vec![(2, -85.0), (3, -80.0 - 0.05 * d as f64)],
                seed: (d * CONDITIONS + k) as u64,
                ..SynthSettings::default()
            })
            .unwrap()
            .record;
            let layout = OutputLayout::Binary {
                word_bytes: 2,
                big_endian: false,
                offset_binary: false,
            };
            write_record(&folder.join(format!("c{k}.bin")), &rec, &layout).unwrap();
        }
    }
    let plan = BenchPlan::read(&dir.path().join("plan.toml")).unwrap();
    let lot = plan.locate().unwrap();
    assert_eq!(lot.results(), DEVICES * CONDITIONS);
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
    let options = BatchOptions {
        out: dir.path().join("out"),
        jobs: 2,
        plots: Plots::None,
    };

    let mut g = c.benchmark_group("batch");
    g.sample_size(10);
    g.throughput(Throughput::Elements((DEVICES * CONDITIONS) as u64));
    g.bench_function("lot_1000_records_2^14_jobs_2", |b| {
        b.iter(|| run_lot(&plan, &lot, Some(&limits), &options, &()).unwrap())
    });
    g.finish();

    // One result's steps on one thread.
    let mut g = c.benchmark_group("batch_steps");
    g.sample_size(20);
    let file = lot.files(0, 3)[0].clone();
    let ingest = plan.ingest_for(&plan.conditions[3]);
    g.bench_function("read_record_2^14", |b| {
        b.iter(|| spurline::read_record(&file, &ingest).unwrap())
    });
    let rec = spurline::read_record(&file, &ingest).unwrap().record;
    g.bench_function("analyze_2^14", |b| {
        b.iter(|| analyze(&rec, &AnalysisSettings::default()).unwrap())
    });
    let a = analyze(&rec, &AnalysisSettings::default())
        .unwrap()
        .analysis;
    g.bench_function("flatten_and_judge", |b| {
        b.iter(|| {
            let v = serde_json::to_value(&a).unwrap();
            let flat: HashMap<String, String> =
                spurline::figures::flatten(&v).into_iter().collect();
            limits.judge("c3", |m| flat.get(m).and_then(|x| x.parse().ok()))
        })
    });
    g.bench_function("results_json", |b| {
        b.iter(|| serde_json::to_string_pretty(&a).unwrap())
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);

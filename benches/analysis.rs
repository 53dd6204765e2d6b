//! Benchmarks: fit plus spectrum of 2^16 and 2^20 records beside one bare real FFT of the same length
//! (target: analysis ≤ 3× the FFT), the spectrum plot of a 2^20-sample record (it was ~100 ms at
//! most), and text parsing of 2^20 codes (targets: < 30 ms, ≥ 300 MB/s; criterion prints the rate
//! as thrpt).

use criterion::{criterion_group, criterion_main, Criterion, Throughput};

// The same allocator as the binary, so the figures are the tool's.
#[global_allocator]
static ALLOC: mimalloc::MiMalloc = mimalloc::MiMalloc;
use spurline::{analyze, AnalysisSettings};
use spurline::{synthesize, SynthFrequency, SynthSettings};

fn record(samples: usize, coherent: bool) -> spurline::Record {
    synthesize(&SynthSettings {
        bits: 16,
        samples,
        noise_rms_codes: 2.0,
        frequency: if coherent {
            SynthFrequency::NearestCoherent(10.1e6)
        } else {
            SynthFrequency::Hz(10.1234567e6)
        },
        harmonics_dbc: vec![(2, -80.0), (3, -85.0)],
        ..SynthSettings::default()
    })
    .unwrap()
    .record
}

fn bench(c: &mut Criterion) {
    let mut g = c.benchmark_group("analysis");
    g.sample_size(10);
    for log2 in [16u32, 20] {
        let n = 1usize << log2;
        let data: Vec<f64> = (0..n).map(|i| (i as f64 * 0.1).sin()).collect();
        // The yardstick: one bare real FFT of the same length (realfft, planned once, as the
        // library's own FFT does per thread), output and scratch made per call.
        let plan = realfft::RealFftPlanner::<f64>::new().plan_fft_forward(n);
        g.bench_function(format!("real_fft_2^{log2}"), |b| {
            let mut buf = data.clone();
            b.iter(|| {
                buf.copy_from_slice(&data);
                let mut out = plan.make_output_vec();
                let mut scratch = plan.make_scratch_vec();
                plan.process_with_scratch(&mut buf, &mut out, &mut scratch)
                    .unwrap();
                out
            })
        });
        for coherent in [true, false] {
            let rec = record(n, coherent);
            let name = format!(
                "fit_and_spectrum_2^{log2}_{}",
                if coherent { "coherent" } else { "windowed" }
            );
            g.bench_function(name, |b| {
                b.iter(|| analyze(&rec, &AnalysisSettings::default()).unwrap())
            });
        }
    }
    // The spectrum plot of a 2^20-sample record (its bins reduced to pixel columns), linear and log
    // frequency axes.
    let rec = record(1 << 20, true);
    let m = analyze(&rec, &AnalysisSettings::default()).unwrap();
    for log_frequency in [false, true] {
        let o = spurline::PlotOptions {
            log_frequency,
            ..spurline::PlotOptions::default()
        };
        let axis = if log_frequency { "log" } else { "linear" };
        g.bench_function(format!("spectrum_svg_2^20_{axis}"), |b| {
            b.iter(|| spurline::spectrum_svg("bench", &m.analysis, &m.traces, &o).unwrap())
        });
    }
    let text: String = rec.codes.iter().map(|c| format!("{c}\n")).collect();
    g.throughput(Throughput::Bytes(text.len() as u64));
    g.bench_function("parse_text_2^20", |b| {
        b.iter(|| spurline::parse_text(text.as_bytes(), "bench", 16).unwrap())
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);

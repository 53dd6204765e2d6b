//! spurline: dynamic performance of analog-to-digital converters from captured output codes, by the
//! methods of IEEE Std 1241 (sine fits, spectrum figures, lots against limits, revision comparison).
//!
//! A record is read ([`read_record`], or [`parse_text`], [`parse_delimited`], [`parse_binary`] from
//! bytes), analysed ([`analyze`]: sine fit, then spectrum) into one result record, [`Analysis`], and
//! rendered ([`render_text`], [`to_json`], [`to_csv`], [`write_run_report`]). Every field of the
//! result record is a row of the figure table, [`figures`]: its key, label, unit and better
//! direction. The other analyses of a record are [`analyze_two_tone`], [`analyze_interleaved`] and
//! [`analyze_histogram`]; a lot of devices × conditions runs from a [`BenchPlan`] with [`run_lot`]
//! (judged against a [`LimitTable`]), and two lots are compared with [`compare`]. [`plan_tone`] plans
//! a coherent test; [`synthesize`] simulates a converter for demos and tests.
//!
//! Everything a user of the crate needs is exported here, at the top; the modules behind it are
//! private, except the figure table, [`figures`], whose rows are statics (`figures::SNR`) that every
//! list of figures is made from. Settings are plain structs (with `Default` where there is one) whose choices parse from
//! text with `FromStr` ([`WindowChoice`], [`FitChoice`], [`Coding`], [`Justify`], [`Format`], ...);
//! errors are one type, [`Error`], with a kind, the file, the place in it, what was expected and what
//! was found.
//!
//! ```
//! use spurline::{analyze, read_record, AnalysisSettings, IngestSettings, Metadata};
//!
//! // A 12-bit record of 4096 codes in a text file, one code per line: a sine of 401 cycles at
//! // -1 dBFS, rounded to whole codes.
//! let dir = tempfile::tempdir()?;
//! let path = dir.path().join("capture.txt");
//! let amplitude = 2048.0 * 10f64.powf(-1.0 / 20.0);
//! let codes: Vec<String> = (0..4096)
//!     .map(|n| {
//!         let phase = std::f64::consts::TAU * 401.0 * n as f64 / 4096.0;
//!         ((amplitude * phase.sin()).round() as i32).to_string()
//!     })
//!     .collect();
//! std::fs::write(&path, codes.join("\n"))?;
//!
//! let settings = IngestSettings {
//!     meta: Metadata { sample_rate_hz: Some(100e6), bits: Some(12), ..Metadata::default() },
//!     ..IngestSettings::default()
//! };
//! let record = read_record(&path, &settings)?.record;
//! let result = analyze(&record, &AnalysisSettings::default())?.analysis;
//! let snr = result.spectrum.as_ref().and_then(|s| s.snr_db).expect("an SNR");
//! println!("SNR {snr:.2} dB");
//! // Rounding to whole codes is the only noise: the ideal 12-bit SNR, 6.02·12 + 1.76 − 1 dB at
//! // −1 dBFS (q/√12 quantisation noise; common practice, no source), within a few tenths.
//! assert!((snr - (6.02 * 12.0 + 1.76 - 1.0)).abs() < 0.5, "{snr}");
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```
//!
//! A lot: a bench plan judged against a limit table, on one machine or split over several.
//!
//! ```no_run
//! use spurline::{run_lot, BatchOptions, BenchPlan, LimitTable, LotObserver, Plots};
//!
//! let plan = BenchPlan::read("bench/plan.toml".as_ref())?;
//! let lot = plan.locate()?;
//! let limits = LimitTable::read("bench/limits.csv".as_ref(), &plan.limit_scope())?;
//! let options = BatchOptions { out: "reports/lot7".into(), jobs: 2, plots: Plots::None };
//! // A progress report of our own (`&()` observes nothing).
//! struct Dots;
//! impl LotObserver for Dots {
//!     fn result_done(&self) {
//!         eprint!(".");
//!     }
//! }
//! let counts = run_lot(&plan, &lot, Some(&limits), &options, &Dots)?;
//! println!("{} of {} results pass", counts.passed, counts.results);
//!
//! // The same lot over eight machines: each runs its shard, then one merges the eight folders.
//! use spurline::{merge_shards, run_shard, Shard};
//! let shard: Shard = "2/8".parse()?;
//! let mine = BatchOptions { out: "reports/lot7-2".into(), ..options.clone() };
//! run_shard(&plan, &lot, Some(&limits), &mine, shard, &())?;
//! let folders: Vec<std::path::PathBuf> =
//!     (1..=8).map(|k| format!("reports/lot7-{k}").into()).collect();
//! let merged = merge_shards("reports/lot7".as_ref(), &folders)?;
//! assert_eq!(merged.results, counts.results);
//! # Ok::<(), spurline::Error>(())
//! ```
//!
//! # Conventions
//! - Units are in names: `_hz`, `_s`, `_db`, `_dbfs`, `_dbc`, `_bits`, `_codes`, `_lsb`. Sample index n
//!   starts at 0 and t = n / fs.
//! - Codes are signed integers centred on mid-scale (offset binary is converted at ingest). For N bits the
//!   full-scale range is 2^N codes, a full-scale sine has peak amplitude 2^(N-1) codes and is 0 dBFS.
//!   Ideal quantisation noise is q/√12 with q = 1 code.
//! - A record of values (voltages, floats) has no code grid: given its full-scale range, its samples are
//!   scaled to the same codes (FSR = 2^N codes, 0 V or 0.0 at mid-scale), the code checks are skipped,
//!   and without a stated resolution the fit ENOB is left out (ENOB from SINAD alone).
//! - Windows are the periodic (DFT-even) form. Bin powers are scaled by N·Σw² (one-sided, doubled for
//!   0 < k < N/2) so that the power summed over a tone's bins equals A²/2 and noise sums need no ENBW factor.
//! - Bin claiming order: DC, the tones (the fundamental; f1 and f2), then the lines derived from them
//!   (harmonics 2..H; IM products; interleaving images) folded into the first Nyquist zone; the rest is
//!   noise, among which spurs are searched. A bin is never counted twice; a line landing on DC, a tone or
//!   an earlier line is reported as masked. One engine does this for every analysis
//!   (`spectrum::claim`). The noise hidden under claimed bins is estimated from the mean noise
//!   bin and added back, so the noise figure covers the whole band 0..fs/2.
//! - ENOB comes in three forms, always labelled: spectral (SINAD − 1.76)/6.02, full-scale-referred (SINAD
//!   referred to a 0 dBFS input), and the IEEE 1241 fit form N − log2(residual_rms / (q/√12)).
//! - Same inputs and settings give byte-identical CSV and JSON, whatever the thread count.
#![deny(missing_docs)]

mod analyses;
mod analysis;
mod dft;
mod error;
pub mod figures;
mod fit;
mod freq;
mod ingest;
mod lot;
mod plan;
mod record;
mod report;
mod resources;
mod si;
mod spc;
mod spectrum;
mod stats;
mod synth;
mod verify;

// The public surface: everything a user of the crate needs, in one place (the modules are
// private). Grouped by what it is for.

// Errors and the record.
pub use crate::error::{Error, ErrorKind, Location, Result};
pub use crate::record::{
    full_scale_amplitude_codes, full_scale_power, max_code, min_code, Coding, Record, Values,
    BITS_RANGE, MAX_SAMPLE_RATE_HZ, MIN_SAMPLE_RATE_HZ, NOMINAL_BITS,
};

// Reading a record: from a file (with its sidecar), or from bytes in memory.
pub use crate::ingest::{
    check_codes, parse_binary, parse_channel, parse_delimited, parse_delimited_samples,
    parse_delimiter, parse_npy, parse_text, parse_text_samples, parse_text_words, read_npy_header,
    read_record, read_sidecar, read_sidecar_noting, read_wav_header, sidecar_path, write_sidecar,
    BinaryLayout, ColumnSel, Format, IngestSettings, Ingested, Justify, Metadata, NpyLayout,
    Packing, SampleUnit, Samples, Sidecar, WavLayout, DEFAULT_MIN_SAMPLES, SIDECAR_TAG, STDIN_PATH,
};

// Ceilings that keep a run inside the machine: record memory, worker threads, small-file reads.
pub use crate::resources::{
    check_jobs, cores, default_memory_limit, machine_memory_bytes, ANALYSIS_BYTES_PER_SAMPLE,
    MAX_JOBS,
};

// Analysing a record: the sine fits, the spectrum, the one result record.
pub use crate::analysis::{
    analyze, analyze_averaged, analyze_record, check_memory, memory_available, memory_needed,
    Analysis, AnalysisSettings, CodeCounts, ErrorReport, FitChoice, Measured, OneTone,
    RecordResult, Traces,
};
pub use crate::fit::{
    fit_four, fit_three, Clipping, ClippingUncertainty, FitMethod, FitUncertainty,
    FourParamOptions, SineFit,
};
pub use crate::spectrum::{
    ideal_snr_db, Coherence, HarmonicFigure, LeakageDiagnosis, LevelUncertainty, PerHarmonic,
    Spectrum, SpectrumSettings, SpectrumUncertainty, Spur, Window, WindowChoice, WindowFigures,
    KAISER_BETA_MAX, MAX_GUARD_BINS,
};

// The other analyses of a record: two tones, interleaving, code-density linearity.
pub use crate::analyses::imd::{
    analyze_two_tone, analyze_two_tone_traced, ImdResult, ImdSettings, ImdSpectrum, ProductFigure,
    ProductKind, ToneFit, ToneLevel, TwoTone, TwoToneFit, TwoToneSpur,
};
pub use crate::analyses::interleave::{
    analyze_interleaved, analyze_interleaved_traced, ChannelEstimate, InterleaveResult,
    InterleaveSettings, InterleaveSpectrum, InterleaveSpur, InterleaveSpurKind, Interleaved,
    MAX_CHANNELS,
};
pub use crate::analyses::linearity::{
    analyze_histogram, distinct_phases, phase_coverage, plot::write_plots as write_linearity_plots,
    required_phases, required_samples, AtCode, CodeHistogram, CodeResult, EndCode, Extremes,
    Linearity, LinearitySettings, PhaseCoverage, SampleAdvice, SineEstimate, MAX_HISTOGRAM_BITS,
    OVERDRIVE_RATIO,
};

// Planning a coherent test.
pub use crate::freq::{fold_to_first_zone, nearest_coherent, CoherentChoice};
pub use crate::plan::{
    harmonic_places, imd_products, plan_histogram, plan_tone, plan_two_tone,
    samples_for_resolution, HarmonicPlace, HistogramPlan, ImdProduct, Placement, TonePlan,
    TwoTonePlan, MAX_PLAN_HARMONIC, MAX_PLAN_SAMPLES,
};

// Simulated converters, for demos and tests.
pub use crate::synth::multi::{
    interleaved, two_tone, InterleavedSettings, ToneSpec, TwoToneSettings,
};
pub use crate::synth::{
    synthesize, transition_levels, write_record, OutputLayout, SynthFrequency, SynthSettings,
    Synthesized, MAX_TRANSITION_TABLE_BITS,
};

// Reports of records: text, JSON, CSV, SVG plots, the run folder with its page.
pub use crate::report::csv::{
    read_cell as read_csv_cell, safe_cell as safe_csv_cell, table as csv_table, to_csv,
    to_csv_with_lead,
};
pub use crate::report::json::to_json;
pub use crate::report::pages::{write_interleave_report, write_two_tone_report, Traced};
pub use crate::report::svg::marked::{
    interleave_svg, marked_spectrum_svg, two_tone_svg, MarkedSpectrum, Marker,
};
pub use crate::report::svg::{histogram_svg, residual_svg, spectrum_svg, PlotOptions};
pub use crate::report::text::{render as render_text, render_interleaved, render_two_tone};
pub use crate::report::units::{fixed as format_fixed, parse_si, si as format_si};
pub use crate::report::{
    file_safe_name, write_atomic, write_device_summary, write_record_plots, write_run_report,
};

// Lots: bench plans, runs on one machine or in shards (with a progress observer), the lot's files.
pub use crate::lot::{
    dropped_note, lot_fingerprint, lot_progress, merge_shards, read_failures, read_yield,
    run_fingerprint, run_lot, run_shard, shard_from_env, ArrayTask, BatchOptions, BenchPlan,
    Condition, ConditionResult, CsvRows, DeviceResult, DroppedCell, FailureRow, ListedRecord, Lot,
    LotCounts, LotObserver, LotProgress, LotSummary, Plots, RecordSource, Scheduler, Shard,
    ShardManifest, ShardProgress, ShardState, SummaryRow, YieldRow, FAILURE_COLUMNS, KEPT_ERRORS,
    LEAD_COLUMNS, SHARD_FORMAT, YIELD_COLUMNS,
};

// Limit tables, verdicts, limit proposals.
pub use crate::lot::limits::{
    default_metrics, format_value, proposal_table, propose, read_results, Bound, Catalogue,
    Characterisation, Check, CheckOutcome, Existing, GuardbandRule, Limit, LimitTable, Margin,
    Method, Metric, Outcome, Proposal, ProposalSettings, ResultRow, Verdict,
};

// Comparing two lots; sweeps over one; the statistics behind limits and comparisons.
pub use crate::lot::compare::{
    better_direction, compare, output::write_all as write_comparison, read_run, Change,
    CompareSettings, Comparison, MetricComparison, Run, UncertaintyTest,
};
pub use crate::lot::store::{
    file_fingerprint, host_name, rfc3339, trend, trend_csv, trend_html, utc_now, write_trend,
    ChartKind, DeviceRow, LotRecord, LotStat, Recorded, RunInfo, RunRow, Store, StoreUrl,
    StoredLimit, Trend, TrendChart, TrendPoint, TrendSettings, TREND_COLUMNS,
};
pub use crate::lot::sweep::{
    read_points, sweep, write_sweep, Sweep, SweepInput, SweepPoint, SweepSummary, SWEPT,
};
pub use crate::spc::{
    c4, cpk_interval, d4_two, individuals, run_rules, xbar_s, CpkInterval, Limits, Rule, Subgroup,
    D2_TWO,
};
pub use crate::stats::{paired, summarize, welch, NoTest, Summary, TTest, SHAPE_MIN_N};

// The self-check against published figures (`spurline verify`).
pub use crate::verify::{all_pass, judge, measure, run as verify, Measurement, Row as VerifyRow};

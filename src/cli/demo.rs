//! `spurline demo`: the main job on built-in generated data. A small scenario of our own: two
//! simulated converters on one bench, each captured at three input frequencies (two coherent, one
//! deliberately not), analysed and written to `reports/demo/`.

use super::{EXIT_ERROR, EXIT_OK};
use clap::Args;
use spurline::figures::{self, Cells, Figure, Unit};
use spurline::{analyze, Analysis, AnalysisSettings, Traces};
use spurline::{format_fixed as fixed, format_si as si};
use spurline::{read_record, write_sidecar, IngestSettings, Sidecar};
use spurline::{synthesize, write_record, OutputLayout, SynthFrequency, SynthSettings};
use spurline::{write_run_report, PlotOptions};
use spurline::{Error, ErrorKind, Location};
use std::path::{Path, PathBuf};

/// Arguments of `demo`.
#[derive(Debug, Args)]
pub struct DemoArgs {
    /// Output folder.
    #[arg(long, default_value = "reports/demo")]
    pub out: PathBuf,
}

/// One simulated part of the scenario.
struct Part {
    name: &'static str,
    bits: u32,
    noise_rms_codes: f64,
    harmonics_dbc: &'static [(u32, f64)],
    jitter_rms_s: f64,
}

const PARTS: [Part; 2] = [
    Part {
        name: "wren-12",
        bits: 12,
        noise_rms_codes: 0.25,
        harmonics_dbc: &[(2, -84.0), (3, -79.0), (5, -92.0)],
        jitter_rms_s: 150e-15,
    },
    Part {
        name: "otter-14",
        bits: 14,
        noise_rms_codes: 0.9,
        harmonics_dbc: &[(2, -91.0), (3, -88.0), (4, -99.0)],
        jitter_rms_s: 400e-15,
    },
];

/// Sample rate, record length and input frequencies of the scenario: (label, target Hz, coherent).
const FS_HZ: f64 = 100e6;
const SAMPLES: usize = 8192;
const INPUTS: [(&str, f64, bool); 3] = [
    ("f05M", 5.1e6, true),
    ("f21M", 21.3e6, true),
    ("f47M", 47.05e6, false),
];

/// Runs `demo`.
pub fn run(args: DemoArgs) -> i32 {
    match go(&args.out) {
        Ok(results) => {
            let failed = results.iter().any(|a| a.error.is_some());
            if failed {
                EXIT_ERROR
            } else {
                EXIT_OK
            }
        }
        Err(e) => super::fail(&e),
    }
}

fn out_err(path: &Path, e: std::io::Error) -> Error {
    Error::new(
        ErrorKind::Output,
        path.display().to_string(),
        Location::Whole,
        "a writable output",
        e.to_string(),
    )
}

/// Generates the scenario's records under `out/records`, analyses them and writes the full report
/// (page, summaries, plots) into `out`.
pub fn go(out: &Path) -> Result<Vec<Analysis>, Error> {
    let records_dir = out.join("records");
    std::fs::create_dir_all(&records_dir).map_err(|e| out_err(&records_dir, e))?;
    let settings = AnalysisSettings::default();
    let mut results = Vec::new();
    let mut traces: Vec<Option<Traces>> = Vec::new();
    let mut names: Vec<(String, String)> = Vec::new();
    for (pi, part) in PARTS.iter().enumerate() {
        for (fi, (label, target, coherent)) in INPUTS.iter().enumerate() {
            let synth = SynthSettings {
                bits: part.bits,
                sample_rate_hz: FS_HZ,
                samples: SAMPLES,
                amplitude_dbfs: -1.0,
                frequency: if *coherent {
                    SynthFrequency::NearestCoherent(*target)
                } else {
                    SynthFrequency::Hz(*target)
                },
                phase_rad: 0.3 + fi as f64,
                offset_codes: 1.5,
                noise_rms_codes: part.noise_rms_codes,
                harmonics_dbc: part.harmonics_dbc.to_vec(),
                spur: None,
                jitter_rms_s: part.jitter_rms_s,
                inl_bow_lsb: 0.0,
                seed: 1000 + (pi * 10 + fi) as u64,
                dnl_pattern_lsb: Vec::new(),
                missing_codes: Vec::new(),
            };
            let made = synthesize(&synth)?;
            let path = records_dir.join(format!("{}_{label}.txt", part.name));
            write_record(&path, &made.record, &OutputLayout::Text)?;
            write_sidecar(
                &path,
                &Sidecar {
                    sample_rate_hz: Some(FS_HZ),
                    bits: Some(part.bits),
                    format: Some("text".to_string()),
                    generator: Some(serde_json::to_value(&synth).expect("plain data serialises")),
                    ..Sidecar::default()
                },
            )?;
            let (a, t) = match read_record(&path, &IngestSettings::default()) {
                Ok(ing) => match analyze(&ing.record, &settings) {
                    Ok(m) => {
                        let mut a = m.analysis;
                        let mut w = ing.warnings;
                        w.extend(a.warnings);
                        a.warnings = w;
                        (a, Some(m.traces))
                    }
                    Err(e) => (Analysis::failed(&ing.record.source, &e, ing.warnings), None),
                },
                Err(e) => (
                    Analysis::failed(&path.display().to_string(), &e, Vec::new()),
                    None,
                ),
            };
            results.push(a);
            traces.push(t);
            names.push((part.name.to_string(), label.to_string()));
        }
    }
    let items: Vec<(String, String, &Analysis, Option<&Traces>)> = names
        .iter()
        .zip(&results)
        .zip(&traces)
        .map(|(((device, record), a), t)| (device.clone(), record.clone(), a, t.as_ref()))
        .collect();
    write_run_report(
        out,
        "spurline demo · two simulated converters, three inputs each",
        &items,
        settings.spectrum.harmonics,
        &PlotOptions::default(),
    )?;
    print_summary(&results);
    println!(
        "\nwrote {} (with summary.csv, results.json and one folder per device)\n",
        out.join("index.html").display()
    );
    super::demo_lot::run(out)?;
    Ok(results)
}

fn print_summary(results: &[Analysis]) {
    // The input frequency, then the headline figures; labels and units from the figure table.
    let mut shown: Vec<&Figure> = vec![&figures::FIN];
    shown.extend(figures::headline());
    let width = |f: &Figure| f.label.chars().count().max(8);
    let mut head = format!("{:<28}", "record");
    let mut units = format!("{:<28}", "");
    for f in &shown {
        let w = width(f).max(if f.unit == Unit::Hz { 12 } else { 0 });
        let unit = if f.unit == Unit::Hz {
            ""
        } else {
            f.unit.symbol()
        };
        head.push_str(&format!(" {:>w$}", f.label));
        units.push_str(&format!(" {unit:>w$}"));
    }
    println!("{head}  {}", figures::WINDOW.label);
    println!("{}", units.trim_end());
    for a in results {
        let name = Path::new(&a.source)
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_else(|| a.source.clone());
        match (&a.spectrum, &a.error) {
            (Some(s), None) => {
                let cells = Cells::of(a);
                let mut line = format!("{name:<28}");
                for f in &shown {
                    let v = cells.number(f.key);
                    let (w, text) = if f.unit == Unit::Hz {
                        (width(f).max(12), v.map_or("—".into(), |v| si(v, "Hz", 5)))
                    } else {
                        (width(f), fixed(v, 2))
                    };
                    line.push_str(&format!(" {text:>w$}"));
                }
                println!("{line}  {}", s.window);
            }
            (_, Some(e)) => println!("{name:<28} error: {}", e.message),
            _ => println!("{name:<28} (no figures)"),
        }
        for w in &a.warnings {
            println!("    note: {w}");
        }
    }
}

//! The report stage: the SVG plots (well-formed, labelled, markers where the figures put them,
//! deterministic, small for long records), the CSV and JSON summaries (field for field the same),
//! escaping of names, atomic writes, the `analyze --report` and `demo` wiring, and the page rendered by
//! a real browser (headless chromium, skipped where it is not installed).

use assert_cmd::Command;
use spurline::analysis::{analyze, Analysis, AnalysisSettings, Measured, Traces};
use spurline::report::csv::flatten;
use spurline::report::svg::{
    column_extremes, decimated_indices, hex, histogram_svg, ideal_counts, palette, residual_svg,
    spectrum_svg, PlotOptions,
};
use spurline::report::{
    escape, file_safe_name, render_index_html, render_index_html_inline, write_atomic,
    write_device_summary, write_record_plots, write_run_report, IndexRow,
};
use spurline::synth::{synthesize, SynthFrequency, SynthSettings};
use spurline::{Error, ErrorKind, Location};
use std::collections::{BTreeMap, HashMap};
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

fn spurline() -> Command {
    Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
}

/// A 12-bit, 8192-sample coherent record with H2, H3 and a non-harmonic spur.
fn rich() -> SynthSettings {
    SynthSettings {
        bits: 12,
        samples: 8192,
        amplitude_dbfs: -1.0,
        frequency: SynthFrequency::NearestCoherent(7.3e6),
        noise_rms_codes: 0.4,
        harmonics_dbc: vec![(2, -68.0), (3, -74.0)],
        spur: Some((31.7e6, -82.0)),
        seed: 5,
        ..SynthSettings::default()
    }
}

fn measure(s: &SynthSettings) -> Measured {
    let rec = synthesize(s).expect("valid synth settings").record;
    analyze(&rec, &AnalysisSettings::default()).expect("record analyses")
}

fn texts(doc: &roxmltree::Document) -> Vec<String> {
    doc.descendants()
        .filter(|n| n.has_tag_name("text"))
        .map(|n| n.text().unwrap_or("").trim().to_string())
        .collect()
}

/// The (x, y) anchor of the first `<text>` whose content is exactly `content`.
fn text_at(doc: &roxmltree::Document, content: &str) -> Option<(f64, f64)> {
    doc.descendants()
        .filter(|n| n.has_tag_name("text"))
        .find(|n| n.text().map(str::trim) == Some(content))
        .map(|n| {
            (
                n.attribute("x").unwrap().parse().unwrap(),
                n.attribute("y").unwrap().parse().unwrap(),
            )
        })
}

fn points_of(n: &roxmltree::Node) -> Vec<(f64, f64)> {
    n.attribute("points")
        .unwrap_or("")
        .split_whitespace()
        .map(|p| {
            let (x, y) = p.split_once(',').expect("x,y pair");
            (x.parse().unwrap(), y.parse().unwrap())
        })
        .collect()
}

/// Pixel of `value` on an axis, from two labelled ticks (pixel, value) of that axis.
fn interpolate(a: (f64, f64), b: (f64, f64), value: f64) -> f64 {
    a.0 + (value - a.1) / (b.1 - a.1) * (b.0 - a.0)
}

#[test]
fn spectrum_plot_is_well_formed_labelled_and_marked() {
    let m = measure(&rich());
    let svg = spectrum_svg("rich", &m.analysis, &m.traces, &PlotOptions::default()).unwrap();
    let doc = roxmltree::Document::parse(&svg).expect("well-formed SVG");
    assert_eq!(doc.root_element().tag_name().name(), "svg");
    let all = texts(&doc);
    let has = |s: &str| all.iter().any(|t| t == s);
    for label in [
        "rich · spectrum",
        "frequency",
        "dBFS per bin",
        "H1",
        "H2",
        "H3",
        "worst spur",
        "Measured",
        "SNR",
        "SINAD",
        "THD",
        "SFDR",
        "spectral ENOB",
        "window",
        "samples",
        "fs",
        "records averaged",
        // SI-prefixed tick labels of a 100 MHz record: 0 to fs/2.
        "0 Hz",
        "10 MHz",
        "50 MHz",
    ] {
        assert!(has(label), "no text '{label}' in {all:?}");
    }
    let sp = m.analysis.spectrum.as_ref().unwrap();
    // The box shows the record's own figures, formatted as the text table does.
    assert!(has(&format!("{:.2} dB", sp.snr_db.unwrap())));
    assert!(has(&format!("{:.2} dBc", sp.sfdr_dbc.unwrap())));
    assert!(has(&m.analysis.samples.to_string()));
    assert!(!svg.contains("NaN") && !svg.contains("inf"));

    // Markers sit where the figures say: H2 at the folded 2·fin, against the axis' own tick labels
    // (fold rule: common practice, no source).
    let x0 = text_at(&doc, "0 Hz").unwrap().0;
    let x50 = text_at(&doc, "50 MHz").unwrap().0;
    let fin = m.analysis.fit.as_ref().unwrap().frequency_hz;
    let h2 = text_at(&doc, "H2").unwrap();
    let expect_h2 = interpolate((x0, 0.0), (x50, 50e6), 2.0 * fin);
    assert!(
        (h2.0 - expect_h2).abs() <= 3.0,
        "H2 at x {} not {expect_h2}",
        h2.0
    );

    // The floor line: every FLOOR-coloured dash is horizontal at the pixel of the average floor, and
    // the dashes span the axis.
    let y_of = |label: &str| text_at(&doc, label).map(|p| p.1);
    let (ya, yb) = (y_of("-100").unwrap(), y_of("-120").unwrap());
    let floor = sp.noise_floor_dbfs.unwrap();
    let expect_y = interpolate((ya, -100.0), (yb, -120.0), floor);
    let floor_hex = hex(palette::FLOOR);
    let dashes: Vec<Vec<(f64, f64)>> = doc
        .descendants()
        .filter(|n| n.has_tag_name("polyline") && n.attribute("stroke") == Some(&floor_hex))
        .map(|n| points_of(&n))
        .collect();
    assert!(dashes.len() > 10, "{} floor dashes", dashes.len());
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for d in &dashes {
        for &(x, y) in d {
            assert!(
                (y - expect_y).abs() <= 1.5,
                "floor dash at y {y}, floor at {expect_y}"
            );
            lo = lo.min(x);
            hi = hi.max(x);
        }
    }
    assert!(
        lo - x0 <= 10.0 && x50 - hi <= 10.0,
        "floor spans {lo}..{hi}"
    );
    assert!(all.iter().any(|t| t.starts_with("average noise floor")));
}

#[test]
fn log_frequency_axis_spaces_decades_equally() {
    let m = measure(&rich());
    let o = PlotOptions {
        log_frequency: true,
        ..PlotOptions::default()
    };
    let svg = spectrum_svg("rich", &m.analysis, &m.traces, &o).unwrap();
    let doc = roxmltree::Document::parse(&svg).unwrap();
    assert!(texts(&doc).iter().any(|t| t == "frequency (log scale)"));
    // Bin width 12.2 kHz: the axis covers 100 kHz, 1 MHz and 10 MHz decades; on a log axis each
    // decade is the same width (definition of a log scale).
    let x = |l: &str| text_at(&doc, l).unwrap_or_else(|| panic!("no tick {l}")).0;
    let (a, b, c) = (x("100 kHz"), x("1 MHz"), x("10 MHz"));
    assert!(b - a > 50.0);
    assert!(((c - b) - (b - a)).abs() <= 1.0, "{a} {b} {c}");
}

#[test]
fn bins_without_power_are_drawn_at_the_bottom_never_as_nan() {
    let mut m = measure(&rich());
    for p in &mut m.traces.powers[600..900] {
        *p = 0.0;
    }
    let svg = spectrum_svg("zeros", &m.analysis, &m.traces, &PlotOptions::default()).unwrap();
    assert!(!svg.contains("NaN") && !svg.contains("inf"));
    let doc = roxmltree::Document::parse(&svg).unwrap();
    // Every point of the trace lies inside the SVG (floored to the plot's bottom, not off to −∞).
    let trace_hex = hex(palette::TRACE);
    let (_, height) = PlotOptions::default().size();
    for n in doc
        .descendants()
        .filter(|n| n.attribute("stroke") == Some(&trace_hex) && n.has_tag_name("polyline"))
    {
        for (x, y) in points_of(&n) {
            assert!(
                x.is_finite() && (0.0..=height as f64).contains(&y),
                "{x},{y}"
            );
        }
    }
}

#[test]
fn column_reduction_keeps_every_spur() {
    // 2^19 bins into 700 columns; a one-bin spur anywhere survives as its column's maximum.
    let bins = 1usize << 19;
    let mut values: Vec<f64> = (0..bins)
        .map(|k| 1.0 + ((k as u64).wrapping_mul(2_654_435_761) % 1000) as f64 / 1000.0)
        .collect();
    for spur in [1usize, 12_345, 262_144, bins - 1] {
        values[spur] = 1e3;
        let cols = column_extremes(&values, 0, 700, |k| k as f64 / bins as f64);
        assert!(cols.len() <= 700);
        let best = cols.iter().max_by(|a, b| a.max.total_cmp(&b.max)).unwrap();
        assert_eq!((best.max, best.max_bin), (1e3, spur));
        assert!(cols.iter().all(|c| c.min <= c.max && c.min >= 1.0));
        values[spur] = 1.0;
    }
}

#[test]
fn plots_of_a_2_20_sample_record_stay_under_1_mb() {
    // A spur centred on bin 245 960, so its whole power sits in one bin of the unwindowed spectrum.
    let spur_hz = 245_960.0 * 100e6 / (1u64 << 20) as f64;
    let s = SynthSettings {
        bits: 16,
        samples: 1 << 20,
        noise_rms_codes: 2.0,
        harmonics_dbc: vec![(2, -90.0), (3, -95.0)],
        spur: Some((spur_hz, -110.0)),
        frequency: SynthFrequency::NearestCoherent(10.1e6),
        ..SynthSettings::default()
    };
    let m = measure(&s);
    let o = PlotOptions::default();
    let spec = spectrum_svg("long", &m.analysis, &m.traces, &o).unwrap();
    let resid = residual_svg("long", &m.analysis, &m.traces, &o).unwrap();
    let hist = histogram_svg("long", &m.analysis, &m.traces, &o).unwrap();
    for (name, svg) in [
        ("spectrum", &spec),
        ("residual", &resid),
        ("histogram", &hist),
    ] {
        assert!(svg.len() < 1_000_000, "{name}: {} bytes", svg.len());
        roxmltree::Document::parse(svg).expect("well-formed");
    }
    // The −110 dBc spur (about 55 dB above this record's per-bin floor) is still drawn after the
    // reduction of 2^19 bins to a few hundred columns: the trace reaches its level within 2 px.
    let doc = roxmltree::Document::parse(&spec).unwrap();
    let sp = m.analysis.spectrum.as_ref().unwrap();
    let fund = sp.fundamental_dbfs.unwrap();
    let x0 = text_at(&doc, "0 Hz").unwrap().0;
    let x50 = text_at(&doc, "50 MHz").unwrap().0;
    let y_tick = |v: i32| text_at(&doc, &v.to_string()).map(|p| (p.1, v as f64));
    let ticks: Vec<(f64, f64)> = (-200..=0).step_by(10).filter_map(y_tick).collect();
    let (ta, tb) = (ticks[0], ticks[ticks.len() - 1]);
    let want_x = interpolate((x0, 0.0), (x50, 50e6), spur_hz);
    let want_y = interpolate(ta, tb, fund - 110.0);
    let trace_hex = hex(palette::TRACE);
    let trace = doc
        .descendants()
        .find(|n| n.has_tag_name("polyline") && n.attribute("stroke") == Some(&trace_hex))
        .unwrap();
    let top_near = points_of(&trace)
        .into_iter()
        .filter(|(x, _)| (x - want_x).abs() <= 2.0)
        .map(|(_, y)| y)
        .fold(f64::INFINITY, f64::min);
    assert!(
        (top_near - want_y).abs() <= 2.0,
        "spur drawn at y {top_near}, expected {want_y}"
    );
}

/// Render time of a 2^20-sample spectrum (run with `cargo test --release -- --ignored render_time`).
#[test]
#[ignore]
fn render_time_of_a_2_20_sample_spectrum() {
    let s = SynthSettings {
        bits: 16,
        samples: 1 << 20,
        noise_rms_codes: 2.0,
        harmonics_dbc: vec![(2, -90.0), (3, -95.0)],
        ..SynthSettings::default()
    };
    let m = measure(&s);
    for log in [false, true] {
        let o = PlotOptions {
            log_frequency: log,
            ..PlotOptions::default()
        };
        let mut times = Vec::new();
        let mut size = 0;
        for _ in 0..15 {
            let t0 = Instant::now();
            size = spectrum_svg("long", &m.analysis, &m.traces, &o)
                .unwrap()
                .len();
            times.push(t0.elapsed());
        }
        times.sort();
        let median = times[times.len() / 2];
        println!("2^20 spectrum (log axis {log}): median {median:?}, {size} bytes");
        if !cfg!(debug_assertions) {
            assert!(median < Duration::from_millis(100), "{median:?}");
        }
    }
}

#[test]
fn residual_plot_is_labelled_and_decimates_deterministically() {
    let m = measure(&rich());
    let svg = residual_svg("rich", &m.analysis, &m.traces, &PlotOptions::default()).unwrap();
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let all = texts(&doc);
    for label in [
        "rich · sine-fit residual",
        "phase of the fitted sine (rad)",
        "residual (LSB)",
        "0",
        "π/2",
        "π",
        "3π/2",
        "2π",
        "sample index n (first 512 of 8192)",
        "sine-fit ENOB",
    ] {
        assert!(all.iter().any(|t| t == label), "no '{label}' in {all:?}");
    }
    let idx = decimated_indices(8192, 1500);
    assert_eq!(idx, decimated_indices(8192, 1500));
    assert!(idx.len() > 1400 && idx.len() <= 1500);
    assert!(idx.windows(2).all(|w| w[0] < w[1]) && *idx.last().unwrap() < 8192);
    assert!(all.iter().any(|t| t == &format!("{} of 8192", idx.len())));
    // Spread over the whole record: no gap longer than three average spacings.
    let gap = idx.windows(2).map(|w| w[1] - w[0]).max().unwrap();
    assert!(gap <= 3 * 8192 / 1500, "gap {gap}");
    assert_eq!(decimated_indices(100, 1500), (0..100).collect::<Vec<_>>());
}

/// The ideal code density against a direct simulation: a sine sampled at 2·10^6 evenly spaced phases
/// and rounded to codes (independent numerical check, common practice, no source).
#[test]
fn ideal_histogram_matches_a_densely_sampled_sine() {
    let m = 2_000_000usize;
    for (amp, off) in [(100.3, 0.7), (140.0, -3.2)] {
        // 8-bit: codes −128..=127; the second case overdrives and clips into the end codes.
        let total = 8192.0;
        let ideal = ideal_counts(256, -128, amp, off, total);
        let mut dense = vec![0.0; 256];
        for j in 0..m {
            let th = std::f64::consts::TAU * (j as f64 + 0.5) / m as f64;
            let y = (amp * th.cos() + off).round().clamp(-128.0, 127.0);
            dense[(y + 128.0) as usize] += total / m as f64;
        }
        let sum: f64 = ideal.iter().sum();
        assert!((sum - total).abs() < 1e-6, "sum {sum}");
        for k in 0..256 {
            assert!(
                (ideal[k] - dense[k]).abs() <= 4.0 * total / m as f64 + 1e-9,
                "A {amp}, code {}: {} vs {}",
                k as i64 - 128,
                ideal[k],
                dense[k]
            );
        }
    }
    let ms = measure(&rich());
    let svg = histogram_svg("rich", &ms.analysis, &ms.traces, &PlotOptions::default()).unwrap();
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let all = texts(&doc);
    for label in [
        "rich · code histogram",
        "output code",
        "count",
        "ideal sine density",
    ] {
        assert!(all.iter().any(|t| t == label), "no '{label}'");
    }
    let ideal_hex = hex(palette::HARMONIC);
    assert!(doc
        .descendants()
        .any(|n| n.has_tag_name("polyline") && n.attribute("stroke") == Some(&ideal_hex)));
}

/// Every file under `dir`, relative path → bytes.
fn tree(dir: &Path) -> BTreeMap<String, Vec<u8>> {
    fn walk(base: &Path, dir: &Path, out: &mut BTreeMap<String, Vec<u8>>) {
        for e in std::fs::read_dir(dir).unwrap() {
            let p = e.unwrap().path();
            if p.is_dir() {
                walk(base, &p, out);
            } else {
                let rel = p.strip_prefix(base).unwrap().display().to_string();
                out.insert(rel, std::fs::read(&p).unwrap());
            }
        }
    }
    let mut out = BTreeMap::new();
    walk(dir, dir, &mut out);
    out
}

/// A small run: two devices, a clean record, one with warnings (even coherent cycle count), a
/// failed one, and names that need escaping.
fn sample_run(device_a: &str, record_a: &str) -> Vec<(String, String, Analysis, Option<Traces>)> {
    let clean = measure(&rich());
    let warned = measure(&SynthSettings {
        samples: 4096,
        frequency: SynthFrequency::Hz(100e6 * 512.0 / 4096.0),
        noise_rms_codes: 0.3,
        seed: 9,
        ..SynthSettings::default()
    });
    assert!(!warned.analysis.warnings.is_empty(), "expected a warning");
    let err = Error::new(
        ErrorKind::NotInteger,
        "bench/b/broken.txt",
        Location::Line(17),
        "an integer code",
        "'12x'",
    );
    let failed = Analysis::failed("bench/b/broken.txt", &err, vec!["note <b>".to_string()]);
    vec![
        (
            device_a.to_string(),
            record_a.to_string(),
            clean.analysis,
            Some(clean.traces),
        ),
        (
            device_a.to_string(),
            "even".to_string(),
            warned.analysis,
            Some(warned.traces),
        ),
        ("b".to_string(), "broken".to_string(), failed, None),
    ]
}

fn write_sample(dir: &Path, device_a: &str, record_a: &str) {
    let run = sample_run(device_a, record_a);
    let items: Vec<(String, String, &Analysis, Option<&Traces>)> = run
        .iter()
        .map(|(d, r, a, t)| (d.clone(), r.clone(), a, t.as_ref()))
        .collect();
    write_run_report(dir, "sample run", &items, 10, &PlotOptions::default()).unwrap();
}

#[test]
fn run_report_layout_and_determinism() {
    let one = tempfile::tempdir().unwrap();
    let two = tempfile::tempdir().unwrap();
    write_sample(one.path(), "a", "clean");
    write_sample(two.path(), "a", "clean");
    let (t1, t2) = (tree(one.path()), tree(two.path()));
    let names: Vec<&str> = t1.keys().map(|s| s.as_str()).collect();
    assert_eq!(
        names,
        [
            "a/clean-histogram.svg",
            "a/clean-residual.svg",
            "a/clean-spectrum.svg",
            "a/even-histogram.svg",
            "a/even-residual.svg",
            "a/even-spectrum.svg",
            "a/results.json",
            "a/summary.csv",
            "b/results.json",
            "b/summary.csv",
            "index.html",
            "results.json",
            "summary.csv",
        ]
    );
    // Byte-identical from run to run (no timestamps, fixed formatting), no temporary files left.
    assert_eq!(t1, t2);
}

fn read_csv(path: &Path) -> (Vec<String>, Vec<Vec<String>>) {
    let mut r = csv::Reader::from_path(path).unwrap();
    let header = r.headers().unwrap().iter().map(String::from).collect();
    let rows = r
        .records()
        .map(|rec| rec.unwrap().iter().map(String::from).collect())
        .collect();
    (header, rows)
}

/// Checks a CSV against a JSON array of result records: one row per record, and every column equal to
/// the record's flattened JSON field (empty where the JSON has null); no JSON field missing a column.
fn assert_agree(csv_path: &Path, json_path: &Path, lead: &[&str]) -> Vec<Vec<String>> {
    let (header, rows) = read_csv(csv_path);
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(json_path).unwrap()).unwrap();
    let records = json.as_array().unwrap();
    assert_eq!(rows.len(), records.len());
    assert_eq!(&header[..lead.len()], lead);
    for (row, rec) in rows.iter().zip(records) {
        let flat: HashMap<String, String> = flatten(rec).into_iter().collect();
        for (col, cell) in header.iter().zip(row).skip(lead.len()) {
            let want = flat.get(col).cloned().unwrap_or_default();
            assert_eq!(cell, &want, "column {col}");
        }
        for (k, v) in &flat {
            assert!(
                v.is_empty() || header.contains(k),
                "JSON field {k} = {v} has no CSV column"
            );
        }
    }
    rows
}

#[test]
fn csv_and_json_agree_field_for_field() {
    let dir = tempfile::tempdir().unwrap();
    write_sample(dir.path(), "a", "clean");
    let run = assert_agree(
        &dir.path().join("summary.csv"),
        &dir.path().join("results.json"),
        &["device", "record"],
    );
    assert_eq!(run[0][..2], ["a".to_string(), "clean".to_string()]);
    assert_eq!(run[2][..2], ["b".to_string(), "broken".to_string()]);
    for device in ["a", "b"] {
        assert_agree(
            &dir.path().join(device).join("summary.csv"),
            &dir.path().join(device).join("results.json"),
            &[],
        );
    }
    let (header, rows) = read_csv(&dir.path().join("summary.csv"));
    let col = |name: &str| header.iter().position(|h| h == name).unwrap();
    // Warnings and failures are rows too, with their messages.
    assert!(!rows[1][col("warnings")].is_empty());
    assert_eq!(rows[2][col("error.kind")], "not_integer");
    assert!(rows[2][col("error.message")].contains("line 17"));
    assert_eq!(rows[2][col("warnings")], "note <b>");
    // Units in the header names: every numeric column's last part names its unit, or is a count
    // (DESIGN.md naming convention).
    let units = [
        "hz", "s", "db", "dbfs", "dbc", "bits", "codes", "lsb", "rad", "cycles", "bins", "vpp",
    ];
    let counts = [
        "samples",
        "iterations",
        "records_averaged",
        "order",
        "harmonic",
        "cycles_std",
    ];
    for (i, name) in header.iter().enumerate() {
        let numeric = rows
            .iter()
            .any(|r| r[i].parse::<f64>().is_ok() && r[i] != "true" && r[i] != "false");
        if !numeric {
            continue;
        }
        let last = name.rsplit('.').next().unwrap();
        let unit = last.rsplit('_').next().unwrap();
        assert!(
            units.contains(&unit) || counts.contains(&last),
            "column {name} has no unit"
        );
    }
}

#[test]
fn names_are_escaped_in_page_and_plots_and_made_safe_for_paths() {
    let dir = tempfile::tempdir().unwrap();
    let device = "<script>alert(1)</script>";
    let record = "a&b \"q\" <i>x</i>";
    write_sample(dir.path(), device, record);
    let page = std::fs::read_to_string(dir.path().join("index.html")).unwrap();
    assert!(!page.to_ascii_lowercase().contains("<script"));
    assert!(!page.contains("<i>x"));
    assert!(page.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
    assert!(page.contains("a&amp;b &quot;q&quot; &lt;i&gt;x&lt;/i&gt;"));
    assert!(page.contains("note &lt;b&gt;"));
    // The folder and file names are file-safe; the plot shows the real name (plotters escapes text).
    let folder = file_safe_name(device);
    assert_eq!(folder, "_script_alert_1___script_");
    let stem = file_safe_name(record);
    assert_eq!(stem, "a_b__q___i_x__i_");
    let svg = std::fs::read_to_string(
        dir.path()
            .join(&folder)
            .join(format!("{stem}-spectrum.svg")),
    )
    .unwrap();
    let doc = roxmltree::Document::parse(&svg).unwrap();
    assert!(texts(&doc).contains(&format!("{record} · spectrum")));
    assert_eq!(file_safe_name(".."), "_.");
    assert_eq!(file_safe_name(""), "_");
    assert_eq!(
        escape("<a href='x'>&\"</a>"),
        "&lt;a href=&#39;x&#39;&gt;&amp;&quot;&lt;/a&gt;"
    );
}

#[test]
fn linked_and_inlined_pages_trust_only_our_svg() {
    let dir = tempfile::tempdir().unwrap();
    let m = measure(&rich());
    let good = spectrum_svg("r", &m.analysis, &m.traces, &PlotOptions::default()).unwrap();
    std::fs::create_dir_all(dir.path().join("d")).unwrap();
    std::fs::write(dir.path().join("d/good.svg"), &good).unwrap();
    std::fs::write(
        dir.path().join("d/bad.svg"),
        "<svg xmlns=\"http://www.w3.org/2000/svg\"><script>alert(1)</script></svg>",
    )
    .unwrap();
    std::fs::write(
        dir.path().join("d/handler.svg"),
        "<svg xmlns=\"http://www.w3.org/2000/svg\"><rect onload=\"alert(1)\"/></svg>",
    )
    .unwrap();
    let rows = vec![IndexRow {
        device: "d".into(),
        record: "r".into(),
        analysis: m.analysis.clone(),
        plots: vec![
            "d/good.svg".into(),
            "d/bad.svg".into(),
            "d/handler.svg".into(),
        ],
        extra: vec![("verdict".into(), "fail: SNR below 80 dB".into())],
    }];
    let inline = render_index_html_inline("t", &rows, dir.path()).unwrap();
    assert!(inline.contains(good.trim_end()));
    assert!(!inline.contains("<script") && !inline.contains("onload"));
    assert!(inline.contains("<a href=\"d/bad.svg\">"));
    assert!(inline.contains("<a href=\"d/handler.svg\">"));
    assert!(inline.contains("<td class=\"t bad\">fail: SNR below 80 dB</td>"));
    let linked = render_index_html("t", &rows);
    assert!(linked.contains("<img src=\"d/good.svg\""));
    assert!(!linked.contains("<svg"));
    let missing = render_index_html_inline("t", &rows, &dir.path().join("nowhere"));
    assert_eq!(missing.unwrap_err().kind, ErrorKind::Io);
}

/// The per-record and per-device calls a batch makes as records finish.
#[test]
fn record_plots_and_device_summary_for_a_batch() {
    let dir = tempfile::tempdir().unwrap();
    let dev = dir.path().join("dev");
    let m = measure(&rich());
    let o = PlotOptions::default();
    let written = write_record_plots(&dev, "run 1/a", &m.analysis, &m.traces, &o).unwrap();
    let names: Vec<String> = written
        .iter()
        .map(|p| p.strip_prefix(&dev).unwrap().display().to_string())
        .collect();
    assert_eq!(
        names,
        [
            "run_1_a-spectrum.svg",
            "run_1_a-residual.svg",
            "run_1_a-histogram.svg"
        ]
    );
    assert_eq!(
        std::fs::read_to_string(&written[0]).unwrap(),
        spectrum_svg("run 1/a", &m.analysis, &m.traces, &o).unwrap()
    );
    let err = Error::new(ErrorKind::Io, "x.txt", Location::Whole, "a file", "none");
    let failed = Analysis::failed("x.txt", &err, Vec::new());
    assert!(
        write_record_plots(&dev, "x", &failed, &Traces::default(), &o)
            .unwrap()
            .is_empty()
    );
    // Traces that do not belong to the record are refused with a typed error, not drawn.
    let mut wrong = m.traces.clone();
    wrong.powers.truncate(100);
    let e = write_record_plots(&dev, "w", &m.analysis, &wrong, &o).unwrap_err();
    assert_eq!(e.kind, ErrorKind::Empty);
    write_device_summary(&dev, &[m.analysis.clone(), failed], 10).unwrap();
    assert_agree(&dev.join("summary.csv"), &dev.join("results.json"), &[]);
}

#[test]
fn atomic_writes_replace_whole_files_and_name_the_path_on_error() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("sub/out.txt");
    write_atomic(&p, b"first").unwrap();
    write_atomic(&p, b"second").unwrap();
    assert_eq!(std::fs::read(&p).unwrap(), b"second");
    let left: Vec<PathBuf> = std::fs::read_dir(dir.path().join("sub"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect();
    assert_eq!(left, vec![p.clone()]);
    // A folder in the way of the file: the error is of kind Output and names the path.
    let blocked = dir.path().join("sub");
    let e = write_atomic(&blocked, b"x").unwrap_err();
    assert_eq!(e.kind, ErrorKind::Output);
    assert!(
        e.to_string().contains(&blocked.display().to_string()),
        "{e}"
    );
    // A file in the way of the folder.
    let e = write_atomic(&p.join("inner.txt"), b"x").unwrap_err();
    assert_eq!(e.kind, ErrorKind::Output);
}

#[test]
fn analyze_writes_a_report_of_the_records_it_analysed() {
    let dir = tempfile::tempdir().unwrap();
    let bench = dir.path().join("bench-7");
    std::fs::create_dir_all(&bench).unwrap();
    for (name, fin) in [("low.txt", "5.1M"), ("high.txt", "21.3M")] {
        spurline()
            .args([
                "synth",
                "--bits",
                "12",
                "--noise-rms",
                "0.5",
                "--coherent-near",
                fin,
            ])
            .arg("--output")
            .arg(bench.join(name))
            .assert()
            .success();
    }
    let out = dir.path().join("rep");
    let res = spurline()
        .arg("analyze")
        .arg(bench.join("low.txt"))
        .arg(bench.join("high.txt"))
        .arg(bench.join("missing.txt"))
        .arg("--report")
        .arg(&out)
        .arg("--log-frequency")
        .output()
        .unwrap();
    // One record could not be read: exit status 2, and the report still has all three rows.
    assert_eq!(res.status.code(), Some(2));
    for f in [
        "index.html",
        "summary.csv",
        "results.json",
        "bench-7/summary.csv",
        "bench-7/results.json",
        "bench-7/low-spectrum.svg",
        "bench-7/low-residual.svg",
        "bench-7/low-histogram.svg",
        "bench-7/high-spectrum.svg",
    ] {
        assert!(out.join(f).exists(), "no {f}");
    }
    let (header, rows) = read_csv(&out.join("summary.csv"));
    assert_eq!(header[..2], ["device".to_string(), "record".to_string()]);
    let names: Vec<(&str, &str)> = rows.iter().map(|r| (&*r[0], &*r[1])).collect();
    assert_eq!(
        names,
        [
            ("bench-7", "low"),
            ("bench-7", "high"),
            ("bench-7", "missing")
        ]
    );
    let spec = std::fs::read_to_string(out.join("bench-7/low-spectrum.svg")).unwrap();
    assert!(spec.contains("frequency (log scale)"));
}

#[test]
fn demo_writes_the_same_full_report_every_time() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("demo");
    let run = || {
        let res = spurline()
            .args(["demo", "--out"])
            .arg(&out)
            .output()
            .unwrap();
        assert!(
            res.status.success(),
            "{}",
            String::from_utf8_lossy(&res.stderr)
        );
        tree(&out)
    };
    let first = run();
    for device in ["wren-12", "otter-14"] {
        for input in ["f05M", "f21M", "f47M"] {
            for kind in ["spectrum", "residual", "histogram"] {
                let f = format!("{device}/{input}-{kind}.svg");
                assert!(first.contains_key(&f), "no {f}");
            }
        }
        assert!(first.contains_key(&format!("{device}/summary.csv")));
    }
    assert!(first.contains_key("index.html"));
    assert_eq!(first, run());
}

// ---- the page in a real browser ----

fn find_chromium() -> Option<PathBuf> {
    let path = std::env::var_os("PATH")?;
    std::env::split_paths(&path)
        .flat_map(|d| ["chromium", "chromium-browser"].map(|n| d.join(n)))
        .find(|p| p.is_file())
}

/// Runs chromium headless with a fresh profile, stdout into `stdout_to`; kills it after `limit`.
fn spawn_chromium(
    exe: &Path,
    profile: &Path,
    extra: &[String],
    url: &str,
    stdout_to: &Path,
) -> std::process::Child {
    let mut cmd = std::process::Command::new(exe);
    cmd.args([
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--disable-quic",
        "--no-first-run",
    ])
    .arg(format!("--user-data-dir={}", profile.display()))
    .args(extra)
    .arg(url)
    .stdin(std::process::Stdio::null())
    .stdout(std::fs::File::create(stdout_to).unwrap())
    .stderr(std::process::Stdio::null());
    cmd.spawn().expect("chromium starts")
}

fn wait_or_kill(child: &mut std::process::Child, limit: Duration) -> bool {
    let start = Instant::now();
    loop {
        if let Ok(Some(status)) = child.try_wait() {
            return status.success();
        }
        if start.elapsed() > limit {
            let _ = child.kill();
            let _ = child.wait();
            return false;
        }
        std::thread::sleep(Duration::from_millis(50));
    }
}

#[test]
fn page_renders_in_a_headless_browser() {
    let Some(exe) = find_chromium() else {
        println!("skipping: chromium is not installed (.ci/run installs it)");
        return;
    };
    let dir = tempfile::tempdir().unwrap();
    let run = dir.path().join("run");
    write_sample(&run, "<script>alert(1)</script>", "clean");
    let url = format!("file://{}", run.join("index.html").display());
    let dom_file = dir.path().join("dom.html");
    let png_file = dir.path().join("page.png");
    let mut dom = spawn_chromium(
        &exe,
        &dir.path().join("profile-dom"),
        &["--dump-dom".to_string()],
        &url,
        &dom_file,
    );
    let mut shot = spawn_chromium(
        &exe,
        &dir.path().join("profile-shot"),
        &[
            format!("--screenshot={}", png_file.display()),
            "--window-size=1400,2000".to_string(),
        ],
        &url,
        &dir.path().join("shot.out"),
    );
    let limit = Duration::from_secs(60);
    let dom_ok = wait_or_kill(&mut dom, limit);
    let shot_ok = wait_or_kill(&mut shot, limit);
    assert!(dom_ok && shot_ok, "chromium failed or timed out");

    // The DOM as the browser built it: the table with one row per record, every plot as an svg element
    // with drawn lines, the hostile device name as text and no script element.
    let dom = std::fs::read_to_string(&dom_file).unwrap();
    assert!(dom.contains("<table id=\"records\">"), "no table");
    for i in 0..3 {
        assert!(dom.contains(&format!("id=\"row{i}\"")), "no row {i}");
    }
    assert!(dom.contains("<tr class=\"warn\" id=\"row1\">"));
    assert!(dom.contains("<tr class=\"fail\" id=\"row2\">"));
    assert_eq!(dom.matches("<svg").count(), 6, "two records × three plots");
    assert!(dom.matches("<polyline").count() > 100);
    assert!(dom.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
    assert!(!dom.to_ascii_lowercase().contains("<script"));

    // The screenshot: a PNG of the window's size (PNG spec: signature, then IHDR width and height),
    // not blank, showing the page header's colour and the plots' trace colour.
    let bytes = std::fs::read(&png_file).expect("screenshot written");
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n");
    assert_eq!(&bytes[12..16], b"IHDR");
    let width = u32::from_be_bytes(bytes[16..20].try_into().unwrap());
    let height = u32::from_be_bytes(bytes[20..24].try_into().unwrap());
    assert_eq!((width, height), (1400, 2000));
    let decoder = png::Decoder::new(std::io::Cursor::new(&bytes));
    let mut reader = decoder.read_info().unwrap();
    let mut buf = vec![0; reader.output_buffer_size()];
    let info = reader.next_frame(&mut buf).unwrap();
    assert_eq!(info.bit_depth, png::BitDepth::Eight);
    let step = info.color_type.samples();
    assert!(step >= 3);
    let near = |p: &[u8], c: (u8, u8, u8), tol: i32| {
        (p[0] as i32 - c.0 as i32).abs() <= tol
            && (p[1] as i32 - c.1 as i32).abs() <= tol
            && (p[2] as i32 - c.2 as i32).abs() <= tol
    };
    let (mut non_white, mut header, mut trace) = (0usize, 0usize, 0usize);
    for p in buf[..info.buffer_size()].chunks_exact(step) {
        if !(p[0] > 245 && p[1] > 245 && p[2] > 245) {
            non_white += 1;
        }
        if near(p, (0x17, 0x38, 0x4A), 2) {
            header += 1;
        }
        if near(p, palette::TRACE, 12) {
            trace += 1;
        }
    }
    let total = (width * height) as usize;
    assert!(
        non_white > total / 10,
        "{non_white} of {total} pixels drawn"
    );
    assert!(header > 20_000, "header: {header} pixels");
    assert!(trace > 200, "trace: {trace} pixels");
}

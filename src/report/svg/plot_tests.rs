//! Unit tests of the plots: well-formed SVG, labels, markers where the figures put them (against the
//! axes' own tick labels), the pixel-column reduction and decimation, the ideal code density, size
//! for long records. They look for our colour scheme ([`super::palette`]) in the SVG, which is why
//! they live inside the crate.

use super::histogram::ideal_counts;
use super::residual::decimated_indices;
use super::spectrum::column_extremes;
use super::{hex, histogram_svg, palette, residual_svg, spectrum_svg, PlotOptions};
use crate::analysis::{analyze, AnalysisSettings, Measured};
use crate::synth::{synthesize, SynthFrequency, SynthSettings};

/// A 12-bit, 8192-sample coherent record with H2, H3 and a non-harmonic spur.
pub(crate) fn rich() -> SynthSettings {
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

pub(crate) fn measure(s: &SynthSettings) -> Measured {
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

/// The anchor of a tick label of the horizontal axis (the lowest `<text>` with that content: the same
/// number can also label the vertical axis).
fn x_tick(doc: &roxmltree::Document, content: &str) -> Option<(f64, f64)> {
    anchors(doc, content)
        .into_iter()
        .max_by(|a, b| a.1.total_cmp(&b.1))
}

/// The anchor of a tick label of the vertical axis (the leftmost `<text>` with that content).
fn y_tick(doc: &roxmltree::Document, content: &str) -> Option<(f64, f64)> {
    anchors(doc, content)
        .into_iter()
        .min_by(|a, b| a.0.total_cmp(&b.0))
}

fn anchors(doc: &roxmltree::Document, content: &str) -> Vec<(f64, f64)> {
    doc.descendants()
        .filter(|n| n.has_tag_name("text") && n.text().map(str::trim) == Some(content))
        .map(|n| {
            (
                n.attribute("x").unwrap().parse().unwrap(),
                n.attribute("y").unwrap().parse().unwrap(),
            )
        })
        .collect()
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
        "frequency (MHz)",
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
        // Tick labels of a 100 MHz record in the axis title's unit: 0 to fs/2.
        "0",
        "10",
        "50",
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
    let x0 = x_tick(&doc, "0").unwrap().0;
    let x50 = x_tick(&doc, "50").unwrap().0;
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
    let y_of = |label: &str| y_tick(&doc, label).map(|p| p.1);
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
    assert!(texts(&doc)
        .iter()
        .any(|t| t == "frequency (MHz, log scale)"));
    // Bin width 12.2 kHz: the axis covers 100 kHz, 1 MHz and 10 MHz decades; on a log axis each
    // decade is the same width (definition of a log scale).
    let x = |l: &str| x_tick(&doc, l).unwrap_or_else(|| panic!("no tick {l}")).0;
    let (a, b, c) = (x("0.1"), x("1"), x("10"));
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
    let x0 = x_tick(&doc, "0").unwrap().0;
    let x50 = x_tick(&doc, "50").unwrap().0;
    let y_at = |v: i32| y_tick(&doc, &v.to_string()).map(|p| (p.1, v as f64));
    let ticks: Vec<(f64, f64)> = (-200..=0).step_by(10).filter_map(y_at).collect();
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

/// Equivalent noise bandwidth (bins) and coherent gain of the windows the plot scales by, as Heinzel
/// et al. 2002 (ENBW, 4 decimals) and Harris 1978 Table I (coherent gain, 2 decimals; from memory)
/// print them; the scale of the plot is 10·log10(ENBW).
#[test]
fn plot_scale_is_the_published_window_figures() {
    use super::spectrum::PlotScale;
    // Heinzel prints four decimals: half a unit of the last digit.
    const PRINTED_ENBW: f64 = 0.5e-4;
    // Harris prints two decimals: half a unit of the last digit.
    const PRINTED_CG: f64 = 0.5e-2;
    for (name, enbw, cg) in [
        ("rectangular", 1.0000, 1.00),
        ("hann", 1.5000, 0.50),
        ("blackman-harris-4", 2.0044, 0.36),
        ("hft90d", 3.8832, 0.21),
        ("hft144d", 4.5386, 0.18),
    ] {
        let s = PlotScale::of(name).unwrap();
        assert!(
            (s.enbw_bins - enbw).abs() <= PRINTED_ENBW,
            "{name}: ENBW {}",
            s.enbw_bins
        );
        assert!(
            (s.coherent_gain - cg).abs() <= PRINTED_CG,
            "{name}: CG {}",
            s.coherent_gain
        );
    }
    // Hann: 10·log10(1.5) = 1.761 dB (closed form ENBW = (a0² + a1²/2)/a0², windows.md).
    let hann = PlotScale::of("hann").unwrap();
    assert!((hann.offset_db() - 1.5f64.log10() * 10.0).abs() < 1e-9);
}

/// The centre (x, y) of every filled circle of colour `c`.
fn dots(doc: &roxmltree::Document, c: (u8, u8, u8)) -> Vec<(f64, f64)> {
    let want = hex(c);
    doc.descendants()
        .filter(|n| n.has_tag_name("circle") && n.attribute("fill") == Some(want.as_str()))
        .map(|n| {
            (
                n.attribute("cx").unwrap().parse().unwrap(),
                n.attribute("cy").unwrap().parse().unwrap(),
            )
        })
        .collect()
}

/// A −1 dBFS tone under a window reads −1 dBFS on the plot: its marker at the tone's level, and for a
/// tone centred on a bin the trace's peak too; between bins the peak is lower by at most the window's
/// scalloping loss. The noise line sits at the floor plus 10·log10(ENBW).
#[test]
fn windowed_tone_reads_its_level_in_dbfs() {
    use crate::dft::window::Window;
    use crate::spectrum::WindowChoice;
    // The requirement, and about 1/40 of the H1 marker's pixel pitch at this height.
    const MARKER_DB: f64 = 0.1;
    // A tall plot: 4000 px for about 150 dB, 0.04 dB per pixel, so pixel rounding stays far below
    // the 0.1 dB asked of the marker.
    let o = PlotOptions {
        height_px: 4000,
        ..PlotOptions::default()
    };
    // 4096 samples at 100 MHz: bin 24.4140625 kHz. Coherent: 301 cycles; between bins: 301.5.
    let bin_hz = 100e6 / 4096.0;
    for (window, cycles) in [
        (Window::Hann, 301.0),
        (Window::Hann, 301.5),
        (Window::BlackmanHarris4, 301.37),
        (Window::BlackmanHarris7, 301.5),
        (Window::Hft144d, 301.25),
    ] {
        let s = SynthSettings {
            bits: 14,
            samples: 4096,
            amplitude_dbfs: -1.0,
            frequency: SynthFrequency::Hz(cycles * bin_hz),
            noise_rms_codes: 1.0,
            harmonics_dbc: vec![(3, -80.0)],
            seed: 11,
            ..SynthSettings::default()
        };
        let rec = synthesize(&s).unwrap().record;
        let mut settings = AnalysisSettings::default();
        settings.spectrum.window = WindowChoice::Fixed(window);
        let m = analyze(&rec, &settings).unwrap();
        let svg = spectrum_svg("w", &m.analysis, &m.traces, &o).unwrap();
        let doc = roxmltree::Document::parse(&svg).unwrap();
        let tick = |v: i32| y_tick(&doc, &v.to_string()).map(|p| (p.1, v as f64));
        // Negative ticks only: "0" and "10" also label the frequency axis.
        let ticks: Vec<(f64, f64)> = (-200..=-10).step_by(10).filter_map(tick).collect();
        assert!(ticks.len() >= 3, "{window:?}: y ticks {ticks:?}");
        let (ta, tb) = (ticks[0], ticks[ticks.len() - 1]);
        let db_at = |y: f64| ta.1 + (y - ta.0) / (tb.0 - ta.0) * (tb.1 - ta.1);
        let h1 = dots(&doc, palette::FUNDAMENTAL);
        assert_eq!(h1.len(), 1, "{window:?}: one H1 marker");
        let marker = db_at(h1[0].1);
        assert!(
            (marker - -1.0).abs() <= MARKER_DB,
            "{window:?} at {cycles} cycles: H1 marker at {marker:.3} dBFS"
        );
        // The trace's highest point is the tone's peak bin.
        let trace_hex = hex(palette::TRACE);
        let peak = doc
            .descendants()
            .filter(|n| n.has_tag_name("polyline") && n.attribute("stroke") == Some(&trace_hex))
            .flat_map(|n| points_of(&n))
            .map(|p| db_at(p.1))
            .fold(f64::NEG_INFINITY, f64::max);
        let scallop = window.figures().scalloping_loss_db;
        if cycles.fract() == 0.0 {
            assert!((peak - -1.0).abs() <= MARKER_DB, "{window:?}: peak {peak}");
        } else {
            assert!(
                peak <= -1.0 + MARKER_DB && peak >= -1.0 - scallop - MARKER_DB,
                "{window:?} at {cycles}: peak {peak}, scalloping loss {scallop}"
            );
        }
        // The dashed noise line: the figures' floor (power per bin) plus 10·log10(ENBW).
        let floor_hex = hex(palette::FLOOR);
        let floor_y = doc
            .descendants()
            .find(|n| n.has_tag_name("polyline") && n.attribute("stroke") == Some(&floor_hex))
            .map(|n| points_of(&n)[0].1)
            .unwrap();
        let sp = m.analysis.spectrum.as_ref().unwrap();
        let want = sp.noise_floor_dbfs.unwrap() + 10.0 * window.figures().enbw_bins.log10();
        assert!(
            (db_at(floor_y) - want).abs() <= MARKER_DB,
            "{window:?}: floor drawn at {}, want {want}",
            db_at(floor_y)
        );
        let all = texts(&doc);
        assert!(
            all.iter()
                .any(|t| t.starts_with(&format!("{} window, ENBW", window.name()))),
            "{window:?}: the caption states the scale"
        );
    }
}

/// Labels never overlap, even where harmonics fold close together; the largest non-harmonic spurs
/// are labelled S1, S2 in order of level.
#[test]
fn labels_do_not_collide_and_spurs_are_listed() {
    // fin near fs/5: H4, H6 fold next to H1 and H5, H10 next to DC and each other (fold rule:
    // common practice, no source).
    let s = SynthSettings {
        bits: 12,
        samples: 8192,
        amplitude_dbfs: -1.0,
        frequency: SynthFrequency::NearestCoherent(19.9e6),
        noise_rms_codes: 0.3,
        harmonics_dbc: (2..=10).map(|k| (k, -60.0 - 2.0 * k as f64)).collect(),
        spur: Some((31.7e6, -70.0)),
        seed: 3,
        ..SynthSettings::default()
    };
    let m = measure(&s);
    let svg = spectrum_svg("crowd", &m.analysis, &m.traces, &PlotOptions::default()).unwrap();
    let doc = roxmltree::Document::parse(&svg).unwrap();
    // Bold 12 px labels: the boxes as placed (7 px per character, 14 px tall, bottom anchored).
    let boxes: Vec<(String, f64, f64, f64, f64)> = doc
        .descendants()
        .filter(|n| n.has_tag_name("text") && n.attribute("font-weight") == Some("bold"))
        .filter_map(|n| {
            let t = n.text()?.trim().to_string();
            if !(t.starts_with('H') || t.starts_with('S') || t == "worst spur") {
                return None;
            }
            let x: f64 = n.attribute("x")?.parse().ok()?;
            let y: f64 = n.attribute("y")?.parse().ok()?;
            let half = 3.5 * t.chars().count() as f64;
            Some((t, x - half, y - 13.0, x + half, y))
        })
        .collect();
    assert!(boxes.len() >= 8, "{:?}", boxes);
    for (i, a) in boxes.iter().enumerate() {
        for b in &boxes[i + 1..] {
            let overlap = a.1 < b.3 && b.1 < a.3 && a.2 < b.4 && b.2 < a.4;
            assert!(!overlap, "labels {} and {} overlap", a.0, b.0);
        }
    }
    let labels: Vec<&str> = boxes.iter().map(|b| b.0.as_str()).collect();
    assert!(labels.contains(&"S1"), "{labels:?}");
    let all = texts(&doc);
    assert!(all.iter().any(|t| t.starts_with("S1 31.7")), "{all:?}");
}

//! Comparison plots (SVG, plotters): the two runs' distributions side by side, and a figure against
//! input frequency for both runs.

use crate::analysis::{Analysis, Traces};
use crate::error::{Error, ErrorKind, Location, Result};
use crate::report::svg::spectrum::PlotScale;
use crate::report::svg::{palette, rgb};
use plotters::prelude::*;

const FONT: &str = "sans-serif";
/// Run A's colour and run B's (our own scheme, from the report palette).
const COLOUR_A: (u8, u8, u8) = palette::TRACE;
const COLOUR_B: (u8, u8, u8) = palette::HARMONIC;

fn err<E: std::fmt::Display>(e: E) -> Error {
    Error::new(
        ErrorKind::Output,
        "",
        Location::Whole,
        "a drawable comparison plot",
        e.to_string(),
    )
}

fn range_of(values: impl Iterator<Item = f64>) -> (f64, f64) {
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for v in values.filter(|v| v.is_finite()) {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    if !lo.is_finite() {
        return (0.0, 1.0);
    }
    let pad = ((hi - lo) * 0.15).max(0.05);
    (lo - pad, hi + pad)
}

fn quartiles(v: &[f64]) -> Option<(f64, f64, f64)> {
    if v.is_empty() {
        return None;
    }
    let mut s = v.to_vec();
    s.sort_by(|a, b| a.total_cmp(b));
    // Linear interpolation between order statistics (numpy's default percentile rule).
    let q = |p: f64| {
        let x = p * (s.len() - 1) as f64;
        let (i, f) = (x.floor() as usize, x.fract());
        s[i] + f * (s[(i + 1).min(s.len() - 1)] - s[i])
    };
    Some((q(0.25), q(0.5), q(0.75)))
}

/// Ticks and a range for values `lo..hi` padded as [`range_of`] pads them.
fn value_axis(lo: f64, hi: f64, target: usize) -> crate::report::svg::TickAxis {
    crate::report::svg::TickAxis::new(lo, hi, crate::report::svg::nice_ticks(lo, hi, target))
}

/// Two distributions side by side: every value as a point (spread sideways by a fixed rule), with a
/// box from the first to the third quartile and a line at the median, each column named A or B
/// under it.
pub fn distributions_svg(title: &str, unit: &str, a: &[f64], b: &[f64]) -> Result<String> {
    use crate::report::svg::{style_mesh, trim_number, TickAxis, Ticks};
    use plotters::style::text_anchor::{HPos, Pos, VPos};
    let (lo, hi) = range_of(a.iter().chain(b).copied());
    let y_axis = value_axis(lo, hi, 6);
    let y_dec = y_axis.ticks.decimals;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (360, 300)).into_drawing_area();
        root.fill(&rgb(palette::BACKGROUND)).map_err(err)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, (FONT, 14).into_font().color(&rgb(palette::INK)))
            .margin(8)
            .x_label_area_size(28)
            .y_label_area_size(56)
            .build_cartesian_2d(TickAxis::new(0.0, 2.0, Ticks::default()), y_axis)
            .map_err(err)?;
        {
            let yl = |v: &f64| trim_number(*v, y_dec);
            let xl = |_: &f64| String::new();
            let mut m = chart.configure_mesh();
            m.disable_x_mesh()
                .y_desc(unit)
                .x_label_formatter(&xl)
                .y_label_formatter(&yl);
            style_mesh(&mut m);
            m.draw().map_err(err)?;
        }
        for (name, centre, values, colour) in [("A", 0.5, a, COLOUR_A), ("B", 1.5, b, COLOUR_B)] {
            if let Some((q1, med, q3)) = quartiles(values) {
                chart
                    .draw_series(std::iter::once(Rectangle::new(
                        [(centre - 0.28, q1), (centre + 0.28, q3)],
                        rgb(colour).mix(0.18).filled(),
                    )))
                    .map_err(err)?;
                chart
                    .draw_series(std::iter::once(PathElement::new(
                        vec![(centre - 0.28, med), (centre + 0.28, med)],
                        rgb(colour).stroke_width(2),
                    )))
                    .map_err(err)?;
            }
            // Golden-ratio spread: deterministic and even, whatever the count.
            chart
                .draw_series(values.iter().enumerate().map(|(i, &v)| {
                    let dx = ((i as f64 * 0.618_033_988_75).fract() - 0.5) * 0.4;
                    Circle::new((centre + dx, v), 3, rgb(colour).filled())
                }))
                .map_err(err)?;
            // The run's letter under its column, in its colour.
            let (px, py) = chart.backend_coord(&(centre, lo));
            let colour = rgb(colour);
            let style = TextStyle::from((FONT, 14).into_font().style(FontStyle::Bold))
                .color(&colour)
                .pos(Pos::new(HPos::Center, VPos::Top));
            root.draw(&Text::new(
                format!("{name} (n = {})", values.len()),
                (px, py + 6),
                style,
            ))
            .map_err(err)?;
        }
        root.present().map_err(err)?;
    }
    Ok(svg)
}

/// A figure against input frequency for both runs: the mean per condition, one line per run.
pub fn versus_frequency_svg(
    title: &str,
    unit: &str,
    a: &[(f64, f64)],
    b: &[(f64, f64)],
) -> Result<String> {
    series_svg(
        title,
        "input frequency (MHz)",
        unit,
        &[("A", a), ("B", b)],
        1e6,
    )
}

/// Named series of (x, y) points, one line each (x divided by `x_scale` for the axis): the first in the
/// run-A colour, the second in the run-B colour, further ones in a muted colour. The legend is a row
/// under the frame, so it never covers a point.
pub fn series_svg(
    title: &str,
    x_desc: &str,
    unit: &str,
    series: &[(&str, &[(f64, f64)])],
    x_scale: f64,
) -> Result<String> {
    use crate::report::svg::{style_mesh, trim_number};
    use plotters::style::text_anchor::{HPos, Pos, VPos};
    let (x0, x1) = range_of(
        series
            .iter()
            .flat_map(|s| s.1.iter())
            .map(|p| p.0 / x_scale),
    );
    let (y0, y1) = range_of(series.iter().flat_map(|s| s.1.iter()).map(|p| p.1));
    let (xa, ya) = (value_axis(x0, x1, 7), value_axis(y0, y1, 6));
    let (x_dec, y_dec) = (xa.ticks.decimals, ya.ticks.decimals);
    let size = (480u32, 320u32);
    let ink = rgb(palette::INK);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, size).into_drawing_area();
        root.fill(&rgb(palette::BACKGROUND)).map_err(err)?;
        let (plot, legend) = root.split_vertically(size.1 - 26);
        let mut chart = ChartBuilder::on(&plot)
            .caption(title, (FONT, 14).into_font().color(&ink))
            .margin(8)
            .x_label_area_size(34)
            .y_label_area_size(56)
            .build_cartesian_2d(xa, ya)
            .map_err(err)?;
        {
            let xl = |v: &f64| trim_number(*v, x_dec);
            let yl = |v: &f64| trim_number(*v, y_dec);
            let mut m = chart.configure_mesh();
            m.x_desc(x_desc)
                .y_desc(unit)
                .x_label_formatter(&xl)
                .y_label_formatter(&yl);
            style_mesh(&mut m);
            m.draw().map_err(err)?;
        }
        let text = TextStyle::from((FONT, 12).into_font())
            .color(&ink)
            .pos(Pos::new(HPos::Left, VPos::Center));
        let mut lx = 66i32;
        for (i, (name, points)) in series.iter().enumerate() {
            let colour = [COLOUR_A, COLOUR_B]
                .get(i)
                .copied()
                .unwrap_or(palette::PANEL_EDGE);
            let mut pts: Vec<(f64, f64)> = points.iter().map(|p| (p.0 / x_scale, p.1)).collect();
            pts.sort_by(|p, q| p.0.total_cmp(&q.0));
            chart
                .draw_series(LineSeries::new(pts.clone(), rgb(colour).stroke_width(2)))
                .map_err(err)?;
            chart
                .draw_series(pts.iter().map(|&p| Circle::new(p, 4, rgb(colour).filled())))
                .map_err(err)?;
            legend
                .draw(&PathElement::new(
                    vec![(lx, 12), (lx + 18, 12)],
                    rgb(colour).stroke_width(2),
                ))
                .map_err(err)?;
            legend
                .draw(&Text::new(name.to_string(), (lx + 24, 12), text.clone()))
                .map_err(err)?;
            lx += 24 + 7 * name.chars().count() as i32 + 18;
        }
        root.present().map_err(err)?;
    }
    Ok(svg)
}

/// One run's spectrum on the overlay: amplitude-normalised dBFS per point, its fundamental's measured
/// level, and the window's scale.
#[derive(Debug, Clone, PartialEq)]
pub struct OverlayTrace {
    /// Legend name ("A dev3").
    pub name: String,
    /// (frequency in Hz, level in dBFS as drawn: bin power + 10·log10(ENBW)), in frequency order.
    pub points: Vec<(f64, f64)>,
    /// The fundamental: (frequency in Hz, its measured level in dBFS, its bins summed).
    pub tone: Option<(f64, f64)>,
    /// The window's scale (ENBW, coherent gain, scalloping).
    pub scale: PlotScale,
}

impl OverlayTrace {
    /// The trace of one analysed record: each of `columns` groups of bins keeps its largest, drawn
    /// at its power per bin plus 10·log10(ENBW) (the spectrum plot's scale, [`PlotScale`]).
    pub fn of(name: String, a: &Analysis, t: &Traces, columns: usize) -> Result<OverlayTrace> {
        let sp = a
            .spectrum
            .as_ref()
            .ok_or_else(|| err("a record without spectral figures"))?;
        let scale = PlotScale::of(&sp.window)?;
        let offset = scale.offset_db();
        let pfs = crate::record::full_scale_power(a.bits);
        let p = &t.powers;
        let bin_hz = a.sample_rate_hz / a.samples.max(1) as f64;
        let per = p.len().div_ceil(columns.max(1)).max(1);
        let points =
            p.chunks(per)
                .enumerate()
                .map(|(i, c)| {
                    let (k, v) = c.iter().enumerate().fold((0, 0.0f64), |best, (j, &x)| {
                        if x > best.1 {
                            (j, x)
                        } else {
                            best
                        }
                    });
                    (
                        (i * per + k) as f64 * bin_hz,
                        10.0 * (v.max(pfs * 1e-30) / pfs).log10() + offset,
                    )
                })
                .collect();
        Ok(OverlayTrace {
            name,
            points,
            tone: sp.fundamental_dbfs.map(|d| (sp.fundamental_hz, d)),
            scale,
        })
    }
}

/// Spectra of two runs overlaid on one frame, each amplitude-normalised by its own window's ENBW so
/// that a tone's peak reads its level in dBFS whichever window each record was analysed with. Each
/// fundamental is marked (a ring in its run's colour) at its measured level; the line under the axis
/// names each run's window and ENBW.
pub fn overlay_svg(title: &str, traces: &[OverlayTrace], height_px: u32) -> Result<String> {
    use crate::report::svg::{
        fixed_ticks, frequency_unit, nice_ticks, style_mesh, tick_label, trim_number, TickAxis,
    };
    use plotters::style::text_anchor::{HPos, Pos, VPos};
    let hi_hz = traces
        .iter()
        .flat_map(|t| t.points.last())
        .map(|p| p.0)
        .fold(0.0f64, f64::max);
    if hi_hz.is_nan() || hi_hz <= 0.0 {
        return Err(err("no points to draw"));
    }
    let (unit_hz, unit) = frequency_unit(hi_hz);
    let levels = traces
        .iter()
        .flat_map(|t| t.points.iter().map(|p| p.1).chain(t.tone.map(|x| x.1)))
        .filter(|v| v.is_finite());
    let top =
        ((levels.clone().fold(f64::NEG_INFINITY, f64::max).max(0.0) + 5.0) / 10.0).ceil() * 10.0;
    // The bottom follows the lower of the two floors (the median of the points), 30 dB under it.
    let floor = traces
        .iter()
        .filter_map(|t| {
            let mut v: Vec<f64> = t.points.iter().map(|p| p.1).collect();
            v.sort_by(|a, b| a.total_cmp(b));
            v.get(v.len() / 2).copied()
        })
        .fold(f64::INFINITY, f64::min);
    let bottom = if floor.is_finite() {
        ((floor - 30.0) / 10.0).floor() * 10.0
    } else {
        top - 160.0
    }
    .clamp(-400.0, top - 40.0);
    let y_step = if top - bottom <= 120.0 { 10.0 } else { 20.0 };
    let yt = fixed_ticks(bottom, top, y_step, 2.0);
    let xt = nice_ticks(0.0, hi_hz / unit_hz, 8);
    let x_dec = xt.decimals;
    let (w, h) = (720u32, height_px.clamp(300, 8000));
    let ink = rgb(palette::INK);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (w, h)).into_drawing_area();
        root.fill(&rgb(palette::BACKGROUND)).map_err(err)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, (FONT, 15).into_font().color(&ink))
            .margin_top(8)
            .margin_left(10)
            .margin_right(16)
            .margin_bottom(20)
            .x_label_area_size(40)
            .y_label_area_size(60)
            .build_cartesian_2d(
                TickAxis::new(0.0, hi_hz / unit_hz, xt.clone()),
                TickAxis::new(bottom, top, yt.clone()),
            )
            .map_err(err)?;
        {
            let x_label = |v: &f64| tick_label(*v, x_dec);
            let y_label = |v: &f64| tick_label(*v, 0);
            let mut m = chart.configure_mesh();
            m.x_desc(format!("frequency ({unit})"))
                .y_desc("dBFS, tone peak = level")
                .x_label_formatter(&x_label)
                .y_label_formatter(&y_label);
            style_mesh(&mut m);
            m.draw().map_err(err)?;
        }
        for (i, t) in traces.iter().enumerate() {
            let colour = [COLOUR_A, COLOUR_B]
                .get(i)
                .copied()
                .unwrap_or(palette::PANEL_EDGE);
            let pts: Vec<(f64, f64)> = t
                .points
                .iter()
                .map(|p| (p.0 / unit_hz, p.1.clamp(bottom, top)))
                .collect();
            chart
                .draw_series(LineSeries::new(pts, rgb(colour).mix(0.85).stroke_width(1)))
                .map_err(err)?;
        }
        // Markers after both traces, so neither trace hides the other's.
        for (i, t) in traces.iter().enumerate() {
            let colour = [COLOUR_A, COLOUR_B]
                .get(i)
                .copied()
                .unwrap_or(palette::PANEL_EDGE);
            if let Some((f, level)) = t.tone {
                let at = (f / unit_hz, level.clamp(bottom, top));
                chart
                    .draw_series(std::iter::once(Circle::new(
                        at,
                        5 + 3 * i as i32,
                        ShapeStyle::from(&rgb(colour)).stroke_width(2),
                    )))
                    .map_err(err)?;
            }
        }
        // Legend in the top right corner of the frame, one row per run, on the panel colour.
        let (px1, py0) = chart.backend_coord(&(hi_hz / unit_hz, top));
        let rows = traces.len() as i32;
        let box_w = 300;
        let x0 = px1 - box_w - 6;
        let y0 = py0 + 6;
        root.draw(&Rectangle::new(
            [(x0, y0), (px1 - 6, y0 + 8 + 18 * rows)],
            ShapeStyle::from(&rgb(palette::PANEL)).filled(),
        ))
        .map_err(err)?;
        root.draw(&Rectangle::new(
            [(x0, y0), (px1 - 6, y0 + 8 + 18 * rows)],
            ShapeStyle::from(&rgb(palette::PANEL_EDGE)).stroke_width(1),
        ))
        .map_err(err)?;
        for (i, t) in traces.iter().enumerate() {
            let colour = [COLOUR_A, COLOUR_B]
                .get(i)
                .copied()
                .unwrap_or(palette::PANEL_EDGE);
            let y = y0 + 13 + 18 * i as i32;
            root.draw(&PathElement::new(
                vec![(x0 + 8, y), (x0 + 26, y)],
                rgb(colour).stroke_width(2),
            ))
            .map_err(err)?;
            let tone = t
                .tone
                .map_or(String::new(), |(_, d)| format!(", H1 {d:.2} dBFS"));
            let style = TextStyle::from((FONT, 12).into_font())
                .color(&ink)
                .pos(Pos::new(HPos::Left, VPos::Center));
            root.draw(&Text::new(format!("{}{tone}", t.name), (x0 + 32, y), style))
                .map_err(err)?;
        }
        let note = traces
            .iter()
            .map(|t| {
                format!(
                    "{}: {} window, ENBW {} bins",
                    t.name.split(' ').next().unwrap_or(""),
                    t.scale.window,
                    trim_number(t.scale.enbw_bins, 3)
                )
            })
            .collect::<Vec<_>>()
            .join(" · ");
        let style = TextStyle::from((FONT, 11).into_font())
            .color(&ink)
            .pos(Pos::new(HPos::Left, VPos::Bottom));
        root.draw(&Text::new(
            format!(
                "{note}; bins scaled by each window's ENBW, rings at each tone's measured level"
            ),
            (10, h as i32 - 5),
            style,
        ))
        .map_err(err)?;
        root.present().map_err(err)?;
    }
    Ok(svg)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::{analyze, AnalysisSettings};
    use crate::dft::window::Window;
    use crate::spectrum::WindowChoice;
    use crate::synth::{synthesize, SynthFrequency, SynthSettings};

    /// The requirement for a tone marker: within 0.1 dB of the tone's level.
    const MARKER_DB: f64 = 0.1;

    fn hex(c: (u8, u8, u8)) -> String {
        format!("#{:02X}{:02X}{:02X}", c.0, c.1, c.2)
    }

    /// A −1 dBFS tone analysed with `window`, `cycles` periods in 4096 samples at 100 MHz.
    fn trace(name: &str, window: Window, cycles: f64) -> OverlayTrace {
        let s = SynthSettings {
            bits: 14,
            samples: 4096,
            amplitude_dbfs: -1.0,
            frequency: SynthFrequency::Hz(cycles * 100e6 / 4096.0),
            noise_rms_codes: 1.0,
            seed: 3,
            ..SynthSettings::default()
        };
        let rec = synthesize(&s).unwrap().record;
        let mut settings = AnalysisSettings::default();
        settings.spectrum.window = WindowChoice::Fixed(window);
        let m = analyze(&rec, &settings).unwrap();
        // One point per bin, so the trace's peak is the peak bin itself.
        OverlayTrace::of(name.into(), &m.analysis, &m.traces, 4096).unwrap()
    }

    /// (x, y, text) of every text of an SVG.
    fn placed_texts(svg: &str) -> Vec<(f64, f64, String)> {
        let doc = roxmltree::Document::parse(svg).expect("well-formed SVG");
        doc.descendants()
            .filter(|n| n.has_tag_name("text"))
            .map(|n| {
                (
                    n.attribute("x").unwrap().parse().unwrap(),
                    n.attribute("y").unwrap().parse().unwrap(),
                    n.text().unwrap_or("").trim().to_string(),
                )
            })
            .collect()
    }

    /// Each distribution's column is named A or B (with its count) under the frame, and no tick reads
    /// with a needless ".0".
    #[test]
    fn distribution_columns_are_named_a_and_b() {
        let svg =
            distributions_svg("SNR", "dB", &[70.0, 70.5, 71.0], &[69.0, 69.5, 70.0, 70.2]).unwrap();
        let texts = placed_texts(&svg);
        let a = texts.iter().find(|t| t.2 == "A (n = 3)").expect("A named");
        let b = texts.iter().find(|t| t.2 == "B (n = 4)").expect("B named");
        assert!(a.0 < b.0 && (a.1 - b.1).abs() < 1.0, "{a:?} {b:?}");
        assert!(!texts.iter().any(|t| t.2.ends_with(".0")), "{texts:?}");
    }

    /// The legend of a plot against frequency sits under the frame: below every point drawn.
    #[test]
    fn series_legend_is_under_the_data() {
        let a = [(5e6, 70.0), (20e6, 69.0), (45e6, 67.0)];
        let b = [(5e6, 70.2), (20e6, 69.8), (45e6, 69.5)];
        let svg = versus_frequency_svg("SNR", "dB", &a, &b).unwrap();
        let doc = roxmltree::Document::parse(&svg).unwrap();
        let lowest_point = doc
            .descendants()
            .filter(|n| n.has_tag_name("circle"))
            .map(|n| n.attribute("cy").unwrap().parse::<f64>().unwrap())
            .fold(f64::MIN, f64::max);
        let texts = placed_texts(&svg);
        for name in ["A", "B"] {
            let t = texts.iter().find(|t| t.2 == name).expect("legend entry");
            assert!(
                t.1 > lowest_point + 20.0,
                "{name} at {} over data at {lowest_point}",
                t.1
            );
        }
    }

    /// A windowed −1 dBFS tone reads −1 dBFS on the overlay whatever the window: bin-centred its peak
    /// does, between bins its peak is lower by at most the window's scalloping loss (Harris 1978's
    /// definition), and its ring sits at the measured level. Before the ENBW scale the Hann peak sat
    /// 10·log10(1.5) = 1.76 dB low (Harris 1978, Hann ENBW 1.50 bins).
    #[test]
    fn overlay_reads_tone_levels_under_any_window() {
        let a = trace("A hann", Window::Hann, 301.0);
        let b = trace("B bh4", Window::BlackmanHarris4, 301.37);
        let peak = |t: &OverlayTrace| t.points.iter().map(|p| p.1).fold(f64::MIN, f64::max);
        assert!(
            (peak(&a) - -1.0).abs() <= MARKER_DB,
            "Hann peak {}",
            peak(&a)
        );
        let scallop = b.scale.scalloping_loss_db;
        assert!(
            peak(&b) <= -1.0 + MARKER_DB && peak(&b) >= -1.0 - scallop - MARKER_DB,
            "Blackman-Harris peak {} (scalloping {scallop})",
            peak(&b)
        );
        // 4000 px for about 150 dB: pixel rounding far below 0.1 dB.
        let svg = overlay_svg("t", &[a, b], 4000).unwrap();
        let doc = roxmltree::Document::parse(&svg).expect("well-formed SVG");
        let texts: Vec<(f64, f64, String)> = doc
            .descendants()
            .filter(|n| n.has_tag_name("text"))
            .map(|n| {
                (
                    n.attribute("x").unwrap().parse().unwrap(),
                    n.attribute("y").unwrap().parse().unwrap(),
                    n.text().unwrap_or("").trim().to_string(),
                )
            })
            .collect();
        // The vertical axis's labels: the leftmost texts that are negative numbers.
        let ticks: Vec<(f64, f64)> = texts
            .iter()
            .filter(|t| t.0 < 80.0)
            .filter_map(|t| {
                t.2.parse::<f64>()
                    .ok()
                    .filter(|v| *v < 0.0)
                    .map(|v| (t.1, v))
            })
            .collect();
        assert!(ticks.len() >= 3, "{ticks:?}");
        let (ta, tb) = (ticks[0], ticks[ticks.len() - 1]);
        let db_at = |y: f64| ta.1 + (y - ta.0) / (tb.0 - ta.0) * (tb.1 - ta.1);
        for colour in [COLOUR_A, COLOUR_B] {
            let rings: Vec<f64> = doc
                .descendants()
                .filter(|n| {
                    n.has_tag_name("circle") && n.attribute("stroke") == Some(hex(colour).as_str())
                })
                .map(|n| n.attribute("cy").unwrap().parse().unwrap())
                .collect();
            assert_eq!(rings.len(), 1, "one ring per run");
            let level = db_at(rings[0]);
            assert!((level - -1.0).abs() <= MARKER_DB, "ring at {level} dBFS");
        }
        let all: Vec<&str> = texts.iter().map(|t| t.2.as_str()).collect();
        assert!(all.contains(&"dBFS, tone peak = level"), "{all:?}");
        assert!(
            all.iter()
                .any(|t| t.contains("ENBW 1.5 bins") && t.contains("ENBW 2.004")),
            "{all:?}"
        );
    }
}

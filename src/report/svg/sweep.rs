//! A sweep plot (SVG, plotters): one figure against input frequency or amplitude over a lot, each
//! device a thin line, the lot as a band (mean ± one standard deviation across devices) with its mean
//! drawn over it, and optionally a fitted curve (the jitter-limited SNR) and a marked frequency (the
//! ERBW). The vertical axis spans at least a stated minimum, so the scatter of a flat figure stays a
//! thin band instead of filling the frame. The legend sits under the frame, never over the data.

use super::{draw_err, frequency_unit, nice_ticks, palette, rgb, style_mesh, tick_label};
use super::{TickAxis, FONT};
use crate::error::Result;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// The plot's size, pixels.
pub const SWEEP_SIZE: (u32, u32) = (760, 430);

/// One point of the lot's band: where it is, the lot mean there and the spread around it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BandPoint {
    /// Position on the horizontal axis (hertz on a frequency axis, dBFS on an amplitude axis).
    pub x: f64,
    /// The lot mean.
    pub mean: f64,
    /// One standard deviation across devices (0 with a single device).
    pub spread: f64,
    /// Devices behind the point.
    pub devices: usize,
}

/// What one sweep plot shows.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct SweepPlot {
    /// Title over the frame.
    pub title: String,
    /// The figure's name and unit, for the vertical axis ("SNR (dB)").
    pub y_desc: String,
    /// True when the horizontal axis is frequency in hertz (drawn in the SI unit that fits); false for
    /// an amplitude axis in dBFS.
    pub frequency_axis: bool,
    /// The least span of the vertical axis, in the figure's unit.
    pub min_span: f64,
    /// Each device's points, by rising x.
    pub devices: Vec<Vec<(f64, f64)>>,
    /// The lot's band, by rising x.
    pub band: Vec<BandPoint>,
    /// A fitted curve over the points: its legend text and points (x, y), by rising x.
    pub curve: Option<(String, Vec<(f64, f64)>)>,
    /// A marked position on the horizontal axis: its label and x.
    pub marker: Option<(String, f64)>,
}

/// The vertical range: every device point and band edge, widened to `min_span` about its middle, with
/// a margin of 8 % each side.
pub(crate) fn y_range(p: &SweepPlot) -> (f64, f64) {
    let values = p
        .devices
        .iter()
        .flatten()
        .map(|q| q.1)
        .chain(
            p.band
                .iter()
                .flat_map(|b| [b.mean - b.spread, b.mean + b.spread]),
        )
        .filter(|v| v.is_finite());
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for v in values {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    if !lo.is_finite() {
        return (0.0, p.min_span.max(1.0));
    }
    let span = (hi - lo).max(p.min_span);
    let mid = (lo + hi) / 2.0;
    let (lo, hi) = (mid - span / 2.0, mid + span / 2.0);
    (lo - 0.08 * span, hi + 0.08 * span)
}

/// Draws the plot. Errors only when the drawing backend fails.
pub fn sweep_svg(p: &SweepPlot) -> Result<String> {
    let err = draw_err("sweep");
    let xs = p
        .devices
        .iter()
        .flatten()
        .map(|q| q.0)
        .chain(p.band.iter().map(|b| b.x))
        .chain(p.marker.iter().map(|m| m.1))
        .filter(|v| v.is_finite());
    let (mut x_lo, mut x_hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for x in xs {
        x_lo = x_lo.min(x);
        x_hi = x_hi.max(x);
    }
    if !x_lo.is_finite() {
        (x_lo, x_hi) = (0.0, 1.0);
    }
    // A frequency axis starts at 0 Hz; an amplitude axis spans its points with a margin.
    let (scale, x_desc) = if p.frequency_axis {
        let (s, unit) = frequency_unit(x_hi);
        (s, format!("input frequency ({unit})"))
    } else {
        (1.0, "input amplitude (dBFS)".to_string())
    };
    let (x0, x1) = if p.frequency_axis {
        (0.0, x_hi / scale * 1.06)
    } else {
        let pad = ((x_hi - x_lo) * 0.06).max(0.5);
        (x_lo - pad, x_hi + pad)
    };
    let (x0, x1) = if x1 > x0 { (x0, x1) } else { (x0, x0 + 1.0) };
    let (y0, y1) = y_range(p);
    let xt = nice_ticks(x0, x1, 8);
    let yt = nice_ticks(y0, y1, 7);
    let (x_dec, y_dec) = (xt.decimals, yt.decimals);
    let ink = rgb(palette::INK);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SWEEP_SIZE).into_drawing_area();
        root.fill(&rgb(palette::BACKGROUND)).map_err(&err)?;
        let (plot, legend) = root.split_vertically(SWEEP_SIZE.1 - 34);
        let mut chart = ChartBuilder::on(&plot)
            .caption(&p.title, (FONT, 15).into_font().color(&ink))
            .margin_top(6)
            .margin_left(10)
            .margin_right(18)
            .x_label_area_size(40)
            .y_label_area_size(62)
            .build_cartesian_2d(
                TickAxis::new(x0, x1, xt.clone()),
                TickAxis::new(y0, y1, yt.clone()),
            )
            .map_err(&err)?;
        {
            let xl = |v: &f64| tick_label(*v, x_dec);
            let yl = |v: &f64| tick_label(*v, y_dec);
            let mut m = chart.configure_mesh();
            m.x_desc(x_desc.as_str())
                .y_desc(p.y_desc.as_str())
                .x_label_formatter(&xl)
                .y_label_formatter(&yl);
            style_mesh(&mut m);
            m.draw().map_err(&err)?;
        }
        let clip = |y: f64| y.clamp(y0, y1);
        // The band first, so every line is drawn over it.
        if p.band.len() >= 2 {
            let mut outline: Vec<(f64, f64)> = p
                .band
                .iter()
                .map(|b| (b.x / scale, clip(b.mean + b.spread)))
                .collect();
            outline.extend(
                p.band
                    .iter()
                    .rev()
                    .map(|b| (b.x / scale, clip(b.mean - b.spread))),
            );
            chart
                .draw_series(std::iter::once(Polygon::new(
                    outline,
                    rgb(palette::BAND).mix(0.55).filled(),
                )))
                .map_err(&err)?;
        } else {
            // One point: the spread as a bar.
            for b in &p.band {
                chart
                    .draw_series(std::iter::once(Rectangle::new(
                        [
                            (b.x / scale - (x1 - x0) * 0.01, clip(b.mean - b.spread)),
                            (b.x / scale + (x1 - x0) * 0.01, clip(b.mean + b.spread)),
                        ],
                        rgb(palette::BAND).mix(0.55).filled(),
                    )))
                    .map_err(&err)?;
            }
        }
        let device_colour = rgb(palette::TRACE).mix(0.35);
        for d in &p.devices {
            chart
                .draw_series(LineSeries::new(
                    d.iter().map(|q| (q.0 / scale, clip(q.1))),
                    device_colour.stroke_width(1),
                ))
                .map_err(&err)?;
        }
        if let Some((_, pts)) = &p.curve {
            let inside: Vec<(f64, f64)> = pts
                .iter()
                .filter(|q| q.1.is_finite() && q.1 >= y0 && q.1 <= y1)
                .map(|q| (q.0 / scale, q.1))
                .collect();
            chart
                .draw_series(DashedLineSeries::new(
                    inside,
                    7,
                    4,
                    rgb(palette::HARMONIC).stroke_width(2),
                ))
                .map_err(&err)?;
        }
        let mean_colour = rgb(palette::FUNDAMENTAL);
        chart
            .draw_series(LineSeries::new(
                p.band.iter().map(|b| (b.x / scale, clip(b.mean))),
                mean_colour.stroke_width(2),
            ))
            .map_err(&err)?;
        chart
            .draw_series(
                p.band
                    .iter()
                    .map(|b| Circle::new((b.x / scale, clip(b.mean)), 4, mean_colour.filled())),
            )
            .map_err(&err)?;
        if let Some((label, x)) = &p.marker {
            let x = x / scale;
            chart
                .draw_series(DashedLineSeries::new(
                    [(x, y0), (x, y1)],
                    5,
                    4,
                    rgb(palette::SPUR).stroke_width(1),
                ))
                .map_err(&err)?;
            let (px, py) = chart.backend_coord(&(x, y1));
            let right = x > (x0 + x1) / 2.0;
            let spur = rgb(palette::SPUR);
            let style = TextStyle::from((FONT, 12).into_font())
                .color(&spur)
                .pos(Pos::new(
                    if right { HPos::Right } else { HPos::Left },
                    VPos::Top,
                ));
            plot.draw(&Text::new(
                label.clone(),
                (if right { px - 4 } else { px + 4 }, py + 4),
                style,
            ))
            .map_err(&err)?;
        }
        // The legend: one row under the frame.
        let mut entries: Vec<(String, ShapeStyle, bool)> = Vec::new();
        if !p.devices.is_empty() {
            entries.push((
                format!(
                    "each device ({})",
                    p.devices.iter().filter(|d| !d.is_empty()).count()
                ),
                device_colour.stroke_width(1),
                false,
            ));
        }
        entries.push(("lot mean".to_string(), mean_colour.stroke_width(2), false));
        entries.push((
            "± 1 s.d. across devices".to_string(),
            rgb(palette::BAND).mix(0.55).filled(),
            true,
        ));
        if let Some((label, _)) = &p.curve {
            entries.push((label.clone(), rgb(palette::HARMONIC).stroke_width(2), false));
        }
        let text = TextStyle::from((FONT, 12).into_font())
            .color(&ink)
            .pos(Pos::new(HPos::Left, VPos::Center));
        let mut x = 72i32;
        let y = 14i32;
        for (label, style, filled) in entries {
            if filled {
                legend
                    .draw(&Rectangle::new([(x, y - 5), (x + 20, y + 5)], style))
                    .map_err(&err)?;
            } else {
                legend
                    .draw(&PathElement::new(vec![(x, y), (x + 20, y)], style))
                    .map_err(&err)?;
            }
            legend
                .draw(&Text::new(label.clone(), (x + 26, y), text.clone()))
                .map_err(&err)?;
            // Width of the text at about 0.6 em per character, 12 px font.
            x += 26 + (label.chars().count() as i32 * 7) + 18;
        }
        root.present().map_err(&err)?;
    }
    Ok(svg)
}

/// Points of the jitter-limited SNR, −10·log10(a + (2π·f·σ)²), from `f_lo` to `f_hi` (hertz), where
/// the argument of the logarithm is positive.
pub fn jitter_curve(sigma_s: f64, a: f64, f_lo: f64, f_hi: f64) -> Vec<(f64, f64)> {
    const STEPS: usize = 120;
    (0..=STEPS)
        .filter_map(|i| {
            let f = f_lo + (f_hi - f_lo) * i as f64 / STEPS as f64;
            let arg = a + (std::f64::consts::TAU * f * sigma_s).powi(2);
            (arg > 0.0).then(|| (f, -10.0 * arg.log10()))
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn doc_texts(svg: &str) -> Vec<String> {
        let doc = roxmltree::Document::parse(svg).expect("well-formed SVG");
        doc.descendants()
            .filter(|n| n.has_tag_name("text"))
            .map(|n| n.text().unwrap_or("").trim().to_string())
            .collect()
    }

    fn plot(devices: Vec<Vec<(f64, f64)>>, min_span: f64) -> SweepPlot {
        let n = devices.len() as f64;
        let k = devices[0].len();
        let band = (0..k)
            .map(|i| {
                let ys: Vec<f64> = devices.iter().map(|d| d[i].1).collect();
                let mean = ys.iter().sum::<f64>() / n;
                let sd = (ys.iter().map(|y| (y - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
                BandPoint {
                    x: devices[0][i].0,
                    mean,
                    spread: sd,
                    devices: devices.len(),
                }
            })
            .collect();
        SweepPlot {
            title: "ENOB against input frequency".into(),
            y_desc: "ENOB (bits)".into(),
            frequency_axis: true,
            min_span,
            devices,
            band,
            curve: None,
            marker: Some(("ERBW 31.6 MHz".into(), 31.6e6)),
        }
    }

    /// A flat figure with 0.2 bit of scatter keeps the axis's least span (2 bits), so the scatter
    /// fills at most a tenth of the frame; a real fall (3 bits) sets its own span. The ticks never read
    /// "-0.0", and the frequency axis names its unit.
    #[test]
    fn flat_scatter_keeps_the_least_span() {
        let flat: Vec<Vec<(f64, f64)>> = (0..5)
            .map(|d| {
                (0..4)
                    .map(|i| (5e6 + 10e6 * i as f64, 11.0 + 0.05 * ((d + i) % 5) as f64))
                    .collect()
            })
            .collect();
        let p = plot(flat, 2.0);
        let (lo, hi) = y_range(&p);
        // 2 bits of span plus 8 % each side.
        assert!((hi - lo - 2.0 * 1.16).abs() < 1e-9, "{lo}..{hi}");
        let falling: Vec<Vec<(f64, f64)>> = (0..3)
            .map(|d| {
                (0..4)
                    .map(|i| (5e6 + 10e6 * i as f64, 11.0 - i as f64 + 0.01 * d as f64))
                    .collect()
            })
            .collect();
        let q = plot(falling, 2.0);
        let (lo, hi) = y_range(&q);
        assert!(lo < 8.0 && hi > 11.02 && hi - lo < 3.02 * 1.2, "{lo}..{hi}");
        let svg = sweep_svg(&p).unwrap();
        let texts = doc_texts(&svg);
        assert!(!texts.iter().any(|t| t == "-0.0" || t == "-0"), "{texts:?}");
        assert!(
            texts.iter().any(|t| t == "input frequency (MHz)"),
            "{texts:?}"
        );
        assert!(texts.iter().any(|t| t == "ERBW 31.6 MHz"), "{texts:?}");
        assert!(texts.iter().any(|t| t == "each device (5)"), "{texts:?}");
    }

    /// The curve is the handbook's jitter-limited SNR: at σ = 1 ps and no other noise, 10 MHz reads
    /// −20·log10(2π·10e6·1e-12) = 84.04 dB (jitter-limited SNR, handbook formula).
    #[test]
    fn jitter_curve_is_the_handbook_formula() {
        let c = jitter_curve(1e-12, 0.0, 0.0, 10e6);
        let last = c.last().unwrap();
        assert_eq!(last.0, 10e6);
        let expect = -20.0 * (std::f64::consts::TAU * 10e6 * 1e-12).log10();
        assert!((last.1 - expect).abs() < 1e-9);
        assert!((expect - 84.04).abs() < 0.01);
        // At f = 0 with a = 0 the argument is 0: no point there.
        assert_eq!(c.len(), 120);
    }
}

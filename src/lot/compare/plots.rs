//! Comparison plots (SVG, plotters): the two runs' distributions side by side, and a figure against
//! input frequency for both runs.

use crate::error::{Error, ErrorKind, Location, Result};
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

/// Two distributions side by side: every value as a point (spread sideways by a fixed rule), with a
/// box from the first to the third quartile and a line at the median.
pub fn distributions_svg(title: &str, unit: &str, a: &[f64], b: &[f64]) -> Result<String> {
    let (lo, hi) = range_of(a.iter().chain(b).copied());
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (360, 300)).into_drawing_area();
        root.fill(&rgb(palette::BACKGROUND)).map_err(err)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, (FONT, 14).into_font().color(&rgb(palette::INK)))
            .margin(8)
            .x_label_area_size(28)
            .y_label_area_size(56)
            .build_cartesian_2d(0.0..2.0, lo..hi)
            .map_err(err)?;
        chart
            .configure_mesh()
            .disable_x_mesh()
            .x_labels(3)
            .x_label_formatter(&|x: &f64| {
                if (x - 0.5).abs() < 0.01 {
                    "A".to_string()
                } else if (x - 1.5).abs() < 0.01 {
                    "B".to_string()
                } else {
                    String::new()
                }
            })
            .y_desc(unit)
            .light_line_style(rgb(palette::GRID_MINOR))
            .bold_line_style(rgb(palette::GRID))
            .draw()
            .map_err(err)?;
        for (centre, values, colour) in [(0.5, a, COLOUR_A), (1.5, b, COLOUR_B)] {
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
/// run-A colour, the second in the run-B colour, further ones in a muted colour.
pub fn series_svg(
    title: &str,
    x_desc: &str,
    unit: &str,
    series: &[(&str, &[(f64, f64)])],
    x_scale: f64,
) -> Result<String> {
    let (x0, x1) = range_of(
        series
            .iter()
            .flat_map(|s| s.1.iter())
            .map(|p| p.0 / x_scale),
    );
    let (y0, y1) = range_of(series.iter().flat_map(|s| s.1.iter()).map(|p| p.1));
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (480, 300)).into_drawing_area();
        root.fill(&rgb(palette::BACKGROUND)).map_err(err)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, (FONT, 14).into_font().color(&rgb(palette::INK)))
            .margin(8)
            .x_label_area_size(34)
            .y_label_area_size(56)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(err)?;
        chart
            .configure_mesh()
            .x_desc(x_desc)
            .y_desc(unit)
            .light_line_style(rgb(palette::GRID_MINOR))
            .bold_line_style(rgb(palette::GRID))
            .draw()
            .map_err(err)?;
        for (i, (name, points)) in series.iter().enumerate() {
            let colour = [COLOUR_A, COLOUR_B]
                .get(i)
                .copied()
                .unwrap_or(palette::PANEL_EDGE);
            let name = name.to_string();
            let mut pts: Vec<(f64, f64)> = points.iter().map(|p| (p.0 / x_scale, p.1)).collect();
            pts.sort_by(|p, q| p.0.total_cmp(&q.0));
            chart
                .draw_series(LineSeries::new(pts.clone(), rgb(colour).stroke_width(2)))
                .map_err(err)?
                .label(name)
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 16, y)], rgb(colour).stroke_width(2))
                });
            chart
                .draw_series(pts.iter().map(|&p| Circle::new(p, 4, rgb(colour).filled())))
                .map_err(err)?;
        }
        chart
            .configure_series_labels()
            .background_style(rgb(palette::PANEL))
            .border_style(rgb(palette::PANEL_EDGE))
            .draw()
            .map_err(err)?;
        root.present().map_err(err)?;
    }
    Ok(svg)
}

//! SVG plots of the histogram test: DNL against code and INL against code (plotters, SVG backend, text
//! drawn by the viewer so no font library is needed).

use std::path::{Path, PathBuf};

use plotters::prelude::*;

use super::Linearity;
use crate::error::{Error, ErrorKind, Location, Result};

/// Plot size in pixels.
const SIZE: (u32, u32) = (960, 420);
/// Terminal-based curves.
const TERMINAL: RGBColor = RGBColor(22, 96, 136);
/// Best-fit curves.
const BEST_FIT: RGBColor = RGBColor(214, 122, 24);
/// Missing-code markers.
const MISSING: RGBColor = RGBColor(190, 30, 45);
/// Zero line and grid.
const GUIDE: RGBColor = RGBColor(150, 150, 150);

/// File names written by [`write_plots`], in order.
pub const PLOT_FILES: [&str; 2] = ["dnl.svg", "inl.svg"];

fn draw_error(path: &Path, e: impl std::fmt::Display) -> Error {
    Error::new(
        ErrorKind::Output,
        path.display().to_string(),
        Location::Whole,
        "a plot that can be drawn",
        e.to_string(),
    )
}

/// A y range that holds every value and ±`floor`, with a little room.
fn y_range(values: impl Iterator<Item = f64>, floor: f64) -> (f64, f64) {
    let (mut lo, mut hi) = (-floor, floor);
    for v in values {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    let pad = 0.05 * (hi - lo);
    (lo - pad, hi + pad)
}

/// A curve: its legend label, its colour and its (code, value) points.
type Curve<'a> = (&'a str, RGBColor, Vec<(f64, f64)>);

/// One chart of `series` against code; `markers` are drawn as red circles.
fn render(
    path: &Path,
    title: &str,
    y_label: &str,
    x_range: (f64, f64),
    series: &[Curve],
    markers: &[(f64, f64)],
) -> Result<String> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&WHITE).map_err(|e| draw_error(path, e))?;
        let (y0, y1) = y_range(series.iter().flat_map(|s| s.2.iter().map(|p| p.1)), 0.5);
        let mut chart = ChartBuilder::on(&root)
            .caption(title, ("sans-serif", 20))
            .margin(12)
            .x_label_area_size(40)
            .y_label_area_size(60)
            .build_cartesian_2d(x_range.0..x_range.1, y0..y1)
            .map_err(|e| draw_error(path, e))?;
        chart
            .configure_mesh()
            .x_desc("code")
            .y_desc(y_label)
            .light_line_style(GUIDE.mix(0.15))
            .bold_line_style(GUIDE.mix(0.35))
            .draw()
            .map_err(|e| draw_error(path, e))?;
        chart
            .draw_series(LineSeries::new(
                [(x_range.0, 0.0), (x_range.1, 0.0)],
                GUIDE.stroke_width(1),
            ))
            .map_err(|e| draw_error(path, e))?;
        for (label, colour, points) in series {
            let colour = *colour;
            chart
                .draw_series(LineSeries::new(
                    points.iter().copied(),
                    colour.stroke_width(1),
                ))
                .map_err(|e| draw_error(path, e))?
                .label(*label)
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], colour));
        }
        if !markers.is_empty() {
            chart
                .draw_series(PointSeries::of_element(
                    markers.iter().copied(),
                    4,
                    MISSING.filled(),
                    &|c, s, st| Circle::new(c, s, st),
                ))
                .map_err(|e| draw_error(path, e))?
                .label("missing code")
                .legend(|(x, y)| Circle::new((x + 10, y), 4, MISSING.filled()));
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .background_style(WHITE.mix(0.8))
            .border_style(GUIDE)
            .draw()
            .map_err(|e| draw_error(path, e))?;
        root.present().map_err(|e| draw_error(path, e))?;
    }
    Ok(svg)
}

fn write(path: &Path, svg: &str) -> Result<()> {
    std::fs::write(path, svg).map_err(|e| {
        Error::new(
            ErrorKind::Output,
            path.display().to_string(),
            Location::Whole,
            "a writable file",
            e.to_string(),
        )
    })
}

/// Writes `dnl.svg` (terminal and best-fit DNL against code, missing codes marked) and `inl.svg`
/// (terminal and best-fit INL against code) into `dir`, creating it when needed. Returns the paths.
///
/// Errors (`Output`, with the path) when the folder or a file cannot be written.
pub fn write_plots(result: &Linearity, dir: &Path) -> Result<Vec<PathBuf>> {
    std::fs::create_dir_all(dir).map_err(|e| {
        Error::new(
            ErrorKind::Output,
            dir.display().to_string(),
            Location::Whole,
            "a folder that can be created",
            e.to_string(),
        )
    })?;
    let first = result.codes.first().map_or(0.0, |c| c.code as f64);
    let last = result.codes.last().map_or(1.0, |c| c.code as f64);
    let x_range = (first - 0.5, last + 0.5);
    let pick = |f: fn(&super::CodeResult) -> Option<f64>| -> Vec<(f64, f64)> {
        result
            .codes
            .iter()
            .filter_map(|c| f(c).map(|v| (c.code as f64, v)))
            .collect()
    };
    let missing: Vec<(f64, f64)> = result
        .missing_codes
        .iter()
        .map(|&c| (c as f64, -1.0))
        .collect();
    let dnl_path = dir.join(PLOT_FILES[0]);
    let dnl = render(
        &dnl_path,
        &format!("DNL, {} bits, {} samples", result.bits, result.samples),
        "DNL (LSB)",
        x_range,
        &[
            ("terminal", TERMINAL, pick(|c| c.dnl_terminal_lsb)),
            ("best fit", BEST_FIT, pick(|c| c.dnl_best_fit_lsb)),
        ],
        &missing,
    )?;
    write(&dnl_path, &dnl)?;
    let inl_path = dir.join(PLOT_FILES[1]);
    let inl = render(
        &inl_path,
        &format!("INL, {} bits, {} samples", result.bits, result.samples),
        "INL (LSB)",
        x_range,
        &[
            ("terminal", TERMINAL, pick(|c| c.inl_terminal_lsb)),
            ("best fit", BEST_FIT, pick(|c| c.inl_best_fit_lsb)),
        ],
        &[],
    )?;
    write(&inl_path, &inl)?;
    Ok(vec![dnl_path, inl_path])
}

//! The control chart of a trend: one point per lot in time order, the centre line and the control
//! limits (steps where they change with the lot's size), points that complete a run rule marked and
//! labelled with the rules' names.

use super::{draw_err, no_data, palette, rgb, FONT};
use crate::error::Result;
use plotters::prelude::*;

/// One point of a control chart.
#[derive(Debug, Clone, PartialEq)]
pub struct ChartPoint {
    /// The charted value.
    pub value: f64,
    /// Centre line at this point.
    pub centre: f64,
    /// Lower control limit at this point.
    pub lcl: f64,
    /// Upper control limit at this point.
    pub ucl: f64,
    /// Names of the run rules this point completes (empty when none).
    pub rules: Vec<String>,
}

/// Draws a control chart as SVG (480 × 300 px plus a margin): lots 1..N on the x axis, the value's
/// unit on the y axis. Errors: no points, or a drawing failure.
pub fn control_chart_svg(title: &str, unit: &str, points: &[ChartPoint]) -> Result<String> {
    if points.is_empty() {
        return Err(no_data("control chart", "no lots"));
    }
    let finite = |v: f64| v.is_finite().then_some(v);
    let ys = points
        .iter()
        .flat_map(|p| [p.value, p.lcl, p.ucl])
        .filter_map(finite);
    let (lo, hi) = ys.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
        (a.min(v), b.max(v))
    });
    let pad = if hi > lo {
        (hi - lo) * 0.08
    } else {
        lo.abs().max(1.0) * 0.01
    };
    let (y0, y1) = (lo - pad, hi + pad);
    let n = points.len() as f64;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (560, 300)).into_drawing_area();
        let e = draw_err("control chart");
        root.fill(&rgb(palette::BACKGROUND)).map_err(&e)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, (FONT, 14).into_font().color(&rgb(palette::INK)))
            .margin(8)
            .x_label_area_size(34)
            .y_label_area_size(60)
            .build_cartesian_2d(0.5..n + 0.5, y0..y1)
            .map_err(&e)?;
        chart
            .configure_mesh()
            .x_desc("lot (oldest first)")
            .y_desc(unit)
            .x_label_formatter(&|x| format!("{x:.0}"))
            .y_label_formatter(&|y| format!("{y:.3}"))
            .light_line_style(rgb(palette::GRID_MINOR))
            .bold_line_style(rgb(palette::GRID))
            .draw()
            .map_err(&e)?;
        // Limits as steps, so that a limit that changes with the lot's size is drawn per lot.
        let step = |f: &dyn Fn(&ChartPoint) -> f64| -> Vec<(f64, f64)> {
            points
                .iter()
                .enumerate()
                .flat_map(|(i, p)| {
                    let x = i as f64 + 1.0;
                    [(x - 0.5, f(p)), (x + 0.5, f(p))]
                })
                .filter(|p| p.1.is_finite())
                .collect()
        };
        for (line, colour) in [
            (step(&|p| p.ucl), palette::SPUR),
            (step(&|p| p.lcl), palette::SPUR),
            (step(&|p| p.centre), palette::FLOOR),
        ] {
            chart
                .draw_series(LineSeries::new(line, rgb(colour).stroke_width(1)))
                .map_err(&e)?;
        }
        let xy: Vec<(f64, f64)> = points
            .iter()
            .enumerate()
            .filter(|(_, p)| p.value.is_finite())
            .map(|(i, p)| (i as f64 + 1.0, p.value))
            .collect();
        chart
            .draw_series(LineSeries::new(
                xy.clone(),
                rgb(palette::TRACE).stroke_width(1),
            ))
            .map_err(&e)?;
        for (i, p) in points.iter().enumerate() {
            if !p.value.is_finite() {
                continue;
            }
            let at = (i as f64 + 1.0, p.value);
            let (colour, size) = if p.rules.is_empty() {
                (palette::TRACE, 3)
            } else {
                (palette::SPUR, 5)
            };
            chart
                .draw_series(std::iter::once(Circle::new(at, size, rgb(colour).filled())))
                .map_err(&e)?;
            if !p.rules.is_empty() {
                let label = p.rules.join(" ");
                chart
                    .draw_series(std::iter::once(Text::new(
                        label,
                        at,
                        (FONT, 10).into_font().color(&rgb(palette::SPUR)),
                    )))
                    .map_err(&e)?;
            }
        }
        root.present().map_err(&e)?;
    }
    Ok(svg)
}

//! A lot's distribution of one limited metric under one condition (SVG, plotters): a histogram whose
//! bars are split by where their values fall (inside the guarded window, inside a guardband, outside
//! the limits), with the low and high limits drawn as solid lines and the guarded limits as dashed
//! lines, each labelled with its value. The bins have a fixed width on nice values, so the same values
//! give the same SVG.

use super::{draw_err, nice_ticks, palette, rgb, style_mesh, tick_label, trim_number, TickAxis};
use super::{fixed_ticks, FONT};
use crate::error::Result;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// Where one value falls against its limits.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Band {
    /// Inside the guarded window: passes.
    Inside,
    /// Inside the stated limits but inside a guardband: fails on the guardband.
    Guardband,
    /// Outside the stated limits.
    Outside,
}

/// The limits of one metric as drawn: stated low and high limits (either may be absent) and the
/// guardband that tightens both.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct LimitLines {
    /// Low limit.
    pub low: Option<f64>,
    /// High limit.
    pub high: Option<f64>,
    /// Guardband (≥ 0), in the metric's unit.
    pub guardband: f64,
}

impl LimitLines {
    /// The x positions of every line drawn: (value, label, dashed).
    fn lines(&self) -> Vec<(f64, String, bool)> {
        let mut out = Vec::new();
        let g = self.guardband;
        if let Some(l) = self.low {
            out.push((l, format!("low {}", trim_number(l, 6)), false));
            if g > 0.0 {
                out.push((l + g, format!("guarded {}", trim_number(l + g, 6)), true));
            }
        }
        if let Some(h) = self.high {
            out.push((h, format!("high {}", trim_number(h, 6)), false));
            if g > 0.0 {
                out.push((h - g, format!("guarded {}", trim_number(h - g, 6)), true));
            }
        }
        out
    }
}

/// The plot's size, pixels.
pub const DISTRIBUTION_SIZE: (u32, u32) = (520, 260);

/// Bars of a histogram: (left edge, width, counts inside, in a guardband, outside).
type Bars = Vec<(f64, usize, usize, usize)>;

/// Bins of a fixed, nice width over the values and the limit lines.
fn bins(values: &[(f64, Band)], marks: &[f64]) -> (f64, f64, f64, Bars) {
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for v in values.iter().map(|v| v.0).chain(marks.iter().copied()) {
        if v.is_finite() {
            lo = lo.min(v);
            hi = hi.max(v);
        }
    }
    if !lo.is_finite() {
        (lo, hi) = (0.0, 1.0);
    }
    if hi - lo < 1e-9 * lo.abs().max(1.0) {
        let pad = (lo.abs() * 1e-3).max(1e-3);
        (lo, hi) = (lo - pad, hi + pad);
    }
    // About 2√n bins, 12 to 48, on a nice step so that edges print as short numbers.
    let target = (2.0 * (values.len() as f64).sqrt()).clamp(12.0, 48.0) as usize;
    let width = nice_ticks(lo, hi, target)
        .major
        .windows(2)
        .map(|w| w[1] - w[0])
        .next()
        .unwrap_or((hi - lo) / target as f64);
    let first = (lo / width).floor() * width;
    let count = (((hi - first) / width).floor() as usize + 1).max(1);
    let mut bars: Bars = (0..count)
        .map(|k| (first + k as f64 * width, 0, 0, 0))
        .collect();
    for &(v, band) in values {
        if !v.is_finite() {
            continue;
        }
        let k = (((v - first) / width).floor().max(0.0) as usize).min(count - 1);
        match band {
            Band::Inside => bars[k].1 += 1,
            Band::Guardband => bars[k].2 += 1,
            Band::Outside => bars[k].3 += 1,
        }
    }
    let last = first + count as f64 * width;
    // A margin of half a bin each side, so a limit on the range's edge is not drawn on the axis.
    (first - width / 2.0, last + width / 2.0, width, bars)
}

/// Draws the distribution of `values` (each with where it falls against `limits`); `axis` titles the
/// x axis (the metric's label and unit). Values that are not finite are left out (the page counts
/// them).
pub fn distribution_svg(
    title: &str,
    axis: &str,
    values: &[(f64, Band)],
    limits: &LimitLines,
) -> Result<String> {
    let err = draw_err::<DrawingAreaErrorKind<std::io::Error>>("distribution");
    let lines = limits.lines();
    let marks: Vec<f64> = lines.iter().map(|l| l.0).collect();
    let (x_lo, x_hi, width, bars) = bins(values, &marks);
    let top_count = bars
        .iter()
        .map(|b| b.1 + b.2 + b.3)
        .max()
        .unwrap_or(0)
        .max(1);
    // Room above the tallest bar for the limit labels.
    let y_hi = (top_count as f64 * 1.3).ceil().max(2.0);
    let y_ticks = {
        let t = nice_ticks(0.0, y_hi, 4);
        if t.decimals > 0 {
            fixed_ticks(0.0, y_hi, 1.0, 1.0)
        } else {
            t
        }
    };
    let x_ticks = nice_ticks(x_lo, x_hi, 6);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, DISTRIBUTION_SIZE).into_drawing_area();
        root.fill(&rgb(palette::BACKGROUND)).map_err(&err)?;
        let ink = rgb(palette::INK);
        let mut chart = ChartBuilder::on(&root)
            .caption(title, (FONT, 14).into_font().color(&ink))
            .margin(10)
            .x_label_area_size(40)
            .y_label_area_size(48)
            .build_cartesian_2d(
                TickAxis::new(x_lo, x_hi, x_ticks.clone()),
                TickAxis::new(0.0, y_hi, y_ticks.clone()),
            )
            .map_err(&err)?;
        let (xd, yd) = (x_ticks.decimals, y_ticks.decimals);
        let mut mesh = chart.configure_mesh();
        style_mesh(&mut mesh);
        mesh.x_desc(axis)
            .y_desc("results")
            .x_label_formatter(&|v| tick_label(*v, xd))
            .y_label_formatter(&|v| tick_label(*v, yd))
            .draw()
            .map_err(&err)?;
        // Stacked bars: inside at the bottom, then guardband, then outside.
        for &(left, inside, guard, outside) in &bars {
            let mut base = 0.0;
            for (n, colour) in [
                (inside, palette::TRACE),
                (guard, palette::HARMONIC),
                (outside, palette::SPUR),
            ] {
                if n == 0 {
                    continue;
                }
                let topv = base + n as f64;
                chart
                    .draw_series(std::iter::once(Rectangle::new(
                        [(left, base), (left + width, topv)],
                        rgb(colour).mix(0.85).filled(),
                    )))
                    .map_err(&err)?;
                base = topv;
            }
        }
        let limit_ink = rgb(palette::SPUR);
        for (i, (x, label, dashed)) in lines.iter().enumerate() {
            let style = ShapeStyle::from(&limit_ink).stroke_width(2);
            if *dashed {
                chart
                    .draw_series(DashedLineSeries::new([(*x, 0.0), (*x, y_hi)], 6, 4, style))
                    .map_err(&err)?;
            } else {
                chart
                    .draw_series(LineSeries::new([(*x, 0.0), (*x, y_hi)], style))
                    .map_err(&err)?;
            }
            // Labels at the top, alternating rows so that a limit and its guarded line do not collide;
            // a label to the right of its line unless it would leave the plot.
            let right = (*x - x_lo) / (x_hi - x_lo) < 0.6;
            let pos = if right {
                Pos::new(HPos::Left, VPos::Top)
            } else {
                Pos::new(HPos::Right, VPos::Top)
            };
            let text_style = TextStyle::from((FONT, 11).into_font())
                .color(&limit_ink)
                .pos(pos);
            let (px, py) = chart.backend_coord(&(*x, y_hi));
            let dx = if right { 4 } else { -4 };
            root.draw(&Text::new(
                label.clone(),
                (px + dx, py + 3 + 13 * (i as i32 % 2)),
                text_style,
            ))
            .map_err(&err)?;
        }
        root.present().map_err(&err)?;
    }
    Ok(svg)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The x pixel of each limit line and the value-to-pixel rule read back from the tick labels.
    fn read_back(svg: &str) -> (Vec<(f64, f64)>, Vec<i32>) {
        let doc = roxmltree::Document::parse(svg).unwrap();
        // Tick labels of the x axis: numbers drawn below the plot area (the lowest text row of numbers).
        let numbers: Vec<(f64, f64, f64)> = doc
            .descendants()
            .filter(|n| n.has_tag_name("text"))
            .filter_map(|n| {
                let v: f64 = n.text()?.trim().parse().ok()?;
                let x: f64 = n.attribute("x")?.parse().ok()?;
                let y: f64 = n.attribute("y")?.parse().ok()?;
                Some((v, x, y))
            })
            .collect();
        let bottom = numbers.iter().map(|n| n.2).fold(f64::MIN, f64::max);
        let ticks: Vec<(f64, f64)> = numbers
            .iter()
            .filter(|n| n.2 == bottom)
            .map(|n| (n.0, n.1))
            .collect();
        let red = super::super::hex(palette::SPUR);
        let xs: Vec<i32> = doc
            .descendants()
            .filter(|n| n.has_tag_name("polyline") && n.attribute("stroke") == Some(red.as_str()))
            .filter_map(|n| {
                let pts: Vec<&str> = n.attribute("points")?.split_whitespace().collect();
                let x0: i32 = pts.first()?.split(',').next()?.parse().ok()?;
                Some(x0)
            })
            .collect();
        (ticks, xs)
    }

    #[test]
    fn limits_are_drawn_at_their_values() {
        // Values on both sides of a low limit of 70 with a guardband of 0.5.
        let values: Vec<(f64, Band)> = (0..200)
            .map(|i| {
                let v = 68.0 + i as f64 * 0.03;
                let band = if v < 70.0 {
                    Band::Outside
                } else if v < 70.5 {
                    Band::Guardband
                } else {
                    Band::Inside
                };
                (v, band)
            })
            .collect();
        let limits = LimitLines {
            low: Some(70.0),
            high: Some(75.0),
            guardband: 0.5,
        };
        let svg = distribution_svg("SNR · c0", "SNR (dB)", &values, &limits).unwrap();
        assert!(svg.contains("low 70") && svg.contains("high 75"));
        assert!(svg.contains("guarded 70.5") && svg.contains("guarded 74.5"));
        let (ticks, xs) = read_back(&svg);
        assert!(ticks.len() >= 3, "{ticks:?}");
        // Pixel per unit from the outermost labelled ticks (labels are centred on their tick).
        let (a, b) = (ticks[0], ticks[ticks.len() - 1]);
        let value_at = |px: f64| a.0 + (px - a.1) * (b.0 - a.0) / (b.1 - a.1);
        let unit_per_px = (b.0 - a.0) / (b.1 - a.1);
        let mut drawn: Vec<f64> = xs.iter().map(|&x| value_at(x as f64)).collect();
        drawn.sort_by(f64::total_cmp);
        // A dashed line is drawn as many short segments on one x.
        drawn.dedup();
        let want = [70.0, 70.5, 74.5, 75.0];
        assert_eq!(drawn.len(), want.len(), "{drawn:?}");
        for (d, w) in drawn.iter().zip(want) {
            // Pixels are whole numbers: a line is within one pixel (plus a label's rounding) of its value.
            assert!((d - w).abs() <= 1.5 * unit_per_px, "{d} vs {w}");
        }
        // Every bar colour appears: values outside, in the guardband and inside.
        for c in [palette::TRACE, palette::HARMONIC, palette::SPUR] {
            assert!(svg.contains(&super::super::hex(c)), "{c:?}");
        }
        // Same input, same bytes.
        assert_eq!(
            svg,
            distribution_svg("SNR · c0", "SNR (dB)", &values, &limits).unwrap()
        );
    }

    #[test]
    fn a_single_value_and_no_values_still_draw() {
        let one = distribution_svg("x", "x", &[(1.0, Band::Inside)], &LimitLines::default());
        assert!(one.unwrap().starts_with("<svg"));
        let none = distribution_svg(
            "x",
            "x",
            &[],
            &LimitLines {
                low: Some(3.0),
                ..LimitLines::default()
            },
        );
        assert!(none.unwrap().contains("low 3"));
        // Ticks of a count axis never read 0.5.
        let svg =
            distribution_svg("x", "x", &[(1.0, Band::Inside)], &LimitLines::default()).unwrap();
        assert!(!svg.contains(">0.5<"));
    }
}

//! The code histogram plot: count per output code, with the density an ideal converter would give for
//! the fitted sine overlaid: the arcsine law of the sine-wave code-density (histogram) test of IEEE Std
//! 1241 and IEEE Std 1057 (from memory of those standards; the formula is derived in [`ideal_counts`]).

use super::spectrum::column_extremes;
use super::{
    draw_err, draw_panel, nice_ticks, no_data, palette, rgb, style_mesh, tick_label, PanelLines,
    PlotOptions, TickAxis, FONT, PANEL_PX,
};
use crate::analysis::{Analysis, Traces};
use crate::error::Result;
use crate::figures;
use crate::report::units::with_unit;
use plotters::prelude::*;
use std::f64::consts::PI;

/// Expected count per code of an ideal converter fed the sine A·cos(θ) + C with θ uniform over the
/// record, `total` samples in all: code k receives total·(asin((k+½−C)/A) − asin((k−½−C)/A))/π, the
/// arguments clipped to [−1, 1]. The lowest and highest of the `codes` codes (from `lowest_code` up)
/// also receive everything beyond them, as a clipping converter would. With A ≤ 0 every sample lands on
/// the code nearest C.
pub fn ideal_counts(
    codes: usize,
    lowest_code: i64,
    amplitude_codes: f64,
    offset_codes: f64,
    total: f64,
) -> Vec<f64> {
    let mut out = vec![0.0; codes];
    if codes == 0 {
        return out;
    }
    if !(amplitude_codes > 0.0 && amplitude_codes.is_finite()) {
        let k = (offset_codes.round() - lowest_code as f64).clamp(0.0, (codes - 1) as f64);
        out[k as usize] = total;
        return out;
    }
    // Probability that the sine lies below x: ½ + asin((x − C)/A)/π.
    let below = |x: f64| {
        0.5 + ((x - offset_codes) / amplitude_codes)
            .clamp(-1.0, 1.0)
            .asin()
            / PI
    };
    for (i, slot) in out.iter_mut().enumerate() {
        let k = (lowest_code + i as i64) as f64;
        let lo = if i == 0 { 0.0 } else { below(k - 0.5) };
        let hi = if i == codes - 1 { 1.0 } else { below(k + 0.5) };
        *slot = total * (hi - lo).max(0.0);
    }
    out
}

/// Draws the code histogram of one analysed record as SVG text.
///
/// Needs the record's sine fit and its histogram (`t.histogram`, 2^N counts from the lowest code).
pub fn histogram_svg(title: &str, a: &Analysis, t: &Traces, o: &PlotOptions) -> Result<String> {
    let fit = a
        .fit
        .as_ref()
        .ok_or_else(|| no_data("histogram", "a record without a sine fit"))?;
    let hist = &t.histogram();
    if a.bits == 0 || a.bits > 24 || hist.len() != 1usize << a.bits {
        return Err(no_data(
            "histogram",
            format!("{} counts for a {}-bit record", hist.len(), a.bits),
        ));
    }
    let (first_hit, last_hit) = match (
        hist.iter().position(|&c| c > 0),
        hist.iter().rposition(|&c| c > 0),
    ) {
        (Some(f), Some(l)) => (f, l),
        _ => return Err(no_data("histogram", "no counts")),
    };
    let lowest = crate::record::min_code(a.bits);
    let total: u64 = hist.iter().sum();
    let ideal = ideal_counts(
        hist.len(),
        lowest,
        fit.amplitude_codes,
        fit.offset_codes,
        total as f64,
    );
    // Shown range: the codes hit, with a small margin, within the converter's range.
    let margin = ((last_hit - first_hit) / 50).max(2);
    let lo = first_hit.saturating_sub(margin);
    let hi = (last_hit + margin).min(hist.len() - 1);
    let code = |i: usize| lowest + i as i64;
    let missing = (first_hit..=last_hit).filter(|&i| hist[i] == 0).count();
    let hit = hist.iter().filter(|&&c| c > 0).count();
    let max_count = hist[lo..=hi].iter().copied().max().unwrap_or(0) as f64;
    let max_ideal = ideal[lo..=hi].iter().copied().fold(0.0, f64::max);
    let top_raw = (max_count.max(max_ideal) * 1.08).max(1.0);
    let probe = nice_ticks(0.0, top_raw, 6);
    let step = match probe.major.as_slice() {
        [a, b, ..] => b - a,
        _ => top_raw,
    };
    let top = (top_raw / step).ceil() * step;
    let yt = nice_ticks(0.0, top, 6);
    let (x0, x1) = (code(lo) as f64 - 0.5, code(hi) as f64 + 0.5);
    let xt = nice_ticks(x0, x1, 8);

    let (w, h) = o.size();
    let ink = rgb(palette::INK);
    let mut svg = String::new();
    {
        let err = draw_err::<DrawingAreaErrorKind<std::io::Error>>("histogram");
        let root = SVGBackend::with_string(&mut svg, (w, h)).into_drawing_area();
        root.fill(&rgb(palette::BACKGROUND)).map_err(&err)?;
        let (left, right) = root.split_horizontally(w - PANEL_PX);
        let mut chart = ChartBuilder::on(&left)
            .caption(
                format!("{title} · code histogram"),
                (FONT, 17).into_font().color(&ink),
            )
            .margin_top(8)
            .margin_left(10)
            .margin_right(16)
            .margin_bottom(6)
            .x_label_area_size(46)
            .y_label_area_size(70)
            .build_cartesian_2d(
                TickAxis::new(x0, x1, xt.clone()),
                TickAxis::new(0.0, top, yt.clone()),
            )
            .map_err(&err)?;
        let x_label = |v: &f64| tick_label(*v, xt.decimals);
        let y_label = |v: &f64| tick_label(*v, yt.decimals);
        {
            let mut m = chart.configure_mesh();
            m.x_desc("output code")
                .y_desc("count")
                .x_label_formatter(&x_label)
                .y_label_formatter(&y_label);
            style_mesh(&mut m);
            m.draw().map_err(&err)?;
        }
        let columns = chart.plotting_area().dim_in_pixel().0.max(1) as usize;
        let shown = hi - lo + 1;
        let counts: Vec<f64> = hist[lo..=hi].iter().map(|&c| c as f64).collect();
        let ideal_line: Vec<(f64, f64)> = if shown * 2 <= columns {
            // Few codes: one step per code.
            let mut outline = vec![(x0, 0.0)];
            for (j, &c) in counts.iter().enumerate() {
                let k = code(lo + j) as f64;
                outline.push((k - 0.5, c));
                outline.push((k + 0.5, c));
            }
            outline.push((x1, 0.0));
            chart
                .draw_series(std::iter::once(Polygon::new(
                    outline.clone(),
                    rgb(palette::BAND).filled(),
                )))
                .map_err(&err)?;
            chart
                .draw_series(LineSeries::new(
                    outline,
                    rgb(palette::TRACE).stroke_width(1),
                ))
                .map_err(&err)?;
            (lo..=hi).map(|i| (code(i) as f64, ideal[i])).collect()
        } else {
            // Many codes: each pixel column's lowest and highest count, so a missing code (a column
            // reaching zero) and a wide code (a peak) both stay visible.
            let frac = |j: usize| j as f64 / shown as f64;
            let red = column_extremes(&counts, 0, columns, frac);
            let col_x = |c: usize| x0 + (x1 - x0) * (c as f64 + 0.5) / columns as f64;
            let mut band: Vec<(f64, f64)> = red.iter().map(|c| (col_x(c.column), c.max)).collect();
            band.extend(red.iter().rev().map(|c| (col_x(c.column), c.min)));
            chart
                .draw_series(std::iter::once(Polygon::new(
                    band,
                    rgb(palette::TRACE).mix(0.75).filled(),
                )))
                .map_err(&err)?;
            // The ideal density averaged over each column's codes.
            let mut sums: Vec<(usize, f64, usize)> = Vec::new();
            for j in 0..shown {
                let c = ((frac(j) * columns as f64) as usize).min(columns - 1);
                match sums.last_mut() {
                    Some(s) if s.0 == c => {
                        s.1 += ideal[lo + j];
                        s.2 += 1;
                    }
                    _ => sums.push((c, ideal[lo + j], 1)),
                }
            }
            sums.iter()
                .map(|&(c, s, k)| (col_x(c), s / k as f64))
                .collect()
        };
        chart
            .draw_series(LineSeries::new(
                ideal_line,
                rgb(palette::HARMONIC).stroke_width(2),
            ))
            .map_err(&err)?;

        let lines: PanelLines = vec![
            ("samples".into(), total.to_string()),
            ("codes hit".into(), format!("{hit} of {}", hist.len())),
            (
                "range hit".into(),
                format!("{} .. {}", code(first_hit), code(last_hit)),
            ),
            ("missing inside".into(), missing.to_string()),
            ("lowest code count".into(), hist[0].to_string()),
            (
                "highest code count".into(),
                hist[hist.len() - 1].to_string(),
            ),
            (
                figures::FIT_AMPLITUDE.label.into(),
                with_unit(Some(fit.amplitude_codes), figures::FIT_AMPLITUDE.unit, 2),
            ),
            (
                figures::FIT_OFFSET.label.into(),
                with_unit(Some(fit.offset_codes), figures::FIT_OFFSET.unit, 3),
            ),
            ("observed".into(), "teal".into()),
            ("ideal sine density".into(), "orange line".into()),
        ];
        draw_panel(&right, "Codes", &lines)?;
        root.present().map_err(&err)?;
    }
    Ok(svg)
}

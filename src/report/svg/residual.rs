//! The sine-fit residual plot: residual (LSB) against the phase of the fitted sine, 0 to 2π, where
//! code- and phase-dependent error shows as structure; and against the sample index over the start of
//! the record, where bursts and drifts show. Every sample enters the per-phase statistics (mean, lowest
//! and highest per phase bin); the scatter shows a deterministic low-discrepancy subset for long records.

use super::{
    draw_err, draw_panel, nice_ticks, no_data, palette, rgb, style_mesh, tick_label, PanelLines,
    PlotOptions, TickAxis, Ticks, FONT, PANEL_PX,
};
use crate::analysis::{Analysis, Traces};
use crate::error::Result;
use crate::figures;
use crate::fit::FitMethod;
use crate::report::units::with_unit;
use plotters::prelude::*;
use std::f64::consts::{FRAC_PI_2, PI, TAU};

/// Most points drawn in the residual-against-phase scatter.
pub const MAX_SCATTER_POINTS: usize = 1500;
/// Samples shown in the residual-against-index panel (the start of the record).
pub const INDEX_STRETCH: usize = 512;

/// Indices of the samples drawn from a record of `samples` samples: all of them when there are at most
/// `max_points`, else about `max_points` indices in increasing order from the additive sequence
/// frac((j + ½)·(√5 − 1)/2) (Weyl's golden-ratio sequence), which spreads over the record without the
/// aliasing that a fixed stride has against a coherent tone. Deterministic.
pub fn decimated_indices(samples: usize, max_points: usize) -> Vec<usize> {
    if samples <= max_points {
        return (0..samples).collect();
    }
    let g = (5f64.sqrt() - 1.0) / 2.0;
    let mut idx: Vec<usize> = (0..max_points)
        .map(|j| {
            let x = ((j as f64 + 0.5) * g).fract();
            ((x * samples as f64) as usize).min(samples - 1)
        })
        .collect();
    idx.sort_unstable();
    idx.dedup();
    idx
}

/// Phase of the fitted cosine at each sample, in [0, 2π): 2π·frac(f·n/fs) + φ.
fn phase_at(n: usize, cycles_per_sample: f64, phase_rad: f64) -> f64 {
    let turns = (cycles_per_sample * n as f64).fract();
    (TAU * turns + phase_rad).rem_euclid(TAU)
}

/// Symmetric limit of the residual axis and its ticks.
fn residual_axis(max_abs: f64) -> (f64, Ticks) {
    let lim = if max_abs > 0.0 && max_abs.is_finite() {
        max_abs * 1.08
    } else {
        1.0
    };
    let probe = nice_ticks(-lim, lim, 6);
    let step = match probe.major.as_slice() {
        [a, b, ..] => b - a,
        _ => lim,
    };
    let lim = (lim / step).ceil() * step;
    (lim, nice_ticks(-lim, lim, 6))
}

/// Draws the residual of the sine fit of one analysed record as SVG text.
///
/// Needs the record's sine fit and its residual (`t.residual`, one value per sample, in codes).
pub fn residual_svg(title: &str, a: &Analysis, t: &Traces, o: &PlotOptions) -> Result<String> {
    let fit = a
        .fit
        .as_ref()
        .ok_or_else(|| no_data("residual", "a record without a sine fit"))?;
    let n = t.residual.len();
    if n == 0 || n != a.samples || a.sample_rate_hz.is_nan() || a.sample_rate_hz <= 0.0 {
        return Err(no_data(
            "residual",
            format!(
                "{n} residual values for {} samples at {} Hz",
                a.samples, a.sample_rate_hz
            ),
        ));
    }
    let cps = fit.frequency_hz / a.sample_rate_hz;
    let max_abs = t
        .residual
        .iter()
        .filter(|r| r.is_finite())
        .fold(0.0f64, |m, r| m.max(r.abs()));
    let (lim, yt) = residual_axis(max_abs);
    let clamp = |r: f64| {
        if r.is_finite() {
            r.clamp(-lim, lim)
        } else {
            0.0
        }
    };

    let (w, h) = o.size();
    // Per-phase statistics over every sample.
    let phase_bins = (((w - PANEL_PX) / 4) as usize).clamp(16, 512);
    let mut sum = vec![0.0f64; phase_bins];
    let mut count = vec![0usize; phase_bins];
    let mut lo = vec![f64::INFINITY; phase_bins];
    let mut hi = vec![f64::NEG_INFINITY; phase_bins];
    for (i, &r) in t.residual.iter().enumerate() {
        if !r.is_finite() {
            continue;
        }
        let p = phase_at(i, cps, fit.phase_rad);
        let b = ((p / TAU * phase_bins as f64) as usize).min(phase_bins - 1);
        sum[b] += r;
        count[b] += 1;
        lo[b] = lo[b].min(r);
        hi[b] = hi[b].max(r);
    }
    let centre = |b: usize| (b as f64 + 0.5) / phase_bins as f64 * TAU;
    let filled: Vec<usize> = (0..phase_bins).filter(|&b| count[b] > 0).collect();
    let shown = decimated_indices(n, MAX_SCATTER_POINTS);
    let stretch = n.min(INDEX_STRETCH);

    let ink = rgb(palette::INK);
    let mut svg = String::new();
    {
        let err = draw_err::<DrawingAreaErrorKind<std::io::Error>>("residual");
        let root = SVGBackend::with_string(&mut svg, (w, h)).into_drawing_area();
        root.fill(&rgb(palette::BACKGROUND)).map_err(&err)?;
        let (left, right) = root.split_horizontally(w - PANEL_PX);
        let (upper, lower) = left.split_vertically((h as f64 * 0.6) as u32);

        // Residual against phase.
        let phase_major: Vec<f64> = (0..=4).map(|k| k as f64 * FRAC_PI_2).collect();
        let phase_minor: Vec<f64> = (0..=16).map(|k| k as f64 * PI / 8.0).collect();
        let mut top = ChartBuilder::on(&upper)
            .caption(
                format!("{title} · sine-fit residual"),
                (FONT, 17).into_font().color(&ink),
            )
            .margin_top(8)
            .margin_left(10)
            .margin_right(16)
            .margin_bottom(4)
            .x_label_area_size(40)
            .y_label_area_size(64)
            .build_cartesian_2d(
                TickAxis::new(
                    0.0,
                    TAU,
                    Ticks {
                        major: phase_major,
                        minor: phase_minor,
                        decimals: 0,
                    },
                ),
                TickAxis::new(-lim, lim, yt.clone()),
            )
            .map_err(&err)?;
        let phase_label = |v: &f64| {
            let k = (v / FRAC_PI_2).round() as i64;
            match k {
                0 => "0",
                1 => "π/2",
                2 => "π",
                3 => "3π/2",
                _ => "2π",
            }
            .to_string()
        };
        let y_label = |v: &f64| tick_label(*v, yt.decimals);
        {
            let mut m = top.configure_mesh();
            m.x_desc("phase of the fitted sine (rad)")
                .y_desc("residual (LSB)")
                .x_label_formatter(&phase_label)
                .y_label_formatter(&y_label);
            style_mesh(&mut m);
            m.draw().map_err(&err)?;
        }
        let mut band: Vec<(f64, f64)> = filled.iter().map(|&b| (centre(b), clamp(hi[b]))).collect();
        band.extend(filled.iter().rev().map(|&b| (centre(b), clamp(lo[b]))));
        if band.len() >= 4 {
            top.draw_series(std::iter::once(Polygon::new(
                band,
                rgb(palette::BAND).mix(0.7).filled(),
            )))
            .map_err(&err)?;
        }
        let dot = rgb(palette::TRACE).mix(0.55).filled();
        top.draw_series(shown.iter().map(|&i| {
            Circle::new(
                (phase_at(i, cps, fit.phase_rad), clamp(t.residual[i])),
                1,
                dot,
            )
        }))
        .map_err(&err)?;
        top.draw_series(LineSeries::new(
            filled
                .iter()
                .map(|&b| (centre(b), clamp(sum[b] / count[b] as f64))),
            rgb(palette::SPUR).stroke_width(2),
        ))
        .map_err(&err)?;

        // Residual against sample index, the start of the record.
        let xt = nice_ticks(0.0, (stretch - 1).max(1) as f64, 8);
        let mut bottom = ChartBuilder::on(&lower)
            .margin_top(6)
            .margin_left(10)
            .margin_right(16)
            .margin_bottom(6)
            .x_label_area_size(40)
            .y_label_area_size(64)
            .build_cartesian_2d(
                TickAxis::new(0.0, (stretch - 1).max(1) as f64, xt.clone()),
                TickAxis::new(-lim, lim, yt.clone()),
            )
            .map_err(&err)?;
        let x_label = |v: &f64| tick_label(*v, 0);
        {
            let mut m = bottom.configure_mesh();
            m.x_desc(format!("sample index n (first {stretch} of {n})"))
                .y_desc("residual (LSB)")
                .x_label_formatter(&x_label)
                .y_label_formatter(&y_label);
            style_mesh(&mut m);
            m.draw().map_err(&err)?;
        }
        let pts: Vec<(f64, f64)> = (0..stretch)
            .map(|i| (i as f64, clamp(t.residual[i])))
            .collect();
        bottom
            .draw_series(LineSeries::new(pts, rgb(palette::TRACE).stroke_width(1)))
            .map_err(&err)?;

        let method = match fit.method {
            FitMethod::ThreeParameter => "three-parameter",
            FitMethod::FourParameter => "four-parameter",
        };
        let codes = figures::FIT_RESIDUAL.unit;
        let lines: PanelLines = vec![
            (figures::FIT_METHOD.label.into(), method.to_string()),
            (
                figures::FIT_RESIDUAL.label.into(),
                with_unit(Some(fit.residual_rms_codes), codes, 4),
            ),
            ("max |residual|".into(), with_unit(Some(max_abs), codes, 3)),
            (
                figures::FIT_SINAD.label.into(),
                with_unit(fit.sinad_db, figures::FIT_SINAD.unit, 2),
            ),
            (
                figures::FIT_ENOB.label.into(),
                with_unit(fit.enob_bits, figures::FIT_ENOB.unit, 3),
            ),
            (
                figures::FIN.label.into(),
                with_unit(Some(fit.frequency_hz), figures::FIN.unit, 9),
            ),
            (
                figures::FIT_AMPLITUDE.label.into(),
                with_unit(Some(fit.amplitude_codes), figures::FIT_AMPLITUDE.unit, 3),
            ),
            (
                figures::FIT_OFFSET.label.into(),
                with_unit(Some(fit.offset_codes), figures::FIT_OFFSET.unit, 3),
            ),
            ("phase bins".into(), phase_bins.to_string()),
            ("points shown".into(), format!("{} of {n}", shown.len())),
            ("mean per phase".into(), "red line".into()),
            ("low..high per phase".into(), "band".into()),
        ];
        draw_panel(&right, "Sine fit", &lines)?;
        root.present().map_err(&err)?;
    }
    Ok(svg)
}

//! The spectrum plot: dBFS per bin against frequency (0 to fs/2, or log from the first bin), with the
//! fundamental and harmonics marked by order, the worst spur, the average noise floor and a box of
//! figures. Long records are reduced to one value pair per pixel column (the column's highest and
//! lowest bin), so a one-bin spur is never lost between pixels.

use super::{
    draw_err, draw_panel, fixed_ticks, nice_ticks, no_data, palette, rgb, si_label, style_mesh,
    tick_label, PanelLines, PlotOptions, TickAxis, Ticks, FONT, PANEL_PX,
};
use crate::analysis::{Analysis, Traces};
use crate::error::Result;
use crate::figures::{self, Cells};
use crate::report::units::{si, with_unit};
use crate::spectrum::claim::Owner;
use crate::spectrum::{harmonic_owner, FUNDAMENTAL};
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// The highest and lowest value among the bins that fall into one pixel column.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ColumnExtreme {
    /// Pixel column, 0-based from the left end of the axis.
    pub column: usize,
    /// The bin holding the column's highest value (the first such bin on a tie).
    pub max_bin: usize,
    /// The highest value.
    pub max: f64,
    /// The lowest value.
    pub min: f64,
}

/// Reduces per-bin values to pixel columns. Bins `first_bin..values.len()` are placed on the axis by
/// `position` (a fraction 0..=1 of the axis width, non-decreasing in the bin index); each of the
/// `columns` columns that receives at least one bin yields its extremes, in column order. Every bin's
/// value is at most its column's `max`, so the largest bin overall is always kept.
pub fn column_extremes(
    values: &[f64],
    first_bin: usize,
    columns: usize,
    position: impl Fn(usize) -> f64,
) -> Vec<ColumnExtreme> {
    let mut out: Vec<ColumnExtreme> = Vec::new();
    if columns == 0 {
        return out;
    }
    let last = columns - 1;
    for (k, &v) in values.iter().enumerate().skip(first_bin) {
        let frac = position(k);
        let col = if frac.is_finite() {
            ((frac * columns as f64).floor().max(0.0) as usize).min(last)
        } else {
            0
        };
        match out.last_mut() {
            Some(c) if c.column == col => {
                if v > c.max {
                    c.max = v;
                    c.max_bin = k;
                }
                if v < c.min {
                    c.min = v;
                }
            }
            _ => out.push(ColumnExtreme {
                column: col,
                max_bin: k,
                max: v,
                min: v,
            }),
        }
    }
    out
}

/// How the frequency axis is drawn: plotting coordinate u is f (linear) or log10 f (log).
#[derive(Debug, Clone, Copy)]
struct FreqAxis {
    log: bool,
    lo_hz: f64,
    hi_hz: f64,
}

impl FreqAxis {
    fn u(&self, f_hz: f64) -> f64 {
        if self.log {
            f_hz.max(self.lo_hz).log10()
        } else {
            f_hz
        }
    }
    fn f(&self, u: f64) -> f64 {
        if self.log {
            10f64.powf(u)
        } else {
            u
        }
    }
    fn u_range(&self) -> (f64, f64) {
        (self.u(self.lo_hz), self.u(self.hi_hz))
    }
    /// Fraction of the axis width at frequency f.
    fn fraction(&self, f_hz: f64) -> f64 {
        let (a, b) = self.u_range();
        (self.u(f_hz) - a) / (b - a)
    }
    fn ticks(&self) -> Ticks {
        if !self.log {
            return nice_ticks(self.lo_hz, self.hi_hz, 8);
        }
        // Decades labelled, 2..9 × 10^k as minor lines; with fewer than three decades 2 and 5 are
        // labelled too.
        let (a, b) = self.u_range();
        let first = a.floor() as i32;
        let last = b.ceil() as i32;
        let few = (b - a) < 3.0;
        let (mut major, mut minor) = (Vec::new(), Vec::new());
        for d in first..=last {
            for m in 1..10 {
                let u = (m as f64).log10() + d as f64;
                if u < a - 1e-12 || u > b + 1e-12 {
                    continue;
                }
                if m == 1 || (few && (m == 2 || m == 5)) {
                    major.push(u);
                } else {
                    minor.push(u);
                }
            }
        }
        Ticks {
            major,
            minor,
            decimals: 0,
        }
    }
}

fn ceil_to(v: f64, step: f64) -> f64 {
    (v / step).ceil() * step
}

fn floor_to(v: f64, step: f64) -> f64 {
    (v / step).floor() * step
}

/// Draws the spectrum of one analysed record as SVG text. `title` names the record in the caption.
///
/// Needs the record's spectral figures and its bin powers (`t.powers`, `t.owner`, bins 0..=N/2).
pub fn spectrum_svg(title: &str, a: &Analysis, t: &Traces, o: &PlotOptions) -> Result<String> {
    let sp = a
        .spectrum
        .as_ref()
        .ok_or_else(|| no_data("spectrum", "a record without spectral figures"))?;
    let bins = t.powers.len();
    if bins < 3 || t.owner.len() != bins || a.samples / 2 + 1 != bins {
        return Err(no_data(
            "spectrum",
            format!(
                "{} bin powers and {} bin owners for {} samples (N/2 + 1 = {} of each needed)",
                bins,
                t.owner.len(),
                a.samples,
                a.samples / 2 + 1
            ),
        ));
    }
    if !(a.sample_rate_hz > 0.0 && a.sample_rate_hz.is_finite()) {
        return Err(no_data(
            "spectrum",
            format!("sample rate {} Hz", a.sample_rate_hz),
        ));
    }
    let pfs = crate::record::full_scale_power(a.bits);
    let db = |p: f64| (p > 0.0 && p.is_finite()).then(|| 10.0 * (p / pfs).log10());
    let bin_hz = a.sample_rate_hz / a.samples as f64;
    let axis = FreqAxis {
        log: o.log_frequency,
        lo_hz: if o.log_frequency { bin_hz } else { 0.0 },
        hi_hz: (bins - 1) as f64 * bin_hz,
    };
    let first_bin = usize::from(o.log_frequency);

    // Vertical range: from 20 dB under the average floor to above the highest bin, in 10 dB steps.
    let peak = t.powers[first_bin..]
        .iter()
        .filter_map(|&p| db(p))
        .fold(f64::NEG_INFINITY, f64::max);
    let top = ceil_to(peak.max(0.0) + 5.0, 10.0);
    let lowest = t.powers[first_bin..]
        .iter()
        .filter_map(|&p| db(p))
        .fold(f64::INFINITY, f64::min);
    let bottom = match sp.noise_floor_dbfs {
        Some(f) => floor_to(f - 20.0, 10.0),
        None if lowest.is_finite() => floor_to(lowest - 5.0, 10.0),
        None => top - 200.0,
    }
    .clamp(-400.0, top - 40.0);
    let y_of = |p: f64| db(p).map_or(bottom, |d| d.clamp(bottom, top));

    let (w, h) = o.size();
    let xt = axis.ticks();
    // dB grid in steps of 10, 20 or 50 dB, minor lines at half steps.
    let span = top - bottom;
    let y_step = if span <= 120.0 {
        10.0
    } else if span <= 240.0 {
        20.0
    } else {
        50.0
    };
    let yt = fixed_ticks(bottom, top, y_step, 2.0);
    let (u_lo, u_hi) = axis.u_range();
    let ink = rgb(palette::INK);
    let mut svg = String::new();
    {
        let err = draw_err::<DrawingAreaErrorKind<std::io::Error>>("spectrum");
        let root = SVGBackend::with_string(&mut svg, (w, h)).into_drawing_area();
        root.fill(&rgb(palette::BACKGROUND)).map_err(&err)?;
        let (left, right) = root.split_horizontally(w - PANEL_PX);
        let mut chart = ChartBuilder::on(&left)
            .caption(
                format!("{title} · spectrum"),
                (FONT, 17).into_font().color(&ink),
            )
            .margin_top(8)
            .margin_left(10)
            .margin_right(16)
            .margin_bottom(6)
            .x_label_area_size(46)
            .y_label_area_size(64)
            .build_cartesian_2d(
                TickAxis::new(u_lo, u_hi, xt.clone()),
                TickAxis::new(bottom, top, yt.clone()),
            )
            .map_err(&err)?;
        let x_label = |u: &f64| si_label(axis.f(*u), "Hz");
        let y_label = |v: &f64| tick_label(*v, yt.decimals);
        {
            let mut m = chart.configure_mesh();
            m.x_desc(if axis.log {
                "frequency (log scale)"
            } else {
                "frequency"
            })
            .y_desc("dBFS per bin")
            .x_label_formatter(&x_label)
            .y_label_formatter(&y_label);
            style_mesh(&mut m);
            m.draw().map_err(&err)?;
        }

        // The trace: every bin when they fit, else each pixel column's extremes.
        let columns = chart.plotting_area().dim_in_pixel().0.max(1) as usize;
        let bin_f = |k: usize| k as f64 * bin_hz;
        let reduced = column_extremes(&t.powers, first_bin, columns, |k| axis.fraction(bin_f(k)));
        let trace: Vec<(f64, f64)> = if reduced.len() == bins - first_bin {
            (first_bin..bins)
                .map(|k| (axis.u(bin_f(k)), y_of(t.powers[k])))
                .collect()
        } else {
            let (a0, a1) = (u_lo, u_hi);
            let col_u = |c: usize| a0 + (a1 - a0) * (c as f64 + 0.5) / columns as f64;
            let mut band: Vec<(f64, f64)> = reduced
                .iter()
                .map(|c| (col_u(c.column), y_of(c.max)))
                .collect();
            band.extend(reduced.iter().rev().map(|c| (col_u(c.column), y_of(c.min))));
            chart
                .draw_series(std::iter::once(Polygon::new(
                    band,
                    rgb(palette::BAND).filled(),
                )))
                .map_err(&err)?;
            reduced
                .iter()
                .map(|c| (axis.u(bin_f(c.max_bin)), y_of(c.max)))
                .collect()
        };
        chart
            .draw_series(LineSeries::new(trace, rgb(palette::TRACE).stroke_width(1)))
            .map_err(&err)?;

        // Average noise floor, dashed across the whole axis, labelled at the left.
        if let Some(floor) = sp.noise_floor_dbfs.filter(|f| *f >= bottom && *f <= top) {
            let floor_style = ShapeStyle::from(&rgb(palette::FLOOR)).stroke_width(1);
            chart
                .draw_series(DashedLineSeries::new(
                    [(u_lo, floor), (u_hi, floor)],
                    9,
                    5,
                    floor_style,
                ))
                .map_err(&err)?;
            // The label sits under the line on a patch of background, so the trace cannot hide it.
            let floor_ink = rgb(palette::FLOOR);
            let style = TextStyle::from((FONT, 12).into_font())
                .color(&floor_ink)
                .pos(Pos::new(HPos::Left, VPos::Top));
            let text = format!("average noise floor {floor:.1} dBFS");
            let width = 7 * text.chars().count() as i32;
            chart
                .draw_series(std::iter::once(
                    EmptyElement::at((u_lo, floor))
                        + Rectangle::new(
                            [(4, 3), (8 + width, 19)],
                            rgb(palette::BACKGROUND).mix(0.9).filled(),
                        )
                        + Text::new(text, (8, 5), style),
                ))
                .map_err(&err)?;
        }

        // Markers: the peak bin of each claimed span, labelled with its order (H1 = fundamental).
        let peak_of = |want: Owner| -> Option<usize> {
            (first_bin..bins)
                .filter(|&k| t.owner[k] == want)
                .max_by(|&x, &y| t.powers[x].total_cmp(&t.powers[y]).then(y.cmp(&x)))
        };
        // (bin, label, colour, measured above the floor)
        type Mark = (usize, String, (u8, u8, u8), bool);
        let mut marks: Vec<Mark> = Vec::new();
        if let Some(k) = peak_of(FUNDAMENTAL) {
            marks.push((k, "H1".to_string(), palette::FUNDAMENTAL, true));
        }
        for hf in &sp.harmonics {
            if hf.masked {
                continue;
            }
            if let Some(k) = peak_of(harmonic_owner(hf.order)) {
                marks.push((k, format!("H{}", hf.order), palette::HARMONIC, !hf.at_floor));
            }
        }
        for (k, label, colour, measured) in &marks {
            let c = rgb(*colour);
            let dot = if *measured {
                ShapeStyle::from(&c).filled()
            } else {
                ShapeStyle::from(&c).stroke_width(1)
            };
            let style = TextStyle::from((FONT, 12).into_font().style(FontStyle::Bold))
                .color(&c)
                .pos(Pos::new(HPos::Center, VPos::Bottom));
            chart
                .draw_series(std::iter::once(
                    EmptyElement::at((axis.u(bin_f(*k)), y_of(t.powers[*k])))
                        + Circle::new((0, 0), 3, dot)
                        + Text::new(label.clone(), (0, -6), style),
                ))
                .map_err(&err)?;
        }
        // The worst spur: a ring on its peak bin and a label above the order label.
        if let Some(spur) = &sp.worst_spur {
            let k = match spur.harmonic {
                Some(order) => peak_of(harmonic_owner(order)),
                None => {
                    let centre = (spur.frequency_hz / bin_hz).round() as usize;
                    let half = sp.tone_halfwidth_bins;
                    (centre.saturating_sub(half)..=(centre + half).min(bins - 1))
                        .filter(|&k| k >= first_bin)
                        .max_by(|&x, &y| t.powers[x].total_cmp(&t.powers[y]).then(y.cmp(&x)))
                }
            };
            if let Some(k) = k {
                let c = rgb(palette::SPUR);
                let style = TextStyle::from((FONT, 12).into_font().style(FontStyle::Bold))
                    .color(&c)
                    .pos(Pos::new(HPos::Center, VPos::Bottom));
                chart
                    .draw_series(std::iter::once(
                        EmptyElement::at((axis.u(bin_f(k)), y_of(t.powers[k])))
                            + Circle::new((0, 0), 7, ShapeStyle::from(&c).stroke_width(2))
                            + Text::new("worst spur", (0, -22), style),
                    ))
                    .map_err(&err)?;
            }
        }

        let spur_text = sp.worst_spur.as_ref().map_or("—".to_string(), |s| {
            format!(
                "{} {}",
                si(s.frequency_hz, "Hz", 4),
                s.harmonic
                    .map_or("(other)".to_string(), |h| format!("(H{h})"))
            )
        });
        // The headline figures of the spectrum, then the input and the measurement's conditions.
        let cells = Cells::of(a);
        let mut lines: PanelLines = figures::headline()
            .into_iter()
            .filter(|f| f.key.starts_with("spectrum."))
            .map(|f| {
                (
                    f.label.to_string(),
                    with_unit(cells.number(f.key), f.unit, 2),
                )
            })
            .collect();
        let f = &figures::FUNDAMENTAL;
        lines.push((f.label.into(), with_unit(sp.fundamental_dbfs, f.unit, 2)));
        let f = &figures::FIN;
        lines.push((
            f.label.into(),
            with_unit(Some(sp.fundamental_hz), f.unit, 6),
        ));
        lines.push((figures::WORST_SPUR.label.into(), spur_text));
        lines.push((figures::WINDOW.label.into(), sp.window.clone()));
        lines.push((figures::SAMPLES.label.into(), a.samples.to_string()));
        let f = &figures::SAMPLE_RATE;
        lines.push((f.label.into(), with_unit(Some(a.sample_rate_hz), f.unit, 6)));
        lines.push((
            figures::RECORDS_AVERAGED.label.into(),
            sp.records_averaged.to_string(),
        ));
        draw_panel(&right, "Measured", &lines)?;
        root.present().map_err(&err)?;
    }
    Ok(svg)
}

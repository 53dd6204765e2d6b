//! The spectrum plot: amplitude-normalised dBFS per bin against frequency (0 to fs/2, or log from the first bin), with the
//! fundamental and harmonics marked by order, the worst spur, the average noise floor and a box of
//! figures. Long records are reduced to one value pair per pixel column (the column's highest and
//! lowest bin), so a one-bin spur is never lost between pixels.

use super::{
    draw_err, draw_panel, fixed_ticks, frequency_unit, nice_ticks, no_data, palette, rgb,
    style_mesh, tick_label, trim_number, PanelLines, PlotOptions, TickAxis, Ticks, FONT, PANEL_PX,
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

/// How the spectrum plot scales the bin powers: by the window's equivalent noise bandwidth, which is
/// dividing the amplitude by the window's coherent gain (the usual amplitude normalisation). A tone
/// centred on a bin then peaks at its level in dBFS under any window; between bins its peak is lower
/// by at most the window's scalloping loss. Noise per bin reads 10·log10(ENBW) dB above the average
/// noise floor of the figures, which is power per bin (the crate's convention sums a tone's bins).
#[derive(Debug, Clone, PartialEq)]
pub struct PlotScale {
    /// Window id, as the spectrum names it.
    pub window: String,
    /// Equivalent noise bandwidth, bins (Harris 1978; Heinzel et al. 2002).
    pub enbw_bins: f64,
    /// Normalised coherent gain Σw / (N · peak).
    pub coherent_gain: f64,
    /// Largest loss of a tone's peak bin, between two bins, dB.
    pub scalloping_loss_db: f64,
}

impl PlotScale {
    /// The scale for the window a spectrum names.
    pub fn of(window: &str) -> Result<PlotScale> {
        let w: crate::dft::window::Window = window.parse()?;
        let f = w.figures();
        Ok(PlotScale {
            window: w.name(),
            enbw_bins: f.enbw_bins,
            coherent_gain: f.coherent_gain,
            scalloping_loss_db: f.scalloping_loss_db,
        })
    }

    /// What the plot adds to a bin's power-per-bin level: 10·log10(ENBW), dB (0 without a window).
    pub fn offset_db(&self) -> f64 {
        10.0 * self.enbw_bins.log10()
    }
}

/// A non-harmonic spur found among the noise bins for the plot's labels.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SpurMark {
    /// Its peak bin.
    pub bin: usize,
    /// Its power, codes²: the noise bins within the tone half-width of the peak summed, as the
    /// worst-spur figure sums them.
    pub power: f64,
}

/// The largest non-harmonic spurs, strongest first, at most `max`: noise bins that are the highest
/// within ± `half` bins and whose summed lobe stands clearly above the noise. "Clearly" is a lobe
/// above max(10, ln(100 · bins)) times its mean noise: with exponentially distributed bin powers a
/// chance noise bin crosses it with probability below 1 % over the whole spectrum (common practice,
/// no source). Spurs closer than 2·`half` + 1 bins to a stronger one are not listed.
pub fn largest_spurs(
    powers: &[f64],
    owner: &[Owner],
    half: usize,
    noise_per_bin: f64,
    max: usize,
) -> Vec<SpurMark> {
    let n = powers.len().min(owner.len());
    if n == 0 || !(noise_per_bin > 0.0 && noise_per_bin.is_finite()) || max == 0 {
        return Vec::new();
    }
    let factor = (100.0 * n as f64).ln().max(10.0);
    let is_noise = |k: usize| owner[k] == Owner::Noise && powers[k].is_finite();
    let mut found: Vec<SpurMark> = Vec::new();
    for k in 1..n {
        // The peak of a lobe holding factor × its mean noise is itself above factor × the mean.
        if !is_noise(k) || powers[k] < factor * noise_per_bin {
            continue;
        }
        let (lo, hi) = (k.saturating_sub(half), (k + half).min(n - 1));
        let mut lobe = 0.0;
        let mut bins = 0usize;
        let mut peak = true;
        for j in lo..=hi {
            if !is_noise(j) {
                continue;
            }
            if powers[j] > powers[k] || (powers[j] == powers[k] && j < k) {
                peak = false;
                break;
            }
            lobe += powers[j];
            bins += 1;
        }
        if peak && lobe > factor * noise_per_bin * bins as f64 {
            found.push(SpurMark {
                bin: k,
                power: lobe,
            });
        }
    }
    found.sort_by(|a, b| b.power.total_cmp(&a.power).then(a.bin.cmp(&b.bin)));
    let mut kept: Vec<SpurMark> = Vec::new();
    for s in found {
        if kept.len() == max {
            break;
        }
        if kept.iter().all(|k| k.bin.abs_diff(s.bin) > 2 * half) {
            kept.push(s);
        }
    }
    kept
}

/// A label placed on the plot: its box in pixels (left, top, right, bottom).
pub(crate) type LabelBox = (i32, i32, i32, i32);

fn overlaps(a: LabelBox, b: LabelBox) -> bool {
    a.0 < b.2 && b.0 < a.2 && a.1 < b.3 && b.1 < a.3
}

/// Places a label of `chars` characters centred above the point (x, y): the lowest of a few rows
/// that overlaps no label already placed and stays inside `area` (left, top, right, bottom). Returns
/// the label's bottom-centre anchor, or `None` when every row is taken (the marker stays, unlabelled).
pub(crate) fn place_label(
    placed: &mut Vec<LabelBox>,
    x: i32,
    y: i32,
    chars: usize,
    area: LabelBox,
) -> Option<(i32, i32)> {
    const ROW_PX: i32 = 15;
    let half_w = (7 * chars as i32) / 2 + 2;
    let cx = x.clamp(area.0 + half_w, area.2 - half_w);
    for row in 0..6 {
        let bottom = y - 6 - ROW_PX * row;
        let b = (cx - half_w, bottom - ROW_PX + 1, cx + half_w, bottom);
        if b.1 < area.1 {
            break;
        }
        if placed.iter().all(|p| !overlaps(*p, b)) {
            placed.push(b);
            return Some((cx, bottom));
        }
    }
    None
}

/// Draws the spectrum of one analysed record as SVG text. `title` names the record in the caption.
///
/// The trace is amplitude-normalised (see `PlotScale`): a tone's peak reads its level in dBFS
/// under any window. The fundamental (H1), the harmonics (H2..) and the largest non-harmonic spurs
/// (S1..) are marked at their measured power (their bins summed, the figures' own values), so a
/// marker sits above a peak that falls between bins by the scalloping. The dashed line is the average
/// noise per bin as drawn; the caption states the window, its ENBW and the scale.
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
    let scale = PlotScale::of(&sp.window)?;
    let offset = scale.offset_db();
    let pfs = crate::record::full_scale_power(a.bits);
    // Power-per-bin level of a power, dBFS (the figures' scale).
    let db = |p: f64| (p > 0.0 && p.is_finite()).then(|| 10.0 * (p / pfs).log10());
    // The level a bin is drawn at: amplitude-normalised.
    let drawn = |p: f64| db(p).map(|d| d + offset);
    let bin_hz = a.sample_rate_hz / a.samples as f64;
    let axis = FreqAxis {
        log: o.log_frequency,
        lo_hz: if o.log_frequency { bin_hz } else { 0.0 },
        hi_hz: (bins - 1) as f64 * bin_hz,
    };
    let first_bin = usize::from(o.log_frequency);
    let floor_drawn = sp.noise_floor_dbfs.map(|f| f + offset);

    // The marks: (bin, level as marked in dBFS, label, colour, measured above the floor).
    struct Mark {
        bin: usize,
        level: f64,
        label: String,
        colour: (u8, u8, u8),
        measured: bool,
    }
    let peak_of = |want: Owner| -> Option<usize> {
        (first_bin..bins)
            .filter(|&k| t.owner[k] == want)
            .max_by(|&x, &y| t.powers[x].total_cmp(&t.powers[y]).then(y.cmp(&x)))
    };
    let mut marks: Vec<Mark> = Vec::new();
    if let (Some(k), Some(level)) = (peak_of(FUNDAMENTAL), sp.fundamental_dbfs) {
        marks.push(Mark {
            bin: k,
            level,
            label: "H1".into(),
            colour: palette::FUNDAMENTAL,
            measured: true,
        });
    }
    let mut harmonics: Vec<Mark> = Vec::new();
    for hf in &sp.harmonics {
        if hf.masked {
            continue;
        }
        if let (Some(k), Some(level)) = (peak_of(harmonic_owner(hf.order)), hf.dbfs) {
            harmonics.push(Mark {
                bin: k,
                level,
                label: format!("H{}", hf.order),
                colour: palette::HARMONIC,
                measured: !hf.at_floor,
            });
        }
    }
    // Strongest harmonics get their labels first when they crowd.
    harmonics.sort_by(|x, y| y.level.total_cmp(&x.level).then(x.bin.cmp(&y.bin)));
    let noise_per_bin = sp.noise_floor_dbfs.map(|f| pfs * 10f64.powf(f / 10.0));
    let spurs = noise_per_bin.map_or(Vec::new(), |nb| {
        largest_spurs(&t.powers, &t.owner, sp.tone_halfwidth_bins, nb, 4)
    });
    let fund_power = sp.fundamental_dbfs.map(|d| pfs * 10f64.powf(d / 10.0));
    let mut spur_lines: PanelLines = Vec::new();
    let mut spur_marks: Vec<Mark> = Vec::new();
    for (i, s) in spurs.iter().enumerate() {
        let Some(level) = db(s.power) else { continue };
        let label = format!("S{}", i + 1);
        let dbc = fund_power.and_then(|f| (f > 0.0).then(|| 10.0 * (s.power / f).log10()));
        spur_lines.push((
            format!("{label} {}", si(s.bin as f64 * bin_hz, "Hz", 4)),
            dbc.map_or(format!("{level:.1} dBFS"), |d| format!("{d:.1} dBc")),
        ));
        if s.bin >= first_bin {
            spur_marks.push(Mark {
                bin: s.bin,
                level,
                label,
                colour: palette::SPUR,
                measured: true,
            });
        }
    }

    // Vertical range: from 20 dB under the drawn floor to above the highest bin or mark, 10 dB steps.
    let peak = t.powers[first_bin..]
        .iter()
        .filter_map(|&p| drawn(p))
        .chain(marks.iter().map(|m| m.level))
        .fold(f64::NEG_INFINITY, f64::max);
    let top = ceil_to(peak.max(0.0) + 5.0, 10.0);
    let lowest = t.powers[first_bin..]
        .iter()
        .filter_map(|&p| drawn(p))
        .fold(f64::INFINITY, f64::min);
    let bottom = match floor_drawn {
        Some(f) => floor_to(f - 20.0, 10.0),
        None if lowest.is_finite() => floor_to(lowest - 5.0, 10.0),
        None => top - 200.0,
    }
    .clamp(-400.0, top - 40.0);
    let y_of = |p: f64| drawn(p).map_or(bottom, |d| d.clamp(bottom, top));

    let (w, h) = o.size();
    let xt = axis.ticks();
    let (unit_hz, unit) = frequency_unit(axis.hi_hz);
    // Decimals that print every linear tick exactly in the axis unit.
    let x_decimals = {
        let step = xt
            .major
            .windows(2)
            .map(|p| p[1] - p[0])
            .next()
            .unwrap_or(1.0)
            / unit_hz;
        (0..6)
            .find(|&d| {
                let v = step * 10f64.powi(d as i32);
                (v - v.round()).abs() < 1e-6 * v.abs().max(1.0)
            })
            .unwrap_or(6)
    };
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
            .margin_bottom(22)
            .x_label_area_size(46)
            .y_label_area_size(64)
            .build_cartesian_2d(
                TickAxis::new(u_lo, u_hi, xt.clone()),
                TickAxis::new(bottom, top, yt.clone()),
            )
            .map_err(&err)?;
        let x_label = |u: &f64| {
            let f = axis.f(*u) / unit_hz;
            if axis.log {
                trim_number(f, 6)
            } else {
                tick_label(f, x_decimals)
            }
        };
        let y_label = |v: &f64| tick_label(*v, yt.decimals);
        let x_desc = if axis.log {
            format!("frequency ({unit}, log scale)")
        } else {
            format!("frequency ({unit})")
        };
        let y_desc = if scale.enbw_bins == 1.0 {
            "dBFS per bin".to_string()
        } else {
            "dBFS, tone peak = level".to_string()
        };
        {
            let mut m = chart.configure_mesh();
            m.x_desc(x_desc)
                .y_desc(y_desc)
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

        // Labels already placed, in pixels: the floor's label first, so no marker label covers it.
        let mut placed: Vec<LabelBox> = Vec::new();
        let (px0, py0) = chart.backend_coord(&(u_lo, top));
        let (px1, py1) = chart.backend_coord(&(u_hi, bottom));
        let area: LabelBox = (px0, py0, px1, py1);

        // Average noise per bin as drawn, dashed across the whole axis, labelled at the left.
        if let Some(floor) = floor_drawn.filter(|f| *f >= bottom && *f <= top) {
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
            let text = if offset == 0.0 {
                format!("average noise floor {floor:.1} dBFS per bin")
            } else {
                format!(
                    "average noise floor {floor:.1} dBFS per bin as drawn ({:.1} + {:.2} dB ENBW)",
                    floor - offset,
                    offset
                )
            };
            let width = 7 * text.chars().count() as i32;
            let (fx, fy) = chart.backend_coord(&(u_lo, floor));
            placed.push((fx, fy, fx + 8 + width, fy + 19));
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

        // Markers at each tone's measured level; where the peak bin is lower (a tone between bins),
        // a thin line joins the peak to the marker.
        let worst_bin = sp.worst_spur.as_ref().and_then(|spur| match spur.harmonic {
            Some(order) => peak_of(harmonic_owner(order)),
            None => {
                let centre = (spur.frequency_hz / bin_hz).round() as usize;
                let half = sp.tone_halfwidth_bins;
                (centre.saturating_sub(half)..=(centre + half).min(bins - 1))
                    .filter(|&k| k >= first_bin)
                    .max_by(|&x, &y| t.powers[x].total_cmp(&t.powers[y]).then(y.cmp(&x)))
            }
        });
        let worst_level = sp.worst_spur.as_ref().map(|s| s.dbfs);
        marks.extend(harmonics);
        marks.extend(spur_marks);
        let mut dots: Vec<(i32, i32)> = Vec::new();
        for m in &marks {
            let u = axis.u(bin_f(m.bin));
            let level = m.level.clamp(bottom, top);
            let peak_level = y_of(t.powers[m.bin]);
            let c = rgb(m.colour);
            if (level - peak_level).abs() > 0.05 {
                chart
                    .draw_series(LineSeries::new(
                        [(u, peak_level), (u, level)],
                        c.stroke_width(1),
                    ))
                    .map_err(&err)?;
            }
            let dot = if m.measured {
                ShapeStyle::from(&c).filled()
            } else {
                ShapeStyle::from(&c).stroke_width(1)
            };
            chart
                .draw_series(std::iter::once(Circle::new((u, level), 3, dot)))
                .map_err(&err)?;
            dots.push(chart.backend_coord(&(u, level)));
        }
        // Every dot's own place is taken before any label is placed.
        for &(x, y) in &dots {
            placed.push((x - 3, y - 3, x + 3, y + 3));
        }
        // The worst spur: a ring on its marker, labelled before the order labels so it is never lost.
        if let (Some(k), Some(level)) = (worst_bin, worst_level) {
            let c = rgb(palette::SPUR);
            let (x, y) = chart.backend_coord(&(axis.u(bin_f(k)), level.clamp(bottom, top)));
            left.draw(&Circle::new(
                (x, y),
                7,
                ShapeStyle::from(&c).stroke_width(2),
            ))
            .map_err(&err)?;
            placed.push((x - 7, y - 7, x + 7, y + 7));
            if let Some((lx, ly)) = place_label(&mut placed, x, y - 16, 10, area) {
                let style = TextStyle::from((FONT, 12).into_font().style(FontStyle::Bold))
                    .color(&c)
                    .pos(Pos::new(HPos::Center, VPos::Bottom));
                left.draw(&Text::new("worst spur", (lx, ly), style))
                    .map_err(&err)?;
            }
        }
        for (m, &(x, y)) in marks.iter().zip(&dots) {
            let c = rgb(m.colour);
            let Some((lx, ly)) = place_label(&mut placed, x, y, m.label.chars().count(), area)
            else {
                continue;
            };
            if y - ly > 12 {
                left.draw(&PathElement::new(
                    [(x, y - 4), (lx, ly + 1)],
                    c.mix(0.6).stroke_width(1),
                ))
                .map_err(&err)?;
            }
            let style = TextStyle::from((FONT, 12).into_font().style(FontStyle::Bold))
                .color(&c)
                .pos(Pos::new(HPos::Center, VPos::Bottom));
            left.draw(&Text::new(m.label.clone(), (lx, ly), style))
                .map_err(&err)?;
        }

        // The scale, stated under the axis.
        let note = if offset == 0.0 {
            format!(
                "{} window: bin powers as measured; markers show each tone's power (its bins summed)",
                scale.window
            )
        } else {
            format!(
                "{} window, ENBW {:.3} bins: bins ÷ coherent gain {:.4}, so a tone's peak reads its level \
                 (up to {:.2} dB less between bins); markers show each tone's power",
                scale.window, scale.enbw_bins, scale.coherent_gain, scale.scalloping_loss_db
            )
        };
        let style = TextStyle::from((FONT, 11).into_font())
            .color(&ink)
            .pos(Pos::new(HPos::Left, VPos::Bottom));
        left.draw(&Text::new(note, (10, h as i32 - 5), style))
            .map_err(&err)?;

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
        lines.extend(spur_lines.into_iter().take(3));
        lines.push((figures::WINDOW.label.into(), sp.window.clone()));
        lines.push(("ENBW".into(), format!("{:.3} bins", scale.enbw_bins)));
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

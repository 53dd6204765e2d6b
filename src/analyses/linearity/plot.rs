//! The histogram test's plots and page: DNL against code and INL against code in the style of the
//! other plots (our colours, exact ticks, a legend under the frame), and `index.html` in the shared
//! page shell with the figures table and both plots inline. Long code ranges are reduced to each pixel
//! column's lowest and highest value, so a one-code spike is never lost.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::{Extremes, Linearity};
use crate::error::{Error, ErrorKind, Location, Result};
use crate::report::html::{escape, inline_svg, page};
use crate::report::svg::{
    nice_ticks, palette, rgb, style_mesh, tick_label, trim_number, TickAxis, FONT,
};

/// Plot size in pixels.
const SIZE: (u32, u32) = (960, 420);
/// Left and right margins plus the label area: the pixel columns of the frame are about this much
/// narrower than the plot.
const FRAME_INSET_PX: u32 = 100;

/// File names written by [`write_plots`], in order (the page, `index.html`, follows them).
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
    for v in values.filter(|v| v.is_finite()) {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    let pad = 0.05 * (hi - lo);
    (lo - pad, hi + pad)
}

/// Points reduced to at most two per pixel column (the column's lowest and highest, in code order),
/// over `columns` columns of `x_range`. Short curves are returned as they are.
pub(crate) fn reduce(
    points: &[(f64, f64)],
    x_range: (f64, f64),
    columns: usize,
) -> Vec<(f64, f64)> {
    if points.len() <= 2 * columns || columns == 0 {
        return points.to_vec();
    }
    let span = x_range.1 - x_range.0;
    let mut out: Vec<(f64, f64)> = Vec::with_capacity(2 * columns);
    // The current column: its index, its lowest point, its highest point.
    type Column = (usize, (f64, f64), (f64, f64));
    let mut current: Option<Column> = None;
    let flush = |c: Column, out: &mut Vec<(f64, f64)>| {
        let (_, lo, hi) = c;
        if lo.0 <= hi.0 {
            out.push(lo);
            out.push(hi);
        } else {
            out.push(hi);
            out.push(lo);
        }
    };
    for &p in points {
        let col = (((p.0 - x_range.0) / span * columns as f64).floor().max(0.0) as usize)
            .min(columns - 1);
        match current.as_mut() {
            Some(c) if c.0 == col => {
                if p.1 < c.1 .1 {
                    c.1 = p;
                }
                if p.1 > c.2 .1 {
                    c.2 = p;
                }
            }
            _ => {
                if let Some(c) = current.take() {
                    flush(c, &mut out);
                }
                current = Some((col, p, p));
            }
        }
    }
    if let Some(c) = current {
        flush(c, &mut out);
    }
    out
}

/// A curve: its legend label, its colour and its (code, value) points.
type Curve<'a> = (&'a str, (u8, u8, u8), Vec<(f64, f64)>);

/// One chart of `series` against code; `markers` (missing codes) are drawn as rings.
fn render(
    path: &Path,
    title: &str,
    y_label: &str,
    x_range: (f64, f64),
    series: &[Curve],
    markers: &[(f64, f64)],
) -> Result<String> {
    let e = |x| draw_error(path, x);
    let ink = rgb(palette::INK);
    let (y0, y1) = y_range(series.iter().flat_map(|s| s.2.iter().map(|p| p.1)), 0.5);
    let xt = nice_ticks(x_range.0, x_range.1, 10);
    let yt = nice_ticks(y0, y1, 6);
    // Codes are integers: a step under 1 would label codes that do not exist.
    let x_dec = 0;
    let y_dec = yt.decimals;
    let columns = (SIZE.0 - FRAME_INSET_PX) as usize;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&rgb(palette::BACKGROUND)).map_err(e)?;
        let (plot, legend) = root.split_vertically(SIZE.1 - 30);
        let mut chart = ChartBuilder::on(&plot)
            .caption(title, (FONT, 15).into_font().color(&ink))
            .margin_top(6)
            .margin_left(10)
            .margin_right(18)
            .x_label_area_size(40)
            .y_label_area_size(62)
            .build_cartesian_2d(
                TickAxis::new(x_range.0, x_range.1, xt.clone()),
                TickAxis::new(y0, y1, yt.clone()),
            )
            .map_err(e)?;
        {
            let xl = |v: &f64| tick_label(*v, x_dec);
            let yl = |v: &f64| trim_number(*v, y_dec);
            let mut m = chart.configure_mesh();
            m.x_desc("code")
                .y_desc(y_label)
                .x_label_formatter(&xl)
                .y_label_formatter(&yl);
            style_mesh(&mut m);
            m.draw().map_err(e)?;
        }
        chart
            .draw_series(LineSeries::new(
                [(x_range.0, 0.0), (x_range.1, 0.0)],
                ink.stroke_width(1),
            ))
            .map_err(e)?;
        for (_, colour, points) in series {
            chart
                .draw_series(LineSeries::new(
                    reduce(points, x_range, columns),
                    rgb(*colour).stroke_width(1),
                ))
                .map_err(e)?;
        }
        let spur = rgb(palette::SPUR);
        if !markers.is_empty() {
            chart
                .draw_series(
                    markers
                        .iter()
                        .map(|&c| Circle::new(c, 4, ShapeStyle::from(&spur).stroke_width(2))),
                )
                .map_err(e)?;
        }
        // The legend: one row under the frame, never over the curves.
        let text = TextStyle::from((FONT, 12).into_font())
            .color(&ink)
            .pos(Pos::new(HPos::Left, VPos::Center));
        let (mut x, y) = (72i32, 12i32);
        for (label, colour, _) in series {
            legend
                .draw(&PathElement::new(
                    vec![(x, y), (x + 20, y)],
                    rgb(*colour).stroke_width(2),
                ))
                .map_err(e)?;
            legend
                .draw(&Text::new(label.to_string(), (x + 26, y), text.clone()))
                .map_err(e)?;
            x += 26 + 7 * label.chars().count() as i32 + 18;
        }
        if !markers.is_empty() {
            legend
                .draw(&Circle::new(
                    (x + 8, y),
                    4,
                    ShapeStyle::from(&spur).stroke_width(2),
                ))
                .map_err(e)?;
            legend
                .draw(&Text::new(
                    format!("missing code ({})", markers.len()),
                    (x + 18, y),
                    text.clone(),
                ))
                .map_err(e)?;
        }
        root.present().map_err(e)?;
    }
    Ok(svg)
}

fn write(path: &Path, text: &str) -> Result<()> {
    crate::report::write_atomic(path, text.as_bytes())
}

/// The page: the figures on both bases, the sine and the sample advice, then both plots inline.
fn render_page(r: &Linearity, plots: &[(&str, String)]) -> String {
    let mut body = String::new();
    let missing = if r.missing_codes.is_empty() {
        "none".to_string()
    } else {
        let list: Vec<String> = r.missing_codes.iter().map(|c| c.to_string()).collect();
        format!("{} ({})", r.missing_codes.len(), list.join(", "))
    };
    let _ = writeln!(
        body,
        "<p class=\"note\">Sine-wave code-density test (IEEE Std 1241). Sine from the end codes: \
         amplitude {:.3} LSB, offset {:+.3} LSB, reaching {:.2} LSB below the first and {:.2} LSB above \
         the last transition level. Missing codes: {}.</p>",
        r.sine.amplitude_lsb,
        r.sine.offset_lsb,
        r.sine.overdrive_low_lsb,
        r.sine.overdrive_high_lsb,
        escape(&missing)
    );
    body.push_str(
        "<div class=\"wide\">\n<table id=\"linearity\">\n<thead><tr><th class=\"t\">figure</th>\
         <th>terminal (end-point)<span class=\"u\">LSB at code</span></th>\
         <th>best fit<span class=\"u\">LSB at code</span></th></tr></thead>\n<tbody>\n",
    );
    type Cell = fn(&Extremes) -> String;
    let rows: [(&str, Cell); 7] = [
        ("code width", |x| format!("{:.5}", x.code_width_lsb)),
        ("DNL max", |x| {
            format!("{:+.3} at {}", x.dnl_max.value_lsb, x.dnl_max.code)
        }),
        ("DNL min", |x| {
            format!("{:+.3} at {}", x.dnl_min.value_lsb, x.dnl_min.code)
        }),
        ("worst DNL", |x| {
            format!("{:+.3} at {}", x.dnl_worst.value_lsb, x.dnl_worst.code)
        }),
        ("INL max", |x| {
            format!("{:+.3} at {}", x.inl_max.value_lsb, x.inl_max.code)
        }),
        ("INL min", |x| {
            format!("{:+.3} at {}", x.inl_min.value_lsb, x.inl_min.code)
        }),
        ("worst INL", |x| {
            format!("{:+.3} at {}", x.inl_worst.value_lsb, x.inl_worst.code)
        }),
    ];
    for (label, f) in rows {
        let _ = writeln!(
            body,
            "<tr><td class=\"t\">{label}</td><td>{}</td><td>{}</td></tr>",
            f(&r.terminal),
            f(&r.best_fit)
        );
    }
    body.push_str("</tbody>\n</table>\n</div>\n");
    let a = &r.advice;
    let _ = writeln!(
        body,
        "<p class=\"note\">Samples: {} needed for a DNL uncertainty of ±{} LSB at confidence {}; {} given, \
         {} (they reach ±{:.3} LSB).{}</p>",
        a.required_samples,
        a.dnl_uncertainty_lsb,
        a.confidence,
        a.samples,
        if a.sufficient { "enough" } else { "<strong>not enough</strong>" },
        a.achieved_dnl_uncertainty_lsb,
        r.phases.map_or(String::new(), |p| format!(
            " Sampling phases: {} distinct, {} needed: {}.",
            p.distinct_phases,
            p.required_phases,
            if p.sufficient { "enough" } else { "<strong>not enough</strong>" }
        ))
    );
    body.push_str("<div class=\"plots\">\n");
    for (file, svg) in plots {
        let _ = writeln!(
            body,
            "<figure>{}<figcaption>Terminal-based and best-fit curves against code; the line at 0. \
             <a href=\"{file}\">{file}</a></figcaption></figure>",
            inline_svg(file, svg)
        );
    }
    body.push_str("</div>\n");
    let _ = writeln!(
        body,
        "<p class=\"files\">Records: {}</p>",
        escape(&r.sources.join(", "))
    );
    page(
        &format!("Linearity, {} bits", r.bits),
        &format!(
            "{} record{} · {} samples",
            r.sources.len(),
            if r.sources.len() == 1 { "" } else { "s" },
            r.samples
        ),
        &body,
    )
}

/// Writes `dnl.svg` (terminal and best-fit DNL against code, missing codes marked), `inl.svg`
/// (terminal and best-fit INL against code) and `index.html` (the figures and both plots) into
/// `dir`, creating it when needed. Returns the paths, the page last.
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
            ("terminal", palette::TRACE, pick(|c| c.dnl_terminal_lsb)),
            ("best fit", palette::HARMONIC, pick(|c| c.dnl_best_fit_lsb)),
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
            ("terminal", palette::TRACE, pick(|c| c.inl_terminal_lsb)),
            ("best fit", palette::HARMONIC, pick(|c| c.inl_best_fit_lsb)),
        ],
        &[],
    )?;
    write(&inl_path, &inl)?;
    let page_path = dir.join("index.html");
    write(
        &page_path,
        &render_page(result, &[(PLOT_FILES[0], dnl), (PLOT_FILES[1], inl)]),
    )?;
    Ok(vec![dnl_path, inl_path, page_path])
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Every pixel column keeps its lowest and highest point, so a one-code spike survives the
    /// reduction (common practice, no source).
    #[test]
    fn reduction_keeps_each_columns_extremes() {
        let mut pts: Vec<(f64, f64)> = (0..65536).map(|k| (k as f64, 0.01)).collect();
        pts[40_000].1 = 0.9;
        pts[12_345].1 = -1.0;
        let r = reduce(&pts, (-0.5, 65535.5), 860);
        assert!(r.len() <= 2 * 860);
        assert!(r.contains(&(40_000.0, 0.9)) && r.contains(&(12_345.0, -1.0)));
        assert!(r.windows(2).all(|w| w[0].0 <= w[1].0), "in code order");
        let short: Vec<(f64, f64)> = pts[..100].to_vec();
        assert_eq!(reduce(&short, (-0.5, 99.5), 860), short);
    }
}

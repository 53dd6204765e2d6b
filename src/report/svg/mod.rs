//! SVG plots of one record (spectrum, sine-fit residual, code histogram), drawn with plotters' SVG
//! backend. Shared here: the plot size options, our colour scheme, tick placement and the pixel-column
//! reduction that keeps long records small without hiding a spur.
//!
//! Every plot is a pure function of the result record and its traces: pixel coordinates are integers
//! (plotters rounds them) and every number printed is formatted with fixed decimals, so the same inputs
//! give byte-identical SVG.

pub mod control;
pub mod distribution;
pub mod histogram;
pub mod marked;
#[cfg(test)]
pub(crate) mod plot_tests;
pub mod residual;
pub mod spectrum;
pub mod sweep;

pub use control::{control_chart_svg, ChartPoint};
pub use distribution::{distribution_svg, Band, LimitLines};
pub use histogram::histogram_svg;
pub use residual::residual_svg;
pub use spectrum::spectrum_svg;

use crate::error::{Error, ErrorKind, Location, Result};
use plotters::style::RGBColor;

/// Size and axis options of the plots.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct PlotOptions {
    /// Frequency axis of the spectrum on a log scale (from the first bin to fs/2) instead of linear
    /// (0 to fs/2).
    pub log_frequency: bool,
    /// Width of each plot, pixels (at least 480).
    pub width_px: u32,
    /// Height of each plot, pixels (at least 320).
    pub height_px: u32,
}

impl Default for PlotOptions {
    /// Linear frequency axis, 960 × 540 pixels.
    fn default() -> Self {
        PlotOptions {
            log_frequency: false,
            width_px: 960,
            height_px: 540,
        }
    }
}

impl PlotOptions {
    /// The size actually drawn: the requested one, but never smaller than the layout needs.
    pub fn size(&self) -> (u32, u32) {
        (
            self.width_px.clamp(480, 8000),
            self.height_px.clamp(320, 8000),
        )
    }
}

/// The colour scheme of our plots, as (red, green, blue). [`hex`] gives the form written into the SVG.
pub mod palette {
    /// Page behind the plot.
    pub const BACKGROUND: (u8, u8, u8) = (0xFC, 0xFB, 0xF8);
    /// Axis lines, tick labels and titles.
    pub const INK: (u8, u8, u8) = (0x3A, 0x3F, 0x47);
    /// Major grid lines.
    pub const GRID: (u8, u8, u8) = (0xDC, 0xD8, 0xCF);
    /// Minor grid lines.
    pub const GRID_MINOR: (u8, u8, u8) = (0xEE, 0xEB, 0xE4);
    /// The main trace: spectrum peaks, histogram counts, residual points.
    pub const TRACE: (u8, u8, u8) = (0x1D, 0x6A, 0x72);
    /// The band between each pixel column's lowest and highest value.
    pub const BAND: (u8, u8, u8) = (0xA9, 0xD2, 0xD5);
    /// The fundamental's marker.
    pub const FUNDAMENTAL: (u8, u8, u8) = (0x23, 0x39, 0x5B);
    /// Harmonic markers, and the ideal sine-wave density of the histogram.
    pub const HARMONIC: (u8, u8, u8) = (0xC8, 0x64, 0x2A);
    /// The worst spur's marker, and the mean residual per phase.
    pub const SPUR: (u8, u8, u8) = (0xA4, 0x24, 0x3B);
    /// Second-order lines: two-tone IM2 products, interleaving offset spurs.
    pub const ORDER_2: (u8, u8, u8) = (0x6A, 0x4C, 0x93);
    /// Third-order two-tone products.
    pub const ORDER_3: (u8, u8, u8) = (0xA4, 0x24, 0x3B);
    /// The average noise floor line.
    pub const FLOOR: (u8, u8, u8) = (0x6B, 0x7A, 0x3A);
    /// Background of the box of figures.
    pub const PANEL: (u8, u8, u8) = (0xF3, 0xEF, 0xE6);
    /// Border of the box of figures.
    pub const PANEL_EDGE: (u8, u8, u8) = (0xC9, 0xC2, 0xB2);
}

/// The colour as plotters writes it into SVG attributes: `#RRGGBB`, upper-case hex (what the tests
/// look for in the plots).
#[cfg(test)]
pub(crate) fn hex(c: (u8, u8, u8)) -> String {
    format!("#{:02X}{:02X}{:02X}", c.0, c.1, c.2)
}

pub(crate) fn rgb(c: (u8, u8, u8)) -> RGBColor {
    RGBColor(c.0, c.1, c.2)
}

/// Font family of every text in the plots (no font files: the browser picks its sans-serif).
pub(crate) const FONT: &str = "sans-serif";

/// Width of the box of figures at the right of each plot, pixels.
pub(crate) const PANEL_PX: u32 = 230;

/// Maps a drawing failure to our error type. With an in-memory SVG target this does not happen in
/// practice, but the backend's API can fail, so it is reported, not unwrapped.
pub(crate) fn draw_err<E: std::fmt::Display>(what: &str) -> impl Fn(E) -> Error + '_ {
    move |e| {
        Error::new(
            ErrorKind::Output,
            "",
            Location::Whole,
            format!("the {what} plot to draw"),
            e.to_string(),
        )
    }
}

/// An error for a plot whose data is absent or inconsistent.
pub(crate) fn no_data(what: &str, found: impl Into<String>) -> Error {
    Error::new(
        ErrorKind::Empty,
        "",
        Location::Whole,
        format!("the data of the {what} plot"),
        found,
    )
}

/// Tick positions of one axis: labelled major ticks and the minor grid between them.
#[derive(Debug, Clone, PartialEq, Default)]
pub(crate) struct Ticks {
    pub major: Vec<f64>,
    pub minor: Vec<f64>,
    /// Decimals that print every major tick exactly.
    pub decimals: usize,
}

/// A "nice" step (1, 2, 2.5 or 5 × 10^k) giving about `target` major ticks over `lo..hi`, with minor
/// ticks at a fifth (a half for 2.5) of the step. Ticks are computed as integer multiples of the step,
/// never by accumulation, so they are exact and repeatable.
pub(crate) fn nice_ticks(lo: f64, hi: f64, target: usize) -> Ticks {
    let span = hi - lo;
    if !(span > 0.0 && span.is_finite()) {
        return Ticks {
            major: vec![lo],
            minor: Vec::new(),
            decimals: 0,
        };
    }
    let raw = span / target.max(2) as f64;
    let exp = raw.log10().floor();
    let base = 10f64.powf(exp);
    let (mant, minor_div) = [(1.0, 5.0), (2.0, 4.0), (2.5, 5.0), (5.0, 5.0), (10.0, 5.0)]
        .into_iter()
        .find(|(m, _)| m * base >= raw * 0.999_999)
        .unwrap_or((10.0, 5.0));
    let step = mant * base;
    let mut decimals = (-exp).max(0.0) as usize;
    if mant == 2.5 && exp < 1.0 {
        decimals += 1;
    }
    let multiples = |step: f64| -> Vec<f64> {
        let first = (lo / step - 1e-9).ceil() as i64;
        let last = (hi / step + 1e-9).floor() as i64;
        (first..=last).map(|k| k as f64 * step).collect()
    };
    Ticks {
        major: multiples(step),
        minor: multiples(step / minor_div),
        decimals,
    }
}

/// A linear plotters axis over `lo..hi` whose grid lines are exactly our ticks: `major` (labelled,
/// bold grid) and `minor` (light grid). Labels come from the chart's label formatter.
#[derive(Debug, Clone)]
pub(crate) struct TickAxis {
    pub lo: f64,
    pub hi: f64,
    pub ticks: Ticks,
}

impl TickAxis {
    pub fn new(lo: f64, hi: f64, ticks: Ticks) -> Self {
        TickAxis { lo, hi, ticks }
    }
}

impl plotters::coord::ranged1d::Ranged for TickAxis {
    type FormatOption = plotters::coord::ranged1d::DefaultFormatting;
    type ValueType = f64;

    fn map(&self, value: &f64, limit: (i32, i32)) -> i32 {
        let span = self.hi - self.lo;
        if span.is_nan() || span <= 0.0 || !value.is_finite() {
            return limit.0;
        }
        let frac = (value - self.lo) / span;
        (limit.0 as f64 + frac * (limit.1 - limit.0) as f64).round() as i32
    }

    fn key_points<H: plotters::coord::ranged1d::KeyPointHint>(&self, hint: H) -> Vec<f64> {
        if hint.weight().allow_light_points() {
            self.ticks.minor.clone()
        } else {
            self.ticks.major.clone()
        }
    }

    fn range(&self) -> std::ops::Range<f64> {
        self.lo..self.hi
    }
}

/// Ticks every `step` over `lo..hi` with minor ticks every `step / minor_div` (integer multiples).
pub(crate) fn fixed_ticks(lo: f64, hi: f64, step: f64, minor_div: f64) -> Ticks {
    let multiples = |step: f64| -> Vec<f64> {
        let first = (lo / step - 1e-9).ceil() as i64;
        let last = (hi / step + 1e-9).floor() as i64;
        (first..=last).map(|k| k as f64 * step).collect()
    };
    Ticks {
        major: multiples(step),
        minor: multiples(step / minor_div),
        decimals: 0,
    }
}

/// Formats a value with fixed decimals, writing 0 (not −0) for zero.
pub(crate) fn tick_label(v: f64, decimals: usize) -> String {
    let s = format!("{v:.decimals$}");
    if s.trim_start_matches('-')
        .chars()
        .all(|c| c == '0' || c == '.')
    {
        s.trim_start_matches('-').to_string()
    } else {
        s
    }
}

/// The SI unit an axis of hertz is labelled in, chosen by its largest value: (hertz per unit, name),
/// e.g. (1e6, "MHz") for an axis reaching 50 MHz. Tick labels are then plain numbers and the axis
/// title carries the unit.
pub(crate) fn frequency_unit(hi_hz: f64) -> (f64, &'static str) {
    let a = hi_hz.abs();
    if a >= 1e9 {
        (1e9, "GHz")
    } else if a >= 1e6 {
        (1e6, "MHz")
    } else if a >= 1e3 {
        (1e3, "kHz")
    } else {
        (1.0, "Hz")
    }
}

/// A number written with at most `max_decimals` decimals, trailing zeros (and a bare point) removed,
/// never `-0`: "10", "12.5", "0.2".
pub(crate) fn trim_number(v: f64, max_decimals: usize) -> String {
    let s = tick_label(v, max_decimals);
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// Applies our grid, axis and label styles to a chart's mesh.
pub(crate) fn style_mesh<X, Y, DB>(m: &mut plotters::chart::MeshStyle<'_, '_, X, Y, DB>)
where
    X: plotters::coord::ranged1d::Ranged,
    Y: plotters::coord::ranged1d::Ranged,
    DB: plotters::prelude::DrawingBackend,
{
    use plotters::prelude::*;
    let ink = rgb(palette::INK);
    m.bold_line_style(rgb(palette::GRID).stroke_width(1))
        .light_line_style(rgb(palette::GRID_MINOR).stroke_width(1))
        .axis_style(ink.stroke_width(1))
        .label_style((FONT, 12).into_font().color(&ink))
        .axis_desc_style((FONT, 13).into_font().color(&ink));
}

/// Lines of the box of figures: (label, value) drawn as a two-column table.
pub(crate) type PanelLines = Vec<(String, String)>;

/// Draws the box of figures on `area` (the strip at the right of a plot).
pub(crate) fn draw_panel<DB: plotters::prelude::DrawingBackend>(
    area: &plotters::prelude::DrawingArea<DB, plotters::coord::Shift>,
    heading: &str,
    lines: &PanelLines,
) -> Result<()> {
    use plotters::prelude::*;
    use plotters::style::text_anchor::{HPos, Pos, VPos};
    let err = draw_err::<DrawingAreaErrorKind<DB::ErrorType>>("figures box");
    let (w, h) = area.dim_in_pixel();
    let top = 44i32;
    let row = 19i32;
    let bottom = (top + 34 + row * lines.len() as i32).min(h as i32 - 8);
    area.draw(&Rectangle::new(
        [(8, top), (w as i32 - 10, bottom)],
        ShapeStyle::from(&rgb(palette::PANEL)).filled(),
    ))
    .map_err(&err)?;
    area.draw(&Rectangle::new(
        [(8, top), (w as i32 - 10, bottom)],
        ShapeStyle::from(&rgb(palette::PANEL_EDGE)).stroke_width(1),
    ))
    .map_err(&err)?;
    let ink = rgb(palette::INK);
    let head = TextStyle::from((FONT, 15).into_font().style(FontStyle::Bold))
        .color(&ink)
        .pos(Pos::new(HPos::Left, VPos::Top));
    area.draw(&Text::new(heading.to_string(), (18, top + 8), head))
        .map_err(&err)?;
    let label = TextStyle::from((FONT, 13).into_font())
        .color(&ink)
        .pos(Pos::new(HPos::Left, VPos::Top));
    let value = TextStyle::from((FONT, 13).into_font())
        .color(&ink)
        .pos(Pos::new(HPos::Right, VPos::Top));
    for (i, (k, v)) in lines.iter().enumerate() {
        let y = top + 32 + row * i as i32;
        if y + row > bottom + 2 {
            break;
        }
        area.draw(&Text::new(k.clone(), (18, y), label.clone()))
            .map_err(&err)?;
        area.draw(&Text::new(v.clone(), (w as i32 - 20, y), value.clone()))
            .map_err(&err)?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn frequency_units_and_trimmed_numbers() {
        assert_eq!(frequency_unit(50e6), (1e6, "MHz"));
        assert_eq!(frequency_unit(999.0), (1.0, "Hz"));
        assert_eq!(frequency_unit(2.5e9), (1e9, "GHz"));
        assert_eq!(trim_number(12.5, 6), "12.5");
        assert_eq!(trim_number(10.0, 6), "10");
        assert_eq!(trim_number(-0.0, 3), "0");
        assert_eq!(trim_number(0.2, 6), "0.2");
    }

    #[test]
    fn ticks_are_exact_multiples_of_a_nice_step() {
        let t = nice_ticks(0.0, 50e6, 8);
        assert_eq!(t.major, (0..=5).map(|k| k as f64 * 1e7).collect::<Vec<_>>());
        assert_eq!(t.minor.len(), 26);
        let t = nice_ticks(-1.3, 1.3, 6);
        assert_eq!(t.major, vec![-1.0, -0.5, 0.0, 0.5, 1.0]);
        assert_eq!(t.decimals, 1);
        let t = nice_ticks(0.0, 0.9, 4);
        assert_eq!((t.major[1], t.decimals), (0.25, 2));
        assert_eq!(tick_label(-0.0, 1), "0.0");
        assert_eq!(tick_label(-20.0, 0), "-20");
        let f = fixed_ticks(-130.0, 10.0, 20.0, 2.0);
        assert_eq!(f.major.first(), Some(&-120.0));
        assert_eq!(f.major.last(), Some(&0.0));
    }
}

//! The figure table: every field the result record ([`crate::analysis::Analysis`]) reports, keyed as
//! the JSON nests it and the CSV flattens it ([`flatten`]), with the short label a practitioner reads,
//! its unit, which direction is better, whether it is a headline figure, and what kind of value it is.
//! Every list of figures is derived from here: the CSV columns ([`keys`]), the limit tables' metrics,
//! units and directions, the comparison's metrics, the pages' tables and the plots' panels. A figure's
//! key, label, unit and direction are written here and nowhere else; a test checks the table against
//! the record in both directions (tests/figures.rs).
//!
//! # Adding a figure
//! Add the field to the record, then one row here in the record's field order (the CSV's column order).
//! A field of each harmonic is one row whose key and label hold the placeholder `{n}`; it is expanded
//! for orders 2..=H ([`columns`]), order by order, with the harmonic rows in table order.

use std::collections::HashMap;
use std::fmt;

use serde::{Serialize, Serializer};
use serde_json::Value;

use crate::analysis::Analysis;

/// The unit of a figure, shown by its symbol.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Unit {
    /// Decibels (a ratio of two powers).
    Db,
    /// Decibels relative to the carrier (the fundamental).
    Dbc,
    /// Decibels relative to a full-scale sine.
    Dbfs,
    /// Decibels relative to a full-scale sine, per hertz of bandwidth.
    DbfsPerHz,
    /// Bits.
    Bits,
    /// Hertz.
    Hz,
    /// Output codes (1 code = 1 LSB).
    Codes,
    /// Radians.
    Rad,
    /// Cycles of the input in the record.
    Cycles,
    /// FFT bins.
    Bins,
    /// Samples of the record, as a measured (possibly fractional) number.
    Samples,
    /// Volts peak-to-peak.
    Vpp,
    /// A count of things (samples, records, iterations).
    Count,
    /// No unit: text, flags, orders.
    None,
}

impl Unit {
    /// The symbol written after a value ("dB", "dBFS/Hz", ...); empty for [`Unit::Count`] and
    /// [`Unit::None`].
    pub const fn symbol(self) -> &'static str {
        match self {
            Unit::Db => "dB",
            Unit::Dbc => "dBc",
            Unit::Dbfs => "dBFS",
            Unit::DbfsPerHz => "dBFS/Hz",
            Unit::Bits => "bits",
            Unit::Hz => "Hz",
            Unit::Codes => "codes",
            Unit::Rad => "rad",
            Unit::Cycles => "cycles",
            Unit::Bins => "bins",
            Unit::Samples => "samples",
            Unit::Vpp => "Vpp",
            Unit::Count | Unit::None => "",
        }
    }

    /// Whether a value can be stated in it, as a limit is: every unit but [`Unit::Count`] and
    /// [`Unit::None`].
    pub const fn is_measure(self) -> bool {
        !matches!(self, Unit::Count | Unit::None)
    }
}

impl fmt::Display for Unit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.symbol())
    }
}

impl Serialize for Unit {
    fn serialize<S: Serializer>(&self, s: S) -> std::result::Result<S::Ok, S::Error> {
        s.serialize_str(self.symbol())
    }
}

/// Which direction of a figure is better.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Better {
    /// Higher is better (SNR, SINAD, SFDR, ENOB): a limit on it is a low limit.
    Higher,
    /// Lower is better (THD, harmonic and spur levels, noise floor, fit residual): a limit on it is a
    /// high limit.
    Lower,
    /// Neither: a setting or a measurement condition (frequency, amplitude, offset, leakage diagnosis);
    /// both directions are bad.
    Neither,
}

impl Better {
    /// "higher", "lower" or "neither".
    pub const fn as_str(self) -> &'static str {
        match self {
            Better::Higher => "higher",
            Better::Lower => "lower",
            Better::Neither => "neither",
        }
    }
}

/// The kind of value a figure holds, so that a CSV reader or a database can type the cell.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Kind {
    /// A real number (empty when absent).
    Number,
    /// A whole number.
    Integer,
    /// `true` or `false`.
    Flag,
    /// Text (a list is joined with " | ").
    Text,
}

/// One row of the table: a field of the result record.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Figure {
    /// Its key as the CSV flattens the JSON (`spectrum.snr_db`); `{n}` stands for the harmonic order
    /// in a field of each harmonic (`spectrum.harmonics.h{n}.dbc`).
    pub key: &'static str,
    /// The short label a practitioner reads ("SNR", "sine-fit ENOB", "H{n}").
    pub label: &'static str,
    /// Its unit.
    pub unit: Unit,
    /// Which direction is better.
    pub better: Better,
    /// Its place among the headline figures (1 first), or `None` when it is not one.
    pub headline: Option<u8>,
    /// What kind of value it is.
    pub kind: Kind,
    /// Whether the figure carries a one-sigma standard uncertainty of its own (see
    /// [`Figure::uncertainty_key`]).
    pub uncertainty: bool,
}

/// The placeholder for the harmonic order in the key and label of a field of each harmonic.
pub const ORDER: &str = "{n}";

const fn row(key: &'static str, label: &'static str, unit: Unit, kind: Kind) -> Figure {
    Figure {
        key,
        label,
        unit,
        better: Better::Neither,
        headline: None,
        kind,
        uncertainty: false,
    }
}

const fn number(key: &'static str, label: &'static str, unit: Unit) -> Figure {
    row(key, label, unit, Kind::Number)
}

const fn integer(key: &'static str, label: &'static str, unit: Unit) -> Figure {
    row(key, label, unit, Kind::Integer)
}

const fn flag(key: &'static str, label: &'static str) -> Figure {
    row(key, label, Unit::None, Kind::Flag)
}

const fn text(key: &'static str, label: &'static str) -> Figure {
    row(key, label, Unit::None, Kind::Text)
}

impl Figure {
    const fn higher(self) -> Figure {
        Figure {
            better: Better::Higher,
            ..self
        }
    }

    const fn lower(self) -> Figure {
        Figure {
            better: Better::Lower,
            ..self
        }
    }

    const fn headline(self, place: u8) -> Figure {
        Figure {
            headline: Some(place),
            ..self
        }
    }

    const fn uncertain(self) -> Figure {
        Figure {
            uncertainty: true,
            ..self
        }
    }

    /// Whether this is a field of each harmonic (its key holds [`ORDER`]).
    pub fn is_harmonic(&self) -> bool {
        self.key.contains(ORDER)
    }

    /// Whether limits can be set on it and it can be compared: a number with a unit.
    pub fn is_metric(&self) -> bool {
        matches!(self.kind, Kind::Number | Kind::Integer) && self.unit.is_measure()
    }

    /// Its key for harmonic `order` (the key itself for a figure that is not per harmonic).
    pub fn key_for(&self, order: u32) -> String {
        self.key.replace(ORDER, &order.to_string())
    }

    /// Its label for harmonic `order` (the label itself for a figure that is not per harmonic).
    pub fn label_for(&self, order: u32) -> String {
        self.label.replace(ORDER, &order.to_string())
    }

    /// The key of its uncertainty, `uncertainty` inserted after the part it belongs to
    /// (`spectrum.snr_db` → `spectrum.uncertainty.snr_db`), for harmonic `order` where it is per
    /// harmonic; `None` when it carries none.
    pub fn uncertainty_key(&self, order: u32) -> Option<String> {
        if !self.uncertainty {
            return None;
        }
        let key = self.key_for(order);
        let (part, rest) = key.split_once('.')?;
        Some(format!("{part}.uncertainty.{rest}"))
    }

    /// The harmonic order `key` names if it is this figure's key for some order ≥ 2 (written without
    /// leading zeros), else `None`; a figure that is not per harmonic has no order.
    fn order_in(&self, key: &str) -> Option<u32> {
        let (head, tail) = self.key.split_once(ORDER)?;
        let digits = key.strip_prefix(head)?.strip_suffix(tail)?;
        let order: u32 = digits.parse().ok()?;
        (order >= 2 && order.to_string() == digits).then_some(order)
    }
}

// The rows, in the record's field order. `higher`/`lower`: the better direction (common practice,
// no source: more SNR, SINAD, SFDR and ENOB is better, less distortion, spurs, noise and fit residual
// is better; everything else, leakage diagnosis included, describes the measurement).

/// Where the record came from.
pub static SOURCE: Figure = text("source", "source");
/// Samples per record.
pub static SAMPLES: Figure = integer("samples", "samples", Unit::Count);
/// Sample rate.
pub static SAMPLE_RATE: Figure = number("sample_rate_hz", "fs", Unit::Hz);
/// Resolution N.
pub static BITS: Figure = integer("bits", "resolution", Unit::Bits);
/// Full-scale range.
pub static FULL_SCALE: Figure = number("full_scale_vpp", "full scale", Unit::Vpp);
/// The sine fit used.
pub static FIT_METHOD: Figure = text("fit.method", "sine fit");
/// Fitted input frequency.
pub static FIN: Figure = number("fit.frequency_hz", "fin", Unit::Hz).uncertain();
/// Fitted amplitude, codes.
pub static FIT_AMPLITUDE: Figure =
    number("fit.amplitude_codes", "amplitude", Unit::Codes).uncertain();
/// Fitted amplitude, dBFS.
pub static FIT_AMPLITUDE_DBFS: Figure =
    number("fit.amplitude_dbfs", "amplitude", Unit::Dbfs).uncertain();
/// Fitted phase at sample 0.
pub static FIT_PHASE: Figure = number("fit.phase_rad", "phase", Unit::Rad).uncertain();
/// Fitted offset.
pub static FIT_OFFSET: Figure = number("fit.offset_codes", "offset", Unit::Codes).uncertain();
/// Rms of the fit residual.
pub static FIT_RESIDUAL: Figure = number("fit.residual_rms_codes", "residual rms", Unit::Codes)
    .lower()
    .uncertain();
/// SINAD from the fit.
pub static FIT_SINAD: Figure = number("fit.sinad_db", "sine-fit SINAD", Unit::Db)
    .higher()
    .uncertain();
/// ENOB from the fit (IEEE 1241 form).
pub static FIT_ENOB: Figure = number("fit.enob_bits", "sine-fit ENOB", Unit::Bits)
    .higher()
    .headline(6)
    .uncertain();
/// Fitted cycles in the record.
pub static FIT_CYCLES: Figure = number("fit.cycles", "cycles", Unit::Cycles);
/// One-sigma uncertainty of the fitted cycles.
pub static FIT_CYCLES_STD: Figure = number("fit.cycles_std", "cycles σ", Unit::Cycles);
/// Gauss-Newton iterations of the fit.
pub static FIT_ITERATIONS: Figure = integer("fit.iterations", "iterations", Unit::Count);
/// Whether the fit met its stop rule.
pub static FIT_CONVERGED: Figure = flag("fit.converged", "converged");
/// The window.
pub static WINDOW: Figure = text("spectrum.window", "window");
/// Why that window.
pub static WINDOW_REASON: Figure = text("spectrum.window_reason", "window chosen because");
/// Whether the record was judged coherent.
pub static COHERENT: Figure = flag("spectrum.coherent", "coherent");
/// The coherence decision's verdict.
pub static COHERENCE_COHERENT: Figure = flag("spectrum.coherence.coherent", "coherence decision");
/// Cycles the coherence decision used.
pub static COHERENCE_CYCLES: Figure = number(
    "spectrum.coherence.cycles",
    "coherence cycles",
    Unit::Cycles,
);
/// Distance of the cycles from an integer.
pub static COHERENCE_OFFSET: Figure = number(
    "spectrum.coherence.offset_cycles",
    "cycles off an integer",
    Unit::Cycles,
);
/// The coherence tolerance.
pub static COHERENCE_TOLERANCE: Figure = number(
    "spectrum.coherence.tolerance_cycles",
    "coherence tolerance",
    Unit::Cycles,
);
/// How coherence was decided.
pub static COHERENCE_DECIDED_BY: Figure =
    text("spectrum.coherence.decided_by", "coherence decided by");
/// Records whose spectra were averaged.
pub static RECORDS_AVERAGED: Figure =
    integer("spectrum.records_averaged", "records averaged", Unit::Count);
/// Bin width fs/N.
pub static BIN_WIDTH: Figure = number("spectrum.bin_width_hz", "bin width", Unit::Hz);
/// Half-width of each tone's bins.
pub static TONE_HALFWIDTH: Figure = integer(
    "spectrum.tone_halfwidth_bins",
    "tone half-width",
    Unit::Bins,
);
/// Fundamental frequency (from the fit).
pub static FUNDAMENTAL_HZ: Figure =
    number("spectrum.fundamental_hz", "fundamental frequency", Unit::Hz);
/// Fundamental level.
pub static FUNDAMENTAL: Figure =
    number("spectrum.fundamental_dbfs", "fundamental", Unit::Dbfs).uncertain();
/// Signal to noise ratio.
pub static SNR: Figure = number("spectrum.snr_db", "SNR", Unit::Db)
    .higher()
    .headline(1)
    .uncertain();
/// Signal to noise and distortion.
pub static SINAD: Figure = number("spectrum.sinad_db", "SINAD", Unit::Db)
    .higher()
    .headline(2)
    .uncertain();
/// Total harmonic distortion.
pub static THD: Figure = number("spectrum.thd_dbc", "THD", Unit::Dbc)
    .lower()
    .headline(3)
    .uncertain();
/// Spurious-free dynamic range against the fundamental.
pub static SFDR: Figure = number("spectrum.sfdr_dbc", "SFDR", Unit::Dbc)
    .higher()
    .headline(4)
    .uncertain();
/// Spurious-free dynamic range against full scale.
pub static SFDR_DBFS: Figure = number("spectrum.sfdr_dbfs", "SFDR", Unit::Dbfs)
    .higher()
    .uncertain();
/// Spectral ENOB.
pub static ENOB: Figure = number("spectrum.enob_bits", "spectral ENOB", Unit::Bits)
    .higher()
    .headline(5)
    .uncertain();
/// Full-scale-referred ENOB.
pub static ENOB_FULL_SCALE: Figure = number(
    "spectrum.enob_full_scale_bits",
    "full-scale ENOB",
    Unit::Bits,
)
.higher()
.uncertain();
/// Average noise floor per bin.
pub static NOISE_FLOOR: Figure = number("spectrum.noise_floor_dbfs", "noise floor", Unit::Dbfs)
    .lower()
    .headline(7)
    .uncertain();
/// Noise spectral density.
pub static NSD: Figure = number("spectrum.nsd_dbfs_per_hz", "NSD", Unit::DbfsPerHz)
    .lower()
    .uncertain();
/// Frequency of the worst spur.
pub static WORST_SPUR_HZ: Figure = number(
    "spectrum.worst_spur.frequency_hz",
    "worst spur frequency",
    Unit::Hz,
);
/// Level of the worst spur against the fundamental.
pub static WORST_SPUR: Figure = number("spectrum.worst_spur.dbc", "worst spur", Unit::Dbc)
    .lower()
    .uncertain();
/// Level of the worst spur against full scale.
pub static WORST_SPUR_DBFS: Figure = number("spectrum.worst_spur.dbfs", "worst spur", Unit::Dbfs)
    .lower()
    .uncertain();
/// The harmonic order of the worst spur, when it is one.
pub static WORST_SPUR_HARMONIC: Figure = integer(
    "spectrum.worst_spur.harmonic",
    "worst spur harmonic",
    Unit::None,
);
/// A harmonic's order.
pub static HARMONIC_ORDER: Figure =
    integer("spectrum.harmonics.h{n}.order", "H{n} order", Unit::None);
/// A harmonic's folded frequency.
pub static HARMONIC_HZ: Figure = number(
    "spectrum.harmonics.h{n}.frequency_hz",
    "H{n} frequency",
    Unit::Hz,
);
/// A harmonic's level against the fundamental.
pub static HARMONIC: Figure = number("spectrum.harmonics.h{n}.dbc", "H{n}", Unit::Dbc)
    .lower()
    .uncertain();
/// A harmonic's level against full scale.
pub static HARMONIC_DBFS: Figure = number("spectrum.harmonics.h{n}.dbfs", "H{n}", Unit::Dbfs)
    .lower()
    .uncertain();
/// Whether a harmonic is masked.
pub static HARMONIC_MASKED: Figure = flag("spectrum.harmonics.h{n}.masked", "H{n} masked");
/// What masks a harmonic.
pub static HARMONIC_MASKED_BY: Figure = text("spectrum.harmonics.h{n}.masked_by", "H{n} masked by");
/// Whether a harmonic is at the noise floor.
pub static HARMONIC_AT_FLOOR: Figure = flag("spectrum.harmonics.h{n}.at_floor", "H{n} at floor");
/// Bins the noise mean came from.
pub static NOISE_BINS: Figure = integer("spectrum.noise_bins", "noise bins", Unit::Bins);
/// Tone offset from its centre bin used by the leakage diagnosis.
pub static LEAKAGE_OFFSET: Figure =
    number("spectrum.leakage.offset_bins", "tone offset", Unit::Bins);
/// Fundamental power leaked outside its bins.
pub static LEAKAGE_OUTSIDE: Figure = number(
    "spectrum.leakage.outside_tone_bins_dbc",
    "leakage outside the tone's bins",
    Unit::Dbc,
);
/// The largest leaked bin.
pub static LEAKAGE_WORST_BIN: Figure = number(
    "spectrum.leakage.worst_bin_dbc",
    "largest leaked bin",
    Unit::Dbc,
);
/// Scalloping loss of the peak bin.
pub static SCALLOPING_LOSS: Figure = number(
    "spectrum.leakage.scalloping_loss_db",
    "scalloping loss",
    Unit::Db,
);
/// Bound on the SNR bias from leakage.
pub static SNR_BIAS: Figure = number("spectrum.leakage.snr_bias_db", "SNR bias", Unit::Db);
/// Bound on the SFDR bias from leakage.
pub static SFDR_BIAS: Figure = number("spectrum.leakage.sfdr_bias_db", "SFDR bias", Unit::Db);
/// Whether the leakage is significant.
pub static LEAKAGE_SIGNIFICANT: Figure =
    flag("spectrum.leakage.significant", "leakage significant");
/// What would fix the leakage.
pub static LEAKAGE_ADVICE: Figure = text("spectrum.leakage.advice", "leakage advice");
/// Samples at the end codes.
pub static END_CODE_SAMPLES: Figure = integer(
    "clipping.end_code_samples",
    "samples at the end codes",
    Unit::Count,
);
/// Samples clipped (estimated from the sine fitted off the end codes).
pub static CLIPPED_SAMPLES: Figure = number("clipping.clipped_samples", "clipped", Unit::Samples)
    .lower()
    .uncertain();
/// What the user should know about the record.
pub static WARNINGS: Figure = text("warnings", "warnings");
/// The class of error of a failed record.
pub static ERROR_KIND: Figure = text("error.kind", "error kind");
/// The whole error message of a failed record.
pub static ERROR_MESSAGE: Figure = text("error.message", "error");

static TABLE: [&Figure; 65] = [
    &SOURCE,
    &SAMPLES,
    &SAMPLE_RATE,
    &BITS,
    &FULL_SCALE,
    &FIT_METHOD,
    &FIN,
    &FIT_AMPLITUDE,
    &FIT_AMPLITUDE_DBFS,
    &FIT_PHASE,
    &FIT_OFFSET,
    &FIT_RESIDUAL,
    &FIT_SINAD,
    &FIT_ENOB,
    &FIT_CYCLES,
    &FIT_CYCLES_STD,
    &FIT_ITERATIONS,
    &FIT_CONVERGED,
    &WINDOW,
    &WINDOW_REASON,
    &COHERENT,
    &COHERENCE_COHERENT,
    &COHERENCE_CYCLES,
    &COHERENCE_OFFSET,
    &COHERENCE_TOLERANCE,
    &COHERENCE_DECIDED_BY,
    &RECORDS_AVERAGED,
    &BIN_WIDTH,
    &TONE_HALFWIDTH,
    &FUNDAMENTAL_HZ,
    &FUNDAMENTAL,
    &SNR,
    &SINAD,
    &THD,
    &SFDR,
    &SFDR_DBFS,
    &ENOB,
    &ENOB_FULL_SCALE,
    &NOISE_FLOOR,
    &NSD,
    &WORST_SPUR_HZ,
    &WORST_SPUR,
    &WORST_SPUR_DBFS,
    &WORST_SPUR_HARMONIC,
    &HARMONIC_ORDER,
    &HARMONIC_HZ,
    &HARMONIC,
    &HARMONIC_DBFS,
    &HARMONIC_MASKED,
    &HARMONIC_MASKED_BY,
    &HARMONIC_AT_FLOOR,
    &NOISE_BINS,
    &LEAKAGE_OFFSET,
    &LEAKAGE_OUTSIDE,
    &LEAKAGE_WORST_BIN,
    &SCALLOPING_LOSS,
    &SNR_BIAS,
    &SFDR_BIAS,
    &LEAKAGE_SIGNIFICANT,
    &LEAKAGE_ADVICE,
    &END_CODE_SAMPLES,
    &CLIPPED_SAMPLES,
    &WARNINGS,
    &ERROR_KIND,
    &ERROR_MESSAGE,
];

/// Every row, in the record's field order.
pub fn table() -> &'static [&'static Figure] {
    &TABLE
}

/// A figure as one column: a row of the table, for one harmonic order where it is per harmonic.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Column {
    /// The row.
    pub figure: &'static Figure,
    /// The harmonic order, for a field of each harmonic; `None` otherwise, or for the row as a whole
    /// in a list of candidates ([`find`]).
    pub order: Option<u32>,
}

impl Column {
    /// The column's key (the row's key with its placeholder when no order is set).
    pub fn key(&self) -> String {
        match self.order {
            Some(n) => self.figure.key_for(n),
            None => self.figure.key.to_string(),
        }
    }

    /// The column's label.
    pub fn label(&self) -> String {
        match self.order {
            Some(n) => self.figure.label_for(n),
            None => self.figure.label.to_string(),
        }
    }

    /// The figure's unit.
    pub fn unit(&self) -> Unit {
        self.figure.unit
    }

    /// The figure's better direction.
    pub fn better(&self) -> Better {
        self.figure.better
    }
}

/// The rows `rows` as columns in table order, each run of harmonic rows expanded order by order.
fn expand(rows: &[&'static Figure], harmonics: u32) -> Vec<Column> {
    let mut out = Vec::new();
    let mut i = 0;
    while i < rows.len() {
        if !rows[i].is_harmonic() {
            out.push(Column {
                figure: rows[i],
                order: None,
            });
            i += 1;
            continue;
        }
        let run = rows[i..].iter().take_while(|f| f.is_harmonic()).count();
        for order in 2..=harmonics {
            for figure in &rows[i..i + run] {
                out.push(Column {
                    figure,
                    order: Some(order),
                });
            }
        }
        i += run;
    }
    out
}

/// The part of the record a key belongs to: its first dotted segment (`spectrum`, `fit`, `source`).
fn part_of(key: &str) -> &str {
    key.split_once('.').map_or(key, |(part, _)| part)
}

/// The columns of results analysed with harmonics 2..=`harmonics`, in the CSV's order: the rows in
/// table order, each run of harmonic rows expanded order by order.
pub fn columns(harmonics: u32) -> Vec<Column> {
    expand(&TABLE, harmonics)
}

/// The columns whose one-sigma uncertainty the record carries, in the order the record writes them:
/// the figures of one part (`fit`, `spectrum`) that carry an uncertainty, in table order, harmonics
/// expanded order by order (the `uncertainty` object is the last field of its part).
pub fn uncertain_columns(part: &str, harmonics: u32) -> Vec<Column> {
    let rows: Vec<&'static Figure> = TABLE
        .iter()
        .copied()
        .filter(|f| f.uncertainty && part_of(f.key) == part)
        .collect();
    expand(&rows, harmonics)
}

/// The keys of [`columns`] with each part's uncertainty keys ([`Figure::uncertainty_key`]) after the
/// last row of that part: the CSV's column names after any leading columns.
pub fn keys(harmonics: u32) -> Vec<String> {
    let cols = columns(harmonics);
    let mut out = Vec::with_capacity(cols.len() + 40);
    for (i, c) in cols.iter().enumerate() {
        out.push(c.key());
        let part = part_of(c.figure.key);
        let last_of_part = cols
            .get(i + 1)
            .is_none_or(|next| part_of(next.figure.key) != part);
        if last_of_part {
            out.extend(
                uncertain_columns(part, harmonics)
                    .iter()
                    .filter_map(|u| u.figure.uncertainty_key(u.order.unwrap_or(0))),
            );
        }
    }
    out
}

/// The figure whose one-sigma uncertainty the key names (`spectrum.uncertainty.snr_db` names
/// `spectrum.snr_db`), or `None`. An uncertainty is no metric of its own: [`get`] and [`find`] name
/// figures only.
pub fn uncertainty_of(key: &str) -> Option<Column> {
    let (part, rest) = key.split_once(".uncertainty.")?;
    get(&format!("{part}.{rest}")).filter(|c| c.figure.uncertainty)
}

/// The headline figures, in their order (SNR first).
pub fn headline() -> Vec<&'static Figure> {
    let mut h: Vec<&'static Figure> = TABLE
        .iter()
        .copied()
        .filter(|f| f.headline.is_some())
        .collect();
    h.sort_by_key(|f| f.headline);
    h
}

/// The column of exactly this key (a harmonic's key for any order ≥ 2), or `None`.
pub fn get(key: &str) -> Option<Column> {
    TABLE.iter().find_map(|&figure| {
        if figure.is_harmonic() {
            figure.order_in(key).map(|order| Column {
                figure,
                order: Some(order),
            })
        } else {
            (figure.key == key).then_some(Column {
                figure,
                order: None,
            })
        }
    })
}

/// The unit of the figure of this key, or `None` for a key the table does not hold.
pub fn unit_of(key: &str) -> Option<Unit> {
    get(key).map(|c| c.unit())
}

/// The better direction of the figure of this key ([`Better::Neither`] for a key the table does not
/// hold).
pub fn better_of(key: &str) -> Better {
    get(key).map_or(Better::Neither, |c| c.better())
}

/// Whether `name` names `key`: it is the key, or a tail of it cut at a dot (`snr_db` and
/// `spectrum.snr_db` name `spectrum.snr_db`; `h3.dbc` names `spectrum.harmonics.h3.dbc`; `nr_db`
/// names nothing).
pub fn is_tail(key: &str, name: &str) -> bool {
    key == name
        || key
            .strip_suffix(name)
            .is_some_and(|head| head.ends_with('.'))
}

/// The figure a name means: its full key, or a tail of a key cut at a dot that exactly one figure
/// ends with. `Err` holds the candidates: none (unknown) or several (ambiguous; a field of each
/// harmonic named without an order, such as `dbc`, is one candidate with no order).
pub fn find(name: &str) -> std::result::Result<Column, Vec<Column>> {
    if let Some(c) = get(name) {
        return Ok(c);
    }
    let mut found = Vec::new();
    for &figure in TABLE.iter() {
        if figure.is_harmonic() {
            // A name with an order (`h3.dbc`) names that harmonic; one without (`dbc`) names the row.
            let order = name
                .split('.')
                .find_map(|part| part.strip_prefix('h')?.parse::<u32>().ok());
            match order {
                Some(n) if n >= 2 && is_tail(&figure.key_for(n), name) => found.push(Column {
                    figure,
                    order: Some(n),
                }),
                None if is_tail(figure.key, name) => found.push(Column {
                    figure,
                    order: None,
                }),
                _ => {}
            }
        } else if is_tail(figure.key, name) {
            found.push(Column {
                figure,
                order: None,
            });
        }
    }
    match found.as_slice() {
        [one] if one.order.is_some() || !one.figure.is_harmonic() => Ok(*one),
        _ => Err(found),
    }
}

/// Flattens the JSON of a result record into its dotted keys and cell texts, as the CSV writes them:
/// objects nest with dots, a list of objects that carry an `order` (the harmonics) is keyed
/// `h<order>`, any other list is joined with " | ", absent values are empty.
pub fn flatten(value: &Value) -> Vec<(String, String)> {
    let mut out = Vec::new();
    walk("", value, &mut out);
    out
}

fn walk(prefix: &str, value: &Value, out: &mut Vec<(String, String)>) {
    let key = |k: &str| {
        if prefix.is_empty() {
            k.to_string()
        } else {
            format!("{prefix}.{k}")
        }
    };
    match value {
        Value::Object(map) => {
            for (k, v) in map {
                walk(&key(k), v, out);
            }
        }
        Value::Array(items)
            if items.iter().all(|i| i.get("order").is_some()) && !items.is_empty() =>
        {
            for item in items {
                let order = item.get("order").map(scalar).unwrap_or_default();
                walk(&key(&format!("h{order}")), item, out);
            }
        }
        Value::Array(items) => {
            let joined: Vec<String> = items.iter().map(scalar).collect();
            out.push((prefix.to_string(), joined.join(" | ")));
        }
        v => out.push((prefix.to_string(), scalar(v))),
    }
}

fn scalar(v: &Value) -> String {
    match v {
        Value::Null => String::new(),
        Value::String(s) => s.clone(),
        Value::Number(n) => n.to_string(),
        Value::Bool(b) => b.to_string(),
        other => other.to_string(),
    }
}

/// The cells of one result record by key, as the CSV writes them.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Cells(HashMap<String, String>);

impl Cells {
    /// The cells of a result record.
    pub fn of(analysis: &Analysis) -> Cells {
        let value = serde_json::to_value(analysis).expect("plain data serialises");
        Cells(flatten(&value).into_iter().collect())
    }

    /// The text of a cell; empty when the record has no value there.
    pub fn text(&self, key: &str) -> &str {
        self.0.get(key).map_or("", String::as_str)
    }

    /// The finite number in a cell, or `None`.
    pub fn number(&self, key: &str) -> Option<f64> {
        self.text(key).parse::<f64>().ok().filter(|v| v.is_finite())
    }
}

impl From<HashMap<String, String>> for Cells {
    fn from(map: HashMap<String, String>) -> Cells {
        Cells(map)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keys_are_unique_and_harmonic_rows_form_one_run() {
        let mut seen = std::collections::HashSet::new();
        for f in table() {
            assert!(seen.insert(f.key), "{} twice", f.key);
            assert_eq!(f.is_harmonic(), f.label.contains(ORDER), "{}", f.key);
        }
        let first = table().iter().position(|f| f.is_harmonic()).unwrap();
        let last = table().iter().rposition(|f| f.is_harmonic()).unwrap();
        assert!(table()[first..=last].iter().all(|f| f.is_harmonic()));
    }

    // The crate's naming convention (crate docs: units in names): a key whose last part carries a unit
    // suffix has that unit. Only the fit's cycle uncertainty (`cycles_std`) and the clipped-sample
    // estimate have a unit their names do not carry.
    #[test]
    fn units_agree_with_the_names() {
        let suffixes = [
            ("dbfs_per_hz", Unit::DbfsPerHz),
            ("dbfs", Unit::Dbfs),
            ("dbc", Unit::Dbc),
            ("db", Unit::Db),
            ("bits", Unit::Bits),
            ("hz", Unit::Hz),
            ("codes", Unit::Codes),
            ("rad", Unit::Rad),
            ("vpp", Unit::Vpp),
            ("bins", Unit::Bins),
            ("cycles", Unit::Cycles),
        ];
        for f in table() {
            let leaf = f.key.rsplit('.').next().unwrap();
            let named = suffixes.iter().find(|(s, _)| {
                leaf == *s || leaf.strip_suffix(s).is_some_and(|h| h.ends_with('_'))
            });
            match named {
                Some((_, unit)) => assert_eq!(f.unit, *unit, "{}", f.key),
                None if f.key == "fit.cycles_std" => assert_eq!(f.unit, Unit::Cycles),
                // An estimated number of samples, a measure (limits can be set on it), unlike the
                // counts `samples` and `clipping.end_code_samples`.
                None if f.key == "clipping.clipped_samples" => assert_eq!(f.unit, Unit::Samples),
                None => assert!(!f.unit.is_measure(), "{} has no unit in its name", f.key),
            }
        }
        assert_eq!(
            serde_json::to_string(&Unit::DbfsPerHz).unwrap(),
            "\"dBFS/Hz\""
        );
    }

    #[test]
    fn directions_and_headline() {
        // Common practice, no source: more SNR, SINAD, SFDR and ENOB is better; less distortion, spur
        // level, noise and fit residual is better; frequencies, amplitudes and the leakage diagnosis
        // describe the measurement.
        for k in [
            "spectrum.snr_db",
            "spectrum.sinad_db",
            "spectrum.sfdr_dbc",
            "spectrum.sfdr_dbfs",
            "spectrum.enob_bits",
            "spectrum.enob_full_scale_bits",
            "fit.sinad_db",
            "fit.enob_bits",
        ] {
            assert_eq!(better_of(k), Better::Higher, "{k}");
        }
        for k in [
            "spectrum.thd_dbc",
            "spectrum.noise_floor_dbfs",
            "spectrum.nsd_dbfs_per_hz",
            "spectrum.worst_spur.dbc",
            "spectrum.worst_spur.dbfs",
            "spectrum.harmonics.h2.dbc",
            "spectrum.harmonics.h9.dbfs",
            "fit.residual_rms_codes",
        ] {
            assert_eq!(better_of(k), Better::Lower, "{k}");
        }
        for k in [
            "fit.frequency_hz",
            "spectrum.fundamental_dbfs",
            "spectrum.leakage.snr_bias_db",
            "spectrum.harmonics.h3.frequency_hz",
            "no.such.key",
        ] {
            assert_eq!(better_of(k), Better::Neither, "{k}");
        }
        let labels: Vec<&str> = headline().iter().map(|f| f.label).collect();
        assert_eq!(
            labels,
            [
                "SNR",
                "SINAD",
                "THD",
                "SFDR",
                "spectral ENOB",
                "sine-fit ENOB",
                "noise floor"
            ]
        );
        let places: Vec<u8> = headline().iter().filter_map(|f| f.headline).collect();
        assert_eq!(places, (1..=places.len() as u8).collect::<Vec<_>>());
        assert!(headline().iter().all(|f| f.better != Better::Neither));
    }

    #[test]
    fn harmonic_rows_expand_order_by_order() {
        let k = keys(3);
        let at = |key: &str| k.iter().position(|c| c == key).unwrap();
        assert_eq!(
            at("spectrum.harmonics.h2.order"),
            at("spectrum.worst_spur.harmonic") + 1
        );
        assert_eq!(
            at("spectrum.harmonics.h3.order"),
            at("spectrum.harmonics.h2.at_floor") + 1
        );
        assert_eq!(
            at("spectrum.noise_bins"),
            at("spectrum.harmonics.h3.at_floor") + 1
        );
        assert!(!k.iter().any(|c| c.contains("h4.") || c.contains(ORDER)));
        // Seven rows per harmonic, two of them with an uncertainty column.
        assert_eq!(keys(1).len() + 2 * (7 + 2), k.len());
        assert_eq!(k.first().map(String::as_str), Some("source"));
        assert_eq!(k.last().map(String::as_str), Some("error.message"));
    }

    #[test]
    fn lookups() {
        let h12 = get("spectrum.harmonics.h12.dbc").unwrap();
        assert_eq!((h12.figure, h12.order), (&HARMONIC, Some(12)));
        assert_eq!(h12.label(), "H12");
        assert_eq!(h12.unit().symbol(), "dBc");
        for bad in [
            "spectrum.harmonics.h1.dbc",
            "spectrum.harmonics.h02.dbc",
            "spectrum.harmonics.hx.dbc",
            "spectrum.harmonics.h{n}.dbc",
            "snr_db",
        ] {
            assert!(get(bad).is_none(), "{bad}");
        }
        assert_eq!(find("snr_db").unwrap().figure, &SNR);
        assert_eq!(find("spectrum.snr_db").unwrap().figure, &SNR);
        assert_eq!(find("sfdr_dbfs").unwrap().figure, &SFDR_DBFS);
        let h3 = find("h3.dbc").unwrap();
        assert_eq!(
            (h3.figure, h3.key()),
            (&HARMONIC, "spectrum.harmonics.h3.dbc".into())
        );
        assert_eq!(find("harmonics.h3.dbfs").unwrap().figure, &HARMONIC_DBFS);
        assert_eq!(find("enob_bits").unwrap_err().len(), 2);
        // `dbc` ends the worst spur's key, the harmonics' and the leakage figures' last parts do not.
        let dbc = find("dbc").unwrap_err();
        assert!(dbc.contains(&Column {
            figure: &HARMONIC,
            order: None
        }));
        assert!(dbc.iter().any(|c| c.figure == &WORST_SPUR));
        assert!(find("nr_db").unwrap_err().is_empty());
        assert!(find("h1.dbc").unwrap_err().is_empty());
        assert_eq!(find("bits").unwrap().figure, &BITS);
        assert_eq!(unit_of("fit.enob_bits"), Some(Unit::Bits));
        assert_eq!(unit_of("fit"), None);
    }

    #[test]
    fn uncertainty_keys_sit_beside_the_figures() {
        // The design's convention: `spectrum.uncertainty.snr_db`, `fit.uncertainty.frequency_hz`.
        assert_eq!(
            SNR.uncertainty_key(0).as_deref(),
            Some("spectrum.uncertainty.snr_db")
        );
        assert_eq!(
            FIN.uncertainty_key(0).as_deref(),
            Some("fit.uncertainty.frequency_hz")
        );
        assert_eq!(
            HARMONIC.uncertainty_key(3).as_deref(),
            Some("spectrum.uncertainty.harmonics.h3.dbc")
        );
        assert_eq!(WINDOW.uncertainty_key(0), None);
        assert!(table()
            .iter()
            .filter(|f| f.uncertainty)
            .all(|f| f.kind == Kind::Number && f.unit.is_measure()));
    }

    #[test]
    fn cells_read_numbers_back_exactly() {
        let mut map = HashMap::new();
        map.insert("spectrum.snr_db".to_string(), 0.1f64.to_string());
        map.insert("spectrum.sinad_db".to_string(), String::new());
        let c = Cells::from(map);
        assert_eq!(c.number("spectrum.snr_db"), Some(0.1));
        assert_eq!(c.number("spectrum.sinad_db"), None);
        assert_eq!(c.text("missing"), "");
    }
}

//! Ingest: reads a record file (one code per line, delimited columns or raw binary words) and its
//! optional JSON sidecar into a [`Record`] of signed, centred codes, with warnings about the codes.
//!
//! Metadata comes from the settings (the command line) first and the sidecar second, field by field.
//! Every error names the file and the line or byte offset, what was expected and what was found.

mod binary;
mod checks;
mod delimited;
mod detect;
mod npy;
mod packed;
mod samples;
mod sidecar;
mod text;
mod values;
mod wav;

use std::path::Path;

use serde::{Deserialize, Serialize};

pub use binary::parse_binary;
pub use checks::check_codes;
pub use delimited::{parse_delimited, parse_delimited_samples};
pub use npy::{parse_npy, read_npy_header, NpyLayout};
pub use samples::Samples;
pub use sidecar::{
    parse_channel, parse_delimiter, read_sidecar, sidecar_path, write_sidecar, Sidecar,
};
pub use text::{parse_text, parse_text_samples, parse_text_words};
pub use values::SampleUnit;
pub use wav::{read_wav_header, WavLayout};

use values::{decide, Decide, Decoded};

use checks::check_bits;

use crate::error::{Error, ErrorKind, Location, Result};
use crate::record::{max_code, min_code, Coding, Record};
use crate::resources;

/// The word formats [`Format::parse_word`] accepts, as listed in errors.
const WORD_NAMES: &str = "i8, u8, i16le, i16be, u16le, u16be, i24le, i24be, u24le, u24be, i32le, \
     i32be, u32le, u32be, or packed p10le, p10be, p12le, p12be, p14le, p14be";

/// Fewest samples when [`IngestSettings::min_samples`] is 0.
pub const DEFAULT_MIN_SAMPLES: usize = 16;

/// Where the N significant bits sit in a binary word.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Justify {
    /// In the low N bits; the bits above are a sign extension or zero (two's complement) or zero
    /// (offset binary).
    Right,
    /// In the high N bits; the padding bits below are ignored.
    Left,
}

impl std::str::FromStr for Justify {
    type Err = Error;

    /// `right` or `left`. Errors: [`crate::error::ErrorKind::BadSetting`] on key `justify`.
    fn from_str(s: &str) -> Result<Justify> {
        match s {
            "right" => Ok(Justify::Right),
            "left" => Ok(Justify::Left),
            other => Err(Error::setting(
                "justify",
                "right or left",
                format!("{other:?}"),
            )),
        }
    }
}

/// Samples of an odd width packed back to back, with no padding, into groups of whole bytes.
///
/// A group is the fewest bytes that hold whole samples: 5 bytes for four 10-bit samples, 3 bytes for
/// two 12-bit samples, 7 bytes for four 14-bit samples. Read as one unsigned integer (little-endian
/// when `msb_first` is false, big-endian when it is true), a group of S samples of N bits holds sample
/// j (0-based, in time order) in bits N·j .. N·j+N−1 (little-endian: the first sample in the lowest
/// bits) or in bits N·(S−1−j) .. N·(S−j)−1 (big-endian: the first sample in the highest bits). That is
/// the bit stream written least significant bit first, or most significant bit first. For 12 bits:
/// `p12le` bytes are `s0[7:0]`, `s1[3:0]·s0[11:8]`, `s1[11:4]`; `p12be` bytes are `s0[11:4]`,
/// `s0[3:0]·s1[11:8]`, `s1[7:0]` (high nibble first).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Packing {
    /// Bits per sample: 10, 12 or 14.
    pub bits: u32,
    /// The first sample in the most significant bits of a big-endian group (`p12be`); else in the
    /// least significant bits of a little-endian group (`p12le`).
    pub msb_first: bool,
}

impl Packing {
    /// The widths a packing may have.
    pub const WIDTHS: [u32; 3] = [10, 12, 14];

    /// Bytes in one group: the least common multiple of the width and 8, in bytes.
    pub fn group_bytes(&self) -> usize {
        let n = self.bits as usize;
        n / crate::freq::gcd(n as u64, 8) as usize
    }

    /// Samples in one group.
    pub fn group_samples(&self) -> usize {
        8 * self.group_bytes() / self.bits as usize
    }
}

/// How codes are laid out in a raw binary record.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct BinaryLayout {
    /// Bytes per word: 1, 2, 3 or 4; for packed samples, the bytes of one group
    /// ([`Packing::group_bytes`]).
    pub word_bytes: usize,
    /// Signed words ("i" formats); decides the coding when `coding` is `None`.
    pub signed: bool,
    /// Most significant byte first.
    pub big_endian: bool,
    /// The coding; `None`: signed words are two's complement, unsigned words offset binary.
    pub coding: Option<Coding>,
    /// Where the N significant bits sit in the word.
    pub justify: Justify,
    /// Header bytes to skip before the first word.
    pub skip_bytes: u64,
    /// The channel to keep, 0-based.
    pub channel: usize,
    /// Interleaved channels per frame (at least 1); packed samples are interleaved sample by
    /// sample.
    pub channels: usize,
    /// Samples packed back to back across byte boundaries; `None`: one sample per word.
    pub packing: Option<Packing>,
}

/// A column of a delimited record.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(untagged)]
pub enum ColumnSel {
    /// By 0-based index.
    Index(usize),
    /// By header name.
    Name(String),
}

/// The format of a record file.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Format {
    /// One integer code per line.
    Text,
    /// Delimited columns; the delimiter is detected when `None`.
    Csv {
        /// The column holding the codes.
        column: ColumnSel,
        /// The delimiter byte (a space means runs of whitespace).
        delimiter: Option<u8>,
    },
    /// Raw binary words.
    Binary(BinaryLayout),
    /// A NumPy `.npy` array; a 2-D array's column is chosen with [`IngestSettings::column`].
    Npy,
    /// A WAV file (RIFF or RF64): PCM codes or float values, one channel chosen with
    /// [`IngestSettings::channel`]; the sample rate comes from the file.
    Wav,
}

impl std::str::FromStr for Format {
    type Err = Error;

    /// As [`Format::parse`].
    fn from_str(s: &str) -> Result<Format> {
        Format::parse(s)
    }
}

impl Format {
    /// Parses a format name: "text", "csv" (column 0, delimiter detected), "npy", "wav" or a word format as
    /// [`Format::parse_word`] reads it.
    pub fn parse(s: &str) -> Result<Format> {
        match s.trim() {
            "text" => Ok(Format::Text),
            "npy" => Ok(Format::Npy),
            "wav" => Ok(Format::Wav),
            "csv" => Ok(Format::Csv {
                column: ColumnSel::Index(0),
                delimiter: None,
            }),
            w => Format::parse_word(w)
                .map(Format::Binary)
                .map_err(|e| Error {
                    expected: format!("text, csv, npy, wav or a word format: {}", WORD_NAMES),
                    ..e
                }),
        }
    }

    /// Parses a binary word format: "i8", "u8", "i16le", "i16be", "u16le", "u16be", "i24le", "i24be",
    /// "u24le", "u24be", "i32le", "i32be", "u32le", "u32be" (i: signed, two's complement by default;
    /// u: unsigned, offset binary by default; le/be: byte order), or a packing, "p10le", "p10be",
    /// "p12le", "p12be", "p14le", "p14be" (two's complement by default; le/be: the bit order of
    /// [`Packing`]). The rest of the layout takes its defaults: right-justified, no header, one
    /// channel.
    pub fn parse_word(s: &str) -> Result<BinaryLayout> {
        let word = s.trim();
        if let Some(rest) = word.strip_prefix('p') {
            let (bits, msb_first) = match rest {
                "10le" => (10, false),
                "10be" => (10, true),
                "12le" => (12, false),
                "12be" => (12, true),
                "14le" => (14, false),
                "14be" => (14, true),
                _ => {
                    return Err(Error::setting(
                        "format",
                        format!("a word format: {}", WORD_NAMES),
                        format!("{s:?}"),
                    ))
                }
            };
            let packing = Packing { bits, msb_first };
            return Ok(BinaryLayout {
                word_bytes: packing.group_bytes(),
                signed: true,
                big_endian: msb_first,
                coding: None,
                justify: Justify::Right,
                skip_bytes: 0,
                channel: 0,
                channels: 1,
                packing: Some(packing),
            });
        }
        let (signed, rest) = match word.as_bytes().first() {
            Some(b'i') => (true, &word[1..]),
            Some(b'u') => (false, &word[1..]),
            _ => (false, ""),
        };
        let (word_bytes, big_endian) = match rest {
            "8" => (1, false),
            "16le" => (2, false),
            "16be" => (2, true),
            "24le" => (3, false),
            "24be" => (3, true),
            "32le" => (4, false),
            "32be" => (4, true),
            _ => {
                return Err(Error::setting(
                    "format",
                    format!("a word format: {}", WORD_NAMES),
                    format!("{s:?}"),
                ))
            }
        };
        Ok(BinaryLayout {
            word_bytes,
            signed,
            big_endian,
            coding: None,
            justify: Justify::Right,
            skip_bytes: 0,
            channel: 0,
            channels: 1,
            packing: None,
        })
    }
}

/// Metadata of a record; the command line wins over the sidecar, field by field.
#[derive(Default, Clone, Debug, PartialEq, Serialize)]
pub struct Metadata {
    /// Sample rate in hertz.
    pub sample_rate_hz: Option<f64>,
    /// Converter resolution N in bits.
    pub bits: Option<u32>,
    /// Expected input frequency in hertz.
    pub fin_hz: Option<f64>,
    /// Full-scale range in volts peak-to-peak.
    pub full_scale_vpp: Option<f64>,
}

impl Metadata {
    /// Each field of `self`, or of `fallback` where `self` has none.
    pub fn with_fallback(&self, fallback: &Metadata) -> Metadata {
        Metadata {
            sample_rate_hz: self.sample_rate_hz.or(fallback.sample_rate_hz),
            bits: self.bits.or(fallback.bits),
            fin_hz: self.fin_hz.or(fallback.fin_hz),
            full_scale_vpp: self.full_scale_vpp.or(fallback.full_scale_vpp),
        }
    }
}

/// How to read a record: what the command line gave. Each field that is set wins over the sidecar.
///
/// Precedence for the layout: the word type (or text/CSV) comes from `format`, else the sidecar's
/// `format`, else the file extension. The binary options (`coding`, `justify`, `skip_bytes`,
/// `channel`) and the CSV options (`column`, `delimiter`) come from these fields, else the sidecar's
/// keys, else the values inside `format` (which [`Format::parse_word`] and [`Format::parse`] set to
/// their defaults).
#[derive(Default, Clone, Debug, PartialEq)]
pub struct IngestSettings {
    /// The format; `None`: from the sidecar, else by extension (".csv": CSV column 0; ".bin", ".raw",
    /// ".dat": an error asking for the word format; anything else: text).
    pub format: Option<Format>,
    /// Metadata given on the command line.
    pub meta: Metadata,
    /// Coding of binary words.
    pub coding: Option<Coding>,
    /// Justification of binary words.
    pub justify: Option<Justify>,
    /// Header bytes to skip in a binary record.
    pub skip_bytes: Option<u64>,
    /// Interleaved channel (0-based channel, channels), as [`parse_channel`] gives it.
    pub channel: Option<(usize, usize)>,
    /// CSV column.
    pub column: Option<ColumnSel>,
    /// CSV delimiter.
    pub delimiter: Option<u8>,
    /// What the samples are (codes, volts, units of full scale); `None`: decided from the data and
    /// the full-scale range (see the README's section on values).
    pub unit: Option<SampleUnit>,
    /// Fewest samples accepted; 0 means [`DEFAULT_MIN_SAMPLES`].
    pub min_samples: usize,
    /// Memory ceiling of one record in bytes (reading it and analysing it); 0 means half the
    /// machine's memory. A record that would need more is refused before it is read.
    pub max_memory_bytes: u64,
    /// Read a path that is not a regular file (a FIFO, a device) as a stream, up to a quarter of
    /// the memory ceiling; without it such a path is refused without reading.
    pub stream: bool,
}

/// A record read from a file, with warnings about its codes (clipping, stuck bits, missing codes) and
/// about settings that did not apply.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Ingested {
    /// The record; its `source` is the path as given.
    pub record: Record,
    /// Warnings, each a sentence with its count.
    pub warnings: Vec<String>,
}

/// The record path that means standard input.
pub const STDIN_PATH: &str = "-";

/// How standard input is named in errors and as a record's source.
pub const STDIN_SHOWN: &str = "standard input";

/// The option that raises the memory ceiling, as messages name it.
const MEMORY_OPTION: &str = "--max-memory";

/// Bytes read before the format is settled: enough for any magic number.
const HEAD_BYTES: usize = 64;

/// The memory ceiling of `settings`, resolved: its own, else the machine's default.
fn memory_limit(settings: &IngestSettings) -> u64 {
    match settings.max_memory_bytes {
        0 => resources::default_memory_limit(),
        n => n,
    }
}

/// Error: a record needs more memory than the ceiling.
fn too_large(shown: &str, size: &str, needed: u64, limit: u64) -> Error {
    Error::new(
        ErrorKind::TooLarge,
        shown,
        Location::Whole,
        format!(
            "a record that fits the memory limit of {} ({}; raise it with {MEMORY_OPTION})",
            resources::bytes_shown(limit),
            resources::memory_limit_origin(limit)
        ),
        format!(
            "{size}, which needs about {} to read and analyse",
            resources::bytes_shown(needed)
        ),
    )
}

/// Memory a record of `file_bytes` needs before its samples are known, by format: a binary record's
/// samples follow from its length (the file, plus [`resources::ANALYSIS_BYTES_PER_SAMPLE`] a sample);
/// text, CSV and .npy give at most one sample per 2, 2 and 1 bytes, and only their reading (the file
/// plus 4 bytes a code) is bounded here: their analysis is checked once the samples are counted.
fn needed_up_front(file_bytes: u64, format: &Format) -> (u64, String) {
    match format {
        Format::Binary(l) => {
            let data = file_bytes.saturating_sub(l.skip_bytes);
            let channels = l.channels.max(1) as u64;
            let (samples, what) = match l.packing {
                Some(p) => (
                    data.saturating_mul(8) / u64::from(p.bits) / channels,
                    format!("packed {}-bit samples", p.bits),
                ),
                None => (
                    data / (l.word_bytes as u64).saturating_mul(channels).max(1),
                    format!("{}-byte words", l.word_bytes),
                ),
            };
            (
                file_bytes
                    .saturating_add(samples.saturating_mul(resources::ANALYSIS_BYTES_PER_SAMPLE)),
                format!(
                    "{} holding {samples} samples of {what}",
                    resources::bytes_shown(file_bytes),
                ),
            )
        }
        // A WAV sample of 1 byte becomes a 4-byte code, of 4 or 8 bytes an 8-byte value: at most 4×.
        Format::Npy | Format::Wav => (
            file_bytes.saturating_add(file_bytes.saturating_mul(4)),
            resources::bytes_shown(file_bytes),
        ),
        Format::Text | Format::Csv { .. } => (
            file_bytes.saturating_add(file_bytes / 2 * 4),
            resources::bytes_shown(file_bytes),
        ),
    }
}

/// Reads a record file and its sidecar (if any) into a [`Record`].
///
/// Errors: a missing or unreadable file ([`ErrorKind::Io`]), an empty file or no samples
/// ([`ErrorKind::Empty`]), fewer than `min_samples` ([`ErrorKind::TooFewSamples`]), missing or invalid
/// bits or sample rate ([`ErrorKind::BadSetting`], naming the option or sidecar key to give), a sidecar
/// that does not parse ([`ErrorKind::BadMetadata`]), and the parsers' errors.
pub fn read_record(path: &Path, settings: &IngestSettings) -> Result<Ingested> {
    let stdin = path == Path::new(STDIN_PATH);
    let shown = if stdin {
        STDIN_SHOWN.to_string()
    } else {
        path.display().to_string()
    };
    let limit = memory_limit(settings);
    // A record is read onto the heap, never mapped: a file cut short by another process while it is
    // read gives a short or failed read of that record, not a SIGBUS that ends the whole run.
    let (reader, len): (Box<dyn std::io::Read>, Option<u64>) = if stdin {
        (Box::new(std::io::stdin().lock()), None)
    } else {
        let o = resources::open_input(
            path,
            "a readable record file",
            settings.stream,
            Some("--stream"),
        )?;
        (Box::new(o.file), o.len)
    };
    let mut reader = reader;
    let mut head = Vec::with_capacity(HEAD_BYTES);
    std::io::Read::read_to_end(
        &mut std::io::Read::take(&mut reader, HEAD_BYTES as u64),
        &mut head,
    )
    .map_err(|e| {
        Error::new(
            ErrorKind::Io,
            &shown,
            Location::Whole,
            "a readable record file",
            e.to_string(),
        )
    })?;
    // Standard input has no sidecar.
    let (sidecar_shown, sidecar) = if stdin {
        ("(none for standard input)".to_string(), Sidecar::default())
    } else {
        (
            sidecar_path(path)?.display().to_string(),
            read_sidecar(path)?.unwrap_or_default(),
        )
    };
    let format = resolve_format(path, &head, settings, &sidecar, &sidecar_shown)?;
    let max_bytes = match len {
        Some(len) => {
            let (needed, size) = needed_up_front(len, &format);
            if needed > limit {
                return Err(too_large(&shown, &size, needed, limit));
            }
            len
        }
        // A stream's length is unknown: read at most a quarter of the ceiling (the bytes and their
        // codes then stay within it).
        None => limit / 4,
    };
    let bytes = resources::read_bounded(
        std::io::Read::chain(&head[..], reader),
        &shown,
        "a record",
        max_bytes,
        &format!(" (a stream is read up to a quarter of the memory limit; raise it with {MEMORY_OPTION})"),
    )
    .map_err(|mut e| {
        if e.found.starts_with("more bytes") {
            e.kind = ErrorKind::TooLarge;
            if len.is_some() {
                e.found = "a file that grew while it was read".into();
            }
        }
        e
    })?;
    if let Some(len) = len {
        let got = bytes.len() as u64;
        if got != len {
            return Err(Error::new(
                ErrorKind::Io,
                &shown,
                Location::Byte(got),
                format!("{len} bytes, as the file's size said when it was opened"),
                "the file ending there (it changed while it was read)",
            ));
        }
    }
    let cli = &settings.meta;
    let meta = cli.with_fallback(&sidecar.metadata());
    // Errors about a value name the file it came from.
    let origin = |from_cli: bool| {
        if from_cli {
            shown.clone()
        } else {
            sidecar_shown.clone()
        }
    };

    // Formats that may hold values (with no code grid), or state their resolution, may go without
    // one; the check that codes have one comes after the read.
    // A packing states its width, which is the resolution unless --bits says fewer.
    let bits_optional = !matches!(&format, Format::Binary(l) if l.packing.is_none());
    if let Some(bits) = meta.bits {
        check_bits(bits).map_err(|e| e.with_path(origin(cli.bits.is_some())))?;
    } else if !bits_optional {
        return Err(missing_bits(&shown, &sidecar_shown));
    }
    // A WAV file states its sample rate, a CSV file may have a time column; every other format
    // needs one given.
    let rate_in_file = matches!(format, Format::Wav | Format::Csv { .. });
    if let Some(fs) = meta.sample_rate_hz {
        crate::record::check_sample_rate(fs, " (give --fs or \"sample_rate_hz\" in the sidecar)")
            .map_err(|e| e.with_path(origin(cli.sample_rate_hz.is_some())))?;
    } else if !rate_in_file {
        return Err(missing_rate(&shown, &sidecar_shown));
    }
    if let Some(f) = meta.fin_hz {
        positive("fin_hz", f).map_err(|e| e.with_path(origin(cli.fin_hz.is_some())))?;
    }
    if let Some(v) = meta.full_scale_vpp {
        positive("full_scale_vpp", v)
            .map_err(|e| e.with_path(origin(cli.full_scale_vpp.is_some())))?;
    }

    let mut warnings = Vec::new();
    warnings.extend(ignored_settings(settings, &format));
    if matches!(format, Format::Text | Format::Csv { .. }) {
        detect::refuse_binary(&bytes, &shown)?;
    }
    let unit = settings.unit.or(sidecar.unit);
    // Told the samples are codes, the text readers read codes only (and name the line of a fraction).
    let values_allowed = unit != Some(SampleUnit::Codes);
    let mut fraction_line = None;
    let mut native = None;
    let mut bits_known = meta.bits;
    let mut file_rate = None;
    let mut time_axis: Option<delimited::TimeAxis> = None;
    let channel = match settings.channel {
        Some(c) => Some(c),
        None => sidecar.parsed_channel(&sidecar_shown)?,
    };
    let samples = match &format {
        // Raw words in hexadecimal or binary: bit patterns of a stated width, decoded by the coding.
        Format::Text if text::radix_of(&bytes).is_some() => {
            let Some(bits) = meta.bits else {
                return Err(missing_bits(&shown, &sidecar_shown));
            };
            let coding = settings
                .coding
                .or(sidecar.coding)
                .unwrap_or(Coding::TwosComplement);
            Samples::Codes(text::parse_text_words(&bytes, &shown, bits, coding)?)
        }
        Format::Text if values_allowed => {
            let (s, line) = text::parse_text_located(&bytes, &shown, meta.bits)?;
            fraction_line = line;
            s
        }
        Format::Text => Samples::Codes(parse_text(&bytes, &shown, meta.bits.unwrap_or(32))?),
        Format::Csv { column, delimiter } => {
            // With no column given, the signal column is chosen among those left besides time and
            // index columns.
            let given = settings.column.is_some() || sidecar.column.is_some();
            let (s, line, axis) = delimited::parse_delimited_auto(
                &bytes,
                &shown,
                meta.bits,
                given.then_some(column),
                *delimiter,
                values_allowed,
            )?;
            fraction_line = line;
            time_axis = axis;
            s
        }
        Format::Binary(layout) => {
            bits_known = meta.bits.or(layout.packing.map(|p| p.bits));
            Samples::Codes(parse_binary(
                &bytes,
                &shown,
                bits_known.unwrap_or(0),
                layout,
            )?)
        }
        Format::Wav => {
            let read = wav::parse_wav(&bytes, &shown, meta.bits, channel)?;
            warnings.extend(read.warnings);
            bits_known = read.bits;
            file_rate = Some(read.sample_rate_hz);
            if matches!(read.samples, Samples::Values(_)) {
                // Float WAV is ±1.0 full scale by the usual convention.
                native = Some(SampleUnit::FullScale);
            }
            read.samples
        }
        Format::Npy => {
            let column = match &settings.column.clone().or_else(|| sidecar.column.clone()) {
                None => None,
                Some(ColumnSel::Index(i)) => Some(*i),
                Some(ColumnSel::Name(n)) => {
                    return Err(Error::setting(
                        "column",
                        "a 0-based column index (a .npy array has no column names)",
                        format!("{n:?}"),
                    )
                    .with_path(&shown))
                }
            };
            parse_npy(
                &bytes,
                &shown,
                meta.bits,
                settings.coding.or(sidecar.coding),
                column,
            )?
        }
    };
    if let Some(ax) = &time_axis {
        match (meta.sample_rate_hz, ax.rate_hz) {
            // Disagreeing by more than half a sample over the record's span is a mismatch.
            (Some(given), Some(r)) if (ax.span_s * given - ax.steps as f64).abs() > 0.5 => {
                return Err(Error::setting(
                    "sample_rate_hz",
                    format!(
                        "the sample rate of the time column {:?}: {} Hz ({} steps in {} s)",
                        ax.column, r, ax.steps, ax.span_s
                    ),
                    format!("{given} Hz given"),
                )
                .with_path(origin(cli.sample_rate_hz.is_some())));
            }
            (Some(_), Some(_)) => {}
            (None, Some(r)) => file_rate = Some(r),
            (_, None) => warnings.push(format!(
                "the time column {:?} gives no sample rate: {}",
                ax.column,
                ax.uneven.as_deref().unwrap_or("its steps are not even")
            )),
        }
    }
    let sample_rate_hz = match (meta.sample_rate_hz, file_rate) {
        (Some(given), Some(stated)) => {
            if given != stated {
                warnings.push(format!(
                    "the sample rate given, {given} Hz, is used instead of the {stated} Hz the file \
                     states"
                ));
            }
            given
        }
        (Some(given), None) => given,
        (None, Some(stated)) => {
            crate::record::check_sample_rate(
                stated,
                " (the file's header or time column; give --fs)",
            )
            .map_err(|e| e.with_path(&shown))?;
            stated
        }
        (None, None) => return Err(missing_rate(&shown, &sidecar_shown)),
    };
    let npy_column = match &settings.column.clone().or_else(|| sidecar.column.clone()) {
        Some(ColumnSel::Index(i)) => Some(*i),
        _ => None,
    };
    let locate = |k: usize| match &format {
        Format::Npy => npy::element_offset(&bytes, &shown, npy_column, k)
            .map_or(Location::Whole, Location::Byte),
        Format::Wav => {
            wav::sample_offset(&bytes, &shown, channel, k).map_or(Location::Whole, Location::Byte)
        }
        _ => Location::Whole,
    };
    let decoded = decide(
        samples,
        &Decide {
            path: &shown,
            unit,
            native,
            bits: bits_known,
            full_scale_vpp: meta.full_scale_vpp,
            locate: &locate,
            fraction_at: fraction_line.map(Location::Line),
        },
        &mut warnings,
    )?;
    let (codes, values, bits) = match decoded {
        Decoded::Codes(codes) => {
            let Some(bits) = bits_known else {
                return Err(missing_bits(&shown, &sidecar_shown));
            };
            // The readers checked codes against the 32-bit range when no resolution was known.
            if let Some(k) = codes
                .iter()
                .position(|&c| !(min_code(bits)..=max_code(bits)).contains(&i64::from(c)))
            {
                return Err(Error::new(
                    ErrorKind::CodeOutOfRange,
                    &shown,
                    locate(k),
                    checks::range_text(bits),
                    format!("{} (sample {k}, 0-based)", codes[k]),
                ));
            }
            (codes, None, bits)
        }
        Decoded::Values { values, bits } => (Vec::new(), Some(values), bits),
    };
    let min = if settings.min_samples == 0 {
        DEFAULT_MIN_SAMPLES
    } else {
        settings.min_samples
    };
    let len = values.as_ref().map_or(codes.len(), |v| v.scaled.len());
    let needed = (len as u64).saturating_mul(resources::ANALYSIS_BYTES_PER_SAMPLE);
    if needed > limit {
        return Err(too_large(&shown, &format!("{len} samples"), needed, limit));
    }
    if len < min {
        return Err(Error::new(
            ErrorKind::TooFewSamples,
            &shown,
            Location::Whole,
            format!("at least {min} samples"),
            len.to_string(),
        ));
    }
    if values.is_none() {
        warnings.extend(check_codes(&codes, bits));
    }
    Ok(Ingested {
        record: Record {
            source: shown,
            codes,
            values,
            sample_rate_hz,
            bits,
            full_scale_vpp: meta.full_scale_vpp,
            fin_hint_hz: meta.fin_hz,
        },
        warnings,
    })
}

/// The error for a record of codes read without a resolution.
fn missing_bits(shown: &str, sidecar_shown: &str) -> Error {
    Error::setting(
        "bits",
        format!("the resolution in bits: give --bits or \"bits\" in the sidecar {sidecar_shown}"),
        "none given",
    )
    .with_path(shown)
}

/// The error for a record read without a sample rate.
fn missing_rate(shown: &str, sidecar_shown: &str) -> Error {
    Error::setting(
        "sample_rate_hz",
        format!(
            "a sample rate in Hz: give --fs or \"sample_rate_hz\" in the sidecar {sidecar_shown}"
        ),
        "none given",
    )
    .with_path(shown)
}

/// Rejects a value that is not positive and finite.
fn positive(key: &str, v: f64) -> Result<()> {
    if v.is_finite() && v > 0.0 {
        Ok(())
    } else {
        Err(Error::setting(
            key,
            "a positive, finite value",
            v.to_string(),
        ))
    }
}

/// The format with the command line's options over the sidecar's over the format's own defaults.
fn resolve_format(
    path: &Path,
    bytes: &[u8],
    settings: &IngestSettings,
    sidecar: &Sidecar,
    sidecar_shown: &str,
) -> Result<Format> {
    let base = match &settings.format {
        Some(f) => f.clone(),
        None => match sidecar.parsed_format(sidecar_shown)? {
            Some(f) => f,
            None => match detect::magic(bytes) {
                Some(detect::Magic::Npy) => Format::Npy,
                Some(detect::Magic::Wav) => Format::Wav,
                None => by_extension(path, sidecar_shown)?,
            },
        },
    };
    Ok(match base {
        Format::Text => Format::Text,
        Format::Npy => Format::Npy,
        Format::Wav => Format::Wav,
        Format::Csv { column, delimiter } => Format::Csv {
            column: settings
                .column
                .clone()
                .or_else(|| sidecar.column.clone())
                .unwrap_or(column),
            delimiter: match settings.delimiter {
                Some(d) => Some(d),
                None => sidecar.parsed_delimiter(sidecar_shown)?.or(delimiter),
            },
        },
        Format::Binary(mut layout) => {
            if let Some(c) = settings.coding.or(sidecar.coding) {
                layout.coding = Some(c);
            }
            layout.justify = settings
                .justify
                .or(sidecar.justify)
                .unwrap_or(layout.justify);
            layout.skip_bytes = settings
                .skip_bytes
                .or(sidecar.skip_bytes)
                .unwrap_or(layout.skip_bytes);
            let channel = match settings.channel {
                Some(c) => Some(c),
                None => sidecar.parsed_channel(sidecar_shown)?,
            };
            if let Some((k, m)) = channel {
                layout.channel = k;
                layout.channels = m;
            }
            Format::Binary(layout)
        }
    })
}

/// The format implied by the file extension when neither the settings nor the sidecar give one.
fn by_extension(path: &Path, sidecar_shown: &str) -> Result<Format> {
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase);
    match ext.as_deref() {
        Some("npy") => Ok(Format::Npy),
        Some("wav") => Ok(Format::Wav),
        Some("csv") => Ok(Format::Csv {
            column: ColumnSel::Index(0),
            delimiter: None,
        }),
        Some(e @ ("bin" | "raw" | "dat")) => Err(Error::setting(
            "format",
            format!(
                "the word format of a raw binary record: give --format ({WORD_NAMES}) or \"format\" \
                 in the sidecar {sidecar_shown}"
            ),
            format!("a .{e} file with no format given"),
        )
        .with_path(path.display().to_string())),
        _ => Ok(Format::Text),
    }
}

/// A warning naming the command-line options that do not apply to the record's format.
fn ignored_settings(s: &IngestSettings, format: &Format) -> Option<String> {
    let binary = [
        ("coding", s.coding.is_some()),
        ("justify", s.justify.is_some()),
        ("skip_bytes", s.skip_bytes.is_some()),
        ("channel", s.channel.is_some()),
    ];
    let csv = [
        ("column", s.column.is_some()),
        ("delimiter", s.delimiter.is_some()),
    ];
    let (kind, unused): (&str, Vec<&str>) = match format {
        // The coding applies to raw words written in hexadecimal or binary.
        Format::Text => (
            "a text record",
            binary[1..]
                .iter()
                .chain(&csv)
                .filter(|x| x.1)
                .map(|x| x.0)
                .collect(),
        ),
        Format::Csv { .. } => (
            "a delimited record",
            binary.iter().filter(|x| x.1).map(|x| x.0).collect(),
        ),
        Format::Binary(_) => (
            "a raw binary record",
            csv.iter().filter(|x| x.1).map(|x| x.0).collect(),
        ),
        // A .npy array's values are numbers, not words: only the coding and the column apply.
        Format::Npy => (
            "a .npy record",
            binary[1..]
                .iter()
                .chain(&csv[1..])
                .filter(|x| x.1)
                .map(|x| x.0)
                .collect(),
        ),
        // A WAV file's samples are numbers of a stated layout: only the channel applies.
        Format::Wav => (
            "a WAV record",
            binary[..3]
                .iter()
                .chain(&csv)
                .filter(|x| x.1)
                .map(|x| x.0)
                .collect(),
        ),
    };
    (!unused.is_empty()).then(|| {
        format!(
            "{} setting{} not used for {kind}, ignored: {}",
            unused.len(),
            if unused.len() == 1 { "" } else { "s" },
            unused.join(", ")
        )
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    // Sources: the word-format names and the precedence (command line over sidecar over extension)
    // are this module's own rules; codes follow from two's complement and offset binary, common
    // practice, no source.

    #[test]
    fn word_formats() {
        let cases = [
            ("i8", 1, true, false),
            ("u8", 1, false, false),
            ("i16le", 2, true, false),
            ("i16be", 2, true, true),
            ("u16le", 2, false, false),
            ("u16be", 2, false, true),
            ("i24le", 3, true, false),
            ("i24be", 3, true, true),
            ("u24le", 3, false, false),
            ("u24be", 3, false, true),
            ("i32le", 4, true, false),
            ("i32be", 4, true, true),
            ("u32le", 4, false, false),
            ("u32be", 4, false, true),
        ];
        for (name, w, signed, be) in cases {
            let l = Format::parse_word(name).unwrap();
            assert_eq!(
                (l.word_bytes, l.signed, l.big_endian),
                (w, signed, be),
                "{name}"
            );
            assert_eq!(l.coding, None);
            assert_eq!(l.justify, Justify::Right);
            assert_eq!((l.skip_bytes, l.channel, l.channels), (0, 0, 1));
            assert_eq!(l.packing, None);
        }
        for (name, bits, msb_first, group) in [
            ("p10le", 10, false, 5),
            ("p10be", 10, true, 5),
            ("p12le", 12, false, 3),
            ("p12be", 12, true, 3),
            ("p14le", 14, false, 7),
            ("p14be", 14, true, 7),
        ] {
            let l = Format::parse_word(name).unwrap();
            assert_eq!(l.packing, Some(Packing { bits, msb_first }), "{name}");
            assert_eq!((l.word_bytes, l.signed, l.coding), (group, true, None));
        }
        for bad in [
            "i16", "s16le", "u12le", "i8le", "", "I16LE", "text", "p12", "p16le", "p8le",
        ] {
            let e = Format::parse_word(bad).unwrap_err();
            assert_eq!(e.kind, ErrorKind::BadSetting, "{bad}");
            assert_eq!(e.location, Location::Key("format".into()));
            assert!(e.expected.contains("i16le"), "{}", e.expected);
        }
        assert_eq!(Format::parse("text").unwrap(), Format::Text);
        assert_eq!(
            Format::parse("csv").unwrap(),
            Format::Csv {
                column: ColumnSel::Index(0),
                delimiter: None
            }
        );
        let e = Format::parse("xml").unwrap_err();
        assert!(
            e.expected.starts_with("text, csv, npy, wav or"),
            "{}",
            e.expected
        );
    }

    /// A temporary folder with the named files written into it.
    fn files(list: &[(&str, &[u8])]) -> tempfile::TempDir {
        let dir = tempfile::tempdir().unwrap();
        for (name, bytes) in list {
            std::fs::write(dir.path().join(name), bytes).unwrap();
        }
        dir
    }

    fn cli(fs: f64, bits: u32) -> IngestSettings {
        IngestSettings {
            meta: Metadata {
                sample_rate_hz: Some(fs),
                bits: Some(bits),
                ..Metadata::default()
            },
            ..IngestSettings::default()
        }
    }

    /// Text of `n` codes cycling through -5..=5.
    fn ramp_text(n: usize) -> String {
        (0..n).map(|i| format!("{}\n", i as i32 % 11 - 5)).collect()
    }

    fn le16(v: &[i16]) -> Vec<u8> {
        v.iter().flat_map(|x| x.to_le_bytes()).collect()
    }

    #[test]
    fn text_record_with_command_line_metadata() {
        let dir = files(&[("r.txt", ramp_text(20).as_bytes())]);
        let path = dir.path().join("r.txt");
        let mut s = cli(1e6, 12);
        s.meta.fin_hz = Some(1e3);
        s.meta.full_scale_vpp = Some(2.0);
        let got = read_record(&path, &s).unwrap();
        let r = &got.record;
        assert_eq!(r.source, path.display().to_string());
        assert_eq!(r.codes.len(), 20);
        assert_eq!(&r.codes[..3], &[-5, -4, -3]);
        assert_eq!(
            (r.sample_rate_hz, r.bits, r.fin_hint_hz, r.full_scale_vpp),
            (1e6, 12, Some(1e3), Some(2.0))
        );
        assert!(got.warnings.is_empty(), "{:?}", got.warnings);
    }

    #[test]
    fn source_is_the_path_as_given() {
        let dir = files(&[("r.txt", ramp_text(20).as_bytes())]);
        let given = dir.path().join(".").join("r.txt");
        let got = read_record(&given, &cli(1e6, 12)).unwrap();
        assert_eq!(got.record.source, given.display().to_string());
    }

    #[test]
    fn missing_file_is_io_for_the_whole_file() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("absent.txt");
        let e = read_record(&path, &cli(1e6, 12)).unwrap_err();
        assert_eq!(e.kind, ErrorKind::Io);
        assert_eq!(e.location, Location::Whole);
        assert_eq!(e.path, path.display().to_string());
        assert_eq!(e.expected, "a readable record file");
        assert!(!e.found.is_empty());
    }

    #[test]
    fn empty_file_and_too_few_samples() {
        let dir = files(&[("e.txt", b""), ("s.txt", ramp_text(15).as_bytes())]);
        let e = read_record(&dir.path().join("e.txt"), &cli(1e6, 12)).unwrap_err();
        assert_eq!((e.kind, e.location), (ErrorKind::Empty, Location::Whole));
        // min_samples 0 means 16.
        let e = read_record(&dir.path().join("s.txt"), &cli(1e6, 12)).unwrap_err();
        assert_eq!(e.kind, ErrorKind::TooFewSamples);
        assert_eq!(e.location, Location::Whole);
        assert_eq!(e.expected, "at least 16 samples");
        assert_eq!(e.found, "15");
        let mut s = cli(1e6, 12);
        s.min_samples = 10;
        assert_eq!(
            read_record(&dir.path().join("s.txt"), &s)
                .unwrap()
                .record
                .len(),
            15
        );
        s.min_samples = 100;
        let e = read_record(&dir.path().join("s.txt"), &s).unwrap_err();
        assert_eq!(
            (e.expected.as_str(), e.found.as_str()),
            ("at least 100 samples", "15")
        );
    }

    #[test]
    fn bits_and_sample_rate_are_required() {
        let dir = files(&[("r.txt", ramp_text(20).as_bytes())]);
        let path = dir.path().join("r.txt");
        let mut s = cli(1e6, 12);
        s.meta.bits = None;
        let e = read_record(&path, &s).unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadSetting);
        assert_eq!(e.location, Location::Key("bits".into()));
        assert!(
            e.expected.contains("--bits") && e.expected.contains("r.json"),
            "{}",
            e.expected
        );
        let mut s = cli(1e6, 12);
        s.meta.sample_rate_hz = None;
        let e = read_record(&path, &s).unwrap_err();
        assert_eq!(e.location, Location::Key("sample_rate_hz".into()));
        assert!(
            e.expected.contains("--fs") && e.expected.contains("sidecar"),
            "{}",
            e.expected
        );
        for bad in [0.0, -1e6, f64::NAN, f64::INFINITY] {
            let e = read_record(&path, &cli(bad, 12)).unwrap_err();
            assert_eq!(e.kind, ErrorKind::BadSetting);
            assert_eq!(e.location, Location::Key("sample_rate_hz".into()));
            assert!(e.expected.contains("--fs"), "{}", e.expected);
            assert_eq!(e.found, bad.to_string());
        }
        for bits in [0, 33] {
            let e = read_record(&path, &cli(1e6, bits)).unwrap_err();
            assert_eq!(e.location, Location::Key("bits".into()));
            assert_eq!(e.path, path.display().to_string());
        }
        let mut s = cli(1e6, 12);
        s.meta.fin_hz = Some(-3.0);
        let e = read_record(&path, &s).unwrap_err();
        assert_eq!(e.location, Location::Key("fin_hz".into()));
        let mut s = cli(1e6, 12);
        s.meta.full_scale_vpp = Some(0.0);
        let e = read_record(&path, &s).unwrap_err();
        assert_eq!(e.location, Location::Key("full_scale_vpp".into()));
    }

    // Found by tests/fuzz_props.rs: --fs 1e308 passed the positive-and-finite check and the analysis
    // overflowed into infinite frequencies in its advice.
    #[test]
    fn sample_rate_beyond_the_accepted_range_is_refused() {
        let dir = files(&[("r.txt", ramp_text(20).as_bytes())]);
        let path = dir.path().join("r.txt");
        for (bad, shown) in [
            (1e300, "1e300"),
            (f64::MAX, "1.7976931348623157e308"),
            (1e-320, "1e-320"),
            (1e16, "1e16"),
        ] {
            let e = read_record(&path, &cli(bad, 12)).unwrap_err();
            assert_eq!(e.kind, ErrorKind::BadSetting);
            assert_eq!(e.location, Location::Key("sample_rate_hz".into()));
            assert_eq!(e.found, shown);
            assert!(
                e.expected.starts_with("a sample rate in 1e-6..=1e15 Hz"),
                "{}",
                e.expected
            );
        }
        for good in [1e-6, 1e15] {
            assert!(read_record(&path, &cli(good, 12)).is_ok(), "{good}");
        }
    }

    #[test]
    fn sidecar_supplies_metadata_and_command_line_wins_field_by_field() {
        let dir = files(&[
            ("r.txt", ramp_text(20).as_bytes()),
            (
                "r.json",
                br#"{"sample_rate_hz": 2e6, "bits": 10, "fin_hz": 1000.0, "full_scale_vpp": 1.5}"#,
            ),
        ]);
        let path = dir.path().join("r.txt");
        let r = read_record(&path, &IngestSettings::default())
            .unwrap()
            .record;
        assert_eq!(
            (r.sample_rate_hz, r.bits, r.fin_hint_hz, r.full_scale_vpp),
            (2e6, 10, Some(1000.0), Some(1.5))
        );
        let s = IngestSettings {
            meta: Metadata {
                bits: Some(14),
                fin_hz: Some(999.0),
                ..Metadata::default()
            },
            ..IngestSettings::default()
        };
        let r = read_record(&path, &s).unwrap().record;
        assert_eq!(
            (r.sample_rate_hz, r.bits, r.fin_hint_hz, r.full_scale_vpp),
            (2e6, 14, Some(999.0), Some(1.5))
        );
    }

    #[test]
    fn metadata_fallback_is_field_by_field() {
        let top = Metadata {
            sample_rate_hz: Some(1.0),
            bits: None,
            fin_hz: Some(3.0),
            full_scale_vpp: None,
        };
        let low = Metadata {
            sample_rate_hz: Some(10.0),
            bits: Some(12),
            fin_hz: None,
            full_scale_vpp: Some(2.0),
        };
        assert_eq!(
            top.with_fallback(&low),
            Metadata {
                sample_rate_hz: Some(1.0),
                bits: Some(12),
                fin_hz: Some(3.0),
                full_scale_vpp: Some(2.0),
            }
        );
    }

    #[test]
    fn bad_sidecar_values_name_the_sidecar() {
        let dir = files(&[
            ("r.txt", ramp_text(20).as_bytes()),
            ("r.json", br#"{"sample_rate_hz": -5.0, "bits": 12}"#),
        ]);
        let e = read_record(&dir.path().join("r.txt"), &IngestSettings::default()).unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadSetting);
        assert_eq!(e.location, Location::Key("sample_rate_hz".into()));
        assert!(e.path.ends_with("r.json"), "{}", e.path);
        assert_eq!(e.found, "-5");
        // The command line's value replaces the bad one.
        assert!(read_record(&dir.path().join("r.txt"), &cli(1e6, 12)).is_ok());

        let dir = files(&[
            ("r.txt", ramp_text(20).as_bytes()),
            ("r.json", b"{\n  \"bits\": 12,\n  \"fs\": 1\n}"),
        ]);
        let e = read_record(&dir.path().join("r.txt"), &cli(1e6, 12)).unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadMetadata);
        assert_eq!(e.location, Location::LineColumn(3, 6));
    }

    #[test]
    fn a_json_record_is_refused() {
        let dir = files(&[("r.json", b"{}")]);
        let e = read_record(&dir.path().join("r.json"), &cli(1e6, 12)).unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadSetting);
        assert!(e.expected.contains("sidecar"));
    }

    #[test]
    fn csv_by_extension_and_column_precedence() {
        let csv = "t,a,b\n".to_string()
            + &(0..20)
                .map(|i| format!("{i},{},{}\n", i % 7, -(i % 5)))
                .collect::<String>();
        let dir = files(&[("r.csv", csv.as_bytes()), ("r.json", br#"{"column": "b"}"#)]);
        let path = dir.path().join("r.csv");
        // Sidecar column over the default column 0.
        let r = read_record(&path, &cli(1e6, 8)).unwrap().record;
        assert_eq!(&r.codes[..6], &[0, -1, -2, -3, -4, 0]);
        // Command-line column over the sidecar.
        let mut s = cli(1e6, 8);
        s.column = Some(ColumnSel::Index(1));
        let r = read_record(&path, &s).unwrap().record;
        assert_eq!(&r.codes[..8], &[0, 1, 2, 3, 4, 5, 6, 0]);
        // Without a sidecar or --column: "t" counts samples (whole numbers stepping by 1), and two
        // signal columns are left: the error lists them by name.
        let dir = files(&[("r.csv", csv.as_bytes())]);
        let e = read_record(&dir.path().join("r.csv"), &cli(1e6, 8)).unwrap_err();
        assert_eq!(
            (e.kind, e.location),
            (ErrorKind::BadSetting, Location::Line(1))
        );
        assert_eq!(e.found, "columns 't' (index), 'a', 'b'");
        assert!(e.expected.contains("--column"), "{}", e.expected);
        // With one signal column left, it is chosen.
        let two: String = "n,code\n".to_string()
            + &(0..20)
                .map(|i| format!("{i},{}\n", i % 7))
                .collect::<String>();
        let dir = files(&[("r.csv", two.as_bytes())]);
        let r = read_record(&dir.path().join("r.csv"), &cli(1e6, 8))
            .unwrap()
            .record;
        assert_eq!(&r.codes[..8], &[0, 1, 2, 3, 4, 5, 6, 0]);
    }

    // Sources: a preamble of settings before a header and a time column in seconds are how bench
    // instruments commonly write CSV (common practice, no source); the rates are worked by hand.
    #[test]
    fn instrument_csv_preamble_time_column_and_rate() {
        let table = |dt: f64, unit: &str| {
            format!("Model,X\nSample interval: {dt}\n\nTime {unit},CH1\n")
                + &(0..32)
                    .map(|k| format!("{:e},{}\n", k as f64 * dt, (k * 5) % 11 - 5))
                    .collect::<String>()
        };
        let dir = files(&[
            ("s.csv", table(4e-9, "(s)").as_bytes()),
            ("us.csv", table(0.5, "[us]").as_bytes()),
        ]);
        let mut s = cli(1.0, 8);
        s.meta.sample_rate_hz = None;
        // 250 MHz from 4 ns steps; the preamble's lines are skipped, CH1 chosen.
        let r = read_record(&dir.path().join("s.csv"), &s).unwrap().record;
        assert!(
            (r.sample_rate_hz - 250e6).abs() < 1e-3,
            "{}",
            r.sample_rate_hz
        );
        assert_eq!(&r.codes[..3], &[-5, 0, 5]);
        // 0.5 us steps: 2 MHz.
        let r = read_record(&dir.path().join("us.csv"), &s).unwrap().record;
        assert!(
            (r.sample_rate_hz - 2e6).abs() < 1e-6,
            "{}",
            r.sample_rate_hz
        );
        // A rate given that disagrees with the time column is refused; one that agrees is fine.
        let e = read_record(&dir.path().join("s.csv"), &cli(100e6, 8)).unwrap_err();
        assert_eq!(
            (e.kind, e.location),
            (
                ErrorKind::BadSetting,
                Location::Key("sample_rate_hz".into())
            )
        );
        assert!(
            e.expected.contains("Time (s)") && e.expected.contains("31 steps"),
            "{}",
            e.expected
        );
        assert!(read_record(&dir.path().join("s.csv"), &cli(250e6, 8)).is_ok());
        // Uneven time stamps give no rate: with none given, the rate is asked for, and the warning
        // names the sample off the grid.
        let uneven = "Time (s),CH1\n".to_string()
            + &(0..32)
                .map(|k| {
                    let t = if k == 5 { 5.5e-6 } else { k as f64 * 1e-6 };
                    format!("{t:e},{}\n", (k * 5) % 11 - 5)
                })
                .collect::<String>();
        let dir = files(&[("u.csv", uneven.as_bytes())]);
        let e = read_record(&dir.path().join("u.csv"), &s).unwrap_err();
        assert_eq!(e.location, Location::Key("sample_rate_hz".into()));
        let w = read_record(&dir.path().join("u.csv"), &cli(1e6, 8))
            .unwrap()
            .warnings;
        assert!(
            w[0].contains("sample 5") && w[0].contains("Time (s)"),
            "{w:?}"
        );
    }

    #[test]
    fn csv_delimiter_precedence() {
        let csv =
            "a;b\n".to_string() + &(0..20).map(|i| format!("{i};{}\n", -i)).collect::<String>();
        let dir = files(&[
            ("r.csv", csv.as_bytes()),
            ("r.json", br#"{"delimiter": ",", "column": 1}"#),
        ]);
        let path = dir.path().join("r.csv");
        // The sidecar's ',' makes each row one field: column 1 does not exist.
        let e = read_record(&path, &cli(1e6, 8)).unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadSetting);
        assert_eq!(e.location, Location::Line(1));
        let mut s = cli(1e6, 8);
        s.delimiter = Some(b';');
        let r = read_record(&path, &s).unwrap().record;
        assert_eq!(r.codes, (0..20).map(|i| -i).collect::<Vec<i32>>());
    }

    #[test]
    fn raw_binary_needs_a_format() {
        for name in ["r.bin", "r.raw", "r.DAT"] {
            let dir = files(&[(name, &le16(&[0; 32]))]);
            let e = read_record(&dir.path().join(name), &cli(1e6, 12)).unwrap_err();
            assert_eq!(e.kind, ErrorKind::BadSetting, "{name}");
            assert_eq!(e.location, Location::Key("format".into()));
            assert!(
                e.expected.contains("--format") && e.expected.contains("i16le"),
                "{}",
                e.expected
            );
        }
    }

    #[test]
    fn raw_binary_layout_from_sidecar() {
        // 4-byte header, then frames of 2 channels; channel 2 holds 12-bit codes left-justified in
        // big-endian offset-binary words.
        let mut bytes = vec![0xEE; 4];
        for k in 0..20u16 {
            bytes.extend(0x1234u16.to_be_bytes());
            bytes.extend(((k * 100) << 4 | 0x3).to_be_bytes());
        }
        let sidecar = br#"{"format": "u16be", "justify": "left", "skip_bytes": 4, "channel": "2/2",
            "sample_rate_hz": 1e5, "bits": 12, "generator": {"by": "test"}}"#;
        let dir = files(&[("r.bin", &bytes), ("r.json", sidecar)]);
        let path = dir.path().join("r.bin");
        let r = read_record(&path, &IngestSettings::default())
            .unwrap()
            .record;
        assert_eq!(
            r.codes,
            (0..20).map(|k| k * 100 - 2048).collect::<Vec<i32>>()
        );
        assert_eq!((r.sample_rate_hz, r.bits), (1e5, 12));
    }

    // Large and small files (read in one piece or several) must give the same
    // codes (slow reference: the words written), for binary and text records.
    #[test]
    fn large_and_small_files_give_the_same_codes() {
        // i16 words: a file above the 1 MiB the reader once mapped, read in more than one piece.
        const BIG_BYTES: u64 = 1 << 20;
        let big = (BIG_BYTES as usize) / 2 + 17;
        let words: Vec<i16> = (0..big).map(|i| (i % 4001) as i16 - 2000).collect();
        let sidecar = br#"{"format": "i16le", "sample_rate_hz": 1e6, "bits": 12}"#;
        let text: String = words.iter().map(|w| format!("{w}\n")).collect();
        let dir = files(&[
            ("big.bin", &le16(&words)),
            ("big.json", sidecar),
            ("small.bin", &le16(&words[..1000])),
            ("small.json", sidecar),
            ("plain.txt", text.as_bytes()),
        ]);
        assert!(std::fs::metadata(dir.path().join("big.bin")).unwrap().len() >= BIG_BYTES);
        let read = |name: &str, s: &IngestSettings| {
            read_record(&dir.path().join(name), s).unwrap().record.codes
        };
        let want: Vec<i32> = words.iter().map(|&w| w as i32).collect();
        assert_eq!(read("big.bin", &IngestSettings::default()), want);
        assert_eq!(read("small.bin", &IngestSettings::default()), want[..1000]);
        let mut t = IngestSettings::default();
        t.meta.bits = Some(12);
        t.meta.sample_rate_hz = Some(1e6);
        assert_eq!(read("plain.txt", &t), want);
    }

    #[test]
    fn memory_ceiling_refuses_before_reading_and_after_counting() {
        let words: Vec<i16> = (0..4096).map(|i| (i % 2001) as i16 - 1000).collect();
        let text: String = words.iter().map(|w| format!("{w}\n")).collect();
        let dir = files(&[("r.bin", &le16(&words)), ("r.txt", text.as_bytes())]);
        let mut s = cli(1e6, 12);
        s.format = Some(Format::Binary(Format::parse_word("i16le").unwrap()));
        // 8 KiB of words: 8192 bytes plus the analysis of 4096 samples.
        let need = 8192 + 4096 * resources::ANALYSIS_BYTES_PER_SAMPLE;
        s.max_memory_bytes = need;
        assert_eq!(
            read_record(&dir.path().join("r.bin"), &s)
                .unwrap()
                .record
                .codes
                .len(),
            4096
        );
        s.max_memory_bytes = need - 1;
        let e = read_record(&dir.path().join("r.bin"), &s).unwrap_err();
        assert_eq!(e.kind, ErrorKind::TooLarge);
        assert!(
            e.found.contains("4096 samples") && e.found.contains(&need.to_string()),
            "{e}"
        );
        assert!(e.expected.contains("--max-memory"), "{e}");
        // Text: the reading fits, the analysis of the samples counted does not.
        let mut t = cli(1e6, 12);
        t.max_memory_bytes = 4096 * resources::ANALYSIS_BYTES_PER_SAMPLE - 1;
        let e = read_record(&dir.path().join("r.txt"), &t).unwrap_err();
        assert_eq!(e.kind, ErrorKind::TooLarge);
        assert!(e.found.starts_with("4096 samples"), "{e}");
    }

    #[cfg(target_os = "linux")]
    #[test]
    fn special_files_are_refused_or_read_with_a_bound() {
        let e = read_record(Path::new("/dev/zero"), &cli(1e6, 12)).unwrap_err();
        assert_eq!(e.kind, ErrorKind::Io);
        assert!(
            e.found.contains("character device") && e.found.contains("--stream"),
            "{e}"
        );
        let mut s = cli(1e6, 12);
        s.stream = true;
        s.format = Some(Format::Binary(Format::parse_word("i16le").unwrap()));
        s.max_memory_bytes = 1 << 20;
        let e = read_record(Path::new("/dev/zero"), &s).unwrap_err();
        assert_eq!(e.kind, ErrorKind::TooLarge, "{e}");
        // A quarter of the 1 MiB ceiling.
        assert!(e.expected.contains("262144 bytes"), "{e}");
    }

    #[test]
    fn command_line_layout_wins_over_sidecar() {
        // Two channels of little-endian i16, no header: channel 1 = k, channel 2 = -k.
        let mut words = Vec::new();
        for k in 0..20i16 {
            words.extend([k, -k]);
        }
        let mut bytes = vec![0u8; 2];
        bytes.extend(le16(&words));
        let sidecar = br#"{"format": "u16be", "skip_bytes": 0, "channel": "1/2", "coding": "offset_binary", "justify": "left"}"#;
        let dir = files(&[("r.bin", &bytes), ("r.json", sidecar)]);
        let path = dir.path().join("r.bin");
        let s = IngestSettings {
            format: Some(Format::Binary(Format::parse_word("i16le").unwrap())),
            coding: Some(Coding::TwosComplement),
            justify: Some(Justify::Right),
            skip_bytes: Some(2),
            channel: Some(parse_channel("2/2").unwrap()),
            ..cli(1e6, 16)
        };
        let r = read_record(&path, &s).unwrap().record;
        assert_eq!(r.codes, (0..20).map(|k| -k).collect::<Vec<i32>>());
        // Drop the skip override: the sidecar's 0 applies and the words shift by one.
        let s2 = IngestSettings {
            skip_bytes: None,
            ..s.clone()
        };
        let r2 = read_record(&path, &s2);
        // 82 bytes from offset 0: 41 words, so the frame starting at byte 80 is incomplete.
        let e = r2.unwrap_err();
        assert_eq!(e.kind, ErrorKind::PartialWord);
        assert_eq!(e.location, Location::Byte(80));
    }

    #[test]
    fn sidecar_format_text_overrides_the_extension() {
        let dir = files(&[
            ("r.dat", ramp_text(20).as_bytes()),
            (
                "r.json",
                br#"{"format": "text", "bits": 8, "sample_rate_hz": 1.0}"#,
            ),
        ]);
        let r = read_record(&dir.path().join("r.dat"), &IngestSettings::default()).unwrap();
        assert_eq!(r.record.codes.len(), 20);
        let dir = files(&[
            ("r.dat", ramp_text(20).as_bytes()),
            (
                "r.json",
                br#"{"format": "i12", "bits": 8, "sample_rate_hz": 1.0}"#,
            ),
        ]);
        let e = read_record(&dir.path().join("r.dat"), &IngestSettings::default()).unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadMetadata);
        assert_eq!(e.location, Location::Key("format".into()));
        assert!(e.path.ends_with("r.json"));
    }

    #[test]
    fn parser_errors_carry_the_record_path() {
        let dir = files(&[("r.txt", b"1\n2\nthree\n")]);
        let path = dir.path().join("r.txt");
        let e = read_record(&path, &cli(1e6, 12)).unwrap_err();
        assert_eq!(e.kind, ErrorKind::NotInteger);
        assert_eq!(e.path, path.display().to_string());
        assert_eq!(e.location, Location::Line(3));
    }

    #[test]
    fn warnings_report_codes_and_unused_settings() {
        let text: String = (0..32)
            .map(|i| {
                if i < 2 {
                    "-2048\n".to_string()
                } else {
                    format!("{}\n", i)
                }
            })
            .collect();
        let dir = files(&[("r.txt", text.as_bytes())]);
        let s = IngestSettings {
            skip_bytes: Some(4),
            column: Some(ColumnSel::Index(1)),
            ..cli(1e6, 12)
        };
        let w = read_record(&dir.path().join("r.txt"), &s).unwrap().warnings;
        assert_eq!(
            w,
            vec![
                "2 settings not used for a text record, ignored: skip_bytes, column".to_string(),
                "2 samples (6.25%) at the end codes (2 at lowest, 0 at highest): the input may be clipping"
                    .to_string(),
            ]
        );
    }
}

//! Property-based fuzzing of every parser and of the whole analysis, with a fixed seed so that CI is
//! deterministic: arbitrary bytes and near-valid inputs never panic, every error names its file and (when
//! the problem is at a place) the line or byte offset, inside the input, and no figure of any output is
//! NaN or infinite.
//!
//! Sources: the expected codes of the near-valid inputs follow from the ingest rules documented in
//! src/ingest (one code per line, delimited columns, two's complement and offset binary words, left or
//! right justified), which are common practice, no source. The inputs here are built by a separate
//! encoder written for this test, not by the parsers.

use proptest::prelude::*;
use proptest::test_runner::{Config, RngAlgorithm, RngSeed};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use serde::Serialize;
use spurline::{analyze, AnalysisSettings, FitChoice};
use spurline::{max_code, min_code, Coding, ErrorKind, Location, Record};
use spurline::{
    parse_binary, parse_delimited, parse_text, read_record, read_sidecar, BinaryLayout, ColumnSel,
    IngestSettings, Justify, Metadata,
};
use spurline::{SpectrumSettings, Window, WindowChoice};
use std::path::Path;

/// One fixed seed and algorithm for every property, no failure files: the same cases on every run.
///
/// `SPURLINE_PROPTEST_CASES` raises the case count for a longer local run (same seed, more cases).
fn config(cases: u32) -> Config {
    let cases = std::env::var("SPURLINE_PROPTEST_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(cases);
    Config {
        cases,
        rng_algorithm: RngAlgorithm::ChaCha,
        rng_seed: RngSeed::Fixed(0x5bu64 << 32 | 0x1241),
        failure_persistence: None,
        max_shrink_iters: 2000,
        ..Config::default()
    }
}

pub(crate) mod invariants;

use invariants::{check_error, check_outputs, check_read_error, finite, no_nan_words};

// ---------------------------------------------------------------------------------------------------
// Text records
// ---------------------------------------------------------------------------------------------------

/// What a parser should return for a near-valid input: the codes, or the kind and place of the error.
type Predicted = Result<Vec<i32>, (ErrorKind, Location)>;

/// One line of a near-valid text record.
#[derive(Debug, Clone)]
enum TextLine {
    /// A code, with a '+' on non-negative values, padding and a trailing comment as chosen.
    Code {
        value: i64,
        plus: bool,
        pad: &'static str,
        comment: bool,
    },
    /// A run of digits too long for any integer type.
    Huge(String),
    Blank(&'static str),
    Comment,
    /// A token that is not an integer and holds no letter (so never a header).
    Junk(&'static str),
}

fn text_line(bits: u32) -> impl Strategy<Value = TextLine> {
    let (lo, hi) = (min_code(bits), max_code(bits));
    let value = prop_oneof![
        4 => lo..=hi,
        1 => prop_oneof![Just(lo - 1), Just(hi + 1), Just(hi + 1000), Just(-(1i64 << 40) + 1)],
    ];
    prop_oneof![
        8 => (value, any::<bool>(), prop::sample::select(vec!["", " ", "\t", "  "]), any::<bool>())
            .prop_map(|(value, plus, pad, comment)| TextLine::Code { value, plus, pad, comment }),
        1 => "[1-9][0-9]{13,30}".prop_map(TextLine::Huge),
        1 => prop::sample::select(vec!["", "  ", "\t"]).prop_map(TextLine::Blank),
        1 => Just(TextLine::Comment),
        1 => prop::sample::select(vec!["1.5", "- 5", "+", "-", "1,2", "3 4", "--7", "½", "\u{0}", "0.0"])
            .prop_map(TextLine::Junk),
    ]
}

/// Renders the lines and predicts the parse: the codes, or the kind and line of the first bad line.
fn render_text(header: bool, lines: &[TextLine], crlf: bool, bits: u32) -> (Vec<u8>, Predicted) {
    let end = if crlf { "\r\n" } else { "\n" };
    let mut out = String::new();
    let mut number = 0usize;
    let mut codes = Vec::new();
    let mut first_error = None;
    if header {
        out.push_str("adc code");
        out.push_str(end);
        number += 1;
    }
    for l in lines {
        number += 1;
        match l {
            TextLine::Code {
                value,
                plus,
                pad,
                comment,
            } => {
                let sign = if *plus && *value >= 0 { "+" } else { "" };
                out.push_str(&format!("{pad}{sign}{value}{pad}"));
                if *comment {
                    out.push_str("# note");
                }
                if *value < min_code(bits) || *value > max_code(bits) {
                    first_error.get_or_insert((ErrorKind::CodeOutOfRange, Location::Line(number)));
                } else {
                    codes.push(*value as i32);
                }
            }
            TextLine::Huge(d) => {
                out.push_str(d);
                first_error.get_or_insert((ErrorKind::CodeOutOfRange, Location::Line(number)));
            }
            TextLine::Blank(s) => out.push_str(s),
            TextLine::Comment => out.push_str("  # a comment, 1 2 3"),
            TextLine::Junk(s) => {
                out.push_str(s);
                first_error.get_or_insert((ErrorKind::NotInteger, Location::Line(number)));
            }
        }
        out.push_str(end);
    }
    let want = match first_error {
        Some(e) => Err(e),
        None if codes.is_empty() => Err((ErrorKind::Empty, Location::Whole)),
        None => Ok(codes),
    };
    (out.into_bytes(), want)
}

proptest! {
    #![proptest_config(config(256))]

    #[test]
    fn text_arbitrary_bytes_never_panic(bytes in prop::collection::vec(any::<u8>(), 0..600), bits in 1u32..=32) {
        match parse_text(&bytes, "fuzz.txt", bits) {
            Ok(codes) => {
                prop_assert!(!codes.is_empty());
                prop_assert!(codes.iter().all(|&c| (min_code(bits)..=max_code(bits)).contains(&i64::from(c))));
            }
            Err(e) => check_error(&e, "fuzz.txt", &bytes),
        }
    }

    #[test]
    fn text_near_valid_records_parse_as_predicted(
        (bits, lines) in (1u32..=32).prop_flat_map(|b| (Just(b), prop::collection::vec(text_line(b), 0..40))),
        header in any::<bool>(),
        crlf in any::<bool>(),
        bom in any::<bool>(),
    ) {
        let (mut bytes, want) = render_text(header, &lines, crlf, bits);
        if bom {
            bytes.splice(0..0, *b"\xEF\xBB\xBF");
        }
        let got = parse_text(&bytes, "near.txt", bits);
        if let Err(e) = &got {
            check_error(e, "near.txt", &bytes);
        }
        prop_assert_eq!(got.map_err(|e| (e.kind, e.location)), want);
    }
}

// ---------------------------------------------------------------------------------------------------
// Delimited records
// ---------------------------------------------------------------------------------------------------

/// A field of a near-valid delimited row: a code, or a token that is not one and holds no letter.
#[derive(Debug, Clone)]
enum Field {
    Code(i64),
    Junk(&'static str),
}

fn field(bits: u32) -> impl Strategy<Value = Field> {
    let (lo, hi) = (min_code(bits), max_code(bits));
    prop_oneof![
        10 => (lo..=hi).prop_map(Field::Code),
        1 => prop_oneof![Just(lo - 1), Just(hi + 1)].prop_map(Field::Code),
        1 => prop::sample::select(vec!["1.5", "--3", "+", "7-", "0.0"]).prop_map(Field::Junk),
    ]
}

/// A near-valid delimited record: rows of 1..=4 fields, comments and blank lines between them.
#[derive(Debug, Clone)]
struct CsvCase {
    bits: u32,
    delimiter: u8,
    given: bool,
    by_name: bool,
    column: usize,
    crlf: bool,
    /// Each row: None for a comment or blank line, else the fields.
    rows: Vec<Option<Vec<Field>>>,
}

fn csv_case() -> impl Strategy<Value = CsvCase> {
    (1u32..=32)
        .prop_flat_map(|bits| {
            let row = prop_oneof![
                1 => Just(None),
                8 => prop::collection::vec(field(bits), 4..=4).prop_map(Some),
                1 => prop::collection::vec(field(bits), 1..=3).prop_map(Some),
            ];
            (
                Just(bits),
                prop::sample::select(vec![b',', b';', b'\t', b' ']),
                any::<bool>(),
                any::<bool>(),
                0usize..4,
                any::<bool>(),
                prop::collection::vec(row, 0..30),
            )
        })
        .prop_map(
            |(bits, delimiter, given, by_name, column, crlf, rows)| CsvCase {
                bits,
                delimiter,
                given,
                by_name,
                column,
                crlf,
                rows,
            },
        )
}

/// Renders the case (a four-column header "h0".."h3" first) and predicts the parse.
fn render_csv(c: &CsvCase) -> (Vec<u8>, Predicted) {
    let end = if c.crlf { "\r\n" } else { "\n" };
    let sep = (c.delimiter as char).to_string();
    let mut out = format!("# capture{end}h0{sep}h1{sep}h2{sep}h3{end}");
    let mut number = 2usize;
    let mut codes = Vec::new();
    let mut first_error = None;
    for row in &c.rows {
        number += 1;
        let Some(fields) = row else {
            out.push_str(if number.is_multiple_of(2) {
                "# 1,2;3"
            } else {
                ""
            });
            out.push_str(end);
            continue;
        };
        let text: Vec<String> = fields
            .iter()
            .map(|f| match f {
                Field::Code(v) => v.to_string(),
                Field::Junk(s) => s.to_string(),
            })
            .collect();
        out.push_str(&text.join(&sep));
        out.push_str(end);
        if first_error.is_some() {
            continue;
        }
        match fields.get(c.column) {
            None => first_error = Some((ErrorKind::NotInteger, Location::Line(number))),
            Some(Field::Junk(_)) => {
                first_error = Some((ErrorKind::NotInteger, Location::Line(number)))
            }
            Some(Field::Code(v)) => {
                if *v < min_code(c.bits) || *v > max_code(c.bits) {
                    first_error = Some((ErrorKind::CodeOutOfRange, Location::Line(number)));
                } else {
                    codes.push(*v as i32);
                }
            }
        }
    }
    let want = match first_error {
        Some(e) => Err(e),
        None if codes.is_empty() => Err((ErrorKind::Empty, Location::Whole)),
        None => Ok(codes),
    };
    (out.into_bytes(), want)
}

fn column_sel() -> impl Strategy<Value = ColumnSel> {
    prop_oneof![
        (0usize..6).prop_map(ColumnSel::Index),
        prop::sample::select(vec!["code", "a", "", "h1", "b"])
            .prop_map(|s| ColumnSel::Name(s.into())),
    ]
}

proptest! {
    #![proptest_config(config(256))]

    #[test]
    fn csv_arbitrary_bytes_never_panic(
        bytes in prop_oneof![
            prop::collection::vec(any::<u8>(), 0..400),
            prop::collection::vec(prop::sample::select(b"0123456789-+,;\t \"#\r\nab.".to_vec()), 0..400),
        ],
        bits in 1u32..=32,
        column in column_sel(),
        delimiter in prop::option::of(prop::sample::select(b",; \t|:x\"".to_vec())),
    ) {
        match parse_delimited(&bytes, "fuzz.csv", bits, &column, delimiter) {
            Ok(codes) => prop_assert!(!codes.is_empty()),
            Err(e) => check_error(&e, "fuzz.csv", &bytes),
        }
    }

    #[test]
    fn csv_near_valid_records_parse_as_predicted(c in csv_case()) {
        let (bytes, want) = render_csv(&c);
        let column = if c.by_name {
            ColumnSel::Name(format!("h{}", c.column))
        } else {
            ColumnSel::Index(c.column)
        };
        // Detection reads the header row, which always holds three of the delimiter.
        let delimiter = c.given.then_some(c.delimiter);
        let got = parse_delimited(&bytes, "near.csv", c.bits, &column, delimiter);
        if let Err(e) = &got {
            check_error(e, "near.csv", &bytes);
        }
        prop_assert_eq!(got.map_err(|e| (e.kind, e.location)), want);
    }
}

// ---------------------------------------------------------------------------------------------------
// Raw binary records
// ---------------------------------------------------------------------------------------------------

fn layout() -> impl Strategy<Value = BinaryLayout> {
    (
        prop::sample::select(vec![1usize, 2, 3, 4]),
        any::<bool>(),
        any::<bool>(),
        prop::option::of(prop_oneof![
            Just(Coding::TwosComplement),
            Just(Coding::OffsetBinary)
        ]),
        prop_oneof![Just(Justify::Right), Just(Justify::Left)],
        0u64..12,
        1usize..5,
    )
        .prop_flat_map(
            |(word_bytes, signed, big_endian, coding, justify, skip_bytes, channels)| {
                (0..channels).prop_map(move |channel| BinaryLayout {
                    word_bytes,
                    signed,
                    big_endian,
                    coding,
                    justify,
                    skip_bytes,
                    channel,
                    channels,
                    packing: None,
                })
            },
        )
}

/// Layouts as a user or sidecar could give them, out-of-range parts included.
fn wild_layout() -> impl Strategy<Value = BinaryLayout> {
    (
        layout(),
        prop_oneof![
            8 => Just(None),
            1 => prop::sample::select(vec![0usize, 5, 8]).prop_map(Some),
        ],
        prop_oneof![
            8 => Just(None),
            1 => prop::sample::select(vec![(0usize, 0usize), (5, 2), (1, usize::MAX), (usize::MAX - 1, usize::MAX), (usize::MAX / 2, usize::MAX / 2 + 1)]).prop_map(Some),
        ],
        prop_oneof![8 => Just(None), 1 => prop::sample::select(vec![u64::MAX, 1 << 40]).prop_map(Some)],
    )
        .prop_map(|(mut l, w, ch, skip)| {
            if let Some(w) = w {
                l.word_bytes = w;
            }
            if let Some((k, m)) = ch {
                l.channel = k;
                l.channels = m;
            }
            if let Some(s) = skip {
                l.skip_bytes = s;
            }
            l
        })
}

/// Encodes one code as a raw word for the layout (`variant` picks the padding: sign extension or zero
/// above a right-justified two's-complement code, and the ignored bits below a left-justified one).
fn encode(code: i64, bits: u32, l: &BinaryLayout, variant: u32) -> u32 {
    let word_bits = 8 * l.word_bytes as u32;
    let pad = word_bits - bits;
    let word_mask = if word_bits == 32 {
        u32::MAX as u64
    } else {
        (1u64 << word_bits) - 1
    };
    let code_mask = (1u64 << bits) - 1;
    let half = 1i64 << (bits - 1);
    let signed_default = if l.signed {
        Coding::TwosComplement
    } else {
        Coding::OffsetBinary
    };
    let raw: u64 = match (l.justify, l.coding.unwrap_or(signed_default)) {
        (Justify::Right, Coding::TwosComplement) => {
            if variant.is_multiple_of(2) {
                (code as u64) & word_mask
            } else {
                (code as u64) & code_mask
            }
        }
        (Justify::Right, Coding::OffsetBinary) => (code + half) as u64,
        (Justify::Left, c) => {
            let field = match c {
                Coding::TwosComplement => (code as u64) & code_mask,
                Coding::OffsetBinary => (code + half) as u64,
            };
            let below = if pad == 0 {
                0
            } else {
                u64::from(variant) & ((1u64 << pad) - 1)
            };
            (field << pad) | below
        }
    };
    raw as u32
}

fn word_bytes(raw: u32, l: &BinaryLayout) -> Vec<u8> {
    match (l.word_bytes, l.big_endian) {
        (1, _) => vec![raw as u8],
        (2, false) => (raw as u16).to_le_bytes().to_vec(),
        (2, true) => (raw as u16).to_be_bytes().to_vec(),
        (3, false) => raw.to_le_bytes()[..3].to_vec(),
        (3, true) => raw.to_be_bytes()[1..].to_vec(),
        (_, false) => raw.to_le_bytes().to_vec(),
        (_, true) => raw.to_be_bytes().to_vec(),
    }
}

proptest! {
    #![proptest_config(config(256))]

    #[test]
    fn binary_arbitrary_bytes_never_panic(
        bytes in prop::collection::vec(any::<u8>(), 0..300),
        bits in 1u32..=34,
        l in wild_layout(),
    ) {
        match parse_binary(&bytes, "fuzz.bin", bits, &l) {
            Ok(codes) => {
                prop_assert!(!codes.is_empty());
                prop_assert!(codes.iter().all(|&c| (min_code(bits)..=max_code(bits)).contains(&i64::from(c))));
            }
            Err(e) => {
                check_error(&e, "fuzz.bin", &bytes);
                if e.kind == ErrorKind::CodeOutOfRange {
                    // The offset is the start of the bad word, on a word boundary after the header.
                    let Location::Byte(b) = e.location else { panic!("{e:?}") };
                    prop_assert_eq!((b - l.skip_bytes) % l.word_bytes as u64, 0);
                    prop_assert!(b as usize + l.word_bytes <= bytes.len());
                }
            }
        }
    }

    #[test]
    fn binary_every_layout_round_trips(
        (l, bits) in layout().prop_flat_map(|l| { let w = 8 * l.word_bytes as u32; (Just(l), 1..=w) }),
        seed in any::<u64>(),
        count in 0usize..64,
    ) {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let codes: Vec<i64> = (0..count).map(|_| rng.gen_range(min_code(bits)..=max_code(bits))).collect();
        let mut bytes: Vec<u8> = (0..l.skip_bytes).map(|_| rng.gen()).collect();
        for &c in &codes {
            for ch in 0..l.channels {
                if ch == l.channel {
                    let raw = encode(c, bits, &l, rng.gen());
                    bytes.extend(word_bytes(raw, &l));
                } else {
                    bytes.extend((0..l.word_bytes).map(|_| rng.gen::<u8>()));
                }
            }
        }
        let got = parse_binary(&bytes, "rt.bin", bits, &l);
        if codes.is_empty() {
            let e = got.unwrap_err();
            prop_assert_eq!(e.kind, ErrorKind::Empty);
            check_error(&e, "rt.bin", &bytes);
        } else {
            let want: Vec<i32> = codes.iter().map(|&c| c as i32).collect();
            prop_assert_eq!(got.unwrap(), want);
            // One byte too many: a partial word (or, for one-byte words, a partial frame) at the end,
            // named by its offset, the last byte. One-byte words in one channel have no partial word.
            if l.word_bytes > 1 || l.channels > 1 {
                bytes.push(0);
                let e = parse_binary(&bytes, "rt.bin", bits, &l).unwrap_err();
                prop_assert_eq!(e.kind, ErrorKind::PartialWord);
                prop_assert_eq!(e.location.clone(), Location::Byte(bytes.len() as u64 - 1));
                check_error(&e, "rt.bin", &bytes);
            }
        }
    }
}

/// Writes N-bit fields as a bit stream, one bit at a time (the slow reference for packed samples):
/// least significant bit first into the low bits of each byte, or most significant bit first into the
/// high bits. Sources: the layout documented on `spurline::Packing`; bit streams in either order are
/// common practice, no source.
fn bit_stream(fields: &[u32], n: u32, msb_first: bool) -> Vec<u8> {
    let mut out = vec![0u8; (fields.len() * n as usize).div_ceil(8)];
    let mut at = 0usize;
    for &f in fields {
        for b in 0..n {
            let bit = if msb_first {
                (f >> (n - 1 - b)) & 1
            } else {
                (f >> b) & 1
            };
            let shift = if msb_first { 7 - at % 8 } else { at % 8 };
            out[at / 8] |= (bit as u8) << shift;
            at += 1;
        }
    }
    out
}

proptest! {
    #![proptest_config(config(256))]

    #[test]
    fn packed_samples_round_trip_and_never_panic(
        n in prop::sample::select(vec![10u32, 12, 14]),
        msb_first in any::<bool>(),
        offset in any::<bool>(),
        fewer in 0u32..4,
        channels in 1usize..4,
        seed in any::<u64>(),
        groups in 1usize..20,
        extra in 0usize..8,
    ) {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let p = spurline::Packing { bits: n, msb_first };
        let word = format!("p{n}{}", if msb_first { "be" } else { "le" });
        let mut l = spurline::Format::parse_word(&word).unwrap();
        l.coding = Some(if offset { Coding::OffsetBinary } else { Coding::TwosComplement });
        l.channels = channels;
        l.channel = rng.gen_range(0..channels);
        let bits = n - fewer;
        let total = groups * p.group_samples() * channels;
        let codes: Vec<i64> = (0..total).map(|_| rng.gen_range(min_code(bits)..=max_code(bits))).collect();
        // Right-justified: offset binary as code + 2^(bits-1), two's complement sign-extended to n bits.
        let fields: Vec<u32> = codes
            .iter()
            .map(|&c| if offset { (c + (1 << (bits - 1))) as u32 } else { (c as u32) & ((1 << n) - 1) })
            .collect();
        let bytes = bit_stream(&fields, n, msb_first);
        prop_assert_eq!(bytes.len() % p.group_bytes(), 0);
        let want: Vec<i32> = codes.iter().skip(l.channel).step_by(channels).map(|&c| c as i32).collect();
        prop_assert_eq!(parse_binary(&bytes, "p.bin", bits, &l).unwrap(), want);
        // Bytes past the last whole group: a partial word at the first of them.
        let mut longer = bytes.clone();
        longer.extend((0..extra).map(|_| rng.gen::<u8>()));
        match parse_binary(&longer, "p.bin", bits, &l) {
            Ok(_) => prop_assert_eq!(extra % p.group_bytes(), 0),
            Err(e) => {
                check_error(&e, "p.bin", &longer);
                if extra % p.group_bytes() != 0 {
                    prop_assert_eq!(e.kind, ErrorKind::PartialWord);
                    let whole = longer.len() / p.group_bytes() * p.group_bytes();
                    prop_assert_eq!(e.location, Location::Byte(whole as u64));
                }
            }
        }
        // Random bytes never panic and give codes in range or a located error.
        let noise: Vec<u8> = (0..rng.gen_range(0..40)).map(|_| rng.gen()).collect();
        match parse_binary(&noise, "p.bin", bits, &l) {
            Ok(codes) => prop_assert!(codes.iter().all(|&c| (min_code(bits)..=max_code(bits)).contains(&i64::from(c)))),
            Err(e) => check_error(&e, "p.bin", &noise),
        }
    }
}

// ---------------------------------------------------------------------------------------------------
// Sidecar JSON
// ---------------------------------------------------------------------------------------------------

const SIDECAR_KEYS: [&str; 12] = [
    "sample_rate_hz",
    "bits",
    "fin_hz",
    "full_scale_vpp",
    "format",
    "coding",
    "justify",
    "skip_bytes",
    "channel",
    "column",
    "delimiter",
    "generator",
];

fn json_value() -> impl Strategy<Value = String> {
    prop_oneof![
        prop::sample::select(vec![
            "0",
            "1",
            "12",
            "16",
            "33",
            "-1",
            "1e6",
            "1e400",
            "-0.0",
            "0.5",
            "18446744073709551615",
            "18446744073709551616",
            "1e-320",
            "4294967296",
        ])
        .prop_map(str::to_string),
        prop::sample::select(vec![
            "\"text\"",
            "\"csv\"",
            "\"i16le\"",
            "\"u8\"",
            "\"u32be\"",
            "\"i24le\"",
            "\"\"",
            "\"twos_complement\"",
            "\"offset_binary\"",
            "\"left\"",
            "\"right\"",
            "\"2/4\"",
            "\"1/1\"",
            "\"0/0\"",
            "\"3/2\"",
            "\"1/18446744073709551615\"",
            "\"18446744073709551615/18446744073709551615\"",
            "\";\"",
            "\";;\"",
            "\"\\t\"",
            "\" \"",
            "\"é\"",
            "\"code\"",
            "\"\\u0000\"",
        ])
        .prop_map(str::to_string),
        prop::sample::select(vec![
            "null",
            "true",
            "[]",
            "{}",
            "[1, {\"x\": null}]",
            "{\"by\": \"t\"}"
        ])
        .prop_map(str::to_string),
    ]
}

/// A sidecar text: an object of keys (mostly known ones) and values of any type, then perhaps cut or
/// with one byte changed.
fn sidecar_text() -> impl Strategy<Value = Vec<u8>> {
    let key = prop_oneof![
        6 => prop::sample::select(SIDECAR_KEYS.to_vec()).prop_map(str::to_string),
        1 => prop::sample::select(vec!["fs", "Bits", "", "bits "]).prop_map(str::to_string),
    ];
    (
        prop::collection::vec((key, json_value()), 0..8),
        prop_oneof![4 => Just(None), 1 => (any::<prop::sample::Index>(), any::<u8>(), any::<bool>()).prop_map(Some)],
    )
        .prop_map(|(pairs, mutation)| {
            let body: Vec<String> = pairs
                .iter()
                .map(|(k, v)| format!("  \"{k}\": {v}"))
                .collect();
            let mut bytes = format!("{{\n{}\n}}\n", body.join(",\n")).into_bytes();
            if let Some((at, byte, cut)) = mutation {
                let i = at.index(bytes.len());
                if cut {
                    bytes.truncate(i);
                } else {
                    bytes[i] = byte;
                }
            }
            bytes
        })
}

/// Writes a record and its sidecar into a fresh folder.
fn record_with_sidecar(name: &str, record: &[u8], sidecar: &[u8]) -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join(name), record).unwrap();
    let stem = Path::new(name).file_stem().unwrap();
    std::fs::write(dir.path().join(stem).with_extension("json"), sidecar).unwrap();
    dir
}

/// A valid record of each kind, 64 samples of 8-bit codes.
fn record_bytes(ext: &str) -> Vec<u8> {
    let codes: Vec<i32> = (0..64).map(|i| (i * 37 % 256) - 128).collect();
    match ext {
        "txt" => codes
            .iter()
            .map(|c| format!("{c}\n"))
            .collect::<String>()
            .into_bytes(),
        "csv" => ("code,x\n".to_string()
            + &codes.iter().map(|c| format!("{c},1\n")).collect::<String>())
            .into_bytes(),
        _ => codes
            .iter()
            .flat_map(|&c| (c as i16).to_le_bytes())
            .collect(),
    }
}

proptest! {
    #![proptest_config(config(192))]

    #[test]
    fn sidecar_arbitrary_bytes_never_panic(bytes in prop::collection::vec(any::<u8>(), 0..200)) {
        let dir = record_with_sidecar("r.bin", &record_bytes("bin"), &bytes);
        let side = dir.path().join("r.json").display().to_string();
        match read_sidecar(&dir.path().join("r.bin")) {
            Ok(s) => prop_assert!(s.is_some()),
            Err(e) => {
                prop_assert_eq!(e.kind, ErrorKind::BadMetadata);
                prop_assert!(matches!(e.location, Location::LineColumn(..)), "{:?}", e);
                check_error(&e, &side, &bytes);
            }
        }
    }

    #[test]
    fn sidecar_near_valid_never_panics_and_names_its_place(
        text in sidecar_text(),
        ext in prop::sample::select(vec!["txt", "csv", "bin"]),
        cli in prop_oneof![Just(None), Just(Some((1e6, 8u32)))],
    ) {
        let name = format!("r.{ext}");
        let record = record_bytes(ext);
        let dir = record_with_sidecar(&name, &record, &text);
        let path = dir.path().join(&name);
        if let Err(e) = read_sidecar(&path) {
            prop_assert_eq!(e.kind, ErrorKind::BadMetadata);
            check_error(&e, &dir.path().join("r.json").display().to_string(), &text);
        }
        let settings = IngestSettings {
            meta: Metadata {
                sample_rate_hz: cli.map(|c| c.0),
                bits: cli.map(|c| c.1),
                ..Metadata::default()
            },
            ..IngestSettings::default()
        };
        match read_record(&path, &settings) {
            Ok(r) => {
                prop_assert!(!r.record.codes.is_empty());
                for w in &r.warnings {
                    no_nan_words(w);
                }
            }
            Err(e) => check_read_error(&e, dir.path(), &name, &record, &text),
        }
    }
}

// ---------------------------------------------------------------------------------------------------
// The whole analysis
// ---------------------------------------------------------------------------------------------------

/// The shape of a generated record.
#[derive(Debug, Clone)]
enum Shape {
    /// Uniform random codes over the whole range.
    Uniform,
    /// A sine of `amplitude` × full scale at `cycles` × N/2 cycles, offset by `offset` × full scale, with
    /// uniform noise of `noise` codes (or, when negative, −`noise` × full scale).
    Sine {
        amplitude: f64,
        cycles: f64,
        offset: f64,
        noise: f64,
    },
    /// The same code everywhere.
    Constant(f64),
    /// A square wave of `cycles` over the record.
    Square(f64),
    /// Zeros and one full-scale sample.
    Impulse,
}

fn shape() -> impl Strategy<Value = Shape> {
    prop_oneof![
        1 => Just(Shape::Uniform),
        12 => (
            prop_oneof![1 => Just(0.0), 1 => Just(1e-9), 8 => 0.001..1.0f64, 2 => 1.0..4.0f64],
            prop_oneof![Just(0.0), Just(0.3), Just(1.0), 0.0..1.0f64, 0.0..1.0f64, 0.0..1.0f64],
            prop_oneof![2 => Just(0.0), 1 => -1.2..1.2f64],
            // Noise in codes: a few LSB, or a part of full scale (given as a negative fraction).
            prop_oneof![Just(0.0), 0.0..3.0f64, -0.05..0.0f64],
        )
            .prop_map(|(amplitude, cycles, offset, noise)| Shape::Sine { amplitude, cycles, offset, noise }),
        1 => (-1.0..1.0f64).prop_map(Shape::Constant),
        1 => (0.0..0.5f64).prop_map(Shape::Square),
        1 => Just(Shape::Impulse),
    ]
}

fn sample_rate() -> impl Strategy<Value = f64> {
    prop_oneof![
        1 => prop::sample::select(vec![
            f64::from_bits(1), 1e-310, 1e-300, 1e-6, 1.0, 1e15, 1e300, f64::MAX, 0.0, -1.0, f64::NAN,
            f64::INFINITY,
        ]),
        6 => (-3.0..12.0f64).prop_map(|e| 10f64.powf(e)),
    ]
}

/// Makes the codes of a shape (the sine's `cycles` is a fraction of the Nyquist count N/2).
fn codes_of(shape: &Shape, n: usize, bits: u32, seed: u64) -> Vec<i32> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let (lo, hi) = (min_code(bits) as f64, max_code(bits) as f64);
    let full = -lo;
    let q = |x: f64| (x + 0.5).floor().clamp(lo, hi) as i32;
    match shape {
        Shape::Uniform => (0..n)
            .map(|_| rng.gen_range(min_code(bits)..=max_code(bits)) as i32)
            .collect(),
        Shape::Sine {
            amplitude,
            cycles,
            offset,
            noise,
        } => {
            let j = cycles * n as f64 / 2.0;
            let phase: f64 = rng.gen_range(0.0..std::f64::consts::TAU);
            (0..n)
                .map(|i| {
                    let x = amplitude
                        * full
                        * (std::f64::consts::TAU * j * i as f64 / n as f64 + phase).sin();
                    let scale = if *noise < 0.0 { -noise * full } else { *noise };
                    let e: f64 = rng.gen_range(-1.0..1.0) * scale;
                    q(x + offset * full + e)
                })
                .collect()
        }
        Shape::Constant(c) => vec![q(c * full); n],
        Shape::Square(c) => (0..n)
            .map(|i| {
                if ((i as f64 * c * 2.0) as u64).is_multiple_of(2) {
                    q(hi)
                } else {
                    q(lo)
                }
            })
            .collect(),
        Shape::Impulse => (0..n).map(|i| if i == n / 3 { q(hi) } else { 0 }).collect(),
    }
}

fn analysis_settings() -> impl Strategy<Value = AnalysisSettings> {
    let window = prop_oneof![
        4 => Just(WindowChoice::Auto),
        1 => prop::sample::select(vec![
            Window::Rectangular,
            Window::Hann,
            Window::BlackmanHarris4,
            Window::BlackmanHarris7,
            Window::Hft90d,
            Window::Hft116d,
            Window::Hft144d,
            Window::Hft169d,
            Window::FlatTop,
            Window::Kaiser { beta: 9.0 },
        ])
        .prop_map(WindowChoice::Fixed),
    ];
    (
        prop_oneof![4 => Just(FitChoice::Four), 1 => Just(FitChoice::Three)],
        window,
        prop_oneof![Just(1u32), Just(10), 1u32..=100],
        prop_oneof![4 => Just(None), 1 => prop::sample::select(vec![0usize, 1, 7, 100, 100_000]).prop_map(Some)],
    )
        .prop_map(|(fit, window, harmonics, guard_bins)| AnalysisSettings {
            fit,
            spectrum: SpectrumSettings {
                window,
                harmonics,
                guard_bins,
            },
            min_samples: 0,
            keep_residual: true,
        })
}

#[test]
fn finite_walker_catches_a_nan_and_an_infinity() {
    // The walker itself must be able to fail, or the analysis property below asserts nothing.
    #[derive(Serialize)]
    struct S {
        a: Option<f64>,
        b: Vec<(u32, f64)>,
    }
    assert!(finite::check(&S {
        a: None,
        b: vec![(1, 2.0)]
    })
    .is_ok());
    let e = finite::check(&S {
        a: Some(f64::NAN),
        b: vec![],
    })
    .unwrap_err();
    assert_eq!(e.0, "a = NaN");
    let e = finite::check(&S {
        a: Some(1.0),
        b: vec![(1, f64::NEG_INFINITY)],
    })
    .unwrap_err();
    assert_eq!(e.0, "b.[].() = -inf");
}

proptest! {
    #![proptest_config(config(512))]

    #[test]
    fn analysis_of_arbitrary_records_never_panics_nor_shows_nan(
        bits in prop_oneof![30 => 1u32..=32, 1 => prop::sample::select(vec![0u32, 33, 64])],
        n in prop_oneof![1 => 0usize..70, 6 => 0usize..5000],
        shape in shape(),
        seed in any::<u64>(),
        fs in sample_rate(),
        // A hint in cycles per sample; NaN stands for "at the generated sine's frequency".
        hint in prop_oneof![
            3 => Just(None),
            3 => Just(Some(f64::NAN)),
            1 => prop::sample::select(vec![0.0, 1e-9, 0.1, 0.25, 0.4999, 0.5, 0.7, 3.0]).prop_map(Some),
            1 => (0.0..0.5f64).prop_map(Some),
        ],
        fsv in prop::option::of(prop::sample::select(vec![2.0, 1e-300, 1e300])),
        settings in analysis_settings(),
    ) {
        // Codes of a valid resolution, so that a record of an invalid one still holds codes.
        let codes = codes_of(&shape, n, bits.clamp(1, 32), seed);
        let record = Record {
            source: "fuzz record".to_string(),
            codes,
            sample_rate_hz: fs,
            bits,
            full_scale_vpp: fsv,
            values: None,
            fin_hint_hz: hint.map(|h| match (&shape, h.is_nan()) {
                (Shape::Sine { cycles, .. }, true) => cycles / 2.0 * fs,
                (_, true) => 0.1 * fs,
                _ => h * fs,
            }),
        };
        let outcome = analyze(&record, &settings);
        match outcome {
            Ok(m) => {
                let a = m.analysis;
                prop_assert!(a.error.is_none());
                for w in &a.warnings {
                    no_nan_words(w);
                }
                check_outputs(&a, std::slice::from_ref(&a));
            }
            Err(e) => {
                prop_assert_eq!(&e.path, "fuzz record", "{:?}", e);
                prop_assert!(!e.expected.is_empty() && !e.found.is_empty(), "{:?}", e);
                let failed = spurline::Analysis::failed("fuzz record", &e, Vec::new());
                if fs.is_finite() {
                    no_nan_words(&e.to_string());
                    check_outputs(&failed, std::slice::from_ref(&failed));
                } else {
                    // The message echoes the rate given ("found NaN"); the figures are still finite.
                    prop_assert_eq!(e.kind, ErrorKind::BadSetting);
                    prop_assert!(finite::check(&failed).is_ok());
                }
            }
        }
    }
}

// ---------------------------------------------------------------------------------------------------
// Bench plans
// ---------------------------------------------------------------------------------------------------

/// A valid plan with every table the format has (converter, analysis, records, conditions with an
/// inline and a sub-table override), one key per line: the base the near-valid plans are edited from.
const PLAN: &str = r#"# near-valid base plan
title = "lot"

[converter]
bits = 12
sample_rate_hz = "100M"
full_scale_vpp = 2.0
format = "i16le"
coding = "twos"
justify = "right"
skip_bytes = 0
channel = "1/1"

[analysis]
fit = "four"
window = "auto"
harmonics = 5
guard_bins = 1
average = 1
amplitude_tolerance_db = 1.0

[records]
pattern = "records/{device}/{condition}_{index}.bin"

[[condition]]
name = "fin_10M"
fin_hz = "10.1M"
amplitude_dbfs = -1.0

[[condition]]
name = "fin_31M"
fin_hz = 31.3e6
amplitude_dbfs = -1.0
analysis = { harmonics = 7, average = 2 }

[[condition]]
name = "fin_49M"
fin_hz = "49.9 MHz"
amplitude_dbfs = -6
[condition.analysis]
window = "hann"
fit = "three"
"#;

/// The same lot with an explicit record list (located without any file).
const PLAN_LIST: &str = r#"[converter]
bits = 8
sample_rate_hz = 1e6
[records]
devices = ["d1", "d2"]
list = [
  { device = "d1", condition = "a", files = ["a/d1.txt"] },
  { device = "d2", condition = "b", files = ["b/d2_1.txt", "b/d2_2.txt"] },
]
[[condition]]
name = "a"
fin_hz = 1000
amplitude_dbfs = -1
[[condition]]
name = "b"
fin_hz = "250k"
amplitude_dbfs = 0.0
analysis = { average = 2 }
"#;

/// Values a key may be given: right and wrong types, ranges' edges, non-finite numbers, bad strings.
const PLAN_VALUES: [&str; 36] = [
    "0",
    "1",
    "32",
    "33",
    "100",
    "101",
    "10000",
    "10001",
    "-1",
    "4294967296",
    "18446744073709551615",
    "1e308",
    "-0.0",
    "nan",
    "inf",
    "-inf",
    "0.5",
    "\"\"",
    "\"100M\"",
    "\"0\"",
    "\"-5k\"",
    "\"1e400\"",
    "\"nanM\"",
    "\"é\"",
    "\"*\"",
    "\"..\"",
    "\"a/b\"",
    "\"{device}\"",
    "\"{x}\"",
    "\"0/0\"",
    "\"3/2\"",
    "\"u24le\"",
    "\"tab\"",
    "true",
    "[]",
    "{ window = 1 }",
];

/// Extra lines a near-valid plan may gain: tables, unknown keys, duplicate names.
const PLAN_LINES: [&str; 12] = [
    "[converter]",
    "[analysis]",
    "[records]",
    "[[condition]]",
    "[condition.analysis]",
    "unknown = 1",
    "name = \"fin_10M\"",
    "devices = [\"d1\", \"d1\"]",
    "list = []",
    "pattern = \"x.bin\"",
    "analysis = { average = 0 }",
    "[[records.list]]",
];

/// One edit of a plan's lines.
#[derive(Debug, Clone)]
enum PlanEdit {
    /// The value of line `.0` (if it has one) becomes `PLAN_VALUES[.1]`.
    Value(prop::sample::Index, usize),
    Drop(prop::sample::Index),
    Duplicate(prop::sample::Index),
    Insert(prop::sample::Index, usize),
}

fn plan_edit() -> impl Strategy<Value = PlanEdit> {
    let i = any::<prop::sample::Index>();
    prop_oneof![
        4 => (i.clone(), 0..PLAN_VALUES.len()).prop_map(|(i, v)| PlanEdit::Value(i, v)),
        1 => i.clone().prop_map(PlanEdit::Drop),
        1 => i.clone().prop_map(PlanEdit::Duplicate),
        1 => (i, 0..PLAN_LINES.len()).prop_map(|(i, v)| PlanEdit::Insert(i, v)),
    ]
}

/// A plan edited from one of the bases, then perhaps cut or with one byte changed.
fn plan_text() -> impl Strategy<Value = String> {
    (
        any::<bool>(),
        prop::collection::vec(plan_edit(), 0..4),
        prop_oneof![6 => Just(None), 1 => (any::<prop::sample::Index>(), any::<u8>(), any::<bool>()).prop_map(Some)],
        any::<bool>(),
    )
        .prop_map(|(list, edits, mutation, crlf)| {
            let base = if list { PLAN_LIST } else { PLAN };
            let mut lines: Vec<String> = base.lines().map(str::to_string).collect();
            for e in edits {
                match e {
                    PlanEdit::Value(i, v) => {
                        let at = i.index(lines.len());
                        let l = &mut lines[at];
                        if let Some((k, _)) = l.split_once(" = ") {
                            *l = format!("{k} = {}", PLAN_VALUES[v]);
                        }
                    }
                    PlanEdit::Drop(i) => {
                        lines.remove(i.index(lines.len()));
                    }
                    PlanEdit::Duplicate(i) => {
                        let at = i.index(lines.len());
                        lines.insert(at, lines[at].clone());
                    }
                    PlanEdit::Insert(i, v) => {
                        let at = i.index(lines.len() + 1);
                        lines.insert(at, PLAN_LINES[v].to_string());
                    }
                }
                if lines.is_empty() {
                    lines.push(String::new());
                }
            }
            let mut text = lines.join(if crlf { "\r\n" } else { "\n" });
            text.push('\n');
            if let Some((at, byte, cut)) = mutation {
                let mut bytes = text.into_bytes();
                let i = at.index(bytes.len());
                if cut {
                    bytes.truncate(i);
                } else {
                    bytes[i] = byte;
                }
                text = String::from_utf8_lossy(&bytes).into_owned();
            }
            text
        })
}

/// Keys of the base plan whose values have a range, each with values outside it.
const PLAN_RANGES: [(&str, &[&str]); 7] = [
    ("bits", &["0", "33"]),
    ("sample_rate_hz", &["0", "-1e6", "nan", "\"-5k\""]),
    ("full_scale_vpp", &["0.0", "-2", "inf"]),
    ("harmonics", &["0", "101"]),
    ("average", &["0", "10001"]),
    ("amplitude_tolerance_db", &["0", "nan"]),
    ("fin_hz", &["0", "-1", "inf", "\"0k\""]),
];

#[test]
fn the_base_plans_parse() {
    // Both bases are valid, or the edits below start from an error and test less than they say.
    let p = spurline::BenchPlan::parse(PLAN, Path::new("bench/plan.toml")).unwrap();
    invariants::check_plan(&p, PLAN);
    assert_eq!(p.conditions.len(), 3);
    let p = spurline::BenchPlan::parse(PLAN_LIST, Path::new("bench/plan.toml")).unwrap();
    invariants::check_plan(&p, PLAN_LIST);
}

proptest! {
    #![proptest_config(config(256))]

    #[test]
    fn plan_arbitrary_text_never_panics(bytes in prop::collection::vec(any::<u8>(), 0..400)) {
        let text = String::from_utf8_lossy(&bytes);
        match spurline::BenchPlan::parse(&text, Path::new("bench/plan.toml")) {
            Ok(p) => invariants::check_plan(&p, &text),
            Err(e) => invariants::check_plan_error(&e, "bench/plan.toml", &text),
        }
    }

    #[test]
    fn plan_near_valid_never_panics_and_names_its_line(text in plan_text()) {
        match spurline::BenchPlan::parse(&text, Path::new("bench/plan.toml")) {
            Ok(p) => invariants::check_plan(&p, &text),
            Err(e) => invariants::check_plan_error(&e, "bench/plan.toml", &text),
        }
    }

    #[test]
    fn plan_value_out_of_range_is_named_at_its_line(
        (key, bad) in prop::sample::select(PLAN_RANGES.to_vec())
            .prop_flat_map(|(k, bad)| (Just(k), prop::sample::select(bad.to_vec()))),
        which in any::<prop::sample::Index>(),
    ) {
        // The value of one occurrence of the key is put out of its range (documented in
        // src/lot/bench_plan.rs); the error must be at that line and name the key.
        let lines: Vec<&str> = PLAN.lines().collect();
        let at: Vec<usize> = (0..lines.len())
            .filter(|&i| lines[i].starts_with(&format!("{key} = ")))
            .collect();
        let i = at[which.index(at.len())];
        let mut edited: Vec<String> = lines.iter().map(|l| l.to_string()).collect();
        edited[i] = format!("{key} = {bad}");
        let text = edited.join("\n") + "\n";
        let e = spurline::BenchPlan::parse(&text, Path::new("bench/plan.toml")).unwrap_err();
        invariants::check_plan_error(&e, "bench/plan.toml", &text);
        prop_assert_eq!(&e.location, &Location::Line(i + 1), "{}", e);
        prop_assert!(e.expected.contains(key), "{}", e);
    }
}

// ---------------------------------------------------------------------------------------------------
// Limit tables
// ---------------------------------------------------------------------------------------------------

/// The scope of the fixture lot: its two conditions with 5 and 7 harmonics.
fn limit_scope() -> Vec<(String, spurline::Catalogue)> {
    [("fin_10M", 5), ("fin_31M", 7)]
        .iter()
        .map(|&(n, h)| (n.to_string(), spurline::Catalogue::for_harmonics(h)))
        .collect()
}

/// Metrics as a table may name them, with the full name and unit they resolve to under both
/// conditions (checked against the catalogue in `limit_metrics_resolve`).
const LIMIT_METRICS: [(&str, &str, &str); 5] = [
    ("snr_db", "spectrum.snr_db", "dB"),
    ("spectrum.sfdr_dbc", "spectrum.sfdr_dbc", "dBc"),
    ("h3.dbc", "spectrum.harmonics.h3.dbc", "dBc"),
    ("fit.enob_bits", "fit.enob_bits", "bits"),
    ("spectrum.thd_dbc", "spectrum.thd_dbc", "dBc"),
];

#[test]
fn limit_metrics_resolve() {
    for (_, cat) in limit_scope() {
        for (given, full, unit) in LIMIT_METRICS {
            let m = cat.resolve(given).unwrap();
            assert_eq!((m.name.as_str(), m.unit.symbol()), (full, unit));
        }
    }
}

/// One row of a near-valid limit table: valid cells, or one cell wrong in a known way.
#[derive(Debug, Clone)]
enum LimitRow {
    Valid {
        condition: usize,
        metric: usize,
        low: Option<i32>,
        high: Option<i32>,
        unit: bool,
        guardband: Option<u8>,
    },
    /// A cell that makes the row an error: unknown condition or metric, an ambiguous name, a
    /// non-number, low above high, a wrong unit, a negative guardband, a row of another width.
    Bad(u8),
    Blank,
    Comment,
}

fn limit_row() -> impl Strategy<Value = LimitRow> {
    prop_oneof![
        8 => (0usize..3, 0..LIMIT_METRICS.len(), prop::option::of(-100i32..100), prop::option::of(-100i32..100), any::<bool>(), prop::option::of(0u8..3))
            .prop_map(|(condition, metric, low, high, unit, guardband)| LimitRow::Valid { condition, metric, low, high, unit, guardband }),
        1 => (0u8..8).prop_map(LimitRow::Bad),
        1 => Just(LimitRow::Blank),
        1 => Just(LimitRow::Comment),
    ]
}

/// The columns in the order the header gives them; the guardband column is optional.
const LIMIT_COLUMNS: [&str; 6] = ["condition", "metric", "low", "high", "unit", "guardband"];

/// Renders a table and predicts the parse: the (line, full metric) of every limit, or the line of the
/// first bad row.
fn render_limits(
    order: &[usize],
    rows: &[LimitRow],
    semicolon: bool,
    crlf: bool,
) -> (String, std::result::Result<Vec<(usize, String)>, Location>) {
    let conditions = ["*", "fin_10M", "fin_31M"];
    let d = if semicolon { ";" } else { "," };
    let end = if crlf { "\r\n" } else { "\n" };
    let guard = order.contains(&5);
    let mut out = String::from("# limits");
    out.push_str(end);
    // Column names are compared without regard to case.
    let header: Vec<String> = order
        .iter()
        .map(|&i| LIMIT_COLUMNS[i].to_uppercase())
        .collect();
    out.push_str(&header.join(d));
    out.push_str(end);
    let mut line = 2;
    let mut got: Vec<(usize, Option<&str>, String)> = Vec::new();
    let mut first_bad: Option<usize> = None;
    for r in rows {
        line += 1;
        let mut cells = [
            "*".to_string(),
            "snr_db".into(),
            "1".into(),
            String::new(),
            String::new(),
            String::new(),
        ];
        match r {
            LimitRow::Blank => {
                out.push_str(&vec![""; order.len()].join(d));
                out.push_str(end);
                continue;
            }
            LimitRow::Comment => {
                out.push_str("  # a comment, with cells");
                out.push_str(end);
                continue;
            }
            LimitRow::Valid {
                condition,
                metric,
                low,
                high,
                unit,
                guardband,
            } => {
                let (given, full, u) = LIMIT_METRICS[*metric];
                // Bounds that always leave a window: low ≤ high − 2·guardband.
                let g = if guard { guardband.unwrap_or(0) } else { 0 };
                let (lo, hi) = match (low, high) {
                    (Some(a), Some(b)) => (Some(*a.min(b)), Some(*a.max(b) + 2 * i32::from(g))),
                    (None, None) => (Some(0), None),
                    other => (*other.0, *other.1),
                };
                cells = [
                    conditions[*condition].to_string(),
                    given.to_string(),
                    lo.map_or(String::new(), |v| v.to_string()),
                    hi.map_or(String::new(), |v| v.to_string()),
                    if *unit { u.to_string() } else { String::new() },
                    if guard && guardband.is_some() {
                        g.to_string()
                    } else {
                        String::new()
                    },
                ];
                let cond = (*condition > 0).then_some(conditions[*condition]);
                if got.iter().any(|(_, c, m)| *c == cond && m == full) {
                    first_bad.get_or_insert(line);
                }
                got.push((line, cond, full.to_string()));
            }
            LimitRow::Bad(k) => {
                match k {
                    0 => cells[0] = "fin_99M".into(),
                    1 => cells[1] = "snr".into(),
                    2 => cells[1] = "enob_bits".into(),
                    3 => cells[2] = "6o".into(),
                    4 => cells[3] = "0".into(),
                    5 => cells[4] = "dBc".into(),
                    6 if guard => cells[5] = "-1".into(),
                    6 => cells[2] = "nan".into(),
                    _ => cells[0].push_str(d),
                }
                first_bad.get_or_insert(line);
            }
        }
        let shown: Vec<&str> = order.iter().map(|&i| cells[i].as_str()).collect();
        out.push_str(&shown.join(d));
        out.push_str(end);
    }
    let want = match first_bad {
        Some(l) => Err(Location::Row(l)),
        None if got.is_empty() => Err(Location::Whole),
        None => Ok(got.into_iter().map(|(l, _, m)| (l, m)).collect()),
    };
    (out, want)
}

proptest! {
    #![proptest_config(config(256))]

    #[test]
    fn limits_arbitrary_text_never_panic(bytes in prop::collection::vec(any::<u8>(), 0..400)) {
        let text = String::from_utf8_lossy(&bytes);
        let scope = limit_scope();
        match spurline::LimitTable::parse(&text, "bench/limits.csv", &scope) {
            Ok(t) => invariants::check_limits(&t, "bench/limits.csv", &text, &scope),
            Err(e) => invariants::check_limits_error(&e, "bench/limits.csv", &text),
        }
    }

    #[test]
    fn limits_near_valid_tables_parse_as_predicted(
        order in prop_oneof![Just(vec![0usize, 1, 2, 3, 4]), Just(vec![0usize, 1, 2, 3, 4, 5])].prop_shuffle(),
        rows in prop::collection::vec(limit_row(), 0..12),
        semicolon in any::<bool>(),
        crlf in any::<bool>(),
    ) {
        let scope = limit_scope();
        let (text, want) = render_limits(&order, &rows, semicolon, crlf);
        match spurline::LimitTable::parse(&text, "bench/limits.csv", &scope) {
            Ok(t) => {
                invariants::check_limits(&t, "bench/limits.csv", &text, &scope);
                let got: Vec<(usize, String)> = t.limits.iter().map(|l| (l.row, l.metric.clone())).collect();
                prop_assert_eq!(Ok(got), want, "{}", text);
            }
            Err(e) => {
                invariants::check_limits_error(&e, "bench/limits.csv", &text);
                prop_assert_eq!(Err(e.location.clone()), want, "{}\n{}", e, text);
            }
        }
    }
}

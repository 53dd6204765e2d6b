//! Text records: one signed integer code per line (or one value, such as a voltage, per line), with
//! blank lines, `#` comments and one optional header line. Codes take a single pass over the bytes with
//! no allocation per line, so that 2^20 codes parse in a few milliseconds; a file holding a decimal
//! fraction or an exponent is read again as values. Raw words written in hexadecimal (`0x1F3`) or
//! binary (`0b0101...`), as capture tools write them, are read by their own pass.

use super::checks::{check_bits, no_samples, show_token, to_code, INT_LIMIT};
use super::samples::Samples;
use crate::error::{Error, ErrorKind, Location, Result};
use crate::record::Coding;

/// Whitespace allowed around a code ('\r' covers CRLF line ends).
#[inline]
fn is_space(b: u8) -> bool {
    matches!(b, b' ' | b'\t' | b'\r' | 0x0b | 0x0c)
}

/// Parses a text record of N-bit signed codes, one per line.
///
/// Blank lines and `#` comments (whole-line or after a code) are ignored; leading `+`/`-`, whitespace
/// around the code and CRLF line ends are accepted, as is a UTF-8 byte-order mark. The first line that
/// is neither blank nor a comment is a header when it is not an integer and contains a letter; any other
/// non-integer line is a [`ErrorKind::NotInteger`] error naming its 1-based line. Codes outside
/// `-2^(N-1)..=2^(N-1)-1` are [`ErrorKind::CodeOutOfRange`]; no code at all is [`ErrorKind::Empty`].
///
/// A text whose first code starts with `0x` or `0b` holds raw N-bit words instead (see
/// [`parse_text_words`]), read as two's complement here.
pub fn parse_text(bytes: &[u8], path: &str, bits: u32) -> Result<Vec<i32>> {
    check_bits(bits).map_err(|e| e.with_path(path))?;
    let b = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    if radix_of(b).is_some() {
        return parse_text_words(bytes, path, bits, Coding::TwosComplement);
    }
    if b.len() >= PARALLEL_MIN_BYTES {
        if let Some(codes) = parse_halves(b, path, bits) {
            return Ok(codes);
        }
    }
    let (codes, line, header) = scan(b, path, bits, false, b.len() / 4 + 1)?;
    if codes.is_empty() {
        let found = if bytes.is_empty() {
            "an empty file".to_string()
        } else if header {
            "a header line and no codes".to_string()
        } else {
            format!("no codes in {line} lines")
        };
        return Err(no_samples(path, found));
    }
    Ok(codes)
}

/// Texts at least this long are parsed in two halves at once (on two threads when the pool has them).
const PARALLEL_MIN_BYTES: usize = 1 << 20;

/// Parses the two halves of `b` (cut after a line end) at once; `None` when either half meets anything
/// but codes, blank lines and comments (a header, a bad line, no codes): the caller then parses the
/// whole text in one pass, which names the right line and decides the header as the rules say.
fn parse_halves(b: &[u8], path: &str, bits: u32) -> Option<Vec<i32>> {
    let mid = b.len() / 2;
    let cut = mid + b[mid..].iter().position(|&c| c == b'\n')? + 1;
    let (lo, hi) = b.split_at(cut);
    let plain = |half: &[u8], later: bool| {
        let room = if later { half.len() } else { b.len() };
        scan(half, path, bits, later, room / 4 + 1)
            .ok()
            .filter(|(codes, _, header)| !header && !codes.is_empty())
            .map(|(codes, _, _)| codes)
    };
    let (first, second) = rayon::join(|| plain(lo, false), || plain(hi, true));
    // The first half's vector was given room for the whole text's codes: the second half is appended
    // in place.
    let mut codes = first?;
    codes.extend_from_slice(&second?);
    Some(codes)
}

/// One pass over the lines of `b`: the codes, the number of lines, and whether a header was seen.
/// `later`: `b` is not the start of the text, so no header is allowed in it. `room`: the codes' first
/// capacity (the shortest line "0\n" is 2 bytes; a quarter of the length is a good first guess for
/// typical files).
fn scan(
    b: &[u8],
    path: &str,
    bits: u32,
    later: bool,
    room: usize,
) -> Result<(Vec<i32>, usize, bool)> {
    let n = b.len();
    let mut codes = Vec::with_capacity(room);
    let mut line = 0usize;
    let mut seen_content = later;
    let mut header = false;
    let mut i = 0usize;
    while i < n {
        line += 1;
        let start = i;
        while i < n && is_space(b[i]) {
            i += 1;
        }
        let mut neg = false;
        let mut signed = false;
        if i < n && (b[i] == b'-' || b[i] == b'+') {
            neg = b[i] == b'-';
            signed = true;
            i += 1;
        }
        let digits_start = i;
        let mut value: u64 = 0;
        while i < n && b[i].is_ascii_digit() {
            if value < INT_LIMIT {
                value = value * 10 + u64::from(b[i] - b'0');
            }
            i += 1;
        }
        let has_digits = i > digits_start;
        let token_end = i;
        while i < n && is_space(b[i]) {
            i += 1;
        }
        let clean_end = i == n || b[i] == b'\n' || b[i] == b'#';
        // Skip to the end of the line (past a comment, or past junk for the slow path below).
        let line_end = if i < n && b[i] != b'\n' {
            b[i..].iter().position(|&c| c == b'\n').map_or(n, |p| i + p)
        } else {
            i
        };
        i = line_end + 1;

        if clean_end && has_digits {
            seen_content = true;
            if value >= INT_LIMIT {
                return Err(Error::new(
                    ErrorKind::CodeOutOfRange,
                    path,
                    Location::Line(line),
                    super::checks::range_text(bits),
                    show_token(trim(&b[start..token_end])),
                ));
            }
            let v = if neg { -(value as i64) } else { value as i64 };
            codes.push(to_code(v, bits, path, Location::Line(line))?);
            continue;
        }
        if clean_end && !signed && !has_digits {
            // Blank line or comment.
            continue;
        }
        // Not an integer: the token is the line without its comment, trimmed.
        let content = &b[start..line_end];
        let content = content
            .iter()
            .position(|&c| c == b'#')
            .map_or(content, |p| &content[..p]);
        let token = trim(content);
        if !seen_content && token.iter().any(u8::is_ascii_alphabetic) {
            seen_content = true;
            header = true;
            continue;
        }
        return Err(Error::new(
            ErrorKind::NotInteger,
            path,
            Location::Line(line),
            "an integer code (optional sign, decimal digits)",
            show_token(token),
        ));
    }
    Ok((codes, line, header))
}

/// Parses a text record of codes or of values: codes as [`parse_text`] reads them (at `bits`, or
/// the 32-bit range when `None`), and when a line holds a number that is not an integer (`-0.25`,
/// `1.5e-3`) the whole file as values, one finite decimal number per line, with the same rules for
/// blank lines, comments and the header. Errors name the 1-based line.
pub fn parse_text_samples(bytes: &[u8], path: &str, bits: Option<u32>) -> Result<Samples> {
    parse_text_located(bytes, path, bits).map(|(s, _)| s)
}

/// As [`parse_text_samples`], with the 1-based line of the first value that has a fraction.
pub(crate) fn parse_text_located(
    bytes: &[u8],
    path: &str,
    bits: Option<u32>,
) -> Result<(Samples, Option<usize>)> {
    let first = match parse_text(bytes, path, bits.unwrap_or(32)) {
        Ok(codes) => return Ok((Samples::Codes(codes), None)),
        Err(e) => e,
    };
    let Location::Line(at) = first.location else {
        return Err(first);
    };
    if first.kind != ErrorKind::NotInteger {
        return Err(first);
    }
    match parse_text_values(bytes, path) {
        Ok((v, line)) => Ok((Samples::Values(v), line)),
        // The values reader failing further on names the real problem; at or before the line the
        // codes reader stopped at, the codes reader's message is the one to give.
        Err(e) if matches!(e.location, Location::Line(l) if l > at) => Err(e),
        Err(_) => Err(first),
    }
}

/// What a value line must hold, as errors say it.
const VALUE_EXPECTED: &str = "a number (an integer code, or a value such as -0.25 or 1.5e-3)";

/// Parses a number token as a finite f64: decimal digits with an optional sign, fraction and
/// exponent (no `inf`, `nan` or hexadecimal).
pub(crate) fn parse_value(token: &[u8]) -> Option<f64> {
    let plain = token
        .iter()
        .all(|&c| c.is_ascii_digit() || matches!(c, b'+' | b'-' | b'.' | b'e' | b'E'));
    if !plain || !token.iter().any(u8::is_ascii_digit) {
        return None;
    }
    std::str::from_utf8(token)
        .ok()?
        .parse::<f64>()
        .ok()
        .filter(|v| v.is_finite())
}

/// Values, one per line (integers included), with the rules of [`parse_text`] for the rest; and the
/// line of the first value with a fraction.
fn parse_text_values(bytes: &[u8], path: &str) -> Result<(Vec<f64>, Option<usize>)> {
    let b = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    let mut values = Vec::with_capacity(b.len() / 8 + 1);
    let mut seen_content = false;
    let mut header = false;
    let mut lines = 0usize;
    let mut fraction = None;
    for (k, raw) in b.split(|&c| c == b'\n').enumerate() {
        lines = k + 1;
        let content = raw
            .iter()
            .position(|&c| c == b'#')
            .map_or(raw, |p| &raw[..p]);
        let token = trim(content);
        if token.is_empty() {
            continue;
        }
        if let Some(v) = parse_value(token) {
            seen_content = true;
            if fraction.is_none() && v.fract() != 0.0 {
                fraction = Some(k + 1);
            }
            values.push(v);
            continue;
        }
        if !seen_content && token.iter().any(u8::is_ascii_alphabetic) {
            seen_content = true;
            header = true;
            continue;
        }
        return Err(Error::new(
            ErrorKind::NotInteger,
            path,
            Location::Line(k + 1),
            VALUE_EXPECTED,
            show_token(token),
        ));
    }
    if values.is_empty() {
        let found = if header {
            "a header line and no values".to_string()
        } else {
            format!("no values in {lines} lines")
        };
        return Err(no_samples(path, found));
    }
    Ok((values, fraction))
}

/// The radix of a raw word written with a prefix.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Radix {
    /// `0x` or `0X`, digits 0-9, a-f, A-F.
    Hex,
    /// `0b` or `0B`, digits 0 and 1.
    Binary,
}

impl Radix {
    fn name(self) -> &'static str {
        match self {
            Radix::Hex => "hexadecimal",
            Radix::Binary => "binary",
        }
    }

    fn base(self) -> u32 {
        match self {
            Radix::Hex => 16,
            Radix::Binary => 2,
        }
    }
}

/// The radix a token's prefix names, and its digits.
fn prefixed(token: &[u8]) -> Option<(Radix, &[u8])> {
    match token {
        [b'0', b'x' | b'X', rest @ ..] => Some((Radix::Hex, rest)),
        [b'0', b'b' | b'B', rest @ ..] => Some((Radix::Binary, rest)),
        _ => None,
    }
}

/// Each line's token without its comment, trimmed, with its 1-based line number; blank and comment
/// lines left out.
fn tokens(b: &[u8]) -> impl Iterator<Item = (usize, &[u8])> {
    b.split(|&c| c == b'\n').enumerate().filter_map(|(k, raw)| {
        let content = raw
            .iter()
            .position(|&c| c == b'#')
            .map_or(raw, |p| &raw[..p]);
        let token = trim(content);
        (!token.is_empty()).then_some((k + 1, token))
    })
}

/// The radix of the text's first code, when it is written with a `0x` or `0b` prefix (the first
/// line that is neither blank nor a comment, or the one after it when that line is a header).
pub(crate) fn radix_of(b: &[u8]) -> Option<Radix> {
    let mut lines = tokens(b.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(b));
    let (_, first) = lines.next()?;
    if let Some((r, _)) = prefixed(first) {
        return Some(r);
    }
    // A header has a letter; a decimal code or value has none.
    if !first.iter().any(u8::is_ascii_alphabetic) {
        return None;
    }
    lines.next().and_then(|(_, t)| prefixed(t)).map(|(r, _)| r)
}

/// Parses a text record of raw N-bit words written in hexadecimal (`0x1F3`) or binary
/// (`0b0101_1100`), one per line, with the rules of [`parse_text`] for blank lines, comments and one
/// header line.
///
/// The radix is chosen by the prefix of each word, and a file holds one radix: the first word's.
/// A word in another radix, or a decimal number, is [`ErrorKind::NotInteger`] at its line (a capture
/// tool writes one radix; a mixture is more likely two files run together than a record). Digits may
/// be separated by `_`; no sign is allowed (a word is a bit pattern). Each word must fit in N bits
/// (below 2^N, else [`ErrorKind::CodeOutOfRange`] at its line) and is decoded by `coding`: two's
/// complement (`0xFFF` is -1 at 12 bits) or offset binary (`0x800` is 0 at 12 bits).
pub fn parse_text_words(bytes: &[u8], path: &str, bits: u32, coding: Coding) -> Result<Vec<i32>> {
    check_bits(bits).map_err(|e| e.with_path(path))?;
    let b = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    let mut codes = Vec::with_capacity(b.len() / 6 + 1);
    // The radix and the line of the first word.
    let mut first: Option<(Radix, usize)> = None;
    let mut header = false;
    let top = if bits == 32 {
        u64::from(u32::MAX)
    } else {
        (1u64 << bits) - 1
    };
    let half = 1i64 << (bits - 1);
    for (line, token) in tokens(b) {
        let Some((radix, digits)) = prefixed(token) else {
            if first.is_none() && !header && token.iter().any(u8::is_ascii_alphabetic) {
                header = true;
                continue;
            }
            let expected = match first {
                Some((r, at)) => format!(
                    "a {} word (0{} prefix) like the first word, at line {at}: one radix per file",
                    r.name(),
                    if r == Radix::Hex { 'x' } else { 'b' }
                ),
                None => "a raw word in hexadecimal (0x1F3) or binary (0b0101)".to_string(),
            };
            return Err(Error::new(
                ErrorKind::NotInteger,
                path,
                Location::Line(line),
                expected,
                show_token(token),
            ));
        };
        let (want, at) = *first.get_or_insert((radix, line));
        if radix != want {
            return Err(Error::new(
                ErrorKind::NotInteger,
                path,
                Location::Line(line),
                format!(
                    "a {} word like the first word, at line {at}: one radix per file",
                    want.name()
                ),
                format!("{} ({} word)", show_token(token), radix.name()),
            ));
        }
        let mut value: u64 = 0;
        let mut any = false;
        let mut bad = digits.is_empty() || digits[0] == b'_' || digits[digits.len() - 1] == b'_';
        for &c in digits {
            if c == b'_' {
                continue;
            }
            match char::from(c).to_digit(radix.base()) {
                Some(d) => {
                    any = true;
                    if value <= top {
                        value = value * u64::from(radix.base()) + u64::from(d);
                    }
                }
                None => bad = true,
            }
        }
        if bad || !any {
            return Err(Error::new(
                ErrorKind::NotInteger,
                path,
                Location::Line(line),
                match radix {
                    Radix::Hex => "a hexadecimal word: 0x, then digits 0-9 and a-f (no sign)",
                    Radix::Binary => "a binary word: 0b, then digits 0 and 1 (no sign)",
                },
                show_token(token),
            ));
        }
        if value > top {
            return Err(Error::new(
                ErrorKind::CodeOutOfRange,
                path,
                Location::Line(line),
                match radix {
                    Radix::Hex => format!("a {bits}-bit word, 0x0..=0x{top:X}"),
                    Radix::Binary => {
                        format!("a {bits}-bit word, at most {bits} binary digits of 1")
                    }
                },
                show_token(token),
            ));
        }
        let code = match coding {
            Coding::OffsetBinary => value as i64 - half,
            Coding::TwosComplement if value as i64 >= half => value as i64 - 2 * half,
            Coding::TwosComplement => value as i64,
        };
        // Within the N-bit range by construction, N <= 32.
        codes.push(code as i32);
    }
    if codes.is_empty() {
        let found = if header {
            "a header line and no words"
        } else {
            "no words"
        };
        return Err(no_samples(path, found));
    }
    Ok(codes)
}

/// The slice without leading and trailing whitespace.
fn trim(s: &[u8]) -> &[u8] {
    let start = s.iter().position(|&c| !is_space(c)).unwrap_or(s.len());
    let end = s
        .iter()
        .rposition(|&c| !is_space(c))
        .map_or(start, |p| p + 1);
    &s[start..end]
}

#[cfg(test)]
mod tests {
    use super::*;

    // Sources: one code per line with '#' comments and an optional header is the ingest rule this
    // module implements; decimal integers, signs, CRLF and the N-bit two's-complement range
    // -2^(N-1)..=2^(N-1)-1 are common practice, no source.

    fn parse(s: &str, bits: u32) -> Result<Vec<i32>> {
        parse_text(s.as_bytes(), "r.txt", bits)
    }

    // Sources for the raw words: the 0x and 0b prefixes are common practice, no source; two's
    // complement and offset binary of a 12-bit word are worked by hand.
    #[test]
    fn hexadecimal_and_binary_words() {
        let hex = "# capture\nch1\n0x7FF\n0xfff\n0X800\n0x000 # mid\n\n0x1f3\n";
        assert_eq!(
            parse_text(hex.as_bytes(), "r.txt", 12).unwrap(),
            vec![2047, -1, -2048, 0, 0x1F3]
        );
        assert_eq!(
            parse_text_words(hex.as_bytes(), "r.txt", 12, Coding::OffsetBinary).unwrap(),
            vec![-1, 2047, 0, -2048, 0x1F3 - 2048]
        );
        let bin = "0b0000_0000_0101\r\n0B111111111111\r\n";
        assert_eq!(
            parse_text(bin.as_bytes(), "r.txt", 12).unwrap(),
            vec![5, -1]
        );
        assert_eq!(radix_of(b"code\n0b1\n"), Some(Radix::Binary));
        assert_eq!(radix_of(b"12\n0x1\n"), None);
        // 32-bit words.
        assert_eq!(
            parse_text(b"0xFFFFFFFF\n0x80000000\n", "r.txt", 32).unwrap(),
            vec![-1, i32::MIN]
        );
    }

    #[test]
    fn bad_words_name_their_line() {
        let e = |s: &str| parse_text(s.as_bytes(), "r.txt", 12).unwrap_err();
        // Wider than 12 bits.
        let x = e("0x001\n0x1000\n");
        assert_eq!(
            (x.kind, x.location),
            (ErrorKind::CodeOutOfRange, Location::Line(2))
        );
        assert_eq!(x.expected, "a 12-bit word, 0x0..=0xFFF");
        assert_eq!(x.found, "'0x1000'");
        let x = e("0b1\n0b1000000000000\n");
        assert_eq!(
            (x.kind, x.location),
            (ErrorKind::CodeOutOfRange, Location::Line(2))
        );
        // A digit outside the radix, an empty word, a sign.
        for (text, line) in [
            ("0x1\n0x1G\n", 2),
            ("0b1\n0b102\n", 2),
            ("0x\n", 1),
            ("0x1\n-0x1\n", 2),
        ] {
            let x = e(text);
            assert_eq!(
                (x.kind, x.location),
                (ErrorKind::NotInteger, Location::Line(line)),
                "{text}"
            );
        }
        // Mixed radices and a decimal code among words: refused at the line, naming the first word's.
        let x = e("# c\n0x1\n0b1\n");
        assert_eq!(
            (x.kind, x.location),
            (ErrorKind::NotInteger, Location::Line(3))
        );
        assert!(
            x.expected.contains("hexadecimal") && x.expected.contains("line 2"),
            "{}",
            x.expected
        );
        assert_eq!(x.found, "'0b1' (binary word)");
        let x = e("0b1\n17\n");
        assert_eq!(
            (x.kind, x.location),
            (ErrorKind::NotInteger, Location::Line(2))
        );
        assert!(x.expected.contains("one radix per file"), "{}", x.expected);
        // A header and no words.
        let x = parse_text_words(b"ch1\n", "r.txt", 12, Coding::TwosComplement).unwrap_err();
        assert_eq!(x.kind, ErrorKind::Empty);
        // Hexadecimal after decimal codes is a bad line of a decimal record.
        let x = e("1\n0x2\n");
        assert_eq!(
            (x.kind, x.location),
            (ErrorKind::NotInteger, Location::Line(2))
        );
    }

    #[test]
    fn plain_codes_one_per_line() {
        assert_eq!(parse("1\n-2\n3\n", 12).unwrap(), vec![1, -2, 3]);
        // No final newline.
        assert_eq!(parse("1\n-2\n3", 12).unwrap(), vec![1, -2, 3]);
    }

    #[test]
    fn signs_whitespace_and_crlf() {
        let s = "  +5  \r\n\t-6\t\r\n7\r\n+0\r\n-0";
        assert_eq!(parse(s, 12).unwrap(), vec![5, -6, 7, 0, 0]);
    }

    #[test]
    fn blank_lines_and_comments_are_ignored() {
        let s = "# a record\n\n   \n1 # first\n#2\n  # indented comment\n3#tight\n\n";
        assert_eq!(parse(s, 12).unwrap(), vec![1, 3]);
    }

    #[test]
    fn byte_order_mark_is_skipped() {
        assert_eq!(
            parse_text(b"\xEF\xBB\xBF10\n11\n", "r.txt", 8).unwrap(),
            vec![10, 11]
        );
    }

    #[test]
    fn header_is_the_first_content_line_only() {
        let s = "# comment first\n\ncode\n1\n2\n";
        assert_eq!(parse(s, 12).unwrap(), vec![1, 2]);
        // A second header-like line is an error on its own line.
        let e = parse("code\n1\nvalue\n", 12).unwrap_err();
        assert_eq!(e.kind, ErrorKind::NotInteger);
        assert_eq!(e.location, Location::Line(3));
        assert_eq!(e.found, "'value'");
        // A header after a code is not a header.
        let e = parse("1\ncode\n", 12).unwrap_err();
        assert_eq!(e.location, Location::Line(2));
    }

    #[test]
    fn first_line_without_a_letter_is_not_a_header() {
        let e = parse("1.5\n2\n", 12).unwrap_err();
        assert_eq!(e.kind, ErrorKind::NotInteger);
        assert_eq!(e.location, Location::Line(1));
        assert_eq!(e.found, "'1.5'");
        assert!(e.expected.contains("integer"), "{}", e.expected);
    }

    #[test]
    fn not_integer_names_line_and_token() {
        let e = parse("1\n2\n\n# c\n3 4 # two codes\n", 12).unwrap_err();
        assert_eq!(e.kind, ErrorKind::NotInteger);
        assert_eq!(e.path, "r.txt");
        assert_eq!(e.location, Location::Line(5));
        assert_eq!(e.found, "'3 4'");
        for junk in ["- 5", "+", "0x1f", "12abc", "1,2"] {
            let e = parse(&format!("0\n{junk}\n"), 12).unwrap_err();
            assert_eq!(e.kind, ErrorKind::NotInteger, "{junk}");
            assert_eq!(e.location, Location::Line(2), "{junk}");
            assert_eq!(e.found, format!("'{junk}'"));
        }
    }

    #[test]
    fn long_tokens_are_cut_in_the_error() {
        let long = format!("0\n{}\n", "z".repeat(500));
        let e = parse(&long, 12).unwrap_err();
        assert_eq!(e.found, format!("'{}...'", "z".repeat(40)));
    }

    #[test]
    fn codes_outside_the_n_bit_range() {
        // 12-bit two's complement spans -2048..=2047 (common practice, no source).
        assert_eq!(parse("-2048\n2047\n", 12).unwrap(), vec![-2048, 2047]);
        let e = parse("0\n2048\n", 12).unwrap_err();
        assert_eq!(e.kind, ErrorKind::CodeOutOfRange);
        assert_eq!(e.location, Location::Line(2));
        assert_eq!(e.expected, "-2048..=2047 (12-bit two's complement)");
        assert_eq!(e.found, "2048");
        let e = parse("-2049\n", 12).unwrap_err();
        assert_eq!(e.found, "-2049");
        let e = parse("1\n123456789012345678901234567890\n", 32).unwrap_err();
        assert_eq!(e.kind, ErrorKind::CodeOutOfRange);
        assert_eq!(e.location, Location::Line(2));
        assert_eq!(e.found, "'123456789012345678901234567890'");
    }

    #[test]
    fn thirty_two_and_one_bit_extremes() {
        let s = "-2147483648\n2147483647\n";
        assert_eq!(parse(s, 32).unwrap(), vec![i32::MIN, i32::MAX]);
        assert!(parse("2147483648\n", 32).is_err());
        assert_eq!(parse("-1\n0\n", 1).unwrap(), vec![-1, 0]);
        assert_eq!(parse("1\n", 1).unwrap_err().kind, ErrorKind::CodeOutOfRange);
    }

    #[test]
    fn empty_inputs() {
        let e = parse("", 12).unwrap_err();
        assert_eq!(e.kind, ErrorKind::Empty);
        assert_eq!(e.location, Location::Whole);
        assert_eq!(e.found, "an empty file");
        let e = parse("# only\n\n  \n", 12).unwrap_err();
        assert_eq!(e.kind, ErrorKind::Empty);
        assert_eq!(e.found, "no codes in 3 lines");
        let e = parse("code\n# nothing else\n", 12).unwrap_err();
        assert_eq!(e.kind, ErrorKind::Empty);
        assert_eq!(e.found, "a header line and no codes");
    }

    #[test]
    fn bits_outside_1_to_32() {
        for bits in [0, 33] {
            let e = parse("1\n", bits).unwrap_err();
            assert_eq!(e.kind, ErrorKind::BadSetting);
            assert_eq!(e.location, Location::Key("bits".into()));
            assert_eq!(e.found, bits.to_string());
        }
    }

    #[test]
    fn binary_garbage_is_an_error_not_a_panic() {
        let e = parse_text(&[0x00, 0xff, 0xfe, b'\n', 0x80], "g.txt", 12).unwrap_err();
        assert_eq!(e.kind, ErrorKind::NotInteger);
        assert_eq!(e.location, Location::Line(1));
    }

    // Decimal notation of values (fraction, exponent) is common practice, no source; the expected
    // numbers are the literals themselves.
    #[test]
    fn a_fraction_or_exponent_makes_the_file_values() {
        let s = "volts\n# comment\n0\n-0.25\n1.5e-3 # tail\n\r\n+2.\n.5\r\n";
        assert_eq!(
            parse_text_samples(s.as_bytes(), "r.txt", Some(12)).unwrap(),
            Samples::Values(vec![0.0, -0.25, 1.5e-3, 2.0, 0.5])
        );
        // Integers stay codes, checked against the resolution (32 bits without one).
        assert_eq!(
            parse_text_samples(b"1\n-2\n", "r.txt", None).unwrap(),
            Samples::Codes(vec![1, -2])
        );
        let e = parse_text_samples(b"4096\n", "r.txt", Some(12)).unwrap_err();
        assert_eq!(e.kind, ErrorKind::CodeOutOfRange);
    }

    #[test]
    fn bad_values_name_their_line() {
        for (s, line, found) in [
            ("0.5\n1.0\nabc\n", 3, "'abc'"),
            ("0.5\nnan\n", 2, "'nan'"),
            ("0.5\ninf\n", 2, "'inf'"),
            ("0.5\n1e999\n", 2, "'1e999'"),
            ("0.5\n1.2.3\n", 2, "'1.2.3'"),
            ("0.5\n0x10\n", 2, "'0x10'"),
        ] {
            let e = parse_text_samples(s.as_bytes(), "r.txt", Some(12)).unwrap_err();
            assert_eq!(e.kind, ErrorKind::NotInteger, "{s}");
            assert_eq!(e.location, Location::Line(line), "{s}");
            assert_eq!(e.found, found, "{s}");
        }
        // Junk before any fraction: the codes reader's message.
        let e = parse_text_samples(b"1\nx y\n0.5\n", "r.txt", Some(12)).unwrap_err();
        assert_eq!(e.location, Location::Line(2));
        assert!(e.expected.contains("integer code"), "{}", e.expected);
        let e = parse_text_samples(b"volts\n# none\n1.5 x\n", "r.txt", None).unwrap_err();
        assert_eq!(e.location, Location::Line(3));
    }

    #[test]
    fn many_codes_round_trip() {
        let codes: Vec<i32> = (0..10_000).map(|i| (i * 7919 % 4096) - 2048).collect();
        let text: String = codes.iter().map(|c| format!("{c}\n")).collect();
        assert_eq!(parse(&text, 12).unwrap(), codes);
    }

    // A text long enough to be parsed in two halves gives the codes of one pass, and an error in
    // either half (or a header) is reported as the one pass reports it: the same line, the same kind.
    #[test]
    fn long_texts_parsed_in_halves_agree_with_one_pass() {
        let codes: Vec<i32> = (0..300_000i64)
            .map(|i| (i * 7919 % 65536 - 32768) as i32)
            .collect();
        let mut text = String::from("# capture\ncodes\n");
        for (i, c) in codes.iter().enumerate() {
            text.push_str(&format!("{c}\r\n"));
            if i % 1000 == 0 {
                text.push_str("  # note\n\n");
            }
        }
        assert!(text.len() >= PARALLEL_MIN_BYTES);
        assert_eq!(parse(&text, 16).unwrap(), codes);
        let (whole, lines, header) = scan(text.as_bytes(), "r.txt", 16, false, 0).unwrap();
        assert_eq!(whole, codes);
        assert!(header && lines > codes.len());
        // A bad line late in the text: its own line number, from the one-pass parse.
        let bad_at = text.len() * 3 / 4;
        let cut = bad_at + text[bad_at..].find('\n').unwrap() + 1;
        let line = text[..cut].matches('\n').count() + 1;
        let bad = format!("{}12x4\n{}", &text[..cut], &text[cut..]);
        let e = parse(&bad, 16).unwrap_err();
        assert_eq!(e.kind, ErrorKind::NotInteger);
        assert_eq!(e.location, Location::Line(line));
        // A second header-like line in the second half is an error there too.
        let late_header = format!("{}volts\n{}", &text[..cut], &text[cut..]);
        let e = parse(&late_header, 16).unwrap_err();
        assert_eq!(e.location, Location::Line(line));
    }
}

//! Raw binary records: 8-, 16-, 24- or 32-bit words in either byte order (or packed samples, decoded in
//! `packed.rs`), two's complement or offset binary, N significant bits right- or left-justified, an
//! optional header to skip and interleaved channels.

use super::checks::{check_bits, no_samples, range_text};
use super::{BinaryLayout, Justify};
use crate::error::{Error, ErrorKind, Location, Result};
use crate::record::Coding;

/// Decodes one word into a signed, centred N-bit code.
#[derive(Debug, Clone, Copy)]
pub(super) struct Decoder {
    pub(super) word_bits: u32,
    pub(super) bits: u32,
    pub(super) coding: Coding,
    pub(super) justify: Justify,
}

/// Sign-extends the low `width` bits of `raw` (1 <= width <= 32).
#[inline]
pub(super) fn sign_extend(raw: u32, width: u32) -> i64 {
    let shift = 64 - width;
    ((i64::from(raw)) << shift) >> shift
}

impl Decoder {
    /// The code for a word, or None when the word holds no valid N-bit code.
    #[inline(always)]
    pub(super) fn decode(&self, raw: u32) -> Option<i64> {
        let pad = self.word_bits - self.bits;
        let half = 1i64 << (self.bits - 1);
        match (self.justify, self.coding) {
            // Left-justified: the code is the top N bits; the padding below is ignored.
            (Justify::Left, Coding::TwosComplement) => {
                Some(sign_extend(raw, self.word_bits) >> pad)
            }
            (Justify::Left, Coding::OffsetBinary) => Some((i64::from(raw) >> pad) - half),
            (Justify::Right, Coding::OffsetBinary) => {
                let v = i64::from(raw);
                (v < 2 * half).then_some(v - half)
            }
            (Justify::Right, Coding::TwosComplement) => {
                // Either the word is already sign-extended, or the bits above N are zero and the
                // N-bit field carries the sign.
                let s = sign_extend(raw, self.word_bits);
                if (-half..half).contains(&s) {
                    Some(s)
                } else if u64::from(raw) >> self.bits == 0 {
                    Some(sign_extend(raw, self.bits))
                } else {
                    None
                }
            }
        }
    }

    /// What a valid word looks like, for the error message.
    pub(super) fn expected(&self) -> String {
        let (n, w) = (self.bits, self.word_bits);
        match self.coding {
            Coding::TwosComplement => format!(
                "{} in the low {n} bits of a {w}-bit word, the top {} bits copies of the sign bit or zero",
                range_text(n),
                w - n
            ),
            Coding::OffsetBinary => format!(
                "0..={} ({n}-bit offset binary) right-justified in a {w}-bit word",
                (1u64 << n) - 1
            ),
        }
    }
}

/// Reads one word of 1, 2, 3 or 4 bytes.
#[inline(always)]
fn read_word(b: &[u8], big_endian: bool) -> u32 {
    match (b.len(), big_endian) {
        (1, _) => u32::from(b[0]),
        (2, false) => u32::from(u16::from_le_bytes([b[0], b[1]])),
        (2, true) => u32::from(u16::from_be_bytes([b[0], b[1]])),
        (3, false) => u32::from_le_bytes([b[0], b[1], b[2], 0]),
        (3, true) => u32::from_be_bytes([0, b[0], b[1], b[2]]),
        (_, false) => u32::from_le_bytes([b[0], b[1], b[2], b[3]]),
        (_, true) => u32::from_be_bytes([b[0], b[1], b[2], b[3]]),
    }
}

/// Parses raw binary words (or packed samples, when `layout.packing` is set) into N-bit signed
/// codes, one channel of `layout.channels`.
///
/// After `skip_bytes` of header the data must be a whole number of frames (`channels` words of
/// `word_bytes` each), else [`ErrorKind::PartialWord`] at the byte offset of the trailing partial word
/// (or frame). The coding defaults to two's complement for signed words and offset binary for unsigned
/// ones. Left-justified codes are the top N bits (padding below ignored). Right-justified offset binary
/// must be below 2^N; right-justified two's complement must have the bits above N either a copy of the
/// sign bit or all zero (the N-bit field then carries the sign). Other words are
/// [`ErrorKind::CodeOutOfRange`] at their byte offset.
///
/// Packed samples (see [`super::Packing`]) are decoded as words of the packing's width, with the same
/// coding and justification rules; the data must be a whole number of groups (else a partial word at
/// the offset of the trailing partial group) and of frames of `channels` samples.
pub fn parse_binary(
    bytes: &[u8],
    path: &str,
    bits: u32,
    layout: &BinaryLayout,
) -> Result<Vec<i32>> {
    check_bits(bits).map_err(|e| e.with_path(path))?;
    let w = layout.word_bytes;
    let word_bits = match layout.packing {
        Some(p) if super::Packing::WIDTHS.contains(&p.bits) => p.bits,
        Some(p) => {
            return Err(Error::setting(
                "format",
                "packed samples of 10, 12 or 14 bits",
                format!("{} bits", p.bits),
            )
            .with_path(path))
        }
        None if matches!(w, 1..=4) => 8 * w as u32,
        None => {
            return Err(Error::setting(
                "format",
                "words of 1, 2, 3 or 4 bytes",
                format!("{w} bytes"),
            )
            .with_path(path))
        }
    };
    if bits > word_bits {
        let what = if layout.packing.is_some() {
            "packed samples"
        } else {
            "words"
        };
        return Err(Error::setting(
            "bits",
            format!("at most {word_bits} bits in {word_bits}-bit {what}"),
            bits.to_string(),
        )
        .with_path(path));
    }
    if layout.channels == 0 || layout.channel >= layout.channels {
        return Err(Error::setting(
            "channel",
            "a channel K of M interleaved channels with 1 <= K <= M",
            format!("channel {} of {}", layout.channel + 1, layout.channels),
        )
        .with_path(path));
    }
    if bytes.is_empty() {
        return Err(no_samples(path, "an empty file"));
    }
    let len = bytes.len() as u64;
    if layout.skip_bytes >= len {
        return Err(Error::new(
            ErrorKind::Empty,
            path,
            Location::Whole,
            format!("data after the {} header bytes skipped", layout.skip_bytes),
            format!("a file of {len} bytes"),
        ));
    }
    let skip = layout.skip_bytes;
    let data = &bytes[skip as usize..];
    let after_header = if skip == 0 {
        String::new()
    } else {
        format!(" after the {skip} header bytes")
    };
    let decoder = Decoder {
        word_bits,
        bits,
        coding: layout.coding.unwrap_or(if layout.signed {
            Coding::TwosComplement
        } else {
            Coding::OffsetBinary
        }),
        justify: layout.justify,
    };
    if let Some(p) = layout.packing {
        return super::packed::parse_packed(data, skip, &after_header, path, &decoder, p, layout);
    }
    let words_end = data.len() / w * w;
    if words_end != data.len() {
        return Err(Error::new(
            ErrorKind::PartialWord,
            path,
            Location::Byte(skip + words_end as u64),
            format!("a multiple of {w} bytes{after_header}"),
            format!("{} bytes", data.len()),
        ));
    }
    // A channel count from the command line or a sidecar can be any usize: refuse frames whose size
    // does not even fit in memory rather than overflow.
    let frame = w.checked_mul(layout.channels).ok_or_else(|| {
        Error::setting(
            "channel",
            format!(
                "at most {} interleaved channels of {w}-byte words",
                usize::MAX / w
            ),
            format!("{} channels", layout.channels),
        )
        .with_path(path)
    })?;
    let frames_end = data.len() / frame * frame;
    if frames_end != data.len() {
        return Err(Error::new(
            ErrorKind::PartialWord,
            path,
            Location::Byte(skip + frames_end as u64),
            format!(
                "a multiple of {frame} bytes{after_header} (frames of {} channels of {w} bytes)",
                layout.channels
            ),
            format!("{} bytes", data.len()),
        ));
    }
    let first = layout.channel * w;
    let mut codes = Vec::with_capacity(data.len() / frame);
    // One loop per word size and byte order, so that neither is decided again for every sample.
    let bad = match (w, layout.big_endian) {
        (1, _) => decode_frames::<1, false>(data, frame, first, &decoder, &mut codes),
        (2, false) => decode_frames::<2, false>(data, frame, first, &decoder, &mut codes),
        (2, true) => decode_frames::<2, true>(data, frame, first, &decoder, &mut codes),
        (3, false) => decode_frames::<3, false>(data, frame, first, &decoder, &mut codes),
        (3, true) => decode_frames::<3, true>(data, frame, first, &decoder, &mut codes),
        (_, false) => decode_frames::<4, false>(data, frame, first, &decoder, &mut codes),
        (_, true) => decode_frames::<4, true>(data, frame, first, &decoder, &mut codes),
    };
    if let Some(k) = bad {
        let at = k * frame + first;
        let raw = read_word(&data[at..at + w], layout.big_endian);
        return Err(Error::new(
            ErrorKind::CodeOutOfRange,
            path,
            Location::Byte(skip + at as u64),
            decoder.expected(),
            format!("word 0x{raw:0digits$x} ({raw})", digits = 2 * w),
        ));
    }
    Ok(codes)
}

/// Decodes the word at `first` of every `frame`-byte frame into `codes`; returns the index of the
/// first frame whose word holds no valid code.
#[inline(always)]
fn decode_frames<const W: usize, const BIG_ENDIAN: bool>(
    data: &[u8],
    frame: usize,
    first: usize,
    decoder: &Decoder,
    codes: &mut Vec<i32>,
) -> Option<usize> {
    // One channel of right-justified words whose values are all in range (the usual capture): two
    // passes that vectorise (decode, then the range of what was decoded) instead of a check and an
    // early return per word. Any word out of range sends the record to the word-by-word loop below,
    // which finds it; the codes are the same either way.
    if frame == W && decoder.justify == Justify::Right {
        let half = 1i64 << (decoder.bits - 1);
        let word_bits = decoder.word_bits;
        let valid = match decoder.coding {
            Coding::TwosComplement => {
                codes.extend(
                    data.chunks_exact(W)
                        .map(|f| sign_extend(read_word(f, BIG_ENDIAN), word_bits) as i32),
                );
                let (min, max) = codes
                    .iter()
                    .fold((i32::MAX, i32::MIN), |(a, b), &c| (a.min(c), b.max(c)));
                i64::from(min) >= -half && i64::from(max) < half
            }
            Coding::OffsetBinary => {
                let top = data
                    .chunks_exact(W)
                    .fold(0u32, |m, f| m.max(read_word(f, BIG_ENDIAN)));
                if i64::from(top) < 2 * half {
                    codes.extend(
                        data.chunks_exact(W)
                            .map(|f| (i64::from(read_word(f, BIG_ENDIAN)) - half) as i32),
                    );
                    true
                } else {
                    false
                }
            }
        };
        if valid {
            return None;
        }
        codes.clear();
    }
    for (k, f) in data.chunks_exact(frame).enumerate() {
        let raw = read_word(&f[first..first + W], BIG_ENDIAN);
        match decoder.decode(raw) {
            // Every decoded value lies in the N-bit range, N <= 32, so it fits an i32.
            Some(v) => codes.push(v as i32),
            None => return Some(k),
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    // Sources: byte order, two's complement, offset binary (code = word - 2^(N-1)) and left/right
    // justification of N bits in a wider word are common practice, no source. Byte offsets are
    // counted by hand from the test layouts.

    fn layout(word: &str) -> BinaryLayout {
        super::super::Format::parse_word(word).unwrap()
    }

    fn le16(v: &[u16]) -> Vec<u8> {
        v.iter().flat_map(|x| x.to_le_bytes()).collect()
    }

    fn be16(v: &[u16]) -> Vec<u8> {
        v.iter().flat_map(|x| x.to_be_bytes()).collect()
    }

    #[test]
    fn i16_both_byte_orders() {
        // 0xFFFE is -2 in 16-bit two's complement (common practice, no source).
        let words = [0x0001u16, 0xFFFE, 0x7FFF, 0x8000];
        let want = vec![1, -2, 32767, -32768];
        assert_eq!(
            parse_binary(&le16(&words), "r.bin", 16, &layout("i16le")).unwrap(),
            want
        );
        assert_eq!(
            parse_binary(&be16(&words), "r.bin", 16, &layout("i16be")).unwrap(),
            want
        );
        // The same bytes read in the wrong order give different codes.
        assert_ne!(
            parse_binary(&le16(&words), "r.bin", 16, &layout("i16be")).unwrap(),
            want
        );
    }

    #[test]
    fn u16_offset_binary_is_centred() {
        // Offset binary: code = word - 2^(N-1) (common practice, no source).
        let words = [0u16, 2048, 4095, 1000];
        let got = parse_binary(&le16(&words), "r.bin", 12, &layout("u16le")).unwrap();
        assert_eq!(got, vec![-2048, 0, 2047, 1000 - 2048]);
        let got = parse_binary(&be16(&words), "r.bin", 12, &layout("u16be")).unwrap();
        assert_eq!(got, vec![-2048, 0, 2047, 1000 - 2048]);
    }

    #[test]
    fn eight_bit_words() {
        let bytes = [0x00u8, 0x7F, 0x80, 0xFF];
        assert_eq!(
            parse_binary(&bytes, "r.bin", 8, &layout("i8")).unwrap(),
            vec![0, 127, -128, -1]
        );
        assert_eq!(
            parse_binary(&bytes, "r.bin", 8, &layout("u8")).unwrap(),
            vec![-128, -1, 0, 127]
        );
    }

    #[test]
    fn thirty_two_bit_words() {
        let vals = [i32::MIN, -1, 0, i32::MAX];
        let le: Vec<u8> = vals.iter().flat_map(|v| v.to_le_bytes()).collect();
        let be: Vec<u8> = vals.iter().flat_map(|v| v.to_be_bytes()).collect();
        assert_eq!(
            parse_binary(&le, "r.bin", 32, &layout("i32le")).unwrap(),
            vals
        );
        assert_eq!(
            parse_binary(&be, "r.bin", 32, &layout("i32be")).unwrap(),
            vals
        );
        // u32 offset binary: 0 -> -2^31, 2^31 -> 0, 2^32-1 -> 2^31-1.
        let words = [0u32, 1 << 31, u32::MAX];
        let le: Vec<u8> = words.iter().flat_map(|v| v.to_le_bytes()).collect();
        let be: Vec<u8> = words.iter().flat_map(|v| v.to_be_bytes()).collect();
        let want = vec![i32::MIN, 0, i32::MAX];
        assert_eq!(
            parse_binary(&le, "r.bin", 32, &layout("u32le")).unwrap(),
            want
        );
        assert_eq!(
            parse_binary(&be, "r.bin", 32, &layout("u32be")).unwrap(),
            want
        );
        // 24-bit codes right-justified in 32-bit words, sign-extended.
        let v24 = [-(1i32 << 23), (1 << 23) - 1, -5];
        let le: Vec<u8> = v24.iter().flat_map(|v| v.to_le_bytes()).collect();
        assert_eq!(
            parse_binary(&le, "r.bin", 24, &layout("i32le")).unwrap(),
            v24
        );
    }

    #[test]
    fn twenty_four_bit_words() {
        // 3-byte words: -2^23, 2^23 - 1, -5 (0xFFFFFB), 0x123456.
        let vals = [-(1i32 << 23), (1 << 23) - 1, -5, 0x123456];
        let le: Vec<u8> = vals
            .iter()
            .flat_map(|v| v.to_le_bytes()[..3].to_vec())
            .collect();
        let be: Vec<u8> = vals
            .iter()
            .flat_map(|v| v.to_be_bytes()[1..].to_vec())
            .collect();
        assert_eq!(&le[9..], &[0x56, 0x34, 0x12]);
        assert_eq!(
            parse_binary(&le, "r.bin", 24, &layout("i24le")).unwrap(),
            vals
        );
        assert_eq!(
            parse_binary(&be, "r.bin", 24, &layout("i24be")).unwrap(),
            vals
        );
        // u24: offset binary, word - 2^23.
        let words = [0u32, 1 << 23, (1 << 24) - 1];
        let le: Vec<u8> = words
            .iter()
            .flat_map(|v| v.to_le_bytes()[..3].to_vec())
            .collect();
        let be: Vec<u8> = words
            .iter()
            .flat_map(|v| v.to_be_bytes()[1..].to_vec())
            .collect();
        let want = vec![-(1 << 23), 0, (1 << 23) - 1];
        assert_eq!(
            parse_binary(&le, "r.bin", 24, &layout("u24le")).unwrap(),
            want
        );
        assert_eq!(
            parse_binary(&be, "r.bin", 24, &layout("u24be")).unwrap(),
            want
        );
        // 20-bit codes: 0x080000 has zeros above bit 19, so it is -2^19; 0x100000 is out of range,
        // refused at its byte offset 3.
        let words = [0x080000u32, 0x100000];
        let le: Vec<u8> = words
            .iter()
            .flat_map(|v| v.to_le_bytes()[..3].to_vec())
            .collect();
        let e = parse_binary(&le, "r.bin", 20, &layout("i24le")).unwrap_err();
        assert_eq!(
            (e.kind, e.location),
            (ErrorKind::CodeOutOfRange, Location::Byte(3))
        );
        assert_eq!(e.found, "word 0x100000 (1048576)");
        assert_eq!(
            parse_binary(&le[..3], "r.bin", 20, &layout("i24le")).unwrap(),
            vec![-(1 << 19)]
        );
        // A partial word: 7 bytes are two words and one byte, at offset 6.
        let e = parse_binary(&[0u8; 7], "r.bin", 24, &layout("i24be")).unwrap_err();
        assert_eq!(
            (e.kind, e.location),
            (ErrorKind::PartialWord, Location::Byte(6))
        );
        assert_eq!(e.expected, "a multiple of 3 bytes");
        let e = parse_binary(&[0u8; 6], "r.bin", 25, &layout("i24le")).unwrap_err();
        assert_eq!(e.expected, "at most 24 bits in 24-bit words");
    }

    #[test]
    fn left_justified_twos_complement() {
        // 12-bit codes in the top of 16-bit words: code << 4, low 4 bits padding (common practice,
        // no source). Nonzero padding is not an error.
        let codes = [-2048i32, -1, 0, 2047, 100];
        let words: Vec<u16> = codes
            .iter()
            .enumerate()
            .map(|(i, &c)| ((c << 4) as u16) | (i as u16 & 0xF))
            .collect();
        let mut l = layout("i16le");
        l.justify = Justify::Left;
        assert_eq!(parse_binary(&le16(&words), "r.bin", 12, &l).unwrap(), codes);
    }

    #[test]
    fn left_justified_offset_binary() {
        let codes = [-2048i32, -1, 0, 2047];
        let words: Vec<u16> = codes
            .iter()
            .map(|&c| (((c + 2048) as u16) << 4) | 0xA)
            .collect();
        let mut l = layout("u16be");
        l.justify = Justify::Left;
        assert_eq!(parse_binary(&be16(&words), "r.bin", 12, &l).unwrap(), codes);
    }

    #[test]
    fn right_justified_twos_complement_accepts_sign_extension_or_zero_padding() {
        // -5 as 12 bits: 0xFFB; sign-extended to 16 bits: 0xFFFB. Both decode to -5.
        let words = [0xFFFBu16, 0x0FFB, 0x07FF, 0x0800, 0xF800];
        assert_eq!(
            parse_binary(&le16(&words), "r.bin", 12, &layout("i16le")).unwrap(),
            vec![-5, -5, 2047, -2048, -2048]
        );
    }

    #[test]
    fn right_justified_twos_complement_rejects_other_padding() {
        // 0x1800: the top 4 bits are 0001, neither a sign extension of bit 11 nor zero.
        let words = [0x0001u16, 0x0002, 0x1800];
        let e = parse_binary(&le16(&words), "r.bin", 12, &layout("i16le")).unwrap_err();
        assert_eq!(e.kind, ErrorKind::CodeOutOfRange);
        assert_eq!(e.location, Location::Byte(4));
        assert_eq!(e.found, "word 0x1800 (6144)");
        assert!(
            e.expected
                .starts_with("-2048..=2047 (12-bit two's complement) in the low 12 bits"),
            "{}",
            e.expected
        );
        // 0x7000 sign-extends to 28672: outside 12 bits and the top bits are not zero.
        let e = parse_binary(&le16(&[0x7000]), "r.bin", 12, &layout("i16le")).unwrap_err();
        assert_eq!(e.location, Location::Byte(0));
    }

    #[test]
    fn right_justified_offset_binary_rejects_values_from_2_pow_n() {
        let words = [4095u16, 4096];
        let e = parse_binary(&be16(&words), "r.bin", 12, &layout("u16be")).unwrap_err();
        assert_eq!(e.kind, ErrorKind::CodeOutOfRange);
        assert_eq!(e.location, Location::Byte(2));
        assert_eq!(
            e.expected,
            "0..=4095 (12-bit offset binary) right-justified in a 16-bit word"
        );
        assert_eq!(e.found, "word 0x1000 (4096)");
    }

    #[test]
    fn coding_override_beats_word_signedness() {
        // u16 words read as two's complement, i16 words read as offset binary.
        let words = [0xFFFFu16, 0x0000];
        let mut l = layout("u16le");
        l.coding = Some(Coding::TwosComplement);
        assert_eq!(
            parse_binary(&le16(&words), "r.bin", 16, &l).unwrap(),
            vec![-1, 0]
        );
        let mut l = layout("i16le");
        l.coding = Some(Coding::OffsetBinary);
        assert_eq!(
            parse_binary(&le16(&words), "r.bin", 16, &l).unwrap(),
            vec![32767, -32768]
        );
    }

    #[test]
    fn header_bytes_are_skipped() {
        let mut bytes = b"HDR!xyz".to_vec();
        bytes.extend(le16(&[3, 0xFFFD]));
        let mut l = layout("i16le");
        l.skip_bytes = 7;
        assert_eq!(parse_binary(&bytes, "r.bin", 16, &l).unwrap(), vec![3, -3]);
        // Offsets in errors count from the start of the file.
        let mut l12 = l.clone();
        l12.skip_bytes = 7;
        let mut bad = b"HDR!xyz".to_vec();
        bad.extend(le16(&[3, 0x1800]));
        let e = parse_binary(&bad, "r.bin", 12, &l12).unwrap_err();
        assert_eq!(e.location, Location::Byte(9));
    }

    // Found by tests/fuzz_props.rs: a channel count near usize::MAX (a sidecar "channel": "1/18446744073709551615")
    // overflowed the frame size.
    #[test]
    fn huge_channel_count_is_refused_not_overflowed() {
        let mut l = layout("i16le");
        for (channel, channels) in [
            (0, usize::MAX),
            (usize::MAX - 1, usize::MAX),
            (3, usize::MAX / 2 + 1),
        ] {
            l.channel = channel;
            l.channels = channels;
            let e = parse_binary(&[0u8; 16], "r.bin", 12, &l).unwrap_err();
            assert_eq!(e.kind, ErrorKind::BadSetting);
            assert_eq!(e.location, Location::Key("channel".into()));
            assert_eq!(e.path, "r.bin");
            assert_eq!(e.found, format!("{channels} channels"));
        }
        // The largest count that fits is a frame far longer than the file: a partial frame at the start.
        l.channel = 0;
        l.channels = usize::MAX / 2;
        let e = parse_binary(&[0u8; 16], "r.bin", 12, &l).unwrap_err();
        assert_eq!(
            (e.kind, e.location),
            (ErrorKind::PartialWord, Location::Byte(0))
        );
    }

    #[test]
    fn interleaved_channels() {
        // Frames of 3 channels: (ch0, ch1, ch2) = (k, 100 + k, -k).
        let mut words = Vec::new();
        for k in 0..4i16 {
            words.extend([k as u16, (100 + k) as u16, (-k) as u16]);
        }
        for (ch, want) in [
            (0, vec![0, 1, 2, 3]),
            (1, vec![100, 101, 102, 103]),
            (2, vec![0, -1, -2, -3]),
        ] {
            let mut l = layout("i16be");
            l.channel = ch;
            l.channels = 3;
            assert_eq!(parse_binary(&be16(&words), "r.bin", 16, &l).unwrap(), want);
        }
        // The byte offset of a bad word in channel 1 of frame 2: 2*6 + 2 = 14.
        words[7] = 0x1800;
        let mut l = layout("i16be");
        l.channel = 1;
        l.channels = 3;
        let e = parse_binary(&be16(&words), "r.bin", 12, &l).unwrap_err();
        assert_eq!(e.location, Location::Byte(14));
    }

    #[test]
    fn partial_word_and_frame() {
        let mut bytes = le16(&[1, 2, 3]);
        bytes.push(0xAA);
        let e = parse_binary(&bytes, "r.bin", 16, &layout("i16le")).unwrap_err();
        assert_eq!(e.kind, ErrorKind::PartialWord);
        assert_eq!(e.path, "r.bin");
        assert_eq!(e.location, Location::Byte(6));
        assert_eq!(e.expected, "a multiple of 2 bytes");
        assert_eq!(e.found, "7 bytes");
        // With a 2-byte header, 5 data bytes: the trailing partial word starts at 2 + 4 = 6.
        let mut l = layout("i16le");
        l.skip_bytes = 2;
        let e = parse_binary(&bytes, "r.bin", 16, &l).unwrap_err();
        assert_eq!(e.location, Location::Byte(2 + 4));
        assert_eq!(e.expected, "a multiple of 2 bytes after the 2 header bytes");
        assert_eq!(e.found, "5 bytes");
        // With a 3-byte header the 4 data bytes are whole words.
        l.skip_bytes = 3;
        assert_eq!(parse_binary(&bytes, "r.bin", 16, &l).unwrap().len(), 2);
        let e = parse_binary(&[0u8; 9], "r.bin", 16, &{
            let mut l = layout("i32le");
            l.skip_bytes = 2;
            l
        })
        .unwrap_err();
        assert_eq!(e.location, Location::Byte(2 + 4));
        assert_eq!(e.expected, "a multiple of 4 bytes after the 2 header bytes");
        assert_eq!(e.found, "7 bytes");
        // Whole words but a partial frame of 2 channels.
        let mut l = layout("i16le");
        l.channels = 2;
        let e = parse_binary(&le16(&[1, 2, 3]), "r.bin", 16, &l).unwrap_err();
        assert_eq!(e.kind, ErrorKind::PartialWord);
        assert_eq!(e.location, Location::Byte(4));
        assert!(
            e.expected.starts_with("a multiple of 4 bytes"),
            "{}",
            e.expected
        );
        assert_eq!(e.found, "6 bytes");
    }

    #[test]
    fn skip_to_or_beyond_the_end() {
        for skip in [4, 5, 100] {
            let mut l = layout("i16le");
            l.skip_bytes = skip;
            let e = parse_binary(&le16(&[1, 2]), "r.bin", 16, &l).unwrap_err();
            assert_eq!(e.kind, ErrorKind::Empty);
            assert_eq!(e.found, "a file of 4 bytes");
            assert!(e.expected.contains(&skip.to_string()));
        }
        let e = parse_binary(&[], "r.bin", 16, &layout("i16le")).unwrap_err();
        assert_eq!((e.kind, e.location), (ErrorKind::Empty, Location::Whole));
    }

    #[test]
    fn bad_layouts_are_settings_errors() {
        let e = parse_binary(&[0; 4], "r.bin", 12, &layout("i8")).unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadSetting);
        assert_eq!(e.location, Location::Key("bits".into()));
        assert_eq!(e.expected, "at most 8 bits in 8-bit words");
        assert_eq!(e.found, "12");
        for bits in [0, 33] {
            let e = parse_binary(&[0; 4], "r.bin", bits, &layout("i32le")).unwrap_err();
            assert_eq!(e.location, Location::Key("bits".into()));
        }
        let mut l = layout("i16le");
        l.word_bytes = 5;
        let e = parse_binary(&[0; 10], "r.bin", 12, &l).unwrap_err();
        assert_eq!(e.location, Location::Key("format".into()));
        let mut l = layout("i16le");
        l.channel = 2;
        l.channels = 2;
        let e = parse_binary(&[0; 8], "r.bin", 12, &l).unwrap_err();
        assert_eq!(e.location, Location::Key("channel".into()));
        assert_eq!(e.found, "channel 3 of 2");
        l.channels = 0;
        l.channel = 0;
        assert_eq!(
            parse_binary(&[0; 8], "r.bin", 12, &l).unwrap_err().kind,
            ErrorKind::BadSetting
        );
    }

    #[test]
    fn one_bit_codes() {
        // 1-bit two's complement: -1..=0; offset binary 0 -> -1, 1 -> 0.
        assert_eq!(
            parse_binary(&[0x00, 0xFF, 0x01], "r.bin", 1, &layout("i8")).unwrap(),
            vec![0, -1, -1]
        );
        assert_eq!(
            parse_binary(&[0x00, 0x01], "r.bin", 1, &layout("u8")).unwrap(),
            vec![-1, 0]
        );
    }
}

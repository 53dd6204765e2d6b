//! Packed samples: 10-, 12- or 14-bit samples back to back across byte boundaries, in groups of whole
//! bytes read little- or big-endian (the layout is documented on [`super::Packing`]).

use super::binary::{sign_extend, Decoder};
use super::{BinaryLayout, Packing};
use crate::error::{Error, ErrorKind, Location, Result};
use crate::record::Coding;

/// Decodes the packed samples of `data` (the file after its `skip`-byte header) into codes of one
/// channel. `parse_binary` has checked the widths, the channel and that `data` is not empty.
pub(super) fn parse_packed(
    data: &[u8],
    skip: u64,
    after_header: &str,
    path: &str,
    decoder: &Decoder,
    p: Packing,
    layout: &BinaryLayout,
) -> Result<Vec<i32>> {
    let (g, s, n) = (p.group_bytes(), p.group_samples(), p.bits);
    let groups_end = data.len() / g * g;
    if groups_end != data.len() {
        return Err(Error::new(
            ErrorKind::PartialWord,
            path,
            Location::Byte(skip + groups_end as u64),
            format!(
                "a multiple of {g} bytes{after_header} ({s} samples of {n} bits packed in every {g} \
                 bytes)"
            ),
            format!("{} bytes", data.len()),
        ));
    }
    let total = data.len() / g * s;
    let channels = layout.channels;
    let whole = total / channels * channels;
    if whole != total {
        return Err(Error::new(
            ErrorKind::PartialWord,
            path,
            Location::Byte(skip + byte_of(whole, n)),
            format!(
                "a whole number of frames of {channels} interleaved samples (the {n}-bit sample \
                 {whole}, 0-based, starts the last frame)"
            ),
            format!("{total} samples"),
        ));
    }
    let mut codes = Vec::with_capacity(total / channels);
    let bad = match (n, p.msb_first) {
        (10, false) => decode::<10, 5, false>(data, decoder, layout, &mut codes),
        (10, true) => decode::<10, 5, true>(data, decoder, layout, &mut codes),
        (12, false) => decode::<12, 3, false>(data, decoder, layout, &mut codes),
        (12, true) => decode::<12, 3, true>(data, decoder, layout, &mut codes),
        // parse_binary admits only 10, 12 and 14 bits.
        (_, false) => decode::<14, 7, false>(data, decoder, layout, &mut codes),
        (_, true) => decode::<14, 7, true>(data, decoder, layout, &mut codes),
    };
    if let Some(k) = bad {
        let raw = raw_at(data, p, k);
        return Err(Error::new(
            ErrorKind::CodeOutOfRange,
            path,
            Location::Byte(skip + byte_of(k, n)),
            decoder.expected(),
            format!(
                "the {n}-bit sample 0x{raw:0digits$x} ({raw}), sample {k} of the packed stream \
                 (0-based), starting in this byte",
                digits = n.div_ceil(4) as usize
            ),
        ));
    }
    Ok(codes)
}

/// The byte, counted from the end of the header, holding the first bit of packed sample `k`.
fn byte_of(k: usize, n: u32) -> u64 {
    (k as u64 * u64::from(n)) / 8
}

/// A group of `G` bytes as one integer, little- or big-endian.
#[inline(always)]
fn group_word<const G: usize, const MSB: bool>(g: &[u8]) -> u64 {
    let mut w = 0u64;
    if MSB {
        for &b in &g[..G] {
            w = (w << 8) | u64::from(b);
        }
    } else {
        for &b in g[..G].iter().rev() {
            w = (w << 8) | u64::from(b);
        }
    }
    w
}

/// Sample `j` of a group word holding `s` samples of `N` bits.
#[inline(always)]
fn field<const N: u32, const MSB: bool>(w: u64, j: usize, s: usize) -> u32 {
    let shift = if MSB {
        N as usize * (s - 1 - j)
    } else {
        N as usize * j
    };
    ((w >> shift) & ((1u64 << N) - 1)) as u32
}

/// The raw `N`-bit field of packed sample `k` (for an error message).
fn raw_at(data: &[u8], p: Packing, k: usize) -> u32 {
    let (g, s) = (p.group_bytes(), p.group_samples());
    let group = &data[k / s * g..k / s * g + g];
    let w = if p.msb_first {
        group.iter().fold(0u64, |w, &b| (w << 8) | u64::from(b))
    } else {
        group
            .iter()
            .rev()
            .fold(0u64, |w, &b| (w << 8) | u64::from(b))
    };
    let j = k % s;
    let shift = if p.msb_first {
        p.bits as usize * (s - 1 - j)
    } else {
        p.bits as usize * j
    };
    ((w >> shift) & ((1u64 << p.bits) - 1)) as u32
}

/// Decodes every sample of the kept channel into `codes`; returns the stream index of the first
/// sample that holds no valid code.
#[inline(always)]
fn decode<const N: u32, const G: usize, const MSB: bool>(
    data: &[u8],
    decoder: &Decoder,
    layout: &BinaryLayout,
    codes: &mut Vec<i32>,
) -> Option<usize> {
    let s = 8 * G / N as usize;
    // Every N-bit field is a valid N-bit code: one branch-free pass (the usual capture).
    if decoder.bits == N && layout.channels == 1 {
        let half = 1i32 << (N - 1);
        match decoder.coding {
            Coding::TwosComplement => {
                for g in data.chunks_exact(G) {
                    let w = group_word::<G, MSB>(g);
                    for j in 0..s {
                        codes.push(sign_extend(field::<N, MSB>(w, j, s), N) as i32);
                    }
                }
            }
            Coding::OffsetBinary => {
                for g in data.chunks_exact(G) {
                    let w = group_word::<G, MSB>(g);
                    for j in 0..s {
                        codes.push(field::<N, MSB>(w, j, s) as i32 - half);
                    }
                }
            }
        }
        return None;
    }
    let mut k = 0usize;
    let mut next = layout.channel;
    for g in data.chunks_exact(G) {
        let w = group_word::<G, MSB>(g);
        for j in 0..s {
            if k == next {
                next += layout.channels;
                match decoder.decode(field::<N, MSB>(w, j, s)) {
                    // Every decoded value lies in the N-bit range, N <= 14, so it fits an i32.
                    Some(v) => codes.push(v as i32),
                    None => return Some(k),
                }
            }
            k += 1;
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::super::{parse_binary, Format, Justify};
    use super::*;

    // Sources: the packings are this module's documented layouts (super::Packing); the bytes below are
    // worked by hand from them. Two's complement and offset binary are common practice, no source.

    fn layout(word: &str) -> BinaryLayout {
        Format::parse_word(word).unwrap()
    }

    #[test]
    fn twelve_bit_pairs_in_both_nibble_orders() {
        // s0 = 0x123, s1 = 0xABC (-1348 in 12-bit two's complement).
        // p12le: s0[7:0] = 0x23, s1[3:0]·s0[11:8] = 0xC1, s1[11:4] = 0xAB.
        let le = [0x23u8, 0xC1, 0xAB];
        // p12be: s0[11:4] = 0x12, s0[3:0]·s1[11:8] = 0x3A, s1[7:0] = 0xBC.
        let be = [0x12u8, 0x3A, 0xBC];
        let want = vec![0x123, 0xABC - 4096];
        assert_eq!(
            parse_binary(&le, "r.bin", 12, &layout("p12le")).unwrap(),
            want
        );
        assert_eq!(
            parse_binary(&be, "r.bin", 12, &layout("p12be")).unwrap(),
            want
        );
        // The other nibble order gives other codes.
        assert_ne!(
            parse_binary(&le, "r.bin", 12, &layout("p12be")).unwrap(),
            want
        );
        // Offset binary: code = field - 2048.
        let mut l = layout("p12le");
        l.coding = Some(Coding::OffsetBinary);
        assert_eq!(
            parse_binary(&le, "r.bin", 12, &l).unwrap(),
            vec![0x123 - 2048, 0xABC - 2048]
        );
    }

    #[test]
    fn ten_and_fourteen_bit_groups() {
        // Four 10-bit samples 1, 2, 3, -1 (0x3FF) little-endian: the 40-bit group is
        // 0x3FF << 30 | 3 << 20 | 2 << 10 | 1 = 0xFFC0300801, bytes 01 08 30 C0 FF.
        let le = [0x01u8, 0x08, 0x30, 0xC0, 0xFF];
        assert_eq!(
            parse_binary(&le, "r.bin", 10, &layout("p10le")).unwrap(),
            vec![1, 2, 3, -1]
        );
        // Big-endian: 1 << 30 | 2 << 20 | 3 << 10 | 0x3FF = 0x0040200FFF, bytes 00 40 20 0F FF.
        let be = [0x00u8, 0x40, 0x20, 0x0F, 0xFF];
        assert_eq!(
            parse_binary(&be, "r.bin", 10, &layout("p10be")).unwrap(),
            vec![1, 2, 3, -1]
        );
        // Four 14-bit samples -8192, 8191, 0, 5 in 7 bytes; built from the 56-bit group.
        let f = [0x2000u64, 0x1FFF, 0, 5];
        let w_le = f[0] | f[1] << 14 | f[2] << 28 | f[3] << 42;
        let w_be = f[0] << 42 | f[1] << 28 | f[2] << 14 | f[3];
        let le: Vec<u8> = w_le.to_le_bytes()[..7].to_vec();
        let be: Vec<u8> = w_be.to_be_bytes()[1..].to_vec();
        let want = vec![-8192, 8191, 0, 5];
        assert_eq!(
            parse_binary(&le, "r.bin", 14, &layout("p14le")).unwrap(),
            want
        );
        assert_eq!(
            parse_binary(&be, "r.bin", 14, &layout("p14be")).unwrap(),
            want
        );
    }

    #[test]
    fn fewer_bits_than_the_packing_and_channels() {
        // 12-bit codes right-justified in 14-bit fields: 0x3FFF is -1 sign-extended, 0x07FF is 2047.
        let f = [0x3FFFu64, 0x07FF, 0x0800, 0x2000];
        let w = f[0] | f[1] << 14 | f[2] << 28 | f[3] << 42;
        let bytes = w.to_le_bytes()[..7].to_vec();
        let got = parse_binary(&bytes, "r.bin", 12, &layout("p14le"));
        // 0x2000 (-8192 in 14 bits) is no 12-bit code: refused at the byte holding its first bit,
        // 3 * 14 / 8 = 5.
        let e = got.unwrap_err();
        assert_eq!(e.kind, ErrorKind::CodeOutOfRange);
        assert_eq!(e.location, Location::Byte(5));
        assert!(
            e.found.contains("0x2000") && e.found.contains("sample 3"),
            "{}",
            e.found
        );
        // 0x0800 has zero above bit 11, so the 12-bit field carries the sign: -2048.
        let mut l = layout("p14le");
        l.channels = 2;
        l.channel = 0;
        assert_eq!(
            parse_binary(&bytes, "r.bin", 12, &l).unwrap(),
            vec![-1, -2048]
        );
        l.channel = 1;
        let e = parse_binary(&bytes, "r.bin", 12, &l).unwrap_err();
        assert_eq!(e.location, Location::Byte(5));
        // Left-justified: the top 12 bits of each 14-bit field.
        let mut l = layout("p14le");
        l.justify = Justify::Left;
        assert_eq!(
            parse_binary(&bytes, "r.bin", 12, &l).unwrap(),
            vec![-1, 511, 512, -2048]
        );
    }

    #[test]
    fn partial_groups_and_frames_name_their_offset() {
        // 7 bytes of p12le: two whole groups and one byte over, at offset 6.
        let e = parse_binary(&[0u8; 7], "r.bin", 12, &layout("p12le")).unwrap_err();
        assert_eq!(e.kind, ErrorKind::PartialWord);
        assert_eq!(e.location, Location::Byte(6));
        assert_eq!(e.found, "7 bytes");
        assert!(
            e.expected.starts_with("a multiple of 3 bytes ("),
            "{}",
            e.expected
        );
        // With a 2-byte header, the offset counts from the start of the file.
        let mut l = layout("p10be");
        l.skip_bytes = 2;
        let e = parse_binary(&[0u8; 2 + 5 + 3], "r.bin", 10, &l).unwrap_err();
        assert_eq!(e.location, Location::Byte(2 + 5));
        assert!(
            e.expected.contains("after the 2 header bytes"),
            "{}",
            e.expected
        );
        // Three channels of 12-bit samples, 4 samples in 6 bytes: sample 3 starts the partial
        // frame, at byte 3 * 12 / 8 = 4.
        let mut l = layout("p12be");
        l.channels = 3;
        let e = parse_binary(&[0u8; 6], "r.bin", 12, &l).unwrap_err();
        assert_eq!(e.kind, ErrorKind::PartialWord);
        assert_eq!(e.location, Location::Byte(4));
        assert_eq!(e.found, "4 samples");
    }

    #[test]
    fn bad_packings_are_settings_errors() {
        let e = parse_binary(&[0u8; 3], "r.bin", 13, &layout("p12le")).unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadSetting);
        assert_eq!(e.expected, "at most 12 bits in 12-bit packed samples");
        let mut l = layout("p12le");
        l.packing = Some(Packing {
            bits: 11,
            msb_first: false,
        });
        let e = parse_binary(&[0u8; 11], "r.bin", 8, &l).unwrap_err();
        assert_eq!(e.location, Location::Key("format".into()));
        assert_eq!(e.found, "11 bits");
    }

    #[test]
    fn group_sizes() {
        for (bits, g, s) in [(10, 5, 4), (12, 3, 2), (14, 7, 4)] {
            let p = Packing {
                bits,
                msb_first: false,
            };
            assert_eq!((p.group_bytes(), p.group_samples()), (g, s), "{bits}");
        }
    }
}

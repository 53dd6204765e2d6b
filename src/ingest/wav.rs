//! WAV records (RIFF, and RF64/BW64 for data beyond 4 GiB): a chunk reader of our own that finds the
//! `fmt ` and `data` chunks (and `ds64` for the 64-bit sizes), then decodes one channel straight from
//! the file's bytes: PCM of 8, 16, 24 and 32 bits as codes, IEEE float of 32 and 64 bits as values in
//! units of full scale, plain or `WAVE_FORMAT_EXTENSIBLE`. Every error gives the byte offset.
//!
//! Why not a crate: the well-kept WAV crates either lack RF64 and 64-bit float (hound) or read
//! through a frame reader whose errors carry no position; the container itself is a few fixed fields.

use super::checks::{check_bits, no_samples, show_token};
use super::samples::Samples;
use crate::error::{Error, ErrorKind, Location, Result};

/// `wFormatTag` of integer PCM.
const TAG_PCM: u16 = 0x0001;
/// `wFormatTag` of IEEE float.
const TAG_FLOAT: u16 = 0x0003;
/// `wFormatTag` of `WAVE_FORMAT_EXTENSIBLE`: the sub-format GUID says PCM or float.
const TAG_EXTENSIBLE: u16 = 0xFFFE;
/// The 14 bytes after the 2-byte format tag in every `KSDATAFORMAT_SUBTYPE_*` GUID of the
/// extensible format (PCM: tag 1, float: tag 3).
const GUID_TAIL: [u8; 14] = [
    0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xAA, 0x00, 0x38, 0x9B, 0x71,
];

/// What the header of a WAV file says, as far as a record needs it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct WavLayout {
    /// Float samples (IEEE float) rather than integer PCM.
    pub float: bool,
    /// Interleaved channels.
    pub channels: usize,
    /// Frames per second, as the header states it.
    pub sample_rate_hz: u32,
    /// Bytes per sample in the container (1, 2, 3, 4 or 8).
    pub sample_bytes: usize,
    /// Significant bits (the extensible format's valid bits, else the container's).
    pub valid_bits: u32,
    /// Byte offset of the first sample.
    pub data_offset: usize,
    /// Bytes of sample data (whole frames).
    pub data_bytes: usize,
    /// An RF64/BW64 file (sizes in the `ds64` chunk).
    pub rf64: bool,
}

/// Little-endian reads at a byte offset, `None` past the end.
fn u16_at(b: &[u8], at: usize) -> Option<u16> {
    Some(u16::from_le_bytes(
        b.get(at..at.checked_add(2)?)?.try_into().ok()?,
    ))
}
fn u32_at(b: &[u8], at: usize) -> Option<u32> {
    Some(u32::from_le_bytes(
        b.get(at..at.checked_add(4)?)?.try_into().ok()?,
    ))
}
fn u64_at(b: &[u8], at: usize) -> Option<u64> {
    Some(u64::from_le_bytes(
        b.get(at..at.checked_add(8)?)?.try_into().ok()?,
    ))
}

/// Reads and checks the header of a WAV file.
///
/// Errors ([`ErrorKind::BadMetadata`] at the byte offset of the problem): not RIFF/RF64/BW64 WAVE, a
/// chunk that runs past the end of the file, no `fmt ` or no `data` chunk, an RF64 file without its
/// `ds64` chunk, a format other than PCM or IEEE float (plain or extensible), sizes that disagree
/// (block alignment, bits), no channels. [`ErrorKind::PartialWord`] when the data chunk is shorter
/// than it says or ends in a partial frame.
pub fn read_wav_header(bytes: &[u8], path: &str) -> Result<WavLayout> {
    let bad = |at: usize, expected: &str, found: String| {
        Error::new(
            ErrorKind::BadMetadata,
            path,
            Location::Byte(at as u64),
            expected,
            found,
        )
    };
    let head = bytes.get(..12).unwrap_or(bytes);
    let rf64 = match head.get(..4) {
        Some(b"RIFF") => false,
        Some(b"RF64" | b"BW64") => true,
        _ => {
            return Err(bad(
                0,
                "a WAV file starting RIFF, RF64 or BW64",
                show_token(&head[..head.len().min(4)]),
            ))
        }
    };
    if head.get(8..12) != Some(b"WAVE") {
        return Err(bad(
            8,
            "the form type WAVE",
            show_token(head.get(8..).unwrap_or_default()),
        ));
    }
    let mut fmt: Option<(usize, usize)> = None;
    let mut data: Option<(usize, u64)> = None;
    let mut ds64_data: Option<u64> = None;
    let mut at = 12usize;
    while at < bytes.len() {
        let (Some(id), Some(size32)) = (bytes.get(at..at + 4), u32_at(bytes, at + 4)) else {
            // A few stray bytes after the last chunk (some writers pad) are not a chunk.
            if data.is_some() {
                break;
            }
            return Err(bad(
                at,
                "a chunk header (4-byte id, 4-byte size)",
                format!("{} bytes left in the file", bytes.len() - at),
            ));
        };
        let body = at + 8;
        let mut size = u64::from(size32);
        if id == b"ds64" {
            if !rf64 {
                return Err(bad(
                    at,
                    "a ds64 chunk only in an RF64 file",
                    "ds64 in a RIFF file".into(),
                ));
            }
            ds64_data = Some(u64_at(bytes, body + 8).ok_or_else(|| {
                bad(
                    body + 8,
                    "the ds64 chunk's 64-bit data size",
                    "the end of the file".into(),
                )
            })?);
        }
        if id == b"data" {
            if rf64 && size32 == u32::MAX {
                size = ds64_data.ok_or_else(|| {
                    bad(
                        at,
                        "a ds64 chunk before the data chunk of an RF64 file",
                        "none".into(),
                    )
                })?;
            }
            data = Some((body, size));
            // The data chunk is usually the last; a truncated one is reported below.
            let end = (body as u64).saturating_add(size);
            if end >= bytes.len() as u64 {
                break;
            }
        } else if body as u64 + size > bytes.len() as u64 {
            return Err(bad(
                at,
                &format!(
                    "a chunk '{}' of {size} bytes, as its size says",
                    String::from_utf8_lossy(id)
                ),
                format!(
                    "{} bytes left in the file",
                    bytes.len() - body.min(bytes.len())
                ),
            ));
        }
        if id == b"fmt " {
            fmt = Some((body, size as usize));
        }
        // Chunks are padded to an even length.
        let next = (body as u64).saturating_add(size).saturating_add(size & 1);
        at = usize::try_from(next).unwrap_or(usize::MAX);
    }
    let Some((f, fmt_len)) = fmt else {
        return Err(bad(
            12,
            "a 'fmt ' chunk",
            "none before the data or the end".into(),
        ));
    };
    let Some((data_offset, data_size)) = data else {
        return Err(bad(12, "a 'data' chunk", "none".into()));
    };
    if fmt_len < 16 {
        return Err(bad(
            f - 8,
            "a 'fmt ' chunk of at least 16 bytes",
            format!("{fmt_len} bytes"),
        ));
    }
    // The chunk is inside the file (checked above), so these reads succeed.
    let tag = u16_at(bytes, f).unwrap_or(0);
    let channels = u16_at(bytes, f + 2).unwrap_or(0) as usize;
    let sample_rate_hz = u32_at(bytes, f + 4).unwrap_or(0);
    let block = u16_at(bytes, f + 12).unwrap_or(0) as usize;
    let bits = u32::from(u16_at(bytes, f + 14).unwrap_or(0));
    let (kind, valid_bits) = if tag == TAG_EXTENSIBLE {
        if fmt_len < 40 {
            return Err(bad(
                f - 8,
                "a 'fmt ' chunk of 40 bytes for WAVE_FORMAT_EXTENSIBLE",
                format!("{fmt_len} bytes"),
            ));
        }
        let guid = &bytes[f + 24..f + 40];
        let sub = u16::from_le_bytes([guid[0], guid[1]]);
        if guid[2..] != GUID_TAIL || !(sub == TAG_PCM || sub == TAG_FLOAT) {
            return Err(bad(
                f + 24,
                "the sub-format GUID of PCM or IEEE float",
                guid.iter().map(|b| format!("{b:02x}")).collect(),
            ));
        }
        let valid = u32::from(u16_at(bytes, f + 18).unwrap_or(0));
        (sub, if valid == 0 { bits } else { valid })
    } else {
        (tag, bits)
    };
    let float = match kind {
        TAG_PCM => false,
        TAG_FLOAT => true,
        other => {
            return Err(bad(
                f,
                "the format tag of PCM (1), IEEE float (3) or WAVE_FORMAT_EXTENSIBLE (0xFFFE)",
                format!("format tag 0x{other:04x} (a compressed format)"),
            ))
        }
    };
    let sample_bytes = (bits as usize).div_ceil(8);
    let sizes_ok = if float {
        matches!(bits, 32 | 64)
    } else {
        matches!(bits, 8 | 16 | 24 | 32)
    };
    if !sizes_ok || valid_bits > bits || valid_bits == 0 {
        let expected = if float {
            "IEEE float samples of 32 or 64 bits"
        } else {
            "PCM samples of 8, 16, 24 or 32 bits (valid bits no more than those)"
        };
        return Err(bad(
            f + 14,
            expected,
            format!("{bits} bits ({valid_bits} valid)"),
        ));
    }
    if channels == 0 || block != channels * sample_bytes {
        return Err(bad(
            f + 2,
            &format!("at least one channel and a block of channels × {sample_bytes} bytes"),
            format!("{channels} channels, block of {block} bytes"),
        ));
    }
    let have = (bytes.len() - data_offset.min(bytes.len())) as u64;
    if data_size > have {
        return Err(Error::new(
            ErrorKind::PartialWord,
            path,
            Location::Byte(bytes.len() as u64),
            format!("{data_size} bytes of sample data, as the data chunk's size says"),
            format!("{have} bytes before the end of the file"),
        ));
    }
    let data_bytes = data_size as usize;
    if !data_bytes.is_multiple_of(block) {
        let whole = data_bytes / block * block;
        return Err(Error::new(
            ErrorKind::PartialWord,
            path,
            Location::Byte((data_offset + whole) as u64),
            format!("whole frames of {block} bytes ({channels} channels)"),
            format!("{} bytes left over", data_bytes - whole),
        ));
    }
    Ok(WavLayout {
        float,
        channels,
        sample_rate_hz,
        sample_bytes,
        valid_bits,
        data_offset,
        data_bytes,
        rf64,
    })
}

/// The byte offset of sample `k` of the chosen channel, for an error about it (`None` when the
/// header does not read).
pub(crate) fn sample_offset(
    bytes: &[u8],
    path: &str,
    channel: Option<(usize, usize)>,
    k: usize,
) -> Option<u64> {
    let l = read_wav_header(bytes, path).ok()?;
    let col = channel.map_or(0, |c| c.0);
    let w = l.sample_bytes as u64;
    Some(l.data_offset as u64 + col as u64 * w + k as u64 * l.channels as u64 * w)
}

/// A WAV record read: its samples, the header's sample rate and resolution, and notes.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct WavRead {
    pub samples: Samples,
    pub sample_rate_hz: f64,
    /// The resolution of the codes (the given one, else the valid bits); `None` for float data.
    pub bits: Option<u32>,
    pub warnings: Vec<String>,
}

/// Reads one channel of a WAV record.
///
/// PCM samples are codes: 8-bit ones offset binary (as WAV stores them), the others two's
/// complement, left-justified in their container (WAV's rule), so a converter of `bits` fewer than the
/// container's has its codes shifted down by the difference (a warning counts samples whose dropped
/// bits were not zero). Float samples are values, ±1.0 full scale. `channel` is (0-based channel,
/// channels), the channel count must match the file's; `None` only for one channel. Errors as
/// [`read_wav_header`], and [`ErrorKind::BadSetting`] for the channel or for more bits than the
/// container holds, [`ErrorKind::NotInteger`] for a float that is NaN or infinite (at its offset).
pub(crate) fn parse_wav(
    bytes: &[u8],
    path: &str,
    bits: Option<u32>,
    channel: Option<(usize, usize)>,
) -> Result<WavRead> {
    let l = read_wav_header(bytes, path)?;
    let col = match channel {
        None if l.channels == 1 => 0,
        Some((k, m)) if m == l.channels && k < m => k,
        given => {
            let found = match given {
                Some((k, m)) => format!("channel {}/{m}", k + 1),
                None => "no channel given".to_string(),
            };
            return Err(Error::new(
                ErrorKind::BadSetting,
                path,
                Location::Key("channel".into()),
                format!(
                    "a channel K/{} of the file's {} channels: give --channel",
                    l.channels, l.channels
                ),
                found,
            ));
        }
    };
    let frames = l.data_bytes / (l.channels * l.sample_bytes);
    if frames == 0 {
        return Err(no_samples(path, "a data chunk with no frames"));
    }
    let w = l.sample_bytes;
    let step = l.channels * w;
    let data = &bytes[l.data_offset..l.data_offset + l.data_bytes];
    let start = col * w;
    let at = |k: usize| (l.data_offset + start + k * step) as u64;
    let mut warnings = Vec::new();
    if l.float {
        let mut v = Vec::with_capacity(frames);
        let bad = if w == 4 {
            floats::<4>(data, start, step, frames, &mut v)
        } else {
            floats::<8>(data, start, step, frames, &mut v)
        };
        if let Some(k) = bad {
            return Err(Error::new(
                ErrorKind::NotInteger,
                path,
                Location::Byte(at(k)),
                "a finite float sample",
                format!("{}", v[k]),
            ));
        }
        if let Some(b) = bits {
            check_bits(b).map_err(|e| e.with_path(path))?;
        }
        return Ok(WavRead {
            samples: Samples::Values(v),
            sample_rate_hz: f64::from(l.sample_rate_hz),
            bits,
            warnings,
        });
    }
    let container = 8 * w as u32;
    let n = bits.unwrap_or(l.valid_bits);
    check_bits(n).map_err(|e| e.with_path(path))?;
    if n > l.valid_bits {
        return Err(Error::setting(
            "bits",
            format!(
                "at most the {} valid bits of this WAV file's {}-bit samples",
                l.valid_bits, container
            ),
            n.to_string(),
        )
        .with_path(path));
    }
    let shift = container - n;
    let mut codes = Vec::with_capacity(frames);
    let mut padded = 0usize;
    let mask = if shift == 0 { 0 } else { (1i64 << shift) - 1 };
    match w {
        1 => pcm::<1>(
            data,
            start,
            step,
            frames,
            shift,
            mask,
            &mut codes,
            &mut padded,
        ),
        2 => pcm::<2>(
            data,
            start,
            step,
            frames,
            shift,
            mask,
            &mut codes,
            &mut padded,
        ),
        3 => pcm::<3>(
            data,
            start,
            step,
            frames,
            shift,
            mask,
            &mut codes,
            &mut padded,
        ),
        _ => pcm::<4>(
            data,
            start,
            step,
            frames,
            shift,
            mask,
            &mut codes,
            &mut padded,
        ),
    }
    if padded > 0 {
        warnings.push(format!(
            "{padded} samples ({:.2}%) have bits set below the {n} bits read from their \
             {container}-bit containers; they were dropped: check --bits",
            100.0 * padded as f64 / frames as f64
        ));
    }
    Ok(WavRead {
        samples: Samples::Codes(codes),
        sample_rate_hz: f64::from(l.sample_rate_hz),
        bits: Some(n),
        warnings,
    })
}

/// Decodes `W`-byte PCM samples to signed codes shifted down by `shift`; counts samples with any
/// of the dropped bits set.
#[allow(clippy::too_many_arguments)]
#[inline(always)]
fn pcm<const W: usize>(
    data: &[u8],
    start: usize,
    step: usize,
    frames: usize,
    shift: u32,
    mask: i64,
    out: &mut Vec<i32>,
    padded: &mut usize,
) {
    let mut dropped = 0usize;
    for k in 0..frames {
        let o = start + k * step;
        let b = &data[o..o + W];
        let v: i64 = match W {
            // 8-bit WAV is unsigned, mid-scale 128.
            1 => i64::from(b[0]) - 128,
            2 => i64::from(i16::from_le_bytes([b[0], b[1]])),
            // Sign-extend the 24-bit value by placing it in the top of an i32.
            3 => i64::from(i32::from_le_bytes([0, b[0], b[1], b[2]]) >> 8),
            _ => i64::from(i32::from_le_bytes([b[0], b[1], b[2], b[3]])),
        };
        dropped += usize::from(v & mask != 0);
        out.push((v >> shift) as i32);
    }
    *padded = dropped;
}

/// Decodes little-endian `W`-byte floats; the index of the first NaN or infinity, if any.
#[inline(always)]
fn floats<const W: usize>(
    data: &[u8],
    start: usize,
    step: usize,
    frames: usize,
    out: &mut Vec<f64>,
) -> Option<usize> {
    for k in 0..frames {
        let o = start + k * step;
        let b = &data[o..o + W];
        let v = if W == 4 {
            f64::from(f32::from_le_bytes([b[0], b[1], b[2], b[3]]))
        } else {
            f64::from_le_bytes([b[0], b[1], b[2], b[3], b[4], b[5], b[6], b[7]])
        };
        out.push(v);
        if !v.is_finite() {
            return Some(k);
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    // Sources: the RIFF/WAVE layout (fmt fields, 8-bit unsigned and wider signed little-endian PCM,
    // IEEE float tag 3, WAVE_FORMAT_EXTENSIBLE 0xFFFE with its sub-format GUID) from Microsoft's
    // multimedia data specification; RF64's ds64 chunk from EBU Tech 3306; both from memory.

    /// A WAV file: `tag`, channels, rate, container bits, valid bits (extensible when `Some`), data.
    fn wav(tag: u16, channels: u16, bits: u16, valid: Option<u16>, data: &[u8]) -> Vec<u8> {
        let block = channels * bits.div_ceil(8);
        let mut fmt = Vec::new();
        fmt.extend(if valid.is_some() { TAG_EXTENSIBLE } else { tag }.to_le_bytes());
        fmt.extend(channels.to_le_bytes());
        fmt.extend(48_000u32.to_le_bytes());
        fmt.extend((48_000u32 * u32::from(block)).to_le_bytes());
        fmt.extend(block.to_le_bytes());
        fmt.extend(bits.to_le_bytes());
        if let Some(v) = valid {
            fmt.extend(22u16.to_le_bytes());
            fmt.extend(v.to_le_bytes());
            fmt.extend(0u32.to_le_bytes());
            fmt.extend(tag.to_le_bytes());
            fmt.extend(GUID_TAIL);
        }
        let mut out = b"RIFF\0\0\0\0WAVE".to_vec();
        out.extend(b"fmt ");
        out.extend((fmt.len() as u32).to_le_bytes());
        out.extend(&fmt);
        out.extend(b"data");
        out.extend((data.len() as u32).to_le_bytes());
        out.extend(data);
        let size = (out.len() - 8) as u32;
        out[4..8].copy_from_slice(&size.to_le_bytes());
        out
    }

    fn codes(r: &WavRead) -> Vec<i32> {
        match &r.samples {
            Samples::Codes(c) => c.clone(),
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn pcm_widths_decode_to_signed_codes() {
        let r = parse_wav(&wav(1, 1, 8, None, &[0, 128, 255]), "a.wav", None, None).unwrap();
        assert_eq!(
            (codes(&r), r.bits, r.sample_rate_hz),
            (vec![-128, 0, 127], Some(8), 48e3)
        );
        let d: Vec<u8> = [-32768i16, -1, 32767]
            .iter()
            .flat_map(|v| v.to_le_bytes())
            .collect();
        let r = parse_wav(&wav(1, 1, 16, None, &d), "a.wav", None, None).unwrap();
        assert_eq!(codes(&r), vec![-32768, -1, 32767]);
        // 24-bit: 0x800000 is the most negative, 0x7fffff the most positive.
        let d = [0x00, 0x00, 0x80, 0xff, 0xff, 0xff, 0xff, 0xff, 0x7f];
        let r = parse_wav(&wav(1, 1, 24, None, &d), "a.wav", None, None).unwrap();
        assert_eq!(
            (codes(&r), r.bits),
            (vec![-8_388_608, -1, 8_388_607], Some(24))
        );
        let d: Vec<u8> = [i32::MIN, 5].iter().flat_map(|v| v.to_le_bytes()).collect();
        let r = parse_wav(&wav(1, 1, 32, None, &d), "a.wav", None, None).unwrap();
        assert_eq!(codes(&r), vec![i32::MIN, 5]);
    }

    #[test]
    fn fewer_bits_shift_the_left_justified_codes_down() {
        // 24 valid bits in 32-bit containers (extensible), codes 3 and -2 with zero padding.
        let d: Vec<u8> = [3i32 << 8, -2 << 8, (7 << 8) | 1]
            .iter()
            .flat_map(|v| v.to_le_bytes())
            .collect();
        let r = parse_wav(&wav(1, 1, 32, Some(24), &d), "a.wav", None, None).unwrap();
        assert_eq!((codes(&r), r.bits), (vec![3, -2, 7], Some(24)));
        assert!(
            r.warnings[0].starts_with("1 samples (33.33%)"),
            "{:?}",
            r.warnings
        );
        // --bits fewer again: 20 bits.
        let r = parse_wav(&wav(1, 1, 32, Some(24), &d), "a.wav", Some(20), None).unwrap();
        assert_eq!(codes(&r), vec![0, -1, 0]);
        let e = parse_wav(&wav(1, 1, 32, Some(24), &d), "a.wav", Some(28), None).unwrap_err();
        assert_eq!(e.location, Location::Key("bits".into()));
    }

    #[test]
    fn floats_and_channels() {
        let d: Vec<u8> = [0.5f32, -0.25, 1.0, 0.0]
            .iter()
            .flat_map(|v| v.to_le_bytes())
            .collect();
        let r = parse_wav(&wav(3, 2, 32, None, &d), "a.wav", None, Some((1, 2))).unwrap();
        assert_eq!(r.samples, Samples::Values(vec![-0.25, 0.0]));
        assert_eq!(r.bits, None);
        let d: Vec<u8> = [0.5f64, f64::NAN]
            .iter()
            .flat_map(|v| v.to_le_bytes())
            .collect();
        let bytes = wav(3, 1, 64, Some(64), &d);
        let e = parse_wav(&bytes, "a.wav", None, None).unwrap_err();
        assert_eq!(e.kind, ErrorKind::NotInteger);
        assert_eq!(e.location, Location::Byte(bytes.len() as u64 - 8));
        // Two channels and no choice, or the wrong count: the error says how many.
        let d = [0u8; 8];
        for ch in [None, Some((0, 4)), Some((2, 2))] {
            let e = parse_wav(&wav(1, 2, 16, None, &d), "a.wav", None, ch).unwrap_err();
            assert_eq!(e.location, Location::Key("channel".into()));
            assert!(e.expected.contains("K/2"), "{}", e.expected);
        }
    }

    #[test]
    fn rf64_sizes_come_from_ds64() {
        let d: Vec<u8> = [1i16, 2, 3].iter().flat_map(|v| v.to_le_bytes()).collect();
        let plain = wav(1, 1, 16, None, &d);
        // RF64: the ds64 chunk (riff size, data size, sample count, table length 0) before fmt.
        let mut b = b"RF64\xff\xff\xff\xffWAVEds64".to_vec();
        b.extend(28u32.to_le_bytes());
        b.extend(0u64.to_le_bytes());
        b.extend((d.len() as u64).to_le_bytes());
        b.extend(3u64.to_le_bytes());
        b.extend(0u32.to_le_bytes());
        let fmt_end = plain.len() - d.len() - 8;
        b.extend(&plain[12..fmt_end]);
        b.extend(b"data\xff\xff\xff\xff");
        b.extend(&d);
        let l = read_wav_header(&b, "a.wav").unwrap();
        assert!(l.rf64);
        assert_eq!(l.data_bytes, 6);
        assert_eq!(
            codes(&parse_wav(&b, "a.wav", None, None).unwrap()),
            vec![1, 2, 3]
        );
        // Without ds64 the data size is unknown.
        let mut no_ds64 = b"RF64\xff\xff\xff\xffWAVE".to_vec();
        no_ds64.extend(&b[48..]);
        let e = read_wav_header(&no_ds64, "a.wav").unwrap_err();
        assert!(e.expected.contains("ds64"), "{e}");
    }

    #[test]
    fn broken_files_name_the_byte() {
        let d: Vec<u8> = [1i16, 2, 3].iter().flat_map(|v| v.to_le_bytes()).collect();
        let good = wav(1, 1, 16, None, &d);
        // Truncated inside the data: the declared size is missing bytes.
        let e = read_wav_header(&good[..good.len() - 1], "a.wav").unwrap_err();
        assert_eq!(e.kind, ErrorKind::PartialWord);
        assert_eq!(e.location, Location::Byte(good.len() as u64 - 1));
        // A partial frame in 2-channel data.
        let e = read_wav_header(&wav(1, 2, 16, None, &d), "a.wav").unwrap_err();
        assert_eq!(e.kind, ErrorKind::PartialWord);
        assert_eq!(e.location, Location::Byte(good.len() as u64 - 2));
        // A compressed format.
        let e = read_wav_header(&wav(2, 1, 16, None, &d), "a.wav").unwrap_err();
        assert_eq!(
            (e.kind, e.location.clone()),
            (ErrorKind::BadMetadata, Location::Byte(20))
        );
        assert!(e.found.contains("0x0002"), "{}", e.found);
        // Not a WAV, a cut header, no fmt chunk.
        assert_eq!(
            read_wav_header(b"RIFX", "a.wav").unwrap_err().location,
            Location::Byte(0)
        );
        assert_eq!(
            read_wav_header(&good[..20], "a.wav").unwrap_err().location,
            Location::Byte(12)
        );
        let mut no_fmt = b"RIFF\0\0\0\0WAVE".to_vec();
        no_fmt.extend(&good[good.len() - d.len() - 8..]);
        let e = read_wav_header(&no_fmt, "a.wav").unwrap_err();
        assert!(e.expected.contains("fmt"), "{e}");
        // Every prefix of a good file is an error or a shorter record, never a panic.
        for cut in 0..good.len() {
            let _ = parse_wav(&good[..cut], "a.wav", None, None);
        }
    }
}

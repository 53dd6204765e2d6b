//! NumPy `.npy` records (format versions 1, 2 and 3): the header is read by the `npyz` crate, the
//! data decoded here straight from the file's bytes (every integer and float dtype, either byte order,
//! C or Fortran order), one column of a 2-D array.

use super::checks::{check_bits, no_samples, range_text};
use super::samples::Samples;
use crate::error::{Error, ErrorKind, Location, Result};
use crate::record::Coding;

/// The magic string every `.npy` file starts with.
pub(crate) const MAGIC: &[u8] = b"\x93NUMPY";

/// What the header of a `.npy` file says, as far as a record needs it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct NpyLayout {
    /// The element type: 'i' (signed), 'u' (unsigned) or 'f' (float).
    pub kind: char,
    /// Bytes per element.
    pub item_bytes: usize,
    /// Most significant byte first.
    pub big_endian: bool,
    /// Rows (samples) and columns (channels); a 1-D array has one column.
    pub rows: u64,
    /// Columns (channels).
    pub columns: u64,
    /// Column-major (Fortran) order: each column is contiguous.
    pub fortran: bool,
    /// Byte offset of the first element.
    pub data_offset: usize,
}

/// A short name of the element type as numpy writes it, e.g. "<i2".
fn dtype_name(l: &NpyLayout) -> String {
    let order = if l.item_bytes == 1 {
        '|'
    } else if l.big_endian {
        '>'
    } else {
        '<'
    };
    format!("{order}{}{}", l.kind, l.item_bytes)
}

/// Reads and checks the header of a `.npy` file.
///
/// Errors ([`ErrorKind::BadMetadata`] at the byte offset of the problem): not the npy magic, an
/// unsupported version, a header that does not parse, a dtype that is not a plain integer or float
/// (structured arrays, strings, objects, complex, float16), more than two dimensions of length above
/// one, or a shape whose element count does not fit.
pub fn read_npy_header(bytes: &[u8], path: &str) -> Result<NpyLayout> {
    let bad = |at: u64, expected: &str, found: String| {
        Error::new(
            ErrorKind::BadMetadata,
            path,
            Location::Byte(at),
            expected,
            found,
        )
    };
    if !bytes.starts_with(MAGIC) {
        let head = &bytes[..bytes.len().min(6)];
        return Err(bad(
            0,
            "the NumPy magic \\x93NUMPY",
            super::checks::show_token(head),
        ));
    }
    let Some(&[major, minor]) = bytes.get(6..8) else {
        return Err(bad(
            6,
            "a version number",
            format!("a file of {} bytes", bytes.len()),
        ));
    };
    let (len_bytes, len) = match major {
        1 => (
            2,
            bytes
                .get(8..10)
                .map(|b| u16::from_le_bytes([b[0], b[1]]) as usize),
        ),
        2 | 3 => (
            4,
            bytes
                .get(8..12)
                .map(|b| u32::from_le_bytes([b[0], b[1], b[2], b[3]]) as usize),
        ),
        _ => {
            return Err(bad(
                6,
                "npy format version 1.0, 2.0 or 3.0",
                format!("version {major}.{minor}"),
            ))
        }
    };
    let text_start: usize = 8 + len_bytes;
    let Some(len) = len else {
        return Err(bad(
            8,
            "the header length",
            format!("a file of {} bytes", bytes.len()),
        ));
    };
    let data_offset = text_start.saturating_add(len);
    if data_offset > bytes.len() {
        return Err(bad(
            8,
            &format!("a header of {len} bytes (as its length field says)"),
            format!("a file of {} bytes", bytes.len()),
        ));
    }
    // npyz multiplies the dimensions without a check: refuse a shape whose product overflows first.
    let text = &bytes[text_start..data_offset];
    if let Some(dims) = shape_dims(text) {
        if dims
            .iter()
            .try_fold(1u64, |a, &d| a.checked_mul(d))
            .is_none()
        {
            return Err(bad(
                text_start as u64,
                "a shape whose element count fits in 64 bits",
                format!("shape {dims:?}"),
            ));
        }
    }
    let header = npyz::NpyHeader::from_reader(&bytes[..data_offset]).map_err(|e| {
        bad(
            text_start as u64,
            "a NumPy header dictionary with descr, fortran_order and shape",
            e.to_string(),
        )
    })?;
    let npyz::DType::Plain(ts) = header.dtype() else {
        return Err(bad(
            text_start as u64,
            "a plain integer or float dtype (not a structured array)",
            header.dtype().descr(),
        ));
    };
    let kind = match ts.type_char() {
        npyz::TypeChar::Int => 'i',
        npyz::TypeChar::Uint => 'u',
        npyz::TypeChar::Float => 'f',
        _ => 'x',
    };
    let item_bytes = ts.num_bytes().unwrap_or(0);
    let supported = match kind {
        'i' | 'u' => matches!(item_bytes, 1 | 2 | 4 | 8),
        'f' => matches!(item_bytes, 4 | 8),
        _ => false,
    };
    if !supported {
        return Err(bad(
            text_start as u64,
            "an integer dtype (i1, i2, i4, i8, u1, u2, u4, u8) or a float dtype (f4, f8)",
            format!("dtype '{ts}'"),
        ));
    }
    let shape = header.shape();
    let long: Vec<u64> = shape.iter().copied().filter(|&d| d != 1).collect();
    let (rows, columns) = match (shape.len(), long.len()) {
        // A 0-d array holds one value.
        (0, _) => (1, 1),
        (1, _) => (shape[0], 1),
        (2, _) => (shape[0], shape[1]),
        (_, 0) => (1, 1),
        (_, 1) => (long[0], 1),
        _ => {
            return Err(bad(
                text_start as u64,
                "a 1-D array, or a 2-D array of samples by channels",
                format!("shape {shape:?}"),
            ))
        }
    };
    Ok(NpyLayout {
        kind,
        item_bytes,
        big_endian: ts.endianness() == npyz::Endianness::Big,
        rows,
        columns,
        fortran: header.order() == npyz::Order::Fortran && shape.len() >= 2,
        data_offset,
    })
}

/// The byte offset of sample `k` of the chosen column, for an error about it (`None` when the header
/// does not read or the column is not there).
pub(crate) fn element_offset(
    bytes: &[u8],
    path: &str,
    column: Option<usize>,
    k: usize,
) -> Option<u64> {
    let l = read_npy_header(bytes, path).ok()?;
    let col = column.unwrap_or(0) as u64;
    if col >= l.columns {
        return None;
    }
    let w = l.item_bytes as u64;
    let (start, step) = if l.fortran || l.columns == 1 {
        (col * l.rows * w, w)
    } else {
        (col * w, l.columns * w)
    };
    Some(l.data_offset as u64 + start + k as u64 * step)
}

/// The dimensions of the `'shape': (a, b, ...)` entry of a header, when they read as integers.
fn shape_dims(text: &[u8]) -> Option<Vec<u64>> {
    let text = std::str::from_utf8(text).ok()?;
    let at = text.find("'shape'")?;
    let rest = &text[at + 7..];
    let open = rest.find('(')?;
    let close = rest[open..].find(')')? + open;
    rest[open + 1..close]
        .split(',')
        .map(str::trim)
        .filter(|s| !s.is_empty())
        .map(|s| s.trim_end_matches('L').parse::<u64>().ok())
        .collect()
}

/// Reads one column of a `.npy` record: integers as N-bit codes (signed dtypes two's complement,
/// unsigned dtypes offset binary unless `coding` says otherwise), floats as values.
///
/// `column` picks the channel of a 2-D array (rows are samples); `None` is allowed only when there is
/// one column. Errors: [`ErrorKind::BadSetting`] for a missing or out-of-range column (listing the
/// columns), [`ErrorKind::PartialWord`] when the data is shorter than the shape says (at the byte
/// offset where it ends), [`ErrorKind::CodeOutOfRange`] for an integer outside the N-bit range (at its
/// byte offset), [`ErrorKind::NotInteger`] for a float that is NaN or infinite.
pub fn parse_npy(
    bytes: &[u8],
    path: &str,
    bits: Option<u32>,
    coding: Option<Coding>,
    column: Option<usize>,
) -> Result<Samples> {
    let l = read_npy_header(bytes, path)?;
    if let Some(b) = bits {
        check_bits(b).map_err(|e| e.with_path(path))?;
    }
    let col = match column {
        Some(c) if (c as u64) < l.columns => c as u64,
        None if l.columns == 1 => 0,
        given => {
            let found = match given {
                Some(c) => format!("column {c}"),
                None => "no column given".to_string(),
            };
            return Err(Error::new(
                ErrorKind::BadSetting,
                path,
                Location::Key("column".into()),
                format!(
                    "a column 0..={} (0-based) of the {} x {} array: give --column",
                    l.columns.saturating_sub(1),
                    l.rows,
                    l.columns
                ),
                found,
            ));
        }
    };
    let total = l.rows.saturating_mul(l.columns);
    let need = total.saturating_mul(l.item_bytes as u64);
    let data = &bytes[l.data_offset..];
    if (data.len() as u64) < need {
        let whole = data.len() / l.item_bytes * l.item_bytes;
        return Err(Error::new(
            ErrorKind::PartialWord,
            path,
            Location::Byte((l.data_offset + whole) as u64),
            format!(
                "{need} bytes of data ({} x {} of {})",
                l.rows,
                l.columns,
                dtype_name(&l)
            ),
            format!("{} bytes", data.len()),
        ));
    }
    if total == 0 {
        return Err(no_samples(
            path,
            format!("an array of shape {} x 0", l.rows),
        ));
    }
    let w = l.item_bytes;
    // Element (row, col) sits at row·columns + col (C order) or col·rows + row (Fortran order).
    let (start, step) = if l.fortran || l.columns == 1 {
        ((col * l.rows) as usize * w, w)
    } else {
        (col as usize * w, l.columns as usize * w)
    };
    let rows = l.rows as usize;
    let at = |k: usize| (l.data_offset + start + k * step) as u64;
    if l.kind == 'f' {
        let mut v = Vec::with_capacity(rows);
        let bad = match (w, l.big_endian) {
            (4, false) => floats::<4, false>(data, start, step, rows, &mut v),
            (4, true) => floats::<4, true>(data, start, step, rows, &mut v),
            (_, false) => floats::<8, false>(data, start, step, rows, &mut v),
            (_, true) => floats::<8, true>(data, start, step, rows, &mut v),
        };
        if let Some(k) = bad {
            return Err(Error::new(
                ErrorKind::NotInteger,
                path,
                Location::Byte(at(k)),
                "a finite value",
                format!("{}", v[k]),
            ));
        }
        return Ok(Samples::Values(v));
    }
    let Some(bits) = bits else {
        return Err(Error::setting(
            "bits",
            format!(
                "the resolution in bits of the codes in this {} array: give --bits or \"bits\" in the sidecar",
                dtype_name(&l)
            ),
            "none given",
        )
        .with_path(path));
    };
    let signed = l.kind == 'i';
    let coding = coding.unwrap_or(if signed {
        Coding::TwosComplement
    } else {
        Coding::OffsetBinary
    });
    // Offset-binary values are 0..2^N; two's complement ones −2^(N−1)..2^(N−1).
    let half = 1i64 << (bits - 1);
    let (lo, hi, shift) = match coding {
        Coding::TwosComplement => (-half, half - 1, 0),
        Coding::OffsetBinary => (0, 2 * half - 1, half),
    };
    let mut codes = Vec::with_capacity(rows);
    let range = Range { lo, hi, shift };
    let bad = match (w, signed, l.big_endian) {
        (1, true, _) => ints::<1, true, false>(data, start, step, rows, range, &mut codes),
        (1, false, _) => ints::<1, false, false>(data, start, step, rows, range, &mut codes),
        (2, true, false) => ints::<2, true, false>(data, start, step, rows, range, &mut codes),
        (2, true, true) => ints::<2, true, true>(data, start, step, rows, range, &mut codes),
        (2, false, false) => ints::<2, false, false>(data, start, step, rows, range, &mut codes),
        (2, false, true) => ints::<2, false, true>(data, start, step, rows, range, &mut codes),
        (4, true, false) => ints::<4, true, false>(data, start, step, rows, range, &mut codes),
        (4, true, true) => ints::<4, true, true>(data, start, step, rows, range, &mut codes),
        (4, false, false) => ints::<4, false, false>(data, start, step, rows, range, &mut codes),
        (4, false, true) => ints::<4, false, true>(data, start, step, rows, range, &mut codes),
        (_, true, false) => ints::<8, true, false>(data, start, step, rows, range, &mut codes),
        (_, true, true) => ints::<8, true, true>(data, start, step, rows, range, &mut codes),
        (_, false, false) => ints::<8, false, false>(data, start, step, rows, range, &mut codes),
        (_, false, true) => ints::<8, false, true>(data, start, step, rows, range, &mut codes),
    };
    if let Some(k) = bad {
        let o = start + k * step;
        let v = int_at(&data[o..o + w], signed, l.big_endian);
        let expected = match coding {
            Coding::TwosComplement => range_text(bits),
            Coding::OffsetBinary => format!("0..={hi} ({bits}-bit offset binary)"),
        };
        return Err(Error::new(
            ErrorKind::CodeOutOfRange,
            path,
            Location::Byte(at(k)),
            expected,
            v.to_string(),
        ));
    }
    Ok(Samples::Codes(codes))
}

/// The accepted raw values and the offset subtracted to centre them.
#[derive(Debug, Clone, Copy)]
struct Range {
    lo: i64,
    hi: i64,
    shift: i64,
}

/// One integer element as i128 (u64 values above i64::MAX included), for the error message.
fn int_at(b: &[u8], signed: bool, big_endian: bool) -> i128 {
    let mut buf = [0u8; 16];
    let w = b.len();
    if big_endian {
        buf[..w].copy_from_slice(b);
        buf[..w].reverse();
    } else {
        buf[..w].copy_from_slice(b);
    }
    if signed && b[if big_endian { 0 } else { w - 1 }] & 0x80 != 0 {
        buf[w..].fill(0xff);
    }
    i128::from_le_bytes(buf)
}

/// Reads a `W`-byte integer element as i64; unsigned 8-byte values above i64::MAX become −1, which
/// no offset-binary range accepts (and `int_at` shows the true value).
#[inline(always)]
fn read_int<const W: usize, const SIGNED: bool, const BIG: bool>(b: &[u8]) -> i64 {
    let mut a = [0u8; W];
    a.copy_from_slice(&b[..W]);
    match (W, SIGNED) {
        (1, true) => i64::from(a[0] as i8),
        (1, false) => i64::from(a[0]),
        (2, true) => i64::from(if BIG {
            i16::from_be_bytes([a[0], a[1]])
        } else {
            i16::from_le_bytes([a[0], a[1]])
        }),
        (2, false) => i64::from(if BIG {
            u16::from_be_bytes([a[0], a[1]])
        } else {
            u16::from_le_bytes([a[0], a[1]])
        }),
        (4, true) => {
            let x = [a[0], a[1], a[2], a[3]];
            i64::from(if BIG {
                i32::from_be_bytes(x)
            } else {
                i32::from_le_bytes(x)
            })
        }
        (4, false) => {
            let x = [a[0], a[1], a[2], a[3]];
            i64::from(if BIG {
                u32::from_be_bytes(x)
            } else {
                u32::from_le_bytes(x)
            })
        }
        _ => {
            let x = [a[0], a[1], a[2], a[3], a[4], a[5], a[6], a[7]];
            let v = if BIG {
                u64::from_be_bytes(x)
            } else {
                u64::from_le_bytes(x)
            };
            if SIGNED {
                v as i64
            } else {
                i64::try_from(v).unwrap_or(-1)
            }
        }
    }
}

/// Decodes `rows` integer elements `step` bytes apart from `start` into centred codes; returns the
/// index of the first one outside the range.
#[inline(always)]
fn ints<const W: usize, const SIGNED: bool, const BIG: bool>(
    data: &[u8],
    start: usize,
    step: usize,
    rows: usize,
    r: Range,
    out: &mut Vec<i32>,
) -> Option<usize> {
    let span = &data[start..start + (rows - 1) * step + W];
    for (k, e) in span.chunks(step).enumerate() {
        let v = read_int::<W, SIGNED, BIG>(e);
        if v < r.lo || v > r.hi {
            return Some(k);
        }
        // In range of at most 32 bits after centring.
        out.push((v - r.shift) as i32);
    }
    None
}

/// Decodes `rows` float elements `step` bytes apart from `start`; returns the index of the first one
/// that is not finite (it is pushed, so the error can show it).
#[inline(always)]
fn floats<const W: usize, const BIG: bool>(
    data: &[u8],
    start: usize,
    step: usize,
    rows: usize,
    out: &mut Vec<f64>,
) -> Option<usize> {
    let span = &data[start..start + (rows - 1) * step + W];
    for (k, e) in span.chunks(step).enumerate() {
        let v = if W == 4 {
            let x = [e[0], e[1], e[2], e[3]];
            f64::from(if BIG {
                f32::from_be_bytes(x)
            } else {
                f32::from_le_bytes(x)
            })
        } else {
            let x = [e[0], e[1], e[2], e[3], e[4], e[5], e[6], e[7]];
            if BIG {
                f64::from_be_bytes(x)
            } else {
                f64::from_le_bytes(x)
            }
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

    // Sources: the .npy layout (magic, version, little-endian header length, a Python dict literal
    // padded so that the data starts on a 64-byte boundary) is the NumPy format specification
    // (numpy.lib.format), from memory; the files in tests/reference/formats check it against numpy.

    /// A version 1.0 file with the given header dict and data.
    fn npy(dict: &str, data: &[u8]) -> Vec<u8> {
        let mut text = dict.to_string();
        while !(10 + text.len() + 1).is_multiple_of(64) {
            text.push(' ');
        }
        text.push('\n');
        let mut b = MAGIC.to_vec();
        b.extend([1, 0]);
        b.extend((text.len() as u16).to_le_bytes());
        b.extend(text.as_bytes());
        b.extend(data);
        b
    }

    fn i2(v: &[i16]) -> Vec<u8> {
        v.iter().flat_map(|x| x.to_le_bytes()).collect()
    }

    const I2: &str = "{'descr': '<i2', 'fortran_order': False, 'shape': (4,), }";

    #[test]
    fn plain_codes_and_coding() {
        let b = npy(I2, &i2(&[1, -2, 2047, -2048]));
        let s = parse_npy(&b, "r.npy", Some(12), None, None).unwrap();
        assert_eq!(s, Samples::Codes(vec![1, -2, 2047, -2048]));
        // Unsigned words are offset binary by default.
        let u = "{'descr': '>u2', 'fortran_order': False, 'shape': (3,), }";
        let data: Vec<u8> = [0u16, 2048, 4095]
            .iter()
            .flat_map(|x| x.to_be_bytes())
            .collect();
        let s = parse_npy(&npy(u, &data), "r.npy", Some(12), None, None).unwrap();
        assert_eq!(s, Samples::Codes(vec![-2048, 0, 2047]));
        let s = parse_npy(
            &npy(u, &data),
            "r.npy",
            Some(13),
            Some(Coding::TwosComplement),
            None,
        );
        assert_eq!(s.unwrap(), Samples::Codes(vec![0, 2048, 4095]));
    }

    #[test]
    fn floats_are_values_and_must_be_finite() {
        let f = "{'descr': '<f8', 'fortran_order': False, 'shape': (3,), }";
        let data: Vec<u8> = [0.5f64, -0.25, 1e-3]
            .iter()
            .flat_map(|x| x.to_le_bytes())
            .collect();
        let s = parse_npy(&npy(f, &data), "r.npy", None, None, None).unwrap();
        assert_eq!(s, Samples::Values(vec![0.5, -0.25, 1e-3]));
        let data: Vec<u8> = [0.5f32, f32::NAN]
            .iter()
            .flat_map(|x| x.to_be_bytes())
            .collect();
        let f4 = "{'descr': '>f4', 'fortran_order': False, 'shape': (2,), }";
        let e = parse_npy(&npy(f4, &data), "r.npy", None, None, None).unwrap_err();
        assert_eq!(e.kind, ErrorKind::NotInteger);
        assert_eq!(e.location, Location::Byte(128 + 4));
        assert_eq!(e.found, "NaN");
    }

    #[test]
    fn header_errors_name_the_place() {
        let e = read_npy_header(b"\x93NUMPX\x01\x00", "r.npy").unwrap_err();
        assert_eq!(
            (e.kind, e.location),
            (ErrorKind::BadMetadata, Location::Byte(0))
        );
        let mut b = npy(I2, &[]);
        b[6] = 4;
        let e = read_npy_header(&b, "r.npy").unwrap_err();
        assert_eq!(e.location, Location::Byte(6));
        assert_eq!(e.found, "version 4.0");
        let e = read_npy_header(&npy(I2, &[])[..40], "r.npy").unwrap_err();
        assert_eq!(e.location, Location::Byte(8));
        let e =
            read_npy_header(&npy("{'descr': '<i2', 'shape': (4,), }", &[]), "r.npy").unwrap_err();
        assert_eq!(e.location, Location::Byte(10));
        assert!(e.found.contains("fortran_order"), "{}", e.found);
        for (descr, shown) in [("'<c16'", "<c16"), ("'<f2'", "<f2"), ("'|b1'", "|b1")] {
            let d = format!("{{'descr': {descr}, 'fortran_order': False, 'shape': (4,), }}");
            let e = read_npy_header(&npy(&d, &[]), "r.npy").unwrap_err();
            assert!(e.found.contains(shown), "{descr}: {}", e.found);
        }
        let d = "{'descr': [('a', '<i2')], 'fortran_order': False, 'shape': (4,), }";
        assert!(read_npy_header(&npy(d, &[]), "r.npy")
            .unwrap_err()
            .expected
            .contains("structured"));
        let d = "{'descr': '<i2', 'fortran_order': False, 'shape': (2, 3, 4), }";
        let e = read_npy_header(&npy(d, &[]), "r.npy").unwrap_err();
        assert!(e.expected.contains("2-D"), "{}", e.expected);
        // A shape whose product overflows is refused before npyz multiplies it.
        let d = "{'descr': '<i2', 'fortran_order': False, 'shape': (4294967296, 4294967296), }";
        let e = read_npy_header(&npy(d, &[]), "r.npy").unwrap_err();
        assert!(e.expected.contains("64 bits"), "{}", e.expected);
    }

    #[test]
    fn short_data_and_out_of_range_codes_name_the_byte() {
        let e = parse_npy(
            &npy(I2, &i2(&[1, 2, 3])[..5]),
            "r.npy",
            Some(12),
            None,
            None,
        )
        .unwrap_err();
        assert_eq!(e.kind, ErrorKind::PartialWord);
        assert_eq!(e.location, Location::Byte(128 + 4));
        assert_eq!(e.found, "5 bytes");
        let e = parse_npy(
            &npy(I2, &i2(&[1, 2, 2048, 0])),
            "r.npy",
            Some(12),
            None,
            None,
        )
        .unwrap_err();
        assert_eq!(e.kind, ErrorKind::CodeOutOfRange);
        assert_eq!(e.location, Location::Byte(128 + 4));
        assert_eq!(e.found, "2048");
        // u8 values above i64::MAX are shown as they are.
        let u8d = "{'descr': '<u8', 'fortran_order': False, 'shape': (1,), }";
        let e = parse_npy(
            &npy(u8d, &u64::MAX.to_le_bytes()),
            "r.npy",
            Some(32),
            None,
            None,
        )
        .unwrap_err();
        assert_eq!(e.found, u64::MAX.to_string());
        let e = parse_npy(&npy(I2, &i2(&[1, 2, 3, 4])), "r.npy", None, None, None).unwrap_err();
        assert_eq!(e.location, Location::Key("bits".into()));
        let empty = "{'descr': '<i2', 'fortran_order': False, 'shape': (0,), }";
        let e = parse_npy(&npy(empty, &[]), "r.npy", Some(12), None, None).unwrap_err();
        assert_eq!(e.kind, ErrorKind::Empty);
    }

    #[test]
    fn columns_in_c_and_fortran_order() {
        // Rows are samples: [[1, 10], [2, 20], [3, 30]].
        let c = "{'descr': '<i2', 'fortran_order': False, 'shape': (3, 2), }";
        let b = npy(c, &i2(&[1, 10, 2, 20, 3, 30]));
        assert_eq!(
            parse_npy(&b, "r.npy", Some(8), None, Some(1)).unwrap(),
            Samples::Codes(vec![10, 20, 30])
        );
        let f = "{'descr': '<i2', 'fortran_order': True, 'shape': (3, 2), }";
        let b = npy(f, &i2(&[1, 2, 3, 10, 20, 30]));
        assert_eq!(
            parse_npy(&b, "r.npy", Some(8), None, Some(1)).unwrap(),
            Samples::Codes(vec![10, 20, 30])
        );
        let e = parse_npy(&b, "r.npy", Some(8), None, None).unwrap_err();
        assert_eq!(e.location, Location::Key("column".into()));
        // A column vector (n, 1) and a 3-D array with one long axis are one channel.
        let v = "{'descr': '<i2', 'fortran_order': False, 'shape': (1, 3, 1), }";
        let b = npy(v, &i2(&[5, 6, 7]));
        assert_eq!(
            parse_npy(&b, "r.npy", Some(8), None, None).unwrap(),
            Samples::Codes(vec![5, 6, 7])
        );
    }

    #[test]
    fn any_bytes_after_the_magic_never_panic() {
        let base = npy(I2, &i2(&[1, 2, 3, 4]));
        for cut in 0..base.len() {
            let _ = parse_npy(&base[..cut], "r.npy", Some(12), None, None);
        }
        for i in 6..base.len() {
            for v in [0u8, 0xff, b'(', b')', b'\'', b'9'] {
                let mut b = base.clone();
                b[i] = v;
                let _ = parse_npy(&b, "r.npy", Some(12), None, Some(0));
            }
        }
    }
}

//! Format by content: the magic bytes of `.npy` and RIFF/RF64 WAV files, and the refusal of binary
//! data given to a text reader (one sentence naming the likely format, never a dump of the bytes).

use crate::error::{Error, ErrorKind, Location, Result};

/// A container recognised by its first bytes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Magic {
    /// `\x93NUMPY`.
    Npy,
    /// `RIFF`, `RF64` or `BW64` followed by `WAVE`.
    Wav,
}

/// The container the bytes start with, if any.
pub(crate) fn magic(bytes: &[u8]) -> Option<Magic> {
    if bytes.starts_with(super::npy::MAGIC) {
        return Some(Magic::Npy);
    }
    let riff = bytes.len() >= 12
        && matches!(&bytes[..4], b"RIFF" | b"RF64" | b"BW64")
        && &bytes[8..12] == b"WAVE";
    riff.then_some(Magic::Wav)
}

/// How far into a file the text check looks: enough to see a binary header or a few hundred words.
const SNIFF_BYTES: usize = 4096;

/// Refuses bytes that are not text before a text or CSV reader sees them.
///
/// Text is UTF-8 (a character cut at the end of the sniffed window is fine) with no NUL byte and no
/// control characters other than tab, line feed, carriage return, vertical tab and form feed. The
/// error ([`ErrorKind::NotInteger`]) gives the byte offset of the first byte that is not text and
/// names the formats the data may be in.
pub(crate) fn refuse_binary(bytes: &[u8], path: &str) -> Result<()> {
    let head = &bytes[..bytes.len().min(SNIFF_BYTES)];
    let bad_utf8 = match std::str::from_utf8(head) {
        Ok(_) => None,
        // A character cut by the window's end is not an error.
        Err(e) if e.error_len().is_none() => None,
        Err(e) => Some(e.valid_up_to()),
    };
    let control = head
        .iter()
        .position(|&b| b < 0x20 && !matches!(b, b'\t' | b'\n' | b'\r' | 0x0b | 0x0c) || b == 0x7f);
    let at = match (bad_utf8, control) {
        (Some(a), Some(b)) => a.min(b),
        (a, b) => match a.or(b) {
            Some(x) => x,
            None => return Ok(()),
        },
    };
    let what = match magic(bytes) {
        Some(Magic::Npy) => "a NumPy .npy file: give --format npy".to_string(),
        Some(Magic::Wav) => "a WAV file: give --format wav".to_string(),
        None => format!(
            "binary data (byte 0x{:02x}): give --format with its word layout (i16le, u16be, i24le, \
             p12le, ...), or npy or wav",
            bytes[at]
        ),
    };
    Err(Error::new(
        ErrorKind::NotInteger,
        path,
        Location::Byte(at as u64),
        "a text record (one code per line or delimited columns)",
        what,
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    // Sources: the npy magic "\x93NUMPY" is in the NumPy format specification (numpy.lib.format);
    // "RIFF"/"RF64" + "WAVE" from the WAVE and RF64 (EBU Tech 3306) layouts; from memory.

    #[test]
    fn magic_bytes() {
        assert_eq!(magic(b"\x93NUMPY\x01\x00"), Some(Magic::Npy));
        assert_eq!(magic(b"RIFF\x24\x00\x00\x00WAVEfmt "), Some(Magic::Wav));
        assert_eq!(magic(b"RF64\xff\xff\xff\xffWAVEds64"), Some(Magic::Wav));
        assert_eq!(magic(b"RIFF\x24\x00\x00\x00AVI "), None);
        assert_eq!(magic(b"1\n2\n3\n"), None);
        assert_eq!(magic(b""), None);
    }

    #[test]
    fn text_passes_and_binary_is_refused_at_its_offset() {
        assert!(refuse_binary(b"# codes\n1\n-2\r\n\t3\n", "r.txt").is_ok());
        assert!(refuse_binary("Zeit (s);Kanal µV\n".as_bytes(), "r.csv").is_ok());
        // A UTF-8 character cut by the window's end is fine.
        let mut long = vec![b'1'; SNIFF_BYTES - 1];
        long.extend("µ".as_bytes());
        assert!(refuse_binary(&long, "r.txt").is_ok());
        let e = refuse_binary(b"12\n\x00\x10\x00\x20", "r.txt").unwrap_err();
        assert_eq!(e.kind, ErrorKind::NotInteger);
        assert_eq!(e.location, Location::Byte(3));
        assert!(
            e.found.contains("--format") && e.found.contains("0x00"),
            "{}",
            e.found
        );
        let e = refuse_binary(b"\x93NUMPY\x01\x00v\x00{'descr'", "x.txt").unwrap_err();
        assert_eq!(e.location, Location::Byte(0));
        assert!(e.found.contains("--format npy"), "{}", e.found);
        let e = refuse_binary(b"RIFF\x24\x00\x00\x00WAVEfmt ", "x.txt").unwrap_err();
        assert!(e.found.contains("--format wav"), "{}", e.found);
        // Latin-1 bytes that are not UTF-8.
        let e = refuse_binary(b"code\n\xff\xfe1\n", "r.txt").unwrap_err();
        assert_eq!(e.location, Location::Byte(5));
    }
}

//! cargo-fuzz target: the raw binary parser on arbitrary bytes, over every layout. The first four bytes
//! pick the layout (word size, signedness, byte order, coding, justification, header length, channel
//! and channel count) and the resolution; the rest is the record.
#![no_main]

use libfuzzer_sys::fuzz_target;
use spurline::{BinaryLayout, Justify, Packing};
use spurline::Coding;

#[allow(dead_code)]
#[path = "../../tests/fuzz_props/invariants.rs"]
mod invariants;

/// Channel counts, the last ones far beyond any real frame (they must be refused, not overflow).
const CHANNELS: [usize; 8] = [1, 1, 2, 3, 4, 0, usize::MAX, usize::MAX / 2 + 1];

fuzz_target!(|data: &[u8]| {
    let [a, b, c, d, rest @ ..] = data else {
        return;
    };
    let word_bytes = [1usize, 2, 4, 3][usize::from(a & 3)];
    let channels = CHANNELS[usize::from((a >> 2) & 7)];
    let layout = BinaryLayout {
        word_bytes,
        signed: a & 0x20 != 0,
        big_endian: a & 0x40 != 0,
        coding: match b & 3 {
            0 => None,
            1 => Some(Coding::TwosComplement),
            _ => Some(Coding::OffsetBinary),
        },
        justify: if b & 4 == 0 {
            Justify::Right
        } else {
            Justify::Left
        },
        skip_bytes: u64::from(b >> 3),
        channel: if channels == 0 {
            0
        } else {
            usize::from(*c) % channels.min(256)
        },
        channels,
        // Packed samples when the top bit of `d` is set.
        packing: (d & 0x80 != 0).then(|| Packing {
            bits: [10, 12, 14, 12][usize::from((d >> 5) & 3)],
            msb_first: a & 0x40 != 0,
        }),
    };
    let bits = u32::from((d & 0x7f) % 34);
    match spurline::parse_binary(rest, "fuzz.bin", bits, &layout) {
        Ok(codes) => assert!(!codes.is_empty()),
        Err(e) => invariants::check_error(&e, "fuzz.bin", rest),
    }
});

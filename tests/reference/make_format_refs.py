#!/usr/bin/env python3
"""Reference records in the input formats spurline reads, written by general-purpose writers.

Writes tests/reference/formats/: one 12-bit record of 1024 codes (a sine with noise, seeded) as a plain
integer text record (codes.txt, one code per line), and the same codes written by
  numpy.save / numpy.lib.format.write_array   .npy in several dtypes, both byte orders, C and Fortran
                                              order, format versions 1.0, 2.0 and 3.0
and the same codes as values (voltages and units of full scale, code * FSR / 2^N):
  numpy.save                                  .npy float32/float64, both byte orders
  Python's float repr                         text and CSV of voltages, one value per line / row
and as WAV files (the sample rate in the header; no --fs given when read):
  wave (Python's standard library)            PCM 8, 16, 24 and 32 bits, mono and stereo
  scipy.io.wavfile.write                      IEEE float 32 and 64 bits (±1.0 full scale), PCM 16
  struct.pack by the layouts in the comments  WAVE_FORMAT_EXTENSIBLE (24 valid bits in 32), RF64
and as raw words and packed samples (the byte layouts in the comments, written with numpy):
  ndarray.astype + byte slicing               24-bit words i24le, i24be, u24le, u24be
  numpy.unpackbits / numpy.packbits           10-, 12- and 14-bit samples packed back to back as a bit
                                              stream, least significant bit first (p10le, p12le, p14le)
                                              or most significant bit first (p10be, p12be, p14be)
and as raw words in text (Python's format(): "#x" and "b" with a 0b prefix), as capture tools write them:
  codes_hex.txt (two's complement), codes_hex_offset.txt (offset binary), codes_bin.txt
and an instrument-style CSV (scope.csv): a preamble of setting lines (key,value pairs and free text), a
header, a time column in seconds (k / FS, Python's repr) and the volts; read with no --fs (the rate comes
from the time column) and no --column (the one column left besides time)
and a manifest (formats.json) listing each file with how to read it and the library versions
(`compare`: "exact" for bit-identical figures, "relative" for figures within 1e-9 relative, "analogue"
for a record read without a resolution, whose dB figures and spectral ENOB are compared).
tests/formats.rs reads every file and checks that it gives the same codes, and the same figures, as the
text record. Run: python3 tests/reference/make_format_refs.py   (numpy 2.x, scipy 1.x)
"""
import json
import os
import struct
import wave

import numpy as np
import scipy
import scipy.io.wavfile

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "formats")
os.makedirs(OUT, exist_ok=True)

BITS = 12
N = 1024
FS = 1.0e6
rng = np.random.default_rng(1241)
n = np.arange(N)
# 37 cycles in 1024 samples (coherent), -1 dBFS, 1.5 codes rms of noise.
amp = 2 ** (BITS - 1) * 10 ** (-1 / 20)
x = amp * np.cos(2 * np.pi * 37 * n / N + 0.3) + 1.5 * rng.standard_normal(N)
codes = np.clip(np.round(x), -(2 ** (BITS - 1)), 2 ** (BITS - 1) - 1).astype(np.int64)
other = (codes[::-1] // 3).astype(np.int64)  # a second channel, different from the first

manifest = {"generator": {"numpy": np.__version__, "scipy": scipy.__version__},
            "bits": BITS, "sample_rate_hz": FS, "samples": N, "text": "codes.txt", "files": []}


def add(name, **how):
    manifest["files"].append({"file": name, **how})


with open(os.path.join(OUT, "codes.txt"), "w") as f:
    f.write("".join(f"{int(c)}\n" for c in codes))


def write_npy(name, arr, version=None):
    with open(os.path.join(OUT, name), "wb") as f:
        np.lib.format.write_array(f, arr, version=version)


# .npy: signed dtypes hold the two's complement codes; unsigned ones offset binary (code + 2^(N-1)).
for dt in ["<i2", ">i2", "<i4", ">i4", "<i8", ">i8", "|i1"]:
    arr = codes.astype(dt) if dt != "|i1" else (codes >> 4).astype(dt)
    name = f"codes_{dt[1:]}_{'be' if dt[0] == '>' else 'le'}.npy"
    np.save(os.path.join(OUT, name), arr)
    add(name, format="npy", bits=8 if dt == "|i1" else BITS, shift=4 if dt == "|i1" else 0)
for dt in ["<u2", ">u2", "<u4"]:
    name = f"codes_{dt[1:]}_{'be' if dt[0] == '>' else 'le'}.npy"
    np.save(os.path.join(OUT, name), (codes + 2 ** (BITS - 1)).astype(dt))
    add(name, format="npy", bits=BITS, shift=0)
# Header versions 2.0 and 3.0 (numpy picks 1.0 for small headers unless told).
for v in [(2, 0), (3, 0)]:
    name = f"codes_i2_v{v[0]}.npy"
    write_npy(name, codes.astype("<i2"), version=v)
    add(name, format="npy", bits=BITS, shift=0)
# 2-D arrays of samples by channels: the codes are column 1, in C and in Fortran order.
both = np.stack([other, codes], axis=1).astype("<i2")
np.save(os.path.join(OUT, "two_channels_c.npy"), both)
add("two_channels_c.npy", format="npy", bits=BITS, shift=0, column=1)
np.save(os.path.join(OUT, "two_channels_f.npy"), np.asfortranarray(both))
add("two_channels_f.npy", format="npy", bits=BITS, shift=0, column=1)

# Values: voltages over a full-scale range, or units of full scale (±1.0). FSR 2 V and ±1.0 make the
# float32 values exact (12-bit codes / 2^11); FSR 1.5 V makes the scaling inexact, so figures agree to
# rounding only.
volts = codes.astype(np.float64) * 1.5 / 2 ** BITS
for dt in ["<f8", ">f8"]:
    name = f"volts_{dt[1:]}_{'be' if dt[0] == '>' else 'le'}.npy"
    np.save(os.path.join(OUT, name), volts.astype(dt))
    add(name, format="npy", bits=BITS, full_scale_vpp=1.5, compare="relative")
unit_fs = (codes.astype(np.float64) / 2 ** (BITS - 1)).astype("<f4")
np.save(os.path.join(OUT, "full_scale_f4_le.npy"), unit_fs)
add("full_scale_f4_le.npy", format="npy", bits=BITS, unit="full-scale", compare="exact")
np.save(os.path.join(OUT, "volts_f4_be.npy"), unit_fs.astype(">f4"))
add("volts_f4_be.npy", format="npy", bits=BITS, full_scale_vpp=2.0, compare="exact")
# Float whole numbers with no full-scale range: read as codes.
np.save(os.path.join(OUT, "codes_f8_le.npy"), codes.astype("<f8"))
add("codes_f8_le.npy", format="npy", bits=BITS, compare="exact")
# A purely analogue view: no resolution.
add("volts_f8_le.npy", format="npy", full_scale_vpp=1.5, compare="analogue")
with open(os.path.join(OUT, "volts.txt"), "w") as f:
    f.write("volts\n" + "".join(f"{repr(float(v))}\n" for v in volts))
add("volts.txt", format="text", bits=BITS, full_scale_vpp=1.5, compare="relative")
with open(os.path.join(OUT, "volts.csv"), "w") as f:
    f.write("index,volts\n" + "".join(f"{k},{repr(float(v))}\n" for k, v in enumerate(volts)))
add("volts.csv", format="csv", bits=BITS, full_scale_vpp=1.5, column="volts", compare="relative")

# WAV. PCM is left-justified in its container (the WAV rule): a 12-bit code c in a 16-bit sample is
# c << 4, so the record is read with bits=12 and gives the codes back exactly. 8-bit WAV is unsigned
# (offset binary, mid-scale 128): it holds c >> 4, compared with shift 4 as the 8-bit npy file.


def write_wave(name, width, frames, channels=1):
    with wave.open(os.path.join(OUT, name), "wb") as w:
        w.setnchannels(channels)
        w.setsampwidth(width)
        w.setframerate(int(FS))
        w.writeframes(frames)


write_wave("pcm8.wav", 1, ((codes >> 4) + 128).astype("u1").tobytes())
add("pcm8.wav", format="wav", bits=8, shift=4, fs_from_file=True)
write_wave("pcm16.wav", 2, (codes << 4).astype("<i2").tobytes())
add("pcm16.wav", format="wav", bits=BITS, fs_from_file=True)
c24 = (codes << 12).astype("<i4")
write_wave("pcm24.wav", 3, b"".join(int(v).to_bytes(4, "little", signed=True)[:3] for v in c24))
add("pcm24.wav", format="wav", bits=BITS, fs_from_file=True)
# Stereo 32-bit: the codes are channel 2.
both32 = np.stack([(other << 20), (codes << 20)], axis=1).astype("<i4")
write_wave("pcm32_stereo.wav", 4, both32.tobytes(), channels=2)
add("pcm32_stereo.wav", format="wav", bits=BITS, channel="2/2", fs_from_file=True)
# scipy: float samples, ±1.0 full scale (codes / 2^11 is exact in float32 and float64).
scipy.io.wavfile.write(os.path.join(OUT, "float32.wav"), int(FS), (codes / 2 ** (BITS - 1)).astype("<f4"))
add("float32.wav", format="wav", bits=BITS, fs_from_file=True, compare="exact")
scipy.io.wavfile.write(os.path.join(OUT, "float64.wav"), int(FS), (codes / 2 ** (BITS - 1)).astype("<f8"))
add("float64.wav", format="wav", bits=BITS, fs_from_file=True, compare="exact")
scipy.io.wavfile.write(os.path.join(OUT, "scipy_pcm16.wav"), int(FS), (codes << 4).astype("<i2"))
add("scipy_pcm16.wav", format="wav", bits=BITS, fs_from_file=True)


def fmt_chunk(tag, channels, bits, valid=None):
    """The fmt chunk: tag, channels, rate, byte rate, block align, bits; for WAVE_FORMAT_EXTENSIBLE
    (0xFFFE) cbSize 22, valid bits, channel mask, and the sub-format GUID whose first two bytes are the
    format tag (PCM 1, float 3) and whose rest is 00000000-0010-8000-00AA00389B71."""
    block = channels * (bits // 8)
    body = struct.pack("<HHIIHH", 0xFFFE if valid else tag, channels, int(FS), int(FS) * block, block, bits)
    if valid:
        guid = struct.pack("<H", tag) + bytes.fromhex("000000001000800000aa00389b71")
        body += struct.pack("<HHI", 22, valid, 0) + guid
    return b"fmt " + struct.pack("<I", len(body)) + body


# WAVE_FORMAT_EXTENSIBLE: a 24-bit converter in 32-bit containers (valid bits 24), codes << 20.
data = (codes << 20).astype("<i4").tobytes()
body = b"WAVE" + fmt_chunk(1, 1, 32, valid=24) + b"data" + struct.pack("<I", len(data)) + data
with open(os.path.join(OUT, "extensible_24in32.wav"), "wb") as f:
    f.write(b"RIFF" + struct.pack("<I", len(body)) + body)
add("extensible_24in32.wav", format="wav", bits=BITS, fs_from_file=True)
# RF64 (EBU Tech 3306): RIFF size and data size 0xFFFFFFFF, the true sizes in a ds64 chunk (RIFF size,
# data size, sample count as 64-bit values, then a table length of 0) that comes first.
data = (codes << 4).astype("<i2").tobytes()
rest = fmt_chunk(1, 1, 16) + b"data" + struct.pack("<I", 0xFFFFFFFF) + data
riff_size = 4 + 8 + 28 + len(rest)
ds64 = b"ds64" + struct.pack("<IQQQI", 28, riff_size, len(data), N, 0)
with open(os.path.join(OUT, "rf64_pcm16.wav"), "wb") as f:
    f.write(b"RF64" + struct.pack("<I", 0xFFFFFFFF) + b"WAVE" + ds64 + rest)
add("rf64_pcm16.wav", format="wav", bits=BITS, fs_from_file=True)

# 24-bit words. numpy has no 24-bit dtype: each value is written as a 32-bit integer and one byte is
# dropped, the most significant (the last of a little-endian word, the first of a big-endian one).
# i24: the 12-bit codes right-justified and sign-extended to 24 bits; u24: offset binary
# (code + 2^23 after a left shift by 12) read left-justified.
def words24(values, big):
    b = values.astype(">i4" if big else "<i4").view(np.uint8).reshape(-1, 4)
    return (b[:, 1:] if big else b[:, :3]).tobytes()


with open(os.path.join(OUT, "codes_i24le.bin"), "wb") as f:
    f.write(words24(codes, big=False))
add("codes_i24le.bin", format="i24le", bits=BITS)
with open(os.path.join(OUT, "codes_i24be.bin"), "wb") as f:
    f.write(words24(codes, big=True))
add("codes_i24be.bin", format="i24be", bits=BITS)
u24 = (codes << 12) + 2 ** 23
with open(os.path.join(OUT, "codes_u24le.bin"), "wb") as f:
    f.write(words24(u24, big=False))
add("codes_u24le.bin", format="u24le", bits=BITS, justify="left")
with open(os.path.join(OUT, "codes_u24be.bin"), "wb") as f:
    f.write(words24(u24, big=True))
add("codes_u24be.bin", format="u24be", bits=BITS, justify="left")


# Packed samples: each sample's N-bit field (two's complement, or offset binary code + 2^(N-1)) is
# written as N bits, the fields back to back with no padding, and the bit stream is cut into bytes by
# numpy.packbits: bitorder "little" puts the stream's first bit in bit 0 of the first byte, each field
# least significant bit first (p..le); bitorder "big" puts it in bit 7, each field most significant bit
# first (p..be). 1024 samples fill whole groups of every width (2 or 4 samples).
def packed(fields, n, msb_first):
    f = np.asarray(fields, dtype=np.uint64)
    order = "big" if msb_first else "little"
    # The N low bits of each field, in the stream's order.
    bits = np.unpackbits(f.astype(">u8").view(np.uint8).reshape(-1, 8), axis=1, bitorder="big")[:, 64 - n:]
    if not msb_first:
        bits = bits[:, ::-1]
    return np.packbits(bits.reshape(-1), bitorder=order).tobytes()


for n, fields, bits, shift, how in [
    # 12-bit codes in 12-bit fields, two's complement.
    (12, codes & 0xFFF, BITS, 0, {}),
    # 10-bit: the codes shifted down by 2 (read at 10 bits), offset binary.
    (10, (codes >> 2) + 2 ** 9, 10, 2, {"coding": "offset_binary"}),
    # 14-bit: the 12-bit codes right-justified, sign-extended to 14 bits (read at 12 bits).
    (14, codes & 0x3FFF, BITS, 0, {}),
]:
    for msb_first in [False, True]:
        name = f"codes_p{n}{'be' if msb_first else 'le'}.bin"
        with open(os.path.join(OUT, name), "wb") as f:
            f.write(packed(fields, n, msb_first))
        # The 12-bit packing is read without a resolution given: the packing's width is the default.
        if n == 12:
            add(name, format=f"p{n}{'be' if msb_first else 'le'}", shift=shift, **how)
        else:
            add(name, format=f"p{n}{'be' if msb_first else 'le'}", bits=bits, shift=shift, **how)

# Raw 12-bit words in text: a header line, then one word per line with its prefix.
with open(os.path.join(OUT, "codes_hex.txt"), "w") as f:
    f.write("CH1 (hex)\n" + "".join(f"{format(int(c) & 0xFFF, '#05x')}\n" for c in codes))
add("codes_hex.txt", format="text", bits=BITS)
with open(os.path.join(OUT, "codes_hex_offset.txt"), "w") as f:
    f.write("".join(f"0x{int(c) + 2 ** (BITS - 1):03X}\n" for c in codes))
add("codes_hex_offset.txt", format="text", bits=BITS, coding="offset_binary")
with open(os.path.join(OUT, "codes_bin.txt"), "w") as f:
    f.write("".join(f"0b{format(int(c) & 0xFFF, '012b')}\n" for c in codes))
add("codes_bin.txt", format="text", bits=BITS)

# Instrument-style CSV: settings first, then the table.
with open(os.path.join(OUT, "scope.csv"), "w") as f:
    f.write("Model,Bench scope 4\nFirmware,2.1\nChannel 1 coupling: DC, 50 ohm\n"
            f"Sample interval,{repr(1 / FS)}\nRecord length,{N}\n\n")
    f.write("Time (s),CH1 (V)\n")
    f.write("".join(f"{repr(k / FS)},{repr(float(v))}\n" for k, v in enumerate(volts)))
add("scope.csv", format="csv", bits=BITS, full_scale_vpp=1.5, fs_from_file=True, compare="relative")

with open(os.path.join(OUT, "formats.json"), "w") as f:
    json.dump(manifest, f, indent=1)
    f.write("\n")

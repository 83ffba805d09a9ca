#!/usr/bin/env python3
"""Reads the WAV/RF64 files tests/io_rf64.rs leaves in target/tmp/io_rf64/ with a reader written
from the specifications, not from amrx's code:

- RIFF WAVE: Microsoft/IBM, "Multimedia Programming Interface and Data Specifications 1.0"
  (1991): chunks of a 4-byte id, a little-endian u32 size and a body padded to even length.
- RF64: EBU Tech 3306, "RF64: An extended File Format for Audio" (2009), section 3: the file
  starts "RF64", 0xFFFFFFFF, "WAVE"; the first chunk is "ds64" holding the 64-bit RIFF size,
  data size and sample count; a 32-bit size of 0xFFFFFFFF means "take it from ds64".

Checks that every size agrees with the file's length and the fmt chunk, and that the data
holds whole frames. For plain 16-bit PCM RIFF files Python's own `wave` module must also agree.
Exit status 1 on any disagreement.
"""
import struct
import sys
import wave
from pathlib import Path


def check(path):
    b = path.read_bytes()
    kind, riff32, form = struct.unpack_from("<4sI4s", b, 0)
    assert form == b"WAVE", form
    assert kind in (b"RIFF", b"RF64"), kind
    at, ds64, fmt, data = 12, None, None, None
    while at + 8 <= len(b):
        cid, size = struct.unpack_from("<4sI", b, at)
        if cid == b"ds64":
            riff64, data64, count64 = struct.unpack_from("<QQQ", b, at + 8)
            ds64 = (riff64, data64, count64)
        if cid == b"fmt ":
            fmt = struct.unpack_from("<HHIIHH", b, at + 8)
        if cid == b"data":
            if size == 0xFFFFFFFF:
                assert ds64 is not None, "data size -1 without ds64"
                size = ds64[1]
            data = (at + 8, size)
            break
        at += 8 + size + (size & 1)
    assert fmt is not None and data is not None, "fmt or data chunk missing"
    tag, channels, rate, byte_rate, align, bits = fmt
    assert align == channels * bits // 8 and byte_rate == rate * align, fmt
    start, size = data
    assert start + size == len(b), f"data ends at {start + size}, file has {len(b)}"
    assert size % align == 0
    if kind == b"RF64":
        assert riff32 == 0xFFFFFFFF and b[12:16] == b"ds64", "ds64 must be the first chunk"
        assert ds64[0] == len(b) - 8, (ds64[0], len(b))
        assert ds64[2] == size // align, (ds64[2], size // align)
    else:
        assert riff32 == len(b) - 8, (riff32, len(b))
        if tag == 1:
            with wave.open(str(path)) as w:
                assert w.getnframes() == size // align
                assert w.getnchannels() == channels and w.getframerate() == rate
    return f"{path.name}: {kind.decode()} tag {tag}, {channels} ch, {size // align} frames"


def main():
    folder = Path(sys.argv[1] if len(sys.argv) > 1 else "target/tmp/io_rf64")
    files = sorted(folder.glob("*.wav"))
    if not files:
        print(f"no WAV files in {folder}", file=sys.stderr)
        return 1
    for f in files:
        print(check(f))
    return 0


if __name__ == "__main__":
    sys.exit(main())

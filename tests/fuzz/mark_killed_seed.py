"""Marks a run file as left by a killed SWMR writer: the superblock's file-consistency
flags set to "open for writing, SWMR" (0x05) and its checksum recomputed, so the reader
takes the killed-writer path. Superblock version 2/3 layout and the lookup3 checksum
(hashlittle, initial value 0) are from the HDF5 file format specification.
Usage: /usr/bin/python3 mark_killed_seed.py IN.h5 OUT.h5"""
import sys

MASK = 0xFFFFFFFF


def rot(x, k):
    return ((x << k) | (x >> (32 - k))) & MASK


def lookup3(data, initval=0):
    a = b = c = (0xDEADBEEF + len(data) + initval) & MASK
    words = lambda block: [int.from_bytes(block[i:i + 4], "little") for i in (0, 4, 8)]
    rest = data
    while len(rest) > 12:
        k = words(rest[:12])
        a, b, c = (a + k[0]) & MASK, (b + k[1]) & MASK, (c + k[2]) & MASK
        a = (a - c) & MASK; a ^= rot(c, 4); c = (c + b) & MASK
        b = (b - a) & MASK; b ^= rot(a, 6); a = (a + c) & MASK
        c = (c - b) & MASK; c ^= rot(b, 8); b = (b + a) & MASK
        a = (a - c) & MASK; a ^= rot(c, 16); c = (c + b) & MASK
        b = (b - a) & MASK; b ^= rot(a, 19); a = (a + c) & MASK
        c = (c - b) & MASK; c ^= rot(b, 4); b = (b + a) & MASK
        rest = rest[12:]
    if not rest:
        return c
    k = words(rest + bytes(12 - len(rest)))
    a, b, c = (a + k[0]) & MASK, (b + k[1]) & MASK, (c + k[2]) & MASK
    c ^= b; c = (c - rot(b, 14)) & MASK
    a ^= c; a = (a - rot(c, 11)) & MASK
    b ^= a; b = (b - rot(a, 25)) & MASK
    c ^= b; c = (c - rot(b, 16)) & MASK
    a ^= c; a = (a - rot(c, 4)) & MASK
    b ^= a; b = (b - rot(a, 14)) & MASK
    c ^= b; c = (c - rot(b, 24)) & MASK
    return c


def main(src, dst):
    data = bytearray(open(src, "rb").read())
    assert data[:8] == b"\x89HDF\r\n\x1a\n" and data[8] in (2, 3), "superblock version 2 or 3"
    size = 8 + 1 + 2 + 1 + 4 * 8  # signature, version, sizes, flags, four addresses
    stored = int.from_bytes(data[size:size + 4], "little")
    assert lookup3(bytes(data[:size])) == stored, "checksum check failed on the input"
    data[11] = 0x05
    data[size:size + 4] = lookup3(bytes(data[:size])).to_bytes(4, "little")
    open(dst, "wb").write(data)


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2])

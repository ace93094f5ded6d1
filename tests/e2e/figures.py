#!/usr/bin/env python3
"""Check figures as files a reader would open: each PNG is a valid PNG
(signature, IHDR, IDAT inflating to the stated size) and is not blank (at
least 1% of its pixels differ from the white background); each PDF starts
with %PDF and ends with %%EOF. Uses only the standard library (zlib)."""
import struct
import sys
import zlib


def png_rows(path):
    """The PNG's width, height, bytes per pixel and its rows of pixels,
    unfiltered."""
    data = open(path, "rb").read()
    assert data[:8] == b"\x89PNG\r\n\x1a\n", "not a PNG signature"
    pos, idat, width = 8, b"", None
    while pos < len(data):
        n, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + n]
        if kind == b"IHDR":
            width, height, depth, ctype = struct.unpack(">IIBB", body[:10])
            assert depth == 8 and ctype in (2, 6), "expected 8-bit RGB or RGBA"
            bpp = 3 if ctype == 2 else 4
        elif kind == b"IDAT":
            idat += body
        pos += 12 + n
    raw = zlib.decompress(idat)
    stride = width * bpp
    assert len(raw) == height * (stride + 1), "IDAT does not match IHDR"
    prev, rows = bytearray(stride), []
    for y in range(height):  # undo the PNG filters (RFC 2083, section 6)
        f, line = raw[y * (stride + 1)], bytearray(raw[y * (stride + 1) + 1:(y + 1) * (stride + 1)])
        for i in range(stride):
            a = line[i - bpp] if i >= bpp else 0
            b, c = prev[i], prev[i - bpp] if i >= bpp else 0
            if f == 1:
                line[i] = (line[i] + a) & 255
            elif f == 2:
                line[i] = (line[i] + b) & 255
            elif f == 3:
                line[i] = (line[i] + (a + b) // 2) & 255
            elif f == 4:
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                line[i] = (line[i] + (a if pa <= pb and pa <= pc else b if pb <= pc else c)) & 255
        rows.append(line)
        prev = line
    return width, height, bpp, rows


def png_ink_fraction(path):
    width, height, bpp, rows = png_rows(path)
    ink = sum(1 for line in rows for x in range(0, width * bpp, bpp) if line[x:x + 3] != b"\xff\xff\xff")
    return ink / (width * height)


def png_colour_count(path, rgb):
    """How many pixels have exactly the colour rgb (a tuple of three)."""
    width, height, bpp, rows = png_rows(path)
    want = bytes(rgb)
    return sum(1 for line in rows for x in range(0, width * bpp, bpp) if line[x:x + 3] == want)


def main():
    bad = 0
    for path in sys.argv[1:]:
        try:
            if path.endswith(".png"):
                frac = png_ink_fraction(path)
                assert frac > 0.01, f"blank: {frac:.4f} of the pixels are drawn"
                note = f"{frac:.3f} of the pixels drawn"
            else:
                data = open(path, "rb").read()
                assert data.startswith(b"%PDF") and b"%%EOF" in data[-1024:], "not a PDF"
                note = f"{len(data)} bytes"
            print(f"ok - figure {path.rsplit('/', 1)[-1]}: {note}")
        except Exception as e:
            print(f"not ok - figure {path.rsplit('/', 1)[-1]}: {e}")
            bad += 1
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())

#!/usr/bin/env python3
"""Checks a screenshot of report.html: every figure is on the page and none is blank.

Usage: check_report_png.py SCREENSHOT.png N_FIGURES

The page draws a 1-pixel frame in FRAME colour around each figure's SVG (report CSS), and
nothing else in that colour. The script finds those frames in the PNG and fails (exit 1)
when it finds fewer than N_FIGURES, or when a frame holds (almost) only background.
Python standard library only (zlib, struct): PNG decoding per the PNG specification
(W3C, 2003), 8-bit greyscale/RGB/RGBA, non-interlaced.
"""
import struct
import sys
import zlib

FRAME = (0xD5, 0xCF, 0xE0)
# A figure is blank when fewer than this share of its pixels carry ink.
MIN_INK = 0.005


def read_png(path):
    data = open(path, "rb").read()
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        sys.exit(f"{path}: not a PNG file")
    pos, idat, width = 8, b"", None
    while pos < len(data):
        (length,) = struct.unpack(">I", data[pos:pos + 4])
        kind = data[pos + 4:pos + 8]
        body = data[pos + 8:pos + 8 + length]
        pos += 12 + length
        if kind == b"IHDR":
            width, height, depth, colour, _, _, interlace = struct.unpack(">IIBBBBB", body)
            if depth != 8 or interlace != 0 or colour not in (0, 2, 6):
                sys.exit(f"{path}: unsupported PNG (depth {depth}, colour {colour}, interlace {interlace})")
            channels = {0: 1, 2: 3, 6: 4}[colour]
        elif kind == b"IDAT":
            idat += body
    raw = zlib.decompress(idat)
    stride = width * channels
    rows, prev = [], bytearray(stride)
    for y in range(height):
        start = y * (stride + 1)
        ftype, line = raw[start], bytearray(raw[start + 1:start + 1 + stride])
        for i in range(stride):
            a = line[i - channels] if i >= channels else 0
            b, c = prev[i], prev[i - channels] if i >= channels else 0
            if ftype == 1:
                line[i] = (line[i] + a) & 0xFF
            elif ftype == 2:
                line[i] = (line[i] + b) & 0xFF
            elif ftype == 3:
                line[i] = (line[i] + (a + b) // 2) & 0xFF
            elif ftype == 4:
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                pred = a if pa <= pb and pa <= pc else (b if pb <= pc else c)
                line[i] = (line[i] + pred) & 0xFF
        rows.append(bytes(line))
        prev = line
    def pixel(x, y):
        r = rows[y]
        if channels == 1:
            return (r[x], r[x], r[x])
        return tuple(r[x * channels:x * channels + 3])
    return width, height, pixel


def frames(width, height, pixel):
    """Rectangles (x0, y0, x1, y1) drawn in FRAME colour, at least 100 × 60 px."""
    found = []
    for y in range(height - 1):
        x = 0
        while x < width:
            if pixel(x, y) != FRAME or pixel(x, y + 1) != FRAME:
                x += 1
                continue
            # Top-left corner: a horizontal run to the right and a vertical run down.
            x1 = x
            while x1 + 1 < width and pixel(x1 + 1, y) == FRAME:
                x1 += 1
            y1 = y
            while y1 + 1 < height and pixel(x, y1 + 1) == FRAME:
                y1 += 1
            inside = any(f[0] <= x <= f[2] and f[1] <= y <= f[3] for f in found)
            if x1 - x >= 100 and y1 - y >= 60 and not inside:
                found.append((x, y, x1, y1))
            x = x1 + 1
    return found


def main():
    if len(sys.argv) != 3:
        sys.exit(__doc__)
    path, expected = sys.argv[1], int(sys.argv[2])
    width, height, pixel = read_png(path)
    boxes = frames(width, height, pixel)
    failures = []
    for k, (x0, y0, x1, y1) in enumerate(boxes):
        ink = total = 0
        for y in range(y0 + 2, y1 - 1, 2):
            for x in range(x0 + 2, x1 - 1, 2):
                total += 1
                if min(pixel(x, y)) < 200:
                    ink += 1
        share = ink / max(total, 1)
        print(f"figure {k + 1}: {x1 - x0 + 1} x {y1 - y0 + 1} px at ({x0}, {y0}), ink {100 * share:.1f} %")
        if share < MIN_INK:
            failures.append(f"figure {k + 1} at ({x0}, {y0}) is blank")
    if len(boxes) < expected:
        failures.append(f"found {len(boxes)} figures on the rendered page, expected {expected}")
    for f in failures:
        print("FAIL:", f)
    sys.exit(1 if failures else 0)


if __name__ == "__main__":
    main()

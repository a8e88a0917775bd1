#!/usr/bin/env python3
"""png_stats.py — reads an 8-bit, non-interlaced PNG (what headless Chromium
writes) with the standard library only, and either prints how much its pixels
vary (to tell a rendered page from a blank one) or writes a crop of it.

Usage: png_stats.py FILE                   -> "WIDTH HEIGHT DISTINCT STDDEV"
       png_stats.py FILE --crop X Y W H OUT
"""
import struct
import sys
import zlib


def read_png(path):
    data = open(path, "rb").read()
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        raise ValueError("not a PNG file")
    pos, idat, width = 8, [], None
    while pos < len(data):
        length, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + length]
        if kind == b"IHDR":
            width, height, depth, colour, _, _, interlace = struct.unpack(">IIBBBBB", body)
            if depth != 8 or interlace or colour not in (0, 2, 4, 6):
                raise ValueError("only 8-bit non-interlaced grey/RGB(A) PNGs are read")
            channels = {0: 1, 2: 3, 4: 2, 6: 4}[colour]
        elif kind == b"IDAT":
            idat.append(body)
        elif kind == b"IEND":
            break
        pos += 12 + length
    raw = zlib.decompress(b"".join(idat))
    stride = width * channels
    rows, prev = [], bytearray(stride)
    for y in range(height):
        start = y * (stride + 1)
        kind, line = raw[start], bytearray(raw[start + 1:start + 1 + stride])
        for i in range(stride):
            a = line[i - channels] if i >= channels else 0
            b = prev[i]
            c = prev[i - channels] if i >= channels else 0
            if kind == 1:
                line[i] = (line[i] + a) & 255
            elif kind == 2:
                line[i] = (line[i] + b) & 255
            elif kind == 3:
                line[i] = (line[i] + (a + b) // 2) & 255
            elif kind == 4:  # Paeth predictor (PNG specification, section 9.4)
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                line[i] = (line[i] + (a if pa <= pb and pa <= pc else b if pb <= pc else c)) & 255
        rows.append(line)
        prev = line
    return width, height, channels, rows


def write_png(path, width, height, channels, rows):
    colour = {1: 0, 2: 4, 3: 2, 4: 6}[channels]
    raw = b"".join(b"\x00" + bytes(r) for r in rows)

    def chunk(kind, body):
        return struct.pack(">I", len(body)) + kind + body + struct.pack(">I", zlib.crc32(kind + body))

    with open(path, "wb") as f:
        f.write(b"\x89PNG\r\n\x1a\n")
        f.write(chunk(b"IHDR", struct.pack(">IIBBBBB", width, height, 8, colour, 0, 0, 0)))
        f.write(chunk(b"IDAT", zlib.compress(raw, 9)))
        f.write(chunk(b"IEND", b""))


def main():
    width, height, ch, rows = read_png(sys.argv[1])
    if len(sys.argv) > 2 and sys.argv[2] == "--crop":
        x, y, w, h = (int(v) for v in sys.argv[3:7])
        part = [r[x * ch:(x + w) * ch] for r in rows[y:y + h]]
        write_png(sys.argv[7], w, len(part), ch, part)
        return
    # grey level of every 4th pixel on every 4th row
    values, seen = [], set()
    for r in rows[::4]:
        for i in range(0, width * ch, 4 * ch):
            px = bytes(r[i:i + min(ch, 3)])
            seen.add(px)
            values.append(sum(px) / len(px))
    mean = sum(values) / len(values)
    sd = (sum((v - mean) ** 2 for v in values) / len(values)) ** 0.5
    print(width, height, len(seen), f"{sd:.2f}")


if __name__ == "__main__":
    main()

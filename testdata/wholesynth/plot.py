#!/usr/bin/python3
"""Tiny PNG plot of a spectrum (no matplotlib or PIL needed): for looking at
the synthetic spectra by eye.

    /usr/bin/python3 testdata/wholesynth/plot.py SPECTRUM.csv OUT.png [LO_NM HI_NM] [--log]

Draws counts against wavelength (black dots joined), the noise-free line
centres of the truth file as grey verticals, in a 900 x 420 image.
"""
import json
import os
import struct
import sys
import zlib

import numpy as np

W, H, M = 900, 420, 30


def png(path, img):
    raw = b"".join(b"\x00" + bytes(row) for row in img.reshape(H, W * 3).tolist())

    def chunk(t, d):
        c = struct.pack(">I", len(d)) + t + d
        return c + struct.pack(">I", zlib.crc32(t + d) & 0xFFFFFFFF)

    with open(path, "wb") as f:
        f.write(b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", struct.pack(">IIBBBBB", W, H, 8, 2, 0, 0, 0))
                + chunk(b"IDAT", zlib.compress(raw, 9)) + chunk(b"IEND", b""))


def main():
    args = [a for a in sys.argv[1:] if a != "--log"]
    log = "--log" in sys.argv
    src, out = args[0], args[1]
    d = np.loadtxt(src, delimiter=",", comments="#", skiprows=3)
    x, y = d[:, 0], d[:, 1].astype(float)
    if len(args) >= 4:
        m = (x >= float(args[2])) & (x <= float(args[3]))
        x, y = x[m], y[m]
    if log:
        y = np.log10(np.clip(y, 1, None))
    img = np.full((H, W, 3), 255, np.uint8)
    x0, x1, y0, y1 = x.min(), x.max(), y.min(), y.max()
    px = (M + (x - x0) / (x1 - x0) * (W - 2 * M)).astype(int)
    py = (H - M - (y - y0) / (y1 - y0) * (H - 2 * M)).astype(int)
    truth = src[:-4] + ".truth.json"
    if os.path.exists(truth):
        for ln in json.load(open(truth))["lines"]:
            c = ln["center_air_nm"]
            if x0 <= c <= x1:
                img[M:H - M, int(M + (c - x0) / (x1 - x0) * (W - 2 * M))] = (170, 170, 170)
    img[H - M, M:W - M] = 0
    img[M:H - M, M] = 0
    for i in range(len(px) - 1):
        n = max(abs(px[i + 1] - px[i]), abs(py[i + 1] - py[i]), 1)
        for t in np.linspace(0, 1, n + 1):
            img[int(round(py[i] + t * (py[i + 1] - py[i]))), int(round(px[i] + t * (px[i + 1] - px[i])))] = (0, 0, 160)
    png(out, img)
    print("%s: x %.3f..%.3f nm, y %.4g..%.4g%s" % (out, x0, x1, y0, y1, " (log10)" if log else ""))


if __name__ == "__main__":
    main()

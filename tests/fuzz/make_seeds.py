#!/usr/bin/python3
"""Writes the binary seed files of the image and ring-analysis fuzz targets.

  /usr/bin/python3 tests/fuzz/make_seeds.py

Test-only tools (numpy, tifffile, Pillow, OpenCV's Python module, all from
config/debian-packages.txt) write tiny Newton's-ring pictures in the formats
and sample layouts figura reads (io/image.h), and the raw layout of
ring_analysis_fuzz.cpp. Deterministic: same files on every run.
"""
import io
import os
import struct

import cv2
import numpy as np
import tifffile
from PIL import Image

HERE = os.path.dirname(os.path.abspath(__file__))


def rings(width, height, period_px2=60.0, cx=None, cy=None):
    """Dark-centre rings 0.5 - 0.5 cos(2 pi r^2 / P), values 0..1."""
    cx = (width - 1) / 2 + 0.3 if cx is None else cx
    cy = (height - 1) / 2 - 0.2 if cy is None else cy
    y, x = np.mgrid[0:height, 0:width].astype(np.float64)
    r2 = (x - cx) ** 2 + (y - cy) ** 2
    return 0.5 - 0.5 * np.cos(2 * np.pi * r2 / period_px2)


def write(target, name, data):
    folder = os.path.join(HERE, "corpus", target)
    os.makedirs(folder, exist_ok=True)
    with open(os.path.join(folder, name), "wb") as f:
        f.write(data)


def tiff(array, **kw):
    buf = io.BytesIO()
    tifffile.imwrite(buf, array, **kw)
    return buf.getvalue()


def image_seeds():
    t = "image_decode_fuzz"
    g = rings(24, 16)
    g8 = (g * 250).astype(np.uint8)
    g16 = (g * 60000).astype(np.uint16)
    gf = g.astype(np.float32)
    rgb8 = np.dstack([g8, g8 // 2, 255 - g8])
    write(t, "grey8.tif", tiff(g8))
    write(t, "grey16.tif", tiff(g16))
    write(t, "float32.tif", tiff(gf))
    gf_nan = gf.copy()
    gf_nan[0, :4] = np.nan
    write(t, "float32-nan.tif", tiff(gf_nan))
    write(t, "rgb8.tif", tiff(rgb8, photometric="rgb"))
    write(t, "grey16-bigendian.tif", tiff(g16, byteorder=">"))
    write(t, "grey16-deflate.tif", tiff(g16, compression="zlib"))
    buf = io.BytesIO()
    Image.fromarray(g8).save(buf, format="TIFF", compression="tiff_lzw")
    write(t, "grey8-lzw.tif", buf.getvalue())
    buf = io.BytesIO()
    Image.fromarray(g8).save(buf, format="TIFF", compression="packbits")
    write(t, "grey8-packbits.tif", buf.getvalue())
    write(t, "grey16-tiled.tif",
          tiff((rings(32, 32) * 60000).astype(np.uint16), tile=(16, 16)))
    write(t, "grey8-miniswhite.tif", tiff(g8, photometric="miniswhite"))
    write(t, "grey8-bigtiff.tif", tiff(g8, bigtiff=True))
    write(t, "rgb8-planar.tif", tiff(np.moveaxis(rgb8, 2, 0), photometric="rgb",
                                     planarconfig="separate"))
    ok, png8 = cv2.imencode(".png", g8)
    write(t, "grey8.png", png8.tobytes())
    ok, png16 = cv2.imencode(".png", g16)
    write(t, "grey16.png", png16.tobytes())
    ok, pngc = cv2.imencode(".png", rgb8)
    write(t, "bgr8.png", pngc.tobytes())
    buf = io.BytesIO()
    Image.fromarray(np.dstack([rgb8, g8])).save(buf, format="PNG")
    write(t, "rgba8.png", buf.getvalue())
    buf = io.BytesIO()
    Image.fromarray(g8).convert("P").save(buf, format="PNG")
    write(t, "palette.png", buf.getvalue())
    ok, jpg = cv2.imencode(".jpg", g8, [cv2.IMWRITE_JPEG_QUALITY, 90])
    write(t, "grey8.jpg", jpg.tobytes())
    ok, jpgc = cv2.imencode(".jpg", rgb8, [cv2.IMWRITE_JPEG_QUALITY, 75])
    write(t, "bgr8.jpg", jpgc.tobytes())
    buf = io.BytesIO()
    Image.fromarray(g8).save(buf, format="JPEG", progressive=True)
    write(t, "grey8-progressive.jpg", buf.getvalue())
    ok, bmp = cv2.imencode(".bmp", rgb8)
    write(t, "bgr8.bmp", bmp.tobytes())
    ok, bmpg = cv2.imencode(".bmp", g8)
    write(t, "grey8.bmp", bmpg.tobytes())
    # Hostile headers: a TIFF claiming 200000 x 200000 pixels, truncated
    # files.
    huge = bytearray(tiff(g8))
    write(t, "grey8-truncated.tif", bytes(huge[: len(huge) // 2]))
    write(t, "grey8-truncated.png", png8.tobytes()[: len(png8) // 2])
    write(t, "grey8-truncated.jpg", jpg.tobytes()[: len(jpg) // 2])
    write(t, "huge-header.tif", tiff_huge_header())


def tiff_huge_header():
    """A little-endian TIFF whose IFD claims 200000 x 200000 8-bit pixels in
    one strip of 16 bytes (TIFF 6.0 baseline tags 256, 257, 258, 259, 262,
    273, 277, 278, 279)."""
    entries = [(256, 4, 1, 200000), (257, 4, 1, 200000), (258, 3, 1, 8),
               (259, 3, 1, 1), (262, 3, 1, 1), (273, 4, 1, 8 + 2 + 9 * 12 + 4),
               (277, 3, 1, 1), (278, 4, 1, 200000), (279, 4, 1, 16)]
    out = bytearray(b"II*\x00" + struct.pack("<I", 8))
    out += struct.pack("<H", len(entries))
    for tag, typ, count, value in entries:
        if typ == 3:
            out += struct.pack("<HHIHH", tag, typ, count, value, 0)
        else:
            out += struct.pack("<HHII", tag, typ, count, value)
    out += struct.pack("<I", 0)
    out += bytes(range(16))
    return bytes(out)


def ring_seeds():
    """Raw layout of ring_analysis_fuzz.cpp: 8 header bytes, then samples."""
    t = "ring_analysis_fuzz"

    def header(w, h, flags, sectors=36, outlier=64, ax=128, ay=128, ad=200):
        return bytes([w - 8, h - 8, flags, sectors - 1, outlier, ax, ay, ad])

    g = rings(64, 64, period_px2=90.0)
    write(t, "rings64-8bit", header(64, 64, 0) +
          (20 + g * 220).astype(np.uint8).tobytes())
    g = rings(48, 48, period_px2=70.0)
    write(t, "rings48-16bit-plate", header(48, 48, 1 | 64, sectors=24) +
          (1000 + g * 50000).astype("<u2").tobytes())
    g = rings(32, 32, period_px2=40.0)
    write(t, "rings32-float-aperture", header(32, 32, 3 | 16 | 32, sectors=12) +
          g.astype("<f4").tobytes())
    g = rings(64, 40, period_px2=120.0, cx=20.0, cy=22.0)
    write(t, "rings64x40-offcentre-transmitted", header(64, 40, 2 | 4 | 8) +
          (g * 255).astype(np.uint8).tobytes())
    write(t, "uniform", header(16, 16, 0) + bytes([128]))
    write(t, "saturated", header(32, 32, 0) + bytes([255]))


if __name__ == "__main__":
    image_seeds()
    ring_seeds()

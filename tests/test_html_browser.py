"""The HTML report renders in a real browser: headless Chromium takes a screenshot and the
operating-region plot colour must be on it (and absent from a page without the plot).

The PNG is decoded here with zlib and struct (PNG specification, ISO/IEC 15948: chunks,
filter types 0-4), so the test needs no image library.
"""

from __future__ import annotations

import os
import shutil
import struct
import subprocess
import zlib
from pathlib import Path

import pytest

from conftest import need
from frontcheck.report import html
from test_report_handmade import make_report

CHROMIUM = shutil.which("chromium") or ("/usr/bin/chromium" if os.path.exists("/usr/bin/chromium")
                                        else None)


def decode_png(data: bytes) -> tuple[int, int, int, bytes]:
    """(width, height, bytes per pixel, raw unfiltered rows) of an 8-bit RGB/RGBA PNG."""
    assert data[:8] == b"\x89PNG\r\n\x1a\n", "not a PNG"
    pos, idat, ihdr = 8, [], None
    while pos < len(data):
        (length,) = struct.unpack(">I", data[pos:pos + 4])
        kind = data[pos + 4:pos + 8]
        body = data[pos + 8:pos + 8 + length]
        pos += 12 + length
        if kind == b"IHDR":
            ihdr = struct.unpack(">IIBBBBB", body)
        elif kind == b"IDAT":
            idat.append(body)
        elif kind == b"IEND":
            break
    w, h, depth, ctype, _, _, interlace = ihdr
    assert depth == 8 and ctype in (2, 6) and interlace == 0, ihdr
    bpp = 3 if ctype == 2 else 4
    raw = zlib.decompress(b"".join(idat))
    stride = w * bpp
    out = bytearray()
    prev = bytearray(stride)
    i = 0
    for _ in range(h):
        ftype = raw[i]
        line = bytearray(raw[i + 1:i + 1 + stride])
        i += 1 + stride
        for x in range(stride):
            a = line[x - bpp] if x >= bpp else 0
            b = prev[x]
            c = prev[x - bpp] if x >= bpp else 0
            if ftype == 1:
                line[x] = (line[x] + a) & 255
            elif ftype == 2:
                line[x] = (line[x] + b) & 255
            elif ftype == 3:
                line[x] = (line[x] + (a + b) // 2) & 255
            elif ftype == 4:
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                pred = a if pa <= pb and pa <= pc else (b if pb <= pc else c)
                line[x] = (line[x] + pred) & 255
        out += line
        prev = line
    return w, h, bpp, bytes(out)


def count_colour(png: bytes, rgb: tuple[int, int, int]) -> int:
    w, h, bpp, pixels = decode_png(png)
    target = bytes(rgb)
    return sum(1 for k in range(0, len(pixels), bpp) if pixels[k:k + 3] == target)


def screenshot(page: str, tmp: Path) -> bytes:
    src = tmp / "report.html"
    src.write_text(page, encoding="utf-8")
    png = tmp / "shot.png"
    cmd = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
           "--no-first-run", "--disable-background-networking", "--disable-component-update",
           "--disable-sync", f"--user-data-dir={tmp / 'profile'}", f"--screenshot={png}",
           "--window-size=1280,3200", src.as_uri()]
    subprocess.run(cmd, capture_output=True, timeout=120, check=False)
    assert png.exists(), "chromium wrote no screenshot"
    return png.read_bytes()


def _rgb(hex_colour: str) -> tuple[int, int, int]:
    h = hex_colour.lstrip("#")
    return int(h[0:2], 16), int(h[2:4], 16), int(h[4:6], 16)


@pytest.fixture(scope="module")
def chromium():
    need(CHROMIUM is not None, "chromium not installed (apt-get install chromium)")
    return CHROMIUM


def test_region_plot_is_drawn(chromium, tmp_path):
    report = make_report()
    # Put the in-amp stage (the one with the operating-region plot) first so that it is
    # inside the 1280 x 3200 screenshot.
    p = report.projects[0]
    p.stages.reverse()
    png = screenshot(html.render(report), tmp_path)
    n = count_colour(png, _rgb(html.REGION_FILL))
    # The polygon spans about half the 376 x 246 px plot frame: thousands of pixels.
    assert n > 5000, n


def test_no_region_colour_without_the_plot(chromium, tmp_path):
    # Control: the same page without a headroom region has none of that colour, so the
    # pixels counted above come from the plot.
    report = make_report()
    p = report.projects[0]
    for r in p.results.values():
        r.headroom.region = []
        r.headroom.checks = []
    png = screenshot(html.render(report), tmp_path)
    assert count_colour(png, _rgb(html.REGION_FILL)) == 0


def test_region_plot_of_a_sample_project(chromium, tmp_path):
    # A real design through the whole pipeline: shunt-monitor declares its input range, so its
    # stage has an operating region to draw.
    from conftest import REPO
    from frontcheck.pipeline import RunOptions, run
    sample = REPO / "sample_projects" / "shunt-monitor"
    assert sample.is_dir(), "sample projects ship with the repository"
    report = run([str(sample)], RunOptions(samples=500, seed=1))
    r = next(iter(report.projects[0].results.values()))
    assert len(r.headroom.region) >= 3 and r.headroom.box is not None
    png = screenshot(html.render(report), tmp_path)
    assert count_colour(png, _rgb(html.REGION_FILL)) > 5000

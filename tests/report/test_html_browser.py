"""The HTML report renders in a real browser: headless Chromium takes a screenshot and the
operating-region plot colour must be on it (and absent from a page without the plot); the
stage diagram puts ink on the screenshot; every sample project's report loads with no request
and no console line, fits a 1280-pixel window without horizontal scrolling, and prints to a PDF
that poppler reads, of a few pages per stage, none blank.

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
    tmp.mkdir(parents=True, exist_ok=True)
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


# -- the page as a reader's browser loads it ---------------------------------------------------
#
# One headless Chromium run per page, all traffic sent to a local recorder: Chromium is told to
# use 127.0.0.1:PORT as its proxy for every scheme, so any request the page makes (image, font,
# style sheet, script) arrives there as a request line and is answered 502; nothing leaves the
# machine. Console messages are read from Chromium's own log (--enable-logging=stderr); the
# report has no script, so every console line is a problem. A copy of the page gets one added
# script that writes the document's scroll width into the title, read back with --dump-dom.

import re
import socket
import threading


class Recorder:
    """A loopback TCP listener that records the first line of each connection."""

    def __init__(self):
        self.sock = socket.socket()
        self.sock.bind(("127.0.0.1", 0))
        self.sock.listen(16)
        self.sock.settimeout(0.2)
        self.port = self.sock.getsockname()[1]
        self.lines: list[str] = []
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._serve, daemon=True)

    def _serve(self):
        while not self._stop.is_set():
            try:
                conn, _ = self.sock.accept()
            except OSError:
                continue
            with conn:
                conn.settimeout(2)
                try:
                    data = conn.recv(4096)
                    conn.sendall(b"HTTP/1.1 502 Bad Gateway\r\nContent-Length: 0\r\n\r\n")
                except OSError:
                    data = b""
                self.lines.append(data.split(b"\r\n", 1)[0].decode("latin-1"))

    def __enter__(self):
        self._thread.start()
        return self

    def __exit__(self, *exc):
        self._stop.set()
        self._thread.join(timeout=5)
        self.sock.close()


_MEASURE = ("<script>addEventListener('load', function () {document.title = 'scroll ' + "
            "document.documentElement.scrollWidth + ' of ' + innerWidth;});</script>")


def browse(page: str, tmp: Path, width: int = 1280) -> dict:
    """Load ``page`` in headless Chromium: the requests it made, its console lines and its
    scroll width in a window ``width`` pixels wide."""
    tmp.mkdir(parents=True, exist_ok=True)
    src = tmp / "measured.html"
    src.write_text(page.replace("</body>", _MEASURE + "</body>"), encoding="utf-8")
    with Recorder() as rec:
        cmd = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
               "--disable-background-networking", "--disable-component-update", "--disable-sync",
               # the browser's own services (updater, clock, sign-in, extensions) stay off: a
               # request the recorder sees is then one the page made
               "--disable-features=NetworkTimeServiceQuerying,OptimizationHints,MediaRouter,"
               "AutofillServerCommunication,CertificateTransparencyComponentUpdater",
               "--disable-extensions", "--disable-default-apps", "--no-default-browser-check",
               "--disable-component-extensions-with-background-pages",
               "--disable-domain-reliability", "--disable-client-side-phishing-detection",
               "--no-service-autorun", "--disable-breakpad", "--metrics-recording-only",
               f"--user-data-dir={tmp / 'profile-b'}", "--enable-logging=stderr", "--v=0",
               f"--proxy-server=http://127.0.0.1:{rec.port}", "--proxy-bypass-list=<-loopback>",
               f"--window-size={width},900", "--dump-dom", src.as_uri()]
        out = subprocess.run(cmd, capture_output=True, text=True, timeout=120, check=False)
    title = re.search(r"<title>scroll (\d+) of (\d+)</title>", out.stdout)
    assert title, out.stdout[:500] + out.stderr[-1500:]
    console = [line for line in out.stderr.splitlines() if ":CONSOLE" in line]
    return {"requests": list(rec.lines), "console": console,
            "scroll_width": int(title.group(1)), "inner_width": int(title.group(2))}


def hosts(request_lines: list[str]) -> set[str]:
    """The hosts of proxy request lines ('CONNECT h:443 ...', 'GET http://h/... ...')."""
    out = set()
    for line in request_lines:
        m = re.match(r"CONNECT ([^:\s]+)|[A-Z]+ \w+://([^/:\s]+)", line)
        if m:
            out.add(m.group(1) or m.group(2))
    return out


@pytest.fixture(scope="module")
def browser_own(chromium, tmp_path_factory) -> set[str]:
    """Hosts this Chromium contacts by itself (its updater, sign-in service) with an empty page
    loaded the same way: not requests a page makes, so they are set apart."""
    blank = "<!DOCTYPE html><html><head><title>x</title></head><body></body></html>"
    return hosts(browse(blank, tmp_path_factory.mktemp("blank"))["requests"])


def test_browse_sees_requests_console_lines_and_overflow(chromium, tmp_path):
    # Control: a page that fetches an image, logs an error and is too wide is caught on all three.
    bad = ('<!DOCTYPE html><html><head><title>x</title></head><body>'
           '<img src="http://frontcheck-test.invalid/x.png"><script>console.error("boom")</script>'
           '<div style="width:1800px">wide</div></body></html>')
    seen = browse(bad, tmp_path)
    assert any("frontcheck-test.invalid" in r for r in seen["requests"]), seen
    assert any("boom" in c for c in seen["console"]), seen
    assert seen["scroll_width"] > seen["inner_width"] == 1280


@pytest.fixture(scope="module")
def sample_pages():
    """The HTML report of every sample project (corners and 500 Monte Carlo samples)."""
    from conftest import REPO
    from frontcheck.pipeline import RunOptions, run
    pages = {}
    for folder in sorted((REPO / "sample_projects").iterdir()):
        if (folder / f"{folder.name}.kicad_pro").exists():
            pages[folder.name] = html.render(run([str(folder)], RunOptions(samples=500, seed=1)))
    assert len(pages) == 5, sorted(pages)
    return pages


def test_sample_reports_load_quietly_and_fit_1280(chromium, sample_pages, browser_own, tmp_path):
    assert "frontcheck-test.invalid" not in browser_own
    for name, page in sample_pages.items():
        seen = browse(page, tmp_path / name)
        assert hosts(seen["requests"]) - browser_own == set(), (name, seen["requests"])
        assert seen["console"] == [], (name, seen["console"])
        # no horizontal scroll in a 1280-pixel window
        assert seen["scroll_width"] <= seen["inner_width"] == 1280, (name, seen)


def _ink(png: bytes) -> int:
    """Pixels that are not white."""
    _, _, bpp, pixels = decode_png(png)
    return sum(1 for k in range(0, len(pixels), bpp) if pixels[k:k + 3] != b"\xff\xff\xff")


def test_screenshot_shows_the_stage_diagram(chromium, tmp_path, monkeypatch):
    # shunt-monitor's difference amplifier: the screenshot has ink, and thousands of pixels more
    # of it than the same page with the diagram's drawing emptied (the control)
    from conftest import REPO
    from frontcheck.pipeline import RunOptions, run
    from frontcheck.report import stage_diagram
    report = run([str(REPO / "sample_projects" / "shunt-monitor")], RunOptions(samples=500, seed=1))
    page = html.render(report)
    assert page.count('<figure class="diagram">') == 1
    with_diagram = _ink(screenshot(page, tmp_path / "a"))
    drawn = stage_diagram.diagram_svg

    def empty(stage, marks):
        # the same <svg> element, same size, with nothing drawn in it: the layout stays
        svg, caption = drawn(stage, marks)
        return re.sub(r"(<svg[^>]*>).*(</svg>)", r"\1\2", svg, flags=re.S), caption
    monkeypatch.setattr(stage_diagram, "diagram_svg", empty)
    without = _ink(screenshot(html.render(report), tmp_path / "b"))
    assert with_diagram > 50_000, with_diagram          # a page, not a blank window
    assert with_diagram - without > 5_000, (with_diagram, without)


def _pdf(page: str, tmp: Path) -> Path:
    tmp.mkdir(parents=True, exist_ok=True)
    src = tmp / "report.html"
    src.write_text(page, encoding="utf-8")
    pdf = tmp / "report.pdf"
    cmd = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
           f"--user-data-dir={tmp / 'profile-p'}", "--no-pdf-header-footer",
           f"--print-to-pdf={pdf}", src.as_uri()]
    subprocess.run(cmd, capture_output=True, timeout=120, check=False)
    assert pdf.exists(), "chromium wrote no PDF"
    return pdf


def test_sample_reports_print_to_pdf(chromium, sample_pages, tmp_path):
    need(shutil.which("pdfinfo") is not None and shutil.which("pdftoppm") is not None,
         "poppler-utils not installed (apt-get install poppler-utils)")
    for name, page in sample_pages.items():
        pdf = _pdf(page, tmp_path / name)
        data = pdf.read_bytes()
        assert data.startswith(b"%PDF-") and b"%%EOF" in data[-1024:], name
        info = subprocess.run(["pdfinfo", str(pdf)], capture_output=True, text=True, timeout=60)
        assert info.returncode == 0, info.stderr       # poppler reads it: a valid PDF
        pages = int(re.search(r"^Pages:\s+(\d+)", info.stdout, re.M).group(1))
        # a one- to four-stage report: a summary page, a few per stage, never dozens
        assert 2 <= pages <= 6 * max(1, page.count('<section id="stage-')), (name, pages)
        # no blank page: every page, rendered by poppler, has ink on it
        subprocess.run(["pdftoppm", "-r", "20", "-png", str(pdf), str(tmp_path / name / "p")],
                       check=True, timeout=120)
        for png in sorted((tmp_path / name).glob("p-*.png")):
            assert _ink(png.read_bytes()) > 50, (name, png.name)

"""What a design may make frontcheck read: bounded work, only the project folder, only regular
files, known file versions. Each case is generated in tmp_path and run through the command
line; each must end with exit status 2 (or a warning where the design is still readable), a
message that names the cause and what to do, and never a traceback.
"""

from __future__ import annotations

import os
import subprocess
import sys
import time
from pathlib import Path

import pytest

from kicad_sheets import ROOT, Sym, label, new_uuid, sheet_text, wire

# --------------------------------------------------------------------------- running


def frontcheck(*args: str, timeout: float = 300) -> tuple[int, str, str, float, float]:
    """Run ``frontcheck ARGS`` in a child of a small wrapper process, so that the wrapper's
    RUSAGE_CHILDREN is that one run's peak memory. Returns (exit status, stdout, stderr,
    peak resident MB, seconds)."""
    wrapper = (
        "import resource, subprocess, sys, time\n"
        "t = time.monotonic()\n"
        "r = subprocess.run([sys.executable, '-m', 'frontcheck.cli'] + sys.argv[1:],"
        " capture_output=True, text=True)\n"
        "dt = time.monotonic() - t\n"
        "kb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss\n"
        "sys.stdout.write(f'{r.returncode} {kb} {dt}\\n' + r.stdout)\n"
        "sys.stderr.write(r.stderr)\n")
    p = subprocess.run([sys.executable, "-c", wrapper, *args], capture_output=True, text=True,
                       timeout=timeout)
    head, _, out = p.stdout.partition("\n")
    rc, kb, dt = head.split()
    return int(rc), out, p.stderr, int(kb) / 1024, float(dt)


def assert_refused(rc: int, err: str, *needles: str) -> None:
    assert rc == 2, err
    assert "Traceback" not in err, err
    for n in needles:
        assert n in err, (n, err)


# --------------------------------------------------------------------------- builders


def sheet_ref(name: str, file: str, uuid: str, x: float = 50, y: float = 50) -> str:
    return (f'(sheet (at {x} {y}) (size 10 10) (uuid "{uuid}") '
            f'(property "Sheetname" "{name}" (at {x} {y} 0) (effects (font (size 1.27 1.27)))) '
            f'(property "Sheetfile" "{file}" (at {x} {y} 0) (effects (font (size 1.27 1.27)))) '
            f'(instances (project "t" (path "/{ROOT}" (page "2")))))')


def project(folder: Path, root_items: list, name: str = "p") -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    (folder / f"{name}.kicad_pro").write_text("{}", encoding="utf-8")
    root = folder / f"{name}.kicad_sch"
    root.write_text(sheet_text(root_items), encoding="utf-8")
    return root


def small_sheet(uuid: str, children: list[str]) -> str:
    """A sheet with one resistor and a sheet block for each child file name."""
    items = [Sym("Device:R", "R1", 20, 20), label("A", 20, 16.19)]
    items += [sheet_ref(f"S{i}", f, f"90000000-0000-4000-8000-{i:012d}", 60 + 15 * i)
              for i, f in enumerate(children)]
    return sheet_text(items, uuid=uuid)


# --------------------------------------------------------------------------- bounded work


def test_hierarchy_bomb_stops_at_the_sheet_limit(tmp_path):
    """Seven sheet files, each placing the next ten times: 1,111,111 sheet instances. The
    instance limit stops it early, in little time and memory."""
    d = tmp_path / "bomb"
    d.mkdir()
    (d / "bomb.kicad_pro").write_text("{}", encoding="utf-8")
    for level in range(7):
        kids = [f"s{level + 1}.kicad_sch"] * 10 if level < 6 else []
        name = "bomb.kicad_sch" if level == 0 else f"s{level}.kicad_sch"
        (d / name).write_text(small_sheet(f"8000000{level}-0000-4000-8000-000000000000", kids),
                              encoding="utf-8")
    rc, _, err, peak_mb, seconds = frontcheck("check", str(d))
    assert_refused(rc, err, "sheet instances", "--max-sheets")
    # Bounds only a hang or a blow-up breaks (a normal run: well under a second, < 100 MB).
    assert peak_mb < 400, peak_mb
    assert seconds < 120, seconds


def test_fifty_megabytes_of_empty_lists(tmp_path):
    """50 MB of ``()()()``: refused by the expression limit before any tree is built, with
    memory a small multiple of the input."""
    p = tmp_path / "empty.kicad_sch"
    p.write_bytes(b"()" * (25 * 1024 * 1024))
    rc, _, err, peak_mb, seconds = frontcheck("check", str(p))
    assert_refused(rc, err, "empty.kicad_sch", "expressions", "--max-expressions")
    assert peak_mb < 600, peak_mb          # input 50 MB
    assert seconds < 120, seconds


@pytest.mark.parametrize("suffix", [".xml", ".net"])
def test_twenty_megabytes_of_empty_xml_elements(tmp_path, suffix):
    """20 MB of ``<c/>`` inside an export element, as .xml and as XML saved under .net: the
    element count stops it before a tree is built, as ``()()`` is stopped in a schematic."""
    p = tmp_path / f"flood{suffix}"
    p.write_bytes(b'<export version="E">' + b"<c/>" * (5 * 1024 * 1024) + b"</export>")
    rc, _, err, peak_mb, seconds = frontcheck("check", str(p))
    assert_refused(rc, err, f"flood{suffix}", "expressions", "--max-expressions")
    assert peak_mb < 400, peak_mb          # input 20 MB; a built tree would take far more
    assert seconds < 120, seconds


def test_xml_element_limit_is_the_expression_option(tmp_path):
    """A small, well-formed XML netlist with a few dozen elements: refused under a limit of
    10, read under the default (its complaint is then about content, not size)."""
    p = tmp_path / "small.xml"
    p.write_text('<?xml version="1.0" encoding="UTF-8"?>\n<export version="E"><design/>'
                 + "<components>" + '<comp ref="R1"><value>1k</value></comp>' * 20
                 + "</components><nets/></export>\n", encoding="utf-8")
    rc, _, err, _, _ = frontcheck("check", str(p), "--max-expressions", "10")
    assert_refused(rc, err, "small.xml", "--max-expressions")
    rc, _, err, _, _ = frontcheck("check", str(p))
    assert "--max-expressions" not in err, err


def _twelve_instances(tmp_path) -> Path:
    d = tmp_path / "twelve"
    d.mkdir()
    (d / "leaf.kicad_sch").write_text(small_sheet("81000000-0000-4000-8000-000000000000", []),
                                      encoding="utf-8")
    return project(d, [sheet_ref(f"L{i}", "leaf.kicad_sch", new_uuid(), 20 + 15 * i)
                       for i in range(12)])


@pytest.mark.parametrize("option,low,high,what", [
    ("--max-sheets", "10", "13", "sheet instances"),
    ("--max-symbols", "11", "12", "symbols"),
])
def test_limits_are_options(tmp_path, option, low, high, what):
    """13 sheet instances (root + 12) with 12 placed symbols: refused below, read at the
    limit, by both commands that read designs."""
    root = _twelve_instances(tmp_path)
    rc, _, err, _, _ = frontcheck("netlist", str(root), option, low)
    assert_refused(rc, err, what, option)
    rc, out, err, _, _ = frontcheck("netlist", str(root), option, high)
    assert rc == 0, err
    assert "/L0/A" in out
    rc, _, err, _, _ = frontcheck("check", str(root), option, low)
    assert_refused(rc, err, what, option)


# --------------------------------------------------------------------------- outside the folder


def _with_sheet_file(tmp_path: Path, written: str) -> Path:
    return project(tmp_path / "proj", [sheet_ref("Out", written, new_uuid())])


@pytest.fixture
def outside(tmp_path) -> Path:
    """A readable sheet file outside the project folder."""
    d = tmp_path / "elsewhere"
    d.mkdir()
    f = d / "x.kicad_sch"
    f.write_text(small_sheet("82000000-0000-4000-8000-000000000000", []), encoding="utf-8")
    return f


@pytest.mark.parametrize("how", ["relative", "absolute", "backslashes", "symlink"])
def test_sheets_outside_the_project_are_refused(tmp_path, outside, how):
    if how == "symlink":
        (tmp_path / "proj").mkdir()
        (tmp_path / "proj" / "link.kicad_sch").symlink_to(outside)
        written = "link.kicad_sch"
    else:
        written = {"relative": "../elsewhere/x.kicad_sch", "absolute": str(outside),
                   "backslashes": "..\\\\elsewhere\\\\x.kicad_sch"}[how]
    root = _with_sheet_file(tmp_path, written)
    rc, out, err, _, _ = frontcheck("netlist", str(root))
    assert_refused(rc, err, "outside the project folder", "--allow-folder", "p.kicad_sch")
    assert out == ""
    # An explicit option allows that folder; nothing else changes.
    rc, out, err, _, _ = frontcheck("netlist", str(root), "--allow-folder",
                                    str(outside.parent))
    assert rc == 0, err
    assert "/Out/A" in out


def test_system_files_are_never_opened(tmp_path):
    root = _with_sheet_file(tmp_path, "/proc/self/environ")
    rc, out, err, _, _ = frontcheck("netlist", str(root), "--allow-folder", "/proc")
    assert_refused(rc, err, "/proc/self/environ", "system file")
    assert "PATH=" not in out + err


# --------------------------------------------------------------------------- only regular files


@pytest.mark.parametrize("kind,needle", [
    ("fifo", "named pipe"), ("folder", "is a folder"), ("dangling", "does not exist"),
])
def test_only_regular_files_are_opened(tmp_path, kind, needle):
    proj = tmp_path / "proj"
    proj.mkdir()
    target = proj / "sub.kicad_sch"
    if kind == "fifo":
        os.mkfifo(target)
    elif kind == "folder":
        target.mkdir()
    else:
        target.symlink_to(proj / "gone.kicad_sch")
    root = project(proj, [sheet_ref("Sub", "sub.kicad_sch", new_uuid())])
    t = time.monotonic()
    rc, _, err, _, _ = frontcheck("netlist", str(root), timeout=120)   # a FIFO must not hang
    assert_refused(rc, err, "sub.kicad_sch", needle)
    assert time.monotonic() - t < 120


# --------------------------------------------------------------------------- file versions


def _versioned(tmp_path: Path, version: str) -> Path:
    root = project(tmp_path / "v", [Sym("Device:R", "R1", 20, 20), wire(20, 16.19, 20, 10)])
    text = root.read_text(encoding="utf-8").replace("(version 20231120)",
                                                    f"(version {version})")
    root.write_text(text, encoding="utf-8")
    return root


def test_future_version_is_a_warning_in_the_report(tmp_path):
    root = _versioned(tmp_path, "20991231")
    rc, out, err, _, _ = frontcheck("check", str(root.parent), "--format", "json")
    assert rc in (0, 1), err
    assert "newer than KiCad 10" in out and "results may miss new syntax" in out
    rc, out, err, _, _ = frontcheck("netlist", str(root))
    assert rc == 0 and "newer than KiCad 10" in err


@pytest.mark.parametrize("version", ["banana", "99999999", "2023112", "20231340", "-1"])
def test_version_that_is_no_date_is_an_error(tmp_path, version):
    root = _versioned(tmp_path, version)
    rc, _, err, _, _ = frontcheck("netlist", str(root))
    assert_refused(rc, err, "p.kicad_sch:1:", "version")

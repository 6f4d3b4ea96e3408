"""Damaged, hostile or unsupported input, end to end through the command line.

Every case must end with exit status 2 and a message that names the file (with line and
column where the damage has a position), never with a traceback. Files are KiCad's own (the
corpus, KiCad 9 exports) copied to a temporary folder and then damaged there.
"""

from __future__ import annotations

import os
import random
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from frontcheck.cli import main

BIOAMP = "upsidedownlabs__BioAmp-EXG-Pill/hardware"
CURVE_TRACER = "schuyler4__USB_Curve_Tracer/electronics/rev3/ecad"   # 3-level hierarchy


def cli(capsys, *args: str) -> tuple[int, str, str]:
    """Run the CLI in-process (fast enough for hundreds of cases). An exception escaping
    main() fails the test with its traceback, which is what a user would have seen."""
    rc = main(list(args))
    cap = capsys.readouterr()
    return rc, cap.out, cap.err


def run_cli(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "frontcheck.cli", *args],
                          capture_output=True, text=True)


def assert_rejected(rc: int, err: str, file: Path, positioned: bool = False) -> None:
    assert rc == 2, err
    assert "Traceback" not in err
    assert file.name in err, err
    if positioned:
        assert re.search(re.escape(file.name) + r":\d+(:\d+)?:", err), err


def copy_design(src: Path, dst: Path) -> Path:
    shutil.copytree(src, dst)
    return dst


@pytest.fixture(scope="module")
def xml_export(corpus, kicad9, tmp_path_factory) -> Path:
    """KiCad 9's XML netlist of a corpus design."""
    out = tmp_path_factory.mktemp("xml") / "bioamp.xml"
    sch = corpus / "real-designs" / BIOAMP / "BioAmp-EXG-Pill.kicad_sch"
    subprocess.run([str(kicad9), "netlist", str(sch), str(out), "kicadxml"], check=True,
                   capture_output=True)
    return out


@pytest.fixture
def net_file(corpus, tmp_path) -> Path:
    dst = tmp_path / "hierarchy_aliases.net"
    shutil.copyfile(corpus / "kicad-netlists" / "hierarchy_aliases" / "hierarchy_aliases.net",
                    dst)
    return dst


def _offsets(n: int, count: int, rng: random.Random) -> list[int]:
    return sorted({*range(0, n, max(1, n // count)), *(rng.randrange(n) for _ in range(count))})


# ---------------------------------------------------------------------------------------
# truncation


def test_truncated_net_at_many_offsets(net_file, capsys):
    data = net_file.read_bytes()
    rng = random.Random(1)
    body_end = len(data.rstrip())
    for k in _offsets(body_end - 1, 60, rng):
        net_file.write_bytes(data[:k])
        rc, _out, err = cli(capsys, "netlist", str(net_file))
        assert_rejected(rc, err, net_file, positioned=k > 0)


def test_truncated_xml_at_many_offsets(xml_export, tmp_path, capsys):
    data = xml_export.read_bytes()
    target = tmp_path / "cut.xml"
    rng = random.Random(2)
    for k in _offsets(len(data.rstrip()) - 1, 60, rng):
        target.write_bytes(data[:k])
        rc, _out, err = cli(capsys, "netlist", str(target))
        assert_rejected(rc, err, target, positioned=k > 0)


def test_truncated_schematic_at_many_offsets(corpus, tmp_path, capsys):
    d = copy_design(corpus / "real-designs" / BIOAMP, tmp_path / "p")
    sch = d / "BioAmp-EXG-Pill.kicad_sch"
    data = sch.read_bytes()
    rng = random.Random(3)
    for k in _offsets(len(data.rstrip()) - 1, 40, rng):
        sch.write_bytes(data[:k])
        rc, _out, err = cli(capsys, "netlist", str(d))
        assert_rejected(rc, err, sch, positioned=k > 0)


def test_truncated_sub_sheet_is_named(corpus, tmp_path, capsys):
    d = copy_design(corpus / "real-designs" / CURVE_TRACER, tmp_path / "p")
    sub = d / "half_supply_buffer.kicad_sch"
    data = sub.read_bytes()
    for k in (len(data) // 3, len(data) // 2, len(data) - 5):
        sub.write_bytes(data[:k])
        rc, _out, err = cli(capsys, "netlist", str(d / "USB_curve_tracer.kicad_pro"))
        assert_rejected(rc, err, sub, positioned=True)


# ---------------------------------------------------------------------------------------
# random byte changes in netlist files: read (the change was harmless) or rejected


@pytest.mark.parametrize("kind", ["net", "xml"])
def test_random_byte_flips_in_netlists(kind, net_file, xml_export, tmp_path, capsys):
    src = net_file if kind == "net" else xml_export
    data = src.read_bytes()
    target = tmp_path / f"flipped.{kind}"
    rng = random.Random(4)
    rejected = 0
    for _ in range(150):
        b = bytearray(data)
        for _ in range(rng.randint(1, 6)):
            b[rng.randrange(len(b))] = rng.randrange(256)
        target.write_bytes(bytes(b))
        rc, _out, err = cli(capsys, "netlist", str(target), "--format", "json")
        assert rc in (0, 2), err
        assert "Traceback" not in err
        if rc == 2:
            rejected += 1
            assert target.name in err
    assert rejected > 0   # the damage was noticed at least some of the time


def test_random_byte_flips_in_schematics(corpus, tmp_path, capsys):
    # A small hierarchy from KiCad's QA data: one sub-sheet used twice, a nested sheet.
    d = copy_design(corpus / "kicad-netlists" / "hierarchy_aliases", tmp_path / "p")
    root = d / "hierarchy_aliases.kicad_sch"
    rng = random.Random(7)
    rejected = 0
    for i in range(300):
        target = d / ("sub1.kicad_sch" if i % 3 == 2 else "hierarchy_aliases.kicad_sch")
        original = target.read_bytes()
        b = bytearray(original)
        for _ in range(rng.randint(1, 6)):
            b[rng.randrange(len(b))] = rng.randrange(256)
        target.write_bytes(bytes(b))
        rc, _out, err = cli(capsys, "netlist", str(root), "--format", "json")
        target.write_bytes(original)
        assert rc in (0, 2), err
        assert "Traceback" not in err
        if rc == 2:
            rejected += 1
            assert target.name in err, err
    assert rejected > 0


# ---------------------------------------------------------------------------------------
# not KiCad text at all


@pytest.mark.parametrize("suffix", [".net", ".xml", ".kicad_sch"])
def test_binary_garbage(tmp_path, capsys, suffix):
    rng = random.Random(5)
    for i, with_nul in enumerate((True, False)):
        data = bytes(rng.randrange(256) for _ in range(4000))
        if not with_nul:
            data = data.replace(b"\x00", b"\x01")
        p = tmp_path / f"garbage{i}{suffix}"
        p.write_bytes(data)
        rc, _out, err = cli(capsys, "netlist", str(p))
        assert_rejected(rc, err, p)


@pytest.mark.parametrize("suffix", [".net", ".xml", ".kicad_sch"])
def test_empty_and_blank_files(tmp_path, capsys, suffix):
    for i, data in enumerate((b"", b"   \n\n\t\n")):
        p = tmp_path / f"empty{i}{suffix}"
        p.write_bytes(data)
        rc, _out, err = cli(capsys, "netlist", str(p))
        assert_rejected(rc, err, p)


def test_non_utf8_is_located(net_file, capsys):
    lines = net_file.read_bytes().split(b"\n")
    lines[9] = lines[9] + b" \xff\xfe"      # line 10
    net_file.write_bytes(b"\n".join(lines))
    rc, _out, err = cli(capsys, "netlist", str(net_file))
    assert_rejected(rc, err, net_file)
    assert f"{net_file.name}:10:" in err and "UTF-8" in err


def test_non_utf8_schematic_is_located(corpus, tmp_path, capsys):
    d = copy_design(corpus / "real-designs" / BIOAMP, tmp_path / "p")
    sch = d / "BioAmp-EXG-Pill.kicad_sch"
    lines = sch.read_bytes().split(b"\n")
    i = next(i for i in range(99, len(lines)) if b'"' in lines[i])
    lines[i] = lines[i].replace(b'"', b'"\xc3\x28', 1)   # an invalid 2-byte sequence
    sch.write_bytes(b"\n".join(lines))
    rc, _out, err = cli(capsys, "netlist", str(sch))
    assert_rejected(rc, err, sch)
    assert f"{sch.name}:{i + 1}:" in err


# ---------------------------------------------------------------------------------------
# hostile shapes


def test_deep_nesting(tmp_path, capsys):
    n = 200_000
    for name, text in (
        ("deep.net", '(export (version "E") ' + "(" * n + ")" * n + ")"),
        ("deep.kicad_sch", "(kicad_sch " + "(" * n + ")" * n + ")"),
        ("deep.xml", '<export version="E">' + "<a>" * n + "</a>" * n + "</export>"),
    ):
        p = tmp_path / name
        p.write_text(text)
        rc, _out, err = cli(capsys, "netlist", str(p))
        assert_rejected(rc, err, p)


def test_nesting_inside_a_component_is_harmless(tmp_path, capsys):
    # 300 levels (within the parser's limit) where a value should be: read, value empty.
    p = tmp_path / "nested.net"
    p.write_text('(export (version "E") (components (comp (ref "R1") (value '
                 + "(" * 300 + ")" * 300 + ")))"
                 ' (nets (net (code "1") (name "A") (node (ref "R1") (pin "1")))))')
    rc, out, err = cli(capsys, "netlist", str(p), "--format", "json")
    assert rc == 0, err
    assert '"R1"' in out


def test_huge_strings(net_file, tmp_path, capsys):
    text = net_file.read_text()
    big = "x" * 20_000_000
    # A 20 MB field value in an otherwise good file is read.
    ok = tmp_path / "big.net"
    ok.write_text(text.replace('(value "R")', f'(value "{big}")', 1))
    assert f'(value "{big[:10]}' in ok.read_text()[:100_000_000]
    rc, out, err = cli(capsys, "netlist", str(ok), "--format", "json")
    assert rc == 0, err
    # A string that never closes, 20 MB long, is located where it starts.
    bad = tmp_path / "unterminated.net"
    lines = text.split("\n")
    lines[5] = lines[5] + ' "' + big
    bad.write_text("\n".join(lines[:6]))
    rc, _out, err = cli(capsys, "netlist", str(bad))
    assert_rejected(rc, err, bad, positioned=True)
    assert len(err) < 2000    # the message does not echo the string


def test_xml_entities_and_doctype_refused(tmp_path, capsys):
    p = tmp_path / "laughs.xml"
    p.write_text('<?xml version="1.0"?>\n<!DOCTYPE export [<!ENTITY a "aaaaaaaaaa">'
                 '<!ENTITY b "&a;&a;&a;&a;&a;&a;&a;&a;&a;&a;">]>\n'
                 '<export version="E"><components><comp ref="R1"><value>&b;</value></comp>'
                 '</components></export>\n')
    rc, _out, err = cli(capsys, "netlist", str(p))
    assert_rejected(rc, err, p, positioned=True)


# ---------------------------------------------------------------------------------------
# unsupported or inconsistent designs


def test_kicad5_legacy_files(tmp_path, capsys):
    legacy = "EESchema Schematic File Version 4\nEELAYER 30 0\nEELAYER END\n$EndSCHEMATC\n"
    d = tmp_path / "old"
    d.mkdir()
    (d / "old.sch").write_text(legacy)
    (d / "old.pro").write_text("update=22/05/2015 07:44:53\nversion=1\n")
    renamed = tmp_path / "renamed.kicad_sch"
    renamed.write_text(legacy)
    for given, named in ((d / "old.sch", "old.sch"), (d, "old"), (renamed, "renamed.kicad_sch")):
        rc, _out, err = cli(capsys, "netlist", str(given))
        assert rc == 2 and "Traceback" not in err
        assert named in err
        assert "KiCad 6 or newer" in err


def test_missing_sub_sheet(corpus, tmp_path, capsys):
    d = copy_design(corpus / "real-designs" / CURVE_TRACER, tmp_path / "p")
    (d / "sweep_voltage_buffer.kicad_sch").unlink()
    rc, _out, err = cli(capsys, "netlist", str(d))
    assert rc == 2 and "Traceback" not in err
    assert "sweep_voltage_buffer.kicad_sch" in err
    # The message points at the sheet that refers to the missing file, with its line.
    assert re.search(r"IV_variation\.kicad_sch:\d+:", err), err


SELF_SHEET = """(kicad_sch (version 20250114) (generator "eeschema") (generator_version "9.0")
  (uuid "{uuid}")
  (paper "A4")
  (lib_symbols)
  (sheet (at 50 50) (size 20 20)
    (uuid "{sheet_uuid}")
    (property "Sheetname" "Inner" (at 50 49 0) (effects (font (size 1.27 1.27))))
    (property "Sheetfile" "{target}" (at 50 71 0) (effects (font (size 1.27 1.27))))
  )
  (sheet_instances (path "/" (page "1")))
)
"""


def test_sheet_including_itself(tmp_path, capsys):
    # An invented two-line design: a sheet whose sheet symbol names its own file, and a pair
    # of sheets that include each other.
    one = tmp_path / "self" / "top.kicad_sch"
    one.parent.mkdir()
    one.write_text(SELF_SHEET.format(uuid="a1b2c3d4-0000-4000-8000-000000000001",
                                     sheet_uuid="a1b2c3d4-0000-4000-8000-000000000002",
                                     target="top.kicad_sch"))
    a = tmp_path / "pair" / "a.kicad_sch"
    a.parent.mkdir()
    a.write_text(SELF_SHEET.format(uuid="a1b2c3d4-0000-4000-8000-000000000003",
                                   sheet_uuid="a1b2c3d4-0000-4000-8000-000000000004",
                                   target="b.kicad_sch"))
    (a.parent / "b.kicad_sch").write_text(SELF_SHEET.format(
        uuid="a1b2c3d4-0000-4000-8000-000000000005",
        sheet_uuid="a1b2c3d4-0000-4000-8000-000000000006", target="a.kicad_sch"))
    for root in (one, a):
        rc, _out, err = cli(capsys, "netlist", str(root))
        assert rc == 2 and "Traceback" not in err
        assert re.search(r"\.kicad_sch:\d+", err), err
        assert "recursive" in err or "itself" in err


def test_unreadable_paths(tmp_path, capsys):
    folder_net = tmp_path / "folder.net"
    folder_net.mkdir()
    dangling = tmp_path / "dangling.net"
    dangling.symlink_to(tmp_path / "nowhere.net")
    for p in (folder_net, dangling, tmp_path / "absent.net", tmp_path / "absent.kicad_sch",
              tmp_path / "absent_folder"):
        rc, _out, err = cli(capsys, "netlist", str(p))
        assert_rejected(rc, err, p)
    if os.geteuid() != 0:   # permission bits do not stop root; the other cases still ran
        locked = tmp_path / "locked.net"
        locked.write_text('(export (version "E"))')
        locked.chmod(0)
        rc, _out, err = cli(capsys, "netlist", str(locked))
        assert_rejected(rc, err, locked)
        assert "permission" in err.lower()


def test_bad_project_file(corpus, tmp_path, capsys):
    d = copy_design(corpus / "real-designs" / BIOAMP, tmp_path / "p")
    pro = d / "BioAmp-EXG-Pill.kicad_pro"
    pro.write_text("{ not json")
    rc, _out, err = cli(capsys, "netlist", str(d))
    assert_rejected(rc, err, pro)


def test_netlist_from_an_unknown_export_version(net_file, capsys):
    # An unknown version with a netlist's structure: read, with a note naming the file.
    text = net_file.read_text()
    assert '(export (version "E")' in text
    net_file.write_text(text.replace('(export (version "E")', '(export (version "G")', 1))
    rc, out, err = cli(capsys, "netlist", str(net_file), "--format", "json")
    assert rc == 0 and net_file.name in err and "'G'" in err
    assert '"nets"' in out
    # An unknown version without a netlist's structure: rejected.
    net_file.write_text('(export (version "G") (things (thing 1)))')
    rc, _out, err = cli(capsys, "netlist", str(net_file))
    assert_rejected(rc, err, net_file)


# ---------------------------------------------------------------------------------------
# the same through a real process: no traceback reaches the user's terminal


def test_no_traceback_in_a_real_process(net_file, tmp_path):
    cases = []
    data = net_file.read_bytes()
    cut = tmp_path / "cut.net"
    cut.write_bytes(data[: len(data) // 2])
    cases.append(cut)
    garbage = tmp_path / "garbage.kicad_sch"
    garbage.write_bytes(bytes(random.Random(6).randrange(256) for _ in range(2000)))
    cases.append(garbage)
    deep = tmp_path / "deep.net"
    deep.write_text("(" * 100_000)
    cases.append(deep)
    cases.append(tmp_path / "missing.kicad_pro")
    for p in cases:
        r = run_cli("netlist", str(p), "--format", "json")
        assert r.returncode == 2, r.stderr
        assert "Traceback" not in r.stderr and p.name in r.stderr
        assert r.stdout == ""

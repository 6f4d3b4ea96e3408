"""The tool never writes to a design: every command, in every output format, leaves every
design file byte-identical (and untouched: same modification time) and creates nothing
beside them. Designs are copies (made writable, so a stray write would succeed and be seen)
of a corpus project and of a sample project."""

from __future__ import annotations

import argparse
import hashlib
import shutil
from pathlib import Path

import pytest

from frontcheck.cli import build_parser, main

CURVE_TRACER = "schuyler4__USB_Curve_Tracer/electronics/rev3/ecad"   # 3-level hierarchy
REPO = Path(__file__).resolve().parents[2]


def _format_choices(command: str) -> list[str]:
    """The --format choices a command registers today (all of them are tested)."""
    parser = build_parser()
    sub = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    cmd = sub.choices[command]
    fmt = next(a for a in cmd._actions if "--format" in a.option_strings)
    return list(fmt.choices)


def _commands() -> set[str]:
    parser = build_parser()
    sub = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    return set(sub.choices)


def snapshot(root: Path) -> dict[str, tuple]:
    """Every file and folder under root: content hash, size, modification time, mode."""
    out = {}
    for p in sorted(root.rglob("*")):
        st = p.stat()
        digest = hashlib.sha256(p.read_bytes()).hexdigest() if p.is_file() else "dir"
        out[str(p.relative_to(root))] = (digest, st.st_size, st.st_mtime_ns, st.st_mode)
    return out


def _writable_copy(src: Path, dst: Path) -> Path:
    shutil.copytree(src, dst)
    for p in [dst, *dst.rglob("*")]:
        p.chmod(0o755 if p.is_dir() else 0o644)
    return dst


@pytest.fixture
def designs(corpus, tmp_path) -> dict[str, Path]:
    root = tmp_path / "designs"
    root.mkdir()
    tracer = _writable_copy(corpus / "real-designs" / CURVE_TRACER, root / "tracer")
    sample = _writable_copy(REPO / "sample_projects" / "strain-logger", root / "strain")
    nets = root / "nets"
    nets.mkdir()
    shutil.copyfile(corpus / "kicad-netlists" / "hierarchy_aliases" / "hierarchy_aliases.net",
                    nets / "hierarchy_aliases.net")
    return {"root": root, "tracer": tracer, "sample": sample, "nets": nets}


def _paths(d: dict[str, Path]) -> list[Path]:
    t, s = d["tracer"], d["sample"]
    return [t, t / "USB_curve_tracer.kicad_pro", t / "USB_curve_tracer.kicad_sch",
            t / "half_supply_buffer.kicad_sch", s, d["nets"] / "hierarchy_aliases.net"]


def _run(capsys, *args: str) -> int:
    rc = main(list(args))
    capsys.readouterr()
    return rc


def test_netlist_writes_nothing(designs, capsys, monkeypatch):
    monkeypatch.chdir(designs["root"])          # a relative cache or temp file would land here
    before = snapshot(designs["root"])
    formats = _format_choices("netlist")
    assert {"text", "json"} <= set(formats)
    for path in _paths(designs):
        for fmt in formats:
            assert _run(capsys, "netlist", str(path), "--format", fmt) == 0, (path, fmt)
    assert snapshot(designs["root"]) == before


def test_check_writes_nothing_in_any_format(designs, capsys, monkeypatch, tmp_path):
    assert "check" in _commands()
    monkeypatch.chdir(designs["root"])
    out_dir = tmp_path / "reports"
    out_dir.mkdir()
    before = snapshot(designs["root"])
    formats = _format_choices("check")
    assert {"text", "json", "sarif"} <= set(formats)
    for path in _paths(designs):
        for fmt in formats:
            rc = _run(capsys, "check", str(path), "--format", fmt, "--samples", "200")
            assert rc in (0, 1), (path, fmt)
            # A report file goes only where the user names it.
            out = out_dir / f"{path.name}.{fmt}"
            rc = _run(capsys, "check", str(path), "--format", fmt, "--samples", "200",
                      "-o", str(out))
            assert rc in (0, 1) and out.is_file() and out.stat().st_size > 0, (path, fmt)
    assert snapshot(designs["root"]) == before
    assert len(list(out_dir.iterdir())) == len(_paths(designs)) * len(formats)


def test_output_onto_a_design_file_is_refused(designs, capsys):
    before = snapshot(designs["root"])
    sch = designs["tracer"] / "USB_curve_tracer.kicad_sch"
    for target in (sch, designs["tracer"] / "USB_curve_tracer.kicad_pro"):
        rc = main(["check", str(designs["tracer"]), "--format", "json", "-o", str(target)])
        err = capsys.readouterr().err
        assert rc == 2 and target.name in err
    assert snapshot(designs["root"]) == before

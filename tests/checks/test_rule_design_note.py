"""design-note: oddities the reader works around (unannotated or duplicate references) come out
as information findings with the sheet file and line, and the check still runs (exit 0); a
duplicate that touches a stage hides what was to be checked and is an error.
The bad-input table of issue 6 asks exactly this: a merely odd design gives a clean result
with an info finding, never exit 2 or a traceback."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from frontcheck.cli import main

SAMPLE = Path(__file__).resolve().parents[2] / "sample_projects" / "bench-scale"


def _copy_with(tmp_path: Path, old: str, new: str) -> Path:
    dst = tmp_path / "bench-scale"
    shutil.copytree(SAMPLE, dst)
    sch = dst / "bench-scale.kicad_sch"
    text = sch.read_text(encoding="utf-8")
    assert text.count(old) == 1
    sch.write_text(text.replace(old, new), encoding="utf-8")
    return dst


def _check(path: Path, capsys, *extra: str):
    code = main(["check", str(path), "--samples", "0", "--format", "json", *extra])
    out = capsys.readouterr()
    assert "Traceback" not in out.err
    return code, json.loads(out.out)


@pytest.mark.parametrize("old, new, words", [
    ('(reference "R5")', '(reference "R?")', "not annotated"),     # an unannotated part
    # C2 (supply decoupling) renamed onto C3: a duplicate away from every stage
    ('(reference "C2")', '(reference "C3")', "duplicate reference C3"),
])
def test_odd_references_are_info_findings(tmp_path, capsys, old, new, words):
    project = _copy_with(tmp_path, old, new)
    code, doc = _check(project, capsys)
    notes = [f for f in doc["findings"] if f["rule"] == "design-note"]
    # A duplicate also puts the pins of the two parts into several nets: each is its own note.
    (note,) = [f for f in notes if words in f["message"]]
    assert all(f["severity"] == "info" for f in notes)
    assert note["location"]["file"].endswith("bench-scale.kicad_sch")
    assert note["location"]["line"] > 0
    assert code in (0, 1)          # the check ran; only real stage findings decide the status


def test_duplicate_reference_in_a_stage_is_an_error(tmp_path, capsys):
    # R5's instance renamed onto R12: the two merge, and the in-amp's first stage is not the
    # design as drawn, so the check cannot pass
    project = _copy_with(tmp_path, '(reference "R5")', '(reference "R12")')
    code, doc = _check(project, capsys)
    notes = [f for f in doc["findings"] if f["rule"] == "design-note"]
    (dup,) = [f for f in notes if "duplicate reference R12" in f["message"]]
    assert dup["severity"] == "error" and "belongs to stage" in dup["message"]
    assert code == 1


def test_strict_profile_makes_it_a_warning(tmp_path, capsys):
    project = _copy_with(tmp_path, '(reference "R5")', '(reference "R?")')
    _, doc = _check(project, capsys, "--profile", "strict")
    (note,) = [f for f in doc["findings"] if f["rule"] == "design-note"]
    assert note["severity"] == "warning"


def test_clean_design_has_no_note(capsys):
    _, doc = _check(SAMPLE, capsys)
    assert not [f for f in doc["findings"] if f["rule"] == "design-note"]

"""A check runs with the cyclic garbage collector paced for a batch of long-lived objects
(commands/check.py) and gives the previous pace back, also when it fails: tests, the KiCad
hook and the pre-commit entry run the command in the same process."""

from __future__ import annotations

import gc
from pathlib import Path

import pytest

from frontcheck.cli import main
from frontcheck.commands import check

SAMPLE = str(Path(__file__).resolve().parents[2] / "sample_projects" / "bench-scale")


@pytest.fixture
def paced(monkeypatch):
    seen = []
    real = check._run_pipeline

    def spy(*a, **k):
        seen.append(gc.get_threshold())
        return real(*a, **k)

    monkeypatch.setattr(check, "_run_pipeline", spy)
    before = gc.get_threshold()
    gc.set_threshold(700, 10, 10)       # the interpreter's default pace
    yield seen
    gc.set_threshold(*before)


def test_check_collects_less_often_and_restores_the_pace(paced, capsys):
    assert main(["check", SAMPLE, "--format", "json", "--samples", "200"]) in (0, 1)
    capsys.readouterr()
    assert paced and paced[0][0] >= 50_000
    assert gc.get_threshold() == (700, 10, 10)


def test_pace_restored_when_the_design_cannot_be_read(paced, tmp_path, capsys):
    bad = tmp_path / "broken.kicad_sch"
    bad.write_text("(kicad_sch (version")
    assert main(["check", str(bad)]) == 2
    capsys.readouterr()
    assert gc.get_threshold() == (700, 10, 10)

"""A defect inside frontcheck must not print a traceback at the user: one line, exit 2, and
FRONTCHECK_DEBUG=1 brings the traceback back for a developer."""

from __future__ import annotations

import pytest

from frontcheck import pipeline
from frontcheck.cli import main

SAMPLE = "sample_projects/bench-scale"


def _boom(*args, **kwargs):
    raise KeyError("simulated defect")


def test_internal_error_is_one_line_exit_2(monkeypatch, capsys):
    monkeypatch.setattr(pipeline, "check_project", _boom)
    monkeypatch.delenv("FRONTCHECK_DEBUG", raising=False)
    code = main(["check", SAMPLE])
    err = capsys.readouterr().err
    assert code == 2
    assert "internal error" in err and "simulated defect" in err
    assert "Traceback" not in err


def test_debug_switch_shows_the_exception(monkeypatch):
    monkeypatch.setattr(pipeline, "check_project", _boom)
    monkeypatch.setenv("FRONTCHECK_DEBUG", "1")
    with pytest.raises(KeyError):
        main(["check", SAMPLE])

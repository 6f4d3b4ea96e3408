"""Reporters read the neutral model layer only: rendering a report loads neither numpy nor
analysis, recognition or the rules (frontcheck.result, frontcheck.finding, frontcheck.circuit
are plain data)."""

from __future__ import annotations

import subprocess
import sys

import pytest

from frontcheck.report import FORMATS

FORBIDDEN = ("numpy", "frontcheck.analysis", "frontcheck.recognise", "frontcheck.checks",
             "frontcheck.kicad")


def _loaded(statement: str) -> set[str]:
    """Module names `python -X importtime` reports for ``statement`` in a fresh interpreter."""
    out = subprocess.run([sys.executable, "-X", "importtime", "-c", statement],
                         capture_output=True, text=True, check=True)
    return {line.rsplit("|", 1)[-1].strip() for line in out.stderr.splitlines()
            if line.startswith("import time:")}


def _offending(names: set[str]) -> list[str]:
    return sorted(n for n in names if n.split(".")[0] == "numpy"
                  or any(n == f or n.startswith(f + ".") for f in FORBIDDEN))


def test_import_frontcheck_report_loads_no_numpy():
    names = _loaded("import frontcheck.report")
    assert "frontcheck.report" in names          # the measurement itself works
    assert _offending(names) == []


@pytest.mark.parametrize("module", sorted(set(FORMATS.values())))
def test_each_reporter_loads_no_numpy(module):
    assert _offending(_loaded(f"import frontcheck.report.{module}")) == []


def test_the_check_sees_numpy_when_it_is_loaded():
    # the same measurement on analysis does find numpy: the test above could fail
    assert "numpy" in _offending(_loaded("import frontcheck.analysis"))

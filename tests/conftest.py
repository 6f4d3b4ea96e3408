"""Shared test fixtures: where the shared corpus and the outside oracles are.

Tests that need ../shared (KiCad's reference netlists, real designs, the SARIF schema) or an
outside tool (KiCad 9 via shared/tools/kicad9, ngspice, chromium) skip with a reason where it
is absent, as in a user's own clone. CI sets FRONTCHECK_REQUIRE_ORACLES=1, which turns each of
those skips into a failure.
"""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parent.parent
SHARED = REPO.parent / "shared"
REQUIRED = os.environ.get("FRONTCHECK_REQUIRE_ORACLES") == "1"
# A test never opens a browser (the KiCad routes open their report unless told not to).
os.environ["FRONTCHECK_NO_OPEN"] = "1"


def need(condition: bool, reason: str) -> None:
    """Skip (or, in CI, fail) when an outside resource is missing."""
    if condition:
        return
    if REQUIRED:
        pytest.fail(f"required oracle missing: {reason}")
    pytest.skip(reason)


@pytest.fixture(scope="session")
def shared() -> Path:
    need(SHARED.is_dir(), f"shared corpus not found at {SHARED} (a user's clone has none)")
    return SHARED


@pytest.fixture(scope="session")
def corpus(shared) -> Path:
    return shared / "corpus"


@pytest.fixture(scope="session")
def kicad9(shared) -> Path:
    tool = shared / "tools" / "kicad9"
    need(tool.exists(), f"{tool} not found")
    return tool


@pytest.fixture(scope="session")
def ngspice() -> str:
    exe = shutil.which("ngspice")
    need(exe is not None, "ngspice not installed (apt-get install ngspice)")
    return exe


@pytest.fixture(autouse=True)
def _default_terminal_width(monkeypatch):
    """Text reports follow COLUMNS when piped; tests render at the default width unless they
    set it themselves, whatever terminal runs them."""
    monkeypatch.delenv("COLUMNS", raising=False)

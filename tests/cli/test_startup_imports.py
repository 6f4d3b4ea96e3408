"""Fast start: the commands that only print (`--version`, `--help`, `rules`, `explain`) load
neither numpy nor networkx, and a `check` loads only what its design needs.

Measured with `python -X importtime`, which lists every module a fresh interpreter imports
(one line per module on stderr). Speed itself is measured in benchmarks/, never here.
"""

from __future__ import annotations

import subprocess
import sys
from functools import lru_cache
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[2]
SAMPLE = REPO / "sample_projects" / "bench-scale"
HEAVY = ("numpy", "networkx")


# `python -X importtime` lists what import statements load, but not a module loaded through
# importlib.import_module (how frontcheck loads its commands, rules and reporters): the same
# command is therefore also run under a wrapper that prints sys.modules as it exits.
_WRAPPER = """if True:
    import atexit, runpy, sys
    atexit.register(lambda: print("loaded:" + " ".join(sorted(sys.modules)), file=sys.stderr))
    runpy.run_module("frontcheck", run_name="__main__", alter_sys=True)
"""


def _run(cmd: list[str]) -> str:
    out = subprocess.run(cmd, capture_output=True, text=True, cwd=REPO, timeout=300)
    assert out.returncode in (0, 1), out.stderr[-2000:]   # 1: a check with findings
    return out.stderr


@lru_cache(maxsize=None)
def _loaded(*args: str) -> frozenset[str]:
    """Modules `python -X importtime -m frontcheck ARGS` imports, and those in sys.modules at
    the end of the same command (each in a fresh interpreter)."""
    timed = _run([sys.executable, "-X", "importtime", "-m", "frontcheck", *args])
    names = {line.rsplit("|", 1)[-1].strip() for line in timed.splitlines()
             if line.startswith("import time:")}
    assert "frontcheck.cli" in names            # the importtime measurement itself works
    at_exit = _run([sys.executable, "-c", _WRAPPER, *args])
    listed = [line for line in at_exit.splitlines() if line.startswith("loaded:")]
    assert len(listed) == 1
    return frozenset(names | set(listed[0][len("loaded:"):].split()))


def _heavy(names: set[str], packages=HEAVY) -> list[str]:
    return sorted(n for n in names if n.split(".")[0] in packages)


@pytest.mark.parametrize("args", [("--version",), ("--help",), ("rules",),
                                  ("explain", "ratio-mismatch")],
                         ids=["version", "help", "rules", "explain"])
def test_printing_commands_load_no_numpy_or_networkx(args):
    names = _loaded(*args)
    assert "frontcheck.commands" in names       # the sys.modules measurement works
    assert _heavy(names) == []


def test_check_loads_numpy_but_not_networkx():
    # the sample's stage needs the numerics (numpy) but no code path of its check needs a graph
    # library: networkx is imported only where a graph is really asked for
    names = _loaded("check", str(SAMPLE), "--format", "json")
    assert "numpy" in names                     # the same measurement does see a heavy import
    assert _heavy(names, ("networkx",)) == []


def test_json_check_loads_no_terminal_renderer():
    # rich draws the terminal table; a JSON report does not need it
    names = _loaded("check", str(SAMPLE), "--format", "json")
    assert "frontcheck.report.json_report" in names  # the measurement sees the JSON reporter
    assert _heavy(names, ("rich",)) == []
    assert "rich" in _loaded("check", str(SAMPLE))   # the text report does load it


def test_text_and_json_checks_load_no_html_escaper():
    # html.escape is for the drawings of the HTML report (report/budget_view.py imports it
    # when it draws one); the text and JSON reports make none
    for fmt in ("text", "json"):
        names = _loaded("check", str(SAMPLE), "--format", fmt)
        assert "frontcheck.report.budget_view" in names or fmt == "json"
        assert "html" not in names, fmt
    assert "html" in _loaded("check", str(SAMPLE), "--format", "html")  # the measurement sees it

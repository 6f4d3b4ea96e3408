"""The layout docs/architecture.md sec. 2 promises, checked on the source tree: rule and
reporter modules load no numpy when imported, and code and tests cite only documents that are in
the repository (docs/ or published sources).
"""

from __future__ import annotations

import pkgutil
import re
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parent.parent
PACKAGE = REPO / "frontcheck"


def _modules(package: str) -> list[str]:
    path = PACKAGE / package.split(".", 1)[1].replace(".", "/")
    return [f"{package}.{m.name}" for m in pkgutil.iter_modules([str(path)])]


@pytest.mark.parametrize("package", ["frontcheck.checks", "frontcheck.report"])
def test_rule_and_report_modules_load_no_numpy_when_imported(package):
    modules = _modules(package)
    assert len(modules) >= 5                      # the listing itself found the modules
    code = ("import importlib, sys\n"
            f"for m in {modules!r}: importlib.import_module(m)\n"
            "print(sorted(n for n in sys.modules if n.split('.')[0] == 'numpy'))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         cwd=REPO, timeout=120)
    assert out.returncode == 0, out.stderr[-2000:]
    assert out.stdout.strip() == "[]", f"importing {package} loads {out.stdout.strip()}"


# Design notes kept outside the repository: nobody who clones frontcheck can follow a citation
# of them. Spelled in pieces so that this file does not cite them itself.
OUTSIDE_DOCUMENTS = re.compile(r"\b(?:REFERENCE|SOURCES|KICAD-NOTES|DESIGN)\.md\b")


def test_code_and_tests_cite_no_document_outside_the_repository():
    files = sorted(PACKAGE.rglob("*.py")) + sorted((REPO / "tests").rglob("*.py"))
    assert len(files) > 100
    cited = [f"{p.relative_to(REPO)}:{n}" for p in files
             for n, line in enumerate(p.read_text(encoding="utf-8").splitlines(), 1)
             if OUTSIDE_DOCUMENTS.search(line)]
    assert cited == []


# What one person can hold in mind (docs/architecture.md): limits on the source tree, measured
# as each AST node's line span.
LIMITS = {"module": 500, "class": 250, "function": 80}


def _oversized() -> list[str]:
    import ast
    out = []
    for path in sorted(PACKAGE.rglob("*.py")):
        text = path.read_text(encoding="utf-8")
        rel = path.relative_to(REPO)
        if len(text.splitlines()) > LIMITS["module"]:
            out.append(f"{rel}: {len(text.splitlines())} lines")
        for node in ast.walk(ast.parse(text)):
            kind = ("class" if isinstance(node, ast.ClassDef) else
                    "function" if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)) else None)
            if kind and node.end_lineno - node.lineno + 1 > LIMITS[kind]:
                out.append(f"{rel}: {kind} {node.name} {node.end_lineno - node.lineno + 1} lines")
    return out


def test_no_module_class_or_function_over_its_size_limit():
    assert len(list(PACKAGE.rglob("*.py"))) > 50            # the walk found the package
    assert _oversized() == []


def test_size_check_finds_an_oversized_function(tmp_path, monkeypatch):
    # The check itself can fail: an 81-line function in a scratch package is reported.
    pkg = tmp_path / "frontcheck"
    pkg.mkdir()
    (pkg / "big.py").write_text("def f():\n" + "    x = 1\n" * 80, encoding="utf-8")
    monkeypatch.setattr(sys.modules[__name__], "PACKAGE", pkg)
    monkeypatch.setattr(sys.modules[__name__], "REPO", tmp_path)
    assert _oversized() == ["frontcheck/big.py: function f 81 lines"]

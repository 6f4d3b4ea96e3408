"""Each sample project's findings (rule and references, warning and above) equal the list in
its README's "Expected findings" section. The README is the reviewer-facing statement of what
the sample's invented design gets wrong; the check must say exactly that, no more, no less."""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

from frontcheck.cli import main

SAMPLES = Path(__file__).resolve().parents[2] / "sample_projects"
NAMES = sorted(p.name for p in SAMPLES.iterdir() if (p / "README.md").exists() and p.is_dir())
LINE = re.compile(r"^- ([a-z-]+): (.+)$")


def expected(sample: str) -> list[tuple[str, tuple[str, ...]]]:
    text = (SAMPLES / sample / "README.md").read_text(encoding="utf-8")
    section = text.split("## Expected findings", 1)[1].split("\n## ", 1)[0]
    out = []
    for line in section.splitlines():
        m = LINE.match(line.strip())
        if m:
            out.append((m.group(1), tuple(sorted(r.strip() for r in m.group(2).split(",")))))
    return sorted(out)


def reported(sample: str, capsys) -> list[tuple[str, tuple[str, ...]]]:
    code = main(["check", str(SAMPLES / sample), "--format", "json", "--fail-on", "warning"])
    doc = json.loads(capsys.readouterr().out)
    found = sorted((f["rule"], tuple(sorted(f["references"]))) for f in doc["findings"]
                   if f["severity"] in ("warning", "error") and not f.get("waived"))
    assert code == (1 if found else 0)
    return found


def test_five_samples_present():
    assert len(NAMES) == 5


@pytest.mark.parametrize("sample", NAMES)
def test_findings_match_readme(sample, capsys):
    assert reported(sample, capsys) == expected(sample)

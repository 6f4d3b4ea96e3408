"""The one-pass indices the reporters use (ProjectReport.findings_by_stage, stages_by_id) give
what the per-stage lookups findings_of and stage give, on every sample project."""

from __future__ import annotations

import dataclasses
import os
from pathlib import Path

import pytest

from frontcheck.pipeline import RunOptions, run

REPO = Path(__file__).resolve().parents[2]
SAMPLES = sorted(p.name for p in (REPO / "sample_projects").iterdir()
                 if p.is_dir() and not p.name.startswith("_"))


@pytest.mark.parametrize("name", SAMPLES)
def test_indices_agree_with_the_lookups(name, monkeypatch):
    monkeypatch.chdir(REPO)
    p = run([os.path.join("sample_projects", name)], RunOptions(samples=0)).projects[0]
    assert p.findings, "a sample without findings would not test the index"
    by = p.findings_by_stage()
    keys = {s.id for s in p.stages} | {f.stage for f in p.findings} | {"no such stage"}
    for key in keys:
        assert by.get(key, []) == [i for i, _ in p.findings_of(key)]
    assert sum(len(v) for v in by.values()) == len(p.findings)
    stages = p.stages_by_id()
    assert all(stages[s.id] is p.stage(s.id) for s in p.stages)


def test_a_repeated_stage_id_names_the_first_stage(monkeypatch):
    monkeypatch.chdir(REPO)
    p = run([os.path.join("sample_projects", SAMPLES[0])], RunOptions(samples=0)).projects[0]
    first = p.stages[0]
    twin = dataclasses.replace(first, kind="other")
    p.stages = [first, twin] + p.stages[1:]
    assert p.stages_by_id()[first.id] is first is p.stage(first.id)

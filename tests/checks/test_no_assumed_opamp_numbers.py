"""With no part data, no finding above info rests on an assumed op-amp number.

Walks every sample project and every real design of the shared corpus (../shared/corpus/
real-designs, read where it is) through the whole pipeline and checks, per stage:

* an op-amp that no symbol field, part-file entry or chosen class describes has no numbers at
  all (it is ideal in the figures), and no op-amp number anywhere comes from an assumed default
  (none of these projects sets a ``[defaults]`` op-amp class);
* the stage's JSON says which op-amp numbers its figures used, each with its source;
* every finding above info on a stage rests only on numbers the design gives: a headroom finding
  against a limit no part data states is a node past the op-amp's own supply rail (which no
  op-amp output passes: common practice), never a margin to a guessed limit.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from conftest import REPO
from frontcheck.pipeline import RunOptions, run
from frontcheck.report import render

SAMPLES = sorted(p for p in (REPO / "sample_projects").iterdir() if (p / "README.md").is_file())
USER_CHOSEN = ("field", "value", "project", "class")   # circuit.SOURCES minus 'default'


def _projects(corpus: Path | None) -> list[Path]:
    out = list(SAMPLES)
    if corpus is not None:
        out += sorted(p.parent for p in (corpus / "real-designs").rglob("*.kicad_pro"))
    return out


def _check_project(path: Path) -> int:
    rep = run([str(path)], RunOptions(samples=200, seed=1))
    doc = json.loads(render(rep, "json"))
    p = rep.projects[0]
    assert p.error is None, p.error
    checked = 0
    by_id = {s["id"]: s for s in doc["stages"]}
    for stage in p.stages:
        res = p.results.get(stage.id)
        if res is None:
            continue
        for op in stage.circuit.opamps:
            given = op.model.given()
            assert all(s.source in USER_CHOSEN for s in given.values()), (stage.id, op.name, given)
        sj = by_id[stage.id]
        assert [o["opamp"] for o in sj["opamp_numbers"]] == [o.name for o in stage.circuit.opamps]
        for o in sj["opamp_numbers"]:
            assert (o["model"] == "ideal (no part data)") == (not o["numbers"])
            assert all(n["source"] in USER_CHOSEN for n in o["numbers"].values())
        for f in p.findings:
            if f.stage != stage.id or f.severity == "info":
                continue
            checked += 1
            if f.rule == "headroom" and "margin_v" in f.data:
                chk = min((c for c in res.headroom.checks
                           if c.opamp == f.data["opamp"] and c.node == f.data["node"]),
                          key=lambda c: c.margin_v)
                if not chk.limit_stated:
                    assert f.data["margin_v"] < 0, f.message
    return checked


@pytest.mark.parametrize("sample", SAMPLES, ids=[p.name for p in SAMPLES])
def test_samples_use_no_assumed_opamp_number(sample):
    _check_project(sample)


def test_real_designs_use_no_assumed_opamp_number(corpus):
    projects = _projects(corpus)[len(SAMPLES):]
    assert len(projects) >= 10
    for pro in projects:
        _check_project(pro)

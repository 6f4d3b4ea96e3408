"""A finding's data in the JSON report (json_report._data_json) is what its JSON text reads
back as: the reference is the standard library's round trip ``json.loads(json.dumps(data,
default=str, allow_nan=True))`` with infinities and NaN read as null."""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pytest

from frontcheck.pipeline import RunOptions, run
from frontcheck.report.json_report import _data_json

REPO = Path(__file__).resolve().parents[2]


def reference(data):
    return json.loads(json.dumps(data, default=str, allow_nan=True), parse_constant=lambda c: None)


def same(a, b) -> bool:
    """Equal values of equal types all the way down (-0.0 and 0.0 told apart)."""
    if type(a) is not type(b):
        return False
    if isinstance(a, dict):
        return list(a) == list(b) and all(same(a[k], b[k]) for k in a)
    if isinstance(a, list):
        return len(a) == len(b) and all(same(x, y) for x, y in zip(a, b))
    return repr(a) == repr(b)


class Code(int):
    pass


@pytest.mark.parametrize("data", [
    {}, [], None, "text \x01 \u202e", 0, -0.0, 1e-300, 0.1 + 0.2, True,
    {"g": 10.0, "db": float("inf"), "low": float("-inf"), "x": float("nan"), "n": None},
    {"nested": {"list": [1, 2.5, (3, "a")], "tuple": (float("nan"), -0.0)}},
    {"code": Code(7)}, {"np": np.float64(1.5), "npi": np.int64(3), "flag": np.bool_(True)},
    {1: "int key", 2.5: "float key", None: "none key", True: "bool key"},
    {"object": ValueError("not JSON"), "path": Path("a/b.kicad_sch")},
    [10 ** 30, -(10 ** 30)],
])
def test_data_is_what_its_json_reads_back_as(data):
    assert same(_data_json(data), reference(data))


def test_sample_findings(monkeypatch):
    monkeypatch.chdir(REPO)
    rep = run([os.path.join("sample_projects", "strain-logger")], RunOptions(samples=0))
    datas = [f.data for p in rep.projects for f in p.findings if f.data]
    assert datas, "no finding with data to compare"
    for data in datas:
        assert same(_data_json(data), reference(data))

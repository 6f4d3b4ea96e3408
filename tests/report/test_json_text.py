"""The report's JSON writer (frontcheck.report.json_text) writes the same bytes as the standard
library's ``json.dumps(obj, indent=2, allow_nan=False)`` (the reference), on the JSON and
SARIF reports of every sample project and on values chosen to reach every branch."""

from __future__ import annotations

import json
import os
from pathlib import Path

import pytest

from frontcheck.pipeline import RunOptions, run
from frontcheck.report import json_report, sarif
from frontcheck.report.json_text import dumps

REPO = Path(__file__).resolve().parents[2]
SAMPLES = sorted(p.name for p in (REPO / "sample_projects").iterdir()
                 if p.is_dir() and not p.name.startswith("_"))


def reference(obj) -> str:
    return json.dumps(obj, indent=2, allow_nan=False)


@pytest.mark.parametrize("name", SAMPLES)
def test_sample_reports_equal_the_standard_library(name, monkeypatch):
    monkeypatch.chdir(REPO)
    rep = run([os.path.join("sample_projects", name)], RunOptions(samples=500, seed=1))
    for doc in (json_report.to_dict(rep), sarif.to_dict(rep, None)):
        assert dumps(doc) == reference(doc)
    assert json_report.render(rep) == reference(json_report.to_dict(rep)) + "\n"


@pytest.mark.parametrize("obj", [
    {}, [], (), "", 0, -1, 2 ** 70, 1.0, -0.0, 1e-300, 1.7976931348623157e308, 0.1 + 0.2,
    None, True, False, "naïve µV ±5 % — Ω \"quoted\" \\ \n\t\x01 \U0001f600",
    {"a": [], "b": {}, "c": [[], {}, [[1]]], "d": ({"e": None},)},
    [True, False, None, 1, 2.5, "x", [1, [2, [3, {"k": "v"}]]]],
])
def test_values_equal_the_standard_library(obj):
    assert dumps(obj) == reference(obj)


def test_int_and_str_subclasses_and_other_keys_as_the_standard_library():
    class Code(int):
        def __repr__(self):
            return "not this"

    class Name(str):
        pass

    obj = {Name("k"): [Code(7), Name("v")], 1: "int key", 2.5: "float key", None: "none key",
           True: "bool key"}
    assert dumps(obj) == reference(obj)


@pytest.mark.parametrize("bad", [float("nan"), float("inf"), [1, float("-inf")], {"x": {1, 2}}])
def test_what_the_standard_library_refuses_is_refused_alike(bad):
    with pytest.raises((ValueError, TypeError)) as ours:
        dumps(bad)
    with pytest.raises(type(ours.value)) as theirs:
        reference(bad)
    assert str(ours.value) == str(theirs.value)


def test_floats_written_again_and_lists_of_them_as_the_standard_library():
    sweep = [10.0 ** (k / 10) for k in range(-30, 61)]
    doc = {"a": sweep, "b": list(sweep), "zeros": [0.0, -0.0, 0.0], "signs": [-0.0, 1.5],
           "mixed": [1.5, 1, True, None, 1.5], "again": [0.1 + 0.2, -0.0, 1.5]}
    first = dumps(doc)
    assert first == reference(doc)
    assert dumps(doc) == first                  # the second time every float is known
    assert dumps([1.0, 2.0, 1]) == reference([1.0, 2.0, 1]) and dumps([1]) == "[\n  1\n]"
    with pytest.raises(ValueError):
        dumps([1.5, float("nan")])              # a known float before a refused one

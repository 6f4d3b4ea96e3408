"""SARIF 2.1.0: validates against the published schema (read where it lies in the shared
folder, never copied), stable rule ids, repository-relative paths, fingerprints."""

from __future__ import annotations

import copy
import json

import jsonschema
import pytest

from frontcheck.report import sarif
from test_report_handmade import check_golden, make_report


@pytest.fixture(scope="module")
def validator(shared):
    schema = json.loads((shared / "schemas" / "sarif-schema-2.1.0.json").read_text())
    cls = jsonschema.validators.validator_for(schema)
    return cls(schema)


def test_sarif_validates(validator):
    doc = json.loads(sarif.render(make_report()))
    validator.validate(doc)


def test_schema_rejects_a_broken_document(validator):
    # The validation above means something only if the schema catches a bad level.
    doc = json.loads(sarif.render(make_report()))
    bad = copy.deepcopy(doc)
    bad["runs"][0]["results"][0]["level"] = "fatal"
    with pytest.raises(jsonschema.ValidationError):
        validator.validate(bad)


def test_sarif_results_locations_and_fingerprints():
    doc = sarif.to_dict(make_report())
    run = doc["runs"][0]
    assert doc["version"] == "2.1.0"
    results = run["results"]
    assert [r["ruleId"] for r in results] == ["ref-impedance", "gain-error", "headroom",
                                              "bias-return", "assumed-value"]
    rules = [r["id"] for r in run["tool"]["driver"]["rules"]]
    for r in results:
        assert rules[r["ruleIndex"]] == r["ruleId"]
        loc = r["locations"][0]["physicalLocation"]
        assert not loc["artifactLocation"]["uri"].startswith("/")
        assert loc["artifactLocation"]["uri"].endswith(".kicad_sch")
        assert loc["region"]["startLine"] >= 1
        assert r["partialFingerprints"][sarif.FINGERPRINT_KEY]
    levels = {r["ruleId"]: r["level"] for r in results}
    assert levels == {"ref-impedance": "error", "gain-error": "warning", "headroom": "error",
                      "bias-return": "warning", "assumed-value": "note"}
    waived = [r for r in results if "suppressions" in r]
    assert [r["ruleId"] for r in waived] == ["gain-error"]
    assert {r["ruleId"]: r["baselineState"] for r in results}["bias-return"] == "unchanged"


def test_sarif_rules_come_from_the_registry():
    from frontcheck.checks import rules
    summaries = {r.id: r.summary for r in rules()}
    doc = sarif.to_dict(make_report())
    for rule in doc["runs"][0]["tool"]["driver"]["rules"]:
        assert rule["shortDescription"]["text"] == summaries[rule["id"]]
        assert rule["fullDescription"]["text"]


# A fixed catalogue keeps the golden file about the SARIF layout, not the rules' wording.
FIXED_CATALOGUE = {r: {"short": f"short text of {r}", "full": f"full text of {r}",
                       "help": f"help text of {r}"}
                   for r in ("ref-impedance", "gain-error", "headroom", "bias-return",
                             "assumed-value")}


def test_sarif_golden():
    check_golden("handmade.sarif", sarif.render(make_report(), FIXED_CATALOGUE))


def test_sarif_of_a_sample_project(validator, monkeypatch):
    # A real design: shunt-monitor (difference amplifier with a resistor ratio error, its
    # README's expected findings). Every result must point at the .kicad_sch line of the
    # offending symbol, by a path relative to the repository root.
    from conftest import REPO
    from frontcheck.pipeline import RunOptions, run
    sample = REPO / "sample_projects" / "shunt-monitor"
    assert sample.is_dir(), "sample projects ship with the repository"
    monkeypatch.chdir(REPO)
    report = run(["sample_projects/shunt-monitor"], RunOptions(samples=300, seed=1))
    p = report.projects[0]
    p.root = str(REPO)          # as `git rev-parse --show-toplevel` gives in a checkout
    doc = json.loads(sarif.render(report))
    validator.validate(doc)
    results = doc["runs"][0]["results"]
    assert "ratio-mismatch" in {r["ruleId"] for r in results}
    for r, f in zip(results, p.findings):
        loc = r["locations"][0]["physicalLocation"]
        uri = loc["artifactLocation"]["uri"]
        assert uri.startswith("sample_projects/shunt-monitor/") and uri.endswith(".kicad_sch")
        lines = (REPO / uri).read_text(encoding="utf-8").splitlines()
        line = lines[loc["region"]["startLine"] - 1]
        assert f.uuid and f.uuid in line, (r["ruleId"], line)

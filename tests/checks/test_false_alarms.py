"""False-alarm tier: a large defect of one kind does not make an unrelated rule fire.

The base is the bench-scale sample, the clean reference design (its README: no finding at
warning level or above). Each defect below is one value changed in a copy of the sample made
in tmp_path (the sample files are never touched), large enough to break the rules it concerns
by a wide margin. Every other rule must say exactly what it says on the clean design. Each
rule is checked against every defect unrelated to it, so each has at least one such test.
"""

from __future__ import annotations

import re
import shutil

import pytest

from conftest import REPO
from frontcheck.checks import rule_ids
from frontcheck.pipeline import RunOptions, run

SAMPLE = REPO / "sample_projects" / "bench-scale"

# defect -> (reference, new value, why, the rules it may make fire)
DEFECTS = {
    # stage-2 ratio 10 % off: nominal CMRR about 73 dB against the declared 80 dB, gain +2.4 %
    "ratio": ("R11", "11k", "R11 10k -> 11k", {"ratio-mismatch", "cmrr-budget", "gain-error"}),
    # gain resistor 20 % high: G1 = 1 + 20k/120 = 167.7, 17 % under the 201 target
    "gain": ("R6", "120", "R6 100 -> 120 ohm", {"gain-error"}),
    # one bridge arm doubled: the inputs see 233 / 175 ohm instead of 175 / 175 (the in-amp's
    # inputs are buffered, so no rule may care)
    "bridge": ("R3", "700", "R3 350 -> 700 ohm", set()),
    # REF divider 100k/47k: VREF 1.6 V instead of 2.5 V, the output swings below ground
    "ref": ("R13", "47k", "R13 100k -> 47k", {"headroom"}),
}


def _with_value(dest, ref: str, value: str) -> None:
    sch = dest / "bench-scale.kicad_sch"
    text = sch.read_text(encoding="utf-8")
    start = text.index(f'(property "Reference" "{ref}"')
    # the Value property of that symbol instance follows its Reference property
    m = re.compile(r'\(property "Value" "([^"]*)"').search(text, start)
    assert m is not None
    sch.write_text(text[:m.start(1)] + value + text[m.end(1):], encoding="utf-8")


def _findings(path) -> dict[str, list]:
    rep = run([str(path)], RunOptions(samples=400, seed=1))
    assert rep.projects[0].error is None
    out: dict[str, list] = {}
    for f in rep.projects[0].findings:
        out.setdefault(f.rule, []).append(f)
    return out


def _severities(found: dict[str, list], rule: str) -> list[str]:
    return [f.severity for f in found.get(rule, [])]


def _loud(found: dict[str, list]) -> set[str]:
    return {rule for rule, fs in found.items() if any(f.severity != "info" for f in fs)}


@pytest.fixture(scope="module")
def outcomes(tmp_path_factory) -> dict[str, dict[str, list]]:
    base = tmp_path_factory.mktemp("clean") / "bench-scale"
    shutil.copytree(SAMPLE, base)
    got = {"clean": _findings(base)}
    for name, (ref, value, _, _) in DEFECTS.items():
        dest = tmp_path_factory.mktemp(name) / "bench-scale"
        shutil.copytree(SAMPLE, dest)
        _with_value(dest, ref, value)
        got[name] = _findings(dest)
    return got


def test_the_base_is_clean(outcomes):
    assert _loud(outcomes["clean"]) == set()


@pytest.mark.parametrize("name", list(DEFECTS))
def test_each_defect_fires_what_it_concerns(outcomes, name):
    expected = DEFECTS[name][3]
    loud = _loud(outcomes[name])
    assert expected <= loud, f"{DEFECTS[name][2]}: {sorted(expected - loud)} did not fire"


PAIRS = [(rule, name) for rule in rule_ids() for name, d in DEFECTS.items() if rule not in d[3]]


@pytest.mark.parametrize("rule,name", PAIRS)
def test_an_unrelated_defect_leaves_the_rule_as_it_was(outcomes, rule, name):
    assert _severities(outcomes[name], rule) == _severities(outcomes["clean"], rule), (
        f"{rule} changed its findings after {DEFECTS[name][2]}")


def test_every_rule_meets_an_unrelated_defect():
    assert {rule for rule, _ in PAIRS} == set(rule_ids())


def test_the_gain_error_of_a_ratio_defect_names_the_ratios(outcomes):
    # the gain is off because R11/R10 != R9/R8 (+2.38 %: ((11/21)(1 + 1) + 1)/2 = 1.0238,
    # the difference amplifier's two paths, Sedra & Smith 6th ed., Eq. 2.19 context); the fix
    # names that cause with its share, not REF or loading
    (f,) = outcomes["ratio"]["gain-error"]
    assert "unequal stage-2 ratios (R11/R10 = 1.1 against R9/R8 = 1) account for 2.38 %" in f.fix
    assert "REF source resistance" not in f.fix

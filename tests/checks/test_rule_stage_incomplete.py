"""stage-incomplete: near misses and unsupported parts from recognition."""

from __future__ import annotations

from frontcheck.checks import run_rules
from frontcheck.netlist import Component, Location, Netlist
from frontcheck.recognise.common import NearMiss, Unsupported
from rule_fixtures import context, only


def _nm():
    return NearMiss("difference", ["R1", "R3", "R4", "U2"],
                    "U2A has input resistors on both inputs but no feedback: it runs open loop",
                    "U2", "R2 feedback resistor", Location("amp.kicad_sch", 42))


def test_near_miss_is_a_warning_with_its_location():
    nl = Netlist(components={"U2": Component("U2", uuids=("u-2",), location=Location("amp.kicad_sch", 42))})
    (f,) = only(run_rules(context([], near_misses=[_nm()], netlist=nl)), "stage-incomplete")
    assert f.severity == "warning"
    assert (f.file, f.line, f.uuid) == ("amp.kicad_sch", 42, "u-2")
    assert "R2 feedback resistor" in f.fix and "open loop" in f.message
    assert f.references == ["R1", "R3", "R4", "U2"]


def test_strict_makes_a_near_miss_an_error():
    (f,) = only(run_rules(context([], near_misses=[_nm()], profile="strict")), "stage-incomplete")
    assert f.severity == "error"


def test_unsupported_part():
    un = Unsupported("U5", "integrated-inamp", {"in_p": "A", "in_n": "B", "rg1": "C"},
                     "pins RG, REF, +IN, -IN but no part data", Location("amp.kicad_sch", 7),
                     roles={"RG": "R9"})
    (f,) = only(run_rules(context([], unsupported=[un])), "stage-incomplete")
    # info by default: the part is found and said, its numbers are unchecked (warning in strict)
    assert f.severity == "info" and f.line == 7 and f.references == ["R9", "U5"]
    assert "part file" in f.fix
    (g,) = only(run_rules(context([], unsupported=[un], profile="strict")), "stage-incomplete")
    assert g.severity == "warning"


def test_nothing_to_report():
    assert only(run_rules(context([])), "stage-incomplete") == []

"""assumed-value: numbers that came from defaults or generic classes."""

from __future__ import annotations

from dataclasses import replace

from frontcheck.checks import run_rules
from frontcheck.circuit import Sourced
from frontcheck.netlist import Component, Location, Netlist
from rule_fixtures import IDEAL, context, diff_stage, only, result


def run(st, profile=None, **kw):
    return only(run_rules(context([st], [result(st, **kw)], profile=profile)), "assumed-value")


def test_design_numbers_only():
    assert run(diff_stage()) == []


def test_default_tolerance_and_class_model_are_listed():
    st = diff_stage()
    st.circuit.resistors[2].tol = Sourced(0.01, "default", "default 1 % (profile)")
    st.circuit.opamps[0].model = replace(IDEAL, name="general-purpose",
                                         cmrr_db=Sourced(80.0, "class", "class general-purpose"))
    (f,) = run(st)
    assert f.severity == "info"
    assert "R3 tolerance default 1 % (profile)" in f.message
    assert "U1A CMRR from general-purpose (class general-purpose)" in f.message
    assert f.references == ["R3", "U1"]
    (g,) = run(st, profile="strict")
    assert g.severity == "warning"


def test_the_analysis_wording_is_used_when_it_ran():
    st = diff_stage()
    st.circuit.resistors[2].tol = Sourced(0.01, "default", "default 1 % (profile)")
    (f,) = run(st, assumptions=["R3 tolerance assumed 1 % (default: default 1 % (profile))"])
    assert f.data["assumptions"] == ["R3 tolerance assumed 1 % (default: default 1 % (profile))"]
    assert f.references == ["R3"]


def test_location_of_the_first_assumed_part():
    st = diff_stage()
    st.circuit.resistors[0].tol = Sourced(0.01, "default", "default 1 %")
    nl = Netlist(components={"R1": Component("R1", location=Location("a.kicad_sch", 3), uuids=("x",))})
    ctx = context([st], [result(st)], netlist=nl)
    (f,) = only(run_rules(ctx), "assumed-value")
    assert (f.file, f.line, f.uuid) == ("a.kicad_sch", 3, "x")


def test_an_assumed_tolerance_says_where_it_comes_from_once():
    """The analysis words an assumed default tolerance once: 'assumed 1 % (profile default)',
    not the configuration's wording nested inside its own."""
    from frontcheck.analysis import assumptions_of
    from frontcheck.recognise import find_stages
    from netlist_builder import diff_amp
    nl = diff_amp().pins_to("J1", "IN_P", "IN_N", "OUT").build()
    (st,) = find_stages(nl, default_tol=0.01, default_from="default 1 % (profile)").stages
    texts = assumptions_of(st)
    assert "R1 tolerance assumed 1 % (profile default)" in texts
    assert not any("(default" in t and "default 1 %" in t for t in texts)


def test_internal_resistors_a_class_states_no_matching_for_say_so_once():
    """An integrated in-amp class without a matching figure: its internal stage-2 resistors
    are taken as exact, said once as the class's statement ('assumed 0 % (class generic-inamp
    states no matching)'), not nested as 'class: generic-inamp: ...'."""
    from conftest import REPO
    from frontcheck.analysis import assumptions_of
    from frontcheck.pipeline import RunOptions, run as run_pipeline
    rep = run_pipeline([str(REPO / "sample_projects" / "kiln-logger")], RunOptions(samples=0))
    (st,) = rep.projects[0].stages
    texts = assumptions_of(st)
    assert "U1.Ra tolerance assumed 0 % (class generic-inamp states no matching)" in texts
    assert not any("(class: " in t for t in texts)

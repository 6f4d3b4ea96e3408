"""input-filter: RC filter legs and Cd against Cc (docs/engineering.md sec. 7)."""

from __future__ import annotations

import pytest

from frontcheck.analysis import input_rc_filter
from frontcheck.checks import run_rules
from frontcheck.circuit import Capacitor, Sourced
from frontcheck.netlist import Component, Location, Net, Netlist, Node
from rule_fixtures import context, diff_stage, only, res, result


def netlist(parts: dict[str, tuple[str, str, str, str]]) -> Netlist:
    """parts: ref -> (value, tolerance field, net of pin 1, net of pin 2)."""
    comps, nets = {}, {}
    for ref, (value, tol, a, b) in parts.items():
        fields = {"Value": value}
        if tol:
            fields["Tolerance"] = tol
        comps[ref] = Component(ref, value=value, fields=fields, location=Location("front.kicad_sch", 10),
                               uuids=(f"uuid-{ref}",))
        for pin, net in (("1", a), ("2", b)):
            nets.setdefault(net, []).append(Node(ref, pin))
    return Netlist(components=comps, nets=[Net(n, nodes) for n, nodes in nets.items()])


STAGE_PARTS = {  # the difference stage's own resistors, excluded from the filter search
    "R1": ("10k", "0.1%", "IN_N", "n"), "R2": ("10k", "0.1%", "n", "OUT"),
    "R3": ("10k", "0.1%", "IN_P", "p"), "R4": ("10k", "0.1%", "p", "GND"),
}


def filt(rp="4.02k", rn="4.02k", cp="1n", cn="1n", cd="10n"):
    parts = dict(STAGE_PARTS)
    parts["R5"] = (rp, "1%", "SRC_P", "IN_P")
    parts["R6"] = (rn, "1%", "SRC_N", "IN_N")
    if cp:
        parts["C1"] = (cp, "5%", "IN_P", "GND")
    if cn:
        parts["C2"] = (cn, "5%", "IN_N", "GND")
    if cd:
        parts["C3"] = (cd, "5%", "IN_P", "IN_N")
    return netlist(parts)


def run(nl, profile=None):
    st = diff_stage()
    return only(run_rules(context([st], [result(st)], netlist=nl, profile=profile)), "input-filter")


def test_reference_filter_numbers():
    # docs/engineering.md sec. 7 check values: R = 4.02 k, Cc = 1 nF, Cd = 10 nF -> f_DM = 1885.3
    # Hz, f_CM = 39.59 kHz [derived, ngspice AC-verified]. Cd = 10 Cc: passes the rule of thumb.
    (f,) = run(filt())
    assert f.severity == "info"
    assert f.data["f_dm_hz"] == pytest.approx(1885.3, abs=0.1)
    assert f.data["f_cm_hz"] == pytest.approx(39.59e3, rel=1e-4)
    assert "f_DM = 1.89 kHz" in f.message and "f_CM = 39.6 kHz" in f.message
    assert f.file == "front.kicad_sch" and f.uuid == "uuid-C3"
    assert f.references == ["C1", "C2", "C3", "R5", "R6"]


def test_conversion_check_values():
    # docs/engineering.md sec. 7: R +-1 %, C +-5 % worst pair: |Vd/Vcm| = 2.68e-3 at 1 kHz with
    # Cd = 10 nF, 2.85e-2 at 10 kHz without Cd.
    with_cd = input_rc_filter.conversion(1e3, 4.02e3, 4.02e3, 1e-9, 1e-9, 10e-9, (0.01, 0.01), (0.05, 0.05, 0.0))
    no_cd = input_rc_filter.conversion(1e4, 4.02e3, 4.02e3, 1e-9, 1e-9, 0.0, (0.01, 0.01), (0.05, 0.05, 0.0))
    assert with_cd == pytest.approx(2.68e-3, rel=2e-3)
    assert no_cd == pytest.approx(2.85e-2, rel=2e-3)


@pytest.mark.parametrize("cd, severity", [("10n", "info"), ("9.1n", "warning")])
def test_cd_ratio_threshold(cd, severity):
    (f,) = run(filt(cd=cd))
    assert f.severity == severity
    if severity == "warning":
        assert "only 9.1 x Cc" in f.message and "at least 10.0 nF" in f.fix   # next E6 value >= 10 nF


def test_missing_cd():
    (f,) = run(filt(cd=None))
    assert f.severity == "warning" and "no Cd across the legs" in f.message


def test_mismatched_legs():
    (f,) = run(filt(rn="4.99k"))
    assert f.severity == "warning" and "series resistors differ" in f.message
    (g,) = run(filt(cn="1.2n"))
    assert "leg capacitors Cc differ" in g.message


def test_assumed_tolerances_are_named():
    nl = filt()
    for ref in ("C1", "C2", "C3"):
        del nl.components[ref].fields["Tolerance"]
    (f,) = run(nl)
    assert "tolerance assumed for C1, C2, C3" in f.message


def test_no_filter_no_finding():
    assert run(netlist(dict(STAGE_PARTS))) == []
    assert run(None) == []


def test_bandwidth_capacitors_inside_the_stage_are_not_a_filter():
    # capacitors across R2 and R4 (p to a grounded REF): R1/R3 must not be taken as filter legs
    st = diff_stage()
    z = Sourced(1e-9)
    st.circuit.capacitors = [Capacitor("C7", "n", "OUT", z, Sourced(0.05)),
                             Capacitor("C8", "p", "GND", z, Sourced(0.05))]
    assert input_rc_filter.filter_in_stage(st) is None


def test_filter_inside_the_stage():
    # when recognition includes the filter (ports on the source side of its resistors)
    st = diff_stage()
    sub = st.circuit
    sub.resistors += [res("R5", "SRC_P", "IN_P", 4.02e3, 0.01), res("R6", "SRC_N", "IN_N", 4.02e3, 0.01)]
    sub.ports.update(in_p="SRC_P", in_n="SRC_N")
    sub.capacitors = [Capacitor("C1", "IN_P", "GND", Sourced(1e-9), Sourced(0.05)),
                      Capacitor("C2", "IN_N", "GND", Sourced(1e-9), Sourced(0.05))]
    (f,) = only(run_rules(context([st], [result(st)])), "input-filter")
    assert "no Cd" in f.message and f.severity == "warning"
    assert f.data["f_cm_hz"] == pytest.approx(1 / (2 * 3.141592653589793 * 4.02e3 * 1e-9))


def test_analysis_numbers_are_used_for_a_filter_inside_the_stage():
    from types import SimpleNamespace

    st = diff_stage()
    sub = st.circuit
    sub.resistors += [res("R5", "SRC_P", "IN_P", 4.02e3, 0.01), res("R6", "SRC_N", "IN_N", 4.02e3, 0.01)]
    sub.ports.update(in_p="SRC_P", in_n="SRC_N")
    sub.capacitors = [Capacitor("C1", "IN_P", "GND", Sourced(1e-9), Sourced(0.05)),
                      Capacitor("C2", "IN_N", "GND", Sourced(1e-9), Sourced(0.05)),
                      Capacitor("C3", "IN_P", "IN_N", Sourced(10e-9), Sourced(0.05))]
    r = result(st)
    r.input_filter = SimpleNamespace(f_dm_hz=1234.0, f_cm_hz=30e3, cm_to_dm={1000.0: 1e-3})
    (f,) = only(run_rules(context([st], [r])), "input-filter")
    assert f.data["f_dm_hz"] == 1234.0 and f.data["cm_to_dm"] == 1e-3
    assert "with the stage's input loading" in f.message


@pytest.mark.parametrize("cd, severity", [("10n", "info"), ("9.9n", "warning")])
def test_cd_ratio_just_at_the_rule_of_thumb(cd, severity):
    (f,) = run(filt(cd=cd))
    assert f.severity == severity


@pytest.mark.parametrize("rn, severity", [("4.06k", "info"), ("4.07k", "warning")])
def test_leg_mismatch_threshold_from_the_project(rn, severity):
    # project override: legs may differ by 1 %; 4.06k is 0.995 % above 4.02k, 4.07k 1.24 %
    st = diff_stage()
    ctx = context([st], [result(st)], netlist=filt(rn=rn),
                  rules={"input-filter": {"max_leg_mismatch": 0.01}})
    (f,) = only(run_rules(ctx), "input-filter")
    assert f.severity == severity

"""headroom: op-amp input CM and output limits over the declared input box."""

from __future__ import annotations

import pytest

from frontcheck.analysis.headroom import headroom
from frontcheck.analysis.result import Headroom, HeadroomCheck
from frontcheck.checks import run_rules
from frontcheck.circuit import OpAmpModel, Sourced
from rule_fixtures import context, diff_stage, inamp_stage, only, result

# docs/engineering.md sec. 4 check value [derived, ngspice-confirmed]: single 5 V supply, outputs to
# 0.1 V of each rail, input CM -0.1 .. 3.5 V, G1 = 100, G2 = 1, Vref = 2.5 V:
# Vd = +-20 mV -> valid Vcm in [1.100, 3.490].
SINGLE5 = OpAmpModel("test-class", Sourced(float("inf")), Sourced(float("inf")),
                     icm_low=Sourced(-0.1), icm_high=Sourced(1.5),
                     swing_low=Sourced(0.1), swing_high=Sourced(0.1))


def inamp_box(vcm_lo, vcm_hi, vd=0.020):
    st = inamp_stage(rf=49.5e3, rg=1e3, model=SINGLE5, rails=(5.0, 0.0))
    h = headroom(st.circuit, (vcm_lo, vcm_hi, -vd, vd), vref=2.5)
    return st, h


def run(st, h, profile=None):
    return only(run_rules(context([st], [result(st, headroom=h)], profile=profile)), "headroom")


def test_box_inside_the_region_passes():
    st, h = inamp_box(1.2, 3.4)
    assert run(st, h) == []


@pytest.mark.parametrize("lo, n", [(1.101, 0), (1.099, 2)])
def test_just_inside_and_just_outside_the_lower_edge(lo, n):
    st, h = inamp_box(lo, 3.4)
    fs = run(st, h)
    assert len(fs) == n          # U1A at Vd = -20 mV and U1B at +20 mV, symmetrically
    if n:
        (f,) = [f for f in fs if f.data["opamp"] == "U1B"]
        assert f.severity == "error"
        # At Vcm = 1.099 V, Vd = +20 mV: Vo2 = Vcm - (G1/2) Vd = 0.099 V, 1 mV under the
        # 0.1 V swing limit (Sedra & Smith 6th ed., Ex. 2.17 node relations).
        assert f.data["opamp"] == "U1B" and f.data["node"] == "output"
        assert f.data["margin_v"] == pytest.approx(-0.001, abs=1e-9)
        assert f.data["corner"] == pytest.approx([1.099, 0.020])
        assert "Vcm = 1.099 V, Vd = +20 mV" in f.message


def test_saturated_first_stage_is_found_although_vout_is_fine():
    # Vout = Vref + G Vd = 2.5 +- 2 V stays inside 0.1 .. 4.9 V whatever Vcm is, but at Vcm = 0.8 V
    # the first-stage outputs Vcm -+ (G1/2) Vd leave their swing (docs/engineering.md sec. 4).
    st, h = inamp_box(0.8, 3.0, vd=0.020)
    ops = {f.data["opamp"] for f in run(st, h)}
    assert ops == {"U1A", "U1B"}


def test_low_margin_warning_under_strict():
    st, h = inamp_box(1.15, 3.2)      # worst margin 0.05 V (first-stage outputs)
    assert run(st, h) == []
    fs = run(st, h, profile="strict")     # strict wants 0.1 V
    assert [f.data["opamp"] for f in fs] == ["U1A", "U1B"]
    assert all(f.severity == "warning" and "only 50.0 mV margin" in f.message for f in fs)


def test_no_box_and_unknown_rails_are_reported_as_unchecked():
    st = diff_stage()
    (f,) = run(st, Headroom(margin_v=None, box=None))
    assert f.severity == "info" and "no input range declared" in f.message
    fs = run(st, Headroom(margin_v=None, box=None, unknown=["U1A", "REF voltage"]))
    assert len(fs) == 3
    assert any("supply rails of U1A" in f.message for f in fs)
    assert any("REF voltage unknown" in f.message and "Ref Voltage" in f.fix for f in fs)


def test_one_finding_per_node_with_the_worst_corner():
    st = diff_stage()
    mk = lambda c, v: HeadroomCheck("U1A", "output", "OUT", c, v, -4.9, 4.9, min(v + 4.9, 4.9 - v))
    h = Headroom(margin_v=-0.3, box=(0, 1, -1, 1),
                 checks=[mk((0, -1), -5.2), mk((0, 1), 5.0), mk((1, 1), 4.0)])
    (f,) = run(st, h)
    assert f.data["voltage"] == -5.2 and f.data["violating_corners"] == 2
    assert "below its lower limit" in f.message


@pytest.mark.parametrize("lo, n", [(1.201, 0), (1.199, 2)])
def test_min_margin_threshold_under_strict(lo, n):
    # strict wants 0.1 V: the first-stage outputs sit at Vcm - 1 V at the lower corner
    st, h = inamp_box(lo, 3.2)
    fs = run(st, h, profile="strict")
    assert len(fs) == n and all(f.severity == "warning" for f in fs)


def test_supply_nets_whose_names_give_no_voltage_say_how_to_declare_it():
    st = diff_stage()
    op = st.circuit.opamps[0]
    op.vpos, op.vneg = "V+", "V-"
    st.circuit.rails = {}
    fs = run(st, Headroom(margin_v=None, box=None, unknown=["U1A"]))
    (f,) = [f for f in fs if f.data.get("unknown") == "U1A"]
    assert "supply voltage of U1A is unknown" in f.message and "'V+' and 'V-'" in f.message
    assert '[rails]' in f.fix and '"V+" = 5.0, "V-" = -5.0' in f.fix

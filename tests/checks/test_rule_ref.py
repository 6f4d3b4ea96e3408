"""ref-floating and ref-impedance: the stage's reference node."""

from __future__ import annotations

import math

import pytest

from frontcheck.analysis import mna
from frontcheck.analysis.result import RefSource
from frontcheck.checks import ref_impedance, run_rules
from rule_fixtures import context, diff_stage, only, result


def run(st, ref, rule, profile=None, **kw):
    return only(run_rules(context([st], [result(st, ref=ref, **kw)], profile=profile)), rule)


# --- ref-floating ----------------------------------------------------------------------------

def test_floating_ref_is_an_error_at_r4():
    st = diff_stage(ref_net="REF")
    (f,) = run(st, RefSource("REF", "floating", None, None), "ref-floating")
    assert f.severity == "error" and "REF" in f.message and "(R4)" in f.message
    assert f.data == {"net": "REF"}


@pytest.mark.parametrize("kind", ["low-impedance", "rail", "resistive"])
def test_defined_ref_passes(kind):
    st = diff_stage(ref_net="REF")
    assert run(st, RefSource("REF", kind, 0.0, 2.5), "ref-floating") == []
    assert run(st, None, "ref-floating") == []


# --- ref-impedance ---------------------------------------------------------------------------

def _ref_numbers(rth, r=10e3):
    """CMRR (dB) and gain error of a G = 1 stage with all resistors r and Rth in series with
    R4, solved by nodal analysis (docs/engineering.md sec. 5 check values: 10 ohm -> 66.03 dB,
    Ad = 1.00025)."""
    st = diff_stage(r, r, r, r, ref_net="REF")
    topo = mna.compile_circuit(st.circuit, series=("ref",))
    X = mna.solve_dc(topo, mna.nominal_values(st.circuit), rs=[[rth]])
    g = mna.gains(topo, X)
    return 20 * math.log10(abs(g.ad[0] / g.acm[0])), g.ad[0] - 1.0


def test_reference_check_values():
    cm, ge = _ref_numbers(10.0)
    assert cm == pytest.approx(66.03, abs=0.01)
    assert ge == pytest.approx(2.5e-4, rel=1e-3)
    assert _ref_numbers(100.0)[0] == pytest.approx(46.09, abs=0.01)


def test_ten_ohm_divider_costs_about_two_db_and_needs_a_buffer():
    # Resistors at 0.1 %: worst case (1+G)/(4t) = 500, 53.98 dB (Sedra & Smith 6th ed., P2.67).
    # The REF term of 66.03 dB adds in the worst sign: 20 log10(1 + 10^((53.98-66.03)/20)) = 1.94 dB.
    st = diff_stage(ref_net="REF")
    cm, ge = _ref_numbers(10.0)
    ref = RefSource("REF", "resistive", 10.0, 2.5, driver="R8/R9 divider", cmrr_db=cm, gain_error=ge)
    (f,) = run(st, ref, "ref-impedance", contributors={"resistors": 53.98, "REF source": cm})
    assert f.severity == "warning"
    assert f.data["cmrr_cost_db"] == pytest.approx(1.94, abs=0.01)
    assert "10.0 Ω (R8/R9 divider)" in f.message and "0.0250 %" in f.message
    # Largest Rth within both limits: gain 10 ohm x 1e-4/2.5e-4 = 4 ohm; CMRR: 1 dB allows the REF
    # term 18.27 dB above 53.98 dB, i.e. 72.25 dB -> 10 ohm x 10^((66.03-72.25)/20) = 4.9 ohm.
    assert f.data["max_ohms"] == pytest.approx(4.0, rel=1e-3)
    assert "buffer" in f.fix or "follower" in f.fix


@pytest.mark.parametrize("ref_db, severity", [(72.4, "info"), (72.1, "warning")])
def test_cmrr_cost_threshold(ref_db, severity):
    # cost = 1 dB when the REF term sits 18.27 dB above the rest: 54 + 18.27 = 72.27 dB
    st = diff_stage(ref_net="REF")
    ref = RefSource("REF", "resistive", 1.0, 2.5, cmrr_db=ref_db, gain_error=1e-6)
    (f,) = run(st, ref, "ref-impedance", contributors={"resistors": 54.0, "REF source": ref_db})
    assert f.severity == severity


@pytest.mark.parametrize("gerr, severity", [(0.99e-4, "info"), (1.01e-4, "warning")])
def test_gain_error_threshold(gerr, severity):
    st = diff_stage(ref_net="REF")
    ref = RefSource("REF", "resistive", 1.0, 2.5, cmrr_db=200.0, gain_error=gerr)
    (f,) = run(st, ref, "ref-impedance", contributors={"resistors": 54.0})
    assert f.severity == severity


def test_low_impedance_ref_passes():
    st = diff_stage(ref_net="REF")
    assert run(st, RefSource("REF", "low-impedance", 0.0, 2.5, "U2B output"), "ref-impedance") == []


def test_cost_helper():
    assert ref_impedance.cmrr_cost_db(60.0, 60.0) == pytest.approx(20 * math.log10(2))
    assert ref_impedance.cmrr_cost_db(math.inf, 60.0) == math.inf

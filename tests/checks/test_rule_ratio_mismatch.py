"""ratio-mismatch: nominal R2/R1 vs R4/R3 against the tolerance band."""

from __future__ import annotations

import math

import pytest

from frontcheck.checks import ratio_mismatch, run_rules
from frontcheck.circuit import Intent, Sourced
from rule_fixtures import context, diff_stage, inamp_stage, only, result


def run(*stages, **kw):
    return only(run_rules(context(stages, [result(s) for s in stages], **kw)), "ratio-mismatch")


def test_matched_stage_passes():
    assert run(diff_stage(1e3, 10e3, 1e3, 10e3)) == []


# Tolerance band with four 0.1 % resistors: 4 x 0.1 % = 0.4 % (worst case eps = 4t,
# Sedra & Smith 6th ed., Problem 2.67).
@pytest.mark.parametrize("r2, severity", [
    (10e3 * 1.0039, "warning"),    # 0.39 %: within the band
    (10e3 * 1.0041, "error"),      # 0.41 %: beyond it
])
def test_band_threshold(r2, severity):
    (f,) = run(diff_stage(10e3, r2, 10e3, 10e3))
    assert f.severity == severity
    assert f.data["band"] == pytest.approx(0.004)
    assert f.data["beyond_band"] is (severity == "error")


@pytest.mark.parametrize("r2, n", [(10e3 * (1 + 0.9e-4), 0), (10e3 * (1 + 1.1e-4), 1)])
def test_min_mismatch_threshold(r2, n):
    assert len(run(diff_stage(10e3, r2, 10e3, 10e3))) == n


def test_suggests_the_e96_value_that_restores_the_ratio():
    # 1k/10k against 1k/9.09k: 10.0k and 909 are both E96 values (IEC 60063 table), so R4 -> 10.0k
    # (preferred: R2/R1 sets the gain) or R3 -> 909 ohm restore the ratio exactly.
    (f,) = run(diff_stage(1e3, 10e3, 1e3, 9.09e3))
    assert f.severity == "error"
    assert "change R4 (resistor to REF, 9.09 kΩ) to 10.0 kΩ (E96)" in f.fix
    assert "R3 (non-inverting input resistor, 1.00 kΩ) to 909 Ω (E96)" in f.fix
    assert f.data["suggestion"] == {"element": "R4", "role": "R4", "ohms": 10e3, "series": "E96"}
    # mismatch = (R2/R1)/(R4/R3) - 1
    assert f.data["mismatch"] == pytest.approx(10 / 9.09 - 1)


def test_falls_back_to_e192_and_prefers_the_target_gain():
    # R2 = 10.1k (E192, not E96): without a target, R4 -> 10.1k (E192) is preferred; with a
    # declared target gain of 1, changing R2 to 10.0k keeps the gain on target instead.
    (f,) = run(diff_stage(10e3, 10.1e3, 10e3, 10e3))
    assert "to 10.1 kΩ (E192)" in f.fix.split(";")[0] and "R4" in f.fix.split(";")[0]
    (g,) = run(diff_stage(10e3, 10.1e3, 10e3, 10e3, intent=Intent(target_gain=1.0)))
    assert g.fix.startswith("change R2 (feedback resistor, 10.1 kΩ) to 10.0 kΩ (E96)")


def test_nominal_cmrr_from_the_result_is_quoted():
    st = diff_stage(10e3, 10.1e3, 10e3, 10e3)
    # Ad and Acm from docs/engineering.md sec. 1 (Sedra & Smith 6th ed.)
    r1, r2, r3, r4 = 10e3, 10.1e3, 10e3, 10e3
    ad = (r2 * (r3 + r4) + r4 * (r1 + r2)) / (2 * r1 * (r3 + r4))
    acm = (r1 * r4 - r2 * r3) / (r1 * (r3 + r4))
    cm_db = 20 * math.log10(abs(ad / acm))
    (f,) = only(run_rules(context([st], [result(st, nominal_db=cm_db)])), "ratio-mismatch")
    assert f"nominal CMRR {cm_db:.1f} dB" in f.message
    assert cm_db == pytest.approx(46.1, abs=0.05)   # (1+G)/eps with eps ~ 1 %: 2/0.01 -> 46 dB


def test_matched_network_uses_its_ratio_tolerance():
    # Four elements of one network, 1 % absolute but 0.05 % ratio tolerance: the band is
    # 2 x 0.05 % = 0.1 %, so a 0.15 % mismatch is beyond it although 4 x 1 % would allow it.
    st = diff_stage(10e3, 10e3 * 1.0015, 10e3, 10e3, tol=0.01, match_group="RN1",
                    match_tol=Sourced(0.0005, "field"))
    (f,) = run(st)
    assert f.severity == "error" and f.data["band"] == pytest.approx(0.001)
    loose = diff_stage(10e3, 10e3 * 1.0015, 10e3, 10e3, tol=0.01)
    (g,) = run(loose)
    assert g.severity == "warning" and g.data["band"] == pytest.approx(0.04)


def test_stage_two_of_an_in_amp():
    (f,) = run(inamp_stage(ra=10e3, rb=10e3, rc=10e3, rd=10.2e3))
    assert f.stage == "U1A/U1B/U1C" and f.severity == "error"
    assert "stage 2 of three-opamp" in f.message
    assert "inverting ratio R5/R4 = 1 but non-inverting ratio R7/R6 = 1.02" in f.message
    assert "change R7 (resistor to REF, 10.2 kΩ) to 10.0 kΩ" in f.fix


def test_series_role_expression():
    # R4 drawn as two resistors in series (role 'R8+R9' as recognition writes it)
    st = diff_stage(10e3, 10e3, 10e3, 10e3)
    rs = st.circuit.resistors
    r4 = rs[3]
    from rule_fixtures import res
    rs[3:] = [res("R8", "p", "mid", 4.99e3), res("R9", "mid", r4.b, 4.99e3)]
    st.roles["R4"] = "R8+R9"
    (f,) = run(st)
    assert "non-inverting ratio R8+R9/R3 = 0.998" in f.message
    assert f.data["ratio_noninverting"] == pytest.approx(9.98e3 / 10e3)
    # equal after the fix: R8+R9 -> 10.0k total
    assert "10.0 kΩ" in f.fix


def test_strict_profile_makes_within_band_an_error():
    (f,) = run(diff_stage(10e3, 10e3 * 1.001, 10e3, 10e3), profile="strict")
    assert f.severity == "error" and not f.data["beyond_band"]


def test_ratio_tolerance_helper():
    a = diff_stage(tol=(0.001, 0.002, 0.001, 0.001)).circuit.resistors
    assert ratio_mismatch.ratio_tolerance(a[0], a[1]) == pytest.approx(0.003)


def _two_opamp(r1, r2, r3, r4, rg=None):
    """Two-op-amp in-amp as frontcheck.recognise.two_opamp names it: R1 m1 -> REF, R2 o1 -> m1,
    R3 o1 -> m2, R4 m2 -> out."""
    from frontcheck.circuit import OpAmp, Stage, SubCircuit
    from rule_fixtures import IDEAL, res

    rs = [res("R1", "m1", "REF", r1), res("R2", "o1", "m1", r2), res("R3", "o1", "m2", r3),
          res("R4", "m2", "OUT", r4)]
    roles = {"R1": "R1", "R2": "R2", "R3": "R3", "R4": "R4"}
    if rg:
        rs.append(res("R5", "m1", "m2", rg))
        roles["RG"] = "R5"
    ops = [OpAmp("U1A", "U1", "IN_N", "m1", "o1", "+5V", "-5V", IDEAL),
           OpAmp("U1B", "U1", "IN_P", "m2", "OUT", "+5V", "-5V", IDEAL)]
    sub = SubCircuit(resistors=rs, opamps=ops, ports={"in_p": "IN_P", "in_n": "IN_N", "ref": "REF", "out": "OUT"})
    return Stage("U1A+U1B", "two-opamp", ["R1", "R2", "R3", "R4", "U1"], ["U1A", "U1B"], roles, sub)


def test_two_opamp_matching_condition():
    # Matched when R2/R1 = R3/R4: R1 = 100k, R2 = 10k, R3 = 10k, R4 = 100k gives G = 1 + R4/R3 = 11
    # and zero common-mode gain (checked by nodal analysis below).
    from frontcheck.analysis import mna

    good = _two_opamp(100e3, 10e3, 10e3, 100e3)
    topo = mna.compile_circuit(good.circuit)
    g = mna.gains(topo, mna.solve_dc(topo, mna.nominal_values(good.circuit)))
    assert abs(g.acm[0]) < 1e-12 and g.ad[0] == pytest.approx(11.0)
    assert run(good) == []
    # the difference-amplifier habit (R2/R1 = R4/R3) is wrong here
    (f,) = run(_two_opamp(10e3, 100e3, 10e3, 100e3))
    assert f.severity == "error" and "A1 ratio R2/R1 = 10 but A2 ratio R3/R4 = 0.1" in f.message
    assert f.fix.startswith("change R1 (A1 resistor to REF, 10.0 kΩ) to 1.00 MΩ (E96)")


def test_roles_remembered_while_rules_run_equal_each_ask():
    # while rules run, a stage's role tables are made once; every role is the one an ask
    # outside a run gets, and the tables are dropped when the run ends (a stage changed
    # afterwards is read afresh)
    from frontcheck.checks import stage_roles
    st = inamp_stage()
    names = ("R1", "r2", "RA", "R3", "R4", "RF1", "RF2", "RG", "RX")
    alone = [stage_roles.role(st, n) for n in names]
    with stage_roles.remembered():
        inside = [stage_roles.role(st, n) for n in names]
        again = [stage_roles.role(st, n) for n in names]
        assert len(stage_roles._memo) == 1
    assert inside == alone == again and alone[-1] is None
    assert stage_roles._memo is None
    st.roles["RG"] = "R4"
    assert stage_roles.role(st, "RG").name == "R4"

"""The rule-test builders (tests/rule_fixtures.py) describe the circuits they claim to."""

from __future__ import annotations

import math

from rule_fixtures import context, diff_stage, inamp_stage


def test_diff_stage_gains_match_the_textbook():
    # Ideal difference amplifier: Ad = R2/R1 and Acm = 0 when R2/R1 = R4/R3
    # (Sedra & Smith, Microelectronic Circuits 6th ed., Eq. 2.19 context).
    from frontcheck.analysis import mna

    st = diff_stage(1e3, 10e3, 1e3, 10e3)
    topo = mna.compile_circuit(st.circuit)
    g = mna.gains(topo, mna.solve_dc(topo, mna.nominal_values(st.circuit)))
    assert math.isclose(g.ad[0], 10.0, rel_tol=1e-12)
    assert abs(g.acm[0]) < 1e-12


def test_inamp_stage_gain_matches_the_textbook():
    # G = (1 + 2 Rf/RG) (Rb/Ra): Sedra & Smith 6th ed., Ex. 2.17 (instrumentation amplifier)
    from frontcheck.analysis import mna

    st = inamp_stage(rf=24.9e3, rg=1e3, ra=10e3, rb=20e3, rc=10e3, rd=20e3)
    topo = mna.compile_circuit(st.circuit)
    g = mna.gains(topo, mna.solve_dc(topo, mna.nominal_values(st.circuit)))
    assert math.isclose(g.ad[0], (1 + 2 * 24.9e3 / 1e3) * 2.0, rel_tol=1e-12)


def test_context_policy_falls_back_to_the_default_profile():
    ctx = context([], rules={"headroom": {"min_margin_v": 0.2}})
    pol = ctx.policy("headroom")
    assert pol["min_margin_v"] == 0.2
    assert pol["severity"] == "error"           # from rules/default.toml


__all__ = ["BiasPath", "RefSource", "Headroom", "Intent", "res", "diff_stage", "inamp_stage",
           "result", "context", "only", "IDEAL", "INF"]

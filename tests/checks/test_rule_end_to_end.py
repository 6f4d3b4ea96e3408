"""Rules end to end: Netlist -> recognition -> analysis -> rules, on small drawn circuits."""

from __future__ import annotations

import pytest

from frontcheck.analysis import analyse
from frontcheck.checks import Context, run_rules
from frontcheck.circuit import Intent
from frontcheck.config import rail_from_name
from frontcheck.recognise import find_stages
from netlist_builder import NetlistBuilder, diff_amp


def check(nb: NetlistBuilder, intent: Intent | None = None, profile_rules=None):
    nl = nb.build()
    rec = find_stages(nl, None, rail_from_name, default_tol=0.01)
    rails = {n.name: rail_from_name(n.name) for n in nl.nets if rail_from_name(n.name)}
    for s in rec.stages:
        if intent is not None:
            s.intent = intent
    results = {s.id: analyse(s, nl, rails) for s in rec.stages}
    ctx = Context(stages=rec.stages, results=results, netlist=nl, near_misses=rec.near_misses,
                  unsupported=rec.unsupported, rules=profile_rules or {})
    return rec, run_rules(ctx)


def by_rule(findings):
    out = {}
    for f in findings:
        out.setdefault(f.rule, []).append(f)
    return out


def amp(vals=("10k 0.1%",) * 4, ref="GND", **kw):
    """Difference amp on +-5 V fed from a connector J1 with 1 MOhm bias resistors to GND."""
    nb = diff_amp(vals=vals, ref=ref, vpos="+5V", vneg="-5V", **kw)
    nb.pins_to("J1", "IN_P", "IN_N", "GND")
    nb.r("R10", "IN_P", "GND", "1M").r("R11", "IN_N", "GND", "1M")
    return nb


def test_clean_stage_raises_nothing_above_info():
    rec, fs = check(amp())
    assert len(rec.stages) == 1
    assert all(f.severity == "info" for f in fs), [(f.rule, f.message) for f in fs]
    assert {"cmrr-budget", "gain-error", "headroom"} <= set(by_rule(fs))


def test_ratio_mismatch_from_the_drawing():
    rec, fs = check(amp(vals=("10k 0.1%", "10k 0.1%", "10k 0.1%", "9.09k 0.1%")))
    (f,) = by_rule(fs)["ratio-mismatch"]
    assert f.severity == "error"
    assert "change R4 (resistor to REF, 9.09 kΩ) to 10.0 kΩ (E96)" in f.fix
    assert (f.file, f.line) == ("test.kicad_sch", 4)      # R4 is the fourth part placed
    # nominal CMRR of the drawn values, Sedra & Smith 6th ed. Eq. 2.19 context:
    r1 = r2 = r3 = 10e3
    r4 = 9.09e3
    ad = (r2 * (r3 + r4) + r4 * (r1 + r2)) / (2 * r1 * (r3 + r4))
    acm = (r1 * r4 - r2 * r3) / (r1 * (r3 + r4))
    import math
    assert f.data["nominal_cmrr_db"] == pytest.approx(20 * math.log10(abs(ad / acm)), abs=0.01)


def test_cmrr_budget_with_a_declared_minimum():
    # 1 % resistors (the assumed default), G = 1: worst case about (1+G)/(4t) = 50 -> 34 dB
    # (Sedra & Smith 6th ed., Problem 2.67), far below 80 dB.
    rec, fs = check(amp(vals=("10k",) * 4), intent=Intent(min_cmrr_db=80.0))
    (f,) = by_rule(fs)["cmrr-budget"]
    assert f.severity == "error"
    assert f.data["worst_db"] == pytest.approx(20 * __import__("math").log10(50), abs=0.2)
    assert "assumed-value" in by_rule(fs)          # the 1 % came from the default


def test_ref_from_a_divider():
    nb = amp(ref="VREF")
    nb.r("R20", "+5V", "VREF", "10k").r("R21", "VREF", "GND", "10k")
    rec, fs = check(nb)
    (f,) = by_rule(fs)["ref-impedance"]
    assert f.severity == "warning"
    assert f.data["thevenin_ohms"] == pytest.approx(5e3)
    assert "follower" in f.fix


def test_floating_ref():
    nb = amp(ref="REF_OPEN")
    rec, fs = check(nb)
    (f,) = by_rule(fs)["ref-floating"]
    assert f.severity == "error" and f.references == ["R1", "R2", "R3", "R4", "U1"]


def inamp(nb: NetlistBuilder, inp="IN_P", inn="IN_N") -> NetlistBuilder:
    """Three-op-amp in-amp on a quad (docs/engineering.md sec. 3 naming), G1 = 1 + 2 x 24.9k/1k."""
    nb.opamp("U1", {"A": (inp, "m1", "o1"), "B": (inn, "m2", "o2"), "C": ("p3", "n3", "OUT")},
             vpos="+5V", vneg="-5V")
    nb.r("R1", "o1", "m1", "24.9k 0.1%").r("R2", "o2", "m2", "24.9k 0.1%").r("R3", "m1", "m2", "1k 0.1%")
    nb.r("R4", "o2", "n3", "10k 0.1%").r("R5", "n3", "OUT", "10k 0.1%")
    nb.r("R6", "o1", "p3", "10k 0.1%").r("R7", "p3", "GND", "10k 0.1%")
    return nb


def test_ac_coupled_in_amp_without_bias_return():
    nb = inamp(NetlistBuilder())
    nb.c("C1", "A", "IN_P", "1u").c("C2", "B", "IN_N", "1u")
    nb.pins_to("J1", "A", "B", "GND")
    rec, fs = check(nb)
    assert [s.kind for s in rec.stages] == ["three-opamp"]
    errs = by_rule(fs)["bias-return"]
    assert {f.data["net"] for f in errs} == {"IN_P", "IN_N"}
    assert all(f.severity == "error" for f in errs)


def test_in_amp_on_a_connector_needs_a_declaration():
    nb = inamp(NetlistBuilder())
    nb.pins_to("J1", "IN_P", "IN_N")
    rec, fs = check(nb)
    fb = by_rule(fs)["bias-return"]
    assert {f.severity for f in fb} == {"warning"} and len(fb) == 2


def test_in_amp_with_bias_resistors_passes():
    nb = inamp(NetlistBuilder())
    nb.pins_to("J1", "IN_P", "IN_N", "GND")
    nb.r("R10", "IN_P", "GND", "1M").r("R11", "IN_N", "GND", "1M")
    rec, fs = check(nb)
    assert "bias-return" not in by_rule(fs)
    assert "source-loading" not in by_rule(fs)    # connector: the source resistance is unknown


def test_bridge_loads_the_stage():
    nb = diff_amp(vals=("10k 0.1%",) * 4, vpos="+5V", vneg="-5V")
    nb.r("R30", "+5V", "IN_P", "350").r("R31", "IN_P", "GND", "350")
    nb.r("R32", "+5V", "IN_N", "350").r("R33", "IN_N", "GND", "350")
    rec, fs = check(nb)
    (f,) = by_rule(fs)["source-loading"]
    # 175 ohm per output: G = 10k / 10.175k (docs/engineering.md sec. 4, input resistance R1)
    assert f.data["gain_error"] == pytest.approx(10e3 / 10.175e3 - 1, rel=1e-4)
    assert f.severity == "warning"


def test_input_filter_in_front():
    nb = diff_amp(vals=("10k 0.1%",) * 4, vpos="+5V", vneg="-5V")
    nb.r("R40", "SRC_P", "IN_P", "4.02k 1%").r("R41", "SRC_N", "IN_N", "4.02k 1%")
    nb.c("C40", "IN_P", "GND", "1n").c("C41", "IN_N", "GND", "1n").c("C42", "IN_P", "IN_N", "4.7n")
    nb.pins_to("J1", "SRC_P", "SRC_N", "GND")
    nb.r("R10", "SRC_P", "GND", "1M").r("R11", "SRC_N", "GND", "1M")
    rec, fs = check(nb)
    (f,) = by_rule(fs)["input-filter"]
    assert f.severity == "warning" and "only 4.7 x Cc" in f.message
    # f_CM = 1/(2 pi R Cc) = 39.59 kHz (docs/engineering.md sec. 7)
    assert f.data["f_cm_hz"] == pytest.approx(39.59e3, rel=1e-3)


def test_open_loop_near_miss():
    nb = NetlistBuilder()
    nb.r("R1", "IN_N", "n", "10k").r("R3", "IN_P", "p", "10k").r("R4", "p", "GND", "10k")
    nb.opamp("U1", {"": ("p", "n", "OUT")}, package="single", vpos="+5V", vneg="-5V")
    nb.pins_to("J1", "IN_P", "IN_N", "OUT")
    rec, fs = check(nb)
    (f,) = by_rule(fs)["stage-incomplete"]
    assert f.severity == "warning" and "feedback resistor from the output to the inverting input" in f.fix

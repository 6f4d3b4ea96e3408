"""An input RFI filter drawn ahead of a stage's input ports, found by the analysis in the
whole netlist (docs/engineering.md sec. 7 shape), and the sample that draws one."""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from frontcheck.analysis import analyse, dc_paths
from frontcheck.analysis.tolerance import Options
from frontcheck.cli import main
from frontcheck.recognise import find_stages
from netlist_builder import NetlistBuilder

RAILS_NAMES = {"+5V": 5.0, "-5V": -5.0, "GND": 0.0}
SAMPLES = Path(__file__).resolve().parents[2] / "sample_projects"


def _inamp_with_filter(cc_n="1n", cd="10n", bias_to="VREF"):
    """Three-op-amp in-amp on IN_P/IN_N (U1A/U1B + U2), filter R10/R11 4.02k from the
    connector, C10/C11 to GND, C12 across; 10M bias returns to a buffered VREF (U3)."""
    nb = NetlistBuilder()
    nb.opamp("U1", {"A": ("IN_P", "M1", "O1"), "B": ("IN_N", "M2", "O2")}, package="dual",
             vpos="+5V", vneg="-5V")
    nb.r("R3", "O1", "M1", "10k 0.1%").r("R4", "O2", "M2", "10k 0.1%").r("R5", "M1", "M2", "2k 0.1%")
    nb.r("R7", "O2", "N3", "10k 0.1%").r("R8", "N3", "OUT", "10k 0.1%")
    nb.r("R9", "O1", "P3", "10k 0.1%").r("R6", "P3", "VREF", "10k 0.1%")
    nb.opamp("U2", {"": ("P3", "N3", "OUT")}, package="single", vpos="+5V", vneg="-5V")
    nb.r("R11a", "+5V", "VH", "100k").r("R12a", "VH", "GND", "100k")
    nb.opamp("U3", {"": ("VH", "VREF", "VREF")}, package="single", vpos="+5V", vneg="-5V")
    nb.r("R10", "SRC_P", "IN_P", "4.02k 1%").r("R11", "SRC_N", "IN_N", "4.02k 1%")
    nb.c("C10", "IN_P", "GND", "1n 5%").c("C11", "IN_N", "GND", f"{cc_n} 5%")
    if cd:
        nb.c("C12", "IN_P", "IN_N", f"{cd} 5%")
    nb.r("R16", "IN_P", bias_to, "10M").r("R17", "IN_N", bias_to, "10M")
    nb.pins_to("J1", "SRC_P", "SRC_N", "GND")
    return nb.build()


def _stage(netlist):
    from frontcheck.circuit import Sourced
    rec = find_stages(netlist, None, lambda n: Sourced(RAILS_NAMES[n]) if n in RAILS_NAMES else None)
    (st,) = [s for s in rec.stages if s.kind == "three-opamp"]
    return st


def test_filter_ahead_of_three_opamp_inputs():
    nl = _inamp_with_filter()
    st = _stage(nl)
    ext = dc_paths.filter_ahead(nl, st)
    assert ext is not None
    assert (ext.ports["in_p"], ext.ports["in_n"]) == ("SRC_P", "SRC_N")
    names = {r.name for r in ext.resistors} - {r.name for r in st.circuit.resistors}
    assert names == {"R10", "R11", "R16", "R17"}          # series legs and bias returns
    assert {c.name for c in ext.capacitors} >= {"C10", "C11", "C12"}
    r = analyse(st, nl, None, Options(mc_samples=0))
    f = r.input_filter
    assert f is not None and set(f.parts) == {"R10", "R11", "C10", "C11", "C12"}
    # The amplifier's inputs are op-amp + inputs (no load) and the 10M returns barely load
    # 4.02k: docs/engineering.md sec. 7 check values R = 4.02 k, Cc = 1 nF, Cd = 10 nF ->
    # f_DM = 1885.3 Hz, f_CM = 39.59 kHz [derived, ngspice AC-verified], within the
    # 4.02k/10M = 0.04 % the returns shift them.
    assert f.f_dm_hz == pytest.approx(1885.3, rel=1e-3)
    assert f.f_cm_hz == pytest.approx(39.59e3, rel=1e-3)
    # Gain is the stage's own, 1 + 2R/RG = 11 (docs/engineering.md sec. 3), within the assumed
    # open-loop gain's effect, and does not change by looking at the filter.
    assert r.gain.nominal == pytest.approx(1 + 20e3 / 2e3, rel=1e-4)
    assert r.gain.nominal == analyse(st, None, None, Options(mc_samples=0)).gain.nominal
    assert any("input filter ahead of the stage" in n for n in r.notes)


def test_bias_returns_alone_or_a_lone_leg_are_no_filter():
    # Bias resistors to a buffered reference with no capacitor: no filter.
    nb = NetlistBuilder()
    nb.opamp("U1", {"A": ("IN_P", "M1", "O1"), "B": ("IN_N", "M2", "O2")}, package="dual",
             vpos="+5V", vneg="-5V")
    nb.r("R3", "O1", "M1", "10k").r("R4", "O2", "M2", "10k").r("R5", "M1", "M2", "2k")
    nb.r("R7", "O2", "N3", "10k").r("R8", "N3", "OUT", "10k")
    nb.r("R9", "O1", "P3", "10k").r("R6", "P3", "GND", "10k")
    nb.opamp("U2", {"": ("P3", "N3", "OUT")}, package="single", vpos="+5V", vneg="-5V")
    nb.r("R16", "IN_P", "GND", "10M").r("R17", "IN_N", "GND", "10M")
    nb.r("R10", "SRC_P", "IN_P", "4.02k").r("R11", "SRC_N", "IN_N", "4.02k")
    nb.pins_to("J1", "SRC_P", "SRC_N", "GND")
    nl = nb.build()
    st = _stage(nl)
    assert dc_paths.filter_ahead(nl, st) is None
    # One leg with Cc, the other without, no Cd: not the sec. 7 shape.
    nb.c("C10", "IN_P", "GND", "1n")
    nl = nb.build()
    assert dc_paths.filter_ahead(nl, _stage(nl)) is None


def test_mismatched_filter_legs_convert_common_mode():
    # Cc 1 nF vs 4.7 nF with no Cd: |Vd/Vcm| = |1/(1+jwRCa) - 1/(1+jwRCb)| (docs/engineering.md
    # sec. 7) at 1 kHz, R = 4.02k; the worst tolerance corner can only be larger than the nominal.
    nl = _inamp_with_filter(cc_n="4.7n", cd="")
    r = analyse(_stage(nl), nl, None, Options(mc_samples=0))
    w = 2 * math.pi * 1e3
    nominal = abs(1 / (1 + 1j * w * 4.02e3 * 1e-9) - 1 / (1 + 1j * w * 4.02e3 * 4.7e-9))
    assert r.input_filter.cm_to_dm[1e3] >= nominal * (1 - 1e-3)
    assert r.input_filter.cm_to_dm[1e3] < nominal * 1.5


def test_ecg_sample_reports_its_input_filter(tmp_path):
    # sample_projects/ecg-frontend/README.md, expected findings: "- input-filter: R1, R2, C1,
    # C2, C3" (series R1/R2 10k, C1 1 nF and C2 4.7 nF to ground, C3 10 nF across).
    out = tmp_path / "ecg.json"
    main(["check", str(SAMPLES / "ecg-frontend"), "--samples", "200", "-f", "json", "-o", str(out)])
    doc = json.loads(out.read_text())
    (f,) = [f for f in doc["findings"] if f["rule"] == "input-filter"]
    assert set(f["references"]) == {"R1", "R2", "C1", "C2", "C3"}
    assert f["severity"] == "warning"
    (st,) = doc["stages"]
    assert set(st["input_filter"]["parts"]) == {"R1", "R2", "C1", "C2", "C3"}

"""Stages of one topology family solved together (frontcheck.analysis.family) give the same
figures as each stage analysed alone: every number of every StageResult to 1e-12 relative,
every text equal. The design is generated: difference amplifiers with different values and
tolerances (ideal op-amps and op-amps of a shipped class, so their CMRR enters), a REF
divider that the neighbourhood solves with its stage, three-op-amp in-amps, and declared
ranges and targets on some stages (headroom over corners, requirements); the CMRR-against-
frequency sweeps are compared too. Invented parts.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from frontcheck.analysis import Options, analyse, analyse_many, family
from frontcheck.analysis.dc_paths import DCView
from frontcheck.circuit import Intent, Sourced
from frontcheck.parts import PartLibrary
from frontcheck.recognise import find_stages
from netlist_builder import NetlistBuilder, diff_amp

RAILS = {"+5V": Sourced(5.0, "project", "rail +5V"), "-5V": Sourced(-5.0, "project", "rail -5V")}


def _design() -> NetlistBuilder:
    nb = NetlistBuilder()
    vals = [("10k", "100k", "10k", "100k"), ("4.99k", "49.9k", "4.99k", "49.9k"),
            ("1k", "10k", "1.01k", "10k"), ("20k", "20k", "20k", "20k")]
    for k in range(8):
        v = vals[k % 4]
        tol = ("0.1%", "1%", "0.5%")[k % 3]
        fields = {"Part Class": "general-purpose"} if k % 2 else {}
        ref = "VREF_DIV" if k == 5 else "GND"
        diff_amp(nb, u=f"U{k + 1}", r=tuple(f"R{4 * k + i}" for i in range(1, 5)),
                 vals=tuple(f"{x} {tol}" for x in v), inp=f"IP{k}", inn=f"IN{k}", ref=ref,
                 out=f"OUT{k}", vpos="+5V", vneg="-5V")
        nb.comps[f"U{k + 1}"].fields.update(fields)
    nb.r("RD1", "+5V", "VREF_DIV", "10k 1%").r("RD2", "VREF_DIV", "GND", "10k 1%")
    for j in range(3):
        u = f"U{20 + j}"
        nb.opamp(u, {"A": (f"AP{j}", f"M1{j}", f"O1{j}"), "B": (f"AN{j}", f"M2{j}", f"O2{j}"),
                     "C": (f"P{j}", f"N{j}", f"AOUT{j}")}, vpos="+5V", vneg="-5V")
        nb.r(f"RF1{j}", f"O1{j}", f"M1{j}", "24.9k 0.1%").r(f"RF2{j}", f"O2{j}", f"M2{j}", "24.9k 0.1%")
        nb.r(f"RG{j}", f"M1{j}", f"M2{j}", ("1k", "2k", "499")[j] + " 0.1%")
        nb.r(f"RA{j}", f"O2{j}", f"N{j}", "10k 0.1%").r(f"RB{j}", f"N{j}", f"AOUT{j}", "10k 0.1%")
        nb.r(f"RC{j}", f"O1{j}", f"P{j}", "10k 0.1%").r(f"RR{j}", f"P{j}", "GND", "10k 0.1%")
    nets = [f"{p}{k}" for k in range(8) for p in ("IP", "IN", "OUT")]
    nets += [f"{p}{j}" for j in range(3) for p in ("AP", "AN", "AOUT")]
    return nb.pins_to("J1", "+5V", "-5V", "GND", *nets)


def _same(a, b, where="result"):
    """Equal texts and structure, numbers to 1e-12 relative (NaN and inf as such)."""
    if dataclasses.is_dataclass(a):
        assert type(a) is type(b), where
        for f in dataclasses.fields(a):
            _same(getattr(a, f.name), getattr(b, f.name), f"{where}.{f.name}")
    elif isinstance(a, dict):
        assert list(a) == list(b), where
        for k in a:
            _same(a[k], b[k], f"{where}[{k!r}]")
    elif isinstance(a, (list, tuple)):
        assert len(a) == len(b), where
        for i, (x, y) in enumerate(zip(a, b)):
            _same(x, y, f"{where}[{i}]")
    elif isinstance(a, np.ndarray):
        assert a.shape == b.shape, where
        for i, (x, y) in enumerate(zip(a.ravel(), b.ravel())):
            _same(x, y, f"{where}[{i}]")
    elif isinstance(a, (float, np.floating)) and not isinstance(a, bool):
        if math.isnan(a) or math.isinf(a):
            assert (math.isnan(a) and math.isnan(b)) or a == b, where
        else:
            assert b == pytest.approx(a, rel=1e-12, abs=1e-300), where
    else:
        assert a == b, where


@pytest.mark.parametrize("distribution,rows", [("gaussian", None), ("uniform", None),
                                               ("gaussian", 300)])
def test_family_batch_equals_single_stage_analysis(monkeypatch, distribution, rows):
    if rows is not None:
        monkeypatch.setattr(family, "ROWS", rows)     # a family solved in several slices
    netlist = _design().build()
    parts = PartLibrary.load(None)
    rec = find_stages(netlist, parts, RAILS)
    stages = rec.stages
    kinds = sorted(s.kind for s in stages)
    assert kinds == ["difference"] * 8 + ["three-opamp"] * 3
    for s in stages[::3]:
        s.intent = Intent(target_gain=10.0, gain_tol=0.01, min_cmrr_db=80.0,
                          input_cm=(-2.0, 2.0), input_diff=(-0.1, 0.1))
    rails = {n.name: RAILS[n.name] for n in netlist.nets if n.name in RAILS}
    opt = Options(mc_samples=2000, distribution=distribution)
    dc = DCView(netlist, rails, parts)

    families = []
    real_group = family.group

    def spy(contexts):
        got = real_group(contexts)
        families.extend(got)
        return got

    asked = []
    real_nodes = family.Family.nodes

    def nodes(self, ctx, x):
        asked.append(("nodes", len(self.members)))
        return real_nodes(self, ctx, x)

    real_shared = family.Family.shared

    def shared(self, ctx, key, every):
        asked.append((key[0], len(self.members)))
        return real_shared(self, ctx, key, every)

    monkeypatch.setattr(family, "group", spy)
    monkeypatch.setattr(family.Family, "nodes", nodes)
    monkeypatch.setattr(family.Family, "shared", shared)
    batched = analyse_many(stages, netlist, rails, opt, dc=dc)
    # the stages really were solved in families of more than one, headroom corners and the
    # CMRR-against-frequency sweeps too
    assert sum(len(f.members) for f in families) >= 8 and all(len(f.members) > 1 for f in families)
    assert max(n for k, n in asked if k == "nodes") > 1
    assert max(n for k, n in asked if k == "flat-sweep") > 1
    families.clear()
    for s, got in zip(stages, batched):
        alone = analyse(s, netlist, rails, opt, dc=dc)
        assert not families                     # a stage alone has no family
        _same(alone, got, s.id)


def test_a_singular_stage_fails_alone_in_its_family():
    # Op-amp with its output fed back to both inputs through dividers (R1/R2 to the -input,
    # R3/R4 to the +input): with an ideal op-amp the equations are singular exactly when the
    # two divider ratios are equal (R3 = R1 here), solvable otherwise. Invented circuit.
    from spice import model, opamp, rails, res

    from frontcheck.analysis import Unanalysable
    from frontcheck.circuit import Stage, SubCircuit

    def stage(k, r3):
        sub = SubCircuit(resistors=[res("R1", "O", "N", 10e3), res("R2", "N", "IN_N", 10e3),
                                    res("R3", "O", "P", r3), res("R4", "P", "IN_P", 10e3)],
                         opamps=[opamp("U1A", "P", "N", "O", model(aol=math.inf))],
                         ports={"in_p": "IN_P", "in_n": "IN_N", "out": "O"}, rails=rails())
        return Stage(f"U{k}", "difference", ["R1", "R2", "R3", "R4"], [f"U{k}"], {}, sub, Intent())

    stages = [stage(1, 20e3), stage(2, 10e3), stage(3, 30e3)]
    opt = Options(mc_samples=1000)
    batched = analyse_many(stages, None, None, opt)
    assert [isinstance(r, Unanalysable) for r in batched] == [False, True, False]
    assert "singular" in batched[1].reason
    for s, got in zip(stages, batched):
        if not isinstance(got, Unanalysable):
            _same(analyse(s, None, None, opt), got, s.id)
    # gain of the solvable ones: Vo (R4/(R3+R4) - R2/(R1+R2)) = Vin_n R1/(R1+R2) - Vin_p R3/(R3+R4)
    # (nodal analysis by hand), so Ad = -(R1/(R1+R2) + R3/(R3+R4)) / 2 / (R4/(R3+R4) - 1/2)
    for got, r3 in ((batched[0], 20e3), (batched[2], 30e3)):
        k4, k3 = 10e3 / (r3 + 10e3), r3 / (r3 + 10e3)
        assert got.gain.nominal == pytest.approx(-(0.5 + k3) / 2 / (k4 - 0.5), rel=1e-9)

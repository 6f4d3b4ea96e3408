"""The per-stage DC figures that a check solves for a whole topology family at once give the
same numbers as each stage solved alone: the nominal node voltages the headroom limits read
(frontcheck.analysis.corners.nominal_nodes against mna.node_affine) and the DC transfers of
the error budget (offset.dc_transfers_many against offset.dc_transfers), to 1e-12 relative;
then every figure of every StageResult of a generated design analysed together and alone.

The design is invented: difference amplifiers whose REF is fed through a resistor
divider (a REF impedance) and whose inputs are driven by bridge arms (a source resistance),
three-op-amp in-amps and two-op-amp in-amps, each family with different values and tolerances
and ranges declared on every stage (so headroom and the whole error budget are computed).
"""

from __future__ import annotations

import numpy as np
import pytest

from frontcheck.analysis import Options, analyse, analyse_many, budget_terms, corners, family
from frontcheck.analysis import mna, offset
from frontcheck.analysis.dc_paths import DCView
from frontcheck.circuit import Intent, Sourced
from frontcheck.parts import PartLibrary
from frontcheck.recognise import find_stages
from netlist_builder import NetlistBuilder, diff_amp
from test_analysis_family import _same

RAILS = {"+5V": Sourced(5.0, "project", "rail +5V"), "-5V": Sourced(-5.0, "project", "rail -5V")}
INTENT = dict(input_cm=(-1.0, 1.0), input_diff=(-0.05, 0.05))


def _design() -> NetlistBuilder:
    nb = NetlistBuilder()
    vals = [("10k", "100k", "10k", "100k"), ("4.99k", "49.9k", "4.99k", "49.9k"),
            ("1k", "10k", "1.01k", "10k")]
    for k in range(3):
        tol = ("0.1%", "1%", "0.5%")[k]
        diff_amp(nb, u=f"U{k + 1}", r=tuple(f"R{4 * k + i}" for i in range(1, 5)),
                 vals=tuple(f"{x} {tol}" for x in vals[k]), inp=f"IP{k}", inn=f"IN{k}",
                 ref=f"VR{k}", out=f"OUT{k}", vpos="+5V", vneg="-5V")
        nb.comps[f"U{k + 1}"].fields.update({"Part Class": "general-purpose"})   # CMRR, Aol enter
        # REF through a divider (its Thevenin resistance is in series with REF)
        nb.r(f"RD{k}A", "+5V", f"VR{k}", ("10k", "4.7k", "22k")[k] + " 1%")
        nb.r(f"RD{k}B", f"VR{k}", "-5V", ("10k", "4.7k", "22k")[k] + " 1%")
        # a bridge drives both inputs (a source resistance at each)
        nb.r(f"RB{k}1", "+5V", f"IP{k}", "350 0.1%").r(f"RB{k}2", f"IP{k}", "GND", ("700", "360", "400")[k])
        nb.r(f"RB{k}3", "+5V", f"IN{k}", "350 0.1%").r(f"RB{k}4", f"IN{k}", "GND", "350 0.1%")
    for j in range(3):
        u = f"U{20 + j}"
        nb.opamp(u, {"A": (f"AP{j}", f"M1{j}", f"O1{j}"), "B": (f"AN{j}", f"M2{j}", f"O2{j}"),
                     "C": (f"P{j}", f"N{j}", f"AOUT{j}")}, vpos="+5V", vneg="-5V")
        nb.r(f"RF1{j}", f"O1{j}", f"M1{j}", "24.9k 0.1%").r(f"RF2{j}", f"O2{j}", f"M2{j}", "24.9k 0.1%")
        nb.r(f"RG{j}", f"M1{j}", f"M2{j}", ("1k", "2k", "499")[j] + " 0.1%")
        nb.r(f"RA{j}", f"O2{j}", f"N{j}", "10k 0.1%").r(f"RB{j}", f"N{j}", f"AOUT{j}", "10k 0.1%")
        nb.r(f"RC{j}", f"O1{j}", f"P{j}", "10k 0.1%").r(f"RR{j}", f"P{j}", "GND", "10k 0.1%")
    for j in range(3):
        # two-op-amp in-amps: R1 (A1 -in -> REF), R2 (A1 out -> A1 -in), R3 (A1 out -> A2 -in),
        # R4 (A2 feedback), RG between the inverting nodes; REF from a buffered divider
        r1, r2 = ("100k 0.1%", "10k 0.1%") if j != 1 else ("220k 0.5%", "22k 0.5%")
        nb.r(f"RT1{j}", f"TM1{j}", f"TREF{j}", r1).r(f"RT2{j}", f"TO1{j}", f"TM1{j}", r2)
        nb.r(f"RT3{j}", f"TO1{j}", f"TM2{j}", r2).r(f"RT4{j}", f"TM2{j}", f"TOUT{j}", r1)
        nb.r(f"RT6{j}", f"TM1{j}", f"TM2{j}", ("10k", "4.99k", "20k")[j] + " 0.1%")
        nb.opamp(f"U{30 + j}", {"A": (f"TN{j}", f"TM1{j}", f"TO1{j}"),
                                "B": (f"TP{j}", f"TM2{j}", f"TOUT{j}")}, package="dual",
                 vpos="+5V", vneg="-5V")
        nb.r(f"RT8{j}", "+5V", f"TDIV{j}", "1M").r(f"RT9{j}", f"TDIV{j}", "GND", "1M")
        nb.opamp(f"U{40 + j}", {"": (f"TDIV{j}", f"TREF{j}", f"TREF{j}")}, package="single",
                 vpos="+5V", vneg="-5V")
    nets = [f"OUT{k}" for k in range(3)]
    nets += [f"{p}{j}" for j in range(3) for p in ("AP", "AN", "AOUT", "TP", "TN", "TOUT")]
    return nb.pins_to("J1", "+5V", "-5V", "GND", *nets)


@pytest.fixture(scope="module")
def design():
    netlist = _design().build()
    parts = PartLibrary.load(None)
    stages = find_stages(netlist, parts, RAILS).stages
    for s in stages:
        s.intent = Intent(**INTENT)
    rails = {n.name: RAILS[n.name] for n in netlist.nets if n.name in RAILS}
    return netlist, stages, rails, DCView(netlist, rails, parts)


def test_design_has_the_three_families(design):
    _, stages, _, _ = design
    assert sorted(s.kind for s in stages) == ["difference"] * 3 + ["three-opamp"] * 3 + ["two-opamp"] * 3


def test_batched_budget_transfers_equal_single_stage(design):
    netlist, stages, rails, dc = design
    from frontcheck.analysis import dc_paths
    sources = [dc_paths.source_impedances(netlist, s, rails, dc=dc) for s in stages]
    # the difference amplifiers see their bridge (a source resistance at both inputs)
    assert all(src.rs_p > 0 and src.rs_n > 0 for s, src in zip(stages, sources) if s.kind == "difference")
    got = budget_terms.transfers_many([(s, src, ()) for s, src in zip(stages, sources)])
    assert all(g is not None for g in got)          # every stage was solved in a stack of three
    for s, src, (ad, tr) in zip(stages, sources, got):
        rs = budget_terms._source_rs(src)
        want_ad, want = offset.dc_transfers(s.circuit, list(rs) if rs else None,
                                            ("in_p", "in_n") if rs else ())
        assert ad == pytest.approx(want_ad, rel=1e-12)
        assert [t.name for t in tr] == [t.name for t in want]
        for t, w in zip(tr, want):
            for f in ("vos", "z_p", "z_n"):
                assert getattr(t, f) == pytest.approx(getattr(w, f), rel=1e-12, abs=1e-300), (s.id, f)


def test_batched_transfers_leave_a_lone_or_singular_circuit_to_its_stage(design):
    _, stages, _, _ = design
    one = [(stages[0].circuit, None, ())]
    assert offset.dc_transfers_many(one) == [None]          # a structure of one: solved alone
    # Op-amp with its output fed back to both inputs through dividers: with an ideal op-amp
    # the equations are singular exactly when the two divider ratios are equal (R3 = R1),
    # as in test_analysis_family. Two circuits of one structure, one of them singular: the
    # stack is left to each stage, and the solvable one still solves alone.
    import math

    from spice import model, opamp, rails, res

    from frontcheck.circuit import SubCircuit

    def sub(r3):
        return SubCircuit(resistors=[res("R1", "O", "N", 10e3), res("R2", "N", "IN_N", 10e3),
                                     res("R3", "O", "P", r3), res("R4", "P", "IN_P", 10e3)],
                          opamps=[opamp("U1A", "P", "N", "O", model(aol=math.inf))],
                          ports={"in_p": "IN_P", "in_n": "IN_N", "out": "O"}, rails=rails())

    good, bad = sub(20e3), sub(10e3)
    assert offset.dc_transfers_many([(good, None, ()), (bad, None, ())]) == [None, None]
    ad, _ = offset.dc_transfers(good)
    # Ad = -(R1/(R1+R2) + R3/(R3+R4)) / 2 / (R4/(R3+R4) - 1/2) (nodal analysis by hand, as in
    # test_analysis_family) = -(1/2 + 2/3) / 2 / (1/3 - 1/2) = 3.5
    assert ad == pytest.approx(3.5, rel=1e-9)
    got = offset.dc_transfers_many([(good, None, ()), (sub(30e3), None, ())])
    assert got[0][0] == pytest.approx(ad, rel=1e-12)


def test_nominal_nodes_of_a_family_equal_node_affine(design):
    netlist, stages, rails, dc = design
    import frontcheck.analysis as analysis
    prepared = [analysis._prepare(s, netlist, rails, Options(mc_samples=0), dc) for s in stages]
    fams = family.group(c for p in prepared for c in p.contexts())
    # three families of stages, and the difference amplifiers without their REF network
    # (the contexts the error budget reads)
    assert [len(f.members) for f in fams] == [3, 3, 3, 3]
    kinds = set()
    for p in prepared:
        got = corners.nominal_nodes(p.ctx, p.work, p.series)
        assert got is not None
        topo, X = got
        nets = sorted(topo.index)
        want = mna.node_affine(p.work, nets, series=tuple(p.series),
                               rs=[[p.series[k] for k in p.series]] if p.series else None)
        for n in nets:
            np.testing.assert_allclose(topo.coefficients(X, n)[0], want[n], rtol=1e-12, atol=0)
        kinds.add((p.stage.kind, bool(p.series) or p.work is not p.stage.circuit))
    # REF impedance present on the difference amplifiers (their divider is solved with them)
    assert ("difference", True) in kinds
    # a context compiled from another circuit, or other series ports, is solved alone
    p = prepared[0]
    assert corners.nominal_nodes(p.ctx, p.stage.circuit if p.work is not p.stage.circuit
                                 else None, p.series) is None
    assert corners.nominal_nodes(p.ctx, p.work, {**p.series, "in_p": 1.0}) is None


@pytest.mark.parametrize("distribution", ["gaussian", "uniform"])
def test_analyse_many_equals_each_stage_alone(design, monkeypatch, distribution):
    netlist, stages, rails, dc = design
    opt = Options(mc_samples=500, distribution=distribution)
    batched_transfers, zero_rows = [], []
    real_many = offset.dc_transfers_many

    def many(items):
        got = real_many(items)
        batched_transfers.append(sum(g is not None for g in got))
        return got

    real_nodes = family.Family.nodes

    def nodes(self, ctx, x):
        if not np.asarray(x).any():
            zero_rows.append(len(self.members))
        return real_nodes(self, ctx, x)

    monkeypatch.setattr(offset, "dc_transfers_many", many)
    monkeypatch.setattr(family.Family, "nodes", nodes)
    batched = analyse_many(stages, netlist, rails, opt, dc=dc)
    assert batched_transfers == [9]                     # every stage's budget transfers stacked
    assert zero_rows == [3] * 9                         # every nominal headroom solve stacked
    for s, got in zip(stages, batched):
        assert got.error_budget.get("offset") is not None and got.headroom.margin_v is not None
        _same(analyse(s, netlist, rails, opt, dc=dc), got, s.id)


def test_shared_corner_rows_are_every_sign_vector_and_read_only():
    # every one of the 2^3 sign vectors of three variables once (enumeration by hand), the
    # nominal and each variable alone above max_bits; shared arrays cannot be written
    from frontcheck.analysis import cmrr_frequency
    x = cmrr_frequency._corners(3, True)
    assert sorted(map(tuple, x.tolist())) == sorted((a, b, c) for a in (-1.0, 1.0)
                                                    for b in (-1.0, 1.0) for c in (-1.0, 1.0))
    assert cmrr_frequency._corners(3, True) is x and not x.flags.writeable
    y = cmrr_frequency._corners(2, False)
    assert y.tolist() == [[0.0, 0.0], [1.0, 0.0], [0.0, 1.0]] and not y.flags.writeable
    ns, S = cmrr_frequency._sign_rows(2, True, 3, True, True)
    # nominal row, then each of 8 corners with each of 4 op-amp CMRR sign sets
    assert ns == 4 and S.shape == (1 + 8 * 4, 2) and not S.flags.writeable
    with pytest.raises(ValueError):
        x[0, 0] = 2.0


def test_flat_sweeps_of_a_family_equal_the_general_sweep(design):
    # flat_sweeps makes the rows of the stages of one family together; the reference is
    # cmrr_sweep at one frequency, which takes the general path (_worst_acm) for every stage
    from frontcheck.analysis import cmrr_frequency as cf
    netlist, stages, rails, dc = design
    import frontcheck.analysis as analysis
    prepared = [analysis._prepare(s, netlist, rails, Options(mc_samples=0), dc) for s in stages]
    for kind in ("difference", "three-opamp", "two-opamp"):
        items = [(p.work, cf._stage_dynamics(p.work), p.series, p.ctx.topo) for p in prepared
                 if p.stage.kind == kind]
        assert len(items) == 3
        got = cf.flat_sweeps(items, 1.0, True, 12)
        for (sub, dyn, series, _), one in zip(items, got):
            want = cf.cmrr_sweep(sub, [1.0], dyn, True, 12, series)
            for a, b in ((one.nominal_db[0], want.nominal_db[0]), (one.worst_db[0], want.worst_db[0])):
                assert a == b if np.isinf(b) else a == pytest.approx(b, rel=1e-12), (kind, a, b)
            assert one.variables == want.variables and one.exhaustive == want.exhaustive


@pytest.mark.parametrize("max_bits", [12, 2])
def test_flat_sweeps_on_the_compiled_variables_equal_their_own(design, max_bits):
    # a family's flat sweeps read the variables of each stage's tolerance context; they are
    # the sweep's own variables (no capacitors), so every number is the same, bit for bit,
    # for the exhaustive corners and for the first-order bound (max_bits 2)
    from frontcheck.analysis import cmrr_frequency as cf
    netlist, stages, rails, dc = design
    import frontcheck.analysis as analysis
    prepared = [analysis._prepare(s, netlist, rails, Options(mc_samples=0), dc) for s in stages]
    for kind in ("difference", "three-opamp", "two-opamp"):
        members = [p for p in prepared if p.stage.kind == kind]
        own = [(p.work, cf._stage_dynamics(p.work), p.series, p.ctx.topo) for p in members]
        got = cf.flat_sweeps([i + (p.ctx.var,) for i, p in zip(own, members)], 1.0, True, max_bits)
        want = cf.flat_sweeps(own, 1.0, True, max_bits)
        assert any(not w.exhaustive for w in want) == (max_bits == 2)
        for a, b in zip(got, want):
            assert (a.nominal_db.tolist(), a.worst_db.tolist(), a.ad.tolist(), a.acm.tolist()) == \
                (b.nominal_db.tolist(), b.worst_db.tolist(), b.ad.tolist(), b.acm.tolist())
            assert a.variables == b.variables and a.exhaustive == b.exhaustive


def test_stage_sweep_of_a_family_equals_the_stage_alone(design):
    # the flat sweep a family solves at once, repeated over the frequencies, against the
    # general sweep of the stage alone at every frequency
    from frontcheck.analysis import cmrr_frequency as cf
    netlist, stages, rails, dc = design
    import frontcheck.analysis as analysis
    prepared = [analysis._prepare(s, netlist, rails, Options(mc_samples=0), dc) for s in stages]
    family.group(c for p in prepared for c in p.contexts())
    for p in prepared:
        got = cf.stage_sweep(p.work, None, series=p.series, ctx=p.ctx)
        want = cf.stage_sweep(p.work, None, series=p.series)
        assert got["freqs_hz"] == want["freqs_hz"] and got["exhaustive"] == want["exhaustive"]
        assert got["gbw_from"] == want["gbw_from"]
        for key in ("nominal_db", "worst_db"):
            assert len(got[key]) == len(want[key]) == 61
            for a, b in zip(got[key], want[key]):
                assert (a is None and b is None) or a == pytest.approx(b, rel=1e-12), (key, a, b)

"""Statistics and worst-case figures of a whole topology family at once
(frontcheck.analysis.sensitivity_many, frontcheck.analysis.worst) equal those of each stage
analysed alone (without a family): every number to 1e-12 relative, every note equal.
Families of difference amplifiers, three-op-amp and two-op-amp in-amps, with a REF source
impedance and input source resistances, Gaussian and uniform parts; members whose figures take each route: closed form, numerical convolution
(op-amp CMRR terms that show), and the Monte Carlo fallback (5 % parts at a gain of 100,
where the first-order model is off by more than 0.1 dB: test_analysis_sensitivity.py).
Invented values.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from frontcheck.analysis import cmrr_frequency, family, sensitivity_many, worst
from frontcheck.analysis import sensitivity as S
from frontcheck.analysis import tolerance as T
from spice import diff_amp, model, three_opamp, two_opamp
from test_analysis_family import _same


def _opamp(cmrr_db):
    return model(aol=1e6, cmrr_db=cmrr_db)


# name: (SubCircuits of one topology, series port resistances of each)
FAMILIES = {
    "difference, ideal op-amp": (
        [diff_amp(10e3, 100e3, 10e3, 100e3, tol=0.001),
         diff_amp(4.99e3, 49.9e3, 5.1e3, 49.9e3, tol=0.005),
         diff_amp(1e3, 100e3, 1e3, 100e3, tol=0.05),                  # Monte Carlo fallback
         diff_amp(10e3, 10e3, 10e3, 10e3, tol=0.01)],
        [{"ref": 200.0}, {"ref": 50.0}, {"ref": 1.0}, {"ref": 10.0}]),
    "difference": (
        [diff_amp(10e3, 100e3, 10e3, 100e3, tol=0.001, m=_opamp(140.0)),
         diff_amp(4.99e3, 49.9e3, 5.1e3, 49.9e3, tol=0.005, m=_opamp(90.0)),
         diff_amp(1e3, 100e3, 1e3, 100e3, tol=0.05, m=_opamp(100.0)),
         diff_amp(20e3, 20e3, 20e3, 20e3, tol=0.0005, m=_opamp(70.0)),
         diff_amp(10e3, 10e3, 10e3, 10e3, tol=0.01, m=_opamp(120.0))],
        [{"in_p": 1e3, "in_n": 1.5e3}, {"in_p": 50.0, "in_n": 50.0}, {"in_p": 1.0, "in_n": 2.0},
         {"in_p": 1e3, "in_n": 10.0}, {"in_p": 10.0, "in_n": 10.0}]),
    "three-op-amp": (
        [three_opamp(rf=24.9e3, rg=2.49e3, tol=0.001, m=_opamp(100.0)),
         three_opamp(rf=10e3, rg=1e3, tol=0.005, m=_opamp(140.0)),
         three_opamp(rf=49.9e3, rg=499.0, tol=0.001, m=_opamp(80.0)),
         three_opamp(rf=25e3, rg=5e3, ra=20e3, rb=20e3, tol=0.01, m=_opamp(130.0))],
        [{"in_p": 2e3, "in_n": 2e3}, {"in_p": 1e3, "in_n": 1.5e3}, {"in_p": 10.0, "in_n": 20.0},
         {"in_p": 500.0, "in_n": 100.0}]),
    "two-op-amp": (
        [two_opamp(tol=0.001, m=_opamp(100.0)),
         two_opamp(r1=4.99e3, r2=49.9e3, tol=0.005, m=_opamp(140.0)),
         two_opamp(r1=1e3, r2=100e3, tol=0.05, m=_opamp(60.0)),
         two_opamp(r1=20e3, r2=20e3, tol=0.001, m=_opamp(90.0))],
        [{"ref": 100.0, "in_p": 1e3, "in_n": 1.5e3}, {"ref": 10.0, "in_p": 50.0, "in_n": 50.0},
         {"ref": 1e3, "in_p": 2e3, "in_n": 1e3}, {"ref": 1.0, "in_p": 10.0, "in_n": 300.0}]),
}


def _ad_nom(ctx) -> float:
    return float(ctx.evaluate(np.zeros((1, len(ctx.var.names))), use_opamp_cmrr=False).ad[0])


@pytest.mark.parametrize("convention", ["nominal", "corner"])
@pytest.mark.parametrize("distribution", ["gaussian", "uniform"])
@pytest.mark.parametrize("name", list(FAMILIES))
def test_family_statistics_equal_each_stage_alone(monkeypatch, name, distribution, convention):
    subs, series = FAMILIES[name]
    opt = T.Options(distribution=distribution, ad_convention=convention, seed=5,
                    mc_samples=4000, lin_samples=20000)
    alone = []
    for sub, ser in zip(subs, series):
        ctx = T.make_context(sub, ser)
        assert ctx.family is None
        alone.append(S.statistics(ctx, opt, _ad_nom(ctx)))

    runs = []
    real = sensitivity_many.many

    def spy(fam, opt, noms):
        got = real(fam, opt, noms)
        runs.append((len(fam.members), sum(g is not None for g in got)))
        return got

    monkeypatch.setattr(sensitivity_many, "many", spy)
    ctxs = [T.make_context(sub, ser) for sub, ser in zip(subs, series)]
    fams = family.group(ctxs)
    assert len(fams) == 1 and [id(c) for c in fams[0].members] == [id(c) for c in ctxs]
    together = [S.statistics(c, opt, _ad_nom(c)) for c in ctxs]
    assert runs == [(len(ctxs), len(ctxs))]          # one batch answered every member
    for a, b in zip(alone, together):
        _same(a, b, name)
    # the members took each route this test means to cover
    notes = " ".join(s.note for s in together)
    assert {s.method for s in together} == {"first-order", "monte-carlo"}
    if distribution == "gaussian":
        assert "closed form" in notes
    if distribution == "uniform" or name != "difference, ideal op-amp":
        assert "numerical convolution" in notes


def test_closed_form_tails_equal_the_single_stage_sums():
    # The folded-normal magnitude and the normal quantiles of many stages at once against
    # sensitivity.LinearSum of each: means from 0 to far beyond sigma, a zero sigma, and a
    # probability that the centre already meets (answer 0).
    rng = np.random.default_rng(3)
    S_ = 300
    g = rng.standard_normal((S_, 6)) * 10.0 ** rng.uniform(-6, 0, (S_, 1))
    g[7] = 0.0
    mean = rng.standard_normal(S_) * 10.0 ** rng.uniform(-7, 1, S_)
    gaussian = np.ones(6, dtype=bool)
    sums = sensitivity_many._Sums(mean, g, gaussian)
    for p in (0.00135, 0.5, 0.999):
        many = sums.magnitude_exceeded(p)
        lo, hi = sums.quantile(p), sums.quantile(1 - p)
        for j in range(S_):
            one = S.LinearSum(float(mean[j]), g[j], gaussian)
            assert one.exact and sums.exact[j]
            assert many[j] == one.magnitude_exceeded(p)
            assert lo[j] == one.quantile(p) and hi[j] == one.quantile(1 - p)
    assert sums.magnitude_exceeded(0.999)[7] == abs(mean[7])


@pytest.mark.parametrize("joint_bits", [12, 3])
@pytest.mark.parametrize("name", list(FAMILIES))
def test_family_worst_case_equals_each_stage_alone(monkeypatch, name, joint_bits):
    # joint_bits 3: op-amp CMRR added in magnitude to the corners, which each member makes
    # alone (worst.many leaves it to them); the figures are the same either way.
    subs, series = FAMILIES[name]
    opt = T.Options(joint_bits=joint_bits, mc_samples=2000)
    alone = [T.analyse_tolerance(sub, opt, ser) for sub, ser in zip(subs, series)]
    runs = []
    real = worst.many

    def spy(fam, opt):
        got = real(fam, opt)
        runs.append(sum(g is not None for g in got))
        return got

    monkeypatch.setattr(worst, "many", spy)
    ctxs = [T.make_context(sub, ser) for sub, ser in zip(subs, series)]
    family.group(ctxs)
    together = [T.analyse_tolerance(sub, opt, ser, ctx=c) for sub, ser, c in zip(subs, series, ctxs)]
    with_opamp_cmrr = bool(ctxs[0].cmag.any())
    assert runs == ([] if with_opamp_cmrr and joint_bits == 3 else [len(ctxs)])
    for a, b in zip(alone, together):
        gain_a, cmrr_a, notes_a, extra_a = a
        gain_b, cmrr_b, notes_b, extra_b = b
        _same(gain_a, gain_b, name)
        _same(cmrr_a, cmrr_b, name)
        assert notes_a == notes_b
        for key in ("ad_nominal", "acm_nominal", "aref", "ad_ideal_ports", "acm_ideal_ports",
                    "acm_worst", "ad_corners", "acm_corners"):
            _same(extra_a[key], extra_b[key], f"{name} {key}")
    # every contributor there: the resistors, each op-amp with a CMRR, the series sources
    names = set(together[0][1].contributors)
    assert "resistors" in names and ("source impedance" in names or "REF source" in names)
    assert with_opamp_cmrr == ("U1A" in names)


def _renamed(sub, k):
    """The same circuit with other part names (another channel of a multi-channel design)."""
    import dataclasses as dc
    return dc.replace(sub, resistors=[dc.replace(r, name=f"{r.name}_{k}") for r in sub.resistors],
                      opamps=[dc.replace(o, name=f"{o.name}_{k}") for o in sub.opamps])


def _bits(x):
    """Every number of a result as its exact bits (texts and structure as they are)."""
    if dataclasses.is_dataclass(x):
        return tuple((f.name, _bits(getattr(x, f.name))) for f in dataclasses.fields(x))
    if isinstance(x, dict):
        return tuple((k, _bits(v)) for k, v in x.items())
    if isinstance(x, (list, tuple)):
        return tuple(_bits(v) for v in x)
    if isinstance(x, np.ndarray):
        return (x.dtype.str, x.shape, x.tobytes())
    if isinstance(x, (float, np.floating)):
        return float(x).hex()
    return x


@pytest.mark.parametrize("name", list(FAMILIES))
def test_equal_members_are_solved_once_with_the_same_figures(name):
    # a family whose members repeat (identical channels, other part names): each set of
    # values is solved once, and every member's statistics, worst case and CMRR against
    # frequency are, bit for bit, those of a family without the repeats; the contributors
    # carry each member's own names
    subs, series = FAMILIES[name]
    opt = T.Options(mc_samples=2000, seed=3)
    order = [0, 1, 0, 2, 1, 0] + list(range(len(subs)))

    def figures(indices, rename):
        ctxs = [T.make_context(_renamed(subs[i], n) if rename else subs[i], series[i])
                for n, i in enumerate(indices)]
        fams = family.group(ctxs)
        return fams, [T.analyse_tolerance(c.sub, opt, series[i], ctx=c)[:3]
                      + (cmrr_frequency.stage_sweep(c.sub, series=series[i], ctx=c),)
                      for i, c in zip(indices, ctxs)]

    fams, twins = figures(order, True)
    assert len(fams) == 1 and len(fams[0].sets) == len(subs)
    assert fams[0].set_of.tolist() == order          # sets numbered as first met
    _, plain = figures(range(len(subs)), False)
    for n, i in enumerate(order):
        (gain, cmrr, notes, sweep), want = twins[n], plain[i]
        assert _bits(gain) == _bits(want[0]) and notes == want[2]
        assert _bits(sweep) == _bits(want[3]) and len(sweep["worst_db"]) == 61
        names = {o.name: f"{o.name}_{n}" for o in subs[i].opamps}
        assert list(cmrr.contributors) == [names.get(c, c) for c in want[1].contributors]
        assert _bits(list(cmrr.contributors.values())) == _bits(list(want[1].contributors.values()))
        assert _bits(dataclasses.replace(cmrr, contributors={})) == \
            _bits(dataclasses.replace(want[1], contributors={}))

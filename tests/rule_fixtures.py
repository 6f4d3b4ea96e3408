"""Builders for the rule tests: stages and results made directly (no KiCad file needed).
tests/checks/test_rule_fixtures.py checks that they describe the circuits they claim to."""

from __future__ import annotations

import math

from frontcheck.analysis.result import (
    BiasPath, CmrrResult, Headroom, RefSource, Spread, StageResult,
)
from frontcheck.checks import Context
from frontcheck.circuit import Intent, OpAmp, OpAmpModel, Resistor, Sourced, Stage, SubCircuit

INF = math.inf
IDEAL = OpAmpModel("ideal", Sourced(INF), Sourced(INF), Sourced(0.0), Sourced(0.0),
                   Sourced(0.0), Sourced(0.0))


def res(name, a, b, ohms, tol=0.001, **kw) -> Resistor:
    return Resistor(name, a, b, Sourced(float(ohms), "value"), Sourced(float(tol), "field"), **kw)


def diff_stage(r1=10e3, r2=10e3, r3=10e3, r4=10e3, tol=0.001, intent=None, sid="U1A",
               names=("R1", "R2", "R3", "R4"), model=IDEAL, ref_net="GND", **rkw) -> Stage:
    """Difference amplifier, docs/engineering.md sec. 1 naming: V1 -> R1 -> n, R2 n -> OUT,
    V2 -> R3 -> p, R4 p -> REF."""
    tols = tol if isinstance(tol, (tuple, list)) else (tol,) * 4
    rs = [res(names[0], "IN_N", "n", r1, tols[0], **rkw), res(names[1], "n", "OUT", r2, tols[1], **rkw),
          res(names[2], "IN_P", "p", r3, tols[2], **rkw), res(names[3], "p", ref_net, r4, tols[3], **rkw)]
    op = OpAmp(sid, sid.rstrip("AB"), "p", "n", "OUT", "+5V", "-5V", model)
    sub = SubCircuit(resistors=rs, opamps=[op],
                     ports={"in_p": "IN_P", "in_n": "IN_N", "ref": ref_net, "out": "OUT"},
                     rails={"+5V": Sourced(5.0), "-5V": Sourced(-5.0)})
    return Stage(id=sid, kind="difference", references=sorted([*names, op.ref]), amplifiers=[sid],
                 roles=dict(zip(("R1", "R2", "R3", "R4"), names)), circuit=sub,
                 intent=intent or Intent())


def inamp_stage(rf=24.9e3, rg=1e3, ra=10e3, rb=10e3, rc=10e3, rd=10e3, tol=0.001, intent=None,
                model=IDEAL, rails=(5.0, -5.0), rf2=None) -> Stage:
    """Three-op-amp in-amp, docs/engineering.md sec. 3 naming: A1 (+in = IN_P, out o1, Rf1 o1-m1),
    A2 (+in = IN_N, out o2, Rf2 o2-m2), RG m1-m2, stage 2 Ra o2 -> n3, Rb n3 -> OUT,
    Rc o1 -> p3, Rd p3 -> REF."""
    vp, vn = rails
    rs = [res("R1", "o1", "m1", rf, tol), res("R2", "o2", "m2", rf if rf2 is None else rf2, tol),
          res("R3", "m1", "m2", rg, tol),
          res("R4", "o2", "n3", ra, tol), res("R5", "n3", "OUT", rb, tol),
          res("R6", "o1", "p3", rc, tol), res("R7", "p3", "REF", rd, tol)]
    rails_d = {"VP": Sourced(vp), "VN": Sourced(vn)}
    ops = [OpAmp("U1A", "U1", "IN_P", "m1", "o1", "VP", "VN", model),
           OpAmp("U1B", "U1", "IN_N", "m2", "o2", "VP", "VN", model),
           OpAmp("U1C", "U1", "p3", "n3", "OUT", "VP", "VN", model)]
    sub = SubCircuit(resistors=rs, opamps=ops,
                     ports={"in_p": "IN_P", "in_n": "IN_N", "ref": "REF", "out": "OUT"},
                     rails=rails_d)
    roles = {"RF1": "R1", "RF2": "R2", "RG": "R3", "R1": "R4", "R2": "R5", "R3": "R6", "R4": "R7"}
    return Stage(id="U1A/U1B/U1C", kind="three-opamp",
                 references=["R1", "R2", "R3", "R4", "R5", "R6", "R7", "U1"],
                 amplifiers=["U1A", "U1B", "U1C"], roles=roles, circuit=sub,
                 intent=intent or Intent())


def result(stage, gain=1.0, worst=None, stat=None, nominal_db=INF, worst_db=120.0,
           statistical_db=None, contributors=None, headroom=None, ref=None, bias=(),
           assumptions=()) -> StageResult:
    wmin, wmax = worst if worst is not None else (gain, gain)
    plo, phi = stat if stat is not None else (None, None)
    return StageResult(
        stage_id=stage.id,
        gain=Spread(nominal=gain, worst_min=wmin, worst_max=wmax, p_low=plo, p_high=phi),
        cmrr=CmrrResult(nominal_db=nominal_db, worst_db=worst_db, statistical_db=statistical_db,
                        contributors=dict(contributors or {})),
        gain_cm=0.0, gain_ref=1.0,
        headroom=headroom if headroom is not None else Headroom(margin_v=None),
        ref=ref, bias=list(bias), assumptions=list(assumptions))


def context(stages, results=(), profile=None, **kw) -> Context:
    from frontcheck.checks import load_profile

    rules = load_profile(profile) if profile else {}
    for rule, over in kw.pop("rules", {}).items():
        rules.setdefault(rule, {}).update(over)
    return Context(stages=list(stages), results={r.stage_id: r for r in results},
                   rules=rules, **kw)


def only(findings, rule):
    return [f for f in findings if f.rule == rule]


# --- the builders describe what they say ---------------------------------------------------

"""A fixed, hand-made report that every reporter's golden test renders.

Two invented stages, built from docs/engineering.md check values so the numbers mean something:

* ``U1``: unity-gain difference amplifier, four 10 k 0.1 % resistors, REF fed from a divider
  with a 100 ohm Thevenin resistance (docs/engineering.md section 5 check values: CMRR limited to
  46.09 dB, Ad = G (1 + r / (2 (1 + G))) = 1.0025 for r = Rth / R4 = 0.01).
* ``U2A/U2B/U2C``: three-op-amp in-amp on a single 5 V supply, G1 = 100, G2 = 1, Vref = 2.5 V,
  outputs to 0.1 V of each rail, input common mode -0.1 .. 3.5 V: the docs/engineering.md section 4
  operating-region check values (Vd = 0 -> Vcm in [0.100, 3.500]; Vd = +-10 mV ->
  [0.600, 3.495]; Vd = +-20 mV -> [1.100, 3.490]).

Numbers not taken from docs/engineering.md (Monte Carlo samples, error-budget terms) are
illustrative, there only to exercise the formatting. The module also checks its own data against
those formulas, so a typo in the fixture cannot quietly make the golden files lie.
"""

from __future__ import annotations

import math
import random

from frontcheck import formatting as fmt
from frontcheck.result import (BiasPath, CmrrResult, Headroom, HeadroomCheck, RefSource,
                                        Spread, StageResult)
from frontcheck.finding import Finding
from frontcheck.circuit import Intent, OpAmp, OpAmpModel, Resistor, Sourced, Stage, SubCircuit
from frontcheck.report.model import ProjectReport, Report
from golden_compare import difference

ROOT = "/design-repo"
SHEET = "/design-repo/boards/frontend/frontend.kicad_sch"
INAMP_SHEET = "/design-repo/boards/frontend/inamp.kicad_sch"

# In-amp operating-region constants (docs/engineering.md section 4 check values).
VREF, G1, G2 = 2.5, 100.0, 1.0
OUT_LO, OUT_HI = 0.1, 4.9          # 0.1 V from each rail of a 5 V supply
ICM_LO, ICM_HI = -0.1, 3.5


def vcm_limits(vd: float) -> tuple[float, float]:
    """Valid input common mode at differential input vd for the in-amp above.

    First-stage outputs Vo1,2 = Vcm +- (G1/2) Vd (docs/engineering.md section 3, Sedra & Smith Ex.
    2.17) must stay in [OUT_LO, OUT_HI]; the first-stage inputs Vcm +- Vd/2 in [ICM_LO, ICM_HI].
    """
    lo = max(OUT_LO + G1 / 2 * abs(vd), ICM_LO + abs(vd) / 2)
    hi = min(OUT_HI - G1 / 2 * abs(vd), ICM_HI - abs(vd) / 2)
    vout = VREF + G1 * G2 * vd          # the output stage must stay inside its swing too
    if not OUT_LO <= vout <= OUT_HI:
        return math.inf, -math.inf
    return lo, hi


def _region() -> list[tuple[float, float]]:
    # Vertices of the valid (Vcm, Vout) polygon: the bounds above are piecewise linear in
    # |Vd| = |Vout - Vref| / G, with kinks only at Vd = 0 and the output limits.
    vd_lo, vd_hi = (OUT_LO - VREF) / (G1 * G2), (OUT_HI - VREF) / (G1 * G2)
    lo0, hi0 = vcm_limits(0.0)
    lo_n, hi_n = vcm_limits(vd_lo)
    lo_p, hi_p = vcm_limits(vd_hi)
    pts = [(lo0, VREF), (lo_n, OUT_LO), (hi_n, OUT_LO), (hi0, VREF), (hi_p, OUT_HI), (lo_p, OUT_HI)]
    return [(round(x, 6), round(y, 6)) for x, y in pts]


def _samples(mean: float, sd: float, n: int, seed: int) -> list[float]:
    rng = random.Random(seed)
    return [rng.gauss(mean, sd) for _ in range(n)]


def _model() -> OpAmpModel:
    return OpAmpModel(name="rail-to-rail-cmos", aol=Sourced(1e6, "class"),
                      cmrr_db=Sourced(100.0, "class"), icm_low=Sourced(-0.1, "class"),
                      icm_high=Sourced(1.5, "class"), swing_low=Sourced(0.1, "class"),
                      swing_high=Sourced(0.1, "class"))


def diff_stage() -> tuple[Stage, StageResult]:
    r = lambda n, a, b: Resistor(n, a, b, Sourced(10e3, "value"), Sourced(0.001, "field"))
    circuit = SubCircuit(
        resistors=[r("R1", "/IN_N", "/N1"), r("R2", "/N1", "/OUT"), r("R3", "/IN_P", "/P1"),
                   r("R4", "/P1", "/REF")],
        opamps=[OpAmp("U1", "U1", "/P1", "/N1", "/OUT", "+5V", "GND", _model())],
        ports={"in_p": "/IN_P", "in_n": "/IN_N", "ref": "/REF", "out": "/OUT"},
        rails={"+5V": Sourced(5.0, "value", "net name"), "GND": Sourced(0.0, "value")})
    stage = Stage(id="U1", kind="difference", references=["R1", "R2", "R3", "R4", "U1"],
                  amplifiers=["U1"], roles={"R1": "R1", "R2": "R2", "R3": "R3", "R4": "R4"},
                  circuit=circuit, intent=Intent(target_gain=1.0, gain_tol=0.001,
                                                 source={"target_gain": "field U1"}))
    # docs/engineering.md section 5: G = 1, 10 k, Rth = 100 ohm -> 46.09 dB; Ad = 1.0025.
    result = StageResult(
        stage_id="U1",
        gain=Spread(nominal=1.0025, worst_min=0.9985, worst_max=1.0065, p_low=1.0004,
                    p_high=1.0046, samples=_samples(1.0025, 0.0007, 400, 1)),
        cmrr=CmrrResult(nominal_db=46.09, worst_db=45.2, statistical_db=45.7,
                        contributors={"REF source 100 ohm": 46.09, "R1..R4 0.1 %": 53.98},
                        samples_db=_samples(46.0, 0.15, 400, 2)),
        gain_cm=0.00497, gain_ref=0.995,
        headroom=Headroom(margin_v=None),
        ref=RefSource(net="/REF", kind="resistive", thevenin_ohms=100.0, voltage=2.5,
                      driver="R5/R6 divider", cmrr_db=46.09, gain_error=0.0025),
        bias=[BiasPath("U1 +in", "/P1", "ok", "/REF via R4")],
        # total by hand: 0.4 + 0.25 = 0.65 worst, sqrt(0.115^2 + 0.25^2) = 0.27518 RSS
        error_budget={"resistor ratio": {"worst": 0.4, "rss": 0.115},
                      "REF source resistance": {"worst": 0.25, "rss": 0.25},
                      "total": {"worst": 0.65, "rss": math.hypot(0.115, 0.25)}},
        assumptions=[])
    return stage, result


def inamp_stage() -> tuple[Stage, StageResult]:
    model = _model()
    rails = {"+5V": Sourced(5.0, "value", "net name"), "GND": Sourced(0.0, "value")}
    circuit = SubCircuit(
        resistors=[Resistor("R11", "/A1N", "/O1", Sourced(49.5e3, "value"), Sourced(0.001, "field")),
                   Resistor("R12", "/A2N", "/O2", Sourced(49.5e3, "value"), Sourced(0.001, "field")),
                   Resistor("R13", "/A1N", "/A2N", Sourced(1e3, "value"), Sourced(0.01, "default"))],
        opamps=[OpAmp("U2A", "U2", "/ECG_IN+", "/A1N", "/O1", "+5V", "GND", model),
                OpAmp("U2B", "U2", "/ECG_IN-", "/A2N", "/O2", "+5V", "GND", model),
                OpAmp("U2C", "U2", "/P3", "/N3", "/ECG_OUT", "+5V", "GND", model)],
        ports={"in_p": "/ECG_IN+", "in_n": "/ECG_IN-", "ref": "/VREF", "out": "/ECG_OUT"},
        rails=rails)
    stage = Stage(id="U2A/U2B/U2C", kind="three-opamp",
                  references=["R11", "R12", "R13", "R14", "R15", "R16", "R17", "U2"],
                  amplifiers=["U2A", "U2B", "U2C"],
                  roles={"RG": "R13", "RF1": "R11", "RF2": "R12"}, circuit=circuit,
                  intent=Intent(target_gain=100.0, input_cm=(1.0, 3.0), input_diff=(-0.02, 0.02),
                                ref_voltage=VREF, notes=["patient-connected"]))
    checks = []
    for vcm in (1.0, 3.0):
        for vd in (-0.02, 0.02):
            vo1, vo2 = vcm + G1 / 2 * vd, vcm - G1 / 2 * vd
            vout = VREF + G1 * G2 * vd
            for amp, net, v in (("U2A", "/O1", vo1), ("U2B", "/O2", vo2),
                                ("U2C", "/ECG_OUT", vout)):
                checks.append(HeadroomCheck(amp, "output", net, (vcm, vd), round(v, 9), OUT_LO,
                                            OUT_HI, round(min(v - OUT_LO, OUT_HI - v), 9)))
    margin = min(c.margin_v for c in checks)
    result = StageResult(
        stage_id="U2A/U2B/U2C",
        gain=Spread(nominal=100.0, worst_min=99.602, worst_max=100.398, p_low=99.81,
                    p_high=100.19, samples=_samples(100.0, 0.063, 600, 3)),
        # Sedra & Smith Problem 2.67 bound (1+G2)/(4t) = 500 (53.98 dB) for stage 2, times G1
        # (Sedra & Smith Problem 2.75): 93.98 dB; Gaussian 3-sigma 6 dB better (docs/engineering.md
        # sec. 2).
        cmrr=CmrrResult(nominal_db=math.inf, worst_db=93.98, statistical_db=99.99,
                        contributors={"stage-2 resistors": 93.98},
                        samples_db=_samples(112.0, 6.0, 600, 4)),
        gain_cm=0.0, gain_ref=1.0,
        headroom=Headroom(margin_v=margin, checks=checks, region=_region(),
                          box=(1.0, 3.0, -0.02, 0.02)),
        ref=RefSource(net="/VREF", kind="low-impedance", thevenin_ohms=0.0, voltage=VREF,
                      driver="U3A output"),
        bias=[BiasPath("U2A +in", "/ECG_IN+", "connector", "J1 pin 2"),
              BiasPath("U2B +in", "/ECG_IN-", "connector", "J1 pin 3")],
        error_budget={"RG tolerance": {"worst": 1.0, "rss": 0.577},
                      "RF1/RF2 tolerance": {"worst": 0.2, "rss": 0.082},
                      "stage-2 ratio": {"worst": 0.2, "rss": 0.082},
                      "total": {"worst": 1.4, "rss": 0.588}},
        assumptions=["R13 tolerance assumed 1 % (default)"])
    return stage, result


def make_report() -> Report:
    s1, r1 = diff_stage()
    s2, r2 = inamp_stage()
    worst = min(r2.headroom.checks, key=lambda c: c.margin_v)
    findings = [
        Finding(rule="ref-impedance", severity="error", stage="U1", references=["R5", "R6", "U1"],
                message="REF of U1 is driven by the R5/R6 divider (100 Ω Thevenin): CMRR "
                        "limited to 46.1 dB.",
                fix="Drive REF from a buffer (op-amp follower) or a reference with low output "
                    "impedance.",
                file=SHEET, line=412, uuid="7c1d1f3e-0000-4000-8000-000000000001",
                data={"thevenin_ohms": 100.0, "cmrr_db": 46.09}),
        Finding(rule="gain-error", severity="warning", stage="U1", references=["U1"],
                message="Gain 1.0025 is outside the declared 1 ±0.100 %.",
                fix="Buffer REF; the REF source resistance adds to R4.",
                file=SHEET, line=380, uuid="7c1d1f3e-0000-4000-8000-000000000001",
                waived="trimmed in firmware at calibration"),
        Finding(rule="headroom", severity="error", stage="U2A/U2B/U2C",
                references=["U2"],
                message=f"{worst.opamp} output reaches {fmt.volts(worst.voltage)} at Vcm = "
                        f"{fmt.volts(worst.corner[0])}, Vd = {fmt.volts(worst.corner[1], True)}; "
                        f"it can only swing down to {fmt.volts(worst.low)}.",
                fix="Raise the minimum input common mode, lower the first-stage gain, or give "
                    "the amplifier a negative supply.",
                file=INAMP_SHEET, line=97, uuid="7c1d1f3e-0000-4000-8000-000000000002",
                data={"margin_v": worst.margin_v}),
        Finding(rule="bias-return", severity="warning", stage="U2A/U2B/U2C",
                references=["J1", "U2"],
                message="U2A +in and U2B +in reach only connector J1: no DC bias return on "
                        "the board.",
                fix="Add a resistor from each input to a mid-supply reference, or declare the "
                    "source as DC-coupled.",
                file=INAMP_SHEET, line=120, uuid="7c1d1f3e-0000-4000-8000-000000000002"),
        Finding(rule="assumed-value", severity="info", stage=None, references=["R13"],
                message="R13 has no tolerance; 1 % assumed.",
                fix="Add a Tolerance field (e.g. 0.1%).",
                file=INAMP_SHEET, line=150, uuid="7c1d1f3e-0000-4000-8000-000000000003"),
    ]
    proj = ProjectReport(
        name="frontend", path="boards/frontend", root=ROOT,
        stages=[s1, s2], results={s1.id: r1, s2.id: r2}, findings=findings,
        fingerprints=[f"fp{i}" for i in range(len(findings))], baselined={"fp3"},
        notes=["R20 is marked do-not-populate; left out of the analysis."],
        near_misses=["U4: op-amp with R21/R22 looks like a difference amplifier but has no "
                     "resistor from +in to REF."],
        unsupported=[],
        cautions={"U2A/U2B/U2C": ["stage intent marks it patient-connected",
                                  "net name /ECG_IN+"]})
    return Report(projects=[proj], tool={"name": "frontcheck", "version": "0.1.0",
                                         "profile": "default", "seed": 1, "samples": 2000},
                  fail_on="error")


# -- the fixture checks its own numbers -------------------------------------------------

def test_region_matches_reference_check_values():
    # docs/engineering.md section 4 check values (derived, ngspice-confirmed).
    assert vcm_limits(0.0) == (0.1, 3.5)
    lo, hi = vcm_limits(0.010)
    assert math.isclose(lo, 0.600) and math.isclose(hi, 3.495)
    lo, hi = vcm_limits(-0.020)
    assert math.isclose(lo, 1.100) and math.isclose(hi, 3.490)
    lo, hi = vcm_limits(0.030)
    assert lo > hi          # +30 mV: no valid common mode


def test_difference_stage_numbers_match_reference():
    # docs/engineering.md section 5: G = 1, 10 k, Rth = 100 ohm -> 46.09 dB (exact, ngspice); the
    # first-order form (1+G) R4 / Rth gives 46.02 dB. Ad ~ G (1 + r/(2(1+G))).
    _, r = diff_stage()
    g, rth, r4 = 1.0, 100.0, 10e3
    assert r.cmrr.nominal_db == 46.09
    assert math.isclose(20 * math.log10((1 + g) * r4 / rth), r.cmrr.nominal_db, abs_tol=0.1)
    assert math.isclose(g * (1 + (rth / r4) / (2 * (1 + g))), r.gain.nominal, rel_tol=1e-9)


def test_inamp_worst_margin_is_the_first_stage_swing():
    # Vcm = 1 V, Vd = -20 mV: Vo1 = 1 - 50 * 0.02 = 0 V, 0.1 V below the lowest swing.
    _, r = inamp_stage()
    assert math.isclose(r.headroom.margin_v, -0.1, abs_tol=1e-9)
    worst = min(r.headroom.checks, key=lambda c: c.margin_v)
    assert worst.node == "output" and worst.opamp in ("U2A", "U2B")


# -- golden files ---------------------------------------------------------------------------

GOLDEN = __import__("pathlib").Path(__file__).resolve().parents[1] / "golden"


def normalise(text: str) -> str:
    """Remove what changes between releases and machines (the tool version)."""
    import frontcheck
    return text.replace(f'"version": "{frontcheck.__version__}"', '"version": "VERSION"') \
               .replace(f"frontcheck {frontcheck.__version__}", "frontcheck VERSION")


def check_golden(name: str, text: str) -> None:
    """Compare with tests/golden/<name>; FRONTCHECK_UPDATE_GOLDEN=1 rewrites the file (review
    the diff before committing it)."""
    import os
    path = GOLDEN / name
    text = normalise(text)
    if os.environ.get("FRONTCHECK_UPDATE_GOLDEN") == "1" or not path.exists():
        if os.environ.get("FRONTCHECK_UPDATE_GOLDEN") != "1":
            raise AssertionError(f"golden file {path} missing; run with FRONTCHECK_UPDATE_GOLDEN=1")
        path.parent.mkdir(exist_ok=True)
        path.write_text(text, encoding="utf-8")
    expected = path.read_text(encoding="utf-8")
    # numbers within the tolerance stated in golden_compare: golden files hold across machines
    # and numpy/BLAS builds
    diff = difference(text, expected)
    assert diff is None, f"{name} differs from its golden file: {diff}"

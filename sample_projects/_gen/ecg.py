"""Sample 5: biopotential (ECG-style) front end on 3.3 V.

Input RC filter per leg (R1/R2 10k, Cc C1 = 1n and C2 = 4.7n: mismatched, Cd C3 = 10n),
10M bias resistors R16/R17 to VREF, discrete three-op-amp in-amp U1A/U1B/U2 with RG split into
R5 + R6 (2.49k each) whose centre tap CM feeds the driven-reference amplifier U3B (gain -10
around VREF) that drives the RL electrode through R15. VREF = 1.65 V buffered by U3A.

G1 = 1 + (R3 + R4)/(R5 + R6) = 1 + 20k/4.98k = 5.016, G2 = 1.
"""

from __future__ import annotations

from .common import cap, opamp, res, targets_note
from .schematic import Project, Sheet

NAME = "ecg-frontend"
RR = "rail-to-rail-cmos"
TARGETS = {"Target Gain": "5 ±1%", "Min CMRR": "50 dB", "Input CM": "1.4..1.9 V", "Input Diff": "±250 mV",
           "Caution": "patient-connected", "Band": "0.5..150 Hz", "Temp Range": "10..45 °C",
           "CMRR At": "50 Hz", "Error Budget": "50 uV RTI"}


def build() -> Project:
    sh = Sheet(f"{NAME}.kicad_sch", "ECG front end: electrodes to in-amp", offset=(6, 0))

    # Electrodes and input filter.
    j1 = sh.add("CONN_1x03", "J1", "ELECTRODES", (14, 40), text_at="left")
    r1 = res(sh, "R1", "10k", "1%", (34, 36), horizontal=True)
    r2 = res(sh, "R2", "10k", "1%", (34, 60), horizontal=True)
    sh.wire(j1["1"], (20, 40), (20, 36), r1["1"])
    sh.label("RA", (22, 36))
    sh.wire(j1["2"], (22, 42))
    sh.label("RL", (22, 42))
    sh.wire(j1["3"], (20, 44), (20, 60), r2["1"])
    sh.label("LA", (22, 60))
    c1 = cap(sh, "C1", "1n", "5%", (44, 40))
    c3 = cap(sh, "C3", "10n", "5%", (52, 48))
    c2 = cap(sh, "C2", "4.7n", "5%", (44, 64))
    r16 = res(sh, "R16", "10M", "1%", (60, 40))
    r17 = res(sh, "R17", "10M", "1%", (60, 64))
    u1a = opamp(sh, "U1", RR, (96, 38), unit=1)
    u1b = opamp(sh, "U1", RR, (96, 82), unit=2, mirror="x", text="below")
    sh.wire(r1["2"], u1a["3"])
    sh.label("INP", (64, 36))
    sh.wire(r2["2"], (70, 60), (70, 84), u1b["5"])
    sh.label("INN", (72, 84))
    sh.tap(c1["1"])
    sh.power("GND", c1["2"])
    sh.wire((52, 36), c3["1"])
    sh.wire(c3["2"], (52, 60))
    sh.tap(c2["1"])
    sh.power("GND", c2["2"])
    sh.tap(r16["1"])
    sh.wire(r16["2"], (60, 46))
    sh.label("VREF", (60, 46))
    sh.tap(r17["1"])
    sh.wire(r17["2"], (60, 70))
    sh.label("VREF", (60, 70))

    # First stage with split RG; the centre tap is the common-mode sense.
    r3 = res(sh, "R3", "10k", "0.1%", (96, 46), horizontal=True, text="below")
    r5 = res(sh, "R5", "2.49k", "0.1%", (80, 52))
    r6 = res(sh, "R6", "2.49k", "0.1%", (80, 64))
    r4 = res(sh, "R4", "10k", "0.1%", (96, 74), horizontal=True)
    sh.wire(u1a["2"], (80, 40), (80, 46), r3["1"])
    sh.wire((80, 46), r5["1"])
    sh.wire(r5["2"], r6["1"])
    sh.wire((80, 58), (76, 58))
    sh.label("CM", (76, 58), angle=180)
    sh.wire(r6["2"], (80, 74), r4["1"])
    sh.wire((80, 74), (80, 80), u1b["6"])
    sh.wire(u1a["1"], (106, 38), (106, 46), r3["2"])
    sh.wire(u1b["7"], (106, 82), (106, 74), r4["2"])

    # Difference stage.
    u2 = opamp(sh, "U2", RR, (136, 60), dual=False, text=(3.81, -7.62), justify="left", targets=TARGETS)
    r9 = res(sh, "R9", "10k", "0.1%", (118, 58), horizontal=True)
    r7 = res(sh, "R7", "10k", "0.1%", (118, 62), horizontal=True, text="below")
    r10 = res(sh, "R10", "10k", "0.1%", (126, 48), text="left")
    r8 = res(sh, "R8", "10k", "0.1%", (136, 72), horizontal=True, text="below")
    sh.wire((106, 38), (110, 38), (110, 58), r9["1"])
    sh.wire((106, 82), (110, 82), (110, 62), r7["1"])
    sh.wire(r9["2"], u2["3"])
    sh.wire(r10["2"], (126, 58))
    sh.wire(r10["1"], (126, 42))
    sh.label("VREF", (126, 42))
    sh.wire(r7["2"], u2["2"])
    sh.wire((127, 62), (127, 72), r8["1"])
    sh.wire(r8["2"], (146, 72), (146, 60))
    j3 = sh.add("CONN_1x02", "J3", "TO ADC", (170, 60), mirror="y", text_at="right")
    sh.wire(u2["6"], j3["1"])
    sh.label("OUT", (150, 60))
    sh.wire(j3["2"], (164, 62), (164, 65))
    sh.power("GND", (164, 65))
    sh.power("+3V3", u2["7"])
    sh.power("GND", u2["4"])

    # Mid-supply reference, buffered.
    r11 = res(sh, "R11", "100k", "0.1%", (30, 104), text="left")
    r12 = res(sh, "R12", "100k", "0.1%", (30, 116), text="left")
    c4 = cap(sh, "C4", "100n", "10%", (38, 116))
    sh.power("+3V3", r11["1"])
    sh.wire(r11["2"], r12["1"])
    sh.power("GND", r12["2"])
    sh.power("GND", c4["2"])
    u3a = opamp(sh, "U3", RR, (60, 112), unit=1)
    sh.wire((30, 110), u3a["3"])
    sh.wire((38, 110), c4["1"])
    sh.label("VMID", (42, 110))
    sh.wire(u3a["2"], (52, 114), (52, 122), (70, 122), (70, 112))
    sh.wire(u3a["1"], (76, 112))
    sh.label("VREF", (76, 112))

    # Driven reference: -10 x the common mode around VREF, to the RL electrode.
    u3b = opamp(sh, "U3", RR, (120, 118), unit=2, mirror="x", text=(3.81, 7.62), justify="left")
    r13 = res(sh, "R13", "100k", "1%", (106, 116), horizontal=True)
    r14 = res(sh, "R14", "1M", "1%", (120, 106), horizontal=True)
    c5 = cap(sh, "C5", "10n", "10%", (120, 96), horizontal=True)
    r15 = res(sh, "R15", "390k", "1%", (138, 118), horizontal=True)
    sh.wire((100, 116), r13["1"])
    sh.label("CM", (100, 116))
    sh.wire(r13["2"], u3b["6"])
    sh.wire((112, 116), (112, 106), r14["1"])
    sh.wire(r14["2"], (130, 106), (130, 118))
    sh.wire((112, 106), (112, 96), c5["1"])
    sh.wire(c5["2"], (130, 96), (130, 106))
    sh.wire(u3b["5"], (112, 120), (112, 124))
    sh.label("VREF", (112, 124))
    sh.wire(u3b["7"], r15["1"])
    sh.label("RLD", (131, 118))
    sh.wire(r15["2"], (148, 118))
    sh.label("RL", (148, 118))

    # 3.3 V in, decoupling.
    j2 = sh.add("CONN_1x02", "J2", "3V3 IN", (154, 30), text_at="left")
    u1c = opamp(sh, "U1", RR, (176, 38), unit=3, text="left")
    u3c = opamp(sh, "U3", RR, (188, 38), unit=3, text="left")
    c6 = cap(sh, "C6", "100n", "10%", (196, 38))
    c7 = cap(sh, "C7", "100n", "10%", (204, 38))
    sh.wire(j2["1"], (204, 30), c7["1"])
    sh.wire((162, 28), (162, 30))
    sh.power("+3V3", (162, 28))
    sh.wire((170, 28), (170, 30))
    sh.flag((170, 28))
    for p in (u1c["8"], u3c["8"], c6["1"]):
        sh.wire((p[0], 30), p)
    sh.wire(j2["2"], (159, 32), (159, 46), (204, 46), c7["2"])
    for p in (u1c["4"], u3c["4"], c6["2"]):
        sh.wire(p, (p[0], 46))
    sh.wire((164, 46), (164, 48))
    sh.power("GND", (164, 48))
    sh.wire((170, 44), (170, 46))
    sh.flag((170, 44))
    sh.note("C6 decouples U1, C7 decouples U2 and U3", (154, 54))

    sh.note(targets_note("U2", TARGETS), (170, 90))
    sh.note("CAUTION: frontcheck checks signal-chain design rules, not patient safety\n"
            "or isolation. Follow the applicable standards (e.g. IEC 60601-1) and\n"
            "licensed practice for anything connected to a person.", (14, 140))
    return Project(NAME, sh)


README = """\\
# ECG front end: electrodes to in-amp (sample 5)

> **Caution.** frontcheck checks signal-chain design rules, not patient safety or isolation.
> Anything connected to a person must follow the applicable standards (e.g. IEC 60601-1) and
> licensed practice: isolation, leakage currents, defibrillation protection and risk
> management are outside what this tool looks at. This sample is an invented teaching circuit,
> not a medical device design.

**Scenario (invented).** The Lanthorn College teaching lab builds *PulseBench*, a
three-electrode heart-signal demonstrator powered from an isolated 3.3 V module. Right arm
(RA) and left arm (LA) electrodes feed a discrete three-op-amp instrumentation amplifier; the
common mode sensed at the centre of the split gain resistor is inverted and driven back into
the right-leg (RL) electrode to hold the body near mid-supply.

**Circuit.**
- J1: RA, RL, LA. Input RC filter per leg: series R1 (RA) and R2 (LA), 10k 1 %; common-mode
  capacitors C1 (RA leg, 1 nF) and C2 (LA leg, 4.7 nF); differential capacitor C3 (10 nF)
  across `INP`/`INN`. R16, R17 (10M) return both inputs to `VREF`.
- First stage U1A/U1B (class `rail-to-rail-cmos`), feedback R3, R4 = 10k; RG split into
  R5 + R6 = 2 x 2.49k (0.1 %) with centre tap `CM`: G1 = 1 + 20k/4.98k = 5.016.
- Difference stage U2 with R7 = R8 = R9 = R10 = 10k (0.1 %), output `OUT` to J3.
- `VREF` = 1.65 V from R11/R12 (100k/100k) and C4, buffered by U3A.
- Driven reference U3B: R13 = 100k from `CM`, R14 = 1M with C5 = 10 nF in feedback, + input
  at `VREF`: -10 x the common mode, through R15 = 390k (current limit) to RL.

**Declared targets** (fields on U2): `Target Gain` = `5 ±1%`, `Min CMRR` = `50 dB` (the
in-amp alone at DC; the driven reference adds its loop gain against mains common mode),
`Input CM` = `1.4..1.9 V`, `Input Diff` = `±250 mV` (electrode offset included),
`Caution` = `patient-connected`, `Band` = `0.5..150 Hz` (the diagnostic ECG band), `Temp
Range` = `10..45 °C`, `CMRR At` = `50 Hz` (mains), `Error Budget` = `50 uV RTI`.

**What goes wrong.** The input filter's legs do not match: C1 = 1 nF on RA but C2 = 4.7 nF on
LA (a reel mix-up), so each leg has its own common-mode corner (15.9 kHz vs 3.4 kHz) and mains
common mode is converted into a differential signal before any amplifier can reject it. With
R = 10k, C3 = 10 nF and the 10M returns, 1 V of 50 Hz common mode becomes 11.6 mV differential
(-39 dB; zero with matched capacitors), ten times an ECG's amplitude. C3 is also less than
10 x the larger Cc. Everything after the filter is fine: gain 5.016 (+0.3 %), resistor-limited
CMRR >= 54 dB x 5 = 68 dB at DC (with the class's 60 dB op-amps, above 50 dB in the worst
case), outputs within 0.40..2.90 V on 3.3 V. R13 loads the centre tap: at the tolerance corners
it turns common mode into differential signal, so it is varied with the stage (with U3B and its
feedback R14, which hold R13's far end at `VREF`): worst CMRR 51.5 dB, resistors alone 66.8 dB.

**Judged at 50 Hz.** With `CMRR At` = `50 Hz` the minimum is judged where mains is: the
mismatched legs bring the stage's worst-case CMRR at 50 Hz down to about 37 dB, below the
declared 50 dB (at DC it is 52 dB), so `cmrr-budget` reports it as well as `input-filter`.

**Error budget.** 50 µV referred to the input is an ECG's noise-level budget; the class's offset
(12 mV RTI) and the CMRR term at the declared common mode spend it many times over, so noise
and drift are listed as requirements with no value that fits, instead of a guessed bound.

## Expected findings

Listed: findings at warning level or above, one per line as `- <rule id>: <references>`
(component references as in KiCad's netlist). Info-level notes (numbers taken from a generic
class, the numbers of checks that pass) are not listed.

- cmrr-budget: R3, R4, R5, R6, R7, R8, R9, R10, U1, U2
- input-filter: R1, R2, C1, C2, C3

## Expected ERC errors

None.
"""

"""Sample 1: bench load-cell scale, discrete three-op-amp in-amp on a single 5 V supply.

Bridge 4 x 350 ohm from +5V, first stage U1A/U1B with RG = R6, difference stage U2 with four
matched 10k 0.1 % resistors, REF from a 100k/100k divider buffered by U3.

Gain: G1 = 1 + (R5 + R7)/R6 = 1 + 20k/100 = 201, G2 = R9/R8 = 1 -> 201.
Headroom at the declared box (Vcm 2.4..2.6 V, Vd +-10 mV): first-stage outputs
Vcm +- 201 x 10 mV / 2 = 1.395..3.605 V; U2 inputs (Vo1 + 2.5)/2 = 1.95..3.05 V; output
2.5 +- 2.01 V = 0.49..4.51 V: all inside 0.1..4.9 V.
"""

from __future__ import annotations

from .common import cap, opamp, res, targets_note
from .schematic import Project, Sheet

NAME = "bench-scale"
RR = "zero-drift"
TARGETS = {"Target Gain": "201 ±1%", "Min CMRR": "80 dB", "Input CM": "2.4..2.6 V", "Input Diff": "±10 mV",
           "Band": "0.1..10 Hz", "Temp Range": "10..40 °C", "CMRR At": "50 Hz", "Error Budget": "2 % FS"}


def build() -> Project:
    sh = Sheet(f"{NAME}.kicad_sch", "Bench scale: load-cell front end")

    # Load cell, drawn as its four gauges.
    sh.power("+5V", (30, 24))
    sh.wire((30, 24), (30, 26))
    r1 = res(sh, "R1", "350", "0.1%", (24, 30))
    r2 = res(sh, "R2", "350", "0.1%", (24, 42))
    r3 = res(sh, "R3", "350", "0.1%", (36, 30))
    r4 = res(sh, "R4", "350", "0.1%", (36, 42))
    sh.wire(r1["1"], r3["1"])
    sh.wire(r1["2"], r2["1"])
    sh.wire(r3["2"], r4["1"])
    sh.wire(r2["2"], r4["2"])
    sh.wire((30, 46), (30, 48))
    sh.power("GND", (30, 48))
    sh.note("Load cell\n4 x 350 ohm, 2 mV/V", (12, 14))

    # First stage.
    u1a = opamp(sh, "U1", RR, (60, 38), unit=1)
    u1b = opamp(sh, "U1", RR, (60, 68), unit=2, mirror="x", text="below")
    r5 = res(sh, "R5", "10k", "0.1%", (60, 46), horizontal=True, text="below")
    r6 = res(sh, "R6", "100", "0.1%", (50, 54), text="left")
    r7 = res(sh, "R7", "10k", "0.1%", (60, 62), horizontal=True)
    sh.wire((36, 36), u1a["3"])
    sh.label("IN+", (42, 36))
    sh.wire((24, 36), (18, 36), (18, 70), u1b["5"])
    sh.label("IN-", (42, 70))
    sh.wire(u1a["2"], (50, 40), (50, 46), r5["1"])
    sh.wire((50, 46), r6["1"])
    sh.wire(r6["2"], (50, 62), r7["1"])
    sh.wire((50, 62), (50, 66), u1b["6"])
    sh.wire(u1a["1"], (70, 38), (70, 46), r5["2"])
    sh.wire(u1b["7"], (70, 68), (70, 62), r7["2"])

    # Difference stage.
    u2 = opamp(sh, "U2", RR, (104, 52), dual=False, text=(3.81, -7.62), justify="left", targets=TARGETS)
    r10 = res(sh, "R10", "10k", "0.1%", (86, 50), horizontal=True)
    r8 = res(sh, "R8", "10k", "0.1%", (86, 54), horizontal=True, text="below")
    r11 = res(sh, "R11", "10k", "0.1%", (94, 44), text="left")
    r9 = res(sh, "R9", "10k", "0.1%", (104, 64), horizontal=True, text="below")
    sh.wire((70, 38), (76, 38), (76, 50), r10["1"])
    sh.label("VO1", (77, 50))
    sh.wire((70, 68), (76, 68), (76, 54), r8["1"])
    sh.label("VO2", (77, 54))
    sh.wire(r10["2"], u2["3"])
    sh.wire(r11["2"], (94, 50))
    sh.wire(r11["1"], (94, 38))
    sh.label("VREF", (94, 38))
    sh.wire(r8["2"], u2["2"])
    sh.wire((95, 54), (95, 64), r9["1"])
    sh.wire(r9["2"], (114, 64), (114, 52))
    sh.wire(u2["6"], (124, 52), (124, 70), (131, 70))
    sh.label("OUT", (117, 52))
    sh.power("+5V", u2["7"])
    sh.power("GND", u2["4"])

    # Mid-supply reference, buffered.
    sh.power("+5V", (76, 74))
    r12 = res(sh, "R12", "100k", "0.1%", (76, 80), text="left")
    r13 = res(sh, "R13", "100k", "0.1%", (76, 92), text="left")
    c1 = cap(sh, "C1", "100n", "10%", (84, 92))
    sh.wire((76, 74), r12["1"])
    sh.wire(r12["2"], r13["1"])
    sh.power("GND", r13["2"])
    sh.power("GND", c1["2"])
    u3 = opamp(sh, "U3", RR, (104, 88), dual=False, text=(3.81, -7.62), justify="left")
    sh.wire((76, 86), u3["3"])
    sh.wire((84, 86), c1["1"])
    sh.label("VMID", (87, 86))
    sh.wire(u3["2"], (96, 90), (96, 100), (114, 100), (114, 88))
    sh.wire(u3["6"], (126, 88), (126, 72), (131, 72))
    sh.label("VREF", (117, 88))
    sh.power("+5V", u3["7"])
    sh.power("GND", u3["4"])

    # Output connector to the ADC board.
    j2 = sh.add("CONN_1x03", "J2", "ADC", (134, 70), mirror="y", text_at="right")
    sh.wire(j2["3"], (129, 74), (129, 77))
    sh.power("GND", (129, 77))
    sh.note("J2: 1 OUT, 2 VREF, 3 GND", (136, 78))

    # Supply entry and decoupling.
    j1 = sh.add("CONN_1x02", "J1", "5V IN", (150, 30), text_at="left")
    sh.wire(j1["1"], (192, 30), (192, 34))
    sh.wire((156, 28), (156, 30))
    sh.power("+5V", (156, 28))
    sh.wire((166, 28), (166, 30))
    sh.flag((166, 28))
    u1c = opamp(sh, "U1", RR, (172, 38), unit=3, text="left")
    c2 = cap(sh, "C2", "100n", "10%", (180, 38))
    c3 = cap(sh, "C3", "100n", "10%", (192, 38))
    sh.wire((172, 30), u1c["8"])
    sh.wire((180, 30), c2["1"])
    sh.wire(j1["2"], (155, 32), (155, 46), (192, 46), c3["2"])
    sh.wire(u1c["4"], (172, 46))
    sh.wire(c2["2"], (180, 46))
    sh.wire((160, 46), (160, 48))
    sh.power("GND", (160, 48))
    sh.wire((166, 44), (166, 46))
    sh.flag((166, 44))
    sh.note("C2 decouples U1, C3 decouples U2 and U3", (150, 54))

    sh.note(targets_note("U2", TARGETS), (14, 112))
    return Project(NAME, sh)

README = """\
# Bench scale: load-cell front end (sample 1)

**Scenario (invented).** Tallow & Finch Workshop builds the *Quillmark B-5*, a bench scale for
weighing glazes and pigments up to 5 kg. A single-point load cell (a full bridge of four
350 ohm gauges, 2 mV/V) is excited from the 5 V rail and read by a discrete three-op-amp
instrumentation amplifier that feeds the ADC board through J2. Why a zero-drift class:
microvolt offsets matter at 10 mV full scale, and the bridge keeps the inputs at mid-supply.

**Circuit.**
- Bridge R1-R4 (350 ohm, 0.1 %) from +5V: outputs IN+ (R3/R4) and IN- (R1/R2), both near 2.5 V.
- First stage U1A/U1B (class `zero-drift`: the usual choice for a DC bridge), feedback R5, R7 = 10k, gain resistor
  R6 = 100 ohm: G1 = 1 + 20k/100 = 201.
- Difference stage U2 with R8 = R9 = R10 = R11 = 10k (0.1 %): G2 = 1, output `OUT`.
- REF: divider R12/R13 (100k/100k) with C1, buffered by U3 (follower) -> `VREF` at 2.5 V.
- Supply: J1 (5 V in), decoupling C2, C3.

**Declared targets** (fields on U2): `Target Gain` = `201 ±1%`, `Min CMRR` = `80 dB`,
`Input CM` = `2.4..2.6 V`, `Input Diff` = `±10 mV`. Op-amps carry `Op-amp class` =
`zero-drift` (generic class: inputs from V- to 1.5 V below V+, outputs to 0.1 V from the
rails); every resistor and capacitor carries a `Tolerance` field. Budget intent, also on U2:
`Band` = `0.1..10 Hz` (a weighing settles in a second), `Temp Range` = `10..40 °C` (a workshop
bench), `CMRR At` = `50 Hz` (mains), `Error Budget` = `2 % FS`.

**Error budget** (`frontcheck check` prints it under the stage). Gain (0.47 % worst), CMRR at
the declared common mode (0.78 %) and the class's offset (0.50 %) are computed from the
drawing and the chosen class; the class gives no noise density, offset drift or resistor TCR,
so noise and drift are requirements: in the 0.24 % FS they share, the op-amps need en below
about 0.59 µV/rtHz and in below about 8.3 nA/rtHz (the noise share split between the two
missing densities), the resistors a TCR below about 6 ppm/K and the op-amps an offset drift
below about 0.2 µV/K.

**What the front end must achieve, and why it does.**
- Gain: 201 x 1 = 201 nominal; 0.1 % parts move G1 by at most about 0.2 % and G2 by about
  0.2 %, well inside ±1 %.
- CMRR: stage 2 worst case (1 + G2)/(4 t) = 2/0.004 = 500 (54 dB), times G1 = 201 -> about
  100 dB from the resistors; the op-amps' own CMRR (100 dB for the class) adds to that in
  the worst case, still above 80 dB. The REF buffer keeps the REF source impedance near zero.
- Headroom at the declared box (single 5 V, outputs usable 0.1..4.9 V): first-stage outputs
  Vcm ± 201 x 10 mV / 2 = 1.395..3.605 V, U2 inputs 1.95..3.05 V, output 2.5 ± 2.01 V =
  0.49..4.51 V; every op-amp input stays between 1.95 and 3.05 V, inside the class's
  0..3.5 V input range.
- Every input has a DC path (the bridge), REF is driven, nothing is assumed.

## Expected findings

Listed: findings at warning level or above, one per line as `- <rule id>: <references>`
(component references as in KiCad's netlist). Info-level notes (numbers taken from a generic
class, the numbers of checks that pass) are not listed.

None: this is the clean reference design.

## Expected ERC errors

None.
"""

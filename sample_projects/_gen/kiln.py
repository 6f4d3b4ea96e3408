"""Sample 2: kiln thermocouple logger, integrated in-amp with AC-coupled inputs (no bias
return) and REF from an unbuffered divider.

RG = R1 = 1.02k: G = 1 + 50k/RG = 50.0 with the internal 2 x 25k of the generic in-amp class.
REF = 5 V x 10k/50.2k = 0.996 V through Rth = 40.2k || 10k = 8.0k.
"""

from __future__ import annotations

from .common import cap, res, targets_note
from .schematic import Project, Sheet

NAME = "kiln-logger"
TARGETS = {"Target Gain": "50 ±1%", "Min CMRR": "90 dB", "Input CM": "-0.5..0.5 V", "Input Diff": "-2..53 mV",
           "Band": "DC..10 Hz", "Temp Range": "0..70 °C", "CMRR At": "50 Hz", "Error Budget": "0.5 % FS"}
# Part data of the in-amp (G = 1 + K/RG, internal difference stage of 10k), as symbol fields.
PART = {"Part Class": "generic-inamp", "Gain K": "50k", "Stage2 R": "10k"}


def build() -> Project:
    sh = Sheet(f"{NAME}.kicad_sch", "Kiln logger: thermocouple input")

    # Thermocouple in, through DC-blocking capacitors.
    j1 = sh.add("CONN_1x02", "J1", "THERMOCOUPLE", (40, 44), text_at="left")
    c1 = cap(sh, "C1", "1u", "5%", (64, 44), horizontal=True)
    c2 = cap(sh, "C2", "1u", "5%", (64, 56), horizontal=True, text="below")
    sh.wire(j1["1"], c1["1"])
    sh.label("TC+", (46, 44))
    sh.wire(j1["2"], (50, 46), (50, 56), c2["1"])
    sh.label("TC-", (52, 56))

    # In-amp, gain 50.
    u1 = sh.add("INAMP", "U1", "generic in-amp", (90, 50), fields={**PART, **TARGETS}, text_at=(8.89, -7.62),
                justify="left")
    r1 = res(sh, "R1", "1.02k", "0.1%", (79, 50), text="left")
    sh.wire(c1["2"], u1["3"])
    sh.label("IN+", (71, 44))
    sh.wire(c2["2"], u1["2"])
    sh.label("IN-", (71, 56))
    sh.wire(u1["1"], r1["1"])
    sh.wire(u1["8"], r1["2"])
    sh.power("+5V", u1["7"])
    sh.power("-5V", u1["4"])

    # REF from a plain divider: 0.496 V behind 9.0 kohm.
    sh.wire(u1["5"], (94, 70), (104, 70))
    sh.label("REF", (97, 70))
    r2 = res(sh, "R2", "90.9k", "1%", (104, 64))
    r3 = res(sh, "R3", "10k", "1%", (104, 76))
    sh.power("+5V", r2["1"])
    sh.wire(r2["2"], r3["1"])
    sh.power("GND", r3["2"])

    # Output to the logger's ADC.
    j2 = sh.add("CONN_1x02", "J2", "ADC", (133, 50), mirror="y", text_at="right")
    sh.wire(u1["6"], j2["1"])
    sh.label("TEMP", (110, 50))
    sh.wire(j2["2"], (127, 52), (127, 55))
    sh.power("GND", (127, 55))

    # +-5 V from the logger's supply board, decoupling.
    j3 = sh.add("CONN_1x03", "J3", "±5V IN", (24, 84), text_at="left")
    c3 = cap(sh, "C3", "100n", "10%", (52, 88))
    c4 = cap(sh, "C4", "100n", "10%", (58, 96))
    sh.wire(j3["1"], c3["1"])
    sh.wire((34, 82), (34, 84))
    sh.power("+5V", (34, 82))
    sh.wire((42, 82), (42, 84))
    sh.flag((42, 82))
    sh.wire(j3["2"], (31, 86), (31, 92), c3["2"], c4["1"])
    sh.wire((36, 92), (36, 94))
    sh.power("GND", (36, 94))
    sh.wire((42, 90), (42, 92))
    sh.flag((42, 90))
    sh.wire(j3["3"], (29, 88), (29, 100), c4["2"])
    sh.wire((36, 100), (36, 102))
    sh.power("-5V", (36, 102))
    sh.wire((42, 98), (42, 100))
    sh.flag((42, 98))
    sh.note("C3, C4 decouple U1", (64, 92))

    sh.note("Type K thermocouple, kiln up to 1300 °C: about -2..53 mV\n"
            "(cold-junction sensor on another sheet of the logger, not shown)", (12, 16))
    sh.note(targets_note("U1", TARGETS), (110, 80))
    return Project(NAME, sh)


README = """\\
# Kiln logger: thermocouple input (sample 2)

**Scenario (invented).** Emberline Studio Supply sells the *KilnNote 1*, a four-hour
firing logger that clips onto a pottery kiln's spy hole and records the chamber temperature
from a type K thermocouple (about 41 uV/°C, so -2..53 mV from a cold kiln to 1300 °C). The
logger board runs from ±5 V. An integrated in-amp U1 (a `generic in-amp`, G = 1 + 50k/RG)
amplifies the thermocouple by 50 and offsets the output to about 0.5 V for the ADC.

**Circuit.**
- J1 thermocouple, C1 and C2 (1 uF film) in series with each lead: the designer added them
  to block a DC offset seen on the bench.
- U1 `generic in-amp`, RG = R1 = 1.02k (0.1 %): G = 1 + 50k/1.02k = 50.0.
- REF from the divider R2/R3 (90.9k/10k, 1 %) straight off +5V: 0.496 V, unbuffered.
- Output `TEMP` to J2; ±5 V in on J3, decoupling C3, C4.

**Declared targets** (fields on U1): `Target Gain` = `50 ±1%`, `Min CMRR` = `90 dB`,
`Input CM` = `-0.5..0.5 V`, `Input Diff` = `-2..53 mV`. Part data, also as fields on U1:
`Part Class` = `generic-inamp`, `Gain K` = `50k` (G = 1 + K/RG), `Stage2 R` = `10k` (the
internal difference stage, so 10k on the REF side). Budget intent: `Band` = `DC..10 Hz`,
`Temp Range` = `0..70 °C` (beside a kiln), `CMRR At` = `50 Hz`, `Error Budget` = `0.5 % FS`.

**Error budget.** The unbuffered REF divider alone costs about 21 % of full scale, so the known
terms spend the 0.5 % budget many times over: noise and drift are listed as requirements with
no value that fits, instead of a guessed bound.

**What goes wrong.**
- No bias return: the thermocouple floats, and C1/C2 block every DC path, so the in-amp's
  input bias currents charge C1 and C2 until the inputs sit at a rail. Nothing in this sheet
  ties IN+ or IN- to a defined potential (the usual fix: a resistor from each input, or from
  the thermocouple's negative lead, to ground, and no series capacitors for a DC signal).
- REF source impedance: the divider presents Rth = 90.9k || 10k = 9.0 kohm to the REF pin,
  in series with the in-amp's internal 10k REF-side resistor. That unbalances the internal
  difference stage. Solving it with 19k in place of 10k on the REF side: stage-2 Acm =
  (10 x 19 - 10 x 10)/(10 x 29) = 0.31 and Ad = 1.155, so CMRR = 50 x 1.155/0.31 = 186
  (45 dB; the first-order formula of docs/engineering.md sec. 5, which assumes Rth << Rint, says
  41 dB) against the declared 90 dB, and the gain is 50 x 1.155 = 57.8, 15.5 % high. A buffer
  between the divider and REF is the fix.
- Headroom follows from that gain: the output reaches 0.496 + 57.8 x 53 mV = 3.56 V, above
  the class's output limit of 3.5 V on ±5 V (3.58 V at the worst tolerance corner).
- The divider's own 1 % tolerances move REF's resistance and voltage: R2 and R3 are varied with
  the stage, worst-case gain 57.34 to 58.18.

## Expected findings

Listed: findings at warning level or above, one per line as `- <rule id>: <references>`
(component references as in KiCad's netlist). Info-level notes (numbers taken from a generic
class, the numbers of checks that pass) are not listed.

- bias-return: U1, C1
- bias-return: U1, C2
- ref-impedance: U1, R2, R3
- cmrr-budget: R1, U1
- gain-error: U1, R1
- headroom: U1

## Expected ERC errors

None.
"""

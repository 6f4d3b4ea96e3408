"""Sample 2: kiln thermocouple logger, integrated in-amp with AC-coupled inputs (no bias
return) and REF from an unbuffered divider.

RG = R1 = 1.02k: G = 1 + 50k/RG = 50.0 with the internal 2 x 25k of the generic in-amp class.
REF = 5 V x 10k/50.2k = 0.996 V through Rth = 40.2k || 10k = 8.0k.
"""

from __future__ import annotations

from .common import cap, res, targets_note
from .schematic import Project, Sheet

NAME = "kiln-logger"
TARGETS = {"Target Gain": "50 ±1%", "Min CMRR": "90 dB", "Input CM": "-0.5..0.5 V", "Input Diff": "-2..53 mV"}


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
    u1 = sh.add("INAMP", "U1", "generic in-amp", (90, 50), fields=TARGETS, text_at=(8.89, -7.62),
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

    # REF from a plain divider: 0.996 V behind 8.0 kohm.
    sh.wire(u1["5"], (94, 70), (104, 70))
    sh.label("REF", (97, 70))
    r2 = res(sh, "R2", "40.2k", "1%", (104, 64))
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
amplifies the thermocouple by 50 and offsets the output to about 1 V for the ADC.

**Circuit.**
- J1 thermocouple, C1 and C2 (1 uF film) in series with each lead: the designer added them
  to block a DC offset seen on the bench.
- U1 `generic in-amp`, RG = R1 = 1.02k (0.1 %): G = 1 + 50k/1.02k = 50.0.
- REF from the divider R2/R3 (40.2k/10k, 1 %) straight off +5V: 0.996 V, unbuffered.
- Output `TEMP` to J2; ±5 V in on J3, decoupling C3, C4.

**Declared targets** (fields on U1): `Target Gain` = `50 ±1%`, `Min CMRR` = `90 dB`,
`Input CM` = `-0.5..0.5 V`, `Input Diff` = `-2..53 mV`.

**What goes wrong.**
- No bias return: the thermocouple floats, and C1/C2 block every DC path, so the in-amp's
  input bias currents charge C1 and C2 until the inputs sit at a rail. Nothing in this sheet
  ties IN+ or IN- to a defined potential (the usual fix: a resistor from each input, or from
  the thermocouple's negative lead, to ground, and no series capacitors for a DC signal).
- REF source impedance: the divider presents Rth = 40.2k || 10k = 8.0 kohm to the REF pin,
  in series with the in-amp's internal REF-side resistor. That unbalances the internal
  difference stage: CMRR falls to roughly (1 + G2) x Rint/Rth x G1, about 40-55 dB for an
  internal resistor of 10k-50k, and the gain moves by Rth/(4 Rint), several percent. A
  buffer between the divider and REF is the fix.

## Expected findings

- bias-return: U1, C1, C2
- ref-impedance: U1, R2, R3
- cmrr-budget: U1
- gain-error: U1

## Expected ERC errors

None.
"""

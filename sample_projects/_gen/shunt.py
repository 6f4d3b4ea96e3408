"""Sample 3: solar charge controller battery-shunt monitor, a discrete difference amplifier
that divides the bus common mode down to a 5 V op-amp.

R2 = R4 = 100k in, R3 = 10.0k feedback, R5 = 10.2k to REF (should be 10.0k): a 2 % ratio error.
REF = 5 V x 10k/40.1k = 1.247 V, buffered by U1B.
Op-amp input CM = (R5 Vbat + R4 Vref)/(R4 + R5) = (10.2 x 48 + 100 x 1.247)/110.2 = 5.57 V at
Vcm = 48 V: above the 5 V rail.
"""

from __future__ import annotations

from .common import cap, opamp, res, targets_note
from .schematic import Project, Sheet

NAME = "shunt-monitor"
CLS = "rail-to-rail-cmos"
TARGETS = {"Target Gain": "0.1 ±2%", "Min CMRR": "60 dB", "Input CM": "0..48 V", "Input Diff": "±200 mV",
           "Band": "DC..1 kHz", "Temp Range": "-20..85 °C", "Error Budget": "1 % FS"}


def build() -> Project:
    sh = Sheet(f"{NAME}.kicad_sch", "Charge controller: battery current sense")

    # Battery line with the high-side shunt.
    j1 = sh.add("CONN_1x02", "J1", "BATTERY", (20, 30), text_at="left")
    r1 = res(sh, "R1", "10m", "1%", (40, 30), horizontal=True)
    j2 = sh.add("CONN_1x02", "J2", "LOAD", (70, 30), mirror="y", text_at="right")
    sh.wire(j1["1"], r1["1"])
    sh.wire(r1["2"], j2["1"])
    sh.label("BAT+", (24, 30))
    sh.label("LOAD+", (53, 30))
    sh.wire(j1["2"], (25, 32), (25, 34))
    sh.power("GND", (25, 34))
    sh.wire(j2["2"], (64, 32), (64, 35))
    sh.power("GND", (64, 35))

    # Difference amplifier, gain 0.1.
    u1a = opamp(sh, "U1", CLS, (80, 60), unit=1, mirror="x", text=(3.81, 3.81), justify="left",
                targets=TARGETS)
    r2 = res(sh, "R2", "100k", "0.1%", (62, 58), horizontal=True)
    r3 = res(sh, "R3", "10.0k", "0.1%", (78, 50), horizontal=True)
    r4 = res(sh, "R4", "100k", "0.1%", (62, 62), horizontal=True, text="below")
    r5 = res(sh, "R5", "10.2k", "0.1%", (70, 68))
    sh.wire((50, 30), (50, 58), r2["1"])
    sh.wire(r2["2"], u1a["2"])
    sh.wire((70, 58), (70, 50), r3["1"])
    sh.wire(r3["2"], (90, 50), (90, 60))
    sh.wire((30, 30), (30, 62), r4["1"])
    sh.wire(r4["2"], u1a["3"])
    sh.wire((70, 62), r5["1"])
    sh.wire(r5["2"], (70, 74))
    sh.label("VREF", (70, 74))
    j4 = sh.add("CONN_1x03", "J4", "MCU ADC", (120, 60), mirror="y", text_at="right")
    sh.wire(u1a["1"], j4["1"])
    sh.label("ISENSE", (96, 60))
    sh.wire(j4["2"], (112, 62))
    sh.label("VREF", (112, 62), angle=180)
    sh.wire(j4["3"], (114, 64), (114, 67))
    sh.power("GND", (114, 67))

    # Reference: 5 V x 10k / 40.1k = 1.247 V, buffered.
    sh.power("+5V", (20, 78))
    r6 = res(sh, "R6", "30.1k", "0.1%", (20, 84))
    r7 = res(sh, "R7", "10k", "0.1%", (20, 96), text="left")
    c1 = cap(sh, "C1", "100n", "10%", (28, 96))
    sh.wire((20, 78), r6["1"])
    sh.wire(r6["2"], r7["1"])
    sh.power("GND", r7["2"])
    sh.power("GND", c1["2"])
    u1b = opamp(sh, "U1", CLS, (50, 92), unit=2, text="above", targets=TARGETS)
    sh.wire((20, 90), u1b["5"])
    sh.wire((28, 90), c1["1"])
    sh.label("VMID", (32, 90))
    sh.wire(u1b["6"], (42, 94), (42, 100), (60, 100), (60, 92))
    sh.wire(u1b["7"], (63, 92))
    sh.label("VREF", (63, 92))

    # 5 V from the controller's regulator, decoupling.
    j3 = sh.add("CONN_1x02", "J3", "5V", (104, 24), text_at="left")
    sh.wire(j3["1"], (130, 24), (130, 28))
    sh.wire((112, 22), (112, 24))
    sh.power("+5V", (112, 22))
    sh.wire((118, 22), (118, 24))
    sh.flag((118, 22))
    u1c = opamp(sh, "U1", CLS, (122, 32), unit=3, text="left", targets=TARGETS)
    c2 = cap(sh, "C2", "100n", "10%", (130, 32))
    sh.wire((122, 24), u1c["8"])
    sh.wire(j3["2"], (109, 26), (109, 40), (130, 40), c2["2"])
    sh.wire(u1c["4"], (122, 40))
    sh.wire((112, 40), (112, 42))
    sh.power("GND", (112, 42))
    sh.wire((116, 38), (116, 40))
    sh.flag((116, 38))

    sh.note(targets_note("U1", TARGETS), (92, 80))
    sh.note("Shunt: 10 mohm, +-20 A (discharge positive)", (12, 16))
    return Project(NAME, sh)


README = """\\
# Charge controller: battery current sense (sample 3)

**Scenario (invented).** The Marrowfield Energy Co-op designs the *Sunwarden 24*, a solar
charge controller for off-grid cabins. The battery current is measured with a 10 mohm
high-side shunt (R1) on the battery line, which sits anywhere from 0 V (battery disconnected)
to 48 V (the largest bank the controller is sold for). A single op-amp difference amplifier
running from the controller's 5 V rail divides the common mode down and reports the current
to the microcontroller's ADC as `ISENSE`, offset to `VREF` = 1.25 V so that charge and
discharge current can both be read.

**Circuit.**
- Shunt R1 (10 mohm, 1 %) between `BAT+` (J1) and `LOAD+` (J2).
- Difference amplifier U1A (class `rail-to-rail-cmos`): R2 = 100k from `LOAD+` to the
  inverting input, feedback R3 = 10.0k; R4 = 100k from `BAT+` to the non-inverting input,
  R5 = 10.2k from there to `VREF`. All 0.1 %.
- REF: divider R6/R7 (30.1k/10k) with C1, buffered by U1B -> `VREF` = 1.247 V.
- Output connector J4 (`ISENSE`, `VREF`, GND); 5 V in on J3, decoupling C2.

**Declared targets** (fields on U1): `Target Gain` = `0.1 ±2%`, `Min CMRR` = `60 dB`,
`Input CM` = `0..48 V`, `Input Diff` = `±200 mV` (±20 A through 10 mohm). Budget intent:
`Band` = `DC..1 kHz`, `Temp Range` = `-20..85 °C` (an outdoor enclosure), `Error Budget` =
`1 % FS`.

**Error budget.** The ratio error lets 48 V of common mode through as several times full
scale (the CMRR term is about 540 % FS), so nothing is left for the requirements: noise and
drift are listed with no value that fits.

**What goes wrong.**
- R5 should equal R3 (10.0k): at 10.2k the ratios R3/R2 = 0.100 and R5/R4 = 0.102 differ by
  2 %. Acm = (R2 R5 - R3 R4)/(R2 (R4 + R5)) = 1.8e-3, Ad = 0.1009, so CMRR is about 35 dB
  against the declared 60 dB: 48 V of common mode shows up as about 87 mV at the output,
  four times the full-scale signal.
- Headroom: the op-amp's input sits at (R5 Vbat + R4 Vref)/(R4 + R5); at Vbat = 48 V that is
  (10.2 x 48 + 100 x 1.247)/110.2 = 5.57 V, above the 5 V rail, so the top of the declared
  common-mode range is out of reach (with 10.0k it would still be 5.49 V: the divide-down
  ratio itself is too small for 48 V).
- Gain: Ad = 0.1009 is +0.9 % off 0.1, inside the declared ±2 %.

## Expected findings

Listed: findings at warning level or above, one per line as `- <rule id>: <references>`
(component references as in KiCad's netlist). Info-level notes (numbers taken from a generic
class, the numbers of checks that pass) are not listed.

- ratio-mismatch: R2, R3, R4, R5, U1
- cmrr-budget: R2, R3, R4, R5, U1
- headroom: U1

## Expected ERC errors

None.
"""

"""Sample 4: four-channel strain-gauge logger; one channel sheet placed four times.

Each channel: quarter bridge (external gauge on J?01 plus completion resistors R?02..R?04),
integrated in-amp U?01 with RG = R?01 = 274 ohm: G = 1 + 50k/274 = 183.5 against a target of
200 (the designer meant 249 ohm, G = 201.8). REF is one buffered mid-supply on the root sheet.
"""

from __future__ import annotations

from .common import cap, opamp, res, targets_note
from .schematic import Project, Sheet

NAME = "strain-logger"
CHANNELS = 4
TARGETS = {"Target Gain": "200 ±1%", "Min CMRR": "60 dB", "Input CM": "2.4..2.6 V", "Input Diff": "±4 mV",
           "Band": "0.1..100 Hz", "Temp Range": "-20..60 °C", "CMRR At": "60 Hz", "Error Budget": "0.25 % FS"}
PART = {"Part Class": "generic-inamp", "Gain K": "50k", "Stage2 R": "10k"}


def refs(n: int) -> list[str]:
    """R{ch}0n for channels 1..4: R101, R201, R301, R401."""
    return [f"{ch}{n:02d}" for ch in range(1, CHANNELS + 1)]


def channel() -> Sheet:
    sh = Sheet("channel.kicad_sch", "Strain channel (one of four)")
    R = lambda n: ["R" + r for r in refs(n)]  # noqa: E731

    # Quarter bridge: external gauge from +5V to SIG+, completion resistors for the rest.
    j = sh.add("CONN_1x02", ["J" + r for r in refs(1)], "GAUGE 350R", (50, 36), text_at="left")
    sh.wire(j["1"], (56, 36), (56, 34))
    sh.power("+5V", (56, 34))
    r2 = res(sh, R(2), "350", "0.1%", (60, 48))
    sh.wire(j["2"], (60, 38), r2["1"])
    sh.power("GND", r2["2"])
    sh.power("+5V", (40, 58))
    r3 = res(sh, R(3), "350", "0.1%", (40, 64))
    r4 = res(sh, R(4), "350", "0.1%", (40, 76))
    sh.wire((40, 58), r3["1"])
    sh.wire(r3["2"], r4["1"])
    sh.power("GND", r4["2"])

    # In-amp.
    u = sh.add("INAMP", ["U" + r for r in refs(1)], "generic in-amp", (90, 50), fields={**PART, **TARGETS},
               text_at=(8.89, -7.62), justify="left")
    rg = res(sh, R(1), "274", "0.1%", (79, 50), text="left")
    sh.wire(r2["1"], u["3"])
    sh.label("SIG+", (66, 44))
    sh.wire((40, 70), (74, 70), (74, 56), u["2"])
    sh.label("SIG-", (50, 70))
    sh.wire(u["1"], rg["1"])
    sh.wire(u["8"], rg["2"])
    sh.power("+5V", u["7"])
    sh.power("GND", u["4"])
    sh.wire(u["5"], (94, 66), (110, 66))
    sh.hlabel("VREF", (110, 66), shape="input")
    sh.wire(u["6"], (120, 50))
    sh.hlabel("OUT", (120, 50), shape="output")
    c = cap(sh, ["C" + r for r in refs(1)], "100n", "10%", (120, 34))
    sh.power("+5V", c["1"])
    sh.power("GND", c["2"])
    sh.note("C?01 decouples U?01", (126, 42))
    sh.note(targets_note("U?01", TARGETS), (100, 80))
    return sh


def build() -> Project:
    ch = channel()
    sh = Sheet(f"{NAME}.kicad_sch", "Strain logger: four channels")
    sheets = [sh.subsheet(f"Channel {k}", ch, (100, 20 + 16 * (k - 1)), (24, 10),
                          left=[("VREF", "input")], right=[("OUT", "output")]) for k in range(1, CHANNELS + 1)]

    # Shared reference, buffered: VREF to every channel.
    r1 = res(sh, "R1", "10k", "0.1%", (40, 84), text="left")
    r2 = res(sh, "R2", "10k", "0.1%", (40, 96), text="left")
    c1 = cap(sh, "C1", "100n", "10%", (48, 96))
    sh.power("+5V", r1["1"])
    sh.wire(r1["2"], r2["1"])
    sh.power("GND", r2["2"])
    sh.power("GND", c1["2"])
    u1 = opamp(sh, "U1", "rail-to-rail-cmos", (70, 92), dual=False, text=(3.81, -7.62), justify="left")
    sh.wire((40, 90), u1["3"])
    sh.wire((48, 90), c1["1"])
    sh.label("VMID", (52, 90))
    sh.wire(u1["2"], (62, 94), (62, 104), (80, 104), (80, 92))
    sh.power("+5V", u1["7"])
    sh.power("GND", u1["4"])
    top = sheets[0].pin("VREF")
    sh.wire(u1["6"], (92, 92), (92, top[1]), top)
    sh.label("VREF", (82, 92))
    for s in sheets[1:]:
        p = s.pin("VREF")
        sh.wire((92, p[1]), p)

    # Channel outputs to the logger's ADC connector.
    for k, s in enumerate(sheets, 1):
        p = s.pin("OUT")
        sh.wire(p, (p[0] + 8, p[1]))
        sh.label(f"CH{k}", (p[0] + 8, p[1]))
    j1 = sh.add("CONN_1x05", "J1", "ADC", (160, 30), mirror="y", text_at="right")
    for k in range(1, CHANNELS + 1):
        p = j1[str(k)]
        sh.wire((p[0] - 7, p[1]), p)
        sh.label(f"CH{k}", (p[0] - 7, p[1]))
    sh.wire(j1["5"], (154, 38), (154, 41))
    sh.power("GND", (154, 41))

    # Supply entry and decoupling.
    j2 = sh.add("CONN_1x02", "J2", "5V IN", (20, 30), text_at="left")
    c2 = cap(sh, "C2", "100n", "10%", (44, 38))
    sh.wire(j2["1"], (44, 30), c2["1"])
    sh.wire((28, 28), (28, 30))
    sh.power("+5V", (28, 28))
    sh.wire((36, 28), (36, 30))
    sh.flag((36, 28))
    sh.wire(j2["2"], (25, 32), (25, 46), (44, 46), c2["2"])
    sh.wire((30, 46), (30, 48))
    sh.power("GND", (30, 48))
    sh.wire((36, 44), (36, 46))
    sh.flag((36, 44))
    sh.note("C2 decouples U1", (20, 54))
    sh.note("Each channel: quarter bridge on J?01,\nin-amp U?01 with RG = R?01 (see sheet)", (100, 90))
    return Project(NAME, sh)


README = """\\
# Strain logger: four channels from one sheet (sample 4)

**Scenario (invented).** Brackenridge Test Rigs makes the *TetraStrain*, a four-channel
logger that rides on agricultural trailer axles during field trials. Each channel reads one
350 ohm foil gauge in a quarter bridge excited from 5 V; the channel circuit is drawn once
(`channel.kicad_sch`) and placed four times on the root sheet, so each placement has its
own references: channel 1 uses J101, R101..R104, U101, C101; channel 2 J201, R201.., and so on.

**Circuit (per channel).**
- Gauge on J?01 from +5V to `SIG+`, completion resistors R?02 (SIG+ to GND), R?03/R?04
  (the `SIG-` half), all 350 ohm 0.1 %: both inputs sit near 2.5 V.
- Integrated in-amp U?01 (`generic in-amp`, G = 1 + 50k/RG), RG = R?01 = 274 ohm 0.1 %.
  Its supply is the single 5 V rail; the class's conservative limits (inputs 2 V inside the
  rails, outputs 1.5 V inside) still hold the declared box: inputs 2.4..2.6 V, output
  2.5 ± 200 x 4 mV = 1.7..3.3 V.
- REF from the root sheet's `VREF` (10k/10k divider buffered by U1, class `rail-to-rail-cmos`),
  output `OUT` to the root, where it becomes `CH1`..`CH4` on the ADC connector J1.

**Declared targets** (fields on every U?01): `Target Gain` = `200 ±1%`, `Min CMRR` = `60 dB`,
`Input CM` = `2.4..2.6 V`, `Input Diff` = `±4 mV`. Part data, also as fields: `Part Class` =
`generic-inamp`, `Gain K` = `50k` (G = 1 + K/RG), `Stage2 R` = `10k`. Budget intent: `Band` =
`0.1..100 Hz`, `Temp Range` = `-20..60 °C`, `CMRR At` = `60 Hz`, `Error Budget` = `0.25 % FS`.

**Error budget.** With the gain 8 % low the gain term alone is about 9 % of full scale; noise
and drift (no en, offset drift or TCR given) are listed as requirements with no value that fits.

**What goes wrong.** The gain resistor was read off the wrong row of a table: 274 ohm gives
G = 1 + 50k/274 = 183.5, 8 % below the 200 target (249 ohm would give 201.8, inside ±1 %).
The same mistake is in all four placements, so a checker must report it once per channel with
that channel's references.

## Expected findings

Listed: findings at warning level or above, one per line as `- <rule id>: <references>`
(component references as in KiCad's netlist). Info-level notes (numbers taken from a generic
class, the numbers of checks that pass) are not listed.

- gain-error: U101, R101
- gain-error: U201, R201
- gain-error: U301, R301
- gain-error: U401, R401

## Expected ERC errors

None.
"""

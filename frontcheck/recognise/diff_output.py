"""The input stage of an in-amp on its own: two op-amps, each with a feedback resistor from its
output to its inverting input, a gain resistor between the two inverting inputs, the signal on
the two + inputs and the two outputs going on as a differential pair (to a fully differential
amplifier or an ADC) rather than into a difference stage (docs/engineering.md sec. 3, the first
stage of the three-op-amp in-amp: differential gain 1 + (Rf1 + Rf2)/RG, common mode passed at
gain 1).

frontcheck analyses single-ended stages; such a pair is accounted for with its gain and never
reported as two broken difference amplifiers (whose suggested fix, a resistor from a + input
to a reference, would break it). A gain resistor without a value is a near miss naming it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from frontcheck import formatting as fmt
from frontcheck.recognise.common import Group, NearMiss, OpUnit, View
from frontcheck.recognise.three_opamp import _input_stage

__all__ = ["InputPair", "find"]


@dataclass
class InputPair:
    a1: OpUnit
    a2: OpUnit
    feedback_1: Group
    feedback_2: Group
    gain_resistor: Group | None
    gain: float                    # differential gain, NaN when a value cannot be read

    def reason(self, name: str) -> str:
        """Why unit ``name`` of the pair is not a front-end stage frontcheck analyses."""
        other = self.a2.name if name == self.a1.name else self.a1.name
        rg = self.gain_resistor.expr if self.gain_resistor else "the gain network"
        g = fmt.number(self.gain, 4) if math.isfinite(self.gain) else "not readable"
        return (f"differential-output in-amp input stage with {other}: gain 1 + "
                f"({self.feedback_1.expr} + {self.feedback_2.expr})/{rg} = {g} between the two "
                "outputs (not analysed: frontcheck analyses single-ended stages)")


def find(view: View, used: set[str]) -> tuple[list[InputPair], list[NearMiss]]:
    """Pairs of unclaimed op-amps wired as an in-amp input stage whose outputs feed no
    difference stage; their unit names are added to ``used``."""
    pairs: list[InputPair] = []
    misses: list[NearMiss] = []
    units = [u for u in view.units if u.name not in used]
    for i, a1 in enumerate(units):
        for a2 in units[i + 1:]:
            if {a1.name, a2.name} & used:
                continue
            found = _input_stage(view, a1, a2)
            if found is None or found[0] is None:
                continue
            rf1, rf2, rg, taps = found
            if rg is None or taps:
                continue                     # split gain networks: left to the near misses
            ohms = view.group_ohms(rg)
            gain = 1 + (view.group_ohms(rf1) + view.group_ohms(rf2)) / ohms \
                if math.isfinite(ohms) and ohms > 0 else math.nan
            pairs.append(InputPair(a1, a2, rf1, rf2, rg, gain))
            used.update({a1.name, a2.name})
            if not math.isfinite(view.group_ohms(rg)):
                refs = sorted({a1.ref, a2.ref, *rg.refs})
                misses.append(NearMiss(
                    "inamp-input", refs,
                    f"{a1.name}/{a2.name} form an in-amp input stage, but the gain resistor "
                    f"{rg.expr} has no value ('{view.comps[rg.refs[0]].value}'): the gain "
                    "cannot be stated", rg.refs[0], f"value of the gain resistor {rg.expr}",
                    view.location(rg.refs[0])))
            break
    return pairs, misses

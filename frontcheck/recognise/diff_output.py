"""The input stage of an in-amp on its own: two op-amps, each with a feedback resistor from its
output to its inverting input, a gain resistor between the two inverting inputs, the signal on
the two + inputs and the two outputs going on as a differential pair (to a fully differential
amplifier or an ADC) rather than into a difference stage (docs/engineering.md sec. 3, the first
stage of the three-op-amp in-amp: differential gain 1 + (Rf1 + Rf2)/RG, common mode passed at
gain 1; sec. 3a says what CMRR means for such a pair).

Such a pair is a stage of kind ``diff-output``: its SubCircuit has the ports 'in_p' (the +
input of the first op-amp), 'in_n', 'out' (the first op-amp's output) and 'out_n' (the
second's), and analysis reads the differential output out - out_n. It is never reported as two
broken difference amplifiers, whose suggested fix (a resistor from a + input to a reference)
would break it. Role names are words ('feedback_p', 'feedback_n', 'gain_resistor'), never
letters-and-digits that read like the design's own reference designators. A gain resistor
without a value ('R', 'RG', '?', empty) is a near miss naming it, and the pair is accounted for
without numbers.

:func:`input_pair` is the pair test on its own, for recognisers of larger stages built on such
a pair.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from frontcheck.circuit import Stage, SubCircuit
from frontcheck.recognise.common import Group, NearMiss, OpUnit, View, supply_notes
from frontcheck.recognise.three_opamp import _input_stage

__all__ = ["InputPair", "KIND", "ROLES", "find", "input_pair"]

KIND = "diff-output"
#: Role names of the pair's parts (words, so that no role reads like a reference designator).
ROLES = ("feedback_p", "feedback_n", "gain_resistor")


@dataclass
class InputPair:
    a1: OpUnit                     # + input side: its output is the pair's 'out'
    a2: OpUnit                     # - input side: its output is 'out_n'
    feedback_1: Group
    feedback_2: Group
    gain_resistor: Group | None
    gain: float                    # differential gain, NaN when a value cannot be read

    def reason(self, name: str) -> str:
        """Why unit ``name`` of a pair without a readable gain is in no analysed stage."""
        other = self.a2.name if name == self.a1.name else self.a1.name
        rg = self.gain_resistor.expr if self.gain_resistor else "the gain network"
        return (f"differential-output in-amp input stage with {other}: gain 1 + "
                f"({self.feedback_1.expr} + {self.feedback_2.expr})/{rg} not readable (the gain "
                "resistor has no value), so not analysed")


def input_pair(view: View, a1: OpUnit, a2: OpUnit) -> InputPair | None:
    """``a1`` and ``a2`` wired as an in-amp input stage with one gain resistor (or resistor
    group) between their inverting inputs, or None (followers, a split gain resistor, other
    parts on an inverting input). ``gain`` is NaN when a value cannot be read."""
    found = _input_stage(view, a1, a2)
    if found is None or found[0] is None:
        return None
    rf1, rf2, rg, taps = found
    if rg is None or taps:
        return None                          # split gain networks: left to the near misses
    ohms = view.group_ohms(rg)
    total = view.group_ohms(rf1) + view.group_ohms(rf2)
    gain = 1 + total / ohms if math.isfinite(ohms) and ohms > 0 else math.nan
    return InputPair(a1, a2, rf1, rf2, rg, gain)


def find(view: View, used: set[str]) -> tuple[list[Stage], list[InputPair], list[NearMiss]]:
    """Stages of unclaimed op-amp pairs wired as an in-amp input stage (run after the
    recognisers whose stages contain such a pair), the pairs whose gain resistor has no value
    (accounted for, not analysed) and their near misses. Unit names are added to ``used``."""
    stages: list[Stage] = []
    unread: list[InputPair] = []
    misses: list[NearMiss] = []
    units = [u for u in view.units if u.name not in used]
    for i, a1 in enumerate(units):
        for a2 in units[i + 1:]:
            if {a1.name, a2.name} & used:
                continue
            pair = input_pair(view, a1, a2)
            if pair is None:
                continue
            used.update({a1.name, a2.name})
            if math.isfinite(pair.gain):
                stages.append(_stage(view, pair))
                break
            unread.append(pair)
            rg = pair.gain_resistor
            refs = sorted({a1.ref, a2.ref, *rg.refs})
            misses.append(NearMiss(
                "inamp-input", refs,
                f"{a1.name}/{a2.name} form an in-amp input stage, but the gain resistor "
                f"{rg.expr} has no value ('{view.comps[rg.refs[0]].value}'): the gain "
                "cannot be stated", rg.refs[0], f"value of the gain resistor {rg.expr}",
                view.location(rg.refs[0])))
            break
    return stages, unread, misses


def _stage(view: View, pair: InputPair) -> Stage:
    a1, a2 = pair.a1, pair.a2
    notes: list[str] = []
    groups = [pair.feedback_1, pair.feedback_2, pair.gain_resistor]
    elems = [e for g in groups for e in g.elements]
    resistors = [view.resistor(e, notes) for e in elems]
    ops = [view.opamp(u, notes) for u in (a1, a2)]
    notes += supply_notes([a1, a2])
    notes.append(f"differential output {a1.out} - {a2.out}: the pair passes the input common "
                 "mode to both outputs at gain 1; the stage it feeds must reject it "
                 "(docs/engineering.md sec. 3a)")
    roles = dict(zip(ROLES, (g.expr for g in groups)))
    nets = {r.a for r in resistors} | {r.b for r in resistors}
    circuit = SubCircuit(
        resistors=resistors,
        capacitors=view.capacitors_within(nets, notes, driven={a1.inp, a2.inp}),
        opamps=ops,
        ports={"in_p": a1.inp, "in_n": a2.inp, "out": a1.out, "out_n": a2.out},
        rails=view.rails_for(ops, nets),
    )
    refs = sorted({a1.ref, a2.ref} | {e.ref for e in elems})
    names = [a1.name, a2.name]
    return Stage(id="+".join(names), kind=KIND, references=refs, amplifiers=names,
                 roles=roles, circuit=circuit, notes=notes)

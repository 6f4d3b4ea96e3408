"""design-note: the design reads, but something in it is odd enough to say.

What it checks
    What the reader noticed while building the netlist and could work around: a part that is
    not annotated (``U?``), a reference used twice, a symbol whose library entry is missing
    from the sheet (its pins are unknown), a sheet file that belongs to another project.

Why it matters
    Every later number rests on the netlist. An unannotated or duplicated reference can merge
    two parts into one in KiCad's own netlist and in frontcheck's; a symbol without its library
    entry has no pins, so whatever it connects is invisible to the stage analysis.

What good looks like
    Every part annotated with a unique reference, every symbol's library entry embedded in the
    sheet (KiCad does this when it saves).

How to fix
    Annotate the schematic (Tools > Annotate Schematic), and open and save the sheet in KiCad
    so its symbol library entries are embedded again.

Severity
    ``severity`` (information by default: the design is merely odd, the check still ran).
    Always an error where the oddity hides part of what was to be checked: a reference used
    twice by a part of a stage, a near miss or a part on an amplifier's nets (the two parts
    merge, and a stage can vanish), and a missing library entry of an amplifier or passive
    symbol (its pins, and so its connections, are unknown). Such a design never passes:
    ``severity = "off"`` hides the notes, not these errors; a waiver with its reason accepts
    one.

Example
    Fails: the schematic reader found a symbol that was never annotated.
        R1 IN_N N 10k 0.1%
        R2 N OUT 100k 0.1%
        R3 IN_P P 10k 0.1%
        R4 P GND 100k 0.1%
        U1 opamp P N OUT +5V -5V
        J1 connector IN_P IN_N GND
        Reader note: R? is not annotated (amp.kicad_sch:40)
    Passes with the schematic annotated: the reader has no note.

Source
    Common practice (KiCad netlists identify parts by reference).
"""

from __future__ import annotations

import re

from ..component import AMPLIFIER_KINDS, classify, library_of, pin_roles, ref_prefix
from .located_finding import finding
from .params import severity

RULE_ID = "design-note"
SUMMARY = "The design reads, but the reader noticed something odd (annotation, missing symbol)"
PARAMETERS = {"severity": severity("severity of a reader's note about the design")}
# Runs even when switched off: a part of the design it could not see is an error regardless.
RUNS_WHEN_OFF = True

_WHERE = re.compile(r"([^\s()]+\.kicad_sch):(\d+)")
_REF = re.compile(r"^(?:duplicate reference )?([A-Za-z#][\w#]*\??)\b")


# Notes that say a part was merged with another or read without its pins: (ref, what).
_DUPLICATE = re.compile(r"^(?:duplicate reference (\S+?)[\s:]|pin (\S+)\.[^.\s]+ is in two nets"
                        r"|.*: component (\S+) listed twice)")
_NO_LIBRARY = re.compile(r"^(\S+): library symbol \S+ is not in the sheet's")
_AMPLIFIER_PREFIXES = ("U", "IC", "A", "AR", "OA")
# amplifier pins whose nets make up a stage (supply and REF nets reach most of a board)
_SIGNAL_ROLES = ("inp", "inn", "out", "out_p", "out_n", "rg", "fg", "sense")


def _blind_spot(ctx, note: str, touched: dict) -> str | None:
    """Why a reader's note hides part of what was to be checked, or None when it does not.
    ``touched`` is filled by :func:`_touched_by_stages` on first use."""
    nl = ctx.netlist
    m = _DUPLICATE.match(note)
    if m and nl is not None:
        ref = next(g for g in m.groups() if g)
        if not touched:
            touched.update(_touched_by_stages(ctx))
        what = touched.get(ref)
        if what:
            return (f"{ref} belongs to {what}, so what was checked there is not the design "
                    f"as drawn")
        return None
    m = _NO_LIBRARY.match(note)
    comp = nl.components.get(m.group(1)) if m and nl is not None else None
    if comp is not None and _amplifier_or_passive(comp):
        return f"{comp.ref} is an amplifier or passive part whose connections are unknown"
    return None


def _amplifier_or_passive(comp) -> bool:
    return (classify(comp) in ("resistor", "capacitor", "network")
            or "amplifier" in library_of(comp)
            or ref_prefix(comp.ref) in _AMPLIFIER_PREFIXES)


def _touched_by_stages(ctx) -> dict[str, str]:
    """Reference -> what it touches: a stage, a near miss, or an amplifier's nets."""
    out: dict[str, str] = {}
    for s in ctx.stages:
        for r in list(s.references) + [op.ref for op in s.circuit.opamps]:
            out.setdefault(r, f"stage {s.id}")
    for nm in ctx.near_misses:
        for r in list(getattr(nm, "references", ())) + [getattr(nm, "ref", "")]:
            out.setdefault(r, "a near miss of a stage")
    nl = ctx.netlist
    signal_pins: dict[tuple[str, str], str] = {}     # (ref, pin) of amplifier inputs/outputs
    for ref, c in nl.components.items():
        if classify(c) in AMPLIFIER_KINDS:
            for role, pins in pin_roles(c).items():
                if role in _SIGNAL_ROLES:
                    signal_pins.update(((ref, pin), ref) for pin in pins)
    for net in nl.nets:
        amp = sorted({signal_pins[(n.ref, n.pin)] for n in net.nodes
                      if (n.ref, n.pin) in signal_pins})
        if amp:
            for n in net.nodes:
                out.setdefault(n.ref, f"the signal nets of amplifier {amp[0]}")
    return out


def check(ctx) -> list:
    pol = ctx.policy(RULE_ID)
    notes = getattr(ctx.netlist, "notes", None) or []
    found = []
    touched: dict[str, str] = {}
    for note in notes:
        blind = _blind_spot(ctx, note, touched)
        f = finding(ctx, RULE_ID, "error" if blind else pol["severity"],
                    f"{note}: {blind}" if blind else note,
                    references=[m.group(1)] if (m := _REF.match(note)) and
                    ctx.netlist is not None and m.group(1) in ctx.netlist.components else [],
                    fix="annotate the schematic and save it in KiCad so every part has a unique "
                        "reference and an embedded library entry")
        where = _WHERE.search(note)
        if where and f.file is None:
            f.file, f.line = where.group(1), int(where.group(2))
        found.append(f)
    for ref, text in getattr(ctx, "design_notes", None) or []:
        found.append(finding(ctx, RULE_ID, pol["severity"], text, at=ref, references=[ref],
                             fix="make the symbol and the Value name the same part, or waive "
                                 "this note with the reason"))
    return found

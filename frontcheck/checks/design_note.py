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

Source
    Common practice (KiCad netlists identify parts by reference).
"""

from __future__ import annotations

import re

from ._common import finding

RULE_ID = "design-note"
SUMMARY = "The design reads, but the reader noticed something odd (annotation, missing symbol)"
PARAMETERS = {"severity": "severity of a reader's note about the design"}

_WHERE = re.compile(r"([^\s()]+\.kicad_sch):(\d+)")
_REF = re.compile(r"^(?:duplicate reference )?([A-Za-z#][\w#]*\??)\b")


def check(ctx) -> list:
    pol = ctx.policy(RULE_ID)
    notes = getattr(ctx.netlist, "notes", None) or []
    found = []
    for note in notes:
        f = finding(ctx, RULE_ID, pol["severity"], note,
                    references=[m.group(1)] if (m := _REF.match(note)) and
                    ctx.netlist is not None and m.group(1) in ctx.netlist.components else [],
                    fix="annotate the schematic and save it in KiCad so every part has a unique "
                        "reference and an embedded library entry")
        where = _WHERE.search(note)
        if where and f.file is None:
            f.file, f.line = where.group(1), int(where.group(2))
        found.append(f)
    return found

"""What every topology recogniser shares: the result types, and (from :mod:`.view`) the
read-only view of the netlist that knows resistors, capacitors, op-amp units and values.

Recognition never guesses a number. A value that cannot be read becomes NaN with a note on the
stage (analysis refuses NaN); a part with in-amp-like pins but no part data is reported in
``Recognition.unsupported`` instead of being modelled with made-up internals.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Iterable

from frontcheck.circuit import Stage
from frontcheck.component import pin_role
from frontcheck.netlist import Location
from frontcheck.netlist_view import (GENERIC_OPAMP, Group, OpUnit, RElem, NetlistView,
                                       is_ground_name)

__all__ = [
    "NearMiss", "Unsupported", "Recognition", "OpUnit", "RElem", "Group", "NetlistView",
    "GENERIC_OPAMP", "pin_role", "is_ground_name", "supply_notes",
]


# --------------------------------------------------------------------------------------------
# Results


@dataclass
class NearMiss:
    """Something wired almost like a front-end stage but not analysable as one.

    ``kind`` is the stage kind it resembles, ``ref`` the component whose location the report
    points at, ``missing`` a short phrase naming what is missing or wrong (e.g. 'R2 feedback
    resistor', 'RG pin 8 connection')."""

    kind: str
    references: list[str]
    message: str
    ref: str
    missing: str
    location: Location | None = None
    # drawn against what the architecture needs (not merely incomplete): the wiring as drawn
    # works, but gives another circuit than the one meant
    miswired: bool = False


@dataclass
class Unsupported:
    """A part whose pins look like an integrated in-amp or difference amp but for which no part
    data was found: reported as found, never given guessed numbers."""

    ref: str
    kind: str                       # 'integrated-inamp' | 'integrated-diffamp'
    pins: dict[str, str]            # role ('in_p', 'in_n', 'ref', 'out', 'rg1', ...) -> net
    message: str
    location: Location | None = None
    roles: dict[str, str] = field(default_factory=dict)   # external parts found, e.g. RG
    # what the schematic itself says (e.g. the gain resistor's value), never part data
    schematic: dict = field(default_factory=dict)
    fix: str = ""                   # what to do, when it is not 'add part data'


@dataclass
class Recognition:
    stages: list[Stage] = field(default_factory=list)
    near_misses: list[NearMiss] = field(default_factory=list)
    unsupported: list[Unsupported] = field(default_factory=list)
    # every op-amp unit and amplifier part, once: in a stage or why not (recognise.accounting)
    amplifiers: list = field(default_factory=list)
    # (reference, text): what the wiring or the Value says against the symbol (design-note rule)
    design_notes: list[tuple[str, str]] = field(default_factory=list)


def supply_notes(units: Iterable[OpUnit]) -> list[str]:
    """Remarks about op-amps whose supply pins are not in the netlist (power unit not placed)."""
    out = []
    for u in units:
        if u.vpos is None or u.vneg is None:
            out.append(f"{u.name}: supply pins not connected in the netlist (is the power unit "
                       "placed?); headroom cannot be checked")
    return out

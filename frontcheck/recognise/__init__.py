"""Recognition: find every front-end stage in a Netlist.

``find_stages(netlist, parts, rails)`` returns a :class:`Recognition` with

* ``stages``: :class:`frontcheck.circuit.Stage` objects, each with a SubCircuit that analysis
  solves without knowing the topology (kinds: difference, three-opamp, two-opamp,
  diff-output, composite, integrated-inamp, integrated-diffamp);
* ``near_misses``: :class:`NearMiss` for circuits wired almost like a stage (a role shorted by a
  0-ohm link, no feedback, an in-amp pin left unconnected);
* ``unsupported``: :class:`Unsupported` for parts with in-amp-like pins but no part data;
* ``amplifiers``: every op-amp unit and amplifier part once, in a stage or with the reason it
  is not a front-end stage (:mod:`.accounting`).

Order matters: integrated parts first, then composite front ends (an in-amp input pair driving
an integrated in-amp, which then belongs to that stage), then three-op-amp in-amps (which contain a difference
stage), then two-op-amp in-amps, then in-amp input pairs with a differential output (which
would otherwise read as two broken difference stages), then lone difference stages; each op-amp unit belongs to one
stage at most. DNP parts are not in the circuit.
"""

from __future__ import annotations

import re
from typing import Any, Callable, Mapping

from frontcheck.circuit import Sourced
from frontcheck.netlist import Netlist
from frontcheck.recognise import (accounting, composite, diff_output, difference, integrated,
                                  three_opamp, two_opamp)
from frontcheck.recognise.common import NearMiss, Recognition, Unsupported, NetlistView

__all__ = ["find_stages", "Recognition", "NearMiss", "Unsupported"]


def _natural(s: str):
    return [int(t) if t.isdigit() else t for t in re.split(r"(\d+)", s)]


def find_stages(netlist: Netlist, parts: Any = None,
                rails: Mapping[str, Sourced] | Callable[[str], Sourced | None] | None = None,
                *, default_tol: float = 0.01, default_from: str = "profile") -> Recognition:
    """Find the front-end stages of a design.

    Parameters
    ----------
    netlist : Netlist
        The whole design (all sheet instances).
    parts : PartLibrary-like, optional
        Gives ``opamp_model``, ``inamp_model``, ``diffamp_model`` and ``classify`` for a
        Component (each may return None). Without it op-amps are ideal (noted on the stage) and
        integrated amplifiers are reported as unsupported.
    rails : mapping or callable, optional
        Net name -> Sourced volts for supply nets (e.g. ``Config.rail_voltage``); nets named as
        grounds count as 0 V.
    default_tol, default_from : float, str
        Resistor tolerance assumed where the design states none, and where that came from.
    """
    view = NetlistView(netlist, parts, rails, default_tol, default_from)
    rec = Recognition()
    used_parts: set[str] = set()
    stages, misses, unsupported = integrated.find(view, used_parts, parts)
    rec.stages += stages
    rec.near_misses += misses
    rec.unsupported += unsupported
    used: set[str] = set()
    # a discrete first stage into an integrated in-amp: one front end (takes the in-amp's stage)
    rec.stages += composite.find(view, used, rec.stages, rec.unsupported)
    rec.stages += three_opamp.find(view, used)
    rec.stages += two_opamp.find(view, used)
    pair_stages, pairs, pair_misses = diff_output.find(view, used)
    rec.stages += pair_stages
    rec.near_misses += pair_misses
    rec.stages += difference.find(view, used)
    rec.near_misses += difference.near_misses(view, used)
    rec.stages.sort(key=lambda s: _natural(s.id))
    rec.near_misses.sort(key=lambda m: _natural(m.ref))
    rec.unsupported.sort(key=lambda u: _natural(u.ref))
    rec.design_notes = list(view.design_notes)
    rec.amplifiers = accounting.account(view, rec.stages, rec.near_misses, rec.unsupported,
                                        pairs)
    return rec

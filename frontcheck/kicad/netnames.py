"""Net names as KiCad writes them: driver priorities, default ``Net-(...)`` and
``unconnected-(...)`` names, and the natural order nets are listed in
(docs/kicad-connectivity.md secs. 3, 4 and 7).
"""

from __future__ import annotations

import re
from functools import cmp_to_key
from typing import NamedTuple

from frontcheck.kicad.geometry import POWER
from frontcheck.kicad.schematic import TILDE_IS_LITERAL
from frontcheck.netlist import Node

__all__ = ["natural_compare", "net_sort_key", "natural_key_for", "escape", "unit_letter",
           "pin_display_name", "candidate_key", "PinSpec", "pin_net_name", "NetParts"]


def natural_compare(a: str, b: str) -> int:
    """KiCad's case-sensitive natural string compare (digit runs compared as numbers)."""
    i = j = 0
    la, lb = len(a), len(b)
    while i < la and j < lb:
        c1, c2 = a[i], b[j]
        if c1.isdigit() and c2.isdigit():
            n1 = n2 = 0
            while i < la and a[i].isdigit():
                n1 = n1 * 10 + ord(a[i]) - 48
                i += 1
            while j < lb and b[j].isdigit():
                n2 = n2 * 10 + ord(b[j]) - 48
                j += 1
            if n1 != n2:
                return -1 if n1 < n2 else 1
            c1 = a[i] if i < la else "\0"
            c2 = b[j] if j < lb else "\0"
        if c1 != c2:
            return -1 if c1 < c2 else 1
        if i < la:
            i += 1
        if j < lb:
            j += 1
    if i >= la and j < lb:
        return -1
    if i < la and j >= lb:
        return 1
    return 0


net_sort_key = cmp_to_key(natural_compare)

_RUNS = re.compile(r"([0-9]+)")
_ONE_RUN = re.compile(r"([^0-9]*)([0-9]+)")


def _natural_key(text: str) -> tuple:
    """A key ordering ASCII strings without NUL exactly as :func:`natural_compare` does.

    The text between digit runs, each followed by "0" when a run follows it, alternates with
    the runs' values: ("R0", 12, "") for "R12". Text between runs holds no digit, so the "0"
    stands only for "a digit run here", and a digit run against a character compares as "0"
    would: like the run's first digit in the comparison ('0'..'9' are 48..57, no other
    character lies among them). Equal text up to a run compares the runs by value; a
    shorter text sorts first, as the end of the string is the NUL of the comparison."""
    m = _ONE_RUN.fullmatch(text)
    if m is not None:           # "R12", "U2601": one digit run, at the end
        return (m[1] + "0", int(m[2]), "")
    parts = _RUNS.split(text)
    if len(parts) == 1:
        return (text,)
    out: list = [None] * len(parts)
    out[0:-1:2] = [t + "0" for t in parts[0:-1:2]]
    out[1::2] = map(int, parts[1::2])
    out[-1] = parts[-1]
    return tuple(out)


def natural_key_for(names) -> "callable":
    """A sort key for ``names`` equal in order to ``cmp_to_key(natural_compare)``: the fast
    :func:`_natural_key` when every name is ASCII without NUL (beyond that, other Unicode
    digits and NUL have their own rules in the comparison), else the comparison itself."""
    if all(n.isascii() and "\0" not in n for n in names):
        return _natural_key
    return net_sort_key


def escape(text: str) -> str:
    return text.replace("/", "{slash}")


def unit_letter(unit: int) -> str:
    s = ""
    n = unit
    while n > 0:
        n, r = divmod(n - 1, 26)
        s = chr(65 + r) + s
    return s


def pin_display_name(name: str, version: int) -> str:
    """A pin's name as KiCad uses it in nets: "" when unnamed, spaces as underscores."""
    if name == "~" and version < TILDE_IS_LITERAL:
        return ""
    return name.replace(" ", "_")


# A driver offering its name to the net it is on is a plain tuple (made for every label of
# every sheet instance): (priority, depth of its sheet, name, rank). Rank: sheet pins that are
# outputs (0) are preferred over other shapes (1); a power symbol's pin (0) is preferred over
# a hidden power pin of an ordinary symbol (1), whatever the names
# (docs/kicad-connectivity.md sec. 3).


def candidate_key(c: tuple) -> tuple:
    """The best candidate is the least: highest priority; among local drivers the one nearest
    the root; lowest rank; names without "-Pad" first; then code-point order."""
    prio, depth, name, rank = c
    if prio >= POWER:
        return (-prio, 0, rank, "-Pad" in name, name)
    return (-prio, depth, rank, "-Pad" in name, name)


class PinSpec(NamedTuple):
    """What a placed pin contributes to its net apart from its reference and sheet instance
    (the same in every instance of a sheet file): a node, and a name when nothing better.
    A net's pins are ``(reference, PinSpec, sheet instance)`` tuples."""

    number: str
    name: str           # display name ("" = unnamed)
    type: str           # electrical type
    unit_letter: str    # "" for single-unit symbols
    duplicate: bool     # another pin of the placed unit has the same name
    namer: bool         # may name a net and is listed (not a power symbol, not on_board no)
    counts: bool        # counts toward "more than one pin" (not a no_connect pin)
    at: tuple           # (x, y) of the pin end


def pin_net_name(ref: str, p: PinSpec, unconnected: bool) -> str:
    name = escape(p.name)
    if unconnected:
        if not name or name == p.number:
            return f"unconnected-({ref}-Pad{p.number})"
        return f"unconnected-({ref}{p.unit_letter}-{name}-Pad{p.number})"
    if not name or name == p.number:
        return f"Net-({ref}-Pad{p.number})"
    if p.duplicate:
        return f"Net-({ref}{p.unit_letter}-{name}-Pad{p.number})"
    return f"Net-({ref}{p.unit_letter}-{name})"


class NetParts:
    """Everything found on one net: drivers offering names, pins (reference, PinSpec, sheet
    instance), and whether a no-connect flag is on it."""

    __slots__ = ("cands", "pins", "nc")

    def __init__(self) -> None:
        self.cands: list = []
        self.pins: list = []
        self.nc = False

    def name(self) -> str:
        cands = self.cands
        if cands:
            return cands[0][2] if len(cands) == 1 else min(cands, key=candidate_key)[2]
        count = sum(1 for _, p, _ in self.pins if p.counts)
        unconnected = self.nc or count <= 1
        namers = [pin_net_name(ref, p, unconnected) for ref, p, _ in self.pins if p.namer]
        return min(namers, key=lambda s: ("-Pad" in s, s)) if namers else ""

    def nodes(self) -> tuple[list[tuple[str, str]], list[Node]]:
        """Listed nodes in (ref, pin) order, and their (ref, pin) keys: pins that may name a
        net, but not of # references (docs/kicad-connectivity.md sec. 6). KiCad marks the
        pins of a net with a no-connect flag "+no_connect" when the net's pins all sit at one
        point (a lone pin, or stacked pins) - corpus case test_hier_no_connect."""
        listed = {}
        for ref, p, _ in self.pins:
            if p.namer and ref[:1] != "#":
                listed.setdefault((ref, p.number), p)
        if not listed:
            return [], []
        suffix = ""
        if self.nc and len({(ii, p.at) for _, p, ii in self.pins if p.counts}) == 1:
            suffix = "+no_connect"
        keys = sorted(listed)
        return keys, [Node(k[0], k[1], p.name, p.type + suffix)
                      for k, p in zip(keys, map(listed.__getitem__, keys))]

"""One index of a design per check: within :func:`one_index`, every
:class:`frontcheck.netlist_view.CircuitIndex` of the same netlist and part data (the same
objects) takes the index the first one built. Recognition and the design's DC view then read
one index instead of building two (on a 10,000-symbol design each build cost about a tenth of
a second). What a view adds of its own (rails, value defaults, remembered answers) stays its
own."""

from __future__ import annotations

from contextlib import contextmanager
from typing import Any, Iterator

__all__ = ["one_index", "share_index", "index_built", "first_index"]

# The designs being checked, innermost last: [netlist, part data, first index built or None].
_SHARED: list[list] = []

# What an index holds that depends on the netlist and the part data only (not on rails or
# value defaults): built once, read-only afterwards.
INDEX_FIELDS = ("comps", "dnp", "nodes", "net_of", "kind", "resistors", "capacitors",
                "caps_by_net", "caps_by_pair", "r_at", "design_notes", "units", "unit_by_out")


@contextmanager
def one_index(netlist: Any, parts: Any = None) -> Iterator[None]:
    """Share the index of ``netlist`` read with ``parts`` inside the block. The netlist must
    not change inside the block."""
    _SHARED.append([netlist, parts, None])
    try:
        yield
    finally:
        _SHARED.pop()


def _slot(netlist: Any, parts: Any) -> list | None:
    return next((s for s in reversed(_SHARED) if s[0] is netlist and s[1] is parts), None)


def share_index(index: Any, netlist: Any, parts: Any) -> bool:
    """Give ``index`` the fields of the index already built for this netlist and part data;
    False when there is none to share (the caller builds its own)."""
    slot = _slot(netlist, parts)
    if slot is None or slot[2] is None:
        return False
    for name in INDEX_FIELDS:
        setattr(index, name, getattr(slot[2], name))
    return True


def index_built(index: Any, netlist: Any, parts: Any) -> None:
    """``index`` was just built: the next index of this netlist and part data shares it."""
    slot = _slot(netlist, parts)
    if slot is not None and slot[2] is None:
        slot[2] = index


def first_index(netlist: Any, parts: Any) -> Any:
    """The index first built for this netlist and part data inside :func:`one_index` (None
    outside one, or before any was built): what it has read of the design, another view may
    take instead of reading it again."""
    slot = _slot(netlist, parts)
    return slot[2] if slot is not None else None

"""Bus names in label and pin text: vectors ``D[0..7]``, groups ``PFX{A B C}``, aliases.

KiCad's text markup uses braces too: ``~{RESET}`` (overbar), ``VDD_{1}`` (subscript) and
``A^{2}`` (superscript). A ``{`` right after ``~``, ``_`` or ``^`` opens markup, never a bus
group, so ``~{CS}`` is an ordinary net name and ``~{D}[0..1]`` is a vector whose prefix carries
an overbar (docs/kicad-connectivity.md sec. 9). The scanning follows KiCad's bus-name parser,
``ParseBusVector`` and ``ParseBusGroup`` in ``common/project/net_settings.cpp`` (from memory;
the cases tests check were measured with KiCad 9).

Whether a name with bus syntax really is a bus is decided by what it touches (a label on a
wire with no bus connects by its whole text, section 9); that is connectivity's business.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["BusMember", "bus_members"]

_MARKUP = "~_^"


@dataclass(frozen=True)
class BusMember:
    full: str        # net name text inside the sheet: "top.x", "D3"
    local: str       # name used to match across the hierarchy: "x", "D3"
    index: int | None = None   # vector index (vector buses match by index)


def _markup_open(text: str, i: int) -> bool:
    """Is ``text[i]`` a ``{`` that opens overbar, subscript or superscript markup?"""
    return text[i] == "{" and i > 0 and text[i - 1] in _MARKUP


def _vector(text: str) -> list[BusMember] | None:
    """``PFX[a..b]SFX`` -> members PFXaSFX .. PFXbSFX in the order written; None when the
    text is not a vector (a non-markup brace or a space in the prefix, a bad range, a < b
    equal, unbalanced markup)."""
    depth = 0
    i, n = 0, len(text)
    while i < n:
        c = text[i]
        if c == "{":
            if not _markup_open(text, i):
                return None
            depth += 1
        elif c == "}":
            depth -= 1
        elif c in " ]":
            return None
        elif c == "[":
            break
        i += 1
    if i >= n:
        return None
    close = text.find("]", i)
    rng = text[i + 1:close] if close > 0 else ""
    lo, sep, hi = rng.partition("..")
    if not sep or not lo.isdigit() or not hi.isdigit() or not lo.isascii() or not hi.isascii():
        return None
    prefix, suffix = text[:i], text[close + 1:]
    depth += suffix.count("{") - suffix.count("}")
    a, b = int(lo), int(hi)
    if depth != 0 or a == b:
        return None
    step = 1 if b >= a else -1
    return [BusMember(f"{prefix}{k}{suffix}", f"{prefix}{k}{suffix}", k)
            for k in range(a, b + step, step)]


def _group(text: str) -> tuple[str, list[str]] | None:
    """``PFX{A B, C}`` -> (PFX, [A, B, C]); None when no brace outside markup opens a group
    that closes."""
    depth = 0
    i, n = 0, len(text)
    while i < n:
        c = text[i]
        if c == "{" and not _markup_open(text, i):
            break
        if c == "{":
            depth += 1
        elif c == "}":
            depth -= 1
        elif c in " []":
            return None
        i += 1
    if i >= n or depth != 0:
        return None
    prefix = text[:i]
    members: list[str] = []
    cur: list[str] = []
    for j in range(i + 1, n):
        c = text[j]
        if c == "{" and _markup_open(text, j):
            depth += 1
        elif c == "}":
            if depth == 0:
                if cur:
                    members.append("".join(cur))
                return prefix, members
            depth -= 1
        elif c in " ," and depth == 0:
            if cur:
                members.append("".join(cur))
            cur = []
            continue
        cur.append(c)
    return None


def bus_members(text: str, aliases: dict[str, list[str]]) -> list[BusMember] | None:
    """Members of a bus label/pin text (vector ``A[0..7]``, group ``P{a b}``, alias name), or
    None when the text names an ordinary net (``~{CS}``, ``VDD_{1}`` included)."""
    if "[" not in text and "{" not in text and text not in aliases:
        return None         # neither a vector, nor a group, nor an alias: nearly every label
    v = _vector(text)
    if v is not None:
        return v
    g = _group(text)
    if g is not None:
        prefix, items = g
        out: list[BusMember] = []
        for item in items:
            for name in aliases.get(item, [item]):
                sub = _vector(name)
                for s in (sub if sub is not None else [BusMember(name, name)]):
                    full = f"{prefix}.{s.full}" if prefix else s.full
                    out.append(BusMember(full, s.full, None))
        return out
    if text in aliases:
        return bus_members("{" + text + "}", aliases)
    return None

"""The plain-text report's layouts written directly as lines, the same lines rich draws.

Why: a report of a few hundred stages spends seconds in rich's general table layout (a grid and
an error-budget table per stage, each measured cell by cell), while the plain report (written to
a pipe or a file) needs only three fixed shapes: a two-column grid, the budget table and a
wrapped line. These functions write those shapes for text whose every character is one cell
wide and whose words fit their column, with rich's own word-wrapping rule
(``rich._wrap.divide_line`` semantics: break before the word that does not fit; trailing blanks
of a line do not count). Anything else (a wide or control character, a word longer than its
column, a table wider than the line) returns None, and the caller has rich draw it: the output
is the same either way, which tests/report/test_plain_layout.py checks against rich itself.

Lines are returned without trailing blanks (the plain report strips them anyway).
"""

from __future__ import annotations

import re

__all__ = ["budget_table", "grid", "wrap"]

_WORD = re.compile(r"\s*\S+\s*")
# printable, one cell wide: ASCII, Latin-1 letters and signs, Greek, the units' signs we write,
# and the private-use glue character (terminal.GLUE). Anything else goes to rich.
_NARROW = re.compile(r"[^\x20-\x7e\xa0-\xff\u0370-\u03ff\u2010-\u2027\u2030-\u205e"
                     r"\u2190-\u21ff\u2200-\u22ff\ue000]")


def _simple(text: str) -> bool:
    return _NARROW.search(text.replace("\n", " ")) is None


def _wrap_line(line: str, width: int) -> list[str] | None:
    """One line (no newline) broken into lines of at most ``width`` cells, or None when a word
    is longer than the width (rich would fold or crop it)."""
    if len(line) <= width:
        return [line.rstrip()]
    out: list[str] = []
    start = 0          # start of the current output line in ``line``
    offset = 0         # cells used on the current output line
    for m in _WORD.finditer(line):
        word = m.group(0)
        length = len(word.rstrip())
        if width - offset >= length:
            offset += len(word)
            continue
        if length > width:
            return None
        if offset and m.start():
            out.append(line[start:m.start()].rstrip())
            start = m.start()
            offset = len(word)
    out.append(line[start:].rstrip())
    return out


def wrap(text: str, width: int) -> list[str] | None:
    """``text`` as rich prints it at ``width`` columns (each newline starts a line)."""
    if not _simple(text):
        return None
    out: list[str] = []
    for line in text.split("\n"):
        if not line.strip():
            out.append("")
            continue
        got = _wrap_line(line, width)
        if got is None:
            return None
        out.extend(got)
    return out


def _longest_word(text: str) -> int:
    return max((len(w) for w in text.split()), default=0)


def grid(rows: list[tuple[str, str]], width: int, min_first: int = 0) -> list[str] | None:
    """A two-column grid (rich ``Table.grid(padding=(0, 1))``: the first column no_wrap, the
    second wrapping): the first column as wide as its widest line, one space, the second
    column wrapped to what is left when its widest line does not fit."""
    if not rows:
        return []
    if not all(_simple(a) and _simple(b) for a, b in rows):
        return None
    w1 = max([min_first] + [len(x) for a, _ in rows for x in a.split("\n")])
    w2 = max(len(x) for _, b in rows for x in b.split("\n"))
    if w1 + 1 + w2 > width:
        w2 = width - w1 - 1
        if w2 < max(_longest_word(b) for _, b in rows) or w2 < 1:
            return None
    out: list[str] = []
    for a, b in rows:
        left = a.split("\n")
        right = wrap(b, w2)
        if right is None:
            return None
        for i in range(max(len(left), len(right))):
            la = left[i] if i < len(left) else ""
            lb = right[i] if i < len(right) else ""
            out.append((la.ljust(w1) + " " + lb).rstrip())
    return out


def budget_table(header: tuple[str, ...], rows: list[tuple[str, ...]],
                 width: int) -> list[str] | None:
    """The error-budget table as rich draws it with ``box.ASCII2``, no outer edge, no edge
    padding: the first and last columns left-aligned, the others right-aligned and never
    wrapped, the last column folded to the width that is left."""
    cells = [tuple(header)] + [tuple(r) for r in rows]
    n = len(header)
    if not all(len(r) == n for r in cells) or not all(_simple(c) for r in cells for c in r):
        return None
    if any("\n" in c for r in cells for c in r[:-1]):
        return None
    widths = [max(len(x) for r in cells for x in r[i].split("\n")) for i in range(n)]
    # first column: content + right padding; middle: padding both sides; last: left padding;
    # a separator between each two columns
    fixed = widths[0] + 1 + sum(w + 2 for w in widths[1:-1]) + (n - 1)
    last = widths[-1]
    if fixed + 1 + last > width:
        last = width - fixed - 1
        if last < 1 or last < max(_longest_word(r[-1]) for r in cells):
            return None
    out: list[str] = []
    for k, r in enumerate(cells):
        body = wrap(r[-1], last) if r[-1] else [""]
        if body is None:
            return None
        for j, tail in enumerate(body):
            first = j == 0
            parts = [(r[0] if first else "").ljust(widths[0]) + " "]
            for i in range(1, n - 1):
                parts.append(" " + (r[i] if first else "").rjust(widths[i]) + " ")
            parts.append(" " + tail)
            out.append("|".join(parts).rstrip())
        if k == 0:
            out.append("+".join(["-" * (widths[0] + 1)] + ["-" * (w + 2) for w in widths[1:-1]]
                                + ["-" * (last + 1)]))
    return out

"""Design text shown safely: every reporter and every message passes text from a design, a
project file or a part file through here before a person sees it.

A value, field, waiver reason or file name can hold any character. Written raw, an escape
(ESC) sequence clears or rewrites the terminal, a carriage return or backspace hides what came
before it, a bidirectional override shows text in another order than it is stored, and
Markdown turns ``[x](javascript:...)`` or ``![x](...)`` into a live link or image in a review
comment. So:

* :func:`visible` spells each control character as a visible escape (``\\x1b``, ``\\u202e``);
  line feeds and tabs stay (they are layout, not commands);
* :func:`markdown` also escapes what Markdown would read as formatting, links, images or HTML;
* :func:`shown` gives a copy of a whole report with :func:`visible` applied to every string in
  it, for reporters that print many pieces of design text.

JSON and SARIF need none of this: JSON escapes every control character itself, and their
readers are programs that must get the text exactly as written.
"""

from __future__ import annotations

import copy
import dataclasses
import re

# C0 controls except tab and line feed, DEL, C1 controls (0x9b is a one-byte CSI to some
# terminals), and the Unicode marks and overrides that reorder or hide text.
_CONTROL = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u061c\u200b-\u200f\u2028-\u202e"
                      "\u2060-\u2069\ufeff\ufff9-\ufffb]")


def _spell(m: re.Match) -> str:
    c = ord(m.group())
    return f"\\x{c:02x}" if c < 0x100 else f"\\u{c:04x}"


def visible(text: object) -> str:
    """``text`` with every control character written as a visible escape."""
    s = str(text)
    return _CONTROL.sub(_spell, s) if _CONTROL.search(s) else s


# Backslash-escaped: what starts emphasis, code, strike-through, a link or an image, a table
# cell boundary, and the backslash itself. <, > and & become entities (no HTML, no autolink,
# no entity of the design's choosing).
_MARKDOWN = re.compile(r"([\\`*_\[\]|~!])")


def markdown(text: object) -> str:
    """``text`` as literal Markdown (GitHub-flavoured): visible control characters, no
    formatting, link, image, raw HTML or table break of its own, on one line."""
    s = visible(text).replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
    return _MARKDOWN.sub(r"\\\1", s).replace("\n", " ")


def shown(obj):
    """A copy of ``obj`` (a Report, or anything it holds) with :func:`visible` applied to
    every string in it, dictionary keys included; numbers, arrays and other values are
    shared, not copied. The copy keeps the shape: a stage id and the key of its results
    change alike."""
    return _shown(obj, {})


# Values with no text in them: a list or tuple of only these (a stage's thousands of Monte
# Carlo samples) is copied in one step instead of element by element.
_PLAIN = frozenset({float, int, bool, type(None)})


def _field_names(cls) -> tuple[str, ...]:
    names = _FIELDS.get(cls)
    if names is None:
        names = _FIELDS[cls] = tuple(f.name for f in dataclasses.fields(cls))
    return names


_FIELDS: dict[type, tuple[str, ...]] = {}


def _shown(obj, memo: dict):
    kind = type(obj)
    if kind is str:                   # the most common values first: visible(), inlined
        return _CONTROL.sub(_spell, obj) if _CONTROL.search(obj) else obj
    if kind in _PLAIN:
        return obj
    if isinstance(obj, str):
        return visible(obj)
    key = id(obj)
    if key in memo:
        return memo[key]
    if isinstance(obj, list):
        if _PLAIN.issuperset(map(type, obj)):
            out = memo[key] = list(obj)
            return out
        out = memo[key] = []
        out.extend(_shown(x, memo) for x in obj)
        return out
    if isinstance(obj, tuple) and not hasattr(obj, "_fields"):
        if _PLAIN.issuperset(map(type, obj)):
            return tuple(obj)
        return tuple(_shown(x, memo) for x in obj)
    if isinstance(obj, (set, frozenset)):
        return type(obj)(_shown(x, memo) for x in obj)
    if isinstance(obj, dict):
        out = memo[key] = {}
        out.update((_shown(k, memo), _shown(v, memo)) for k, v in obj.items())
        return out
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        out = memo[key] = copy.copy(obj)
        for name in _field_names(type(obj)):
            value = getattr(obj, name, None)
            new = _shown(value, memo)
            if new is not value:
                object.__setattr__(out, name, new)
        return out
    return obj

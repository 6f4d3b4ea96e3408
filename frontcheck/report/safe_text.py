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
import operator
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
    """``obj`` (a Report, or anything it holds) with :func:`visible` applied to every string in
    it, dictionary keys included: ``obj`` itself when no string in it would change (the usual
    case: one pass that reads the text, copies nothing), else a copy in which numbers, arrays
    and other values are shared. The copy keeps the shape: a stage id and the key of its
    results change alike."""
    if not _needs_change(obj):
        return obj
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


_STR = frozenset({str})
_GETTERS: dict[type, object] = {}


def _field_values(obj) -> tuple:
    """The values of a dataclass instance's fields, as _shown reads them."""
    cls = type(obj)
    get = _GETTERS.get(cls)
    if get is None:
        names = _field_names(cls)
        get = _GETTERS[cls] = operator.attrgetter(*names) if len(names) > 1 else \
            (lambda o: tuple(getattr(o, name) for name in names))
    try:
        return get(obj)
    except AttributeError:             # a field never set: _shown reads it as None
        return tuple(getattr(obj, name, None) for name in _field_names(cls))


def _shape(kind: type) -> int:
    """How _shown treats values of a type (other than str): _SEQUENCE, _MAPPING, _RECORD
    (a dataclass instance) or _OTHER (left as it is)."""
    shape = _SHAPES.get(kind)
    if shape is None:
        if issubclass(kind, list) or (issubclass(kind, tuple) and not hasattr(kind, "_fields")) \
                or issubclass(kind, (set, frozenset)):
            shape = _SEQUENCE
        elif issubclass(kind, dict):
            shape = _MAPPING
        elif dataclasses.is_dataclass(kind) and not issubclass(kind, type):
            shape = _RECORD
        else:
            shape = _OTHER
        _SHAPES[kind] = shape
    return shape


_OTHER, _SEQUENCE, _MAPPING, _RECORD = range(4)
_SHAPES: dict[type, int] = {}


def _needs_change(obj) -> bool:
    """Whether :func:`_shown` would change anything reachable from ``obj``: a string with a
    control character, or a string of a subclass (which it turns into a plain str). The same
    objects as _shown visits, each once; the strings are gathered and searched in one step."""
    texts: list[str] = []
    seen: set[int] = set()
    todo = [[obj]]                     # groups of values still to look at
    while todo:
        items = todo.pop()
        if len(items) > 16:            # a long list (Monte Carlo samples): its types at once
            kinds = set(map(type, items))
            if _STR.issuperset(kinds):
                texts.extend(items)
                continue
            if _PLAIN.issuperset(kinds):
                continue
        for x in items:
            kind = type(x)
            if kind is str:
                texts.append(x)
                continue
            if kind in _PLAIN:
                continue
            shape = _SHAPES.get(kind)
            if shape is None:
                if isinstance(x, str):
                    return True
                shape = _shape(kind)
            if shape == _OTHER or id(x) in seen:
                continue
            seen.add(id(x))
            if shape == _SEQUENCE:
                todo.append(x)
            elif shape == _MAPPING:
                todo.append(x.keys())
                todo.append(x.values())
            else:
                todo.append(_field_values(x))
    return _has_control("\n".join(texts))


# What _CONTROL leaves alone among ASCII characters: tab, line feed and the printable ones.
_ASCII_SHOWN = bytes([9, 10, *range(0x20, 0x7f)])


def _has_control(text: str) -> bool:
    """Whether ``text`` holds a character _CONTROL matches; ASCII text (the usual case) is
    checked byte-wise, which is several times faster than the pattern."""
    if text.isascii():
        return bool(text.encode("ascii").translate(None, _ASCII_SHOWN))
    return _CONTROL.search(text) is not None


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

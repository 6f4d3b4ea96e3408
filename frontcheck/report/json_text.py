"""JSON text with two-space indentation, the same bytes as ``json.dumps(obj, indent=2,
allow_nan=False)`` in time linear in the document, about three times as fast.

The standard library encodes an indented document in pure Python, one generator step per
token; a report of a few hundred stages spent most of its rendering time there. This writer
handles the types a report holds (dict with str keys, list, tuple, str, int, float, bool,
None) with the standard library's own string escaper and number forms; any other type, or a
non-finite float, is left to ``json.dumps`` itself, so what it says (an error, a ``default``)
is unchanged. tests/test_json_text.py compares both on every sample report.
"""

from __future__ import annotations

import json
from json.encoder import encode_basestring_ascii as _esc

__all__ = ["dumps"]

_INF = float("inf")
_FLOAT_REPR = float.__repr__
_NEWLINE = ["\n" + " " * (2 * i) for i in range(64)]    # newline and indent of each level
_SEPARATOR = ["," + n for n in _NEWLINE]


class _Other(Exception):
    """A value this writer leaves to the standard library."""


# The text of each float and dictionary key already written (a report repeats many: the
# frequencies of every stage's CMRR sweep, the values of alike stages, the keys of each stage);
# zero is not kept, as 0.0 and -0.0 are one key.
_REPRS: dict[float, str] = {}
_KEYS: dict[str, str] = {}
_MOST_KEPT = 100_000
_FLOAT = frozenset({float})


def _float(o: float) -> str:
    s = _REPRS.get(o)
    if s is None:
        if o != o or o == _INF or o == -_INF:
            raise _Other              # allow_nan=False: the standard library says why
        s = _FLOAT_REPR(o)
        if o:
            _REPRS[o] = s
    return s


# Exact types first (the common case, one dict lookup); subclasses go through _scalar.
_FAST = {str: _esc, float: _float, int: int.__repr__, bool: lambda o: "true" if o else "false",
         type(None): lambda o: "null"}


def dumps(obj) -> str:
    """``json.dumps(obj, indent=2, allow_nan=False)``."""
    if len(_REPRS) + len(_KEYS) > _MOST_KEPT:
        _REPRS.clear()
        _KEYS.clear()
    try:
        return _text(obj, 0)
    except (_Other, RecursionError, IndexError):
        return json.dumps(obj, indent=2, allow_nan=False)


def _scalar(o) -> str:
    """A scalar of a subclass, in the order of checks ``json.encoder`` makes."""
    if isinstance(o, str):
        return _esc(o)
    if isinstance(o, int):
        return int.__repr__(o)
    if isinstance(o, float):
        return _float(o)
    raise _Other


def _text(o, level: int) -> str:
    fast = _FAST.get(type(o))
    if fast is not None:
        return fast(o)
    if isinstance(o, dict):
        if not o:
            return "{}"
        parts = []
        for k, v in o.items():
            key = _KEYS.get(k)
            if key is None:
                if not isinstance(k, str):
                    raise _Other      # keys of other types: the standard library's rules
                key = _esc(k) + ": "
                if type(k) is str:
                    _KEYS[k] = key
            f = _FAST.get(type(v))
            parts.append(key + (f(v) if f is not None else _text(v, level + 1)))
    elif isinstance(o, (list, tuple)):
        if not o:
            return "[]"
        if type(o[0]) is float and _FLOAT.issuperset(map(type, o)):
            try:                      # floats all written before: their texts joined at once
                return ("[" + _NEWLINE[level + 1] + _SEPARATOR[level + 1].join(
                    map(_REPRS.__getitem__, o)) + _NEWLINE[level] + "]")
            except KeyError:
                pass
        parts = []
        for v in o:
            f = _FAST.get(type(v))
            parts.append(f(v) if f is not None else _text(v, level + 1))
    else:
        return _scalar(o)
    close = "}" if isinstance(o, dict) else "]"
    return (("{" if close == "}" else "[") + _NEWLINE[level + 1] + _SEPARATOR[level + 1].join(parts)
            + _NEWLINE[level] + close)

"""JSON text with two-space indentation, the same bytes as ``json.dumps(obj, indent=2,
allow_nan=False)`` in time linear in the document, about twice as fast.

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


class _Other(Exception):
    """A value this writer leaves to the standard library."""


def _float(o: float) -> str:
    if o != o or o == _INF or o == -_INF:
        raise _Other                  # allow_nan=False: the standard library says why
    return _FLOAT_REPR(o)


# Exact types first (the common case, one dict lookup); subclasses go through _scalar.
_FAST = {str: _esc, float: _float, int: int.__repr__, bool: lambda o: "true" if o else "false",
         type(None): lambda o: "null"}


def dumps(obj) -> str:
    """``json.dumps(obj, indent=2, allow_nan=False)``."""
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
            if not isinstance(k, str):
                raise _Other          # keys of other types: the standard library's rules
            f = _FAST.get(type(v))
            parts.append(_esc(k) + ": " + (f(v) if f is not None else _text(v, level + 1)))
    elif isinstance(o, (list, tuple)):
        if not o:
            return "[]"
        parts = []
        for v in o:
            f = _FAST.get(type(v))
            parts.append(f(v) if f is not None else _text(v, level + 1))
    else:
        return _scalar(o)
    inner = _NEWLINE[level + 1]
    close = "}" if isinstance(o, dict) else "]"
    return ("{" if close == "}" else "[") + inner + ("," + inner).join(parts) + _NEWLINE[level] + close

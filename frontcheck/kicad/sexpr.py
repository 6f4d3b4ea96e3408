"""KiCad S-expression tokenizer and parser.

KiCad files are UTF-8 S-expressions. The parser turns a file into nested Python lists whose
atoms are ``str``: quoted strings are unescaped, bare atoms (keywords, numbers, KiCad 6 UUIDs)
are kept as written. Numbers stay strings so that no precision is lost; readers convert them
where they know the meaning.

Why our own reader: KiCad's writer is simple and regular, and a third-party reader that
silently drops flags (``(hide yes)``, ``exclude_from_sim``) would mis-connect pins. Speed comes
from never looping over tokens in Python: the fast path rewrites the document into JSON with
C-level string operations and lets the C JSON decoder build the lists (see
:func:`_parse_fast`); an exact token-by-token parser reads what the fast path declines and
locates errors. Positions are not stored per list (that would halve the speed); errors are
located by offset, and callers that need a line (a symbol's location) find it with
:meth:`SourceText.line_of`.
"""

from __future__ import annotations

import gc
import json
import re
from dataclasses import dataclass
from functools import cached_property, partial
from pathlib import Path

from frontcheck.kicad.files import read_bytes
from frontcheck.kicad.limits import limit_error

__all__ = ["SExprError", "SourceText", "Pruning", "parse", "parse_file", "read_text",
           "count_expressions"]

# One alternation: "(" | ")" | quoted string | bare atom. Anything else (a stray quote)
# is caught by the gap check below.
# Possessive quantifiers (Python 3.11+): a 20 MB string that never ends is rejected in one
# linear pass instead of backtracking character by character.
_QUOTED = r'"[^"\\]*+(?:\\.[^"\\]*+)*+"'
_TOKEN = re.compile(r'[()]|' + _QUOTED + r'|[^\s()"]++', re.S)
_QUOTED_AT = re.compile(_QUOTED, re.S)
_BARE_AT = re.compile(r'[^\s()"]++')
_ESCAPES = {"n": "\n", "t": "\t", "r": "\r", '"': '"', "\\": "\\", "\n": "", "a": "\a",
            "b": "\b", "f": "\f", "v": "\v", "'": "'"}
_ESCAPE = re.compile(r"\\(x[0-9a-fA-F]{1,2}|[0-7]{1,3}|.)", re.S)

# KiCad nesting never exceeds a few dozen levels; a deeper file is damaged or hostile. This
# bounds the exact parser; the fast path is bounded by the JSON decoder's recursion guard
# (about 1000 levels less the caller's stack) and hands anything deeper to the exact parser.
# Either way a hostile document ends in SExprError, never in RecursionError.
MAX_DEPTH = 500


class SExprError(ValueError):
    """A file that is not a well-formed S-expression; carries file, line and column."""

    def __init__(self, message: str, file: str | None = None, line: int | None = None,
                 column: int | None = None):
        self.message, self.file, self.line, self.column = message, file, line, column
        where = ":".join(str(p) for p in (file, line, column) if p is not None)
        super().__init__(f"{where}: {message}" if where else message)


def _unescape_match(m: re.Match) -> str:
    s = m.group(1)
    if s in _ESCAPES:
        return _ESCAPES[s]
    if s[0] == "x" and len(s) > 1:
        return chr(int(s[1:], 16))
    if s[0] in "01234567":
        return chr(int(s, 8))
    return s  # unknown escape: KiCad keeps the character


def unescape(s: str) -> str:
    """Undo KiCad's string escapes (``\\"``, ``\\\\``, ``\\n``, ...)."""
    return _ESCAPE.sub(_unescape_match, s) if "\\" in s else s


@dataclass
class SourceText:
    """The text of one file, with offset -> line/column mapping built on demand."""

    text: str
    file: str | None = None
    _line_starts: list[int] | None = None

    def position(self, offset: int) -> tuple[int, int]:
        """1-based (line, column) of a character offset."""
        if self._line_starts is None:
            starts = [0]
            starts.extend(m.end() for m in re.finditer("\n", self.text))
            self._line_starts = starts
        import bisect

        i = bisect.bisect_right(self._line_starts, offset) - 1
        return i + 1, offset - self._line_starts[i] + 1

    def line_of(self, needle: str, start: int = 0) -> int | None:
        """Line of the first occurrence of ``needle`` (e.g. a symbol's UUID), or None."""
        i = self.text.find(needle, start)
        return None if i < 0 else self.position(i)[0]

    def error(self, message: str, offset: int) -> SExprError:
        line, col = self.position(offset)
        return SExprError(message, self.file, line, col)


# KiCad's escapes that JSON decodes the same way; ``\\u`` is not among them (KiCad keeps the
# 'u', JSON reads a code point), so text containing it goes to the exact parser.
_STRING = re.compile(r'"([^"\\]*+(?:\\.[^"\\]*+)*+)"', re.S)
_JSON = json.JSONDecoder(strict=False)
_END = object()


@dataclass(frozen=True)
class Pruning:
    """What a reader never looks at, left out of the tree the fast path builds (the exact
    parser keeps everything, so a reader must not care either way): lists headed by one of
    ``heads`` and, with ``property_tails``, what follows name and value in
    ``(property "name" "value" ...)``. Only lists with no string inside and at most four
    levels deep are left out; anything else is kept as written."""

    heads: tuple[str, ...] = ()
    property_tails: bool = False

    @cached_property
    def rules(self) -> tuple[tuple[re.Pattern, str], ...]:
        # On the skeleton (strings cut out as \x01): a list of depth <= 4 with no string.
        text = r"[^()\x01]*+"
        nest = text
        for _ in range(3):
            nest = text + r"(?:\(" + nest + r"\)" + text + r")*+"
        out = []
        if self.property_tails:
            out.append((re.compile(r"\(property \x01 \x01(?:\s*+\(" + nest + r"\))++\s*+\)"),
                        "(property \x01 \x01)"))
        for head in self.heads:
            out.append((re.compile(r"\(" + re.escape(head) + r"(?![^\s()\x01])" + nest + r"\)"),
                        ""))
        return tuple(out)


def _parse_fast(text: str, pruning: Pruning | None = None) -> list | None:
    """Translate the document to JSON with C-level string operations and decode it.

    Strings are cut out first (so their contents are never touched), the remaining
    skeleton is split into atoms and parentheses, atoms are quoted, parentheses become
    brackets, and the strings are put back. KiCad's escapes (``\\"``, ``\\\\``,
    ``\\n``) are JSON's too; anything unusual (a stray quote, a backslash outside a string,
    an escape JSON does not know, bad nesting) returns None and the exact parser takes over
    to report it or to read it.

    Cutting the strings out with ``str.split('"')`` is about twice as fast as a regular
    expression and exact when no backslash is itself escaped (then every ``\\"`` is an
    escaped quote); text with an escaped backslash uses the regular expression.
    """
    if "\x01" in text:
        return None
    parts = _cut_strings(text)
    if parts is None:
        return None
    if not len(parts) & 1:          # an odd number of quotes: a string never ends
        return None
    strings = parts[1::2]
    skeleton = "\x01".join(parts[0::2])
    del parts
    if '"' in skeleton or "\\" in skeleton:
        return None
    if pruning is not None:
        for rule, keep in pruning.rules:
            skeleton = rule.sub(keep, skeleton)
    atoms = skeleton.replace("(", " ( ").replace(")", " ) ").split()
    del skeleton
    if len(atoms) < 2 or atoms[0] != "(" or atoms[-1] != ")":
        return None
    s = '"' + '","'.join(atoms) + '"'
    del atoms
    s = s.replace('"(",', "[").replace(',")"', "]")
    if '[")"' in s:                 # an empty list "()": rare, so fixed up only when seen
        s = s.replace('[")"', "[]")
    # The strings are not put back into the JSON text to be scanned again: each becomes the
    # JSON constant NaN, which the decoder hands to parse_constant in document order, and
    # parse_constant answers with the next string. Only strings with an escape are decoded.
    # Each string must be an atom of its own (`abc"def"` is two atoms, which the exact parser
    # reads; fused here it would silently become one): then the decoder takes every string
    # and stops just before the end mark.
    try:
        if "\\" in text:
            _unescape_strings(strings)
        strings.append(_END)
        remaining = iter(strings)
        decoder = json.JSONDecoder(strict=False, parse_constant=partial(next, remaining))
        tree = decoder.decode(s.replace('"\x01"', "NaN"))
    except (ValueError, RecursionError):
        return None
    if next(remaining, None) is not _END:
        return None
    return tree if isinstance(tree, list) else None


def _cut_strings(text: str) -> list[str] | None:
    """``text`` split at its string quotes: outside and inside of strings alternating; None
    when a backslash starts an escape JSON reads otherwise (a lone \\u).

    Backslashes are rare, so each is looked at (a one-character search is many times faster
    than one for two characters). With no escaped backslash, every backslash-quote is an
    escaped quote: it is written as JSON's \\u0022 (decoded back to '"'), leaving only real
    quotes to split at; with one, the regular expression finds the strings."""
    escaped_quotes: list[int] = []
    double = False
    i = text.find("\\")
    seen = 0
    while i >= 0:
        seen += 1
        if seen > _MANY_BACKSLASHES:
            return _cut_strings_slowly(text)
        c = text[i + 1:i + 2]
        if c == "u":                # JSON reads a code point, KiCad keeps the 'u'
            return None
        if c == "\\":
            double = True
            i += 1                  # the pair is one escape: its second half starts none
        elif c == '"':
            escaped_quotes.append(i)
        i = text.find("\\", i + 1)
    if double:
        return _STRING.split(text)
    if escaped_quotes:
        pieces, start = [], 0
        for i in escaped_quotes:
            pieces += (text[start:i], "\\u0022")
            start = i + 2
        pieces.append(text[start:])
        text = "".join(pieces)
    return text.split('"')


# Past this many backslashes, _cut_strings asks whole-text searches instead.
_MANY_BACKSLASHES = 1000


def _cut_strings_slowly(text: str) -> list[str] | None:
    if "\\\\" in text:
        # An escaped backslash followed by 'u' is fine for JSON; only a lone \\u is not.
        if "\\u" in text.replace("\\\\", ""):
            return None
        return _STRING.split(text)
    if "\\u" in text:
        return None
    return text.replace('\\"', "\\u0022").split('"')


def _unescape_strings(strings: list[str]) -> None:
    """Decode, in place, the strings that hold a backslash (a JSON escape), found with C-level
    searches of the strings joined by \\x01 (in no string: the fast path refuses text with
    it) instead of a test of every string."""
    joined = "\x01".join(strings)
    k, pos = 0, 0                   # strings[k] starts at joined[pos]
    i = joined.find("\\")
    while i >= 0:
        k += joined.count("\x01", pos, i)
        strings[k] = _JSON.decode('"' + strings[k] + '"')
        pos = joined.find("\x01", i) + 1
        if pos == 0:
            break
        k += 1
        i = joined.find("\\", pos)


def parse(text: str, file: str | None = None, pruning: Pruning | None = None) -> list:
    """Parse one S-expression document; return its top-level list.

    Raises :class:`SExprError` with file, line and column for unbalanced parentheses,
    unterminated strings, stray characters, text after the closing parenthesis, or
    nesting deeper than :data:`MAX_DEPTH`.
    """
    # The tree is acyclic (lists of str), so the cycle collector has nothing to find in it;
    # left on, it walks the growing tree again and again while it is built (a third of the
    # time for one sheet, half when the caller keeps earlier sheets' trees).
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        # Deep nesting makes the JSON decoder raise RecursionError; the exact parser reports it.
        tree = _parse_fast(text, pruning)
        if tree is not None:
            return tree
        return _parse_exact(text, file)
    finally:
        if was_enabled:
            gc.enable()


def _parse_exact(text: str, file: str | None = None) -> list:
    """Token-by-token parser: slower, exact about where a malformed document goes wrong."""
    src = SourceText(text, file)
    tokens = _TOKEN.findall(text)
    stack: list[list] = []
    cur: list = []
    root = cur
    depth = 0
    for t in tokens:
        c = t[0]
        if c == "(":
            new: list = []
            cur.append(new)
            stack.append(cur)
            cur = new
            depth += 1
            if depth > MAX_DEPTH:
                raise _locate(src, f"nesting deeper than {MAX_DEPTH} levels")
        elif c == ")":
            if not stack:
                raise _locate(src, "unbalanced ')'")
            cur = stack.pop()
            depth -= 1
        elif c == '"':
            cur.append(unescape(t[1:-1]) if "\\" in t else t[1:-1])
        else:
            cur.append(t)
    if stack:
        raise _locate(src, "file ends inside an expression (truncated?): missing ')'")
    # The C tokenizer skips what it cannot match (a lone '"'); make sure nothing was skipped.
    if len(root) != 1 or not isinstance(root[0], list):
        raise _locate(src, "expected exactly one top-level '(...)' expression")
    if _TOKEN.sub("", text).strip():
        raise _locate(src, "unterminated string or stray character")
    return root[0]


_WS = re.compile(r"\s+")


def _locate(src: SourceText, fallback: str) -> SExprError:
    """Slow, exact pass over the text to find where a malformed document goes wrong."""
    text = src.text
    depth = 0
    opened: list[int] = []
    pos = 0
    closed_top = None
    n = len(text)
    while pos < n:
        m = _WS.match(text, pos)
        if m:
            pos = m.end()
            continue
        if closed_top is not None:
            return src.error("text after the end of the top-level expression", pos)
        c = text[pos]
        if c == "(":
            depth += 1
            opened.append(pos)
            if depth > MAX_DEPTH:
                return src.error(f"nesting deeper than {MAX_DEPTH} levels", pos)
            pos += 1
        elif c == ")":
            if not opened:
                return src.error("unbalanced ')'", pos)
            opened.pop()
            depth -= 1
            pos += 1
            if depth == 0:
                closed_top = pos
        elif c == '"':
            m = _QUOTED_AT.match(text, pos)
            if not m:
                return src.error("unterminated string", pos)
            pos = m.end()
        else:
            if depth == 0:
                return src.error("expected '(' at the start of the document", pos)
            m = _BARE_AT.match(text, pos)
            pos = m.end()
    if opened:
        return src.error("file ends inside an expression (truncated?): this '(' is never closed",
                         opened[-1])
    if closed_top is None:
        return src.error("empty document: no '(...)' expression", 0)
    return src.error(fallback, 0)


def read_text(path: str | Path) -> str:
    """Read a KiCad file as UTF-8 (never the platform encoding).

    Raises SExprError naming the file and the line of the first undecodable byte, and
    InputError for anything that is not a readable regular file (see ``files.read_bytes``).
    """
    p = Path(path)
    data = read_bytes(p)
    if b"\x00" in data[:4096]:
        raise SExprError("binary file (NUL bytes), not a KiCad text file", str(path), 1, 1)
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as e:
        line = data.count(b"\n", 0, e.start) + 1
        col = e.start - (data.rfind(b"\n", 0, e.start) + 1) + 1
        raise SExprError(f"not valid UTF-8 (byte 0x{data[e.start]:02x}); KiCad files are UTF-8",
                         str(path), line, col) from None
    if text.startswith("\ufeff"):
        text = text[1:]
    return text


def count_expressions(text: str) -> int:
    """An upper bound on the lists in ``text`` (its opening parentheses, strings included),
    counted without building anything."""
    return text.count("(")


def parse_file(path: str | Path, max_expressions: int | None = None,
               pruning: Pruning | None = None) -> tuple[list, SourceText]:
    """Read and parse a KiCad S-expression file; return (tree, source). With
    ``max_expressions``, a file with more lists than that raises LimitError before any tree
    is built (a hostile file of ``()()()...`` would take 28 bytes of memory per input byte)."""
    text = read_text(path)
    # (a text no longer than the limit cannot hold more lists than that: nothing to count)
    if max_expressions is not None and len(text) > max_expressions and \
            count_expressions(text) > max_expressions:
        raise limit_error("expressions in one file", max_expressions, "--max-expressions",
                          str(path))
    tree = parse(text, str(path), pruning)
    return tree, SourceText(text, str(path))

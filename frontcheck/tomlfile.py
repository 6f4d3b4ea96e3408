"""Reading TOML files with errors that name the file, line and column."""

from __future__ import annotations

import re
import tomllib
from pathlib import Path

from frontcheck.errors import InputError

__all__ = ["TomlLines", "load_toml", "parse_toml"]

_LINE_COL = re.compile(r"\(at line (\d+), column (\d+)\)")


def load_toml(path: Path) -> tuple[dict, str]:
    """Read a TOML file; (document, text). Unreadable or invalid -> InputError with the file,
    and the line and column tomllib reports."""
    try:
        text = Path(path).read_text(encoding="utf-8")
    except OSError as e:
        raise InputError(f"cannot read: {e.strerror}", file=str(path),
                         hint="check the path and its permissions") from None
    except UnicodeDecodeError:
        raise InputError("not UTF-8 text", file=str(path), hint="save the file as UTF-8") from None
    return parse_toml(text, str(path)), text


def parse_toml(text: str, file: str) -> dict:
    try:
        return tomllib.loads(text)
    except RecursionError:
        raise InputError("nested too deeply to read", file=file,
                         hint="write tables and arrays a few levels deep") from None
    except tomllib.TOMLDecodeError as e:
        msg = str(e)
        m = _LINE_COL.search(msg)
        line, col = (int(m[1]), int(m[2])) if m else (None, None)
        raise InputError(f"invalid TOML: {_LINE_COL.sub('', msg).strip()}", file=file,
                         line=line, column=col,
                         hint="fix the TOML syntax (strings in quotes, one key per line, "
                              "tables as [name])") from None


class TomlLines:
    """Line numbers of keys in a TOML text, for messages about valid TOML with bad content.
    A plain scan: ``[a.b]`` / ``[[a]]`` headers and ``key =`` lines, made when a line is first
    asked for (most files read in a check never are)."""

    _HEADER = re.compile(r"^\s*\[\[?\s*([^\]]+?)\s*\]\]?\s*(?:#.*)?$")
    _KEY = re.compile(r"""^\s*("[^"]*"|'[^']*'|[A-Za-z0-9_.\-]+)\s*=""")
    _PART = re.compile(r'"[^"]*"|\'[^\']*\'|[^.\s]+')

    def __init__(self, text: str):
        self._text: str | None = text
        self._headers: dict[str, int] = {}
        self._every: dict[str, list[int]] = {}      # each [[array]] entry's header line
        self._keys: dict[tuple[str, str], int] = {}

    def _scan(self) -> None:
        text, self._text = self._text, None
        table = ""
        for i, line in enumerate(text.splitlines(), start=1):
            m = self._HEADER.match(line)
            if m:
                table = self._norm(m[1])
                self._headers.setdefault(table, i)
                self._every.setdefault(table, []).append(i)
                continue
            m = self._KEY.match(line)
            if m:
                self._keys.setdefault((table, self._norm(m[1])), i)

    @property
    def headers(self) -> dict[str, int]:
        if self._text is not None:
            self._scan()
        return self._headers

    @property
    def every(self) -> dict[str, list[int]]:
        if self._text is not None:
            self._scan()
        return self._every

    @property
    def keys(self) -> dict[tuple[str, str], int]:
        if self._text is not None:
            self._scan()
        return self._keys

    @classmethod
    def _norm(cls, dotted: str) -> str:
        return ".".join(p.strip("\"'") for p in cls._PART.findall(dotted))

    def nth(self, table: str, index: int) -> int | None:
        lines = self.every.get(table, [])
        return lines[index] if index < len(lines) else self.headers.get(table)

    def line_of(self, table: str, key: str | None = None) -> int | None:
        if key is not None:
            line = self.keys.get((table, key))
            if line is None and "." not in key:
                # a dotted key written inline: [stage] U3.target_gain = ...
                for (t, k), ln in self.keys.items():
                    if f"{t}.{k}".strip(".") == f"{table}.{key}":
                        return ln
            if line is not None:
                return line
        if table in self.headers:
            return self.headers[table]
        if "." in table:      # [a] b = {...} or b = 5 rather than [a.b]
            parent, _, last = table.rpartition(".")
            return self.keys.get((parent, last)) or self.line_of(parent)
        # a table only ever written as sub-tables: [a.b] for a
        below = [ln for t, ln in self.headers.items() if t.startswith(table + ".")]
        return min(below) if below else None

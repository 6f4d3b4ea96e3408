"""Rule profiles and part classes as frontcheck ships them, and how a profile is read.

Policy is data and lives once, in the repository's top-level ``rules/`` folder:
``rules/<profile>.toml`` (severities and thresholds per rule) and ``rules/parts/*.toml``
(generic part classes). A wheel installs that folder as ``frontcheck/rules`` (the package-dir
mapping in pyproject.toml); a checkout or an editable install reads it in place.

A profile file has a ``[profile]`` table (``name``, ``description``, optionally ``extends``: the
name of a shipped profile or the path of a profile file, relative to this one), an optional
``[defaults]`` table and one ``[rules.<rule-id>]`` table per rule. A profile that extends another
lists only what differs: its tables are merged key by key over those of the profile it extends.
Whether the rule ids and keys are known is checked by ``frontcheck.checks.policy``, which knows
the rules' declared parameters.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from frontcheck.errors import InputError
from frontcheck.tomlfile import TomlLines, load_toml

__all__ = ["Profile", "shipped_dir", "profile_names", "read_profile"]

_PACKAGE_DIR = Path(__file__).resolve().parent


def shipped_dir(*parts: str) -> Path:
    """The shipped policy folder (``shipped_dir()``) or a folder below it
    (``shipped_dir("parts")``): ``frontcheck/rules`` when installed from a wheel, else the
    repository's ``rules/`` beside the package."""
    for base in (_PACKAGE_DIR / "rules", _PACKAGE_DIR.parent / "rules"):
        if base.is_dir() and any(base.glob("*.toml")):
            return base.joinpath(*parts)
    raise InputError("frontcheck's rule profiles and part classes are missing",
                     hint="reinstall frontcheck; the files come from the repository's rules/")


def profile_names() -> list[str]:
    """Names of the shipped profiles (``default``, ``strict``, ...)."""
    return sorted(p.stem for p in shipped_dir().glob("*.toml"))


@dataclass
class Profile:
    """A profile after ``extends`` was followed: ``rules`` and ``defaults`` hold every key of
    the chain, the last file winning; ``files`` lists the files read, the base first; ``lines``
    maps each file to the line index of its keys (for messages about content)."""

    name: str
    description: str = ""
    rules: dict[str, dict[str, Any]] = field(default_factory=dict)
    defaults: dict[str, Any] = field(default_factory=dict)
    files: list[str] = field(default_factory=list)
    lines: dict[str, TomlLines] = field(default_factory=dict)
    origin: dict[tuple[str, str], str] = field(default_factory=dict)   # (rule, key) -> file

    def line_of(self, rule: str, key: str | None = None) -> tuple[str | None, int | None]:
        """(file, line) where ``[rules.<rule>] key`` (or the table) was written."""
        file = self.origin.get((rule, key or "")) or (self.files[-1] if self.files else None)
        lines = self.lines.get(file) if file else None
        return file, (lines.line_of(f"rules.{rule}", key) if lines else None)


def _is_path(name: str) -> bool:
    return name.endswith(".toml") or "/" in name or "\\" in name


def _locate(name: str, relative_to: Path | None) -> Path:
    if _is_path(name):
        path = Path(name)
        if relative_to is not None and not path.is_absolute():
            path = relative_to / path
        if not path.is_file():
            raise InputError("rule profile file not found", file=str(path),
                             hint=f"give a profile name ({', '.join(profile_names())}) "
                                  "or an existing .toml file")
        return path
    path = shipped_dir() / f"{name}.toml"
    if not re.fullmatch(r"[A-Za-z0-9_\-]+", name) or not path.is_file():
        raise InputError(f"unknown rule profile {name!r}",
                         hint=f"use one of: {', '.join(profile_names())}, or a path to a .toml file")
    return path


def read_profile(name_or_path: str | Path, relative_to: Path | None = None) -> Profile:
    """Read a profile by shipped name or by path, following ``extends``.

    Raises InputError (file, line) for unreadable TOML, a misshapen table, an unknown profile
    or a loop of ``extends``.
    """
    return _read(str(name_or_path), relative_to, ())


def _read(name: str, relative_to: Path | None, seen: tuple[Path, ...]) -> Profile:
    path = _locate(name, relative_to).resolve()
    file = str(path)
    if path in seen:
        raise InputError("profiles extend each other in a loop", file=file,
                         hint="one profile in the chain must not say extends")
    doc, text = load_toml(path)
    lines = TomlLines(text)
    head = _table(doc.get("profile", {}), "[profile]", file, lines.line_of("profile"),
                  '[profile] name = "mine"')
    base = head.get("extends")
    if base is not None and (not isinstance(base, str) or not base):
        raise InputError("[profile] extends must be a profile name or a file in quotes",
                         file=file, line=lines.line_of("profile", "extends"),
                         hint='extends = "default"')
    out = _read(base, path.parent, seen + (path,)) if base else Profile(name=path.stem)
    out.name = str(head.get("name", path.stem))
    out.description = str(head.get("description", ""))
    out.files.append(file)
    out.lines[file] = lines
    rules = _table(doc.get("rules", {}), "[rules]", file, lines.line_of("rules"),
                   '[rules.headroom] severity = "error"')
    for rule, keys in rules.items():
        keys = _table(keys, f"[rules.{rule}]", file, lines.line_of(f"rules.{rule}"),
                      f'[rules.{rule}] severity = "warning"')
        out.rules.setdefault(rule, {}).update(keys)
        out.origin[(rule, "")] = file
        for key in keys:
            out.origin[(rule, key)] = file
    defaults = _table(doc.get("defaults", {}), "[defaults]", file, lines.line_of("defaults"),
                      '[defaults] resistor_tolerance = "1%"')
    out.defaults.update(defaults)
    return out


def _table(value: Any, what: str, file: str, line: int | None, example: str) -> dict:
    if not isinstance(value, dict):
        raise InputError(f"{what} must be a table", file=file, line=line, hint=f"write e.g. {example}")
    return value

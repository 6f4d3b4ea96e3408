"""Rule policy: the per-rule severities and thresholds of a profile, checked against the rules.

Profiles are data (``rules/<name>.toml``, read by :mod:`frontcheck.profiles`, which also follows
``extends``); this module checks a profile's or a project file's ``[rules.<id>]`` tables against
the settings each rule declares in its own module (``PARAMETERS``, :mod:`.params`) and merges
them. A project's ``frontcheck.toml`` may override any key
under ``[rules.<id>]``.
"""

from __future__ import annotations

from functools import lru_cache
from pathlib import Path
from typing import Callable

from ..errors import InputError
from ..profiles import read_profile


@lru_cache(maxsize=None)
def _load_shipped(name: str) -> dict:
    return _validated(read_profile(name))


def load_profile(name_or_path: str | Path) -> dict[str, dict]:
    """Per-rule policy of a profile: ``{rule_id: {key: value}}``, ``extends`` followed.

    ``name_or_path`` is a shipped profile name (``default``, ``strict``) or a path to a profile
    file of the same format. Raises InputError for unreadable or invalid files.
    """
    s = str(name_or_path)
    table = read_profile(s) if s.endswith(".toml") or "/" in s or "\\" in s else None
    rules = _validated(table) if table is not None else _load_shipped(s)
    return {k: dict(v) for k, v in rules.items()}


def validate_profile(profile) -> None:
    """Check a :class:`frontcheck.profiles.Profile`'s rule tables; errors name the file and
    line where the offending key was written."""
    validate_rules(profile.rules, locate=profile.line_of)


def _validated(profile) -> dict:
    validate_profile(profile)
    return profile.rules


def merge_rules(base: dict[str, dict], override: dict[str, dict]) -> dict[str, dict]:
    """Key-wise merge of two per-rule tables (override wins); neither input is changed."""
    out = {k: dict(v) for k, v in base.items()}
    for rule, keys in override.items():
        out.setdefault(rule, {}).update(keys)
    return out


def validate_rules(table: dict, file: str | None = None,
                   locate: Callable[[str, str | None], tuple[str | None, int | None]] | None = None
                   ) -> None:
    """Check a ``{rule_id: {key: value}}`` table: known rules, known keys, sensible values.

    Raises InputError naming the file (and, with ``locate(rule, key) -> (file, line)``, the
    line) of the offending ``[rules.<id>]`` key; the hint lists what is allowed.
    ``frontcheck.config`` calls this for the project file's overrides.
    """
    from . import rules as _rules   # late: the rule modules import this module

    def fail(rule: str, key: str | None, message: str, hint: str):
        where_file, line = locate(rule, key) if locate else (file, None)
        raise InputError(message, file=where_file or file, line=line, hint=hint)

    known = {r.id: r.parameters for r in _rules()}
    for rule, keys in table.items():
        if rule not in known:
            fail(rule, None, f"unknown rule [rules.{rule}]", f"known rules: {', '.join(known)}")
        if not isinstance(keys, dict):
            fail(rule, None, f"[rules.{rule}] must be a table of settings",
                 f"e.g. [rules.{rule}] severity = \"warning\"")
        for key, value in keys.items():
            param = known[rule].get(key)
            if param is None:
                fail(rule, key, f"unknown setting {key!r} in [rules.{rule}]",
                     f"settings of {rule}: {', '.join(known[rule])}")
            problem = param.problem(value)
            if problem:
                fail(rule, key, f"[rules.{rule}] {key} = {_show(value)} {problem}",
                     f"{key} ({param.meaning}) is {param.type_text()}")


def _show(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    return repr(value) if isinstance(value, str) else str(value)

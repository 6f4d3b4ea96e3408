"""Rule profiles: severities and thresholds per rule, kept as TOML data rather than code.

A profile file has a ``[profile]`` table (``name``, ``description``) and one ``[rules.<id>]``
table per rule. The user-visible copies live in the repository's ``rules/`` folder; the
installed package reads its own copies from ``frontcheck/data/rules/`` (a test keeps the two
identical). A project's ``frontcheck.toml`` may override any key under ``[rules.<id>]``.
"""

from __future__ import annotations

import tomllib
from functools import lru_cache
from importlib import resources
from pathlib import Path

from ..errors import InputError

LEVELS = ("off", "info", "warning", "error")


def _data_dir():
    return resources.files("frontcheck").joinpath("data", "rules")


def profile_names() -> list[str]:
    """Names of the profiles shipped with frontcheck."""
    return sorted(p.name[:-5] for p in _data_dir().iterdir() if p.name.endswith(".toml"))


def profile_path(name: str):
    """The packaged file of profile ``name`` (a Traversable; ``str()`` gives a path)."""
    p = _data_dir().joinpath(f"{name}.toml")
    if not p.is_file():
        raise InputError(f"unknown rule profile {name!r}",
                         hint=f"use one of: {', '.join(profile_names())}, or a path to a .toml file")
    return p


@lru_cache(maxsize=None)
def _load_packaged(name: str) -> dict:
    p = profile_path(name)
    return _parse(p.read_text(encoding="utf-8"), f"frontcheck/data/rules/{name}.toml")


def load_profile(name_or_path: str | Path) -> dict[str, dict]:
    """Per-rule policy of a profile: ``{rule_id: {key: value}}``.

    ``name_or_path`` is a packaged profile name (``default``, ``strict``) or a path to a profile
    file of the same format. Raises InputError for unreadable or invalid files.
    """
    s = str(name_or_path)
    if s.endswith(".toml") or "/" in s or "\\" in s:
        path = Path(s)
        try:
            text = path.read_text(encoding="utf-8")
        except OSError as e:
            raise InputError(f"cannot read rule profile: {e.strerror}", file=s,
                             hint="give a packaged profile name or an existing .toml file") from None
        return {k: dict(v) for k, v in _parse(text, s).items()}
    return {k: dict(v) for k, v in _load_packaged(s).items()}


def _parse(text: str, file: str) -> dict[str, dict]:
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as e:
        raise InputError(f"invalid TOML: {e}", file=file,
                         hint="fix the profile's TOML syntax") from None
    table = doc.get("rules", {})
    if not isinstance(table, dict):
        raise InputError("[rules] must be a table", file=file,
                         hint="write one [rules.<rule-id>] table per rule")
    validate_rules(table, file=file)
    return table


def merge_rules(base: dict[str, dict], override: dict[str, dict]) -> dict[str, dict]:
    """Key-wise merge of two per-rule tables (override wins); neither input is changed."""
    out = {k: dict(v) for k, v in base.items()}
    for rule, keys in override.items():
        out.setdefault(rule, {}).update(keys)
    return out


def validate_rules(table: dict, file: str | None = None) -> None:
    """Check a ``{rule_id: {key: value}}`` table: known rules, known keys, sensible values.

    Raises InputError naming the file and the offending ``[rules.<id>]`` key; the hint lists
    what is allowed. ``frontcheck.config`` calls this for the project file's overrides.
    """
    from . import rules as _rules   # late: the rule modules import this module

    known = {r.id: r.parameters for r in _rules()}
    for rule, keys in table.items():
        if rule not in known:
            raise InputError(f"unknown rule [rules.{rule}]", file=file,
                             hint=f"known rules: {', '.join(known)}")
        if not isinstance(keys, dict):
            raise InputError(f"[rules.{rule}] must be a table of settings", file=file,
                             hint=f"e.g. [rules.{rule}] severity = \"warning\"")
        for key, value in keys.items():
            if key not in known[rule]:
                raise InputError(f"unknown setting {key!r} in [rules.{rule}]", file=file,
                                 hint=f"settings of {rule}: {', '.join(known[rule])}")
            _check_value(rule, key, value, file)


def _check_value(rule: str, key: str, value, file: str | None) -> None:
    where = f"[rules.{rule}] {key}"
    if key.endswith("severity"):
        if value not in LEVELS:
            raise InputError(f"{where} = {value!r} is not a severity", file=file,
                             hint=f"use one of: {', '.join(LEVELS)}")
    elif key == "series":
        ok = isinstance(value, list) and value and all(
            isinstance(v, str) and v.upper() in ("E6", "E12", "E24", "E48", "E96", "E192")
            for v in value)
        if not ok:
            raise InputError(f"{where} must be a list of E-series names", file=file,
                             hint='e.g. series = ["E96", "E192"]')
    elif isinstance(value, bool):
        pass
    elif isinstance(value, (int, float)):
        if value < 0:
            raise InputError(f"{where} = {value} must not be negative", file=file,
                             hint="thresholds are magnitudes")
    else:
        raise InputError(f"{where} = {value!r} has the wrong type", file=file,
                         hint="thresholds are numbers, severities strings, switches true/false")

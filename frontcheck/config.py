"""Project configuration: the rule profile plus the project's own ``frontcheck.toml``.

``load_config`` reads the profile (``default`` unless the caller or the project file names
another; the profile files are ``rules/<name>.toml``, read by :mod:`frontcheck.profiles`) and
merges the project file found beside the ``.kicad_pro``. The project file is optional; every
table in it is optional::

    profile = "strict"                  # rule profile when the command line names none

    [defaults]
    resistor_tolerance = "1%"           # assumed where a resistor states none ("1%" or 0.01)
    capacitor_tolerance = "10%"
    opamp_class = "general-purpose"     # class assumed for an op-amp with no part data
                                        # (built in "none": the op-amp is ideal in the
                                        # figures and gets requirements)

    [rails]                             # net name -> volts (number or "3.3 V")
    VCC = 3.3
    "+BATT" = "7.4 V"

    [stage.U3]                          # operating intent of the stage built on U3
    target_gain = "100 ±0.5%"           # (see frontcheck.intent for every key)
    input_cm = "1..4 V"

    [rules.cmrr-budget]                 # override any key of the profile, per rule
    severity = "warning"

    [[waive]]                           # accept one finding, with a reason (required)
    rule = "bias-return"
    references = ["U3"]                 # optional: only findings on these references
    reason = "thermocouple is grounded at the sensor end"

    [parts]                             # part data, same format as frontcheck-parts.toml
    [[parts.match]]                     # (see frontcheck.parts)
    value = "AMP-7*"
    class = "zero-drift"

Supply rails come from power-net names where the name says the voltage unambiguously
(``+5V``, ``-12V``, ``+3V3``, ``3.3V``, ``+1V8``, ``+3.3VA``) and from GND-like names (``GND``,
``AGND``, ``GNDA``, ``0V``, ...) at 0 V. Names such as ``VCC``, ``VDD``, ``VSS``, ``VEE``,
``+BATT`` say nothing about the voltage (VSS is the negative rail of many split supplies) and
stay unknown unless ``[rails]`` gives them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from frontcheck.circuit import Sourced
from frontcheck.errors import InputError
from frontcheck.rail_names import is_zero_volt_name, stated_voltage
from frontcheck.profiles import Profile, profile_names, read_profile
from frontcheck.tomlfile import TomlLines as _Lines, load_toml
from frontcheck.values import format_percent, parse_tolerance, parse_value

__all__ = ["CONFIG_NAME", "Config", "Waiver", "load_config", "load_toml", "profile_names",
           "rail_from_name"]

CONFIG_NAME = "frontcheck.toml"
DEFAULT_PROFILE = "default"

# Built-in assumptions when neither the profile nor the project states one. 1 % is the usual
# resistor tolerance in precision front ends and 10 % a common ceramic capacitor tolerance
# (common practice); the report marks every use as assumed.
BUILTIN_DEFAULTS: dict[str, Any] = {
    "resistor_tolerance": 0.01,
    "capacitor_tolerance": 0.10,
    "opamp_class": "none",
}
_TOP_KEYS = ("profile", "defaults", "rails", "stage", "rules", "waive", "parts")


# --------------------------------------------------------------------------------------------
# Rails

def rail_from_name(net_name: str) -> Sourced | None:
    """Voltage a power-net name states, or None when it states none (the conventions are in
    :mod:`frontcheck.rail_names`): ``+5V`` -> 5, ``+3V3`` -> 3.3, ``GND`` -> 0; ``VCC``, ``VSS``,
    ``VEE``, ``+BATT`` and sheet-local names (``/amp/+5V``) -> None."""
    v = stated_voltage(net_name)
    if v is None:
        return None
    if is_zero_volt_name(net_name):
        return Sourced(0.0, "value", f"ground net name '{net_name}' (0 V by convention)")
    return Sourced(v, "value", f"power-net name '{net_name}'")


# --------------------------------------------------------------------------------------------
# Config

@dataclass(frozen=True)
class Waiver:
    """A finding the project accepts. Matches on rule id, and on references/stage when given."""

    rule: str
    reason: str
    references: tuple[str, ...] = ()
    stage: str | None = None
    file: str | None = None
    line: int | None = None

    def matches(self, rule: str, stage: str | None = None,
                references: tuple[str, ...] | list[str] = ()) -> bool:
        if rule != self.rule:
            return False
        if self.stage is not None and self.stage != stage:
            return False
        if self.references and not set(self.references) & set(references):
            return False
        return True


@dataclass
class Config:
    """Everything the run needs from profile and project file.

    ``rules`` is ``{rule_id: {key: value}}`` with project overrides merged; ``stages`` the
    raw ``[stage.<ref>]`` tables (frontcheck.intent reads them); ``parts`` the raw ``[parts]``
    table (frontcheck.parts reads it); ``files`` every file that was read, in order.
    """

    profile: str = DEFAULT_PROFILE
    rules: dict[str, dict] = field(default_factory=dict)
    rails: dict[str, Sourced] = field(default_factory=dict)
    stages: dict[str, dict] = field(default_factory=dict)
    waivers: list[Waiver] = field(default_factory=list)
    defaults: dict[str, Sourced | str] = field(default_factory=dict)
    parts: dict = field(default_factory=dict)
    project_dir: Path | None = None
    config_path: Path | None = None
    files: list[str] = field(default_factory=list)
    _lines: _Lines | None = field(default=None, repr=False)

    def rule(self, rule_id: str) -> dict:
        """Settings of one rule (empty when the profile has none)."""
        return self.rules.get(rule_id, {})

    def rail_voltage(self, net_name: str) -> Sourced | None:
        """Voltage of a supply net: the project's ``[rails]`` first, then the net name."""
        if net_name in self.rails:
            return self.rails[net_name]
        return rail_from_name(net_name)

    def default_tolerance(self, kind: str = "resistor") -> Sourced:
        """Assumed tolerance of a ``kind`` ('resistor' or 'capacitor') part that states none,
        with where the assumption comes from in ``detail`` ('profile', 'frontcheck.toml',
        'built-in')."""
        d = self.defaults[f"{kind}_tolerance"]
        assert isinstance(d, Sourced)
        return d

    @property
    def default_opamp_class(self) -> Sourced | str:
        return self.defaults["opamp_class"]

    def stage_table(self, ref: str) -> dict | None:
        """The ``[stage.<ref>]`` table, or None."""
        return self.stages.get(ref)

    def line_of(self, table: str, key: str | None = None) -> int | None:
        """Line of ``[table]`` (or of ``key`` inside it) in the project file, for messages."""
        return self._lines.line_of(table, key) if self._lines else None

    def waived(self, rule: str, stage: str | None = None,
               references: tuple[str, ...] | list[str] = ()) -> Waiver | None:
        """The first waiver that covers a finding, or None."""
        for w in self.waivers:
            if w.matches(rule, stage, references):
                return w
        return None


def _as_table(value: Any, what: str, file: str, line: int | None, example: str) -> dict:
    if not isinstance(value, dict):
        raise InputError(f"{what} must be a table", file=file, line=line, hint=f"write e.g. {example}")
    return value


def _tolerance_setting(value: Any, key: str, file: str, line: int | None) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise InputError(f"[defaults] {key} must be a percentage or a fraction", file=file,
                         line=line, hint=f'write {key} = "1%" or {key} = 0.01')
    if isinstance(value, str):
        try:
            return parse_tolerance(value)
        except ValueError as e:
            raise InputError(f"[defaults] {key}: {e}", file=file, line=line,
                             hint=f'write {key} = "1%" or {key} = 0.01') from None
    if not 0 <= value < 1:
        raise InputError(f"[defaults] {key} = {value} is not a fraction below 1", file=file,
                         line=line, hint=f'numbers are fractions (0.01 = 1 %); or write "{value}%"')
    return float(value)


def _volts(value: Any, what: str, file: str, line: int | None) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise InputError(f"{what} must be a voltage", file=file, line=line,
                         hint='write a number of volts (3.3) or text ("3.3 V")')
    if isinstance(value, str):
        try:
            v = parse_value(value, unit="V")
        except ValueError as e:
            raise InputError(f"{what}: {e}", file=file, line=line,
                             hint='write a number of volts (3.3) or text ("3.3 V")') from None
    else:
        v = float(value)
    if not math.isfinite(v):
        raise InputError(f"{what} is not finite", file=file, line=line, hint="write a voltage")
    return v


def _validate_profile(profile) -> None:
    from frontcheck.checks.policy import validate_profile   # the rules know their settings
    validate_profile(profile)


def _validate_rule_overrides(table: dict, file: str, lines: _Lines) -> None:
    """Use the rule registry's validation when it is there, so a typo in a rule id or key is an
    error rather than a silently ignored setting."""
    try:
        from frontcheck.checks.policy import validate_rules
    except ImportError:      # pragma: no cover - the rules package always ships
        return
    validate_rules(table, locate=lambda rule, key: (file, lines.line_of(f"rules.{rule}", key)))


def load_config(project_dir: Path | None, profile: str | None = None,
                config_file: Path | None = None) -> Config:
    """Profile + project file -> Config.

    Parameters
    ----------
    project_dir : Path or None
        Folder of the ``.kicad_pro``; its ``frontcheck.toml`` is read when present. None: no
        project file (a lone netlist, say).
    profile : str or None
        Profile name (``default``, ``strict``) or path to a profile file. None: the project
        file's ``profile`` key, else ``default``.
    config_file : Path or None
        Read this project file instead of ``project_dir/frontcheck.toml`` (it must exist).

    Raises
    ------
    InputError
        Unreadable or invalid TOML (file, line, column), unknown profile, unknown top-level
        table, a malformed ``[defaults]``, ``[rails]`` or ``[[waive]]`` entry, or (through the
        rule registry) an unknown rule or setting in ``[rules.<id>]``.
    """
    project_dir = Path(project_dir) if project_dir is not None else None
    cfg = Config(project_dir=project_dir)
    path = _project_file(project_dir, config_file)
    doc: dict = {}
    lines = _Lines("")
    if path is not None:
        doc, text = load_toml(path)
        lines = _Lines(text)
        cfg.config_path, cfg._lines = path, lines
    file = str(path) if path else CONFIG_NAME

    for key in doc:
        if key not in _TOP_KEYS:
            raise InputError(f"unknown setting {key!r}", file=file, line=lines.line_of(key) or
                             lines.line_of("", key),
                             hint=f"top-level keys and tables: {', '.join(_TOP_KEYS)}")
    prof = _apply_profile(cfg, doc, profile, path, file, lines)
    _apply_defaults(cfg, doc, prof, file, lines)
    _apply_project_tables(cfg, doc, file, lines)
    return cfg


def _project_file(project_dir: Path | None, config_file: Path | None) -> Path | None:
    """The project file to read: ``config_file`` (which must exist), else the project
    folder's ``frontcheck.toml`` when there is one."""
    if config_file is not None:
        path = Path(config_file)
        if not path.is_file():
            raise InputError("configuration file not found", file=str(path),
                             hint=f"give an existing {CONFIG_NAME}, or leave the option out")
        return path
    if project_dir is not None and (project_dir / CONFIG_NAME).is_file():
        return project_dir / CONFIG_NAME
    return None


def _apply_profile(cfg: Config, doc: dict, profile: str | None, path: Path | None, file: str,
                   lines: _Lines) -> Profile:
    """Read the profile the command line or the project file names (else the default) into
    ``cfg``; returns it."""
    name = profile
    if name is None and "profile" in doc:
        if not isinstance(doc["profile"], str):
            raise InputError("profile must be a name in quotes", file=file,
                             line=lines.line_of("", "profile"), hint='profile = "strict"')
        name = doc["profile"]
        if path is not None and (name.endswith(".toml") or "/" in name) and not Path(name).is_absolute():
            name = str(path.parent / name)      # a profile file beside the project file
    prof = read_profile(name or DEFAULT_PROFILE)
    _validate_profile(prof)
    cfg.files.extend(prof.files)
    cfg.profile = prof.name
    cfg.rules = {k: dict(v) for k, v in prof.rules.items()}
    if path is not None:
        cfg.files.append(str(path))
    return prof


def _apply_defaults(cfg: Config, doc: dict, prof: Profile, file: str, lines: _Lines) -> None:
    """Defaults in layers: built-in < profile [defaults] < project [defaults]."""
    layered: list[tuple[dict, str, str, _Lines | None]] = [(BUILTIN_DEFAULTS, "built-in", "built-in", None)]
    if prof.defaults:
        layered.append((prof.defaults, "profile", prof.files[-1], None))
    if "defaults" in doc:
        layered.append((_as_table(doc["defaults"], "[defaults]", file, lines.line_of("defaults"),
                                  '[defaults] resistor_tolerance = "1%"'), CONFIG_NAME, file, lines))
    for table, label, src_file, lns in layered:
        for key, value in table.items():
            line = lns.line_of("defaults", key) if lns else None
            if key in ("resistor_tolerance", "capacitor_tolerance"):
                t = _tolerance_setting(value, key, src_file, line)
                cfg.defaults[key] = Sourced(t, "default", f"default {format_percent(t)} ({label})")
            elif key == "opamp_class":
                if not isinstance(value, str) or not value:
                    raise InputError("[defaults] opamp_class must be a class name", file=src_file,
                                     line=line, hint='opamp_class = "general-purpose"')
                cfg.defaults[key] = value
            else:
                raise InputError(f"unknown setting {key!r} in [defaults]", file=src_file, line=line,
                                 hint=f"known: {', '.join(BUILTIN_DEFAULTS)}")


def _apply_project_tables(cfg: Config, doc: dict, file: str, lines: _Lines) -> None:
    """The project file's [rails], [stage.*], [rules.*], waivers and [parts], in that order."""
    if "rails" in doc:
        rails = _as_table(doc["rails"], "[rails]", file, lines.line_of("rails"), '[rails] VCC = 3.3')
        for net, value in rails.items():
            v = _volts(value, f"[rails] {net!r}", file, lines.line_of("rails", net))
            cfg.rails[net] = Sourced(v, "project", f"{CONFIG_NAME} [rails]")

    # stages: content is checked by frontcheck.intent, which knows the keys
    if "stage" in doc:
        stages = _as_table(doc["stage"], "[stage]", file, lines.line_of("stage"),
                           '[stage.U3] target_gain = "100"')
        for ref, table in stages.items():
            cfg.stages[ref] = _as_table(table, f"[stage.{ref}]", file, lines.line_of(f"stage.{ref}"),
                                        f'[stage.{ref}] target_gain = "100"')

    if "rules" in doc:
        over = _as_table(doc["rules"], "[rules]", file, lines.line_of("rules"),
                         '[rules.cmrr-budget] severity = "warning"')
        for rid, table in over.items():
            _as_table(table, f"[rules.{rid}]", file, lines.line_of(f"rules.{rid}"),
                      f'[rules.{rid}] severity = "warning"')
        _validate_rule_overrides(over, file, lines)
        for rid, table in over.items():
            cfg.rules.setdefault(rid, {}).update(table)

    # waivers: [[waive]] entries, or [waive.<rule-id>] tables
    if "waive" in doc:
        cfg.waivers = _waivers(doc["waive"], file, lines)

    # parts: content is checked by frontcheck.parts
    if "parts" in doc:
        cfg.parts = _as_table(doc["parts"], "[parts]", file, lines.line_of("parts"),
                              '[[parts.match]] value = "AMP-7*"  class = "zero-drift"')

def _waivers(raw: Any, file: str, lines: _Lines) -> list[Waiver]:
    entries: list[tuple[dict, str | None]] = []
    if isinstance(raw, list):
        entries = [(e, None) for e in raw]
    elif isinstance(raw, dict):
        entries = [(e, rid) for rid, e in raw.items()]
    else:
        raise InputError("waive must be [[waive]] entries", file=file, line=lines.line_of("waive"),
                         hint='[[waive]] rule = "bias-return"  reason = "..."')
    out: list[Waiver] = []
    for i, (e, rid) in enumerate(entries):
        line = lines.line_of(f"waive.{rid}") if rid else lines.nth("waive", i)
        example = '[[waive]] rule = "bias-return"  references = ["U3"]  reason = "why this is fine"'
        if not isinstance(e, dict):
            raise InputError("a waiver must be a table", file=file, line=line, hint=example)
        unknown = set(e) - {"rule", "reason", "references", "stage"}
        if unknown:
            raise InputError(f"unknown waiver key(s) {', '.join(sorted(unknown))}", file=file,
                             line=line, hint=example)
        rule = e.get("rule", rid)
        if rid is not None and "rule" in e and e["rule"] != rid:
            raise InputError(f"[waive.{rid}] names rule {e['rule']!r}", file=file, line=line,
                             hint="leave rule out inside [waive.<rule-id>]")
        if not isinstance(rule, str) or not rule:
            raise InputError("a waiver needs the rule id it waives", file=file, line=line, hint=example)
        reason = e.get("reason")
        if not isinstance(reason, str) or not reason.strip():
            raise InputError(f"waiver of {rule!r} has no reason", file=file, line=line,
                             hint="every waiver states why the finding is acceptable: " + example)
        refs = e.get("references", ())
        if not isinstance(refs, (list, tuple)) or not all(isinstance(r, str) for r in refs):
            # a string too: one reference or several in one string? say so rather than guess
            raise InputError(f"waiver key references = {refs!r} must be a list of references",
                             file=file, line=line,
                             hint='references = ["U3", "R7"]')
        stage = e.get("stage")
        if stage is not None and not isinstance(stage, str):
            raise InputError("waiver stage must be a stage id", file=file, line=line,
                             hint='stage = "U3"')
        out.append(Waiver(rule, reason.strip(), tuple(refs), stage, file, line))
    return out

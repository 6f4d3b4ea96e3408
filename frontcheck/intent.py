"""Operating intent of a stage: what the designer says it must do and under which conditions.

Written as fields on the amplifier symbol (an op-amp of the stage, or the in-amp IC), or in
``frontcheck.toml`` under ``[stage.<reference>]``. Field names are matched case-insensitively;
in the project file the same names may be written in snake case (``target_gain``) or as on the
symbol (``"Target Gain"``).

=================  =====================  =================================================
Symbol field       frontcheck.toml key    Accepted text (TOML may also give plain numbers)
=================  =====================  =================================================
``Target Gain``    ``target_gain``        ``100``, ``100 ±0.5%``, ``100 +/-0.5 %``, ``40 dB``
``Gain Tol``       ``gain_tol``           ``0.5%`` (TOML: also a fraction, 0.005)
``Min CMRR``       ``min_cmrr``           ``80 dB`` (a number in TOML: ``min_cmrr_db = 80``)
``Input CM``       ``input_cm``           ``2.5 V``, ``1..4 V``, ``-10 V .. 10 V``, ``±10 V``,
                                          ``2.5 V ± 1 V`` (TOML: ``[1.0, 4.0]`` volts)
``Input Diff``     ``input_diff``         ``±20 mV``, ``-5..20 mV``, ``0..50 mV``
``Ref Voltage``    ``ref_voltage``        ``2.5 V``, ``0 V`` (TOML: ``2.5``)
``Caution``        ``caution``/``notes``  words separated by commas: ``patient-connected,
                                          mains``
=================  =====================  =================================================

The error-budget entries ``Band``, ``Temp Range``, ``CMRR At`` and ``Error Budget`` are read by
:mod:`frontcheck.intent_budget` (see its table).

Voltages on symbols carry their unit (``V``, ``mV``, ``uV``): a bare ``20`` could be volts or
millivolts, and guessing would put the operating box in the wrong place. In a range the unit
may be written once at the end (``-5..20 mV``). A field and a project key that both give the
same quantity must agree; a malformed entry is an InputError naming the file, line, field and
an example of a good value.
"""

from __future__ import annotations

import functools
import math
import re
from collections.abc import Iterable
from dataclasses import fields as dc_fields
from typing import Any

from frontcheck.circuit import Intent
from frontcheck.errors import InputError
from frontcheck.intent_budget import BUDGET_FIELDS, read_budget_entry
from frontcheck.netlist import Component
from frontcheck.values import parse_tolerance, parse_value

__all__ = ["INTENT_FIELDS", "apply_intent", "unused_stage_tables", "parse_cmrr_db", "parse_gain", "parse_range", "parse_volts",
           "stage_intent"]

# canonical key -> (symbol field name, example of a good value)
INTENT_FIELDS: dict[str, tuple[str, str]] = {
    "target_gain": ("Target Gain", "'100' or '100 ±0.5%'"),
    "gain_tol": ("Gain Tol", "'0.5%'"),
    "min_cmrr": ("Min CMRR", "'80 dB'"),
    "input_cm": ("Input CM", "'2.5 V', '1..4 V' or '-10 V .. 10 V'"),
    "input_diff": ("Input Diff", "'±20 mV' or '-5..20 mV'"),
    "ref_voltage": ("Ref Voltage", "'2.5 V'"),
    "caution": ("Caution", "'patient-connected, mains'"),
    **BUDGET_FIELDS,
}
_ALIASES = {"min_cmrr_db": "min_cmrr", "notes": "caution", "cautions": "caution",
            "band_hz": "band", "temp_range_c": "temp_range", "cmrr_at_hz": "cmrr_at",
            "gain": "target_gain", "vref": "ref_voltage", "ref": "ref_voltage"}

_NUM = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"
_PM = r"(?:\u00b1|\+/-|\+-)"


@functools.lru_cache(maxsize=4096)
def _key(name: str) -> str:
    k = re.sub(r"[\s\-]+", "_", name.strip().lower())
    return _ALIASES.get(k, k)


# ---------------------------------------------------------------------------- parsers

def parse_gain(text: str) -> tuple[float, float | None]:
    """``'100'`` -> (100, None); ``'100 ±0.5%'``, ``'100 +/-0.5 %'``, ``'100 0.5%'`` ->
    (100, 0.005); ``'40 dB'`` -> (100, None); ``'100 V/V'``, ``'100x'`` -> (100, None).
    Raises ValueError."""
    s = text.strip()
    m = re.fullmatch(rf"(?P<g>.+?)(?:\s*{_PM}\s*|\s*/\s*|\s+)(?P<t>{_NUM})\s*%", s)
    g_text, t_text = (m["g"].strip(), m["t"]) if m else (s, None)
    db = re.fullmatch(rf"({_NUM})\s*dB", g_text, re.IGNORECASE)
    if db:
        gain = 10 ** (float(db[1]) / 20)
    else:
        g_text = re.sub(r"\s*(?:V/V|x)$", "", g_text, flags=re.IGNORECASE)
        if not re.fullmatch(_NUM, g_text):
            raise ValueError(f"cannot read gain '{text}': expected a number, e.g. '100 ±0.5%'")
        gain = float(g_text)
    if not (math.isfinite(gain) and gain > 0):
        raise ValueError(f"gain '{text}' must be positive")
    tol = None
    if t_text is not None:
        tol = float(t_text) / 100
        if not 0 < tol < 1:
            raise ValueError(f"gain tolerance in '{text}' must be above 0 % and below 100 %")
    return gain, tol


def parse_cmrr_db(text: str) -> float:
    """``'80 dB'`` -> 80.0. The unit is required: a bare number could be a ratio."""
    m = re.fullmatch(rf"\s*({_NUM})\s*dB\s*", text, re.IGNORECASE)
    if not m:
        raise ValueError(f"cannot read CMRR '{text}': write it in dB, e.g. '80 dB'")
    v = float(m[1])
    if v <= 0:
        raise ValueError(f"CMRR '{text}' must be above 0 dB")
    return v


def parse_volts(text: str, require_unit: bool = True) -> float:
    """``'2.5 V'``, ``'-10V'``, ``'20 mV'`` -> volts. A bare number is refused unless
    ``require_unit`` is False."""
    s = text.strip()
    if require_unit and not re.search(r"[vV]\s*$", s):
        raise ValueError(f"'{text}' has no unit: write volts with their unit, e.g. '2.5 V' or '20 mV'")
    return parse_value(s, unit="V")


_UNIT_TAIL = re.compile(rf"^\s*({_NUM})\s*([A-Za-z\u00b5\u03bc]*V)\s*$")


def parse_range(text: str) -> tuple[float, float]:
    """A voltage or voltage range -> (lo, hi) volts.

    ``'2.5 V'`` -> (2.5, 2.5); ``'1..4 V'`` -> (1, 4); ``'-10 V .. 10 V'``; ``'±20 mV'`` ->
    (-0.02, 0.02); ``'2.5 V ± 1 V'`` -> (1.5, 3.5); ``'-5..20 mV'`` -> (-0.005, 0.02). A unit
    written only on the right-hand end applies to a bare left-hand end. lo must not exceed hi.
    """
    s = text.strip()
    m = re.fullmatch(rf"{_PM}\s*(.+)", s)
    if m:
        half = parse_volts(m[1])
        if half < 0:
            raise ValueError(f"'{text}': the ± half-width must be positive")
        return -half, half
    if ".." in s:
        left, _, right = s.partition("..")
        if ".." in right:
            raise ValueError(f"cannot read range '{text}'")
        hi = parse_volts(right)
        left = left.strip()
        if re.fullmatch(_NUM, left):
            unit = _UNIT_TAIL.match(right)
            if not unit:
                raise ValueError(f"cannot read range '{text}'")
            left = left + " " + unit[2]
        lo = parse_volts(left)
    else:
        m = re.fullmatch(rf"(.+?)\s*{_PM}\s*(.+)", s)
        if m:
            centre, half = parse_volts(m[1]), parse_volts(m[2])
            if half < 0:
                raise ValueError(f"'{text}': the ± half-width must be positive")
            lo, hi = centre - half, centre + half
        else:
            lo = hi = parse_volts(s)
    if lo > hi:
        raise ValueError(f"range '{text}' runs backwards: write the lower end first")
    return lo, hi


def _parse_notes(value: Any) -> list[str]:
    if isinstance(value, str):
        items = re.split(r"[,;]", value)
    elif isinstance(value, list) and all(isinstance(v, str) for v in value):
        items = value
    else:
        raise ValueError("notes must be text such as 'patient-connected, mains'")
    return [re.sub(r"\s+", "-", i.strip().lower()) for i in items if i.strip()]


# ---------------------------------------------------------------------------- entry point

class _Where:
    """Where one entry was written, for messages and Intent.source."""

    def __init__(self, source: str, file: str | None, line: int | None, name: str):
        self.source, self.file, self.line, self.name = source, file, line, name


def _read_entry(key: str, raw_key: str, value: Any, from_toml: bool) -> dict[str, Any]:
    """One entry -> Intent attributes. ValueError on bad content, a NaN or an infinity
    among it (TOML writes them as nan and inf; '1e999 dB' overflows to one)."""
    attrs = _read_entry_value(key, raw_key, value, from_toml)
    for v in attrs.values():
        numbers = v if isinstance(v, tuple) else (v,)
        if any(isinstance(x, float) and not math.isfinite(x) for x in numbers):
            raise ValueError("not a finite number")
    return attrs


def _read_entry_value(key: str, raw_key: str, value: Any, from_toml: bool) -> dict[str, Any]:
    if key == "target_gain":
        if from_toml and isinstance(value, (int, float)) and not isinstance(value, bool):
            if not value > 0:
                raise ValueError("gain must be positive")
            return {"target_gain": float(value)}
        if not isinstance(value, str):
            raise ValueError("expected text such as '100 ±0.5%' or a number")
        g, t = parse_gain(value)
        return {"target_gain": g, "gain_tol": t} if t is not None else {"target_gain": g}
    if key == "gain_tol":
        if isinstance(value, str):
            t = parse_tolerance(value)
        elif from_toml and isinstance(value, (int, float)) and not isinstance(value, bool):
            t = float(value)
        else:
            raise ValueError("expected a percentage such as '0.5%'")
        if not 0 < t < 1:
            raise ValueError("gain_tol is a fraction between 0 and 1 (0.005 = 0.5 %)")
        return {"gain_tol": t}
    if key == "min_cmrr":
        if from_toml and isinstance(value, (int, float)) and not isinstance(value, bool):
            if raw_key.lower() != "min_cmrr_db":
                raise ValueError("a bare number could be a ratio or dB: write min_cmrr = \"80 dB\" "
                                 "or min_cmrr_db = 80")
            if not value > 0:
                raise ValueError("CMRR must be above 0 dB")
            return {"min_cmrr_db": float(value)}
        if not isinstance(value, str):
            raise ValueError("expected text such as '80 dB'")
        return {"min_cmrr_db": parse_cmrr_db(value)}
    if key in ("input_cm", "input_diff"):
        if from_toml and isinstance(value, list):
            if len(value) != 2 or not all(isinstance(v, (int, float)) and not isinstance(v, bool)
                                          for v in value):
                raise ValueError("a range in TOML is two numbers of volts: [1.0, 4.0]")
            lo, hi = float(value[0]), float(value[1])
            if lo > hi:
                raise ValueError("range runs backwards: write the lower end first")
            return {key: (lo, hi)}
        if from_toml and isinstance(value, (int, float)) and not isinstance(value, bool):
            return {key: (float(value), float(value))}
        if not isinstance(value, str):
            raise ValueError("expected a voltage or range such as '1..4 V'")
        return {key: parse_range(value)}
    if key == "ref_voltage":
        if from_toml and isinstance(value, (int, float)) and not isinstance(value, bool):
            return {"ref_voltage": float(value)}
        if not isinstance(value, str):
            raise ValueError("expected a voltage such as '2.5 V'")
        return {"ref_voltage": parse_volts(value)}
    if key == "caution":
        return {"notes": _parse_notes(value)}
    if key in BUDGET_FIELDS:
        return read_budget_entry(key, value, from_toml)
    raise KeyError(key)


def _example(key: str) -> str:
    return INTENT_FIELDS.get(key, ("", "'0.5%'"))[1]


def _apply(intent: Intent, attrs: dict[str, Any], where: _Where, key: str) -> None:
    for attr, value in attrs.items():
        if attr == "notes":
            for n in value:
                if n not in intent.notes:
                    intent.notes.append(n)
            intent.source.setdefault("notes", where.source)
            continue
        old = getattr(intent, attr)
        if old is not None and not _same(old, value):
            raise InputError(
                f"{where.name}: {_show(attr, value)} contradicts {_show(attr, old)} from "
                f"{intent.source[attr]}", file=where.file, line=where.line,
                hint=f"give {attr.replace('_', ' ')} in one place, or the same value in both")
        setattr(intent, attr, value)
        intent.source.setdefault(attr, where.source)


def _same(a: Any, b: Any) -> bool:
    if isinstance(a, tuple):
        return all(math.isclose(x, y, rel_tol=1e-9, abs_tol=1e-15) for x, y in zip(a, b))
    return math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-15)


def _show(attr: str, value: Any) -> str:
    if isinstance(value, tuple):
        unit = {"band_hz": "Hz", "temp_range_c": "degC"}.get(attr, "V")
        return f"{value[0]:g} .. {value[1]:g} {unit}"
    return f"{value:g}"


@functools.lru_cache(maxsize=1)
def _known_fields() -> dict[str, str]:
    """The key of each intent field's name -> the Intent attribute it sets."""
    return {_key(f): k for k, (f, _) in INTENT_FIELDS.items()}


def stage_intent(amplifiers: Component | Iterable[Component], config=None,
                 stage_id: str | None = None) -> Intent:
    """Intent of one stage from its amplifier symbols' fields and the project file.

    Parameters
    ----------
    amplifiers : Component or iterable of Component
        The op-amps (every package once) or the in-amp / difference-amp IC of the stage.
    config : frontcheck.config.Config or None
        Its ``[stage.<ref>]`` tables are read for each amplifier's reference and for
        ``stage_id`` (e.g. ``[stage."U1A/U1B/U1C"]``).
    stage_id : str or None
        The stage's id, when a project table may be keyed by it.

    Returns
    -------
    Intent
        Undeclared quantities stay None. ``source`` maps each declared key (``target_gain``,
        ``gain_tol``, ``min_cmrr_db``, ``input_cm``, ``input_diff``, ``ref_voltage``, ``notes``,
        ``band_hz``, ``temp_range_c``, ``cmrr_at_hz``, ``error_budget_fs``, ``error_budget_rti_v``)
        to where it was written: ``"field 'Target Gain' on U3"`` or
        ``"frontcheck.toml [stage.U3] target_gain"``.

    Raises
    ------
    InputError
        A malformed field or key (file and line of the symbol or the project file, the field,
        and an example of a good value), an unknown key in a ``[stage.*]`` table, or two
        places that give different values for the same quantity.
    """
    comps = [amplifiers] if isinstance(amplifiers, Component) else list(amplifiers)
    intent = Intent()
    known_fields = _known_fields()
    # symbol fields first (they travel with the design), then the project file
    for comp in sorted(comps, key=lambda c: c.ref):
        for fname, text in comp.fields.items():
            key = known_fields.get(_key(fname))
            if key is None or not str(text).strip():
                continue
            loc = comp.location
            where = _Where(f"field '{fname}' on {comp.ref}", loc.file if loc else None,
                           loc.line if loc else None, f"{comp.ref} field '{fname}'")
            try:
                attrs = _read_entry(key, fname, text, from_toml=False)
            except ValueError as e:
                raise InputError(f"{comp.ref}: field '{fname}' = '{text}': {e}", file=where.file,
                                 line=where.line,
                                 hint=f"write the '{fname}' field like {_example(key)}") from None
            _apply(intent, attrs, where, key)
    if config is not None:
        names = [c.ref for c in sorted(comps, key=lambda c: c.ref)]
        if stage_id and stage_id not in names:
            names.append(stage_id)
        file = str(config.config_path) if getattr(config, "config_path", None) else "frontcheck.toml"
        for name in names:
            table = config.stage_table(name)
            if not table:
                continue
            for raw_key, value in table.items():
                key = _key(raw_key)
                line = config.line_of(f"stage.{name}", raw_key)
                if key not in INTENT_FIELDS:
                    raise InputError(f"unknown key {raw_key!r} in [stage.{name}]", file=file, line=line,
                                     hint="known keys: " + ", ".join(INTENT_FIELDS))
                where = _Where(f"frontcheck.toml [stage.{name}] {raw_key}", file, line,
                               f"[stage.{name}] {raw_key}")
                try:
                    attrs = _read_entry(key, raw_key, value, from_toml=True)
                except ValueError as e:
                    raise InputError(f"[stage.{name}] {raw_key} = {value!r}: {e}", file=file, line=line,
                                     hint=f"write {raw_key} = {_example(key).split(' or ')[0]}"
                                     .replace("'", '"')) from None
                _apply(intent, attrs, where, key)
    return intent


# Intent's attributes, for callers that iterate over them
INTENT_KEYS = tuple(f.name for f in dc_fields(Intent) if f.name != "source")


def _amplifier_refs(stage, netlist) -> list[str]:
    """References of the amplifier parts of a stage: the packages of its op-amps (internal
    ones of an integrated part carry the IC's reference), else its amplifier names reduced to
    references that exist in the netlist."""
    comps = netlist.components if netlist is not None else {}
    refs = {op.ref for op in stage.circuit.opamps if op.ref in comps}
    # a composite front end whose integrated second stage has no part data: that part is in
    # the stage's amplifiers but not in its circuit, and its fields are the stage's intent too
    if not refs or stage.kind == "composite":
        for name in stage.amplifiers:
            base = name.split(".")[0]
            for cand in (base, re.sub(r"[A-Z]$", "", base)):
                if cand in comps:
                    refs.add(cand)
                    break
    return sorted(refs)


def apply_intent(stages, netlist, config=None) -> None:
    """Set ``stage.intent`` for every stage from its amplifiers' fields and the project file
    (``[stage.<ref>]`` by amplifier reference or by stage id). Raises InputError as
    :func:`stage_intent` does."""
    for s in stages:
        comps = [netlist.components[r] for r in _amplifier_refs(s, netlist)]
        s.intent = stage_intent(comps, config, stage_id=s.id)


def unused_stage_tables(stages, netlist, config) -> list[str]:
    """Names of ``[stage.<name>]`` tables that no recognised stage reads (a typo in a
    reference, or a stage that was not recognised), for the report's notes."""
    if config is None:
        return []
    used: set[str] = set()
    for s in stages:
        used.add(s.id)
        used.update(_amplifier_refs(s, netlist))
    return sorted(n for n in getattr(config, "stages", {}) if n not in used)

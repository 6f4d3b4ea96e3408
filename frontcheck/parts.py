"""Part models: which component is what, and the numbers analysis uses for it.

Where numbers come from, most to least trusted (each number says which, as ``Sourced.source``):

1. ``field``: the symbol's own fields (names below, case-insensitive);
2. ``project``: the project's part file ``frontcheck-parts.toml`` beside the ``.kicad_pro``
   and the ``[parts]`` table of ``frontcheck.toml`` (same format);
3. ``class``: the generic classes shipped in ``rules/parts/*.toml`` (conservative numbers,
   no manufacturer parts);
4. ``default``: only for op-amps with no part data at all, the class named by
   ``[defaults] opamp_class`` (built in: ``general-purpose``; ``"none"`` for no assumed
   class), every number marked assumed.

An in-amp or difference amplifier with no part data gets no model: recognition reports it
as found, never with guessed internals (``looks_like_inamp`` tells it is one).

Project part file (``frontcheck-parts.toml``, or the same under ``[parts]`` in
``frontcheck.toml``)::

    [[match]]                    # first matching entry wins; every given pattern must match
    value = "AMP-7*"             # glob on the Value field (case-insensitive)
    lib_id = "*:AMP-7*"          # glob on the library id
    ref = "U1?"                  # glob on the reference
    class = "zero-drift"         # a shipped or project class
    cmrr_db = 110                # numbers here override the class for the matched parts

    [inamp.lab-inamp]            # a project class: new, or overriding a shipped one's keys
    base = "generic-inamp"       # inherit every key not given here
    k = "49.4k"                  # numbers, or text with units ("49.4k", "120 dB", "50 uV")
    r_stage2 = 10e3

Keys: op-amps ``aol`` (V/V; or ``aol_db``), ``cmrr_db``, ``icm_low``, ``icm_high``,
``swing_low``, ``swing_high`` (volts inside the rails; negative = beyond), ``vos`` (V), ``ib``
(A); in-amps also ``arch``, ``k``, ``k_tol``, ``g0``, ``r_stage2``, ``g2``, ``r_ref``,
``ratio_tol``, ``r_in``; difference amps ``gain``, ``r_in``, ``ratio_tol``, ``abs_tol``;
networks ``abs_tol``, ``ratio_tol`` (see rules/parts/*.toml for their meaning).

Symbol fields (override everything else):

===================  ===========  ==================================================
Field                Key          Example
===================  ===========  ==================================================
Part Class           (class)      ``precision-bipolar`` (also "Op-amp Class", "Amp Class")
Aol                  aol          ``120 dB`` or ``1e6 V/V`` (the unit is required)
CMRR                 cmrr_db      ``100 dB`` (the unit is required)
Input CM Low         icm_low      ``-0.1 V`` (above V-; negative = beyond the rail)
Input CM High        icm_high     ``1.5 V`` (below V+)
Swing Low            swing_low    ``50 mV`` (above V-)
Swing High           swing_high   ``50 mV`` (below V+)
Vos                  vos          ``25 uV``
Ib                   ib           ``1 nA``
Gain K               k            ``49.4k`` (ohms, G = 1 + K/RG)
Gain K Tol           k_tol        ``0.1%``
G0                   g0           ``5``
Stage2 R             r_stage2     ``10k``
Stage2 Gain          g2           ``1``
REF R                r_ref        ``10k``
Ratio Tolerance      ratio_tol    ``0.01%`` (also "Matching", "Match")
Input R              r_in         ``25k``
Fixed Gain           gain         ``20`` (a difference amplifier's gain)
Internal Tol         abs_tol      ``20%``
===================  ===========  ==================================================
"""

from __future__ import annotations

import fnmatch
import math
import re
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Any

from frontcheck.circuit import OpAmpModel, Sourced
from frontcheck.errors import InputError
from frontcheck.netlist import Component, Pin
from frontcheck.values import parse_tolerance, parse_value

__all__ = [
    "DiffAmpModel", "InAmpModel", "NetworkModel", "OpAmpUnitPins", "PART_FILE", "PartClass",
    "PartLibrary", "classify", "looks_like_inamp", "opamp_units", "pin_role", "pin_roles",
]

PART_FILE = "frontcheck-parts.toml"
KINDS = ("opamp", "inamp", "diffamp", "network")

_OPAMP_KEYS = ("aol", "cmrr_db", "icm_low", "icm_high", "swing_low", "swing_high", "vos", "ib")
NUMBER_KEYS: dict[str, tuple[str, ...]] = {
    "opamp": _OPAMP_KEYS,
    "inamp": ("k", "k_tol", "g0", "r_stage2", "g2", "r_ref", "ratio_tol", "r_in", *_OPAMP_KEYS),
    "diffamp": ("gain", "r_in", "ratio_tol", "abs_tol", *_OPAMP_KEYS),
    "network": ("abs_tol", "ratio_tol"),
}
_TEXT_KEYS = ("description", "base", "arch")
_ARCHS = ("rg-pair", "feedback-pin")

# key -> quantity, which decides how text is read
_QUANTITY = {
    "aol": "gain_db_or_vv", "cmrr_db": "db", "icm_low": "V", "icm_high": "V",
    "swing_low": "V", "swing_high": "V", "vos": "V", "ib": "A", "k": "ohm", "k_tol": "tol",
    "g0": "ratio", "r_stage2": "ohm", "g2": "ratio", "r_ref": "ohm", "ratio_tol": "tol",
    "r_in": "ohm", "gain": "ratio", "abs_tol": "tol",
}
# key -> symbol field names
FIELD_NAMES: dict[str, tuple[str, ...]] = {
    "aol": ("Aol",), "cmrr_db": ("CMRR",), "icm_low": ("Input CM Low",),
    "icm_high": ("Input CM High",), "swing_low": ("Swing Low",), "swing_high": ("Swing High",),
    "vos": ("Vos",), "ib": ("Ib",), "k": ("Gain K",), "k_tol": ("Gain K Tol",), "g0": ("G0",),
    "r_stage2": ("Stage2 R",), "g2": ("Stage2 Gain",), "r_ref": ("REF R",),
    "ratio_tol": ("Ratio Tolerance", "Matching", "Match"), "r_in": ("Input R",),
    "gain": ("Fixed Gain",), "abs_tol": ("Internal Tol",),
}
CLASS_FIELDS = ("Part Class", "Op-amp Class", "Opamp Class", "Amp Class")
_EXAMPLES = {
    "gain_db_or_vv": "'120 dB' or '1e6 V/V'", "db": "'100 dB'", "V": "'0.1 V' or '50 mV'",
    "A": "'1 nA'", "ohm": "'49.4k'", "tol": "'0.1%'", "ratio": "'20'",
}


# --------------------------------------------------------------------------------------------
# Models

@dataclass
class InAmpModel:
    """Numbers of an integrated in-amp. Attribute names are those recognition reads.

    ``k``, ``g0``, ``r_stage2``, ``r_in`` are None when no part data gives them; ``missing``
    lists what the architecture needs and lacks (empty = complete). ``opamp`` describes the
    internal amplifiers (input pins' range as icm_*, output and first-stage swing as swing_*).
    """

    name: str
    arch: str                                  # 'rg-pair' | 'feedback-pin'
    k: Sourced | None = None
    k_tol: Sourced | None = None
    g0: Sourced | None = None
    r_stage2: Sourced | None = None
    g2: Sourced | None = None
    r_ref: Sourced | None = None
    ratio_tol: Sourced | None = None
    r_in: Sourced | None = None
    cmrr_db: Sourced | None = None
    opamp: OpAmpModel | None = None
    missing: tuple[str, ...] = ()


@dataclass
class DiffAmpModel:
    """Numbers of an integrated difference amplifier (fixed gain, internal resistors).
    ``gain`` and ``r_in`` are None when no part data gives them (then ``missing`` says so)."""

    name: str
    gain: Sourced | None = None
    r_in: Sourced | None = None
    ratio_tol: Sourced | None = None
    abs_tol: Sourced | None = None
    cmrr_db: Sourced | None = None
    opamp: OpAmpModel | None = None
    missing: tuple[str, ...] = ()


@dataclass
class NetworkModel:
    name: str
    abs_tol: Sourced | None = None
    ratio_tol: Sourced | None = None


@dataclass
class PartClass:
    """One class as loaded: kind, numbers (already in SI) and where it was defined."""

    name: str
    kind: str
    numbers: dict[str, float] = field(default_factory=dict)
    text: dict[str, str] = field(default_factory=dict)
    origin: str = "class"          # 'class' (shipped) or 'project'
    file: str = ""
    # keys a project table set on top of a shipped class of the same name (source 'project')
    project_keys: frozenset[str] = frozenset()


# --------------------------------------------------------------------------------------------
# Pin roles

_CH = r"(?:[A-D1-4])?"
_ROLE_PATTERNS: tuple[tuple[str, re.Pattern], ...] = (
    ("inp", re.compile(rf"^(?:\+|\+V?IN{_CH}|V?IN{_CH}\+|V?INP{_CH}|VIP|IN_P|NONINV(?:ERTING)?)$")),
    ("inn", re.compile(rf"^(?:-|-V?IN{_CH}|V?IN{_CH}-|V?INN{_CH}|VIM|IN_N|INV(?:ERTING)?)$")),
    ("out", re.compile(rf"^(?:V?OUT{_CH}|V?OUT_?[A-D]|VO|OUTPUT)$")),
    ("ref", re.compile(r"^(?:V?REF[12]?|REFIN|REFERENCE)$")),
    ("rg", re.compile(r"^(?:R_?G[12AB]?|[+-]RG|RG[+-])$")),
    ("fg", re.compile(r"^(?:V?FG|V?FB)$")),
    ("sense", re.compile(r"^(?:SNS|SENSE)$")),
    ("vpos", re.compile(r"^(?:V\+|VS\+|\+VS|\+V|VCC|VDD|VCC\+|\+VCC|VPOS|AVDD|AVCC)$")),
    ("vneg", re.compile(r"^(?:V-|VS-|-VS|-V|VEE|VSS|VNEG|-VCC|AVSS)$")),
)
_GND_PIN = re.compile(r"^(?:A?GND|0V)$")


def _pin_name(pin: Pin) -> str:
    s = re.sub(r"~\{([^}]*)\}", r"\1", pin.name or "")
    s = s.strip().upper().replace(" ", "")
    return "" if s == "~" else s


def pin_role(pin: Pin) -> str | None:
    """Amplifier role of one pin from its name (and type for an unnamed output):
    'inp', 'inn', 'out', 'ref', 'rg', 'fg', 'sense', 'vpos', 'vneg', 'gnd' or None.

    Names as amplifier symbols commonly write them: '+', '+IN', 'IN+', 'VIN+', 'Vip', '-',
    'IN-', 'Vim', 'OUT', 'VOUT', 'REF', 'Ref', 'REF1', 'RG', 'RG1', 'Rg', 'Vfg', 'SNS', 'V+',
    'VS+', '+VS', 'VCC', 'V-', 'VEE', '-VS', 'GND'. An op-amp's output is often unnamed (KiCad
    '~') with the electrical type 'output'.
    """
    s = _pin_name(pin)
    for role, rx in _ROLE_PATTERNS:
        if rx.match(s):
            return role
    if _GND_PIN.match(s):
        return "gnd"
    if s == "" and pin.type in ("output", "tri_state"):
        return "out"
    return None


def pin_roles(component: Component) -> dict[str, list[str]]:
    """Role -> pin numbers (in pin-number order) for every pin with a role. 'gnd' pins count
    as 'vneg' when the part has no other negative-supply pin."""
    roles: dict[str, list[str]] = {}
    for num in sorted(component.pins, key=_pin_key):
        r = pin_role(component.pins[num])
        if r:
            roles.setdefault(r, []).append(num)
    if "gnd" in roles and "vneg" not in roles:
        roles["vneg"] = roles.pop("gnd")
    return roles


def _pin_key(num: str):
    return [int(t) if t.isdigit() else t for t in re.split(r"(\d+)", num)]


@dataclass(frozen=True)
class OpAmpUnitPins:
    """Pin numbers of one op-amp of a package. ``paired_by`` says how the pins were grouped:
    'unit' (KiCad units), 'name' (channel letters in pin names), 'single' (one op-amp), or
    'pin-number' (no unit data: each + input paired with the nearest-numbered - input and
    output, as standard dual and quad pinouts place them; recognition should confirm it)."""

    name: str                   # 'U1A' for unit/channel A of a multi-op-amp part, else 'U1'
    unit: int
    inp: str
    inn: str
    out: str
    vpos: str | None = None
    vneg: str | None = None
    paired_by: str = "unit"


def _channel(pin: Pin) -> str | None:
    m = re.search(r"([A-D1-4])[+-]?$|IN([A-D1-4])[+-]$|OUT_?([A-D1-4])$", _pin_name(pin))
    if not m:
        return None
    return next(g for g in m.groups() if g)


def opamp_units(component: Component) -> list[OpAmpUnitPins]:
    """The op-amps in a package, each with its input, output and supply pin numbers.
    Empty when the pins do not make an op-amp."""
    pins = component.pins
    roles = {num: pin_role(p) for num, p in pins.items()}
    supplies = pin_roles(component)
    vpos = (supplies.get("vpos") or [None])[0]
    vneg = (supplies.get("vneg") or [None])[0]
    units = sorted({p.unit for num, p in pins.items() if roles[num] in ("inp", "inn", "out")})
    out: list[OpAmpUnitPins] = []

    def pick(nums: list[str], role: str) -> list[str]:
        return sorted((n for n in nums if roles[n] == role), key=_pin_key)

    # KiCad units; a pin of unit 0 is common to every unit (single-unit symbols often split
    # their pins between the common and the first unit).
    real = [u for u in units if u > 0]
    if real:
        multi = len(real) > 1
        for u in real:
            nums = [n for n, p in pins.items() if p.unit in (u, 0)]
            i, n_, o = pick(nums, "inp"), pick(nums, "inn"), pick(nums, "out")
            if len(i) == len(n_) == len(o) == 1:
                name = f"{component.ref}{chr(64 + u)}" if multi and u <= 26 else component.ref
                out.append(OpAmpUnitPins(name, u, i[0], n_[0], o[0], vpos, vneg, "unit"))
        if len(out) == len(pick(list(pins), "inp")):
            return out
        out = []
    i, n_, o = pick(list(pins), "inp"), pick(list(pins), "inn"), pick(list(pins), "out")
    if not (len(i) == len(n_) == len(o) >= 1):
        return []
    if len(i) == 1:
        return [OpAmpUnitPins(component.ref, 0, i[0], n_[0], o[0], vpos, vneg, "single")]
    chans = {num: _channel(pins[num]) for num in i + n_ + o}
    if all(chans.values()) and len({chans[x] for x in i}) == len(i):
        for k, pi in enumerate(sorted(i, key=lambda x: chans[x])):
            c = chans[pi]
            pn = [x for x in n_ if chans[x] == c]
            po = [x for x in o if chans[x] == c]
            if len(pn) != 1 or len(po) != 1:
                return []
            letter = c if c.isalpha() else chr(64 + int(c))
            out.append(OpAmpUnitPins(f"{component.ref}{letter}", k + 1, pi, pn[0], po[0],
                                     vpos, vneg, "name"))
        return out
    # No unit data (a KiCad 9 netlist export): pair by pin numbers, as standard pinouts do.
    if not all(x.isdigit() for x in i + n_ + o):
        return []
    free_n, free_o = set(n_), set(o)
    for k, pi in enumerate(sorted(i, key=int)):
        pn = min(free_n, key=lambda x: (abs(int(x) - int(pi)), int(x)))
        free_n.discard(pn)
        po = min(free_o, key=lambda x: (min(abs(int(x) - int(pi)), abs(int(x) - int(pn))), int(x)))
        free_o.discard(po)
        out.append(OpAmpUnitPins(f"{component.ref}{chr(65 + k)}", k + 1, pi, pn, po, vpos, vneg,
                                 "pin-number"))
    return out


# --------------------------------------------------------------------------------------------
# Classification

_RES_LIB = re.compile(r"^(?:device:)?r(?:_(?:small|us|small_us))?(?:_.*)?$")
_NET_LIB = re.compile(r"r_(?:pack|array|network)")
_CAP_LIB = re.compile(r"^(?:device:)?c(?:p|_polarized)?(?:_.*)?$")
# J, P, CN, CON are connectors by common practice; JP (jumpers) and X (often crystals) are not.
_CONN_REF = ("J", "P", "CN", "CON")


def _ref_prefix(ref: str) -> str:
    m = re.match(r"[A-Za-z#_]+", ref)
    return m.group(0).upper() if m else ""


def _lib_library(component: Component) -> str:
    return (component.lib_id or "").split(":", 1)[0].lower()


def looks_like_inamp(component: Component) -> bool:
    """Pin names make an integrated in-amp: both inputs, an output, and gain-setting pins (RG
    pair or one RG/FG pin), or it is drawn from KiCad's instrumentation-amplifier library."""
    r = pin_roles(component)
    has_io = bool(r.get("inp")) and bool(r.get("inn")) and bool(r.get("out"))
    if _lib_library(component) == "amplifier_instrumentation":
        return has_io
    return has_io and bool(r.get("rg") or r.get("fg")) and len(r["inp"]) == 1


def classify(component: Component) -> str:
    """What a component is, from its library id, reference prefix, pin names and pin count:
    'opamp', 'inamp', 'diffamp', 'resistor', 'network' (resistor array or network),
    'capacitor', 'connector', 'comparator' or 'other'.

    'network' and 'comparator' refine 'resistor' and 'other'. Part data can decide first
    (:meth:`PartLibrary.classify`)."""
    lib = (component.lib_id or "").lower()
    libname = _lib_library(component)
    prefix = _ref_prefix(component.ref)
    npins = len(component.pins)
    name_part = lib.split(":", 1)[-1]
    if _NET_LIB.search(lib) or (prefix in ("RN", "RA", "RM") and npins != 2):
        return "network"
    if (prefix == "R" and npins <= 2) or (libname == "device" and _RES_LIB.match(name_part)
                                          and npins <= 2):
        return "resistor"
    if (prefix == "C" and npins <= 2) or (libname == "device" and _CAP_LIB.match(name_part)
                                          and npins <= 2):
        return "capacitor"
    if libname.startswith("connector") or (prefix in _CONN_REF and not libname.startswith("amplifier")):
        return "connector"
    if libname == "comparator" or "comparator" in lib or "comparator" in (component.value or "").lower():
        return "comparator"
    r = pin_roles(component)
    has_io = bool(r.get("inp")) and bool(r.get("inn")) and bool(r.get("out"))
    if not has_io:
        return "other"
    if any(component.pins[n].type in ("open_collector", "open_emitter") for n in r["out"]):
        return "comparator"
    if libname == "amplifier_instrumentation" or looks_like_inamp(component):
        return "inamp"
    if libname in ("amplifier_current", "amplifier_difference") or r.get("ref") or r.get("sense"):
        return "diffamp" if len(r["inp"]) == 1 else "other"
    if opamp_units(component):
        return "opamp"
    return "other"


# --------------------------------------------------------------------------------------------
# Reading numbers

def _parse_text(key: str, text: str) -> float:
    """Text of one number (field or TOML string) -> SI value. ValueError on bad text."""
    q = _QUANTITY[key]
    s = text.strip()
    if q == "db":
        m = re.fullmatch(r"([+-]?\d+(?:\.\d*)?(?:[eE][+-]?\d+)?)\s*dB", s, re.IGNORECASE)
        if not m:
            raise ValueError(f"'{text}': write decibels with the unit, e.g. '100 dB'")
        return float(m[1])
    if q == "gain_db_or_vv":
        m = re.fullmatch(r"([+-]?\d+(?:\.\d*)?(?:[eE][+-]?\d+)?)\s*dB", s, re.IGNORECASE)
        if m:
            return 10 ** (float(m[1]) / 20)
        m = re.fullmatch(r"(.+?)\s*V/V", s, re.IGNORECASE)
        if not m:
            raise ValueError(f"'{text}': give the unit, '120 dB' or '1e6 V/V' (a bare number "
                             "could be either)")
        return parse_value(m[1])
    if q == "ratio":
        s2 = re.sub(r"\s*(?:V/V|x)$", "", s, flags=re.IGNORECASE)
        return parse_value(s2)
    if q == "tol":
        return parse_tolerance(s)
    return parse_value(s, unit=q)


def _check_range(key: str, v: float) -> None:
    q = _QUANTITY[key]
    if not math.isfinite(v):
        raise ValueError("not a finite number")
    if q == "tol" and not 0 <= v < 1:
        raise ValueError("a tolerance is a fraction from 0 to below 1 (0.001 = 0.1 %)")
    if q in ("ohm", "ratio", "gain_db_or_vv", "db") and v <= 0:
        raise ValueError("must be positive")
    if q == "A" and v < 0:
        raise ValueError("must not be negative")


def _toml_number(key: str, value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise ValueError("expected a number or text with a unit")
    if isinstance(value, str):
        v = _parse_text(key, value)
    else:
        v = float(value)
    _check_range(key, v)
    return v


def _shipped_dirs() -> list[Path]:
    dirs: list[Path] = []
    try:
        dirs.append(Path(str(resources.files("frontcheck").joinpath("data", "parts"))))
    except (ModuleNotFoundError, TypeError):   # pragma: no cover
        pass
    dirs.append(Path(__file__).resolve().parent.parent / "rules" / "parts")
    return dirs


def _lines_for(text: str):
    from frontcheck.config import _Lines
    return _Lines(text)


class _Source:
    """A TOML document with its file name and key lines, for located errors."""

    def __init__(self, doc: dict, file: str, lines, prefix: str = "", origin: str = "project"):
        self.doc, self.file, self.lines, self.prefix = doc, file, lines, prefix
        self.origin = origin      # 'class' for shipped files, 'project' for the project's

    def line(self, table: str, key: str | None = None) -> int | None:
        t = f"{self.prefix}{table}" if self.prefix else table
        return self.lines.line_of(t, key) if self.lines else None

    def error(self, message: str, table: str, key: str | None = None, hint: str = "",
              line: int | None = None) -> InputError:
        return InputError(message, file=self.file, line=line or self.line(table, key),
                          hint=hint or "see rules/parts/*.toml for the format")


# --------------------------------------------------------------------------------------------
# The library

@dataclass
class _Match:
    patterns: dict[str, str]
    cls: str | None
    numbers: dict[str, float]
    text: dict[str, str]
    where: str
    file: str
    line: int | None

    def matches(self, c: Component) -> bool:
        for what, pat in self.patterns.items():
            subject = {"value": c.value or c.fields.get("Value", ""), "lib_id": c.lib_id,
                       "ref": c.ref}[what]
            if not fnmatch.fnmatchcase((subject or "").lower(), pat.lower()):
                return False
        return True


class PartLibrary:
    """Shipped classes plus the project's part data; answers what a component is and gives
    its model. Build it with :meth:`load`."""

    def __init__(self, classes: dict[str, PartClass] | None = None,
                 matches: list[_Match] | None = None,
                 default_opamp_class: str | None = "general-purpose",
                 files: list[str] | None = None):
        self.classes: dict[str, PartClass] = classes or {}
        self.matches: list[_Match] = matches or []
        self.default_opamp_class = default_opamp_class
        self.files: list[str] = files or []

    # ---- loading -------------------------------------------------------------------------

    @classmethod
    def load(cls, project_dir: Path | None, extra_file: Path | None = None, config=None,
             default_opamp_class: str | None = None) -> "PartLibrary":
        """Shipped classes + ``project_dir/frontcheck-parts.toml`` + ``[parts]`` of the
        project's ``frontcheck.toml`` (from ``config`` when given, else read here) +
        ``extra_file``; later sources override earlier ones key by key.

        ``default_opamp_class``: class for op-amps without part data; None takes
        ``config.default_opamp_class`` (built in: 'general-purpose'). ``""`` or ``"none"`` gives
        such op-amps no model at all (recognition then treats them as ideal and says so).

        Raises InputError (file, line) for unreadable TOML, unknown kinds or keys, bad numbers,
        unknown classes and circular ``base`` chains.
        """
        from frontcheck.config import CONFIG_NAME, load_toml

        lib = cls()
        raw: list[tuple[str, str, dict, _Source]] = []   # (kind, name, table, source)
        shipped_found = False
        for d in _shipped_dirs():
            if d.is_dir() and any(d.glob("*.toml")):
                for f in sorted(d.glob("*.toml")):
                    doc, text = load_toml(f)
                    src = _Source(doc, str(f), _lines_for(text), origin="class")
                    lib._collect(doc, src, raw, allow_match=False)
                    lib.files.append(str(f))
                shipped_found = True
                break
        if not shipped_found:   # pragma: no cover - a broken installation
            raise InputError("frontcheck's generic part classes are missing",
                             hint="reinstall frontcheck (the package data frontcheck/data/parts)")
        sources: list[tuple[dict, _Source]] = []
        if project_dir is not None and (Path(project_dir) / PART_FILE).is_file():
            f = Path(project_dir) / PART_FILE
            doc, text = load_toml(f)
            sources.append((doc, _Source(doc, str(f), _lines_for(text))))
        cfg_parts, cfg_src = None, None
        if config is not None:
            cfg_parts = getattr(config, "parts", None) or None
            if cfg_parts:
                cfg_src = _Source(cfg_parts, str(config.config_path or CONFIG_NAME),
                                  getattr(config, "_lines", None), prefix="parts.")
        elif project_dir is not None and (Path(project_dir) / CONFIG_NAME).is_file():
            doc, text = load_toml(Path(project_dir) / CONFIG_NAME)
            if doc.get("parts"):
                cfg_parts = doc["parts"]
                if not isinstance(cfg_parts, dict):
                    raise InputError("[parts] must be a table", file=str(Path(project_dir) / CONFIG_NAME),
                                     hint='[[parts.match]] value = "AMP-7*"  class = "zero-drift"')
                cfg_src = _Source(cfg_parts, str(Path(project_dir) / CONFIG_NAME),
                                  _lines_for(text), prefix="parts.")
        if cfg_parts:
            sources.append((cfg_parts, cfg_src))
        if extra_file is not None:
            f = Path(extra_file)
            if not f.is_file():
                raise InputError("part file not found", file=str(f),
                                 hint=f"give an existing .toml part file ({PART_FILE} format)")
            doc, text = load_toml(f)
            sources.append((doc, _Source(doc, str(f), _lines_for(text))))
        for doc, src in sources:
            lib._collect(doc, src, raw, allow_match=True)
            if src.file not in lib.files:
                lib.files.append(src.file)
        lib._resolve(raw)
        for m in lib.matches:
            if m.cls is not None and m.cls not in lib.classes:
                raise InputError(f"unknown part class {m.cls!r}", file=m.file, line=m.line,
                                 hint="known classes: " + ", ".join(sorted(lib.classes)))
        if default_opamp_class is None:
            dc = getattr(config, "default_opamp_class", "general-purpose") if config is not None \
                else "general-purpose"
            default_opamp_class = dc if isinstance(dc, str) else "general-purpose"
        if default_opamp_class.lower() == "none":
            default_opamp_class = ""
        if default_opamp_class:
            k = lib.classes.get(default_opamp_class)
            if k is None or k.kind != "opamp":
                raise InputError(f"default op-amp class {default_opamp_class!r} is not an op-amp class",
                                 file=str(config.config_path) if config is not None and
                                 getattr(config, "config_path", None) else None,
                                 hint="op-amp classes: " + ", ".join(
                                     sorted(n for n, c in lib.classes.items() if c.kind == "opamp")))
        lib.default_opamp_class = default_opamp_class or None
        return lib

    def _collect(self, doc: dict, src: _Source, raw: list[tuple[str, str, dict, _Source]],
                 allow_match: bool) -> None:
        for top, body in doc.items():
            if top == "match" and allow_match:
                if not isinstance(body, list):
                    raise src.error("match must be [[match]] entries", "match",
                                    hint='[[match]] value = "AMP-7*"  class = "zero-drift"')
                for i, entry in enumerate(body):
                    self.matches.append(self._match(entry, src, i))
                continue
            if top not in KINDS:
                raise src.error(f"unknown table [{src.prefix}{top}]", top,
                                hint=f"part data tables: {', '.join(KINDS)}" +
                                (", and [[match]] entries" if allow_match else ""),
                                line=src.line(top) or src.line("", top))
            if not isinstance(body, dict):
                raise src.error(f"[{src.prefix}{top}] must hold [{top}.<class-name>] tables", top)
            for name, table in body.items():
                if not isinstance(table, dict):
                    raise src.error(f"[{src.prefix}{top}.{name}] must be a table", f"{top}.{name}")
                raw.append((top, name, table, src))

    def _match(self, entry: Any, src: _Source, index: int) -> _Match:
        line = src.lines.nth(f"{src.prefix}match", index) if src.lines else None
        example = '[[match]] value = "AMP-7*"  class = "zero-drift"'
        if not isinstance(entry, dict):
            raise src.error("a [[match]] entry must be a table", "match", hint=example, line=line)
        patterns = {k: entry[k] for k in ("value", "lib_id", "ref") if k in entry}
        if not patterns:
            raise src.error("a [[match]] entry needs value, lib_id or ref", "match",
                            hint=example, line=line)
        for k, v in patterns.items():
            if not isinstance(v, str) or not v:
                raise src.error(f"[[match]] {k} must be a pattern in quotes", "match",
                                hint=example, line=line)
        cls_name = entry.get("class")
        if cls_name is not None and not isinstance(cls_name, str):
            raise src.error("[[match]] class must be a class name", "match", hint=example, line=line)
        numbers: dict[str, float] = {}
        text: dict[str, str] = {}
        all_keys = {k for ks in NUMBER_KEYS.values() for k in ks}
        for k, v in entry.items():
            if k in ("value", "lib_id", "ref", "class"):
                continue
            if k == "aol_db":
                k, v = "aol", (f"{v} dB" if isinstance(v, (int, float)) and not isinstance(v, bool) else v)
            if k == "arch":
                if v not in _ARCHS:
                    raise src.error(f"arch must be one of {', '.join(_ARCHS)}", "match", hint=example,
                                    line=line)
                text[k] = v
                continue
            if k not in all_keys:
                raise src.error(f"unknown key {k!r} in a [[match]] entry", "match", line=line,
                                hint="keys: value, lib_id, ref, class, " + ", ".join(sorted(all_keys)))
            try:
                numbers[k] = _toml_number(k, v)
            except ValueError as e:
                raise src.error(f"[[match]] {k} = {v!r}: {e}", "match", line=line,
                                hint=f"e.g. {k} = {_EXAMPLES[_QUANTITY[k]].split(' or ')[0]}") from None
        desc = " ".join(f"{k} '{v}'" for k, v in patterns.items())
        return _Match(patterns, cls_name, numbers, text, f"{Path(src.file).name} match {desc}",
                      src.file, line)

    def _resolve(self, raw: list[tuple[str, str, dict, _Source]]) -> None:
        """Turn raw tables into PartClass objects: a later table of the same name overrides
        an earlier one key by key (a project table over a shipped class); ``base`` inherits
        every key not given from another class of the same kind."""
        merged: dict[str, tuple[str, dict[str, tuple[Any, _Source]], str]] = {}
        for kind, name, table, src in raw:
            if name in merged and merged[name][0] != kind:
                raise src.error(f"class {name!r} is defined as {merged[name][0]} and as {kind}",
                                f"{kind}.{name}", hint="give each class one kind and a unique name")
            kind_, entry, origin = merged.setdefault(name, (kind, {}, src.origin))
            for k, v in table.items():
                entry[k] = (v, src)

        def build(name: str, seen: tuple[str, ...]) -> PartClass:
            if name in self.classes:
                return self.classes[name]
            kind, entry, origin = merged[name]
            numbers: dict[str, float] = {}
            text: dict[str, str] = {}
            project_keys: set[str] = set()
            if "base" in entry:
                bname, bsrc = entry["base"]
                if not isinstance(bname, str) or bname not in merged:
                    raise bsrc.error(f"class {name!r}: unknown base {bname!r}", f"{kind}.{name}",
                                     "base", hint="known classes: " + ", ".join(sorted(merged)))
                if bname in seen:
                    raise bsrc.error(f"class {name!r}: circular base chain "
                                     f"{' -> '.join((*seen, bname))}", f"{kind}.{name}", "base",
                                     hint="a class may not inherit from itself")
                b = build(bname, (*seen, bname))
                if b.kind != kind:
                    raise bsrc.error(f"class {name!r} ({kind}) cannot inherit from {bname!r} "
                                     f"({b.kind})", f"{kind}.{name}", "base",
                                     hint="use a base of the same kind")
                numbers.update(b.numbers)
                text.update({k: v for k, v in b.text.items() if k != "description"})
                project_keys |= b.project_keys
            allowed = set(NUMBER_KEYS[kind])
            for k, (v, src) in entry.items():
                if k == "base":
                    continue
                if k == "description":
                    if not isinstance(v, str):
                        raise src.error(f"{k} must be text", f"{kind}.{name}", k)
                    text[k] = v
                    continue
                if k == "arch":
                    if kind != "inamp" or v not in _ARCHS:
                        raise src.error(f"arch must be one of {', '.join(_ARCHS)} (in-amps only)",
                                        f"{kind}.{name}", k)
                    text[k] = v
                    continue
                k2, v2 = k, v
                if k == "aol_db" and kind != "network":
                    k2 = "aol"
                    if isinstance(v, (int, float)) and not isinstance(v, bool):
                        v2 = f"{v} dB"
                if k2 not in allowed:
                    raise src.error(f"unknown key {k!r} in [{src.prefix}{kind}.{name}]",
                                    f"{kind}.{name}", k,
                                    hint=f"keys of a {kind} class: {', '.join(NUMBER_KEYS[kind])}, "
                                         "description, base" + (", arch" if kind == "inamp" else ""))
                try:
                    numbers[k2] = _toml_number(k2, v2)
                except ValueError as e:
                    raise src.error(f"[{src.prefix}{kind}.{name}] {k} = {v!r}: {e}",
                                    f"{kind}.{name}", k,
                                    hint=f"e.g. {k2} = {_EXAMPLES[_QUANTITY[k2]].split(' or ')[0]}") from None
                if src.origin == "project":
                    project_keys.add(k2)
                else:
                    project_keys.discard(k2)
            files = sorted({src.file for _, src in entry.values()})
            pc = PartClass(name, kind, numbers, text, origin, ", ".join(files),
                           frozenset(project_keys))
            self.classes[name] = pc
            return pc

        for name in merged:
            build(name, (name,))

    # ---- which class ---------------------------------------------------------------------

    def _class_field(self, c: Component) -> tuple[str, str] | None:
        lower = {k.lower(): k for k in c.fields}
        for n in CLASS_FIELDS:
            k = lower.get(n.lower())
            if k is not None and c.fields[k].strip():
                return k, c.fields[k].strip()
        return None

    def class_of(self, c: Component) -> tuple[PartClass | None, _Match | None, str]:
        """(class, matching project entry, how the class was chosen). The class comes from a
        class field, else the first matching project entry; either may be None."""
        m = next((m for m in self.matches if m.matches(c)), None)
        f = self._class_field(c)
        if f is not None:
            key, name = f
            pc = self.classes.get(name)
            if pc is None:
                loc = c.location
                raise InputError(f"{c.ref}: field '{key}' names unknown part class {name!r}",
                                 file=loc.file if loc else None, line=loc.line if loc else None,
                                 hint="known classes: " + ", ".join(sorted(self.classes)))
            return pc, m, f"field '{key}'"
        if m is not None and m.cls is not None:
            return self.classes[m.cls], m, m.where
        return None, m, ""

    def classify(self, c: Component) -> str:
        """As :func:`classify`, but part data decides first: a component mapped to an in-amp,
        difference-amp, op-amp or network class is that kind."""
        try:
            pc, _, _ = self.class_of(c)
        except InputError:
            pc = None
        if pc is not None:
            return "network" if pc.kind == "network" else pc.kind
        return classify(c)

    def looks_like_inamp(self, c: Component) -> bool:
        return looks_like_inamp(c)

    # ---- numbers -------------------------------------------------------------------------

    def _numbers(self, c: Component, kind: str, pc: PartClass | None, m: _Match | None,
                 how: str, default: bool) -> dict[str, Sourced]:
        """Every known number of ``kind`` for ``c``, field > project > class (> default)."""
        out: dict[str, Sourced] = {}
        if pc is not None:
            for k, v in pc.numbers.items():
                if k not in NUMBER_KEYS[kind]:
                    continue
                if default:
                    out[k] = Sourced(v, "default", f"class {pc.name} assumed (no part data)")
                elif k in pc.project_keys:
                    out[k] = Sourced(v, "project", f"class {pc.name} (project part data)")
                else:
                    out[k] = Sourced(v, "class", f"class {pc.name}")
        if m is not None:
            for k, v in m.numbers.items():
                if k in NUMBER_KEYS[kind]:
                    out[k] = Sourced(v, "project", m.where)
        lower = {k.lower(): k for k in c.fields}
        for k in NUMBER_KEYS[kind]:
            for fname in FIELD_NAMES[k]:
                key = lower.get(fname.lower())
                if key is None or not c.fields[key].strip():
                    continue
                text = c.fields[key]
                try:
                    v = _parse_text(k, text)
                    _check_range(k, v)
                except ValueError as e:
                    loc = c.location
                    raise InputError(f"{c.ref}: field '{key}' = '{text}': {e}",
                                     file=loc.file if loc else None, line=loc.line if loc else None,
                                     hint=f"write the '{key}' field like {_EXAMPLES[_QUANTITY[k]]}") from None
                out[k] = Sourced(v, "field", f"{key} field of {c.ref}")
                break
        return out

    def _opamp_from(self, name: str, nums: dict[str, Sourced]) -> OpAmpModel | None:
        need = ("aol", "cmrr_db", "icm_low", "icm_high", "swing_low", "swing_high")
        if not all(k in nums for k in need):
            return None
        return OpAmpModel(name, nums["aol"], nums["cmrr_db"], nums["icm_low"], nums["icm_high"],
                          nums["swing_low"], nums["swing_high"], nums.get("vos"), nums.get("ib"))

    def opamp_model(self, c: Component) -> OpAmpModel | None:
        """Op-amp numbers for ``c``, each Sourced ('field', 'project', 'class' or 'default').

        Without a class from a field or project entry, the default class gives them (source
        'default'); symbol fields and project numbers still override single numbers. None
        only when the library was built without a default class and nothing gives a full set,
        or when ``c`` is mapped to a class of another kind."""
        pc, m, how = self.class_of(c)
        if pc is not None and pc.kind != "opamp":
            return None
        default = pc is None
        if default and self.default_opamp_class:
            pc = self.classes[self.default_opamp_class]
        nums = self._numbers(c, "opamp", pc, m, how, default)
        name = pc.name if pc is not None else "part data"
        return self._opamp_from(name, nums)

    def inamp_model(self, c: Component) -> InAmpModel | None:
        """In-amp numbers for ``c``, or None when no part data names an in-amp class or gives
        in-amp numbers (then recognition reports the part, see :func:`looks_like_inamp`).
        ``missing`` lists the numbers the architecture needs and nobody gave."""
        pc, m, how = self.class_of(c)
        if pc is not None and pc.kind != "inamp":
            return None
        nums = self._numbers(c, "inamp", pc, m, how, False)
        arch = (m.text.get("arch") if m else None) or (pc.text.get("arch") if pc else None) or "rg-pair"
        if pc is None and not (m and m.numbers) and not any(
                s.source == "field" for k, s in nums.items() if k not in _OPAMP_KEYS):
            return None
        name = pc.name if pc is not None else "part data"
        r_ref = nums.get("r_ref")
        if r_ref is None and "r_stage2" in nums:
            g2 = nums.get("g2", Sourced(1.0, "class", "unity difference stage"))
            rs = nums["r_stage2"]
            r_ref = Sourced(rs.value * g2.value, rs.source, f"{rs.detail} x stage-2 gain")
        need = ("k", "r_stage2") if arch == "rg-pair" else ("g0", "r_in")
        missing = tuple(k for k in need if k not in nums)
        return InAmpModel(
            name=name, arch=arch, k=nums.get("k"), k_tol=nums.get("k_tol"), g0=nums.get("g0"),
            r_stage2=nums.get("r_stage2"), g2=nums.get("g2"), r_ref=r_ref,
            ratio_tol=nums.get("ratio_tol"), r_in=nums.get("r_in"), cmrr_db=nums.get("cmrr_db"),
            opamp=self._opamp_from(name, nums), missing=missing)

    def diffamp_model(self, c: Component) -> DiffAmpModel | None:
        """Difference-amp numbers for ``c``, or None without part data (as :meth:`inamp_model`)."""
        pc, m, how = self.class_of(c)
        if pc is not None and pc.kind != "diffamp":
            return None
        nums = self._numbers(c, "diffamp", pc, m, how, False)
        if pc is None and not (m and m.numbers) and not any(
                s.source == "field" for k, s in nums.items() if k not in _OPAMP_KEYS):
            return None
        name = pc.name if pc is not None else "part data"
        missing = tuple(k for k in ("gain", "r_in") if k not in nums)
        return DiffAmpModel(name=name, gain=nums.get("gain"), r_in=nums.get("r_in"),
                            ratio_tol=nums.get("ratio_tol"), abs_tol=nums.get("abs_tol"),
                            cmrr_db=nums.get("cmrr_db"), opamp=self._opamp_from(name, nums),
                            missing=missing)

    def network_model(self, c: Component) -> NetworkModel | None:
        """Tolerances of a resistor network: class numbers overridden by project entries and
        by a 'Ratio Tolerance'/'Matching'/'Match' field; None without any."""
        pc, m, how = self.class_of(c)
        if pc is not None and pc.kind != "network":
            return None
        nums = self._numbers(c, "network", pc, m, how, False)
        if not nums:
            return None
        return NetworkModel(pc.name if pc else "part data", nums.get("abs_tol"), nums.get("ratio_tol"))

    def opamp_units(self, c: Component) -> list[OpAmpUnitPins]:
        return opamp_units(c)

"""What kind of component a placed part is: amplifier, resistor, capacitor, connector, ...

From the library id, the reference prefix, the pin names (through :mod:`pin_names`) and the
pin count; part data may decide first (``frontcheck.parts.PartLibrary.classify``). Kinds:

* ``opamp``: inputs + and - and an output per amplifier, nothing that sets a gain;
* ``inamp``: an integrated in-amp: both inputs, an output and a gain pin (RG pair or one
  RG/FG pin), or drawn from KiCad's instrumentation-amplifier library; also an integrated
  front end, whose pins show an in-amp with the blocks around it (a right-leg drive, lead-off
  outputs): its inputs are an in-amp's, not a difference amplifier's resistors;
* ``diffamp``: an integrated difference amplifier (a REF or SENSE pin, or KiCad's difference
  and current-sense amplifier libraries);
* ``fda``: a fully differential amplifier (two outputs, + and -);
* ``ota``: an operational transconductance amplifier (a bias-current input);
* ``comparator``, ``resistor``, ``network`` (resistor array), ``capacitor``, ``connector``,
  ``other``.
"""

from __future__ import annotations

import re
from functools import lru_cache

from frontcheck.component.pin_names import normalise_pin_name, pin_role
from frontcheck.netlist import Component

__all__ = ["AMPLIFIER_KINDS", "KINDS", "classify", "library_of", "looks_like_inamp", "pin_key",
           "names_disagree", "pin_roles", "potentiometer_pins", "ref_prefix", "resistor_elements"]

KINDS = ("opamp", "inamp", "diffamp", "fda", "ota", "comparator", "resistor", "network", "capacitor",
         "connector", "other")
AMPLIFIER_KINDS = ("opamp", "inamp", "diffamp", "fda")

_RES_LIB = re.compile(r"^(?:device:)?r(?:_(?:small|us|small_us))?(?:_.*)?$")
_NET_LIB = re.compile(r"r_(?:pack|array|network)")
_CAP_LIB = re.compile(r"^(?:device:)?c(?:p|_polarized)?(?:_.*)?$")
# J, P, CN, CON are connectors by common practice; JP (jumpers) and X (often crystals) are not.
_CONN_REF = ("J", "P", "CN", "CON")


_PREFIX = re.compile(r"[A-Za-z#_]+")
_DIGITS = re.compile(r"\d+")


def ref_prefix(ref: str) -> str:
    """Letters before the number of a reference designator, upper case ('RN' for 'RN3')."""
    m = _PREFIX.match(ref)
    return m.group(0).upper() if m else ""


@lru_cache(maxsize=4096)
def pin_key(number: str) -> tuple[float, str]:
    """Sort key of a pin number: numeric part first ('2' before '10'), then the text.
    Remembered: a design sorts the same few pin numbers again and again."""
    m = _DIGITS.search(number)
    return (float(m.group(0)) if m else float("inf"), number)


def library_of(component: Component) -> str:
    """The symbol library's nickname, lower case ('amplifier_operational')."""
    return (component.lib_id or "").split(":", 1)[0].lower()


def pin_roles(component: Component) -> dict[str, list[str]]:
    """Role -> pin numbers (in pin-number order) for every pin with a role. 'gnd' pins count
    as 'vneg' when the part has no other negative-supply pin."""
    roles: dict[str, list[str]] = {}
    for num in sorted(component.pins, key=pin_key):
        r = pin_role(component.pins[num])
        if r:
            roles.setdefault(r, []).append(num)
    if "gnd" in roles and "vneg" not in roles:
        roles["vneg"] = roles.pop("gnd")
    return roles


def looks_like_inamp(component: Component) -> bool:
    """Pin names make an integrated in-amp: both inputs, an output, and gain-setting pins (RG
    pair or one RG/FG pin), or it is drawn from KiCad's instrumentation-amplifier library."""
    r = pin_roles(component)
    has_io = bool(r.get("inp")) and bool(r.get("inn")) and bool(r.get("out"))
    if library_of(component) == "amplifier_instrumentation":
        return has_io
    return has_io and bool(r.get("rg") or r.get("fg")) and len(r["inp"]) == 1


def _passive_kind(component: Component) -> str | None:
    lib = (component.lib_id or "").lower()
    libname = library_of(component)
    prefix = ref_prefix(component.ref)
    npins = len(component.pins)
    name_part = lib.split(":", 1)[-1]
    if _NET_LIB.search(lib) or (prefix in ("RN", "RA", "RM") and npins != 2):
        return "network"
    generic = libname in ("device", "") or ":" not in lib    # 'Device:R' or a bare 'R'
    if (prefix == "R" and npins <= 2) or (generic and _RES_LIB.match(name_part) and npins <= 2):
        return "resistor"
    if (prefix == "C" and npins <= 2) or (generic and _CAP_LIB.match(name_part) and npins <= 2):
        return "capacitor"
    if libname.startswith("connector") or (prefix in _CONN_REF and not libname.startswith("amplifier")):
        return "connector"
    return None


def classify(component: Component) -> str:
    """One of :data:`KINDS`, from the library id, reference prefix, pin names and pin count."""
    passive = _passive_kind(component)
    if passive is not None:
        return passive
    lib = (component.lib_id or "").lower()
    libname = library_of(component)
    if libname == "comparator" or "comparator" in lib \
            or "comparator" in (component.value or "").lower():
        return "comparator"
    r = pin_roles(component)
    open_types = ("open_collector", "open_emitter")
    if r.get("inp") and r.get("inn") and r.get("out_p") and r.get("out_n") and not r.get("out"):
        return "fda"
    if not (r.get("inp") and r.get("inn") and r.get("out")):
        # an open-collector output without a name is still a comparator's output
        if r.get("inp") and any(p.type in open_types for p in component.pins.values()):
            return "comparator"
        return "other"
    if any(component.pins[n].type in open_types for n in r["out"]):
        return "comparator"
    if r.get("bias"):
        return "ota"
    if libname == "amplifier_difference":
        return "diffamp"
    if libname == "amplifier_instrumentation" or r.get("rg") or r.get("fg") \
            or _front_end_blocks(component):
        return "inamp"
    if libname == "amplifier_current" or r.get("ref") or r.get("sense"):
        return "diffamp"
    return "opamp"


_PACK_PIN = re.compile(r"^R(\d+)\.[12]$")
_POT_LIB = re.compile(r"(?:^|:)(?:R_Pot.*|R_Trim.*|Potentiometer.*|Trimmer.*|.*_Pot|Pot_.*)$", re.I)
_POT_PREFIX = ("RV", "VR", "POT", "TR", "RP")


def potentiometer_pins(component: Component) -> tuple[str, str, str] | None:
    """(end, wiper, end) pin numbers of a three-pin potentiometer or trimmer (KiCad's
    R_Potentiometer / R_Trim family, or an RV, VR, POT, TR or RP reference), else None. The
    wiper is the pin named W... (or WIPER), else pin 2, as KiCad's symbols number it."""
    c = component
    if len(c.pins) != 3 or not (_POT_LIB.search(c.lib_id or "") or ref_prefix(c.ref) in _POT_PREFIX):
        return None
    named = [p for p in c.pins if (c.pins[p].name or "").upper().startswith("W")]
    wiper = named[0] if len(named) == 1 else "2"
    ends = sorted((p for p in c.pins if p != wiper), key=pin_key)
    if wiper not in c.pins or len(ends) != 2:
        return None
    return ends[0], wiper, ends[1]


# Pins of the blocks an integrated biopotential front end adds around its in-amp (common
# practice in pin naming): a right-leg (driven-reference) drive and lead-off detection.
_FRONT_END_PIN = re.compile(r"^(?:RLD|DRL)(?:OUT|IN|INV|FB|DRV|DRIVE|REF|SENSE)?$"
                            r"|^(?:LOD|LOFF|LO)[+-](?:STAT|OUT)?$|^(?:LOD|LOFF)(?:STAT|OUT)?$")


def _front_end_blocks(component: Component) -> bool:
    """True when a pin names a right-leg drive or a lead-off output ('RLD', 'RLD_OUT',
    'DRL', 'LOD+', 'LO-', 'LOFF_STAT'; case, underscores and text markup ignored)."""
    return any(_FRONT_END_PIN.match(normalise_pin_name(p.name)) for p in component.pins.values())


def _part_name(text: str) -> str:
    return re.sub(r"[^A-Z0-9]", "", (text or "").upper())


def names_disagree(component: Component) -> str:
    """A sentence when the Value and the symbol's name name two different parts of one family
    (they share a start with a digit in it, then part: 'AMP-20' drawn, 'AMP-100' named), else
    ''. An 'x' in the symbol name stands for any character (KiCad writes package and grade
    variants so); a name that is a prefix of the other is one part and its variant."""
    value = _part_name(component.value)
    symbol = _part_name((component.lib_id or "").split(":", 1)[-1])
    n = 0
    while n < min(len(value), len(symbol)) and (value[n] == symbol[n] or symbol[n] == "X"):
        n += 1
    if n in (len(value), len(symbol)) or n < 3 or not any(ch.isdigit() for ch in value[:n]):
        return ""
    return (f"{component.ref}: the Value '{component.value}' and the symbol "
            f"'{component.lib_id}' name different parts; frontcheck reads pins and kind from "
            "the symbol, so check which part is meant (pins, gain variant)")


def resistor_elements(component: Component) -> list[tuple[str, str, str]]:
    """The resistors inside a resistor or resistor network: (element key, pin, pin).

    A two-pin part is one element keyed ''. In a network, pin names 'R1.1'/'R1.2' (KiCad's
    R_Pack symbols) give the pairs; otherwise a bussed network (library name with 'network'
    or 'bus') joins pin 1 to every other pin, and an isolated pack pairs pin i with pin N+1-i
    (common practice for SIP/DIP packs)."""
    c = component
    pins = sorted(c.pins, key=pin_key)
    if len(pins) == 2:
        return [("", pins[0], pins[1])]
    by_elem: dict[str, list[str]] = {}
    for p in pins:
        m = _PACK_PIN.match(c.pins[p].name or "")
        if m:
            by_elem.setdefault(m.group(1), []).append(p)
    lib = (c.lib_id or "").lower()
    if by_elem and all(len(v) == 2 for v in by_elem.values()):
        return [(k, v[0], v[1]) for k, v in sorted(by_elem.items(), key=lambda kv: int(kv[0]))]
    if "network" in lib or "bus" in lib:
        return [(str(i), pins[0], p) for i, p in enumerate(pins[1:], start=1)]
    if len(pins) % 2 == 0:
        n = len(pins)
        return [(str(i + 1), pins[i], pins[n - 1 - i]) for i in range(n // 2)]
    return []

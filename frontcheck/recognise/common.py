"""What every topology recogniser shares: the result types, a read-only view of the netlist
that knows resistors, capacitors and op-amp units, and the bridge to part data and values.

Recognition never guesses a number. A value that cannot be read becomes NaN with a note on the
stage (analysis refuses NaN); a part with in-amp-like pins but no part data is reported in
``Recognition.unsupported`` instead of being modelled with made-up internals.
"""

from __future__ import annotations

import math
import re
from collections import defaultdict
from dataclasses import dataclass, field
from typing import Any, Callable, Iterable, Mapping

from frontcheck.circuit import Capacitor, OpAmp, OpAmpModel, Resistor, Sourced, Stage
from frontcheck.errors import InputError
from frontcheck.netlist import Component, Location, Netlist, Pin

__all__ = [
    "NearMiss", "Unsupported", "Recognition", "OpUnit", "RElem", "Group", "View",
    "GENERIC_OPAMP", "pin_role", "is_ground_name",
]


# --------------------------------------------------------------------------------------------
# Results


@dataclass
class NearMiss:
    """Something wired almost like a front-end stage but not analysable as one.

    ``kind`` is the stage kind it resembles, ``ref`` the component whose location the report
    points at, ``missing`` a short phrase naming what is missing or wrong (e.g. 'R2 feedback
    resistor', 'RG pin 8 connection')."""

    kind: str
    references: list[str]
    message: str
    ref: str
    missing: str
    location: Location | None = None


@dataclass
class Unsupported:
    """A part whose pins look like an integrated in-amp or difference amp but for which no part
    data was found: reported as found, never given guessed numbers."""

    ref: str
    kind: str                       # 'integrated-inamp' | 'integrated-diffamp'
    pins: dict[str, str]            # role ('in_p', 'in_n', 'ref', 'out', 'rg1', ...) -> net
    message: str
    location: Location | None = None
    roles: dict[str, str] = field(default_factory=dict)   # external parts found, e.g. RG


@dataclass
class Recognition:
    stages: list[Stage] = field(default_factory=list)
    near_misses: list[NearMiss] = field(default_factory=list)
    unsupported: list[Unsupported] = field(default_factory=list)


# --------------------------------------------------------------------------------------------
# Pin names

_UNIT_SUFFIX = r"(?:[A-D1-4])?"
_UNIT_PREFIX = r"(?:[1-4])?"     # '1IN+', '2OUT': channel number first, as many symbols write it
_PLUS = re.compile(rf"^{_UNIT_PREFIX}(?:\+|\+V?IN{_UNIT_SUFFIX}|V?IN{_UNIT_SUFFIX}\+|V?INP{_UNIT_SUFFIX}|VIP|IP|NONINV)$")
_MINUS = re.compile(rf"^{_UNIT_PREFIX}(?:-|-V?IN{_UNIT_SUFFIX}|V?IN{_UNIT_SUFFIX}-|V?INN{_UNIT_SUFFIX}|V?INM|VIM|IM|INV)$")
_OUT = re.compile(rf"^{_UNIT_PREFIX}(?:V?OUT{_UNIT_SUFFIX}|VO|OUTPUT|O)$")
_CHANNEL = re.compile(r"^([1-4])(?:[+-]?V?IN|V?OUT)|(?:IN|OUT)_?([A-D1-4])[+-]?$|^[+-]IN([A-D1-4])$")
_VPOS = re.compile(r"^(?:V\+|VCC|VDD|\+VS|VS\+|VPOS|\+V|VP|VCCA|AVDD|AVCC)$")
_VNEG = re.compile(r"^(?:V-|VEE|VSS|-VS|VS-|VNEG|-V|VN|GND|AGND|AVSS)$")
_REF = re.compile(r"^(?:[+-]?V?REF(?:IN)?[12AB]?[+-]?|REF\([+-]\))$")
_RG = re.compile(r"^(?:RG|RG[12AB]|[+-]RG|RG[+-])$")
_FG = re.compile(r"^(?:FG|VFG|FB|VFB)$")
_SENSE = re.compile(r"^(?:SNS|SENSE|SENS)$")


def _norm(name: str) -> str:
    s = re.sub(r"~\{([^}]*)\}", r"\1", name or "")
    return s.upper().replace(" ", "").replace("_", "")


def pin_role(pin: Pin) -> str | None:
    """Role of an amplifier pin from its name and type: 'inp', 'inn', 'out', 'vpos', 'vneg',
    'ref', 'rg', 'fg', 'sense', or None. Names follow common symbol practice ('+', '-IN',
    'VIN+', 'Vout', 'V+', 'VEE', 'REF', 'RG')."""
    s = _norm(pin.name)
    if pin.type in ("power_in", "power_out"):
        if _VPOS.match(s):
            return "vpos"
        if _VNEG.match(s):
            return "vneg"
    for role, rx in (("inp", _PLUS), ("inn", _MINUS), ("ref", _REF), ("rg", _RG),
                     ("fg", _FG), ("sense", _SENSE), ("vpos", _VPOS), ("vneg", _VNEG)):
        if rx.match(s):
            return role
    if _OUT.match(s) or (pin.type == "output" and s in ("", "~")):
        return "out"
    return None


_GROUND = re.compile(r"^(?:/.*/)?(?:[ADPS]?GND[A-Z0-9]*|GND[ADPS]?|VSS|0|EARTH|COM)$", re.I)


_SUPPLY_NAME = re.compile(r"^(?:[+-]\d+(?:[.,V]\d*)?V?\d*[A-Z]*|[+-]?[AD]?V(?:CC|DD|EE|SS|BAT|BATT|IN|S|USB|BUS)"
                          r"[A-Z0-9_]*|[+-]BATT?|[+-]VS|VPOS|VNEG)$", re.I)


# Names that are 0 V by convention when the rails give no voltage (power-symbol grounds only;
# GNDS, Earth or a sheet-local '/x/GND' may be a virtual or floating ground).
_ZERO_VOLT = re.compile(r"^(?:GND|AGND|DGND|GNDA|GNDD|GNDREF|GNDPWR|0V?)$", re.I)


def is_ground_name(net: str) -> bool:
    """A net named as a ground (GND, AGND, GNDA, VSS, Earth), sheet path allowed."""
    return bool(_GROUND.match(net))


# --------------------------------------------------------------------------------------------
# Part data bridge

#: An op-amp model used only when neither the symbol nor any part data gives one: ideal in the
#: sense that matters for recognition (no limits stated). Every number says it was assumed.
GENERIC_OPAMP = OpAmpModel(
    name="ideal (no part data)",
    aol=Sourced(1e6, "default", "no op-amp part data: open-loop gain assumed 1e6"),
    cmrr_db=Sourced(float("inf"), "default", "no op-amp part data: CMRR not limited"),
    icm_low=Sourced(0.0, "default", "no op-amp part data: input range assumed rail to rail"),
    icm_high=Sourced(0.0, "default", "no op-amp part data: input range assumed rail to rail"),
    swing_low=Sourced(0.0, "default", "no op-amp part data: output assumed rail to rail"),
    swing_high=Sourced(0.0, "default", "no op-amp part data: output assumed rail to rail"),
)


def _call(obj: Any, name: str, *args):
    fn = getattr(obj, name, None) if obj is not None else None
    return fn(*args) if callable(fn) else None


# --------------------------------------------------------------------------------------------
# Netlist view


@dataclass(frozen=True)
class RElem:
    """One two-terminal resistor: a placed resistor or one element of a resistor network."""

    name: str      # 'R5', or 'RN1.2' for the second element of network RN1
    ref: str
    a: str
    b: str

    def other(self, net: str) -> str:
        return self.b if net == self.a else self.a


@dataclass
class Group:
    """Resistors acting as one two-terminal branch between ``near`` and ``far``: parallel
    elements and series chains through nodes that nothing else touches."""

    near: str
    far: str
    chains: list[list[RElem]]

    @property
    def elements(self) -> list[RElem]:
        return [r for ch in self.chains for r in ch]

    @property
    def expr(self) -> str:
        """Names joined: '+' for series, '||' for parallel (e.g. 'R9+R10', 'R13||R37')."""
        parts = ["+".join(sorted((r.name for r in ch), key=_natural)) for ch in self.chains]
        parts.sort(key=_natural)
        if len(parts) > 1:
            parts = [f"({p})" if "+" in p else p for p in parts]
        return "||".join(parts)

    @property
    def refs(self) -> list[str]:
        return sorted({r.ref for r in self.elements})


@dataclass
class OpUnit:
    """One op-amp of a (possibly multi-unit) package, with its nets."""

    name: str            # 'U1A' (multi-unit) or 'U1'
    ref: str
    inp: str | None
    inn: str | None
    out: str | None
    vpos: str | None
    vneg: str | None
    comp: Component


_RESISTOR_LIB = re.compile(r"^(?:Device:)?R(?:_.*)?$|^Device:R_", re.I)
_NETWORK_LIB = re.compile(r"R_(?:Pack|Array|Network)", re.I)
_CAP_LIB = re.compile(r"^(?:Device:)?C(?:_.*)?$|^Device:C_|^Device:CP", re.I)
_ZERO_VALUE = re.compile(r"^\s*0+(?:[.,]0*)?\s*(?:R|Ω|OHMS?)?\s*$", re.I)


def _ref_prefix(ref: str) -> str:
    m = re.match(r"^[A-Za-z_#]+", ref)
    return m.group(0).upper() if m else ""


class View:
    """Read-only helpers over a Netlist for recognition: resistor branches by net, op-amp
    units, integrated amplifier candidates, supply knowledge and value conversion."""

    def __init__(self, netlist: Netlist, parts: Any = None,
                 rails: Mapping[str, Sourced] | Callable[[str], Sourced | None] | None = None,
                 default_tol: float = 0.01, default_from: str = "profile"):
        self.netlist = netlist
        self.parts = parts
        self.default_tol = default_tol
        self.default_from = default_from
        if rails is None:
            self._rails: Callable[[str], Sourced | None] = lambda n: None
        elif callable(rails):
            self._rails = rails
        else:
            self._rails = lambda n, m=rails: m.get(n)
        self.comps = {r: c for r, c in netlist.components.items() if not c.dnp}
        self.dnp = sorted(r for r, c in netlist.components.items() if c.dnp)
        # Nodes per net, DNP parts left out: a part not fitted is not in the circuit.
        self.nodes: dict[str, list[tuple[str, str]]] = {}
        self.net_of: dict[tuple[str, str], str] = {}
        for net in netlist.nets:
            ns = [(n.ref, n.pin) for n in net.nodes if n.ref in self.comps]
            self.nodes[net.name] = ns
            for rp in ns:
                self.net_of[rp] = net.name
        self.kind: dict[str, str] = {ref: self._classify(c) for ref, c in self.comps.items()}
        self.resistors: list[RElem] = []
        self.capacitors: list[tuple[str, str, str]] = []     # (ref, net a, net b)
        for ref, c in self.comps.items():
            k = self.kind[ref]
            if k == "resistor":
                self.resistors.extend(self._resistor_elements(c))
            elif k == "capacitor":
                a, b = self._two_nets(c)
                if a and b and a != b:
                    self.capacitors.append((ref, a, b))
        self.r_at: dict[str, list[RElem]] = defaultdict(list)
        for r in self.resistors:
            self.r_at[r.a].append(r)
            if r.b != r.a:
                self.r_at[r.b].append(r)
        self.units: list[OpUnit] = []
        for ref, c in self.comps.items():
            if self.kind[ref] == "opamp":
                self.units.extend(self._units_of(c))
        self.unit_by_out: dict[str, list[OpUnit]] = defaultdict(list)
        for u in self.units:
            if u.out:
                self.unit_by_out[u.out].append(u)
        self._values: dict[str, tuple[Sourced, Sourced, str | None]] = {}

    # ---- classification -------------------------------------------------------------------

    def _classify(self, c: Component) -> str:
        """'resistor', 'capacitor', 'opamp', 'inamp', 'diffamp', 'comparator' or 'other'.
        Part data decides first; then library name, reference prefix and pin names."""
        k = _call(self.parts, "classify", c)
        if isinstance(k, str) and k:
            k = k.lower().replace("-", "").replace("_", "")
            if k == "network":
                return "resistor"
            if k == "other":
                k = ""           # the generic answer: look at the pins ourselves below
            for want in ("resistor", "capacitor", "opamp", "inamp", "diffamp", "comparator"):
                if want in k:
                    return want
            if k:
                return "other"   # a connector, a comparator class: trust it
        lib = c.lib_id or ""
        pre = _ref_prefix(c.ref)
        npins = len(c.pins)
        if _NETWORK_LIB.search(lib) or (pre == "RN" and npins >= 3):
            return "resistor"
        if (pre == "R" and npins == 2) or (_RESISTOR_LIB.match(lib) and npins == 2):
            return "resistor"
        if (pre == "C" and npins == 2) or (_CAP_LIB.match(lib) and npins == 2):
            return "capacitor"
        if "comparator" in lib.lower():
            return "comparator"
        library = lib.split(":", 1)[0].lower()
        roles = defaultdict(int)
        for p in c.pins.values():
            r = pin_role(p)
            if r:
                roles[r] += 1
            if p.type in ("open_collector", "open_emitter"):
                roles["oc"] += 1
        if roles["oc"] and roles["inp"]:
            return "comparator"
        if roles["inp"] and roles["inn"] and roles["out"]:
            if roles["rg"] or roles["fg"] or library == "amplifier_instrumentation":
                return "inamp"
            if roles["ref"] or roles["sense"] or library in ("amplifier_current",
                                                             "amplifier_difference"):
                return "diffamp"
            return "opamp"
        return "other"

    def _two_nets(self, c: Component) -> tuple[str | None, str | None]:
        nums = sorted(c.pins, key=_pin_key)
        nets = [self.net_of.get((c.ref, n)) for n in nums]
        if len(nets) != 2:
            return None, None
        return nets[0], nets[1]

    def _resistor_elements(self, c: Component) -> list[RElem]:
        pins = sorted(c.pins, key=_pin_key)
        if len(pins) == 2:
            a, b = (self.net_of.get((c.ref, p)) for p in pins)
            return [RElem(c.ref, c.ref, a, b)] if a and b and a != b else []
        # Resistor network. Pin names 'R1.1'/'R1.2' (KiCad's R_Pack symbols) give the pairs;
        # otherwise an isolated pack pairs pin i with pin N+1-i, and a bussed network joins
        # pin 1 (common) to every other pin.
        by_elem: dict[str, list[str]] = defaultdict(list)
        for p in pins:
            m = re.match(r"^R(\d+)\.[12]$", c.pins[p].name or "")
            if m:
                by_elem[m.group(1)].append(p)
        pairs: list[tuple[str, tuple[str, str]]] = []
        if by_elem and all(len(v) == 2 for v in by_elem.values()):
            pairs = [(k, (v[0], v[1])) for k, v in sorted(by_elem.items(), key=lambda kv: int(kv[0]))]
        elif "network" in (c.lib_id or "").lower() or "bus" in (c.lib_id or "").lower():
            pairs = [(str(i), (pins[0], p)) for i, p in enumerate(pins[1:], start=1)]
        elif len(pins) % 2 == 0:
            n = len(pins)
            nums = sorted(pins, key=_pin_key)
            pairs = [(str(i + 1), (nums[i], nums[n - 1 - i])) for i in range(n // 2)]
        out = []
        for k, (p, q) in pairs:
            a, b = self.net_of.get((c.ref, p)), self.net_of.get((c.ref, q))
            if a and b and a != b:
                out.append(RElem(f"{c.ref}.{k}", c.ref, a, b))
        return out

    def _units_of(self, c: Component) -> list[OpUnit]:
        """Split a package into op-amp units. With unit numbers (from a schematic or a KiCad 10
        netlist) pins group by unit; without them (KiCad 9 netlists) each output takes the
        nearest-numbered free inputs, which is how dual and quad pinouts are laid out."""
        pins = list(c.pins.values())
        role = {p.number: pin_role(p) for p in pins}
        vpos = [p for p in pins if role[p.number] == "vpos"]
        vneg = [p for p in pins if role[p.number] == "vneg"]

        def net(p: Pin | None) -> str | None:
            return self.net_of.get((c.ref, p.number)) if p is not None else None

        outs = sorted((p for p in pins if role[p.number] == "out"), key=lambda p: _pin_key(p.number))
        plus = [p for p in pins if role[p.number] == "inp"]
        minus = [p for p in pins if role[p.number] == "inn"]
        groups: list[tuple[Pin, Pin | None, Pin | None]] = []
        chan = {p.number: _channel(p) for p in outs + plus + minus}
        by_name = len(outs) > 1 and all(chan.values()) \
            and len({chan[o.number] for o in outs}) == len(outs)
        if by_name:
            for o in outs:
                c_ = chan[o.number]
                pp = next((p for p in plus if chan[p.number] == c_), None)
                mm = next((p for p in minus if chan[p.number] == c_), None)
                groups.append((o, pp, mm))
        elif pins and all(p.unit for p in outs + plus + minus):
            for o in outs:
                pp = next((p for p in plus if p.unit == o.unit), None)
                mm = next((p for p in minus if p.unit == o.unit), None)
                groups.append((o, pp, mm))
        else:
            free_p, free_m = list(plus), list(minus)
            for o in outs:
                on = _pin_num(o.number)
                pp = min(free_p, key=lambda p: abs(_pin_num(p.number) - on), default=None)
                mm = min(free_m, key=lambda p: abs(_pin_num(p.number) - on), default=None)
                if pp is not None:
                    free_p.remove(pp)
                if mm is not None:
                    free_m.remove(mm)
                groups.append((o, pp, mm))
        # Letters: a package with several op-amp units names them A, B, ... by unit number or,
        # without unit numbers, by output pin order (pin 1 = A, 7 = B, 8 = C, 14 = D).
        multi = len(groups) > 1 or any(p.unit > 1 for p in pins) \
            or max((_pin_num(p.number) for p in pins), default=0) > 8
        standard = {1: "A", 7: "B", 8: "C", 14: "D"}
        by_pin = all(_pin_num(o.number) in standard for o, _, _ in groups)
        out = []
        for i, (o, pp, mm) in enumerate(groups):
            if multi:
                if o.unit:
                    letter = chr(ord("A") + o.unit - 1)
                elif by_name:
                    c_ = chan[o.number]
                    letter = c_ if c_.isalpha() else chr(ord("A") + int(c_) - 1)
                elif by_pin:
                    letter = standard[int(_pin_num(o.number))]
                else:
                    letter = chr(ord("A") + i)
                name = f"{c.ref}{letter}"
            else:
                name = c.ref
            vp = next((net(p) for p in vpos if p.unit in (0, o.unit) or not o.unit), None)
            vn = next((net(p) for p in vneg if p.unit in (0, o.unit) or not o.unit), None)
            if vp is None:
                vp = next((net(p) for p in vpos), None)
            if vn is None:
                vn = next((net(p) for p in vneg), None)
            out.append(OpUnit(name, c.ref, net(pp), net(mm), net(o), vp, vn, c))
        return out

    # ---- nets -----------------------------------------------------------------------------

    def rail(self, net: str | None) -> Sourced | None:
        if net is None:
            return None
        v = self._rails(net)
        if v is None and _ZERO_VOLT.match(net):
            v = Sourced(0.0, "value", f"ground net name '{net}' (0 V by convention)")
        if v is not None and not isinstance(v, Sourced):
            v = Sourced(float(v), "project", f"rail {net}")
        return v

    def fixed(self, net: str | None) -> bool:
        """A supply or ground: a net whose potential does not depend on the signal. Known
        rails, ground names, supply names (+5V, -12V, +3V3, VCC, VDD, VEE, +BATT) and nets
        that feed a power-input pin."""
        if net is None:
            return False
        if self.rail(net) is not None or is_ground_name(net) \
                or _SUPPLY_NAME.match(net.rsplit("/", 1)[-1]):
            return True
        return net in self._power_nets

    @property
    def _power_nets(self) -> set[str]:
        if not hasattr(self, "_pn"):
            self._pn = {self.net_of[(ref, num)] for ref, c in self.comps.items()
                        for num, p in c.pins.items()
                        if p.type == "power_in" and (ref, num) in self.net_of
                        and not self.net_of[(ref, num)].startswith("unconnected-")}
        return self._pn

    def pin_nodes(self, net: str) -> list[tuple[str, str]]:
        return self.nodes.get(net, [])

    def is_open(self, net: str | None) -> bool:
        """Unconnected: no net, or a net with this one pin only that is not a supply or ground
        (a power symbol names a net without adding a pin to it)."""
        if net is None or net.startswith("unconnected-"):
            return True
        return len(self.nodes.get(net, [])) <= 1 and not self.fixed(net)

    def driven_by_output(self, net: str) -> bool:
        """An op-amp or amplifier output sits on the net."""
        if self.unit_by_out.get(net):
            return True
        for ref, pin in self.nodes.get(net, []):
            c = self.comps[ref]
            if self.kind[ref] in ("inamp", "diffamp", "opamp") and pin_role(c.pins[pin]) == "out":
                return True
        return False

    def dnp_at(self, net: str | None) -> list[str]:
        """Parts marked DNP with a pin on ``net`` (left out of the circuit, named in messages)."""
        if net is None:
            return []
        nl = self.netlist.net_by_name(net)
        return sorted({n.ref for n in nl.nodes if n.ref in self.dnp}) if nl else []

    def caps_at(self, net: str) -> list[tuple[str, str, str]]:
        return [c for c in self.capacitors if net in (c[1], c[2])]

    def is_series_node(self, net: str, ports: set[str]) -> bool:
        """Only two resistor pins meet here (a series joint that nothing else loads)."""
        if net in ports:
            return False
        ns = self.nodes.get(net, [])
        return len(ns) == 2 and all(self.kind.get(r) == "resistor" for r, _ in ns) \
            and len(self.r_at.get(net, [])) == 2

    def groups(self, net: str, ports: Iterable[str] = ()) -> dict[str, Group]:
        """Resistor branches leaving ``net``, keyed by the net at their far end. Series chains
        through untouched joints are followed; parallel branches to one far net merge."""
        stop = set(ports) | {net}
        out: dict[str, Group] = {}
        for r in self.r_at.get(net, []):
            chain = [r]
            far = r.other(net)
            seen = {net}
            while far not in stop and far not in seen and self.is_series_node(far, stop):
                seen.add(far)
                nxt = next(x for x in self.r_at[far] if x is not chain[-1])
                chain.append(nxt)
                far = nxt.other(far)
            if far == net:
                continue
            g = out.setdefault(far, Group(net, far, []))
            g.chains.append(chain)
        return out

    # ---- values ---------------------------------------------------------------------------

    def _value(self, ref: str) -> tuple[Sourced, Sourced, str | None]:
        if ref not in self._values:
            c = self.comps[ref]
            note = None
            try:
                from frontcheck.values import resistance_of
                ohms, tol = resistance_of(c, self.default_tol, self.default_from)
            except (InputError, ValueError) as e:   # unreadable: reported, never guessed
                text = c.value or c.fields.get("Value", "")
                ohms = Sourced(math.nan, "value", f"unreadable value '{text}'")
                tol = Sourced(math.nan, "value", f"unreadable value '{text}'")
                note = str(getattr(e, "message", "") or f"{ref}: value '{text}' is not a resistance")
            self._values[ref] = (ohms, tol, note)
        return self._values[ref]

    def ohms(self, ref: str) -> float:
        return self._value(ref)[0].value

    def group_ohms(self, g: Group) -> float:
        """Nominal resistance of a branch (NaN when a value is unreadable)."""
        inv = 0.0
        for ch in g.chains:
            s = sum(self.ohms(r.ref) for r in ch)
            if s == 0:
                return 0.0
            inv += 1.0 / s
        return 1.0 / inv if inv else math.inf

    def is_zero(self, g: Group) -> bool:
        """A branch written as 0 ohm (a link, not a resistor)."""
        return any(all(_ZERO_VALUE.match(self.comps[r.ref].value or "") for r in ch)
                   for ch in g.chains)

    def resistor(self, e: RElem, notes: list[str]) -> Resistor:
        ohms, tol, note = self._value(e.ref)
        if note and note not in notes:
            notes.append(note)
        c = self.comps[e.ref]
        group, mtol = "", None
        if e.name != e.ref:      # an element of a network: its ratio tolerance may be tighter
            group = e.ref
            net_model = _call(self.parts, "network_model", c)
            m = c.field("Ratio tolerance", "Matching", "Ratio_Tolerance", "Match")
            if net_model is not None and getattr(net_model, "ratio_tol", None) is not None:
                mtol = net_model.ratio_tol
            elif m:
                try:
                    from frontcheck.values import parse_tolerance
                    mtol = Sourced(parse_tolerance(m), "field", "matching field of " + e.ref)
                except (InputError, ValueError):
                    notes.append(f"{e.ref}: matching field '{m}' is not a tolerance; ignored")
        return Resistor(e.name, e.a, e.b, ohms, tol, match_group=group, match_tol=mtol)

    def opamp(self, u: OpUnit, notes: list[str]) -> OpAmp:
        model = _call(self.parts, "opamp_model", u.comp)
        if not isinstance(model, OpAmpModel):
            model = GENERIC_OPAMP
            msg = f"{u.ref}: no op-amp part data; ideal op-amp assumed"
            if msg not in notes:
                notes.append(msg)
        return OpAmp(u.name, u.ref, u.inp, u.inn, u.out, u.vpos, u.vneg, model)

    def location(self, ref: str) -> Location | None:
        c = self.netlist.components.get(ref)
        return c.location if c else None

    # ---- assembling -----------------------------------------------------------------------

    def capacitors_within(self, nets: set[str], notes: list[str],
                          driven: Iterable[str] = ()) -> list[Capacitor]:
        """Capacitors with both ends on the stage's nets and at least one end on a net the
        stage itself sets (e.g. across a feedback resistor). Input filter capacitors between
        driven ports and supplies do not change the stage's response and stay outside."""
        out = []
        fixed = set(driven)
        for ref, a, b in self.capacitors:
            if a in nets and b in nets and not ((a in fixed or self.fixed(a))
                                                and (b in fixed or self.fixed(b))):
                try:
                    from frontcheck.values import capacitance_of
                    f, t = capacitance_of(self.comps[ref], 0.1, "assumed for capacitors")
                except (InputError, ValueError):
                    text = self.comps[ref].value
                    f = Sourced(math.nan, "value", f"unreadable value '{text}'")
                    t = Sourced(math.nan, "value", f"unreadable value '{text}'")
                out.append(Capacitor(ref, a, b, f, t))
        return out

    def rails_for(self, opamps: Iterable[OpAmp], nets: Iterable[str] = ()) -> dict[str, Sourced]:
        """Known voltages of the op-amps' supply nets and of any other stage net that is a
        supply (a REF pin on a rail, a resistor to ground)."""
        out = {}
        for n in [x for o in opamps for x in (o.vpos, o.vneg)] + list(nets):
            v = self.rail(n)
            if n and v is not None:
                out[n] = v
        return out


def _channel(p: Pin) -> str | None:
    m = _CHANNEL.search(_norm(p.name))
    return next((g for g in m.groups() if g), None) if m else None


def _natural(s: str):
    return [int(t) if t.isdigit() else t for t in re.split(r"(\d+)", s)]


def _pin_num(number: str) -> float:
    m = re.search(r"\d+", number)
    return float(m.group(0)) if m else math.inf


def _pin_key(number: str):
    return (_pin_num(number), number)


def supply_notes(units: Iterable[OpUnit]) -> list[str]:
    """Remarks about op-amps whose supply pins are not in the netlist (power unit not placed)."""
    out = []
    for u in units:
        if u.vpos is None or u.vneg is None:
            out.append(f"{u.name}: supply pins not connected in the netlist (is the power unit "
                       "placed?); headroom cannot be checked")
    return out

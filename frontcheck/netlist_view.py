"""A read-only view of a netlist for recognition and analysis: what each part is (through
:mod:`frontcheck.component` and the part data), resistor branches by net, op-amp units with
their nets, supply knowledge, and values read from the design.

:class:`CircuitIndex` indexes the netlist (nodes, kinds, resistors, capacitors, units, branch
groups); :class:`NetlistView` adds values, part models and the pieces a stage is assembled from.
"""

from __future__ import annotations

import functools
import math
import re
from collections import defaultdict
from dataclasses import dataclass
from typing import Callable, Iterable, Mapping, Protocol

from frontcheck import component
from frontcheck.circuit import IDEAL_OPAMP, Capacitor, OpAmp, OpAmpModel, Resistor, Sourced
from frontcheck.errors import InputError
from frontcheck.netlist import Component, Location, Netlist
from frontcheck.rail_names import is_ground_name, is_zero_volt_name  # noqa: F401  (re-exported)
from frontcheck.shared_index import index_built, one_index, share_index

__all__ = ["CircuitIndex", "GENERIC_OPAMP", "Group", "OpUnit", "PartData", "RElem", "NetlistView",
           "is_ground_name", "one_index"]


class PartData(Protocol):
    """What recognition asks of part data (``frontcheck.parts.PartLibrary``); any method may
    be missing on a stand-in and any may answer None."""

    def classify(self, c: Component) -> str: ...
    def opamp_model(self, c: Component) -> OpAmpModel | None: ...
    def inamp_model(self, c: Component): ...
    def diffamp_model(self, c: Component): ...
    def network_model(self, c: Component): ...


def ask(parts: PartData | None, method: str, c: Component):
    """``parts.method(c)``, or None when there is no part data or it lacks the method."""
    fn = getattr(parts, method, None) if parts is not None else None
    return fn(c) if callable(fn) else None


#: The model of an op-amp that neither the symbol nor any part data describes: no numbers,
#: ideal in every figure (analysis gives it requirements instead).
GENERIC_OPAMP = IDEAL_OPAMP

_SUPPLY_NAME = re.compile(r"^(?:[+-]\d+(?:[.,V]\d*)?V?\d*[A-Z]*|[+-]?[AD]?V(?:CC|DD|EE|SS|BAT|BATT|IN|S|USB|BUS)"
                          r"[A-Z0-9_]*|[+-]BATT?|[+-]VS|VPOS|VNEG)$", re.I)
_ZERO_VALUE = re.compile(r"^\s*0+(?:[.,]0*)?\s*(?:R|Ω|OHMS?)?\s*$", re.I)

# component kind -> what recognition calls it (a network's elements are resistors; a
# connector is 'other' to recognition)
_VIEW_KIND = {"network": "resistor", "connector": "other"}


@functools.lru_cache(maxsize=8192)
def _natural(s: str) -> tuple:
    return tuple(int(t) if t.isdigit() else t for t in re.split(r"(\d+)", s))


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


class CircuitIndex:
    """The netlist indexed for recognition: nodes per net (DNP parts left out: a part not
    fitted is not in the circuit), the kind of every part, resistor elements and capacitors
    by net, op-amp units by output net, and resistor branches between nets."""

    def __init__(self, netlist: Netlist, parts: PartData | None = None,
                 rails: Mapping[str, Sourced] | Callable[[str], Sourced | None] | None = None):
        self.netlist = netlist
        self.parts = parts
        if rails is None:
            self._rails: Callable[[str], Sourced | None] = lambda n: None
        elif callable(rails):
            self._rails = rails
        else:
            self._rails = lambda n, m=rails: m.get(n)
        # net -> rail() and fixed(), remembered: recognition asks about the same nets again
        # and again (the rails and part data of a view do not change)
        self._rail_of: dict[str, Sourced | None] = {}
        self._fixed: dict[str, bool] = {}
        if not share_index(self, netlist, parts):
            self._build(netlist)
            index_built(self, netlist, parts)

    def _build(self, netlist: Netlist) -> None:
        self.comps = {r: c for r, c in netlist.components.items() if not c.dnp}
        self.dnp = sorted(r for r, c in netlist.components.items() if c.dnp)
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
            if self.kind[ref] == "resistor":
                self.resistors.extend(self._resistor_elements(c))
            elif self.kind[ref] == "capacitor" and len(c.pins) == 2:
                a, b = (self.net_of.get((ref, n)) for n in sorted(c.pins, key=component.pin_key))
                if a and b and a != b:
                    self.capacitors.append((ref, a, b))
        # capacitor positions in self.capacitors by net and by pair of nets (the lower name
        # first): a stage's capacitors are found without a pass over the whole design's
        self.caps_by_net: dict[str, list[int]] = {}
        self.caps_by_pair: dict[tuple[str, str], list[int]] = {}
        for i, (_, a, b) in enumerate(self.capacitors):
            self.caps_by_net.setdefault(a, []).append(i)
            self.caps_by_net.setdefault(b, []).append(i)
            self.caps_by_pair.setdefault((a, b) if a < b else (b, a), []).append(i)
        self.r_at: dict[str, list[RElem]] = defaultdict(list)
        for r in self.resistors:
            self.r_at[r.a].append(r)
            if r.b != r.a:
                self.r_at[r.b].append(r)
        # design notes: (reference, text) about what a part is, for the design-note rule
        self.design_notes: list[tuple[str, str]] = []
        self._wiring_decides()
        self.units: list[OpUnit] = [u for ref, c in self.comps.items()
                                    if self.kind[ref] == "opamp" for u in self._units_of(c)]
        self.unit_by_out: dict[str, list[OpUnit]] = defaultdict(list)
        for u in self.units:
            if u.out:
                self.unit_by_out[u.out].append(u)

    def _classify(self, c: Component) -> str:
        """'resistor', 'capacitor', 'opamp', 'inamp', 'diffamp', 'fda', 'ota', 'comparator' or
        'other'. Part data decides first (a class of a kind), then the component module."""
        k = ask(self.parts, "classify", c)
        if not (isinstance(k, str) and k and k != "other"):
            k = component.classify(c)
        k = k.lower().replace("-", "").replace("_", "")
        k = _VIEW_KIND.get(k, k)
        return k if k in ("resistor", "capacitor", "opamp", "inamp", "diffamp", "fda", "ota",
                          "comparator") else "other"

    def _wiring_decides(self) -> None:
        """What the wiring says wins over the symbol: a part drawn with a difference-amplifier
        symbol but with a resistor from its output to its inverting input is an op-amp (the
        internal resistors of a real one make that resistor pointless). Part data still decides
        first. Also notes a Value that names another part than the symbol."""
        for ref, c in self.comps.items():
            kind = self.kind[ref]
            if kind in ("opamp", "inamp", "diffamp", "fda") and component.names_disagree(c):
                self.design_notes.append((ref, component.names_disagree(c)))
            if kind != "diffamp" or self._class_from_part_data(c):
                continue
            roles = component.pin_roles(c)
            if len(roles.get("out", [])) != 1 or len(roles.get("inn", [])) != 1:
                continue
            out, inn = (self.net_of.get((ref, roles[r][0])) for r in ("out", "inn"))
            feedback = [r for r in self.r_at.get(out or "", []) if inn and r.other(out) == inn]
            if feedback and out != inn:
                self.kind[ref] = "opamp"
                self.design_notes.append((ref, (
                    f"{ref} is drawn with a difference amplifier's symbol ({c.lib_id}) but "
                    f"{feedback[0].name} runs from its output to its inverting input: it is "
                    "taken as an op-amp, as the wiring says")))

    def _class_from_part_data(self, c: Component) -> bool:
        try:
            found = ask(self.parts, "class_of", c)
        except InputError:
            return True
        return bool(found) and found[0] is not None

    def _resistor_elements(self, c: Component) -> list[RElem]:
        out = []
        for key, p, q in component.resistor_elements(c):
            a, b = self.net_of.get((c.ref, p)), self.net_of.get((c.ref, q))
            if a and b and a != b:
                out.append(RElem(f"{c.ref}.{key}" if key else c.ref, c.ref, a, b))
        return out

    def _units_of(self, c: Component) -> list[OpUnit]:
        def net(num: str | None) -> str | None:
            return self.net_of.get((c.ref, num)) if num is not None else None
        return [OpUnit(u.name, c.ref, net(u.inp), net(u.inn), net(u.out), net(u.vpos),
                       net(u.vneg), c) for u in component.opamp_units(c)]

    # ---- nets -----------------------------------------------------------------------------

    def rail(self, net: str | None) -> Sourced | None:
        if net is None:
            return None
        if net in self._rail_of:
            return self._rail_of[net]
        v = self._rails(net)
        if v is None and is_zero_volt_name(net):   # power-symbol grounds only (rail_names)
            v = Sourced(0.0, "value", f"ground net name '{net}' (0 V by convention)")
        if v is not None and not isinstance(v, Sourced):
            v = Sourced(float(v), "project", f"rail {net}")
        self._rail_of[net] = v
        return v

    def fixed(self, net: str | None) -> bool:
        """A supply or ground: a net whose potential does not depend on the signal. Known
        rails, ground names, supply names (+5V, -12V, +3V3, VCC, VDD, VEE, +BATT) and nets
        that feed a power-input pin."""
        if net is None:
            return False
        found = self._fixed.get(net)
        if found is None:
            found = self._fixed[net] = (
                self.rail(net) is not None or is_ground_name(net)
                or bool(_SUPPLY_NAME.match(net.rsplit("/", 1)[-1])) or net in self._power_nets)
        return found

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
            if self.kind[ref] in ("inamp", "diffamp", "opamp") \
                    and component.pin_role(c.pins[pin]) == "out":
                return True
        return False

    def dnp_at(self, net: str | None) -> list[str]:
        """Parts marked DNP with a pin on ``net`` (left out of the circuit, named in messages)."""
        if net is None:
            return []
        nl = self.netlist.net_by_name(net)
        return sorted({n.ref for n in nl.nodes if n.ref in self.dnp}) if nl else []

    def caps_at(self, net: str) -> list[tuple[str, str, str]]:
        """Capacitors with an end on ``net``, in design order."""
        return [self.capacitors[i] for i in self.caps_by_net.get(net, ())]

    def caps_among(self, nets: set[str]) -> list[tuple[str, str, str]]:
        """Capacitors with both ends in ``nets``, in design order: from the pairs of nets
        when they are few, else one pass over the design's capacitors."""
        if len(nets) * len(nets) > 2 * len(self.capacitors):
            return [c for c in self.capacitors if c[1] in nets and c[2] in nets]
        found: set[int] = set()
        for a in nets:
            for b in nets:
                if a < b:
                    found.update(self.caps_by_pair.get((a, b), ()))
        return [self.capacitors[i] for i in sorted(found)]

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

    def location(self, ref: str) -> Location | None:
        c = self.netlist.components.get(ref)
        return c.location if c else None


class NetlistView(CircuitIndex):
    """The circuit index plus values read from the design and part models: what a
    recogniser assembles a stage from."""

    def __init__(self, netlist: Netlist, parts: PartData | None = None,
                 rails: Mapping[str, Sourced] | Callable[[str], Sourced | None] | None = None,
                 default_tol: float = 0.01, default_from: str = "profile"):
        super().__init__(netlist, parts, rails)
        self.default_tol = default_tol
        self.default_from = default_from
        self._values: dict[str, tuple[Sourced, Sourced, str | None]] = {}
        self._zero: dict[str, bool] = {}           # ref -> its value reads as 0 ohm

    # ---- values ---------------------------------------------------------------------------

    def _value(self, ref: str) -> tuple[Sourced, Sourced, str | None]:
        if ref not in self._values:
            from frontcheck.values import resistance_of
            c = self.comps[ref]
            note = None
            try:
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
        return any(all(self._zero_value(r.ref) for r in ch) for ch in g.chains)

    def _zero_value(self, ref: str) -> bool:
        found = self._zero.get(ref)
        if found is None:
            found = self._zero[ref] = bool(_ZERO_VALUE.match(self.comps[ref].value or ""))
        return found

    def resistor(self, e: RElem, notes: list[str]) -> Resistor:
        ohms, tol, note = self._value(e.ref)
        if note and note not in notes:
            notes.append(note)
        c = self.comps[e.ref]
        group, mtol, net_model = "", None, None
        if e.name != e.ref:      # an element of a network: its ratio tolerance may be tighter
            group = e.ref
            net_model = ask(self.parts, "network_model", c)
            m = c.field("Ratio tolerance", "Matching", "Ratio_Tolerance", "Match")
            if net_model is not None and getattr(net_model, "ratio_tol", None) is not None:
                mtol = net_model.ratio_tol
            elif m:
                try:
                    from frontcheck.values import parse_tolerance
                    mtol = Sourced(parse_tolerance(m), "field", "matching field of " + e.ref)
                except (InputError, ValueError):
                    notes.append(f"{e.ref}: matching field '{m}' is not a tolerance; ignored")
        tcr, tracking = _tcr_of(c, net_model if group else None, notes)
        return Resistor(e.name, e.a, e.b, ohms, tol, match_group=group, match_tol=mtol, tcr=tcr,
                        tcr_tracking=tracking)

    def opamp(self, u: OpUnit, notes: list[str]) -> OpAmp:
        model = ask(self.parts, "opamp_model", u.comp)
        if not isinstance(model, OpAmpModel):
            model = GENERIC_OPAMP
            msg = f"{u.ref}: no op-amp part data; ideal op-amp assumed"
            if msg not in notes:
                notes.append(msg)
        return OpAmp(u.name, u.ref, u.inp, u.inn, u.out, u.vpos, u.vneg, model)

    # ---- assembling -----------------------------------------------------------------------

    def capacitors_within(self, nets: set[str], notes: list[str],
                          driven: Iterable[str] = ()) -> list[Capacitor]:
        """Capacitors with both ends on the stage's nets and at least one end on a net the
        stage itself sets (e.g. across a feedback resistor). Input filter capacitors between
        driven ports and supplies do not change the stage's response and stay outside."""
        from frontcheck.values import capacitance_of
        out = []
        fixed = set(driven)
        for ref, a, b in self.caps_among(nets):
            if a in nets and b in nets and not ((a in fixed or self.fixed(a))
                                                and (b in fixed or self.fixed(b))):
                try:
                    f, t = capacitance_of(self.comps[ref], 0.1, "built-in")
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



def _tcr_of(c, net_model, notes: list[str]) -> tuple[Sourced | None, Sourced | None]:
    """A resistor's TCR (its TCR/TC field first, then its network's part data) and its
    network's TCR tracking, each None when nothing gives it (the budget then asks for it).
    A TCR field that is not a temperature coefficient is noted and left out, not guessed."""
    from frontcheck.values import tcr_of
    try:
        tcr = tcr_of(c)
    except InputError as e:
        tcr = None
        note = f"{e.message}; its TCR is treated as not given"
        if note not in notes:
            notes.append(note)
    if tcr is None and net_model is not None:
        tcr = getattr(net_model, "tcr", None)
    return tcr, getattr(net_model, "tcr_tracking", None) if net_model is not None else None

"""The RC filter at a stage's inputs as the input-filter rule judges it: its parts (inside the
stage, or found in the netlist around the input ports), their values and tolerances, the corner
frequencies and the worst-case conversion of common mode into a differential signal
(docs/engineering.md sec. 7). The rule only judges these numbers.
"""

from __future__ import annotations

import itertools
import math
import re

import numpy as np

from frontcheck.analysis import mna
from frontcheck.analysis.mna import is_ground
from frontcheck.analysis.tolerance import filter_nets
from frontcheck.circuit import Capacitor, Resistor, Sourced, Stage, SubCircuit
from frontcheck.netlist import Netlist
from frontcheck.result import InputFilter
from frontcheck.values import capacitance_of, resistance_of

# key ('Rp', 'Rn', 'Ccp', 'Ccn', 'Cd') -> (total value, largest tolerance, references, any
# tolerance assumed)
FilterParts = dict[str, tuple[float, float, list[str], bool]]


def corner_frequencies(r: float, cc: float, cd: float) -> tuple[float, float | None]:
    """(f_DM, f_CM) in hertz of a symmetric filter: R per leg, Cc per leg to ground, Cd across.

    f_DM = 1 / (2 pi R (2 Cd + Cc)),  f_CM = 1 / (2 pi R Cc)  (None without Cc).

    References
    ----------
    docs/engineering.md sec. 7 (derived; ngspice AC-verified).
    """
    f_dm = 1.0 / (2 * math.pi * r * (2 * cd + cc)) if (2 * cd + cc) > 0 else math.inf
    f_cm = 1.0 / (2 * math.pi * r * cc) if cc > 0 else None
    return f_dm, f_cm


def conversion(freq: float, rp: float, rn: float, cp: float, cn: float, cd: float,
               tr: tuple[float, float] = (0.0, 0.0), tc: tuple[float, float, float] = (0.0, 0.0, 0.0)) -> float:
    """Worst-case |Vd/Vcm| at ``freq``: the filter solved at every tolerance corner of its
    two resistors (+-tr) and three capacitors (+-tc; order Cc+, Cc-, Cd), largest magnitude.

    References
    ----------
    docs/engineering.md sec. 7; solved with frontcheck.analysis.mna (modified nodal analysis,
    Ho, Ruehli, Brennan, IEEE Trans. Circuits Syst. 22(6), 1975).
    """
    z = Sourced(0.0)
    sub = SubCircuit(
        resistors=[Resistor("Rp", "src_p", "node_p", z, z), Resistor("Rn", "src_n", "node_n", z, z)],
        capacitors=[Capacitor("Ccp", "node_p", "GND", z, z), Capacitor("Ccn", "node_n", "GND", z, z),
                    Capacitor("Cd", "node_p", "node_n", z, z)],
        ports={"in_p": "src_p", "in_n": "src_n", "out": "node_p"})
    topo = mna.compile_circuit(sub)
    signs = np.array(list(itertools.product((-1.0, 1.0), repeat=5)))
    R = np.column_stack([rp * (1 + signs[:, 0] * tr[0]), rn * (1 + signs[:, 1] * tr[1])])
    C = np.column_stack([cp * (1 + signs[:, 2] * tc[0]), cn * (1 + signs[:, 3] * tc[1]),
                         cd * (1 + signs[:, 4] * tc[2])])
    X = mna.solve_ac(topo, freq, R, C)
    vp = topo.coefficients(X, "node_p")[:, mna.VCM]
    vn = topo.coefficients(X, "node_n")[:, mna.VCM]
    return float(np.max(np.abs(vp - vn)))


def _prefix(ref: str) -> str:
    return "".join(ch for ch in ref if ch.isalpha()).upper()


def part_nets(netlist: Netlist) -> dict[str, list[str]]:
    """ref -> nets of its pins (two-pin parts only are of interest)."""
    out: dict[str, list[str]] = {}
    for net in netlist.nets:
        for n in net.nodes:
            out.setdefault(n.ref, []).append(net.name)
    return out


def parts_by_net(pins: dict[str, list[str]]) -> tuple[dict[str, list[str]], dict[str, int]]:
    """net -> references with a pin on it, and each reference's place in ``pins``."""
    out: dict[str, list[str]] = {}
    for ref, nets in pins.items():
        for net in nets:
            out.setdefault(net, []).append(ref)
    return out, {ref: i for i, ref in enumerate(pins)}


def filter_in_stage(stage: Stage) -> FilterParts | None:
    """Filter parts recognition placed inside the stage (ports on the source side of the
    series resistors), or None."""
    sub = stage.circuit
    found = filter_nets(sub)
    if found is None:
        return None
    (p, n), rnames = found
    role_elems = {t for expr in stage.roles.values() for t in re.split(r"[+|()\s]+", expr) if t}
    if set(rnames) & role_elems:
        return None     # a gain resistor with a capacitor across its neighbour: not a filter
    rails = set(sub.rails)
    by_name = {r.name: r for r in sub.resistors}
    vals = {"Rp": [by_name[rnames[0]]], "Rn": [by_name[rnames[1]]], "Ccp": [], "Ccn": [], "Cd": []}
    for c in sub.capacitors:
        ends = {c.a, c.b}
        if ends == {p, n}:
            vals["Cd"].append(c)
        for key, net in (("Ccp", p), ("Ccn", n)):
            if net in ends:
                other = (ends - {net}).pop() if len(ends) == 2 else net
                if is_ground(other) or other in rails:
                    vals[key].append(c)
    out: FilterParts = {}
    for key, elems in vals.items():
        total = sum(float(e.ohms.value if key.startswith("R") else e.farads.value) for e in elems)
        tol = max((float(e.tol.value) for e in elems), default=0.0)
        assumed = any(e.tol.source in ("default", "class") for e in elems)
        out[key] = (total, tol, [e.name.split(".")[0] for e in elems], assumed)
    return out


def find_filter(netlist: Netlist | None, stage: Stage, known: InputFilter | None,
                r_tol: float, c_tol: float, pins: dict[str, list[str]],
                by_net: tuple[dict[str, list[str]], dict[str, int]] | None = None,
                ) -> tuple[FilterParts, bool] | None:
    """(parts, inside) of the filter at a stage's input nets, or None when there is no RC
    filter there; ``inside`` when recognition placed the filter inside the stage.

    Parts inside the stage (when recognition included the filter) come first; otherwise the
    netlist around the stage's input ports is searched: ``pins`` is ``part_nets(netlist)``,
    ``known`` the filter the stage analysis found ahead of the ports (its parts are taken
    exactly), ``r_tol``/``c_tol`` the tolerances of parts whose value gives none."""
    inner = filter_in_stage(stage)
    if inner is not None:
        return inner, True
    if netlist is None:
        return None
    p, n = stage.circuit.ports.get("in_p"), stage.circuit.ports.get("in_n")
    if not p or not n or p == n:
        return None
    own = set(stage.references)
    rails = set(stage.circuit.rails)
    # The analysis found the filter ahead of the ports (it tells series legs from bias
    # returns to a buffered reference): take exactly its parts.
    known_parts = set(known.parts) if known is not None and known.parts else None

    def grounded(net: str) -> bool:
        return is_ground(net) or net in rails

    parts = {"Rp": [], "Rn": [], "Ccp": [], "Ccn": [], "Cd": []}
    # Only parts on the two port nets can belong to the filter; taken in the index's order,
    # through a net -> parts map rather than a scan of the whole design for every stage.
    at, order = by_net if by_net is not None else parts_by_net(pins)
    near = sorted({ref for net in (p, n) for ref in at.get(net, ())}, key=order.__getitem__)
    for ref in near:
        nets = pins[ref]
        if ref in own or len(nets) != 2 or (known_parts is not None and ref not in known_parts):
            continue
        comp = netlist.components.get(ref)
        if comp is None or comp.dnp:
            continue
        a, b = nets
        kind = _prefix(ref)
        if kind == "C":
            if {a, b} == {p, n}:
                parts["Cd"].append(comp)
            elif p in (a, b) and (known_parts is not None or grounded(b if a == p else a)):
                parts["Ccp"].append(comp)
            elif n in (a, b) and (known_parts is not None or grounded(b if a == n else a)):
                parts["Ccn"].append(comp)
        elif kind == "R":
            for leg, net in (("Rp", p), ("Rn", n)):
                if net in (a, b):
                    other = b if a == net else a
                    if other not in (p, n) and not grounded(other):
                        parts[leg].append(comp)
    if not (parts["Ccp"] or parts["Ccn"] or parts["Cd"]) or not (parts["Rp"] or parts["Rn"]):
        return None
    if len(parts["Rp"]) > 1 or len(parts["Rn"]) > 1:
        return None      # not a simple series leg (a divider or a bias network): not our shape
    vals: FilterParts = {}
    try:
        for key, comps in parts.items():
            total, tol, assumed = 0.0, 0.0, False
            for c in comps:
                if key.startswith("R"):
                    v, t = resistance_of(c, r_tol, "input-filter rule")
                else:
                    v, t = capacitance_of(c, c_tol, "input-filter rule")
                total += v.value      # parallel capacitors add; a leg has one resistor
                tol = max(tol, t.value)
                assumed = assumed or t.source == "default"
            vals[key] = (total, tol, [c.ref for c in comps], assumed)
    except Exception:
        return None      # an unreadable value: the netlist readers report it
    if any(not math.isfinite(v[0]) for v in vals.values()):
        return None
    return vals, False


def filter_numbers(parts: FilterParts, at_hz: float, analysed: InputFilter | None,
                   ) -> tuple[float, float | None, float, str]:
    """(f_DM, f_CM, worst-case |Vd/Vcm| at ``at_hz``, basis) of a filter ``find_filter``
    returned. The filter alone, or, when the stage analysis solved the same filter with the
    amplifier's input loading (``analysed``: pass it only for a filter inside the stage), its
    corners and, where it has the frequency, its conversion, so that reports agree."""
    rp, rn = parts["Rp"][0], parts["Rn"][0]
    cp, cn, cd = parts["Ccp"][0], parts["Ccn"][0], parts["Cd"][0]
    r_avg = (rp + rn) / 2 if rp and rn else max(rp, rn)
    c_avg = (cp + cn) / 2 if cp and cn else max(cp, cn)
    f_dm, f_cm = corner_frequencies(r_avg, c_avg, cd)
    conv = conversion(at_hz, rp or 1e-3, rn or 1e-3, cp, cn, cd,
                      (parts["Rp"][1], parts["Rn"][1]),
                      (parts["Ccp"][1], parts["Ccn"][1], parts["Cd"][1]))
    if analysed is not None:
        return (analysed.f_dm_hz, analysed.f_cm_hz, analysed.cm_to_dm.get(at_hz, conv),
                "with the stage's input loading")
    return f_dm, f_cm, conv, "filter alone"

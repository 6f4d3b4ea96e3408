"""A tiny builder of Netlist objects for recognition tests: place parts, name the nets their
pins go to, build. Pin numbering follows KiCad's standard op-amp symbols (single SOT-23-5,
dual, quad with A = pins 1-3, B = 5-7, C = 8-10, D = 12-14, supplies 4/11 on a quad)."""

from __future__ import annotations

from collections import defaultdict

from frontcheck.netlist import Component, Location, Net, Netlist, Node, Pin

# unit letter -> (out, -, +) pin numbers
QUAD = {"A": ("1", "2", "3"), "B": ("7", "6", "5"), "C": ("8", "9", "10"), "D": ("14", "13", "12")}
DUAL = {"A": ("1", "2", "3"), "B": ("7", "6", "5")}
SINGLE = {"": ("1", "4", "3")}


class NetlistBuilder:
    """Netlist builder. Every method returns self so calls chain."""

    def __init__(self):
        self.comps: dict[str, Component] = {}
        self.nets: dict[str, list[Node]] = defaultdict(list)

    def _pin(self, ref: str, number: str, name: str, ptype: str, net: str | None, unit: int = 0):
        c = self.comps[ref]
        if net is None:
            # Left open: KiCad gives every placed pin a net, an open one its own.
            net = f"unconnected-({ref}-Pad{number})"
        c.pins[number] = Pin(number, name, ptype, unit)
        self.nets[net].append(Node(ref, number, name, ptype))

    def part(self, ref: str, value: str = "", lib_id: str = "", dnp: bool = False,
             fields: dict | None = None, pins=()):
        """pins: (number, name, type, net) tuples; net None leaves the pin unconnected."""
        f = {"Reference": ref, "Value": value}
        f.update(fields or {})
        self.comps[ref] = Component(ref, value, lib_id, fields=f, dnp=dnp,
                                    location=Location("test.kicad_sch", len(self.comps) + 1))
        for number, name, ptype, net in pins:
            self._pin(ref, number, name, ptype, net)
        return self

    def r(self, ref: str, a: str, b: str, value: str = "10k", dnp: bool = False, **fields):
        return self.part(ref, value, "Device:R", dnp, fields,
                         [("1", "", "passive", a), ("2", "", "passive", b)])

    def c(self, ref: str, a: str, b: str, value: str = "100n"):
        return self.part(ref, value, "Device:C", pins=[("1", "", "passive", a), ("2", "", "passive", b)])

    def rpack(self, ref: str, pairs: list[tuple[str, str]], value: str = "10k", **fields):
        """An isolated resistor pack (KiCad R_Pack0N): element k joins pin k and pin 2N+1-k,
        pin names 'Rk.1' / 'Rk.2'."""
        n = len(pairs)
        pins = []
        for k, (a, b) in enumerate(pairs, start=1):
            pins.append((str(k), f"R{k}.1", "passive", a))
            pins.append((str(2 * n + 1 - k), f"R{k}.2", "passive", b))
        return self.part(ref, value, f"Device:R_Pack0{n}", fields=fields, pins=pins)

    def opamp(self, ref: str, units: dict[str, tuple[str | None, str | None, str | None]],
              vpos: str | None = "+5V", vneg: str | None = "GND", package: str = "quad",
              unit_numbers: bool = False, value: str = "opamp", pin_names=("+", "-", "")):
        """units: letter -> (+in net, -in net, out net). package 'single', 'dual' or 'quad'.
        ``unit_numbers`` sets Pin.unit as a schematic reader does (power unit = last unit)."""
        layout = {"single": SINGLE, "dual": DUAL, "quad": QUAD}[package]
        self.part(ref, value, "Amplifier_Operational:Generic_" + package)
        plus, minus, outname = pin_names
        for letter, (inp, inn, out) in units.items():
            o, m, p = layout[letter]
            u = (ord(letter) - ord("A") + 1) if (unit_numbers and letter) else 0
            self._pin(ref, o, outname, "output", out, u)
            self._pin(ref, m, minus, "input", inn, u)
            self._pin(ref, p, plus, "input", inp, u)
        sup = {"single": ("5", "2"), "dual": ("8", "4"), "quad": ("4", "11")}[package]
        pu = (len(layout) + 1) if unit_numbers and package != "single" else 0
        self._pin(ref, sup[0], "V+", "power_in", vpos, pu)
        self._pin(ref, sup[1], "V-", "power_in", vneg, pu)
        return self

    def pins_to(self, ref: str, *nets: str | None):
        """A connector with one pin on each net (so no net is left with a single pin)."""
        pins = [(str(i), f"Pin_{i}", "passive", n) for i, n in enumerate(nets, start=1)]
        return self.part(ref, "Conn", "Connector:Conn", pins=pins)

    def build(self) -> Netlist:
        nets = [Net(name, list(nodes)) for name, nodes in sorted(self.nets.items())]
        return Netlist(components=dict(self.comps), nets=nets, source="built in a test")


def diff_amp(nb: NetlistBuilder | None = None, u: str = "U1", unit: str = "", r=("R1", "R2", "R3", "R4"),
             vals=("10k", "10k", "10k", "10k"), inp="IN_P", inn="IN_N", ref="GND",
             out="OUT", package: str = "single", **kw) -> NetlistBuilder:
    """A difference amplifier: R1 inn -> n, R2 n -> out, R3 inp -> p, R4 p -> ref."""
    nb = nb or NetlistBuilder()
    n, p = f"{u}{unit}_n", f"{u}{unit}_p"
    nb.r(r[0], inn, n, vals[0]).r(r[1], n, out, vals[1]).r(r[2], inp, p, vals[2]).r(r[3], p, ref, vals[3])
    if package == "single":
        nb.opamp(u, {"": (p, n, out)}, package="single", **kw)
    return nb


def ideal_gains(stage):
    """(Ad, Acm, Aref) of a stage's SubCircuit solved with ideal op-amps by the project's
    nodal analysis: used to check that recognition handed over the circuit that was drawn."""
    import numpy as np

    from frontcheck.analysis import mna

    topo = mna.compile_circuit(stage.circuit)
    X = mna.solve_dc(topo, mna.nominal_values(stage.circuit),
                     np.zeros(len(stage.circuit.opamps)))
    g = mna.gains(topo, X)
    return float(g.ad[0]), float(g.acm[0]), float(g.aref[0])

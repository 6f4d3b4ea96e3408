"""Every part around a stage takes part in its worst case: checked with ngspice corner runs on
KiCad 9's own netlists of two samples.

The decks are written from KiCad 9's netlist export (``shared/tools/kicad9 netlist``), not from
frontcheck's reading of the schematic: every resistor of the board is in them, every op-amp
unit is a voltage-controlled source of the gain and CMRR the sample's ``Part Class`` names
(``rules/parts``), written as three series E-sources (``A (v+ - v-)``, ``k/2 v+``, ``k/2 v-``,
``k = A/CMRR``) so that the batch can set each op-amp's CMRR sign with ``alter``. Capacitors are
open at DC. The inputs are driven at the stage's input nets by Vcm +- Vd/2 and the supplies by
DC sources. For each tolerance corner of the parts named below (and each CMRR sign of the
stage's op-amps) ngspice solves the operating point at (Vcm, Vd) = (0, 0), (1, 0) and (0, 1);
the gains are the differences of the output voltage.

* ecg-frontend: the three-op-amp in-amp U1A/U1B/U2 with its centre tap CM loaded by R13 (100k
  to the driven-reference amplifier U3B, whose feedback holds its inverting input at VREF).
  Worst CMRR 51.48 dB with R13 varied (51.69 dB without), resistors alone 66.78 dB (67.98 dB
  without); worst gain 4.98938 .. 5.04054 with the op-amps' CMRR signs.
* kiln-logger: the integrated in-amp U1 (class generic-inamp: internal Rf1 = Rf2 = Gain K/2
  with the class's k_tol, unity stage 2 of Stage2 R) with REF from the divider R2/R3 off +5V:
  worst gain 57.336 .. 58.179 with R2 and R3 varied (57.389 .. 58.125 with their Thevenin
  resistance fixed).
"""

from __future__ import annotations

import itertools
import math
import re
import subprocess
import tempfile
import tomllib
from pathlib import Path

import pytest

from conftest import REPO
from frontcheck.pipeline import RunOptions, run
from frontcheck.values import parse_value

PINS = {"dual": {"A": ("3", "2", "1"), "B": ("5", "6", "7")}, "single": {"": ("3", "2", "6")}}
PARTS = REPO / "rules" / "parts"


def _netlist(kicad9, sch: Path, out: Path) -> tuple[dict, dict]:
    """(components {ref: {'value', 'fields'}}, nets {name: [(ref, pin)]}) from KiCad 9."""
    subprocess.run([str(kicad9), "netlist", str(sch), str(out)], check=True,
                   capture_output=True, timeout=300)
    text = out.read_text()
    comps = {}
    for block in text.split("(comp (ref ")[1:]:
        ref = block.split('"')[1]
        value = re.search(r'\(value "([^"]*)"\)', block).group(1)
        fields = dict(re.findall(r'\(field \(name "([^"]+)"\) "([^"]*)"\)', block.split("(libsource")[0]))
        comps[ref] = {"value": value, "fields": fields}
    nets = {}
    for block in text.split("(net (code ")[1:]:
        name = re.search(r'\(name "([^"]*)"\)', block).group(1)
        nets[name] = re.findall(r'\(node \(ref "([^"]+)"\) \(pin "([^"]+)"\)', block)
    return comps, nets


def _node(net: str) -> str:
    """SPICE node of a net, distinct for 'Net-(U2-+)' and 'Net-(U2--)'."""
    if net in ("GND", "/GND"):
        return "0"
    return "n_" + re.sub(r"[^a-z0-9]", "_", net.lower().replace("+", "p").replace("-", "m"))


def _class(kind: str, name: str) -> dict:
    doc = tomllib.loads((PARTS / f"{kind}s.toml").read_text())
    return doc[kind][name]


class Deck:
    """A SPICE deck of the whole board at DC, built from KiCad's netlist."""

    def __init__(self, comps, nets, rails: dict[str, float], inputs: tuple[str, str]):
        self.pin_net = {(r, p): n for n, nodes in nets.items() for r, p in nodes}
        self.lines = ["* board from KiCad 9's netlist", "VCM n_cm 0 DC 0",
                      f"VDP {_node(inputs[0])} n_cm DC 0", f"VDN n_cm {_node(inputs[1])} DC 0"]
        for net, v in rails.items():
            self.lines.append(f"V{_node(net)} {_node(net)} 0 DC {v!r}")
        self.res: dict[str, str] = {}
        self.cmrr: dict[str, tuple[str, str, float]] = {}
        self.nominal: dict[str, float] = {}
        for ref, c in sorted(comps.items()):
            if ref.startswith("R"):
                a, b = self.pin_net[(ref, "1")], self.pin_net[(ref, "2")]
                self.resistor(ref, a, b, parse_value(c["value"]))

    def resistor(self, name: str, a: str, b: str, ohms: float) -> None:
        el = "R" + re.sub(r"[^A-Za-z0-9]", "_", name)
        self.res[name] = el
        self.nominal[name] = ohms
        self.lines.append(f"{el} {_node(a)} {_node(b)} {ohms!r}")

    def opamp(self, name: str, inp: str, inn: str, out: str, aol: float, cmrr_db: float) -> None:
        i = len(self.cmrr)
        k = aol / 10 ** (cmrr_db / 20)
        x, y = f"n_e{i}x", f"n_e{i}y"
        self.lines += [f"E{i}a {_node(out)} {x} {_node(inp)} {_node(inn)} {aol!r}",
                       f"E{i}b {x} {y} {_node(inp)} 0 {k / 2!r}",
                       f"E{i}c {y} 0 {_node(inn)} 0 {k / 2!r}"]
        self.cmrr[name] = (f"E{i}b", f"E{i}c", k)

    def package(self, ref: str, style: str, aol: float, cmrr_db: float) -> None:
        for unit, (p, n, o) in PINS[style].items():
            if (ref, o) in self.pin_net:
                self.opamp(ref + unit, self.pin_net[(ref, p)], self.pin_net[(ref, n)],
                           self.pin_net[(ref, o)], aol, cmrr_db)

    def gains(self, ngspice: str, out: str, corners: list[dict]) -> list[tuple[float, float]]:
        """(Ad, Acm) at ``out`` for each corner {'R': {name: ohms}, 'sign': {op-amp: +-1}}."""
        lines = self.lines + [".control", "set numdgt=15"]
        for c in corners:
            for name, ohms in c.get("R", {}).items():
                lines.append(f"alter {self.res[name]} = {ohms!r}")
            for name, s in c.get("sign", {}).items():
                eb, ec, k = self.cmrr[name]
                lines += [f"alter {eb} gain={s * k / 2!r}", f"alter {ec} gain={s * k / 2!r}"]
            for vcm, vd in ((0.0, 0.0), (1.0, 0.0), (0.0, 1.0)):
                lines += [f"alter VCM dc={vcm!r}", f"alter VDP dc={vd / 2!r}", f"alter VDN dc={vd / 2!r}",
                          "op", f"print v({_node(out)})", "destroy all"]
        lines += [".endc", ".end", ""]
        with tempfile.TemporaryDirectory() as d:
            f = Path(d) / "deck.cir"
            f.write_text("\n".join(lines))
            res = subprocess.run([ngspice, "-b", str(f)], capture_output=True, text=True, timeout=900)
        v = [float(m) for m in re.findall(r"^v\([^)]*\)\s*=\s*([-+0-9.eE]+)\s*$", res.stdout, re.M)]
        assert len(v) == 3 * len(corners), res.stdout[-2000:] + res.stderr[-2000:]
        return [(v[3 * i + 2] - v[3 * i], v[3 * i + 1] - v[3 * i]) for i in range(len(corners))]


def _corners(deck: Deck, tols: dict[str, float], signs: list[str]) -> list[dict]:
    out = []
    for xs in itertools.product((-1.0, 1.0), repeat=len(tols)):
        R = {n: deck.nominal[n] * (1 + x * t) for (n, t), x in zip(tols.items(), xs)}
        for ss in itertools.product((-1.0, 1.0), repeat=len(signs)):
            out.append({"R": R, "sign": dict(zip(signs, ss))})
    return out


def _ours(sample: str) -> dict:
    rep = run([str(REPO / "sample_projects" / sample)], RunOptions(samples=0, seed=1))
    p = rep.projects[0]
    return p.results[p.stages[0].id]


def test_ecg_centre_tap_load_in_the_worst_cmrr(kicad9, ngspice, tmp_path):
    sample = REPO / "sample_projects" / "ecg-frontend"
    comps, nets = _netlist(kicad9, sample / "ecg-frontend.kicad_sch", tmp_path / "ecg.net")
    rr = _class("opamp", "rail-to-rail-cmos")          # the Part Class of U1, U2, U3
    deck = Deck(comps, nets, {"+3V3": 3.3}, ("/INP", "/INN"))
    deck.package("U1", "dual", rr["aol"], rr["cmrr_db"])
    deck.package("U3", "dual", rr["aol"], rr["cmrr_db"])
    deck.package("U2", "single", rr["aol"], rr["cmrr_db"])
    res = _ours("ecg-frontend")
    # the stage's own parts, R13 and the feedback resistor R14 of U3B, which holds R13's far end
    assert set(res.varied) == {"R3", "R4", "R5", "R6", "R7", "R8", "R9", "R10", "R13", "R14"}
    tols = {n: float(comps[n]["fields"]["Tolerance"].rstrip("%")) / 100 for n in res.varied}
    corners = _corners(deck, tols, ["U1A", "U1B", "U2"])
    g = deck.gains(ngspice, "/OUT", corners)
    # frontcheck's CMRR divides by the nominal Ad of the circuit without the op-amps' own CMRR
    # terms (frontcheck.analysis.tolerance, 'nominal' convention): the same here.
    ad0 = deck.gains(ngspice, "/OUT", [{"sign": {"U1A": 0.0, "U1B": 0.0, "U2": 0.0}}])[0][0]
    worst = min(20 * math.log10(abs(ad0) / abs(acm)) for _, acm in g)
    assert res.cmrr.worst_db == pytest.approx(worst, abs=0.01)
    assert worst == pytest.approx(51.48, abs=0.01)        # measured when the load was first found
    # The worst gain over the same corners: the op-amps' CMRR terms move Ad too (each
    # first-stage op-amp's inputs follow its own input), by about 0.15 % here. Ten resistors
    # and three op-amps are past the joint enumeration, so frontcheck adds the CMRR terms in
    # worst-sign magnitude (first order): within 1e-5 of ngspice's joint enumeration.
    lo, hi = min(ad for ad, _ in g), max(ad for ad, _ in g)
    assert res.gain.worst_min == pytest.approx(lo, rel=1e-5)
    assert res.gain.worst_max == pytest.approx(hi, rel=1e-5)


def test_kiln_ref_divider_in_the_worst_gain(kicad9, ngspice, tmp_path):
    sample = REPO / "sample_projects" / "kiln-logger"
    comps, nets = _netlist(kicad9, sample / "kiln-logger.kicad_sch", tmp_path / "kiln.net")
    cls = _class("inamp", "generic-inamp")
    f = comps["U1"]["fields"]
    k, rs = parse_value(f["Gain K"]), parse_value(f["Stage2 R"])
    deck = Deck(comps, nets, {"+5V": 5.0, "-5V": -5.0}, ("/IN+", "/IN-"))
    net = {p: n for (r, p), n in deck.pin_net.items() if r == "U1"}
    # The class's structure (rg-pair): A1 +IN / RG1, A2 -IN / RG2, Rf1 = Rf2 = K/2, a unity
    # difference stage of Stage2 R on each side, REF-side resistor to REF.
    deck.resistor("U1.Rf1", "i_o1", net["1"], k / 2)
    deck.resistor("U1.Rf2", "i_o2", net["8"], k / 2)
    deck.resistor("U1.Ra", "i_o2", "i_n3", rs)
    deck.resistor("U1.Rb", "i_n3", net["6"], rs)
    deck.resistor("U1.Rc", "i_o1", "i_p3", rs)
    deck.resistor("U1.Rd", "i_p3", net["5"], rs)
    deck.opamp("U1.A1", net["3"], net["1"], "i_o1", cls["aol"], cls["cmrr_db"])
    deck.opamp("U1.A2", net["2"], net["8"], "i_o2", cls["aol"], cls["cmrr_db"])
    deck.opamp("U1.A3", "i_p3", "i_n3", net["6"], cls["aol"], cls["cmrr_db"])
    tols = {"R1": 0.001, "R2": 0.01, "R3": 0.01, "U1.Rf1": cls["k_tol"], "U1.Rf2": cls["k_tol"]}
    for n in ("R1", "R2", "R3"):        # the fields say so; the test reads them
        assert float(comps[n]["fields"]["Tolerance"].rstrip("%")) / 100 == tols[n]
    g = deck.gains(ngspice, net["6"], _corners(deck, tols, ["U1.A1", "U1.A2", "U1.A3"]))
    lo, hi = min(ad for ad, _ in g), max(ad for ad, _ in g)
    res = _ours("kiln-logger")
    assert {"R2", "R3"} <= set(res.varied)
    assert res.gain.worst_min == pytest.approx(lo, rel=1e-5)
    assert res.gain.worst_max == pytest.approx(hi, rel=1e-5)
    assert (round(lo, 3), round(hi, 3)) == (57.336, 58.179)    # measured when the divider was first found

"""Test helpers: hand-built stage sub-circuits and a small ngspice batch driver.

The builders describe the textbook topologies (docs/engineering.md sections 1, 3, 5) as SubCircuits,
the same data recognition hands to analysis. The driver writes the very same SubCircuit to a
SPICE deck (op-amp as a B-source, docs/engineering.md sec. 9), runs ``ngspice -b`` and reads the
printed node voltages, so the oracle tests compare like with like.
"""

from __future__ import annotations

import math
import re
import subprocess
import tempfile
from pathlib import Path

from frontcheck.circuit import OpAmp, OpAmpModel, Resistor, Capacitor, Sourced, SubCircuit


def model(aol=1e12, cmrr_db=math.inf, icm=(0.0, 0.0), swing=(0.0, 0.0), name="test-model"):
    return OpAmpModel(name=name, aol=Sourced(aol), cmrr_db=Sourced(cmrr_db),
                      icm_low=Sourced(icm[0]), icm_high=Sourced(icm[1]),
                      swing_low=Sourced(swing[0]), swing_high=Sourced(swing[1]))


def res(name, a, b, ohms, tol=0.01, group="", match_tol=None, src="field"):
    return Resistor(name, a, b, Sourced(ohms, src), Sourced(tol, src), match_group=group,
                    match_tol=None if match_tol is None else Sourced(match_tol))


def opamp(name, inp, inn, out, m=None, vpos="VP", vneg="VN"):
    return OpAmp(name, name[:-1] if name[-1].isalpha() else name, inp, inn, out, vpos, vneg,
                 m or model())


def rails(vp=15.0, vn=-15.0):
    return {"VP": Sourced(vp), "VN": Sourced(vn), "GND": Sourced(0.0)}


def diff_amp(r1, r2, r3, r4, tol=0.01, m=None, vp=15.0, vn=-15.0):
    """docs/engineering.md sec. 1 naming: in_n -R1- n -R2- out; in_p -R3- p -R4- ref."""
    return SubCircuit(
        resistors=[res("R1", "IN_N", "N", r1, tol), res("R2", "N", "OUT", r2, tol),
                   res("R3", "IN_P", "P", r3, tol), res("R4", "P", "REF", r4, tol)],
        opamps=[opamp("U1A", "P", "N", "OUT", m)],
        ports={"in_p": "IN_P", "in_n": "IN_N", "ref": "REF", "out": "OUT"},
        rails=rails(vp, vn))


def three_opamp(rf=25e3, rg=5e3, ra=10e3, rb=10e3, tol=0.01, m=None, vp=15.0, vn=-15.0,
                with_rg=True):
    """docs/engineering.md sec. 3 naming: A1 +in = IN+, Rf1 o1-m1; A2 +in = IN-, Rf2 o2-m2; RG
    m1-m2; stage 2: o2 -Ra- n3 -Rb- out, o1 -Rc- p3 -Rd- ref."""
    r = [res("RF1", "O1", "M1", rf, tol), res("RF2", "O2", "M2", rf, tol)]
    if with_rg:
        r.append(res("RG", "M1", "M2", rg, tol))
    r += [res("RA", "O2", "N3", ra, tol), res("RB", "N3", "OUT", rb, tol),
          res("RC", "O1", "P3", ra, tol), res("RD", "P3", "REF", rb, tol)]
    return SubCircuit(
        resistors=r,
        opamps=[opamp("U1A", "IN_P", "M1", "O1", m), opamp("U1B", "IN_N", "M2", "O2", m),
                opamp("U1C", "P3", "N3", "OUT", m)],
        ports={"in_p": "IN_P", "in_n": "IN_N", "ref": "REF", "out": "OUT"},
        rails=rails(vp, vn))


def two_opamp(r1=10e3, r2=40e3, tol=0.01, m=None, vp=15.0, vn=-15.0):
    """Two-op-amp in-amp: A1 +in = IN-, REF -R1- n1 -R2- o1; A2 +in = IN+, o1 -R3- n2 -R4- out,
    with R3 = R2 and R4 = R1 so that G = 1 + R4/R3 (Sedra & Smith 6th ed., Problem 2.74 form
    [memory])."""
    return SubCircuit(
        resistors=[res("R1", "REF", "N1", r1, tol), res("R2", "N1", "O1", r2, tol),
                   res("R3", "O1", "N2", r2, tol), res("R4", "N2", "OUT", r1, tol)],
        opamps=[opamp("U1A", "IN_N", "N1", "O1", m), opamp("U1B", "IN_P", "N2", "OUT", m)],
        ports={"in_p": "IN_P", "in_n": "IN_N", "ref": "REF", "out": "OUT"},
        rails=rails(vp, vn))


# --------------------------------------------------------------------------------------------
# ngspice batch driver

_GROUND = {"GND", "GNDA", "AGND", "0"}


def node(net: str) -> str:
    """SPICE node name of a net (ground nets are node 0)."""
    if net.rsplit("/", 1)[-1].upper() in _GROUND:
        return "0"
    return "n_" + re.sub(r"[^A-Za-z0-9]", "_", net).lower()


def _circuit(sub: SubCircuit, ref_rth=None, cmrr_sign=1.0, ac=None, split=False):
    """Element lines of ``sub`` and the SPICE name of each resistor and capacitor.
    ``ac``: None (DC only), 'cm' (Vcm source AC 1) or 'dm' (Vd = AC 1)."""
    cm_ac = " AC 1" if ac == "cm" else ""
    dm_ac = " AC 0.5" if ac == "dm" else ""
    lines = ["* frontcheck oracle deck"]
    p, n = node(sub.ports["in_p"]), node(sub.ports["in_n"])
    lines += [f"VCM n_cm 0 DC 0{cm_ac}", f"VDP {p} n_cm DC 0{dm_ac}", f"VDN n_cm {n} DC 0{dm_ac}"]
    if "ref" in sub.ports:
        r = node(sub.ports["ref"])
        if ref_rth:
            lines += ["VREF n_refsrc 0 DC 0", f"RREFTH n_refsrc {r} {ref_rth!r}"]
        else:
            lines.append(f"VREF {r} 0 DC 0")
    driven = {sub.ports[k] for k in ("in_p", "in_n", "ref") if k in sub.ports}
    for net, v in sub.rails.items():
        if node(net) != "0" and net not in driven:
            lines.append(f"VRAIL_{node(net)} {node(net)} 0 DC {v.value!r}")
    names = {}
    for i, res_ in enumerate(sub.resistors):
        names[res_.name] = f"R{i}_{re.sub(r'[^A-Za-z0-9]', '_', res_.name)}".lower()
        lines.append(f"{names[res_.name]} {node(res_.a)} {node(res_.b)} {res_.ohms.value!r}")
    for i, c in enumerate(sub.capacitors):
        names[c.name] = f"c{i}"
        lines.append(f"c{i} {node(c.a)} {node(c.b)} {c.farads.value!r}")
    for i, o in enumerate(sub.opamps):
        a = o.model.aol.value
        expr = f"{a!r}*(v({node(o.inp)})-v({node(o.inn)}))"
        if math.isfinite(o.model.cmrr_db.value):
            k = cmrr_sign * a / 10 ** (o.model.cmrr_db.value / 20)
            expr += f" + ({k!r})*0.5*(v({node(o.inp)})+v({node(o.inn)}))"
        if split:
            # The same equation as three controlled sources in series, so that a batch deck
            # can `alter` the CMRR term per case: E_a = A (v+ - v-), E_b = k/2 v+, E_c = k/2 v-.
            k = a / 10 ** (o.model.cmrr_db.value / 20) if math.isfinite(o.model.cmrr_db.value) else 0.0
            x, y = f"n_e{i}x", f"n_e{i}y"
            lines += [f"E{i}a {node(o.out)} {x} {node(o.inp)} {node(o.inn)} {a!r}",
                      f"E{i}b {x} {y} {node(o.inp)} 0 {cmrr_sign * k / 2!r}",
                      f"E{i}c {y} 0 {node(o.inn)} 0 {cmrr_sign * k / 2!r}"]
            names[o.name] = (f"E{i}b", f"E{i}c", a)
        else:
            lines.append(f"B{i} {node(o.out)} 0 V = {expr}")
    return lines, names


def write_deck(sub: SubCircuit, cases, probes, ref_rth: float | None = None,
               cmrr_sign: float = 1.0, split: bool = False) -> str:
    """A SPICE deck of ``sub``: ports driven by Vcm +- Vd/2 and Vref, rails as DC sources,
    each op-amp as the B-source of docs/engineering.md sec. 9,
    ``V = A*(v(inp)-v(inm)) + (A/CMRR)*0.5*(v(inp)+v(inm))`` (CMRR term omitted when infinite).

    ``cases``: list of dicts with 'vcm', 'vd', 'vref' and optionally 'R' {name: ohms}; each is
    one operating point printing v(probe) for every probe net. With ``split`` the op-amps are
    written as three series E-sources (the same equation) and a case may carry 'c'
    {op-amp name: signed 1/CMRR} to set each op-amp's CMRR term.
    """
    lines, names = _circuit(sub, ref_rth, cmrr_sign, split=split)
    lines += [".control", "set numdgt=15"]
    pr = " ".join(f"v({node(x)})" for x in probes)
    for c in cases:
        lines += [f"alter VCM dc={c.get('vcm', 0.0)!r}", f"alter VDP dc={0.5 * c.get('vd', 0.0)!r}",
                  f"alter VDN dc={0.5 * c.get('vd', 0.0)!r}"]
        if "ref" in sub.ports:
            lines.append(f"alter VREF dc={c.get('vref', 0.0)!r}")
        for name, v in c.get("R", {}).items():
            lines.append(f"alter {names[name]} = {v!r}")
        for name, cinv in c.get("c", {}).items():
            eb, ec, a = names[name]
            lines += [f"alter {eb} gain={a * cinv / 2!r}", f"alter {ec} gain={a * cinv / 2!r}"]
        lines += ["op", f"print {pr}", "destroy all"]   # free each plot: keeps a long batch linear
    lines += [".endc", ".end", ""]
    return "\n".join(lines)


_LINE = re.compile(r"^v\((?P<n>[^)]+)\)\s*=\s*(?P<v>[-+0-9.eE]+)\s*$")


def run(exe: str, deck: str, probes, timeout: float = 120.0) -> list[dict[str, float]]:
    """Run ``deck`` with ``ngspice -b`` and return, per case, {net: volts} for ``probes``."""
    with tempfile.TemporaryDirectory() as d:
        f = Path(d) / "deck.cir"
        f.write_text(deck)
        out = subprocess.run([exe, "-b", str(f)], capture_output=True, text=True, timeout=timeout)
    want = [node(p) for p in probes]
    values = []
    for line in out.stdout.splitlines():
        m = _LINE.match(line.strip())
        if m:
            values.append((m["n"], float(m["v"])))
    if not values or len(values) % len(probes):
        raise RuntimeError(f"ngspice output not understood:\n{out.stdout[-2000:]}\n{out.stderr[-2000:]}")
    rows = []
    for i in range(0, len(values), len(probes)):
        chunk = values[i:i + len(probes)]
        row = {}
        for p, w, (nm, v) in zip(probes, want, chunk):
            if nm != w and not (w == "0"):
                raise RuntimeError(f"ngspice printed {nm}, expected {w}")
            row[p] = v
        rows.append(row)
    return rows


def run_ac(exe: str, sub: SubCircuit, freq: float, drive: str, pairs, values=None) -> list[float]:
    """|v(a) - v(b)| for each (a, b) in ``pairs`` at ``freq`` hertz with a unit common-mode
    (``drive='cm'``) or differential (``'dm'``) AC input; ``values`` {element name: value}
    alters resistors and capacitors first."""
    lines, names = _circuit(sub, ac=drive)
    lines += [".control", "set numdgt=15"]
    for name, v in (values or {}).items():
        lines.append(f"alter {names[name]} = {v!r}")
    lines.append(f"ac lin 1 {freq!r} {freq!r}")
    for i, (a, b) in enumerate(pairs):
        lines.append(f"let d{i} = v({node(a)}) - v({node(b)})" if node(b) != "0" else f"let d{i} = v({node(a)})")
    lines += ["print " + " ".join(f"mag(d{i})" for i in range(len(pairs))), ".endc", ".end", ""]
    with tempfile.TemporaryDirectory() as d:
        f = Path(d) / "deck.cir"
        f.write_text("\n".join(lines))
        out = subprocess.run([exe, "-b", str(f)], capture_output=True, text=True, timeout=60)
    got = {}
    for line in out.stdout.splitlines():
        m = re.match(r"^mag\(d(\d+)\)\s*=\s*([-+0-9.eE]+)", line.strip())
        if m:
            got[int(m.group(1))] = float(m.group(2))
    if len(got) != len(pairs):
        raise RuntimeError(f"ngspice output not understood:\n{out.stdout[-2000:]}\n{out.stderr[-2000:]}")
    return [got[i] for i in range(len(pairs))]

"""ngspice decks for the small-signal oracle tests: `.noise` and `.ac` of a SubCircuit.

Op-amp k: ``B`` source ``A0*((v+' - v-) + c*(v+' + v-)/2)`` into node xk, then a single pole
(1 ohm, C = A0 / (2 pi GBW)) and a unity buffer to the output: Vout = A(s) [(v+ - v-) +
c (v+ + v-)/2] with A(s) = A0 / (1 + s A0 / (2 pi GBW)), the model of
frontcheck.analysis.small_signal.

Noise generators (ngspice has no independent noise source): a resistor Rn = 1 kohm carrying
1 mA DC from a 1 V source into a 0 V source Vx. Its noise current, 4kT/Rn white plus the
resistor flicker noise KF I^2 / f with KF = fc 4kT Rn (so the corner is fc), flows through Vx;
an H source (``Rt`` ohms) turns it into an op-amp's en in series with its non-inverting input,
an F source (gain ``Ai``) into its in. Every other helper resistor is noiseless (noisy=0).
"""

from __future__ import annotations

import math
import re
import subprocess
import tempfile
from pathlib import Path

from spice import node

K_NGSPICE = 1.38064852e-23   # Boltzmann constant compiled into ngspice 39 (CODATA 2014)
R_GEN = 1000.0


def _gen(tag: str, density: float, corner: float, kelvin: float, kind: str, nodes) -> list[str]:
    i_white = math.sqrt(4 * K_NGSPICE * kelvin / R_GEN)
    kf = corner * 4 * K_NGSPICE * kelvin * R_GEN
    lines = [f"VB{tag} nb{tag} 0 DC 1", f"RN{tag} nb{tag} nx{tag} rn{tag} {R_GEN!r}",
             f"VX{tag} nx{tag} 0 DC 0", f".model rn{tag} r(kf={kf!r} af=2)"]
    scale = density / i_white
    if kind == "en":
        lines.append(f"H{tag} {nodes[1]} {nodes[0]} VX{tag} {scale!r}")
    else:
        lines.append(f"F{tag} 0 {nodes[0]} VX{tag} {scale!r}")
    return lines


def deck(sub, dynamics=None, noise=None, kelvin=300.15, drive="dm", values=None, cmrr_sign=1.0):
    """Element lines of ``sub`` for `.noise`/`.ac`: ports driven by VCM (+- VD/2 as VDP/VDN),
    REF by VREF; ``drive`` 'dm' puts AC 1 on VDP (so the output is Ad + Acm/2), 'cm' on VCM. ``dynamics`` and ``noise`` are
    per-op-amp OpAmpDynamics / OpAmpNoise (or None); ``cmrr_sign`` sets the sign of every
    op-amp's CMRR term."""
    p, n = node(sub.ports["in_p"]), node(sub.ports["in_n"])
    lines = ["* frontcheck small-signal oracle deck", f".temp {kelvin - 273.15!r}",
             f"VCM n_cm 0 DC 0{' AC 1' if drive == 'cm' else ''}",
             f"VDP {p} n_cm DC 0{' AC 1' if drive == 'dm' else ''}", f"VDN n_cm {n} DC 0"]
    if "ref" in sub.ports:
        lines.append(f"VREF {node(sub.ports['ref'])} 0 DC 0")
    driven = {sub.ports[k] for k in ("in_p", "in_n", "ref") if k in sub.ports}
    for net, v in sub.rails.items():
        if node(net) != "0" and net not in driven:
            lines.append(f"VRAIL_{node(net)} {node(net)} 0 DC {v.value!r}")
    values = values or {}
    for i, r in enumerate(sub.resistors):
        lines.append(f"R{i} {node(r.a)} {node(r.b)} {values.get(r.name, r.ohms.value)!r}")
    for i, c in enumerate(sub.capacitors):
        lines.append(f"C{i} {node(c.a)} {node(c.b)} {values.get(c.name, c.farads.value)!r}")
    for k, o in enumerate(sub.opamps):
        d = dynamics[k] if dynamics else None
        nz = noise[k] if noise else None
        sense_p = node(o.inp)
        if nz is not None and nz.en > 0:
            sense_p = f"n_sp{k}"
            lines += _gen(f"e{k}", nz.en, nz.en_corner_hz, kelvin, "en", (node(o.inp), sense_p))
        if nz is not None and nz.in_ > 0:
            for s, net in (("p", o.inp), ("n", o.inn)):
                if node(net) != "0" and net not in driven and net not in sub.rails:
                    lines += _gen(f"i{s}{k}", nz.in_, nz.in_corner_hz, kelvin, "in", (node(net),))
        a0 = d.aol if d is not None and d.aol else 1e9
        c = cmrr_sign * 10 ** (-d.cmrr_db / 20) if d is not None and d.cmrr_db is not None else 0.0
        vp, vm = f"v({sense_p})", f"v({node(o.inn)})"
        expr = f"{a0!r}*(({vp}-{vm}) + {c!r}*0.5*({vp}+{vm})"
        if d is not None and d.cmrr_corner_hz and c:
            # c (1 + s/wc) vcm: the s term is the current of a 1 F capacitor driven by vcm
            lines += [f"BW{k} n_w{k} 0 V = 0.5*({vp}+{vm})", f"CW{k} n_w{k} n_z{k} 1",
                      f"VZ{k} n_z{k} 0 DC 0"]
            expr += f" + {c / (2 * math.pi * d.cmrr_corner_hz)!r}*i(VZ{k})"
        expr += ")"
        if d is not None and d.gbw_hz:
            cp = a0 / (2 * math.pi * d.gbw_hz)
            lines += [f"B{k} n_x{k} 0 V = {expr}", f"RP{k} n_x{k} n_y{k} 1 noisy=0",
                      f"CP{k} n_y{k} 0 {cp!r}", f"EO{k} {node(o.out)} 0 n_y{k} 0 1"]
        else:
            lines.append(f"B{k} {node(o.out)} 0 V = {expr}")
    return lines


def _run(lines: list[str]) -> str:
    with tempfile.TemporaryDirectory() as d:
        f = Path(d) / "deck.cir"
        f.write_text("\n".join(lines) + "\n")
        out = subprocess.run(["ngspice", "-b", str(f)], capture_output=True, text=True, timeout=120)
    return out.stdout + out.stderr


def noise_totals(sub, band, per_decade=50, **kw) -> tuple[float, float]:
    """(output, input-referred) integrated RMS noise over ``band`` from ngspice `.noise`, with
    the differential source VDP as the input."""
    lines = deck(sub, drive="dm", **kw)
    n = max(2, int(per_decade))
    lines += [".control", f"noise v({node(sub.ports['out'])}) VDP dec {n} {band[0]!r} {band[1]!r}",
              "setplot noise2", "print onoise_total inoise_total", ".endc", ".end"]
    text = _run(lines)
    got = {m[1]: float(m[2]) for m in re.finditer(r"^(onoise_total|inoise_total)\s*=\s*([-+0-9.eE]+)",
                                                  text, re.MULTILINE)}
    if len(got) != 2:
        raise RuntimeError("ngspice noise output not understood:\n" + text[-2000:])
    return got["onoise_total"], got["inoise_total"]


def ac_gain(sub, freqs, drive, cases=None, **kw) -> list[complex]:
    """Complex v(out) at each frequency with a unit AC common-mode or differential input; with
    ``cases`` (a list of {element name: value}) the sweep is repeated for each, values altered
    first, and the results follow case by case."""
    lines = deck(sub, drive=drive, **kw)
    lines += [".control", "set numdgt=15"]
    out = node(sub.ports["out"])
    names = {r.name: f"R{i}" for i, r in enumerate(sub.resistors)}
    names.update({c.name: f"C{i}" for i, c in enumerate(sub.capacitors)})
    for case in cases or [{}]:
        lines += [f"alter {names[n]} = {v!r}" for n, v in case.items()]
        for f in map(float, freqs):
            lines += [f"ac lin 1 {f!r} {f!r}", f"print real(v({out})) imag(v({out}))", "destroy all"]
    lines += [".endc", ".end"]
    text = _run(lines)
    re_ = [float(m[1]) for m in re.finditer(r"^real\(v\([^)]*\)\)\s*=\s*([-+0-9.eE]+)", text, re.MULTILINE)]
    im_ = [float(m[1]) for m in re.finditer(r"^imag\(v\([^)]*\)\)\s*=\s*([-+0-9.eE]+)", text, re.MULTILINE)]
    want = len(freqs) * len(cases or [{}])
    if len(re_) != want or len(im_) != want:
        raise RuntimeError("ngspice ac output not understood:\n" + text[-2000:])
    return [complex(a, b) for a, b in zip(re_, im_)]

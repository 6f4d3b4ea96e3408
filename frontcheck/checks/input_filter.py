"""input-filter: an RC filter at a stage's inputs whose legs mismatch or whose Cd is small.

What it checks
    A differential RFI filter ahead of a stage: a series resistor R in each leg, a capacitor Cc
    from each leg to ground, and a capacitor Cd across the two legs at the stage's input nets.
    The rule reports the differential and common-mode corner frequencies, f_DM = 1/(2 pi R
    (2 Cd + Cc)) and f_CM = 1/(2 pi R Cc), and the worst-case conversion of common-mode voltage
    into a differential one at the stated frequency (the stage's ``CMRR At`` when declared,
    else ``at_hz``) with the parts' tolerances.
    It flags legs whose R or Cc differ, a missing Cd, and Cd smaller than ``min_cd_ratio`` x Cc.
    The numbers are those of the filter alone, or, when recognition placed the filter inside
    the stage, the analysis's numbers with the amplifier's input resistance loading it.

Why it matters
    Each leg is a low-pass R Cc. When the two time constants differ, a common-mode signal
    reaches the two inputs with different amplitude and phase: Vd/Vcm = 1/(1 + jw Ra Ca) -
    1/(1 + jw Rb Cb). The filter then converts common mode (mains, RF) into a differential
    signal the amplifier cannot reject, at frequencies where the stage's CMRR is still high.
    A Cd much larger than Cc ties the two legs together and makes the mismatch matter less.

What good looks like
    Identical legs (same R, same Cc), Cd >= 10 Cc, f_DM below the signal band's upper
    neighbour and f_CM well above it.

How to fix
    Use the same R and Cc on both legs (tight-tolerance Cc helps), and make Cd at least ten
    times Cc.

Severity
    ``severity`` for mismatched legs, a missing Cd, or a small Cd; ``numbers_severity`` for the
    numbers of a filter that passes.

Example
    Fails: the two legs of a three-op-amp in-amp's RFI filter have 1 nF and 4.7 nF to ground
    and no capacitor across.
        U1 opamp IN_P O1 O1 +5V -5V
        U2 opamp IN_N O2 O2 +5V -5V
        R1 O2 N 10k 0.1%
        R2 N OUT 10k 0.1%
        R3 O1 P 10k 0.1%
        R4 P GND 10k 0.1%
        U3 opamp P N OUT +5V -5V
        R5 SRC_P IN_P 4.02k 1%
        R6 SRC_N IN_N 4.02k 1%
        C1 IN_P GND 1n 5%
        C2 IN_N GND 4.7n 5%
        R7 SRC_P GND 1M 1%
        R8 SRC_N GND 1M 1%
        J1 connector SRC_P SRC_N GND
    Passes with:
        C2 IN_N GND 1n 5%
        C3 IN_P IN_N 10n 5%

Source
    Corner frequencies and the common-mode to differential conversion of the series-R, Cc, Cd
    filter: derived by frontcheck and checked against ngspice AC analysis; the same filter is
    discussed in C. Kitchin, L. Counts, A Designer's Guide to Instrumentation Amplifiers, 3rd
    ed., the chapter on RFI. Cd >= 10 Cc is a rule of thumb (common practice).
"""

from __future__ import annotations

import itertools
import math
import re

from .. import formatting as fmt
from ._common import eng, finding, ohms
from .params import number, severity

RULE_ID = "input-filter"
SUMMARY = "Input RC filter: mismatched legs or Cd small against Cc"
PARAMETERS = {
    "severity": severity("severity of mismatched legs, a missing Cd or Cd < min_cd_ratio x Cc"),
    "min_cd_ratio": number(10.0, "Cd must be at least this many times Cc", "times"),
    "max_leg_mismatch": number(1e-6, "relative difference of R or Cc between the legs counted as a "
                               "mismatch", "fraction"),
    "at_hz": number(1000.0, "frequency at which the CM-to-differential conversion is stated", "Hz",
                    minimum=0.001),
    "assumed_r_tol": number(0.01, "tolerance of a filter resistor whose part gives none",
                            "fraction", maximum=1.0),
    "assumed_c_tol": number(0.05, "tolerance of a filter capacitor whose part gives none",
                            "fraction", maximum=1.0),
    "numbers_severity": severity("severity of the numbers of a filter that passes ('off' to hide)",
                                 "info"),
}


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
    import numpy as np  # here, not at the top: `rules` and `explain` load this module
    from ..analysis import mna
    from ..circuit import Capacitor, Resistor, Sourced, SubCircuit

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


def _index(netlist) -> dict[str, list[str]]:
    """ref -> nets of its pins (two-pin parts only are of interest)."""
    out: dict[str, list[str]] = {}
    for net in netlist.nets:
        for n in net.nodes:
            out.setdefault(n.ref, []).append(net.name)
    return out


def _by_net(pins: dict[str, list[str]]) -> tuple[dict[str, list[str]], dict[str, int]]:
    """net -> references with a pin on it, and each reference's place in ``pins``."""
    out: dict[str, list[str]] = {}
    for ref, nets in pins.items():
        for net in nets:
            out.setdefault(net, []).append(ref)
    return out, {ref: i for i, ref in enumerate(pins)}


def filter_in_stage(stage) -> dict | None:
    """Filter parts recognition placed inside the stage (ports on the source side of the
    series resistors), or None."""
    from ..analysis.mna import is_ground
    from ..analysis.tolerance import filter_nets

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
    out = {}
    for key, elems in vals.items():
        total = sum(float(e.ohms.value if key.startswith("R") else e.farads.value) for e in elems)
        tol = max((float(e.tol.value) for e in elems), default=0.0)
        assumed = any(e.tol.source in ("default", "class") for e in elems)
        out[key] = (total, tol, [e.name.split(".")[0] for e in elems], assumed)
    out["inside"] = True
    return out


def find_filter(ctx, stage, pins: dict[str, list[str]], pol, by_net=None) -> dict | None:
    """The filter parts at a stage's input nets, or None when there is no RC filter there.

    Parts inside the stage (when recognition included the filter) come first; otherwise the
    netlist around the stage's input ports is searched."""
    inner = filter_in_stage(stage)
    if inner is not None:
        return inner
    if ctx.netlist is None:
        return None
    from .. import values
    from ..analysis.mna import is_ground

    p, n = stage.circuit.ports.get("in_p"), stage.circuit.ports.get("in_n")
    if not p or not n or p == n:
        return None
    own = set(stage.references)
    rails = set(stage.circuit.rails)
    # The analysis found the filter ahead of the ports (it tells series legs from bias
    # returns to a buffered reference): take exactly its parts.
    res = ctx.result(stage.id)
    fa = getattr(res, "input_filter", None) if res is not None else None
    known = set(fa.parts) if fa is not None and fa.parts else None

    def grounded(net: str) -> bool:
        return is_ground(net) or net in rails

    parts = {"Rp": [], "Rn": [], "Ccp": [], "Ccn": [], "Cd": []}
    # Only parts on the two port nets can belong to the filter; taken in the index's order,
    # through a net -> parts map rather than a scan of the whole design for every stage.
    at, order = by_net if by_net is not None else _by_net(pins)
    near = sorted({ref for net in (p, n) for ref in at.get(net, ())}, key=order.__getitem__)
    for ref in near:
        nets = pins[ref]
        if ref in own or len(nets) != 2 or (known is not None and ref not in known):
            continue
        comp = ctx.netlist.components.get(ref)
        if comp is None or comp.dnp:
            continue
        a, b = nets
        kind = _prefix(ref)
        if kind == "C":
            if {a, b} == {p, n}:
                parts["Cd"].append(comp)
            elif p in (a, b) and (known is not None or grounded(b if a == p else a)):
                parts["Ccp"].append(comp)
            elif n in (a, b) and (known is not None or grounded(b if a == n else a)):
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
    vals: dict[str, tuple[float, float, list[str], bool]] = {}
    try:
        for key, comps in parts.items():
            total, tol, assumed = 0.0, 0.0, False
            for c in comps:
                if key.startswith("R"):
                    v, t = values.resistance_of(c, pol["assumed_r_tol"], "input-filter rule")
                else:
                    v, t = values.capacitance_of(c, pol["assumed_c_tol"], "input-filter rule")
                total += v.value      # parallel capacitors add; a leg has one resistor
                tol = max(tol, t.value)
                assumed = assumed or t.source == "default"
            vals[key] = (total, tol, [c.ref for c in comps], assumed)
    except Exception:
        return None      # an unreadable value: the netlist readers report it
    if any(not math.isfinite(v[0]) for v in vals.values()):
        return None
    return vals


def check(ctx) -> list:
    pol = ctx.policy(RULE_ID)
    pins = _index(ctx.netlist) if ctx.netlist is not None else {}
    by_net = _by_net(pins)
    found = []
    for stage in ctx.stages:
        f = find_filter(ctx, stage, pins, pol, by_net)
        if f is None:
            continue
        inside = bool(f.pop("inside", False))
        rp, rn = f["Rp"][0], f["Rn"][0]
        cp, cn, cd = f["Ccp"][0], f["Ccn"][0], f["Cd"][0]
        refs = sorted(r for v in f.values() for r in v[2])
        issues, fixes = [], []
        mm = pol["max_leg_mismatch"]

        def differ(a: float, b: float) -> bool:
            return (a == 0) != (b == 0) or (a > 0 and abs(a / b - 1.0) > mm)

        if differ(rp, rn):
            issues.append(f"series resistors differ ({ohms(rp) if rp else 'none'} on +, "
                          f"{ohms(rn) if rn else 'none'} on -)")
            fixes.append("use the same series resistor in both legs")
        if differ(cp, cn):
            issues.append(f"leg capacitors Cc differ ({eng(cp, 'F') if cp else 'none'} on +, "
                          f"{eng(cn, 'F') if cn else 'none'} on -)")
            fixes.append("use the same Cc in both legs")
        cc = max(cp, cn)
        if cc > 0 and cd == 0:
            issues.append("no Cd across the legs")
        elif cc > 0 and cd < pol["min_cd_ratio"] * cc:
            issues.append(f"Cd = {eng(cd, 'F')} is only {fmt.number(cd / cc, 2)} x Cc "
                          f"(rule of thumb at least {fmt.number(pol['min_cd_ratio'])} x)")
        if cc > 0 and cd < pol["min_cd_ratio"] * cc:
            from .. import preferred_values
            want = preferred_values.neighbours(pol["min_cd_ratio"] * cc, "E6")[1]
            fixes.append(f"make Cd at least {eng(want, 'F')} (at least {fmt.number(pol['min_cd_ratio'])} x Cc)")
        r_avg = (rp + rn) / 2 if rp and rn else max(rp, rn)
        c_avg = (cp + cn) / 2 if cp and cn else max(cp, cn)
        f_dm, f_cm = corner_frequencies(r_avg, c_avg, cd)
        at = float(stage.intent.cmrr_at_hz or pol["at_hz"])   # where the stage's CMRR is judged
        conv = conversion(at, rp or 1e-3, rn or 1e-3, cp, cn, cd,
                          (f["Rp"][1], f["Rn"][1]), (f["Ccp"][1], f["Ccn"][1], f["Cd"][1]))
        basis = "filter alone"
        res = ctx.result(stage.id)
        fa = getattr(res, "input_filter", None) if res is not None else None
        if fa is not None and inside:
            # the analysis solved the same filter with the amplifier's input loading: use its
            # corners (and its conversion where it has the frequency) so reports agree
            f_dm, f_cm, basis = fa.f_dm_hz, fa.f_cm_hz, "with the stage's input loading"
            conv = fa.cm_to_dm.get(at, conv)
        conv_db = -20 * math.log10(conv) if conv > 0 else math.inf
        numbers = (f"f_DM = {eng(f_dm, 'Hz')}" + (f", f_CM = {eng(f_cm, 'Hz')}" if f_cm else "")
                   + f" ({basis})"
                   + f"; worst-case CM-to-differential conversion {fmt.number(conv, 3)} ({fmt.db(conv_db)}) "
                   f"at {eng(at, 'Hz')} with the parts' tolerances")
        assumed = [k for k, v in f.items() if v[3] and v[2]]
        if assumed:
            numbers += (f" (tolerance assumed for {', '.join(r for k in assumed for r in f[k][2])}: "
                        f"R {fmt.percent(pol['assumed_r_tol'])}, C {fmt.percent(pol['assumed_c_tol'])})")
        if issues:
            sev = pol["severity"]
            msg = f"input filter of {stage.kind} stage {stage.id}: " + "; ".join(issues) + "; " + numbers
        else:
            sev = pol["numbers_severity"]
            msg = f"input filter of {stage.kind} stage {stage.id}: " + numbers
        at_ref = (f["Cd"][2] or f["Ccp"][2] or f["Rp"][2] or refs)[0]
        found.append(finding(
            ctx, RULE_ID, sev, msg, stage=stage, at=at_ref, references=refs,
            fix="; ".join(fixes),
            data={"r_p": rp, "r_n": rn, "cc_p": cp, "cc_n": cn, "cd": cd, "f_dm_hz": f_dm,
                  "f_cm_hz": f_cm, "at_hz": at, "cm_to_dm": conv, "issues": issues,
                  "basis": basis}))
    return found

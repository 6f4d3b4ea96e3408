"""DC offset of one stage: op-amp offset voltages and input bias currents, at the output and
referred to the input.

Each op-amp's Vos is a voltage in series with its non-inverting input; it reaches the output
through the stage's transfer from that point (for a single op-amp, its noise gain). Its bias
currents flow into its two inputs; each reaches the output through the transimpedance from
that input node, which is the resistance the input sees (its Thevenin resistance, from the
netlist) times the noise gain. Inputs on a port driven by an ideal source see no resistance:
a source resistance drawn in the design or declared belongs in the SubCircuit or ``rs``.

Worst case per op-amp. With the bias current Ib of unknown polarity common to both inputs and
the offset current Ios splitting it (Ib+ = Ib + Ios/2, Ib- = Ib - Ios/2, either sign), the
output error is at most Ib |Z+ + Z-| + (Ios/2) |Z+ - Z-|; without Ios each input is bounded
by Ib alone: Ib (|Z+| + |Z-|). Over the op-amps of a stage the worst case adds the
magnitudes and the statistical figure takes the root-sum-square (independent parts).

Formulas, sources and check values: docs/engineering.md sec. 11.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from frontcheck.analysis import mna, small_signal
from frontcheck.analysis.family import signature
from frontcheck.circuit import SubCircuit
from frontcheck.errors import InputError


@dataclass
class Transfers:
    """DC transfers of one op-amp's error sources to the stage output.

    vos : output volts per volt of offset at the non-inverting input.
    z_p, z_n : output volts per ampere into the non-inverting / inverting input.
    r_p, r_n : resistance each input sees, |z / vos| (ohms); 0 on a driven port.
    """

    name: str
    vos: float
    z_p: float
    z_n: float

    @property
    def r_p(self) -> float:
        return abs(self.z_p / self.vos) if self.vos else math.inf

    @property
    def r_n(self) -> float:
        return abs(self.z_n / self.vos) if self.vos else math.inf


@dataclass
class OffsetTerm:
    """One error term at the output (volts) and referred to the input (volts)."""

    worst_out_v: float
    rss_out_v: float
    worst_rti_v: float
    rss_rti_v: float
    parts: dict[str, float] = field(default_factory=dict)   # op-amp -> its worst output volts


def dc_transfers(sub: SubCircuit, rs: Sequence[float] | None = None, series: tuple[str, ...] = ()):
    """Differential gain and each op-amp's Vos and bias-current transfers at DC.

    Parameters
    ----------
    sub : SubCircuit
    rs, series : optional
        Source resistances behind the ports named in ``series`` ('in_p', 'in_n', 'ref').

    Returns
    -------
    (float, list of Transfers)
        Nominal differential gain Ad and one Transfers per op-amp, in ``sub.opamps`` order.

    References
    ----------
    S. Franco, *Design with Operational Amplifiers and Analog Integrated Circuits*, 4th ed.,
    McGraw-Hill 2015, chapter on static op-amp limitations (offset through the noise gain,
    bias currents through the resistances the inputs see; chapter from memory).
    """
    topo = mna.compile_circuit(sub, series)
    f, R, C, ainv, rs2 = _dc_inputs(sub, topo, rs, series)
    M, B = small_signal.assemble(topo, f, R, C, ainv, None, rs2)
    ad = small_signal.port_gains(topo, M, B)[0, mna.VD].real
    return _transfers_of(sub, topo, ad, small_signal.adjoint(topo, M)[0].real)


def _dc_inputs(sub: SubCircuit, topo: mna.Topology, rs, series):
    """The one-row inputs of ``small_signal.assemble`` at DC: (f, R, C, ainv, rs)."""
    dyn = small_signal.dynamics_from_models(sub)
    f = np.zeros(1)
    ainv = np.stack([d.ainv(f) for d in dyn], axis=1) if dyn else None
    return (f, mna.nominal_values(sub), np.zeros((1, len(sub.capacitors))), ainv,
            None if not series else np.atleast_2d(rs))


def _transfers_of(sub: SubCircuit, topo: mna.Topology, ad, y) -> tuple[float, list]:
    """(Ad, [Transfers]) from the forward gain ``ad`` and the adjoint solution ``y`` (size,)."""
    nn = len(topo.free)
    out = []
    for k, (o, (_, p, m, _o)) in enumerate(zip(sub.opamps, topo.opamps)):
        out.append(Transfers(o.name, float(y[nn + k]),
                             float(y[p]) if isinstance(p, int) else 0.0,
                             float(y[m]) if isinstance(m, int) else 0.0))
    return float(ad), out


def _caps(topo: mna.Topology) -> tuple:
    def term(t):
        return t if isinstance(t, int) else tuple(float(v) for v in t[1])

    return tuple((term(a), term(b)) for _, a, b in topo.capacitors)


def _compiled(sub: SubCircuit, series: tuple, contexts) -> tuple:
    """(topology of ``sub`` compiled with ``series``, its structure key): the topology of a
    tolerance context (frontcheck.analysis.tolerance.Context) of the same circuit with the
    same series ports when there is one (compiled alike, the same), keyed by its family."""
    for c in contexts:
        if c.sub is sub and [role for role, _, _ in c.topo.series] == list(series):
            if getattr(c, "family", None) is not None:
                return c.topo, ("family", id(c.family), _caps(c.topo))
            return c.topo, ("structure", signature(c.topo), _caps(c.topo))
    topo = mna.compile_circuit(sub, series)
    return topo, ("structure", signature(topo), _caps(topo))


def dc_transfers_many(items: Sequence[tuple]) -> list:
    """:func:`dc_transfers` of many circuits, ``items`` = [(sub, rs, series[, contexts])]:
    the circuits of one structure (frontcheck.analysis.family.signature, with the capacitors)
    are stacked along the batch axis of one assembly and one forward and one adjoint solve,
    each matrix built from its own values in the same order of operations and factored on
    its own, so each result is the number :func:`dc_transfers` gives. ``contexts``: tolerance
    contexts of the same stage whose compiled circuit is reused when it is this one. None
    for a circuit that is the only one of its structure, has no op-amp, or shares a stack
    with a singular one: the caller solves it alone."""
    out: list = [None] * len(items)
    groups: dict[tuple, list] = {}
    for i, (sub, rs, series, *contexts) in enumerate(items):
        if not sub.opamps:
            continue
        try:
            topo, key = _compiled(sub, series, contexts[0] if contexts else ())
        except InputError:
            continue
        groups.setdefault((key, len(series)), []).append((i, topo, _dc_inputs(sub, topo, rs, series)))
    for members in groups.values():
        if len(members) < 2:
            continue
        topo = members[0][1]
        cols = [np.concatenate([m[2][j] for m in members]) if members[0][2][j] is not None
                else None for j in range(5)]
        try:
            M, B = small_signal.assemble(topo, cols[0], cols[1], cols[2], cols[3], None, cols[4])
            ad = small_signal.port_gains(topo, M, B)[:, mna.VD].real
            y = small_signal.adjoint(topo, M).real
        except InputError:
            continue
        for r, (i, t, _) in enumerate(members):
            out[i] = _transfers_of(items[i][0], t, ad[r], y[r])
    return out


def _combine(per: dict[str, float], ad: float) -> OffsetTerm:
    worst = sum(per.values())
    rss = math.sqrt(sum(v * v for v in per.values()))
    g = abs(ad) if ad else math.inf
    return OffsetTerm(worst, rss, worst / g, rss / g, per)


def vos_term(ad: float, transfers: Sequence[Transfers], vos: Sequence[float | None]) -> OffsetTerm:
    """Output and input-referred offset from each op-amp's |Vos| bound (None entries are
    left out: the caller makes them a requirement with :func:`max_vos`)."""
    per = {t.name: abs(t.vos) * v for t, v in zip(transfers, vos) if v is not None}
    return _combine(per, ad)


def bias_term(ad: float, transfers: Sequence[Transfers], ib: Sequence[float | None],
              ios: Sequence[float | None]) -> OffsetTerm:
    """Output and input-referred error of the input bias currents (see module docstring)."""
    per = {}
    for t, b, o in zip(transfers, ib, ios):
        if b is None and o is None:
            continue
        each = abs(b) * (abs(t.z_p) + abs(t.z_n)) if b is not None else math.inf
        if o is not None:
            split = abs(o) / 2.0 * abs(t.z_p - t.z_n)
            common = abs(b) * abs(t.z_p + t.z_n) if b is not None else math.inf
            each = min(each, common + split)
        per[t.name] = each
    return _combine(per, ad)


def max_vos(room_rti_v: float, ad: float, transfers: Sequence[Transfers]) -> float | None:
    """The largest |Vos|, the same for every op-amp listed, whose worst-case sum referred to
    the input stays within ``room_rti_v``. None when there is no room."""
    gain = sum(abs(t.vos) for t in transfers) / abs(ad) if ad else math.inf
    if room_rti_v <= 0 or not gain > 0:
        return None
    return room_rti_v / gain


def max_ib(room_rti_v: float, ad: float, transfers: Sequence[Transfers]) -> float | None:
    """The largest |Ib| (each input bounded alone) that keeps the bias error referred to the
    input within ``room_rti_v``. None when there is no room or no input sees a resistance."""
    z = sum(abs(t.z_p) + abs(t.z_n) for t in transfers) / abs(ad) if ad else math.inf
    if room_rti_v <= 0 or not z > 0:
        return None
    return room_rti_v / z

"""Batched modified nodal analysis of one stage's SubCircuit.

Every stage (difference amplifier, three- or two-op-amp in-amp, integrated part described by
its internal op-amps and resistors) is solved the same way: the nets become unknown node
voltages, each op-amp a voltage-controlled voltage source with finite open-loop gain and a
common-mode term, and the ports 'in_p', 'in_n', 'ref' ideal sources (or sources behind a series
resistance). Because the circuit is linear, every node voltage is an affine function of
(Vcm, Vd, Vref) plus a constant from the supply rails; one solve with four right-hand sides
gives all of those coefficients at once.

Many parameter sets (tolerance corners, Monte Carlo samples) are solved in one call: the
matrices are stacked to shape (N, n, n) and handed to ``numpy.linalg.solve``.

Op-amp equation, written divided by A so that A = infinity (a nullor) stays well conditioned::

    Vout / A = (v+ - v-) + c * (v+ + v-) / 2,     c = +-1/CMRR

which is ``Vout = A (v+ - v-) + (A/CMRR) (v+ + v-)/2``, the model of docs/engineering.md sec. 9.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from frontcheck.circuit import SubCircuit
from frontcheck.errors import InputError

# Excitation columns of every solve: node voltage = X @ (Vcm, Vd, Vref, 1).
COLUMNS = ("vcm", "vd", "vref", "const")
VCM, VD, VREF, CONST = range(4)

# Nets taken as 0 V when a resistor touches them but the rails do not list them: a ground
# symbol's net is the reference of every other voltage (common practice).
GROUND_NAMES = frozenset({"GND", "GNDA", "AGND", "GNDREF", "0", "GNDPWR", "DGND", "GNDD", "VSS_0V"})

CHUNK = 16384   # parameter sets per stacked solve: bounds memory at about n*n*8*CHUNK bytes


def is_ground(net: str) -> bool:
    """True for a net named like a ground symbol (last path element, case-insensitive)."""
    return net.rsplit("/", 1)[-1].upper() in GROUND_NAMES


@dataclass(frozen=True)
class Topology:
    """Index maps of a SubCircuit, built once and reused for every batched solve.

    Attributes
    ----------
    free : tuple of str
        Nets whose voltage is unknown (row/column order of the node part of the matrix).
    fixed : dict
        Net -> weight vector over COLUMNS for nets whose voltage is imposed (ports, rails).
    resistors : tuple
        (name, a, b) per resistor, a/b as returned by :meth:`term`.
    series : tuple of str
        Ports driven through a series resistance (their source is a hidden fixed node).
    """

    free: tuple[str, ...]
    fixed: dict[str, np.ndarray]
    resistors: tuple[tuple[str, object, object], ...]
    capacitors: tuple[tuple[str, object, object], ...]
    opamps: tuple[tuple[str, object, object, int], ...]   # (name, inp, inn, out index)
    series: tuple[tuple[str, int, np.ndarray], ...]        # (port, free index of port net, weights)
    out: int
    floating: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()
    index: dict[str, int] = field(default_factory=dict)
    # Subtracted from the output's coefficients in :func:`gains`: zero, or the weights of the
    # input port that shares its net with REF (the output is then read relative to that net).
    out_offset: np.ndarray = field(default_factory=lambda: np.zeros(4))
    # Index of the 'out_n' port's net when the stage has a differential output (an in-amp
    # input pair): the output is then read as out - out_n. -1: single-ended output.
    out_neg: int = -1

    def output(self, X: np.ndarray) -> np.ndarray:
        """(N, 4) coefficients of the stage's output from a solve ``X`` (N, size, 4): the
        'out' net, less the 'out_n' net of a differential output or the shared input's
        weights (see :func:`compile_circuit`)."""
        o = X[:, self.out, :] - self.out_offset
        return o - X[:, self.out_neg, :] if self.out_neg >= 0 else o

    @property
    def size(self) -> int:
        return len(self.free) + len(self.opamps)

    def coefficients(self, X: np.ndarray, net: str) -> np.ndarray:
        """(N, 4) affine coefficients of ``net`` from a solution ``X`` of shape (N, size, 4)."""
        if net in self.index:
            return X[:, self.index[net], :]
        if net in self.fixed:
            return np.broadcast_to(self.fixed[net], (X.shape[0], 4))
        raise KeyError(net)


def _read_only(v) -> np.ndarray:
    a = np.array(v, dtype=float)
    a.setflags(write=False)
    return a


# Weights over COLUMNS of a net driven by a port, and of a net at 0 V: shared, read-only
# (every topology reads them; none writes them).
_PORT_WEIGHTS = {"in_p": _read_only([1.0, 0.5, 0.0, 0.0]), "in_n": _read_only([1.0, -0.5, 0.0, 0.0]),
                 "ref": _read_only([0.0, 0.0, 1.0, 0.0])}
_ZERO = _read_only([0.0, 0.0, 0.0, 0.0])


def _port_weights() -> dict[str, np.ndarray]:
    return dict(_PORT_WEIGHTS)


_RAIL_WEIGHTS: dict[tuple[float, float], np.ndarray] = {}


def _rail_weights(volts: float) -> np.ndarray:
    """The weights of a rail at ``volts``: read-only, one array per voltage (and sign of a
    zero: -0.0 stays -0.0)."""
    key = (volts, math.copysign(1.0, volts))
    got = _RAIL_WEIGHTS.get(key)
    if got is None:
        got = _read_only([0.0, 0.0, 0.0, volts])
        if len(_RAIL_WEIGHTS) < 4096:
            _RAIL_WEIGHTS[key] = got
    return got


def compile_circuit(sub: SubCircuit, series: tuple[str, ...] = ()) -> Topology:
    """Index the nets of ``sub`` for :func:`solve_dc` / :func:`solve_ac`.

    Parameters
    ----------
    sub : SubCircuit
        The stage. Ports 'in_p', 'in_n' and 'out' are required; 'ref' is optional, and
        'out_n' makes the output differential (read as out - out_n).
    series : tuple of str
        Ports ('in_p', 'in_n', 'ref') fed through a series resistance given per solve
        (a source impedance, or the Thevenin resistance of the REF net).

    Returns
    -------
    Topology

    Raises
    ------
    InputError
        Missing ports, or an op-amp output tied to a fixed net.
    """
    for role in ("in_p", "in_n", "out"):
        if role not in sub.ports:
            raise InputError(f"stage has no '{role}' port", hint="recognition must name in_p, in_n and out")
    if sub.ports["in_p"] == sub.ports["in_n"]:
        raise InputError(f"both inputs of the stage are on net {sub.ports['in_p']}",
                         hint="the stage has no differential input: check its input wiring")
    weights = _port_weights()
    fixed: dict[str, np.ndarray] = {}
    for net, volts in sub.rails.items():
        fixed[net] = _rail_weights(float(volts.value))
    notes: list[str] = []
    shared, series_ports = _drive_ports(sub, series, weights, fixed, notes)
    out_offset = weights[shared] if shared is not None else _ZERO
    nets = _free_nets(sub, fixed, series_ports, notes)
    floating = _floating_nets(sub, nets, fixed, series_ports)
    if floating:
        notes.append("no DC path from net(s) " + ", ".join(floating) + "; solved with 1e-12 S to 0 V")

    index = {n: i for i, n in enumerate(nets)}

    def term(n: str):
        return index[n] if n in index else ("fixed", fixed[n])

    res = tuple((r.name, term(r.a), term(r.b)) for r in sub.resistors)
    caps = tuple((c.name, term(c.a), term(c.b)) for c in sub.capacitors)
    ops = tuple((o.name, term(o.inp), term(o.inn), index[o.out]) for o in sub.opamps)
    ser = tuple((role, index[net], weights[shared if net == sub.ports.get("ref") and shared else role])
                for role, net in series_ports)
    out = sub.ports["out"]
    if out not in index:
        raise InputError(f"stage output net {out} is a fixed net", hint="check the 'out' port")
    out_n = sub.ports.get("out_n")
    if out_n and out_n not in index:
        raise InputError(f"stage output net {out_n} is a fixed net", hint="check the 'out_n' port")
    return Topology(free=tuple(nets), fixed=fixed, resistors=res, capacitors=caps, opamps=ops,
                    series=ser, out=index[out], floating=floating, notes=tuple(notes), index=index,
                    out_offset=out_offset, out_neg=index[out_n] if out_n else -1)


def _drive_ports(sub: SubCircuit, series: tuple[str, ...], weights: dict[str, np.ndarray],
                 fixed: dict[str, np.ndarray], notes: list[str]) -> tuple[str | None, list]:
    """Fix the nets of the ports driven directly (into ``fixed``) and list those driven
    through a series resistance: (the input role REF shares its net with or None,
    [(role, net)] in series)."""
    # REF on the same net as an input (a shunt amplifier referred to the shunt's low side):
    # the net is one source, the input's; the output is read relative to it, since that net
    # is the level the stage refers its output to. Resistor mismatch then changes the gain
    # but cannot turn common mode into output; only the op-amps' own CMRR can.
    shared = next((role for role in ("in_n", "in_p")
                   if sub.ports.get("ref") is not None and sub.ports.get(role) == sub.ports["ref"]), None)
    if shared is not None:
        notes.append(f"REF and {'-' if shared == 'in_n' else '+'}IN share net {sub.ports['ref']}: "
                     f"gain and CMRR are of the output taken relative to that net (assumed to be "
                     f"the level the output is read against); resistor mismatch there changes "
                     f"the gain but not the CMRR, which only the op-amp's finite gain and CMRR set")
    series_ports = []
    for role in ("in_p", "in_n", "ref"):
        net = sub.ports.get(role)
        if net is None:
            continue
        if role == "ref" and shared is not None:
            # One source on the shared net: in series if either role asked for it, labelled
            # with the role whose resistance the caller gave (the input's first).
            if role in series and shared not in series:
                series_ports.append((role, net))
                fixed.pop(net, None)
            continue
        if role in series:
            series_ports.append((role, net))
            fixed.pop(net, None)
        else:
            fixed[net] = weights[role]
    return shared, series_ports


def _free_nets(sub: SubCircuit, fixed: dict[str, np.ndarray], series_ports: list,
               notes: list[str]) -> list[str]:
    """The nets whose voltage the solve finds, in first-seen order; a net named like a
    ground symbol joins ``fixed`` at 0 V instead."""
    nets: list[str] = []

    def see(n: str) -> None:
        if n not in fixed and n not in nets:
            nets.append(n)

    for r in sub.resistors:
        see(r.a)
        see(r.b)
    for c in sub.capacitors:
        see(c.a)
        see(c.b)
    for o in sub.opamps:
        see(o.inp)
        see(o.inn)
        see(o.out)
    for _, net in series_ports:
        see(net)
    see(sub.ports["out"])
    if sub.ports.get("out_n"):
        see(sub.ports["out_n"])
    for n in list(nets):
        if is_ground(n):
            nets.remove(n)
            fixed[n] = _ZERO
            notes.append(f"net {n} taken as 0 V (ground name, not among the rails)")
    for o in sub.opamps:
        if o.out in fixed:
            raise InputError(f"op-amp {o.name} output drives fixed net {o.out}",
                             hint="an op-amp output cannot be tied to a supply or a driven port")
    return nets


def _floating_nets(sub: SubCircuit, nets: list[str], fixed: dict[str, np.ndarray],
                   series_ports: list) -> tuple[str, ...]:
    """Nets with no DC path to a fixed node or an op-amp output: they would make the matrix
    singular, and get a tiny conductance to 0 V (as SPICE's gmin) and a note."""
    adj: dict[str, set[str]] = {n: set() for n in nets}
    for r in sub.resistors:
        adj.setdefault(r.a, set()).add(r.b)
        adj.setdefault(r.b, set()).add(r.a)
    for _, net in series_ports:
        adj[net].add("<source>")
    anchored = set(fixed) | {o.out for o in sub.opamps} | {"<source>"}
    # every net reached from an anchored one (each pushed once)
    seen = set(anchored)
    stack = [n for n in anchored if n in adj]
    while stack:
        for m in adj[stack.pop()]:
            if m not in seen:
                seen.add(m)
                stack.append(m)
    return tuple(n for n in nets if n not in seen)



def _stamp_g(M, B, g, a, b):
    """Stamp conductances g (N,) between terms a and b into entry-major arrays
    M (n, n, N) and B (n, 4, N)."""
    if isinstance(a, int) and isinstance(b, int):
        M[a, a] += g
        M[b, b] += g
        M[a, b] -= g
        M[b, a] -= g
    elif isinstance(a, int):
        M[a, a] += g
        B[a] += b[1][:, None] * g[None, :]
    elif isinstance(b, int):
        M[b, b] += g
        B[b] += a[1][:, None] * g[None, :]


def _assemble(topo: Topology, R, ainv, c, rs, caps=None, omega=None):
    """Stacked MNA matrices (N, n, n) and right-hand sides (N, n, 4).

    Built entry-major, shape (n, n, N), so that each stamp writes one contiguous run of N
    values, then viewed as (N, n, n) for the batched solve.
    """
    N = R.shape[0]
    n = topo.size
    dtype = complex if omega is not None else float
    M = np.zeros((n, n, N), dtype=dtype)
    B = np.zeros((n, 4, N), dtype=dtype)
    G = 1.0 / R.T
    for k, (_, a, b) in enumerate(topo.resistors):
        _stamp_g(M, B, G[k], a, b)
    if omega is not None:
        for k, (_, a, b) in enumerate(topo.capacitors):
            _stamp_g(M, B, 1j * omega * caps[:, k], a, b)
    for k, (role, i, w) in enumerate(topo.series):
        r = rs[:, k]
        _stamp_g(M, B, 1.0 / np.where(r > 0, r, 1e-9), i, ("fixed", w))
    for i, net in enumerate(topo.free):
        if net in topo.floating:
            M[i, i] += 1e-12
    nn = len(topo.free)
    for k, (_, p, m, o) in enumerate(topo.opamps):
        row = nn + k
        M[o, row] -= 1.0                 # the source's current enters its output node
        M[row, o] += ainv[:, k]
        cp = -(1.0 + 0.5 * c[:, k])      # coefficient of v+
        cm = 1.0 - 0.5 * c[:, k]         # coefficient of v-
        for t, coef in ((p, cp), (m, cm)):
            if isinstance(t, int):
                M[row, t] += coef
            else:
                B[row] -= t[1][:, None] * coef[None, :]
    return M.transpose(2, 0, 1), B.transpose(2, 0, 1)


def _as2d(x, N, k, default):
    if k == 0:
        return np.zeros((N, 0))
    if x is None:
        return np.full((N, k), default, dtype=float)
    x = np.asarray(x, dtype=float)
    if x.ndim == 1:
        x = np.broadcast_to(x, (N, k)) if x.shape[0] == k else np.broadcast_to(x[:, None], (N, k))
    return x


def solve_dc(topo: Topology, R, ainv=None, c=None, rs=None) -> np.ndarray:
    """Solve the stage at DC for N parameter sets.

    Parameters
    ----------
    topo : Topology
        From :func:`compile_circuit`.
    R : array_like, shape (N, n_resistors)
        Resistances in ohms, in the order of ``sub.resistors``.
    ainv : array_like, shape (N, n_opamps) or (n_opamps,), optional
        Inverse open-loop gains 1/A (0 = ideal). Default 0.
    c : array_like, optional
        Signed inverse CMRR of each op-amp (0 = infinite CMRR). Default 0.
    rs : array_like, shape (N, n_series), optional
        Series resistance of each port listed in ``topo.series``.

    Returns
    -------
    ndarray, shape (N, size, 4)
        Affine coefficients over (Vcm, Vd, Vref, 1) of every free net (first ``len(free)``
        rows) and the op-amp output currents (remaining rows).

    References
    ----------
    C.-W. Ho, A. E. Ruehli, P. A. Brennan, "The modified nodal approach to network analysis",
    IEEE Trans. Circuits Syst. 22(6), 1975.
    """
    R = np.atleast_2d(np.asarray(R, dtype=float))
    N = R.shape[0]
    nO, nS = len(topo.opamps), len(topo.series)
    ainv = _as2d(ainv, N, nO, 0.0)
    c = _as2d(c, N, nO, 0.0)
    rs = _as2d(rs, N, nS, 0.0)
    out = np.empty((N, topo.size, 4))
    for s in range(0, N, CHUNK):
        e = min(N, s + CHUNK)
        M, B = _assemble(topo, R[s:e], ainv[s:e], c[s:e], rs[s:e])
        out[s:e] = _solve(M, B)
    return out


def _solve(M, B):
    """One stacked solve. No thread pool: a pool around many small solves spent more time
    waiting on its workers than solving; several projects run in processes (``--jobs``)."""
    try:
        return np.linalg.solve(M, B)
    except np.linalg.LinAlgError:
        raise InputError("the stage's circuit equations are singular",
                         hint="an op-amp without feedback, or a net left unconnected inside the stage") from None


def solve_dc_adjoint(topo: Topology, R, ainv=None, c=None, rs=None):
    """:func:`solve_dc` and the adjoint solution: (X, Y) with M X = B and M^T Y = e_out.

    Y is (N, size): the sensitivity of the output to any stamped element follows from X and Y
    alone (frontcheck.analysis.sensitivity).

    References
    ----------
    S. W. Director, R. A. Rohrer, "The generalized adjoint network and network sensitivities",
    IEEE Trans. Circuit Theory 16(3), 1969.
    """
    R = np.atleast_2d(np.asarray(R, dtype=float))
    N = R.shape[0]
    nO, nS = len(topo.opamps), len(topo.series)
    M, B = _assemble(topo, R, _as2d(ainv, N, nO, 0.0), _as2d(c, N, nO, 0.0), _as2d(rs, N, nS, 0.0))
    E = np.zeros((N, topo.size, 1))
    E[:, topo.out, 0] = 1.0
    return _solve(M, B), _solve(M.transpose(0, 2, 1), E)[:, :, 0]


def solve_ac(topo: Topology, freq: float, R, C, ainv=None, c=None, rs=None) -> np.ndarray:
    """Complex small-signal solve at ``freq`` hertz; capacitors from ``C`` (N, n_caps) farads.

    Same layout as :func:`solve_dc` (complex). The op-amp model has no frequency dependence:
    it serves the passive input filter ahead of the amplifier, well below its bandwidth.

    References
    ----------
    C.-W. Ho, A. E. Ruehli, P. A. Brennan, IEEE Trans. Circuits Syst. 22(6), 1975.
    """
    R = np.atleast_2d(np.asarray(R, dtype=float))
    N = R.shape[0]
    C = np.atleast_2d(np.asarray(C, dtype=float)) if len(topo.capacitors) else np.zeros((N, 0))
    if C.shape[0] != N:
        C = np.broadcast_to(C, (N, C.shape[1]))
    nO, nS = len(topo.opamps), len(topo.series)
    M, B = _assemble(topo, R, _as2d(ainv, N, nO, 0.0), _as2d(c, N, nO, 0.0),
                     _as2d(rs, N, nS, 0.0), caps=C, omega=2 * np.pi * freq)
    return _solve(M, B)


@dataclass
class Gains:
    """Gains at the output for N parameter sets (arrays of shape (N,))."""

    ad: np.ndarray      # dVout/dVd at fixed Vcm
    acm: np.ndarray     # dVout/dVcm at fixed Vd
    aref: np.ndarray    # dVout/dVref
    const: np.ndarray   # Vout part set by the rails alone


def gains(topo: Topology, X: np.ndarray) -> Gains:
    """Differential, common-mode and REF gains at the 'out' port from a solve (relative to
    the shared net when REF shares its net with an input, see :func:`compile_circuit`; of
    out - out_n for a differential output)."""
    o = topo.output(X)
    return Gains(o[:, VD], o[:, VCM], o[:, VREF], o[:, CONST])


def nominal_values(sub: SubCircuit) -> np.ndarray:
    """(1, n_resistors) nominal resistances."""
    return np.array([[r.ohms.value for r in sub.resistors]], dtype=float)


def opamp_ainv(sub: SubCircuit) -> np.ndarray:
    """(n_opamps,) inverse open-loop gains from the op-amp models (0 for infinite gain, and
    for an op-amp whose part data gives none: ideal, never a guessed gain)."""
    out = []
    for o in sub.opamps:
        a = o.model.aol
        out.append(0.0 if a is None or not math.isfinite(a.value) or a.value <= 0 else 1.0 / a.value)
    return np.array(out)


def opamp_cmrr(sub: SubCircuit) -> np.ndarray:
    """(n_opamps,) 1/CMRR magnitudes from the op-amp models (0 for infinite CMRR, and for an
    op-amp whose part data gives none)."""
    out = []
    for o in sub.opamps:
        c = o.model.cmrr_db
        out.append(0.0 if c is None or not math.isfinite(c.value) else 10.0 ** (-c.value / 20.0))
    return np.array(out)


def node_affine(sub: SubCircuit, nets, R=None, ainv=None, c=None, series=(), rs=None):
    """Affine coefficients (Vcm, Vd, Vref, 1) of each net in ``nets`` at one parameter set.

    Returns a dict net -> ndarray (4,). Nominal resistances and model open-loop gains unless
    given. Used for headroom, where every node must be known, not only the output.
    """
    topo = compile_circuit(sub, series)
    R = nominal_values(sub) if R is None else np.atleast_2d(R)
    X = solve_dc(topo, R, opamp_ainv(sub) if ainv is None else ainv, c, rs)
    return {n: np.array(topo.coefficients(X, n)[0]) for n in nets}

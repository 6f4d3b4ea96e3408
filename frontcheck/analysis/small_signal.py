"""Small-signal solve of one stage over frequency, with op-amp dynamics and noise injection.

The DC solver (:mod:`frontcheck.analysis.mna`) treats op-amps as frequency-independent. The
noise, offset, drift and CMRR-against-frequency figures need more: each op-amp's open-loop
gain falling with frequency (single pole set by its gain-bandwidth product), its CMRR falling
above a corner, and the transfer from every internal source (a resistor's noise current, an
op-amp's input voltage or current) to the output. This module builds the same modified nodal
equations as :mod:`mna` (the net indexing comes from :func:`mna.compile_circuit`), complex,
stacked over a batch that may mix frequencies and parameter sets, and solves them forward
(gains from the ports) and in adjoint form (transfers from every internal source at once).

Op-amp equation (as in :mod:`mna`, divided by the open-loop gain)::

    Vout / A(f) = (v+ - v-) + c(f) (v+ + v-) / 2
    1 / A(f)    = 1 / A0 + j f / GBW               (single pole; GBW = A0 x pole frequency)
    c(f)        = s (1 + j f / f_cmrr) / CMRR0     (s = +-1, the unknown sign of the CMRR)

Adjoint transfers. With M x = B, the output is e^T x = e^T M^-1 B = y^T B where M^T y = e.
So one solve of the transposed system gives the output's response to a unit injection at
every row: a current into a node (row of that node), or a voltage in series with an op-amp's
non-inverting input (its equation row, scaled by 1 + c/2).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from frontcheck.analysis import mna
from frontcheck.circuit import SubCircuit


@dataclass(frozen=True)
class OpAmpDynamics:
    """Frequency behaviour of one op-amp; ``None`` = ideal in that respect.

    aol : open-loop DC gain (V/V); None = infinite.
    gbw_hz : gain-bandwidth product (Hz); None = no pole.
    cmrr_db : DC CMRR (dB); None = infinite.
    cmrr_corner_hz : frequency above which the CMRR falls 20 dB/decade; None = flat.
    """

    aol: float | None = None
    gbw_hz: float | None = None
    cmrr_db: float | None = None
    cmrr_corner_hz: float | None = None

    def ainv(self, f: np.ndarray) -> np.ndarray:
        """1/A(f), complex, for frequencies ``f`` (Hz)."""
        f = np.asarray(f, dtype=float)
        out = np.zeros(f.shape, dtype=complex)
        if self.aol is not None and np.isfinite(self.aol) and self.aol > 0:
            out += 1.0 / self.aol
        if self.gbw_hz is not None and self.gbw_hz > 0:
            out += 1j * f / self.gbw_hz
        return out

    def cinv(self, f: np.ndarray, sign: float = 1.0) -> np.ndarray:
        """Signed 1/CMRR(f), complex."""
        f = np.asarray(f, dtype=float)
        if self.cmrr_db is None or not np.isfinite(self.cmrr_db):
            return np.zeros(f.shape, dtype=complex)
        c0 = 10.0 ** (-self.cmrr_db / 20.0)
        zero = 1j * f / self.cmrr_corner_hz if self.cmrr_corner_hz else 0.0
        return sign * c0 * (1.0 + zero) * np.ones(f.shape)


def dynamics_from_models(sub: SubCircuit) -> list[OpAmpDynamics]:
    """Each op-amp's DC numbers from its model (Aol and CMRR); no pole, flat CMRR. Callers
    that know a GBW or a CMRR corner replace the entries."""
    out = []
    for o in sub.opamps:
        # a number no part data gives (None) is ideal: no finite gain, no CMRR limit
        a = o.model.aol.value if o.model.aol is not None else np.inf
        c = o.model.cmrr_db.value if o.model.cmrr_db is not None else np.inf
        out.append(OpAmpDynamics(aol=a if np.isfinite(a) and a > 0 else None,
                                 cmrr_db=c if np.isfinite(c) else None))
    return out


def _stamp(M, g, a, b, B=None):
    """Conductances g (N,) between terms a and b into M (N, n, n); a fixed end's drive goes
    to B (N, n, 4) when given."""
    if isinstance(a, int):
        M[:, a, a] += g
        if isinstance(b, int):
            M[:, a, b] -= g
        elif B is not None:
            B[:, a, :] += g[:, None] * b[1][None, :]
    if isinstance(b, int):
        M[:, b, b] += g
        if isinstance(a, int):
            M[:, b, a] -= g
        elif B is not None:
            B[:, b, :] += g[:, None] * a[1][None, :]


def assemble(topo: mna.Topology, f, R, C=None, ainv=None, cinv=None, rs=None):
    """Complex MNA matrices for a batch.

    Parameters
    ----------
    topo : mna.Topology
        From :func:`mna.compile_circuit`.
    f : array_like, shape (N,)
        Frequency of each batch member, Hz (0 = DC).
    R : array_like, shape (N, n_resistors)
    C : array_like, shape (N, n_capacitors), optional
    ainv, cinv : array_like, shape (N, n_opamps), complex, optional
        1/A(f) and signed 1/CMRR(f) of each op-amp (0 = ideal).
    rs : array_like, shape (N, n_series), optional
        Resistance behind each port listed in ``topo.series`` (a source or REF resistance).

    Returns
    -------
    M : ndarray (N, n, n) complex
    B : ndarray (N, n, 4) complex
        Right-hand sides for the excitations (Vcm, Vd, Vref, 1) of :data:`mna.COLUMNS`.

    References
    ----------
    C.-W. Ho, A. E. Ruehli, P. A. Brennan, "The modified nodal approach to network analysis",
    IEEE Trans. Circuits Syst. 22(6), 1975.
    """
    f = np.asarray(f, dtype=float)
    R = np.asarray(R, dtype=float)
    N, n = f.shape[0], topo.size
    nO = len(topo.opamps)
    M = np.zeros((N, n, n), dtype=complex)
    B = np.zeros((N, n, 4), dtype=complex)
    for k, (_, a, b) in enumerate(topo.resistors):
        _stamp(M, 1.0 / R[:, k], a, b, B)
    if topo.capacitors:
        C = np.asarray(C, dtype=float)
        w = 2j * np.pi * f
        for k, (_, a, b) in enumerate(topo.capacitors):
            _stamp(M, w * C[:, k], a, b, B)
    if topo.series:
        rs = np.broadcast_to(np.asarray(rs, dtype=float), (N, len(topo.series)))
        for k, (_, i, w) in enumerate(topo.series):
            _stamp(M, 1.0 / np.where(rs[:, k] > 0, rs[:, k], 1e-9), i, ("fixed", w), B)
    for i, net in enumerate(topo.free):
        if net in topo.floating:
            M[:, i, i] += 1e-12
    ainv = np.zeros((N, nO), complex) if ainv is None else np.broadcast_to(ainv, (N, nO))
    cinv = np.zeros((N, nO), complex) if cinv is None else np.broadcast_to(cinv, (N, nO))
    nn = len(topo.free)
    for k, (_, p, m, o) in enumerate(topo.opamps):
        row = nn + k
        M[:, o, row] -= 1.0
        M[:, row, o] += ainv[:, k]
        for t, coef in ((p, -(1.0 + 0.5 * cinv[:, k])), (m, 1.0 - 0.5 * cinv[:, k])):
            if isinstance(t, int):
                M[:, row, t] += coef
            else:
                B[:, row, :] -= coef[:, None] * t[1][None, :]
    return M, B


def _solve(M, B):
    try:
        return np.linalg.solve(M, B)
    except np.linalg.LinAlgError:
        from frontcheck.errors import InputError
        raise InputError("the stage's small-signal equations are singular",
                         hint="an op-amp without feedback, or a net left unconnected inside the stage") from None


def port_gains(topo: mna.Topology, M, B):
    """(N, 4) complex output response to (Vcm, Vd, Vref, 1) from the forward solve."""
    X = _solve(M, B)
    return topo.output(X)


def adjoint(topo: mna.Topology, M):
    """(N, n) complex: the output's response to a unit injection at each row (adjoint solve).

    Row of a free node: a 1 A current into that node. Row of op-amp k (index
    ``len(topo.free) + k``): a unit right-hand side in its equation.
    """
    N, n = M.shape[0], M.shape[1]
    e = np.zeros((N, n, 1), dtype=complex)
    e[:, topo.out, 0] = 1.0
    if topo.out_neg >= 0:
        e[:, topo.out_neg, 0] = -1.0        # a differential output: out - out_n
    return _solve(np.swapaxes(M, 1, 2), e)[:, :, 0]


def min_gbw_for_flatness(noise_gain: float, f_hz: float, max_droop: float) -> float:
    """Smallest gain-bandwidth product (Hz) for which a single-pole op-amp, working at
    ``noise_gain``, keeps the closed-loop gain within ``max_droop`` (fraction) of its DC value
    up to ``f_hz``: |1 / (1 + j f NG / GBW)| >= 1 - e, so GBW >= f NG / sqrt(1/(1-e)^2 - 1).

    References
    ----------
    S. Franco, *Design with Operational Amplifiers and Analog Integrated Circuits*, 4th ed.,
    McGraw-Hill 2015, chapter on dynamic limitations: closed-loop bandwidth = GBW / noise
    gain for a single-pole op-amp.
    """
    if not 0 < max_droop < 1:
        raise ValueError("max_droop is a fraction between 0 and 1")
    return f_hz * noise_gain / np.sqrt(1.0 / (1.0 - max_droop) ** 2 - 1.0)

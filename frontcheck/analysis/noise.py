"""Noise of one stage over a frequency band, referred to its output and to its input.

Sources, all uncorrelated and so added in power (quadrature):

* every resistor's thermal noise, a current of density sqrt(4kT/R) across it (the Norton form
  of the Johnson-Nyquist voltage sqrt(4kTR));
* every op-amp's input voltage noise en, in series with its non-inverting input, with a 1/f
  corner: en(f)^2 = en^2 (1 + fc/f);
* every op-amp's input current noise in, into each of its inputs separately (the two are
  taken as uncorrelated), with its own 1/f corner.

Each source reaches the output through the transfer that :func:`small_signal.adjoint` gives
for all of them in one solve. A source's output noise power over the band [fL, fH] is the
integral of |T(f)|^2 S(f). When nothing in the stage depends on frequency (no capacitors, no
op-amp pole) T is flat and the integral is closed: en^2 (fH - fL + fc ln(fH/fL)). Otherwise T
is solved on a logarithmic grid and each piece integrated as a power law between grid points.

Referred to the input: the output noise density divided by |Ad(f)|, the stage's differential
gain at the same frequency. Peak-to-peak: the RMS times a crest factor of 6.6, the value the
trade uses for Gaussian noise (exceeded about 0.1 % of the time).

Ports driven by ideal sources: a current noise into an input port's net is absorbed by its
source. A source resistance drawn in the design is part of the SubCircuit and adds its noise.

Formulas, sources and check values: docs/engineering.md sec. 11.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from frontcheck.analysis import mna, small_signal
from frontcheck.circuit import SubCircuit

BOLTZMANN = 1.380649e-23    # J/K, exact since the 2019 SI redefinition (CODATA 2018)
CREST_FACTOR = 6.6          # peak-to-peak / RMS for Gaussian noise, common practice
ZERO_CELSIUS = 273.15       # K


@dataclass(frozen=True)
class OpAmpNoise:
    """Noise numbers of one op-amp (white densities and 1/f corners); 0 = none."""

    en: float = 0.0              # V/sqrt(Hz)
    in_: float = 0.0             # A/sqrt(Hz)
    en_corner_hz: float = 0.0
    in_corner_hz: float = 0.0


@dataclass
class NoiseSource:
    name: str            # 'R3', 'U1A en', 'U1A in+', 'U1A in-'
    kind: str            # 'resistor', 'en', 'in'
    out_v2: float        # output noise power over the band, V^2
    rti_v2: float        # the same referred to the input, V^2


@dataclass
class NoiseResult:
    band_hz: tuple[float, float]
    kelvin: float
    out_rms_v: float
    rti_rms_v: float
    rti_pp_v: float
    crest_factor: float = CREST_FACTOR
    sources: list[NoiseSource] = field(default_factory=list)   # largest first


def johnson_density(ohms, kelvin=300.0):
    """Thermal noise voltage density of a resistance, V/sqrt(Hz): sqrt(4 k T R).

    Parameters
    ----------
    ohms : array_like
        Resistance(s), ohms.
    kelvin : float or array_like
        Absolute temperature, K.

    Returns
    -------
    ndarray or float

    References
    ----------
    J. B. Johnson, "Thermal agitation of electricity in conductors", Phys. Rev. 32, 97 (1928);
    H. Nyquist, "Thermal agitation of electric charge in conductors", Phys. Rev. 32, 110
    (1928). k = 1.380649e-23 J/K exactly (SI 2019).
    """
    return np.sqrt(4.0 * BOLTZMANN * np.asarray(kelvin, float) * np.asarray(ohms, float))


def band_power(density, f_lo, f_hi, corner_hz=0.0):
    """Noise power (V^2 or A^2) of a density with a 1/f corner over [f_lo, f_hi].

    density^2 (1 + fc/f) integrated: density^2 (fH - fL + fc ln(fH/fL)).

    Parameters
    ----------
    density : array_like
        White density (V or A per sqrt(Hz)).
    f_lo, f_hi : float
        Band edges, Hz; f_lo may be 0 only without a 1/f corner.
    corner_hz : array_like
        1/f corner frequency, Hz (0 = white).

    Raises
    ------
    ValueError
        f_hi <= f_lo, or a 1/f corner with f_lo = 0 (the integral diverges).

    References
    ----------
    C. D. Motchenbacher, J. A. Connelly, *Low-Noise Electronic System Design*, Wiley 1993
    (1/f noise integrated over a band); P. Horowitz, W. Hill, *The Art of Electronics*, 3rd
    ed., Cambridge 2015, ch. 8.
    """
    if not f_hi > f_lo >= 0:
        raise ValueError(f"noise band {f_lo:g}..{f_hi:g} Hz is empty")
    d2 = np.asarray(density, float) ** 2
    fc = np.asarray(corner_hz, float)
    if f_lo == 0:
        if np.any(fc > 0):
            raise ValueError("1/f noise integrated from DC diverges: give the band a lower edge")
        return d2 * f_hi
    return d2 * ((f_hi - f_lo) + fc * math.log(f_hi / f_lo))


def integrate_psd(f, psd):
    """Integral of a density sampled at rising frequencies ``f``, each interval taken as a
    power law a f^b through its end points (exact for white and 1/f pieces).

    Parameters
    ----------
    f : array_like, shape (n,)
        Frequencies, Hz, increasing and positive.
    psd : array_like, shape (..., n)
        Power densities (V^2/Hz), non-negative.

    Returns
    -------
    ndarray, shape (...)
    """
    f = np.asarray(f, float)
    s = np.asarray(psd, float)
    f1, f2 = f[:-1], f[1:]
    s1, s2 = s[..., :-1], s[..., 1:]
    lr = np.log(f2 / f1)
    with np.errstate(divide="ignore", invalid="ignore"):
        b = np.log(s2 / s1) / lr
        general = s1 * f1 / (b + 1.0) * ((f2 / f1) ** (b + 1.0) - 1.0)
        inverse = s1 * f1 * lr                       # b = -1
        trapezoid = 0.5 * (s1 + s2) * (f2 - f1)      # a zero end: no power law through it
    piece = np.where(np.abs(b + 1.0) < 1e-9, inverse, general)
    piece = np.where((s1 > 0) & (s2 > 0) & np.isfinite(piece), piece, trapezoid)
    return piece.sum(axis=-1)


def _grid(f_lo: float, f_hi: float, per_decade: int) -> np.ndarray:
    start = f_lo if f_lo > 0 else f_hi * 1e-6
    n = max(2, int(math.ceil(per_decade * math.log10(f_hi / start))) + 1)
    return np.geomspace(start, f_hi, n)


def _source_rows(sub: SubCircuit, topo: mna.Topology, noise: Sequence[OpAmpNoise], kelvin: float):
    """(name, kind, how to read the transfer, white power density, 1/f corner) per source."""
    out = []
    for r, (_, a, b) in zip(sub.resistors, topo.resistors):
        if isinstance(a, int) or isinstance(b, int):
            out.append((r.name, "resistor", ("pair", a, b), 4.0 * BOLTZMANN * kelvin / r.ohms.value, 0.0))
    nn = len(topo.free)
    for k, (o, (_, p, m, _out)) in enumerate(zip(sub.opamps, topo.opamps)):
        nz = noise[k]
        if nz.en > 0:
            out.append((f"{o.name} en", "en", ("row", nn + k), nz.en ** 2, nz.en_corner_hz))
        if nz.in_ > 0:
            for sign, t in (("+", p), ("-", m)):
                if isinstance(t, int):
                    out.append((f"{o.name} in{sign}", "in", ("pair", t, None), nz.in_ ** 2, nz.in_corner_hz))
    return out


def _transfer2(how, y: np.ndarray, cinv: np.ndarray, k_of_row) -> np.ndarray:
    """|T|^2 over the batch for one source, from the adjoint solution y (N, n)."""
    if how[0] == "pair":
        _, a, b = how
        t = (y[:, a] if isinstance(a, int) else 0.0) - (y[:, b] if isinstance(b, int) else 0.0)
    else:
        row = how[1]
        t = y[:, row] * (1.0 + 0.5 * cinv[:, k_of_row(row)])
    return np.abs(t) ** 2


def stage_noise(sub: SubCircuit, band: tuple[float, float], kelvin: float = 300.0,
                opamp_noise: Sequence[OpAmpNoise | None] | None = None,
                dynamics: Sequence[small_signal.OpAmpDynamics] | None = None,
                per_decade: int = 40) -> NoiseResult:
    """Integrated noise of a stage over ``band``, at its output and referred to its input.

    Parameters
    ----------
    sub : SubCircuit
        The stage (ports driven by ideal sources).
    band : (float, float)
        Band edges in Hz; the lower may be 0 (DC) when no 1/f corner is given.
    kelvin : float
        Temperature of the resistors, K.
    opamp_noise : sequence of OpAmpNoise or None, one per op-amp
        None (or None entries): that op-amp is noiseless (no part data: its noise is then a
        requirement for the caller, never a guess).
    dynamics : sequence of OpAmpDynamics, optional
        Open-loop gain, GBW and CMRR per op-amp; default the models' DC numbers.
    per_decade : int
        Grid density when the transfers depend on frequency.

    Returns
    -------
    NoiseResult

    References
    ----------
    Johnson (1928) and Nyquist (1928), Phys. Rev. 32, for 4kTR; C. D. Motchenbacher,
    J. A. Connelly, *Low-Noise Electronic System Design*, Wiley 1993, for the en-in op-amp
    noise model, quadrature addition of uncorrelated sources and 1/f integration;
    P. Horowitz, W. Hill, *The Art of Electronics*, 3rd ed., 2015, ch. 8. Crest factor 6.6:
    common practice.
    """
    f_lo, f_hi = float(band[0]), float(band[1])
    if not f_hi > f_lo >= 0:
        raise ValueError(f"noise band {f_lo:g}..{f_hi:g} Hz is empty")
    topo = mna.compile_circuit(sub)
    dyn = list(dynamics) if dynamics is not None else small_signal.dynamics_from_models(sub)
    noise = [n or OpAmpNoise() for n in (opamp_noise or [None] * len(sub.opamps))]
    flat = not sub.capacitors and not any(d.gbw_hz for d in dyn)
    f = np.array([0.0]) if flat else _grid(f_lo, f_hi, per_decade)
    R = np.broadcast_to(mna.nominal_values(sub), (f.size, len(sub.resistors)))
    C = np.broadcast_to(np.array([c.farads.value for c in sub.capacitors], float), (f.size, len(sub.capacitors)))
    ainv = np.stack([d.ainv(f) for d in dyn], axis=1) if dyn else None
    cinv = np.stack([d.cinv(f) for d in dyn], axis=1) if dyn else np.zeros((f.size, 0))
    M, B = small_signal.assemble(topo, f, R, C, ainv, cinv)
    ad2 = np.abs(small_signal.port_gains(topo, M, B)[:, mna.VD]) ** 2
    y = small_signal.adjoint(topo, M)
    nn = len(topo.free)
    sources = []
    for name, kind, how, s0, fc in _source_rows(sub, topo, noise, kelvin):
        t2 = _transfer2(how, y, cinv, lambda row: row - nn)
        if flat:
            power = float(t2[0] * band_power(math.sqrt(s0), f_lo, f_hi, fc))
            rti = power / ad2[0] if ad2[0] > 0 else math.inf
        else:
            if f_lo == 0 and fc > 0:
                band_power(1.0, 0.0, f_hi, fc)            # raises: 1/f from DC diverges
            white = t2 * s0
            pink = white * fc / f
            power = float(integrate_psd(f, white) + integrate_psd(f, pink))
            rti = float(integrate_psd(f, white / ad2) + integrate_psd(f, pink / ad2))
            if f_lo == 0:                                 # DC .. first grid point: flat
                power += float(white[0] * f[0])
                rti += float(white[0] / ad2[0] * f[0])
        sources.append(NoiseSource(name, kind, power, rti))
    sources.sort(key=lambda s: -s.out_v2)
    out_rms = math.sqrt(sum(s.out_v2 for s in sources))
    rti_rms = math.sqrt(sum(s.rti_v2 for s in sources))
    return NoiseResult(band_hz=(f_lo, f_hi), kelvin=kelvin, out_rms_v=out_rms, rti_rms_v=rti_rms,
                       rti_pp_v=CREST_FACTOR * rti_rms, sources=sources)


def max_en_for(budget_rti_rms_v: float, other_rti_v2: float, en_gain2: float, band: tuple[float, float],
               corner_hz: float = 0.0) -> float | None:
    """The largest white en that keeps the RTI noise within ``budget_rti_rms_v``.

    ``other_rti_v2`` is the RTI power of every other source; ``en_gain2`` the sum over the
    stage's op-amps of |T_en / Ad|^2 (one en per op-amp, all the same). None when the other
    sources alone exceed the budget (no op-amp can meet it).
    """
    room = budget_rti_rms_v ** 2 - other_rti_v2
    if room <= 0 or en_gain2 <= 0:
        return None
    return math.sqrt(room / (en_gain2 * band_power(1.0, band[0], band[1], corner_hz)))

"""What expansion of an integrated amplifier needs from its part data, read from
``frontcheck.parts``' models, a plain dict or these classes alike (recognition takes part data
as an argument and never imports the part library)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from frontcheck.circuit import OpAmpModel, Sourced

__all__ = ["DiffAmpData", "InAmpData", "diffamp_data", "inamp_data"]


@dataclass
class InAmpData:
    """What expansion needs from an in-amp's part data."""

    name: str
    arch: str = "rg-pair"                 # 'rg-pair' | 'feedback-pin'
    k: Sourced | None = None              # rg-pair: G = 1 + K/RG, ohms
    k_tol: Sourced | None = None          # fractional tolerance of K (gain error)
    g0: Sourced | None = None             # feedback-pin: G = G0 (1 + RF/RG)
    r_stage2: Sourced | None = None       # internal difference-stage resistor (Ra = Rc), ohms
    g2: Sourced | None = None             # internal difference-stage gain (Rb/Ra), default 1
    ratio_tol: Sourced | None = None      # matching of the internal resistors
    r_in: Sourced | None = None           # feedback-pin: internal input resistance per input
    opamp: OpAmpModel | None = None
    r_ref: Sourced | None = None          # internal resistor to the REF pin (default r_stage2 g2)
    missing: tuple[str, ...] = ()         # numbers the architecture needs and nobody gave


@dataclass
class DiffAmpData:
    """What expansion needs from a difference amplifier's part data."""

    name: str
    gain: Sourced | None
    r_in: Sourced | None                   # R1 = R3, ohms
    ratio_tol: Sourced | None = None
    abs_tol: Sourced | None = None
    opamp: OpAmpModel | None = None
    missing: tuple[str, ...] = ()


def _sourced(x: Any, detail: str) -> Sourced | None:
    if x is None:
        return None
    if isinstance(x, Sourced):
        return x
    try:
        return Sourced(float(x), "class", detail)
    except (TypeError, ValueError):
        return None


def _attr(obj: Any, *names: str):
    for n in names:
        v = obj.get(n) if isinstance(obj, dict) else getattr(obj, n, None)
        if v is not None:
            return v
    return None


def inamp_data(model: Any) -> InAmpData | None:
    """Read an in-amp part model (frontcheck.parts' object, a dict, or InAmpData)."""
    if model is None or isinstance(model, InAmpData):
        return model
    name = str(_attr(model, "name") or "in-amp part data")
    arch = str(_attr(model, "arch", "architecture") or "rg-pair")
    d = InAmpData(
        name=name, arch="feedback-pin" if "feedback" in arch or "fg" in arch else "rg-pair",
        k=_sourced(_attr(model, "k", "gain_k", "k_ohms", "gain_constant"), f"{name}: K"),
        k_tol=_sourced(_attr(model, "k_tol", "gain_tol", "gain_error"), f"{name}: gain error"),
        g0=_sourced(_attr(model, "g0", "base_gain"), f"{name}: G0"),
        r_stage2=_sourced(_attr(model, "r_stage2", "r_diff", "r_ref", "ref_r", "stage2_r"),
                          f"{name}: internal difference-stage resistor"),
        g2=_sourced(_attr(model, "g2", "stage2_gain"), f"{name}: difference-stage gain"),
        ratio_tol=_sourced(_attr(model, "ratio_tol", "match_tol", "matching"),
                           f"{name}: internal resistor matching"),
        r_in=_sourced(_attr(model, "r_in", "rin", "input_r"), f"{name}: input resistance"),
        opamp=_attr(model, "opamp", "opamp_model"),
        r_ref=_sourced(_attr(model, "r_ref"), f"{name}: internal REF resistor"),
    )
    need = ("k", "r_stage2") if d.arch == "rg-pair" else ("g0", "r_in")
    d.missing = tuple(_attr(model, "missing") or ()) or tuple(k for k in need if getattr(d, k) is None)
    return d


def diffamp_data(model: Any) -> DiffAmpData | None:
    if model is None or isinstance(model, DiffAmpData):
        return model
    name = str(_attr(model, "name") or "difference-amp part data")
    gain = _sourced(_attr(model, "gain", "g"), f"{name}: gain")
    r_in = _sourced(_attr(model, "r_in", "rin", "r1", "input_r"), f"{name}: input resistor")
    missing = tuple(k for k, v in (("gain", gain), ("r_in", r_in)) if v is None)
    return DiffAmpData(
        name=name, gain=gain, r_in=r_in,
        ratio_tol=_sourced(_attr(model, "ratio_tol", "match_tol", "matching"),
                           f"{name}: internal resistor matching"),
        abs_tol=_sourced(_attr(model, "abs_tol", "r_tol"), f"{name}: internal resistor tolerance"),
        opamp=_attr(model, "opamp", "opamp_model"),
        missing=tuple(_attr(model, "missing") or ()) or missing,
    )

"""Part data as loaded: the keys each kind of part may have, where each is read from, and the
model objects recognition reads (see the package docstring for the file format)."""

from __future__ import annotations

from dataclasses import dataclass, field

from frontcheck.budget_units import EXAMPLES as BUDGET_EXAMPLES
from frontcheck.circuit import OpAmpModel, Sourced

__all__ = ["BUDGET_ATTR", "BUDGET_KEYS", "CLASS_FIELDS", "DiffAmpModel", "FIELD_NAMES", "InAmpModel", "KINDS", "NUMBER_KEYS",
           "NetworkModel", "OPAMP_KEYS", "PART_FILE", "PartClass"]

PART_FILE = "frontcheck-parts.toml"
KINDS = ("opamp", "inamp", "diffamp", "network")

# Error-budget numbers of an op-amp: key -> (quantity, symbol field names). Never in a shipped
# class: part data, or in the budget a requirement.
_BUDGET = {
    "gbw": ("Hz", ("GBW",)), "vos_drift": ("V/K", ("Vos Drift",)), "ios": ("A", ("Ios",)),
    "en": ("V/rtHz", ("en",)), "in": ("A/rtHz", ("in",)),
    "en_corner": ("Hz", ("1/f Corner", "en 1/f Corner")), "in_corner": ("Hz", ("in 1/f Corner",)),
}
BUDGET_KEYS = tuple(_BUDGET)
BUDGET_ATTR = {"in": "in_"}          # OpAmpModel attribute where it differs from the key

OPAMP_KEYS = ("aol", "cmrr_db", "icm_low", "icm_high", "swing_low", "swing_high", "vos", "ib",
              *BUDGET_KEYS)
NUMBER_KEYS: dict[str, tuple[str, ...]] = {
    "opamp": OPAMP_KEYS,
    "inamp": ("k", "k_tol", "g0", "r_stage2", "g2", "r_ref", "ratio_tol", "r_in", "gain_drift",
              *OPAMP_KEYS),
    "diffamp": ("gain", "r_in", "ratio_tol", "abs_tol", "gain_drift", *OPAMP_KEYS),
    "network": ("abs_tol", "ratio_tol", "tcr", "tcr_tracking"),
}
TEXT_KEYS = ("description", "base", "arch")
ARCHS = ("rg-pair", "feedback-pin")
# gain network names a part file may use -> the architecture modelled: one RG or a split RG
# between two RG pins; a two-resistor feedback network OUT -> gain pin -> REF
ARCH_NAMES = {"rg-pair": "rg-pair", "split-rg": "rg-pair", "feedback-pin": "feedback-pin",
              "two-resistor-feedback": "feedback-pin"}

# key -> quantity, which decides how text is read
QUANTITY = {
    "aol": "gain_db_or_vv", "cmrr_db": "db", "icm_low": "V", "icm_high": "V",
    "swing_low": "V", "swing_high": "V", "vos": "V", "ib": "A", "k": "ohm", "k_tol": "tol",
    "g0": "ratio", "r_stage2": "ohm", "g2": "ratio", "r_ref": "ohm", "ratio_tol": "tol",
    "r_in": "ohm", "gain": "ratio", "abs_tol": "tol", "tcr": "ppm/K", "tcr_tracking": "ppm/K",
    "gain_drift": "ppm/K", **{k: q for k, (q, _) in _BUDGET.items()},
}
# key -> symbol field names
FIELD_NAMES: dict[str, tuple[str, ...]] = {
    "aol": ("Aol",), "cmrr_db": ("CMRR",), "icm_low": ("Input CM Low",),
    "icm_high": ("Input CM High",), "swing_low": ("Swing Low",), "swing_high": ("Swing High",),
    "vos": ("Vos",), "ib": ("Ib",), "k": ("Gain K",), "k_tol": ("Gain K Tol",), "g0": ("G0",),
    "r_stage2": ("Stage2 R",), "g2": ("Stage2 Gain",), "r_ref": ("REF R",),
    "ratio_tol": ("Ratio Tolerance", "Matching", "Match"), "r_in": ("Input R",),
    "gain": ("Fixed Gain",), "abs_tol": ("Internal Tol",), "tcr": ("TCR",),
    "tcr_tracking": ("TCR Tracking",), "gain_drift": ("Gain Drift",), **{k: f for k, (_, f) in _BUDGET.items()},
}
CLASS_FIELDS = ("Part Class", "Op-amp Class", "Opamp Class", "Amp Class")
EXAMPLES = {
    "gain_db_or_vv": "'120 dB' or '1e6 V/V'", "db": "'100 dB'", "V": "'0.1 V' or '50 mV'",
    "A": "'1 nA'", "ohm": "'32.1k'", "tol": "'0.1%'", "ratio": "'20'", "ppm/K": "'25 ppm/K'",
    **BUDGET_EXAMPLES,
}


# --------------------------------------------------------------------------------------------
# Models

@dataclass
class InAmpModel:
    """Numbers of an integrated in-amp. Attribute names are those recognition reads.

    ``k``, ``g0``, ``r_stage2``, ``r_in`` are None when no part data gives them; ``missing``
    lists what the architecture needs and lacks (empty = complete). ``opamp`` describes the
    internal amplifiers (input pins' range as icm_*, output and first-stage swing as swing_*).
    """

    name: str
    arch: str                                  # 'rg-pair' | 'feedback-pin'
    k: Sourced | None = None
    k_tol: Sourced | None = None
    g0: Sourced | None = None
    r_stage2: Sourced | None = None
    g2: Sourced | None = None
    r_ref: Sourced | None = None
    ratio_tol: Sourced | None = None
    r_in: Sourced | None = None
    cmrr_db: Sourced | None = None
    opamp: OpAmpModel | None = None
    missing: tuple[str, ...] = ()


@dataclass
class DiffAmpModel:
    """Numbers of an integrated difference amplifier (fixed gain, internal resistors).
    ``gain`` and ``r_in`` are None when no part data gives them (then ``missing`` says so)."""

    name: str
    gain: Sourced | None = None
    r_in: Sourced | None = None
    ratio_tol: Sourced | None = None
    abs_tol: Sourced | None = None
    cmrr_db: Sourced | None = None
    opamp: OpAmpModel | None = None
    missing: tuple[str, ...] = ()


@dataclass
class NetworkModel:
    name: str
    abs_tol: Sourced | None = None
    ratio_tol: Sourced | None = None
    tcr: Sourced | None = None              # temperature coefficient bound of each element, 1/K
    tcr_tracking: Sourced | None = None     # bound on the difference of two elements' TCRs, 1/K


@dataclass
class PartClass:
    """One class as loaded: kind, numbers (already in SI) and where it was defined."""

    name: str
    kind: str
    numbers: dict[str, float] = field(default_factory=dict)
    text: dict[str, str] = field(default_factory=dict)
    origin: str = "class"          # 'class' (shipped) or 'project'
    file: str = ""
    # keys a project table set on top of a shipped class of the same name (source 'project')
    project_keys: frozenset[str] = frozenset()


"""What analysis computes for one stage: the contract between analysis, rules and reports.

Part of the neutral model layer beside netlist.py, circuit.py and finding.py: plain data, no
numerics, no imports from analysis, recognition or numpy, so that reporters can read it
without loading them. Analysis (frontcheck.analysis) fills these from a Stage
(frontcheck.circuit); rules read them and never compute; reports print them and never compute.
"""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass
class Spread:
    """A quantity nominal, over exact tolerance corners, and statistically (Monte Carlo)."""

    nominal: float
    worst_min: float | None = None
    worst_max: float | None = None
    p_low: float | None = None      # Monte Carlo percentile (e.g. 0.135 %, i.e. -3 sigma)
    p_high: float | None = None     # Monte Carlo percentile (e.g. 99.865 %)
    samples: list[float] | None = None   # a thinned sample for histograms (<= 2000 values)


@dataclass
class CmrrResult:
    nominal_db: float               # as drawn, REF/source resistance included (inf when exactly matched)
    worst_db: float                 # exact corner enumeration, op-amp CMRR added in worst sign
    statistical_db: float | None    # Monte Carlo percentile (the `percentile` below)
    percentile: float = 0.135       # percent, low tail reported as "statistical"
    ad_convention: str = "nominal"  # which differential gain divides Acm: 'nominal' | 'corner'
    contributors: dict[str, float] = field(default_factory=dict)  # name -> CMRR in dB if alone
    samples_db: list[float] | None = None


@dataclass
class HeadroomCheck:
    """One op-amp terminal against its limit at one corner of the declared input box."""

    opamp: str            # 'U1A'
    node: str             # 'input' | 'output'
    net: str
    corner: tuple[float, float]   # (Vcm, Vd) volts
    voltage: float
    low: float            # limit, volts
    high: float
    margin_v: float       # min(voltage - low, high - voltage); negative = violated


@dataclass
class Headroom:
    margin_v: float | None                       # worst margin over all checks (None: no box)
    checks: list[HeadroomCheck] = field(default_factory=list)
    region: list[tuple[float, float]] = field(default_factory=list)  # valid (Vcm, Vout) polygon
    box: tuple[float, float, float, float] | None = None   # (vcm_lo, vcm_hi, vd_lo, vd_hi)
    unknown: list[str] = field(default_factory=list)   # op-amps whose rails could not be found


@dataclass
class RefSource:
    net: str
    kind: str              # 'low-impedance' | 'resistive' | 'floating' | 'rail'
    thevenin_ohms: float | None
    voltage: float | None
    driver: str = ""       # what drives it: 'U2B output', 'R8/R9 divider', 'GND'
    cmrr_db: float | None = None    # CMRR limit from Rth alone
    gain_error: float | None = None  # fractional gain error from Rth
    parts: list[str] = field(default_factory=list)  # parts of the network that feeds REF


@dataclass
class BiasPath:
    pin: str               # 'U1A +in' / 'U3 +IN'
    net: str
    status: str            # 'ok' | 'none' | 'connector' (reaches only a connector pin)
    reaches: str = ""      # what it reaches: 'GND via R13', 'J2 pin 1'
    parts: list[str] = field(default_factory=list)  # the parts that decide it: the path's
                                                    # parts, or the capacitors that block it


@dataclass
class SourceLoading:
    """The resistive source driving the stage inputs (e.g. a bridge), seen from each input."""

    rs_p: float | None            # Thevenin resistance at the in_p port, ohms (None: unknown)
    rs_n: float | None
    gain_error: float | None      # fractional gain error from the source resistances alone
    cmrr_db: float | None         # CMRR limit from the source resistances alone
    detail: str = ""


@dataclass
class InputFilter:
    """Passive RFI filter ahead of the amplifier: series R per leg, C per leg, C across."""

    nets: tuple[str, str]                 # the filter's output nets (amplifier side)
    f_dm_hz: float                        # -3 dB of the differential response, nominal
    f_cm_hz: float                        # -3 dB of the common-mode response, nominal
    cm_to_dm: dict[float, float] = field(default_factory=dict)  # Hz -> worst |Vd/Vcm| (corners)
    parts: list[str] = field(default_factory=list)


@dataclass
class StageResult:
    stage_id: str
    gain: Spread                       # differential gain, V/V
    cmrr: CmrrResult
    gain_cm: float                     # common-mode gain, nominal
    gain_ref: float                    # gain from REF to OUT, nominal
    headroom: Headroom
    ref: RefSource | None
    bias: list[BiasPath] = field(default_factory=list)
    error_budget: dict[str, dict[str, float]] = field(default_factory=dict)  # term -> {'worst': %, 'rss': %}
    assumptions: list[str] = field(default_factory=list)   # "R3 tolerance assumed 1 % (default)"
    notes: list[str] = field(default_factory=list)
    # Optional extensions (added by the analysis; absent = not computed).
    source: SourceLoading | None = None          # source impedance at the inputs
    input_filter: InputFilter | None = None      # RFI filter ahead of the amplifier

"""What analysis computes for one stage: the contract between analysis, rules and reports.

Part of the neutral model layer beside netlist.py, circuit.py and finding.py: plain data, no
numerics, no imports from analysis, recognition or numpy, so that reporters can read it
without loading them. Analysis (frontcheck.analysis) fills these from a Stage
(frontcheck.circuit); rules read them and never compute; reports print them and never compute.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from frontcheck import formatting as fmt
from frontcheck.circuit import OpAmpModel, Sourced


@dataclass
class Spread:
    """A quantity nominal, over exact tolerance corners, and statistically (Monte Carlo)."""

    nominal: float
    worst_min: float | None = None
    worst_max: float | None = None
    p_low: float | None = None      # Monte Carlo percentile (e.g. 0.135 %, i.e. -3 sigma)
    p_high: float | None = None     # Monte Carlo percentile (e.g. 99.865 %)
    samples: list[float] | None = None   # a thinned sample for histograms (<= 2000 values)
    method: str | None = None       # what made p_low/p_high: 'first-order' | 'monte-carlo'


@dataclass
class CmrrResult:
    nominal_db: float               # as drawn, REF/source resistance included (inf when exactly matched)
    worst_db: float                 # exact corner enumeration, op-amp CMRR added in worst sign
    statistical_db: float | None    # Monte Carlo percentile (the `percentile` below)
    percentile: float = 0.135       # percent, low tail reported as "statistical"
    ad_convention: str = "nominal"  # which differential gain divides Acm: 'nominal' | 'corner'
    contributors: dict[str, float] = field(default_factory=dict)  # name -> CMRR in dB if alone
    samples_db: list[float] | None = None
    statistical_method: str | None = None   # 'first-order' | 'monte-carlo' (None: no statistics)


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
    basis: str = ""       # where the limits come from: part data, or the bare supply rail
    stated: tuple[bool, bool] = (True, True)   # (low, high) given by part data; a side that
                                               # is not is the rail (output) or unbounded (input)
    tolerances: dict = field(default_factory=dict)   # tolerance variable -> 'high' | 'low' at
                                                     # the corner (empty: nominal values)
    range_v: tuple[float, float] | None = None       # the node's lowest and highest voltage

    @property
    def limit_stated(self) -> bool:
        """Whether the limit nearest to the voltage is the op-amp's own (from part data)."""
        return self.stated[0] if self.voltage - self.low < self.high - self.voltage else self.stated[1]


@dataclass
class Headroom:
    margin_v: float | None                       # worst margin over all checks (None: no box)
    nominal_margin_v: float | None = None        # the same at nominal part values
    checks: list[HeadroomCheck] = field(default_factory=list)
    region: list[tuple[float, float]] = field(default_factory=list)  # valid (Vcm, Vout) polygon
    box: tuple[float, float, float, float] | None = None   # (vcm_lo, vcm_hi, vd_lo, vd_hi)
    unknown: list[str] = field(default_factory=list)   # op-amps whose rails could not be found
    # REF wired to the negative supply of the op-amp driving the output (a single-supply stage
    # with REF on ground): {'ref_net', 'ref_v', 'rail_net', 'rail_v', 'amplifier'}; the output
    # is unipolar (analysis.headroom.ref_at_low_rail). None otherwise.
    ref_at_low_rail: dict | None = None


@dataclass
class RefSource:
    net: str
    kind: str              # 'low-impedance' | 'resistive' | 'driven' | 'floating' | 'rail'
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


def quantity_text(value: float, unit: str) -> str:
    """A number with its unit in the report style (frontcheck.formatting)."""
    if unit == "dB":
        return fmt.db(value)
    if unit in ("V/V", ""):
        return fmt.number(value)
    if unit == "1/K":                       # a temperature coefficient, in the trade's ppm/K
        return f"{fmt.number(value * 1e6)} ppm/K"
    return fmt.eng(value, unit)


@dataclass
class OpAmpBasis:
    """Which op-amp numbers a stage's figures used: each given number with its source; every
    other one is ideal (infinite gain and CMRR, no stated input or output limit)."""

    opamp: str                     # 'U1A', internal 'U3.A1'
    reference: str                 # component reference, 'U1'
    model: str                     # class or part-file name, or 'ideal (no part data)'
    numbers: dict = field(default_factory=dict)   # key -> Sourced (circuit.OpAmpModel keys)
    ideal: list[str] = field(default_factory=list)  # keys no part data gives

    def describe(self) -> str:
        """'ideal (no part data)', or the numbers given and where each came from."""
        if not self.numbers:
            return "ideal (no part data)"
        by_source: dict[str, list[str]] = {}
        units = dict(OpAmpModel.NUMBERS)
        for k, v in self.numbers.items():
            label = OpAmpModel.LABELS.get(k, k)
            by_source.setdefault(v.detail or v.source, []).append(
                f"{label} {quantity_text(v.value, units.get(k, ''))}")
        given = "; ".join(f"{', '.join(items)} ({where})" for where, items in by_source.items())
        ideal = [OpAmpModel.LABELS.get(k, k) for k in self.ideal]
        return given + (f"; ideal in {', '.join(ideal)}" if ideal else "")


def describe_opamps(basis: list[OpAmpBasis]) -> str:
    """The op-amp numbers of a stage in one line, op-amps with the same numbers together:
    'U1A, U1B, U2: ideal (no part data)'."""
    groups: dict[str, list[str]] = {}
    for b in basis:
        groups.setdefault(b.describe(), []).append(b.opamp)
    return "; ".join(f"{', '.join(names)}: {text}" for text, names in groups.items())


@dataclass
class Requirement:
    """One number an op-amp must reach: ``min`` and/or ``max`` in ``unit``; ``given`` is the
    part data's own number when there is one (then ``met`` says whether it reaches it)."""

    references: list[str]
    opamps: list[str]
    quantity: str
    min: float | None
    max: float | None
    unit: str
    because: str
    given: Sourced | None = None
    met: bool | None = None


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
    opamps: list[OpAmpBasis] = field(default_factory=list)  # op-amp numbers the figures used
    requirements: list = field(default_factory=list)  # Requirement: what each op-amp must reach
    cmrr_sweep: dict | None = None               # CMRR against frequency (analysis.cmrr_frequency.stage_sweep)
    varied: list[str] = field(default_factory=list)   # tolerance variables of the worst case and
                                                      # Monte Carlo: 'R3', 'U1 (absolute)', ...
    # A differential-output stage (in-amp input pair): output common mode it hands on and the
    # CMRR the stage it feeds needs: {'output_cm_gain', 'signal_to_output_cm': [lo, hi],
    # 'next_stage_cmrr_db'} (frontcheck.analysis.diff_pair); None for single-ended stages.
    differential_output: dict | None = None
    # A composite front end (in-amp input pair into an integrated in-amp): {'first_stage':
    # {'amplifiers', 'gain_resistor', 'gain': {nominal, worst_min, worst_max}, 'cmrr_db':
    # {nominal, worst}}, 'second_stage': {'reference', 'gain', 'gain_from'}, 'total_gain'}
    # (frontcheck.analysis.composite); None for other kinds.
    composite: dict | None = None


#: How a requirement's quantity reads in a sentence (the keys are the JSON contract's).
REQUIREMENT_LABELS = {"cmrr_db": "CMRR", "aol": "Aol", "input_low_v": "input range low end",
                       "input_high_v": "input range high end", "output_low_v": "output swing low end",
                       "output_high_v": "output swing high end"}


def requirement_label(quantity: str) -> str:
    """A requirement's quantity as a report writes it ('input range low end' for 'input_low_v')."""
    return REQUIREMENT_LABELS.get(quantity, quantity)


def summary_lines(reqs: list[Requirement]) -> list[str]:
    """One short line per op-amp: 'U1A needs CMRR >= 63.9 dB, Aol >= 1000, inputs
    0.21..3.1 V, output 0.1..4.4 V' (part data that misses a requirement is named)."""
    by: dict[str, dict[str, Requirement]] = {}
    for r in reqs:
        for name in r.opamps:
            by.setdefault(name, {})[r.quantity] = r
    out = []
    for name, q in by.items():
        parts = []
        if "cmrr_db" in q:
            parts.append(f"CMRR >= {fmt.db(q['cmrr_db'].min)}")
        if "aol" in q:
            parts.append(f"Aol >= {fmt.number(q['aol'].min)}")
        for node, label in (("input", "inputs"), ("output", "output")):
            lo, hi = q.get(f"{node}_low_v"), q.get(f"{node}_high_v")
            if lo is not None and hi is not None:
                parts.append(f"{label} {fmt.span(lo.max, hi.min, fmt.volts)}")
        misses = [f"{requirement_label(r.quantity)} {given_text(r)}"
                  for r in q.values() if r.met is False]
        line = f"{name} needs " + ", ".join(parts)
        out.append(line + (f"; {'; '.join(misses)}" if misses else ""))
    return out


def as_json(r: Requirement) -> dict:
    """The stage JSON's ``opamp_requirements`` entry (the documented JSON contract)."""
    d = {"references": list(r.references), "opamps": list(r.opamps), "quantity": r.quantity,
         "min": None if r.min is None else float(r.min),
         "max": None if r.max is None else float(r.max), "unit": r.unit, "because": r.because}
    if r.given is not None:
        d["given"] = {"value": r.given.value, "source": r.given.source, "detail": r.given.detail}
        d["met"] = None if r.met is None else bool(r.met)
    return d


def bound_text(r: Requirement) -> str:
    """'>= 63.9 dB', '<= 1.27 V' or '1.2 .. 3.1 V' for a report table."""
    def show(x: float) -> str:
        return quantity_text(x, r.unit)

    if r.min is not None and r.max is not None:
        return fmt.span(r.min, r.max, show)
    if r.min is not None:
        return f">= {show(r.min)}"
    return f"<= {show(r.max)}"


def given_text(r: Requirement) -> str:
    """The part data's number and source, and whether it meets the requirement; '' without."""
    if r.given is None:
        return ""
    verdict = "meets it" if r.met else "misses it"
    return f"{quantity_text(r.given.value, r.unit)} ({r.given.detail or r.given.source}): {verdict}"

"""The extracted sub-circuit of one amplifier stage: what recognition hands to analysis.

Recognition (frontcheck.recognise) finds a stage in the Netlist and describes it here with
plain numbers and net names; analysis (frontcheck.analysis) solves it without knowing the
topology's name. Every number carries where it came from, because the report must say when
a value was assumed rather than read from the design.
"""

from __future__ import annotations

from dataclasses import dataclass, field

# Where a number came from, most to least trustworthy. Reports print these words.
SOURCES = ("field", "value", "project", "class", "default")


@dataclass(frozen=True)
class Sourced:
    """A number and where it came from: one of SOURCES, plus free detail
    (e.g. 'class precision-bipolar', 'Tolerance field of R3')."""

    value: float
    source: str = "field"
    detail: str = ""


@dataclass
class Resistor:
    name: str            # reference, or reference + suffix for internal/network elements
    a: str               # net name
    b: str               # net name
    ohms: Sourced
    tol: Sourced         # fractional tolerance, 0.001 = 0.1 %
    internal: bool = False   # inside an integrated part (from part data, not a placed resistor)
    match_group: str = ""    # resistors in one network/IC share a group; their ratio tolerance
                             # is `match_tol` rather than independent `tol`
    match_tol: Sourced | None = None
    tcr: Sourced | None = None           # temperature coefficient bound, 1/K (None: not given)
    tcr_tracking: Sourced | None = None  # a network's bound on two members' TCR difference, 1/K


@dataclass
class Capacitor:
    name: str
    a: str
    b: str
    farads: Sourced
    tol: Sourced


@dataclass
class OpAmpModel:
    """Op-amp numbers from part data. Limits are relative to the op-amp's own rails:
    input common mode valid in [V- + icm_low, V+ - icm_high] (negative = beyond the rail),
    output valid in [V- + swing_low, V+ - swing_high].

    A number that no part data gives is None: analysis takes the op-amp as ideal in that
    respect (infinite gain or CMRR, no stated input or output limit) and reports what the
    op-amp must achieve instead (requirements), never a guessed figure.
    """

    name: str                               # class or part-file name; 'ideal (no part data)'
    aol: Sourced | None = None              # open-loop DC gain, V/V
    cmrr_db: Sourced | None = None
    icm_low: Sourced | None = None          # V above V- (may be negative: input range beyond V-)
    icm_high: Sourced | None = None         # V below V+
    swing_low: Sourced | None = None        # V above V-
    swing_high: Sourced | None = None       # V below V+
    vos: Sourced | None = None              # input offset voltage, V
    ib: Sourced | None = None               # input bias current, A
    # Error-budget numbers (None = not given: the budget makes each a requirement)
    gbw: Sourced | None = None        # gain-bandwidth product, Hz
    vos_drift: Sourced | None = None  # offset drift, V/K
    ios: Sourced | None = None        # input offset current, A
    en: Sourced | None = None         # input voltage noise density (white), V/sqrt(Hz)
    in_: Sourced | None = None        # input current noise density (white), A/sqrt(Hz)
    en_corner: Sourced | None = None  # 1/f corner of en, Hz
    in_corner: Sourced | None = None  # 1/f corner of in, Hz
    # An integrated in-amp's or difference amp's own gain drift bound (its internal resistors;
    # external gain resistors apart), 1/K; carried by the part's internal op-amps
    gain_drift: Sourced | None = None

    #: The numbers analysis may use, in report order, with their units.
    NUMBERS = (("aol", "V/V"), ("cmrr_db", "dB"), ("icm_low", "V"), ("icm_high", "V"),
               ("swing_low", "V"), ("swing_high", "V"), ("vos", "V"), ("ib", "A"),
               ("gbw", "Hz"), ("vos_drift", "V/K"), ("ios", "A"), ("en", "V/rtHz"),
               ("in_", "A/rtHz"), ("en_corner", "Hz"), ("in_corner", "Hz"), ("gain_drift", "1/K"))

    #: How a report names each number (the keys stay the JSON's).
    LABELS = {"aol": "Aol", "cmrr_db": "CMRR", "icm_low": "input range above V-",
              "icm_high": "input range below V+", "swing_low": "output swing above V-",
              "swing_high": "output swing below V+", "vos": "Vos", "ib": "Ib", "gbw": "GBW",
              "vos_drift": "Vos drift", "ios": "Ios", "en": "en", "in_": "in",
              "en_corner": "en 1/f corner", "in_corner": "in 1/f corner",
              "gain_drift": "gain drift"}

    def given(self) -> dict[str, Sourced]:
        """The numbers part data gave, by key (the others are ideal in the figures)."""
        return {k: getattr(self, k) for k, _ in self.NUMBERS if getattr(self, k) is not None}

    @property
    def ideal(self) -> bool:
        """True when no part data gives any number."""
        return not self.given()


#: The model of an op-amp without part data: no numbers, ideal in every figure.
IDEAL_OPAMP = OpAmpModel(name="ideal (no part data)")


@dataclass
class OpAmp:
    name: str            # reference with unit letter, e.g. 'U1A'; internal ones 'U3.A1'
    ref: str             # the component reference, e.g. 'U1'
    inp: str             # non-inverting input net
    inn: str             # inverting input net
    out: str             # output net
    vpos: str | None     # positive supply net (None when not found: headroom cannot be checked)
    vneg: str | None
    model: OpAmpModel
    internal: bool = False
    neighbour: bool = False   # outside the stage, solved with it (a load's driver): no
                              # headroom check or requirement of its own here


@dataclass
class SubCircuit:
    """Elements of one stage between its ports.

    ``ports`` maps the roles 'in_p', 'in_n', 'ref', 'out' to nets ('out_n' too for a
    differential output, read as out - out_n). Analysis drives 'in_p',
    'in_n' and 'ref' with ideal sources (unless ``ref_source`` says the REF net is fed through
    a resistance found in the netlist) and reads 'out'. ``rails`` gives each supply net's
    voltage (with its source). Other nets are internal nodes.
    """

    resistors: list[Resistor] = field(default_factory=list)
    capacitors: list[Capacitor] = field(default_factory=list)
    opamps: list[OpAmp] = field(default_factory=list)
    ports: dict[str, str] = field(default_factory=dict)
    rails: dict[str, Sourced] = field(default_factory=dict)


@dataclass
class Intent:
    """What the designer declared for a stage (fields on the amplifier symbol, or the
    project file keyed by reference). None = not declared."""

    target_gain: float | None = None
    gain_tol: float | None = None          # fractional, 0.005 = 0.5 %
    min_cmrr_db: float | None = None
    input_cm: tuple[float, float] | None = None     # volts (lo, hi)
    input_diff: tuple[float, float] | None = None   # volts (lo, hi)
    ref_voltage: float | None = None
    notes: list[str] = field(default_factory=list)  # e.g. 'patient-connected'
    # Error-budget intent (frontcheck.intent_budget): signal band, operating temperatures,
    # where CMRR is judged, and the budget as a fraction of full scale and/or volts RTI.
    band_hz: tuple[float, float] | None = None
    temp_range_c: tuple[float, float] | None = None
    cmrr_at_hz: float | None = None
    error_budget_fs: float | None = None
    error_budget_rti_v: float | None = None
    source: dict[str, str] = field(default_factory=dict)  # key -> 'field U3' / 'frontcheck.toml'


@dataclass
class Stage:
    """One recognised front-end stage."""

    id: str                      # stable, e.g. 'U3' or 'U1A/U1B/U1C'
    kind: str                    # difference | three-opamp | two-opamp | diff-output | composite | integrated-inamp | integrated-diffamp
    references: list[str]        # every component taking part, sorted
    amplifiers: list[str]        # op-amp units or IC references, in signal order
    roles: dict[str, str]        # role -> element name, e.g. {'R1': 'R5', 'R2': 'R7', 'RG': 'R9'}
    circuit: SubCircuit
    intent: Intent = field(default_factory=Intent)
    notes: list[str] = field(default_factory=list)   # recognition remarks (assumptions, oddities)
    # A composite front end whose whole chain is modelled: its first stage alone (an in-amp
    # input pair, ports in_p, in_n, out, out_n), solved apart for G1 (recognise.composite)
    first_stage: SubCircuit | None = None

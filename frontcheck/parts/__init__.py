"""Part models: which component is what, and the numbers analysis uses for it.

Where numbers come from, most to least trusted (each number says which, as ``Sourced.source``):

1. ``field``: the symbol's own fields (names below, case-insensitive);
2. ``project``: the project's part file ``frontcheck-parts.toml`` beside the ``.kicad_pro``
   and the ``[parts]`` table of ``frontcheck.toml`` (same format);
3. ``class``: the generic classes shipped in ``rules/parts/*.toml`` (conservative numbers,
   no manufacturer parts);
4. ``default``: only for op-amps with no part data at all, and only when the user named a
   class under ``[defaults] opamp_class`` in ``frontcheck.toml``. Without it (built in:
   ``"none"``) such an op-amp has no numbers: it is ideal in every figure and gets
   requirements instead (see frontcheck.circuit.OpAmpModel).

An in-amp or difference amplifier with no part data gets no model: recognition reports it
as found, never with guessed internals (``looks_like_inamp`` tells it is one).

Project part file (``frontcheck-parts.toml``, or the same under ``[parts]`` in
``frontcheck.toml``)::

    [[match]]                    # first matching entry wins; every given pattern must match
    value = "AMP-7*"             # glob on the Value field (case-insensitive)
    lib_id = "*:AMP-7*"          # glob on the library id
    ref = "U1?"                  # glob on the reference
    class = "zero-drift"         # a shipped or project class
    cmrr_db = 110                # numbers here override the class for the matched parts

    [inamp.lab-inamp]            # a project class: new, or overriding a shipped one's keys
    base = "generic-inamp"       # inherit every key not given here
    k = "32.1k"                  # numbers, or text with units ("32.1k", "120 dB", "50 uV")
    r_stage2 = 10e3

Keys: op-amps ``aol`` (V/V; or ``aol_db``), ``cmrr_db``, ``icm_low``, ``icm_high``,
``swing_low``, ``swing_high`` (volts inside the rails; negative = beyond), ``vos`` (V), ``ib``
(A); in-amps also ``arch``, ``k``, ``k_tol``, ``g0``, ``r_stage2``, ``g2``, ``r_ref``,
``ratio_tol``, ``r_in``; difference amps ``gain``, ``r_in``, ``ratio_tol``, ``abs_tol``; both
also ``gain_drift`` (the part's own gain drift over temperature, without external resistors);
networks ``abs_tol``, ``ratio_tol``, ``tcr``, ``tcr_tracking`` (see rules/parts/*.toml for their
meaning). Error-budget numbers of op-amps (never in a shipped class; without them the budget
states a requirement): ``gbw``, ``vos_drift``, ``ios``, ``en``, ``in``, ``en_corner``, ``in_corner``.

Symbol fields (override everything else):

===================  ===========  ==================================================
Field                Key          Example
===================  ===========  ==================================================
Part Class           (class)      ``precision-bipolar`` (also "Op-amp Class", "Amp Class")
Aol                  aol          ``120 dB`` or ``1e6 V/V`` (the unit is required)
CMRR                 cmrr_db      ``100 dB`` (the unit is required)
Input CM Low         icm_low      ``-0.1 V`` (above V-; negative = beyond the rail)
Input CM High        icm_high     ``1.5 V`` (below V+)
Swing Low            swing_low    ``50 mV`` (above V-)
Swing High           swing_high   ``50 mV`` (below V+)
Vos                  vos          ``25 uV``
Ib                   ib           ``1 nA``
Gain K               k            ``32.1k`` (ohms, G = 1 + K/RG)
Gain K Tol           k_tol        ``0.1%``
G0                   g0           ``5``
Stage2 R             r_stage2     ``10k``
Stage2 Gain          g2           ``1``
REF R                r_ref        ``10k``
Ratio Tolerance      ratio_tol    ``0.01%`` (also "Matching", "Match")
Input R              r_in         ``25k``
Fixed Gain           gain         ``20`` (a difference amplifier's gain)
Internal Tol         abs_tol      ``20%``
GBW                  gbw          ``10 MHz``
Vos Drift            vos_drift    ``1 uV/K`` (also ``uV/°C``)
Ios                  ios          ``50 pA``
en                   en           ``8 nV/rtHz`` (white; also ``nV/√Hz``)
in                   in           ``0.2 pA/rtHz``
1/f Corner           en_corner    ``10 Hz`` (of en; also "en 1/f Corner")
in 1/f Corner        in_corner    ``100 Hz``
TCR                  tcr          ``25 ppm/K`` (a network's elements)
TCR Tracking         tcr_tracking ``2 ppm/K``
Gain Drift           gain_drift   ``20 ppm/K`` (an in-amp's or difference amp's own gain drift,
                                  external gain resistors apart)
===================  ===========  ==================================================
"""

from frontcheck.parts.library import PartLibrary
from frontcheck.parts.models import (BUDGET_KEYS, CLASS_FIELDS, FIELD_NAMES, KINDS, NUMBER_KEYS, PART_FILE,
                                     DiffAmpModel, InAmpModel, NetworkModel, PartClass)

__all__ = ["BUDGET_KEYS", "CLASS_FIELDS", "DiffAmpModel", "FIELD_NAMES", "InAmpModel", "KINDS", "NUMBER_KEYS",
           "NetworkModel", "PART_FILE", "PartClass", "PartLibrary"]

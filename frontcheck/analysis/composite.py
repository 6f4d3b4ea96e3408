"""What a composite front end (an in-amp input pair driving an integrated in-amp; kind
``composite``, :mod:`frontcheck.recognise.composite`) adds to its figures: the first stage's
gain G1 = 1 + (Rf1 + Rf2)/RG with its own worst case over the tolerances, the second stage's
gain G2 where part data gives it, and the total G1 x G2 (docs/engineering.md sec. 3b).

The stage's SubCircuit is the whole chain when the integrated part has part data; its first
stage alone (``Stage.first_stage``) is then solved apart for G1 and for the CMRR of the pair's
differential output, which resistor mismatch cannot lower (sec. 3a). Without part data the
SubCircuit is the pair itself: its gain is G1, and G2 and the total are not stated.
"""

from __future__ import annotations

from frontcheck.analysis import tolerance
from frontcheck.circuit import Stage

__all__ = ["figures"]


def _spread(s) -> dict:
    return {"nominal": s.nominal, "worst_min": s.worst_min, "worst_max": s.worst_max}


def figures(stage: Stage, gain, cmrr, opt: tolerance.Options,
            notes: list[str]) -> dict | None:
    """The ``composite`` block of a composite stage's result (None for any other kind):
    ``first_stage`` (amplifiers, gain resistor, gain spread, CMRR of its differential output),
    ``second_stage`` (reference, nominal gain or None, where it comes from) and
    ``total_gain`` (spread, or None without the second stage's part data)."""
    if stage.kind != "composite":
        return None
    roles = stage.roles
    ic = roles.get("second_stage", "")
    if stage.first_stage is None:
        g1, c1, total, g2 = gain, cmrr, None, None
    else:
        g1, c1, tnotes, _ = tolerance.analyse_tolerance(stage.first_stage, opt)
        notes += [f"first stage: {n}" for n in tnotes if n not in notes]
        total = gain
        g2 = gain.nominal / g1.nominal if g1.nominal else None
    first = {"amplifiers": [roles.get("first_stage_p"), roles.get("first_stage_n")],
             "gain_resistor": roles.get("gain_resistor"), "gain": _spread(g1),
             "cmrr_db": {"nominal": c1.nominal_db, "worst": c1.worst_db}}
    second = {"reference": ic, "gain": g2,
              "gain_from": "part data" if g2 is not None else "needs part data"}
    return {"first_stage": first, "second_stage": second,
            "total_gain": _spread(total) if total is not None else None}

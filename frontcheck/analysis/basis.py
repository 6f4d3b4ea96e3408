"""What a stage's figures rest on, in words: the numbers taken from defaults or part classes
(``assumptions_of``) and, per op-amp, the numbers part data gave (``opamp_basis``)."""

from __future__ import annotations

from frontcheck import formatting
from frontcheck.analysis.result import OpAmpBasis
from frontcheck.circuit import Sourced, Stage

__all__ = ["assumptions_of", "opamp_basis"]


def _fmt(v: float, unit: str) -> str:
    """A stated number in the report's one style (frontcheck.formatting); '%' takes a fraction."""
    unit = unit.strip()
    if unit == "%":
        return formatting.percent(v, trim=True)
    if unit == "dB":
        return f"{formatting.number(v)} dB"
    if unit == "V/V":
        return f"{formatting.number(v)} V/V"
    return formatting.eng(v, unit, 3, trim=True)


def assumptions_of(stage: Stage) -> list[str]:
    """Every number of the stage whose source is 'default' or 'class', in words."""
    out: list[str] = []
    sub = stage.circuit

    def add(text: str) -> None:
        if text not in out:
            out.append(text)

    def say(owner: str, what: str, s: Sourced | None, unit: str = "") -> None:
        if s is None or s.source not in ("default", "class"):
            return
        val = _fmt(s.value, unit)
        # The detail usually names the source already ('class zero-drift'); say it once.
        where = s.detail if s.source in s.detail.split() else (
            f"{s.source}: {s.detail}" if s.detail else s.source)
        add(f"{owner} {what} assumed {val} ({where})")

    for r in sub.resistors:
        say(r.name, "resistance", r.ohms, "Ω")
        say(r.name, "tolerance", r.tol, "%")
        say(r.name, "ratio tolerance", r.match_tol, "%")
    for c in sub.capacitors:
        say(c.name, "capacitance", c.farads, " F")
        say(c.name, "tolerance", c.tol, "%")
    # Op-amp model numbers: op-amps with equal numbers (the units of one package, parts of one
    # class) share one line per source, so a stage of three op-amps reads as one statement.
    groups: dict[tuple, list[str]] = {}
    models = {}
    for o in sub.opamps:
        m = o.model
        key = (m.name, m.aol, m.cmrr_db, m.icm_low, m.icm_high, m.swing_low, m.swing_high,
               m.vos, m.ib)
        groups.setdefault(key, []).append(o.name)
        models[key] = m
    for key, names in groups.items():
        m = models[key]
        by_source: dict[str, list[str]] = {}
        for what, q, unit in (("open-loop gain", m.aol, " V/V"), ("CMRR", m.cmrr_db, " dB"),
                              ("input range above V-", m.icm_low, " V"),
                              ("input range below V+", m.icm_high, " V"),
                              ("output swing above V-", m.swing_low, " V"),
                              ("output swing below V+", m.swing_high, " V"),
                              ("offset voltage", m.vos, " V"), ("bias current", m.ib, " A")):
            if q is None or q.source not in ("default", "class"):
                continue
            where = q.detail if q.detail.startswith(q.source) else (
                f"{q.source}: {q.detail}" if q.detail else q.source)
            by_source.setdefault(where, []).append(f"{what} {_fmt(q.value, unit)}")
        for where, items in by_source.items():
            add(f"{', '.join(names)} assumed ({where}): {', '.join(items)}")
    for net, v in sub.rails.items():
        say(f"rail {net}", "voltage", v, " V")
    return out


def opamp_basis(stage: Stage) -> list[OpAmpBasis]:
    """Which op-amp numbers the figures of ``stage`` rest on: per op-amp, the numbers part
    data gave (each with its source) and which of gain, CMRR, input range and output swing
    are taken as ideal."""
    out = []
    for o in stage.circuit.opamps:
        given = o.model.given()
        out.append(OpAmpBasis(o.name, o.ref, o.model.name if given else "ideal (no part data)",
                              given, [k for k, _ in o.model.NUMBERS[:6] if k not in given]))
    return out

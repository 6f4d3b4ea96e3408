"""The pin-role recogniser against the amplifier symbols of KiCad's own symbol libraries.

Source: KiCad's official symbol libraries as Debian packages them (``kicad-symbols``, installed
by apt under /usr/share/kicad/symbols; CI installs it in .ci/run). Nothing is copied into the
repository: the test reads the .kicad_sym files where apt put them.

A symbol is recognised when frontcheck gives it the kind its library and its own Description
field say it is, and, for op-amps, finds one amplifier per KiCad unit that holds an output with
both inputs - the library's own grouping of pins into amplifiers. Misses are printed.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from conftest import need
from frontcheck.component import classify, opamp_units, pin_roles
from frontcheck.kicad.libsymbols import LibSymbol, read_lib_symbol as _lib_symbol
from frontcheck.kicad.sexpr import parse
from frontcheck.netlist import Component, Pin

SYMBOLS = Path(os.environ.get("KICAD_SYMBOL_DIR", "/usr/share/kicad/symbols"))
LIBRARIES = ("Amplifier_Operational", "Amplifier_Instrumentation", "Amplifier_Difference")


def _symbols(lib: str) -> dict[str, LibSymbol]:
    tree = parse((SYMBOLS / f"{lib}.kicad_sym").read_text(encoding="utf-8"))
    syms = {}
    for node in tree[1:]:
        if isinstance(node, list) and node and node[0] == "symbol":
            s = _lib_symbol(node)
            syms[s.name] = s
    return syms


def _component(lib: str, sym: LibSymbol, syms: dict[str, LibSymbol]) -> Component:
    base = sym
    while not base.pins and base.extends in syms:     # derived symbols take the parent's pins
        base = syms[base.extends]
    pins = {}
    for p in base.pins:
        if p.type != "no_connect" and p.body_style in (0, 1):
            pins.setdefault(p.number, Pin(p.number, "" if p.name == "~" else p.name, p.type,
                                          p.unit))
    return Component("U1", sym.name, f"{lib}:{sym.name}", pins=pins)


def _expected(lib: str, sym: LibSymbol, syms: dict[str, LibSymbol]) -> str:
    """Kind from the library and the symbol's Description (inherited from the parent)."""
    desc = ""
    cur = sym
    while cur is not None and not desc:
        desc = cur.properties.get("Description") or cur.properties.get("ki_description") or ""
        cur = syms.get(cur.extends) if cur.extends else None
    d = desc.lower()
    if "transconductance" in d:
        return "ota"
    if "transimpedance" in d:
        return "other"            # frontcheck models no transimpedance amplifier
    if "fully differential" in d or "fully-differential" in d \
            or (lib == "Amplifier_Operational" and "differential" in d):
        return "fda"
    if lib == "Amplifier_Instrumentation":
        return "inamp"
    if lib == "Amplifier_Difference":
        return "diffamp"
    return "opamp"


def _amplifier_units(comp: Component) -> int:
    """KiCad units holding an unnamed or named output and + and - inputs."""
    by_unit: dict[int, set[str]] = {}
    for p in comp.pins.values():
        by_unit.setdefault(p.unit, set()).add(p.name if p.name in ("+", "-") else p.type)
    return sum(1 for u, s in by_unit.items() if u and {"+", "-"} <= s and "output" in s)


def _recognised(comp: Component, expected: str) -> bool:
    kind = classify(comp)
    if kind != expected:
        return False
    if kind == "opamp":
        units = opamp_units(comp)
        want = _amplifier_units(comp) or 1
        return len(units) == want and all(u.inp and u.inn for u in units)
    if kind == "other":
        return True
    roles = pin_roles(comp)
    # every amplifier has both inputs; an in-amp's REF may be its ground pin (fixed-gain parts)
    return bool(roles.get("inp") and roles.get("inn"))


def test_amplifier_symbols_of_kicads_libraries_are_recognised():
    need(all((SYMBOLS / f"{lib}.kicad_sym").is_file() for lib in LIBRARIES),
         f"KiCad's symbol libraries not found in {SYMBOLS} (apt-get install kicad-symbols)")
    total, misses = 0, []
    for lib in LIBRARIES:
        syms = _symbols(lib)
        for sym in syms.values():
            comp = _component(lib, sym, syms)
            if not comp.pins:
                continue
            total += 1
            expected = _expected(lib, sym, syms)
            if not _recognised(comp, expected):
                names = sorted({p.name or "~" for p in comp.pins.values()})
                misses.append(f"{lib}:{sym.name} expected {expected}, got {classify(comp)} "
                              f"({' '.join(names)})")
    fraction = 1 - len(misses) / total
    print(f"\nrecognised {total - len(misses)} of {total} amplifier symbols ({fraction:.1%})")
    print("\n".join(misses))
    assert total > 300          # the three libraries hold about 380 symbols (kicad-symbols 9)
    assert fraction >= 0.98, "\n".join(misses)

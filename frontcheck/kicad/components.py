"""The component list of a netlist: one Component per reference, however many units and
sheet instances place it, with fields as KiCad's export lists them."""

from __future__ import annotations

import re

from frontcheck.kicad.hierarchy import SheetInstance
from frontcheck.kicad.netnames import natural_key_for, pin_display_name
from frontcheck.kicad.schematic import LibSymbol, PlacedSymbol, Schematic
from frontcheck.netlist import Component, Location, Pin

__all__ = ["ComponentTable", "resolve_vars"]


def resolve_vars(text: str, variables: dict[str, str]) -> str:
    """``${NAME}`` text variables of the project replaced; unknown ones kept as written."""
    if "${" not in text or not variables:
        return text
    return re.sub(r"\$\{([^}]*)\}", lambda m: variables.get(m.group(1), m.group(0)), text)


class ComponentTable:
    def __init__(self, variables: dict[str, str], notes: list[str]):
        self.variables = variables
        self.notes = notes
        self.components: dict[str, Component] = {}
        self.units: dict[str, dict[int, str]] = {}      # ref -> unit -> placing symbol
        self.order: list[tuple[int, str]] = []          # (sheet instance, ref)
        # (library symbol, unit, body style, file version) -> (number, name, type, unit) of
        # each pin of the placed unit
        self.pin_specs: dict[tuple, list[tuple]] = {}

    def add(self, ref: str, unit: int, sym: PlacedSymbol, lib: LibSymbol | None,
            sch: Schematic, inst: SheetInstance, ii: int) -> None:
        comp = self.components.get(ref)
        if comp is None:
            comp = self._new(ref, sym, sch, inst, ii)
        else:
            self._another_unit(comp, ref, unit, sym, sch, inst)
        self.units[ref][unit] = sym.uuid + inst.path
        if lib is None:
            return
        placed = (id(lib), unit, sym.body_style, sch.version)
        specs = self.pin_specs.get(placed)
        if specs is None:
            specs = self.pin_specs[placed] = [
                (p.number, pin_display_name(p.name, sch.version), p.type, p.unit)
                for p in lib.pins_for(unit, sym.body_style, sch.version)]
        pins = comp.pins
        for number, name, ptype, punit in specs:
            if number not in pins:
                pins[number] = Pin(number, name, ptype, punit)

    def _new(self, ref, sym, sch, inst, ii) -> Component:
        variables = self.variables
        if variables:
            fields = {k: resolve_vars(v, variables) if "${" in v else v
                      for k, v in sym.fields.items()}
        else:
            fields = dict(sym.fields)       # no text variables: nothing to replace
        # the instance's reference, not the property (docs/kicad-connectivity.md sec. 4)
        fields["Reference"] = ref
        fields.setdefault("Description", "")  # KiCad's export always lists it
        if fields.get("Datasheet") == "~":   # KiCad's spelling of "no datasheet"
            fields["Datasheet"] = ""
        # positional (keywords cost twice as much, for every part of a large design):
        # ref, value, lib_id, footprint, fields, pins, dnp, in_bom, exclude_from_sim,
        # sheet_path, uuids, location
        comp = Component(ref, fields.get("Value", ""), sym.lib_id, fields.get("Footprint", ""),
                         fields, {}, sym.dnp, sym.in_bom, sym.exclude_from_sim, inst.path,
                         (sym.uuid,), Location(sch.file, sym.line))
        self.components[ref] = comp
        self.units[ref] = {}
        self.order.append((ii, ref))
        if ref.endswith("?"):
            self.notes.append(f"{ref} is not annotated ({sch.file}:{sym.line}); annotate the "
                              "schematic in KiCad so every part has a unique reference")
        return comp

    def _another_unit(self, comp, ref, unit, sym, sch, inst) -> None:
        units = self.units[ref]
        if unit in units and units[unit] != sym.uuid + inst.path:
            self.notes.append(f"duplicate reference {ref} (unit {unit}) in "
                              f"{sch.file}:{sym.line}")
        elif comp.lib_id != sym.lib_id:
            self.notes.append(f"duplicate reference {ref}: {comp.lib_id} and {sym.lib_id}")
        comp.uuids = comp.uuids + (sym.uuid,)
        comp.dnp = comp.dnp or sym.dnp
        # The first placed unit (lowest unit number) gives the location and fields.
        if unit < min(units, default=unit + 1):
            comp.location = Location(sch.file, sym.line)
            for k, v in sym.fields.items():
                comp.fields.setdefault(k, resolve_vars(v, self.variables))

    def ordered(self) -> dict[str, Component]:
        """Grouped by sheet instance (root first), natural order within a sheet
        (docs/kicad-connectivity.md sec. 7)."""
        key = natural_key_for([t[1] for t in self.order])
        return {ref: self.components[ref]
                for _, ref in sorted(self.order, key=lambda t: (t[0], key(t[1])))}

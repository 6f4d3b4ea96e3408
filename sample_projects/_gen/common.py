"""Shorthands the sample sheets share: parts with their fields, rails and supply entry."""

from __future__ import annotations

from .schematic import Part, Pt, Sheet


def res(sh: Sheet, ref, value: str, tol: str, at: Pt, horizontal: bool = False, text: str | None = None,
        **kw) -> Part:
    """A resistor with a Tolerance field shown beside its value."""
    return sh.add("R", ref, value, at, angle=90 if horizontal else 0, fields={"Tolerance": tol},
                  show=("Tolerance",), text_at=text or ("above" if horizontal else "right"), **kw)


def cap(sh: Sheet, ref, value: str, tol: str, at: Pt, horizontal: bool = False, text: str | None = None,
        **kw) -> Part:
    return sh.add("C", ref, value, at, angle=90 if horizontal else 0, fields={"Tolerance": tol},
                  show=("Tolerance",), text_at=text or ("above" if horizontal else "right"), **kw)


def opamp(sh: Sheet, ref, cls: str, at: Pt, unit: int = 1, dual: bool = True, mirror: str | None = None,
          text: str | tuple = "above", targets: dict[str, str] | None = None, **kw) -> Part:
    """An op-amp unit; its class field is drawn, its declared targets (if any) are fields too."""
    fields = {"Op-amp class": cls}
    fields.update(targets or {})
    show = ("Op-amp class",) if unit != 3 else ()   # the power unit shows only its reference
    return sh.add("OPAMP_DUAL" if dual else "OPAMP", ref, "generic op-amp", at, unit=unit, mirror=mirror,
                  fields=fields, show=show, hide_value=True, text_at=text, **kw)


def targets_note(ref: str, t: dict[str, str]) -> str:
    return f"Declared on {ref}:\n" + "\n".join(f"  {k}: {v}" for k, v in t.items())

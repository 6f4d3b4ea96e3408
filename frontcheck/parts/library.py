"""The part library: which class a component belongs to, and its numbers, each with its source."""

from __future__ import annotations

from pathlib import Path

from frontcheck import component
from frontcheck.circuit import OpAmpModel, Sourced
from frontcheck.component import OpAmpUnitPins
from frontcheck.errors import InputError
from frontcheck.netlist import Component
from frontcheck.parts.files import PartFiles, PartMatch
from frontcheck.parts.models import (BUDGET_ATTR, BUDGET_KEYS, CLASS_FIELDS, EXAMPLES,
                                     FIELD_NAMES, NUMBER_KEYS, OPAMP_KEYS, QUANTITY, DiffAmpModel, InAmpModel,
                                     NetworkModel, PartClass)
from frontcheck.parts.numbers import check_range, parse_text

__all__ = ["PartLibrary"]

# the class fields' names in lower case: a part without any of them has no class field
_CLASS_FIELDS_LOWER = frozenset(n.lower() for n in CLASS_FIELDS)


class PartLibrary:
    """Shipped classes plus the project's part data; answers what a component is and gives
    its model. Build it with :meth:`load`."""

    def __init__(self, classes: dict[str, PartClass] | None = None,
                 matches: list[PartMatch] | None = None,
                 default_opamp_class: str | None = None,
                 files: list[str] | None = None):
        self.classes: dict[str, PartClass] = classes or {}
        self.matches: list[PartMatch] = matches or []
        self.default_opamp_class = default_opamp_class
        self.files: list[str] = files or []

    @classmethod
    def load(cls, project_dir: Path | None, extra_file: Path | None = None, config=None,
             default_opamp_class: str | None = None) -> "PartLibrary":
        """Shipped classes + the project's part data (see :meth:`PartFiles.read`)."""
        files = PartFiles()
        files.read(project_dir, extra_file, config, default_opamp_class)
        return cls(files.classes, files.matches, files.default_opamp_class, files.files)

    # ---- which class ---------------------------------------------------------------------

    def _class_field(self, c: Component) -> tuple[str, str] | None:
        if _CLASS_FIELDS_LOWER.isdisjoint(map(str.lower, c.fields)):
            return None             # most parts: no class field at all
        lower = {k.lower(): k for k in c.fields}
        for n in CLASS_FIELDS:
            k = lower.get(n.lower())
            if k is not None and c.fields[k].strip():
                return k, c.fields[k].strip()
        return None

    def class_of(self, c: Component) -> tuple[PartClass | None, PartMatch | None, str]:
        """(class, matching project entry, how the class was chosen). The class comes from a
        class field, else the first matching project entry; either may be None."""
        m = next((m for m in self.matches if m.matches(c)), None) if self.matches else None
        f = self._class_field(c)
        if f is not None:
            key, name = f
            pc = self.classes.get(name)
            if pc is None:
                loc = c.location
                raise InputError(f"{c.ref}: field '{key}' names unknown part class {name!r}",
                                 file=loc.file if loc else None, line=loc.line if loc else None,
                                 hint="known classes: " + ", ".join(sorted(self.classes)))
            return pc, m, f"field '{key}'"
        if m is not None and m.cls is not None:
            return self.classes[m.cls], m, m.where
        return None, m, ""

    def classify(self, c: Component) -> str:
        """As :func:`classify`, but part data decides first: a component mapped to an in-amp,
        difference-amp, op-amp or network class is that kind."""
        try:
            pc, _, _ = self.class_of(c)
        except InputError:
            pc = None
        if pc is not None:
            return "network" if pc.kind == "network" else pc.kind
        return component.classify(c)

    def looks_like_inamp(self, c: Component) -> bool:
        return component.looks_like_inamp(c)

    # ---- numbers -------------------------------------------------------------------------

    def _numbers(self, c: Component, kind: str, pc: PartClass | None, m: PartMatch | None,
                 how: str, default: bool) -> dict[str, Sourced]:
        """Every known number of ``kind`` for ``c``, field > project > class (> default)."""
        out: dict[str, Sourced] = {}
        if pc is not None:
            for k, v in pc.numbers.items():
                if k not in NUMBER_KEYS[kind]:
                    continue
                if default:
                    out[k] = Sourced(v, "default", f"class {pc.name} ([defaults] opamp_class)")
                elif k in pc.project_keys:
                    out[k] = Sourced(v, "project", f"class {pc.name} (project part data)")
                else:
                    out[k] = Sourced(v, "class", f"class {pc.name}")
        if m is not None:
            for k, v in m.numbers.items():
                if k in NUMBER_KEYS[kind]:
                    out[k] = Sourced(v, "project", m.where)
        lower = {k.lower(): k for k in c.fields}
        for k in NUMBER_KEYS[kind]:
            for fname in FIELD_NAMES[k]:
                key = lower.get(fname.lower())
                if key is None or not c.fields[key].strip():
                    continue
                text = c.fields[key]
                try:
                    v = parse_text(k, text)
                    check_range(k, v)
                except ValueError as e:
                    loc = c.location
                    raise InputError(f"{c.ref}: field '{key}' = '{text}': {e}",
                                     file=loc.file if loc else None, line=loc.line if loc else None,
                                     hint=f"write the '{key}' field like {EXAMPLES[QUANTITY[k]]}") from None
                out[k] = Sourced(v, "field", f"{key} field of {c.ref}")
                break
        return out

    def _opamp_from(self, name: str, nums: dict[str, Sourced]) -> OpAmpModel | None:
        """The numbers part data gives (the others stay None: ideal in the figures, see
        OpAmpModel); None when it gives none."""
        attrs = {k for k, _ in OpAmpModel.NUMBERS}
        given = {BUDGET_ATTR.get(k, k): v for k, v in nums.items()
                 if BUDGET_ATTR.get(k, k) in attrs}
        return OpAmpModel(name, **given) if given else None

    def opamp_model(self, c: Component) -> OpAmpModel | None:
        """Op-amp numbers for ``c``, each Sourced ('field', 'project', 'class' or 'default').

        Without a class from a field or project entry, the default class gives them (source
        'default'); symbol fields and project numbers still override single numbers. None
        only when the library was built without a default class and nothing gives a full set,
        or when ``c`` is mapped to a class of another kind."""
        pc, m, how = self.class_of(c)
        if pc is not None and pc.kind != "opamp":
            return None
        default = pc is None
        if default and self.default_opamp_class:
            pc = self.classes[self.default_opamp_class]
        nums = self._numbers(c, "opamp", pc, m, how, default)
        name = pc.name if pc is not None else "part data"
        return self._opamp_from(name, nums)

    def inamp_model(self, c: Component) -> InAmpModel | None:
        """In-amp numbers for ``c``, or None when no part data names an in-amp class or gives
        in-amp numbers (then recognition reports the part, see :func:`looks_like_inamp`).
        ``missing`` lists the numbers the architecture needs and nobody gave."""
        pc, m, how = self.class_of(c)
        if pc is not None and pc.kind != "inamp":
            return None
        nums = self._numbers(c, "inamp", pc, m, how, False)
        arch = (m.text.get("arch") if m else None) or (pc.text.get("arch") if pc else None) or "rg-pair"
        if pc is None and not (m and m.numbers) and not any(
                s.source == "field" for k, s in nums.items() if k not in OPAMP_KEYS):
            return None
        name = pc.name if pc is not None else "part data"
        r_ref = nums.get("r_ref")
        if r_ref is None and "r_stage2" in nums:
            g2 = nums.get("g2", Sourced(1.0, "class", "unity difference stage"))
            rs = nums["r_stage2"]
            r_ref = Sourced(rs.value * g2.value, rs.source, f"{rs.detail} x stage-2 gain")
        need = ("k", "r_stage2") if arch == "rg-pair" else ("g0", "r_in")
        missing = tuple(k for k in need if k not in nums)
        return InAmpModel(
            name=name, arch=arch, k=nums.get("k"), k_tol=nums.get("k_tol"), g0=nums.get("g0"),
            r_stage2=nums.get("r_stage2"), g2=nums.get("g2"), r_ref=r_ref,
            ratio_tol=nums.get("ratio_tol"), r_in=nums.get("r_in"), cmrr_db=nums.get("cmrr_db"),
            opamp=self._opamp_from(name, nums), missing=missing)

    def diffamp_model(self, c: Component) -> DiffAmpModel | None:
        """Difference-amp numbers for ``c``, or None without part data (as :meth:`inamp_model`)."""
        pc, m, how = self.class_of(c)
        if pc is not None and pc.kind != "diffamp":
            return None
        nums = self._numbers(c, "diffamp", pc, m, how, False)
        if pc is None and not (m and m.numbers) and not any(
                s.source == "field" for k, s in nums.items() if k not in OPAMP_KEYS):
            return None
        name = pc.name if pc is not None else "part data"
        missing = tuple(k for k in ("gain", "r_in") if k not in nums)
        return DiffAmpModel(name=name, gain=nums.get("gain"), r_in=nums.get("r_in"),
                            ratio_tol=nums.get("ratio_tol"), abs_tol=nums.get("abs_tol"),
                            cmrr_db=nums.get("cmrr_db"), opamp=self._opamp_from(name, nums),
                            missing=missing)

    def network_model(self, c: Component) -> NetworkModel | None:
        """Tolerances of a resistor network: class numbers overridden by project entries and
        by a 'Ratio Tolerance'/'Matching'/'Match' field; None without any."""
        pc, m, how = self.class_of(c)
        if pc is not None and pc.kind != "network":
            return None
        nums = self._numbers(c, "network", pc, m, how, False)
        if not nums:
            return None
        return NetworkModel(pc.name if pc else "part data", nums.get("abs_tol"), nums.get("ratio_tol"),
                            nums.get("tcr"), nums.get("tcr_tracking"))

    def opamp_units(self, c: Component) -> list[OpAmpUnitPins]:
        return component.opamp_units(c)
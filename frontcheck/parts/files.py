"""Reading part data files: the shipped classes (``rules/parts/*.toml``), the project's part
file and the ``[parts]`` table of ``frontcheck.toml``, with file and line for every error."""

from __future__ import annotations

import fnmatch
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from frontcheck.errors import InputError
from frontcheck.netlist import Component
from frontcheck.profiles import shipped_dir
from frontcheck.parts.models import (ARCH_NAMES, EXAMPLES, KINDS, NUMBER_KEYS, PART_FILE, QUANTITY,
                                     PartClass)
from frontcheck.parts.numbers import toml_number

__all__ = ["PartFiles", "PartMatch"]


def _shipped_dirs() -> list[Path]:
    return [shipped_dir("parts")]


def _lines_for(text: str):
    from frontcheck.config import _Lines
    return _Lines(text)


class _Source:
    """A TOML document with its file name and key lines, for located errors."""

    def __init__(self, doc: dict, file: str, lines, prefix: str = "", origin: str = "project"):
        self.doc, self.file, self.lines, self.prefix = doc, file, lines, prefix
        self.origin = origin      # 'class' for shipped files, 'project' for the project's

    def line(self, table: str, key: str | None = None) -> int | None:
        t = f"{self.prefix}{table}" if self.prefix else table
        return self.lines.line_of(t, key) if self.lines else None

    def error(self, message: str, table: str, key: str | None = None, hint: str = "",
              line: int | None = None) -> InputError:
        return InputError(message, file=self.file, line=line or self.line(table, key),
                          hint=hint or "see rules/parts/*.toml for the format")


# --------------------------------------------------------------------------------------------
# The library

@dataclass
class _Match:
    patterns: dict[str, str]
    cls: str | None
    numbers: dict[str, float]
    text: dict[str, str]
    where: str
    file: str
    line: int | None

    def matches(self, c: Component) -> bool:
        for what, pat in self.patterns.items():
            subject = {"value": c.value or c.fields.get("Value", ""), "lib_id": c.lib_id,
                       "ref": c.ref}[what]
            if not fnmatch.fnmatchcase((subject or "").lower(), pat.lower()):
                return False
        return True


class PartFiles:
    """Classes, [[match]] entries and file names read from every part data source."""

    def __init__(self) -> None:
        self.classes: dict[str, PartClass] = {}
        self.matches: list[_Match] = []
        self.files: list[str] = []
        self.default_opamp_class: str | None = None

    def read(self, project_dir: Path | None, extra_file: Path | None = None, config=None,
             default_opamp_class: str | None = None) -> None:
        """Shipped classes + ``project_dir/frontcheck-parts.toml`` + ``[parts]`` of the
        project's ``frontcheck.toml`` (from ``config`` when given, else read here) +
        ``extra_file``; later sources override earlier ones key by key.

        ``default_opamp_class``: class for op-amps without part data; None takes
        ``config.default_opamp_class`` (built in: 'none'). ``""`` or ``"none"`` gives such
        op-amps no model at all (recognition then treats them as ideal and says so).

        Raises InputError (file, line) for unreadable TOML, unknown kinds or keys, bad numbers,
        unknown classes and circular ``base`` chains.
        """
        raw: list[tuple[str, str, dict, _Source]] = []   # (kind, name, table, source)
        self._read_shipped(raw)
        for doc, src in self._project_sources(project_dir, extra_file, config):
            self._collect(doc, src, raw, allow_match=True)
            if src.file not in self.files:
                self.files.append(src.file)
        self._resolve(raw)
        for m in self.matches:
            if m.cls is not None and m.cls not in self.classes:
                raise InputError(f"unknown part class {m.cls!r}", file=m.file, line=m.line,
                                 hint="known classes: " + ", ".join(sorted(self.classes)))
        self._default_class(config, default_opamp_class)

    def _read_shipped(self, raw: list[tuple[str, str, dict, _Source]]) -> None:
        from frontcheck.config import load_toml

        shipped_found = False
        for d in _shipped_dirs():
            if d.is_dir() and any(d.glob("*.toml")):
                for f in sorted(d.glob("*.toml")):
                    doc, text = load_toml(f)
                    src = _Source(doc, str(f), _lines_for(text), origin="class")
                    self._collect(doc, src, raw, allow_match=False)
                    self.files.append(str(f))
                shipped_found = True
                break
        if not shipped_found:   # pragma: no cover - a broken installation
            raise InputError("frontcheck's generic part classes are missing",
                             hint="reinstall frontcheck (its part classes come from rules/parts)")

    def _project_sources(self, project_dir: Path | None, extra_file: Path | None,
                         config) -> list[tuple[dict, _Source]]:
        from frontcheck.config import CONFIG_NAME, load_toml

        sources: list[tuple[dict, _Source]] = []
        if project_dir is not None and (Path(project_dir) / PART_FILE).is_file():
            f = Path(project_dir) / PART_FILE
            doc, text = load_toml(f)
            sources.append((doc, _Source(doc, str(f), _lines_for(text))))
        cfg_parts, cfg_src = None, None
        if config is not None:
            cfg_parts = getattr(config, "parts", None) or None
            if cfg_parts:
                cfg_src = _Source(cfg_parts, str(config.config_path or CONFIG_NAME),
                                  getattr(config, "_lines", None), prefix="parts.")
        elif project_dir is not None and (Path(project_dir) / CONFIG_NAME).is_file():
            doc, text = load_toml(Path(project_dir) / CONFIG_NAME)
            if doc.get("parts"):
                cfg_parts = doc["parts"]
                if not isinstance(cfg_parts, dict):
                    raise InputError("[parts] must be a table", file=str(Path(project_dir) / CONFIG_NAME),
                                     hint='[[parts.match]] value = "AMP-7*"  class = "zero-drift"')
                cfg_src = _Source(cfg_parts, str(Path(project_dir) / CONFIG_NAME),
                                  _lines_for(text), prefix="parts.")
        if cfg_parts:
            sources.append((cfg_parts, cfg_src))
        if extra_file is not None:
            f = Path(extra_file)
            if not f.is_file():
                raise InputError("part file not found", file=str(f),
                                 hint=f"give an existing .toml part file ({PART_FILE} format)")
            doc, text = load_toml(f)
            sources.append((doc, _Source(doc, str(f), _lines_for(text))))
        return sources

    def _default_class(self, config, default_opamp_class: str | None) -> None:
        if default_opamp_class is None:
            dc = getattr(config, "default_opamp_class", "") if config is not None else ""
            default_opamp_class = dc if isinstance(dc, str) else ""
        if default_opamp_class.lower() == "none":
            default_opamp_class = ""
        if default_opamp_class:
            k = self.classes.get(default_opamp_class)
            if k is None or k.kind != "opamp":
                raise InputError(f"default op-amp class {default_opamp_class!r} is not an op-amp class",
                                 file=str(config.config_path) if config is not None and
                                 getattr(config, "config_path", None) else None,
                                 hint="op-amp classes: " + ", ".join(
                                     sorted(n for n, c in self.classes.items() if c.kind == "opamp")))
        self.default_opamp_class = default_opamp_class or None

    def _collect(self, doc: dict, src: _Source, raw: list[tuple[str, str, dict, _Source]],
                 allow_match: bool) -> None:
        for top, body in doc.items():
            if top == "match" and allow_match:
                if not isinstance(body, list):
                    raise src.error("match must be [[match]] entries", "match",
                                    hint='[[match]] value = "AMP-7*"  class = "zero-drift"')
                for i, entry in enumerate(body):
                    self.matches.append(self._match(entry, src, i))
                continue
            if top not in KINDS:
                raise src.error(f"unknown table [{src.prefix}{top}]", top,
                                hint=f"part data tables: {', '.join(KINDS)}" +
                                (", and [[match]] entries" if allow_match else ""),
                                line=src.line(top) or src.line("", top))
            if not isinstance(body, dict):
                raise src.error(f"[{src.prefix}{top}] must hold [{top}.<class-name>] tables", top)
            for name, table in body.items():
                if not isinstance(table, dict):
                    raise src.error(f"[{src.prefix}{top}.{name}] must be a table", f"{top}.{name}")
                raw.append((top, name, table, src))

    def _match(self, entry: Any, src: _Source, index: int) -> _Match:
        line = src.lines.nth(f"{src.prefix}match", index) if src.lines else None
        example = '[[match]] value = "AMP-7*"  class = "zero-drift"'
        if not isinstance(entry, dict):
            raise src.error("a [[match]] entry must be a table", "match", hint=example, line=line)
        patterns = {k: entry[k] for k in ("value", "lib_id", "ref") if k in entry}
        if not patterns:
            raise src.error("a [[match]] entry needs value, lib_id or ref", "match",
                            hint=example, line=line)
        for k, v in patterns.items():
            if not isinstance(v, str) or not v:
                raise src.error(f"[[match]] {k} must be a pattern in quotes", "match",
                                hint=example, line=line)
        cls_name = entry.get("class")
        if cls_name is not None and not isinstance(cls_name, str):
            raise src.error("[[match]] class must be a class name", "match", hint=example, line=line)
        numbers: dict[str, float] = {}
        text: dict[str, str] = {}
        all_keys = {k for ks in NUMBER_KEYS.values() for k in ks}
        for k, v in entry.items():
            if k in ("value", "lib_id", "ref", "class"):
                continue
            if k == "aol_db":
                k, v = "aol", (f"{v} dB" if isinstance(v, (int, float)) and not isinstance(v, bool) else v)
            if k == "arch":
                if v not in ARCH_NAMES:
                    raise src.error(f"arch must be one of {', '.join(ARCH_NAMES)}", "match", hint=example,
                                    line=line)
                text[k] = ARCH_NAMES[v]
                continue
            if k not in all_keys:
                raise src.error(f"unknown key {k!r} in a [[match]] entry", "match", line=line,
                                hint="keys: value, lib_id, ref, class, " + ", ".join(sorted(all_keys)))
            try:
                numbers[k] = toml_number(k, v)
            except ValueError as e:
                raise src.error(f"[[match]] {k} = {v!r}: {e}", "match", line=line,
                                hint=f"e.g. {k} = {EXAMPLES[QUANTITY[k]].split(' or ')[0]}") from None
        desc = " ".join(f"{k} '{v}'" for k, v in patterns.items())
        return _Match(patterns, cls_name, numbers, text, f"{Path(src.file).name} match {desc}",
                      src.file, line)

    def _resolve(self, raw: list[tuple[str, str, dict, _Source]]) -> None:
        """Turn raw tables into PartClass objects: a later table of the same name overrides
        an earlier one key by key (a project table over a shipped class); ``base`` inherits
        every key not given from another class of the same kind."""
        merged: dict[str, tuple[str, dict[str, tuple[Any, _Source]], str]] = {}
        for kind, name, table, src in raw:
            if name in merged and merged[name][0] != kind:
                raise src.error(f"class {name!r} is defined as {merged[name][0]} and as {kind}",
                                f"{kind}.{name}", hint="give each class one kind and a unique name")
            kind_, entry, origin = merged.setdefault(name, (kind, {}, src.origin))
            for k, v in table.items():
                entry[k] = (v, src)

        def build(name: str, seen: tuple[str, ...]) -> PartClass:
            if name in self.classes:
                return self.classes[name]
            kind, entry, origin = merged[name]
            numbers: dict[str, float] = {}
            text: dict[str, str] = {}
            project_keys: set[str] = set()
            if "base" in entry:
                bname, bsrc = entry["base"]
                if not isinstance(bname, str) or bname not in merged:
                    raise bsrc.error(f"class {name!r}: unknown base {bname!r}", f"{kind}.{name}",
                                     "base", hint="known classes: " + ", ".join(sorted(merged)))
                if bname in seen:
                    raise bsrc.error(f"class {name!r}: circular base chain "
                                     f"{' -> '.join((*seen, bname))}", f"{kind}.{name}", "base",
                                     hint="a class may not inherit from itself")
                b = build(bname, (*seen, bname))
                if b.kind != kind:
                    raise bsrc.error(f"class {name!r} ({kind}) cannot inherit from {bname!r} "
                                     f"({b.kind})", f"{kind}.{name}", "base",
                                     hint="use a base of the same kind")
                numbers.update(b.numbers)
                text.update({k: v for k, v in b.text.items() if k != "description"})
                project_keys |= b.project_keys
            allowed = set(NUMBER_KEYS[kind])
            for k, (v, src) in entry.items():
                if k == "base":
                    continue
                if k == "description":
                    if not isinstance(v, str):
                        raise src.error(f"{k} must be text", f"{kind}.{name}", k)
                    text[k] = v
                    continue
                if k == "arch":
                    if kind != "inamp" or v not in ARCH_NAMES:
                        raise src.error(f"arch must be one of {', '.join(ARCH_NAMES)} (in-amps only)",
                                        f"{kind}.{name}", k)
                    text[k] = ARCH_NAMES[v]
                    continue
                k2, v2 = k, v
                if k == "aol_db" and kind != "network":
                    k2 = "aol"
                    if isinstance(v, (int, float)) and not isinstance(v, bool):
                        v2 = f"{v} dB"
                if k2 not in allowed:
                    raise src.error(f"unknown key {k!r} in [{src.prefix}{kind}.{name}]",
                                    f"{kind}.{name}", k,
                                    hint=f"keys of a {kind} class: {', '.join(NUMBER_KEYS[kind])}, "
                                         "description, base" + (", arch" if kind == "inamp" else ""))
                try:
                    numbers[k2] = toml_number(k2, v2)
                except ValueError as e:
                    raise src.error(f"[{src.prefix}{kind}.{name}] {k} = {v!r}: {e}",
                                    f"{kind}.{name}", k,
                                    hint=f"e.g. {k2} = {EXAMPLES[QUANTITY[k2]].split(' or ')[0]}") from None
                if src.origin == "project":
                    project_keys.add(k2)
                else:
                    project_keys.discard(k2)
            files = sorted({src.file for _, src in entry.values()})
            pc = PartClass(name, kind, numbers, text, origin, ", ".join(files),
                           frozenset(project_keys))
            self.classes[name] = pc
            return pc

        for name in merged:
            build(name, (name,))

    # ---- which class ---------------------------------------------------------------------

PartMatch = _Match

"""Waivers, fingerprints and baselines: which findings a project has accepted or already knows.

Waivers say "this finding is acceptable, and why". Two places hold them:

* a field on a component: name ``Waive`` (also ``Waive 2``, ``Waive-ref`` ...: any field whose
  name starts with "waive"), value ``<rule-id>[, <rule-id>...]: <reason>``, e.g.
  ``ref-impedance: buffered on the carrier board``. It covers findings of those rules that
  name the component, and, when the component is one of a stage's amplifiers, every finding
  of those rules on that stage;
* ``[[waive]]`` entries in ``frontcheck.toml`` (rule, optional references / stage, reason),
  read by frontcheck.config.

A waived finding stays in every report, marked with its reason, and never fails the run.

A fingerprint names a finding across runs: the rule id plus the UUID of the offending symbol
(stable when parts are re-annotated or moved), else the stage and references. A baseline file
(``frontcheck baseline PATH -o FILE``) records today's fingerprints; ``check --baseline FILE``
then fails only on findings that are not in it.
"""

from __future__ import annotations

import hashlib
import itertools
import json
import re
from dataclasses import dataclass
from pathlib import Path

from .checks.finding import Finding
from .errors import InputError

BASELINE_KIND = "frontcheck-baseline"
BASELINE_SCHEMA = 1
_FIELD = re.compile(r"^\s*waive", re.I)
_ANY_FIELD = re.compile(r"^\s*waive", re.I | re.M)    # in names joined by line feeds
_RULE_ID = re.compile(r"^[a-z0-9][a-z0-9-]*$")


@dataclass(frozen=True)
class FieldWaiver:
    ref: str
    rules: tuple[str, ...]
    reason: str
    file: str | None = None
    line: int | None = None


def _known_rules() -> set[str] | None:
    try:
        from .checks import rule_ids
        return set(rule_ids())
    except Exception:       # registry unavailable: accept any well-formed id
        return None


def field_waivers(netlist) -> list[FieldWaiver]:
    """Every ``Waive`` field on the design's components.

    Raises
    ------
    InputError
        A waive field without a rule id, without a reason, or naming an unknown rule; it
        points at the component's sheet and line.
    """
    names = "\n".join(itertools.chain.from_iterable(c.fields for c in netlist.components.values()))
    if not _ANY_FIELD.search(names):
        return []                   # one search of every field name: most designs waive nothing
    known = _known_rules()
    out: list[FieldWaiver] = []
    for ref, comp in netlist.components.items():
        for name, value in comp.fields.items():
            if not _FIELD.match(name) or not str(value).strip():
                continue
            loc = comp.location
            file, line = (loc.file, loc.line) if loc else (netlist.source or None, None)
            example = f'{name} = "ref-impedance: buffered on the carrier board"'
            head, sep, reason = str(value).partition(":")
            rules = tuple(r.strip() for r in head.split(",") if r.strip())
            if not sep or not rules:
                raise InputError(f"{ref}: field {name!r} = {value!r} names no rule",
                                 file=file, line=line,
                                 hint=f"write '<rule-id>: <reason>', e.g. {example}")
            if not reason.strip():
                raise InputError(f"{ref}: waiver of {', '.join(rules)} gives no reason",
                                 file=file, line=line,
                                 hint=f"every waiver says why the finding is acceptable: {example}")
            for r in rules:
                if not _RULE_ID.match(r) or (known is not None and r not in known):
                    listed = f" (rules: {', '.join(sorted(known))})" if known else ""
                    raise InputError(f"{ref}: field {name!r} waives unknown rule {r!r}",
                                     file=file, line=line,
                                     hint=f"use a rule id from `frontcheck rules`{listed}")
            out.append(FieldWaiver(ref, rules, reason.strip(), file, line))
    return out


def check_waivers(config) -> None:
    """Every ``[[waive]]`` entry of the project file names a rule that exists: a waiver of a
    misspelt rule would otherwise waive nothing, in silence.

    Raises
    ------
    InputError
        Naming the file, the entry's line and the rule, with the rule ids that exist.
    """
    known = _known_rules()
    if known is None or config is None:
        return
    for w in getattr(config, "waivers", ()):
        if w.rule not in known:
            raise InputError(f"[[waive]] rule = {w.rule!r}: no such rule", file=w.file,
                             line=w.line, hint=f"use a rule id from `frontcheck rules`: "
                                               f"{', '.join(sorted(known))}")


def _amplifier_refs(stage) -> set[str]:
    refs = {op.ref for op in stage.circuit.opamps if not op.internal}
    refs |= {a for a in stage.amplifiers}
    # integrated amplifiers are named by their reference in ``amplifiers``
    return refs


def apply_waivers(findings: list[Finding], stages, netlist=None, config=None) -> None:
    """Mark findings covered by a waiver (``Finding.waived`` = the reason), in place.

    Field waivers are tried first (they sit on the part itself), then the project file's.
    A finding already marked keeps its reason.
    """
    by_stage = {s.id: s for s in stages}
    fws = field_waivers(netlist) if netlist is not None else []
    for f in findings:
        if f.waived:
            continue
        stage = by_stage.get(f.stage) if f.stage else None
        amps = _amplifier_refs(stage) if stage is not None else set()
        for w in fws:
            if f.rule in w.rules and (w.ref in f.references or w.ref in amps):
                f.waived = f"{w.reason} (Waive field on {w.ref})"
                break
        if f.waived or config is None:
            continue
        w = config.waived(f.rule, f.stage, tuple(f.references))
        if w is not None:
            where = "frontcheck.toml" + (f":{w.line}" if w.line else "")
            f.waived = f"{w.reason} ({where})"


# -- fingerprints ---------------------------------------------------------------------------

def _instances(netlist) -> dict[str, list[tuple[str, str]]]:
    """Symbol UUID -> [(reference, sheet path)]: a sheet used several times places the same
    symbol UUID once per sheet instance, each with its own reference and sheet path."""
    out: dict[str, list[tuple[str, str]]] = {}
    if netlist is None:
        return out
    for ref, c in netlist.components.items():
        for u in c.uuids:
            out.setdefault(u, []).append((ref, c.sheet_path))
    return out


def _key(f: Finding, project: str, instances: dict[str, list[tuple[str, str]]]) -> str:
    if f.uuid:
        where = ""
        placed = instances.get(f.uuid, [])
        if len(placed) > 1:
            # the sheet instance (its path, e.g. '/Channel 2/') tells the copies apart and
            # survives re-annotation, unlike the reference
            refs = set(f.references) | ({f.stage} if f.stage else set())
            starts = {r[:i] for r in refs for i in range(len(r) + 1)}   # what a ref may begin
            hit = [sp for ref, sp in placed if ref in starts]
            where = hit[0] if len(hit) == 1 else ""
        return f"{f.rule}\x00uuid\x00{f.uuid}\x00{where}"
    return f"{f.rule}\x00{project}\x00{f.stage or ''}\x00{','.join(sorted(f.references))}"


def fingerprints(findings: list[Finding], project: str = "", netlist=None) -> list[str]:
    """One stable fingerprint per finding, in order.

    The key is the rule id and the offending symbol's UUID (plus its sheet instance when the
    sheet is used more than once); without a UUID (netlist files without them), the stage and
    references. Two findings with one key (e.g. both inputs of one amplifier) are told apart
    by their order of appearance, which the rule registry keeps fixed.
    """
    instances = _instances(netlist)
    seen: dict[str, int] = {}
    out = []
    for f in findings:
        k = _key(f, project, instances)
        n = seen.get(k, 0)
        seen[k] = n + 1
        digest = hashlib.sha256(f"{k}\x00{n}".encode()).hexdigest()[:32]
        out.append(digest)
    return out


# -- baseline files -------------------------------------------------------------------------

def baseline_document(report) -> dict:
    """The baseline of a Report: every finding's fingerprint with enough context to read it."""
    entries = []
    for p in report.projects:
        for i, f in enumerate(p.findings):
            entries.append({"fingerprint": p.fingerprint(i), "rule": f.rule,
                            "project": p.name, "stage": f.stage,
                            "references": list(f.references), "message": f.message})
    return {"schema": BASELINE_SCHEMA, "kind": BASELINE_KIND,
            "tool": {k: report.tool.get(k) for k in ("name", "version")},
            "findings": entries}


def write_baseline(path: str | Path, report) -> int:
    """Write the baseline file; returns the number of findings recorded."""
    doc = baseline_document(report)
    try:
        Path(path).write_text(json.dumps(doc, indent=2) + "\n", encoding="utf-8")
    except OSError as e:
        raise InputError(f"cannot write the baseline: {e.strerror}", file=str(path),
                         hint="choose a writable path with -o") from None
    return len(doc["findings"])


def read_baseline(path: str | Path) -> set[str]:
    """The fingerprints recorded in a baseline file."""
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except OSError as e:
        raise InputError(f"cannot read the baseline: {e.strerror}", file=str(p),
                         hint="create one with `frontcheck baseline PATH -o FILE`") from None
    try:
        doc = json.loads(text)
    except RecursionError:
        raise InputError("baseline is nested too deeply to read", file=str(p),
                         hint="re-create it with `frontcheck baseline PATH -o FILE`") from None
    except json.JSONDecodeError as e:
        raise InputError(f"baseline is not JSON: {e.msg}", file=str(p), line=e.lineno,
                         column=e.colno,
                         hint="re-create it with `frontcheck baseline PATH -o FILE`") from None
    if not isinstance(doc, dict) or doc.get("kind") != BASELINE_KIND:
        raise InputError("not a frontcheck baseline file", file=str(p), line=1,
                         hint="create one with `frontcheck baseline PATH -o FILE`")
    if doc.get("schema") != BASELINE_SCHEMA:
        raise InputError(f"baseline schema {doc.get('schema')!r} is not supported "
                         f"(expected {BASELINE_SCHEMA})", file=str(p), line=1,
                         hint="re-create it with this version of frontcheck")
    entries = doc.get("findings")
    if not isinstance(entries, list):
        raise InputError("baseline has no findings list", file=str(p), line=1,
                         hint="re-create it with `frontcheck baseline PATH -o FILE`")
    out = set()
    for e in entries:
        fp = e.get("fingerprint") if isinstance(e, dict) else None
        if not isinstance(fp, str) or not fp:
            raise InputError("baseline entry without a fingerprint", file=str(p),
                             hint="re-create it with `frontcheck baseline PATH -o FILE`")
        out.add(fp)
    return out

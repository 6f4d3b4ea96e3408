"""What every reporter receives: one run's stages, results and findings, per project.

The pipeline (frontcheck.pipeline) fills a :class:`Report`; reporters (terminal, JSON, SARIF,
Markdown, HTML) only read it. Nothing here computes engineering numbers: the few helpers
below decide *status* (waived, known from a baseline, failing) so that every format and the
exit status agree on it.
"""

from __future__ import annotations

import functools
import os
import re
from dataclasses import dataclass, field

from ..circuit import Stage
from ..finding import SEVERITIES, Finding
from ..formatting import finite
from ..result import StageResult

# Said by every report format wherever a stage looks patient-connected or mains-connected.
# Why: users sign boards off with this tool, and a clean signal-chain report must never be
# read as a statement about electrical safety.
SAFETY_NOTICE = (
    "frontcheck checks signal-chain design rules. It does not check electrical safety, "
    "isolation, creepage, leakage currents or anything else that protects a person from a "
    "patient-connected or mains-referenced circuit. For those follow the applicable standards "
    "(for example IEC 60601-1 for medical electrical equipment, IEC 61010-1 for measurement "
    "equipment) and licensed engineering practice."
)

KIND_LABELS = {
    "difference": "difference amplifier",
    "three-opamp": "three-op-amp in-amp",
    "two-opamp": "two-op-amp in-amp",
    "diff-output": "in-amp input stage (differential output)",
    "composite": "composite in-amp (discrete first stage, integrated second stage)",
    "integrated-inamp": "integrated in-amp",
    "integrated-diffamp": "integrated difference amp",
}


def gain_scope(r) -> str:
    """What a stage's gain figure covers when it is not the whole stage: a composite front end
    whose integrated second stage has no part data states the first stage's G1 only."""
    chain = getattr(r, "composite", None)
    if chain and chain.get("total_gain") is None:
        return " (first stage G1; G2 needs part data)"
    return ""


def cmrr_scope(r) -> str:
    """What a stage's CMRR figure covers when it is not the whole stage (as :func:`gain_scope`):
    the first stage's differential output, whose CMRR the second stage's sets the chain's."""
    chain = getattr(r, "composite", None)
    if chain and chain.get("total_gain") is None:
        return f" (first stage; {chain['second_stage']['reference']} sets the chain's)"
    return ""


@functools.lru_cache(maxsize=16384)
def natural_key(name: str) -> tuple:
    """Sort key that orders digit runs by value: R5 before R10, U2A before U10."""
    return tuple((0, int(t), "") if t.isdigit() else (1, 0, t.lower())
                 for t in re.split(r"(\d+)", name) if t)


def natural(refs) -> list[str]:
    return sorted(refs, key=natural_key)


# a component reference or a stage id made of them (U101, U101.Rf1, U1A+U1B+U2)
_REFERENCE = re.compile(r"\b[A-Za-z]{1,4}\d+[A-Za-z]?(?:\.\w+)?(?:[+/][A-Za-z]{1,4}\d+[A-Za-z]?)*\b")


def same_fact(f: Finding) -> tuple:
    """What two info findings share when they say the same thing about different parts:
    the rule, the message and the fix with every component reference taken out."""
    return (f.rule, f.severity, _REFERENCE.sub("#", f.message), _REFERENCE.sub("#", f.fix or ""))


def severity_rank(severity: str) -> int:
    """0 info, 1 warning, 2 error; unknown severities rank as errors (never silently pass)."""
    try:
        return SEVERITIES.index(severity)
    except ValueError:
        return len(SEVERITIES) - 1


@dataclass
class ProjectReport:
    """One checked project (or netlist file)."""

    name: str                          # project name, e.g. 'bridge-amp'
    path: str                          # what the user named on the command line
    root: str = ""                     # directory that report paths are relative to
    profile: str = "default"           # rule profile used for this project
    stages: list[Stage] = field(default_factory=list)
    results: dict[str, StageResult] = field(default_factory=dict)   # by Stage.id
    findings: list[Finding] = field(default_factory=list)
    fingerprints: list[str] = field(default_factory=list)           # parallel to findings
    baselined: set[str] = field(default_factory=set)                # fingerprints already known
    notes: list[str] = field(default_factory=list)       # loader / recognition remarks
    near_misses: list[str] = field(default_factory=list)  # almost-stages, as sentences
    unsupported: list[str] = field(default_factory=list)  # amplifiers frontcheck cannot analyse
    # every op-amp unit and amplifier part once: {name, ref, kind, stage, reason}; reason says
    # in plain words why one is not a front-end stage (stage None)
    amplifiers: list[dict] = field(default_factory=list)
    cautions: dict[str, list[str]] = field(default_factory=dict)    # stage id ('' = project) -> why
    error: str | None = None           # input error text when this project could not be read
    symbols: int = 0                   # components read from the design (how much was seen)

    # -- status ---------------------------------------------------------------------------
    def fingerprint(self, i: int) -> str:
        return self.fingerprints[i] if i < len(self.fingerprints) else ""

    def in_baseline(self, i: int) -> bool:
        fp = self.fingerprint(i)
        return bool(fp) and fp in self.baselined

    def status(self, i: int) -> str:
        """'waived', 'baseline' (known before) or 'new'."""
        if self.findings[i].waived:
            return "waived"
        if self.in_baseline(i):
            return "baseline"
        return "new"

    def stage(self, stage_id: str | None) -> Stage | None:
        for s in self.stages:
            if s.id == stage_id:
                return s
        return None

    def findings_of(self, stage_id: str | None) -> list[tuple[int, Finding]]:
        return [(i, f) for i, f in enumerate(self.findings) if f.stage == stage_id]

    def findings_by_stage(self) -> dict[str | None, list[int]]:
        """The indices of every stage's findings in one pass (``[i for i, _ in
        findings_of(s)]`` for each s): a reporter that visits every stage stays linear in
        the findings, where asking findings_of per stage costs stages x findings."""
        by: dict[str | None, list[int]] = {}
        for i, f in enumerate(self.findings):
            by.setdefault(f.stage, []).append(i)
        return by

    def stages_by_id(self) -> dict[str, Stage]:
        """Each stage id with the stage :meth:`stage` finds for it (the first so named)."""
        by: dict[str, Stage] = {}
        for s in self.stages:
            by.setdefault(s.id, s)
        return by

    def repeated_infos(self) -> list[list[int]]:
        """Info findings that repeat one fact for several parts, as lists of finding indices
        (two or more each, first one first); the terminal and Markdown print each list as one
        line with a count, JSON and HTML keep every finding."""
        groups: dict[tuple, list[int]] = {}
        for i, f in enumerate(self.findings):
            if f.severity == "info" and self.status(i) == "new":
                groups.setdefault(same_fact(f), []).append(i)
        return [idx for idx in groups.values() if len(idx) > 1]

    def relpath(self, file: str | None) -> str | None:
        """A finding's file relative to ``root`` with '/' separators (stable across machines)."""
        if not file:
            return None
        if not self.root:
            return file.replace(os.sep, "/")
        try:
            rel = os.path.relpath(os.path.abspath(file), os.path.abspath(self.root))
        except ValueError:     # another drive on Windows
            return file.replace(os.sep, "/")
        return rel.replace(os.sep, "/")

    @property
    def has_caution(self) -> bool:
        return any(self.cautions.values())


@dataclass
class Report:
    """A whole run: one or more projects, the tool and the settings that produced it."""

    projects: list[ProjectReport] = field(default_factory=list)
    tool: dict = field(default_factory=dict)       # name, version, profile, seed, samples
    fail_on: str = "error"
    verbose: bool = False                          # list what is usually only counted

    def failing(self) -> list[tuple[ProjectReport, Finding]]:
        """Findings that make the run fail: not waived, not in the baseline, at or above
        ``fail_on``."""
        limit = severity_rank(self.fail_on)
        out = []
        for p in self.projects:
            for i, f in enumerate(p.findings):
                if p.status(i) == "new" and severity_rank(f.severity) >= limit:
                    out.append((p, f))
        return out

    def exit_status(self) -> int:
        """0 clean, 1 findings at or above the fail level, 2 a project could not be read."""
        if any(p.error for p in self.projects):
            return 2
        return 1 if self.failing() else 0

    def counts(self) -> dict[str, int]:
        """Unwaived findings per severity (baseline ones included: they still exist)."""
        c = {s: 0 for s in SEVERITIES}
        for p in self.projects:
            for f in p.findings:
                if not f.waived:
                    c[f.severity] = c.get(f.severity, 0) + 1
        return c

    def top_findings(self, n: int) -> list[tuple[ProjectReport, int, Finding]]:
        """The n findings an engineer should read first, as (project, index, finding): new
        before known-from-baseline, higher severity first, then in the order the rules reported
        them; waived ones never."""
        ranked = []
        for p in self.projects:
            for i, f in enumerate(p.findings):
                status = p.status(i)
                if status == "waived":
                    continue
                ranked.append(((status != "new", -severity_rank(f.severity), len(ranked)), (p, i, f)))
        ranked.sort(key=lambda t: t[0])
        return [item for _, item in ranked[:n]]

    @property
    def has_caution(self) -> bool:
        return any(p.has_caution for p in self.projects)

    @property
    def has_budget(self) -> bool:
        """Whether any stage carries an error budget (then the reports say once what % FS is)."""
        return any(r.error_budget for p in self.projects for r in p.results.values())

    def coverage(self) -> dict[str, int]:
        """How much of the designs was checked: stages found and analysed, near misses (wired
        almost as a stage, not analysed), symbols read, projects that could not be read."""
        ok = [p for p in self.projects if not p.error]
        return {"stages_found": sum(len(p.stages) for p in ok),
                "stages_analysed": sum(len(p.results) for p in ok),
                "near_misses": sum(len(p.near_misses) for p in ok),
                "symbols_read": sum(p.symbols for p in ok),
                "projects_unread": len(self.projects) - len(ok)}

    def coverage_text(self) -> str:
        """The coverage as one sentence, said by every format's summary line."""
        c = self.coverage()
        text = (f"Checked {c['stages_analysed']} of {c['stages_found']} stage(s) found, "
                f"{c['near_misses']} near miss(es), {c['symbols_read']} symbol(s) read")
        if c["projects_unread"]:
            text += f"; {c['projects_unread']} project(s) could not be read"
        return text


# Numbers are written by frontcheck.formatting, the one number style of every format.


def budget_rows(budget: dict[str, dict[str, float]]) -> tuple[list[tuple[str, float | None, float | None]],
                                                         tuple[float | None, float | None] | None]:
    """Split an error budget into its term rows and its total, as the analysis gave them
    (frontcheck.analysis.budget.total_of names the total 'total'; a budget without one shows
    no total: reporters never add terms up themselves)."""
    rows = []
    total = None
    for term, vals in budget.items():
        w, r = finite(vals.get("worst")), finite(vals.get("rss"))
        if term.lower() == "total":
            total = (w, r)
        else:
            rows.append((term, w, r))
    return rows, total

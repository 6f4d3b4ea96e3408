"""``--format sarif``: SARIF 2.1.0 for code-review annotations.

Each finding becomes a result at the ``.kicad_sch`` file and line of the offending symbol,
with the path relative to the repository root (``git rev-parse --show-toplevel`` of the
design, else the project folder) so that review tools can place it. ``ruleId`` is the
frontcheck rule id (stable across releases); ``partialFingerprints`` carries the finding's
fingerprint (rule id + symbol UUIDs), which survives re-annotation and moved symbols.
Waived findings are reported as suppressed results; with a baseline, ``baselineState`` tells
new findings from known ones.
"""

from __future__ import annotations

from . import json_text
from .model import SAFETY_NOTICE, ProjectReport, Report

SARIF_VERSION = "2.1.0"
SARIF_SCHEMA = ("https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/"
                "sarif-schema-2.1.0.json")
FINGERPRINT_KEY = "frontcheckFinding/v1"
LEVEL = {"error": "error", "warning": "warning", "info": "note"}


def _rule_docs() -> dict[str, dict[str, str]]:
    """Rule id -> {'short', 'full', 'help'} from the rule catalogue, when it is available."""
    try:
        from ..checks import rule_catalogue   # provided by frontcheck.checks
    except ImportError:
        return {}
    try:
        return dict(rule_catalogue())
    except Exception:   # a broken catalogue must not lose the findings themselves
        return {}


def _sentence(text: str) -> str:
    """The text ending in a full stop, so that message, fix and note read as sentences."""
    text = text.rstrip()
    return text if text.endswith((".", "!", "?")) else text + "."


def _location(p: ProjectReport, file: str | None, line: int | None) -> dict | None:
    uri = p.relpath(file) if file else p.relpath(p.path)
    if not uri:
        return None
    phys: dict = {"artifactLocation": {"uri": uri}}
    if line:
        phys["region"] = {"startLine": int(line)}
    return {"physicalLocation": phys}


def to_dict(report: Report, catalogue: dict[str, dict[str, str]] | None = None) -> dict:
    """The SARIF log as a dict. ``catalogue`` (rule id -> short/full/help texts) defaults to
    the rule registry's."""
    docs = _rule_docs() if catalogue is None else catalogue
    rules, index = _rules(report, docs)
    use_baseline = any(p.baselined for p in report.projects)
    results = []
    artifacts: list[str] = []
    for p in report.projects:
        for i in range(len(p.findings)):
            res = _result(p, i, index, use_baseline)
            for loc in res.get("locations", ()):
                uri = loc["physicalLocation"]["artifactLocation"]["uri"]
                if uri not in artifacts:
                    artifacts.append(uri)
            results.append(res)
    run = {
        "tool": {"driver": {"name": report.tool.get("name", "frontcheck"),
                            "version": str(report.tool.get("version", "")),
                            "rules": rules}},
        "columnKind": "unicodeCodePoints",
        "results": results,
        "artifacts": [{"location": {"uri": u}} for u in artifacts],
        "properties": _run_properties(report),
    }
    errors = [f"{p.name}: {p.error}" for p in report.projects if p.error]
    run["invocations"] = [{
        "executionSuccessful": not errors,
        "toolExecutionNotifications": [{"level": "error", "message": {"text": e}}
                                       for e in errors],
    }]
    return {"$schema": SARIF_SCHEMA, "version": SARIF_VERSION, "runs": [run]}


def _rules(report: Report, docs: dict[str, dict[str, str]]) -> tuple[list[dict], dict[str, int]]:
    """The reporting descriptors of the rules that have findings, sorted by id, and each
    id's index among them."""
    rule_ids: list[str] = []
    for p in report.projects:
        for f in p.findings:
            if f.rule not in rule_ids:
                rule_ids.append(f.rule)
    rule_ids.sort()
    rules = []
    for rid in rule_ids:
        d = docs.get(rid, {})
        rule = {"id": rid, "name": rid.replace("-", " ").title().replace(" ", ""),
                "shortDescription": {"text": d.get("short") or rid.replace("-", " ")}}
        if d.get("full"):
            rule["fullDescription"] = {"text": d["full"]}
        if d.get("help"):
            rule["help"] = {"text": d["help"]}
        rules.append(rule)
    return rules, {rid: i for i, rid in enumerate(rule_ids)}


def _result(p: ProjectReport, i: int, index: dict[str, int], use_baseline: bool) -> dict:
    """The SARIF result of finding ``i`` of project ``p``."""
    f = p.findings[i]
    parts = [f.message] + ([f"Fix: {f.fix}"] if f.fix else [])
    if p.has_caution and (f.stage is None or p.cautions.get(f.stage) or p.cautions.get("")):
        parts.append(f"Note: {SAFETY_NOTICE}")
    text = " ".join(_sentence(t) for t in parts)
    res: dict = {
        "ruleId": f.rule,
        "ruleIndex": index[f.rule],
        "level": LEVEL.get(f.severity, "error"),
        "message": {"text": text},
        "properties": {"project": p.name, "stage": f.stage,
                       "references": list(f.references), "fix": f.fix},
    }
    loc = _location(p, f.file, f.line)
    if loc:
        res["locations"] = [loc]
    fp = p.fingerprint(i)
    if fp:
        res["partialFingerprints"] = {FINGERPRINT_KEY: fp}
    if f.waived:
        res["suppressions"] = [{"kind": "external", "status": "accepted",
                                "justification": f.waived}]
    if use_baseline:
        res["baselineState"] = "unchanged" if p.in_baseline(i) else "new"
    return res


def _run_properties(report: Report) -> dict:
    """Profile, fail level, coverage, the safety notice where it applies and every amplifier."""
    props = {"profile": report.tool.get("profile"), "failOn": report.fail_on,
             "coverage": report.coverage()}
    if report.has_caution:
        props["safetyNotice"] = SAFETY_NOTICE
        props["cautions"] = {
            p.name: {k or "(project)": v for k, v in p.cautions.items() if v}
            for p in report.projects if p.has_caution}
    amplifiers = {p.name: [dict(a) for a in p.amplifiers] for p in report.projects if p.amplifiers}
    if amplifiers:     # every amplifier once: in a stage, or why it is not a front-end stage
        props["amplifiers"] = amplifiers
    return props


def render(report: Report, catalogue: dict[str, dict[str, str]] | None = None) -> str:
    return json_text.dumps(to_dict(report, catalogue)) + "\n"

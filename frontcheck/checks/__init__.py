"""Rules: turn recognised stages and their analysis results into findings.

One rule per module. Each module has ``RULE_ID``, ``SUMMARY``, ``PARAMETERS`` (policy key ->
:class:`~frontcheck.checks.params.Param`: type, default, meaning) and
``check(ctx) -> list[Finding]``; its docstring says what the rule checks, why
it matters, what good looks like, how to fix it and where the physics comes from. Rules read
numbers (``frontcheck.analysis`` computed them) and policy (severities and thresholds from
``rules/<profile>.toml`` and the project's ``[rules.<id>]`` overrides); they never parse files.

Entry point for the pipeline::

    ctx = Context(stages=..., results={stage_id: StageResult}, netlist=..., near_misses=...,
                  unsupported=..., rules=config_rules_table)
    findings = run_rules(ctx)
"""

from __future__ import annotations

import importlib
import inspect
import pkgutil
from dataclasses import dataclass, field
from functools import lru_cache
from types import ModuleType
from typing import Any

from ..errors import InputError
from ..profiles import read_profile
from .stage_roles import remembered
from .finding import SEVERITIES, Finding
from .params import SEVERITY_SETTINGS, Param
from ..profiles import profile_names  # noqa: F401  (re-exported)
from .policy import (  # noqa: F401  (re-exported)
    load_profile,
    merge_rules,
    validate_rules,
)

# The registry: every module of this package that defines RULE_ID is a rule (the others are
# helpers), in the order rules/default.toml lists them, which is also the order findings
# come out in. Adding a rule is its module plus its [rules.<id>] entry in rules/default.toml.
_HELPERS = frozenset({"finding", "located_finding", "message_numbers", "params", "policy",
                      "stage_roles"})


def _rule_module_names() -> tuple[str, ...]:
    names = []
    for info in pkgutil.iter_modules(__path__):
        if not info.name.startswith("_") and info.name not in _HELPERS:
            names.append(info.name)
    return tuple(sorted(names))


@lru_cache(maxsize=1)
def _registry() -> tuple[ModuleType, ...]:
    found = {}
    for name in _rule_module_names():
        module = importlib.import_module(f"{__name__}.{name}")
        if hasattr(module, "RULE_ID"):
            found[module.RULE_ID] = module
    order = list(read_profile("default").rules)
    missing = sorted(set(found) - set(order))
    if missing:
        raise InputError(f"rule {', '.join(missing)} has no entry in rules/default.toml",
                         hint="give every rule a [rules.<id>] table with its severity")
    return tuple(found[rid] for rid in order if rid in found)


def rule_modules() -> list[ModuleType]:
    """The rule modules, in registry order."""
    return list(_registry())


@dataclass(frozen=True)
class RuleInfo:
    id: str
    summary: str
    doc: str                       # the module docstring, dedented
    parameters: dict[str, Param]   # policy key -> declared type, default and meaning


def rules() -> list[RuleInfo]:
    """Metadata of every rule, in registry order (for `frontcheck rules`, SARIF, reports)."""
    return [
        RuleInfo(m.RULE_ID, m.SUMMARY, inspect.cleandoc(m.__doc__ or ""), dict(m.PARAMETERS))
        for m in rule_modules()
    ]


def doc_sections(doc: str) -> dict[str, str]:
    """A rule docstring's sections: unindented heading lines, indented bodies joined into one
    paragraph each. The first line (``id: summary``) is under ''."""
    out: dict[str, list[str]] = {"": []}
    head = ""
    for line in doc.splitlines():
        if line and not line[0].isspace():
            if out[""] or head:
                head = line.strip()
                out[head] = []
            else:
                out[""].append(line.strip())
        elif line.strip():
            out[head].append(line.strip())
    return {k: " ".join(v) for k, v in out.items()}


def rule_catalogue() -> dict[str, dict[str, str]]:
    """Rule id -> {'short', 'full', 'help'} for SARIF ``tool.driver.rules`` and reports:
    the summary, what the rule checks and why, and how to fix it."""
    out = {}
    for r in rules():
        sec = {k: v.replace("``", "") for k, v in doc_sections(r.doc).items()}
        full = " ".join(x for x in (sec.get("What it checks", ""), sec.get("Why it matters", "")) if x)
        out[r.id] = {"short": r.summary, "full": full or r.summary,
                     "help": sec.get("How to fix", "") or f"frontcheck explain {r.id}"}
    return out


def rule_ids() -> list[str]:
    return [m.RULE_ID for m in rule_modules()]


@dataclass
class Context:
    """Everything a rule may look at.

    ``rules`` is the per-rule policy table (``{rule_id: {key: value}}``) after the profile and
    the project file were merged (``frontcheck.config``). Keys a table leaves out fall back to
    the packaged default profile, so a partial table is fine.
    ``sources`` optionally gives, per stage id, the Thevenin resistance of what drives each input
    port (``{'in_p': ohms | None, 'in_n': ohms | None}``); when absent the analysis result's
    ``source`` (frontcheck.analysis.dc_paths.source_impedances) gives it.
    """

    stages: list = field(default_factory=list)           # frontcheck.circuit.Stage
    results: dict = field(default_factory=dict)          # stage id -> StageResult
    netlist: Any = None                                  # frontcheck.netlist.Netlist | None
    near_misses: list = field(default_factory=list)      # from frontcheck.recognise
    unsupported: list = field(default_factory=list)
    design_notes: list = field(default_factory=list)     # (reference, text) from recognition
    rules: dict = field(default_factory=dict)
    profile: str = "default"
    sources: dict = field(default_factory=dict)
    supplies: list = field(default_factory=list)         # analysis.structure.SupplyPath
    _policy_cache: dict = field(default_factory=dict, repr=False)

    def policy(self, rule_id: str) -> dict:
        """The merged policy of one rule: the rule's declared defaults <- the shipped default
        profile <- ``self.rules[rule_id]``."""
        if rule_id not in self._policy_cache:
            self._policy_cache[rule_id] = policy_of(rule_id, self.rules.get(rule_id, {}))
        return self._policy_cache[rule_id]

    def result(self, stage_id: str):
        return self.results.get(stage_id)

    def analysed(self):
        """(stage, StageResult) of every stage the analysis could compute, in stage order."""
        for stage in self.stages:
            res = self.results.get(stage.id)
            if res is not None:
                yield stage, res


def declared_defaults(rule_id: str) -> dict:
    """The settings a rule's module declares a default for (``PARAMETERS``)."""
    (m,) = [m for m in rule_modules() if m.RULE_ID == rule_id]
    return {k: p.default for k, p in m.PARAMETERS.items() if p.default is not None}


def policy_of(rule_id: str, override: dict | None = None) -> dict:
    """One rule's settings: declared defaults <- shipped default profile <- ``override``."""
    table = declared_defaults(rule_id)
    table.update(load_profile("default").get(rule_id, {}))
    table.update(override or {})
    return table


def run_rules(ctx: Context) -> list[Finding]:
    """Run every enabled rule in registry order and return their findings.

    A rule whose ``severity`` is ``"off"`` does not run, unless it declares
    ``RUNS_WHEN_OFF`` (its errors say that part of the design could not be seen, which no
    setting may hide; a waiver with its reason accepts one). Findings whose severity came out
    as ``"off"`` (a sub-case switched off by its own key, or such a rule's ordinary findings)
    are dropped.
    """
    out: list[Finding] = []
    with remembered():
        for m in rule_modules():
            pol = ctx.policy(m.RULE_ID)
            if pol.get("severity") == "off" and not getattr(m, "RUNS_WHEN_OFF", False):
                continue
            for f in m.check(ctx):
                if f.severity == "off":
                    continue
                if f.severity not in SEVERITIES:
                    raise InputError(f"rule {f.rule} produced severity {f.severity!r}",
                                     hint=f"use one of {', '.join(SEVERITY_SETTINGS)} in the profile")
                out.append(f)
    return out


__all__ = [
    "Context", "Finding", "RuleInfo", "run_rules", "rules", "rule_ids",
    "rule_catalogue", "doc_sections",
    "rule_modules", "load_profile", "merge_rules", "profile_names", "declared_defaults", "policy_of",
    "validate_rules",
]

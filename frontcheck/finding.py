"""A finding is plain data: a rule id, a severity, where, what, and how to fix it.
Rules create findings; reporters print them; neither does the other's job."""

from __future__ import annotations

from dataclasses import dataclass, field

SEVERITIES = ("info", "warning", "error")   # ascending


@dataclass
class Finding:
    rule: str                      # e.g. 'ratio-mismatch'
    severity: str                  # one of SEVERITIES
    message: str                   # what, where, by how much
    stage: str | None = None       # Stage.id or None
    references: list[str] = field(default_factory=list)
    fix: str = ""                  # a concrete fix hint
    file: str | None = None        # sheet file of the offending symbol
    line: int | None = None
    uuid: str | None = None        # symbol UUID, for stable fingerprints
    data: dict = field(default_factory=dict)   # numbers behind the message (for JSON)
    waived: str | None = None      # reason, when a waiver matches

    def to_json(self) -> dict:
        return {
            "rule": self.rule,
            "severity": self.severity,
            "stage": self.stage,
            "references": self.references,
            "message": self.message,
            "fix": self.fix,
            "location": {"file": self.file, "line": self.line},
            "waived": self.waived,
            "data": self.data,
        }

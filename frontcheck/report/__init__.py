"""Reporters: each takes a :class:`Report` and returns text; none computes engineering numbers.

``render(report, fmt)`` picks one by name: text (plain; the command uses rich colour on a
terminal), json, sarif, markdown, html.
"""

from __future__ import annotations

import importlib

from .model import SAFETY_NOTICE, ProjectReport, Report

FORMATS = {"text": "terminal", "json": "json_report", "sarif": "sarif", "markdown": "markdown",
           "html": "html"}

__all__ = ["FORMATS", "SAFETY_NOTICE", "ProjectReport", "Report", "render"]


def render(report: Report, fmt: str) -> str:
    """The report as text in format ``fmt`` (one of FORMATS)."""
    module = importlib.import_module(f"{__name__}.{FORMATS[fmt]}")
    return module.render(report)

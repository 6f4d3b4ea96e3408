"""Terminal report: plain text when not a TTY, and a golden file of the hand-made report."""

from __future__ import annotations

import io

from rich.console import Console

from frontcheck.report import terminal
from test_report_handmade import check_golden, make_report


def test_plain_text_is_ascii_but_units_and_complete():
    text = terminal.render(make_report())
    # ASCII boxes and rules; outside ASCII only the signs of the one number style
    assert {c for c in text if not c.isascii()} <= {"Ω", "±", "µ", "∞"}
    assert "\x1b[" not in text          # no colour codes in a pipe
    for needle in ("U1", "U2A/U2B/U2C", "46.1", "ref-impedance", "fix: Drive REF",
                   "waived: trimmed in firmware", "in baseline", "electrical safety",
                   "R13 tolerance assumed 1 %", "FAIL: 2 finding(s)"):
        assert needle in text, needle


def test_terminal_uses_colour_on_a_tty():
    buf = io.StringIO()
    console = Console(file=buf, force_terminal=True, color_system="standard", width=140)
    terminal.render_to(make_report(), console)
    assert "\x1b[" in buf.getvalue()


def test_text_golden():
    check_golden("handmade.txt", terminal.render(make_report()))

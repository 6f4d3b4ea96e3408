"""``safe_text.shown``: a copy of a report-like object with every string made visible
(control characters spelled out), copied in one step where a list or tuple holds no text (a
stage's Monte Carlo samples), element by element where it does. Control characters: the
C0/C1 sets of ECMA-48 and the Unicode bidirectional marks (common practice)."""

from __future__ import annotations

from dataclasses import dataclass, field

from frontcheck.report.safe_text import shown


@dataclass
class Holder:
    name: str
    samples: list = field(default_factory=list)
    pair: tuple = ()
    nested: list = field(default_factory=list)


def test_number_lists_are_copied_equal_and_text_in_mixed_lists_is_made_visible():
    samples = [0.1 * k for k in range(5000)] + [1, True, None, float("inf")]
    h = Holder("U1\x1b[2J", samples, (1.0, 2, None), [1.5, "R1\u202e", [2.0, "ok"]])
    out = shown(h)
    assert out is not h and out.name == "U1\\x1b[2J"
    assert out.samples == samples and out.samples is not samples      # a copy, same numbers
    assert out.pair == (1.0, 2, None)
    assert out.nested == [1.5, "R1\\u202e", [2.0, "ok"]]
    assert h.name == "U1\x1b[2J" and h.nested[1] == "R1\u202e"         # the original untouched


def test_a_list_shared_twice_stays_one_list_in_the_copy():
    data = [1.0, 2.0]
    out = shown({"a": data, "b": data, "k\x07": "v"})
    assert out["a"] is out["b"] and out["a"] == data and out["a"] is not data
    assert "k\\x07" in out

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


class Tagged(str):
    """A str subclass that prints otherwise: shown() turns it into the plain str it prints as."""

    def __str__(self):
        return "tag:" + self


@dataclass
class Pair:
    left: object
    right: object = None


def _hiding(text):
    """Objects with ``text`` in each place shown() looks: a dataclass field, a dictionary key
    and value, a tuple key, a set, a frozenset, a list in a tuple in a dictionary, a cycle."""
    looped: list = [1.0]
    looped.append(looped)
    looped.append(text)
    return [Pair(text), Pair(1.0, Pair([text])), {text: 1}, {"k": text}, {("a", text): 2.0},
            {text}, frozenset({text, 1}), {"v": ([1.0, None], (True, [text]))}, looped]


def test_a_report_with_no_control_character_is_shown_as_it_is():
    report = [Holder("U1", [0.5, 2.0], (1.0, "R1"), [Pair("R2", {"ohms": 1e3})])] + _hiding("ok")
    assert shown(report) is report


def test_every_place_a_control_character_can_hide_is_found():
    from frontcheck.report.safe_text import _needs_change, _shown

    for clean, dirty in zip(_hiding("ok"), _hiding("U1\x1b[2J")):
        assert not _needs_change(clean) and shown(clean) is clean
        assert _needs_change(dirty), dirty
        out = shown(dirty)
        assert out is not dirty and repr(out) == repr(_shown(dirty, {}))
        assert "\\\\x1b[2J" in repr(out) and "\\\\x1b[2J" not in repr(dirty)   # escaped once more


def test_a_str_subclass_is_shown_as_the_text_it_prints():
    h = Holder("U1", nested=[Tagged("R1")])
    out = shown(h)
    assert out is not h and out.nested == ["tag:R1"] and type(out.nested[0]) is str


def test_the_ascii_check_finds_what_the_pattern_finds():
    from frontcheck.report.safe_text import _CONTROL, _has_control

    codes = [*range(0x300), 0x61C, *range(0x2000, 0x2070), 0xFEFF, *range(0xFFF0, 0x10000)]
    for c in map(chr, codes):
        for text in (c, f"R1 {c} net", "ascii only " + c):
            assert _has_control(text) == (_CONTROL.search(text) is not None), hex(ord(c))
    assert not _has_control("plain\ttext\nlines") and _has_control("U1\x1b[2J")

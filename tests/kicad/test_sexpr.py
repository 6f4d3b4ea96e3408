"""The S-expression reader: agreement with an independent reader, KiCad's quoting rules,
error positions, and the fast path agreeing with the exact one."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from frontcheck.kicad import sexpr
from frontcheck.kicad.sexpr import MAX_DEPTH, SExprError, SourceText, parse, parse_file, read_text


def corpus_files(corpus: Path) -> list[Path]:
    return sorted(p for p in corpus.rglob("*") if p.suffix in (".kicad_sch", ".net"))


# ---------------------------------------------------------------------------------------
# an independent reader: kiutils' S-expression parser


def _same(ours, theirs) -> bool:
    """kiutils turns bare numbers into int/float and undoes only the \\" escape."""
    if isinstance(theirs, list):
        return isinstance(ours, list) and len(ours) == len(theirs) and all(
            _same(a, b) for a, b in zip(ours, theirs))
    if isinstance(theirs, (int, float)):
        return isinstance(ours, str) and float(ours) == float(theirs)
    if "\\" in theirs:
        return ours == sexpr.unescape(theirs.replace('"', '\\"'))
    return ours == theirs


@pytest.mark.oracle
def test_agrees_with_kiutils_on_the_corpus(corpus):
    from kiutils.utils.sexpr import parse_sexp

    # kiutils' reader is a slow regular-expression loop: every netlist and every sheet up
    # to 150 kB (KiCad 6 to 9 files among them) keeps this test quick.
    files = [f for f in corpus_files(corpus) if f.stat().st_size < 150_000]
    assert len(files) >= 30
    for f in files:
        text = read_text(f)
        assert _same(parse(text, str(f)), parse_sexp(text)), f


def test_fast_path_equals_exact_parser_on_the_corpus(corpus):
    fast_used = 0
    for f in corpus_files(corpus):
        text = read_text(f)
        exact = sexpr._parse_exact(text, str(f))
        fast = sexpr._parse_fast(text)
        if fast is not None:
            fast_used += 1
            assert fast == exact, f
    # The fast path must actually carry the corpus (files with escaped quotes included).
    assert fast_used == len(corpus_files(corpus))


# ---------------------------------------------------------------------------------------
# KiCad's quoting rules (dev-docs.kicad.org/en/components/sexpr/: Quoted() escapes inner
# double quotes, \n and \r; C-style hex and 3-digit octal escapes are accepted on input)


@pytest.mark.parametrize("written, value", [
    (r'"say \"hi\""', 'say "hi"'),
    (r'"C:\\lib\\"', "C:\\lib\\"),
    (r'"two\nlines"', "two\nlines"),
    (r'"cr\r"', "cr\r"),
    (r'"tab\t"', "tab\t"),
    (r'"\x41\102"', "AB"),
    (r'"\u0041"', "u0041"),          # not a known escape: the character is kept
    (r'"\x"', "x"),                  # a hex escape without digits: the same
    ('"Ω µ 10k±1%"', "Ω µ 10k±1%"),
    ('""', ""),
    ('"(not a list)"', "(not a list)"),
])
def test_string_escapes(written, value):
    for text in (f"(property {written} x)", f"(property\n\t{written}\n\tx\n)"):
        assert parse(text) == ["property", value, "x"]
        assert sexpr._parse_exact(text) == ["property", value, "x"]


def test_bare_atoms_are_kept_as_written():
    tree = parse("(kicad_sch (at 1.2700 -0.0 90) (uuid 6f3b0c1e-aaaa-4bbb-8ccc-000000000001))")
    assert tree == ["kicad_sch", ["at", "1.2700", "-0.0", "90"],
                    ["uuid", "6f3b0c1e-aaaa-4bbb-8ccc-000000000001"]]


def test_windows_paths_stay_on_the_fast_path():
    # An escaped backslash before 'u' (C:\\Users) is not a \u escape: JSON may read it.
    text = r'(kicad_sch (property "Datasheet" "C:\\Users\\a\\b.pdf"))'
    fast = sexpr._parse_fast(text)
    assert fast == sexpr._parse_exact(text) == ["kicad_sch", ["property", "Datasheet",
                                                               "C:\\Users\\a\\b.pdf"]]
    # A lone \u after an escaped backslash goes to the exact parser (KiCad keeps the 'u').
    text = r'(kicad_sch (x "\\\u0041"))'
    assert sexpr._parse_fast(text) is None
    assert parse(text) == ["kicad_sch", ["x", "\\u0041"]]


def test_adjacent_atoms_without_spaces():
    # A string glued to an atom is two atoms; the fast path must not merge them.
    assert parse('(a"b"c("d")"e""f")') == ["a", "b", "c", ["d"], "e", "f"]


def test_empty_lists():
    assert parse("(a () (()) ( ) b)") == ["a", [], [[]], [], "b"]


# ---------------------------------------------------------------------------------------
# errors name file, line and column


@pytest.mark.parametrize("text, line, col, words", [
    ("(a (b c)\n  (d e)\n", 1, 1, "never closed"),
    ("(a (b c))\n)", 2, 1, "text after"),
    ("(a (b c)) (d)", 1, 11, "text after"),
    ('(a\n  "unterminated)\n', 2, 3, "unterminated string"),
    ("", 1, 1, "empty"),
    ("   \n\t", 1, 1, "empty"),
    ("abc (a)", 1, 1, "expected '('"),
    ("(a b))", 1, 6, "text after"),
    (")", 1, 1, "unbalanced"),
])
def test_error_positions(text, line, col, words):
    with pytest.raises(SExprError) as e:
        parse(text, "f.kicad_sch")
    assert (e.value.file, e.value.line, e.value.column) == ("f.kicad_sch", line, col)
    assert words in e.value.message
    assert str(e.value).startswith(f"f.kicad_sch:{line}:{col}: ")


def test_nesting_limit():
    ok = "(" * MAX_DEPTH + ")" * MAX_DEPTH
    tree = parse(ok)
    depth = 1
    while tree:
        tree = tree[0]
        depth += 1
    assert depth == MAX_DEPTH
    # The exact parser's limit; the fast path is bounded by the JSON decoder's recursion
    # guard instead (see the module docstring), so only a far deeper document is refused
    # whichever path reads it.
    with pytest.raises(SExprError) as e:
        sexpr._parse_exact("(" * (MAX_DEPTH + 1) + ")" * (MAX_DEPTH + 1))
    assert "nesting" in e.value.message and e.value.column == MAX_DEPTH + 1
    for deep in ("(" * 100_000 + ")" * 100_000, "(" * 100_000, '(a "\\a" ' + "(" * 5000):
        with pytest.raises(SExprError) as e:
            parse(deep)
        assert "nesting" in e.value.message


def test_unterminated_huge_string_is_fast():
    # One linear pass: possessive patterns, no character-by-character backtracking.
    import time

    text = '(a\n (b "' + "x" * 5_000_000 + ")\n"
    t0 = time.process_time()
    with pytest.raises(SExprError) as e:
        parse(text)
    assert (e.value.line, e.value.column) == (2, 5)
    assert time.process_time() - t0 < 5      # minutes with a backtracking pattern


# ---------------------------------------------------------------------------------------
# files and positions


def test_read_text_rules(tmp_path):
    p = tmp_path / "bom.kicad_sch"
    p.write_bytes("\ufeff(kicad_sch (x \"Ω\"))".encode("utf-8"))
    tree, src = parse_file(p)
    assert tree == ["kicad_sch", ["x", "Ω"]] and src.file == str(p)
    bad = tmp_path / "latin1.kicad_sch"
    bad.write_bytes(b'(kicad_sch\n  (x "\xb5F"))')
    with pytest.raises(SExprError) as e:
        read_text(bad)
    assert (e.value.line, e.value.column) == (2, 7) and "UTF-8" in e.value.message
    nul = tmp_path / "nul.kicad_sch"
    nul.write_bytes(b"(kicad_sch\x00)")
    with pytest.raises(SExprError) as e:
        read_text(nul)
    assert "binary" in e.value.message


def test_source_text_lines():
    src = SourceText("(a\n  (b \"x\")\n  (uuid \"u-1\"))\n", "f")
    assert src.position(0) == (1, 1)
    assert src.position(src.text.index("(b")) == (2, 3)
    assert src.line_of('"u-1"') == 3
    assert src.line_of("absent") is None


def test_line_of_matches_the_file(corpus):
    f = corpus / "kicad-netlists" / "legacy_power" / "legacy_power.kicad_sch"
    tree, src = parse_file(f)
    lines = f.read_text().splitlines()
    uuids = re.findall(r'\(uuid "?([0-9a-f-]{36})"?\)', src.text)
    assert uuids
    for u in uuids[:20]:
        assert u in lines[src.line_of(u) - 1]


# ---------------------------------------------------------------------------------------
# pruning: what the schematic reader never looks at, left out of the fast path's tree


def test_pruning_leaves_out_only_string_free_shallow_lists():
    from frontcheck.kicad.sexpr import Pruning

    pruning = Pruning(("effects", "stroke"), property_tails=True)
    text = ('(kicad_sch (property "Value" "10k" (at 1 2 0) (effects (font (size 1.27 1.27)) '
            '(hide yes)))\n'
            ' (property "Url" "x" (at 0 0 0) (effects (font (face "Arial"))))\n'
            ' (property private "Secret" "s" (at 0 0 0))\n'
            ' (property "Flag" "f" hide (at 0 0 0))\n'
            ' (label "A" (at 1 2 0) (effects (font (size 1 1)) (justify left)) (uuid "u"))\n'
            ' (wire (pts (xy 0 0) (xy 1 0)) (stroke (width 0) (type default)))\n'
            ' (text "deep" (effects (a (b (c (d 1))))))\n'
            ' (effectsx 1) (effects_more (x 1)))')
    assert sexpr._parse_fast(text, pruning) == [
        "kicad_sch", ["property", "Value", "10k"],
        # a string inside, a private property, a bare atom in the tail: kept as written
        ["property", "Url", "x", ["at", "0", "0", "0"], ["effects", ["font", ["face", "Arial"]]]],
        ["property", "private", "Secret", "s", ["at", "0", "0", "0"]],
        ["property", "Flag", "f", "hide", ["at", "0", "0", "0"]],
        ["label", "A", ["at", "1", "2", "0"], ["uuid", "u"]],
        ["wire", ["pts", ["xy", "0", "0"], ["xy", "1", "0"]]],
        # five levels deep: kept
        ["text", "deep", ["effects", ["a", ["b", ["c", ["d", "1"]]]]]],
        ["effectsx", "1"], ["effects_more", ["x", "1"]]]
    assert sexpr._parse_fast(text) == sexpr._parse_exact(text)


def test_pruned_trees_give_the_same_schematic_model(corpus):
    from frontcheck.kicad.schematic import PRUNING, parse_schematic

    sheets = sorted(corpus.rglob("*.kicad_sch"))
    assert len(sheets) >= 30
    for f in sheets:
        text = read_text(f)
        pruned = sexpr._parse_fast(text, PRUNING)
        assert pruned is not None, f
        full = sexpr._parse_exact(text, str(f))
        assert parse_schematic(pruned, str(f)) == parse_schematic(full, str(f)), f


def test_cutting_strings_backslash_by_backslash_equals_whole_text_searches():
    import random

    rnd = random.Random(5)
    alphabet = ['\\', '\\', '"', 'u', 'a', ' ', '(', ')', '\\"', '\\\\', '\\u']
    texts = ["".join(rnd.choice(alphabet) for _ in range(rnd.randint(0, 30)))
             for _ in range(20000)]
    texts += ['(a "x\\"y" "\\\\u" "z")' * 600]            # past the backslashes looked at one by one
    for text in texts:
        assert sexpr._cut_strings(text) == sexpr._cut_strings_slowly(text), text

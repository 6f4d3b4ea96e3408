"""Property-based fuzzing of the readers (hypothesis).

Properties:
* the tokenizer, on any text, returns a tree or raises SExprError - nothing else;
* the fast path, when it answers, answers exactly as the exact parser;
* any tree, written with KiCad's quoting rules and any whitespace, reads back equal;
* KiCad's own files with random damage make the readers return or raise InputError /
  SExprError - never anything else;
* hierarchies whose sheet references are rewritten (files outside the folder, FIFOs,
  folders, links, the sheet itself) read only files inside the project folder.

The CI run is bounded: FRONTCHECK_FUZZ_EXAMPLES unset means a fixed seed and the default
example counts below (over 10,000 cases in all, well under a minute). For a longer local run
set it, e.g. ``FRONTCHECK_FUZZ_EXAMPLES=200000 python -m pytest tests/test_fuzz.py``: every
test then draws that many fresh random examples.
"""

from __future__ import annotations

import os
import random
import re
import shutil
import subprocess
import tempfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from frontcheck.errors import InputError
from frontcheck.kicad import sexpr
from frontcheck.kicad.netfile import read_net, read_xml
from frontcheck.kicad.sexpr import SExprError, parse

_ENV = os.environ.get("FRONTCHECK_FUZZ_EXAMPLES")


def fuzz(default: int):
    """Settings for one property: ``default`` examples in CI, the env var's count locally."""
    return settings(
        max_examples=int(_ENV) if _ENV else default,
        derandomize=_ENV is None,       # CI: the same cases every run, never a flaky failure
        deadline=None,
        database=None if _ENV is None else settings.default.database,
        suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                               HealthCheck.filter_too_much],
    )


def _both(text: str):
    """Parse with both paths: the fast path never accepts what the exact parser refuses,
    agrees with it when it answers, and neither raises anything but SExprError."""
    fast = sexpr._parse_fast(text)
    try:
        exact = sexpr._parse_exact(text, "fuzz")
    except SExprError as e:
        assert fast is None
        assert e.file == "fuzz" and e.line >= 1 and e.column >= 1
        with pytest.raises(SExprError):
            parse(text, "fuzz")
        return None
    if fast is not None:
        assert fast == exact
    assert parse(text, "fuzz") == exact
    return exact


# ---------------------------------------------------------------------------------------
# the tokenizer on arbitrary text

SEXPR_CHARS = st.sampled_from(list('()()()"" \n\t\\abc01.-_x{}') + ["\\\"", "\\\\", "\\n",
                                                                   "\\u", "\x01", "Ω", "\r"])
sexpr_like = st.lists(SEXPR_CHARS, max_size=60).map("".join)


@fuzz(2500)
@given(st.one_of(sexpr_like, st.text(max_size=80)))
def test_tokenizer_never_fails_otherwise(text):
    _both(text)


# ---------------------------------------------------------------------------------------
# round trip: random trees written the way KiCad writes them

# Atoms drawn from a fixed pool (cheap to generate, so the run spends its time parsing) plus
# free text now and then. ("bare", s) is written as is; ("str", s) is quoted.
_POOL = ["kicad_sch", "at", "1.27", "-0.0", "yes", "~", "R_0_1", "Device:R", "{slash}",
         "D[0..7]", "#PWR01", "a\\b", "Ω", "1e999", "00000000-0000-0000-0000-000000000001"]
_STRINGS = ["", " ", "R1", "10k 0.1%", "(not a list)", 'say "hi"', "C:\\path\\", "two\nlines",
            "cr\r", "tab\t", "Ω µ ±", "\x01", "\u0041", "\\u0041", ")(", "\\", '"', "\x00"]
_BARE_CHARS = "az09_.+-:/#*~{}[]!$%&=<>?@^|\\Ω"
_TEXT_CHARS = 'az "()\\\n\r\t\x00\x01Ωµ±{}'
_SEEDS = st.integers(min_value=0, max_value=2**64 - 1)


def _leaf(rng: random.Random):
    r = rng.random()
    if r < 0.35:
        return ("bare", rng.choice(_POOL))
    if r < 0.7:
        return ("str", rng.choice(_STRINGS))
    if r < 0.85:
        return ("str", "".join(rng.choice(_TEXT_CHARS) for _ in range(rng.randrange(9))))
    return ("bare", "".join(rng.choice(_BARE_CHARS) for _ in range(1 + rng.randrange(6))))


def _tree(rng: random.Random) -> list:
    """A random tree: up to 60 open/close/leaf events, extra closes ignored, opens closed."""
    root: list = [("bare", "kicad_sch")]
    stack = [root]
    for _ in range(rng.randrange(61)):
        r = rng.random()
        if r < 0.2:
            new: list = []
            stack[-1].append(new)
            stack.append(new)
        elif r < 0.35:
            if len(stack) > 1:
                stack.pop()
        else:
            stack[-1].append(_leaf(rng))
    return root


def _quote(s: str) -> str:
    # KiCad's Quoted(): backslash, double quote, newline and carriage return are escaped
    # (dev-docs.kicad.org/en/components/sexpr/).
    return '"' + (s.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n")
                  .replace("\r", "\\r")) + '"'


def _write(node, ws: list[str], i: list[int]) -> str:
    if isinstance(node, tuple):
        kind, s = node
        return s if kind == "bare" else _quote(s)
    parts = []
    for child in node:
        sep = ws[i[0] % len(ws)]
        i[0] += 1
        parts.append(sep + _write(child, ws, i))
    return "(" + "".join(parts).lstrip(" \t\r\n") + ws[i[0] % len(ws)] + ")"


def _expected(node):
    return node[1] if isinstance(node, tuple) else [_expected(c) for c in node]


# Hypothesis draws one seed per example and the tree is built from it: drawing every node
# through hypothesis costs ten times the parsing; a failure still names its seed.
@fuzz(3000)
@given(_SEEDS)
def test_round_trip(seed):
    rng = random.Random(seed)
    tree = _tree(rng)
    ws = [rng.choice([" ", "\n", "\t", "\n\t\t", "  ", "\r\n  "]) for _ in range(1 + rng.randrange(4))]
    text = _write(tree, ws, [0])
    assert _both(text) == _expected(tree)


# ---------------------------------------------------------------------------------------
# KiCad files with random damage

_EDITS = ["(", ")", '"', "\\", " ", "\n", "x", "\x00", "\ufffd", "Ω", "1e999", "nan", "inf",
          "-", "(at", ")(", '""', "(uuid", "((((", "))))", "(property", "(pin", "(comp",
          "(node", "(ref", "<", ">", "</comp>", "<comp>", "&amp;", "&x;", '="', "<net ", "/>"]


def damaged(text: str, seed: int, max_edits: int = 4) -> str:
    """``text`` with 1..max_edits random deletions, insertions, replacements or a cut."""
    rng = random.Random(seed)
    for _ in range(1 + rng.randrange(max_edits)):
        pos = rng.randrange(len(text) + 1)
        op = rng.choice(["delete", "insert", "replace", "truncate"])
        if op == "truncate":
            text = text[:pos]
        elif op == "delete":
            text = text[:pos] + text[pos + 1 + rng.randrange(40):]
        else:
            if rng.random() < 0.8:
                payload = rng.choice(_EDITS)
            else:
                payload = "".join(chr(rng.randrange(1, 0x2FF)) for _ in range(1 + rng.randrange(4)))
            cut = len(payload) if op == "replace" else 0
            text = text[:pos] + payload + text[pos + cut:]
    return text


def _small_files(corpus: Path, suffix: str, limit: int) -> list[str]:
    files = sorted((corpus / "kicad-netlists").rglob(f"*{suffix}"),
                   key=lambda p: p.stat().st_size)
    return [sexpr.read_text(p) for p in files[:limit]]


@pytest.fixture(scope="module")
def scratch():
    with tempfile.TemporaryDirectory() as d:
        yield Path(d)


def test_damaged_kicad_text_tokenizer(corpus):
    texts = _small_files(corpus, ".net", 3) + _small_files(corpus, ".kicad_sch", 3)

    @fuzz(2500)
    @given(st.sampled_from(texts), _SEEDS)
    def run(base, seed):
        _both(damaged(base, seed))

    run()


def test_damaged_netlists_raise_only_input_error(corpus, scratch):
    texts = _small_files(corpus, ".net", 3)
    target = scratch / "damaged.net"

    @fuzz(1200)
    @given(st.sampled_from(texts), _SEEDS)
    def run(base, seed):
        text = damaged(base, seed)
        target.write_bytes(text.encode("utf-8", "surrogatepass"))
        try:
            read_net(target)
        except InputError as e:
            assert e.file == str(target)

    run()


@pytest.fixture(scope="module")
def xml_texts(corpus, kicad9, scratch) -> list[str]:
    out = []
    for case in ("legacy_power", "issue14818"):
        dst = scratch / f"{case}.xml"
        subprocess.run([str(kicad9), "netlist",
                        str(corpus / "kicad-netlists" / case / f"{case}.kicad_sch"), str(dst),
                        "kicadxml"], check=True, capture_output=True)
        out.append(dst.read_text())
    return out


def test_damaged_xml_netlists_raise_only_input_error(xml_texts, scratch):
    target = scratch / "damaged.xml"

    @fuzz(1200)
    @given(st.sampled_from(xml_texts), _SEEDS)
    def run(base, seed):
        text = damaged(base, seed)
        target.write_bytes(text.encode("utf-8", "surrogatepass"))
        try:
            read_xml(target)
        except InputError as e:
            assert e.file == str(target)

    run()


def test_damaged_schematics_raise_only_input_error(corpus, scratch):
    from frontcheck.kicad.project import load

    sources = sorted((corpus / "kicad-netlists").rglob("*.kicad_sch"),
                     key=lambda p: p.stat().st_size)[:4]
    texts = [sexpr.read_text(p) for p in sources]
    target = scratch / "damaged.kicad_sch"

    @fuzz(800)
    @given(st.sampled_from(texts), _SEEDS)
    def run(base, seed):
        target.write_bytes(damaged(base, seed).encode("utf-8", "surrogatepass"))
        try:
            load(target)
        except InputError as e:
            assert e.file is not None

    run()


# --------------------------------------------------------------------------- hierarchy

_SHEETFILE = re.compile(r'(\(property "Sheet ?file" ")([^"]*)(")')
_SHEET_TARGETS = ["../outside.kicad_sch", "/etc/passwd", "..\\\\..\\\\outside.kicad_sch",
                  "", ".", "missing.kicad_sch", "fifo.kicad_sch", "folder.kicad_sch",
                  "dangling.kicad_sch", "escape.kicad_sch", "old.sch", "a" * 300 + ".kicad_sch",
                  "sub/../../outside.kicad_sch", "/proc/self/environ", "ünï.kicad_sch"]


def _mutate_hierarchy(text: str, own: list[str], seed: int) -> str:
    """Point sheet blocks at other files (the sheet itself, its root, files outside the
    folder, FIFOs, folders, links), repeat or drop sheet blocks."""
    rng = random.Random(seed)
    for _ in range(1 + rng.randrange(3)):
        op = rng.choice(["retarget", "retarget", "repeat", "drop"])
        blocks = [m.start() for m in re.finditer(r"\(sheet \(at|\(sheet\n", text)]
        if op == "retarget":
            hits = list(_SHEETFILE.finditer(text))
            if hits:
                m = rng.choice(hits)
                new = rng.choice(_SHEET_TARGETS + own)
                text = text[:m.start(2)] + new + text[m.end(2):]
        elif blocks:
            start = rng.choice(blocks)
            depth, end = 0, start
            for end in range(start, len(text)):
                depth += {"(": 1, ")": -1}.get(text[end], 0)
                if depth == 0:
                    break
            block = text[start:end + 1]
            text = text[:start] + (block * rng.randrange(2, 12) if op == "repeat" else "") \
                + text[end + 1:]
    return text


def test_mutated_hierarchies_stay_in_the_folder(corpus, tmp_path):
    """Sheet references rewritten at random: loading returns a netlist of files inside the
    project folder or raises InputError naming a file - nothing else, and nothing outside the
    folder is read."""
    from frontcheck.kicad.project import load_hierarchy_for

    cases = ["hierarchy_aliases", "issue14818", "test_hier_no_connect", "bus_connection"]
    sources = {c: {p.name: p.read_text(encoding="utf-8")
                   for p in (corpus / "kicad-netlists" / c).glob("*.kicad_sch")} for c in cases}
    (tmp_path / "outside.kicad_sch").write_text(next(iter(sources[cases[0]].values())),
                                                encoding="utf-8")
    project = tmp_path / "project"

    @fuzz(300)
    @given(st.sampled_from(cases), _SEEDS)
    def run(case, seed):
        shutil.rmtree(project, ignore_errors=True)
        project.mkdir()
        os.mkfifo(project / "fifo.kicad_sch")
        (project / "folder.kicad_sch").mkdir()
        (project / "dangling.kicad_sch").symlink_to(project / "gone.kicad_sch")
        (project / "escape.kicad_sch").symlink_to(tmp_path / "outside.kicad_sch")
        names = sorted(sources[case])
        for k, (name, text) in enumerate(sorted(sources[case].items())):
            (project / name).write_text(_mutate_hierarchy(text, names, seed + k),
                                        encoding="utf-8")
        (project / f"{case}.kicad_pro").write_text("{}", encoding="utf-8")
        try:
            _, h = load_hierarchy_for(project / f"{case}.kicad_sch")
        except InputError as e:
            assert e.file is not None and "Traceback" not in str(e)
            return
        real = project.resolve()
        assert all(Path(f).is_relative_to(real) for f in h.files), sorted(h.files)

    run()

"""Fail safe: a design that cannot be checked never passes, hostile input is refused with one
clear line and exit status 2, and nothing leaks into the terminal or the project folder.

One case of every class of failure, each generated in tmp_path from a bundled sample project
(no large files committed). Each asserts the exit status, the message, and that no Python
traceback reaches the user.
"""

from __future__ import annotations

import hashlib
import json
import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from frontcheck import pipeline
from frontcheck.cli import main

REPO = Path(__file__).resolve().parents[2]
SHUNT = REPO / "sample_projects" / "shunt-monitor"
SAMPLES = ("--samples", "200")


def cli(capsys, *args: str) -> tuple[int, str, str]:
    """The CLI in-process: an exception escaping main() fails the test with its traceback,
    which is what a user would have seen."""
    rc = main(list(args))
    cap = capsys.readouterr()
    return rc, cap.out, cap.err


def run_cli(*args: str, cwd: Path | None = None) -> subprocess.CompletedProcess:
    """The CLI as a user runs it, for the cases where the process itself must not fail."""
    return subprocess.run([sys.executable, "-m", "frontcheck", *args], capture_output=True,
                          text=True, cwd=cwd, timeout=300)


def refused(rc: int, err: str, *words: str) -> None:
    assert rc == 2, err
    assert "Traceback" not in err, err
    for w in words:
        assert w in err, err


@pytest.fixture
def shunt(tmp_path) -> Path:
    dst = tmp_path / "shunt-monitor"
    shutil.copytree(SHUNT, dst)
    return dst


def set_first_value(sheet: Path, old: str, new: str) -> None:
    text = sheet.read_text(encoding="utf-8")
    needle = f'(property "Value" "{old}"'
    assert needle in text
    sheet.write_text(text.replace(needle, f'(property "Value" "{new}"', 1), encoding="utf-8")


# ---------------------------------------------------------------------------------------
# 1. every failure to check: exit 2 (or a located finding), one clear line, no traceback


def test_absurd_resistor_value_is_a_located_finding_not_a_traceback(shunt):
    # 1e-308 ohm made a resistor ratio infinite and the E-series lookup raise; a value far
    # outside any real part is now refused where it is read
    set_first_value(shunt / "shunt-monitor.kicad_sch", "100k", "1e-308")
    r = run_cli("check", str(shunt), *SAMPLES)
    assert r.returncode == 1, r.stderr
    assert "Traceback" not in r.stderr + r.stdout
    assert "stage-incomplete" in r.stdout and "1e-308" in r.stdout


@pytest.mark.parametrize("option, value, bound", [
    ("--samples", "99999999999999999999", "upper bound 1,000,000"),
    ("--samples", "1000000000", "upper bound 1,000,000"),
    ("--samples", "-1", "lower bound 0"),
    ("--samples", "many", "not a whole number"),
    ("--seed", "4294967296", "upper bound 4,294,967,295"),
    ("--jobs", "0", "lower bound 1"),
    ("--jobs", "65", "upper bound 64"),
])
def test_numeric_option_outside_its_bound_is_a_usage_error(capsys, shunt, option, value, bound):
    rc, _, err = cli(capsys, "check", str(shunt), option, value)
    refused(rc, err, option, bound)


def test_option_bounds_are_documented():
    from frontcheck.cli import build_parser

    text = build_parser()._subparsers._group_actions[0].choices["check"].format_help()
    text = " ".join(text.split())
    assert "0 (corners only) to 1,000,000" in text
    assert "0 to 4,294,967,295" in text and "1 to 64" in text
    readme = (REPO / "README.md").read_text(encoding="utf-8")
    assert "1,000,000" in readme and "4,294,967,295" in readme


def test_bounds_accept_their_ends(capsys, shunt):
    rc, out, err = cli(capsys, "check", str(shunt), "--samples", "0", "--seed", "4294967295",
                       "-f", "json")
    assert rc == 1, err        # the sample's findings, not a usage error
    assert '"seed": 4294967295' in out


def test_project_file_nested_deep_is_refused(shunt):
    (shunt / "shunt-monitor.kicad_pro").write_text("[" * 100_000 + "]" * 100_000)
    r = run_cli("check", str(shunt))
    refused(r.returncode, r.stderr, "shunt-monitor.kicad_pro", "nested too deeply")


def test_config_file_nested_deep_is_refused(capsys, shunt):
    (shunt / "frontcheck.toml").write_text("a = " + "[" * 100_000 + "]" * 100_000)
    rc, _, err = cli(capsys, "check", str(shunt))
    refused(rc, err, "frontcheck.toml", "nested too deeply")


def test_baseline_nested_deep_is_refused(capsys, shunt, tmp_path):
    base = tmp_path / "base.json"
    base.write_text("[" * 100_000 + "]" * 100_000)
    rc, _, err = cli(capsys, "check", str(shunt), "--baseline", str(base))
    refused(rc, err, "base.json", "nested too deeply")


@pytest.mark.parametrize("exc, words", [
    (MemoryError(), ("ran out of memory", "--samples")),
    (RecursionError("maximum recursion depth exceeded"), ("nested too deeply",)),
    (ValueError("not a parse error"), ("internal error", "not a parse error")),
])
def test_any_other_failure_is_exit_2_in_one_line(capsys, monkeypatch, shunt, exc, words):
    # the last line of defence behind the causes fixed above: never exit 1 (a CI gate reads
    # that as findings) and never a traceback
    def fail(*args, **kwargs):
        raise exc

    monkeypatch.setattr(pipeline, "check_project", fail)
    monkeypatch.delenv("FRONTCHECK_DEBUG", raising=False)
    rc, _, err = cli(capsys, "check", str(shunt))
    refused(rc, err, *words)


# ---------------------------------------------------------------------------------------
# 8. hooks


@pytest.mark.parametrize("path, why", [
    ("nope.kicad_sch", "file not found"),
    ("notes.txt", "not a KiCad schematic or project"),
    ("folder.kicad_sch", "not a regular file"),
])
def test_pre_commit_path_that_is_no_design_is_an_error(capsys, tmp_path, monkeypatch, path, why):
    (tmp_path / "notes.txt").write_text("not a design\n")
    (tmp_path / "folder.kicad_sch").mkdir()
    monkeypatch.chdir(tmp_path)
    rc, _, err = cli(capsys, "check", "--pre-commit", path)
    refused(rc, err, path, why)


def _hook_entry() -> list[str]:
    """The command line of the shipped pre-commit hook, without the program name."""
    text = (REPO / ".pre-commit-hooks.yaml").read_text(encoding="utf-8")
    entry = re.search(r"^\s*entry:\s*(.+)$", text, re.M)[1].split()
    assert entry[:2] == ["frontcheck", "check"]
    return entry[1:]


def test_pre_commit_entry_takes_a_file_named_like_an_option(capsys, tmp_path, monkeypatch):
    # pre-commit appends the file names to the entry: a sheet called '-x.kicad_sch' must be
    # read as a file, not as an (unknown) option
    shutil.copy(SHUNT / "shunt-monitor.kicad_sch", tmp_path / "-x.kicad_sch")
    monkeypatch.chdir(tmp_path)
    entry = _hook_entry()
    assert entry[-1] == "--"
    rc, out, err = cli(capsys, *entry, "-x.kicad_sch")
    assert rc == 1, err                       # the sample's findings: it was checked
    assert "ratio-mismatch" in out and "Traceback" not in err
    # and after `--` an option-like word is a path, refused as such rather than obeyed
    rc, _, err = cli(capsys, *entry, "--samples", "10")
    refused(rc, err, "--samples", "not a KiCad schematic")


def _xml_naming(xml: Path, source: str) -> Path:
    xml.write_text(f'<?xml version="1.0"?><export version="E"><design><source>{source}'
                   f'</source></design></export>', encoding="utf-8")
    return xml


def test_kicad_hook_trusts_the_xml_source_only_for_a_schematic_beside_its_project(tmp_path):
    from frontcheck.kicad_hook import project_dir_for

    export = tmp_path / "export"
    export.mkdir()
    project = tmp_path / "shunt-monitor"
    shutil.copytree(SHUNT, project)
    sch = project / "shunt-monitor.kicad_sch"
    xml = export / "amp.xml"
    assert project_dir_for(_xml_naming(xml, str(sch))) == project.resolve()
    # anything else the XML could name is not taken as the project folder
    lone = tmp_path / "lone"
    lone.mkdir()
    shutil.copy(sch, lone / "lone.kicad_sch")
    (lone / "frontcheck.toml").write_text('profile = "strict"\n')
    for source in (str(lone / "lone.kicad_sch"),          # a schematic with no project
                   str(project / "shunt-monitor.kicad_pro"),  # not a schematic
                   str(project),                              # a folder
                   str(tmp_path / "gone" / "x.kicad_sch")):   # nothing there
        assert project_dir_for(_xml_naming(xml, source)) == export.resolve(), source


# ---------------------------------------------------------------------------------------
# 6. settings accepted silently: each an error naming file, line and key


@pytest.mark.parametrize("toml, line, words", [
    ('[[waive]]\nrule = "ratio-mismatch"\nreason = "ok"\n\n[[waive]]\nrule = "ratio-mismatc"\n'
     'reason = "typo"\n', 5, ("[[waive]] rule = 'ratio-mismatc'", "no such rule", "headroom")),
    ('[[waive]]\nrule = "headroom"\nreferences = "U1"\nreason = "x"\n', 1,
     ("references = 'U1'", "must be a list")),
    ('[stage.U1]\nmin_cmrr_db = nan\n', 2, ("[stage.U1] min_cmrr_db", "nan")),
    ('[stage.U1]\n"Min CMRR" = "1e999 dB"\n', 2, ("[stage.U1] Min CMRR", "not a finite number")),
    ('[stage.U1]\nref_voltage = nan\n', 2, ("[stage.U1] ref_voltage", "not a finite number")),
    ('[stage.U1]\ninput_cm = [-inf, 4.0]\n', 2, ("[stage.U1] input_cm", "not a finite number")),
])
def test_bad_setting_is_an_error_naming_file_line_and_key(capsys, shunt, toml, line, words):
    (shunt / "frontcheck.toml").write_text(toml, encoding="utf-8")
    rc, _, err = cli(capsys, "check", str(shunt), *SAMPLES)
    refused(rc, err, f"frontcheck.toml:{line}:", *words)


@pytest.mark.parametrize("where, toml, line, words", [
    ("project", '[rules.ratio-mismatch]\nmin_mismatch = nan\n', 2,
     ("min_mismatch = nan", "finite")),
    ("profile", '[rules.ratio-mismatch]\nmin_mismatch = nan\n', 2,
     ("min_mismatch = nan", "finite")),
    ("profile", '[rules.ratio-mismatch]\nseverity = "error"\n\n[rules.no-such-rule]\n'
                'severity = "error"\n', 4, ("unknown rule", "no-such-rule")),
])
def test_bad_rule_setting_is_an_error_naming_file_line_and_key(capsys, shunt, tmp_path, where,
                                                               toml, line, words):
    if where == "project":
        target, extra = shunt / "frontcheck.toml", ()
    else:
        target = tmp_path / "mine.toml"
        extra = ("--profile", str(target))
    target.write_text(toml, encoding="utf-8")
    rc, _, err = cli(capsys, "check", str(shunt), *SAMPLES, *extra)
    refused(rc, err, f"{target.name}:{line}:", *words)


def test_min_cmrr_field_of_minus_infinity_is_refused(capsys, shunt):
    sheet = shunt / "shunt-monitor.kicad_sch"
    text = sheet.read_text(encoding="utf-8")
    assert '(property "Min CMRR" "60 dB"' in text
    sheet.write_text(text.replace('(property "Min CMRR" "60 dB"', '(property "Min CMRR" "-inf dB"'),
                     encoding="utf-8")
    rc, _, err = cli(capsys, "check", str(shunt), *SAMPLES)
    refused(rc, err, "shunt-monitor.kicad_sch:", "Min CMRR", "-inf dB")


def test_stage_table_for_no_stage_is_a_warning_naming_the_stages(capsys, shunt):
    (shunt / "frontcheck.toml").write_text('[rails]\n"+5V" = 5\n\n[stage.U99]\ntarget_gain = 10\n')
    rc, out, err = cli(capsys, "check", str(shunt), *SAMPLES, "-f", "json")
    assert rc == 1, err
    import json
    notes = [f for f in json.loads(out)["findings"] if f["rule"] == "design-note"]
    assert [(f["severity"], f["location"]["line"]) for f in notes] == [("warning", 4)]
    assert "[stage.U99]" in notes[0]["message"] and "U1A" in notes[0]["message"]


# ---------------------------------------------------------------------------------------
# 5. output injection: control characters shown escaped, Markdown design text not live

ESC_PAYLOAD = "\x1b[2J\x1b]0;owned\x07\x00\r\u202e"
LINK_PAYLOAD = "[click](https://example.org/x) ![img](https://example.org/i.png) <b>bold</b>"
RAW = ("\x1b", "\x00", "\x07", "\r", "\u202e")


def _no_raw_controls(text: str, where: str) -> None:
    for c in RAW:
        assert c not in text, f"{where}: raw {c!r}"


def _render_markdown(text: str) -> str:
    """HTML of a Markdown report per CommonMark (markdown-it-py, which rich depends on), with
    raw HTML allowed as GitHub allows some: the oracle for 'no live link, image or tag'."""
    from markdown_it import MarkdownIt

    md = MarkdownIt("commonmark", {"html": True}).enable("table").enable("strikethrough")
    return md.render(text)


def test_waiver_reason_with_control_characters_and_links(capsys, shunt, tmp_path):
    reason = f"ok {ESC_PAYLOAD} {LINK_PAYLOAD}"
    toml_reason = reason.encode("unicode_escape").decode().replace('"', '\\"')
    toml_reason = re.sub(r"\\x([0-9a-f]{2})", r"\\u00\1", toml_reason)
    (shunt / "frontcheck.toml").write_text(
        f'[[waive]]\nrule = "headroom"\nreason = "{toml_reason}"\n', encoding="utf-8")
    outs = {}
    for fmt in ("text", "markdown", "html", "json"):
        out = tmp_path / f"report.{fmt}"
        rc, _, err = cli(capsys, "check", str(shunt), *SAMPLES, "-f", fmt, "-o", str(out))
        assert rc == 1, err
        outs[fmt] = out.read_text(encoding="utf-8")
    import json
    waived = [f["waived"] for f in json.loads(outs["json"])["findings"] if f["waived"]]
    assert waived and reason in waived[0]          # JSON keeps the text exactly (escaped by JSON)
    page = _render_markdown(outs["markdown"])      # what a reader of the comment sees
    for fmt, shown in (("text", outs["text"]), ("markdown", page), ("html", outs["html"])):
        _no_raw_controls(outs[fmt], fmt)
        assert "\\x1b[2J" in shown and "\\u202e" in shown, fmt
    assert "example.org" in page
    assert "<a " not in page and "<img" not in page and "<b>" not in page


def test_value_field_with_control_characters(capsys, shunt, tmp_path):
    set_first_value(shunt / "shunt-monitor.kicad_sch", "100k", "100k\x1b[2J\x00")
    for fmt in ("text", "markdown", "html"):
        out = tmp_path / f"report.{fmt}"
        rc, _, err = cli(capsys, "check", str(shunt), *SAMPLES, "-f", fmt, "-o", str(out))
        text = out.read_text(encoding="utf-8")
        assert rc == 1 and "stage-incomplete" in text, err
        _no_raw_controls(text, fmt)
        if fmt == "markdown":
            text = _render_markdown(text)
        assert "100k\\x1b[2J\\x00" in text, fmt


def test_target_gain_error_on_stderr_is_escaped(shunt):
    sheet = shunt / "shunt-monitor.kicad_sch"
    text = sheet.read_text(encoding="utf-8")
    assert '(property "Target Gain" "' in text
    sheet.write_text(re.sub(r'\(property "Target Gain" "[^"]*"',
                            f'(property "Target Gain" "ten{ESC_PAYLOAD}"', text),
                     encoding="utf-8")
    r = run_cli("check", str(shunt), *SAMPLES)
    refused(r.returncode, r.stderr, "Target Gain", "ten\\x1b[2J")
    _no_raw_controls(r.stderr + r.stdout, "stderr")


def test_visible_leaves_no_control_character():
    # every Unicode control character (general category Cc, per the Unicode Character
    # Database as Python's unicodedata ships it) and the bidirectional formatting characters
    # (Unicode Standard Annex #9, "explicit directional formatting characters") are escaped
    import unicodedata

    from frontcheck.report.safe_text import markdown, visible

    controls = [chr(c) for c in range(0x110000)
                if unicodedata.category(chr(c)) == "Cc" and chr(c) not in "\t\n"]
    bidi = [chr(c) for c in range(0x110000)
            if unicodedata.bidirectional(chr(c)) in ("LRE", "RLE", "LRO", "RLO", "PDF",
                                                     "LRI", "RLI", "FSI", "PDI")]
    assert len(controls) == 63 and len(bidi) == 9
    text = "".join(controls + bidi)
    out = visible(text)
    assert not set(out) & set(text)
    assert visible("R1 10k\tok\n") == "R1 10k\tok\n"       # layout characters stay
    assert markdown("a\nb") == "a b"


# ---------------------------------------------------------------------------------------
# 4. a design that cannot be checked never passes; every summary says how much was checked


def _drop_library_entry(sheet: Path, name: str | None) -> None:
    """Remove one embedded library symbol (by name), or with None the whole lib_symbols."""
    text = sheet.read_text(encoding="utf-8")
    if name is None:
        start = text.index("\t(lib_symbols\n")
        end = text.index("\n\t)\n", start) + 3
    else:
        start = text.index(f'\t\t(symbol "{name}"\n')
        end = text.index('\n\t\t(symbol "', start + 1) + 1
    sheet.write_text(text[:start] + text[end:], encoding="utf-8")


def test_duplicate_reference_that_hides_a_stage_fails(shunt):
    # R3 renamed to R2: the two resistors merge and the failing stage disappeared (exit 0)
    sheet = shunt / "shunt-monitor.kicad_sch"
    text = sheet.read_text(encoding="utf-8")
    text = text.replace('(property "Reference" "R3"', '(property "Reference" "R2"')
    sheet.write_text(text.replace('(reference "R3")', '(reference "R2")'), encoding="utf-8")
    r = run_cli("check", str(shunt), *SAMPLES)
    assert r.returncode == 1, r.stdout + r.stderr
    assert "Traceback" not in r.stderr
    assert re.search(r"ERROR +design-note +duplicate reference R2", r.stdout)
    assert "Checked 0 of 0 stage(s) found" in r.stdout


def test_switching_reader_notes_off_does_not_hide_what_could_not_be_seen(shunt):
    # The same merge with design-note switched off in frontcheck.toml: the could-not-see error
    # stays (a waiver with a reason is the way to accept it); an ordinary note is dropped.
    sheet = shunt / "shunt-monitor.kicad_sch"
    text = sheet.read_text(encoding="utf-8")
    text = text.replace('(property "Reference" "R3"', '(property "Reference" "R2"')
    sheet.write_text(text.replace('(reference "R3")', '(reference "R2")'), encoding="utf-8")
    (shunt / "frontcheck.toml").write_text('[rules.design-note]\nseverity = "off"\n',
                                           encoding="utf-8")
    r = run_cli("check", str(shunt), *SAMPLES, "-f", "json")
    assert r.returncode == 1, r.stdout + r.stderr
    notes = [f for f in json.loads(r.stdout)["findings"] if f["rule"] == "design-note"]
    assert notes and {f["severity"] for f in notes} == {"error"}, notes
    assert all("R2" in f["message"] and "not the design as drawn" in f["message"]
               for f in notes), notes


def test_switching_reader_notes_off_drops_an_ordinary_note(capsys, shunt):
    _drop_library_entry(shunt / "shunt-monitor.kicad_sch", "fc_samples:CONN_1x02")
    (shunt / "frontcheck.toml").write_text('[rules.design-note]\nseverity = "off"\n',
                                           encoding="utf-8")
    rc, out, err = cli(capsys, "check", str(shunt), *SAMPLES, "-f", "json")
    assert not [f for f in json.loads(out)["findings"] if f["rule"] == "design-note"], out


@pytest.mark.parametrize("entry", ["fc_samples:R", "fc_samples:OPAMP_DUAL", None],
                         ids=["resistor", "op-amp", "all"])
def test_missing_library_entry_of_amplifier_or_passive_fails(capsys, shunt, entry):
    _drop_library_entry(shunt / "shunt-monitor.kicad_sch", entry)
    rc, out, err = cli(capsys, "check", str(shunt), *SAMPLES, "-f", "json")
    import json
    doc = json.loads(out)
    errors = [f for f in doc["findings"] if f["rule"] == "design-note" and f["severity"] == "error"]
    assert rc == 1, err
    assert errors and all("library symbol" in f["message"] and "connections are unknown"
                          in f["message"] for f in errors)


def test_missing_library_entry_of_a_connector_stays_a_note(capsys, shunt):
    _drop_library_entry(shunt / "shunt-monitor.kicad_sch", "fc_samples:CONN_1x02")
    rc, out, err = cli(capsys, "check", str(shunt), *SAMPLES, "-f", "json")
    import json
    notes = [f for f in json.loads(out)["findings"] if f["rule"] == "design-note"]
    assert notes and {f["severity"] for f in notes} == {"info"}


@pytest.mark.parametrize("content", ["(kicad_sch)", "(kicad_sch (version 20231120))", "()"])
def test_schematic_without_content_is_not_a_pass(capsys, tmp_path, content):
    sheet = tmp_path / "empty.kicad_sch"
    sheet.write_text(content + "\n")
    rc, _, err = cli(capsys, "check", str(sheet))
    refused(rc, err, "empty.kicad_sch")


@pytest.mark.parametrize("fmt, pattern", [
    ("text", r"Checked 1 of 1 stage\(s\) found, 0 near miss\(es\), 14 symbol\(s\) read\."),
    ("markdown", r"Checked 1 of 1 stage\(s\) found, 0 near miss\(es\), 14 symbol\(s\) read\."),
    ("html", r'<p>Checked 1 of 1 stage\(s\) found, 0 near miss\(es\), 14 '),
    ("json", r'"coverage": \{\s*"stages_found": 1,\s*"stages_analysed": 1,\s*"near_misses": 0,'
             r'\s*"symbols_read": 14'),
    ("sarif", r'"coverage": \{\s*"stages_found": 1,\s*"stages_analysed": 1'),
])
def test_every_format_says_how_much_was_checked(capsys, shunt, fmt, pattern):
    rc, out, err = cli(capsys, "check", str(shunt), *SAMPLES, "-f", fmt)
    assert rc == 1, err
    assert re.search(pattern, out), out[-800:]


# ---------------------------------------------------------------------------------------
# what already holds, kept under test: nothing written beside the design, runs reproducible


def _tree(root: Path) -> dict[str, tuple]:
    return {str(p.relative_to(root)): (hashlib.sha256(p.read_bytes()).hexdigest(),
                                       p.stat().st_mtime_ns) if p.is_file() else ("dir",)
            for p in sorted(root.rglob("*"))}


def test_baseline_and_failed_runs_write_nothing_beside_the_design(capsys, shunt, tmp_path):
    before = _tree(shunt)
    base = tmp_path / "base.json"
    assert cli(capsys, "baseline", str(shunt), *SAMPLES, "-o", str(base))[0] == 0
    assert cli(capsys, "check", str(shunt), *SAMPLES, "--baseline", str(base))[0] == 0
    assert cli(capsys, "check", str(shunt), "--samples", "7777777")[0] == 2   # a usage error
    (shunt / "frontcheck.toml").write_text("[[waive]]\nrule = 'nope'\nreason = 'x'\n")
    before["frontcheck.toml"] = _tree(shunt)["frontcheck.toml"]
    assert cli(capsys, "check", str(shunt), *SAMPLES)[0] == 2
    assert _tree(shunt) == before


def test_parallel_runs_are_byte_identical(shunt, tmp_path):
    # eight processes at once on one project, and --jobs against serial over two projects
    other = tmp_path / "other"
    shutil.copytree(shunt, other)
    cmd = [sys.executable, "-m", "frontcheck", "check", str(shunt), str(other), *SAMPLES,
           "-f", "json"]
    procs = [subprocess.Popen(cmd + ["--jobs", str(1 + k % 2)], stdout=subprocess.PIPE,
                              stderr=subprocess.PIPE) for k in range(8)]
    outs = [p.communicate(timeout=600) for p in procs]
    assert all(p.returncode == 1 for p in procs), outs[0][1]
    assert len({out for out, _ in outs}) == 1 and b'"exit_status": 1' in outs[0][0]


def test_readme_says_what_is_read_never_opened_and_never_written():
    text = (REPO / "README.md").read_text(encoding="utf-8")
    section = text.split("## What frontcheck reads, never opens and never writes", 1)[1]
    section = section.split("\n## ", 1)[0]
    for words in ("**Reads**", "**Never opens**", "**Never writes**", "frontcheck.toml",
                  ".kicad_sym", "--output", "--allow-folder"):
        assert words in section, words


# ---------------------------------------------------------------------------------------
# the fuzz tier on project files: any frontcheck.toml reads or is refused with InputError


def _toml_value(v) -> str:
    import json
    import math

    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return "nan" if math.isnan(v) else ("inf" if v > 0 else "-inf") if math.isinf(v) \
            else repr(v)
    if isinstance(v, int):
        return str(v)
    if isinstance(v, str):
        return _toml_string(v)
    if isinstance(v, list):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    return "{" + ", ".join(f"{_toml_string(k)} = {_toml_value(x)}" for k, x in v.items()) + "}"


def _toml_string(s: str) -> str:
    """A TOML basic string (TOML 1.0: control characters, quote and backslash escaped)."""
    return '"' + "".join(f"\\u{ord(c):04x}" if ord(c) < 0x20 or ord(c) == 0x7f
                         else "\\" + c if c in '"\\' else c for c in s) + '"'


def _config_strategy():
    from hypothesis import strategies as st

    from frontcheck.intent import INTENT_FIELDS

    scalar = st.one_of(st.booleans(), st.integers(), st.floats(),
                       st.text(max_size=12),
                       st.sampled_from(["100 ±0.5%", "80 dB", "-inf dB", "1..4 V", "±20 mV",
                                        "2.5 V", "1e999 V", "nan", "U1", "1%", "x\x1b[2J"]))
    value = st.one_of(scalar, st.lists(scalar, max_size=3),
                      st.dictionaries(st.text(max_size=6), scalar, max_size=2))
    rules = ["ratio-mismatch", "cmrr-budget", "headroom", "no-such-rule"]
    keys = ["severity", "min_mismatch", "statistical_severity", "unknown_key"]
    line = st.one_of(
        st.tuples(st.just("stage"), st.sampled_from(["U1", "U1A", "U99"]),
                  st.sampled_from(list(INTENT_FIELDS) + ["min_cmrr_db", "bogus"]), value),
        st.tuples(st.just("rules"), st.sampled_from(rules), st.sampled_from(keys), value),
        st.tuples(st.just("defaults"), st.just(""),
                  st.sampled_from(["resistor_tolerance", "opamp_class", "x"]), value),
        st.tuples(st.just("rails"), st.just(""), st.sampled_from(["+5V", "VCC"]), value),
        st.tuples(st.just("waive"), st.just(""),
                  st.sampled_from(["rule", "reason", "references", "stage", "x"]), value))
    return st.lists(line, max_size=6)


def _write_config(lines) -> str:
    tables: dict[str, dict[str, str]] = {}
    for table, name, key, value in lines:      # a key given twice: the last one stays
        head = (f"[{table}.{_toml_string(name)}]" if name else
                "[[waive]]" if table == "waive" else f"[{table}]")
        tables.setdefault(head, {})[key] = f"{_toml_string(key)} = {_toml_value(value)}"
    return "\n\n".join(h + "\n" + "\n".join(b.values()) for h, b in tables.items()) + "\n"


def test_fuzzed_project_file_is_read_or_refused_never_anything_else(tmp_path_factory):
    from hypothesis import given

    from frontcheck.config import load_config
    from frontcheck.errors import InputError
    from frontcheck.intent import stage_intent
    from frontcheck.netlist import Component
    from frontcheck.waivers import check_waivers
    from test_fuzz import fuzz

    folder = tmp_path_factory.mktemp("config-fuzz")
    amp = Component(ref="U1", value="op-amp", fields={})

    @fuzz(300)
    @given(_config_strategy())
    def prop(lines):
        (folder / "frontcheck.toml").write_text(_write_config(lines), encoding="utf-8")
        try:
            cfg = load_config(folder)
            check_waivers(cfg)
            for name in ("U1", "U1A"):
                stage_intent(amp, cfg, stage_id=name)
        except InputError as e:
            assert e.file and e.file.endswith("frontcheck.toml"), e.render()
            return
        # read: no NaN or infinity got through into a stage's intent
        import math
        it = stage_intent(amp, cfg, stage_id="U1A")
        for k in ("target_gain", "gain_tol", "min_cmrr_db", "ref_voltage"):
            v = getattr(it, k)
            assert v is None or math.isfinite(v), (k, v)

    prop()


def test_progress_label_shows_design_text_as_written(monkeypatch):
    # the terminal progress bar names projects and stages: rich must not read a stage id as
    # markup, and control characters are shown escaped
    from types import SimpleNamespace

    from rich.text import Text

    from frontcheck.commands import check

    monkeypatch.setattr(sys.stderr, "isatty", lambda: True, raising=False)
    bar, update = check._progress_for(SimpleNamespace())
    update("p: [bold red]U1\x1b[2J[/]", 1, 2)
    shown = Text.from_markup(bar.tasks[0].description)
    assert shown.plain == "p: [bold red]U1\\x1b[2J[/]" and not shown.spans

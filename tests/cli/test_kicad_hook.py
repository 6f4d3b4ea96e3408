"""The generator route: KiCad's BOM and netlist dialogs run ``python -m frontcheck.kicad_hook
"%I" "%O"`` on the intermediate XML netlist they write, and show what it prints.

The XML here is KiCad 9's own export (kicad-cli sch export netlist --format kicadxml, run in
KiCad 9's Debian root with the project mounted at its own path, so that the XML's source names
the project's schematic as it would on the user's machine). %O is what the BOM dialog passes:
the project's path without extension (KiCad's own BOM scripts append their extension to it,
e.g. "%O.csv" in bom_csv_grouped_by_value.py as shipped with KiCad 9).
"""

from __future__ import annotations

import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from conftest import REPO
from frontcheck.kicad_hook import main as hook, output_path, short_summary, top_findings
from kicad_root import export_xml, kicad9_root, kicad_root
from test_pipeline import write_diff_project

SAMPLES = REPO / "sample_projects"


class Opener:
    """Stands in for the browser: records what would have been opened."""

    def __init__(self, result: bool = True):
        self.opened: list[Path] = []
        self.result = result

    def __call__(self, path: Path) -> bool:
        self.opened.append(path)
        return self.result


def test_output_path_names_the_report_after_o():
    assert output_path("/p/amp") == Path("/p/amp-frontcheck.html")        # BOM dialog's %O
    assert output_path("/p/amp.net") == Path("/p/amp-frontcheck.html")
    assert output_path("/p/amp.xml") == Path("/p/amp-frontcheck.html")
    assert output_path("/p/amp.html") == Path("/p/amp.html")
    assert output_path("/p/v1.2") == Path("/p/v1.2-frontcheck.html")


def test_refuses_what_is_not_kicad_xml(tmp_path, capsys):
    sch = write_diff_project(tmp_path / "d").with_suffix(".kicad_sch")
    opener = Opener()
    assert hook([str(sch), str(tmp_path / "out")], opener=opener) == 2
    assert hook([str(tmp_path / "missing.xml"), str(tmp_path / "out")], opener=opener) == 2
    assert not list(tmp_path.glob("*.html")) and opener.opened == []
    err = capsys.readouterr().err
    assert "missing.xml" in err and "what to do" in err


@pytest.fixture(scope="module", params=[9, 10], ids=["kicad9", "kicad10"])
def shunt_bom(request, tmp_path_factory):
    """The shunt-monitor sample as the BOM dialog leaves it: the project, KiCad's XML netlist
    of it beside it (<project>.xml) and %O = <project folder>/<project>. KiCad 9, and KiCad 10
    where this machine has it."""
    root = kicad_root(request.param)
    proj = tmp_path_factory.mktemp("bom") / "shunt-monitor"
    shutil.copytree(SAMPLES / "shunt-monitor", proj)
    xml = proj / "shunt-monitor.xml"
    export_xml(root, proj / "shunt-monitor.kicad_sch", xml)
    return proj, xml, str(proj / "shunt-monitor")


def test_bom_dialog_route_summary_report_and_browser(shunt_bom, capsys):
    proj, xml, o = shunt_bom
    before = {p.name: p.read_bytes() for p in proj.iterdir()}
    opener = Opener()
    assert hook([str(xml), o, "--samples", "200"], opener=opener) == 0
    out, err = capsys.readouterr()
    report = proj / "shunt-monitor-frontcheck.html"
    assert opener.opened == [report]
    page = report.read_text()
    assert "<svg" in page and "ratio-mismatch" in page and "headroom" in page
    lines = out.splitlines()
    # The sample's README: one difference stage U1A, whose ratio error and 48 V headroom
    # are errors; the counts are those of the same check run on the schematic itself.
    from frontcheck.pipeline import RunOptions, check_project
    direct = check_project(str(proj), RunOptions(samples=200))
    n = {s: sum(f.severity == s for f in direct.findings) for s in ("error", "warning", "info")}
    assert n["error"] >= 2
    assert lines[0] == "shunt-monitor: 1 stage(s) found: U1A difference amplifier"
    assert lines[1] == (f"{n['error']} error(s), {n['warning']} warning(s), "
                        f"{n['info']} info")
    read_first = lines[lines.index("Read first:") + 1:][:3]
    assert len(read_first) == 3 and all(len(x) <= 122 for x in read_first)
    assert read_first[0].startswith("  ERROR ") and read_first[1].startswith("  ERROR ")
    assert {"ratio-mismatch", "headroom"} <= {x.split()[1].rstrip(":") for x in read_first}
    assert "FAIL at fail level 'error'" in out
    assert lines[-1] == f"Full report: {report} (opened in your browser)"
    assert err == ""
    # nothing but the report was written; the design files are byte-identical
    after = {p.name: p.read_bytes() for p in proj.iterdir() if p != report}
    assert after == before


def test_no_open_and_exit_options(shunt_bom, capsys):
    proj, xml, o = shunt_bom
    opener = Opener()
    assert hook([str(xml), o, "--samples", "200", "--no-open"], opener=opener) == 0
    assert opener.opened == []
    assert capsys.readouterr().out.splitlines()[-1] == \
        f"Full report: {proj / 'shunt-monitor-frontcheck.html'}"
    assert hook([str(xml), o, "--samples", "200", "--no-open", "--exit-status"]) == 1
    assert hook([str(xml), o, "--samples", "200", "--no-open", "--findings-exit", "5"]) == 5
    # the export dialog: a file name the user chose, ending in .html, is used as it is
    assert hook([str(xml), str(proj / "chosen.html"), "--samples", "200", "--no-open"]) == 0
    assert (proj / "chosen.html").is_file()
    (proj / "chosen.html").unlink()
    capsys.readouterr()


def test_clean_design_passes_with_a_short_summary(tmp_path, capsys):
    root = kicad9_root()
    proj = tmp_path / "bench-scale"
    shutil.copytree(SAMPLES / "bench-scale", proj)
    xml = proj / "bench-scale.xml"
    export_xml(root, proj / "bench-scale.kicad_sch", xml)
    opener = Opener(result=False)        # no browser could be started
    assert hook([str(xml), str(proj / "bench-scale"), "--samples", "200",
                 "--findings-exit", "5"], opener=opener) == 0
    out = capsys.readouterr().out
    assert "0 error(s), 0 warning(s)" in out and "PASS at fail level 'error'" in out
    assert out.splitlines()[-1] == f"Full report: {proj / 'bench-scale-frontcheck.html'}"
    assert len(out.splitlines()) <= 8


def test_top_findings_order_new_and_severe_first(tmp_path):
    # A flawed design: the error (ratio-mismatch) comes before any warning or info.
    from frontcheck.pipeline import RunOptions, run
    pro = write_diff_project(tmp_path / "d", r4="11k")
    report = run([str(pro)], RunOptions(samples=100))
    top = top_findings(report)
    ranks = ["info", "warning", "error"]
    sev = [ranks.index(f.severity) for f in top]
    assert sev == sorted(sev, reverse=True) and top[0].rule == "ratio-mismatch"
    text = short_summary(report, tmp_path / "r.html", opened=False)
    assert "ERROR ratio-mismatch: " in text


def test_module_runs_as_kicad_runs_it(shunt_bom):
    # KiCad runs the command line as a process and shows stdout as info, stderr as error and
    # the return code; the environment variable keeps the browser closed here.
    proj, xml, o = shunt_bom
    res = subprocess.run([sys.executable, "-m", "frontcheck.kicad_hook", str(xml), o,
                          "--samples", "100"], capture_output=True, text=True, timeout=300,
                         env={"PATH": "/usr/bin:/bin", "FRONTCHECK_NO_OPEN": "1"})
    assert res.returncode == 0 and res.stderr == "", res.stderr
    assert "Full report:" in res.stdout and "(opened" not in res.stdout
    bad = subprocess.run([sys.executable, "-m", "frontcheck.kicad_hook", str(proj / "nope.xml"),
                          o], capture_output=True, text=True, timeout=300)
    assert bad.returncode == 2 and "nope.xml" in bad.stderr and bad.stdout == ""


@pytest.fixture
def kicad_xml(kicad9, tmp_path):
    """KiCad 9's own intermediate XML netlist of a small flawed design, exported from another
    folder (the XML's source then does not exist here)."""
    pro = write_diff_project(tmp_path / "design", r4="11k", sub_sheet=True)
    xml = tmp_path / "export" / "amp.xml"
    xml.parent.mkdir()
    res = subprocess.run([str(kicad9), "netlist", str(pro.with_suffix(".kicad_sch")), str(xml),
                          "kicadxml"], capture_output=True, text=True, timeout=600)
    assert res.returncode == 0 and xml.is_file(), res.stderr
    return pro, xml


def test_hook_finds_what_check_finds_on_the_schematic(kicad_xml):
    # KiCad's XML export and our own schematic reader must lead to the same stage and the
    # same findings (locations differ: the XML has no sheet lines).
    from frontcheck.kicad.project import load
    from frontcheck.pipeline import RunOptions, check_netlist, check_project
    opts = RunOptions(samples=200)
    pro, xml = kicad_xml
    from_sch = check_project(str(pro), opts)
    from_xml = check_netlist(load(xml), xml.parent, "amp", str(xml), opts)
    assert [(s.id, s.kind, s.references) for s in from_xml.stages] == \
        [(s.id, s.kind, s.references) for s in from_sch.stages]
    assert [(f.rule, f.severity, f.message) for f in from_xml.findings] == \
        [(f.rule, f.severity, f.message) for f in from_sch.findings]
    assert from_xml.results["U1"].gain.nominal == pytest.approx(
        from_sch.results["U1"].gain.nominal, rel=1e-12)


def test_command_prints_the_line_to_paste(capsys):
    assert hook(["--command"]) == 0
    line = capsys.readouterr().out.strip()
    assert line == f'"{sys.executable}" -m frontcheck.kicad_hook "%I" "%O"'
    # the printed Python really runs the hook (its --help names the %I argument)
    res = subprocess.run([sys.executable, "-m", "frontcheck.kicad_hook", "--help"],
                         capture_output=True, text=True, timeout=120)
    assert res.returncode == 0 and "%I" in res.stdout


def test_finding_lines_are_cut_between_words_never_inside_a_number():
    from frontcheck.kicad_hook import _one_line
    text = "inverting ratio R3/R2 = 0.1 but non-inverting ratio R5/R4 = 0.102, 1.96 % apart"
    for width in range(20, len(text)):
        line = _one_line(text, width)
        assert len(line) <= width and line.endswith(" ...")
        prefix = line[:-4]
        assert text.startswith(prefix) and text[len(prefix)] in " ,"   # whole words only
        # a bare number last only where the text closed it with a comma (no unit cut off)
        assert not re.fullmatch(r"[\d.]+", prefix.split()[-1]) or text[len(prefix)] == ","
    assert _one_line("a  b\n c", 40) == "a b c"


@pytest.mark.parametrize("module", ["frontcheck.kicad_hook", "frontcheck.kicad_jobset"])
def test_kicad_entry_points_never_show_a_traceback(module, monkeypatch, capsys, tmp_path):
    # An unexpected failure inside a check must reach KiCad's message box as one line with
    # exit 2 (not checked), never a Python traceback and never exit 1 (which means findings).
    import importlib

    mod = importlib.import_module(module)

    def broken(*args, **kwargs):
        raise ValueError("boom inside the check")

    monkeypatch.setattr(mod, "_run", broken)
    monkeypatch.delenv("FRONTCHECK_DEBUG", raising=False)
    args = [str(tmp_path / "x.xml"), str(tmp_path / "out")] if module.endswith("hook") else [str(tmp_path)]
    status = mod.main(args)
    err = capsys.readouterr().err
    assert status == 2
    assert "Traceback" not in err
    assert err.startswith("frontcheck: ")

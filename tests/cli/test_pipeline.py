"""The check pipeline and command end to end: design files in, report and exit status out.

The designs are small KiCad 8-format projects written here (a difference amplifier drawn with
labels on the pin ends, which KiCad connects without wires: docs/kicad-connectivity.md sec. 2,
"label anchored on a pin end, no wire: connected"). A clean one uses four equal 10 k 0.1 %
resistors; the flawed one has R4 = 11 k, so R4/R3 != R2/R1 by 10 %, far more than 0.1 % tolerances
explain (a ratio-mismatch error in the default profile).
"""

from __future__ import annotations

import json
import subprocess
import sys
import uuid
from pathlib import Path

import pytest

from frontcheck.cli import main
from frontcheck.pipeline import RunOptions, check_project, find_cautions, run

# -- a tiny KiCad schematic writer -----------------------------------------------------------

_FONT = "(effects (font (size 1.27 1.27)))"
_LIB = f"""
  (lib_symbols
    (symbol "Device:R" (pin_numbers hide) (pin_names (offset 0)) (exclude_from_sim no)
      (in_bom yes) (on_board yes)
      (property "Reference" "R" (at 2.032 0 90) {_FONT})
      (property "Value" "R" (at 0 0 90) {_FONT})
      (symbol "R_0_1" (rectangle (start -1.016 -2.54) (end 1.016 2.54)
        (stroke (width 0.254) (type default)) (fill (type none))))
      (symbol "R_1_1"
        (pin passive line (at 0 3.81 270) (length 1.27) (name "~" {_FONT}) (number "1" {_FONT}))
        (pin passive line (at 0 -3.81 90) (length 1.27) (name "~" {_FONT}) (number "2" {_FONT}))))
    (symbol "Amplifier_Operational:Generic_OpAmp" (pin_names (offset 0.127)) (exclude_from_sim no)
      (in_bom yes) (on_board yes)
      (property "Reference" "U" (at 0 5.08 0) {_FONT})
      (property "Value" "opamp" (at 0 -5.08 0) {_FONT})
      (symbol "Generic_OpAmp_0_1" (polyline (pts (xy 5.08 0) (xy -5.08 5.08) (xy -5.08 -5.08)
        (xy 5.08 0)) (stroke (width 0.254) (type default)) (fill (type background))))
      (symbol "Generic_OpAmp_1_1"
        (pin input line (at -7.62 2.54 0) (length 2.54) (name "+" {_FONT}) (number "3" {_FONT}))
        (pin input line (at -7.62 -2.54 0) (length 2.54) (name "-" {_FONT}) (number "2" {_FONT}))
        (pin output line (at 7.62 0 180) (length 2.54) (name "~" {_FONT}) (number "1" {_FONT}))
        (pin power_in line (at -2.54 7.62 270) (length 3.81) (name "V+" {_FONT}) (number "5" {_FONT}))
        (pin power_in line (at -2.54 -7.62 90) (length 3.81) (name "V-" {_FONT}) (number "4" {_FONT})))))
"""
GLOBAL_NETS = ("+5V", "GND", "+12V", "-12V")


def _u(seed: str) -> str:
    return str(uuid.uuid5(uuid.NAMESPACE_URL, seed))


class Sheet:
    """Symbols placed at angle 0 with a label on every pin end (library pin (px, py) lands at
    sheet (X + px, Y - py): docs/kicad-connectivity.md sec. 1)."""

    def __init__(self, name: str, project: str, path: str):
        self.name, self.project, self.path = name, project, path
        self.items: list[str] = []
        self.x = 25.4

    def _label(self, net: str, x: float, y: float) -> None:
        if net in GLOBAL_NETS or net.startswith("G_"):
            text = net[2:] if net.startswith("G_") else net
            self.items.append(f'(global_label "{text}" (shape input) (at {x:.4f} {y:.4f} 0) '
                              f'{_FONT} (uuid "{_u(self.name + text + str(x) + str(y))}"))')
        else:
            self.items.append(f'(label "{net}" (at {x:.4f} {y:.4f} 0) {_FONT} '
                              f'(uuid "{_u(self.name + net + str(x) + str(y))}"))')

    def _symbol(self, lib: str, ref: str, value: str, x: float, y: float, pins: list[str],
                fields: dict[str, str]) -> None:
        props = [f'(property "Reference" "{ref}" (at {x:.4f} {y - 5:.4f} 0) {_FONT})',
                 f'(property "Value" "{value}" (at {x:.4f} {y + 5:.4f} 0) {_FONT})',
                 f'(property "Footprint" "" (at {x:.4f} {y:.4f} 0) (effects (font (size 1.27 1.27)) hide))']
        for k, v in fields.items():
            props.append(f'(property "{k}" "{v}" (at {x:.4f} {y:.4f} 0) '
                         f'(effects (font (size 1.27 1.27)) hide))')
        pin_items = " ".join(f'(pin "{p}" (uuid "{_u(self.name + ref + p)}"))' for p in pins)
        self.items.append(
            f'(symbol (lib_id "{lib}") (at {x:.4f} {y:.4f} 0) (unit 1) (exclude_from_sim no) '
            f'(in_bom yes) (on_board yes) (dnp no) (uuid "{_u(self.name + ref)}") '
            + " ".join(props) + f" {pin_items} "
            f'(instances (project "{self.project}" (path "{self.path}" (reference "{ref}") '
            f'(unit 1)))))')

    def r(self, ref: str, a: str, b: str, value: str = "10k", **fields) -> "Sheet":
        x, y = self.x, 50.8
        self.x += 12.7
        self._symbol("Device:R", ref, value, x, y, ["1", "2"], fields)
        self._label(a, x, y - 3.81)
        self._label(b, x, y + 3.81)
        return self

    def opamp(self, ref: str, inp: str, inn: str, out: str, vpos="+5V", vneg="GND",
              **fields) -> "Sheet":
        x, y = self.x + 12.7, 101.6
        self.x += 38.1
        self._symbol("Amplifier_Operational:Generic_OpAmp", ref, "opamp", x, y,
                     ["1", "2", "3", "4", "5"], fields)
        for net, (px, py) in ((inp, (-7.62, 2.54)), (inn, (-7.62, -2.54)), (out, (7.62, 0)),
                              (vpos, (-2.54, 7.62)), (vneg, (-2.54, -7.62))):
            self._label(net, x + px, y - py)
        return self

    def sheet_entry(self, name: str, file: str, sheet_uuid: str, root_uuid: str) -> "Sheet":
        self.items.append(
            f'(sheet (at 200 30) (size 20 20) (fields_autoplaced yes) '
            f'(stroke (width 0.1524) (type solid)) (fill (color 0 0 0 0.0000)) '
            f'(uuid "{sheet_uuid}") '
            f'(property "Sheetname" "{name}" (at 200 29 0) {_FONT}) '
            f'(property "Sheetfile" "{file}" (at 200 51 0) {_FONT}) '
            f'(instances (project "{self.project}" (path "/{root_uuid}" (page "2")))))')
        return self

    def text(self, uuid_: str) -> str:
        return (f'(kicad_sch (version 20231120) (generator "eeschema") (generator_version "8.0")\n'
                f'  (uuid "{uuid_}")\n  (paper "A4")\n{_LIB}\n  '
                + "\n  ".join(self.items)
                + '\n  (sheet_instances (path "/" (page "1")))\n)\n')


def write_diff_project(folder: Path, name: str = "amp", r4: str = "10k", ref_net: str = "GND",
                       sub_sheet: bool = False, amp_fields: dict | None = None,
                       r4_fields: dict | None = None, in_p: str = "G_IN_P",
                       in_n: str = "G_IN_N") -> Path:
    """A KiCad project holding one difference amplifier; returns the .kicad_pro path.

    With ``sub_sheet`` the amplifier sits in ``amp_stage.kicad_sch``, used by the root sheet;
    global labels carry the signals across."""
    folder.mkdir(parents=True, exist_ok=True)
    root_uuid = _u(f"{folder}/{name}/root")
    sheet_uuid = _u(f"{folder}/{name}/sheet")
    path = f"/{root_uuid}/{sheet_uuid}" if sub_sheet else f"/{root_uuid}"
    s = Sheet("amp" if sub_sheet else name, name, path)
    s.r("R1", in_n, "N1", "10k", Tolerance="0.1%")
    s.r("R2", "N1", "G_OUT", "10k", Tolerance="0.1%")
    s.r("R3", in_p, "P1", "10k", Tolerance="0.1%")
    s.r("R4", "P1", ref_net, r4, Tolerance="0.1%", **(r4_fields or {}))
    s.opamp("U1", "P1", "N1", "G_OUT", **(amp_fields or {}))
    (folder / f"{name}.kicad_pro").write_text(json.dumps(
        {"meta": {"filename": f"{name}.kicad_pro", "version": 1}}, indent=2) + "\n")
    if sub_sheet:
        (folder / "amp_stage.kicad_sch").write_text(s.text(_u(f"{folder}/{name}/amp")))
        root = Sheet(name, name, f"/{root_uuid}")
        root.sheet_entry("Amplifier", "amp_stage.kicad_sch", sheet_uuid, root_uuid)
        (folder / f"{name}.kicad_sch").write_text(root.text(root_uuid))
    else:
        (folder / f"{name}.kicad_sch").write_text(s.text(root_uuid))
    return folder / f"{name}.kicad_pro"


# -- pipeline --------------------------------------------------------------------------------

OPTS = RunOptions(samples=500, seed=1)


def test_clean_project_has_one_stage_and_passes(tmp_path):
    pro = write_diff_project(tmp_path / "clean")
    p = check_project(str(pro), OPTS)
    assert [s.id for s in p.stages] == ["U1"]
    assert p.stages[0].kind == "difference"
    r = p.results["U1"]
    # Four equal resistors: G = R2/R1 = 1 (docs/engineering.md section 1).
    assert r.gain.nominal == pytest.approx(1.0, rel=1e-4)
    assert not [f for f in p.findings if f.severity == "error"]
    assert len(p.fingerprints) == len(p.findings)


def test_flawed_project_fails_with_a_located_finding(tmp_path):
    pro = write_diff_project(tmp_path / "flawed", r4="11k")
    rep = run([str(pro)], OPTS)
    p = rep.projects[0]
    errs = [f for f in p.findings if f.severity == "error"]
    assert errs, [(f.rule, f.severity) for f in p.findings]
    assert any(f.rule == "ratio-mismatch" for f in errs)
    f = next(f for f in errs if f.rule == "ratio-mismatch")
    assert f.file and f.file.endswith(".kicad_sch") and f.line
    assert rep.exit_status() == 1
    # Nominal gain of the drawn ratios: Ad = [R2(R3+R4) + R4(R1+R2)] / [2 R1 (R3+R4)]
    # (docs/engineering.md section 1, Sedra & Smith Eq. 2.19 context) = (10*21 + 11*20) / (2*10*21).
    assert p.results["U1"].gain.nominal == pytest.approx((10 * 21 + 11 * 20) / (2 * 10 * 21),
                                                         rel=1e-3)


def test_project_paths_are_relative_to_the_git_root(tmp_path):
    repo = tmp_path / "repo"
    repo.mkdir()
    subprocess.run(["git", "init", "-q", str(repo)], check=True)
    pro = write_diff_project(repo / "boards" / "a", r4="11k")
    p = check_project(str(pro), OPTS)
    f = next(f for f in p.findings if f.rule == "ratio-mismatch")
    assert p.relpath(f.file) == "boards/a/amp.kicad_sch"


def test_cautions_from_names_and_fields(tmp_path):
    pro = write_diff_project(tmp_path / "ecg", in_p="G_ECG_RA", amp_fields={"Caution": "mains"})
    p = check_project(str(pro), OPTS)
    why = p.cautions.get("U1", [])
    assert any("ECG_RA" in w for w in why), why
    assert any("Caution field on U1" in w for w in why), why
    plain = check_project(str(write_diff_project(tmp_path / "plain")), OPTS)
    assert plain.cautions == {}


def test_every_format_carries_the_safety_notice_when_marked(tmp_path, capsys):
    pro = write_diff_project(tmp_path / "ecg", in_n="G_ELECTRODE_LA")
    for fmt in ("text", "json", "sarif", "markdown", "html"):
        out = tmp_path / f"report.{fmt}"
        assert main(["check", str(pro), "--samples", "200", "-f", fmt, "-o", str(out)]) == 0
        words = " ".join(out.read_text().replace("|", " ").split())
        assert "It does not check electrical safety" in words, fmt


# -- waivers ---------------------------------------------------------------------------------

def test_field_waiver_marks_and_does_not_fail(tmp_path):
    pro = write_diff_project(tmp_path / "w", r4="11k",
                             r4_fields={"Waive": "ratio-mismatch: gain set by R4 on purpose"})
    rep = run([str(pro)], OPTS)
    p = rep.projects[0]
    f = next(f for f in p.findings if f.rule == "ratio-mismatch")
    assert f.waived and "gain set by R4 on purpose" in f.waived
    assert rep.exit_status() == 0


def test_toml_waiver(tmp_path):
    pro = write_diff_project(tmp_path / "t", r4="11k")
    (pro.parent / "frontcheck.toml").write_text(
        '[[waive]]\nrule = "ratio-mismatch"\nreferences = ["R4"]\nreason = "deliberate"\n')
    rep = run([str(pro)], OPTS)
    f = next(f for f in rep.projects[0].findings if f.rule == "ratio-mismatch")
    assert f.waived and f.waived.startswith("deliberate")
    assert rep.exit_status() == 0


def test_field_waiver_without_reason_is_an_input_error(tmp_path, capsys):
    pro = write_diff_project(tmp_path / "bad", r4="11k", r4_fields={"Waive": "ratio-mismatch:"})
    assert main(["check", str(pro), "--samples", "100"]) == 2
    err = capsys.readouterr().err
    assert "no reason" in err and "amp.kicad_sch" in err


def test_field_waiver_of_unknown_rule_is_an_input_error(tmp_path, capsys):
    pro = write_diff_project(tmp_path / "bad", r4_fields={"Waive": "no-such-rule: because"})
    assert main(["check", str(pro), "--samples", "100"]) == 2
    assert "unknown rule 'no-such-rule'" in capsys.readouterr().err


# -- command: formats, exit status, output -------------------------------------------------

def test_exit_status_and_fail_on(tmp_path, capsys):
    clean = write_diff_project(tmp_path / "clean")
    flawed = write_diff_project(tmp_path / "flawed", r4="11k")
    assert main(["check", str(clean), "--samples", "100"]) == 0
    assert main(["check", str(flawed), "--samples", "100"]) == 1
    # the clean design still has info findings (numbers reported, no target declared)
    assert main(["check", str(clean), "--samples", "100", "--fail-on", "info"]) == 1
    assert main(["check", str(tmp_path / "nowhere"), "--samples", "100"]) == 2
    assert main(["check", str(clean), "--fail-on", "fatal"]) == 2
    capsys.readouterr()


def test_json_output_goes_only_to_the_named_file(tmp_path, capsys):
    pro = write_diff_project(tmp_path / "d", r4="11k")
    before = sorted(x.name for x in pro.parent.iterdir())
    out = tmp_path / "out" / "r.json"
    out.parent.mkdir()
    assert main(["check", str(pro), "--samples", "100", "-f", "json", "-o", str(out)]) == 1
    assert capsys.readouterr().out == ""
    doc = json.loads(out.read_text())
    assert doc["schema"] == 1 and doc["stages"][0]["id"] == "U1"
    assert any(f["rule"] == "ratio-mismatch" and f["location"]["line"] for f in doc["findings"])
    assert sorted(x.name for x in pro.parent.iterdir()) == before   # nothing beside the design


def test_output_never_overwrites_a_design_file(tmp_path, capsys):
    pro = write_diff_project(tmp_path / "d")
    sch = pro.with_suffix(".kicad_sch")
    before = sch.read_bytes()
    assert main(["check", str(pro), "-o", str(sch)]) == 2
    assert sch.read_bytes() == before
    assert "never writes to a design" in capsys.readouterr().err


def test_seed_makes_monte_carlo_repeatable(tmp_path, capsys):
    pro = write_diff_project(tmp_path / "d")
    docs = []
    for seed in ("5", "5", "6"):
        out = tmp_path / f"r{len(docs)}.json"
        main(["check", str(pro), "--samples", "300", "--seed", seed, "-f", "json", "-o", str(out)])
        docs.append(json.loads(out.read_text())["stages"][0]["cmrr_db"]["statistical"])
    assert docs[0] == docs[1]
    assert docs[0] != docs[2]


# -- baseline --------------------------------------------------------------------------------

def test_baseline_fails_only_on_new_findings(tmp_path, capsys):
    pro = write_diff_project(tmp_path / "d", r4="11k")
    base = tmp_path / "baseline.json"
    assert main(["baseline", str(pro), "--samples", "100", "-o", str(base)]) == 0
    doc = json.loads(base.read_text())
    assert any(e["rule"] == "ratio-mismatch" for e in doc["findings"])
    assert main(["check", str(pro), "--samples", "100", "--baseline", str(base)]) == 0
    # a new flaw on another stage is not in the baseline: the run fails again
    write_diff_project(tmp_path / "d", r4="11k", ref_net="NOWHERE")
    rc = main(["check", str(pro), "--samples", "100", "--baseline", str(base)])
    out = tmp_path / "r.json"
    main(["check", str(pro), "--samples", "100", "--baseline", str(base), "-f", "json",
          "-o", str(out)])
    findings = json.loads(out.read_text())["findings"]
    new_errors = {f["rule"] for f in findings if f["status"] == "new" and f["severity"] == "error"}
    # REF left on an undriven net: the floating REF is new; the ratio flaw is known
    assert "ref-floating" in new_errors and rc == 1
    assert {f["rule"]: f["status"] for f in findings}["ratio-mismatch"] == "baseline"
    capsys.readouterr()


def test_bad_baseline_file_is_an_input_error(tmp_path, capsys):
    pro = write_diff_project(tmp_path / "d")
    bad = tmp_path / "b.json"
    bad.write_text("{not json")
    assert main(["check", str(pro), "--baseline", str(bad)]) == 2
    assert "b.json:1:2" in capsys.readouterr().err


# -- several projects ----------------------------------------------------------------------

def test_several_projects_in_parallel_one_report(tmp_path, capsys):
    a = write_diff_project(tmp_path / "a", name="alpha")
    b = write_diff_project(tmp_path / "b", name="beta", r4="11k")
    out = tmp_path / "r.json"
    rc = main(["check", str(a.parent), str(b.parent), "--jobs", "2", "--samples", "100",
               "-f", "json", "-o", str(out)])
    assert rc == 1
    doc = json.loads(out.read_text())
    assert [p["name"] for p in doc["projects"]] == ["alpha", "beta"]
    assert {s["project"] for s in doc["stages"]} == {"alpha", "beta"}
    failing = {f["project"] for f in doc["findings"] if f["fails"]}
    assert failing == {"beta"}
    # the same run serially gives the same findings
    out2 = tmp_path / "r2.json"
    main(["check", str(a.parent), str(b.parent), "--samples", "100", "-f", "json", "-o", str(out2)])
    strip = lambda d: [(f["project"], f["rule"], f["message"]) for f in d["findings"]]
    assert strip(json.loads(out2.read_text())) == strip(doc)


def test_one_unreadable_project_among_several_exits_2(tmp_path, capsys):
    a = write_diff_project(tmp_path / "a")
    rc = main(["check", str(a), str(tmp_path / "missing"), "--jobs", "2", "--samples", "100",
               "-f", "json", "-o", str(tmp_path / "r.json")])
    assert rc == 2
    doc = json.loads((tmp_path / "r.json").read_text())
    assert doc["projects"][1]["error"]
    assert "missing" in capsys.readouterr().err


def test_sub_sheet_path_checks_the_whole_project(tmp_path):
    pro = write_diff_project(tmp_path / "h", sub_sheet=True, r4="11k")
    p = check_project(str(pro.parent / "amp_stage.kicad_sch"), OPTS)
    assert [s.id for s in p.stages] == ["U1"]
    assert p.name == "amp"


def test_module_entry_point_runs(tmp_path):
    pro = write_diff_project(tmp_path / "d")
    out = subprocess.run([sys.executable, "-m", "frontcheck", "check", str(pro), "--samples",
                          "100"], capture_output=True, text=True)
    if "No module named frontcheck.__main__" in out.stderr:
        out = subprocess.run([sys.executable, "-m", "frontcheck.cli", "check", str(pro),
                              "--samples", "100"], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    assert "U1" in out.stdout and "PASS" in out.stdout


def test_report_names_the_effective_profile_and_monte_carlo_settings(tmp_path, capsys):
    from frontcheck.analysis import Options
    pro = write_diff_project(tmp_path / "d")
    out = tmp_path / "r.json"
    main(["check", str(pro), "-f", "json", "-o", str(out), "--samples", "100"])
    tool = json.loads(out.read_text())["tool"]
    assert tool["profile"] == "default"
    assert tool["samples"] == 100 and tool["seed"] == Options().seed
    (pro.parent / "frontcheck.toml").write_text('profile = "strict"\n')
    main(["check", str(pro), "-f", "json", "-o", str(out), "--samples", "100"])
    doc = json.loads(out.read_text())
    assert doc["tool"]["profile"] == "strict" and doc["projects"][0]["profile"] == "strict"
    main(["check", str(pro), "-f", "json", "-o", str(out), "--samples", "100",
          "--profile", "default"])
    assert json.loads(out.read_text())["tool"]["profile"] == "default"


def test_a_folder_of_projects_checks_each(tmp_path, capsys):
    write_diff_project(tmp_path / "boards" / "a", name="alpha")
    write_diff_project(tmp_path / "boards" / "b" / "rev2", name="beta", r4="11k")
    write_diff_project(tmp_path / "boards" / ".trash", name="gamma")
    out = tmp_path / "r.json"
    rc = main(["check", str(tmp_path / "boards"), "--jobs", "2", "--samples", "100", "-f", "json",
               "-o", str(out)])
    assert rc == 1
    assert [p["name"] for p in json.loads(out.read_text())["projects"]] == ["alpha", "beta"]
    # a folder with nothing KiCad below it stays an input error
    (tmp_path / "empty").mkdir()
    assert main(["check", str(tmp_path / "empty")]) == 2
    capsys.readouterr()


# -- fingerprints ------------------------------------------------------------------------------

def test_fingerprints_follow_the_symbol_not_the_reference_or_the_order():
    from frontcheck.checks.finding import Finding
    from frontcheck.netlist import Component, Netlist
    from frontcheck.waivers import fingerprints
    u = "26ec3824-5849-55b3-bf75-9cc0d1d882e9"
    def design(refs):
        return Netlist(components={r: Component(r, uuids=(u,), sheet_path=f"/Channel {k}/")
                                   for k, r in enumerate(refs, start=1)})
    nl = design(["R101", "R201"])
    a = Finding("gain-error", "error", "m", stage="U101", references=["R101"], uuid=u)
    b = Finding("gain-error", "error", "m", stage="U201", references=["R201"], uuid=u)
    fa, fb = fingerprints([a, b], "p", nl)
    assert fa != fb
    # the same findings in the other order keep their fingerprints
    assert fingerprints([b, a], "p", nl) == [fb, fa]
    # re-annotated (R101 -> R111, R201 -> R211): same sheets, same symbol, same fingerprints
    nl2 = design(["R111", "R211"])
    a2 = Finding("gain-error", "error", "m", stage="U111", references=["R111"], uuid=u)
    b2 = Finding("gain-error", "error", "m", stage="U211", references=["R211"], uuid=u)
    assert fingerprints([a2, b2], "p", nl2) == [fa, fb]
    # another rule on the same symbol is another finding
    c = Finding("headroom", "error", "m", stage="U101", references=["R101"], uuid=u)
    assert fingerprints([c], "p", nl)[0] not in (fa, fb)


def test_field_waiver_on_the_amplifier_covers_its_stage(tmp_path):
    pro = write_diff_project(tmp_path / "w", r4="11k",
                             amp_fields={"Waive": "ratio-mismatch, cmrr-budget: gain trim on R4"})
    p = run([str(pro)], OPTS).projects[0]
    f = next(f for f in p.findings if f.rule == "ratio-mismatch")
    assert f.waived and "Waive field on U1" in f.waived
    # a waiver names its rules: others on the stage stay live
    pro2 = write_diff_project(tmp_path / "x", r4="11k", amp_fields={"Waive": "headroom: n/a"})
    p2 = run([str(pro2)], OPTS).projects[0]
    assert not next(f for f in p2.findings if f.rule == "ratio-mismatch").waived


def test_design_wide_caution_without_a_marked_stage(tmp_path, capsys):
    # The project's name says EMG; its nets and the stage do not: the notice still appears.
    pro = write_diff_project(tmp_path / "emg", name="emg-armband")
    p = check_project(str(pro), OPTS)
    assert p.cautions == {"": ["project name emg-armband"]}
    out = tmp_path / "r.md"
    assert main(["check", str(pro), "--samples", "100", "-f", "markdown", "-o", str(out)]) == 0
    assert "does not check electrical safety" in " ".join(out.read_text().split())


def test_design_wide_cautions_from_fields_in_any_case_sheets_and_net_names():
    from frontcheck.netlist import Component, Net, Netlist
    nl = Netlist(components={
        "J1": Component("J1", fields={"CAUTION": "patient lead"}, sheet_path="/Electrode in/"),
        "J2": Component("J2", fields={"caution": ""}),
        "R1": Component("R1", fields={"Value": "10k", "Cautions": "not the field"}),
    }, nets=[Net(n) for n in ("GND", "ecg_ra", "X_EMG", "+5V", "eeg1", "EEG2", "mains_l",
                              "ELECTRODE_7", "plain")])
    assert find_cautions([], nl, "board") == {"": [
        "Caution field on J1: patient lead", "sheet /Electrode in/",
        "net names ecg_ra, X_EMG, eeg1, EEG2, mains_l and 1 more"]}
    assert find_cautions([], Netlist(components={"R1": Component("R1")},
                                     nets=[Net("GND"), Net("IN")]), "board") == {}


def test_stage_cautions_name_fields_references_and_nets_in_order():
    from types import SimpleNamespace as NS

    from frontcheck.netlist import Component, Netlist
    nl = Netlist(components={"ECG1": Component("ECG1", fields={"caution": "lead"}),
                             "R2": Component("R2"), "U1": Component("U1")})
    circuit = NS(ports={"in_p": "IN_P", "in_n": "mains_n"}, resistors=[NS(a="IN_P", b="X")],
                 capacitors=[], opamps=[NS(ref="U1", internal=False, inp="IN_P", inn="X",
                                           out="OUT")])
    stage = NS(id="U1", intent=NS(notes=[]), references=["R2", "ECG1"], circuit=circuit)
    assert find_cautions([stage], nl, "board") == {"U1": [
        "Caution field on ECG1: lead", "reference ECG1", "net name mains_n"]}
    stage.references, nl.components["ECG1"].fields = ["R2"], {}
    assert find_cautions([stage], nl, "board") == {"U1": ["net name mains_n"]}


def test_progress_is_reported_per_stage_and_per_project(tmp_path):
    a = write_diff_project(tmp_path / "a", name="alpha")
    b = write_diff_project(tmp_path / "b", name="beta")
    calls = []
    run([str(a)], OPTS, progress=lambda label, done, total: calls.append((label, done, total)))
    assert calls[0] == ("alpha: U1", 0, 1) and calls[-1] == ("alpha: rules", 1, 1)
    calls.clear()
    run([str(a), str(b)], OPTS, jobs=2,
        progress=lambda label, done, total: calls.append((done, total)))
    assert calls == [(1, 2), (2, 2)]


def test_config_option_reads_another_project_file(tmp_path, capsys):
    pro = write_diff_project(tmp_path / "d", r4="11k")
    cfg = tmp_path / "elsewhere" / "review.toml"
    cfg.parent.mkdir()
    cfg.write_text('[[waive]]\nrule = "ratio-mismatch"\nreason = "accepted at review"\n')
    assert main(["check", str(pro), "--samples", "100"]) == 1
    assert main(["check", str(pro), "--samples", "100", "--config", str(cfg)]) == 0
    assert "accepted at review" in capsys.readouterr().out
    assert main(["check", str(pro), "--config", str(tmp_path / "missing.toml")]) == 2
    capsys.readouterr()


# -- a stage that cannot be analysed -----------------------------------------------------------

def test_unreadable_value_is_an_error_on_its_stage(tmp_path, capsys):
    # R4's value 'RG' (a placeholder for a gain resistor still to be chosen) cannot be read:
    # that stage gets no numbers and an error finding at R4; the run goes on and fails.
    pro = write_diff_project(tmp_path / "d", r4="RG")
    out = tmp_path / "r.json"
    assert main(["check", str(pro), "--samples", "100", "-f", "json", "-o", str(out)]) == 1
    doc = json.loads(out.read_text())
    st = doc["stages"][0]
    assert st["id"] == "U1" and st["gain"] is None and st["cmrr_db"] is None
    f = next(f for f in doc["findings"] if f["stage"] == "U1" and f["severity"] == "error")
    assert f["references"] == ["R4"] and "R4" in f["message"] and "'RG'" in f["message"]
    sch = pro.with_suffix(".kicad_sch").read_text().splitlines()
    assert f["location"]["line"] and "R4" in "".join(sch[f["location"]["line"] - 1:
                                                        f["location"]["line"] + 8])
    capsys.readouterr()


def test_real_design_with_a_placeholder_value(corpus, capsys):
    # BioAmp-EXG-Pill (corpus/real-designs) draws its gain resistor R6 with the value 'RG'.
    design = corpus / "real-designs" / "upsidedownlabs__BioAmp-EXG-Pill" / "hardware"
    p = check_project(str(design), OPTS)
    f = next(f for f in p.findings if f.severity == "error" and f.references == ["R6"])
    assert f.stage in {s.id for s in p.stages} and f.stage not in p.results
    lines = Path(f.file).read_text().splitlines()
    assert '"R6"' in "".join(lines[f.line - 1:f.line + 2])

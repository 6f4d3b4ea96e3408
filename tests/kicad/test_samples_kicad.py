"""The sample projects under sample_projects/, checked against KiCad 9 itself.

- The generator (sample_projects/generate.py) rebuilds every committed file byte for byte.
- KiCad 9's ERC reports no error the sample's README does not list (and no warning at all:
  the samples ship their symbol library and are drawn on the 1.27 mm grid).
- KiCad 9's netlist export is the source of truth for connectivity: it must equal the nets the
  generator drew (its own reading of its drawing with KiCad's naming rules) and the netlist
  frontcheck's own schematic reader builds (same (ref, pin) partition, same net names).
- Per sample, the nets of the front end are the ones the scenario describes.
- KiCad renders one SVG per sheet instance, carrying every reference of that instance.
- Each README has a parseable "Expected findings" list with known rule ids and references
  that exist in the design.
"""

from __future__ import annotations

import importlib.util
import re
import subprocess
from pathlib import Path

import pytest

from frontcheck.kicad.sexpr import parse_file

from conftest import need

REPO = Path(__file__).resolve().parents[2]
SAMPLES = REPO / "sample_projects"

RULE_IDS = {"ratio-mismatch", "cmrr-budget", "gain-error", "headroom", "ref-floating", "ref-impedance",
            "bias-return", "source-loading", "input-filter", "stage-incomplete", "assumed-value"}


def _load_generator():
    spec = importlib.util.spec_from_file_location("fc_sample_generate", SAMPLES / "generate.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


GEN = _load_generator()
PROJECTS = {proj.name: (mod, proj) for mod, proj in GEN.projects()}
NAMES = list(PROJECTS)


# ------------------------------------------------------------------------------ helpers

def kicad_nets(path: Path) -> dict[str, set[tuple[str, str]]]:
    """Net name -> {(ref, pin)} from a KiCad S-expression netlist export."""
    tree, _ = parse_file(path)
    nets = next(x for x in tree if isinstance(x, list) and x[0] == "nets")
    out = {}
    for net in nets[1:]:
        name = next(x[1] for x in net if isinstance(x, list) and x[0] == "name")
        nodes = set()
        for x in net:
            if isinstance(x, list) and x[0] == "node":
                d = {y[0]: y[1] for y in x[1:] if isinstance(y, list)}
                nodes.add((d["ref"], d["pin"]))
        out[name] = nodes
    return out


def kicad_components(path: Path) -> set[str]:
    tree, _ = parse_file(path)
    comps = next(x for x in tree if isinstance(x, list) and x[0] == "components")
    return {next(y[1] for y in c if isinstance(y, list) and y[0] == "ref") for c in comps[1:]}


def erc_violations(report: Path) -> list[tuple[str, str]]:
    """(code, severity) of every violation in a KiCad ERC text report."""
    out, code = [], None
    for line in report.read_text(encoding="utf-8").splitlines():
        m = re.match(r"\[(\w+)\]:", line)
        if m:
            code = m.group(1)
            continue
        m = re.match(r"\s*;\s*(error|warning|exclusion)\b", line)
        if m and code:
            out.append((code, m.group(1)))
            code = None
    return out


def readme_section(name: str, title: str) -> list[str]:
    text = (SAMPLES / name / "README.md").read_text(encoding="utf-8")
    m = re.search(rf"^## {re.escape(title)}\s*$(.*?)(?=^## |\Z)", text, re.M | re.S)
    assert m, f"{name}/README.md has no '## {title}' section"
    return [ln.strip() for ln in m.group(1).splitlines() if ln.strip()]


def expected_findings(name: str) -> list[tuple[str, list[str]]]:
    out = []
    for ln in readme_section(name, "Expected findings"):
        m = re.fullmatch(r"- ([a-z-]+): ([A-Z]+\d+(?:, [A-Z]+\d+)*)", ln)
        if m:
            out.append((m.group(1), m.group(2).split(", ")))
        else:
            assert not ln.startswith("-"), f"{name}: unparseable finding line {ln!r}"
    return out


def expected_erc_errors(name: str) -> list[str]:
    lines = readme_section(name, "Expected ERC errors")
    codes = [m.group(1) for ln in lines if (m := re.fullmatch(r"- (\w+)(?::.*)?", ln))]
    assert codes or lines == ["None."], f"{name}: write the ERC list as '- code: why' or 'None.'"
    return codes


class _KiCad:
    """Runs KiCad 9 once per sample and output kind, into a session temp folder."""

    def __init__(self, tool: Path, out: Path):
        self.tool, self.out, self.done = tool, out, {}

    def _run(self, kind: str, name: str, target: Path) -> Path:
        key = (kind, name)
        if key not in self.done:
            root = SAMPLES / name / f"{name}.kicad_sch"
            r = subprocess.run([str(self.tool), kind, str(root), str(target)], capture_output=True,
                               text=True, timeout=600)
            assert target.exists(), f"kicad9 {kind} {name} failed: {r.stdout}\n{r.stderr}"
            self.done[key] = target
        return self.done[key]

    def netlist(self, name: str) -> Path:
        return self._run("netlist", name, self.out / f"{name}.net")

    def erc(self, name: str) -> Path:
        return self._run("erc", name, self.out / f"{name}.rpt")

    def svg(self, name: str) -> Path:
        return self._run("svg", name, self.out / f"svg-{name}")


@pytest.fixture(scope="session")
def kicad(kicad9, tmp_path_factory) -> _KiCad:
    return _KiCad(kicad9, tmp_path_factory.mktemp("samples-kicad"))


# ------------------------------------------------------------------------------ generator

def test_generator_rebuilds_the_committed_files(tmp_path):
    written = GEN.write(tmp_path)
    rel = {p.relative_to(tmp_path) for p in written}
    committed = {p.relative_to(SAMPLES) for name in NAMES for p in (SAMPLES / name).iterdir()}
    assert committed == rel
    for p in written:
        assert (SAMPLES / p.relative_to(tmp_path)).read_bytes() == p.read_bytes(), p.name


def test_five_samples_in_numbered_order():
    assert NAMES == ["bench-scale", "kiln-logger", "shunt-monitor", "strain-logger", "ecg-frontend"]


@pytest.mark.parametrize("name", NAMES)
def test_drawing_follows_the_generator_rules(name):
    # no pin inside a wire, no wire through a body, no crossing, no dangling end or label
    assert PROJECTS[name][1].check() == []


@pytest.mark.parametrize("name", NAMES)
def test_uuids_are_unique_per_file(name):
    for sch in sorted((SAMPLES / name).glob("*.kicad_sch")):
        text = sch.read_text(encoding="utf-8")
        assert "(version 20250114)" in text and '(generator_version "9.0")' in text
        uuids = re.findall(r'\(uuid "([0-9a-f-]{36})"\)', text)
        assert len(uuids) == len(set(uuids)), sch.name


def test_one_channel_sheet_four_instances():
    text = (SAMPLES / "strain-logger" / "channel.kicad_sch").read_text(encoding="utf-8")
    for ch in (1, 2, 3, 4):
        assert f'(reference "U{ch}01")' in text and f'(reference "R{ch}04")' in text
    root = (SAMPLES / "strain-logger" / "strain-logger.kicad_sch").read_text(encoding="utf-8")
    assert root.count('(property "Sheetfile" "channel.kicad_sch"') == 4


# ------------------------------------------------------------------------------ README

@pytest.mark.parametrize("name", NAMES)
def test_readme_lists_findings_in_the_fixed_form(name, kicad):
    comps = kicad_components(kicad.netlist(name))
    for rule, refs in expected_findings(name):
        assert rule in RULE_IDS, f"{name}: unknown rule id {rule}"
        assert set(refs) <= comps, f"{name}: {rule} names parts not in the design: {set(refs) - comps}"


def test_expected_findings_per_sample():
    # the clean design lists none; each faulty one lists what its scenario puts wrong
    assert expected_findings("bench-scale") == []
    rules = {n: {r for r, _ in expected_findings(n)} for n in NAMES}
    assert {"bias-return", "ref-impedance"} <= rules["kiln-logger"]
    assert {"ratio-mismatch", "headroom"} <= rules["shunt-monitor"]
    assert expected_findings("strain-logger") == [("gain-error", [f"U{c}01", f"R{c}01"]) for c in (1, 2, 3, 4)]
    assert ("input-filter", ["R1", "R2", "C1", "C2", "C3"]) in expected_findings("ecg-frontend")


def test_ecg_readme_and_sheet_carry_the_safety_caution():
    readme = (SAMPLES / "ecg-frontend" / "README.md").read_text(encoding="utf-8")
    sheet = (SAMPLES / "ecg-frontend" / "ecg-frontend.kicad_sch").read_text(encoding="utf-8")
    for text in (readme, sheet):
        assert "not patient safety" in text and "IEC 60601-1" in text
    assert '(property "Caution" "patient-connected"' in sheet


# ------------------------------------------------------------------------------ KiCad 9

@pytest.mark.oracle
@pytest.mark.parametrize("name", NAMES)
def test_erc_reports_only_explained_errors(name, kicad):
    found = erc_violations(kicad.erc(name))
    errors = sorted(code for code, sev in found if sev == "error")
    assert errors == sorted(expected_erc_errors(name))
    assert [v for v in found if v[1] != "error"] == []


@pytest.mark.oracle
@pytest.mark.parametrize("name", NAMES)
def test_kicad_netlist_equals_the_drawn_nets(name, kicad):
    assert kicad_nets(kicad.netlist(name)) == PROJECTS[name][1].nets()


@pytest.mark.oracle
@pytest.mark.parametrize("name", NAMES)
def test_frontcheck_reads_the_same_netlist_as_kicad(name, kicad):
    from frontcheck.kicad.project import load

    ours = load(SAMPLES / name)
    mine = {n.name: {(x.ref, x.pin) for x in n.nodes} for n in ours.nets if n.nodes}
    assert mine == kicad_nets(kicad.netlist(name))


@pytest.mark.oracle
@pytest.mark.parametrize("name", NAMES)
def test_kicad_renders_every_sheet_instance(name, kicad):
    folder = kicad.svg(name)
    proj = PROJECTS[name][1]
    svgs = sorted(folder.glob("*.svg"))
    assert len(svgs) == len(proj.instances)
    for inst in proj.instances:
        suffix = "" if inst.ref is None else "-" + inst.ref.name
        svg = folder / f"{name}{suffix}.svg"
        text = svg.read_text(encoding="utf-8")
        shown = set(re.findall(r">([^<>]+)</text>", text))
        refs = {p.refs[inst.index] for p in inst.sheet.parts if not p.refs[0].startswith("#")}
        missing = {r for r in refs if r not in shown and not any(s.startswith(r) for s in shown)}
        assert not missing, f"{svg.name} lacks {sorted(missing)}"


# ------------------------------------------------------------------------------ front-end nets

def _where(nets: dict[str, set], ref: str, pin: str) -> str:
    hits = [n for n, nodes in nets.items() if (ref, pin) in nodes]
    assert len(hits) == 1, f"{ref}.{pin} in {hits}"
    return hits[0]


@pytest.mark.oracle
def test_bench_scale_front_end(kicad):
    nets = kicad_nets(kicad.netlist("bench-scale"))
    # bridge outputs straight to the first-stage non-inverting inputs
    assert nets["/IN+"] == {("R3", "2"), ("R4", "1"), ("U1", "3")}
    assert nets["/IN-"] == {("R1", "2"), ("R2", "1"), ("U1", "5")}
    # RG between the two inverting inputs, feedback to each output
    assert _where(nets, "R6", "1") == _where(nets, "U1", "2") == _where(nets, "R5", "1")
    assert _where(nets, "R6", "2") == _where(nets, "U1", "6") == _where(nets, "R7", "1")
    assert nets["/VO1"] == {("U1", "1"), ("R5", "2"), ("R10", "1")}
    assert nets["/VO2"] == {("U1", "7"), ("R7", "2"), ("R8", "1")}
    # difference stage, REF from the buffered mid-supply
    assert nets[_where(nets, "U2", "3")] == {("R10", "2"), ("R11", "2"), ("U2", "3")}
    assert nets[_where(nets, "U2", "2")] == {("R8", "2"), ("R9", "1"), ("U2", "2")}
    assert nets["/VREF"] == {("R11", "1"), ("U3", "6"), ("U3", "2"), ("J2", "2")}
    assert nets["/VMID"] == {("R12", "2"), ("R13", "1"), ("C1", "1"), ("U3", "3")}
    assert nets["/OUT"] == {("U2", "6"), ("R9", "2"), ("J2", "1")}
    assert {("R1", "1"), ("R3", "1"), ("U1", "8"), ("U2", "7"), ("U3", "7")} <= nets["+5V"]
    assert {("R2", "2"), ("R4", "2"), ("U1", "4"), ("U2", "4"), ("U3", "4")} <= nets["GND"]


@pytest.mark.oracle
def test_kiln_logger_front_end(kicad):
    nets = kicad_nets(kicad.netlist("kiln-logger"))
    # each input sees only its coupling capacitor: no DC path anywhere
    assert nets["/IN+"] == {("C1", "2"), ("U1", "3")}
    assert nets["/IN-"] == {("C2", "2"), ("U1", "2")}
    assert nets["/TC+"] == {("J1", "1"), ("C1", "1")}
    assert nets["/TC-"] == {("J1", "2"), ("C2", "1")}
    assert _where(nets, "R1", "1") == _where(nets, "U1", "1")
    assert _where(nets, "R1", "2") == _where(nets, "U1", "8")
    assert nets["/REF"] == {("U1", "5"), ("R2", "2"), ("R3", "1")}
    assert ("U1", "7") in nets["+5V"] and ("U1", "4") in nets["-5V"]
    assert nets["/TEMP"] == {("U1", "6"), ("J2", "1")}


@pytest.mark.oracle
def test_shunt_monitor_front_end(kicad):
    nets = kicad_nets(kicad.netlist("shunt-monitor"))
    assert nets["/BAT+"] == {("J1", "1"), ("R1", "1"), ("R4", "1")}
    assert nets["/LOAD+"] == {("J2", "1"), ("R1", "2"), ("R2", "1")}
    assert nets[_where(nets, "U1", "2")] == {("R2", "2"), ("R3", "1"), ("U1", "2")}
    assert nets[_where(nets, "U1", "3")] == {("R4", "2"), ("R5", "1"), ("U1", "3")}
    assert nets["/VREF"] == {("R5", "2"), ("U1", "7"), ("U1", "6"), ("J4", "2")}
    assert nets["/ISENSE"] == {("U1", "1"), ("R3", "2"), ("J4", "1")}


@pytest.mark.oracle
def test_strain_logger_front_end(kicad):
    nets = kicad_nets(kicad.netlist("strain-logger"))
    for ch in (1, 2, 3, 4):
        u, p = f"U{ch}01", f"/Channel {ch}/"
        assert nets[p + "SIG+"] == {(u, "3"), (f"R{ch}02", "1"), (f"J{ch}01", "2")}
        assert nets[p + "SIG-"] == {(u, "2"), (f"R{ch}03", "2"), (f"R{ch}04", "1")}
        assert _where(nets, f"R{ch}01", "1") == _where(nets, u, "1")
        assert _where(nets, f"R{ch}01", "2") == _where(nets, u, "8")
        # the root's label names the per-channel output, and every REF shares one buffer
        assert nets[f"/CH{ch}"] == {(u, "6"), ("J1", str(ch))}
        assert (u, "5") in nets["/VREF"]
    assert nets["/VREF"] == {("U1", "6"), ("U1", "2")} | {(f"U{c}01", "5") for c in (1, 2, 3, 4)}


@pytest.mark.oracle
def test_ecg_front_end(kicad):
    nets = kicad_nets(kicad.netlist("ecg-frontend"))
    assert nets["/RA"] == {("J1", "1"), ("R1", "1")}
    assert nets["/LA"] == {("J1", "3"), ("R2", "1")}
    # filter: series R, Cc to ground per leg, Cd across, 10M returns to VREF
    assert nets["/INP"] == {("R1", "2"), ("C1", "1"), ("C3", "1"), ("R16", "1"), ("U1", "3")}
    assert nets["/INN"] == {("R2", "2"), ("C2", "1"), ("C3", "2"), ("R17", "1"), ("U1", "5")}
    assert {("C1", "2"), ("C2", "2")} <= nets["GND"]
    # split RG: the centre tap is the common-mode sense that feeds the driven reference
    assert nets["/CM"] == {("R5", "2"), ("R6", "1"), ("R13", "1")}
    assert _where(nets, "R5", "1") == _where(nets, "U1", "2") == _where(nets, "R3", "1")
    assert _where(nets, "R6", "2") == _where(nets, "U1", "6") == _where(nets, "R4", "1")
    assert nets[_where(nets, "U3", "6")] == {("R13", "2"), ("R14", "1"), ("C5", "1"), ("U3", "6")}
    assert nets["/RLD"] == {("U3", "7"), ("R14", "2"), ("C5", "2"), ("R15", "1")}
    assert nets["/RL"] == {("J1", "2"), ("R15", "2")}
    assert {("U3", "5"), ("R10", "1"), ("R16", "2"), ("R17", "2"), ("U3", "1")} <= nets["/VREF"]


@pytest.mark.oracle
@pytest.mark.parametrize("name", NAMES)
def test_svgs_convert_to_png_for_review(name, kicad, tmp_path):
    # the PNGs are what a reviewer looks at; a renderer that cannot read KiCad's SVG would
    # leave the samples unreviewable
    import shutil

    exe = shutil.which("rsvg-convert")
    need(exe is not None, "rsvg-convert not installed (apt-get install librsvg2-bin)")
    for svg in sorted(kicad.svg(name).glob("*.svg")):
        png = tmp_path / (svg.stem + ".png")
        subprocess.run([exe, "-w", "1200", "-b", "white", str(svg), "-o", str(png)], check=True, timeout=120)
        head = png.read_bytes()[:24]
        assert head[:8] == b"\x89PNG\r\n\x1a\n"
        assert int.from_bytes(head[16:20], "big") == 1200


# ------------------------------------------------------------------------------ drawing checker

def _tiny_sheet():
    import sys

    sys.path.insert(0, str(SAMPLES))
    from _gen.schematic import Sheet

    return Sheet("t.kicad_sch", "t")


def test_checker_rejects_a_pin_inside_a_wire():
    # KiCad 9 does not join a pin end lying inside a wire (docs/kicad-connectivity.md sec. 2)
    sh = _tiny_sheet()
    sh.add("R", "R1", "1k", (10, 10))
    sh.wire((10, 2), (10, 20))
    errs = sh.check()
    assert any("lies inside wire" in e for e in errs)
    assert any("crosses the body of R1" in e for e in errs)


def test_checker_splits_a_drawn_t_and_dots_it():
    sh = _tiny_sheet()
    sh.wire((0, 0), (20, 0))
    sh.wire((10, 0), (10, 10))
    assert sorted(sh.normalised_wires()) == [((0, 0), (10, 0)), ((10, 0), (10, 10)), ((10, 0), (20, 0))]
    assert sh.junctions() == [(10, 0)]


def test_checker_flags_dangling_ends_and_unconnected_pins():
    sh = _tiny_sheet()
    r = sh.add("R", "R1", "1k", (10, 10))
    sh.wire(r["1"], (10, 0))
    errs = sh.check()
    assert any("wire end at (10, 0) touches nothing" in e for e in errs)
    assert any("pin R1.2" in e and "not connected" in e for e in errs)

"""`frontcheck netlist` end to end: the JSON contract of docs/architecture.md sec. 4, text output,
exit codes.

Oracles: KiCad's QA reference netlists and KiCad 9's own netlist export of the corpus designs.
"""

from __future__ import annotations

import io
import json
import subprocess
import sys

import pytest

from frontcheck.cli import main
from frontcheck.kicad.netfile import read_net
from frontcheck.kicad.sexpr import parse_file


def run_cli(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "frontcheck.cli", *args],
                          capture_output=True, text=True)


def _raw_nets(path):
    """(name, [(ref, pin), ...]) straight from KiCad's file, through the bare tokenizer."""
    tree, _ = parse_file(path)
    nets = next(x for x in tree if x[0] == "nets")
    out = []
    for net in nets[1:]:
        name = next(x[1] for x in net[1:] if isinstance(x, list) and x[0] == "name")
        nodes = []
        for node in (x for x in net[1:] if isinstance(x, list) and x[0] == "node"):
            kv = {x[0]: x[1] for x in node[1:] if isinstance(x, list) and len(x) > 1}
            nodes.append([kv["ref"], kv["pin"]])
        out.append({"name": name, "nodes": nodes})
    return out


@pytest.mark.parametrize("case", ["hierarchy_aliases", "legacy_power", "test_hier_no_connect",
                                  "bus_connection"])
def test_json_of_a_netlist_file_is_kicads_nets(corpus, case):
    path = corpus / "kicad-netlists" / case / f"{case}.net"
    r = run_cli("netlist", str(path), "--format", "json")
    assert r.returncode == 0, r.stderr
    doc = json.loads(r.stdout)
    assert list(doc) == ["nets"]
    assert doc["nets"] == _raw_nets(path)
    for net in doc["nets"]:
        assert set(net) == {"name", "nodes"}
        assert all(isinstance(n, list) and len(n) == 2 for n in net["nodes"])


@pytest.mark.oracle
@pytest.mark.parametrize("design", [
    "upsidedownlabs__BioAmp-EXG-Pill/hardware/BioAmp-EXG-Pill.kicad_sch",
    "schuyler4__USB_Curve_Tracer/electronics/rev3/ecad/USB_curve_tracer.kicad_sch",
    "DangerousPrototypes__BusPirate5-hardware/bus_pirate_pcb/6-REV2B/6-REV2b.kicad_sch",
])
def test_json_of_a_schematic_matches_kicad9(corpus, kicad9, tmp_path, design):
    sch = corpus / "real-designs" / design
    ref = tmp_path / "kicad.net"
    subprocess.run([str(kicad9), "netlist", str(sch), str(ref)], check=True, capture_output=True)
    expected = {n.name: sorted([x.ref, x.pin] for x in n.nodes) for n in read_net(ref).nets}
    for given in (sch, sch.parent, sch.with_suffix(".kicad_pro")):
        r = run_cli("netlist", str(given), "--format", "json")
        assert r.returncode == 0, r.stderr
        got = {n["name"]: sorted(n["nodes"]) for n in json.loads(r.stdout)["nets"]}
        assert got == expected


def test_plain_text_when_not_a_terminal(corpus):
    path = corpus / "kicad-netlists" / "legacy_power" / "legacy_power.net"
    r = run_cli("netlist", str(path))
    assert r.returncode == 0 and r.stderr == ""
    lines = r.stdout.splitlines()
    raw = _raw_nets(path)
    assert len(lines) == len(raw)
    for line, net in zip(lines, raw):
        name, nodes = line.split("\t")
        assert name == net["name"]
        assert nodes.split() == [f"{a}.{b}" for a, b in net["nodes"]]
    assert "\x1b[" not in r.stdout   # no colour codes in a pipe


class _Tty(io.StringIO):
    def isatty(self):
        return True


def test_table_in_a_terminal(corpus, monkeypatch):
    path = corpus / "kicad-netlists" / "legacy_power" / "legacy_power.net"
    out = _Tty()
    monkeypatch.setattr(sys, "stdout", out)
    monkeypatch.setenv("COLUMNS", "120")
    assert main(["netlist", str(path)]) == 0
    text = out.getvalue()
    # Every net name and every node appears; pin names are shown beside the pins.
    for net in _raw_nets(path):
        assert net["name"] in text
        for ref, pin in net["nodes"]:
            assert f"{ref}.{pin}" in text
    assert "U1001.3 GND" in text
    assert "4 nets, 2 components" in text


def test_net_names_are_not_console_markup(tmp_path, monkeypatch):
    p = tmp_path / "m.net"
    p.write_text('(export (version "E") (components (comp (ref "R1")))'
                 ' (nets (net (code "1") (name "/D[bold]0") (node (ref "R1") (pin "1")))))')
    out = _Tty()
    monkeypatch.setattr(sys, "stdout", out)
    assert main(["netlist", str(p)]) == 0
    assert "/D[bold]0" in out.getvalue()


def test_exit_codes(tmp_path, corpus):
    assert run_cli("netlist").returncode == 2                       # usage: PATH missing
    r = run_cli("netlist", str(tmp_path / "none.net"))
    assert r.returncode == 2 and "none.net" in r.stderr and "Traceback" not in r.stderr
    r = run_cli("netlist", str(corpus / "kicad-netlists" / "jumpers" / "jumpers.net"),
                "--format", "yaml")
    assert r.returncode == 2 and "Traceback" not in r.stderr


def test_notes_go_to_stderr(tmp_path):
    p = tmp_path / "v.net"
    p.write_text('(export (version "Q") (components (comp (ref "R1")))'
                 ' (nets (net (code "1") (name "A") (node (ref "R1") (pin "1")))))')
    r = run_cli("netlist", str(p), "--format", "json")
    assert r.returncode == 0
    assert json.loads(r.stdout) == {"nets": [{"name": "A", "nodes": [["R1", "1"]]}]}
    assert "'Q'" in r.stderr and "note" in r.stderr


@pytest.mark.oracle
def test_generated_hierarchy_matches_kicad9(kicad9, tmp_path):
    # The benchmark generator's designs (sheet files used several times, per-instance
    # references, power symbols): KiCad 9 must load them, and its netlist must be ours.
    import importlib.util
    from pathlib import Path

    gen_path = Path(__file__).resolve().parents[2] / "benchmarks" / "gen_large.py"
    spec = importlib.util.spec_from_file_location("gen_large", gen_path)
    gen = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(gen)
    large = gen.generate_hierarchy(tmp_path, files=3, instances=2, blocks=2)
    stress = gen.generate_stress(tmp_path, stages=3)
    for folder, parts in ((large, 3 * 2 * 2 * 5), (stress, 3 * 5)):
        ref = tmp_path / f"{folder.name}.net"
        subprocess.run([str(kicad9), "netlist", str(folder / f"{folder.name}.kicad_sch"),
                        str(ref)], check=True, capture_output=True)
        kicad = read_net(ref)
        assert len(kicad.components) == parts
        r = run_cli("netlist", str(folder), "--format", "json")
        assert r.returncode == 0, r.stderr
        got = {n["name"]: sorted(n["nodes"]) for n in json.loads(r.stdout)["nets"]}
        assert got == {n.name: sorted([x.ref, x.pin] for x in n.nodes) for n in kicad.nets}

"""Netlist-file readers against KiCad's own files.

Oracles: the reference netlists of KiCad's QA suite (corpus/kicad-netlists, written by
KiCad), and fresh exports of the corpus real designs made by KiCad 9's command-line tool in
both formats (S-expression and XML), which must read to the same circuit.
"""

from __future__ import annotations

import dataclasses
import re
import subprocess
from pathlib import Path

import pytest

from frontcheck.errors import InputError
from frontcheck.kicad.netfile import read_net, read_xml
from frontcheck.kicad.sexpr import parse_file
from conftest import need

QA_CASES = ["bus_connection", "hierarchy_aliases", "issue14657", "issue14818", "issue16439",
            "jumpers", "legacy_power", "test_hier_no_connect"]


def real_roots(corpus: Path) -> list[Path]:
    """Root sheets of the corpus real designs: the .kicad_sch beside each .kicad_pro."""
    roots = []
    for pro in sorted((corpus / "real-designs").rglob("*.kicad_pro")):
        sch = pro.with_suffix(".kicad_sch")
        if sch.exists():
            roots.append(sch)
    return roots


@pytest.fixture(scope="session")
def exports(corpus, kicad9, tmp_path_factory) -> dict[str, tuple[Path, Path, Path]]:
    """name -> (root sheet, .net export, .xml export), made once per session by KiCad 9."""
    out = tmp_path_factory.mktemp("kicad9-exports")
    result = {}
    for sch in real_roots(corpus):
        name = "_".join(sch.relative_to(corpus / "real-designs").with_suffix("").parts)
        net, xml = out / f"{name}.net", out / f"{name}.xml"
        subprocess.run([str(kicad9), "netlist", str(sch), str(net)], check=True,
                       capture_output=True)
        subprocess.run([str(kicad9), "netlist", str(sch), str(xml), "kicadxml"], check=True,
                       capture_output=True)
        result[name] = (sch, net, xml)
    return result


@pytest.fixture(scope="session")
def kicad10(shared, tmp_path_factory) -> Path:
    """KiCad 10's command-line tool. The shared tools folder holds ``kicad10`` as a link to
    the ``kicad9`` script (which picks the KiCad major version from the name it is called
    by); where the link arrived as a plain file naming its target, call the target through
    a fresh link."""
    tool = shared / "tools" / "kicad10"
    need(tool.exists(), f"{tool} not found")
    if tool.stat().st_size < 64 and not tool.is_symlink():
        target = shared / "tools" / tool.read_text().strip()
        link = tmp_path_factory.mktemp("kicad10-link") / "kicad10"
        link.symlink_to(target)
        tool = link
    r = subprocess.run([str(tool), "version"], capture_output=True, text=True)
    need(r.returncode == 0 and r.stdout.startswith("10."), f"KiCad 10 not available: {r.stderr}")
    return tool


def _no_location(nl):
    return {r: dataclasses.replace(c, location=None) for r, c in nl.components.items()}


# ---------------------------------------------------------------------------------------
# KiCad's QA reference netlists


@pytest.mark.parametrize("case", QA_CASES)
def test_qa_netlist_reads_every_net_and_node(corpus, case):
    path = corpus / "kicad-netlists" / case / f"{case}.net"
    nl = read_net(path)
    tree, _ = parse_file(path)
    # Count nets, nodes and comps straight from the S-expression tree KiCad wrote.
    nets = [x for x in next(x for x in tree if x[0] == "nets")[1:]]
    comps = [x for x in next(x for x in tree if x[0] == "components")[1:]]
    assert len(nl.nets) == len(nets)
    assert sum(len(n.nodes) for n in nl.nets) == sum(
        1 for n in nets for x in n[1:] if isinstance(x, list) and x[0] == "node")
    assert len(nl.components) == len(comps)
    assert nl.notes == []
    # Every node of a listed component is one of that component's pins.
    for net in nl.nets:
        for node in net.nodes:
            if node.ref in nl.components:
                assert node.pin in nl.components[node.ref].pins


def test_legacy_power_values(corpus):
    # Values read off corpus/kicad-netlists/legacy_power/legacy_power.net (KiCad 6.0.10 export).
    path = corpus / "kicad-netlists" / "legacy_power" / "legacy_power.net"
    nl = read_net(path)
    gnd = nl.net_by_name("GND")
    assert {(n.ref, n.pin, n.pinfunction, n.pintype) for n in gnd.nodes} == {
        ("D1001", "1", "K", "passive"), ("U1001", "3", "GND", "power_in")}
    u = nl.components["U1001"]
    assert u.lib_id == "74xGxx:74AHC1G00"
    assert u.pins["5"].name == "VCC" and u.pins["5"].type == "power_in"
    assert u.pins["1"].name == "" and u.pins["1"].type == "input"
    assert u.uuids == ("801334a8-b16d-4581-b41c-57060138b236",)
    assert u.sheet_path == "/"
    assert u.fields["Datasheet"].startswith("http")
    # The location is the comp's own line in the file.
    line = path.read_text().splitlines()[u.location.line - 1]
    assert '(comp (ref "U1001")' in line
    assert u.location.file == str(path)


def test_hierarchy_sheet_paths_and_per_instance_refs(corpus):
    # corpus/kicad-netlists/hierarchy_aliases: one sub-sheet used twice, a nested sheet in each.
    nl = read_net(corpus / "kicad-netlists" / "hierarchy_aliases" / "hierarchy_aliases.net")
    paths = {c.sheet_path for c in nl.components.values()}
    assert "/First Subsheet/Sub2/" in paths and "/Second Subsheet/Sub2/" in paths
    # Two instances of one symbol: the same symbol UUID under two references.
    by_uuid: dict[str, set[str]] = {}
    for c in nl.components.values():
        for u in c.uuids:
            by_uuid.setdefault(u, set()).add(c.ref)
    assert any(len(refs) == 2 for refs in by_uuid.values())


def test_compound_pintype_kept_and_pin_type_is_base(corpus):
    # test_hier_no_connect.net: U3 pin 1 is written (pintype "passive+no_connect").
    nl = read_net(corpus / "kicad-netlists" / "test_hier_no_connect" / "test_hier_no_connect.net")
    node = next(n for net in nl.nets for n in net.nodes if n.ref == "U3" and n.pin == "1")
    assert node.pintype == "passive+no_connect"
    assert nl.components["U3"].pins["1"].type == "passive"


# ---------------------------------------------------------------------------------------
# KiCad 9 exports of the real designs: the two formats read to the same circuit


@pytest.mark.oracle
def test_sexpr_and_xml_exports_agree(exports):
    assert len(exports) >= 10
    for name, (_sch, net, xml) in exports.items():
        a, b = read_net(net), read_xml(xml)
        assert a.partition() == b.partition(), name
        assert _no_location(a) == _no_location(b), name
        # Same names and node details, in KiCad's order.
        assert [(n.name, n.nodes) for n in a.nets] == [(n.name, n.nodes) for n in b.nets], name
        assert a.components, name
        assert a.notes == [] and b.notes == [], name
        # Each comp's location points at its own line in each file.
        for nl, marker in ((a, '(comp (ref "{}")'), (b, '<comp ref="{}">')):
            lines = Path(nl.source).read_text().splitlines()
            for c in list(nl.components.values())[:20]:
                assert marker.format(c.ref) in lines[c.location.line - 1], (name, c.ref)


@pytest.mark.oracle
def test_escaped_slash_in_net_names(exports):
    # KiCad writes a '/' inside a label or pin name as {slash} in the .net file and as '/'
    # in the XML file; both must give the .net spelling (docs/test-corpus.md sec. 2: `V{slash}2`).
    _sch, net, xml = exports["schuyler4__USB_Curve_Tracer_electronics_rev2_ecad_USB_curve_tracer"]
    names = {n.name for n in read_xml(xml).nets}
    assert "V{slash}2" in names
    assert "V{slash}2" in net.read_text() and 'name="V/2"' in xml.read_text()


@pytest.mark.oracle
def test_excluded_from_board_parts_dropped(exports):
    # The XML export lists (on_board no) parts with an exclude_from_board property; the .net
    # export leaves them out. Both readers leave them out.
    _sch, net, xml = exports["schuyler4__USB_Curve_Tracer_electronics_rev2_ecad_USB_curve_tracer"]
    text = xml.read_text()
    excluded = re.findall(r'<comp ref="([^"]+)">(?:(?!</comp>).)*exclude_from_board', text, re.S)
    assert excluded
    for ref in excluded:
        assert f'(ref "{ref}")' not in net.read_text()
        assert ref not in read_xml(xml).components
        assert ref not in read_net(net).components


@pytest.mark.oracle
def test_dnp_and_bom_flags_match_the_schematic(exports):
    # KiCad 9 design with (dnp yes) and (in_bom no) symbols (6-REV2B); the flags on the
    # schematic symbols are the oracle.
    sch, net, xml = exports["DangerousPrototypes__BusPirate5-hardware_bus_pirate_pcb_6-REV2B_6-REV2b"]
    dnp_uuids, nobom_uuids = set(), set()
    for f in sch.parent.glob("*.kicad_sch"):
        tree, _ = parse_file(f)
        for sym in (x for x in tree if isinstance(x, list) and x[0] == "symbol"):
            flags = {x[0]: x[1] for x in sym if isinstance(x, list) and len(x) == 2}
            uuid = flags.get("uuid")
            if flags.get("dnp") == "yes":
                dnp_uuids.add(uuid)
            if flags.get("in_bom") == "no":
                nobom_uuids.add(uuid)
    for nl in (read_net(net), read_xml(xml)):
        comps = [c for c in nl.components.values() if not c.ref.startswith("#")]
        dnp = {u for c in comps if c.dnp for u in c.uuids}
        assert dnp and dnp == dnp_uuids & {u for c in comps for u in c.uuids}
        nobom = {u for c in comps if not c.in_bom for u in c.uuids}
        assert nobom and nobom == nobom_uuids & {u for c in comps for u in c.uuids}


@pytest.mark.oracle
def test_multi_unit_part_pins_and_uuids(exports):
    # BioAmp-EXG-Pill: U1 is a quad op-amp drawn as 5 placed units (docs/test-corpus.md sec. 2);
    # KiCad lists the five unit UUIDs and all 14 pins.
    _sch, net, xml = exports["upsidedownlabs__BioAmp-EXG-Pill_hardware_BioAmp-EXG-Pill"]
    for nl in (read_net(net), read_xml(xml)):
        u1 = nl.components["U1"]
        assert len(u1.uuids) == 5
        assert sorted(u1.pins, key=int) == [str(i) for i in range(1, 15)]
        assert {p.name for p in u1.pins.values()} >= {"+", "-", "V+", "V-"}
        assert u1.lib_id.startswith("Amplifier_Operational:")


@pytest.mark.oracle
@pytest.mark.parametrize("design", [
    "upsidedownlabs__BioAmp-EXG-Pill/hardware/BioAmp-EXG-Pill.kicad_sch",
    "schuyler4__USB_Curve_Tracer/electronics/rev3/ecad/USB_curve_tracer.kicad_sch",
])
def test_kicad10_exports_read_like_kicad9(corpus, kicad9, kicad10, tmp_path, design):
    # KiCad 10 writes pinfunction as <name>_<number> and adds a (units ...) block; the
    # circuit, names and pin functions must read exactly as from KiCad 9's export.
    sch = corpus / "real-designs" / design
    files = {}
    for tool, fmt, ext in ((kicad9, "kicadsexpr", "net"), (kicad10, "kicadsexpr", "net"),
                           (kicad10, "kicadxml", "xml")):
        out = tmp_path / f"{tool.name}.{ext}"
        subprocess.run([str(tool), "netlist", str(sch), str(out), fmt], check=True,
                       capture_output=True)
        files[(tool.name, ext)] = out
    assert re.search(r'pinfunction "[^"]+_\d+"', files[("kicad10", "net")].read_text())
    k9 = read_net(files[("kicad9", "net")])
    for nl in (read_net(files[("kicad10", "net")]), read_xml(files[("kicad10", "xml")])):
        assert [(n.name, n.nodes) for n in nl.nets] == [(n.name, n.nodes) for n in k9.nets]
        assert nl.notes == []
        for ref, c in k9.components.items():
            c10 = nl.components[ref]
            assert {p: (x.name, x.type) for p, x in c10.pins.items()} == \
                {p: (x.name, x.type) for p, x in c.pins.items()}
            assert (c10.value, c10.lib_id, c10.uuids, c10.dnp) == (c.value, c.lib_id, c.uuids, c.dnp)
    if "BioAmp" in design:
        # KiCad 10's units block: U1 is a quad op-amp with a separate power unit
        # (docs/test-corpus.md sec. 2).
        u1 = read_net(files[("kicad10", "net")]).components["U1"]
        assert {p: u1.pins[p].unit for p in ("1", "2", "3", "5", "4", "11", "14")} == {
            "1": 1, "2": 1, "3": 1, "5": 2, "4": 5, "11": 5, "14": 4}
        assert k9.components["U1"].pins["1"].unit == 0   # KiCad 9 cannot tell


# ---------------------------------------------------------------------------------------
# versions, pin functions, malformed structure (small invented files)


NET_TEMPLATE = """(export (version "{version}")
  (design (tool "Eeschema {tool}"))
  (components
    (comp (ref "J1") (value "CONN")
      (libsource (lib "Connector") (part "Conn_01x02") (description ""))
      (fields (field (name "Tolerance") "1%"))
      (property (name "dnp") (value ""))
      (sheetpath (names "/Input stage/") (tstamps "/abc/"))
      (tstamps "11111111-2222-3333-4444-555555555555")))
  (libparts
    (libpart (lib "Connector") (part "Conn_01x02")
      (pins (pin (num "1") (name "Pin_1") (type "passive"))
            (pin (num "2") (name "~") (type "passive")))))
  (nets
    (net (code "1") (name "/IN")
      (node (ref "J1") (pin "1") (pinfunction "{pf}") (pintype "passive")))
    (net (code "2") (name "GND")
      (node (ref "J1") (pin "2") (pintype "passive")))))
"""


def _write(tmp_path, text, name="x.net"):
    p = tmp_path / name
    p.write_text(text)
    return p


@pytest.mark.parametrize("tool, pf, expected", [
    # docs/kicad-connectivity.md sec. 7: 10 writes <name>_<number>, 9 writes <name>.
    ("10.0.7", "Pin_1_1", "Pin_1"),
    ("9.0.2", "Pin_1", "Pin_1"),
])
def test_pinfunction_is_the_bare_pin_name(tmp_path, tool, pf, expected):
    nl = read_net(_write(tmp_path, NET_TEMPLATE.format(version="E", tool=tool, pf=pf)))
    node = nl.net_by_name("/IN").nodes[0]
    assert node.pinfunction == expected
    c = nl.components["J1"]
    assert c.pins["1"].name == "Pin_1" and c.pins["2"].name == ""
    assert c.dnp and c.fields["Tolerance"] == "1%" and c.sheet_path == "/Input stage/"
    assert c.lib_id == "Connector:Conn_01x02"


def test_unknown_version_is_a_note(tmp_path):
    nl = read_net(_write(tmp_path, NET_TEMPLATE.format(version="Z", tool="11.0", pf="Pin_1")))
    assert len(nl.nets) == 2
    assert any("'Z'" in n for n in nl.notes)


def test_not_a_netlist_is_input_error(tmp_path):
    p = _write(tmp_path, '(kicad_sch (version 20250114) (generator "eeschema"))', "a.net")
    with pytest.raises(InputError) as e:
        read_net(p)
    assert e.value.file == str(p) and "kicad_sch" in e.value.message
    with pytest.raises(InputError):
        read_net(_write(tmp_path, '(export (version "E") (design))', "b.net"))


def test_malformed_files_are_input_errors_with_position(tmp_path):
    p = _write(tmp_path, NET_TEMPLATE.format(version="E", tool="9.0", pf="x")[:-40], "t.net")
    with pytest.raises(InputError) as e:
        read_net(p)
    assert e.value.file == str(p) and e.value.line is not None
    x = _write(tmp_path, '<?xml version="1.0"?>\n<export version="E">\n<components>\n', "t.xml")
    with pytest.raises(InputError) as e:
        read_xml(x)
    assert e.value.file == str(x) and e.value.line == 4
    d = _write(tmp_path, '<!DOCTYPE x [<!ENTITY a "aaaa">]><export version="E"/>', "d.xml")
    with pytest.raises(InputError):
        read_xml(d)
    with pytest.raises(InputError) as e:
        read_net(tmp_path / "missing.net")
    assert "no such file" in e.value.message


def test_xml_reader_reads_an_invented_version_d_file(tmp_path):
    # Version D (KiCad 5): singular tstamp, aliases in libparts.
    x = _write(tmp_path, """<?xml version="1.0" encoding="UTF-8"?>
<export version="D">
  <design><tool>Eeschema 5.1.9</tool></design>
  <components>
    <comp ref="R1"><value>10k</value><libsource lib="Device" part="R_Small"/>
      <sheetpath names="/" tstamps="/"/><tstamp>5F3A1B2C</tstamp></comp>
  </components>
  <libparts>
    <libpart lib="Device" part="R"><aliases><alias>R_Small</alias></aliases>
      <pins><pin num="1" name="~" type="passive"/><pin num="2" name="~" type="passive"/></pins>
    </libpart>
  </libparts>
  <nets>
    <net code="1" name="Net-(R1-Pad1)"><node ref="R1" pin="1"/></net>
    <net code="2" name="GND"><node ref="R1" pin="2"/><unknown_element/></net>
  </nets>
</export>
""", "v5.xml")
    nl = read_xml(x)
    assert nl.notes == []
    r1 = nl.components["R1"]
    assert r1.uuids == ("5F3A1B2C",) and r1.value == "10k" and r1.location.line == 5
    assert r1.pins["1"].name == "" and r1.pins["2"].type == "passive"
    assert nl.partition() == {frozenset({("R1", "1")}), frozenset({("R1", "2")})}


@pytest.mark.oracle
def test_content_decides_the_format(exports, tmp_path):
    # KiCad's XML export saved as .net, and its .net export saved as .xml, read the same
    # circuit, each with a note saying what was found.
    _sch, net, xml = exports["upsidedownlabs__BioAmp-EXG-Pill_hardware_BioAmp-EXG-Pill"]
    xml_as_net, net_as_xml = tmp_path / "a.net", tmp_path / "b.xml"
    xml_as_net.write_bytes(xml.read_bytes())
    net_as_xml.write_bytes(net.read_bytes())
    expected = read_net(net).partition()
    for nl, word in ((read_net(xml_as_net), "XML"), (read_xml(net_as_xml), "S-expression")):
        assert nl.partition() == expected
        assert len(nl.notes) == 1 and word in nl.notes[0]

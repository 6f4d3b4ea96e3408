"""Every schematic file of the real designs in the shared corpus loads, whichever sheet the
user points at, and every pin of every placed unit lands in exactly one net.

The counts below were read from KiCad 9.0.2's own netlist export of each root sheet
(``kicad-cli sch export netlist``, run through shared/tools/kicad9): number of components
and number of (ref, pin) nodes over all nets. They are not our own output.
"""

from __future__ import annotations

from collections import Counter
from pathlib import Path

import pytest

from conftest import SHARED
from frontcheck.kicad.project import find_project, load

# (root sheet under corpus/real-designs, components, nodes, nets) from KiCad 9.0.2's export.
KICAD9_COUNTS = [
    ("Aightech__CleverHand-hardware/KiCad/modules/EMG_INA331/EMG_INA331.kicad_sch", 49, 114, 30),
    ("DangerousPrototypes__BusPirate5-hardware/bus_pirate_pcb/5-REV10A/REV10a.kicad_sch", 220, 842, 198),
    ("DangerousPrototypes__BusPirate5-hardware/bus_pirate_pcb/6-REV2B/6-REV2b.kicad_sch", 227, 881, 202),
    ("brbcza__balanced-receiver/balanced-receiver.kicad_sch", 139, 379, 84),
    ("maruta__Compact-SimpleFOC-Board/bldc.kicad_sch", 66, 259, 76),
    ("prototypefund__psylink/schematics/electrode_module3.3/electrode_module3.3.kicad_sch", 55, 122, 39),
    ("prototypefund__psylink/schematics/electrode_module4/PsyLinkMCP.kicad_sch", 64, 140, 36),
    ("schuyler4__Basic_Diff_Probe/electronics/rev1/ecad/Basic_Diff_Probe.kicad_sch", 39, 84, 20),
    ("schuyler4__Basic_Diff_Probe/electronics/rev2/ecad/Basic_Diff_Probe.kicad_sch", 40, 86, 20),
    ("schuyler4__USB_Curve_Tracer/electronics/rev2/ecad/USB_curve_tracer.kicad_sch", 66, 184, 57),
    ("schuyler4__USB_Curve_Tracer/electronics/rev3/ecad/USB_curve_tracer.kicad_sch", 88, 220, 66),
    ("upsidedownlabs__BioAmp-EXG-Pill/hardware/BioAmp-EXG-Pill.kicad_sch", 27, 67, 17),
    ("upsidedownlabs__Muscle-BioAmp-BisCute/hardware/muscle-bioamp-biscute.kicad_sch", 26, 58, 15),
]


def _real(corpus: Path) -> Path:
    return corpus / "real-designs"


def test_every_project_is_listed(corpus):
    """The table covers every project of the corpus (a new design must be added to it)."""
    roots = {str(p.with_suffix(".kicad_sch").relative_to(_real(corpus)))
             for p in _real(corpus).rglob("*.kicad_pro")}
    assert roots == {r for r, *_ in KICAD9_COUNTS}


@pytest.mark.parametrize("root,components,nodes,nets", KICAD9_COUNTS,
                         ids=[r.split("/")[0] + "/" + Path(r).name for r, *_ in KICAD9_COUNTS])
def test_counts_and_every_pin_in_one_net(corpus, root, components, nodes, nets):
    nl = load(_real(corpus) / root)
    assert len(nl.components) == components
    assert sum(len(n.nodes) for n in nl.nets) == nodes
    assert len(nl.nets) == nets
    seen = Counter((n.ref, n.pin) for net in nl.nets for n in net.nodes)
    assert all(v == 1 for v in seen.values()), [k for k, v in seen.items() if v > 1][:5]
    placed = Counter((c.ref, p) for c in nl.components.values() for p in c.pins)
    assert placed == seen


def _all_sheets():
    base = SHARED / "corpus" / "real-designs"
    return sorted(base.rglob("*.kicad_sch")) if base.is_dir() else []


@pytest.mark.parametrize("sheet", _all_sheets(),
                         ids=lambda p: str(p.relative_to(SHARED / "corpus" / "real-designs")))
def test_any_sheet_loads_the_whole_project(sheet):
    """Pointing at a sub-sheet finds the root through the .kicad_pro beside it."""
    pf = find_project(sheet)
    assert pf.pro is not None and pf.root.is_file()
    nl = load(sheet)
    root_nl = load(pf.root)
    assert nl.partition() == root_nl.partition()
    assert [n.name for n in nl.nets] == [n.name for n in root_nl.nets]


def test_project_folder_and_pro_file(corpus):
    folder = _real(corpus) / "brbcza__balanced-receiver"
    a, b = load(folder), load(folder / "balanced-receiver.kicad_pro")
    assert a.partition() == b.partition() and len(a.components) == 139


def test_component_carries_custom_fields_and_location(corpus):
    """Fields other than Value/Footprint reach the Component, and the location is the line
    of the placed symbol in its own sheet file."""
    root = _real(corpus) / "schuyler4__USB_Curve_Tracer/electronics/rev2/ecad/USB_curve_tracer.kicad_sch"
    nl = load(root)
    for c in nl.components.values():
        assert c.location is not None and c.location.line
        text = Path(c.location.file).read_text(encoding="utf-8").splitlines()
        block = "\n".join(text[c.location.line - 12:c.location.line + 40])
        assert f'"{c.ref}"' in block or c.ref in block
        assert c.fields["Reference"] == c.ref
        assert c.uuids


def test_multi_unit_parts_list_only_placed_units(corpus):
    """BioAmp-EXG-Pill: U1 is a quad op-amp with 5 units (A-D and a power unit); KiCad's export
    lists 14 pins for it (checked in KICAD9_COUNTS via the node total) - here: every pin that
    is a node of U1 belongs to a placed unit and carries its unit number."""
    nl = load(_real(corpus) / "upsidedownlabs__BioAmp-EXG-Pill/hardware/BioAmp-EXG-Pill.kicad_sch")
    u1 = nl.components["U1"]
    assert {p.unit for p in u1.pins.values()} <= {1, 2, 3, 4, 5}
    assert {n.pin for net in nl.nets for n in net.nodes if n.ref == "U1"} == set(u1.pins)

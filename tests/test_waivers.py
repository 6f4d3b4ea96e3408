"""Field waivers and fingerprints (frontcheck.waivers) on hand-made netlists: a waive field is
found whatever its case or leading blanks, and a design without one has none; the sheet
instance of a fingerprint is the one whose reference begins a reference of the finding."""

from __future__ import annotations

from frontcheck.checks.finding import Finding
from frontcheck.netlist import Component, Netlist
from frontcheck.waivers import _key, field_waivers


def test_waive_fields_in_any_case_or_with_leading_blanks_are_found():
    nl = Netlist(components={
        "R1": Component("R1", fields={"Value": "10k", "WAIVE": "headroom: on purpose"}),
        "R2": Component("R2", fields={"Value": "10k", "  waive 2": "ratio-mismatch: trimmed"}),
        "R3": Component("R3", fields={"Value": "10k", "x\nwaive": "no waiver: not at the start",
                                      "Waiver": ""}),
    })
    found = [(w.ref, w.rules, w.reason) for w in field_waivers(nl)]
    assert found == [("R1", ("headroom",), "on purpose"), ("R2", ("ratio-mismatch",), "trimmed")]
    del nl.components["R1"], nl.components["R2"]
    assert field_waivers(nl) == []


def test_the_sheet_instance_is_the_one_whose_reference_begins_a_finding_reference():
    u = "26ec3824-5849-55b3-bf75-9cc0d1d882e9"

    def old_rule(f, placed):   # the definition: a placed reference some reference starts with
        refs = set(f.references) | ({f.stage} if f.stage else set())
        hit = [sp for ref, sp in placed if ref in refs or any(r.startswith(ref) for r in refs)]
        return hit[0] if len(hit) == 1 else ""

    sheets = set()
    for placed in ([("U1", "/A/"), ("U10", "/B/"), ("R5", "/C/")], [("R5", "/C/"), ("", "/D/")]):
        for refs, stage in [(["R5"], "U10A/U10B"), (["R5"], None), (["U10"], None), ([], None),
                            (["X"], None), (["U1A"], "U1A/U1B"), (["R50"], ""), (["R5"], "")]:
            f = Finding("gain-error", "error", "m", stage=stage, references=refs, uuid=u)
            sheets.add(old_rule(f, placed))
            want = old_rule(f, placed)
            assert _key(f, "p", {u: placed}) == f"gain-error\x00uuid\x00{u}\x00{want}"
    assert sheets == {"", "/A/", "/C/", "/D/"}          # every outcome was reached

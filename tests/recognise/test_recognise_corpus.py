"""Recognition on the real designs of the shared corpus. Expected stages, kinds, references and
roles are those listed in docs/test-corpus.md sec. 2 (read from the schematics by people, not
by frontcheck). Each design is read twice: from KiCad 9's own netlist export (the oracle for
connectivity, no unit numbers) and through frontcheck's schematic loader (unit numbers known);
both must give the same stages."""

from __future__ import annotations

import subprocess

import pytest

from frontcheck.recognise import find_stages
from netlist_builder import ideal_gains

DESIGNS = {
    "bioamp": "upsidedownlabs__BioAmp-EXG-Pill/hardware/BioAmp-EXG-Pill.kicad_sch",
    "biscute": "upsidedownlabs__Muscle-BioAmp-BisCute/hardware/muscle-bioamp-biscute.kicad_sch",
    "psylink33": "prototypefund__psylink/schematics/electrode_module3.3/electrode_module3.3.kicad_sch",
    "psylink4": "prototypefund__psylink/schematics/electrode_module4/PsyLinkMCP.kicad_sch",
    "simplefoc": "maruta__Compact-SimpleFOC-Board/bldc.kicad_sch",
    "cleverhand": "Aightech__CleverHand-hardware/KiCad/modules/EMG_INA331/EMG_INA331.kicad_sch",
    "tracer2": "schuyler4__USB_Curve_Tracer/electronics/rev2/ecad/USB_curve_tracer.kicad_sch",
    "tracer3": "schuyler4__USB_Curve_Tracer/electronics/rev3/ecad/USB_curve_tracer.kicad_sch",
    "probe1": "schuyler4__Basic_Diff_Probe/electronics/rev1/ecad/Basic_Diff_Probe.kicad_sch",
    "probe2": "schuyler4__Basic_Diff_Probe/electronics/rev2/ecad/Basic_Diff_Probe.kicad_sch",
    "receiver": "brbcza__balanced-receiver/balanced-receiver.kicad_sch",
    "buspirate5": "DangerousPrototypes__BusPirate5-hardware/bus_pirate_pcb/5-REV10A/REV10a.kicad_sch",
    "buspirate6": "DangerousPrototypes__BusPirate5-hardware/bus_pirate_pcb/6-REV2B/6-REV2b.kicad_sch",
}

READERS = ["kicad9-export", "frontcheck-loader"]


@pytest.fixture(scope="session")
def netlists(corpus, tmp_path_factory):
    """name -> reader -> Netlist, built lazily (KiCad's export takes about a second)."""
    cache: dict[tuple[str, str], object] = {}
    out_dir = tmp_path_factory.mktemp("corpus-nets")

    def get(name: str, reader: str, kicad9=None):
        key = (name, reader)
        if key not in cache:
            sch = corpus / "real-designs" / DESIGNS[name]
            if reader == "kicad9-export":
                from frontcheck.kicad.netfile import read_net

                out = out_dir / f"{name}.net"
                subprocess.run([str(kicad9), "netlist", str(sch), str(out)], check=True,
                               capture_output=True, timeout=600)
                cache[key] = read_net(out)
            else:
                from frontcheck.kicad.project import load

                cache[key] = load(sch)
        return cache[key]

    return get


@pytest.fixture(params=READERS)
def read(request, netlists):
    reader = request.param
    kicad9 = request.getfixturevalue("kicad9") if reader == "kicad9-export" else None
    return lambda name: netlists(name, reader, kicad9)


def part_library(tmp_path, toml: str):
    """frontcheck's PartLibrary with a project part file written for the test (the corpus
    folders stay untouched). Numbers there are invented inputs for the expansion."""
    from frontcheck.parts import PART_FILE, PartLibrary

    (tmp_path / PART_FILE).write_text(toml, encoding="utf-8")
    return PartLibrary.load(tmp_path)


def by_id(rec):
    return {s.id: s for s in rec.stages}


def test_bioamp_exg_pill_two_opamp_with_rg(read):
    rec = find_stages(read("bioamp"))
    assert list(by_id(rec)) == ["U1A+U1B"] and not rec.near_misses and not rec.unsupported
    st = rec.stages[0]
    # docs/test-corpus.md sec. 2: U1A (+in = IN-), U1B (+in = IN+), RG = R6 between the inverting
    # inputs, R5/R7 22K, R2/R10 220K, reference ampRef.
    assert st.kind == "two-opamp" and st.amplifiers == ["U1A", "U1B"]
    assert st.roles == {"R1": "R2", "R2": "R5", "R3": "R7", "R4": "R10", "RG": "R6"}
    assert st.circuit.ports == {"in_p": "IN+", "in_n": "IN-", "ref": "ampRef", "out": "inaOUT"}
    # R6's value is the word "RG": not a number, so it is reported and not guessed.
    assert any("R6" in n for n in st.notes)


def test_biscute_two_opamp_without_rg(read):
    rec = find_stages(read("biscute"))
    (st,) = rec.stages
    # docs/test-corpus.md sec. 2: U1A (+in inaIN-) with R4 100k to ampRef and R1 10k feedback; U1A
    # output -> R5 10k -> U1B inverting input, R2 100k feedback (gain 11); U1B +in inaIN+, out
    # inaOUT.
    assert st.id == "U1A+U1B" and st.kind == "two-opamp"
    assert st.roles == {"R1": "R4", "R2": "R1", "R3": "R5", "R4": "R2"}
    assert st.circuit.ports == {"in_p": "inaIN+", "in_n": "inaIN-", "ref": "ampRef", "out": "inaOUT"}
    assert ideal_gains(st)[0] == pytest.approx(11.0, rel=1e-9)


def test_psylink_module33_four_inamps(read, tmp_path):
    rec = find_stages(read("psylink33"))
    # docs/test-corpus.md sec. 2: four integrated in-amps U1-U4, RG = R9-R12, every Ref pin on GNDS.
    assert rec.stages == []
    assert [(u.ref, u.kind) for u in rec.unsupported] == [
        (f"U{i}", "integrated-inamp") for i in range(1, 5)]
    assert sorted(u.roles["RG"] for u in rec.unsupported) == ["R10", "R11", "R12", "R9"]
    assert {u.pins["ref"] for u in rec.unsupported} == {"GNDS"}
    parts = part_library(tmp_path, '[[match]]\nref = "U?"\nclass = "generic-inamp"\n'
                                   'k = "50k"\nr_stage2 = "10k"\n')
    rec = find_stages(read("psylink33"), parts)
    assert [s.id for s in rec.stages] == ["U1", "U2", "U3", "U4"] and not rec.unsupported
    assert all(s.kind == "integrated-inamp" and s.circuit.ports["ref"] == "GNDS" for s in rec.stages)
    assert sorted(s.roles["RG"] for s in rec.stages) == ["R10", "R11", "R12", "R9"]
    # docs/test-corpus.md sec. 2: RG = 200 ohm, "gain 251" (= 1 + 50k/200, the gain equation given
    # above)
    assert all(ideal_gains(s)[0] == pytest.approx(251.0, rel=1e-9) for s in rec.stages)


def test_psylink_module4_custom_symbol_inamps(read, tmp_path):
    rec = find_stages(read("psylink4"))
    # docs/test-corpus.md sec. 2: four integrated in-amps U10/U20/U30/U40 drawn with a custom
    # symbol.
    assert rec.stages == [] and not rec.near_misses
    assert [(u.ref, u.kind) for u in rec.unsupported] == [
        (f"U{i}0", "integrated-inamp") for i in range(1, 5)]
    parts = part_library(tmp_path, '[[match]]\nref = "U?0"\nclass = "feedback-pin-inamp"\n'
                                   'g0 = 1\nr_in = "1G"\n')
    rec = find_stages(read("psylink4"), parts)
    assert [s.id for s in rec.stages] == ["U10", "U20", "U30", "U40"] and not rec.unsupported
    # docs/test-corpus.md sec. 2: the wiring puts RF from the gain pin to the output and RG from
    # it to REF, one pair per amplifier.
    assert all(set(s.roles) >= {"RF", "RG"} for s in rec.stages)


def test_simplefoc_current_sense_diffamps(read, tmp_path):
    rec = find_stages(read("simplefoc"))
    # docs/test-corpus.md sec. 2: integrated current-sense amplifiers U2, U4, U5; REF1 = AVDD, REF2
    # = GND.
    assert [(u.ref, u.kind) for u in rec.unsupported] == [
        ("U2", "integrated-diffamp"), ("U4", "integrated-diffamp"), ("U5", "integrated-diffamp")]
    for u in rec.unsupported:
        assert {u.pins["ref1"], u.pins["ref2"]} == {"/AVDD", "GND"}
    parts = part_library(tmp_path, '[[match]]\nref = "U[245]"\nclass = "current-sense"\n'
                                   'gain = 50\nr_in = "20k"\n')
    rec = find_stages(read("simplefoc"), parts)
    assert [s.id for s in rec.stages] == ["U2", "U4", "U5"] and not rec.unsupported
    for s in rec.stages:
        assert s.circuit.ports["ref"] == "/AVDD"
        assert len([r for r in s.circuit.resistors if r.name.startswith(f"{s.id}.R4")]) == 2
        # REF1 = AVDD and REF2 = GND give a mid-supply output (docs/test-corpus.md sec. 2): half of
        # V(AVDD)
        assert ideal_gains(s)[2] == pytest.approx(0.5, rel=1e-9)


def test_cleverhand_custom_symbol_inamp(read):
    rec = find_stages(read("cleverhand"))
    # docs/test-corpus.md sec. 2: U1 integrated in-amp (project-library symbol), gain network R6/R7
    # on the RG pin, REF driven by buffer U2; the net labelled IN+ is on the VIN- pin, as drawn.
    (u,) = rec.unsupported
    assert u.ref == "U1" and u.kind == "integrated-inamp"
    assert sorted(u.roles.values()) == ["R6", "R7"]
    assert u.pins["in_n"] == "/IN+" and u.pins["in_p"] == "/IN-" and u.pins["ref"] == "/REF"
    assert rec.stages == []


@pytest.mark.parametrize("rev", ["tracer2", "tracer3"])
def test_usb_curve_tracer_difference_amps(read, rev):
    rec = find_stages(read(rev))
    st = by_id(rec)
    assert sorted(st) == ["U2C", "U2D"] and not rec.unsupported
    # docs/test-corpus.md sec. 2: U2D shunt sense: R8 high side -> +in, R10 +in -> V/2, R18 V/2 ->
    # -in, R19 feedback; U2C unity: R16 -> +in, R17 +in -> V/2, R15 -> -in, R14 feedback.
    assert st["U2D"].roles == {"R1": "R18", "R2": "R19", "R3": "R8", "R4": "R10"}
    assert st["U2C"].roles == {"R1": "R15", "R2": "R14", "R3": "R16", "R4": "R17"}
    for s in st.values():
        assert s.kind == "difference" and s.circuit.ports["ref"] == "V{slash}2"
    assert st["U2D"].circuit.ports["in_n"] == "V{slash}2"
    # rev3 adds C7 across R19 and C8 across R14
    caps = {s.id: [c.name for c in s.circuit.capacitors] for s in st.values()}
    if rev == "tracer3":
        assert caps == {"U2C": ["C8"], "U2D": ["C7"]}


@pytest.mark.parametrize("rev", ["probe1", "probe2"])
def test_basic_diff_probe_three_opamp_without_rg(read, rev):
    rec = find_stages(read(rev))
    (st,) = rec.stages
    # docs/test-corpus.md sec. 2: U2A and U2D followers, U2B difference stage R5 (U2A out -> +in),
    # R6 (+in -> GND), R7 (U2D out -> -in), R4 feedback with C5; no RG.
    assert st.kind == "three-opamp" and st.id == "U2A+U2D+U2B"
    assert st.roles == {"Ra": "R7", "Rb": "R4", "Rc": "R5", "Rd": "R6"}
    assert st.circuit.ports["ref"] == "GND"
    assert [c.name for c in st.circuit.capacitors] == ["C5"]
    assert not rec.near_misses and not rec.unsupported


def test_balanced_receiver_unity_diffamp_and_silent_sallen_key(read, tmp_path):
    rec = find_stages(read("receiver"))
    # docs/test-corpus.md sec. 2: U4 integrated unity-gain line receiver, Ref = GND, SNS tied to
    # Vout; the Sallen-Key stages U7/U8 are not difference stages.
    assert [(u.ref, u.kind) for u in rec.unsupported] == [("U4", "integrated-diffamp")]
    assert rec.stages == [] and rec.near_misses == []
    parts = part_library(tmp_path, '[[match]]\nref = "U4"\nclass = "unity-line-receiver"\n'
                                   'r_in = "25k"\n')
    rec = find_stages(read("receiver"), parts)
    (st,) = rec.stages
    assert st.id == "U4" and st.circuit.ports["ref"] == "GND"
    # "unity-gain" (docs/test-corpus.md sec. 2)
    assert ideal_gains(st)[0] == pytest.approx(1.0, rel=1e-9)
    r2 = next(r for r in st.circuit.resistors if r.name == "U4.R2")
    assert r2.b == st.circuit.ports["out"]       # SNS and Vout on one net


@pytest.mark.parametrize("rev", ["buspirate5", "buspirate6"])
def test_buspirate_negative_example_stays_silent(read, rev):
    rec = find_stages(read(rev))
    # docs/test-corpus.md sec. 2: no in-amp or op-amp difference amplifier (buffers and comparators
    # only).
    assert rec.stages == [] and rec.near_misses == [] and rec.unsupported == []

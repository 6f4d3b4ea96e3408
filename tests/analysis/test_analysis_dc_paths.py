"""DC paths over a whole (hand-built) netlist: bias return, REF source, source impedance."""

from __future__ import annotations

import math

import pytest

from frontcheck.analysis import dc_paths
from frontcheck.circuit import Sourced, Stage, SubCircuit
from frontcheck.netlist import Component, Net, Netlist, Node, Pin
from spice import model, opamp, res

RAILS = {"+5V": Sourced(5.0), "GND": Sourced(0.0)}


class Board:
    """A tiny netlist builder: parts with pins on named nets."""

    def __init__(self):
        self.comps: dict[str, Component] = {}
        self.nets: dict[str, list[Node]] = {}

    def part(self, ref, lib, value, pins):
        c = Component(ref, value=value, lib_id=lib)
        for num, (name, typ, net) in pins.items():
            c.pins[num] = Pin(num, name, typ)
            if net:
                self.nets.setdefault(net, []).append(Node(ref, num, name, typ))
        self.comps[ref] = c
        return self

    def r(self, ref, a, b, value="10k"):
        return self.part(ref, "Device:R", value, {"1": ("", "passive", a), "2": ("", "passive", b)})

    def c(self, ref, a, b, value="100n"):
        return self.part(ref, "Device:C", value, {"1": ("", "passive", a), "2": ("", "passive", b)})

    def opamp(self, ref, plus, minus, out):
        return self.part(ref, "Amplifier_Operational:Generic_Opamp", "opamp", {
            "3": ("+", "input", plus), "2": ("-", "input", minus), "1": ("~", "output", out),
            "8": ("V+", "power_in", "+5V"), "4": ("V-", "power_in", "GND")})

    def conn(self, ref, nets):
        return self.part(ref, "Connector:Conn_01x02", "", {
            str(i + 1): (f"Pin_{i + 1}", "passive", n) for i, n in enumerate(nets)})

    def netlist(self):
        return Netlist(components=self.comps, nets=[Net(n, nodes) for n, nodes in self.nets.items()])


def diff_stage(ref_net="VREF", ohms=(10e3, 10e3, 10e3, 10e3)):
    r1, r2, r3, r4 = ohms
    sub = SubCircuit(
        resistors=[res("R1", "IN_N", "N", r1), res("R2", "N", "OUT", r2),
                   res("R3", "IN_P", "P", r3), res("R4", "P", ref_net, r4)],
        opamps=[opamp("U1", "P", "N", "OUT", model(), "+5V", "GND")],
        ports={"in_p": "IN_P", "in_n": "IN_N", "ref": ref_net, "out": "OUT"}, rails=dict(RAILS))
    return Stage("U1", "difference", ["R1", "R2", "R3", "R4", "U1"], ["U1"],
                 {"R1": "R1", "R2": "R2", "R3": "R3", "R4": "R4"}, sub)


def diff_board(ref_net="VREF", values=("10k",) * 4):
    b = Board()
    b.r("R1", "IN_N", "N", values[0]).r("R2", "N", "OUT", values[1])
    b.r("R3", "IN_P", "P", values[2]).r("R4", "P", ref_net, values[3])
    b.opamp("U1", "P", "N", "OUT")
    return b


def test_divider_at_ref():
    # Divider Ra||Rb at REF: Rth = 5 k, 2.5 V; costs per docs/engineering.md sec. 5 (CMRR ~ (1+G)
    # R4/Rth).
    b = diff_board().r("R8", "+5V", "VREF").r("R9", "VREF", "GND").conn("J1", ["IN_P", "IN_N"])
    rs = dc_paths.ref_source(b.netlist(), diff_stage(), RAILS)
    assert rs.kind == "resistive"
    assert rs.thevenin_ohms == pytest.approx(5e3, rel=1e-12)
    assert rs.voltage == pytest.approx(2.5, rel=1e-12)
    assert "R8" in rs.driver and "R9" in rs.driver and "R4" not in rs.driver
    # G = 1, r = Rth/R4 = 0.5: Ad = 1 + r/(2(1+G)) exactly for this circuit (docs/engineering.md
    # sec. 5 form; here the exact Thevenin algebra of sec. 1 with R4 -> R4 + Rth).
    ad_x = (10e3 * 25e3 + 15e3 * 20e3) / (2 * 10e3 * 25e3)
    assert 1 + rs.gain_error == pytest.approx(ad_x, rel=1e-9)
    acm_x = (10e3 * 15e3 - 10e3 * 10e3) / (10e3 * 25e3)
    assert rs.cmrr_db == pytest.approx(20 * math.log10(ad_x / acm_x), abs=1e-6)


def test_buffered_ref_is_low_impedance_with_follower_voltage():
    # A buffer at REF is the usual fix (docs/engineering.md sec. 5 [practice]): 0 ohm, its input's
    # voltage.
    b = diff_board().r("R8", "+5V", "MID", "30k").r("R9", "MID", "GND", "10k").opamp("U2", "MID", "VREF", "VREF")
    rs = dc_paths.ref_source(b.netlist(), diff_stage(), RAILS)
    assert rs.kind == "low-impedance" and rs.thevenin_ohms == 0.0
    assert rs.voltage == pytest.approx(1.25, rel=1e-12)
    assert rs.gain_error == 0.0 and math.isinf(rs.cmrr_db)


def test_ref_on_ground_and_floating_ref():
    rs = dc_paths.ref_source(diff_board("GND").netlist(), diff_stage("GND"), RAILS)
    assert rs.kind == "rail" and rs.voltage == 0.0 and rs.thevenin_ohms == 0.0
    rs = dc_paths.ref_source(diff_board().netlist(), diff_stage(), RAILS)
    assert rs.kind == "floating" and rs.thevenin_ohms is None


def test_series_resistor_from_buffer_and_ferrite_short():
    b = diff_board().opamp("U2", "+5V", "BUF", "BUF").r("R8", "BUF", "X", "100")
    b.part("FB1", "Device:FerriteBead", "600R@100MHz", {"1": ("", "passive", "X"), "2": ("", "passive", "VREF")})
    rs = dc_paths.ref_source(b.netlist(), diff_stage(), RAILS)
    assert rs.kind == "resistive" and rs.thevenin_ohms == pytest.approx(100.0)
    assert rs.voltage == pytest.approx(5.0)


def test_bias_paths_ok_connector_none():
    # docs/engineering.md sec. 6 [practice]: each input must reach a defined potential; a connector
    # only is 'connector'; AC coupling (series capacitor) leaves 'none'.
    b = Board()
    b.conn("J1", ["SIG_P", "SIG_N"])
    b.c("C1", "SIG_P", "IN_P").r("R5", "SIG_N", "IN_N", "1k")
    b.opamp("U1", "IN_P", "FB1", "O1").r("R6", "O1", "FB1")
    b.opamp("U2", "IN_N", "FB2", "O2").r("R7", "O2", "FB2")
    sub = SubCircuit(resistors=[res("R6", "O1", "FB1", 1e3), res("R7", "O2", "FB2", 1e3)],
                     opamps=[opamp("U1", "IN_P", "FB1", "O1"), opamp("U2", "IN_N", "FB2", "O2")],
                     ports={"in_p": "IN_P", "in_n": "IN_N", "out": "O1"}, rails=dict(RAILS))
    st = Stage("U1/U2", "three-opamp", [], ["U1", "U2"], {}, sub)
    got = {bp.pin: bp for bp in dc_paths.bias_paths(b.netlist(), st, RAILS)}
    assert got["U1 +in"].status == "none"
    assert got["U2 +in"].status == "connector" and got["U2 +in"].reaches.startswith("J1 pin 2")
    assert got["U1 -in"].status == "ok" and "U1 output" in got["U1 -in"].reaches
    # A bias resistor to ground fixes the AC-coupled input.
    b.r("R20", "IN_P", "GND", "1M")
    got = {bp.pin: bp for bp in dc_paths.bias_paths(b.netlist(), st, RAILS)}
    assert got["U1 +in"].status == "ok" and got["U1 +in"].reaches == "GND via R20"


def test_bridge_source_impedance_and_loading():
    # Bridge arms: the IN_P leg 350 || 700 ohm = 233.3 ohm, the IN_N leg 350 || 350 = 175 ohm.
    # Each adds to R1 or R3 of the difference amp (docs/engineering.md sec. 4 [derived]) and the
    # unequal legs unbalance its ratios: closed forms of docs/engineering.md sec. 1.
    b = diff_board("GND", ("10k", "100k", "10k", "100k"))
    b.r("RB1", "+5V", "IN_P", "350").r("RB2", "IN_P", "GND", "700")
    b.r("RB3", "+5V", "IN_N", "350").r("RB4", "IN_N", "GND", "350")
    st = diff_stage("GND", (10e3, 100e3, 10e3, 100e3))
    src = dc_paths.source_impedances(b.netlist(), st, RAILS)
    rp, rn = 350 * 700 / 1050, 175.0
    assert src.rs_p == pytest.approx(rp, rel=1e-12) and src.rs_n == pytest.approx(rn, rel=1e-12)
    r1, r2, r3, r4 = 10e3 + rn, 100e3, 10e3 + rp, 100e3
    ad_x = (r2 * (r3 + r4) + r4 * (r1 + r2)) / (2 * r1 * (r3 + r4))
    acm_x = (r1 * r4 - r2 * r3) / (r1 * (r3 + r4))
    assert 1 + src.gain_error == pytest.approx(ad_x / 10.0, rel=1e-9)
    assert src.cmrr_db == pytest.approx(20 * math.log10(ad_x / abs(acm_x)), abs=1e-6)


def test_source_unknown_behind_connector():
    b = diff_board("GND").conn("J1", ["IN_P", "IN_N"])
    src = dc_paths.source_impedances(b.netlist(), diff_stage("GND"), RAILS)
    assert src.rs_p is None and src.gain_error is None


def test_rail_voltage_is_what_the_name_states():
    # Supply names as drawn: '+5V', '-12V', '+3V3' (common practice); a sheet-local label
    # states no supply voltage (docs/architecture.md sec. 5: voltages come from power-net names).
    dc = dc_paths.DCView(diff_board("GND").netlist(), {})
    assert dc.rail_voltage("+5V") == 5.0
    assert dc.rail_voltage("-12V") == -12.0
    assert dc.rail_voltage("+3V3") == pytest.approx(3.3)
    assert dc.rail_voltage("GND") == 0.0
    assert dc.rail_voltage("/sheet/+1.8V") is None
    assert dc.rail_voltage("VREF") is None


@pytest.mark.parametrize("name", ["VSS", "GNDS", "EARTH", "COM"])
def test_ref_on_vss_is_a_rail_of_unknown_voltage(name):
    # README / docs/architecture.md sec. 5: VSS is the negative rail of many split supplies and
    # GNDS, EARTH, COM may be virtual or floating grounds, so the name gives no voltage: REF on
    # such a net is a rail (driven, not floating) whose voltage stays unknown, not 0 V.
    rs = dc_paths.ref_source(diff_board(name).netlist(), diff_stage(name), RAILS)
    assert rs.kind == "rail" and rs.voltage is None
    # ... until the project gives it under [rails]
    rails = dict(RAILS, **{name: Sourced(-5.0, "project")})
    rs = dc_paths.ref_source(diff_board(name).netlist(), diff_stage(name), rails)
    assert rs.kind == "rail" and rs.voltage == -5.0


def test_integrated_part_inputs_checked_at_its_pins_only():
    # An integrated in-amp arrives as internal op-amps; only its own input pins are nets of
    # the design (the internal nodes are inside the part).
    b = Board().conn("J1", ["IN_P", "IN_N"]).r("R30", "IN_N", "GND", "100k")
    sub = SubCircuit(
        resistors=[res("U3.Rf1", "U3.o1", "U3.m1", 25e3), res("U3.Rf2", "U3.o2", "U3.m2", 25e3),
                   res("U3.Ra", "U3.o2", "U3.n3", 10e3), res("U3.Rb", "U3.n3", "OUT", 10e3),
                   res("U3.Rc", "U3.o1", "U3.p3", 10e3), res("U3.Rd", "U3.p3", "GND", 10e3)],
        opamps=[opamp("U3.A1", "IN_P", "U3.m1", "U3.o1"), opamp("U3.A2", "IN_N", "U3.m2", "U3.o2"),
                opamp("U3.A3", "U3.p3", "U3.n3", "OUT")],
        ports={"in_p": "IN_P", "in_n": "IN_N", "ref": "GND", "out": "OUT"}, rails=dict(RAILS))
    for o in sub.opamps:
        o.internal, o.ref = True, "U3"
    for r in sub.resistors:
        r.internal = True
    st = Stage("U3", "integrated-inamp", ["U3"], ["U3"], {}, sub)
    got = {bp.pin: bp for bp in dc_paths.bias_paths(b.netlist(), st, RAILS)}
    assert set(got) == {"U3 +IN", "U3 -IN"}
    assert got["U3 +IN"].status == "connector" and got["U3 -IN"].status == "ok"


def test_connector_fed_input_with_bias_resistors_has_unknown_source():
    # 1 M bias resistors to ground on inputs fed from a connector are the load of an off-board
    # source, not its resistance: reporting them would claim a -99 % gain error for a 10 k
    # difference amp (10 k / (10 k + 1 M) [derived, docs/engineering.md sec. 4]).
    b = diff_board("GND").conn("J1", ["IN_P", "IN_N"])
    b.r("RB1", "IN_P", "GND", "1M").r("RB2", "IN_N", "GND", "1M")
    src = dc_paths.source_impedances(b.netlist(), diff_stage("GND"), RAILS)
    assert src.rs_p is None and src.rs_n is None and src.gain_error is None
    assert "J1 pin 1" in src.detail and "unknown" in src.detail


def test_connector_behind_series_resistor_and_coupling_capacitor():
    # Through a series resistor, or AC-coupled through a capacitor, the input is still fed
    # from the connector.
    b = diff_board("GND").conn("J1", ["A", "B"])
    b.r("RS1", "A", "IN_P", "1k").c("CS1", "B", "X").r("RS2", "X", "IN_N", "1k")
    b.r("RB1", "IN_P", "GND", "1M").r("RB2", "IN_N", "GND", "1M")
    src = dc_paths.source_impedances(b.netlist(), diff_stage("GND"), RAILS)
    assert src.rs_p is None and src.rs_n is None
    assert "via RS1" in src.detail and "CS1" in src.detail


def test_analysis_leaves_unknown_source_out_of_budget():
    from frontcheck.analysis import analyse
    from frontcheck.analysis.tolerance import Options

    b = diff_board("GND").conn("J1", ["IN_P", "IN_N"])
    b.r("RB1", "IN_P", "GND", "1M").r("RB2", "IN_N", "GND", "1M")
    r = analyse(diff_stage("GND"), b.netlist(), RAILS, Options(mc_samples=0))
    assert "source" not in r.error_budget
    assert any("source resistance at the inputs is unknown" in n for n in r.notes)


def test_transistor_follower_in_an_op_amp_loop_is_low_impedance():
    # A rail splitter: op-amp U9 senses MID at its -in, its output drives the bases of a
    # complementary emitter follower (Q1/Q2) through R9 whose emitters are MID; the loop holds
    # MID at the divider's 2.5 V (common practice). The REF net of the stage is MID.
    b = diff_board("MID")
    b.r("RD1", "+5V", "HALF", "10k").r("RD2", "HALF", "GND", "10k")
    b.opamp("U9", "HALF", "MID", "DRV").r("R9", "DRV", "BASES", "1k")
    for q, col in (("Q1", "+5V"), ("Q2", "GND")):
        b.part(q, "Transistor_BJT:Generic", "", {"1": ("B", "input", "BASES"),
                                                  "2": ("C", "passive", col),
                                                  "3": ("E", "passive", "MID")})
    ref = dc_paths.ref_source(b.netlist(), diff_stage("MID"), RAILS)
    assert ref.kind == "low-impedance" and ref.thevenin_ohms == 0.0
    assert ref.voltage == pytest.approx(2.5, rel=1e-12)
    assert "Q1/Q2" in ref.driver
    # Without the loop (the op-amp senses something else) MID is only resistive.
    b2 = diff_board("MID")
    b2.r("RD1", "+5V", "HALF", "10k").r("RD2", "HALF", "GND", "10k")
    b2.opamp("U9", "HALF", "FB", "DRV").r("R9", "DRV", "BASES", "1k").r("R10", "DRV", "FB", "1k")
    for q, col in (("Q1", "+5V"), ("Q2", "GND")):
        b2.part(q, "Transistor_BJT:Generic", "", {"1": ("B", "input", "BASES"),
                                                   "2": ("C", "passive", col),
                                                   "3": ("E", "passive", "MID")})
    assert dc_paths.ref_source(b2.netlist(), diff_stage("MID"), RAILS).kind != "low-impedance"

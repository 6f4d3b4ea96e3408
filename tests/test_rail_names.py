"""One meaning for rail names, shared by configuration, recognition and DC-path analysis
(frontcheck.rail_names). Names as KiCad's standard power symbols write them (+5V, -12V, +3V3,
GND, GNDA, AGND, VCC, VDD, VSS, VEE: common practice); which of them are 0 V follows README
and docs/architecture.md sec. 5: only conventional ground names, never VSS."""

from __future__ import annotations

import pytest

from frontcheck.analysis.dc_paths import DCView
from frontcheck.config import rail_from_name
from frontcheck.netlist import Netlist
from frontcheck.netlist_view import NetlistView
from frontcheck.rail_names import (is_ground_name, is_supply_name, is_zero_volt_name,
                                   stated_voltage)

STATED = [("+5V", 5.0), ("-12V", -12.0), ("+3V3", 3.3), ("3.3V", 3.3), ("+1V8", 1.8),
          ("+3.3VA", 3.3), ("GND", 0.0), ("AGND", 0.0), ("GNDA", 0.0), ("DGND", 0.0),
          ("GNDREF", 0.0), ("GNDPWR", 0.0), ("PGND", 0.0), ("0V", 0.0)]
# Ground-like (a reference or return net) but no stated voltage.
GROUND_UNKNOWN = ["VSS", "GNDS", "EARTH", "COM", "/amp/GND"]
NOTHING = ["VCC", "VDD", "VEE", "+BATT", "VREF", "/amp/+5V", "V/2", "Net-(U1-Pad3)"]


def _views():
    empty = Netlist(components={}, nets=[])
    return NetlistView(empty, rails={}), DCView(empty, {})


@pytest.mark.parametrize("name,volts", STATED)
def test_stated_voltages_agree_everywhere(name, volts):
    view, dc = _views()
    assert stated_voltage(name) == pytest.approx(volts)
    assert rail_from_name(name).value == pytest.approx(volts)
    assert dc.rail_voltage(name) == pytest.approx(volts)
    if volts == 0.0:
        assert is_zero_volt_name(name) and is_ground_name(name)
        assert view.rail(name).value == 0.0


@pytest.mark.parametrize("name", GROUND_UNKNOWN)
def test_ground_like_names_state_no_voltage(name):
    # VSS: the negative rail of many split supplies; GNDS, EARTH, COM, a sheet-local GND may be
    # virtual or floating grounds. Recognition treats them as fixed nets, nobody as 0 V.
    view, dc = _views()
    assert is_ground_name(name) and not is_zero_volt_name(name)
    assert stated_voltage(name) is None
    assert rail_from_name(name) is None
    assert dc.rail_voltage(name) is None and dc.is_rail(name)
    assert view.rail(name) is None and view.fixed(name)


@pytest.mark.parametrize("name", NOTHING)
def test_other_names_state_nothing(name):
    view, dc = _views()
    assert stated_voltage(name) is None and rail_from_name(name) is None
    assert dc.rail_voltage(name) is None and view.rail(name) is None
    assert not is_ground_name(name)


# Supplies as KiCad's standard power symbols name them (+5V, -12V, +3V3, +3.3V, VCC, VDD, VEE,
# VSS: common practice); a sheet-local label with such a name is still held fixed at DC.
SUPPLY = ["+5V", "-12V", "+3V3", "+3.3V", "VCC", "VDD", "VEE", "VSS", "/amp/+5V"]
NOT_SUPPLY = ["GND", "VREF", "+BATT", "IN_P", "Net-(U1-Pad3)"]


@pytest.mark.parametrize("name", SUPPLY)
def test_supply_names_are_fixed_nets_in_the_dc_view(name):
    _, dc = _views()
    assert is_supply_name(name) and dc.is_rail(name)


@pytest.mark.parametrize("name", NOT_SUPPLY)
def test_other_names_are_not_supplies(name):
    assert not is_supply_name(name)

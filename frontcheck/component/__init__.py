"""What a component is: its kind (op-amp, in-amp, difference amp, resistor, ...), the role of
each amplifier pin, and the op-amp units inside a package.

The one place that knows it: part data (``frontcheck.parts``), recognition and analysis all
ask here. Reads only ``frontcheck.netlist``.
"""

from frontcheck.component.kinds import (AMPLIFIER_KINDS, KINDS, classify, library_of,
                                        looks_like_inamp, names_disagree, pin_key,
                                        pin_roles, potentiometer_pins, ref_prefix,
                                        resistor_elements)
from frontcheck.component.pin_names import (ROLES, PinName, normalise_pin_name, pin_channel,
                                            pin_role, read_pin_name)
from frontcheck.component.units import OpAmpUnitPins, opamp_units

__all__ = ["AMPLIFIER_KINDS", "KINDS", "ROLES", "OpAmpUnitPins", "PinName", "classify",
           "library_of", "looks_like_inamp", "names_disagree", "normalise_pin_name", "opamp_units", "pin_channel",
           "pin_key", "pin_role", "pin_roles", "potentiometer_pins", "read_pin_name", "ref_prefix",
           "resistor_elements"]

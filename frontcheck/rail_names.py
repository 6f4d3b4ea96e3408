"""What a net's name says about it as a rail: ground, supply, and the voltage it states.

One place for the naming conventions that configuration, recognition and analysis share
(docs/architecture.md sec. 5):

* A net is **0 V by convention** only under a global ground name a power symbol gives:
  ``GND``, ``AGND``, ``DGND``, ``GNDA``, ``GNDD``, ``PGND``, ``SGND``, ``GNDREF``, ``GNDPWR``,
  ``GND_ANA`` and the like, ``0V``, ``0``.
* A name **states a voltage** when it reads as one: ``+5V`` 5, ``-12V`` -12, ``+3V3`` 3.3,
  ``3.3V`` 3.3, ``+1V8`` 1.8, ``+3.3VA`` 3.3 (a letter suffix names the domain).
* **Ground-like** names (``GNDS``, ``EARTH``, ``COM``, ``VSS``, a sheet-local ``/amp/GND``) mark a
  reference or return net, a potential the signal does not move, but they do not say it is 0 V:
  ``GNDS`` and ``EARTH`` may be a virtual or floating ground, and ``VSS`` is the negative rail
  of many split supplies. Their voltage stays unknown unless the project's ``[rails]`` gives it.
* A **supply name** (``+5V``, ``VCC``, ``VDD_A``, ``VEE``, ``VSS``, ``V+``, ``-VS``) marks a net the
  DC-path analysis holds fixed, read without the sheet path; it says nothing about the voltage.
* Names under a sheet path (``/amp/+5V``) are local labels, not power nets, and state nothing.
"""

from __future__ import annotations

import re

__all__ = ["is_zero_volt_name", "is_ground_name", "is_supply_name", "stated_voltage", "base_name"]

_ZERO_VOLT = re.compile(r"^(?:[ADPS]?GND[AD]?|GND_?(?:A|D|PWR|REF|ANA|ANALOG)|0V?)$", re.I)
_GROUND_LIKE = re.compile(r"^(?:/.*/)?(?:[ADPS]?GND[A-Z0-9]*|GND[ADPS]?|VSS|0|EARTH|COM)$", re.I)
# sign, digits, V as the unit or the decimal mark, an optional letter suffix (A, D, _ANA, ...)
_VOLTAGE = re.compile(
    r"^(?P<sign>[+-]?)(?P<int>\d+)(?:(?P<dot>\.)(?P<frac>\d+)V|V(?P<rkm>\d+)?)"
    r"(?P<suffix>[_-]?[A-UW-Za-uw-z][A-Za-z_]*)?$")
# supply-rail names: a voltage, VCC/VDD/VEE/VSS..., the analog/digital variants, V+/V-, +VS/-VS
_SUPPLY = re.compile(r"^(?:[+-]?\d+(?:[.,]\d+)?V\d*|[+-]\d*V\d+|VCC.*|VDD.*|VEE.*|VSS.*|AVDD|AVCC|"
                     r"AVSS|DVDD|VPOS|VNEG|V\+|V-|\+VS|-VS)$", re.I)


def base_name(net: str) -> str:
    """The name without its sheet path: ``/amp/REF`` -> ``REF``."""
    return net.rsplit("/", 1)[-1]


def is_zero_volt_name(net: str) -> bool:
    """A global ground name that means 0 V by convention (never a sheet-local label)."""
    name = net.strip()
    return "/" not in name and bool(_ZERO_VOLT.match(name))


def is_ground_name(net: str) -> bool:
    """A ground-like name (GND..., VSS, COM, EARTH, 0; sheet path allowed): a reference or
    return net. Says nothing about its voltage: see :func:`stated_voltage`."""
    return bool(_GROUND_LIKE.match(net.strip())) or is_zero_volt_name(net)


def is_supply_name(net: str) -> bool:
    """A supply-rail name (``+5V``, ``3V3``, ``VCC``, ``VDD_A``, ``VEE``, ``VSS``, ``V+``,
    ``-VS``; the sheet path is ignored). Says nothing about its voltage."""
    return bool(_SUPPLY.match(base_name(net)))


def stated_voltage(net: str) -> float | None:
    """The voltage a net's name states, or None when it states none.

    0.0 for a zero-volt ground name; the number of ``+5V``, ``-12V``, ``+3V3``, ``3.3V``,
    ``+1V8``, ``+3.3VA``; None for ``VCC``, ``VDD``, ``VSS``, ``VEE``, ``+BATT``, ``GNDS``,
    ``EARTH``, ``COM`` and anything under a sheet path.
    """
    name = net.strip()
    if not name or "/" in name:
        return None
    if _ZERO_VOLT.match(name):
        return 0.0
    m = _VOLTAGE.match(name)
    if not m:
        return None
    frac = m["frac"] if m["dot"] else m["rkm"]
    v = float(f"{m['int']}.{frac}" if frac else m["int"])
    return -v if m["sign"] == "-" else v

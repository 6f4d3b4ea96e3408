"""What an amplifier pin is, from the name the symbol gives it (and its electrical type).

One recogniser for every part of frontcheck: part data, recognition and analysis all ask
:func:`pin_role`. The patterns follow the naming habits of amplifier symbols in KiCad's own
libraries and in vendor-style libraries (common practice):

========  ===================================================================================
role      names (case, spaces, underscores and text markup such as ``~{...}`` ignored)
========  ===================================================================================
inp       ``+``, ``+IN``, ``IN+``, ``VIN+``, ``V+IN``, ``INP``, ``IN_P``, ``VIP``, ``IP``,
          ``NONINV``; channel forms ``+IN_A``, ``INA+``, ``IN+1``, ``IN1+``, ``1IN+``
inn       the same with ``-`` / ``N`` / ``M``: ``-IN``, ``IN-``, ``V-IN``, ``INN``, ``VIM``, ``INV``
out       ``OUT``, ``VOUT``, ``VO``, ``O``, ``OUTPUT``, ``OUTA``, ``OUT_B``, ``OUT1``, ``2OUT``,
          and an unnamed pin (KiCad ``~``) of output type
out_p     ``OUT+``, ``+OUT``, ``VOUT+``, ``OUTP``, and ``+`` of output type (fully differential)
out_n     ``OUT-``, ``-OUT``, ``VOUT-``, ``OUTN``, and ``-`` of output type
ref       ``REF``, ``VREF``, ``REFIN``, ``REF1``, ``REF2``, ``REF1A``, ``VR1``, ``REFERENCE``
rg        ``RG``, ``RG1``, ``RG_1``, ``RG+``, ``-RG``, ``RGA``, ``G1``, ``G2``; channel form
          ``RG1_A`` / ``RG2_B`` (the digit is which end, the letter the channel)
fg        ``FG``, ``VFG``, ``FB``, ``VFB`` (one gain-setting feedback pin; an ``FB`` pin of
          output type is an op-amp's output tap, no role); channel forms ``FB1``, ``FB2``,
          ``FG1``, ``FBA`` (one feedback pin per channel of a multi-channel part)
sense     ``SENSE``, ``SNS``, ``SENS``
vocm      ``VOCM``, ``VCM`` (output common-mode input of a fully differential amplifier)
bias      ``BIAS``, ``DIODE_BIAS``, ``IABC`` (bias current input of a transconductance amplifier)
vpos      ``V+``, ``VS+``, ``+VS``, ``+V``, ``VCC``, ``VDD``, ``VPOS``, ``AVDD``; ``VS``/``VP``
          on a power pin
vneg      ``V-``, ``VS-``, ``-VS``, ``-V``, ``VEE``, ``VSS``, ``VNEG``, ``AVSS``; ``VN`` on a
          power pin
gnd       ``GND``, ``AGND``, ``0V``, ``COM`` on a power pin
========  ===================================================================================

Channel letters or numbers (``A``-``D``, ``1``-``4``) before or after the name say which
amplifier of a multi-channel part the pin belongs to (:func:`pin_channel`).
"""

from __future__ import annotations

import re
from functools import lru_cache
from typing import NamedTuple

from frontcheck.netlist import Pin

__all__ = ["PinName", "normalise_pin_name", "pin_channel", "pin_role", "read_pin_name", "ROLES"]

ROLES = ("inp", "inn", "out", "out_p", "out_n", "ref", "rg", "fg", "sense", "vocm", "bias",
         "vpos", "vneg", "gnd")


class PinName(NamedTuple):
    role: str | None
    channel: str | None


_MARKUP = re.compile(r"[~_^]\{([^{}]*)\}")


@lru_cache(maxsize=4096)
def normalise_pin_name(name: str | None) -> str:
    """Upper case without spaces, underscores, parentheses and KiCad text markup
    (overbar ``~{X}``, subscript ``_{X}``, superscript ``^{X}``); KiCad's ``~`` for an
    unnamed pin becomes ''."""
    s = name or ""
    for _ in range(3):                      # nested markup: innermost first
        s2 = _MARKUP.sub(r"\1", s)
        if s2 == s:
            break
        s = s2
    s = s.upper()
    for ch in " _()\t":
        s = s.replace(ch, "")
    return "" if s in ("~", "") else s


_CH = r"(?P<ch>[A-D1-4])?"
_PRE = r"(?P<pre>[1-4])?"
_TAP = r"(?:\d+(?:\.\d+)?X)?"               # gain-tap inputs: '+IN0.4x', '-IN0.8x'


def _inputs(sign: str, letters: str, short: str, words: str) -> list[re.Pattern]:
    s = re.escape(sign)
    return [
        re.compile(rf"^{_PRE}(?:{s}V?IN|V?IN{s}|V{s}IN|V?IN[{letters}]|V?I{short}|{words}){_CH}{_TAP}$"),
        re.compile(rf"^V?IN(?P<ch>[A-D1-4]){s}$"),           # 'IN1+', 'INA-'
        re.compile(rf"^{s}$"),
    ]


_RULES: tuple[tuple[str, list[re.Pattern]], ...] = (
    ("inp", _inputs("+", "P", "P", "NONINV(?:ERTING)?")),
    ("inn", _inputs("-", "NM", "M", "INV(?:ERTING)?")),
    ("out_p", [re.compile(rf"^{_PRE}(?:V?OUT\+|\+V?OUT|V?OUTP){_CH}$")]),
    ("out_n", [re.compile(rf"^{_PRE}(?:V?OUT-|-V?OUT|V?OUT[NM]){_CH}$")]),
    ("out", [re.compile(rf"^{_PRE}(?:V?OUT|VO|OUTPUT|O){_CH}$")]),
    ("ref", [re.compile(r"^[+-]?V?REF(?:IN)?(?:[12][AB]?|[AB])?[+-]?$|^REFERENCE$|^VR[12]$")]),
    ("rg", [re.compile(r"^(?:[+-]?RG[+-]?[12AB]?|RG[12AB][+-]?|G[12])$"),
            re.compile(r"^RG[12](?P<ch>[A-D])$")]),              # 'RG1_A': end 1, channel A
    ("fg", [re.compile(r"^V?(?:FG|FB)(?P<ch>[A-D1-4])?$")]),
    ("sense", [re.compile(r"^(?:SNS|SENSE?)$")]),
    ("vocm", [re.compile(r"^V?O?CM[1-4]?$")]),
    ("bias", [re.compile(r"^(?:DIODE)?BIAS$|^I?ABC$|^IBIAS$")]),
    ("vpos", [re.compile(r"^(?:V\+|VS\+|\+VS|\+V|VCC\+?|\+VCC|VDD|VPOS|AVDD|AVCC|VCCA|\+VDD)$")]),
    ("vneg", [re.compile(r"^(?:V-|VS-|-VS|-V|VEE|VSS|VNEG|-VCC|AVSS|VEE-)$")]),
    ("gnd", [re.compile(r"^(?:A?GND|GNDA|DGND|0V)$")]),
)
_POWER_ONLY = {"VS": "vpos", "VP": "vpos", "VN": "vneg", "COM": "gnd"}
_OUTPUT_TYPES = ("output", "tri_state")


@lru_cache(maxsize=4096)
def read_pin_name(name: str, pin_type: str = "passive") -> PinName:
    """Role and channel of a pin with this name and electrical type."""
    s = normalise_pin_name(name)
    if s == "":
        return PinName("out" if pin_type in _OUTPUT_TYPES else None, None)
    if pin_type in ("power_in", "power_out"):
        if s in _POWER_ONLY:
            return PinName(_POWER_ONLY[s], None)
    if pin_type in _OUTPUT_TYPES:
        # '+' / '-' / '+1' drawn as outputs: the two outputs of a fully differential amplifier
        m = re.match(r"^([+-])([1-4])?$", s)
        if m:
            return PinName("out_p" if m.group(1) == "+" else "out_n", m.group(2))
        if re.match(r"^V?FB[A-D1-4]?$", s):
            return PinName(None, None)
    for role, patterns in _RULES:
        for rx in patterns:
            m = rx.match(s)
            if m:
                groups = m.groupdict()
                return PinName(role, groups.get("pre") or groups.get("ch"))
    return PinName(None, None)


def pin_role(pin: Pin) -> str | None:
    """Amplifier role of one pin (see the module table), or None."""
    return read_pin_name(pin.name or "", pin.type or "passive").role


def pin_channel(pin: Pin) -> str | None:
    """Channel letter or number a pin name carries ('A' for 'OUTA', '2' for 'IN+2'), or None."""
    return read_pin_name(pin.name or "", pin.type or "passive").channel

"""Test helpers: hand-built stage sub-circuits and a small ngspice batch driver.

The builders describe the textbook topologies (REFERENCE.md sections 1, 3, 5) as SubCircuits,
the same data recognition hands to analysis. The driver writes the very same SubCircuit to a
SPICE deck (op-amp as a B-source, REFERENCE.md sec. 9), runs ``ngspice -b`` and reads the
printed node voltages, so the oracle tests compare like with like.
"""

from __future__ import annotations

import math
import re
import subprocess
import tempfile
from pathlib import Path

from frontcheck.circuit import OpAmp, OpAmpModel, Resistor, Capacitor, Sourced, SubCircuit


def model(aol=1e12, cmrr_db=math.inf, icm=(0.0, 0.0), swing=(0.0, 0.0), name="test-model"):
    return OpAmpModel(name=name, aol=Sourced(aol), cmrr_db=Sourced(cmrr_db),
                      icm_low=Sourced(icm[0]), icm_high=Sourced(icm[1]),
                      swing_low=Sourced(swing[0]), swing_high=Sourced(swing[1]))


def res(name, a, b, ohms, tol=0.01, group="", match_tol=None, src="field"):
    return Resistor(name, a, b, Sourced(ohms, src), Sourced(tol, src), match_group=group,
                    match_tol=None if match_tol is None else Sourced(match_tol))


def opamp(name, inp, inn, out, m=None, vpos="VP", vneg="VN"):
    return OpAmp(name, name[:-1] if name[-1].isalpha() else name, inp, inn, out, vpos, vneg,
                 m or model())


def rails(vp=15.0, vn=-15.0):
    return {"VP": Sourced(vp), "VN": Sourced(vn), "GND": Sourced(0.0)}


def diff_amp(r1, r2, r3, r4, tol=0.01, m=None, vp=15.0, vn=-15.0):
    """REFERENCE.md sec. 1 naming: in_n -R1- n -R2- out; in_p -R3- p -R4- ref."""
    return SubCircuit(
        resistors=[res("R1", "IN_N", "N", r1, tol), res("R2", "N", "OUT", r2, tol),
                   res("R3", "IN_P", "P", r3, tol), res("R4", "P", "REF", r4, tol)],
        opamps=[opamp("U1A", "P", "N", "OUT", m)],
        ports={"in_p": "IN_P", "in_n": "IN_N", "ref": "REF", "out": "OUT"},
        rails=rails(vp, vn))


def three_opamp(rf=25e3, rg=5e3, ra=10e3, rb=10e3, tol=0.01, m=None, vp=15.0, vn=-15.0,
                with_rg=True):
    """REFERENCE.md sec. 3 naming: A1 +in = IN+, Rf1 o1-m1; A2 +in = IN-, Rf2 o2-m2; RG m1-m2;
    stage 2: o2 -Ra- n3 -Rb- out, o1 -Rc- p3 -Rd- ref."""
    r = [res("RF1", "O1", "M1", rf, tol), res("RF2", "O2", "M2", rf, tol)]
    if with_rg:
        r.append(res("RG", "M1", "M2", rg, tol))
    r += [res("RA", "O2", "N3", ra, tol), res("RB", "N3", "OUT", rb, tol),
          res("RC", "O1", "P3", ra, tol), res("RD", "P3", "REF", rb, tol)]
    return SubCircuit(
        resistors=r,
        opamps=[opamp("U1A", "IN_P", "M1", "O1", m), opamp("U1B", "IN_N", "M2", "O2", m),
                opamp("U1C", "P3", "N3", "OUT", m)],
        ports={"in_p": "IN_P", "in_n": "IN_N", "ref": "REF", "out": "OUT"},
        rails=rails(vp, vn))


def two_opamp(r1=10e3, r2=40e3, tol=0.01, m=None, vp=15.0, vn=-15.0):
    """Two-op-amp in-amp: A1 +in = IN-, REF -R1- n1 -R2- o1; A2 +in = IN+, o1 -R3- n2 -R4- out,
    with R3 = R2 and R4 = R1 so that G = 1 + R4/R3 (Sedra & Smith 6th ed., Problem 2.74 form
    [memory])."""
    return SubCircuit(
        resistors=[res("R1", "REF", "N1", r1, tol), res("R2", "N1", "O1", r2, tol),
                   res("R3", "O1", "N2", r2, tol), res("R4", "N2", "OUT", r1, tol)],
        opamps=[opamp("U1A", "IN_N", "N1", "O1", m), opamp("U1B", "IN_P", "N2", "OUT", m)],
        ports={"in_p": "IN_P", "in_n": "IN_N", "ref": "REF", "out": "OUT"},
        rails=rails(vp, vn))

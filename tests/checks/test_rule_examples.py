"""Every rule's docstring carries a failing and a passing example (section "Example"); this one
parametrised test builds each as a netlist and runs the whole pipeline on it (recognition,
analysis, rules under the default profile), so the documentation `frontcheck explain` prints
cannot drift from what the rule does. The circuits are invented; each example's numbers are
worked in its docstring.

Example grammar (one part per line, nets by name):
    R1 a b 10k 0.1%                       resistor (tolerance optional)
    C1 a b 100n 5%                        capacitor
    U1 opamp +in -in out v+ v- | Key: value; Key: value    op-amp with optional symbol fields
      | Key: value                        (a line starting with | continues the fields)
    J1 connector net net ...              a connector with one pin per net
    Reader note: text                     what the KiCad reader noted while loading
"Fails:" lists the circuit; "Passes with" lists parts that replace those of the same
reference (or are added), and the reader's notes of the passing design (none when it lists
none).
"""

from __future__ import annotations

import re

import pytest

from frontcheck import checks
from frontcheck.pipeline import RunOptions, check_netlist
from netlist_builder import NetlistBuilder

RULES = {m.RULE_ID: m for m in checks.rule_modules()}


def example(doc: str) -> tuple[list[str], list[str]]:
    """(failing lines, passing lines) of a rule docstring's Example section."""
    sec = doc.split("\nExample\n", 1)[1]
    body = []
    for line in sec.splitlines():
        if line and not line[0].isspace():
            break                                   # the next section
        body.append(line.strip())
    text = re.sub(r"\n\|", ";", "\n".join(body))        # field continuation lines
    fails, passes = text.split("Passes with", 1)
    part = re.compile(r"^(?:[A-Z#?][A-Za-z0-9?]* \S|Reader note: )")
    fails = [ln for ln in fails.splitlines() if part.match(ln)]
    fixes = [ln for ln in passes.splitlines() if part.match(ln)]
    by_ref = {ln.split()[0]: ln for ln in fails if not ln.startswith("Reader note:")}
    by_ref.update({ln.split()[0]: ln for ln in fixes if not ln.startswith("Reader note:")})
    notes = [ln for ln in fixes if ln.startswith("Reader note:")]
    assert fixes or "no note" in passes, "the passing example changes nothing"
    return fails, list(by_ref.values()) + notes


def build(lines: list[str]):
    nb = NetlistBuilder()
    notes = [ln.split(":", 1)[1].strip() for ln in lines if ln.startswith("Reader note:")]
    for line in lines:
        if line.startswith("Reader note:"):
            continue
        head, _, fields = line.partition("|")
        ref, *args = head.split()
        extra = dict(kv.split(":", 1) for kv in fields.split(";") if ":" in kv)
        extra = {k.strip(): v.strip() for k, v in extra.items()}
        if args[0] == "opamp":
            inp, inn, out, vpos, vneg = args[1:6]
            nb.part(ref, "opamp", "Amplifier_Operational:Generic_single", fields=extra)
            for num, name, typ, net in (("1", "", "output", out), ("2", "-", "input", inn),
                                        ("3", "+", "input", inp), ("5", "V+", "power_in", vpos),
                                        ("4", "V-", "power_in", vneg)):
                nb._pin(ref, num, name, typ, net)
        elif args[0] == "connector":
            nb.part(ref, "Conn", "Connector:Conn", pins=[
                (str(i), f"Pin_{i}", "passive", n) for i, n in enumerate(args[1:], start=1)])
        else:
            a, b, value, *tol = args
            f = {"Tolerance": tol[0]} if tol else {}
            f.update(extra)
            lib = {"R": "Device:R", "C": "Device:C"}[ref.rstrip("?")[0]]
            nb.part(ref, value, lib, fields=f, pins=[("1", "", "passive", a), ("2", "", "passive", b)])
    netlist = nb.build()
    netlist.notes.extend(notes)
    return netlist


def findings_of(rule: str, lines: list[str]) -> list:
    report = check_netlist(build(lines), None, "example", "example.net",
                           RunOptions(seed=1, samples=2000))
    return [f for f in report.findings if f.rule == rule]


def _loud(rule: str, found: list) -> list:
    """Findings that count as the rule firing: warning or error; for a rule whose default
    severity is info, any finding."""
    quiet = checks.policy_of(rule)["severity"] == "info"
    return [f for f in found if quiet or f.severity in ("warning", "error")]


@pytest.mark.parametrize("rule", sorted(RULES))
def test_docstring_example_fails_then_passes(rule):
    fails, passing = example(RULES[rule].__doc__)
    assert _loud(rule, findings_of(rule, fails)), f"{rule}: the failing example does not fire"
    assert not _loud(rule, findings_of(rule, passing)), f"{rule}: the passing example fires"

"""A diagram of each stage as frontcheck recognised it, drawn with schemdraw into inline SVG.

The drawing is the stage's roles placed on the textbook layout of its kind (docs/engineering.md
sec. 1-3): op-amps, each resistor role with its reference, value and tolerance as read from the
design, RG, REF, the inputs and the output with their net names. Parts a finding names are drawn
in that finding's severity colour and tagged with its number in the list beside the drawing.

What is drawn is what recognition found, not a copy of the schematic: a role made of several
resistors ('R5+R6', 'R13||R37') is one symbol labelled with every part and value. A stage whose
kind or roles no layout here fits gets no drawing and a sentence saying so, never an
approximate one.

schemdraw (a circuit-drawing library) is imported only when a diagram is drawn; it loads no
numpy and no plotting library with its 'svg' canvas. Only presentation: the values shown are
the circuit's, formatted by frontcheck.formatting.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from .. import formatting as fmt
from . import palette

DRAWN_KINDS = ("difference", "three-opamp", "two-opamp", "diff-output", "integrated-inamp",
               "integrated-diffamp")
_SEVERITY_ORDER = ("info", "warning", "error")
# the input pair's roles in the words of a three-op-amp in-amp
_ROLE_WORDS = {"feedback_p": "Rf1", "feedback_n": "Rf2", "gain_resistor": "RG",
               "gain_resistor_p": "RGa", "gain_resistor_n": "RGb"}


@dataclass
class Marks:
    """Which parts findings name: reference -> (finding numbers, worst severity)."""

    numbers: dict[str, list[int]] = field(default_factory=dict)
    severity: dict[str, str] = field(default_factory=dict)
    elsewhere: list[int] = field(default_factory=list)   # findings naming no part drawn here

    def add(self, ref: str, number: int, severity: str) -> None:
        self.numbers.setdefault(ref, [])
        if number not in self.numbers[ref]:
            self.numbers[ref].append(number)
        old = self.severity.get(ref, "info")
        self.severity[ref] = max(old, severity, key=_SEVERITY_ORDER.index)

    def of(self, refs: list[str]) -> tuple[str | None, list[int]]:
        """(colour, finding numbers) for a symbol made of ``refs``; colour None when unnamed."""
        nums = sorted({n for r in refs for n in self.numbers.get(r, [])})
        sev = [self.severity[r] for r in refs if r in self.severity]
        if not sev:
            return None, []
        worst = max(sev, key=_SEVERITY_ORDER.index)
        return palette.SEVERITY_COLOURS[worst][0], nums


def marks_for(stage, findings: list[tuple[int, object]]) -> Marks:
    """Marks from (number, finding) pairs: a finding marks the stage's passive parts it names;
    it marks an amplifier only when it names none of them (a rule about resistor ratios names
    the op-amp too, but the resistors are what it is about)."""
    passive = {_ref(r.name) for r in stage.circuit.resistors if not r.internal}
    amps = {o.ref for o in stage.circuit.opamps}
    m = Marks()
    for number, f in findings:
        if f.severity not in ("warning", "error"):
            continue
        named = set(f.references)
        parts = named & passive or named & amps
        if not parts:
            m.elsewhere.append(number)
        for ref in sorted(parts):
            m.add(ref, number, f.severity)
    return m


def _ref(element: str) -> str:
    return element.split(".", 1)[0]


def _elements(expr: str) -> list[str]:
    return [e for e in re.split(r"\|\||\+|[()]", expr) if e]


class _Labels:
    """Role labels: references, values and tolerances as the circuit carries them."""

    def __init__(self, stage):
        self.stage = stage
        self.by_name = {r.name: r for r in stage.circuit.resistors}

    def resistor(self, role: str) -> tuple[str, list[str]]:
        """'R5 (RG)' over '100 Ω ±0.1 %'; a role of several parts lists each value."""
        expr = self.stage.roles[role]
        parts = []
        for e in _elements(expr):
            r = self.by_name.get(e)
            if r is None:
                parts.append("value not read")
                continue
            tol = f" \u00b1{fmt.percent(r.tol.value, 2, trim=True)}" if r.tol.value else ""
            if tol and r.tol.source in ("class", "default"):
                tol += " assumed"       # no tolerance in the design: say so on the drawing
            parts.append(f"{fmt.ohms(r.ohms.value)}{tol}")
        name = _ROLE_WORDS.get(role, role)
        # R1..R4 of a difference amp are role names that read like designators: left out
        head = expr if name == expr or re.fullmatch(r"R\d", name) else f"{expr} ({name})"
        return f"{head}\n" + ", ".join(parts), [_ref(e) for e in _elements(expr)]


class _Sketch:
    """One schemdraw drawing with the page's colours and the finding marks."""

    def __init__(self, stage, marks: Marks):
        import schemdraw
        import schemdraw.elements as elm

        self.elm = elm
        self.d = schemdraw.Drawing(canvas="svg", show=False)
        self.d.config(unit=2.2, fontsize=11, lw=1.3, color=palette.WIRE,
                      font="system-ui, sans-serif", margin=0.6)
        self.labels = _Labels(stage)
        self.stage = stage
        self.marks = marks

    def add(self, e):
        return self.d.add(e)

    def _tagged(self, text: str, refs: list[str]) -> tuple[str, str | None]:
        colour, nums = self.marks.of(refs)
        if nums:
            head, _, rest = text.partition("\n")
            text = head + "  [" + ", ".join(str(n) for n in nums) + "]" + ("\n" + rest if rest else "")
        return text, colour

    def resistor(self, role: str, start, end, loc: str = "top"):
        text, refs = self.labels.resistor(role)
        text, colour = self._tagged(text, refs)
        if start[0] == end[0]:
            # a resistor drawn downwards: its own 'top' side is the page's left
            loc = {"left": "top", "right": "bottom"}.get(loc, loc)
        e = self.elm.Resistor().endpoints(start, end).label(text, loc=loc, fontsize=10)
        if colour:
            e = e.color(colour)
        return self.add(e)

    def opamp(self, unit_name: str, flip: bool = False, at=(0, 0)):
        ref = next((o.ref for o in self.stage.circuit.opamps if o.name == unit_name), unit_name)
        text, colour = self._tagged(unit_name, [ref])
        e = self.elm.Opamp(leads=True).right().at(at).anchor("center")
        if flip:
            e = e.flip()
        e = e.label(text, loc="center", ofst=(-0.35, 0), fontsize=10)
        if colour:
            e = e.color(colour)
        return self.add(e)

    def wire(self, *points):
        for a, b in zip(points, points[1:]):
            self.add(self.elm.Line().endpoints(a, b))

    def dot(self, at):
        self.add(self.elm.Dot(radius=0.08).at(at))

    def port(self, at, role: str, side: str = "left"):
        """An open terminal with the port's role and net name."""
        words = {"in_p": "IN+", "in_n": "IN\u2212", "ref": "REF", "out": "OUT", "out_n": "OUT\u2212"}
        net = self.stage.circuit.ports.get(role, "")
        self.add(self.elm.Dot(open=True, radius=0.1).at(at).color(palette.PORT)
                 .label(f"{words.get(role, role)}\n{net}", loc=side, fontsize=10,
                        color=palette.PORT))

    def svg(self) -> str:
        data = self.d.get_imagedata("svg")
        text = data.decode("utf-8") if isinstance(data, bytes) else data
        return _inline(text)


def _css_px(points: float) -> str:
    """A drawing size in points as whole CSS pixels (96 px to 72 pt): layout, not a figure."""
    return str(round(points * 4 / 3))


def _inline(svg: str) -> str:
    """schemdraw's SVG made fit for inline HTML: no XML namespace URLs (an inline <svg> needs
    none, and a self-contained page names no address), sizes in CSS pixels."""
    svg = re.sub(r'\s+xmlns(:\w+)?="[^"]*"', "", svg)
    svg = svg.replace("stroke-dasharray:-;", "")
    svg = re.sub(r'(width|height)="([\d.]+)pt"',
                 lambda m: f'{m.group(1)}="{_css_px(float(m.group(2)))}"', svg)
    return re.sub(r"^<\?xml[^>]*>\s*", "", svg.strip())


# -- layouts ---------------------------------------------------------------------------------

def _add(p, dx, dy):
    return (p[0] + dx, p[1] + dy)


def _difference(k: _Sketch) -> None:
    """One op-amp, R1 in to -, R2 - to out, R3 in to +, R4 + to REF (docs/engineering.md sec. 1)."""
    s = k.stage
    op = k.opamp(s.amplifiers[0])
    n, p, out = op.in1, op.in2, op.out
    n0, p0 = _add(n, -1.0, 0), _add(p, -1.0, 0)
    k.wire(n, n0)
    k.wire(p, p0)
    k.resistor("R1", _add(n0, -3.2, 0), n0)
    k.port(_add(n0, -3.2, 0), "in_n")
    top = n0[1] + 2.2
    k.wire(n0, (n0[0], top))
    k.resistor("R2", (n0[0], top), (out[0] + 0.8, top))
    k.wire((out[0] + 0.8, top), (out[0] + 0.8, out[1]), out, _add(out, 2.0, 0))
    k.port(_add(out, 2.0, 0), "out", "right")
    k.resistor("R3", _add(p0, -3.2, 0), p0, "bottom")
    k.port(_add(p0, -3.2, 0), "in_p")
    k.resistor("R4", p0, _add(p0, 0, -3.4), "right")
    k.port(_add(p0, 0, -3.4), "ref", "bottom")
    for pt in (n0, p0, (out[0] + 0.8, out[1])):
        k.dot(pt)


def _input_pair(k: _Sketch, rf_p: str, rf_n: str, rg: list[str]):
    """Two input op-amps, + inputs at the ports, feedback Rf1/Rf2, the gain network between the
    inverting inputs (one RG, or two halves meeting at a centre tap). Returns the two outputs."""
    s = k.stage
    a1 = k.opamp(s.amplifiers[0], flip=True, at=(0, 3.6))
    a2 = k.opamp(s.amplifiers[1], at=(0, -3.6))
    m1, m2 = _add(a1.in1, -0.8, 0), _add(a2.in1, -0.8, 0)
    k.wire(a1.in1, m1)
    k.wire(a2.in1, m2)
    k.wire(a1.in2, _add(a1.in2, -3.6, 0))
    k.port(_add(a1.in2, -3.6, 0), "in_p")
    k.wire(a2.in2, _add(a2.in2, -3.6, 0))
    k.port(_add(a2.in2, -3.6, 0), "in_n")
    y1, y2 = m1[1] - 1.2, m2[1] + 1.2
    o1, o2 = a1.out, a2.out
    k.wire(m1, (m1[0], y1))
    k.resistor(rf_p, (m1[0], y1), (o1[0] + 0.7, y1), "bottom")
    k.wire((o1[0] + 0.7, y1), (o1[0] + 0.7, o1[1]), o1)
    k.wire(m2, (m2[0], y2))
    k.resistor(rf_n, (m2[0], y2), (o2[0] + 0.7, y2))
    k.wire((o2[0] + 0.7, y2), (o2[0] + 0.7, o2[1]), o2)
    if len(rg) == 1:
        k.resistor(rg[0], (m1[0], y1), (m2[0], y2), "left")
    else:
        mid = (m1[0], (y1 + y2) / 2)
        k.resistor(rg[0], (m1[0], y1), mid, "left")
        k.resistor(rg[1], mid, (m2[0], y2), "left")
        k.dot(mid)
    for pt in ((m1[0], y1), (m2[0], y2), (o1[0] + 0.7, o1[1]), (o2[0] + 0.7, o2[1])):
        k.dot(pt)
    return (o1[0] + 0.7, o1[1]), (o2[0] + 0.7, o2[1])


def _rg_roles(roles: dict, whole: str, a: str, b: str) -> list[str]:
    if a in roles and b in roles:
        return [a, b]
    return [whole] if whole in roles else []


def _three_opamp(k: _Sketch) -> None:
    """Input pair, then the difference stage: Rc from A1's output to +, Rd + to REF, Ra from
    A2's output to -, Rb - to out (docs/engineering.md sec. 3)."""
    o1, o2 = _input_pair(k, "Rf1", "Rf2", _rg_roles(k.stage.roles, "RG", "RGa", "RGb"))
    a3 = k.opamp(k.stage.amplifiers[2], flip=True, at=(o1[0] + 6.5, 0))
    p, n, out = a3.in2, a3.in1, a3.out
    p0, n0 = _add(p, -1.0, 0), _add(n, -1.0, 0)
    k.wire(p, p0)
    k.wire(n, n0)
    k.wire(o1, (o1[0] + 1.0, o1[1]))
    k.resistor("Rc", (o1[0] + 1.0, o1[1]), (p0[0], o1[1]))
    k.wire((p0[0], o1[1]), p0)
    k.wire(o2, (o2[0] + 1.0, o2[1]))
    k.resistor("Ra", (o2[0] + 1.0, o2[1]), (n0[0], o2[1]), "bottom")
    k.wire((n0[0], o2[1]), n0)
    k.resistor("Rd", (p0[0], o1[1]), (out[0] + 2.2, o1[1]))
    k.port((out[0] + 2.2, o1[1]), "ref", "right")
    k.resistor("Rb", (n0[0], o2[1]), (out[0] + 0.8, o2[1]), "bottom")
    k.wire((out[0] + 0.8, o2[1]), (out[0] + 0.8, out[1]), out, _add(out, 2.4, 0))
    k.port(_add(out, 2.4, 0), "out", "right")
    for pt in ((p0[0], o1[1]), (n0[0], o2[1]), (out[0] + 0.8, out[1])):
        k.dot(pt)


def _diff_output(k: _Sketch) -> None:
    """The input pair alone: its two outputs are the stage's differential output."""
    roles = k.stage.roles
    rg = _rg_roles(roles, "gain_resistor", "gain_resistor_p", "gain_resistor_n")
    o1, o2 = _input_pair(k, "feedback_p", "feedback_n", rg)
    k.wire(o1, _add(o1, 1.8, 0))
    k.port(_add(o1, 1.8, 0), "out", "right")
    k.wire(o2, _add(o2, 1.8, 0))
    k.port(_add(o2, 1.8, 0), "out_n", "right")


def _two_opamp(k: _Sketch) -> None:
    """A1 non-inverting on IN-, R1 from its - node to REF, R2 its feedback; R3 from A1's output
    to A2's - node, R4 A2's feedback; RG between the two - nodes (frontcheck.recognise.two_opamp)."""
    s = k.stage
    a1 = k.opamp(s.amplifiers[0], at=(0, 0))
    a2 = k.opamp(s.amplifiers[1], at=(a1.out[0] + 5.2, 0))
    m1, m2 = _add(a1.in1, -0.8, 0), _add(a2.in1, -0.8, 0)
    k.wire(a1.in1, m1)
    k.wire(a2.in1, m2)
    k.resistor("R1", _add(m1, -3.2, 0), m1)
    k.port(_add(m1, -3.2, 0), "ref")
    k.wire(a1.in2, _add(a1.in2, -4.0, 0))
    k.port(_add(a1.in2, -4.0, 0), "in_n")
    low = a1.in2[1] - 1.8
    k.wire(a2.in2, _add(a2.in2, -0.8, 0), (m2[0], low), (a1.in2[0] - 4.0, low))
    k.port((a1.in2[0] - 4.0, low), "in_p")
    top = m1[1] + 2.0
    o1 = (a1.out[0] + 0.7, a1.out[1])
    k.wire(m1, (m1[0], top))
    k.resistor("R2", (m1[0], top), (o1[0], top))
    k.wire((o1[0], top), o1, a1.out)
    k.resistor("R3", o1, (m2[0], o1[1]), "bottom")
    k.wire((m2[0], o1[1]), m2)
    out = (a2.out[0] + 0.7, a2.out[1])
    k.wire(m2, (m2[0], top))
    k.resistor("R4", (m2[0], top), (out[0], top))
    k.wire((out[0], top), out, a2.out)
    k.wire(out, _add(out, 1.8, 0))
    k.port(_add(out, 1.8, 0), "out", "right")
    if "RG" in s.roles:
        k.wire((m1[0], top), (m1[0], top + 1.8))
        k.resistor("RG", (m1[0], top + 1.8), (m2[0], top + 1.8))
        k.wire((m2[0], top + 1.8), (m2[0], top))
    for pt in (m1, (m1[0], top), o1, (m2[0], o1[1]), (m2[0], top), out):
        k.dot(pt)


def _external(stage) -> dict[str, str]:
    ref = stage.amplifiers[0]
    return {k: v for k, v in stage.roles.items() if not v.startswith(ref + ".")}


def _integrated(k: _Sketch) -> None:
    """The part as a block with its pins; the gain resistor placed across its RG pins. The
    resistors inside the part (from part data) are named in the caption, not drawn."""
    elm, s = k.elm, k.stage
    ref = s.amplifiers[0]
    inamp = s.kind == "integrated-inamp"
    ext = _external(s)
    # schemdraw stacks a side's pins from the bottom up: +IN ends on top, REF below OUT
    left = [elm.IcPin(name="\u2212IN", anchorname="inn")]
    if inamp:
        left += [elm.IcPin(name="RG", anchorname="rg2"), elm.IcPin(name="RG", anchorname="rg1")]
    left += [elm.IcPin(name="+IN", anchorname="inp")]
    pins = left + [elm.IcPin(name="REF", side="right", anchorname="ref"),
                   elm.IcPin(name="OUT", side="right", anchorname="out")]
    text, colour = k._tagged(ref, [ref])
    block = elm.Ic(pins=pins, size=(3.2, 6.4 if inamp else 3.6), pinspacing=1.5,
                   edgepadW=0.8, leadlen=0.8).right().label(text, loc="center", fontsize=11)
    if colour:
        block = block.color(colour)
    ic = k.add(block)
    for pin, role, side in (("inp", "in_p", "left"), ("inn", "in_n", "left")):
        at = getattr(ic, pin)
        k.wire(at, _add(at, -4.4, 0))
        k.port(_add(at, -4.4, 0), role, side)
    for pin, role in (("out", "out"), ("ref", "ref")):
        at = getattr(ic, pin)
        k.wire(at, _add(at, 1.6, 0))
        k.port(_add(at, 1.6, 0), role, "right")
    if inamp and ext:
        a, b = _add(ic.rg1, -1.4, 0), _add(ic.rg2, -1.4, 0)
        k.wire(ic.rg1, a)
        k.wire(ic.rg2, b)
        halves = _rg_roles(ext, "RG", "RGa", "RGb")
        if len(halves) == 1:
            k.resistor(halves[0], a, b, "left")
        else:
            mid = (a[0], (a[1] + b[1]) / 2)
            k.resistor(halves[0], a, mid, "left")
            k.resistor(halves[1], mid, b, "left")
            k.dot(mid)


def _integrated_drawable(stage) -> str | None:
    """None when the block layout shows every external part; else why it cannot."""
    ext = set(_external(stage))
    if stage.kind == "integrated-diffamp" and ext:
        return "external parts " + ", ".join(sorted(ext)) + " beside the difference amp"
    if stage.kind == "integrated-inamp" and ext not in (set(), {"RG"}, {"RG", "RGa", "RGb"}):
        return "an external gain network (" + ", ".join(sorted(ext)) + ") other than one RG"
    return None


_LAYOUTS = {"difference": (_difference, ("R1", "R2", "R3", "R4")),
            "three-opamp": (_three_opamp, ("Ra", "Rb", "Rc", "Rd", "Rf1", "Rf2")),
            "two-opamp": (_two_opamp, ("R1", "R2", "R3", "R4")),
            "diff-output": (_diff_output, ("feedback_p", "feedback_n")),
            "integrated-inamp": (_integrated, ()),
            "integrated-diffamp": (_integrated, ())}
_AMPLIFIERS = {"difference": 1, "three-opamp": 3, "two-opamp": 2, "diff-output": 2,
               "integrated-inamp": 1, "integrated-diffamp": 1}


def not_drawable(stage) -> str | None:
    """Why this stage gets no diagram, or None when it can be drawn as recognised."""
    if stage.kind not in _LAYOUTS:
        return f"no diagram layout for a stage of kind '{stage.kind}' yet"
    _, needed = _LAYOUTS[stage.kind]
    missing = [r for r in needed if r not in stage.roles]
    if missing:
        return "the roles " + ", ".join(missing) + " were not all found"
    if len(stage.amplifiers) != _AMPLIFIERS[stage.kind]:
        return f"{len(stage.amplifiers)} amplifier(s) where the layout has {_AMPLIFIERS[stage.kind]}"
    if stage.kind.startswith("integrated"):
        return _integrated_drawable(stage)
    if stage.kind in ("three-opamp", "diff-output") and not any(
            r in stage.roles for r in ("RG", "RGa", "gain_resistor", "gain_resistor_p")):
        return "no gain resistor found between the inverting inputs"
    return None


def internal_parts(stage) -> str:
    """The resistors inside an integrated part, from part data, for the caption."""
    inside = [r for r in stage.circuit.resistors if r.internal]
    if not inside:
        return ""
    return ("inside " + stage.amplifiers[0] + " (from part data, not drawn): "
            + ", ".join(f"{r.name.split('.', 1)[1]} {fmt.ohms(r.ohms.value)}" for r in inside))


def diagram_svg(stage, marks: Marks) -> tuple[str | None, str]:
    """(inline SVG, caption) of the stage, or (None, why it is not drawn)."""
    why = not_drawable(stage)
    if why is not None:
        return None, f"No diagram of this stage: {why}."
    k = _Sketch(stage, marks)
    _LAYOUTS[stage.kind][0](k)
    caption = "The stage as recognised (not a copy of the schematic)"
    inside = internal_parts(stage)
    if inside:
        caption += "; " + inside
    if marks.numbers:
        caption += "; parts in colour are named by the findings numbered beside them"
    if marks.elsewhere:
        caption += ("; finding(s) " + ", ".join(str(n) for n in marks.elsewhere)
                    + " name only parts outside the stage (not drawn)")
    return k.svg(), caption

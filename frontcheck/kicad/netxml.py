"""KiCad's XML intermediate netlist as the nested lists the S-expression parser gives
(``<field name="Tol">1%</field>`` becomes ``["field", ["name", "Tol"], "1%"]``), so one walker
(``netfile``) reads both formats. No document type declarations, no entities, no recursion.
"""

from __future__ import annotations

import re
from xml.parsers import expat

from ..errors import InputError

__all__ = ["parse_xml", "count_xml_elements", "HINT_EXPORT"]

HINT_EXPORT = ("export the netlist again from KiCad's schematic editor "
               "(File > Export > Netlist) or with kicad-cli sch export netlist")


class _XmlBuilder:
    """Builds the nested-list tree from expat events, without recursion (deep input is safe)
    and with the line of every ``comp`` element."""

    def __init__(self, file: str):
        self.file = file
        self.stack: list[list] = []
        self.root: list | None = None
        self.text: list[list[str]] = []
        self.has_elements: list[bool] = []
        self.comp_lines: dict[str, int] = {}
        self.parser = expat.ParserCreate()
        self.parser.StartElementHandler = self.start
        self.parser.EndElementHandler = self.end
        self.parser.CharacterDataHandler = self.chars
        self.parser.StartDoctypeDeclHandler = self.doctype
        self.parser.EntityDeclHandler = self.entity

    def doctype(self, *args):
        raise InputError("XML document type declarations are not accepted in a netlist",
                         self.file, self.parser.CurrentLineNumber,
                         self.parser.CurrentColumnNumber + 1, hint=HINT_EXPORT)

    def entity(self, *args):
        self.doctype()

    def start(self, tag: str, attrs: dict[str, str]):
        node: list = [tag]
        node.extend([k, v] for k, v in attrs.items())
        if self.stack:
            self.stack[-1].append(node)
            self.has_elements[-1] = True
        elif self.root is None:
            self.root = node
        self.stack.append(node)
        self.text.append([])
        self.has_elements.append(False)
        if tag == "comp" and "ref" in attrs:
            self.comp_lines.setdefault(attrs["ref"], self.parser.CurrentLineNumber)

    def end(self, tag: str):
        node = self.stack.pop()
        text = "".join(self.text.pop())
        if self.has_elements.pop():
            if text.strip():          # mixed content: keep the words, not the indentation
                node.append(text.strip())
        elif text:
            node.append(text)

    def chars(self, data: str):
        self.text[-1].append(data)


def count_xml_elements(text: str) -> int:
    """An upper bound on the elements in ``text`` (its ``<`` that open a tag; a ``<`` inside
    CDATA is counted too), counted without building anything."""
    return text.count("<") - text.count("</") - text.count("<?") - text.count("<!")


def parse_xml(text: str, file: str) -> tuple[list, dict[str, int]]:
    b = _XmlBuilder(file)
    try:
        # The text is already decoded; hand expat UTF-8 bytes and drop any declared encoding.
        b.parser.Parse(re.sub(r"^\s*<\?xml[^>]*\?>", "", text, count=1).encode("utf-8"), True)
    except expat.ExpatError as e:
        raise InputError(f"not well-formed XML: {expat.ErrorString(e.code)}", file, e.lineno,
                         e.offset + 1, hint=HINT_EXPORT) from None
    except RecursionError:  # pragma: no cover - the builder does not recurse
        raise InputError("XML nested too deeply", file) from None
    if b.root is None:
        raise InputError("empty XML document", file, 1, 1, hint=HINT_EXPORT)
    return b.root, b.comp_lines

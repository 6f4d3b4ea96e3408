"""A small S-expression writer producing KiCad-style, tab-indented text.

Nodes are Python lists; atoms are ``str`` (written bare: keywords, yes/no), ``Q`` (a quoted
string) or numbers. Numbers are written with at most four decimals, because KiCad rounds every
coordinate to 0.0001 mm on load and a longer tail would only make rebuilds differ in noise.
"""

from __future__ import annotations


class Q(str):
    """A string written in double quotes."""


def num(v: float) -> str:
    if isinstance(v, bool):
        raise TypeError("bool is not a KiCad number")
    if isinstance(v, int):
        return str(v)
    s = f"{round(v, 4):.4f}".rstrip("0").rstrip(".")
    return "0" if s in ("-0", "") else s


def atom(a) -> str:
    if isinstance(a, Q):
        return '"' + a.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n") + '"'
    if isinstance(a, (int, float)):
        return num(a)
    return str(a)


def _inline(node: list) -> bool:
    return all(not isinstance(c, list) for c in node)


def dump(node: list, depth: int = 0) -> str:
    """Text of one node; short all-atom lists stay on one line, as KiCad writes them."""
    pad = "\t" * depth
    if _inline(node):
        return pad + "(" + " ".join(atom(a) for a in node) + ")"
    head = [atom(a) for a in node if not isinstance(a, list)]
    kids = [c for c in node if isinstance(c, list)]
    if node[0] == "pts":
        return pad + "(pts\n" + pad + "\t" + " ".join(dump(c) for c in kids) + "\n" + pad + ")"
    lines = [pad + "(" + " ".join(head)]
    lines += [dump(c, depth + 1) for c in kids]
    lines.append(pad + ")")
    return "\n".join(lines)

"""``frontcheck netlist PATH``: print the nets frontcheck sees, to compare with KiCad's own.

PATH is anything ``frontcheck check`` accepts (project folder, .kicad_pro, a .kicad_sch of the
hierarchy, or a .net/.xml netlist KiCad exported). ``--format json`` prints
``{"nets": [{"name": ..., "nodes": [[ref, pin], ...]}, ...]}`` (the contract of
docs/architecture.md sec. 4); the text format is a table in a terminal and one tab-separated line
per net otherwise (easy to diff or grep). Nothing is written anywhere but stdout and stderr.
"""

from __future__ import annotations

import json
import sys

from ..netlist import Netlist


def add_parser(sub) -> None:
    p = sub.add_parser(
        "netlist",
        help="print the nets of a design (the whole hierarchy)",
        description="Print every net with its (reference, pin) nodes, for the whole hierarchy "
                    "with per-instance references. Reads a project, a schematic or a netlist "
                    "KiCad exported; writes nothing.",
    )
    p.add_argument("path", metavar="PATH",
                   help="project folder, .kicad_pro, .kicad_sch, or a .net/.xml netlist")
    p.add_argument("--format", choices=("text", "json"), default="text",
                   help="output format (default: text)")
    from ..kicad.limits import add_options
    add_options(p)
    p.set_defaults(run=run)


def load_netlist(path: str, limits=None) -> Netlist:
    """The Netlist of PATH (whatever frontcheck.kicad.project.load accepts). Raises InputError
    for anything that cannot be read."""
    from ..kicad import project   # imported here: `frontcheck --version` stays fast

    return project.load(path, limits)


def run(args) -> int:
    from ..kicad.limits import from_options
    from ..report.safe_text import visible

    netlist = load_netlist(args.path, from_options(args))
    for note in netlist.notes:
        print(f"frontcheck: note: {visible(note)}", file=sys.stderr)
    if args.format == "json":
        sys.stdout.write(_json_text(netlist))
    elif sys.stdout.isatty():
        _print_table(netlist)
    else:
        _print_plain(netlist)
    return 0


def _json_text(netlist: Netlist) -> str:
    """The JSON document of docs/architecture.md sec. 4, one net per line (valid JSON that still
    diffs well)."""
    nets = netlist.to_json()["nets"]
    lines = [json.dumps(n, ensure_ascii=False) for n in nets]
    body = ",\n    ".join(lines)
    return '{\n  "nets": [\n    ' + body + "\n  ]\n}\n" if lines else '{\n  "nets": []\n}\n'


def _node_text(ref: str, pin: str) -> str:
    return f"{ref}.{pin}"


def _print_plain(netlist: Netlist) -> None:
    from ..report.safe_text import visible

    out = []
    for net in netlist.nets:
        out.append(net.name + "\t" + " ".join(_node_text(n.ref, n.pin) for n in net.nodes))
    sys.stdout.write(visible("\n".join(out)) + ("\n" if out else ""))


def _print_table(netlist: Netlist) -> None:
    from rich.console import Console
    from rich.table import Table
    from rich.text import Text

    from ..report.safe_text import visible

    table = Table(title=f"{len(netlist.nets)} nets, {len(netlist.components)} components",
                  title_justify="left", show_lines=False)
    table.add_column("Net", style="bold", overflow="fold")
    table.add_column("Pins", justify="right")
    table.add_column("Nodes (reference.pin name)", overflow="fold")
    for net in netlist.nets:
        nodes = ", ".join(
            _node_text(n.ref, n.pin) + (f" {n.pinfunction}" if n.pinfunction else "")
            for n in net.nodes)
        # Text, not str: a net called "/D[0]" must not be read as console markup.
        table.add_row(Text(visible(net.name)), str(len(net.nodes)), Text(visible(nodes)),
                      style="dim" if len(net.nodes) < 2 else None)
    Console().print(table)

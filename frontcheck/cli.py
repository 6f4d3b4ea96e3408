"""Command line: `frontcheck netlist|check|rules|explain ...`."""

from __future__ import annotations

import argparse
import sys

from . import __version__


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="frontcheck",
        description="Check difference and instrumentation amplifier front ends in KiCad designs.",
    )
    p.add_argument("--version", action="version", version=f"frontcheck {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    n = sub.add_parser("netlist", help="print the netlist frontcheck reads from a design")
    n.add_argument("path", help="project folder, .kicad_pro, .kicad_sch, .net or .xml")
    n.add_argument("--format", choices=["text", "json"], default="text")
    return p


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return 2
    return 0


if __name__ == "__main__":
    sys.exit(main())

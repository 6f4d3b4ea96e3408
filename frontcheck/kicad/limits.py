"""Bounds on what one design may make frontcheck read, and where it may read from.

A design is a graph of files, and a small graph can ask for a great deal of work: seven sheet
files of 300 bytes, each placing the next ten times, are a million sheet instances. The limits
below stop such a design early with a message that names the limit and the command-line
option that raises it. They sit far above real designs: the largest designs of the test corpus
(docs/test-corpus.md) have 6 sheet instances, 519 placed symbols and 13,742 expressions in
their largest sheet file.

Files are read only from the project folder (the root sheet's folder) and from folders the
user allows explicitly; nothing outside them is opened, not even to see whether it exists.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from frontcheck.errors import InputError

__all__ = ["ReadLimits", "LimitError", "DEFAULT_LIMITS", "limit_error"]


class LimitError(InputError):
    """A design asked for more work than a limit allows."""


@dataclass(frozen=True)
class ReadLimits:
    sheet_instances: int = 2_000      # --max-sheets: every placement of every sheet file
    symbols: int = 100_000            # --max-symbols: placed symbols over all instances
    expressions: int = 2_000_000      # --max-expressions: '(' in one file (real: ~24 bytes each)
    allowed_folders: tuple[Path, ...] = ()   # --allow-folder: read sheets from these too


DEFAULT_LIMITS = ReadLimits()


def limit_error(what: str, limit: int, option: str, file: str | None) -> LimitError:
    return LimitError(f"more than {limit:,} {what}: that is the limit, far above real designs",
                      file, hint=f"if the design is real, raise the limit with {option} N")


def _count(text: str) -> int:
    import argparse

    try:
        v = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if not 1 <= v <= 10**9:
        raise argparse.ArgumentTypeError("must be from 1 to 1000000000")
    return v


def add_options(parser) -> None:
    """The command-line options of every command that reads designs."""
    d = DEFAULT_LIMITS
    g = parser.add_argument_group("how much a design may make frontcheck read")
    g.add_argument("--max-sheets", type=_count, default=d.sheet_instances, metavar="N",
                   help=f"sheet instances in one design (default {d.sheet_instances:,})")
    g.add_argument("--max-symbols", type=_count, default=d.symbols, metavar="N",
                   help=f"placed symbols in one design (default {d.symbols:,})")
    g.add_argument("--max-expressions", type=_count, default=d.expressions, metavar="N",
                   help=f"S-expression lists (XML elements in a .xml netlist) in one file "
                        f"(default {d.expressions:,})")
    g.add_argument("--allow-folder", action="append", default=[], metavar="DIR",
                   help="also read sheet files from DIR (only the project folder otherwise; "
                        "may be given several times)")


def from_options(args) -> ReadLimits:
    return ReadLimits(sheet_instances=args.max_sheets, symbols=args.max_symbols,
                      expressions=args.max_expressions,
                      allowed_folders=tuple(Path(d).absolute() for d in args.allow_folder))

"""Command line entry point: dispatches to one module per command in frontcheck.commands.

Each command module offers ``add_parser(subparsers)`` and ``run(args) -> int``. Modules are
imported lazily so that `frontcheck --version` and a small check start fast.
Exit status: 0 clean, 1 findings at or above the fail level, 2 bad input or usage.
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys

from . import __version__
from .errors import InputError

# command name -> module in frontcheck.commands
COMMANDS = {
    "check": "check",
    "netlist": "netlist",
    "rules": "rules",
    "explain": "rules",
    "baseline": "check",
}


def _command_modules():
    seen = []
    for mod in COMMANDS.values():
        if mod not in seen:
            seen.append(mod)
    for mod in seen:
        try:
            yield importlib.import_module(f"frontcheck.commands.{mod}")
        except ModuleNotFoundError as e:
            if e.name != f"frontcheck.commands.{mod}":
                raise


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="frontcheck",
        description="Check difference and instrumentation amplifier front ends in KiCad designs.",
    )
    p.add_argument("--version", action="version", version=f"frontcheck {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    for module in _command_modules():
        module.add_parser(sub)
    return p




def say(message: str) -> None:
    """One message on stderr, its control characters (from design text) made visible."""
    from .report.safe_text import visible

    print(f"frontcheck: {visible(message)}", file=sys.stderr)


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as e:   # argparse: usage error -> 2, --help/--version -> 0
        return int(e.code or 0)
    if args.command is None:
        parser.print_help()
        return 2
    try:
        return int(args.run(args))
    except InputError as e:
        say(e.render())
        return 2
    except BrokenPipeError:   # output piped into `head`: stop quietly (Python docs' recipe)
        import os

        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 1
    except OSError as e:      # an unreadable path that a reader did not turn into InputError
        where = f"{e.filename}: " if e.filename is not None else ""
        say(f"{where}{e.strerror or e}")
        return 2
    except KeyboardInterrupt:
        return 130
    except Exception as e:
        return could_not_check(e)


def could_not_check(e: Exception) -> int:
    """Any other failure: the design was not checked, so exit 2 (never 1, which a CI gate
    reads as findings) with one line, never a traceback (FRONTCHECK_DEBUG=1 shows it)."""
    import os

    # A reader that let a parse error through: its located message. Looked up in
    # sys.modules so that `--version` does not pay for importing the parser.
    sexpr = sys.modules.get("frontcheck.kicad.sexpr")
    if sexpr is not None and isinstance(e, sexpr.SExprError):
        say(InputError(e.message, e.file, e.line, e.column).render())
        return 2
    if os.environ.get("FRONTCHECK_DEBUG") == "1":
        raise e
    if isinstance(e, MemoryError):
        print("frontcheck: ran out of memory; nothing was checked\n  what to do: lower "
              "--samples or --jobs, or check fewer projects at once", file=sys.stderr)
    elif isinstance(e, RecursionError):
        print("frontcheck: an input file is nested too deeply to read; nothing was checked\n"
              "  what to do: check the design and configuration files for damage",
              file=sys.stderr)
    else:                     # a defect in frontcheck, not in the design
        say(f"internal error ({type(e).__name__}: {e}); this is a defect in frontcheck, not "
            f"in your design: please report it with the design, and rerun with "
            f"FRONTCHECK_DEBUG=1 for the traceback")
    return 2


# BLAS libraries start a pool of worker threads when numpy loads, and the workers spin for a
# while after each call. A check's matrices are small (one stage's circuit, or a topology
# family's stack of them), so the workers never make it faster: on a 2-core machine they cost a
# sample project's check about a third of its CPU time and the 400-stage benchmark design a
# tenth, with the same wall time. The variables must be set before numpy is first imported; a
# value the user set is kept.
BLAS_THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "OMP_NUM_THREADS")


def single_threaded_blas(environ=os.environ) -> None:
    """Ask the BLAS library numpy loads for one thread, unless the user chose a number."""
    for name in BLAS_THREAD_VARIABLES:
        environ.setdefault(name, "1")


def entry() -> None:
    """The `frontcheck` command and `python -m frontcheck`: a process of its own."""
    single_threaded_blas()
    sys.exit(main())


if __name__ == "__main__":
    entry()

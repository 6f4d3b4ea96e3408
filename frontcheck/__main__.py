"""`python -m frontcheck ...` runs the command line."""

from .cli import entry

entry()

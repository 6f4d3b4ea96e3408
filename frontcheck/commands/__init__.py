"""One module per command: each has ``add_parser(subparsers)`` (which sets ``run`` with
``set_defaults(run=...)``) and a ``run(args) -> int``."""

"""Everything that knows KiCad's file syntax lives in this package
(docs/architecture.md sec. 1)."""

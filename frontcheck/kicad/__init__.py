"""Everything that knows KiCad's file syntax lives in this package (see DESIGN.md)."""

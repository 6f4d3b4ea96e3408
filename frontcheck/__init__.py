"""frontcheck: design-rule checks for difference and instrumentation amplifier front ends
drawn in KiCad."""

__version__ = "0.1.0"

"""The finding type lives in the neutral model layer, frontcheck.finding (read by reporters
without loading the rules); this name stays for the code that imports it from here."""

from ..finding import SEVERITIES, Finding  # noqa: F401

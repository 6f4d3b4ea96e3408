"""Generator of the sample KiCad projects: symbol library, sheet builder, one module per sample."""

from . import scale, shunt

SAMPLES = [scale, shunt]

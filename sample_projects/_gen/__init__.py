"""Generator of the sample KiCad projects: symbol library, sheet builder, one module per sample."""

from . import kiln, scale, shunt

SAMPLES = [scale, kiln, shunt]

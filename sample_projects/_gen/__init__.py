"""Generator of the sample KiCad projects: symbol library, sheet builder, one module per sample."""

from . import ecg, kiln, scale, shunt, strain

SAMPLES = [scale, kiln, shunt, strain, ecg]

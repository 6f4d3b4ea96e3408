"""DC paths in the whole design: bias-current return of every amplifier input, the source
behind the REF pin, and the resistance of the source driving the stage inputs.

These look beyond the stage's SubCircuit into the Netlist, with a DC view of it. The work is
split by job; this module is the one entry the rest of frontcheck calls:

* :mod:`.dc_view`: ``DCView`` (what conducts at DC, which nets have a defined potential) and
  the walk over it;
* :mod:`.bias_return`: ``bias_paths(netlist, stage, rails=None) -> list[BiasPath]``;
* :mod:`.thevenin`: ``thevenin(netlist, net, rails=None, exclude=()) -> Thevenin``;
* :mod:`.port_sources`: ``ref_source(netlist, stage, rails=None) -> RefSource | None``,
  ``ref_cost`` and ``source_impedances(netlist, stage, rails=None) -> SourceLoading``;
* :mod:`.filter_ahead`: ``filter_ahead(netlist, stage, rails=None) -> SubCircuit | None`` (the
  stage extended back through an input RFI filter drawn ahead of its ports).
"""

from __future__ import annotations

from frontcheck.analysis.bias_return import bias_paths
from frontcheck.analysis.dc_view import DCView
from frontcheck.analysis.filter_ahead import filter_ahead
from frontcheck.analysis.port_sources import ref_cost, ref_source, source_impedances
from frontcheck.analysis.thevenin import Thevenin, thevenin

__all__ = ["DCView", "Thevenin", "bias_paths", "filter_ahead", "ref_cost", "ref_source",
           "source_impedances", "thevenin"]

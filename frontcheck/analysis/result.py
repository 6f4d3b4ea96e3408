"""The result types now live in the neutral model layer, frontcheck.result (read by reporters
without loading analysis or numpy); this name stays for the code that imports it from here."""

from ..result import (BiasPath, CmrrResult, Headroom, HeadroomCheck, InputFilter,  # noqa: F401
                      OpAmpBasis, RefSource, Requirement, SourceLoading, Spread, StageResult,
                      describe_opamps, quantity_text)

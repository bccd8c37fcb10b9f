"""IIR versus FIR: for each band, the two designs that meet the same magnitude spec.

The spec is read from each band's crossover (:mod:`~planner.compare.spec`),
the other family's equivalent made (:mod:`~planner.compare.equivalents`),
and the whole project compared and built both ways (:mod:`~planner.compare.run`);
the results are dataclasses with ``to_dict()`` (:mod:`~planner.compare.results`).
"""

from planner.compare.equivalents import (MAX_ELLIPTIC_ORDER, butterworth_order, elliptic_order,
                                         fir_equivalent, iir_equivalent, side_metrics)
from planner.compare.results import (DEFAULT_ATTEN_DB, DEFAULT_RIPPLE_DB, NO_CROSSOVER, NOT_MET,
                                     OK, BandComparison, Build, Comparison, DerivedSpec, Side)
from planner.compare.run import compare_chain, compare_project
from planner.compare.spec import derive_spec, end_of_range, is_crossover
from planner.defaults import IIR_FAMILIES

__all__ = ["MAX_ELLIPTIC_ORDER", "butterworth_order", "elliptic_order", "fir_equivalent",
           "iir_equivalent", "side_metrics", "DEFAULT_ATTEN_DB", "DEFAULT_RIPPLE_DB",
           "NO_CROSSOVER", "NOT_MET", "OK", "BandComparison", "Build", "Comparison",
           "DerivedSpec", "Side", "compare_chain", "compare_project", "derive_spec",
           "end_of_range", "is_crossover", "IIR_FAMILIES"]

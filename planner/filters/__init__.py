"""The filter kinds a project may hold: their fields, checks and designs.

One registry (:mod:`planner.filters.registry`) keyed by ``(type, family)``;
the fields and their checkers in :mod:`planner.filters.fields`; the built-in
kinds, one module per family of designs: :mod:`~planner.filters.iir`
(crossovers), :mod:`~planner.filters.eq` (the cookbook EQ), :mod:`~planner.filters.raw`
(coefficients from elsewhere) and :mod:`~planner.filters.fir` (linear-phase
FIR and complementary splits). Importing this package registers them all; a
new filter type is one new module registering its kinds here.
"""

from planner.filters.fields import FieldSpec, check_field
from planner.filters.registry import (FilterDesign, FilterKind, KindWarning, check_params,
                                      design, families_of, kind_of, kinds, label, lookup,
                                      register)
# Importing the kinds registers them, in this order (forms and pick lists follow it).
from planner.filters import iir, eq, raw, fir, driver  # noqa: E402,F401,I001
from planner.filters.names import family_choices, read_family, read_type, type_choices  # noqa: E402,I001

__all__ = ["FieldSpec", "check_field", "FilterDesign", "FilterKind", "KindWarning",
           "check_params", "design", "families_of", "kind_of", "kinds", "label", "lookup",
           "register", "read_type", "read_family", "type_choices", "family_choices"]

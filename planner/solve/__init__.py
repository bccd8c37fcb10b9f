"""Solvers that make the sum flat: alignment (:mod:`~planner.solve.alignment`) and EQ
balancing (:mod:`~planner.solve.eqfit`), with their target curves
(:mod:`~planner.targets`).

Both work on the analysed project (the acoustic sum where bands have
drivers), through :func:`planner.engine.analyse`, with scipy.optimize as the
optimiser, and return a new project with what they found, never changing
the input.
"""

from planner.solve.alignment import Alignment, Bounds, align
from planner.solve.eqfit import Fit, fit
from planner.targets import Target, parse_target, project_target

__all__ = ["Alignment", "Bounds", "align", "Fit", "fit", "Target", "parse_target", "project_target"]

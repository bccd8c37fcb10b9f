"""From a project to its designs, responses and check report.

The pure DSP layer strung together for a :class:`~planner.model.Project`:
each filter designed once per sample rate (:mod:`~planner.engine.design`,
cached by its parameters), every band's chain evaluated in one vectorised
pass, the sum checked against the project's limits with every rule in one
place (:mod:`~planner.engine.analyse`, giving a :class:`~planner.engine.result.Report`),
plain-language warnings (:mod:`~planner.engine.warnings`), and how fractional
delays are run and what rounding them costs (:mod:`~planner.engine.delays`,
:mod:`~planner.engine.rounding`).
"""

from planner.engine.analyse import analyse, hints_pending, phase_hints
from planner.engine.design import (BandDesign, design_band, design_filter, design_project,
                                   evaluate, point_evaluator)
from planner.engine.result import (STATE_TEXT, BandResult, CheckResult, CrossingResult, Report,
                                   Warning_)
from planner.engine.warnings import LATENCY_TOL_SAMPLES

__all__ = ["analyse", "hints_pending", "phase_hints", "BandDesign", "design_band",
           "design_filter", "design_project", "evaluate", "point_evaluator", "STATE_TEXT",
           "BandResult", "CheckResult", "CrossingResult", "Report", "Warning_",
           "LATENCY_TOL_SAMPLES"]

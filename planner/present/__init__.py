"""Presenting results: plain text (:mod:`~planner.present.text`), the series of each plot
view (:mod:`~planner.present.views`) and their drawing in the terminal in braille
characters (:mod:`~planner.present.plots`)."""

"""Data only: the built-in preset projects (read by :mod:`planner.presets`)."""

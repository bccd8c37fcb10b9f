"""The preset project files shipped with crossplan (data only; see planner.library)."""

"""``python -m planner`` is the ``crossplan`` command."""
from planner.cli import console_main

console_main()

"""``python -m planner`` is the ``crossplan`` command."""
import sys

try:
    from planner.cli import console_main
except KeyboardInterrupt:           # Ctrl-C while the command line itself is imported
    print("crossplan: interrupted", file=sys.stderr)
    sys.exit(130)

console_main()

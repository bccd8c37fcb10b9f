"""``python -m planner`` is the ``crossplan`` command."""
import os
import sys

# One BLAS/OpenMP thread unless set by the user, before numpy loads (see planner.cli).
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

try:
    from planner.cli import console_main  # noqa: E402
except KeyboardInterrupt:           # Ctrl-C while the command line itself is imported
    print("crossplan: interrupted", file=sys.stderr)
    sys.exit(130)

console_main()

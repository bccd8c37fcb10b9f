"""``python -m planner`` is the ``crossplan`` command."""
import os

# One BLAS/OpenMP thread unless set by the user, before numpy loads (see planner.cli).
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

from planner.cli import console_main  # noqa: E402

console_main()

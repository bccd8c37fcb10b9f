"""Linear-phase FIR crossovers: windowed sinc, equiripple, least squares, complementary splits.

Pure numpy/scipy: arrays in, arrays out. Taps are 1-D float arrays ``h[n]``
with ``H(z) = sum_n h[n] z^-n``. Frequencies are in Hz with the sample rate
``fs_hz``; ``omega`` is the normalised angular frequency in rad/sample
(``omega = 2 pi f / fs``).

One module per job; every public name is here as well:

* :mod:`~planner.dsp.fir.checks`: argument checks (and :data:`KINDS`);
* :mod:`~planner.dsp.fir.windows`: windows and the window method;
* :mod:`~planner.dsp.fir.spec`: :class:`FirSpec`, its bands and weights, measuring a design;
* :mod:`~planner.dsp.fir.estimates`: Kaiser's formulas and length estimate;
* :mod:`~planner.dsp.fir.design`: fixed-length equiripple and least-squares
  designs, the design cache;
* :mod:`~planner.dsp.fir.search`: the fewest-odd-length search on trial designs;
* :mod:`~planner.dsp.fir.min_taps`: the shortest design meeting a spec (:class:`FirDesign`);
* :mod:`~planner.dsp.fir.split`: complementary N-band splits;
* :mod:`~planner.dsp.fir.response`: responses, their derivative, group delay;
* :mod:`~planner.dsp.fir.metrics`: linear phase, latency, pre-ringing, multiplies.

Field names in errors follow the rest of :mod:`planner.dsp`: ``"type"`` for
the filter kind, ``"freq"``/``"freq2"`` for edges, ``"sample_rate"``,
``"taps"``, ``"window"``, ``"beta"``, and the spec fields ``"pass_hz"``,
``"stop_hz"``, ``"ripple_db"``, ``"atten_db"``, ``"transition_hz"``. The spec
conventions (peak-to-peak ripple, attenuation below the nominal 0 dB) are
given in :mod:`planner.dsp.fir.spec`.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., Pearson, 2010, ch. 5 (linear phase, group delay) and ch. 7
   (window method, Kaiser formulas, Parks-McClellan).
.. [2] J. F. Kaiser, "Nonrecursive digital filter design using the I0-sinh
   window function", Proc. IEEE Int. Symp. Circuits and Systems, 1974,
   pp. 20-23.
.. [3] T. W. Parks and J. H. McClellan, "Chebyshev approximation for
   nonrecursive digital filters with linear phase", IEEE Trans. Circuit
   Theory, vol. CT-19, no. 2, pp. 189-194, 1972.
.. [5] F. J. Harris, "On the use of windows for harmonic analysis with the
   discrete Fourier transform", Proc. IEEE, vol. 66, no. 1, pp. 51-83, 1978.
.. [6] T. W. Parks and C. S. Burrus, "Digital Filter Design", Wiley, 1987,
   ch. 3 (least-squares FIR design).
"""

from __future__ import annotations

from planner.dsp.fir.checks import KINDS, check_method_taps
from planner.dsp.fir.design import clear_design_cache, equiripple_fir, least_squares_fir
from planner.dsp.fir.estimates import (estimate_taps, kaiser_beta, kaiser_equiripple_taps,
                                       kaiser_taps)
from planner.dsp.fir.metrics import (FirMetrics, fir_metrics, fir_multiplies_per_sample,
                                     iir_multiplies_per_sample, is_linear_phase,
                                     latency_samples, pre_ringing_energy)
# DEFAULT_MAX_TAPS is a public constant of the package, as WINDOWS and KINDS, outside __all__.
from planner.dsp.fir.min_taps import DEFAULT_MAX_TAPS as DEFAULT_MAX_TAPS
from planner.dsp.fir.min_taps import FirDesign, min_taps_equiripple, min_taps_least_squares
from planner.dsp.fir.response import (fir_group_delay_samples, fir_response,
                                      fir_response_and_derivative)
from planner.dsp.fir.spec import FirSpec, measure_spec
from planner.dsp.fir.split import complementary_split
from planner.dsp.fir.windows import WINDOWS, window, window_fir
from planner.errors import DesignCancelled

__all__ = [
    "WINDOWS",
    "KINDS",
    "check_method_taps",
    "DesignCancelled",
    "FirSpec",
    "FirDesign",
    "FirMetrics",
    "window",
    "window_fir",
    "kaiser_beta",
    "kaiser_taps",
    "kaiser_equiripple_taps",
    "estimate_taps",
    "equiripple_fir",
    "least_squares_fir",
    "measure_spec",
    "min_taps_equiripple",
    "min_taps_least_squares",
    "clear_design_cache",
    "complementary_split",
    "fir_response",
    "fir_response_and_derivative",
    "fir_group_delay_samples",
    "is_linear_phase",
    "latency_samples",
    "pre_ringing_energy",
    "fir_metrics",
    "fir_multiplies_per_sample",
    "iir_multiplies_per_sample",
]

"""The check's rules in one place: pass/fail limits, defaults, tolerances and grid bounds.

Every module that decides or reports whether something passes reads its
numbers from here (the engine decides; the text report, the JSON and the
editor only present what the engine decided). This module imports nothing,
so every layer, :mod:`planner.dsp` included, may import it.

The project file sets the limits that are a matter of taste
(``analysis.flatness_db``, ``phase_deg``, ``crossing_floor_db``,
``enforce_headroom``); the defaults below are what a project without them
gets. The rest are fixed rules and numerical tolerances.
"""

from __future__ import annotations

# -- defaults of the project's analysis settings (planner.model.Analysis) ---------------

#: Checked range (Hz) and log-spaced grid points.
DEFAULT_F_MIN_HZ = 20.0
DEFAULT_F_MAX_HZ = 20000.0
DEFAULT_POINTS = 1024
#: The sum passes within +/- this many dB of 0 dB.
DEFAULT_FLATNESS_DB = 1.0
#: A crossing passes when its bands are at most this many degrees apart.
DEFAULT_PHASE_DEG = 20.0
#: Crossings below this level (dB) are information only.
DEFAULT_CROSSING_FLOOR_DB = -20.0
#: Whether a band peaking above HEADROOM_LIMIT_DB fails the check (else it warns).
DEFAULT_ENFORCE_HEADROOM = False

# -- fixed rules ------------------------------------------------------------------------

#: A band (or, in fixed point, a point inside a chain) whose peak gain is above this many
#: dB can clip a full-scale input. 0.05 dB rather than 0 so that rounding of a flat band
#: (a 0 dB all-pass, an LR sum) does not trip it; common practice, no published source.
HEADROOM_LIMIT_DB = 0.05

#: Latencies closer than this (samples) count as equal: a thousandth of a sample is a
#: phase error of at most 0.18 deg, reached at fs/2 (180 deg x 0.001).
LATENCY_TOL_SAMPLES = 1e-3

#: Warnings (they never fail the check). A boost above this many dB is flagged; a tweeter
#: band whose highest highpass is at or above TWEETER_HIGHPASS_HZ needs at least order
#: TWEETER_MIN_ORDER; a phase difference of at least INVERT_HINT_DEG suggests inverting a
#: band. Common practice, no published source.
BOOST_WARN_DB = 6.0
TWEETER_HIGHPASS_HZ = 1000.0
TWEETER_MIN_ORDER = 2
INVERT_HINT_DEG = 150.0
#: A crossing's phase hint tries candidate changes by analysing the project again
#: (planner.engine.warnings): at most this many analyses per report in all, and
#: all-passes at the PHASE_HINT_NEAREST other crossover frequencies nearest the crossing.
#: A crossing beyond the budget, or in a project of more than PHASE_HINT_MAX_BANDS bands,
#: gets the delay that lines it up, marked as not checked.
PHASE_HINT_TRIALS = 12
PHASE_HINT_NEAREST = 2
PHASE_HINT_MAX_BANDS = 8

#: The text report lists crossings at most this many dB below the floor; deeper ones
#: (an FIR's stop-band lobes crossing each other) are counted only.
INFO_SPAN_DB = 20.0

# -- numerical tolerances -----------------------------------------------------------------

#: A crossing is refined until the two bands' levels differ by at most this many dB (or
#: its bracket is CROSSING_XTOL wide in natural-log frequency: 1e-9 of the frequency, where
#: deep in an FIR's stop band the levels are rounding noise); a reported crossing has the
#: bands within CROSSING_LEVEL_TOL_DB of each other (a sign change that closes farther
#: apart is a jump, not a crossing, and is dropped).
CROSSING_SOLVE_TOL_DB = 1e-7
CROSSING_XTOL = 1e-9
CROSSING_LEVEL_TOL_DB = 0.01
#: Relative rounding error of an evaluated response (about 50 float64 epsilons: a sum of
#: many terms). Deep in a stop band, at level L dB, two levels cannot be matched better than
#: 20/ln(10) x this x 10^(-L/20) dB (1e-5 dB at -200 dB), so the search asks no more.
CROSSING_NOISE_REL = 1e-14
#: Most root-finding steps per crossing (Illinois steps with bisection fallback; bisection
#: alone takes a grid cell of ~0.007 in log frequency to 1e-9 in 23 steps, and a bisection
#: follows any step that does not halve the difference).
CROSSING_MAX_ITER = 80

# -- the analysis grid (planner.dsp.grid) -------------------------------------------------

#: A pole or zero of a section is a narrow feature when its bandwidth, about
#: (1 - r) fs / pi Hz for radius r, is below this many local grid spacings.
GRID_NARROW_SPACINGS = 8.0
#: Only poles and zeros within this distance of the unit circle are looked at.
GRID_NEAR_CIRCLE = 0.2
#: At most this many narrow features (the narrowest first) get points of their own.
GRID_FEATURES_MAX = 128
#: Points either side of a feature's centre, in multiples of its bandwidth.
GRID_FEATURE_OFFSETS = (0.0625, 0.125, 0.25, 0.5, 1.0, 2.0, 4.0)
#: At most this many named filter frequencies (freq, freq2, crossovers) are added.
GRID_NAMED_MAX = 512
#: Refinement where the sum's level changes by more than GRID_REFINE_STEP_DB between
#: neighbouring points: at most GRID_REFINE_PASSES passes of at most GRID_REFINE_CELLS
#: cells each, GRID_REFINE_SPLIT new points per cell.
GRID_REFINE_STEP_DB = 1.0
GRID_REFINE_PASSES = 4
GRID_REFINE_CELLS = 128
GRID_REFINE_SPLIT = 3
#: Local extremes refined by exact evaluation: the GRID_EXTREMES largest local maxima
#: and minima of the sum's level (those within GRID_EXTREME_MARGIN_DB of the largest) and
#: the peak of each band, each by a zoom search of GRID_ZOOM_POINTS trial points per step
#: for at most GRID_ZOOM_STEPS steps (the bracket shrinks (points + 1) / 2 times a step).
GRID_EXTREMES = 8
GRID_EXTREME_MARGIN_DB = 1.0
GRID_ZOOM_POINTS = 16
GRID_ZOOM_STEPS = 10
#: ... and stops when every bracket is this narrow in natural-log frequency (1e-8 of the
#: frequency: 3e-5 Hz at 3 kHz, far inside any feature the grid can hold).
GRID_ZOOM_XTOL = 1e-8
#: ... or when two steps in a row have gained at most this many dB.
GRID_ZOOM_VTOL = 1e-6


def grid_cap(points: int, n_bands: int) -> int:
    """The most points the analysis grid can hold: ``points`` log-spaced points, at most
    GRID_NAMED_MAX filter frequencies, GRID_FEATURES_MAX features of
    2 len(GRID_FEATURE_OFFSETS) + 1 points, GRID_REFINE_PASSES passes of
    GRID_REFINE_CELLS x GRID_REFINE_SPLIT points, and the refined extremes
    (2 GRID_EXTREMES for the sum, one per band). It does not grow with the number of
    filters.
    """
    per_feature = 2 * len(GRID_FEATURE_OFFSETS) + 1
    return (int(points) + GRID_NAMED_MAX + GRID_FEATURES_MAX * per_feature
            + GRID_REFINE_PASSES * GRID_REFINE_CELLS * GRID_REFINE_SPLIT
            + 2 * GRID_EXTREMES + int(n_bands))


# --- drivers and safety (planner.engine.safety) ------------------------------------------
#: A tweeter's (or compression driver's) highpass should sit at least this many times its
#: resonance, and be of at least TWEETER_MIN_ORDER: common practice, no published source.
TWEETER_RESONANCE_FACTOR = 2.0
#: A boost below LOW_BOOST_HZ of more than LOW_BOOST_DB (a Linkwitz transform, a low
#: shelf, a peaking filter) asks the driver for more excursion: common practice.
LOW_BOOST_HZ = 200.0
LOW_BOOST_DB = 3.0
#: A vented box wants a subsonic highpass at or above this fraction of its tuning, or it
#: unloads below it: common practice, no published source.
SUBSONIC_FRACTION = 0.5
#: A break-up peak higher than this (dB) with no cut near it gets a notch suggested.
BREAKUP_WARN_DB = 3.0


# --- measurement (planner.dsp.measure.check_recording) -----------------------------------
#: A sweep shorter than this many seconds is refused: it puts too little energy in each
#: frequency for a response above the noise (common practice, no published source; sweeps
#: of one to several seconds are usual).
MEASURE_MIN_SWEEP_S = 0.1
#: A recording whose peak is below this many dBFS is taken as silent and refused: it is
#: below one step of 16-bit audio (20 log10(2**-15) = -90.3 dBFS).
MEASURE_SILENT_DBFS = -90.0
#: Samples this close to full scale (|x| >= 1 - MEASURE_CLIP_MARGIN) count as clipped.
MEASURE_CLIP_MARGIN = 1.0 / 32768.0
#: A gate longer than this many ms after the peak keeps the room's reflections in most
#: rooms (a reflection path 34 m longer than the direct one arrives 100 ms later; common
#: practice, no published source).
MEASURE_GATE_REFLECTIONS_MS = 100.0


# --- bounds on the work one project can ask for ------------------------------------------
#: Most bands a project may have. The check's crossing search looks at every pair of bands
#: (64 bands: 2016 pairs), so time and memory grow with the square of the count; 64 bands
#: check in seconds and a few hundred MB (benchmarks/bench_bounds.py).
MAX_BANDS = 64
#: The analysis grid's log-spaced points (analysis.points and the --points options): at
#: least MIN_POINTS, at most MAX_POINTS. The whole grid, with the points the check adds
#: (filter frequencies, narrow features, fast-change cells, refined extremes), stays
#: within grid_cap(MAX_POINTS, MAX_BANDS).
MIN_POINTS = 16
MAX_POINTS = 65536
#: ... and, with many bands, at most MAX_PAIR_POINTS // (band pairs) points: the crossing
#: search looks at every pair of bands at every point, and the crossings it finds (most of
#: them deep in stop bands) grow with both. 64 bands (2016 pairs) may have 4161 points:
#: 64 overlapping lowpasses at 4096 points took 10 s and 0.55 GB, at 16384 points 46 s
#: and 1.8 GB (benchmarks/bench_bounds.py); 16 bands or fewer keep MAX_POINTS.
MAX_PAIR_POINTS = 1 << 23


def max_points(n_bands: int) -> int:
    """Most analysis.points a project of ``n_bands`` bands may have (MAX_POINTS, MAX_PAIR_POINTS)."""
    pairs = max(1, int(n_bands) * (int(n_bands) - 1) // 2)
    return max(MIN_POINTS, min(MAX_POINTS, MAX_PAIR_POINTS // pairs))
#: Longest FIR each design method may make (taps), so that one design stays under about
#: 1 GB and a bounded time (figures in benchmarks/bench_bounds.py): a window design is
#: one sinc times a window (linear in the length); remez (Parks-McClellan, scipy's
#: implementation) costs about the square of the length on its dense grid (16383 taps:
#: about 10 s a design, 32767: over 2 min); least squares (scipy.signal.firls) solves an
#: (N/2) x (N/2) linear system: 8191 taps take about 0.8 GB and 25 s, 16383 would take
#: about 3 GB.
FIR_MAX_TAPS = {"window": 32767, "remez": 16383, "lsq": 8191}

"""Names and default values shared by the numerical core and the command line.

Nothing here imports numpy or scipy: the command line builds its options
(choices, defaults, help texts) from these values and imports the core only
when a command runs, so ``crossplan --help``, ``crossplan presets`` and the
like start at once.
"""

from __future__ import annotations

__all__ = ["PLOT_VIEWS", "TIME_VIEWS", "EXPORT_FORMATS", "COMPARE_RIPPLE_DB",
           "COMPARE_ATTEN_DB", "IIR_FAMILIES", "MAX_TAPS", "COMPARE_MAX_TAPS", "ALIGN_VARIABLES",
           "ALIGN_DEFAULT", "ALIGN_MAX_DELAY_MS", "ALIGN_TRIM_DB", "ALIGN_FREQ_OCTAVES",
           "FIT_BANKS", "FIT_LIMIT_DB"]

#: Frequency views of ``crossplan plot`` (:mod:`planner.present.plots`).
PLOT_VIEWS = ("magnitude", "phase", "delay", "electrical", "drivers", "offaxis")
#: Views on a time axis (ms): impulse and step responses.
TIME_VIEWS = ("impulse", "step")
#: File formats of ``crossplan export`` (:mod:`planner.export`).
EXPORT_FORMATS = ("json", "csv", "text", "wav")
#: Default pass-band ripple of the spec ``crossplan compare`` reads off a band
#: (dB, peak to peak): the band's pass band ends where its response leaves a
#: 1 dB window (:mod:`planner.compare`).
COMPARE_RIPPLE_DB = 1.0
#: Default stop-band attenuation of that spec (dB below the nominal pass gain):
#: the stop band starts where the response stays 60 dB down.
COMPARE_ATTEN_DB = 60.0
#: IIR equivalents of ``crossplan compare``. ``auto``: Butterworth when an
#: order up to 8 (the largest planner.dsp.iir designs) meets the spec, else
#: elliptic.
IIR_FAMILIES = ("auto", "butterworth", "elliptic")
#: Longest FIR the fewest-tap searches try unless told otherwise (taps).
MAX_TAPS = 8191
#: Longest FIR equivalent ``crossplan compare`` tries unless
#: told otherwise (taps; 43 ms of latency at 48 kHz). A band whose equivalent would be
#: longer by Kaiser's estimate is reported at once, with that estimate, rather than
#: searched for: every trial at several thousand taps takes about a second.
COMPARE_MAX_TAPS = 2047

#: What ``crossplan align`` may change (:mod:`planner.solve.alignment`): band
#: delays, polarities, level trims, crossover frequencies, all-pass frequencies.
ALIGN_VARIABLES = ("delay", "invert", "gain", "freq", "allpass")
#: What it changes unless told otherwise.
ALIGN_DEFAULT = ("delay", "invert")
#: Its bounds unless told otherwise: the largest delay a band may get (ms), how far a level
#: may be trimmed either way (dB), how far a crossover or all-pass frequency may move
#: either way (octaves).
ALIGN_MAX_DELAY_MS = 2.0
ALIGN_TRIM_DB = 3.0
ALIGN_FREQ_OCTAVES = 0.25
#: Banks of peaking filters ``crossplan fit --bank`` adds (ISO 266 centres).
FIT_BANKS = ("octave", "third-octave")
#: Gain limit of a fitted filter, either way (dB).
FIT_LIMIT_DB = 12.0

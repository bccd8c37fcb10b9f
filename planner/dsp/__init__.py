"""The numerical core: pure numpy/scipy, arrays in and arrays out; no I/O, no UI.

Second-order sections ``[b0, b1, b2, 1, a1, a2]`` are the internal IIR form.
It imports nothing from the rest of :mod:`planner` but the errors
(:mod:`planner.errors`) and the constants (:mod:`planner.config`,
:mod:`planner.defaults`).

* :mod:`~planner.dsp.iir`, :mod:`~planner.dsp.biquad`: IIR crossovers and EQ sections;
* :mod:`~planner.dsp.fir`: FIR designs, searches, splits, responses (a package);
* :mod:`~planner.dsp.fixed`: sections in a DSP's number format (a package);
* :mod:`~planner.dsp.response`, :mod:`~planner.dsp.analysis`, :mod:`~planner.dsp.grid`:
  responses of every band, the checks' measures, where to look;
* :mod:`~planner.dsp.fracdelay`: fractional-delay FIRs;
* :mod:`~planner.dsp.acoustic`, :mod:`~planner.dsp.fit`: driver responses, fitting EQ gains;
* :mod:`~planner.dsp.signals`, :mod:`~planner.dsp.impulse`, :mod:`~planner.dsp.measure`,
  :mod:`~planner.dsp.response_text`: test signals, impulse responses, sweep measurement,
  the response text format.
"""

"""Acoustic responses of loudspeaker drivers: models, measured data, offsets and geometry.

Pure functions on arrays. A driver's response multiplies its band's
electrical response, so the check sees what reaches the listener:

* analytic models of the small-signal response (:func:`closed_box`,
  :func:`vented_box`, :func:`rolloff`, :func:`breakup`), evaluated at
  ``s = j 2 pi f``;
* measured magnitudes (and phases) brought onto the analysis grid in log
  frequency (:func:`interpolate_response`), with the phase derived from the
  magnitude where none was measured (:func:`minimum_phase_deg`, from
  :mod:`planner.dsp.minphase`, as :func:`edge_slopes_db_per_octave`);
* the acoustic offset of a driver (its acoustic centre behind a reference
  plane) as a delay (:func:`speed_of_sound_m_s`, :func:`offset_delay_s`);
* the summed response off axis, from the drivers' positions on the baffle
  (:func:`off_axis_paths`).

References
----------
.. [1] R. H. Small, "Closed-Box Loudspeaker Systems, Part I: Analysis",
   J. Audio Eng. Soc., vol. 20, no. 10, 1972 (second-order highpass from
   the resonance f_c and total Q_tc).
.. [2] A. N. Thiele, "Loudspeakers in Vented Boxes", J. Audio Eng. Soc.,
   vol. 19, 1971; R. H. Small, "Vented-Box Loudspeaker Systems", J. Audio
   Eng. Soc., vol. 21, 1973 (fourth-order highpass; the B4 alignment).
.. [3] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., 2010, sec. 13.5 (minimum-phase reconstruction from the real
   cepstrum); H. W. Bode, "Network Analysis and Feedback Amplifier Design",
   1945 (gain-phase relation).
.. [4] L. E. Kinsler, A. R. Frey, A. B. Coppens and J. V. Sanders,
   "Fundamentals of Acoustics", 4th ed., 2000, sec. 5.6 (speed of sound in
   an ideal gas, c proportional to the square root of absolute temperature).
.. [5] R. Bristow-Johnson, "Audio EQ Cookbook", W3C Working Group Note, 2021
   (the analog prototype of the peaking filter).
.. [6] A. V. Oppenheim and A. S. Willsky, "Signals and Systems", 2nd ed.,
   Prentice Hall, 1997, sec. 6.5 (first- and second-order continuous-time
   systems).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

# The slope bounds stay public constants here as well, outside __all__.
from planner.dsp.minphase import (HIGH_SLOPE_DB_OCT, LOW_SLOPE_DB_OCT,  # noqa: F401
                                  edge_slopes_db_per_octave,
                                  extended_db, minimum_phase_deg)
from planner.errors import DesignError

__all__ = [
    "speed_of_sound_m_s", "offset_delay_s", "closed_box", "vented_box", "rolloff",
    "breakup", "B4_Q", "minimum_phase_deg", "interpolate_response", "Interpolated",
    "edge_slopes_db_per_octave", "off_axis_paths", "ResponseTable",
]

#: Q of the two second-order sections of a fourth-order Butterworth highpass: the B4
#: alignment of a vented box (Thiele 1971): 1 / (2 cos(pi/8)), 1 / (2 cos(3 pi/8)).
B4_Q = (1.0 / (2.0 * np.cos(np.pi / 8)), 1.0 / (2.0 * np.cos(3 * np.pi / 8)))


def _positive(value, field: str, unit: str) -> float:
    v = float(value)
    if not np.isfinite(v) or v <= 0:
        raise DesignError(f"must be a positive number of {unit}, not {value!r}", field=field)
    return v


def speed_of_sound_m_s(temp_c: float = 20.0) -> float:
    """Speed of sound in dry air at ``temp_c`` deg C: ``331.3 + 0.606 T`` m/s.

    The first-order expansion of ``331.3 sqrt(1 + T / 273.15)`` (ideal gas,
    [4]_): 343.4 m/s at 20 deg C, within 0.25 % of the square-root form from
    -20 to +40 deg C.
    """
    t = float(temp_c)
    if not np.isfinite(t) or not -50.0 <= t <= 60.0:
        raise DesignError(f"{temp_c!r} deg C is outside -50 .. 60 deg C", field="temperature_c")
    return 331.3 + 0.606 * t


def offset_delay_s(offset_mm, temp_c: float = 20.0) -> np.ndarray:
    """Delay in seconds of an acoustic centre ``offset_mm`` behind the reference plane.

    Positive offsets (recessed drivers) arrive later: ``offset / c``, with ``c``
    from :func:`speed_of_sound_m_s`.
    """
    return np.asarray(offset_mm, dtype=float) / 1000.0 / speed_of_sound_m_s(temp_c)


def _s(freqs_hz) -> np.ndarray:
    return 2j * np.pi * np.asarray(freqs_hz, dtype=float)


def _highpass2(s: np.ndarray, w0: float, q: float) -> np.ndarray:
    return s * s / (s * s + s * w0 / q + w0 * w0)


def closed_box(freqs_hz, fc_hz: float, qtc: float) -> np.ndarray:
    """Closed-box woofer: ``s^2 / (s^2 + s wc / Qtc + wc^2)``, ``wc = 2 pi fc`` ([1]_ eq. 21).

    Parameters
    ----------
    freqs_hz : array_like
    fc_hz : float
        System resonance in Hz.
    qtc : float
        Total Q at resonance (0.707 is the maximally flat alignment).

    Returns
    -------
    ndarray, complex
    """
    fc = _positive(fc_hz, "fc", "Hz")
    q = _positive(qtc, "qtc", "")
    return _highpass2(_s(freqs_hz), 2 * np.pi * fc, q)


def vented_box(freqs_hz, fc_hz: float, q1: float = B4_Q[0], q2: float = B4_Q[1]) -> np.ndarray:
    """Vented-box woofer: a fourth-order highpass at ``fc_hz`` ([2]_).

    Modelled as two second-order highpass sections at ``fc_hz`` with Qs
    ``q1`` and ``q2``, each ``s^2 / (s^2 + s w0 / Q + w0^2)``; the defaults are
    the B4 (fourth-order Butterworth) alignment, -3 dB at ``fc_hz`` and
    24 dB/octave below.

    Parameters
    ----------
    freqs_hz : array_like
        Frequencies in Hz.
    fc_hz : float
        Corner frequency in Hz.
    q1, q2 : float
        Qs of the two sections (default :data:`B4_Q`).

    Returns
    -------
    ndarray, complex
    """
    fc = _positive(fc_hz, "fc", "Hz")
    s, w0 = _s(freqs_hz), 2 * np.pi * fc
    return _highpass2(s, w0, _positive(q1, "q1", "")) * _highpass2(s, w0, _positive(q2, "q2", ""))


def rolloff(freqs_hz, f_hz: float, order: int = 2, q: float = 1 / np.sqrt(2)) -> np.ndarray:
    """A simple high-frequency roll-off: first- or second-order lowpass at ``f_hz``.

    ``wc / (s + wc)`` or ``wc^2 / (s^2 + s wc / Q + wc^2)``, ``wc = 2 pi f_hz``
    (the first- and second-order analog lowpass, Oppenheim and Willsky [6]_).

    Parameters
    ----------
    freqs_hz : array_like
        Frequencies in Hz.
    f_hz : float
        Corner frequency in Hz.
    order : {1, 2}
    q : float
        Q of the second-order lowpass (default 1/sqrt(2), maximally flat).

    Returns
    -------
    ndarray, complex
    """
    fc = _positive(f_hz, "rolloff_hz", "Hz")
    s, w0 = _s(freqs_hz), 2 * np.pi * fc
    if order == 1:
        return w0 / (s + w0)
    if order == 2:
        return w0 * w0 / (s * s + s * w0 / _positive(q, "rolloff_q", "") + w0 * w0)
    raise DesignError(f"must be 1 or 2, not {order!r}", field="rolloff_order")


def breakup(freqs_hz, f_hz: float, gain_db: float, q: float) -> np.ndarray:
    """A cone break-up resonance: an analog peak of ``gain_db`` at ``f_hz`` with ``q``.

    ``(s^2 + s A w0 / Q + w0^2) / (s^2 + s w0 / (A Q) + w0^2)`` with
    ``A = 10^(gain_db / 40)``: the analog prototype of the Audio EQ Cookbook
    peaking filter ([5]_), ``gain_db`` at ``f_hz`` and 0 dB far from it.

    Parameters
    ----------
    freqs_hz : array_like
        Frequencies in Hz.
    f_hz : float
        Centre frequency in Hz.
    gain_db : float
        Level at the centre in dB (negative for a dip).
    q : float
        Quality factor (as the cookbook's peaking filter).

    Returns
    -------
    ndarray, complex
    """
    f0 = _positive(f_hz, "breakup_hz", "Hz")
    if not np.isfinite(gain_db):
        raise DesignError(f"must be a finite number of dB, not {gain_db!r}", field="breakup_db")
    qq = _positive(q, "breakup_q", "")
    s, w0, a = _s(freqs_hz), 2 * np.pi * f0, 10.0 ** (gain_db / 40.0)
    return (s * s + s * a * w0 / qq + w0 * w0) / (s * s + s * w0 / (a * qq) + w0 * w0)


# ---------------------------------------------------------------------------
# measured responses


@dataclass(frozen=True)
class Interpolated:
    """A response brought onto a grid.

    Attributes
    ----------
    h : ndarray, complex
        ``10^(mag_db/20) e^{j phase}`` on the grid.
    extrapolated_below_hz, extrapolated_above_hz : float or None
        Where the grid left the data's range (when extrapolation was allowed).
    """

    h: np.ndarray
    extrapolated_below_hz: float | None = None
    extrapolated_above_hz: float | None = None


@dataclass(frozen=True)
class ResponseTable:
    """A measured response ready to be read at any frequencies (see :func:`interpolate_response`).

    Everything that depends on the data alone (log frequencies, the unwrapped
    phase, the edge slopes) is worked out once; a lookup is then a few
    vectorised ``numpy.interp`` calls.
    """

    log2_f: np.ndarray
    mag_db: np.ndarray
    phase_rad: np.ndarray
    low_slope: float
    high_slope: float

    @classmethod
    def of(cls, freqs_hz, mag_db, phase_deg) -> "ResponseTable":
        f = np.asarray(freqs_hz, dtype=float)
        m = np.asarray(mag_db, dtype=float)
        lo, hi = edge_slopes_db_per_octave(f, m)
        return cls(np.log2(f), m, np.unwrap(np.radians(np.asarray(phase_deg, dtype=float))),
                   lo, hi)

    def __call__(self, to_hz, extrapolate: bool = False, field: str = "driver") -> Interpolated:
        t = np.asarray(to_hz, dtype=float)
        lf, p = self.log2_f, self.phase_rad
        f_lo, f_hi = 2.0 ** lf[0], 2.0 ** lf[-1]
        t_lo, t_hi = (float(t.min()), float(t.max())) if t.size else (f_lo, f_hi)
        below, above = t_lo < f_lo * (1 - 1e-9), t_hi > f_hi * (1 + 1e-9)
        if (below or above) and not extrapolate:
            raise DesignError(
                f"the data covers {f_lo:g} .. {f_hi:g} Hz but the analysis needs {t_lo:g} .. "
                f"{t_hi:g} Hz; measure a wider range, narrow the analysis range, or allow "
                "extrapolation", field=field)
        lt = np.log2(t)
        mag = np.interp(lt, lf, self.mag_db)
        ph = np.interp(lt, lf, p)
        if below:
            sel = lt < lf[0]
            mag[sel] = self.mag_db[0] + self.low_slope * (lt[sel] - lf[0])
            ph[sel] = p[0] + (p[1] - p[0]) / (lf[1] - lf[0]) * (lt[sel] - lf[0])
        if above:
            sel = lt > lf[-1]
            mag[sel] = self.mag_db[-1] + self.high_slope * (lt[sel] - lf[-1])
            ph[sel] = p[-1] + (p[-1] - p[-2]) / (lf[-1] - lf[-2]) * (lt[sel] - lf[-1])
        return Interpolated(10.0 ** (mag / 20.0) * np.exp(1j * ph), t_lo if below else None,
                            t_hi if above else None)


def interpolate_response(freqs_hz, mag_db, phase_deg, to_hz, extrapolate: bool = False,
                         field: str = "driver") -> Interpolated:
    """A measured response on other frequencies: log frequency, magnitude in dB, unwrapped phase.

    Parameters
    ----------
    freqs_hz, mag_db, phase_deg : array_like
        The data (increasing frequencies); ``phase_deg`` may be wrapped.
    to_hz : array_like
        The frequencies (in any order).
    extrapolate : bool
        Allow frequencies outside the data's range: the magnitude follows the
        slope of the data's outer third of an octave, the phase its outer two
        points' trend. Otherwise they are refused.

    Raises
    ------
    DesignError
        Frequencies beyond the data (without ``extrapolate``), naming both ranges.
    """
    return ResponseTable.of(freqs_hz, mag_db, phase_deg)(to_hz, extrapolate, field)


# ---------------------------------------------------------------------------
# geometry


def off_axis_paths(positions_mm, offsets_mm, distance_m: float, angles_deg,
                   axis_mm: float = 0.0, temp_c: float = 20.0):
    """Path delays and levels from each driver to a listener at each vertical angle.

    The drivers are point sources on a vertical line (the baffle): driver
    ``i`` sits ``positions_mm[i]`` above the origin and ``offsets_mm[i]``
    behind the reference plane. The listener is ``distance_m`` from the
    point ``axis_mm`` above the origin (the listening axis), at each
    elevation angle (positive: above the axis). Relative to the path from
    that point, each driver's path is longer by ``r_i - D``, with ``r_i`` the
    Euclidean distance ``hypot(D cos a + x_i, D sin a - y_i)`` from the driver
    to the listener.

    Parameters
    ----------
    positions_mm, offsets_mm : array_like, shape (n_bands,)
        Height of each driver above the origin, and its acoustic centre
        behind the reference plane, in mm.
    distance_m : float
        Listening distance from the axis point, in m.
    angles_deg : array_like, shape (n_angles,)
        Elevation angles in degrees (positive: above the axis).
    axis_mm : float
        Height of the listening axis above the origin, in mm.
    temp_c : float
        Air temperature in deg C (for the speed of sound).

    Returns
    -------
    delay_s : ndarray, shape (n_angles, n_bands)
        ``(r_i - D) / c``.
    level : ndarray, shape (n_angles, n_bands)
        ``D / r_i`` (spherical spreading: the pressure of a point source falls
        as 1/r, Kinsler et al. [4]_ ch. 5).

    Notes
    -----
    Each driver is taken as a point source with no directivity of its own,
    so what the angles show is the interference of the bands' paths: how a
    crossover's lobe tilts when the drivers are not coincident.
    """
    d = _positive(distance_m, "distance_m", "m")
    y = (np.asarray(positions_mm, dtype=float) - axis_mm) / 1000.0
    x = np.asarray(offsets_mm, dtype=float) / 1000.0
    th = np.radians(np.asarray(angles_deg, dtype=float))[:, None]
    lx, ly = d * np.cos(th), d * np.sin(th)
    r = np.hypot(lx + x[None, :], ly - y[None, :])
    return (r - d) / speed_of_sound_m_s(temp_c), d / r

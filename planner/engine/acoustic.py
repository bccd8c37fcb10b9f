"""The acoustic sum: each band's electrical response times its driver's, offsets included.

When any band of a project has a driver (:mod:`planner.drivers`), the check
looks at what reaches the listener: band ``b`` contributes
``E_b(f) D_b(f) / R``, where ``E_b`` is its electrical response (filters,
gain, delay, polarity), ``D_b`` its driver's complex response (an analytic
model, or a measurement interpolated in log frequency, its phase measured or
derived from the magnitude by Bode's relation) with the acoustic offset as a
delay ``offset / c``, and ``R`` the reference level the sum is held flat to.
A band without a driver counts as a flat driver at the reference.

The reference (``acoustics.reference_db``, else automatic) is the pass-band
level of the least sensitive driver: the usual way of matching drivers is to
bring the louder ones down to the quietest. A model driver's level is its
``sensitivity_db`` (or the reference itself when it has none); a measured
driver's is the median of its magnitude over its band's pass band (where the
band's electrical response is within :data:`PASS_BAND_DB` of its peak).

References
----------
.. [1] S. H. Linkwitz, "Active Crossover Networks for Noncoincident
   Drivers", J. Audio Eng. Soc., vol. 24, no. 1, 1976 (the acoustic sum of
   drivers at different distances; offsets as delays).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from planner.dsp import acoustic as ac
from planner.dsp.minphase import minimum_phase_deg
from planner.model import Driver, Measured, Project

__all__ = ["PASS_BAND_DB", "driver_response", "driver_level_db", "Drivers", "AcousticPoints"]

#: A band's pass band, for a measured driver's level: within this many dB of its peak.
PASS_BAND_DB = 6.0
#: Relative step (in log frequency) of the numerical derivative of a driver's response.
_DERIV_STEP = 1e-4


@lru_cache(maxsize=64)
def _table_of(data: Measured, min_phase: bool) -> ac.ResponseTable:
    """A measured driver ready to read: its phase measured, or derived from the magnitude by
    Bode's relation where the file has none or ``min_phase`` asks (cached per file)."""
    phase = (data.phase_deg if data.phase_deg is not None and not min_phase
             else minimum_phase_deg(data.freqs_hz, data.mag_db))
    return ac.ResponseTable.of(data.freqs_hz, data.mag_db, phase)


def _model_response(driver: Driver, freqs_hz: np.ndarray) -> np.ndarray:
    """The analytic model's response (0 dB pass band), roll-off and break-up included."""
    p, f = driver.params, freqs_hz
    if driver.model == "closed-box":
        h = ac.closed_box(f, p["fc"], p["qtc"])
    elif driver.model == "vented-box":
        h = ac.vented_box(f, p["fc"], p["q1"], p["q2"])
    elif driver.model == "tweeter":
        h = ac.closed_box(f, p["fc"], p["q"])    # a dome's low end: a second-order highpass
    else:
        h = np.ones(len(f), dtype=complex)
    if p.get("rolloff_hz") is not None:
        h = h * ac.rolloff(f, p["rolloff_hz"], p.get("rolloff_order", 2))
    if p.get("breakup_hz") is not None:
        h = h * ac.breakup(f, p["breakup_hz"], p["breakup_db"], p.get("breakup_q", 4.0))
    return h


def driver_response(driver: Driver, freqs_hz, temp_c: float = 20.0) -> np.ndarray:
    """A driver's complex response on ``freqs_hz`` (its own level scale, offset included).

    A model is at ``sensitivity_db`` (0 dB without one); a measurement at its
    file's levels. The acoustic offset is the delay ``offset_mm / c``
    (:func:`planner.dsp.acoustic.offset_delay_s`).
    """
    f = np.asarray(freqs_hz, dtype=float)
    if driver.data is not None:
        h = _table_of(driver.data, driver.min_phase)(f, driver.extrapolate, "file").h
    else:
        h = _model_response(driver, f) * 10.0 ** (driver.params.get("sensitivity_db", 0.0) / 20)
    if driver.offset_mm:
        h = h * np.exp(-2j * np.pi * f * float(ac.offset_delay_s(driver.offset_mm, temp_c)))
    return h


def driver_level_db(driver: Driver, freqs_hz: np.ndarray, electrical: np.ndarray) -> float | None:
    """A driver's pass-band level (dB, its own scale), or None for a model without sensitivity."""
    if driver.data is None:
        return driver.params.get("sensitivity_db")
    mag = 20 * np.log10(np.maximum(np.abs(electrical), 1e-300))
    inside = mag >= mag.max() - PASS_BAND_DB
    d = driver.data
    f = freqs_hz[inside & (freqs_hz >= d.freqs_hz[0]) & (freqs_hz <= d.freqs_hz[-1])]
    if not len(f):
        f = np.asarray(d.freqs_hz)
    return float(np.median(np.interp(np.log(f), np.log(d.freqs_hz), d.mag_db)))


@dataclass(frozen=True)
class Drivers:
    """The drivers of a project's bands, scaled to one reference level.

    Attributes
    ----------
    drivers : tuple of Driver or None
        Per band (None: a flat driver at the reference).
    reference_db : float
        The level (dB, the drivers' scale) the acoustic sum is held flat to.
    auto_reference : bool
        Whether it was chosen automatically (the least sensitive driver).
    levels_db : tuple of float or None
        Each driver's pass-band level (None: no level of its own).
    temp_c : float
    """

    drivers: tuple
    reference_db: float
    auto_reference: bool
    levels_db: tuple
    temp_c: float

    @classmethod
    def of(cls, project: Project, freqs_hz: np.ndarray, electrical: np.ndarray) -> "Drivers":
        """The project's drivers; ``electrical`` (bands x freqs) finds measured drivers' levels."""
        drivers = tuple(b.driver for b in project.bands)
        levels = tuple(None if d is None else driver_level_db(d, freqs_hz, electrical[i])
                       for i, d in enumerate(drivers))
        ref = project.acoustics.reference_db
        auto = ref is None
        if auto:
            known = [lv for lv in levels if lv is not None]
            ref = min(known) if known else 0.0
        return cls(drivers, float(ref), auto, levels, project.acoustics.temperature_c)

    def all_bands(self, freqs_hz) -> np.ndarray:
        """Every band's driver factor ``D_b / R`` on ``freqs_hz``, shape (n_bands, n)."""
        f = np.asarray(freqs_hz, dtype=float)
        out = np.ones((len(self.drivers), len(f)), dtype=complex)
        for i, d in enumerate(self.drivers):          # a loop over bands, not frequencies
            if d is not None:
                out[i] = self._scaled(d, i, f)
        return out

    def _scaled(self, d: Driver, i: int, f: np.ndarray) -> np.ndarray:
        h = driver_response(d, f, self.temp_c)
        own = self.levels_db[i]
        if d.data is None and own is None:          # a model with no level of its own
            return h
        return h * 10.0 ** (-self.reference_db / 20.0)

    def __call__(self, bands, freqs_hz) -> np.ndarray:
        """The factor of band ``bands[k]`` at ``freqs_hz[k]``, shape (m,)."""
        b = np.asarray(bands, dtype=np.intp)
        f = np.asarray(freqs_hz, dtype=float)
        out = np.ones(len(f), dtype=complex)
        for i in np.unique(b):                         # a loop over bands, not frequencies
            d = self.drivers[i]
            if d is not None:
                sel = b == i
                out[sel] = self._scaled(d, int(i), f[sel])
        return out

    def log_derivative(self, freqs_hz, fs_hz: float) -> np.ndarray:
        """``d(ln D_b)/dw`` per band (w in rad/sample), by a central difference in log f."""
        f = np.asarray(freqs_hz, dtype=float)
        lo, hi = f * (1 - _DERIV_STEP), f * (1 + _DERIV_STEP)
        a, b = self.all_bands(lo), self.all_bands(hi)
        with np.errstate(divide="ignore", invalid="ignore"):
            dlog = np.log(np.abs(b) / np.abs(a)) + 1j * np.angle(b / a)
        dw = 2 * np.pi * (hi - lo) / fs_hz
        return np.where(np.isfinite(dlog), dlog / dw, 0.0)


class AcousticPoints:
    """An electrical point evaluator times the drivers: what the crossing search evaluates.

    ``band_index`` maps the evaluator's bands to the project's (when it holds
    only the active ones).
    """

    def __init__(self, electrical, drivers: Drivers, band_index=None):
        self._el, self._dr = electrical, drivers
        n = len(drivers.drivers)
        self._map = np.arange(n) if band_index is None else np.asarray(band_index, dtype=np.intp)

    def __call__(self, bands, freqs_hz) -> np.ndarray:
        b = np.asarray(bands, dtype=np.intp)
        return self._el(b, freqs_hz) * self._dr(self._map[b], freqs_hz)

    def all_bands(self, freqs_hz) -> np.ndarray:
        return self._el.all_bands(freqs_hz) * self._dr.all_bands(freqs_hz)[self._map]


# ---------------------------------------------------------------------------
# per-band acoustic figures: level matching and the distance to a band's target

#: A band's target counts where it is within this many dB of its peak (its useful range).
#: Common practice, no published source.
TARGET_RANGE_DB = 20.0
#: A band whose gain is more than this far from the trim that matches its driver's level
#: to the reference gets a warning (dB). Common practice, no published source.
TRIM_WARN_DB = 1.0


@dataclass(frozen=True)
class BandAcoustics:
    """A band's acoustic figures.

    Attributes
    ----------
    level_db : float or None
        Its driver's pass-band level (dB, the drivers' scale).
    suggested_gain_db : float or None
        The band gain that puts that level at the reference.
    target_dev_db, target_at_hz : float or None
        Largest ``|level - target level|`` (dB) where the band's target is
        within :data:`TARGET_RANGE_DB` of its peak, and where (None without a
        target).
    """

    level_db: float | None
    suggested_gain_db: float | None
    target_dev_db: float | None = None
    target_at_hz: float | None = None

    def to_dict(self) -> dict:
        return {"level_db": self.level_db, "suggested_gain_db": self.suggested_gain_db,
                "target_dev_db": self.target_dev_db, "target_at_hz": self.target_at_hz}


def target_deviation(freqs_hz: np.ndarray, band_h: np.ndarray, target_h: np.ndarray):
    """Largest ``|20 log10 |band| - 20 log10 |target||`` where the target is in its useful range."""
    t = 20 * np.log10(np.maximum(np.abs(target_h), 1e-300))
    b = 20 * np.log10(np.maximum(np.abs(band_h), 1e-300))
    inside = t >= t.max() - TARGET_RANGE_DB
    if not inside.any():
        return None, None
    dev = np.where(inside, np.abs(b - t), -np.inf)
    k = int(np.argmax(dev))
    return float(dev[k]), float(freqs_hz[k])


def band_acoustics(drivers: Drivers, project: Project, freqs_hz: np.ndarray,
                   acoustic_h: np.ndarray, targets: list) -> list[BandAcoustics]:
    """Per band: level, the gain that matches it to the reference, and its target deviation.

    ``targets``: per band the target chain's response on ``freqs_hz`` (None
    without one); the band's own gain and polarity are taken out before it
    is compared (the target is the band's shape at the reference level).
    """
    out = []
    for i, b in enumerate(project.bands):
        lv = drivers.levels_db[i]
        trim = None if lv is None else drivers.reference_db - lv
        dev = at = None
        if targets[i] is not None:
            shape = acoustic_h[i] / (10.0 ** (b.gain_db / 20.0) * (-1 if b.invert else 1))
            dev, at = target_deviation(freqs_hz, shape, targets[i])
        out.append(BandAcoustics(lv, trim, dev, at))
    return out


# ---------------------------------------------------------------------------
# group delay against published audibility thresholds

#: Thresholds of audibility of group-delay distortion (Hz, ms): values from memory of
#: J. Blauert and P. Laws, "Group delay distortions in electroacoustical systems",
#: J. Acoust. Soc. Am. 63(5), 1978, not checked against the paper. Information only.
GD_THRESHOLDS_MS = ((500.0, 3.2), (1000.0, 2.0), (2000.0, 1.0), (4000.0, 1.5), (8000.0, 2.0))


def group_delay_audibility(freqs_hz: np.ndarray, gd_ms: np.ndarray) -> list[dict]:
    """At each threshold frequency in range: the sum's excess group delay and the threshold.

    The excess is the group delay less its median above 4 kHz (or over the
    top octave of the range), where a crossover's delay has settled to the
    bands' common latency.
    """
    f = np.asarray(freqs_hz, dtype=float)
    g = np.asarray(gd_ms, dtype=float)
    ok = np.isfinite(g)
    if not ok.any():
        return []
    top = ok & (f >= min(4000.0, f[ok].max() / 2))
    base = float(np.median(g[top])) if top.any() else float(np.median(g[ok]))
    out = []
    for fh, th in GD_THRESHOLDS_MS:
        if f[ok][0] <= fh <= f[ok][-1]:
            excess = float(np.interp(np.log(fh), np.log(f[ok]), g[ok])) - base
            out.append({"freq_hz": fh, "excess_ms": excess, "threshold_ms": th,
                        "above": bool(abs(excess) > th)})
    return out


# ---------------------------------------------------------------------------
# off axis: the sum at vertical angles, from the drivers' heights on the baffle


@dataclass(frozen=True)
class OffAxis:
    """The summed response at vertical angles.

    Attributes
    ----------
    angles_deg : ndarray, shape (n_angles,)
    freqs_hz : ndarray, shape (n,)
    level_db : ndarray, shape (n_angles, n)
        The sum's level at each angle.
    window_deg : (float, float)
        The range of angles around 0 deg where the sum stays within
        ``window_db`` of the on-axis sum at every frequency (the vertical
        listening window).
    window_db : float
    lobes : list of dict
        Per checked crossing: its bands, frequency and the angle where the
        sum is loudest there (how the crossover's lobe tilts).
    """

    angles_deg: np.ndarray
    freqs_hz: np.ndarray
    level_db: np.ndarray
    window_deg: tuple
    window_db: float
    lobes: list

    def to_dict(self) -> dict:
        return {"angles_deg": self.angles_deg.tolist(), "window_deg": list(self.window_deg),
                "window_db": self.window_db, "lobes": self.lobes}


#: Frequencies of the off-axis view (log-spaced over the analysis range).
OFF_AXIS_POINTS = 256


def off_axis(project: Project, freqs_hz: np.ndarray, acoustic_h: np.ndarray,
             active: list, crossings: list) -> OffAxis | None:
    """The sum at the project's vertical angles, or None when no driver has a position.

    Each band is a point source at its driver's ``position_mm`` (bands
    without a position sit on the listening axis); at an angle its path
    changes by :func:`planner.dsp.acoustic.off_axis_paths` (delay and
    spreading) relative to the on-axis listener at ``distance_m``. Offsets
    are already in the bands' responses, as delays.
    """
    pos = [None if b.driver is None else b.driver.position_mm for b in project.bands]
    if all(p is None for p in pos):
        return None
    ax = project.acoustics
    angles = np.arange(ax.angle_min_deg, ax.angle_max_deg + ax.angle_step_deg / 2,
                       ax.angle_step_deg)
    if not np.any(np.isclose(angles, 0.0)):
        angles = np.sort(np.append(angles, 0.0))
    f = np.geomspace(freqs_hz[0], freqs_hz[-1], OFF_AXIS_POINTS)
    h = np.array([np.interp(np.log(f), np.log(freqs_hz), row.real)
                  + 1j * np.interp(np.log(f), np.log(freqs_hz), row.imag) for row in acoustic_h])
    act = np.asarray(active, dtype=bool)
    y = np.array([ax.axis_mm if p is None else p for p in pos], dtype=float)
    delay, level = ac.off_axis_paths(y, np.zeros(len(y)), ax.distance_m, angles,
                                     ax.axis_mm, ax.temperature_c)
    # (angles, bands, freqs): each band delayed and scaled by its path at each angle.
    sums = (h[None, act, :] * level[:, act, None]
            * np.exp(-2j * np.pi * f[None, None, :] * delay[:, act, None])).sum(axis=1)
    lv = 20 * np.log10(np.maximum(np.abs(sums), 1e-300))
    on = lv[int(np.argmin(np.abs(angles)))]
    within = np.all(np.abs(lv - on) <= ax.window_db, axis=1)
    k0 = int(np.argmin(np.abs(angles)))
    lo = hi = k0
    while lo - 1 >= 0 and within[lo - 1]:
        lo -= 1
    while hi + 1 < len(angles) and within[hi + 1]:
        hi += 1
    lobes = []
    for c in crossings:
        j = int(np.argmin(np.abs(np.log(f / c.freq_hz))))
        lobes.append({"bands": list(c.bands), "freq_hz": c.freq_hz,
                      "lobe_deg": float(angles[int(np.argmax(lv[:, j]))])})
    return OffAxis(angles, f, lv, (float(angles[lo]), float(angles[hi])), ax.window_db, lobes)

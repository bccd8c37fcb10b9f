"""What export writes reproduces scipy.signal's design of the same filter, over a sweep.

Every family and type at every allowed order, cut-offs from 10 Hz to 0.45 fs, at 44.1, 48,
96 and 192 kHz, in both section layouts. The exported coefficients are read back from the
JSON text and evaluated here in extended precision (numpy longdouble), then compared with
references made by scipy.signal alone:

* Butterworth: scipy.signal.butter(N, f, btype, fs=fs, output="sos");
* Bessel: scipy.signal.bessel(..., norm=...) for the phase and mag norms; the delay norm
  from scipy.signal's steps with the prototype unwarped (its definition: DC group delay);
* Linkwitz-Riley: a Butterworth of half the order, squared (Linkwitz and Riley, JAES 1976);
* cookbook second order with Q 0.7071: scipy.signal.butter(2, ...) (Audio EQ Cookbook, W3C
  note: Q = 1/sqrt(2) is the Butterworth response).

The low cut-offs at high rates are the cases where re-pairing through zeros and poles
turned zeros at z = -1 into zeros at z = 0 (a band about 12 dB low).
"""

import csv
import json
import math

import numpy as np
import pytest
from scipy import signal
from scipy.io import wavfile

from planner import config, export, project
from planner.audio.render import render

RATES = (44100, 48000, 96000, 192000)
MODES = export.SECTION_MODES


def _cutoffs(fs):
    return [10.0, 31.6, 100.0, 1000.0, 10000.0, 0.45 * fs]


def _project(fs, filters):
    return project.from_dict({
        "format": "crossplan-project", "version": 1, "name": "sweep", "sample_rate": fs,
        "analysis": {"f_min": 5, "f_max": fs / 2, "points": 128},
        "bands": [{"name": f"b{i}", "filters": [flt]} for i, flt in enumerate(filters)]})


def _exported(fs, filters, arith, mode):
    """(filter, its band in the JSON file, its BandExport), the filters one band each.

    A project holds at most config.MAX_BANDS bands, so the filters go in projects of that
    many.
    """
    out = []
    for i in range(0, len(filters), config.MAX_BANDS):
        part = filters[i:i + config.MAX_BANDS]
        rx = export.export_rate(_project(fs, part), fs, arith, sections=mode)
        data = json.loads(json.dumps(export.to_json_dict(rx)))
        out += list(zip(part, data["bands"], rx.bands))
    return out


def _reference(flt, fs):
    t, fam, f = flt["type"], flt["family"], flt["freq"]
    if fam == "butterworth":
        return signal.butter(flt["order"], f, t, fs=fs, output="sos")
    if fam == "bessel" and flt["norm"] == "delay":
        # The delay norm is defined by its group delay at DC, 1 / (2 pi f): the prototype is
        # scaled to 2 pi f unwarped (scipy.signal's own steps: besselap, lp2lp/lp2hp_zpk,
        # bilinear_zpk, zpk2sos), since the bilinear transform keeps the DC delay in seconds.
        z, p, k = signal.besselap(flt["order"], norm="delay")
        move = signal.lp2lp_zpk if t == "lowpass" else signal.lp2hp_zpk
        z, p, k = signal.bilinear_zpk(*move(z, p, k, wo=2 * np.pi * f), fs=fs)
        return signal.zpk2sos(z, p, k)
    if fam == "bessel":
        return signal.bessel(flt["order"], f, t, norm=flt["norm"], fs=fs, output="sos")
    if fam == "linkwitz-riley":
        half = signal.butter(flt["order"] // 2, f, t, fs=fs, output="sos")
        return np.vstack([half, half])
    return signal.butter(2, f, t, fs=fs, output="sos")          # cookbook, Q 0.7071


def _filters(family, kind, fs):
    orders = {"butterworth": range(1, 9), "bessel": range(1, 9), "linkwitz-riley": (2, 4, 6, 8),
              "cookbook": (2,)}[family]
    out = []
    for order in orders:
        for f in _cutoffs(fs):
            flt = {"type": kind, "family": family, "freq": f}
            if family == "cookbook":
                flt["q"] = 1 / math.sqrt(2)
            else:
                flt["order"] = order
            out.append(flt)
    if family == "bessel":
        out = [dict(x, norm=n) for x in out for n in ("phase", "mag", "delay")]
    return out


def _h(rows, fs, freqs):
    """Response of exported [b0, b1, b2, a1, a2] rows, in longdouble (numpy, not crossplan)."""
    w = 2 * np.pi * np.asarray(freqs, dtype=np.longdouble) / np.longdouble(fs)
    z1 = np.exp(-1j * w).astype(np.clongdouble)
    h = np.ones_like(z1)
    for b0, b1, b2, a1, a2 in np.asarray(rows, dtype=np.longdouble):
        h *= (b0 + z1 * (b1 + z1 * b2)) / (1 + z1 * (a1 + z1 * a2))
    return h


def _h_sos(sos, fs, freqs):
    return _h(np.asarray(sos)[:, [0, 1, 2, 4, 5]], fs, freqs)


def _band_h(b, fs, freqs):
    """A band of the JSON file: biquads times 2^post_shift, then scale, gain and polarity."""
    rows = np.array(b["biquads"], dtype=float).reshape(-1, 5)
    rows *= 2.0 ** np.array(b["post_shifts"], dtype=float)[:, None]
    g = b["scale"] * 10 ** (b["gain_db"] / 20) * (-1 if b["invert"] else 1)
    return _h(rows, fs, freqs) * g


def _worst_relative(h, ref):
    ref_db = 20 * np.log10(np.maximum(np.abs(ref).astype(float), 1e-300))
    live = ref_db > -100
    return float(np.max(np.abs(h[live] / ref[live] - 1)))


def _tolerance(flt, fs):
    """1e-9, or what float64 coefficients can hold for a pole pair very close to z = +-1.

    A section's response at DC is N(1) / (1 + a1 + a2); with a pole pair 10 Hz from z = 1
    at 192 kHz, 1 + a1 + a2 is about 1e-7, so rounding a1 and a2 to float64 (2.2e-16 each)
    moves the response there by about 4e-9 relative, in any direct-form design (scipy's
    reference too). Designs made by the same bilinear-transform steps as scipy's round
    alike and meet 1e-9; the cookbook formulas round differently.
    """
    if flt["family"] != "cookbook":
        return 1e-9
    sos = _reference(flt, fs)
    margin = np.min(np.minimum(np.abs(1 + sos[:, 4] + sos[:, 5]),
                               np.abs(1 - sos[:, 4] + sos[:, 5])))
    return max(1e-9, 8 * np.finfo(float).eps / margin)


@pytest.mark.parametrize("mode", MODES)
@pytest.mark.parametrize("fs", RATES)
@pytest.mark.parametrize("family", ["butterworth", "bessel", "linkwitz-riley", "cookbook"])
@pytest.mark.parametrize("kind", ["lowpass", "highpass"])
def test_float64_export_reproduces_scipy_design(kind, family, fs, mode):
    filters = _filters(family, kind, fs)
    freqs = np.geomspace(5, 0.499 * fs, 400)
    for flt, band, b in _exported(fs, filters, "float64", mode):
        assert b.arith.ok, (flt, b.arith.reason)
        ref = _h_sos(_reference(flt, fs), fs, freqs)
        # Relative 1e-9 where scipy's design is above -100 dB (see _tolerance).
        assert _worst_relative(_band_h(band, fs, freqs), ref) < _tolerance(flt, fs), flt


@pytest.mark.parametrize("arith", ["float32", "q1.31", "q2.30", "q1.23", "q1.15"])
@pytest.mark.parametrize("fs", [48000, 192000])
@pytest.mark.parametrize("kind", ["lowpass", "highpass"])
def test_a_rounded_export_that_says_ok_is_within_its_limits(kind, fs, arith):
    # Whatever the target, export's own verdict must hold for the coefficients as written:
    # when it says ok, the file's chain is within 0.1 dB of scipy's design wherever that is
    # within 40 dB of the band's peak, and its magnitude error is 80 dB below the peak
    # elsewhere; when it refuses, it says why. The lowpass zeros at z = -1 stay exact.
    filters = [f for fam in ("butterworth", "bessel", "linkwitz-riley")
               for f in _filters(fam, kind, fs) if f.get("order", 2) in (2, 8)]
    for mode in MODES:
        freqs = np.geomspace(5, 0.499 * fs, 400)
        for flt, band, b in _exported(fs, filters, arith, mode):
            if not b.arith.ok:
                assert b.arith.reason, flt
                continue
            h = _band_h(band, fs, freqs).astype(complex)
            ref = _h_sos(_reference(flt, fs), fs, freqs).astype(complex)
            ref_db = 20 * np.log10(np.abs(ref))
            inside = ref_db >= ref_db.max() - 40
            dev = np.abs(20 * np.log10(np.abs(h[inside]) / np.abs(ref[inside])))
            assert dev.max() <= 0.1 + 1e-9, (flt, mode)
            err = np.abs(np.abs(h[~inside]) - np.abs(ref[~inside])) / np.abs(ref).max()
            assert not err.size or 20 * np.log10(max(err.max(), 1e-300)) <= -80 + 1e-6
            if kind == "lowpass":
                rows = np.array(band["biquads"])
                # b0 - b1 + b2 = 0 exactly: the numerator vanishes at z = -1 (Nyquist).
                assert np.all(rows[:, 0] - rows[:, 1] + rows[:, 2] == 0), (flt, mode)


def test_most_rounded_exports_are_held():
    # The deviation is judged where it matters: a 4th-order 2 kHz crossover at 48 kHz
    # holds in q2.14 (it failed on a 2.9 dB change at -90 dB when every point counted).
    p = _project(48000, [{"type": "lowpass", "family": "linkwitz-riley", "order": 4,
                          "freq": 2000}, {"type": "highpass", "family": "linkwitz-riley",
                                          "order": 4, "freq": 2000}])
    rx = export.export_rate(p, 48000, "q2.14")
    assert rx.arith_ok, [b.arith.reason for b in rx.bands]


@pytest.mark.parametrize("flt, fs", [
    ({"type": "lowpass", "family": "butterworth", "order": 6, "freq": 50}, 48000),
    ({"type": "lowpass", "family": "bessel", "order": 8, "freq": 100, "norm": "phase"}, 96000),
    ({"type": "lowpass", "family": "butterworth", "order": 7, "freq": 30}, 44100),
])
def test_every_file_format_and_render_hold_the_fragile_lowpass(flt, fs, tmp_path):
    # The cases that came out about 12 dB low: each file read back with the csv/json
    # modules or scipy.io.wavfile and render's output, against scipy.signal's design.
    p = _project(fs, [flt])
    freqs = np.geomspace(5, min(20000, 0.45 * fs), 300)
    ref = _h_sos(_reference(flt, fs), fs, freqs).astype(complex)
    for fmt in ("json", "csv", "text", "wav"):
        res = export.write_export(p, [fs], fmt, tmp_path / fmt)
        f = res.files[0]
        if fmt == "json":
            got = _band_h(json.loads(f.read_text())["bands"][0], fs, freqs)
        elif fmt == "csv":
            rows = [r for r in csv.DictReader(f.open()) if r["item"] == "section"]
            five = [[float(r[k]) for k in ("b0", "b1", "b2", "a1", "a2")] for r in rows]
            got = _h(five, fs, freqs)
        elif fmt == "text":
            vals = [float(line.split("=")[1]) for line in f.read_text().splitlines()
                    if line.strip()[:2] in ("b0", "b1", "b2", "a1", "a2")]
            got = _h(np.reshape(vals, (-1, 5)), fs, freqs)
        else:
            _, ir = wavfile.read(f)
            n = np.arange(len(ir))
            got = np.exp(-2j * np.pi * np.outer(freqs / fs, n)) @ ir.astype(float)
        got = np.asarray(got, dtype=complex)
        if fmt == "wav":
            # float32 samples (2^-24 of the peak sample each) and the tail cut at -150 dB:
            # an error floor about 1e-6 of the pass band, not a relative one.
            assert np.max(np.abs(got - ref)) < 1e-5 * np.max(np.abs(ref)), fmt
        else:
            assert _worst_relative(got, ref) < 1e-9, fmt
    rx = export.export_rate(p, fs)
    x = np.zeros(1 << 16)
    x[0] = 1.0
    y = render(x, rx).bands["b0"]
    got = np.exp(-2j * np.pi * np.outer(freqs / fs, np.arange(len(y)))) @ y
    assert _worst_relative(got, ref) < 1e-6     # 65536 samples of a decaying response

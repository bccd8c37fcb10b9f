"""The raw ``biquad`` filter type, against scipy.signal.

Sources: scipy.signal.butter / sosfreqz (the reference sections and their
response); Oppenheim and Schafer, "Discrete-Time Signal Processing", 3rd ed.,
sec. 5.2 (a causal filter is stable when its poles lie inside the unit circle).
"""

import numpy as np
import pytest
from scipy import signal

from planner import engine, export, project
from planner.errors import ProjectError
from planner.filters.raw import sections_from_coeffs
from planner import filters

FS = 48000
#: Reference sections: scipy's 4th-order Butterworth lowpass at 1 kHz.
REF = signal.butter(4, 1000, fs=FS, output="sos")


def _coeffs(sos):
    return [float(v) for row in sos for v in (row[0], row[1], row[2], row[4], row[5])]


def _project(rate=FS, coeffs=None, fs=FS):
    return {"format": "crossplan-project", "version": 1, "name": "raw", "sample_rate": fs,
            "bands": [{"name": "dsp", "filters": [
                {"type": "biquad", "rate": rate,
                 "coeffs": _coeffs(REF) if coeffs is None else coeffs}]}]}


def test_sections_from_coeffs_layout():
    # [b0, b1, b2, a1, a2] -> scipy's [b0, b1, b2, 1, a1, a2]
    np.testing.assert_array_equal(sections_from_coeffs([1, 2, 3, 4, 5]), [[1, 2, 3, 1, 4, 5]])


def test_biquad_analysed_at_its_rate_matches_scipy():
    p = project.from_dict(_project())
    r = engine.analyse(p)
    ref = signal.sosfreqz(REF, worN=r.freqs_hz, fs=FS)[1]
    # float64 evaluation of the same 2 sections: rounding only (1e-12).
    assert np.max(np.abs(r.responses.h[0] - ref)) < 1e-12


def test_biquad_refused_when_project_rate_differs():
    with pytest.raises(ProjectError, match=r"filters\[0\]\.rate: raw biquad coefficients were "
                                           r"made for 48000 Hz .* at 96000 Hz"):
        project.from_dict(_project(fs=96000))


def test_biquad_refused_at_another_export_rate():
    p = project.from_dict(_project())
    with pytest.raises(ProjectError, match=r"band 'dsp', filter 1 .* at 44100 Hz: raw biquad "
                                           r"coefficients were made for 48000 Hz"):
        export.project_at_rate(p, 44100)


def test_biquad_exported_at_its_rate():
    p = project.from_dict(_project())
    rx = export.export_rate(p, FS)
    b = rx.bands[0]
    got = signal.sosfreqz(b.stored_sos, worN=rx.report.freqs_hz, fs=FS)[1]
    ref = signal.sosfreqz(REF, worN=rx.report.freqs_hz, fs=FS)[1]
    # Re-paired by zpk2sos: same response to rounding of the roots (1e-9).
    assert np.max(np.abs(got - ref)) < 1e-9


def test_biquad_count_not_multiple_of_five_raises():
    with pytest.raises(ProjectError, match=r"coeffs: needs 5 numbers per section .* got 7"):
        project.from_dict(_project(coeffs=[1, 0, 0, 0, 0, 1, 2]))


def test_biquad_unstable_raises():
    # a2 = 1.21: poles of z^2 + a2 at radius sqrt(1.21) = 1.1 (outside the unit circle).
    with pytest.raises(ProjectError, match=r"coeffs: section 1 has a pole at radius 1\.1, .*"
                                           r"unstable"):
        project.from_dict(_project(coeffs=[1, 0, 0, 0, 1.21]))


def test_biquad_rate_out_of_range_raises():
    with pytest.raises(ProjectError, match=r"rate: 10 is below the minimum 1000"):
        project.from_dict(_project(rate=10))


def test_biquad_label():
    p = project.from_dict(_project())
    assert filters.label(p.bands[0].filters[0]) == "biquad x2 at 48 kHz"

"""Export: files read back and evaluated independently, quantisation, the manifest.

Sources: scipy.signal.sosfreqz / zpk2sos / sos2zpk (reference response and
pairing); numpy polynomial evaluation written here (the exported files'
responses, not crossplan code); numpy.roots (pole radius); scipy.io.wavfile
(reading WAVs); hashlib SHA-256 (FIPS 180-4) for the manifest hash; the
Audio EQ Cookbook (W3C note) for the peaking filter's gain at its centre;
Oppenheim and Schafer 3rd ed. sec. 6.7 for the fragile low-cutoff case.
"""

import csv
import hashlib
import json
import re
from dataclasses import replace

import numpy as np
import pytest
from scipy import signal
from scipy.io import wavfile

from planner import engine, export, project
from planner.errors import ExportError, ProjectError
from tests.conftest import EXAMPLE, two_way

RATES = (44100, 48000, 96000)


def _grid(fs):
    return np.geomspace(20, min(20000, 0.45 * fs), 300)


def _numpy_chain(biquads, fs, freqs, gain_db=0.0, invert=False, delay=0.0, fir=None):
    """Response of exported [b0, b1, b2, a1, a2] rows, by numpy polynomial evaluation in z^-1."""
    zi = np.exp(-2j * np.pi * freqs / fs)
    h = np.ones_like(zi)
    for b0, b1, b2, a1, a2 in biquads:
        h *= np.polyval([b2, b1, b0], zi) / np.polyval([a2, a1, 1.0], zi)
    if fir is not None:
        h *= np.polyval(np.asarray(fir)[::-1], zi)
    return h * 10 ** (gain_db / 20) * (-1 if invert else 1) * zi ** delay


def _design(proj, i, fs, freqs):
    """The float64 design of band i at fs, by scipy.signal.sosfreqz of engine.design_band."""
    d = engine.design_band(export.project_at_rate(proj, fs).bands[i], fs)
    h = signal.sosfreqz(d.sos, worN=freqs, fs=fs)[1]
    return h * 10 ** (d.gain_db / 20) * (-1 if d.invert else 1) * \
        np.exp(-2j * np.pi * freqs / fs * d.delay_samples)


@pytest.fixture
def proj():
    d = json.loads(json.dumps(EXAMPLE))
    d["bands"][1]["delay_ms"] = 0.0125   # 0.6 samples at 48 kHz: a fractional delay
    d["bands"][1]["invert"] = True
    return project.from_dict(d)


@pytest.mark.parametrize("fs", RATES)
def test_json_round_trip_matches_design(proj, tmp_path, fs):
    res = export.write_export(proj, [fs], "json", tmp_path)
    data = json.loads(res.files[0].read_text())
    assert data["format"] == "crossplan-coefficients" and data["version"] == 1
    assert data["sample_rate"] == fs
    f = _grid(fs)
    for i, b in enumerate(data["bands"]):
        assert set(b) >= {"name", "gain_db", "delay_samples", "invert", "biquads", "fir"}
        got = _numpy_chain(b["biquads"], fs, f, b["gain_db"], b["invert"], b["delay_samples"])
        # float64 files: the re-paired chain equals the design to 1e-9 (the tolerance).
        assert np.max(np.abs(got * b["scale"] - _design(proj, i, fs, f))) < 1e-9


@pytest.mark.parametrize("fs", RATES)
def test_csv_round_trip_matches_design(proj, tmp_path, fs):
    res = export.write_export(proj, [fs], "csv", tmp_path)
    rows = list(csv.DictReader(res.files[0].open()))
    f = _grid(fs)
    for i, band in enumerate(proj.bands):
        mine = [r for r in rows if r["band"] == band.name]
        val = {r["item"]: r["value"] for r in mine if r["item"] != "section"}
        secs = [[float(r[k]) for k in ("b0", "b1", "b2", "a1", "a2")]
                for r in mine if r["item"] == "section"]
        got = _numpy_chain(secs, fs, f, float(val["gain_db"]), val["invert"] == "1",
                           float(val["delay_samples"])) * float(val["scale"])
        assert np.max(np.abs(got - _design(proj, i, fs, f))) < 1e-9  # float64: 1e-9


@pytest.mark.parametrize("fs", RATES)
def test_text_round_trip_matches_design(proj, tmp_path, fs):
    res = export.write_export(proj, [fs], "text", tmp_path)
    text = res.files[0].read_text()
    f = _grid(fs)
    blocks = re.split(r"^band ", text, flags=re.M)[1:]
    assert len(blocks) == len(proj.bands)
    for i, blk in enumerate(blocks):
        num = {k: float(v) for k, v in re.findall(r"^  (gain_db|delay_samples|scale) +(\S+)",
                                                  blk, flags=re.M)}
        coef = [float(v) for v in re.findall(r"^    [ab][012] = (\S+)$", blk, flags=re.M)]
        got = _numpy_chain(np.reshape(coef, (-1, 5)), fs, f, num["gain_db"],
                           "polarity       inverted" in blk, num["delay_samples"]) * num["scale"]
        assert np.max(np.abs(got - _design(proj, i, fs, f))) < 1e-9  # float64: 1e-9


@pytest.mark.parametrize("fs", RATES)
def test_wav_round_trip_float32_and_matches_design(proj, tmp_path, fs):
    res = export.write_export(proj, [fs], "wav", tmp_path)
    man = json.loads(res.manifest.read_text())
    lat = man["checks"][0]["delays"]["added_latency_samples"]
    f = _grid(fs)
    for i, path in enumerate(res.files):
        rate, h = wavfile.read(path)
        assert rate == fs and h.dtype == np.float32 and h.ndim == 1
        # The WAV holds the exact delay (the fraction by the fractional-delay filter),
        # every band later by the run's added latency.
        dtft = np.exp(-2j * np.pi * np.outer(f / fs, np.arange(len(h)))) @ h.astype(float)
        ref = _design(proj, i, fs, f) * np.exp(-2j * np.pi * f / fs * lat)
        # The fractional-delay filter's complex error (1e-4 of a gain <= 1, up to 0.45 fs),
        # float32 samples (2^-24 relative each) and the -150 dB truncation: 1.1e-4.
        assert np.max(np.abs(dtft - ref)) < 1.1e-4


def test_fractional_delay_split_in_manifest(proj, tmp_path):
    res = export.write_export(proj, [48000], "wav", tmp_path)
    rate = json.loads(res.manifest.read_text())["checks"][0]
    wav = rate["bands"][1]["wav"]
    lat = rate["delays"]["added_latency_samples"]
    # 0.0125 ms at 48 kHz = 0.6 samples: the nearest whole is 1, the filter makes -0.4;
    # the other band (no fraction) gets the filter's latency as whole samples.
    assert wav["delay_whole_samples"] == 1
    assert wav["delay_fraction_applied_samples"] == pytest.approx(-0.4, abs=1e-12)
    assert wav["delay_rounded_by_samples"] == pytest.approx(0.0, abs=1e-12)
    assert rate["bands"][0]["wav"]["delay_whole_samples"] == lat
    assert rate["bands"][0]["wav"]["delay_fraction_applied_samples"] == 0.0


def test_per_filter_sections_are_the_design_labelled_by_filter(proj):
    # The default layout: each filter's own sections, as scipy.signal.butter designs them
    # (the woofer's 35 Hz BW2 highpass, then its LR4 lowpass = BW2 squared, Linkwitz 1976).
    rx = export.export_rate(proj, 48000)
    b = rx.bands[0]
    hp = signal.butter(2, 35, "highpass", fs=48000, output="sos")
    lp = signal.butter(2, 2200, "lowpass", fs=48000, output="sos")
    np.testing.assert_allclose(b.stored_sos, np.vstack([hp, lp, lp]), rtol=1e-12, atol=1e-15)
    assert b.section_filters == [0, 1, 1]
    d = export.to_json_dict(rx)["bands"][0]
    assert d["filters"] == [{"index": 0, "label": "BW2 highpass 35 Hz"},
                            {"index": 1, "label": "LR4 lowpass 2.2 kHz"}]
    assert d["section_filters"] == [0, 1, 1] and d["post_shifts"] == [0, 0, 0]


def test_paired_sections_as_zpk2sos_on_a_well_conditioned_band(proj):
    # --sections paired: each pole pair with scipy.signal.zpk2sos's zeros, high-Q last.
    rx = export.export_rate(proj, 48000, sections="paired")
    d = rx.report.designs[0].sos
    ref = signal.zpk2sos(*signal.sos2zpk(d))
    got = rx.bands[0].stored_sos
    np.testing.assert_allclose(got[:, 3:], ref[:, 3:], rtol=0, atol=1e-12)
    np.testing.assert_allclose(got[:, :3] / got[:, :1], ref[:, :3] / ref[:, :1], atol=1e-9)
    assert rx.bands[0].section_filters is None and rx.sections == "paired"


def test_negate_feedback_flag(proj, tmp_path):
    plain = export.to_json_dict(export.export_rate(proj, 48000))
    neg = export.to_json_dict(export.export_rate(proj, 48000), negate_feedback=True)
    assert neg["negated_feedback"] is True and plain["negated_feedback"] is False
    p, n = np.array(plain["bands"][0]["biquads"]), np.array(neg["bands"][0]["biquads"])
    np.testing.assert_array_equal(n[:, :3], p[:, :3])
    np.testing.assert_array_equal(n[:, 3:], -p[:, 3:])


def test_rate_at_nyquist_refused_naming_band_and_filter():
    p = project.from_dict(two_way(fc=2000))
    with pytest.raises(ProjectError, match=r"bands\[0\]\.filters\[0\]\.freq: band 'low', filter 1 "
                                           r"\(LR4 lowpass 2 kHz\) at 4000 Hz: 2000 Hz is at "
                                           r"Nyquist"):
        export.project_at_rate(p, 4000)


def test_bad_rate_refused():
    with pytest.raises(ExportError, match=r"rate: 500 Hz is not a sample rate"):
        export.project_at_rate(project.from_dict(two_way()), 500)


def test_bad_format_refused(tmp_path):
    with pytest.raises(ExportError, match=r"format: must be one of json, csv, text, wav"):
        export.write_export(project.from_dict(two_way()), [48000], "xml", tmp_path)


def test_manifest_contents(proj, tmp_path):
    res = export.write_export(proj, [48000, 96000], "json", tmp_path)
    m = json.loads(res.manifest.read_text())
    canon = json.dumps(project.to_dict(proj), sort_keys=True, separators=(",", ":"),
                       ensure_ascii=False)
    assert m["content_hash"] == "sha256:" + hashlib.sha256(canon.encode()).hexdigest()
    assert m["project"] == proj.name and m["rates"] == [48000, 96000]
    assert [c["sample_rate"] for c in m["checks"]] == [48000, 96000]
    assert all({"ok", "sum", "crossovers"} <= set(c["check"]) for c in m["checks"])
    assert sorted(m["files"]) == sorted(p.name for p in res.files)


def test_manifest_hash_changes_with_the_project(proj):
    other = proj.with_band(0, proj.bands[0].__class__(**{**proj.bands[0].__dict__,
                                                         "gain_db": -1.0}))
    assert export.content_hash(proj) != export.content_hash(other)
    assert export.content_hash(proj) == export.content_hash(project.loads(project.dumps(proj)))


def _fragile():
    # 30 Hz 8th-order Butterworth highpass at 192 kHz: poles within 1e-3 of z = 1, a1 near -2
    # (Oppenheim and Schafer sec. 6.7: pole sensitivity grows near z = 1).
    return project.from_dict({
        "format": "crossplan-project", "version": 1, "name": "fragile", "sample_rate": 192000,
        "bands": [{"name": "sub", "filters": [
            {"type": "highpass", "family": "butterworth", "order": 8, "freq": 30}]}]})


def test_fragile_highpass_caught_in_q1_15():
    # q1.15 holds the range with a post-shift of one bit, but its 15 fractional bits put
    # a pole on the unit circle (radius by numpy.roots below); q2.30 holds it.
    rx = export.export_rate(_fragile(), 192000, "q1.15")
    r = rx.bands[0].arith
    assert not r.ok and r.failed_section == 1 and r.unstable_sections and r.deviation_db is None
    assert r.shifts == [1, 1, 1, 1] and not r.overflow_sections
    assert any("lower sample rate" in s for s in r.suggestions)
    assert any(s.startswith("q2.30 holds this design") for s in r.suggestions)
    text = "\n".join(export.arith_text(rx))
    assert "band 'sub', section 1: q1.15 cannot hold the design at 192000 Hz: rounding moved " \
           "a pole to radius 1" in text
    assert "deviation not evaluated" in text


def test_fragile_highpass_holds_in_q1_31_with_post_shifts():
    rx = export.export_rate(_fragile(), 192000, "q1.31")
    r = rx.bands[0].arith
    assert r.ok and r.shifts == [1, 1, 1, 1]
    assert export.to_json_dict(rx)["bands"][0]["post_shifts"] == [1, 1, 1, 1]


def test_fragile_highpass_survives_float64():
    r = export.export_rate(_fragile(), 192000, "float64").bands[0].arith
    assert r.ok and r.deviation_db == 0.0 and r.max_coef_error == 0.0


def test_pole_radius_agrees_with_numpy_roots():
    rx = export.export_rate(_fragile(), 192000, "q2.30")
    b = rx.bands[0]
    ref = [np.max(np.abs(np.roots(s[3:6]))) for s in b.stored_sos]
    # Closed form vs numpy.roots of the stored denominators: 1e-9 (roots near a double root).
    np.testing.assert_allclose(b.arith.pole_radius, ref, rtol=0, atol=1e-9)


def test_fixed_point_sections_scaled_to_full_scale_and_scale_restores_response():
    # Audio EQ Cookbook: a +24 dB peak at 5 kHz, Q 1, 48 kHz peaks at 24 dB, at f0. For a
    # fixed-point target the section is scaled to peak at full scale (Jackson sec. 11.3)
    # and the 24 dB move to the band's scale, after the chain.
    p = project.from_dict({
        "format": "crossplan-project", "version": 1, "name": "eq", "sample_rate": 48000,
        "bands": [{"name": "eq", "filters": [
            {"type": "peaking", "freq": 5000, "gain_db": 24.0, "q": 1.0}]}]})
    rx = export.export_rate(p, 48000, "q2.30")
    d = export.to_json_dict(rx)["bands"][0]
    assert 20 * np.log10(d["scale"]) == pytest.approx(24.0, abs=0.01)
    f = _grid(48000)
    rows = np.array(d["biquads"]) * 2.0 ** np.array(d["post_shifts"])[:, None]
    got = _numpy_chain(rows, 48000, f) * d["scale"]
    assert np.max(np.abs(_numpy_chain(rows, 48000, f))) <= 1 + 1e-6   # full scale inside
    ref = signal.sosfreqz(rx.report.designs[0].sos, worN=f, fs=48000)[1]
    # q2.30 rounding, 2^-31 per coefficient, times the 24 dB scale: 1e-6 relative.
    assert np.max(np.abs(got - ref) / np.abs(ref)) < 1e-6


def test_peak_internal_gain_and_pre_attenuation():
    # Audio EQ Cookbook (W3C note): a peaking filter's gain at f0 is gain_db.
    p = project.from_dict({
        "format": "crossplan-project", "version": 1, "name": "eq", "sample_rate": 48000,
        "analysis": {"points": 2048},
        "bands": [{"name": "eq", "gain_db": -1.0, "filters": [
            {"type": "peaking", "freq": 1000, "gain_db": 6.0, "q": 2.0}]}]})
    plain = export.export_rate(p, 48000)
    att = export.export_rate(p, 48000, pre_attenuate=True)
    # The grid holds f0 itself (filter frequencies are added): 6 dB within 1e-6.
    assert plain.bands[0].peak_internal_gain_db == pytest.approx(6.0, abs=1e-6)
    assert plain.bands[0].gain_db == -1.0 and plain.bands[0].pre_attenuation_db == 0.0
    assert att.bands[0].gain_db == pytest.approx(-7.0, abs=1e-6)


def test_nothing_written_when_arith_fails(tmp_path):
    res = export.write_export(_fragile(), [192000], "json", tmp_path / "out", arith="q1.15")
    assert not res.arith_ok and res.files == [] and res.manifest is None
    assert not (tmp_path / "out").exists()


def test_float32_holds_a_crossover():
    rx = export.export_rate(project.from_dict(two_way()), 48000, "float32")
    for b in rx.bands:
        # float32 rounding (2^-24 relative) moves a 2 kHz LR4 by far less than 0.1 dB.
        assert b.arith.ok and 0 < b.arith.max_coef_error < 1e-6


def _lowpass_192k(order, freq):
    return project.from_dict({
        "format": "crossplan-project", "version": 1, "name": "lo", "sample_rate": 192000,
        "bands": [{"name": "sub", "filters": [
            {"type": "lowpass", "family": "butterworth", "order": order, "freq": freq}]}]})


def test_tiny_overall_gain_survives_q2_30():
    # scipy.signal.butter(8, 20, fs=192000) puts an overall gain of about 1e-26 in its first
    # numerator, which rounds to 0 in q2.30 (the band reported as "6e+03 dB" off). Scaled to
    # full scale section by section it holds: every stored numerator is non-zero and the
    # file's chain is within 0.1 dB of scipy's design where it is within 40 dB of its peak.
    assert signal.butter(8, 20, fs=192000, output="sos")[0, 0] < 1e-20
    rx = export.export_rate(_lowpass_192k(8, 20), 192000, "q2.30")
    b = rx.bands[0]
    assert b.arith.ok and np.all(np.abs(b.stored_sos[:, 0]) > 0)
    f = np.geomspace(10, 90000, 2000)
    d = export.to_json_dict(rx)["bands"][0]
    rows = np.array(d["biquads"]) * 2.0 ** np.array(d["post_shifts"])[:, None]
    got = np.abs(_numpy_chain(rows, 192000, f)) * d["scale"]
    ref = np.abs(signal.sosfreqz(signal.butter(8, 20, fs=192000, output="sos"), worN=f,
                                 fs=192000)[1])
    inside = 20 * np.log10(ref) >= -40
    assert np.max(np.abs(20 * np.log10(got[inside] / ref[inside]))) < 0.1


def test_a_band_that_fails_says_so_with_a_real_figure():
    # A 10 Hz 6th-order lowpass at 192 kHz: poles 3e-4 from z = 1; 30 fractional bits move
    # its pass band by a few tenths of a dB, which is what is reported (not a rounding of
    # a numerator to zero).
    rx = export.export_rate(_lowpass_192k(6, 10), 192000, "q2.30")
    r = rx.bands[0].arith
    assert not r.ok and 0.1 < r.deviation_db < 1.0
    assert re.search(r"the response deviates by 0\.\d+ dB at [\d.]+ Hz \(limit 0\.1 dB within "
                     r"40 dB of the band's peak\)", r.reason)


def test_text_lines_agree_with_the_json_figures():
    # What the export prints per rate is the figure of its JSON (and manifest), rounded,
    # never rounded onto the limit it fails: 0.1049 is shown as 0.105, not 0.1.
    assert export.shown_against(0.10004, 0.1) == "0.10004"
    assert export.shown_against(0.0999, 0.1) == "0.0999"
    assert export.shown_against(0.5, 0.1) == "0.5"
    for order, freq in ((6, 10), (8, 20), (4, 10)):
        rx = export.export_rate(_lowpass_192k(order, freq), 192000, "q2.30")
        d = export.arith_dict(rx)["bands"][0]
        line = export.arith_text(rx)[1]
        shown = float(re.search(r"deviation ([\d.e+-]+) dB", line).group(1))
        assert shown == pytest.approx(d["deviation_db"], rel=5e-3)
        assert (shown > export.MAX_DEVIATION_DB) == (not d["ok"])
        assert line.lstrip().startswith("ok" if d["ok"] else "FAIL")


# --- fractional delays in the manifest ---------------------------------------------

def test_manifest_records_the_applied_fractions_and_the_latency(proj, tmp_path):
    # The tweeter's 0.0125 ms: 0.6 samples at 48 kHz, 0.55125 at 44.1 kHz (exact products).
    res = export.write_export(proj, [48000, 44100], "wav", tmp_path)
    m = json.loads(res.manifest.read_text())
    assert m["fractional_delay"] == "apply"
    for entry, frac in zip(m["checks"], (0.6, 0.55125)):
        dl = entry["delays"]
        assert dl["fractional_delay"] == "apply" and dl["rounding"] is None
        assert dl["added_latency_samples"] == (dl["filter"]["taps"] - 1) // 2 > 0
        assert dl["added_latency_ms"] == pytest.approx(
            1000 * dl["added_latency_samples"] / entry["sample_rate"])
        assert [b["name"] for b in dl["bands"]] == ["woofer", "tweeter"]
        assert dl["bands"][0]["fraction_samples"] == 0.0
        assert dl["bands"][1]["fraction_samples"] == pytest.approx(frac, abs=1e-12)


def test_manifest_records_rounding_and_its_cost(proj, tmp_path):
    # round: 0.6 -> 1 sample, no added latency, and what it cost against the check.
    res = export.write_export(proj, [48000], "wav", tmp_path, fractional_delay="round")
    m = json.loads(res.manifest.read_text())
    dl = m["checks"][0]["delays"]
    assert m["fractional_delay"] == "round" and dl["fractional_delay"] == "round"
    assert dl["added_latency_samples"] == 0 and dl["filter"] is None
    assert dl["bands"][1]["whole_samples"] == 1
    assert dl["bands"][1]["rounded_by_samples"] == pytest.approx(0.4, abs=1e-12)
    (c,) = dl["rounding"]["crossings"]
    # The tweeter 0.4 samples later: woofer - tweeter gains +360 fc 0.4 / fs (Oppenheim
    # and Schafer sec. 2.7); to 1e-6 deg.
    assert c["change_deg"] == pytest.approx(360 * c["freq_hz"] * 0.4 / 48000, abs=1e-6)
    assert {"sum_change_db", "sum_change_at_hz", "rounded_max_dev_db"} <= set(dl["rounding"])
    assert res.notes and res.notes[0].startswith("at 48000 Hz delays are rounded to the "
                                                 "nearest sample (tweeter 0.6 -> 1 samples)")


@pytest.mark.parametrize("fmt", ["json", "csv", "text"])
def test_coefficient_manifests_say_the_delay_is_exact(proj, tmp_path, fmt):
    res = export.write_export(proj, [48000], fmt, tmp_path, fractional_delay="round")
    m = json.loads(res.manifest.read_text())
    dl = m["checks"][0]["delays"]
    assert m["fractional_delay"] == "exact" and dl["fractional_delay"] == "exact"
    assert dl["added_latency_samples"] == 0
    assert dl["bands"][1]["fraction_samples"] == pytest.approx(0.6, abs=1e-12)
    assert res.notes[0].startswith("at 48000 Hz delay_samples is written exactly (tweeter 0.6)")


def test_unknown_fractional_mode_refused_before_writing(proj, tmp_path):
    with pytest.raises(ExportError, match=r"fractional_delay: must be one of apply, round, "
                                          r"not 'nearest'"):
        export.write_export(proj, [48000], "wav", tmp_path / "o", fractional_delay="nearest")
    assert not (tmp_path / "o").exists()


def test_band_impulse_response_round_mode_is_the_nearest_sample(proj):
    # 0.6 samples: one leading zero in round mode (floor would give none).
    from planner.engine.delays import plan_delays

    rx = export.export_rate(proj, 48000)
    plan = plan_delays([b.delay_samples for b in rx.bands], "round")
    h, bd = export.band_impulse_response(rx.bands[1], 48000, plan.bands[1])
    plain, _ = export.band_impulse_response(
        replace(rx.bands[1], delay_samples=0.0), 48000)
    assert bd.whole_samples == 1 and h[0] == 0.0
    np.testing.assert_array_equal(h[1:], plain)


# --- band file names -----------------------------------------------------------------

LONG = "a very long band name " * 14          # 308 characters


def _named(names, gains=None, project_name="names"):
    """A project of filterless bands: each one's impulse response is its gain alone."""
    gains = gains or [-1.0 * (i + 1) for i in range(len(names))]
    return project.from_dict({
        "format": "crossplan-project", "version": 1, "name": project_name,
        "sample_rate": 48000,
        "bands": [{"name": n, "gain_db": g, "filters": []} for n, g in zip(names, gains)]})


@pytest.mark.parametrize("names,stems", [
    (["Woofer", "woofer"], ["woofer-1", "woofer-2"]),
    (["mid range", "mid-range", "tweeter"], ["mid-range-1", "mid-range-2", "tweeter"]),
    (["sum", "low"], ["sum-1", "low"]),
    (["low", "manifest"], ["low", "manifest-2"]),
    (["Твитер", "低音", "ウーファー"], ["band-1", "band-2", "band-3"]),
    (["Médium", "Baß"], ["medium", "ba"]),
    (["Woofer", "woofer", "woofer 2"], ["woofer-1", "woofer-2-2", "woofer-2"]),
    (["band 2", "★"], ["band-2", "band-2-2"]),
])
def test_band_file_stems_distinct_and_readable(names, stems):
    assert export.band_file_stems(names) == stems


def test_band_file_stems_shorten_long_names_and_keep_them_apart():
    # Two names alike in their first 64 characters: shortened, then told apart by number.
    names = [LONG + "woofer", LONG + "tweeter", "mid"]
    stems = export.band_file_stems(names)
    assert len(set(stems)) == 3 and stems[2] == "mid"
    assert all(len(s) <= export.MAX_SLUG_CHARS + 3 for s in stems)
    assert stems[0].endswith("-1") and stems[1].endswith("-2")


def test_band_file_stems_are_deterministic():
    names = ["Woofer", "woofer", "sum", "Твитер", LONG]
    assert export.band_file_stems(names) == export.band_file_stems(list(names))


def test_slug_is_cut_to_its_limit():
    s = export.slug(LONG)
    assert len(s) <= export.MAX_SLUG_CHARS and not s.endswith("-")
    assert export.slug("Твитер") == "project" and export.slug("Твитер", fallback="") == ""


def test_run_files_refuse_a_second_write_naming_both(tmp_path):
    run = export.RunFiles()
    run.claim(tmp_path / "x-woofer.wav", "band 'Woofer' at 48000 Hz")
    with pytest.raises(ExportError, match=r"out: '.*x-woofer\.wav' would be written twice in one "
                                          r"run, for band 'Woofer' at 48000 Hz and for band "
                                          r"'woofer' at 48000 Hz; nothing is written over"):
        run.claim(tmp_path / "x-woofer.wav", "band 'woofer' at 48000 Hz")


def test_run_files_ignore_case(tmp_path):
    # Some file systems (macOS, Windows) hold X.wav and x.wav as one file.
    run = export.RunFiles()
    run.claim(tmp_path / "X.wav", "band 'X'")
    with pytest.raises(ExportError, match=r"for band 'X' and for band 'x'"):
        run.claim(tmp_path / "x.wav", "band 'x'")


def test_write_file_reports_a_system_error(tmp_path):
    with pytest.raises(ExportError, match=r"out: cannot write '.*nope.*x\.wav': "):
        export.write_file(tmp_path / "nope" / "x.wav", lambda t: None)


def test_write_export_guard_stops_a_colliding_run(monkeypatch, tmp_path):
    # Were two bands ever given one stem, the run refuses before writing anything.
    monkeypatch.setattr(export.files, "band_file_stems",
                        lambda names, reserved=(): ["same"] * len(names))
    with pytest.raises(ExportError, match=r"names-48000-same\.wav' would be written twice in one "
                                          r"run, for band 'a' at 48000 Hz and for band 'b' at "
                                          r"48000 Hz"):
        export.write_export(_named(["a", "b"]), [48000], "wav", tmp_path / "o")
    assert not (tmp_path / "o").exists()


COLLIDING = [["Woofer", "woofer"], ["mid range", "mid-range"], ["sum", "manifest"],
             ["Твитер", "低音"], [LONG + "woofer", LONG + "tweeter"]]


@pytest.mark.parametrize("names", COLLIDING)
def test_wav_export_gives_every_band_its_own_file(tmp_path, names):
    # Each WAV holds its own band: a filterless band's impulse response is 10^(gain/20).
    p = _named(names)
    res = export.write_export(p, [48000], "wav", tmp_path)
    assert len(set(res.files)) == len(names) == len(list(tmp_path.glob("*.wav")))
    m = json.loads(res.manifest.read_text())
    entry = m["checks"][0]
    for i, band in enumerate(p.bands):
        f = entry["bands"][i]["file"]
        assert entry["band_files"][band.name] == f == res.band_files[0][i].name
        rate, h = wavfile.read(tmp_path / f)
        assert h[0] == pytest.approx(10 ** (band.gain_db / 20), rel=1e-7)   # float32
        assert len(f.encode()) < 255
    assert sorted(m["files"]) == sorted(p.name for p in res.files)


@pytest.mark.parametrize("fmt", ["json", "csv", "text"])
@pytest.mark.parametrize("names", COLLIDING)
def test_coefficient_exports_keep_every_band_apart(tmp_path, fmt, names):
    # One file per rate holds every band under its own name; the manifest maps each band
    # to that file; a long project name gives a short file name too.
    p = _named(names, project_name=LONG)
    res = export.write_export(p, [48000, 44100], fmt, tmp_path)
    assert len(res.files) == 2 and all(len(f.name.encode()) < 255 for f in res.files)
    m = json.loads(res.manifest.read_text())
    for entry, f in zip(m["checks"], res.files):
        assert entry["band_files"] == {n: f.name for n in names}
        text = f.read_text(encoding="utf-8")
        if fmt == "json":   # JSON may escape non-ASCII names (\uXXXX): read it back
            assert [b["name"] for b in json.loads(text)["bands"]] == names
        else:
            assert all(n in text for n in names)


def test_manifest_records_the_driver_files_content_hashes(tmp_path):
    # SHA-256 of the file's text (FIPS 180-4, hashlib as reference).
    text = "# freq mag\n" + "".join(f"{f:g} 87\n" for f in (10, 100, 1000, 10000, 30000))
    (tmp_path / "w.txt").write_text(text)
    d = json.loads(json.dumps(EXAMPLE))
    d["bands"][0]["driver"] = {"file": "w.txt"}
    d["bands"][1]["driver"] = {"model": "tweeter", "fc": 900}
    res = export.write_export(project.from_dict(d, tmp_path), [48000], "json", tmp_path / "o")
    m = json.loads(res.manifest.read_text())
    assert m["drivers"][0] == {"band": "woofer", "file": "w.txt",
                               "content_hash": "sha256:" + hashlib.sha256(text.encode()).hexdigest()}
    assert m["drivers"][1] == {"band": "tweeter", "model": "tweeter",
                               "params": {"fc": 900.0, "q": 0.8}}


def _sha(path):
    """SHA-256 of a file's bytes by hashlib (FIPS 180-4), as the manifest writes it."""
    return "sha256:" + hashlib.sha256(path.read_bytes()).hexdigest()


def test_a_second_format_keeps_the_first_runs_entries(proj, tmp_path):
    first = export.write_export(proj, [48000], "json", tmp_path)
    second = export.write_export(proj, [44100, 48000], "csv", tmp_path)
    assert first.manifest == second.manifest
    m = json.loads(second.manifest.read_text())
    listed = {e["file"]: e for e in m["entries"]}
    on_disk = {p.name for p in tmp_path.iterdir() if p.name != second.manifest.name}
    assert set(listed) == on_disk == {f.name for f in first.files + second.files}
    for name, e in listed.items():
        assert e["sha256"] == _sha(tmp_path / name)
        assert e["format"] == ("json" if name.endswith(".json") else "csv")
    assert {r["id"]: r["file_formats"] for r in m["runs"]} == {1: ["json"], 2: ["csv"]}
    assert {e["run"] for e in m["entries"] if e["format"] == "json"} == {1}
    # The earlier run's check results stay with it.
    assert [c["sample_rate"] for c in m["runs"][0]["checks"]] == [48000]


def test_a_run_that_writes_a_file_again_replaces_its_entry(proj, tmp_path):
    export.write_export(proj, [48000], "json", tmp_path)
    export.write_export(proj, [48000], "json", tmp_path, arith="float32")
    m = json.loads((tmp_path / f"{export.slug(proj.name)}-manifest.json").read_text())
    assert len(m["entries"]) == 1 and m["entries"][0]["arith"] == "float32"
    assert m["entries"][0]["sha256"] == _sha(tmp_path / m["entries"][0]["file"])
    assert [r["id"] for r in m["runs"]] == [2]   # run 1 has no file left: dropped


def test_a_deleted_file_leaves_the_manifest(proj, tmp_path):
    a = export.write_export(proj, [48000], "json", tmp_path)
    a.files[0].unlink()
    b = export.write_export(proj, [48000], "csv", tmp_path)
    m = json.loads(b.manifest.read_text())
    assert [e["file"] for e in m["entries"]] == [b.files[0].name]


def test_an_old_manifest_without_entries_is_adopted(proj, tmp_path):
    a = export.write_export(proj, [48000], "json", tmp_path)
    m = json.loads(a.manifest.read_text())
    for k in ("entries", "runs", "run"):
        del m[k]
    a.manifest.write_text(json.dumps(m))
    b = export.write_export(proj, [48000], "text", tmp_path)
    got = json.loads(b.manifest.read_text())
    assert {e["file"] for e in got["entries"]} == {a.files[0].name, b.files[0].name}


def test_an_unreadable_manifest_is_replaced_with_a_note(proj, tmp_path):
    (tmp_path / f"{export.slug(proj.name)}-manifest.json").write_text("{not json")
    b = export.write_export(proj, [48000], "csv", tmp_path)
    assert any("could not be read" in n for n in b.notes)
    assert [e["file"] for e in json.loads(b.manifest.read_text())["entries"]] == \
        [b.files[0].name]


def test_several_formats_in_one_run_share_one_check(proj, tmp_path):
    res = export.write_export(proj, [44100, 48000], "json,csv,text,wav", tmp_path)
    m = json.loads(res.manifest.read_text())
    assert m["file_formats"] == ["json", "csv", "text", "wav"]
    assert len(m["runs"]) == 1 and len(m["runs"][0]["checks"]) == 2   # one check per rate
    nwav = 2 * len(proj.bands)
    assert len(m["entries"]) == len(res.files) == 3 * 2 + nwav
    assert {e["file"] for e in m["entries"]} == {p.name for p in res.files}
    for e in m["entries"]:
        assert e["sha256"] == _sha(tmp_path / e["file"])
    # The JSON and CSV files of one rate hold the same coefficients (read back independently).
    js = json.loads((tmp_path / m["checks"][1]["band_files_by_format"]["json"][proj.bands[0].name]
                     ).read_text())
    rows = list(csv.DictReader((tmp_path / m["checks"][1]["band_files_by_format"]["csv"][
        proj.bands[0].name]).open()))
    secs = [[float(r[k]) for k in ("b0", "b1", "b2", "a1", "a2")] for r in rows
            if r["band"] == proj.bands[0].name and r["item"] == "section"]
    assert secs == js["bands"][0]["biquads"]


def test_repeated_format_names_are_written_once(proj, tmp_path):
    res = export.write_export(proj, [48000], ["json", "json,csv"], tmp_path)
    assert res.formats == ["json", "csv"] and len(res.files) == 2


def test_unknown_format_among_several_refused(proj, tmp_path):
    with pytest.raises(ExportError, match=r"format: must be one of json, csv, text, wav, not 'xml'"):
        export.write_export(proj, [48000], "json,xml", tmp_path / "o")
    assert not (tmp_path / "o").exists()

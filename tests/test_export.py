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


def test_sections_paired_as_zpk2sos(proj):
    rx = export.export_rate(proj, 48000)
    d = rx.report.designs[0].sos
    ref = signal.zpk2sos(*signal.sos2zpk(d))  # scipy's pairing, poles nearest |z| = 1 last
    np.testing.assert_allclose(rx.bands[0].stored_sos, ref, rtol=0, atol=1e-12)


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
    rx = export.export_rate(_fragile(), 192000, "q1.15")
    r = rx.bands[0].arith
    assert not r.ok and r.failed_section == 1 and r.overflow_sections
    assert r.suggestions and any("integer bits" in s for s in r.suggestions)
    text = "\n".join(export.arith_text(rx))
    assert "band 'sub', section 1: q1.15 cannot hold the design at 192000 Hz" in text


def test_fragile_highpass_survives_float64():
    r = export.export_rate(_fragile(), 192000, "float64").bands[0].arith
    assert r.ok and r.deviation_db == 0.0 and r.max_coef_error == 0.0


def test_pole_radius_agrees_with_numpy_roots():
    rx = export.export_rate(_fragile(), 192000, "q2.30")
    b = rx.bands[0]
    ref = [np.max(np.abs(np.roots(s[3:6]))) for s in b.stored_sos]
    # Closed form vs numpy.roots of the stored denominators: 1e-9 (roots near a double root).
    np.testing.assert_allclose(b.arith.pole_radius, ref, rtol=0, atol=1e-9)


def test_numerators_scaled_and_scale_restores_response():
    # Audio EQ Cookbook: a +24 dB peak at 5 kHz, Q 1, 48 kHz has
    # b0 = (1 + alpha A) / (1 + alpha / A) = 2.05 > 2, so in q2.30 ([-2, 2)) its
    # numerator is shifted, while a1, a2 (|a1| = 1.48) fit.
    p = project.from_dict({
        "format": "crossplan-project", "version": 1, "name": "eq", "sample_rate": 48000,
        "bands": [{"name": "eq", "filters": [
            {"type": "peaking", "freq": 5000, "gain_db": 24.0, "q": 1.0}]}]})
    rx = export.export_rate(p, 48000, "q2.30")
    b = rx.bands[0]
    assert b.arith.shifts[0] >= 1 and b.scale == 2.0 ** sum(b.arith.shifts)
    f = _grid(48000)
    row = b.stored_sos[0, [0, 1, 2, 4, 5]]
    got = _numpy_chain([row], 48000, f) * b.scale
    ref = signal.sosfreqz(rx.report.designs[0].sos, worN=f, fs=48000)[1]
    # q2.30 rounding, 2^-31 per coefficient times the shift: 1e-6.
    assert np.max(np.abs(got - ref)) < 1e-6


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
    from planner.delays import plan_delays

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
    monkeypatch.setattr(export, "band_file_stems", lambda names, reserved=(): ["same"] * len(names))
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

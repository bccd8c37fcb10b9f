"""planner.present.text.text_report: every state it prints is the engine's verdict."""

import json

import pytest

from planner import config, engine, presets, project
from planner.present import text as report
from tests.conftest import two_way


def _raised(db, enforce=None, name="two-way"):
    """A preset with every band raised by ``db`` dB (Linkwitz-Riley and Butterworth bands never
    exceed 0 dB, Butterworth 1930 and Linkwitz 1976, so each peak is the band gain)."""
    d = json.loads(presets.text(name))
    for b in d["bands"]:
        b["gain_db"] = b.get("gain_db", 0.0) + db
    if enforce is not None:
        d["analysis"]["enforce_headroom"] = enforce
    return engine.analyse(project.from_dict(d))


def _line(text, head):
    return next(line for line in text.splitlines() if line.startswith(head))


def test_headroom_over_limit_reads_warn_not_fail_and_the_result_is_ok():
    text = report.text_report(_raised(0.2))
    assert _line(text, "headroom ").startswith("headroom   warn peak gain: woofer +0.2 dB")
    assert "(limit +0.05 dB, a warning only)" in _line(text, "headroom ")
    assert _line(text, "result ") == ("result     ok: all checks pass "
                                      "(headroom: warning only, not enforced)")
    assert "FAIL" not in text


def test_headroom_enforced_reads_fail_and_the_result_names_it():
    text = report.text_report(_raised(0.2, enforce=True))
    assert _line(text, "headroom ").startswith("headroom   FAIL peak gain:")
    assert "(limit +0.05 dB, enforced)" in _line(text, "headroom ")
    assert _line(text, "result ") == "result     FAIL: headroom"


def test_failed_result_names_every_failing_check():
    # LR2 without inversion: a null at the crossover, 180 deg apart (Linkwitz 1976).
    text = report.text_report(engine.analyse(project.from_dict(two_way(2))))
    assert _line(text, "result ") == "result     FAIL: sum, crossings"


@pytest.mark.parametrize("name", presets.names())
@pytest.mark.parametrize("db", [0.0, 0.3])
@pytest.mark.parametrize("enforce", [False, True])
def test_the_word_fail_appears_only_when_the_result_fails(name, db, enforce):
    r = _raised(db, enforce, name)
    text = report.text_report(r)
    assert ("FAIL" in text) == (not r.ok)
    assert _line(text, "result ").startswith("result     ok" if r.ok else "result     FAIL")


def test_text_follows_the_configured_limit(monkeypatch):
    monkeypatch.setattr(config, "HEADROOM_LIMIT_DB", 0.5)
    text = report.text_report(_raised(0.2, enforce=True))
    assert _line(text, "headroom ").startswith("headroom   ok   ")
    assert "(limit +0.5 dB, enforced)" in text
    assert _line(text, "result ") == "result     ok: all checks pass"

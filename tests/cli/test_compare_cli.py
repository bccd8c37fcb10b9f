"""``crossplan compare`` and ``crossplan plot --view impulse|step``, in-process."""

import json

import pytest

from planner.cli import main
from tests.conftest import two_way


@pytest.fixture
def lr4_file(write_project):
    return str(write_project(two_way(order=4, fc=2000.0)))


def test_compare_table_exit_0_and_80_columns(lr4_file, capsys):
    assert main(["compare", lr4_file]) == 0
    out = capsys.readouterr().out
    assert "IIR (project)" in out and "FIR (equivalent)" in out
    assert "sum, all FIR" in out
    assert max(len(line) for line in out.splitlines()) <= 80


def test_compare_json_keys(lr4_file, capsys):
    assert main(["compare", lr4_file, "--json", "--ripple-db", "0.5", "--atten-db", "50"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["ok"] is True and d["ripple_db"] == 0.5 and d["atten_db"] == 50
    b = d["bands"][0]
    assert b["status"] == "ok" and b["own"] == "iir"
    assert set(b) >= {"spec", "iir", "fir", "multiplies_ratio", "multiplies_ratio_direct"}
    assert set(d["sum"]["fir"]) >= {"max_dev_db", "at_hz", "ripple_db", "latency_samples",
                                    "latency_ms", "align_samples", "complete"}
    # The IIR side has no pre-ringing energy to count in dB: -inf is written as null.
    assert d["bands"][1]["iir"]["pre_ringing_db"] is None


def test_compare_unmet_spec_exit_1_with_the_reason(lr4_file, capsys):
    assert main(["compare", lr4_file, "--max-taps", "9"]) == 1
    out = capsys.readouterr().out
    assert "spec not met: band low: max_taps: an equiripple FIR meeting" in out


def test_compare_invalid_file_exit_2(write_project, capsys, example):
    example["bands"][0]["filters"][0]["freq"] = 30000
    assert main(["compare", str(write_project(example))]) == 2
    assert "30000 Hz is above Nyquist" in capsys.readouterr().err


def test_compare_atten_below_ripple_exit_2(lr4_file, capsys):
    assert main(["compare", lr4_file, "--ripple-db", "3", "--atten-db", "2"]) == 2
    assert "--atten-db: 2 dB must be above --ripple-db (3 dB)" in capsys.readouterr().err


def test_compare_bad_ripple_exit_2(lr4_file, capsys):
    assert main(["compare", lr4_file, "--ripple-db", "-1"]) == 2
    assert "must be a positive number of dB" in capsys.readouterr().err


@pytest.mark.parametrize("view", ["impulse", "step"])
def test_plot_time_views(lr4_file, capsys, monkeypatch, view):
    monkeypatch.setenv("NO_COLOR", "1")
    assert main(["plot", lr4_file, "--view", view, "--width", "70", "--height", "18"]) == 0
    out = capsys.readouterr().out
    assert f"{view} response" in out and "ms" in out
    assert "\x1b[" not in out
    assert max(len(line) for line in out.splitlines()) <= 70


def test_plot_span_ms_must_be_positive(lr4_file, capsys):
    assert main(["plot", lr4_file, "--view", "impulse", "--span-ms", "0"]) == 2
    assert "--span-ms: must be a positive number of ms" in capsys.readouterr().err

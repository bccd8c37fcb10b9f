"""Shared fixtures: the example project of the file format, as a dict and a file."""

import copy
import json

import pytest
from hypothesis import settings

# By default the property tests draw the same examples on every run (``derandomize``, seeded
# by each test's name), so that a run of the suite on a clean clone repeats the last one and
# CI does not fail on a draw nobody saw. New examples come from
# ``--hypothesis-profile=explore`` (random draws, the usual counts) or
# ``--hypothesis-profile=long``: the property tests that follow the profile (the end-to-end
# fuzz of tests/test_fuzz_pipeline.py) then run 10,000 random examples of each kind; by
# default they run a few dozen, so that CI stays fast.
settings.register_profile("repeatable", derandomize=True)
settings.register_profile("explore", derandomize=False)
settings.register_profile("long", max_examples=10_000, deadline=None, derandomize=False)
settings.load_profile("repeatable")

EXAMPLE = {
    "format": "crossplan-project", "version": 1,
    "name": "Garage monitor, 2-way",
    "sample_rate": 48000,
    "analysis": {"f_min": 20, "f_max": 20000, "points": 1024, "flatness_db": 1.0,
                 "phase_deg": 20},
    "bands": [
        {"name": "woofer", "gain_db": 0.0, "delay_ms": 0.0, "invert": False,
         "filters": [
             {"type": "highpass", "family": "butterworth", "order": 2, "freq": 35},
             {"type": "lowpass", "family": "linkwitz-riley", "order": 4, "freq": 2200}]},
        {"name": "tweeter", "gain_db": -2.5, "delay_ms": 0.0, "invert": False,
         "filters": [
             {"type": "highpass", "family": "linkwitz-riley", "order": 4, "freq": 2200},
             {"type": "peaking", "freq": 6000, "gain_db": -2.0, "q": 1.4}]},
    ],
}


@pytest.fixture
def example():
    """A fresh copy of the example project dict."""
    return copy.deepcopy(EXAMPLE)


@pytest.fixture
def write_project(tmp_path):
    """Write a project dict (or text) to a file and return its path."""
    def _write(data, name="p.json"):
        p = tmp_path / name
        p.write_text(data if isinstance(data, str) else json.dumps(data), encoding="utf-8")
        return p
    return _write


def two_way(order=4, family="linkwitz-riley", invert=False, fc=2000.0, fs=48000):
    """A plain 2-way project dict (no EQ) for checks with known answers."""
    return {
        "format": "crossplan-project", "version": 1, "name": "test 2-way", "sample_rate": fs,
        "analysis": {"f_min": 20, "f_max": 20000, "points": 512},
        "bands": [
            {"name": "low", "filters": [{"type": "lowpass", "family": family, "order": order,
                                          "freq": fc}]},
            {"name": "high", "invert": invert,
             "filters": [{"type": "highpass", "family": family, "order": order, "freq": fc}]},
        ],
    }

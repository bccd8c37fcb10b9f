"""``crossplan check`` on FIR projects: latency keys, refusals, progress bar, Ctrl-C.

Sources: the exit-code convention of the command line (0 pass, 1 fail or
unmet spec, 2 invalid file) and of POSIX shells for a command ended by
SIGINT (128 + 2 = 130); Kaiser 1974 for the tap estimate named in refusals
(computed by planner.dsp.fir.estimate_taps); Oppenheim and
Schafer, 3rd ed., sec. 5.7 for the (N-1)/2 latency.
"""

import io
import json
import os
import signal
import subprocess
import sys
import time

import pytest

from planner import progress
from planner.cli import main
from planner.cli.common import ProgressBar
from planner.dsp import fir


def _doc(*bands, fs=48000):
    return {"format": "crossplan-project", "version": 1, "name": "fir", "sample_rate": fs,
            "bands": [{"name": n, "filters": fl} for n, fl in bands]}


def _search_doc(atten=60.0, tw=800.0, **kw):
    """A woofer with an FIR lowpass whose tap count is searched, and an LR4 tweeter."""
    return _doc(("woofer", [{"type": "lowpass", "family": "fir", "method": "remez",
                             "freq": 2200, "transition_hz": tw, "atten_db": atten, **kw}]),
                ("tweeter", [{"type": "highpass", "family": "linkwitz-riley", "order": 4,
                              "freq": 2200}]))


class _Tty(io.StringIO):
    def isatty(self):
        return True


def test_preset_checks_with_latency(tmp_path, capsys):
    f = tmp_path / "p.json"
    assert main(["new", str(f), "--preset", "fir-three-way"]) == 0
    capsys.readouterr()
    assert main(["check", str(f), "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    # 1023 taps: (N-1)/2 = 511 samples = 10.6458 ms at 48 kHz.
    assert [b["latency_samples"] for b in d["bands"]] == [511.0, 511.0, 511.0]
    assert d["sum"]["latency_samples"] == 511.0
    assert d["sum"]["latency_ms"] == pytest.approx(511 / 48, rel=1e-12)
    assert d["sum"]["latencies_agree"] is True and d["warnings"] == []


def test_presets_lists_the_fir_preset(capsys):
    assert main(["presets"]) == 0
    assert any(line.startswith("fir-three-way ") for line in capsys.readouterr().out.splitlines())


def test_unmet_spec_exits_1_and_leaves_the_file(write_project, capsys):
    doc = _search_doc(atten=100.0, tw=50.0, max_taps=501)
    path = write_project(doc)
    before = path.read_bytes()
    assert main(["check", str(path)]) == 1
    err = capsys.readouterr().err
    spec = fir.FirSpec("lowpass", 2175.0, 2225.0, 0.1, 100.0)
    need = fir.estimate_taps(spec, 48000)
    assert err.startswith("crossplan: bands[0].filters[0].taps: lowpass spec (pass edge 2175 Hz,"
                          " stop edge 2225 Hz, ripple 0.1 dB, attenuation 100 dB) not met by "
                          "equiripple (remez) within max_taps 501 at 48000 Hz: reached ripple ")
    assert f"about {need} taps would be needed" in err
    assert "Traceback" not in err
    assert path.read_bytes() == before


def test_fixed_taps_that_miss_exit_1(write_project, capsys):
    path = write_project(_search_doc(atten=80.0, tw=100.0, taps=255))
    assert main(["check", str(path), "--json"]) == 1
    out, err = capsys.readouterr()
    assert out == "" and "not met by equiripple (remez) at 255 taps" in err


def test_even_taps_are_invalid_exit_2(write_project, capsys):
    path = write_project(_doc(("tweeter", [{"type": "highpass", "family": "fir", "freq": 2200,
                                            "taps": 254}])))
    assert main(["check", str(path)]) == 2
    assert capsys.readouterr().err.strip() == (
        "crossplan: bands[0].filters[0].taps: must be odd for a window highpass (type I linear "
        "phase: symmetric about a whole-sample centre, no forced zero at Nyquist), not 254")


def test_mixed_project_warns_in_the_text_report(write_project, capsys):
    path = write_project(_search_doc())
    assert main(["check", str(path)]) == 1
    out = capsys.readouterr().out
    lat = [line for line in out.splitlines() if "leads band" in line]
    assert len(lat) == 1
    assert lat[0].startswith("  - band tweeter (IIR, latency 0 samples) leads band woofer (FIR, "
                             "latency ")
    assert "add delay_ms" in lat[0] and lat[0].endswith(" to tweeter")
    assert "bands NOT aligned" in out


def test_cancel_exits_130(write_project, capsys):
    path = write_project(_search_doc(atten=61.1))
    before = path.read_bytes()
    with progress.scope(cancel=lambda: True):
        assert main(["check", str(path)]) == 130
    assert capsys.readouterr().err == "crossplan: cancelled\n"
    assert path.read_bytes() == before


def test_keyboard_interrupt_in_a_progress_hook_exits_130(write_project, capsys):
    path = write_project(_search_doc(atten=61.3))
    calls = []

    def hook(fraction, text):
        calls.append(fraction)
        if len(calls) == 3:
            raise KeyboardInterrupt     # what Ctrl-C raises in the main thread

    with progress.scope(report=hook):
        assert main(["check", str(path)]) == 130
    assert capsys.readouterr().err == "crossplan: cancelled\n"
    assert len(calls) == 3


def test_bar_drawn_only_on_a_terminal(write_project, capsys, monkeypatch):
    path = write_project(_search_doc(atten=61.5))
    tty = _Tty()
    monkeypatch.setattr(sys, "stderr", tty)
    assert main(["check", str(path)]) == 1      # the LR4/FIR mix fails its checks
    drawn = tty.getvalue()
    assert "\r\x1b[K[" in drawn and "% FIR lowpass 2.2 kHz (remez): fewest taps" in drawn
    assert drawn.endswith("\r\x1b[K")           # wiped before the report is printed
    # Not a terminal: nothing but the report.
    path2 = write_project(_search_doc(atten=61.6), name="q.json")
    plain = io.StringIO()
    monkeypatch.setattr(sys, "stderr", plain)
    main(["check", str(path2)])
    assert plain.getvalue() == ""


def test_bar_line_layout():
    bar = ProgressBar(io.StringIO(), width=60)
    assert bar.line(0.5, "x") == "[##########----------]  50% x"
    assert len(bar.line(0.25, "y" * 200)) == 59


@pytest.mark.skipif(not hasattr(os, "openpty"), reason="needs a pseudo-terminal (POSIX)")
def test_real_ctrl_c_during_a_search_exits_130(write_project):
    # Searches that run for a long while (100 dB over 30 Hz: beyond max_taps, every
    # trial a firls solve of up to 8191 taps; each band's takes seconds, six of them
    # tens of seconds, so the signal lands inside one even on a loaded machine);
    # SIGINT is sent once the bar shows the first search has begun, as a terminal's
    # Ctrl-C would.
    path = write_project(_doc(*[(f"band{k}", [{"type": "lowpass", "family": "fir",
                                                "method": "lsq", "freq": 2200 + 100 * k,
                                                "transition_hz": 30, "atten_db": 100}])
                                for k in range(6)]))
    before = path.read_bytes()
    master, slave = os.openpty()
    proc = subprocess.Popen([sys.executable, "-m", "planner", "check", str(path)],
                            stdout=subprocess.PIPE, stderr=slave, stdin=subprocess.DEVNULL)
    os.close(slave)
    seen = b""
    deadline = time.monotonic() + 300   # only a guard against hanging, not a timing check
    try:
        while b"fewest taps" not in seen and time.monotonic() < deadline:
            try:
                seen += os.read(master, 4096)
            except OSError:
                break
        assert b"fewest taps" in seen, seen
        proc.send_signal(signal.SIGINT)
        out, _ = proc.communicate(timeout=300)
        while True:
            try:
                chunk = os.read(master, 4096)
            except OSError:
                break
            if not chunk:
                break
            seen += chunk
    finally:
        if proc.poll() is None:
            proc.kill()
        os.close(master)
    assert proc.returncode == 130
    assert b"crossplan: cancelled" in seen and out == b""
    assert path.read_bytes() == before

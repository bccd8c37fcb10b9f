"""The command line, driven in-process through planner.cli.main."""

import json
import subprocess
import sys

import pytest

from planner.cli import main
from tests.conftest import two_way


def test_check_ok_exit_0(write_project, capsys):
    assert main(["check", str(write_project(two_way(4)))]) == 0
    out = capsys.readouterr().out
    assert "result     ok: all checks pass" in out


def test_check_fail_exit_1(write_project, capsys):
    assert main(["check", str(write_project(two_way(2)))]) == 1
    assert "invert high: that brings them to 0.0 deg apart, checked" in capsys.readouterr().out


def test_check_invalid_exit_2_without_traceback(write_project, capsys, example):
    example["bands"][1]["filters"][0]["freq"] = 30000
    assert main(["check", str(write_project(example))]) == 2
    err = capsys.readouterr().err
    assert err.strip() == ("crossplan: bands[1].filters[0].freq: 30000 Hz is above Nyquist "
                           "(24000 Hz) for sample_rate 48000")
    assert "Traceback" not in err


def test_check_json(write_project, capsys):
    assert main(["check", str(write_project(two_way(4))), "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["ok"] is True and d["sample_rate"] == 48000
    assert d["crossovers"][0]["bands"] == ["low", "high"]
    assert abs(d["sum"]["max_dev_db"]) < 1e-6


def test_check_json_all_muted_has_no_nan(write_project, capsys):
    d = two_way(4)
    for b in d["bands"]:
        b["mute"] = True
    assert main(["check", str(write_project(d)), "--json"]) == 1
    assert json.loads(capsys.readouterr().out)["sum"]["max_dev_db"] is None


def test_plot_no_color(write_project, capsys, monkeypatch):
    monkeypatch.setenv("NO_COLOR", "1")
    assert main(["plot", str(write_project(two_way(4))), "--width", "70", "--height", "18"]) == 0
    out = capsys.readouterr().out
    assert "\x1b[" not in out
    assert "1k" in out and "Hz" in out
    assert max(len(line) for line in out.splitlines()) <= 70


@pytest.mark.parametrize("view", ["phase", "delay"])
def test_plot_views(write_project, capsys, view):
    assert main(["plot", str(write_project(two_way(4))), "--view", view, "--no-color"]) == 0
    assert view in capsys.readouterr().out


def test_presets_lists_at_least_three(capsys):
    assert main(["presets"]) == 0
    lines = capsys.readouterr().out.strip().splitlines()
    assert len(lines) >= 3


def test_new_writes_preset_and_refuses_overwrite(tmp_path, capsys):
    out = tmp_path / "mine.json"
    assert main(["new", str(out), "--preset", "three-way"]) == 0
    assert main(["check", str(out)]) == 0
    assert main(["new", str(out), "--preset", "three-way"]) == 2
    assert "exists already" in capsys.readouterr().err


def test_new_unknown_preset(tmp_path, capsys):
    assert main(["new", str(tmp_path / "x.json"), "--preset", "nope"]) == 2
    assert "no preset called 'nope'" in capsys.readouterr().err


def test_usage_error_exit_2(capsys):
    assert main(["check"]) == 2


def test_check_does_not_import_textual(tmp_path):
    # The non-UI commands must not load the UI toolkit (start-up time, headless boxes).
    code = ("import sys; from planner.cli import main; "
            "rc = main(['check', sys.argv[1]]); "
            "print('TEXTUAL' if any(m.startswith('textual') for m in sys.modules) else 'CLEAN')")
    p = tmp_path / "p.json"
    p.write_text(json.dumps(two_way(4)))
    out = subprocess.run([sys.executable, "-c", code, str(p)], capture_output=True, text=True,
                         cwd=str(__import__("pathlib").Path(__file__).parents[2]))
    assert out.stdout.strip().endswith("CLEAN"), out.stderr


def test_python_dash_m(tmp_path):
    p = tmp_path / "p.json"
    p.write_text(json.dumps(two_way(2)))
    out = subprocess.run([sys.executable, "-m", "planner", "check", str(p)],
                         capture_output=True, text=True,
                         cwd=str(__import__("pathlib").Path(__file__).parents[2]))
    assert out.returncode == 1


def test_check_warns_of_a_fractional_delay_without_failing(write_project, capsys):
    # 0.48 samples at 48 kHz on the tweeter of an LR4 at 3 kHz: the check applies the delay
    # exactly and passes; the warning gives the cost of rounding it, -360 * 3000 * 0.48 /
    # 48000 = -10.8 deg at the crossing (Oppenheim and Schafer 3rd ed. sec. 2.7).
    d = two_way(4, fc=3000.0)
    d["bands"][1]["delay_ms"] = 0.01
    assert main(["check", str(write_project(d))]) == 0
    out = capsys.readouterr().out
    assert ("band high: its delay, 0.48 samples at 48000 Hz, is not a whole number of samples; "
            "rounded to 0, the phase difference low - high at 3 kHz changes by -10.8 deg"
            in out)


# Runs planner.cli.main in a fresh interpreter and prints the numerical
# libraries it loaded (output of the command itself is swallowed).
_LIGHT = """
import contextlib, io, json, sys
from planner.cli import main
with contextlib.redirect_stdout(io.StringIO()):
    rc = main(sys.argv[1:])
heavy = sorted(m for m in sys.modules if m.split('.')[0] in ('numpy', 'scipy'))
print(json.dumps({'rc': rc, 'heavy': heavy}))
"""


@pytest.mark.parametrize("argv", [
    ["--help"], ["--version"], ["presets"], ["new", "{tmp}/new.json"],
    ["new", "{tmp}/fir.json", "--preset", "fir-three-way"],
    *[[name, "--help"] for name in ("check", "plot", "compare", "export", "render", "measure",
                                    "edit", "new", "presets")]],
    ids=lambda a: " ".join(a).replace("{tmp}/", ""))
def test_parsing_and_presets_do_not_import_numpy_or_scipy(tmp_path, argv):
    # Start-up: argument parsing, the help texts and the preset commands use
    # only light modules; the numerical core loads when a command designs.
    args = [a.replace("{tmp}", str(tmp_path)) for a in argv]
    out = subprocess.run([sys.executable, "-c", _LIGHT, *args], capture_output=True, text=True,
                         cwd=str(__import__("pathlib").Path(__file__).parents[2]), timeout=60)
    d = json.loads(out.stdout.strip().splitlines()[-1])
    assert d == {"rc": 0, "heavy": []}, out.stderr


def test_check_does_import_the_core(tmp_path):
    # The other side of the test above (so that it cannot pass for a broken
    # wrapper): a command that designs loads numpy; scipy.signal only for the filters
    # that need it (a Bessel prototype here), not for Linkwitz-Riley crossovers.
    def heavy(d):
        p = tmp_path / "p.json"
        p.write_text(json.dumps(d))
        out = subprocess.run([sys.executable, "-c", _LIGHT, "check", str(p)],
                             capture_output=True, text=True, timeout=60,
                             cwd=str(__import__("pathlib").Path(__file__).parents[2]))
        r = json.loads(out.stdout.strip().splitlines()[-1])
        assert r["rc"] in (0, 1), out.stderr      # 1: a Bessel pair does not sum flat
        return r["heavy"]

    lr = heavy(two_way(4))
    assert "numpy" in lr and not [m for m in lr if m.startswith("scipy.signal")]
    bessel = two_way(4, family="bessel")
    assert "scipy.signal" in heavy(bessel)


_THREADS = """
import contextlib, io, json, sys, threading
seen = []
class Spy:
    def find_spec(self, name, path=None, target=None):
        if name == "scipy.signal":
            seen.append(threading.current_thread().name)
        return None
sys.meta_path.insert(0, Spy())
from planner.cli import main
with contextlib.redirect_stdout(io.StringIO()):
    rc = main(sys.argv[1:])
print(json.dumps({"rc": rc, "seen": seen}))
"""


def test_top_level_help_lists_every_command(capsys):
    from planner.cli import COMMANDS

    assert main(["--help"]) == 0
    out = capsys.readouterr().out
    for name, (_, help_) in COMMANDS.items():
        assert name in out and help_ in out


def test_command_help_shows_its_options(capsys):
    assert main(["compare", "--help"]) == 0
    out = capsys.readouterr().out
    assert "--iir-family" in out and "default 2047" in out and "(default 60)" in out


def test_new_writes_the_preset_text_unchanged(tmp_path, capsys):
    from planner import presets

    out = tmp_path / "p.json"
    assert main(["new", str(out), "--preset", "sub-sat"]) == 0
    assert out.read_text(encoding="utf-8") == presets.text("sub-sat")
    assert "Den subwoofer and satellites" in capsys.readouterr().out


def _raised_two_way(enforce=None):
    from planner import presets

    d = json.loads(presets.text("two-way"))
    for b in d["bands"]:
        b["gain_db"] = 0.2      # LR and Butterworth bands peak at their gain (Linkwitz 1976)
    if enforce is not None:
        d["analysis"]["enforce_headroom"] = enforce
    return d


def test_check_headroom_warning_exits_0(write_project, capsys):
    assert main(["check", str(write_project(_raised_two_way()))]) == 0
    out = capsys.readouterr().out
    assert "headroom   warn" in out and "FAIL" not in out


def test_check_headroom_enforced_exits_1(write_project, capsys):
    assert main(["check", str(write_project(_raised_two_way(True)))]) == 1
    assert "result     FAIL: headroom" in capsys.readouterr().out


def test_check_json_headroom(write_project, capsys):
    assert main(["check", str(write_project(_raised_two_way())), "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["ok"] is True and d["headroom"]["ok"] is False
    assert d["headroom"]["enforced"] is False and d["headroom"]["limit_db"] == 0.05
    assert main(["check", str(write_project(_raised_two_way(True))), "--json"]) == 1
    d = json.loads(capsys.readouterr().out)
    assert d["ok"] is False and d["headroom"]["enforced"] is True


def test_edit_moves_a_named_crossover_as_one_edit(write_project, capsys):
    raw = {"format": "crossplan-project", "version": 1, "name": "x", "sample_rate": 48000,
           "crossovers": {"xo": {"freq": 2000}},
           "bands": [{"name": "low", "filters": [{"type": "lowpass", "family": "linkwitz-riley",
                                                  "order": 4, "crossover": "xo"}]},
                     {"name": "high", "filters": [{"type": "highpass",
                                                   "family": "linkwitz-riley", "order": 4,
                                                   "crossover": "xo"}]}]}
    path = write_project(raw)
    assert main(["edit", str(path), "--crossover", "xo=2.5k"]) == 0
    out = capsys.readouterr().out
    assert "moved crossover 2000 Hz 'xo' (low / high) to 2.5 kHz: 2 filter(s)" in out
    assert out.splitlines()[-1] == "check: ok"
    d = json.loads(path.read_text())
    assert d["crossovers"] == {"xo": {"freq": 2500.0}}
    assert [b["filters"][0]["crossover"] for b in d["bands"]] == ["xo", "xo"]
    assert [b["filters"][0]["freq"] for b in d["bands"]] == [2500.0, 2500.0]


def test_edit_names_a_point_by_frequency_and_refuses_a_bad_key(write_project, tmp_path,
                                                               capsys):
    path = write_project(two_way())
    out = tmp_path / "named.json"
    assert main(["edit", str(path), "--name-crossover", "xo=2k", "--out", str(out)]) == 0
    d = json.loads(out.read_text())
    assert d["crossovers"] == {"xo": {"freq": 2000.0}}
    before = path.read_text()
    assert main(["edit", str(path), "--crossover", "5k=6k"]) == 2
    assert "no crossover named or at '5k'" in capsys.readouterr().err
    assert path.read_text() == before           # nothing saved


def test_plot_to_a_pipe_has_no_colour_codes(write_project, capsys, monkeypatch):
    # Output captured (not a terminal) and NO_COLOR unset: still plain text.
    monkeypatch.delenv("NO_COLOR", raising=False)
    assert main(["plot", str(write_project(two_way(4))), "--width", "70", "--height", "18"]) == 0
    out = capsys.readouterr().out
    assert "\x1b[" not in out and "1k" in out


def test_a_computing_command_imports_numpy_and_scipy_first(tmp_path):
    # The fast order (planner.cli._load_numerical_core): a command that always needs
    # scipy.signal (render) loads it and numpy near the bottom of the call stack, before
    # any module of the engine or the designs imports them. Read from
    # `python -X importtime -m planner ...`, which lists every module in the order its
    # import finished.
    p = tmp_path / "p.json"
    p.write_text(json.dumps(two_way(4)))
    out = subprocess.run([sys.executable, "-X", "importtime", "-m", "planner", "render",
                          str(p), "--impulse", "--out", str(tmp_path / "r"), "--quiet"],
                         capture_output=True, text=True, timeout=120,
                         cwd=str(__import__("pathlib").Path(__file__).parents[2]))
    assert out.returncode == 0, out.stderr
    order = [line.split("|")[-1].strip() for line in out.stderr.splitlines()
             if line.startswith("import time:") and "|" in line]
    first_planner_core = min(i for i, m in enumerate(order)
                             if m.startswith(("planner.dsp", "planner.engine", "planner.filters")))
    assert order.index("scipy.signal") < first_planner_core
    assert order.index("numpy") < first_planner_core


def test_a_filter_that_needs_scipy_imports_it_on_a_thread_of_its_own(tmp_path):
    # check leaves scipy.signal to the filters that need it (planner.lazyimport): deep in
    # the analysis, so its import runs on a new thread, with a frame stack of its own. An
    # import hook records the thread each import of scipy.signal ran on.
    p = tmp_path / "p.json"
    p.write_text(json.dumps(two_way(4, family="bessel")))
    out = subprocess.run([sys.executable, "-c", _THREADS, "check", str(p)], capture_output=True,
                         text=True, timeout=60,
                         cwd=str(__import__("pathlib").Path(__file__).parents[2]))
    d = json.loads(out.stdout.strip().splitlines()[-1])
    assert d["rc"] in (0, 1), out.stderr             # 1: a Bessel pair does not sum flat
    assert d["seen"] == ["import scipy.signal"]


def test_new_takes_the_preset_before_the_file(tmp_path, capsys):
    # "crossplan new three-way FILE" is the same as "--preset three-way".
    a, b = tmp_path / "a.json", tmp_path / "b.json"
    assert main(["new", "three-way", str(a)]) == 0
    assert main(["new", str(b), "--preset", "three-way"]) == 0
    assert a.read_text() == b.read_text()


def test_new_refuses_two_presets_and_extra_names(tmp_path, capsys):
    out = str(tmp_path / "c.json")
    assert main(["new", "two-way", out, "--preset", "three-way"]) == 2
    assert "names the preset twice" in capsys.readouterr().err
    assert main(["new", "two-way", out, "extra"]) == 2
    assert "not 3 names" in capsys.readouterr().err
    assert main(["new", "nope", out]) == 2
    assert "no preset called 'nope'" in capsys.readouterr().err
    assert not (tmp_path / "c.json").exists()

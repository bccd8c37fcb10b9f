"""docs/tutorial.md says every output it shows is what the commands print: each step is
made again here, as the tutorial describes it, and its output compared with the text."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from planner.cli import main

TUTORIAL = (Path(__file__).resolve().parents[1] / "docs" / "tutorial.md").read_text(
    encoding="utf-8")


def _shown(command: str, nth: int) -> str:
    """The output the tutorial shows after its ``nth`` ``$ command`` line."""
    marker = f"$ {command}\n"
    at = -1
    for _ in range(nth + 1):
        at = TUTORIAL.index(marker, at + 1)
    start = at + len(marker)
    return TUTORIAL[start:TUTORIAL.index("```", start)]


def _printed(capsys, *args) -> str:
    capsys.readouterr()
    main(list(args))
    return capsys.readouterr().out


def _edit(path: Path, change) -> None:
    d = json.loads(path.read_text())
    change(d)
    path.write_text(json.dumps(d))


def _set(d, band, type_, **values):
    for f in d["bands"][band]["filters"]:
        if f["type"] == type_:
            f.update(values)


def test_every_step_prints_what_the_tutorial_shows(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    shed = tmp_path / "shed.json"
    check = "crossplan check shed.json"
    assert _printed(capsys, "new", "shed.json", "--preset", "two-way") == \
        TUTORIAL.split("$ crossplan new shed.json --preset two-way\n")[1].split("$ ")[0]
    assert _printed(capsys, "check", "shed.json") == _shown(check, 0)

    # 2. the woofer's lowpass alone to 1.8 kHz, the project renamed
    def step2(d):
        d["name"] = "Garden-shed practice monitor"
        _set(d, 0, "lowpass", freq=1800)
    _edit(shed, step2)
    assert _printed(capsys, "check", "shed.json") == _shown(check, 1)

    # 3. the tweeter's highpass too, a 2 dB pad, no EQ dip, modelled drivers
    def step3(d):
        _set(d, 1, "highpass", freq=1800)
        tw = d["bands"][1]
        tw["filters"] = [f for f in tw["filters"] if f["type"] != "peaking"]
        tw["gain_db"] = -2.0
        d["bands"][0]["driver"] = {"model": "closed-box", "fc": 58, "qtc": 0.7,
                                   "sensitivity_db": 86.0, "role": "woofer"}
        tw["driver"] = {"model": "tweeter", "fc": 800, "sensitivity_db": 88.0,
                        "role": "tweeter"}
    _edit(shed, step3)
    assert _printed(capsys, "check", "shed.json") == _shown(check, 2)

    # 4. the suggested delay, then the range the monitor plays
    def step4(d):
        d["bands"][1]["delay_ms"] = 0.04837
        d["analysis"]["f_min"] = 80
    _edit(shed, step4)
    assert _printed(capsys, "check", "shed.json") == _shown(check, 3)
    _edit(shed, lambda d: d["analysis"].__setitem__("f_min", 100))
    assert _printed(capsys, "check", "shed.json") == _shown(check, 4)

    # 5. the export, and the tweeter's part of the 48 kHz text file
    export = "crossplan export shed.json --rate 48000 --rate 96000 --format text --out dsp/"
    assert _printed(capsys, *export.split()[1:]) == _shown(export, 0)
    text = (tmp_path / "dsp" / "garden-shed-practice-monitor-48000.txt").read_text()
    part = text[text.index("band tweeter"):]
    part = part[:part.index("  fir            none") + len("  fir            none")] + "\n"
    assert part in TUTORIAL


@pytest.mark.parametrize("snippet", [
    '"driver": {"model": "closed-box", "fc": 58, "qtc": 0.7, "sensitivity_db": 86.0, '
    '"role": "woofer"}',
    '"driver": {"model": "tweeter", "fc": 800, "sensitivity_db": 88.0, "role": "tweeter"}',
])
def test_the_drivers_the_test_gives_are_the_tutorials(snippet):
    assert snippet in TUTORIAL

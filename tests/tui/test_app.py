"""The editor driven with Textual's Pilot at 80x24: model state first, screen text second.

The preset "two-way" is woofer [BW2 highpass 25 Hz, LR4 lowpass 2.4 kHz] and
tweeter [LR4 highpass 2.4 kHz, peaking -0.8 dB at 7.5 kHz].
"""

import pytest

from planner import engine, project
from planner.present.text import SAFETY_NOTE
from planner.tui import views
from planner.tui.app import CrossplanApp
from planner.tui.screens import ChoiceScreen, HelpScreen, PathScreen, SettingsScreen
from planner.tui.widgets import PlotView

from tests.tui.tui_helpers import screen_text, settle

SIZE = (80, 24)


def make_app(path=None, name="two-way"):
    proj = project.load(path) if path else project.load_preset(name)
    return CrossplanApp(proj, str(path) if path else None)


async def goto_freq_field(app, pilot, filter_index=1):
    """Select filter ``filter_index`` of the selected band and enter its form (freq field)."""
    app.query_one("#chain").focus()
    for _ in range(filter_index):
        await pilot.press("down")
    await pilot.press("enter")
    await pilot.pause()
    assert app.focused.id == "filter-freq"


async def test_typing_2_5k_sets_the_crossover_and_the_checks_follow():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        before = screen_text(app)
        old_cross = app.report.worst_crossing
        await goto_freq_field(app, pilot)
        await pilot.press(*"2.5k", "enter", "n")   # n: only this side of the crossover
        await settle(app, pilot)
        assert app.project.bands[0].filters[1].params["freq"] == 2500.0
        assert app.history.dirty
        # The check readout is the one of the new project, and it changed.
        fresh = engine.analyse(app.project)
        assert app.report.project is app.project
        assert app.report.worst_crossing.phase_diff_deg == pytest.approx(
            fresh.worst_crossing.phase_diff_deg, abs=1e-9)  # same computation, same inputs
        assert app.report.worst_crossing.phase_diff_deg != old_cross.phase_diff_deg
        after = screen_text(app)
        for line in views.check_lines(fresh):
            assert line in after
        assert after != before
        assert "LR4 lowpass 2.5 kHz" in after
        assert "[modified]" in after


async def test_above_nyquist_is_refused_in_place_and_nothing_changes():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        await goto_freq_field(app, pilot)
        await pilot.press(*"30k", "enter")
        await settle(app, pilot)
        assert app.project is p0
        assert not app.history.can_undo and not app.history.dirty
        text = screen_text(app)
        assert "refused: 30000 Hz is above" in text
        assert "Nyquist (24000 Hz)" in text
        assert app.focused.has_class("-refused")


async def test_q_zero_is_refused():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        app.query_one("#bands").focus()
        await pilot.press("down")          # tweeter
        app.query_one("#chain").focus()
        await pilot.press("down")          # its peaking EQ
        await pilot.pause()
        assert app.filter_i == 1 and app.band_i == 1
        app.query_one("#filter-form").focus_field("q")
        await pilot.press(*"0", "enter")
        await settle(app, pilot)
        assert app.project is p0
        assert "refused: Q must be above 0" in screen_text(app)


async def test_a_word_is_refused_with_examples():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        await goto_freq_field(app, pilot)
        await pilot.press(*"lots", "enter")
        await pilot.pause()
        assert app.project is p0
        assert "refused: cannot read" in screen_text(app)
        refusal = app.query_one("#filter-form .refusal")
        assert "cannot read 'lots' as a frequency (e.g. 2k" in str(refusal.render())


async def test_undo_and_redo():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await goto_freq_field(app, pilot)
        await pilot.press(*"2.5k", "enter", "n")   # n: only this side of the crossover
        await settle(app, pilot)
        await pilot.press("ctrl+z")
        await settle(app, pilot)
        assert app.project.bands[0].filters[1].params["freq"] == 2400.0
        assert not app.history.dirty
        assert "LR4 lowpass 2.4 kHz" in screen_text(app)
        await pilot.press("ctrl+y")
        await settle(app, pilot)
        assert app.project.bands[0].filters[1].params["freq"] == 2500.0


async def test_save_then_reload_gives_the_same_project(two_way_file):
    app = make_app(two_way_file)
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await goto_freq_field(app, pilot)
        await pilot.press(*"2.5k", "enter", "n")   # n: only this side of the crossover
        await settle(app, pilot)
        app.query_one("#bands").focus()
        await pilot.press("i")               # invert the woofer
        await settle(app, pilot)
        await pilot.press("ctrl+s")
        await settle(app, pilot)
        assert not app.history.dirty
        reloaded = project.load(two_way_file)
        assert reloaded == app.project
        assert reloaded.bands[0].invert and reloaded.bands[0].filters[1].params["freq"] == 2500.0
        assert "[modified]" not in screen_text(app)


async def test_save_of_the_demo_asks_for_a_path(tmp_path):
    app = make_app()
    target = tmp_path / "mine.json"
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await pilot.press("ctrl+s")
        await pilot.pause()
        assert isinstance(app.screen, PathScreen)
        await pilot.press(*str(target), "enter")
        await settle(app, pilot)
        assert project.load(target) == app.project
        assert app.path == str(target)


async def test_quit_with_unsaved_edits_asks_first():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.query_one("#bands").focus()
        await pilot.press("m")                # mute the woofer: an unsaved edit
        await settle(app, pilot)
        assert app.project.bands[0].mute
        await pilot.press("q")
        await pilot.pause()
        assert isinstance(app.screen, ChoiceScreen)
        assert "unsaved edits" in screen_text(app)
        await pilot.press("escape")           # keep editing
        await pilot.pause()
        assert not isinstance(app.screen, ChoiceScreen) and app.is_running
        await pilot.press("q")
        await pilot.pause()
        await pilot.press("d")                # discard and quit
        await pilot.pause()
    assert app.return_code == 0


async def test_quit_without_edits_does_not_ask():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await pilot.press("q")
        await pilot.pause()
        asked = any(isinstance(s, ChoiceScreen) for s in app.screen_stack)
    assert app.return_code == 0 and not asked


async def test_band_keys_invert_mute_solo_and_markers():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.query_one("#bands").focus()
        await pilot.press("down", "i", "s")
        await settle(app, pilot)
        b = app.project.bands[1]
        assert b.invert and b.solo and not b.mute
        assert app.project.active() == [False, True]
        text = screen_text(app)
        assert "-SI" in text            # tweeter markers: not muted, solo, inverted
        assert "off" in text            # the woofer is not summed


async def test_add_duplicate_move_and_remove_bands():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.query_one("#bands").focus()
        await pilot.press("a")
        await settle(app, pilot)
        assert [b.name for b in app.project.bands] == ["woofer", "band 3", "tweeter"]
        assert app.band_i == 1
        app.query_one("#bands").focus()
        await pilot.press("x")
        await settle(app, pilot)
        app.query_one("#bands").focus()
        await pilot.press("c")
        await settle(app, pilot)
        assert [b.name for b in app.project.bands][:2] == ["woofer", "woofer copy"] or \
            [b.name for b in app.project.bands][1:] == ["tweeter", "tweeter copy"]
        app.query_one("#bands").focus()
        await pilot.press("left_square_bracket")
        await settle(app, pilot)
        assert len(app.project.bands) == 3


async def test_add_filter_then_pick_its_type():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.query_one("#chain").focus()
        await pilot.press("a")                 # new 0 dB peaking EQ after filter 1
        await settle(app, pilot)
        assert app.project.bands[0].filters[1].type == "peaking"
        assert app.focused.id == "pick-list"   # the type list, not a text field
        await pilot.press("n", "enter")
        await settle(app, pilot)
        f = app.project.bands[0].filters[1]
        assert f.type == "notch" and f.params["freq"] == 1000.0
        app.query_one("#chain").focus()
        await pilot.press("b")                 # bypass it
        await settle(app, pilot)
        assert app.project.bands[0].filters[1].bypass
        await pilot.press("x")
        await settle(app, pilot)
        assert [f.type for f in app.project.bands[0].filters] == ["highpass", "lowpass"]


async def test_nudges_frequency_gain_and_q():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.query_one("#chain").focus()
        await pilot.press("down", "right")
        await settle(app, pilot)
        # one equal-tempered semitone: a factor 2**(1/12) (1/12 octave), rounded to 0.01 Hz
        assert app.project.bands[0].filters[1].params["freq"] == pytest.approx(
            2400 * 2 ** (1 / 12), abs=0.005)
        app.query_one("#bands").focus()
        await pilot.press("down")
        app.query_one("#chain").focus()
        await pilot.press("down", "plus", "greater_than_sign")
        await settle(app, pilot)
        f = app.project.bands[1].filters[1]
        assert f.params["gain_db"] == pytest.approx(-0.3)
        assert f.params["q"] == pytest.approx(2.2)
        app.query_one("#bands").focus()
        await pilot.press("minus")
        await settle(app, pilot)
        assert app.project.bands[1].gain_db == -0.5


async def test_views_cycle_and_the_cursor_reads_values():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.query_one("#chain").focus()
        plot = app.query_one(PlotView)
        assert plot.data.title.startswith("magnitude")
        f0 = app.cursor_hz
        await pilot.press("full_stop")
        assert app.cursor_hz == pytest.approx(f0 * 2 ** (1 / 12))
        assert "at 2.54 kHz dB: woofer" in screen_text(app)
        for expected in ("phase", "delay", "phase difference", "level difference"):
            await pilot.press("v")
            assert app.view == expected
        assert plot.data.title.startswith("woofer - tweeter near 2.4 kHz")
        assert "woofer - tweeter level" in screen_text(app)
        for expected in ("impulse", "step", "magnitude"):
            await pilot.press("v")
            assert app.view == expected
            if expected != "magnitude":
                assert f"{expected} response (time in ms; z/Z zoom)" in screen_text(app)
                assert "peak ms/value: woofer" in screen_text(app)


async def test_settings_refuse_a_rate_that_puts_filters_above_nyquist():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        await pilot.press("e")
        await pilot.pause()
        assert isinstance(app.screen, SettingsScreen)
        assert app.focused.id == "settings-name"     # the project's name comes first
        await pilot.press("down")
        assert app.focused.id == "settings-sample_rate"
        await pilot.press(*"8k", "enter")
        await settle(app, pilot)
        assert app.project is p0
        assert "refused: 8000 Hz puts 1 filter(s) at or above" in screen_text(app)
        app.focused.value = ""
        await pilot.press(*"96k", "enter")
        await settle(app, pilot)
        assert app.project.sample_rate == 96000
        assert app.report.project.sample_rate == 96000
        await pilot.press("escape")
        await pilot.pause()
        assert "96 kHz" in screen_text(app)


async def test_selecting_a_warning_selects_its_filter():
    proj = project.load_preset("two-way")
    from planner import edits
    proj = edits.set_filter_params(proj, 1, 1, gain_db=8.0)   # a boost above 6 dB warns
    app = CrossplanApp(proj, None)
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        boost = [w for w in app.report.warnings if w.code == "boost"]
        assert boost and (boost[0].band, boost[0].filter) == (1, 1)
        await pilot.press("w")
        wl = app.query_one("#warnings")
        assert app.focused is wl
        codes = [w.code for w in app.report.warnings]
        wl.highlighted = codes.index("boost")
        await pilot.press("enter")
        await pilot.pause()
        assert (app.band_i, app.filter_i) == (1, 1)
        assert wl is not app.focused


async def test_help_lists_keys_and_the_safety_note():
    app = make_app()
    async with app.run_test(size=(100, 60)) as pilot:
        await settle(app, pilot)
        await pilot.press("f1")
        await pilot.pause()
        await pilot.pause()
        assert isinstance(app.screen, HelpScreen)
        shown = screen_text(app)
        assert "KEYS" in shown and "Undo" in shown
        help_text = str(app.screen.query_one("#help-text").render())
        assert SAFETY_NOTE in help_text           # start low, protect tweeters, limits, rules
        # key names are shown as text, not read as markup ("[" moves up)
        assert any(line.split()[:3] == ["[", "Move", "up"] for line in help_text.splitlines()
                   if line.strip())
        await pilot.press("escape")
        await pilot.pause()
        assert not isinstance(app.screen, HelpScreen)


async def test_command_palette_runs_an_action():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await pilot.press("ctrl+p")
        await pilot.pause()
        await pilot.press(*"Invert band")
        await pilot.pause(0.5)
        await pilot.press("enter")
        await settle(app, pilot)
        assert app.project.bands[0].invert


async def test_resize_and_no_horizontal_scroll():
    app = make_app(name="three-way")
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        for size in ((120, 40), (80, 24), (60, 20), (80, 24)):
            await pilot.resize_terminal(*size)
            await pilot.pause()
            side = app.query_one("#side")
            assert side.max_scroll_x == 0
            lines = screen_text(app).splitlines()
            assert len(lines) == size[1] and all(len(line) <= size[0] for line in lines)


async def test_no_color_plots_plain_text(monkeypatch):
    monkeypatch.setenv("NO_COLOR", "1")
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        plot = app.query_one(PlotView)
        assert plot.color is False
        rendered = plot.render()
        assert not rendered.spans and "\x1b" not in rendered.plain


async def test_leaving_a_refused_field_shows_the_project_value_again():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        await goto_freq_field(app, pilot)
        await pilot.press(*"30k", "enter")
        await pilot.pause()
        assert "refused:" in screen_text(app)
        await pilot.press("escape")           # back to the chain
        await pilot.pause()
        assert app.project is p0
        assert app.query_one("#filter-freq").value == "2.4 kHz"
        assert "refused:" not in screen_text(app)


FRAGILE = {  # a 30 Hz 8th-order Butterworth highpass at 192 kHz: poles crowd z = 1
    "format": "crossplan-project", "version": 1, "name": "fragile", "sample_rate": 192000,
    "analysis": {"f_min": 100},
    "bands": [{"name": "sub", "filters": [
        {"type": "highpass", "family": "butterworth", "order": 8, "freq": 30}]}]}


async def test_target_arith_shows_per_band_in_checks_and_warnings(tmp_path):
    # The fragile case cannot be held in q1.15 (Oppenheim and Schafer 3rd ed. sec. 6.7:
    # poles near z = 1 move most under coefficient rounding); float32 holds it.
    path = tmp_path / "fragile.json"
    project.save(project.from_dict(FRAGILE), path)
    app = make_app(path)
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        assert "arith " not in screen_text(app)
        await pilot.press("e")
        await pilot.pause()
        app.screen.query_one("#settings-arith").focus()
        await pilot.press(*"q1.15", "enter")
        await settle(app, pilot)
        assert app.project.analysis.arith == "q1.15"
        await pilot.press("escape")
        await settle(app, pilot)
        text = screen_text(app)
        assert "arith     FAIL q1.15: cannot hold sub sec 1" in text
        assert any("band sub, section 1: q1.15 cannot hold the design" in w.text
                   for w in app.query_one("#warnings")._items)
        await pilot.press("ctrl+z")
        await settle(app, pilot)
        assert app.project.analysis.arith is None and "arith " not in screen_text(app)


async def test_bad_target_arith_is_refused_in_place():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        await pilot.press("e")
        await pilot.pause()
        app.screen.query_one("#settings-arith").focus()
        await pilot.press(*"q0.9", "enter")
        await settle(app, pilot)
        assert app.project is p0
        assert "refused: 'q0.9' is not a known format" in screen_text(app)


async def test_settings_fields_move_with_up_and_down():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await pilot.press("e")
        await pilot.pause()
        assert app.focused.id == "settings-name"     # the project's name comes first
        await pilot.press("down")
        assert app.focused.id == "settings-sample_rate"
        await pilot.press("down", "down")
        assert app.focused.id == "settings-f_max"
        await pilot.press("up")
        assert app.focused.id == "settings-f_min"


def _with_fir_lowpass(p, **params):
    """Project ``p`` with the woofer's lowpass replaced by an FIR lowpass of ``params``."""
    d = project.to_dict(p)
    d["bands"][0]["filters"][1] = {"type": "lowpass", "family": "fir", **params}
    return project.from_dict(d)   # as the editor's edits: designed in the worker


async def test_an_fir_spec_that_cannot_be_met_is_refused_and_the_edit_undone():
    # Kaiser 1974: 80 dB over 100 Hz at 48 kHz needs about 1600 taps; 101 cannot.
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        bad = _with_fir_lowpass(p0, method="remez", freq=2400, transition_hz=100,
                                atten_db=80, max_taps=101)
        await app.commit(bad, "woofer lowpass FIR")
        await settle(app, pilot)
        await pilot.pause()
        assert app.project is p0
        assert app.report.project is p0
        assert any("refused:" in n.message and "max_taps 101" in n.message
                   for n in app._notifications)


async def test_a_long_fir_design_shows_progress_and_escape_cancels_it():
    import asyncio

    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        # About 5000 taps (80 dB over 30 Hz): several remez trials of a second or more.
        slow = _with_fir_lowpass(p0, method="remez", freq=2400, transition_hz=30, atten_db=80)
        await app.commit(slow, "woofer lowpass FIR")
        for _ in range(300):
            await asyncio.sleep(0.05)
            if app._designing:
                break
        assert app._designing
        assert "designing [" in screen_text(app) and "Escape cancels" in screen_text(app)
        await pilot.press("escape")
        await settle(app, pilot)
        await pilot.pause()
        assert app.project is p0 and not app._designing
        assert any("design cancelled" in n.message for n in app._notifications)


async def test_compare_screen_shows_iir_and_fir_side_by_side():
    # The fir-three-way preset is a complementary FIR split: its all-FIR sum is flat
    # (a delayed impulse, Oppenheim and Schafer 3rd ed. ch. 7), shown as +0.00 dB.
    from planner.tui.screens import CompareScreen

    app = make_app(name="fir-three-way")
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await pilot.press("C")
        await pilot.pause()
        screen = app.screen
        assert isinstance(screen, CompareScreen)
        await app.workers.wait_for_complete([w for w in app.workers if w.group == "compare"])
        await pilot.pause()
        c = screen.comparison
        assert c is not None and [b.name for b in c.bands] == ["woofer", "mid", "tweeter"]
        assert abs(c.fir_sum.max_dev_db) < 0.01
        text = screen_text(app)
        assert "IIR (equivalent)" in text and "FIR (project)" in text
        await pilot.press("escape")
        await pilot.pause()
        assert not isinstance(app.screen, CompareScreen)


async def test_escape_stops_a_running_comparison():
    # An LR8 2-way at 120 Hz, 96 kHz: its FIR equivalents are searched (both below the
    # 2047 taps compare searches by default), which takes seconds.
    import asyncio

    from planner.dsp import fir
    from planner.tui.screens import CompareScreen
    from tests.conftest import two_way

    fir.clear_design_cache()             # a search run before would be cached
    app = CrossplanApp(project.from_dict(two_way(order=8, fc=120.0, fs=96000)), None)
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        # The pilot's press waits for the app to be idle, which the progress updates of the
        # search put off to its end: press without waiting, and watch the screen meanwhile.
        pressed = asyncio.ensure_future(pilot.press("C"))
        for _ in range(200):
            await asyncio.sleep(0.05)
            if "designing [" in screen_text(app):
                break
        assert isinstance(app.screen, CompareScreen) and app.screen.running
        await pilot.press("escape")
        await pressed
        await app.workers.wait_for_complete([w for w in app.workers if w.group == "compare"])
        await pilot.pause()
        assert not app.screen.running and app.screen.comparison is None
        assert "comparison stopped" in screen_text(app)
        await pilot.press("escape")
        await pilot.pause()
        assert not isinstance(app.screen, CompareScreen)


async def test_a_file_with_an_unmet_fir_spec_opens_and_says_why(tmp_path):
    # Files open without designing (the worker designs them): a spec that cannot be met
    # reads as a failed analysis naming the filter, not a crash or a frozen screen.
    p = _with_fir_lowpass(project.load_preset("two-way"), method="remez", freq=2400,
                          transition_hz=100, atten_db=80, max_taps=101)
    path = tmp_path / "bad.json"
    path.write_text(project.dumps(p))
    app = CrossplanApp(project.load(path), str(path))
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        assert app.report is None
        text = " ".join(screen_text(app).split())     # the message wraps in the check bar
        assert "analysis FAIL: bands[0].filters[1].taps" in text and "max_taps 101" in text
        assert "no plot: the analysis failed" in text


async def test_typing_a_split_crossover_moves_it_in_every_band():
    app = make_app(name="fir-three-way")
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        field = app.query_one("#filter-crossovers")
        field.focus()
        field.value = ""
        await pilot.press(*"250, 3k", "enter")
        await settle(app, pilot)
        assert [b.filters[0].params["crossovers"] for b in app.project.bands] == \
            [(250.0, 3000.0)] * 3
        assert app.report.project is app.project and abs(app.report.max_dev_db) < 1e-9
        band_field = app.query_one("#filter-band")
        band_field.focus()
        band_field.value = ""
        await pilot.press("2", "enter")       # a field named "band" is a filter field here
        await settle(app, pilot)
        assert app.project.bands[0].filters[0].params["band"] == 2
        assert "split band 0" in " ".join(screen_text(app).split())   # now missing: warned


@pytest.mark.parametrize("text", ["300, 2.8k", "300 Hz, 2.8 kHz", "300 2800"])
def test_a_list_of_frequencies_is_read_as_people_write_it(text):
    from planner.filters import lookup
    from planner.tui.app import _parse_field

    spec = next(s for s in lookup("split", "fir").fields if s.name == "crossovers")
    assert _parse_field(spec, text) == [300.0, 2800.0]


async def test_fractional_delay_warning_shows_in_the_editor(tmp_path):
    # The editor lists the engine's warnings: a tweeter delayed 0.48 samples at 48 kHz
    # (0.01 ms) gets the fractional-delay warning with the cost of rounding it.
    d = project.to_dict(project.load_preset("two-way"))
    d["bands"][1]["delay_ms"] = 0.01
    path = tmp_path / "frac.json"
    project.save(project.from_dict(d), path)
    app = make_app(path)
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        items = [w.text for w in app.query_one("#warnings")._items]
        assert any(t.startswith("band tweeter: its delay, 0.48 samples at 48000 Hz, is not a "
                                "whole number of samples; rounded to 0, the phase difference")
                   for t in items), items


async def test_settings_headroom_fail_enforces_the_headroom_check():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await pilot.press("e")
        await pilot.pause()
        field = app.screen.query_one("#settings-enforce_headroom")
        assert field.value == "warn"          # the default: a warning only
        field.focus()
        field.value = ""
        await pilot.press(*"fail", "enter")
        await settle(app, pilot)
        assert app.project.analysis.enforce_headroom is True
        await pilot.press("ctrl+z")
        await settle(app, pilot)
        assert app.project.analysis.enforce_headroom is False


async def test_settings_headroom_refuses_other_words():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        await pilot.press("e")
        await pilot.pause()
        field = app.screen.query_one("#settings-enforce_headroom")
        field.focus()
        field.value = ""
        await pilot.press(*"maybe", "enter")
        await settle(app, pilot)
        assert app.project is p0
        assert "refused: must be 'fail'" in screen_text(app)


@pytest.mark.parametrize("text, on", [("fail", True), (" Yes ", True), ("warn", False),
                                      ("off", False)])
def test_headroom_words(text, on):
    from planner.tui.app import _parse_headroom

    assert _parse_headroom(text) is on


def test_headroom_word_refused_names_the_field():
    from planner.errors import ProjectError
    from planner.tui.app import _parse_headroom

    with pytest.raises(ProjectError, match=r"enforce_headroom: must be 'fail' .* not 'maybe'"):
        _parse_headroom("maybe")


async def test_settings_hold_the_solvers_bounds_and_refuse_bad_ones():
    # The solvers' fields of the settings screen write the file's "solve" section (an
    # undoable edit each); a name align does not know, or a bound out of range, is refused.
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await pilot.press("e")
        await pilot.pause()
        assert isinstance(app.screen, SettingsScreen)

        async def typed(field, text):
            box = app.screen.query_one(f"#settings-{field}")
            box.focus()
            box.value = text
            await pilot.press("enter")
            await settle(app, pilot)
            return box

        assert app.screen.query_one("#settings-solve_vary").value == "delay, invert"
        await typed("solve_vary", "delay, gain")
        assert app.project.solve.vary == ("delay", "gain")
        await typed("solve_vary", "delay, loudness")
        assert app.project.solve.vary == ("delay", "gain")
        assert "refused: " in screen_text(app) and "'loudness'" in screen_text(app)
        delay = await typed("solve_max_delay_ms", "4.5")
        assert app.project.solve.max_delay_ms == 4.5 and delay.value == "4.5 ms"
        await typed("solve_max_delay_ms", "-1")
        assert app.project.solve.max_delay_ms == 4.5
        assert "refused: " in screen_text(app)
        await typed("solve_limit_db", "6")
        assert app.project.solve.limit_db == 6.0
        await pilot.press("ctrl+z")
        await settle(app, pilot)
        assert app.project.solve.limit_db == 12.0
        assert project.to_dict(app.project)["solve"]["max_delay_ms"] == 4.5

"""Plots in the editor: the time views zoom, the difference views' pair is picked, and
without colour the bands are told apart by letters (Pilot at 80x24).

The preset "three-way": woofer / mid cross at 350 Hz, mid / tweeter at 3 kHz.
"""

from planner.tui.app import CrossplanApp
from planner.tui.screens import PickScreen
from planner import project

from tests.tui.test_app import SIZE, make_app
from tests.tui.tui_helpers import screen_text, settle


async def goto_view(app, pilot, view):
    app.query_one("#chain").focus()
    while app.view != view:
        await pilot.press("v")
        await pilot.pause()


async def test_z_halves_and_Z_doubles_the_time_span():
    app = make_app(name="three-way")
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await goto_view(app, pilot, "impulse")
        full = float(app.query_one("#plot").data.series[0].x[-1])
        await pilot.press("z")
        await pilot.pause()
        half = float(app.query_one("#plot").data.series[0].x[-1])
        assert abs(half - full / 2) <= 2 / app.project.sample_rate * 1000  # within 2 samples
        await pilot.press("Z", "Z")
        await pilot.pause()
        assert float(app.query_one("#plot").data.series[0].x[-1]) > half * 3.9
        assert "z/Z zoom" in app.query_one("#plot").data.title


async def test_p_picks_the_pair_of_the_difference_views():
    app = make_app(name="three-way")
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.query_one("#chain").focus()                  # woofer selected: woofer/mid by default
        await pilot.press("p")
        await pilot.pause()
        assert isinstance(app.screen, PickScreen)
        text = screen_text(app)
        assert "woofer / mid at 350 Hz" in text and "mid / tweeter at 3 kHz" in text
        await pilot.press("down", "enter")
        await pilot.pause()
        assert app.view == "phase difference"
        assert app.query_one("#plot").data.title.startswith("mid - tweeter near 3 kHz")


async def test_without_colour_each_band_has_its_own_letter_in_plot_and_legend():
    app = CrossplanApp(project.load_preset("three-way"), None)
    async with app.run_test(size=SIZE) as pilot:
        app.query_one("#plot").color = False             # as under NO_COLOR
        await settle(app, pilot)
        app.query_one("#plot").refresh()
        for _ in range(20):            # the redraw can take a few frames on a loaded machine
            await pilot.pause(0.02)
            text = screen_text(app)
            if "w woofer" in text:
                break
        for legend in ("w woofer", "m mid", "t tweeter"):
            assert legend in text
        assert "\x1b" not in str(app.query_one("#plot").render())


async def test_the_difference_view_shows_the_engines_delay_hint_for_its_pair():
    from planner import edits, engine
    p = edits.set_band(project.load_preset("three-way"), 1, delay_ms=0.3)   # mid late
    app = CrossplanApp(p, None)
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await goto_view(app, pilot, "phase difference")   # woofer / mid, for the woofer
        want = next(w.text for w in engine.analyse(p).warnings
                    if w.code == "phase" and w.text.startswith("bands woofer and mid"))
        assert "add delay_ms" in want                        # with its value
        assert app.query_one("#plot").data.hint == want
        assert "add delay_ms 0.3 to woofer" in " ".join(
            str(app.query_one("#readout").render()).split())


async def test_turning_colour_off_redraws_a_plot_already_drawn():
    # The plot keeps its drawn strips per data and size; the colour setting is part of
    # that key, or a plot drawn in colour would stay so.
    app = CrossplanApp(project.load_preset("three-way"), None)
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        plot = app.query_one("#plot")
        plot.color = True                                # as without NO_COLOR
        plot.refresh()
        await pilot.pause()
        assert "w woofer" not in screen_text(app)        # drawn in colour: braille marks
        plot.color = False
        plot.refresh()
        await pilot.pause()
        legend = "".join(plot.render_line(y).text for y in range(plot.size.height))
        assert "w woofer" in legend and "m mid" in legend

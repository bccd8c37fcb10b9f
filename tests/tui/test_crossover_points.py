"""Crossover points in the editor: a hand-typed frequency on one side offers to move the
rest of its point too, as one undoable edit; k moves a point directly (Pilot at 80x24).

The preset "three-way": woofer [LR4 lowpass 350 Hz, all-pass 3 kHz], mid [LR4 highpass
350 Hz, LR4 lowpass 3 kHz], tweeter [LR4 highpass 3 kHz, all-pass 350 Hz]: each all-pass
belongs to the point at its frequency and moves with it.
"""

from planner.tui.screens import ChoiceScreen, PathScreen, PickScreen

from tests.tui.test_app import SIZE, goto_freq_field, make_app
from tests.tui.tui_helpers import screen_text, settle


def freqs(p):
    return [[f.params.get("freq") for f in b.filters] for b in p.bands]


async def type_woofer_lowpass(app, pilot, text):
    await goto_freq_field(app, pilot, 0)
    await pilot.press(*text, "enter")
    await pilot.pause()


async def test_yes_moves_both_sides_as_one_edit():
    app = make_app(name="three-way")
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        await type_woofer_lowpass(app, pilot, "400")
        assert isinstance(app.screen, ChoiceScreen)
        assert "crossover at 350 Hz" in screen_text(app)
        await pilot.press("y")
        await settle(app, pilot)
        assert freqs(app.project) == [[400.0, 3000.0], [400.0, 3000.0], [3000.0, 400.0]]
        await pilot.press("ctrl+z")
        await settle(app, pilot)
        assert app.project is p0


async def test_no_moves_only_the_filter_typed_into():
    app = make_app(name="three-way")
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await type_woofer_lowpass(app, pilot, "400")
        await pilot.press("n")
        await settle(app, pilot)
        assert freqs(app.project) == [[400.0, 3000.0], [350.0, 3000.0], [3000.0, 350.0]]


async def test_cancel_changes_nothing():
    app = make_app(name="three-way")
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        await type_woofer_lowpass(app, pilot, "400")
        await pilot.press("escape")
        await settle(app, pilot)
        assert app.project is p0
        assert app.query_one("#filter-freq").value == "350 Hz"


async def test_k_moves_a_point_with_its_tied_allpass():
    app = make_app(name="three-way")
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await pilot.press("k")
        await pilot.pause()
        assert isinstance(app.screen, PickScreen)
        await pilot.press("down", "enter")              # the 3 kHz point
        await pilot.pause()
        assert isinstance(app.screen, PathScreen)
        app.screen.query_one("#path-input").value = "2.5k"
        await pilot.press("enter")
        await settle(app, pilot)
        assert freqs(app.project) == [[350.0, 2500.0], [350.0, 2500.0], [2500.0, 350.0]]
        assert app.history.can_undo
        app.history.undo()
        assert not app.history.can_undo                  # it was one edit


async def test_a_nudge_on_one_side_says_once_that_k_moves_the_point():
    app = make_app(name="three-way")
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.query_one("#chain").focus()
        await pilot.press("right", "right")
        await settle(app, pilot)
        notes = [n.message for n in app._notifications if "k moves the whole point" in n.message]
        assert len(notes) == 1
        assert freqs(app.project)[1][0] == 350.0             # the mid's highpass stays


async def test_save_waits_while_the_crossover_question_is_open(tmp_path):
    # ctrl+s under the question would write the project without the frequency just
    # typed; it says to answer first and writes nothing, and saves once answered.
    from planner import project

    path = tmp_path / "three.json"
    project.save(project.load_preset("three-way"), path)
    before = path.read_text()
    app = make_app(path=path)
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await type_woofer_lowpass(app, pilot, "400")
        assert isinstance(app.screen, ChoiceScreen)
        await pilot.press("ctrl+s")
        await settle(app, pilot)
        assert isinstance(app.screen, ChoiceScreen)        # the question is still open
        assert path.read_text() == before
        assert any("answer the question first" in str(n.message)
                   for n in app._notifications)
        await pilot.press("y")
        await settle(app, pilot)
        await pilot.press("ctrl+s")
        await settle(app, pilot)
        saved = project.load(path)
        assert freqs(saved) == [[400.0, 3000.0], [400.0, 3000.0], [3000.0, 400.0]]
        assert not app.history.dirty

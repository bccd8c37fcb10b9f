"""Drivers in the editor: the band's driver form, the driver views, and the safety notice
at start (Pilot at 80x24).

The preset "desk-2way" has modelled drivers (woofer closed-box, tweeter with an 8 mm
offset); "two-way" has none.
"""

from planner.tui.app import CrossplanApp
from planner.tui.screens import SafetyScreen
from planner.tui.widgets import FieldRow
from planner import project

from tests.tui.test_app import SIZE, make_app
from tests.tui.tui_helpers import screen_text, settle


async def test_the_offset_is_edited_in_mm_and_undone():
    app = make_app(name="desk-2way")
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        app.query_one("#bands").focus()
        await pilot.press("down")                         # tweeter
        await settle(app, pilot)
        assert "Driver: tweeter" in app.query_one("#driver-form").border_title
        assert app.query_one("#driver-offset_mm").value == "8"
        app.query_one("#driver-form").focus_field("offset_mm")
        await pilot.press(*"12.5", "enter")
        await settle(app, pilot)
        assert app.project.bands[1].driver.offset_mm == 12.5
        assert app.report.project is app.project          # analysed again
        await pilot.press("ctrl+z")
        await settle(app, pilot)
        assert app.project is p0


async def test_the_offset_can_be_typed_as_a_time_of_flight_in_ms():
    # 0.1 ms at the preset's air temperature: 0.1e-3 s x (331.3 + 0.606 T) m/s, the
    # speed-of-sound formula of acoustics handbooks (343.4 m/s at 20 deg C).
    app = make_app(name="desk-2way")
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.query_one("#bands").focus()
        await pilot.press("down")                         # tweeter
        await settle(app, pilot)
        app.query_one("#driver-form").focus_field("offset_mm")
        await pilot.press(*"0.1 ms", "enter")
        await settle(app, pilot)
        t_c = app.project.acoustics.temperature_c
        assert abs(app.project.bands[1].driver.offset_mm - 0.1 * (331.3 + 0.606 * t_c)) < 1e-3
        # The field's hint follows the new value (the form keeps its rows and updates them).
        row = next(r for r in app.query_one("#driver-form").query(FieldRow)
                   if r.field_name == "offset_mm")
        assert "is 0.1 ms at" in row.tooltip


async def test_a_bad_driver_value_is_refused_in_place():
    app = make_app(name="desk-2way")
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        app.query_one("#driver-form").focus_field("fc")
        await pilot.press("0", "enter")
        await settle(app, pilot)
        assert app.project is p0
        assert "must be above 0 Hz" in screen_text(app) or any(
            "must be above 0 Hz" in n.message for n in app._notifications)


async def test_a_model_typed_gives_a_band_a_driver():
    app = make_app()                                       # two-way: no drivers
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        assert "Driver: none" in app.query_one("#driver-form").border_title
        assert "Driver: none" in screen_text(app)           # the form's title line shows
        app.query_one("#driver-form").focus_field("model")
        await pilot.press(*"closed-box", "enter")
        await settle(app, pilot)
        assert app.project.bands[0].driver.model == "closed-box"


async def test_the_view_key_reaches_the_off_axis_view_only_with_drivers():
    app = make_app(name="desk-2way")
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.query_one("#chain").focus()
        seen = []
        for _ in range(10):
            await pilot.press("v")
            await pilot.pause()
            seen.append(app.view)
        assert "offaxis" in seen and "drivers" in seen
        assert "off-axis sum" in screen_text(app) or "offaxis" in seen
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.query_one("#chain").focus()
        seen = set()
        for _ in range(8):
            await pilot.press("v")
            await pilot.pause()
            seen.add(app.view)
        assert not seen & {"offaxis", "drivers", "electrical"}


async def test_the_safety_notice_shows_at_start_and_a_key_dismisses_it():
    app = CrossplanApp(project.load_preset("two-way"), None, safety_notice=True)
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        assert isinstance(app.screen, SafetyScreen)
        text = " ".join(str(app.screen.query_one("#safety-text").render()).split())
        assert "Safety first" in screen_text(app)
        for words in ("Start quiet", "series capacitor", "boosts", "test signals",
                      "manufacturers' limits", "regulations"):
            assert words in text
        p0 = app.project
        await pilot.press("m")                             # dismisses; mutes nothing
        await pilot.pause()
        assert not isinstance(app.screen, SafetyScreen)
        assert app.project is p0 and app.is_running


async def test_two_keys_queued_for_the_safety_notice_dismiss_it_once():
    # Over tmux or SSH two keys can arrive in one read: both are queued for the notice
    # before it handles the first. The second must not dismiss again (that popped the
    # editor's own screen: Textual's ScreenStackError).
    from textual import events

    app = CrossplanApp(project.load_preset("two-way"), None, safety_notice=True)
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        notice = app.screen
        assert isinstance(notice, SafetyScreen)
        notice.post_message(events.Key("space", " "))
        notice.post_message(events.Key("space", " "))
        await settle(app, pilot)
        assert app.is_running and not isinstance(app.screen, SafetyScreen)
        assert app.screen is app.screen_stack[0]          # the editor, still there


async def test_two_answers_queued_for_a_question_answer_it_once():
    from textual import events
    from planner.tui.screens import ChoiceScreen

    app = make_app()
    answers = []
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.push_screen(ChoiceScreen("Go on?", [("y", "yes", "Yes")]), answers.append)
        await pilot.pause()
        question = app.screen
        question.post_message(events.Key("y", "y"))
        question.post_message(events.Key("y", "y"))
        await settle(app, pilot)
        assert answers == ["yes"] and app.is_running

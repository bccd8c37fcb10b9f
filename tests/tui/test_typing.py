"""The editor reads values, types and families as a newcomer types them (Pilot at 80x24).

The preset "two-way" is woofer [BW2 highpass 25 Hz, LR4 lowpass 2.4 kHz] and
tweeter [LR4 highpass 2.4 kHz, peaking -0.8 dB at 7.5 kHz].
"""

from planner.tui.screens import PickScreen

from tests.tui.test_app import SIZE, goto_freq_field, make_app
from tests.tui.tui_helpers import screen_text, settle


async def test_a_thousands_comma_is_refused_in_place():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        await goto_freq_field(app, pilot)
        await pilot.press(*"3,500", "enter")
        await settle(app, pilot)
        assert app.project is p0
        assert "ambiguous" in screen_text(app)
        assert app.focused.has_class("-refused")


async def test_a_frequency_far_below_the_range_is_kept_with_a_note():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await goto_freq_field(app, pilot)
        await pilot.press("2", "enter", "n")          # n: only this side of the crossover
        await settle(app, pilot)
        assert app.project.bands[0].filters[1].params["freq"] == 2.0
        assert any("octaves below the analysed range" in n.message and "2 kHz" in n.message
                   for n in app._notifications)


async def test_lr4_typed_in_the_family_field_sets_family_and_order_as_one_edit():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        await goto_freq_field(app, pilot, 0)          # woofer's BW2 highpass
        app.query_one("#filter-form").focus_field("family")
        await pilot.press(*"LR4", "enter")
        await settle(app, pilot)
        f = app.project.bands[0].filters[0]
        assert (f.type, f.family, f.params["order"]) == ("highpass", "linkwitz-riley", 4)
        assert "LR4 highpass 25 Hz" in screen_text(app)
        await pilot.press("ctrl+z")
        await settle(app, pilot)
        assert app.project is p0


async def test_the_type_as_the_screen_shows_it_is_accepted():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.query_one("#bands").focus()
        await pilot.press("down")                      # tweeter
        await goto_freq_field(app, pilot, 1)           # its peaking EQ
        app.query_one("#filter-form").focus_field("type")
        await pilot.press(*"high shelf", "enter")
        await settle(app, pilot)
        assert app.project.bands[1].filters[1].type == "high_shelf"
        assert app.query_one("#filter-type").value == "high shelf"


async def test_after_add_letters_never_type_into_a_field():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.query_one("#chain").focus()
        await pilot.press("a")
        await settle(app, pilot)
        assert isinstance(app.screen, PickScreen)      # the new filter's type, from a list
        p_added = app.project
        await pilot.press("m", "q")                    # letters jump in the list, nothing else
        await pilot.pause()
        assert isinstance(app.screen, PickScreen)
        assert app.project is p_added and not app.project.bands[0].mute
        await pilot.press("escape")
        await settle(app, pilot)
        assert app.focused.id == "chain"
        assert app.project.bands[0].filters[1].type == "peaking"
        await pilot.press("m")                          # now a command: mute the band
        await settle(app, pilot)
        assert app.project.bands[0].mute


async def test_the_type_picked_from_the_list_after_add():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.query_one("#chain").focus()
        await pilot.press("a")
        await settle(app, pilot)
        await pilot.press("h", "enter")             # from peaking, the next "h": high shelf
        await settle(app, pilot)
        assert app.project.bands[0].filters[1].type == "high_shelf"
        assert app.focused.id == "chain"


async def test_enter_on_the_family_field_offers_the_list():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await goto_freq_field(app, pilot, 0)
        app.query_one("#filter-form").focus_field("family")
        await pilot.press("enter")
        await settle(app, pilot)
        assert isinstance(app.screen, PickScreen)
        assert "LR4" in screen_text(app) and "BW2" in screen_text(app)
        await pilot.press("l", "l", "enter")             # LR2 -> LR4
        await settle(app, pilot)
        f = app.project.bands[0].filters[0]
        assert (f.family, f.params["order"]) == ("linkwitz-riley", 4)


async def test_a_long_typed_value_scrolls_the_field_to_its_end():
    # The field's input stores its own width without asking for the screen's arrangement
    # (widgets.FieldInput): typing past its width must still scroll to the cursor.
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await goto_freq_field(app, pilot)
        field = app.focused
        text = "1234567890abcdefghijklmnopqrstuvwxyz"
        await pilot.press(*text)
        await pilot.pause()
        assert field.value == text
        assert field.virtual_size.width == len(text) + 1      # the text and the cursor
        assert field.scroll_x > 0
        assert "vwxyz" in screen_text(app) and "12345" not in screen_text(app)


async def test_a_nudge_sets_the_field_without_arranging_the_screen_again(monkeypatch):
    # A crossover nudge changes the width of the frequency field's text (2.4 kHz ->
    # 2.54 kHz); the field is repainted, and the frame that shows the new check does not
    # arrange the screen again (a full arrangement costs milliseconds at every key).
    from textual.screen import Screen

    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await goto_freq_field(app, pilot)
        app.query_one("#chain").focus()
        await settle(app, pilot)
        field = app.query_one("#filter-freq")
        before = field.value
        arranged = []
        real = Screen._refresh_layout
        monkeypatch.setattr(Screen, "_refresh_layout",
                            lambda self, *a, **k: (arranged.append(field.value),
                                                   real(self, *a, **k))[1])
        await pilot.press("right")
        await pilot.pause()
        assert field.value != before and len(field.value) != len(before)
        assert field.value not in arranged
        assert field.virtual_size.width == len(field.value) + 1

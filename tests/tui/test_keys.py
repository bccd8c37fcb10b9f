"""Keys, focus and the footer as a newcomer meets them (Pilot at 80x24)."""

from planner.tui.app import ACTIONS, CrossplanApp

from tests.tui.test_app import SIZE, goto_freq_field, make_app
from tests.tui.tui_helpers import screen_text, settle


def footer(app) -> str:
    return screen_text(app).splitlines()[-1]


async def test_quit_stays_in_the_footer_at_80_columns_in_a_list_and_in_a_form():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.query_one("#chain").focus()
        await pilot.pause()
        assert "Quit" in footer(app) and "Add" in footer(app)
        await goto_freq_field(app, pilot)
        line = footer(app)
        for word in ("Quit", "Save", "Undo", "Back", "Help"):   # what works inside a field
            assert word in line
        assert "Add" not in line            # a letter would type into the field there


async def test_ctrl_q_quits_from_inside_a_field_and_q_types():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.query_one("#bands").focus()
        await pilot.press("enter")          # -> chain
        app.query_one("#band-form").focus_field("name")
        await pilot.press("q")
        await pilot.pause()
        assert app.focused.value == "q"     # typed, not quit
        await pilot.press("ctrl+q")
        await pilot.pause()
    assert app.return_code == 0             # nothing was changed: it quits without asking


async def test_the_focused_field_stands_out_without_colour():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await goto_freq_field(app, pilot)
        rows = list(app.query_one("#filter-form").query(".field"))
        focused = [r for r in rows if r.input.has_focus]
        assert len(focused) == 1
        label = focused[0].query_one(".field-label")
        other = next(r for r in rows if not r.input.has_focus).query_one(".field-label")
        assert label.rich_style.reverse and label.rich_style.bold
        assert not other.rich_style.reverse


async def test_the_palette_offers_compare_and_reanalyse():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        for query, title in (("compare", "Compare IIR and FIR"), ("re-anal", "Re-analyse")):
            await pilot.press("ctrl+p")
            await pilot.pause()
            await pilot.press(*query)
            await pilot.pause(0.3)
            assert title in screen_text(app)
            await pilot.press("escape")
            await pilot.pause()


def test_bindings_palette_and_help_come_from_one_table():
    actions = {c.action for c in ACTIONS}
    bound = {b.action for b in CrossplanApp.BINDINGS}
    assert bound <= actions
    assert {"compare", "reanalyse", "export", "rename"} <= actions
    assert len(actions) == len(ACTIONS)     # each action once

"""The project's name in the editor: renamed in the settings, undone as one edit, and the
export written from the editor is named after it (Pilot at 80x24)."""

import json

from tests.tui.test_app import SIZE, make_app
from tests.tui.tui_helpers import screen_text, settle


async def rename(app, pilot, text):
    await pilot.press("e")
    await pilot.pause()
    assert app.focused.id == "settings-name"
    await pilot.press(*text, "enter")   # the value is selected on focus: typing replaces it
    await settle(app, pilot)


async def test_the_project_name_is_edited_in_the_settings_and_undone():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        await rename(app, pilot, "Porch monitor")
        assert app.project.name == "Porch monitor"
        await pilot.press("escape")
        await settle(app, pilot)
        assert "Porch monitor" in screen_text(app)       # the title bar
        await pilot.press("ctrl+z")
        await settle(app, pilot)
        assert app.project is p0


async def test_an_empty_name_is_refused_in_place():
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        await pilot.press("e")
        await pilot.pause()
        await pilot.press("backspace", "enter")
        await settle(app, pilot)
        assert app.project is p0
        assert "must not be empty" in screen_text(app)


async def test_the_export_from_the_editor_is_named_after_the_project(tmp_path):
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await rename(app, pilot, "Porch monitor")
        await pilot.press("escape")
        await pilot.press("E")
        await pilot.pause()
        app.screen.query_one("#path-input").value = str(tmp_path / "out")
        await pilot.press("enter")
        await pilot.pause()
        await pilot.press("j")                               # json
        await pilot.pause()
        await app.workers.wait_for_complete([w for w in app.workers if w.group == "export-run"])
        await pilot.pause()
        written = sorted(p.name for p in (tmp_path / "out").iterdir())
        assert written == ["porch-monitor-48000.json", "porch-monitor-manifest.json"]
        manifest = json.loads((tmp_path / "out" / "porch-monitor-manifest.json").read_text())
        assert manifest["project"] == "Porch monitor"
        assert any("exported to" in n.message for n in app._notifications)

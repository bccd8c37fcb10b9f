"""The editor's file safety: a file changed by another session, and autosaves after a crash.

Driven with Textual's Pilot at 80x24. The preset "two-way" starts with the woofer selected;
"m" mutes it (an unsaved edit).
"""

import json

import pytest

from planner import autosave, project
from planner.tui.app import CrossplanApp
from planner.tui.autosave import mine_path
from planner.tui.screens import ChoiceScreen

from tests.tui.tui_helpers import screen_text, settle

SIZE = (80, 24)


@pytest.fixture(autouse=True)
def state_home(tmp_path, monkeypatch):
    monkeypatch.setenv("XDG_STATE_HOME", str(tmp_path / "state"))


def open_app(path, delay_s=0.05):
    opened = project.read(path)
    app = CrossplanApp(opened.project, str(path), opened.fingerprint, opened.notices)
    app.files.delay_s = delay_s
    return app


async def mute_woofer(app, pilot):
    app.query_one("#bands").focus()
    await pilot.press("m")
    await settle(app, pilot)
    assert app.project.bands[0].mute and app.history.dirty


def theirs(path):
    """Another session saves the file: the tweeter 1 dB lower."""
    d = json.loads(path.read_text())
    d["bands"][1]["gain_db"] -= 1.0
    path.write_text(json.dumps(d, indent=2))
    return path.read_bytes()


async def muted_and_autosaved(app, pilot, path):
    """The editor up, the woofer muted (an unsaved edit), and its autosave written."""
    await settle(app, pilot)
    await mute_woofer(app, pilot)
    assert await wait_for(lambda: autosave.find(path) is not None, pilot)


async def wait_for(cond, pilot, timeout_s=5.0):
    for _ in range(int(timeout_s / 0.02)):
        if cond():
            return True
        await pilot.pause(0.02)
    return cond()


async def test_save_over_a_changed_file_asks_and_overwrite_writes_ours(two_way_file):
    app = open_app(two_way_file)
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await mute_woofer(app, pilot)
        theirs(two_way_file)
        await pilot.press("ctrl+s")
        await pilot.pause()
        assert isinstance(app.screen, ChoiceScreen)
        assert "changed on disk" in screen_text(app)
        assert project.load(two_way_file).bands[0].mute is False     # nothing written yet
        await pilot.press("o")
        await settle(app, pilot)
        assert project.load(two_way_file) == app.project and not app.history.dirty


async def test_keep_theirs_saves_ours_as_mine(two_way_file):
    app = open_app(two_way_file)
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await mute_woofer(app, pilot)
        their_bytes = theirs(two_way_file)
        await pilot.press("ctrl+s")
        await pilot.pause()
        await pilot.press("m")
        await settle(app, pilot)
        mine = mine_path(str(two_way_file))
        assert mine.endswith("two-way.mine.json")
        assert two_way_file.read_bytes() == their_bytes
        assert project.load(mine) == app.project and app.path == mine


async def test_cancel_writes_nothing(two_way_file):
    app = open_app(two_way_file)
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await mute_woofer(app, pilot)
        their_bytes = theirs(two_way_file)
        await pilot.press("ctrl+s")
        await pilot.pause()
        await pilot.press("escape")
        await settle(app, pilot)
        assert two_way_file.read_bytes() == their_bytes and app.history.dirty


async def test_a_second_save_after_ours_does_not_ask(two_way_file):
    app = open_app(two_way_file)
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await mute_woofer(app, pilot)
        await pilot.press("ctrl+s")           # the file is as read: saved at once
        await settle(app, pilot)
        await pilot.press("m")
        await settle(app, pilot)
        await pilot.press("ctrl+s")           # the file is ours now: saved at once again
        await settle(app, pilot)
        assert not isinstance(app.screen, ChoiceScreen)
        assert project.load(two_way_file) == app.project and not app.history.dirty


async def test_crash_leaves_an_autosave_and_the_next_start_restores_it(two_way_file):
    before = two_way_file.read_bytes()
    app = open_app(two_way_file)
    async with app.run_test(size=SIZE) as pilot:
        await muted_and_autosaved(app, pilot, two_way_file)
        app.exit(1)                           # a crash: no save, no question, no clean-up
    assert two_way_file.read_bytes() == before
    assert autosave.find(two_way_file) is not None

    app = open_app(two_way_file)
    async with app.run_test(size=SIZE) as pilot:
        # The question comes up at start, while the first analysis runs.
        assert await wait_for(lambda: isinstance(app.screen, ChoiceScreen), pilot)
        assert "Restore them?" in screen_text(app)
        await pilot.press("r")
        await settle(app, pilot)
        assert app.project.bands[0].mute and app.history.dirty   # the edit is back, unsaved
        await pilot.press("ctrl+z")                               # and can be undone
        await settle(app, pilot)
        assert not app.project.bands[0].mute


async def test_discarding_the_offered_autosave_removes_it(two_way_file):
    autosave.write(two_way_file, project.dumps(
        project.load(two_way_file).with_band(0, project.load(two_way_file).bands[0])
    ).replace('"invert": false', '"invert": true', 1))
    app = open_app(two_way_file)
    async with app.run_test(size=SIZE) as pilot:
        # The question comes up at start, while the first analysis runs.
        assert await wait_for(lambda: isinstance(app.screen, ChoiceScreen), pilot)
        await pilot.press("d")
        await settle(app, pilot)
        assert autosave.find(two_way_file) is None and not app.project.bands[0].invert


@pytest.mark.parametrize("key", ["ctrl+s", "ctrl+z"])   # saving; undo to the saved state
async def test_saving_or_undoing_to_the_saved_state_removes_the_autosave(two_way_file, key):
    app = open_app(two_way_file)
    async with app.run_test(size=SIZE) as pilot:
        await muted_and_autosaved(app, pilot, two_way_file)
        await pilot.press(key)
        await settle(app, pilot)
        assert autosave.find(two_way_file) is None


async def test_quitting_and_discarding_on_purpose_removes_the_autosave(two_way_file):
    app = open_app(two_way_file)
    async with app.run_test(size=SIZE) as pilot:
        await muted_and_autosaved(app, pilot, two_way_file)
        await pilot.press("q")
        await pilot.pause()
        await pilot.press("d")
        await pilot.pause()
    assert autosave.find(two_way_file) is None
    assert not project.load(two_way_file).bands[0].mute


async def test_no_autosave_before_the_delay(two_way_file):
    app = open_app(two_way_file, delay_s=30)
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await mute_woofer(app, pilot)
        await pilot.pause(0.2)
        assert autosave.find(two_way_file) is None
        app.exit(1)


async def test_migration_notice_is_shown_on_start(two_way_file):
    opened = project.read(two_way_file)
    app = CrossplanApp(opened.project, str(two_way_file), opened.fingerprint,
                       ("version: the file is format version 1; read as version 2",))
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        # The notifications the app holds (Textual keeps them until they time out).
        assert any("read as version 2" in n.message for n in app._notifications)

"""The editor's refresh after an edit: the check first, the phase hints after, and lists
updated in place showing what the analysis says (Pilot at 80x24).

The project is the three-way preset without its tweeter's 350 Hz all-pass and a phase
limit of 10 deg, so the mid/tweeter crossing (about 19 deg apart) is out of phase and
its warning carries a hint.
"""

from planner import project
from planner.engine.warnings import PENDING_HINT
from planner.tui.app import CrossplanApp
from planner.tui.widgets import WarningList

from tests.engine.test_phase_hint import _old_three_way
from tests.tui.test_app import SIZE
from tests.tui.tui_helpers import screen_text, settle


def _app():
    return CrossplanApp(project.from_dict(_old_three_way(limit=10.0)), None)


def _prompts(app) -> list[str]:
    wl = app.query_one(WarningList)
    return [str(wl.get_option_at_index(i).prompt) for i in range(wl.option_count)]


async def test_the_phase_hint_follows_the_check_and_is_the_checked_one():
    app = _app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        assert not app.hints_pending
        phase = [w.text for w in app.report.warnings if w.code == "phase"]
        assert phase and all(PENDING_HINT not in t for t in phase)
        assert any(", checked" in t for t in phase)
        assert _prompts(app) == [f"! {w.text}" for w in app.report.warnings]


async def test_after_nudging_a_crossover_the_warnings_shown_are_the_new_ones():
    app = _app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        before = _prompts(app)
        app.query_one("#bands").focus()
        await pilot.press("down", "down")              # the tweeter
        app.query_one("#chain").focus()
        await pilot.press("right")                     # its highpass up 1/12 octave
        await settle(app, pilot)
        after = _prompts(app)
        assert after != before
        assert after == [f"! {w.text}" for w in app.report.warnings]
        assert app.report.project is app.project and not app.hints_pending
        shown = " ".join(screen_text(app).split())
        assert after[0][:30] in shown                  # the list on screen shows it


async def test_a_quick_iir_project_is_analysed_before_the_key_returns():
    # IIR designs take microseconds: once an analysis is known to be quick, the next one
    # runs on the UI thread, so the key's own frame shows it (no thread hand-over).
    app = _app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        assert app.analysis_cpu_ms is not None
        app.analysis_cpu_ms = 1.0                       # as a quick analysis leaves it
        threaded = []
        app._analyse = lambda *args: threaded.append(args)   # the worker, were it used
        app.query_one("#chain").focus()
        await pilot.press("right")
        assert threaded == []
        assert app.report is not None and app.report.project is app.project
        await settle(app, pilot)


async def test_a_project_with_an_fir_is_analysed_off_the_ui_thread():
    from planner.tui.app import _INLINE_MS

    d = _old_three_way(limit=10.0)
    d["bands"][0]["filters"].append({"type": "lowpass", "family": "fir", "method": "window",
                                     "freq": 8000, "taps": 63})
    app = CrossplanApp(project.from_dict(d), None)
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.analysis_cpu_ms = 1.0
        assert not app._inline(app.project)
        app.analysis_cpu_ms = 2 * _INLINE_MS           # a slow one: the next in a thread too
        assert not app._inline(project.from_dict(_old_three_way()))
        app.analysis_cpu_ms = 1.0
        assert app._inline(project.from_dict(_old_three_way()))


async def test_a_bigger_project_than_the_last_analysed_goes_to_a_thread():
    # The last analysis's time says nothing of one with more points or bands.
    from planner import edits

    app = _app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        app.analysis_cpu_ms = 1.0
        p = app.project
        assert app._inline(p)
        assert not app._inline(edits.set_analysis(p, points=4 * p.analysis.points))
        assert app._inline(edits.remove_filter(p, 0, 0))          # smaller: on the UI thread


async def test_a_run_of_quick_edits_searches_for_hints_once_after_it(monkeypatch):
    # The hints are searched for once the edits pause (planner.tui.app._HINTS_AFTER_S):
    # under a held key no search holds the interpreter between two presses. Five nudges
    # of the woofer's filter (the mid/tweeter crossing stays out of phase), sent as one
    # burst, give one search, for the last edit's report. The pause is made 1 s here so
    # that a loaded machine still sends the burst within it.
    from textual import events

    import planner.tui.app as tui_app

    monkeypatch.setattr(tui_app, "_HINTS_AFTER_S", 1.0)
    app = _app()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        searched = []
        real = tui_app.engine.phase_hints
        monkeypatch.setattr(tui_app.engine, "phase_hints",
                            lambda r: (searched.append(r.project), real(r))[1])
        app.query_one("#chain").focus()
        p0 = app.project
        for key in ("right", "left", "right", "left", "right"):
            app.post_message(events.Key(key, None))
        await pilot.pause()
        assert app.project is not p0 and app.hints_pending
        assert searched == []                           # none while the keys came
        await settle(app, pilot)
        assert searched == [app.project]
        assert not app.hints_pending
        phase = [w.text for w in app.report.warnings if w.code == "phase"]
        assert phase and all(PENDING_HINT not in t for t in phase)

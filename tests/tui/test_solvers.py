"""The solvers in the editor: align and fit EQ run in a worker with progress and a cancel
key, show a before/after preview, and apply as one undoable edit (Pilot at 80x24).

The preset "three-way" without its tweeter's 350 Hz all-pass (the phase fix the preset
carries) aligns by delaying woofer and mid a little (about 0.017 ms); the preset "two-way"
has one EQ filter (the tweeter's peaking EQ at 7.5 kHz) for the fit.
"""

import numpy as np
import pytest
from scipy import signal

from planner import edits, engine, project
from planner.tui import views
from planner.tui.app import CrossplanApp
from planner.tui.screens import ChoiceScreen, SolveScreen
from tests.tui.test_app import make_app
from tests.tui.tui_helpers import screen_text, settle

SIZE = (80, 24)


def misaligned_three_way():
    """The three-way preset without the tweeter's all-pass: its upper crossing is 18.9 deg out."""
    p = project.load_preset("three-way")
    tweeter = p.bands[2]
    k = next(i for i, f in enumerate(tweeter.filters) if f.type == "allpass")
    return CrossplanApp(edits.remove_filter(p, 2, k), None)


async def run_solver(app, pilot, key):
    if key:
        await pilot.press(key)
    await pilot.pause()
    jobs = [w for w in app.workers if w.group == "solve"]
    if jobs:   # an empty list would wait for every worker, the preview's too
        await app.workers.wait_for_complete(jobs)
    for _ in range(20):
        await pilot.pause(0.05)
        if isinstance(app.screen, (SolveScreen, ChoiceScreen)) or not app._solving:
            break


def scipy_sum_dev_db(report) -> float:
    """The sum's largest deviation from 0 dB, computed band by band with scipy.signal.sosfreqz
    (reference library) from the designed sections, gain, polarity and delay."""
    p = report.project
    f = report.freqs_hz
    w = 2 * np.pi * f / p.sample_rate
    total = np.zeros(len(f), complex)
    for d, on in zip(report.designs, report.active):
        if not on:
            continue
        _, h = signal.sosfreqz(d.sos, worN=w)
        total += (h * 10 ** (d.gain_db / 20) * (-1 if d.invert else 1)
                  * np.exp(-1j * w * d.delay_samples))
    dev = 20 * np.log10(np.abs(total))
    return float(dev[np.argmax(np.abs(dev))])


async def test_align_previews_then_applies_as_one_edit_that_undo_restores():
    app = misaligned_three_way()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        await run_solver(app, pilot, "A")
        assert isinstance(app.screen, SolveScreen)
        text = screen_text(app)
        assert "sum flatness" in text and "worst crossing" in text and "delay_ms" in text
        plot = app.screen.query_one("#solve-plot").render().plain
        assert "sum before and after" in plot and "before" in plot and "after" in plot
        assert app.project is p0                        # nothing changes before Enter
        await pilot.press("enter")
        await settle(app, pilot)
        new = app.project
        assert new is not p0 and new.bands[0].delay_ms > 0
        # the after figure is what an independent sum of the designs gives
        r = engine.analyse(new)
        assert r.max_dev_db == pytest.approx(scipy_sum_dev_db(r), abs=0.05)  # 0.05 dB: the
        # check's own stated accuracy between grid points (README, "the grid")
        assert abs(r.max_dev_db) < abs(engine.analyse(p0).max_dev_db)
        await pilot.press("ctrl+z")
        await settle(app, pilot)
        assert app.project is p0                         # one undo restores all of it
        assert not app.history.can_undo


async def test_align_rejected_changes_nothing():
    app = misaligned_three_way()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        await run_solver(app, pilot, "A")
        assert isinstance(app.screen, SolveScreen)
        await pilot.press("escape")
        await settle(app, pilot)
        assert app.project is p0 and not app.history.can_undo
        assert not isinstance(app.screen, SolveScreen)


async def test_align_cancelled_changes_nothing_and_shows_no_preview():
    app = misaligned_three_way()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        app.query_one("#chain").focus()
        # The key's actions, back to back in one step (a pilot key press may wait long
        # enough for the ~2 s search to end): A, then Escape.
        app.action_solve("align")
        assert app._solving == "align"
        assert "Escape stops the search" in str(app.query_one("#checks").render())
        app.action_back()
        await run_solver(app, pilot, None)
        assert not app._solving
        assert not isinstance(app.screen, SolveScreen)
        assert app.project is p0 and not app.history.can_undo
        assert any("align stopped" in n.message for n in app._notifications)


async def test_fit_eq_accepted_sets_the_gain_and_undo_restores():
    app = make_app()                                     # two-way
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        await run_solver(app, pilot, "F")
        assert isinstance(app.screen, SolveScreen)
        assert "tweeter peak 7.5 kHz: gain" in screen_text(app)
        await pilot.press("y")
        await settle(app, pilot)
        g0 = p0.bands[1].filters[1].params["gain_db"]
        assert app.project.bands[1].filters[1].params["gain_db"] != g0
        await pilot.press("ctrl+z")
        await settle(app, pilot)
        assert app.project is p0


async def test_fit_without_eq_filters_offers_a_bank_and_no_means_no_change():
    app = misaligned_three_way()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        p0 = app.project
        await run_solver(app, pilot, "F")
        assert isinstance(app.screen, ChoiceScreen)
        assert "third-octave bank" in screen_text(app)
        await pilot.press("escape")
        await settle(app, pilot)
        assert app.project is p0


def test_the_preview_names_each_change_and_both_figures():
    from planner import project
    from planner.solve import alignment
    a = alignment.align(project.load_preset("two-way"))
    text = views.solve_preview("align", a)
    before, after = views.solve_preview_series(a)
    # the plotted levels are the reports' sums in dB (20 log10 |H|, numpy)
    assert np.allclose(before.y, 20 * np.log10(np.abs(a.before.sum_h)))
    assert np.allclose(after.y, 20 * np.log10(np.abs(a.after.sum_h))) and after.bold
    assert f"{a.before.max_dev_db:+.2f} dB" in text and f"{a.after.max_dev_db:+.2f} dB" in text
    for c in a.changes:
        assert c in text


async def test_an_undo_while_the_preview_is_open_means_nothing_is_applied():
    app = misaligned_three_way()
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        from planner import edits
        await app.commit(edits.set_name(app.project, "renamed"), "rename")   # one to undo
        await settle(app, pilot)
        await run_solver(app, pilot, "A")
        assert isinstance(app.screen, SolveScreen)
        await pilot.press("ctrl+z")                         # works on top of the preview
        await settle(app, pilot)
        before = app.project
        await pilot.press("enter")
        await settle(app, pilot)
        assert app.project is before                        # the result was for another one
        assert any("changed while the preview was open" in n.message
                   for n in app._notifications)


async def test_the_solvers_follow_the_projects_target(monkeypatch):
    # The sum is checked against analysis.target, so A and F aim at it too (flat: none).
    from planner.solve import alignment, eqfit

    seen = []
    real_align, real_fit = alignment.align, eqfit.fit

    def align(project, *a, target_fn=None, **k):
        seen.append(("align", target_fn.name))
        return real_align(project, *a, target_fn=target_fn, **k)

    def fit(project, target, *a, **k):
        seen.append(("fit", target.name))
        return real_fit(project, target, *a, **k)

    monkeypatch.setattr(alignment, "align", align)
    monkeypatch.setattr(eqfit, "fit", fit)
    p = project.load_preset("two-way")
    p = edits.set_analysis(p, target="tilt:-0.5")
    app = CrossplanApp(p, None)
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await run_solver(app, pilot, "A")
        await pilot.press("escape")
        await settle(app, pilot)
        await run_solver(app, pilot, "F")
        await pilot.press("escape")
        await settle(app, pilot)
    assert seen == [("align", "tilt:-0.5"), ("fit", "tilt:-0.5")]


async def solved(project_, key, accept):
    """The project after the editor's solver ``key`` ran on ``project_`` and its preview
    was answered with ``accept`` (when it showed one)."""
    app = CrossplanApp(project_, None)
    async with app.run_test(size=SIZE) as pilot:
        await settle(app, pilot)
        await run_solver(app, pilot, key)
        if isinstance(app.screen, SolveScreen):
            await pilot.press(accept)
            await settle(app, pilot)
        return app.project


async def test_align_keeps_to_the_projects_own_delay_bound():
    # solve.max_delay_ms 0.005: the three-way's fix wants about 0.017 ms on woofer and mid,
    # so align stops at the bound (by default it goes there: the first test).
    p = misaligned_three_way().project
    delays = [b.delay_ms for b in (await solved(edits.set_solve(p, max_delay_ms=0.005), "A",
                                                "enter")).bands]
    assert max(delays) <= 0.005 + 1e-9 and max(delays) > 0


async def test_align_varies_only_what_the_project_says():
    # solve.vary ["invert"]: no delay moves, whatever the result.
    p = misaligned_three_way().project
    new = await solved(edits.set_solve(p, vary=["invert"]), "A", "enter")
    assert [b.delay_ms for b in new.bands] == [b.delay_ms for b in p.bands]


async def test_fit_keeps_to_the_projects_gain_limit():
    # Against a tilt of -1 dB per octave the tweeter's EQ wants about -5 dB; with
    # solve.limit_db 0.5 it stays within +/-0.5 dB.
    p = edits.set_analysis(project.load_preset("two-way"), target="tilt:-1")
    new = await solved(edits.set_solve(p, limit_db=0.5), "F", "y")
    assert new.bands[1].filters[1].params["gain_db"] == pytest.approx(-0.5, abs=1e-9)


def test_the_preview_says_where_the_bounds_are_widened():
    # A bound reached is named, and the preview says the settings screen widens it.
    p = edits.set_solve(misaligned_three_way().project, max_delay_ms=0.005)
    from planner.solve import alignment

    a = alignment.align(p, p.solve.vary, alignment.Bounds.of(p))
    text = views.solve_preview("align", a)
    assert "stopped by its bounds (e, the project settings, widens them):" in text
    assert "woofer: delay at its limit, 0.005 ms" in text

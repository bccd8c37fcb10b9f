"""Helpers for driving the editor headless with Textual's Pilot."""


def screen_text(app) -> str:
    """The text on the app's current screen, line by line (what a person reads)."""
    return "\n".join(strip.text.rstrip() for strip in app.screen._compositor.render_strips())


async def settle(app, pilot) -> None:
    """Let messages run and the analysis worker finish (other workers may be waiting on a screen)."""
    await pilot.pause()
    # The analysis, then (once the edits pause) the phase hints: both in the "analysis"
    # group, the second started by a timer after the first has been shown.
    for _ in range(1000):
        jobs = [w for w in app.workers if w.group == "analysis"]
        if jobs:   # an empty list would wait for every worker (one may wait on a modal screen)
            await app.workers.wait_for_complete(jobs)
        await pilot.pause()
        if not getattr(app, "hints_pending", False) or not app.is_running:
            break
        await pilot.pause(0.01)

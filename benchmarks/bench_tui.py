"""Time one editor refresh: edit -> analyse -> plot text, and a real keypress in the editor.

What the editor does after a typed value: make the new project
(planner.edits, checked like a file), analyse it (designs are cached; only
the edited filter is redesigned; the phase hints come in a second step, timed
apart), build the plot data, draw the plot at the
plot's size (planner.present.plots) and turn it into Rich text as the plot
widget does. Baseline, in the same process: the band responses alone with
scipy.signal.sosfreqz called band by band on the same grid. Prints
milliseconds and the ratio refresh / baseline.

Then the editor itself, headless (Textual's run_test at 120x40, then 80x24): a key that
moves a crossover by 1/12 octave is pressed, and the time is taken until the
frame in which the plot widget drew the new analysis (the check bar is updated
just before it) was handed to the terminal. Median and range of several presses.

Run:  python benchmarks/bench_tui.py
"""

from __future__ import annotations

import os

# One BLAS thread unless set (as the crossplan command does; see DEVELOPERS.md), before numpy.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import sys
from pathlib import Path

import asyncio
import statistics
import time

from scipy import signal

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

# The process keeps freed memory for its next arrays, as the crossplan command does
# (planner.memory; the baseline runs in the same process).
from planner.memory import keep_freed_memory  # noqa: E402

keep_freed_memory()

from bench_check import best as best_s, four_band_project  # noqa: E402

from planner import edits, engine, project  # noqa: E402
from planner.engine.analyse import start_grid
from planner.present.plots import freq_canvas  # noqa: E402
from planner.tui import views  # noqa: E402
from planner.tui.widgets import canvas_text  # noqa: E402


def best(fn, repeat=20):
    """Best of ``repeat`` runs, in ms."""
    return best_s(fn, repeat) * 1000.0


def main() -> None:
    proj = project.from_dict(four_band_project(points=2048))
    freqs = start_grid(proj)
    designs = [engine.design_band(b, proj.sample_rate) for b in proj.bands]
    state = {"p": proj, "k": 0}

    def baseline():
        return [signal.sosfreqz(d.sos, worN=freqs, fs=proj.sample_rate)[1] for d in designs]

    def refresh(width, height):
        def run():
            # A new crossover frequency each time, so the edited filter is really redesigned.
            state["k"] += 1
            f = 900.0 * (1.0 + 1e-4 * (state["k"] % 997))
            p = edits.set_filter_params(state["p"], 1, 1, freq=f)
            r = engine.analyse(p, hints=False)     # as the editor: the hints follow later
            d = views.plot_data(r, "magnitude", 1, 900.0)
            c = freq_canvas(d.series, width=width, height=height, ylabel=d.unit, ylim=d.ylim,
                            title=d.title, color=True, marks_hz=(*d.marks_hz, d.cursor_hz),
                            hline=d.hline)
            canvas_text(c)   # the runs as Rich text (the widget makes strips of the same runs)
        return run

    def edit_only():
        edits.set_filter_params(state["p"], 1, 1, freq=901.0)

    def analyse_only():
        engine.analyse(state["p"], hints=False)

    def hints_only(r=engine.analyse(proj, hints=False)):
        engine.phase_hints(r)

    t_base = best(baseline)
    print(f"4 bands x {designs[0].n_sections} sections, {len(freqs)} points")
    print(f"baseline scipy.signal.sosfreqz band by band: {t_base:7.2f} ms")
    print(f"edit (checked new project):                  {best(edit_only):7.2f} ms")
    print(f"analyse (responses, sum, crossings, checks): {best(analyse_only):7.2f} ms")
    print(f"then the phase hints (after the screen drew): {best(hints_only):7.2f} ms")
    for w, h in ((50, 17), (120, 40)):
        t = best(refresh(w, h))
        print(f"edit -> analyse -> plot text at {w}x{h}:{' ' * (10 - len(f'{w}x{h}'))}"
              f"{t:7.2f} ms  (ratio to baseline {t / t_base:.2f}x; budget 100 ms)")


    for size in ((120, 40), (80, 24)):
        name = f"{size[0]}x{size[1]}"
        times = asyncio.run(keypresses(proj, 15, size))
        print(f"editor at {name}, key -> check bar and plot on screen: "
              f"median {statistics.median(times):.1f}"
              f" ms, range {min(times):.1f}-{max(times):.1f} ms over {len(times)} presses "
              f"(ratio to baseline {statistics.median(times) / t_base:.2f}x)")
        held = asyncio.run(held_key(proj, 40, size=size))
        print(f"editor at {name}, a held key (30 presses/s), each press -> its check on "
              f"screen: median {statistics.median(held):.1f} ms, 90th percentile "
              f"{sorted(held)[int(0.9 * len(held))]:.1f} ms over {len(held)} presses")


async def held_key(proj, n: int, every_s: float = 1 / 30, size=(120, 40)) -> list[float]:
    """A held arrow key: ``n`` presses ``every_s`` apart (a keyboard's repeat rate), each
    sent without waiting for the editor. For each, the milliseconds from the press until a
    frame showing its edit's analysis (or a later edit's) was handed to the terminal."""
    from textual import events
    from textual.app import App

    from planner.tui.app import CrossplanApp
    from planner.tui.widgets import PlotView

    app = CrossplanApp(proj, None)
    shown: list = []            # (time, project of the analysis the plot showed)
    made: list = []             # the project of each edit, in order
    real_display, real_commit = App._display, CrossplanApp.commit

    def display(self, screen, renderable):
        out = real_display(self, screen, renderable)
        if app.report is not None and app.query_one(PlotView).data is not None:
            shown.append((time.perf_counter(), app.report.project))
        return out

    async def commit(self, new, label):
        made.append(new)
        return await real_commit(self, new, label)

    App._display, CrossplanApp.commit = display, commit
    try:
        async with app.run_test(size=size) as pilot:
            await _settle(app, pilot)
            app.query_one("#bands").focus()
            await pilot.press("down")
            app.query_one("#chain").focus()
            await pilot.press("down")
            await _settle(app, pilot)
            made.clear()
            sent = []
            t_next = time.perf_counter()
            for i in range(n):
                await asyncio.sleep(max(0.0, t_next - time.perf_counter()))
                sent.append(time.perf_counter())
                app.post_message(events.Key("right" if (i // 5) % 2 == 0 else "left", None))
                t_next = sent[-1] + every_s
            await asyncio.sleep(0.5)
            await _settle(app, pilot)
    finally:
        App._display, CrossplanApp.commit = real_display, real_commit
    order = {id(p): k for k, p in enumerate(made)}
    out = []
    for k, t0 in enumerate(sent[:len(made)]):
        later = [t for t, p in shown if t >= t0 and order.get(id(p), -1) >= k]
        out.append((min(later) - t0) * 1000.0 if later else float("nan"))
    return out


async def keypresses(proj, n: int, size=(120, 40)) -> list[float]:
    """Milliseconds from a key press (crossover up/down 1/12 octave) until the frame with the
    new plot was handed to the terminal (Textual's ``App._display`` of that frame returned)."""
    from textual.app import App

    from planner.tui.app import CrossplanApp
    from planner.tui.widgets import PlotView

    app = CrossplanApp(proj, None)
    drawn: list = []        # (data, time) of each frame handed over, with the plot's data
    real_render = PlotView.render_lines
    real_display = App._display
    painted: list = []      # the data the plot drew since the last frame was handed over

    def render_lines(self, crop):
        out = real_render(self, crop)
        painted.append(self.data)
        return out

    def display(self, screen, renderable):
        out = real_display(self, screen, renderable)
        now = time.perf_counter()
        drawn.extend((d, now) for d in painted)
        painted.clear()
        return out

    PlotView.render_lines = render_lines
    App._display = display
    try:
        async with app.run_test(size=size) as pilot:
            await _settle(app, pilot)
            app.query_one("#bands").focus()
            await pilot.press("down")                 # band "low"
            app.query_one("#chain").focus()
            await pilot.press("down")                 # its LR8 lowpass at 900 Hz
            await _settle(app, pilot)
            times = []
            for i in range(n):
                drawn.clear()
                t0 = time.perf_counter()
                await pilot.press("right" if i % 2 == 0 else "left")
                project_after = app.project
                while time.perf_counter() - t0 < 10.0:
                    r = app.report
                    if r is not None and r.project is project_after:
                        data = app.query_one(PlotView).data
                        hit = [t for d, t in drawn if d is data]
                        if hit:
                            times.append((hit[0] - t0) * 1000.0)
                            break
                    await asyncio.sleep(0.0002)
                else:
                    raise RuntimeError("the plot did not draw the new analysis within 10 s")
                await _settle(app, pilot)
    finally:
        PlotView.render_lines = real_render
        App._display = real_display
    return times


async def _settle(app, pilot) -> None:
    """Until the analysis and its phase hints (searched for after a pause) are done."""
    deadline = time.perf_counter() + 10.0
    while time.perf_counter() < deadline:
        await pilot.pause()
        jobs = [w for w in app.workers if w.group == "analysis"]
        if jobs:
            await app.workers.wait_for_complete(jobs)
        if not app.hints_pending:
            break
        await asyncio.sleep(0.01)
    await pilot.pause()


if __name__ == "__main__":
    main()

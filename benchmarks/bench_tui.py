"""Time one editor refresh: edit -> analyse -> plot text, for a 4-band project at 2048 points.

What the editor does after a typed value: make the new project
(planner.edits, checked like a file), analyse it (designs are cached; only
the edited filter is redesigned), build the plot data and draw the plot with
plotext at the plot's size. Baseline, in the same process: the band responses
alone with scipy.signal.sosfreqz called band by band on the same grid.
(and turn it into Rich text, as the widget does). Prints milliseconds and the ratio refresh / baseline.

Run:  python benchmarks/bench_tui.py
"""

from __future__ import annotations

import os

# One BLAS thread unless set (as the crossplan command does; see DEVELOPERS.md), before numpy.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import sys
from pathlib import Path

from rich.text import Text
from scipy import signal

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from bench_check import best as best_s, four_band_project  # noqa: E402

from planner import edits, engine, project  # noqa: E402
from planner.engine.analyse import start_grid
from planner.present.plots import freq_plot  # noqa: E402
from planner.tui import views  # noqa: E402


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
            r = engine.analyse(p)
            d = views.plot_data(r, "magnitude", 1, 900.0)
            s = freq_plot(d.series, width=width, height=height, ylabel=d.unit, ylim=d.ylim,
                          title=d.title, color=True, marks_hz=(*d.marks_hz, d.cursor_hz),
                          hline=d.hline)
            Text.from_ansi(s, no_wrap=True)   # what the plot widget returns from render()
        return run

    def edit_only():
        edits.set_filter_params(state["p"], 1, 1, freq=901.0)

    def analyse_only():
        engine.analyse(state["p"])

    t_base = best(baseline)
    print(f"4 bands x {designs[0].n_sections} sections, {len(freqs)} points")
    print(f"baseline scipy.signal.sosfreqz band by band: {t_base:7.2f} ms")
    print(f"edit (checked new project):                  {best(edit_only):7.2f} ms")
    print(f"analyse (responses, sum, crossings, checks): {best(analyse_only):7.2f} ms")
    for w, h in ((50, 17), (120, 40)):
        t = best(refresh(w, h))
        print(f"edit -> analyse -> plot text at {w}x{h}:{' ' * (10 - len(f'{w}x{h}'))}"
              f"{t:7.2f} ms  (ratio to baseline {t / t_base:.2f}x; budget 100 ms)")


if __name__ == "__main__":
    main()

"""The crossplan editor: a Textual app over the core (edits, history, engine, report).

The app owns the state (history of projects, the selection, the view and
the cursor). Widgets post messages up; the app applies an edit through
:mod:`planner.edits`, records it in :class:`~planner.history.History`, shows
the new project at once and starts the analysis in a worker thread
(exclusive: the latest edit wins). The worker's report is pushed down to the
check bar, the warnings and the plot.
"""

from __future__ import annotations

import re
import textwrap
import time
from dataclasses import dataclass
from functools import partial
from pathlib import Path

from textual import on, work
from textual.app import App, ComposeResult
from textual.binding import Binding
from textual.command import DiscoveryHit, Hit, Hits, Provider
from textual.containers import Vertical, VerticalScroll
from textual.widgets import Footer, Input

from planner import edits, engine, export, filters as fk, progress, project as pj, units
from planner.crossovers import crossover_points, move_crossover
from planner.drivers import driver_fields
from planner.dsp.acoustic import speed_of_sound_m_s
from planner.errors import CrossplanError, DesignCancelled, ProjectError, SpecNotMetError
from planner.history import History
from planner.model import Project
from planner.present.plots import freq_canvas
from planner.present.text import SAFETY_NOTE
from planner.tui import views
from planner.tui.autosave import FileGuard
from planner.tui.screens import (ChoiceScreen, CompareScreen, HelpScreen, PathScreen,
                                 PickScreen, SafetyScreen, SettingsScreen, SolveScreen,
                                 setting_unit)
from planner.tui.widgets import (BandForm, BandList, ChainList, CheckBar, DriverForm, FieldRow,
                                 FilterForm, PlotView, Readout, TitleBar, WarningList,
                                 canvas_text)

__all__ = ["CrossplanApp", "run_editor", "ACTIONS", "Command"]

@dataclass(frozen=True)
class Command:
    """One editor action: what the key bindings, the footer, the command palette and the
    help all read (:data:`ACTIONS` is the one table of them).

    ``keys``: Textual key names, comma-separated ("" for the palette only);
    ``footer``: the footer's short label (None: not in the footer); ``priority``:
    the keys work inside a text field too; ``also``: more keys, not priority ones
    (``q`` quits, but types a "q" inside a field).
    """

    action: str
    title: str
    help: str
    keys: str = ""
    footer: str | None = None
    priority: bool = False
    also: str = ""


C = Command
#: Every action, in the footer's order first. BINDINGS, the palette and the help are made
#: from it. Inside a text field only the priority keys and the non-letter ones work, so the
#: footer then shows save, undo, back, help and quit.
ACTIONS = (
    C("save", "Save", "write the project to its file (atomically)", "ctrl+s", "Save", True),
    C("undo", "Undo", "undo the last edit", "ctrl+z", "Undo", True),
    C("add", "Add", "add a band or filter after the selected one (the list in focus)", "a",
      "Add"),
    C("remove", "Remove", "remove the selected band or filter", "x,delete", "Del"),
    C("view(1)", "Next view", "magnitude, phase, group delay, phase/level difference at a "
      "crossing, impulse, step", "v", "View"),
    C("settings", "Project settings", "project name, analysis range, points, limits, "
      "sample rate, the solvers' bounds", "e", "Setup"),
    C("back", "Back", "back to the chain; cancels a long design (and undoes its edit)",
      "escape", "Back"),
    C("help", "Help", "keys and safety notes", "question_mark,f1", "Help"),
    C("quit", "Quit", "leave (asks first when there are unsaved edits)", "ctrl+q", "Quit",
      True, also="q"),
    C("redo", "Redo", "redo the edit undone last", "ctrl+y", priority=True),
    C("duplicate", "Duplicate", "copy the selected band or filter just after it", "c"),
    C("move(None,-1)", "Move up", "move the selected band or filter up", "left_square_bracket"),
    C("move(None,1)", "Move down", "move the selected band or filter down",
      "right_square_bracket"),
    C("add('band')", "Add band", "add an empty band after the selected one"),
    C("add('filter')", "Add filter", "add a filter after the selected one (then pick its type)"),
    C("remove('band')", "Remove band", "remove the selected band"),
    C("remove('filter')", "Remove filter", "remove the selected filter"),
    C("toggle('invert')", "Invert band", "flip the polarity of the selected band", "i"),
    C("toggle('mute')", "Mute band", "leave the selected band out of the sum, or back in", "m"),
    C("toggle('solo')", "Solo band", "sum only soloed bands", "s"),
    C("bypass", "Bypass filter", "keep the filter in the chain but do not apply it", "b"),
    C("nudge_freq(-1)", "Frequency down", "selected filter frequency down 1/12 octave", "left"),
    C("nudge_freq(1)", "Frequency up", "selected filter frequency up 1/12 octave", "right"),
    C("nudge_freq(-4)", "Frequency down 1/3 octave", "selected filter frequency down 1/3 "
      "octave", "shift+left"),
    C("nudge_freq(4)", "Frequency up 1/3 octave", "selected filter frequency up 1/3 octave",
      "shift+right"),
    C("nudge_gain(1)", "Gain up", "filter (or band) gain up 0.5 dB", "plus,equals_sign"),
    C("nudge_gain(-1)", "Gain down", "filter (or band) gain down 0.5 dB", "minus"),
    C("nudge_q(1)", "Q up", "selected filter Q up 10 %", "greater_than_sign"),
    C("nudge_q(-1)", "Q down", "selected filter Q down 10 %", "less_than_sign"),
    C("cursor(1)", "Cursor up", "move the plot cursor up 1/12 octave", "full_stop"),
    C("cursor(-1)", "Cursor down", "move the plot cursor down 1/12 octave", "comma"),
    C("view(-1)", "Previous view", "step back through the plot views", "V"),
    C("focus_field('freq')", "Edit frequency", "jump to the selected filter's frequency", "f"),
    C("pick('type')", "Pick type", "pick the selected filter's type from a list", "t"),
    C("pick('family')", "Pick family", "pick the selected filter's family and order (LR4, "
      "BW2, ...) from a list"),
    C("focus_field('gain_db')", "Edit gain", "jump to the filter's (or band's) gain", "g"),
    C("focus_warnings", "Warnings", "go to the warnings list", "w"),
    C("solve('align')", "Align bands", "search band delays and polarities for the flattest, "
      "best-phased sum; preview, then apply as one edit", "A", "Align"),
    C("solve('fit')", "Fit EQ", "set the EQ filters' gains so the sum is flat; preview, then "
      "apply as one edit", "F"),
    C("zoom(0.5)", "Zoom in (time)", "impulse and step views: show half the time span", "z"),
    C("zoom(2)", "Zoom out (time)", "impulse and step views: show twice the time span", "Z"),
    C("pick_pair", "Pick crossing pair", "the two bands the phase and level difference views "
      "compare", "p"),
    C("move_crossover", "Move crossover point", "move a crossover's lowpass, highpass and tied "
      "all-passes together, as one edit", "k"),
    C("reanalyse", "Re-analyse", "design every filter and check the project again", "ctrl+r"),
    C("compare", "Compare IIR and FIR", "IIR versus FIR for every band (its own screen)", "C"),
    C("export", "Export coefficients", "write the coefficients a DSP loads (json, csv, text "
      "or wav) and a manifest, at the project's rate", "E"),
    C("rename", "Rename project", "change the project's name (the exports are named after it)"),
    C("save_as", "Save as", "write the project to a new file", "S"),
    C("open", "Open", "open a project file", "o,ctrl+o"),
)
del C

_STEP_OCT = 1 / 12
_GAIN_STEP_DB = 0.5
_Q_STEP = 1.10
#: Show "analysing ..." when a job runs longer than this (s).
_BUSY_AFTER_S = 0.2


def _analysis_size(p: Project) -> tuple:
    """What an analysis's cost grows with: bands, grid points, filters, drivers."""
    return (len(p.bands), p.analysis.points, sum(len(b.filters) for b in p.bands),
            int(p.has_drivers))


def _analysis_of(project: Project) -> tuple:
    """``(report, wall ms, target-arithmetic export or None, CPU ms)`` of ``project``, for
    :meth:`CrossplanApp._analysis_done`: the check bar and plot first, the phase hints
    later (:meth:`CrossplanApp._find_hints`). The CPU time is the calling thread's, so it
    leaves out time spent waiting for the other thread."""
    t0, c0 = time.perf_counter(), time.thread_time()
    report = engine.analyse(project, hints=False)
    rx = None
    if project.analysis.arith is not None:
        rx = export.export_rate(project, project.sample_rate, project.analysis.arith)
    return (report, (time.perf_counter() - t0) * 1000.0, rx,
            (time.thread_time() - c0) * 1000.0)


#: The phase hints are searched for once the edits have paused this long (s): under a held
#: key (about 30 presses a second) no search runs between two presses.
_HINTS_AFTER_S = 0.15

#: Seconds after the first screen before scipy.signal is loaded in the background.
_PRELOAD_AFTER_S = 0.3

#: An analysis that took less than this (ms, without the phase hints) is made on the UI
#: thread next time, when the project has no FIR to design (see CrossplanApp._inline):
#: within one frame (16.7 ms at 60 frames/s) with room for the drawing.
_INLINE_MS = 8.0


class EditorCommands(Provider):
    """The command palette's list: every editor action, by its title."""

    async def discover(self) -> Hits:
        for c in ACTIONS:
            yield DiscoveryHit(c.title, partial(self.app.run_action, c.action), help=c.help)

    async def search(self, query: str) -> Hits:
        matcher = self.matcher(query)
        for c in ACTIONS:
            score = matcher.match(c.title)
            if score > 0:
                yield Hit(score, matcher.highlight(c.title),
                          partial(self.app.run_action, c.action), help=c.help)


class CrossplanApp(App):
    """Edit a project's bands and filters and watch the sum, at any terminal size."""

    CSS_PATH = "app.tcss"
    TITLE = "crossplan"
    COMMANDS = App.COMMANDS | {EditorCommands}

    BINDINGS = [b for c in ACTIONS for b in (
        ([Binding(c.keys, c.action, c.footer or c.title, show=c.footer is not None,
                  priority=c.priority)] if c.keys else [])
        + ([Binding(c.also, c.action, c.footer or c.title, show=c.footer is not None)]
           if c.also else []))]

    def __init__(self, project: Project, path: str | None = None, fingerprint=None,
                 notices: tuple[str, ...] = (), safety_notice: bool = False) -> None:
        """``fingerprint``: the file's as read (a save notices a change made meanwhile);
        ``notices``: the loader's, shown on start; ``safety_notice``: show the safety
        notice first (the command does, every session)."""
        super().__init__()
        self._safety_notice = safety_notice
        self.history = History(project)
        self.path = path
        self.files = FileGuard(self, fingerprint)   # changed-on-disk check and autosave
        self._notices = tuple(notices)
        self.band_i = 0
        self.filter_i: int | None = 0 if project.bands[0].filters else None
        self.view = views.VIEWS[0]
        self.report: engine.Report | None = None
        self.arith_export = None     # planner.export.RateExport for analysis.arith, if set
        self._impulse_cache = None   # (report, its TimeResponse) for the time views
        self.cursor_hz = self._default_cursor(project)
        self.analysis_ms: float | None = None
        #: CPU time of the last analysis on its own thread (ms; without the time spent
        #: waiting for the UI thread), which decides where the next one runs (_inline)
        self.analysis_cpu_ms: float | None = None
        self._analysed_size: tuple | None = None     # _analysis_size of that analysis
        #: the shown report's phase warnings still wait for their hints (_find_hints)
        self.hints_pending = False
        self._gen = 0
        self._busy = False
        self._designing = False      # a long design is reporting progress
        self._cancel_gen = -1        # the analysis the user asked to stop
        self._error: str | None = None
        self._solving: str | None = None   # "align" or "fit" while a solver runs
        self.time_span_ms: float | None = None   # the time views' span (None: until settled)
        self.pair: tuple[int, int] | None = None  # the difference views' bands (None: auto)
        self._solve_cancel = False
        self._told_mates = False           # the nudge's note on crossover points, once

    # -- layout ---------------------------------------------------------------------------

    def compose(self) -> ComposeResult:
        yield TitleBar(id="title")
        with Vertical(id="main"):
            with VerticalScroll(id="side"):
                yield BandList(id="bands")
                yield ChainList(id="chain")
                yield FilterForm(id="filter-form")
                yield BandForm(id="band-form")
                yield DriverForm(id="driver-form")
            with Vertical(id="right"):
                yield PlotView(color=not self.no_color, id="plot")
                yield Readout(id="readout")
        yield CheckBar(id="checks")
        yield WarningList(id="warnings")
        yield Footer(compact=True)

    async def on_mount(self) -> None:
        await self.show_project()
        self.query_one(ChainList).focus()
        self.files.notices(self._notices)
        self.run_worker(self._start_questions(), exclusive=False)
        # scipy.signal (FIR designs, Bessel, the comparison, time views) is loaded once the
        # first screen is up, so that its half second is not spent before it nor at the
        # first use of one of those.
        self.set_timer(_PRELOAD_AFTER_S, self._preload_scipy)

    @work(thread=True, exclusive=True, group="preload", description="_preload_scipy")
    def _preload_scipy(self) -> None:
        from planner.lazyimport import scipy_module   # a thread of its own, start-up time

        scipy_module("signal")

    async def _start_questions(self) -> None:
        # The safety notice comes first; the autosave's question after it is dismissed.
        if self._safety_notice:
            await self.push_screen_wait(SafetyScreen())
        await self.files.offer_restore()

    # -- state ----------------------------------------------------------------------------

    @property
    def project(self) -> Project:
        return self.history.current

    @staticmethod
    def _default_cursor(p: Project) -> float:
        xo = sorted(f.params["freq"] for b in p.bands for f in b.filters
                    if f.type in ("lowpass", "highpass") and "freq" in f.params)
        a = p.analysis
        mid = xo[len(xo) // 2] if xo else (a.f_min * a.f_max) ** 0.5
        return min(max(mid, a.f_min), a.f_max)

    def _clamp_selection(self) -> None:
        p = self.project
        self.band_i = min(max(self.band_i, 0), len(p.bands) - 1)
        n = len(p.bands[self.band_i].filters)
        if n == 0:
            self.filter_i = None
        else:
            self.filter_i = min(max(self.filter_i or 0, 0), n - 1)
        a = p.analysis
        self.cursor_hz = min(max(self.cursor_hz, a.f_min), a.f_max)

    async def _show_lists_and_forms(self) -> None:
        """The band list, the selected band's chain and the forms, for the selection."""
        self._clamp_selection()
        p = self.project
        band = p.bands[self.band_i]
        self.query_one(BandList).show(p.bands, p.active(), self.band_i)
        self.query_one(ChainList).show(band, self.filter_i)
        flt = band.filters[self.filter_i] if self.filter_i is not None else None
        await self.query_one(FilterForm).show(self.filter_i, flt)
        await self.query_one(BandForm).show(self.band_i, band)
        await self.query_one(DriverForm).show(self.band_i, band, p.acoustics.temperature_c)

    async def show_project(self) -> None:
        """Show the current project at once, then analyse it off the UI thread."""
        self._show_title()
        await self._show_lists_and_forms()
        for screen in self.screen_stack:
            if isinstance(screen, SettingsScreen):
                screen.show(self.project)
        self.files.edited()
        self.request_analysis()

    def _show_title(self) -> None:
        p = self.project
        dirty = self.history.dirty
        self.query_one(TitleBar).show(p.name, self.path, dirty, p.sample_rate, self.view)
        # Textual's own title (screenshots are named after it; no widget shows it): setting
        # it repaints the whole screen, so only when the file changes, and without the
        # unsaved-changes mark, which the title bar shows.
        title = f"crossplan - {Path(self.path).name if self.path else 'demo'}"
        if self.title != title:
            self.title = title

    async def commit(self, new: Project, label: str) -> None:
        """Record an edit and show it."""
        self.history.push(new, label)
        await self.show_project()

    # -- analysis -------------------------------------------------------------------------

    def request_analysis(self) -> None:
        """Start analysing the current project; an older job's result is dropped."""
        self._gen += 1
        gen = self._gen
        self._busy = True
        self.hints_pending = False
        if self._inline(self.project):
            self._analyse_now(self.project, gen)
            return
        self.set_timer(_BUSY_AFTER_S, partial(self._show_busy, gen))
        self._analyse(self.project, gen)

    def _inline(self, project: Project) -> bool:
        """Whether ``project`` is analysed on the UI thread: no FIR to design (IIR designs
        take microseconds), the last analysis quick (under :data:`_INLINE_MS`) and this one
        no bigger (bands, points, filters, drivers), so the screen shows the new check in
        the same frame, without two thread hand-overs."""
        ms = self.analysis_cpu_ms
        last = self._analysed_size
        size = _analysis_size(project)
        return (ms is not None and ms < _INLINE_MS and last is not None
                and all(a <= b for a, b in zip(size, last))    # no bigger than the last one
                and not any(f.family == "fir" for b in project.bands for f in b.filters
                            if not f.bypass))

    def _analyse_now(self, project: Project, gen: int) -> None:
        """:meth:`_analyse` on the UI thread (see :meth:`_inline`)."""
        try:
            done = _analysis_of(project)
        except CrossplanError as e:
            self._analysis_failed(gen, e)
            return
        self._analysis_done(gen, *done)

    def _check_lines(self) -> tuple[str, ...] | None:
        if self.report is None:
            return None
        lines = views.check_lines(self.report)
        if self.arith_export is not None:
            lines = (*lines, views.arith_line(self.arith_export))
        return lines

    def _show_busy(self, gen: int) -> None:
        if self._busy and gen == self._gen:
            self.query_one(CheckBar).show(self._check_lines(), busy=True)

    @work(thread=True, exclusive=True, group="analysis", description="_analyse")
    def _analyse(self, project: Project, gen: int) -> None:
        """Design and check ``project`` in a thread; long designs report progress and stop
        when a newer analysis starts or the user cancels (Escape)."""
        shown = [-1, ""]

        def report(fraction: float, text: str) -> None:
            pct = int(fraction * 100)
            if (pct, text) != tuple(shown) and gen == self._gen:
                shown[:] = [pct, text]
                self.call_from_thread(self._design_progress, gen, fraction, text)

        def cancel() -> bool:
            return gen != self._gen or self._cancel_gen == gen

        try:
            with progress.scope(report=report, cancel=cancel):
                done = _analysis_of(project)
        except DesignCancelled:
            self.call_from_thread(self._design_cancelled, gen)
            return
        except CrossplanError as e:
            self.call_from_thread(self._analysis_failed, gen, e)
            return
        self.call_from_thread(self._analysis_done, gen, *done)

    def _design_progress(self, gen: int, fraction: float, text: str) -> None:
        if gen == self._gen and self._busy:
            self._designing = True
            self.query_one(CheckBar).show(None, progress=(fraction, text))

    def _drop_edit(self, gen: int) -> bool:
        """Undo the edit whose designs could not be made (when it is the last one)."""
        if gen == self._gen and self.history.can_undo:
            self.history.undo()
            return True
        return False

    def _design_cancelled(self, gen: int) -> None:
        if gen != self._gen and self._cancel_gen != gen:
            return
        self._busy = self._designing = False
        if self._drop_edit(gen):
            self.notify("design cancelled: the edit is undone", timeout=4)
            self.call_later(self.show_project)
        else:
            self.query_one(CheckBar).show(None, error="design cancelled; edit the filter or "
                                                      "press ctrl+r to design again")

    def _analysis_failed(self, gen: int, error: CrossplanError) -> None:
        if gen != self._gen:
            return
        self._busy = self._designing = False
        if isinstance(error, SpecNotMetError) and self._drop_edit(gen):
            # Never keep a filter that misses its spec: the edit is refused and undone.
            self.notify(f"refused: {error}", severity="error", timeout=10)
            self.call_later(self.show_project)
            return
        self.query_one(CheckBar).show(None, error=str(error))
        self.query_one(PlotView).data = views.PlotData((), "", None, "no plot: the analysis "
                                                       "failed (see below)", (),
                                                       self.cursor_hz, None)
        self.query_one(Readout).update("")

    def _analysis_done(self, gen: int, report: engine.Report, ms: float, rx=None,
                       cpu_ms: float | None = None) -> None:
        if gen != self._gen or report.project is not self.project:
            return
        self.analysis_cpu_ms = cpu_ms
        self._analysed_size = _analysis_size(report.project)
        self._busy = self._designing = False
        self.report = report
        self.arith_export = rx
        self.analysis_ms = ms
        self.query_one(CheckBar).show(self._check_lines())
        self._show_warnings()
        self.show_plot()
        self.hints_pending = engine.hints_pending(report)
        if self.hints_pending:
            # After a pause in the edits: while a key is held (or typed fast), each search
            # for hints would hold the interpreter for tens of ms and delay the next key's
            # check on screen; the edit that ends the run gets them.
            self.set_timer(_HINTS_AFTER_S, partial(self._hints_after_pause, report, gen))

    def _hints_after_pause(self, report: engine.Report, gen: int) -> None:
        """The timer of :meth:`_analysis_done`: search for the hints of ``report`` unless an
        edit came meanwhile (its own analysis sets its own timer)."""
        if gen == self._gen and self.report is report:
            self._find_hints(report, gen)

    def _show_warnings(self) -> None:
        """The warning list: the shown report's, then the target arithmetic's."""
        items = views.warning_items(self.report)
        if self.arith_export is not None:
            items += views.arith_warning_items(self.arith_export)
        self.query_one(WarningList).show(items)

    @work(thread=True, exclusive=True, group="analysis", description="_find_hints")
    def _find_hints(self, report: engine.Report, gen: int) -> None:
        """The phase hints of ``report`` (its fixes tried and checked), in a thread; an edit
        made meanwhile drops them (its own analysis brings its own)."""
        if gen != self._gen:
            return
        try:
            full = engine.phase_hints(report)
        except CrossplanError:      # cannot happen for a project analysed once; keep the check
            full = None
        self.call_from_thread(self._hints_done, gen, report, full)

    def _hints_done(self, gen: int, report: engine.Report, full) -> None:
        if gen != self._gen or self.report is not report:
            return
        self.hints_pending = False
        if full is None:
            return
        self.report = full
        self._show_warnings()
        if self.view in views.PAIR_VIEWS:
            self.show_plot()      # the difference views show the pair's hint

    def _impulse(self):
        """The current report's impulse responses, made on first use (the time views)."""
        r = self.report
        if self._impulse_cache is None or self._impulse_cache[0] is not r:
            self._impulse_cache = (r, views.impulse_of(r))
        return self._impulse_cache[1]

    def show_plot(self) -> None:
        if self.report is None:
            return
        impulse = None
        if self.view in views.TIME_VIEWS:
            try:
                impulse = self._impulse()
            except CrossplanError as e:
                data = views.PlotData((), "", None, f"{self.view}: none", (), self.cursor_hz, None)
                self.query_one(PlotView).data = data
                self.query_one(Readout).update(f"no {self.view} response: {e}")
                return
        data = views.plot_data(self.report, self.view, self.band_i, self.cursor_hz, impulse,
                               self.time_span_ms, self.pair)
        self.query_one(PlotView).data = data
        self.query_one(Readout).show(data)

    # -- messages from the widgets --------------------------------------------------------

    @on(BandList.Picked)
    async def _picked(self, event: BandList.Picked) -> None:
        """The highlight moved in the band list or in the chain (both post ``Picked``)."""
        if event.source is self.query_one(BandList):
            if event.index == self.band_i:
                return
            self.band_i, self.filter_i = event.index, 0
        else:
            if event.index == self.filter_i:
                return
            self.filter_i = event.index
        await self.show_project_selection()

    async def show_project_selection(self) -> None:
        """The selection moved: show it (no new analysis needed, only the plot's pair)."""
        await self._show_lists_and_forms()
        self.show_plot()

    @on(ChainList.OptionSelected, "#chain")
    def _chain_entered(self) -> None:
        f = self.query_one(FilterForm)
        if not f.focus_field("freq"):
            f.focus_field("type")

    @on(BandList.OptionSelected, "#bands")
    def _band_entered(self) -> None:
        self.query_one(ChainList).focus()

    @on(WarningList.Picked)
    async def _warning_picked(self, event: WarningList.Picked) -> None:
        w = event.item
        if w.band is not None:
            self.band_i = w.band
            self.filter_i = w.filter if w.filter is not None else self.filter_i
            if w.filter is None:
                self.filter_i = 0
            await self.show_project_selection()
            self.query_one(ChainList if w.filter is not None else BandList).focus()

    @on(FieldRow.Edited)
    async def _field_edited(self, event: FieldRow.Edited) -> None:
        event.stop()
        form = self.screen if event.target == "settings" else \
            self.query_one({"band": BandForm, "driver": DriverForm}.get(event.target, FilterForm))
        try:
            new, label = self._apply_field(event.target, event.field, event.text)
        except CrossplanError as e:
            form.refuse(e.message, event.field)
            # A long form may have its refusal line scrolled out of sight at 80x24: say it
            # where it is always seen too.
            self.notify(f"refused: {e.message}", severity="warning", timeout=6)
            return
        old = self.project
        point = self._mate_point(event.target, event.field)
        if point is not None:
            self._offer_mates(old, new, label, point)
            return
        await self.commit(new, label)
        for note in _range_notes(new, event.target, event.field, self.band_i, self.filter_i):
            self.notify(f"note: {note}", severity="warning", timeout=8)
        if event.target == "settings" and new.analysis.f_max < old.analysis.f_max \
                and event.field == "sample_rate":
            self.notify(f"'to' lowered to the new Nyquist frequency, "
                        f"{units.format(new.analysis.f_max, 'Hz', 6)}")

    def _mate_point(self, target: str, name: str):
        """The crossover point the selected filter belongs to with other filters, when its
        frequency is the field being edited (else None)."""
        if target != "filter" or name != "freq" or self.filter_i is None:
            return None
        i, j = self.band_i, self.filter_i
        for pt in crossover_points(self.project):
            if any(m.band == i and m.filter == j for m in pt.members) and len(pt.members) > 1:
                return pt
        return None

    @work(exclusive=True, group="mates", description="_offer_mates")
    async def _offer_mates(self, old: Project, new: Project, label: str, point) -> None:
        """Ask whether the rest of a crossover point moves with the filter typed into."""
        i, j = self.band_i, self.filter_i
        freq = new.bands[i].filters[j].params["freq"]
        others = [f"{old.bands[m.band].name} {fk.label(old.bands[m.band].filters[m.filter])}"
                  for m in point.members if (m.band, m.filter) != (i, j)]
        answer = await self.push_screen_wait(ChoiceScreen(
            f"This filter is one side of the crossover at {units.format_hz(point.freq_hz)}. "
            f"Move the rest of it to {units.format_hz(freq)} too ({'; '.join(others)})?",
            [("y", "yes", "Move them all"), ("n", "no", "Only this one")]))
        if answer is None or self.project is not old:
            await self.show_project()   # nothing applied: the field shows the project again
            return
        if answer == "yes":
            try:
                new = move_crossover(old, point, freq)
            except CrossplanError as e:
                self.notify(f"refused: {e}", severity="warning", timeout=6)
                await self.show_project()
                return
            label = f"move crossover {units.format_hz(point.freq_hz)} -> {units.format_hz(freq)}"
        await self.commit(new, label)
        for note in _range_notes(new, "filter", "freq", i, j):
            self.notify(f"note: {note}", severity="warning", timeout=8)

    @work(exclusive=True, group="mates", description="action_move_crossover")
    async def action_move_crossover(self) -> None:
        """Pick a crossover point and type its new frequency: every filter of it moves."""
        points = crossover_points(self.project)
        if not points:
            self.notify("no crossover points: a lowpass and a highpass at one frequency in "
                        "two bands make one", timeout=5)
            return
        p = self.project
        k = await self.push_screen_wait(PickScreen("Move which crossover?",
                                                   [pt.describe(p) for pt in points], 0))
        if k is None:
            return
        pt = points[k]
        text = await self.push_screen_wait(PathScreen(
            f"New frequency for the crossover at {units.format_hz(pt.freq_hz)} "
            f"(e.g. 2.5k):", units.format(pt.freq_hz, "Hz", 6)))
        if not text:
            return
        try:
            freq = units.parse(text, "Hz", "freq")
            new = move_crossover(self.project, pt, freq)
        except CrossplanError as e:
            self.notify(f"refused: {e}", severity="warning", timeout=6)
            return
        await self.commit(new, f"move crossover {units.format_hz(pt.freq_hz)} -> "
                               f"{units.format_hz(freq)}")

    @on(FieldRow.Pick)
    def _pick_wanted(self, event: FieldRow.Pick) -> None:
        event.stop()
        if event.row.target == "filter":
            self.action_pick(event.field)

    @work(exclusive=True, group="pick", description="action_pick")
    async def action_pick(self, name: str = "type", then_chain: bool = False) -> None:
        """Pick the selected filter's type or family from a list (one edit)."""
        f = self._selected_filter()
        if f is None:
            self.notify("no filter selected: a adds one", timeout=3)
            return
        i, j = self.band_i, self.filter_i
        if name == "family":
            choices = fk.family_choices(f.type)
            if not choices:
                self.notify(f"a {f.type.replace('_', ' ')} has no family", timeout=3)
                return
            order = f.params.get("order")
            cur = next((k for k, (_, fam, o) in enumerate(choices)
                        if fam == f.family and o in (None, order)), None)
            k = await self.push_screen_wait(PickScreen(f"Family of filter {j + 1}",
                                                       [c[0] for c in choices], cur))
            if k is not None:
                _, fam, o = choices[k]
                await self._try(lambda p: _with_family(p, i, j, f.type, fam, o),
                                f"{self.project.bands[i].name} filter {j + 1} family")
        else:
            choices = fk.type_choices()
            cur = next((k for k, (_, t) in enumerate(choices) if t == f.type), None)
            k = await self.push_screen_wait(PickScreen(f"Type of filter {j + 1}",
                                                       [c[0] for c in choices], cur))
            if k is not None and choices[k][1] != f.type:
                await self._try(lambda p: edits.set_filter_type(p, i, j, choices[k][1]),
                                f"{self.project.bands[i].name} filter {j + 1} type")
        if then_chain or k is None:
            self.query_one(ChainList).focus()
        else:
            self.query_one(FilterForm).focus_field(name)

    def _apply_field(self, target: str, name: str, text: str) -> tuple[Project, str]:
        """Turn a typed value into an edit: (new project, label for undo)."""
        p = self.project
        if target == "settings":
            if name == "name":
                return edits.set_name(p, text), f"project name {text.strip()!r}"
            if name == "sample_rate":
                fs = units.parse(text, "Hz", name)
                return edits.set_sample_rate(p, int(fs) if fs == int(fs) else fs), \
                    f"sample rate {units.format(fs, 'Hz', 7)}"
            if name == "arith":
                value = text.strip() or None
                return edits.set_analysis(p, arith=value), f"target arith {value or 'none'}"
            if name == "enforce_headroom":
                on = _parse_headroom(text)
                return edits.set_analysis(p, enforce_headroom=on), \
                    f"headroom {'fails' if on else 'warns'}"
            if name.startswith("solve_"):
                key = name[len("solve_"):]
                if key == "vary":
                    value = [v for v in re.split(r"[,\s]+", text.strip().lower()) if v]
                    label = f"align varies {', '.join(value)}"
                else:
                    value = units.parse(text, setting_unit(name), name)
                    label = f"solver {key}"
                return edits.set_solve(p, **{key: value}), label
            value = units.parse(text, setting_unit(name), name)
            if name == "points" and value == int(value):
                value = int(value)
            return edits.set_analysis(p, **{name: value}), f"analysis {name}"
        band = p.bands[self.band_i]
        if target == "driver":
            return _driver_edit(p, self.band_i, name, text), f"{band.name} driver {name}"
        if target == "band":
            if name == "name":
                value: object = text.strip()
            else:
                value = units.parse(text, "dB" if name == "gain_db" else "ms", name)
            return edits.set_band(p, self.band_i, **{name: value}), f"{band.name} {name}"
        if self.filter_i is None:
            raise ProjectError("no filter selected", field=name)
        i, j = self.band_i, self.filter_i
        flt = band.filters[j]
        label = f"{band.name} filter {j + 1} {name}"
        if name == "type":
            return edits.set_filter_type(p, i, j, fk.read_type(text)), label
        if name == "family":
            family, order = fk.read_family(flt.type, text)
            return _with_family(p, i, j, flt.type, family, order), label
        spec = next((s for s in fk.kind_of(flt).fields if s.name == name), None)
        if spec is None:
            raise ProjectError("is not a field of this filter", field=name)
        return edits.set_filter_params(p, i, j, **{name: _parse_field(spec, text)}), label

    # -- actions --------------------------------------------------------------------------

    def _scope(self) -> str:
        w = self.focused
        while w is not None:
            if isinstance(w, (BandList, BandForm, DriverForm)):
                return "band"
            if isinstance(w, (ChainList, FilterForm)):
                return "filter"
            w = w.parent
        return "filter"

    async def _try(self, make, label: str, select=None) -> bool:
        """Apply an edit; a refusal is shown as a notice and changes nothing."""
        try:
            new = make(self.project)
        except CrossplanError as e:
            self.notify(f"refused: {e}", severity="warning", timeout=5)
            return False
        if select:
            select(new)
        await self.commit(new, label)
        return True

    async def action_add(self, scope: str | None = None) -> None:
        """Add a band or a filter after the selected one."""
        scope = scope or self._scope()
        i = self.band_i
        if scope == "band":
            def sel(p):
                self.band_i, self.filter_i = i + 1, None
            await self._try(lambda p: edits.add_band(p, index=i + 1), "add band", sel)
            return
        j = self.filter_i + 1 if self.filter_i is not None else 0

        def sel(p):
            self.filter_i = j
        if await self._try(lambda p: edits.add_filter(p, i, index=j), "add filter", sel):
            # The chain keeps the focus (single-letter keys stay commands); the new
            # filter's type is picked from a list first.
            self.query_one(ChainList).focus()
            self.action_pick("type", then_chain=True)

    async def action_remove(self, scope: str | None = None) -> None:
        """Remove the selected band or filter."""
        scope = scope or self._scope()
        i, j = self.band_i, self.filter_i
        if scope == "band":
            name = self.project.bands[i].name
            await self._try(lambda p: edits.remove_band(p, i), f"remove band {name}")
        elif j is not None:
            await self._try(lambda p: edits.remove_filter(p, i, j), "remove filter")

    async def action_duplicate(self, scope: str | None = None) -> None:
        """Copy the selected band or filter just after it."""
        scope = scope or self._scope()
        i, j = self.band_i, self.filter_i
        if scope == "band":
            def sel(p):
                self.band_i = i + 1
            await self._try(lambda p: edits.duplicate_band(p, i), "duplicate band", sel)
        elif j is not None:
            def sel(p):
                self.filter_i = j + 1
            await self._try(lambda p: edits.duplicate_filter(p, i, j), "duplicate filter", sel)

    async def action_move(self, scope: str | None, delta: int) -> None:
        """Move the selected band or filter up (-1) or down (+1)."""
        scope = scope or self._scope()
        i, j = self.band_i, self.filter_i
        if scope == "band":
            def sel(p):
                self.band_i = i + delta
            await self._try(lambda p: edits.move_band(p, i, delta), "move band", sel)
        elif j is not None:
            def sel(p):
                self.filter_i = j + delta
            await self._try(lambda p: edits.move_filter(p, i, j, delta), "move filter", sel)

    async def action_toggle(self, flag: str) -> None:
        """Flip invert, mute or solo of the selected band."""
        i = self.band_i
        name = self.project.bands[i].name
        await self._try(lambda p: edits.toggle_band(p, i, flag), f"{flag} {name}")

    async def action_bypass(self) -> None:
        """Bypass the selected filter, or bring it back."""
        i, j = self.band_i, self.filter_i
        if j is not None:
            await self._try(lambda p: edits.toggle_bypass(p, i, j), "bypass filter")

    def _selected_filter(self):
        if self.filter_i is None:
            return None
        return self.project.bands[self.band_i].filters[self.filter_i]

    async def action_nudge_freq(self, steps: int) -> None:
        """Selected filter frequency by ``steps`` twelfths of an octave."""
        f = self._selected_filter()
        if f is None or "freq" not in f.params:
            self.notify("the selected filter has no frequency to nudge", timeout=3)
            return
        new = round(f.params["freq"] * 2 ** (steps * _STEP_OCT), 2)
        if not self._told_mates and self._mate_point("filter", "freq") is not None:
            self._told_mates = True
            self.notify("this moves one side of a crossover only; k moves the whole point",
                        timeout=6)
        i, j = self.band_i, self.filter_i
        await self._try(lambda p: edits.set_filter_params(p, i, j, freq=new),
                        f"nudge freq {units.format(new, 'Hz', 4)}")

    async def action_nudge_gain(self, sign: int) -> None:
        """Filter gain (or band gain when the band is in focus or the filter has none) by 0.5 dB."""
        f = self._selected_filter()
        i, j = self.band_i, self.filter_i
        if self._scope() == "filter" and f is not None and "gain_db" in f.params:
            g = round(f.params["gain_db"] + sign * _GAIN_STEP_DB, 3)
            await self._try(lambda p: edits.set_filter_params(p, i, j, gain_db=g),
                            f"nudge filter gain {g:+.1f} dB")
        else:
            g = round(self.project.bands[i].gain_db + sign * _GAIN_STEP_DB, 3)
            await self._try(lambda p: edits.set_band(p, i, gain_db=g),
                            f"nudge band gain {g:+.1f} dB")

    async def action_nudge_q(self, sign: int) -> None:
        """Selected filter Q by 10 %."""
        f = self._selected_filter()
        if f is None or f.params.get("q") is None:
            self.notify("the selected filter has no Q to nudge", timeout=3)
            return
        q = round(f.params["q"] * _Q_STEP ** sign, 4)
        i, j = self.band_i, self.filter_i
        await self._try(lambda p: edits.set_filter_params(p, i, j, q=q), f"nudge Q {q:g}")

    def action_cursor(self, steps: int) -> None:
        """Move the plot cursor by ``steps`` twelfths of an octave."""
        a = self.project.analysis
        self.cursor_hz = min(max(self.cursor_hz * 2 ** (steps * _STEP_OCT), a.f_min), a.f_max)
        self.show_plot()

    def action_zoom(self, factor: float) -> None:
        """Time views: show ``factor`` times the time span (0.5 zooms in)."""
        if self.view not in views.TIME_VIEWS or self.report is None:
            self.notify("z / Z zoom the impulse and step views (v steps to them)", timeout=3)
            return
        tr = self._impulse()
        full = float(tr.time_ms[-1])
        now = self.time_span_ms or float(views.time_series(tr)[0].x[-1])
        self.time_span_ms = min(max(now * factor, 0.05), full)
        self.show_plot()

    @work(exclusive=True, group="pick", description="action_pick_pair")
    async def action_pick_pair(self) -> None:
        """Pick the two bands the difference views compare (and show the phase difference)."""
        if self.report is None:
            return
        pairs = views.crossing_pairs(self.report)
        if not pairs:
            self.notify("no two bands cross", timeout=3)
            return
        names = [b.name for b in self.project.bands]
        k = await self.push_screen_wait(PickScreen(
            "Difference views: which pair?",
            [f"{names[a]} / {names[b]} at {units.format_hz(f)}" for a, b, f in pairs]))
        if k is None:
            return
        self.pair = pairs[k][:2]
        if self.view not in ("phase difference", "level difference"):
            self.view = "phase difference"
            self._show_title()
        self.show_plot()

    def action_view(self, step: int) -> None:
        """Next (or previous) plot view."""
        seq = views.views_for(self.project)
        k = seq.index(self.view) if self.view in seq else 0
        self.view = seq[(k + step) % len(seq)]
        self._show_title()
        self.show_plot()

    async def action_undo(self) -> None:
        label = self.history.undo()
        if label is None:
            self.notify("nothing to undo", timeout=2)
            return
        self.notify(f"undone: {label}", timeout=2)
        await self.show_project()

    async def action_redo(self) -> None:
        label = self.history.redo()
        if label is None:
            self.notify("nothing to redo", timeout=2)
            return
        self.notify(f"redone: {label}", timeout=2)
        await self.show_project()

    def action_focus_field(self, name: str) -> None:
        form = self.query_one(BandForm if name == "gain_db" and self._scope() == "band"
                              else FilterForm)
        if not form.focus_field(name) and name == "gain_db":
            self.query_one(BandForm).focus_field(name)

    def action_focus_warnings(self) -> None:
        self.query_one(WarningList).focus()

    def action_compare(self) -> None:
        """IIR versus FIR for every band (a screen of its own; the FIR searches run there)."""
        self.push_screen(CompareScreen(self.project))

    def action_reanalyse(self) -> None:
        self.request_analysis()

    def check_action(self, action: str, parameters: tuple) -> bool | None:
        """Leave "back" out (of the footer too) where it does nothing: it is there inside a
        field, in the warnings, and while a design or a search runs."""
        if action == "back":
            busy = self._solving or self._designing
            return bool(busy or isinstance(self.focused, (Input, WarningList)))
        return True

    # -- solvers --------------------------------------------------------------------------

    def action_solve(self, kind: str, bank: str | None = None) -> None:
        """Run ``align`` or ``fit`` (to the project's target, flat when it has none) in a
        worker; Escape cancels it."""
        if self._solving:
            self.notify(f"{self._solving} is running (Escape stops it)", timeout=3)
            return
        self._solving, self._solve_cancel = kind, False
        self.refresh_bindings()
        self._solve_progress(0.0, f"{kind}: starting")
        self._solve(kind, self.project, self.band_i, bank)

    _SOLVE_HINT = "(Escape stops the search; the project is not changed)"

    def _solve_progress(self, fraction: float, text: str) -> None:
        if self._solving:
            self.query_one(CheckBar).show(None, progress=(fraction, text or self._solving),
                                          hint=self._SOLVE_HINT, doing="searching")

    @work(thread=True, exclusive=True, group="solve", description="_solve")
    def _solve(self, kind: str, project: Project, band: int, bank: str | None) -> None:
        # The solvers are imported when first used (start-up time).
        from planner.solve import alignment, eqfit
        from planner.targets import project_target

        shown = [-1]

        def report(fraction: float, text: str) -> None:
            if int(fraction * 100) != shown[0]:
                shown[0] = int(fraction * 100)
                self.call_from_thread(self._solve_progress, fraction, text)

        try:
            with progress.scope(report=report, cancel=lambda: self._solve_cancel):
                target = project_target(project)
                # The bounds are the project's own (its "solve" section, or the defaults).
                if kind == "align":
                    result = alignment.align(project, project.solve.vary,
                                             alignment.Bounds.of(project), target_fn=target)
                else:
                    result = eqfit.fit(project, target, bands=[band] if bank else None,
                                       bank=bank, limit_db=project.solve.limit_db)
        except DesignCancelled:
            result = None
        except CrossplanError as e:
            self.call_from_thread(self._solve_done, kind, project, None, e)
            return
        self.call_from_thread(self._solve_done, kind, project,
                              None if self._solve_cancel else result, None)

    @work(exclusive=True, group="solve-preview", description="_solve_done")
    async def _solve_done(self, kind: str, project: Project, result,
                          error: CrossplanError | None) -> None:
        self._solving = None
        self.refresh_bindings()
        self.query_one(CheckBar).show(self._check_lines())
        if error is not None:
            if kind == "fit" and (error.field or "") == "bands" and "no EQ gains" in str(error):
                band = project.bands[self.band_i].name
                answer = await self.push_screen_wait(ChoiceScreen(
                    f"The bands have no EQ filters to fit. Add a third-octave bank of 0 dB "
                    f"peaking filters to {band!r} and fit those?",
                    [("y", "yes", "Add and fit")]))
                if answer == "yes":
                    self.action_solve("fit", bank="third-octave")
                return
            self.notify(f"{kind}: {error}", severity="warning", timeout=8)
            return
        if result is None:
            self.notify(f"{kind} stopped: the project is not changed", timeout=4)
            return
        if project is not self.project:
            self.notify(f"{kind}: the project was edited during the search; its result is "
                        "dropped (run it again)", severity="warning", timeout=6)
            return
        if kind == "align" and not result.improved:
            self.notify("align: no better alignment within the bounds; nothing to change",
                        timeout=6)
            return
        title = ("Align: band delays and polarities" if kind == "align"
                 else f"Fit EQ: gains for a {result.target.name} sum")
        width = max(40, min(self.size.width - 8, 76))
        series = views.solve_preview_series(result)
        lim = views.preview_range_db(series, project.analysis.flatness_db)
        plot = canvas_text(freq_canvas(series, width=width, height=10, ylabel="dB",
                                       ylim=(-lim, lim), hline=0.0,
                                       title="sum before and after (limit "
                                             f"+/-{project.analysis.flatness_db:g} dB)",
                                       color=not self.no_color))
        ok = await self.push_screen_wait(SolveScreen(title, views.solve_preview(kind, result),
                                                     plot))
        if ok and project is self.project:
            await self.commit(result.project, "align" if kind == "align" else "fit EQ")
            self.notify(f"{kind} applied (ctrl+z undoes it)", timeout=4)
        elif ok:
            self.notify(f"{kind}: the project changed while the preview was open; not "
                        "applied (run it again)", severity="warning", timeout=6)
        else:
            self.notify(f"{kind}: not applied; the project is as it was", timeout=3)

    def action_back(self) -> None:
        if self._solving:
            self._solve_cancel = True
            self.query_one(CheckBar).show(None, progress=(0.0, "stopping ..."),
                                          hint=self._SOLVE_HINT, doing="searching")
            return
        if self._designing:
            self._cancel_gen = self._gen
            self.query_one(CheckBar).show(None, progress=(0.0, "cancelling ..."))
            return
        if isinstance(self.focused, Input) or isinstance(self.focused, WarningList):
            self.query_one(ChainList).focus()

    def action_help(self) -> None:
        self.push_screen(HelpScreen(help_text(self)))

    def action_settings(self) -> None:
        self.push_screen(SettingsScreen(self.project))

    def action_rename(self) -> None:
        """The settings with the project's name in focus."""
        screen = SettingsScreen(self.project)
        self.push_screen(screen, callback=None)
        self.call_after_refresh(lambda: screen.query_one("#settings-name").focus())

    # -- files ----------------------------------------------------------------------------

    async def _write(self, path: str) -> bool:
        """Save (from a worker: asks when the file changed on disk since it was read)."""
        return await self.files.write(path)

    #: Screens whose answer changes the project (or asks for a path): a save while one is
    #: open would write the project without the edit it is about.
    _QUESTIONS = (ChoiceScreen, PathScreen, PickScreen, SolveScreen)

    async def action_save(self) -> None:
        """Save to the project's file (asks for one the first time); not while a question
        is open."""
        if self._question_open():
            return
        if self.path is None:
            self.action_save_as()   # a worker: it asks for the path
        else:
            self.files.save(self.path)

    def _question_open(self) -> bool:
        """True (and a note saying so) while a question of :data:`_QUESTIONS` is open."""
        if not isinstance(self.screen, self._QUESTIONS):
            return False
        self.notify("answer the question first (Escape cancels it), then save",
                    severity="warning", timeout=4)
        return True

    @work(description="action_save_as")
    async def action_save_as(self) -> bool:
        """Ask for a path and save there (asks before overwriting); not while a question
        is open."""
        if self._question_open():
            return False
        path = await self.push_screen_wait(PathScreen("Save the project as:", self.path or ""))
        if not path:
            return False
        if Path(path).exists() and path != self.path:
            answer = await self.push_screen_wait(ChoiceScreen(
                f"{path} exists. Overwrite it?", [("y", "yes", "Overwrite")]))
            if answer != "yes":
                return False
        return await self._write(path)

    @work(exclusive=True, group="export", description="action_export")
    async def action_export(self) -> None:
        """Ask for a folder and a format, then export at the project's rate."""
        p = self.project
        stem = Path(self.path).stem if self.path else export.slug(p.name)
        default = str(Path(self.path).parent / f"{stem}-export") if self.path else f"{stem}-export"
        folder = await self.push_screen_wait(PathScreen(
            f"Export '{p.name}' at {p.sample_rate:g} Hz to the folder:", default))
        if not folder:
            return
        fmt = await self.push_screen_wait(ChoiceScreen(
            "Which format? json and csv hold every section; text is for typing into a DSP; "
            "wav holds each band's impulse response.",
            [("j", "json", "json"), ("c", "csv", "csv"), ("t", "text", "text"),
             ("w", "wav", "wav")]))
        if fmt is None:
            return
        self.notify(f"exporting {fmt} to {folder} ...", timeout=2)
        self._export(p, folder, fmt)

    @work(thread=True, exclusive=True, group="export-run", description="_export")
    def _export(self, p: Project, folder: str, fmt: str) -> None:
        try:
            res = export.write_export(p, [p.sample_rate], fmt, folder,
                                      arith=p.analysis.arith or "float64", source=self.path)
        except (CrossplanError, OSError) as e:
            self.call_from_thread(self.notify, f"not exported: {e}", severity="error",
                                  timeout=10)
            return
        if not res.arith_ok:
            msg = (f"nothing exported: {p.analysis.arith} cannot hold a band (see the "
                   "warnings)")
            self.call_from_thread(self.notify, msg, severity="error", timeout=10)
            return
        names = ", ".join(f.name for f in res.files)
        state = "" if res.checks_ok else " (the checks FAIL: see the check bar)"
        self.call_from_thread(self.notify, f"exported to {folder}: {names}{state}",
                              timeout=10)

    @work(description="action_open")
    async def action_open(self) -> None:
        """Open a project file (asks first when there are unsaved edits)."""
        if self.history.dirty and not await self._settle_unsaved("open another file"):
            return
        path = await self.push_screen_wait(PathScreen("Open project file:"))
        if not path:
            return
        try:
            opened = pj.read(path)   # designed by the analysis worker
        except CrossplanError as e:
            self.notify(f"not opened: {e}", severity="error", timeout=8)
            return
        proj = opened.project
        self.files.closing()     # the edits of the file left were saved or discarded
        self.history.reset(proj)
        self.path = path
        self.files.opened(path, opened)
        self.band_i, self.filter_i, self.report = 0, 0, None
        self.cursor_hz = self._default_cursor(proj)
        await self.show_project()
        await self.files.offer_restore()

    async def _settle_unsaved(self, what: str) -> bool:
        """Ask what to do with unsaved edits; True when it is fine to go on."""
        answer = await self.push_screen_wait(ChoiceScreen(
            f"There are unsaved edits. Save them before you {what}?",
            [("s", "save", "Save"), ("d", "discard", "Discard")]))
        if answer == "discard":
            return True
        if answer == "save":
            if self.path is None:
                path = await self.push_screen_wait(PathScreen("Save the project as:"))
                return bool(path) and await self._write(path)
            return await self._write(self.path)
        return False

    @work(description="action_quit")
    async def action_quit(self) -> None:
        """Quit; with unsaved edits, ask first (save, discard or keep editing)."""
        if self.history.dirty and not await self._settle_unsaved("quit"):
            return
        self.files.closing()     # saved or discarded on purpose: no autosave to offer
        self.exit(0)


#: What the settings screen's headroom field accepts: fail (enforced) or warn.
_HEADROOM_WORDS = {"fail": True, "yes": True, "true": True, "on": True,
                   "warn": False, "no": False, "false": False, "off": False}


def _parse_headroom(text: str) -> bool:
    word = text.strip().lower()
    if word not in _HEADROOM_WORDS:
        raise ProjectError(f"must be 'fail' (a band above the headroom limit fails the check) or "
                           f"'warn' (it only warns), not {text.strip()!r}",
                           field="enforce_headroom")
    return _HEADROOM_WORDS[word]


def _parse_field(spec, text: str):
    """A typed value for a registry field, in the field's unit (None: leave it out)."""
    t = text.strip()
    if not t and not spec.required:
        return None
    if spec.rule == "choice":
        return t
    unit = {"freq": "Hz", "db": "dB"}.get(spec.rule, spec.unit if spec.unit in units.UNITS else "")
    if spec.rule == "floats":
        # "300, 2.8k", "300 2.8 kHz": a unit word belongs to the number before it.
        words = t.replace(",", " ").split()
        joined = []
        for w in words:
            if joined and not any(ch.isdigit() for ch in w):
                joined[-1] += " " + w
            else:
                joined.append(w)
        return [units.parse(v, unit, spec.name) for v in joined]
    v = units.parse(t, unit, spec.name)
    if spec.rule == "int" and v == int(v):
        return int(v)
    return v


def _driver_edit(p: Project, i: int, name: str, text: str) -> Project:
    """A typed driver field as an edit: the model or file (empty: no driver), or a field."""
    t = text.strip()
    if name == "model":
        return edits.set_driver_source(p, i, model=t or None)
    if name == "file":
        return edits.set_driver_source(p, i, file=t or None)
    d = p.bands[i].driver
    spec = next((s for s in driver_fields(d.model if d else None) if s.name == name), None)
    if spec is None:
        raise ProjectError("is not a field of this driver", field=name)
    if spec.rule == "choice":
        return edits.set_driver(p, i, **{name: t or None})
    if spec.unit != "mm":
        value = _parse_field(spec, text)
    elif not t:
        value = None
    elif t.lower().endswith(("ms", "us", "µs")) or t.lower().endswith(" s"):
        # A distance typed as a time of flight: mm = ms x c (m/s), at the project's air
        # temperature (c = 331.3 + 0.606 T m/s).
        c = speed_of_sound_m_s(p.acoustics.temperature_c)
        value = round(units.parse(t, "ms", name) * c, 3)
    else:
        value = units.parse(t.removesuffix("mm").strip(), "", name)
    return edits.set_driver(p, i, **{name: value})


def _with_family(p: Project, i: int, j: int, type_: str, family: str,
                 order: int | None) -> Project:
    """Filter ``j`` of band ``i`` made ``family`` (and ``order``, when given): one edit."""
    new = edits.set_filter_type(p, i, j, type_, family)
    if order is not None:
        new = edits.set_filter_params(new, i, j, order=order)
    return new


def _range_notes(p: Project, target: str, name: str, i: int, j: int | None) -> list[str]:
    """Notes on a just-typed frequency far outside the analysis range (valid, but likely a slip)."""
    if target != "filter" or j is None:
        return []
    flt = p.bands[i].filters[j]
    spec = next((s for s in fk.kind_of(flt).fields if s.name == name), None)
    if spec is None or spec.unit != "Hz" and spec.rule != "freq":
        return []
    v = flt.params.get(name)
    values = v if isinstance(v, (list, tuple)) else [v]
    a = p.analysis
    notes = [units.outside_range_note(float(x), a.f_min, a.f_max) for x in values
             if isinstance(x, (int, float))]
    return [n for n in notes if n]


def help_text(app: App) -> str:
    """The help screen: keys from the bindings, how edits work, and the safety cautions."""
    lines = ["SAFETY", "  " + SAFETY_NOTE, "", "KEYS (also in the command palette, ctrl+p)", ""]
    for c in ACTIONS:
        keys = ", ".join(app.get_key_display(Binding(k, ""))
                         for k in filter(None, (c.keys + "," + c.also).split(",")))
        # wrapped with the continuation under the title (the help box is about 70 wide)
        lines += textwrap.wrap(f"{keys or '(palette)':<12} {c.title} - {c.help}", 66,
                               initial_indent="  ", subsequent_indent=" " * 15)
    lines += [
        "  tab / shift+tab    next / previous panel or field",
        "  up / down          select a band or filter",
        "  enter              on a filter: edit its fields; in a field: apply",
        "  ctrl+p             command palette (every action)",
        "",
        "EDITING",
        "  Type values as you would write them: 2k, 2.2 kHz, 350, -3 dB, 0.7, 1.5ms.",
        "  A value that breaks a rule (above Nyquist, Q <= 0, ...) is refused where you",
        "  typed it, with the reason; the project is not changed. Escape leaves the field.",
        "  With the band list in focus, a/x/c/[/] act on bands; otherwise on filters.",
        "  Nudges: left/right frequency 1/12 octave (shift: 1/3), +/- gain 0.5 dB,",
        "  < > Q 10 %. Every edit can be undone (ctrl+z) and redone (ctrl+y).",
        "  Band list markers: M muted, S solo, I polarity inverted; 'off' = not summed.",
        "",
        "CHECKS (bottom bar; states read ok / FAIL)",
        "  sum: largest deviation of the summed response from 0 dB, against the limit;",
        "  crossing: the worst phase difference where two bands cross above the floor;",
        "  headroom: each band's peak gain (above 0 dB it can clip). Warnings: select",
        "  one (w, then enter) to go to its band or filter.",
        "",
        "SAMPLE RATE (e: analysis settings)",
        "  A new rate redesigns every filter. It is refused, naming them, while any filter",
        "  would be at or above the new Nyquist frequency: lower those filters first, so",
        "  that the project always stays valid and saveable. 'to' is lowered to Nyquist.",
    ]
    return "\n".join(lines)


def run_editor(project: Project, path: str | None, fingerprint=None,
               notices: tuple[str, ...] = ()) -> int:
    """Run the editor on ``project`` (from ``path``, or None for the demo); return an exit code.

    ``fingerprint`` is the file's as it was read (:func:`planner.project.read`), so that a
    save notices a change made meanwhile; ``notices`` are the loader's, shown on start. The
    safety notice is shown first.
    """
    result = CrossplanApp(project, path, fingerprint, notices, safety_notice=True).run()
    return int(result or 0)

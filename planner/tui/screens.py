"""The editor's modal screens: help, a yes/no/cancel question, a path prompt, the analysis
settings, and the IIR-versus-FIR comparison."""

from __future__ import annotations

from textual import on, work
from textual.app import ComposeResult, ScreenStackError
from textual.binding import Binding
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import ModalScreen, Screen
from textual.widgets import Button, Input, Label, OptionList, Static
from textual.await_complete import AwaitComplete
from textual.widgets.option_list import Option
from rich.text import Text

from planner import compare, config, progress, units
from planner.defaults import ALIGN_VARIABLES
from planner.errors import CrossplanError, DesignCancelled
from planner.present.text import compare_text
from planner.model import Project
from planner.tui.widgets import FieldRow, progress_text

__all__ = ["SafetyScreen", "SAFETY_NOTICE", "HelpScreen", "ChoiceScreen", "PathScreen",
           "PickScreen", "SolveScreen", "SettingsScreen", "SETTINGS", "setting_unit",
           "CompareScreen"]


#: The notice shown when the editor starts (common practice in the trade; no published source).
SAFETY_NOTICE = (
    "Before you play anything through these filters:\n\n"
    "- Start quiet: every new filter set at low volume, then raise it slowly.\n"
    "- Protect tweeters: a series capacitor or a highpass in place before any test; a "
    "missing or bypassed highpass can destroy one in seconds.\n"
    "- Beware of boosts (EQ, shelves, a Linkwitz transform) and of test signals: sweeps and "
    "noise carry a lot of energy.\n"
    "- Keep within the driver and amplifier manufacturers' limits and your local "
    "regulations on sound levels and hearing protection.\n\n"
    "Any key goes on to the editor (? shows this again)."
)


class _DismissOnce:
    """A screen that answers once: a second dismiss is ignored.

    Textual takes a screen off the stack as soon as it is dismissed, but keys
    already queued for it are still delivered to it. Without this guard a fast
    second key (two keys in one read of the terminal, over SSH or tmux) would
    dismiss it again, run its callback twice and pop the editor's own screen.
    """

    def dismiss(self, result=None) -> AwaitComplete:
        try:
            current = self.app.screen is self
        except ScreenStackError:       # no screen stack any more (the app is closing)
            current = False
        if not current:
            return AwaitComplete.nothing()
        return super().dismiss(result)


class SafetyScreen(_DismissOnce, ModalScreen[None]):
    """The safety notice at start; any key dismisses it (and does nothing else)."""

    def compose(self) -> ComposeResult:
        with Vertical(id="safety-box") as box:
            box.border_title = "Safety first"
            yield Static(SAFETY_NOTICE, id="safety-text", markup=False)

    def on_key(self, event) -> None:
        event.stop()
        event.prevent_default()
        self.dismiss(None)

    def on_click(self) -> None:
        self.dismiss(None)


class HelpScreen(_DismissOnce, ModalScreen[None]):
    """The keys, the sample-rate rule and the safety cautions."""

    BINDINGS = [Binding("escape,q,question_mark,f1", "dismiss", "Close")]

    def __init__(self, text: str) -> None:
        super().__init__()
        self._text = text

    def compose(self) -> ComposeResult:
        with VerticalScroll(id="help-box") as box:
            box.border_title = "Help (Escape closes; arrows scroll)"
            yield Static(self._text, id="help-text", markup=False)

    def on_mount(self) -> None:
        self.query_one("#help-box").focus()


class ChoiceScreen(_DismissOnce, ModalScreen[str | None]):
    """A question with a few answers, each on a key; Escape answers None (cancel)."""

    BINDINGS = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, question: str, answers: list[tuple[str, str, str]]) -> None:
        """``answers``: (key, value, label) triples, e.g. ("s", "save", "Save and quit")."""
        super().__init__()
        self._question = question
        self._answers = answers

    def compose(self) -> ComposeResult:
        with Vertical(id="choice-box"):
            yield Label(self._question, id="choice-question", markup=False)
            with Horizontal(id="choice-buttons"):
                for key, value, label in self._answers:
                    # "(y)", not "[y]": square brackets would be read as markup
                    yield Button(f"{label} ({key})", id=f"answer-{value}")
                yield Button("Cancel (esc)", id="answer-cancel")

    def on_key(self, event) -> None:
        for key, value, _ in self._answers:
            if event.key == key:
                event.stop()
                self.dismiss(value)

    @on(Button.Pressed)
    def _pressed(self, event: Button.Pressed) -> None:
        value = (event.button.id or "").removeprefix("answer-")
        self.dismiss(None if value == "cancel" else value)

    def action_cancel(self) -> None:
        self.dismiss(None)


class PathScreen(_DismissOnce, ModalScreen[str | None]):
    """Ask for a file path (open, save as). Enter answers; Escape cancels."""

    BINDINGS = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, prompt: str, value: str = "") -> None:
        super().__init__()
        self._prompt = prompt
        self._value = value

    def compose(self) -> ComposeResult:
        with Vertical(id="path-box"):
            yield Label(self._prompt)
            yield Input(self._value, id="path-input", placeholder="e.g. my-speaker.json")
            yield Label("Enter: ok   Escape: cancel", classes="hint")

    @on(Input.Submitted)
    def _submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self.dismiss(event.value.strip() or None)

    def action_cancel(self) -> None:
        self.dismiss(None)


class PickScreen(_DismissOnce, ModalScreen[int | None]):
    """Pick one of a list (a filter's type or family): arrows and Enter pick, a letter jumps
    to the next entry starting with it, Escape keeps what there was (answers None).

    Answers the index of the entry picked. Letters never reach the editor's
    single-letter keys while the list is open.
    """

    BINDINGS = [Binding("escape", "cancel", "Keep as is")]

    def __init__(self, title: str, entries: list[str], current: int | None = None) -> None:
        super().__init__()
        self._title = title
        self._entries = entries
        self._current = current

    def compose(self) -> ComposeResult:
        with Vertical(id="pick-box") as box:
            box.border_title = self._title
            yield OptionList(*[Option(Text(e)) for e in self._entries], id="pick-list")
            yield Label("Enter picks, a letter jumps, Esc keeps",
                        classes="hint")

    def on_mount(self) -> None:
        ol = self.query_one(OptionList)
        ol.highlighted = self._current if self._current is not None else 0
        ol.focus()

    def on_key(self, event) -> None:
        ch = event.character
        if ch and len(ch) == 1 and ch.isprintable() and not ch.isspace():
            event.stop()
            event.prevent_default()
            ol = self.query_one(OptionList)
            n = len(self._entries)
            start = (ol.highlighted or 0) + 1
            for k in range(n):
                i = (start + k) % n
                if self._entries[i].lower().startswith(ch.lower()):
                    ol.highlighted = i
                    break

    @on(OptionList.OptionSelected)
    def _picked(self, event: OptionList.OptionSelected) -> None:
        event.stop()
        self.dismiss(event.option_index)

    def action_cancel(self) -> None:
        self.dismiss(None)


class SolveScreen(_DismissOnce, ModalScreen[bool]):
    """A solver's result before it is applied: Enter (or y) applies it as one edit that
    ctrl+z undoes; Escape (or n) leaves the project as it is. Answers True to apply."""

    BINDINGS = [Binding("escape,n", "reject", "Keep the project as it is"),
                Binding("enter,y", "accept", "Apply")]

    def __init__(self, title: str, text: str, plot=None) -> None:
        """``plot``: the sum before and after as drawn text (Rich), shown under the figures."""
        super().__init__()
        self._title = title
        self._text = text
        self._plot = plot

    def compose(self) -> ComposeResult:
        with VerticalScroll(id="solve-box") as box:
            box.border_title = self._title
            yield Static(self._text, id="solve-text", markup=False)
            yield Label("Enter/y: apply (one edit; ctrl+z undoes it)   Escape/n: keep as is",
                        classes="hint")
            if self._plot is not None:
                yield Static(self._plot, id="solve-plot")

    def on_mount(self) -> None:
        self.query_one("#solve-box").focus()

    def on_key(self, event) -> None:
        # Letters other than y/n do nothing here (never the editor's single-letter keys).
        if event.character and event.character.isprintable() and event.key not in ("y", "n"):
            event.stop()
            event.prevent_default()

    def action_accept(self) -> None:
        self.dismiss(True)

    def action_reject(self) -> None:
        self.dismiss(False)


#: (field, label, unit) of the settings screen; "sample_rate" is the project's rate.
SETTINGS = (
    ("name", "project name", ""),
    ("sample_rate", "sample rate", "Hz"),
    ("f_min", "from", "Hz"),
    ("f_max", "to", "Hz"),
    ("points", "points", ""),
    ("flatness_db", "flat +/-", "dB"),
    ("phase_deg", "phase deg", ""),
    ("crossing_floor_db", "floor", "dB"),
    ("arith", "target arith", ""),
    ("enforce_headroom", "headroom", ""),
    # The solvers' defaults (the file's "solve" section; crossplan align and fit too).
    ("solve_vary", "align varies", ""),
    ("solve_max_delay_ms", "align delay", "ms"),
    ("solve_trim_db", "align trim", "dB"),
    ("solve_freq_octaves", "align octaves", ""),
    ("solve_limit_db", "fit gains", "dB"),
)


def setting_unit(name: str) -> str:
    """The unit a settings field is shown and typed in (:data:`SETTINGS`)."""
    return next(u for n, _, u in SETTINGS if n == name)


class SettingsScreen(_DismissOnce, ModalScreen[None]):
    """The project's name, analysis range, points, limits and the sample rate; each field
    applies on Enter.

    The rows post :class:`~planner.tui.widgets.FieldRow.Edited` with target
    ``"settings"`` up to the app, which applies the edit and calls
    :meth:`show` or :meth:`refuse`.
    """

    # Up and down move between the fields before the scrolling box takes them (focus
    # scrolls it to the field).
    BINDINGS = [Binding("escape", "dismiss", "Close"),
                Binding("down", "app.focus_next", "Next field", show=False, priority=True),
                Binding("up", "app.focus_previous", "Previous field", show=False,
                        priority=True)]

    def __init__(self, project: Project) -> None:
        super().__init__()
        self._project = project

    def compose(self) -> ComposeResult:
        with VerticalScroll(id="settings-box") as box:
            box.border_title = "Project settings (Enter applies a field, Escape closes)"
            for name, label, unit in SETTINGS:
                yield FieldRow("settings", name, label, self._text(name, unit))
            yield Static("", classes="refusal", id="settings-refusal", markup=False)
            yield Static("A new sample rate redesigns every filter (refused, naming them, "
                         "while one would reach the new Nyquist frequency; 'to' comes down "
                         "to Nyquist if needed). Target arith "
                         "(float32, q1.31, q2.30, ...; empty: none) re-checks the bands "
                         "rounded as the DSP computes. Headroom: 'warn' or 'fail' above "
                         f"{config.HEADROOM_LIMIT_DB:+g} dB. Align varies some of "
                         f"{', '.join(ALIGN_VARIABLES)} within its delay (ms), trim (+/- dB) "
                         "and octaves; fit sets gains within +/- dB.", classes="hint")

    def _text(self, name: str, unit: str) -> str:
        p = self._project
        if name == "name":
            return p.name
        if name.startswith("solve_"):
            value = getattr(p.solve, name[len("solve_"):])
            if name == "solve_vary":
                return ", ".join(value)
            return units.format(value, unit, 6)
        value = p.sample_rate if name == "sample_rate" else getattr(p.analysis, name)
        if name == "arith":
            return value or ""
        if name == "enforce_headroom":
            return "fail" if value else "warn"
        if name == "points":
            return str(value)
        if name == "sample_rate":
            return units.format(value, "Hz", 7)
        return units.format(value, unit, 6)

    def on_mount(self) -> None:
        self.query(Input).first().focus()

    def show(self, project: Project) -> None:
        """The project changed: show its values and clear any refusal."""
        self._project = project
        for row in self.query(FieldRow):
            row.set_value(self._text(row.field_name, setting_unit(row.field_name)))
        self.refuse(None)

    @on(FieldRow.Restored)
    def _restored(self, event: FieldRow.Restored) -> None:
        event.stop()
        self.refuse(None)

    def refuse(self, message: str | None, name: str | None = None) -> None:
        self.query_one("#settings-refusal", Static).update(f"refused: {message}" if message else "")
        for r in self.query(FieldRow):
            r.input.set_class(bool(message) and r.field_name == name, "-refused")


_COMPARE_HINT = "(Escape stops the search; the project is not changed)"


class CompareScreen(_DismissOnce, Screen[None]):
    """IIR versus FIR for every band of a project, computed in a worker.

    The FIR searches can take seconds (a low crossover needs thousands of
    taps): a progress bar shows meanwhile and Escape stops them; once the
    table is there Escape closes the screen. The table is
    :func:`planner.present.text.compare_text` (no DSP here).
    """

    BINDINGS = [Binding("escape,q", "close", "Close / stop")]

    def __init__(self, project: Project) -> None:
        super().__init__()
        self._project = project
        self._stop = False
        self.running = False
        self.comparison = None

    def compose(self) -> ComposeResult:
        yield Static("IIR versus FIR: the designs meeting each band's magnitude spec "
                     "(Escape closes)", id="compare-title", markup=False)
        with VerticalScroll(id="compare-box"):
            yield Static("comparing ...", id="compare-text", markup=False)

    def on_mount(self) -> None:
        self.query_one("#compare-box").focus()
        self.running = True
        self._compare(self._project, max(70, self.app.size.width - 2))

    @work(thread=True, exclusive=True, group="compare", description="_compare")
    def _compare(self, project: Project, width: int) -> None:
        shown = [-1]

        def report(fraction: float, text: str) -> None:
            if int(fraction * 100) != shown[0]:
                shown[0] = int(fraction * 100)
                self.app.call_from_thread(self._show, progress_text(
                    fraction, text or "FIR equivalents", _COMPARE_HINT))

        try:
            with progress.scope(report=report, cancel=lambda: self._stop):
                c = compare.compare_project(project)
        except DesignCancelled:
            self.app.call_from_thread(self._done, None, "comparison stopped")
            return
        except CrossplanError as e:
            self.app.call_from_thread(self._done, None, f"cannot compare: {e}")
            return
        self.app.call_from_thread(self._done, c, compare_text(c, width))

    def _show(self, text: str) -> None:
        if self.running:
            self.query_one("#compare-text", Static).update(text)

    def _done(self, comparison, text: str) -> None:
        self.running = False
        self.comparison = comparison
        self.query_one("#compare-text", Static).update(text)

    def action_close(self) -> None:
        if self.running:
            self._stop = True
            self._show(progress_text(0.0, "stopping ...", _COMPARE_HINT))
            return
        self.dismiss(None)

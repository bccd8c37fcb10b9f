"""The editor's widgets. Each draws what the app gives it and posts a message up; none
reaches into another, and none holds DSP."""

from __future__ import annotations

from typing import Any, NamedTuple

from rich.cells import cell_len
from rich.segment import Segment
from rich.style import Style
from rich.text import Span, Text
from textual import on
from textual.app import ComposeResult
from textual.containers import Horizontal, Vertical
from textual.geometry import Size
from textual.message import Message
from textual.reactive import reactive
from textual.strip import Strip
from textual.suggester import SuggestFromList
from textual.widget import Widget
from textual.widgets import Input, Label, OptionList, Static
from textual.widgets.option_list import Option

from planner import filters as fk, units
from planner.drivers import MODELS, driver_fields
from planner.dsp.acoustic import speed_of_sound_m_s
from planner.filters import FieldSpec, families_of
from planner.model import Band, Filter
from planner.present.plots import Canvas, freq_canvas, time_canvas
from planner.progress import bar_text
from planner.tui.views import PlotData, WarningItem, readout

__all__ = ["TitleBar", "BandList", "ChainList", "FieldInput", "FieldRow", "RowSpec", "BandForm",
           "DriverForm", "FilterForm", "PlotView", "Readout", "CheckBar", "WarningList",
           "field_text", "set_title", "show_text"]


def set_title(widget: Widget, title: str) -> None:
    """Give ``widget`` the border title ``title``; nothing happens when it already has it.

    Textual repaints a widget whenever its title is assigned, the same text or not, and a
    form's repaint costs milliseconds: an edit that leaves the title as it was asks for none.
    """
    if widget.border_title != title:
        widget.border_title = title


def show_text(widget: Static, text: str) -> None:
    """Show ``text`` in ``widget``, doing no work when it is already shown.

    Every change of a widget's size makes Textual arrange the whole screen again (several
    ms at 120x40, more than the analysis of a keypress), so the layout is asked for only
    when the height may change: a different number of lines, or a line that does not
    fit the width (it wraps).
    """
    old = widget.content
    if isinstance(old, str) and text == old:
        return
    width = widget.content_size.width

    def fits(t: str) -> bool:
        return all(cell_len(line) <= width for line in t.split("\n"))

    same = (isinstance(old, str) and width > 0 and old.count("\n") == text.count("\n")
            and fits(old) and fits(text))
    widget.update(text, layout=not same)


class TitleBar(Static):
    """One line: file name, unsaved marker, rate and project name."""

    def show(self, name: str, path: str | None, dirty: bool, fs_hz: float, view: str) -> None:
        where = path or "demo, not saved yet"
        mark = " [modified]" if dirty else ""
        key = (where, mark, fs_hz, name)
        if key == getattr(self, "_shown", None):
            return
        self._shown = key
        # One line high (the style sheet): a new title never changes the layout.
        self.update(Text.assemble(("crossplan ", "bold"), f"{where}{mark}",
                                  f"  {fs_hz / 1000:g} kHz  {name}"), layout=False)


# -- lists ----------------------------------------------------------------------------------

def _plain(text: str) -> Option:
    """An option whose text is shown as is (a band called "[x]" is not markup)."""
    return Option(Text(text))


def _replace_changed(options: OptionList, old: list[str], new: list[str]) -> None:
    """Replace the prompts of ``options`` that differ from ``old`` by those of ``new`` (as
    many of each), in place: the list keeps its options and its size."""
    for i, (a, b) in enumerate(zip(old, new)):
        if a != b:
            options.replace_option_prompt_at_index(i, Text(b))


class _PickList(OptionList):
    """An option list whose highlight is the app's selection; moving it posts ``Picked``."""

    class Picked(Message):
        def __init__(self, source: "_PickList", index: int) -> None:
            super().__init__()
            self.source = source
            self.index = index

    def set_items(self, prompts: list[str], selected: int | None, empty: str) -> None:
        old = getattr(self, "_prompts", None)
        with self.prevent(OptionList.OptionHighlighted):
            if prompts and old is not None and len(old) == len(prompts):
                # As many rows as shown: the list keeps its size, the screen its layout.
                _replace_changed(self, old, prompts)
            elif prompts:
                self.set_options([_plain(p) for p in prompts])
            else:
                self.set_options([Option(Text(empty), disabled=True)])
            if prompts:
                self.highlighted = min(selected or 0, len(prompts) - 1)
        self._prompts = list(prompts) if prompts else None

    @on(OptionList.OptionHighlighted)
    def _moved(self, event: OptionList.OptionHighlighted) -> None:
        event.stop()
        self.post_message(self.Picked(self, event.option_index))


class BandList(_PickList):
    """The bands: name, gain, and M(ute) S(olo) I(nvert) markers as letters."""

    BORDER_TITLE = "Bands (M mute S solo I inv)"

    def show(self, bands: tuple[Band, ...], active: list[bool], selected: int) -> None:
        rows = []
        for b, on_ in zip(bands, active):
            flags = ("M" if b.mute else "-") + ("S" if b.solo else "-") + ("I" if b.invert else "-")
            off = "" if on_ else " off"
            rows.append(f"{b.name[:11]:<11} {b.gain_db:+5.1f}dB {flags}{off}")
        self.set_items(rows, selected, "(no bands)")


class ChainList(_PickList):
    """The chain of the selected band, one filter label a line."""

    def show(self, band: Band, selected: int | None) -> None:
        set_title(self, f"Chain: {band.name}")
        self.set_items([f"{j + 1} {fk.label(f)}" for j, f in enumerate(band.filters)], selected,
                       "(empty: a adds a filter)")


# -- forms ----------------------------------------------------------------------------------

def field_text(spec_kind: str, unit: str, value: Any) -> str:
    """A parameter's value as the form shows it (and :mod:`planner.units` reads back)."""
    if value is None:
        return ""
    if spec_kind == "freq":
        return units.format(value, "Hz", digits=6)
    if spec_kind in ("db", "q", "float"):
        return units.format(value, unit if unit in units.UNITS else "", digits=6)
    if spec_kind == "floats":
        return ", ".join(units.format(v, digits=6) for v in value)
    return str(value)


class FieldInput(Input):
    """The one-line input of a :class:`FieldRow`: a new value repaints the field only.

    Textual's Input makes its virtual size as wide as its text at every change of value,
    and a widget whose virtual size changes asks for the whole screen to be arranged again
    (about 5 ms at 120x40, on every keypress that changes a field's width). A field of one
    line, of fixed width, never changes the screen's arrangement: the new size is stored
    without that request (the input scrolls within it as before) and the field repainted.
    """

    def _watch_value(self, value: str) -> None:
        self.set_reactive(Input.virtual_size, Size(self.content_width, 1))
        super()._watch_value(value)
        self.refresh()


class RowSpec(NamedTuple):
    """What a :class:`FieldRow` shows: a form builds these on every show, and widgets from
    them only when its fields change (a widget costs far more to make than a tuple)."""

    target: str
    name: str
    label: str
    value: str
    suggest: tuple = ()
    help: str = ""
    pickable: bool = False

    def row(self) -> "FieldRow":
        return FieldRow(self.target, self.name, self.label, self.value, self.suggest,
                        self.help, self.pickable)


class FieldRow(Horizontal):
    """A label and a one-line input; Enter posts :class:`FieldRow.Edited`."""

    class Edited(Message):
        def __init__(self, row: "FieldRow", text: str) -> None:
            super().__init__()
            self.row = row
            self.target = row.target
            self.field = row.field_name
            self.text = text

    class Pick(Message):
        """Enter on a pick-list field whose value is unchanged: the app offers the list."""

        def __init__(self, row: "FieldRow") -> None:
            super().__init__()
            self.row = row
            self.field = row.field_name

    def __init__(self, target: str, name: str, label: str, value: str, suggest=(),
                 help_: str = "", pickable: bool = False) -> None:
        super().__init__(classes="field")
        self.target = target
        self.field_name = name
        self.pickable = pickable
        self._label = label
        self._value = value
        self._suggest = list(suggest)
        self.tooltip = help_ or None

    def compose(self) -> ComposeResult:
        yield Label(self._label, classes="field-label")
        sug = SuggestFromList(self._suggest, case_sensitive=False) if self._suggest else None
        yield FieldInput(self._value, suggester=sug, id=f"{self.target}-{self.field_name}",
                         select_on_focus=True)

    @property
    def input(self) -> Input:
        return self.query_one(Input)

    def set_value(self, text: str) -> None:
        self._value = text
        if self.is_mounted:
            inp = self.input
            inp.value = text
            inp.remove_class("-refused")
            if inp.has_focus:
                inp.select_all()   # the next typing replaces the value

    class Restored(Message):
        """A typed value was left without being applied: the field shows the project again."""

    @on(Input.Blurred)
    def _left(self, event: Input.Blurred) -> None:
        # Leaving a field with a refused or unapplied value shows the value the project holds.
        event.stop()
        if event.value.strip() != self._value.strip() or event.input.has_class("-refused"):
            event.input.value = self._value
            event.input.remove_class("-refused")
            self.post_message(self.Restored())

    @on(Input.Submitted)
    def _submitted(self, event: Input.Submitted) -> None:
        event.stop()
        if event.value.strip() == self._value.strip():
            self.input.remove_class("-refused")
            if self.pickable:
                self.post_message(self.Pick(self))
            return
        self.post_message(self.Edited(self, event.value))


class _Form(Vertical):
    """A titled column of field rows with one line for a refusal."""

    target = ""

    def compose(self) -> ComposeResult:
        yield Vertical(classes="rows")
        yield Static("", classes="refusal", markup=False)

    async def set_rows(self, signature: tuple, specs: list[RowSpec]) -> None:
        """Replace the rows when the fields differ (``signature``); else only update the
        values and hints that changed."""
        box = self.query_one(".rows", Vertical)
        if signature != getattr(self, "_signature", None):
            had = self.app.focused
            focus_name = had.id if isinstance(had, Input) and had in box.query(Input) else None
            rows = [sp.row() for sp in specs]
            await box.remove_children()
            await box.mount_all(rows)
            self._signature = signature
            if focus_name:
                for r in rows:
                    if r.input.id == focus_name:
                        r.input.focus()
        else:
            for old, new in zip(box.query(FieldRow), specs):
                if old._value != new.value or old.input.value != new.value:
                    old.set_value(new.value)        # (a refused text is put back too)
                if old.tooltip != (new.help or None):
                    old.tooltip = new.help or None
        self.refuse(None)

    @on(FieldRow.Restored)
    def _restored(self, event: FieldRow.Restored) -> None:
        event.stop()
        self.refuse(None)

    def refuse(self, message: str | None, name: str | None = None) -> None:
        """Show why a typed value was refused (the project is unchanged), or clear it."""
        if not message and not self.has_class("-refused"):
            return          # nothing refused to clear (each row's class was cleared with it)
        show_text(self.query_one(".refusal", Static), f"refused: {message}" if message else "")
        self.set_class(bool(message), "-refused")
        for r in self.query(FieldRow):
            r.input.set_class(bool(message) and r.field_name == name, "-refused")

    def focus_field(self, name: str) -> bool:
        for r in self.query(FieldRow):
            if r.field_name == name:
                r.input.focus()
                return True
        return False


class BandForm(_Form):
    """Name, gain (dB) and delay (ms) of the selected band; polarity as text."""

    target = "band"

    async def show(self, index: int, band: Band) -> None:
        set_title(self, f"Band {index + 1}: {'inverted' if band.invert else 'normal'} polarity")
        rows = [
            RowSpec("band", "name", "name", band.name),
            RowSpec("band", "gain_db", "gain", units.format(band.gain_db, "dB", 6),
                    help="band gain in dB, e.g. -2.5"),
            RowSpec("band", "delay_ms", "delay", units.format(band.delay_ms, "ms", 6),
                    help="band delay in ms, e.g. 0.12 or 120us"),
        ]
        await self.set_rows(("band",), rows)


class DriverForm(_Form):
    """The selected band's driver: a model (closed-box, vented-box, tweeter, flat) or a
    measurement file, then its fields (resonance, offset in mm, ...). Empty model and file:
    no driver (the check is electrical)."""

    target = "driver"

    async def show(self, index: int, band: Band, temperature_c: float = 20.0) -> None:
        """``temperature_c``: the project's air temperature, for an offset's time of flight."""
        d = band.driver
        raw = dict(d.raw) if d is not None else {}
        model = raw.get("model")
        set_title(self, "Driver: none (electrical)" if d is None else
                  f"Driver: {model or 'measured'}")
        rows = [RowSpec("driver", "model", "model", str(model or ""), tuple(MODELS),
                        "a model: " + ", ".join(MODELS) + " (empty: none)"),
                RowSpec("driver", "file", "file", str(raw.get("file") or ""), (),
                        "a measurement file (freq_hz level_db [phase_deg] lines), relative "
                        "to the project file")]
        specs = driver_fields(model) if d is not None else ()
        for sp in specs:
            unit = f" {sp.unit}" if sp.unit and sp.rule not in ("freq", "db") else ""
            hint = sp.help
            if sp.name == "offset_mm":
                mm = float(raw.get(sp.name) or 0.0)
                ms = mm / speed_of_sound_m_s(temperature_c)
                hint = (f"{sp.help}; {mm:g} mm is {ms:.4g} ms at {temperature_c:g} deg C "
                        "(type 0.05 ms to give it in ms)")
            rows.append(RowSpec("driver", sp.name, _short(sp.name) + unit,
                                field_text(sp.rule, sp.unit, raw.get(sp.name)),
                                tuple(str(c) for c in sp.choices), hint))
        await self.set_rows(("driver", model, d is None, tuple(sp.name for sp in specs)), rows)


class FilterForm(_Form):
    """Type, family and the fields (from the filter registry) of the selected filter."""

    target = "filter"

    async def show(self, index: int | None, flt: Filter | None) -> None:
        if flt is None:
            set_title(self, "Filter: none selected")
            await self.set_rows((), [])
            return
        set_title(self, f"Filter {index + 1}" + (" (bypassed)" if flt.bypass else ""))
        types = [shown for shown, _ in fk.type_choices()]
        rows = [RowSpec("filter", "type", "type", flt.type.replace("_", " "), tuple(types),
                        "filter type; Enter on it (or t) lists them", pickable=True)]
        fams = [f for f in families_of(flt.type) if f]
        if fams:
            rows.append(RowSpec("filter", "family", "family", flt.family or "", tuple(fams),
                                "one of: " + ", ".join(fams) + " (or LR4, BW2, ...); Enter "
                                "on it lists them", pickable=True))
        specs: list[FieldSpec] = list(fk.kind_of(flt).fields)
        for s in specs:
            choices = [str(c) for c in s.choices]
            unit = f" {s.unit}" if s.unit and s.rule not in ("freq", "db") else ""
            hint = s.help + (f" ({', '.join(choices)})" if choices else "")
            rows.append(RowSpec("filter", s.name, _short(s.name) + unit,
                                field_text(s.rule, s.unit, flt.params.get(s.name)),
                                tuple(choices), hint))
        await self.set_rows((flt.type, flt.family, tuple(s.name for s in specs)), rows)


#: Form labels of fields whose names are longer than the label column (8 cells).
_SHORT = {"offset_mm": "offset", "position_mm": "height", "sensitivity_db": "sens",
          "resonance_hz": "res", "rolloff_hz": "rolloff", "rolloff_order": "r-order",
          "breakup_hz": "breakup", "breakup_db": "brk gain", "breakup_q": "brk q",
          "min_phase": "minphase", "extrapolate": "extrap", "gain_db": "gain", "crossovers": "x-overs", "transition_hz": "transit",
          "atten_db": "atten", "ripple_db": "ripple", "max_taps": "max taps",
          "pass_hz": "pass", "stop_hz": "stop"}


def _short(name: str) -> str:
    return _SHORT.get(name, name)


# -- plot -----------------------------------------------------------------------------------

def canvas_text(canvas: Canvas) -> Text:
    """A drawn plot as Rich text: its runs become spans (no escape codes to re-parse)."""
    parts, spans, pos = [], [], 0
    for i, line in enumerate(canvas.lines):
        if i:
            parts.append("\n")
            pos += 1
        for text, style in line:
            if style:
                spans.append(Span(pos, pos + len(text), style))
            parts.append(text)
            pos += len(text)
    return Text("".join(parts), spans=spans, no_wrap=True)


class PlotView(Widget):
    """A plot of :class:`PlotData`, drawn at the widget's own size.

    Textual asks for it line by line (``render_line``): the drawn plot's runs
    are turned into strips of segments once per data, size and colour setting, so a repaint
    that changes neither (a layout pass after an edit elsewhere) costs nothing.
    """

    data: reactive[PlotData | None] = reactive(None)

    def __init__(self, color: bool, **kw) -> None:
        super().__init__(**kw)
        self.color = color
        self._drawn: tuple = (None, None, None, None)      # (data, size, color, strips)

    def _canvas(self) -> Canvas | Text:
        d = self.data
        w, h = self.size.width, self.size.height
        if d is None:
            return Text("analysing ...")
        if w < 20 or h < 6:
            return Text("(too small for a plot)")
        if d.time:
            return time_canvas(d.series, width=w, height=h, xlabel="ms", ylabel=d.unit,
                               title=d.title, color=self.color)
        marks = (*d.marks_hz, d.cursor_hz)
        return freq_canvas(d.series, width=w, height=h, ylabel=d.unit, ylim=d.ylim,
                           title=d.title, color=self.color, marks_hz=marks, hline=d.hline)

    def render(self) -> Text:
        """The plot as Rich text (what ``render_line`` draws, in one piece)."""
        c = self._canvas()
        return c if isinstance(c, Text) else canvas_text(c)

    def render_line(self, y: int) -> Strip:
        data, size, color, strips = self._drawn
        if data is not self.data or size != self.size or color != self.color:
            strips = self._strips()
            self._drawn = (self.data, self.size, self.color, strips)
        if 0 <= y < len(strips):
            return strips[y]
        return Strip.blank(self.size.width, self.rich_style)

    def _strips(self) -> list[Strip]:
        w = self.size.width
        base = self.rich_style
        c = self._canvas()
        if isinstance(c, Text):
            return [Strip([Segment(c.plain, base)]).adjust_cell_length(w, base)]
        styles: dict[str | None, Style] = {None: base}
        out = []
        for line in c.lines:
            segs = []
            for text, name in line:
                st = styles.get(name)
                if st is None:
                    st = styles[name] = base + Style.parse(name)
                segs.append(Segment(text, st))
            out.append(Strip(segs).adjust_cell_length(w, base))
        return out


class Readout(Static):
    """The values of each series at the cursor frequency."""

    def __init__(self, **kw) -> None:
        super().__init__("", markup=False, **kw)

    def show(self, data: PlotData | None) -> None:
        show_text(self, readout(data) if data is not None else "")


# -- checks ---------------------------------------------------------------------------------

def progress_text(fraction: float, text: str,
                  hint: str = "(Escape cancels; the edit is then undone)",
                  doing: str = "designing") -> str:
    """``"designing [#####-----]  50% FIR lowpass ...: fewest taps"`` and, below, ``hint``."""
    return f"{doing} {bar_text(fraction, text)}\n{hint}"


class CheckBar(Static):
    """Sum flatness, worst crossing and headroom, always on screen ("ok", "warn", "FAIL" as text)."""

    def __init__(self, **kw) -> None:
        super().__init__("analysing ...", markup=False, **kw)

    def show(self, lines: tuple[str, ...] | None, busy: bool = False, error: str | None = None,
             progress: tuple[float, str] | None = None, hint: str | None = None,
             doing: str = "designing") -> None:
        if progress is not None:
            show_text(self, progress_text(*progress, doing=doing) if hint is None
                      else progress_text(*progress, hint=hint, doing=doing))
            self.set_class(False, "-fail")
            return
        if error:
            show_text(self, f"analysis FAIL: {error}")
            return
        if lines is None:
            show_text(self, "analysing ...")
            return
        text = "\n".join(lines)
        show_text(self, text + ("  (analysing ...)" if busy else ""))
        self.set_class(" FAIL" in text, "-fail")


class WarningList(OptionList):
    """The analysis warnings; selecting one posts ``Picked`` with its band and filter."""

    class Picked(Message):
        def __init__(self, item: WarningItem) -> None:
            super().__init__()
            self.item = item

    def show(self, items: list[WarningItem]) -> None:
        old = getattr(self, "_items", None)
        if old is not None and [(w.text, w.band, w.filter) for w in items] == \
                [(w.text, w.band, w.filter) for w in old]:
            return          # the same warnings: nothing to lay out again
        self._items = items
        set_title(self, f"Warnings ({len(items)})" if items else "Warnings: none")
        texts = [f"! {w.text}" for w in items]
        with self.prevent(OptionList.OptionHighlighted):
            if old and len(old) == len(items) and self._full(old) and self._full(items):
                # As many warnings, and the list at its tallest before and after: the new
                # texts replace the old in place and the screen is not arranged again.
                _replace_changed(self, [f"! {w.text}" for w in old], texts)
            else:
                self.set_options([_plain(t) for t in texts]
                                 or [Option(Text("no warnings"), disabled=True)])

    def _full(self, items: list[WarningItem]) -> bool:
        """Whether ``items`` fill the list's largest height (``max-height``) for sure: each
        text takes at least ``ceil(length / width)`` lines however it wraps."""
        top = self.styles.max_height
        width = self.scrollable_content_region.width
        if top is None or not top.is_cells or width <= 0:
            return False
        lines = sum(-(-cell_len(f"! {w.text}") // width) for w in items)
        return lines >= top.value

    @on(OptionList.OptionSelected)
    def _picked(self, event: OptionList.OptionSelected) -> None:
        event.stop()
        items = getattr(self, "_items", [])
        if 0 <= event.option_index < len(items):
            self.post_message(self.Picked(items[event.option_index]))

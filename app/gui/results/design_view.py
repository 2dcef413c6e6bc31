"""Design options: what to change when a train fails its screening.

Beside the interference diagram, for one element at a time (the couplings first,
then the project's design options, then the other links and the discs):

* the natural frequencies against the element's value (a link's stiffness or a
  disc's inertia, logarithmic axes), each mode's tolerance band shaded where
  tolerances are given, the forbidden frequency bands of the excitations
  (horizontal strips: within the margin of an excitation somewhere in the
  operating range) and the admissible values (green spans along the value axis);
* the current value as a dashed line and a tried value (click or drag) with the
  verdict at each side by side.  Both verdicts are read off the window's
  intervals (:func:`core.design.element_window`: its edges are exact to 1e-9),
  never from the sampled curves;
* "Use this value" asks the main window for one undoable edit of the document
  (``designValueChosen``);
* what moves the mode selected in the modes view: its logarithmic sensitivities
  d ln f / d ln x as a sorted bar chart (:class:`core.design.Sensitivities`);
* the admissible ranges, the nearest admissible value and what blocks the rest.

The windows of the couplings and design options come with the study
(``study.design``); the window of any other element the user picks is computed
on a worker thread with the same function and margin (the view never re-chooses
what the study holds).  Values are shown in the display unit system.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtGui, QtWidgets

from app import formatting as fmt
from app.gui import theme
from core import units
from core.errors import ModelError

from . import rows as R
from ..compute import AfterPaint
from .label_layout import Spot, box, place_labels
from .legend import FlowLegend, arrange_key
from .plotting import DrawWhenShown, PlotCanvas, new_plot
from .table import ElidingComboBox, RowsModel, make_table_view, write_csv

KINDS = {"stiffness": units.STIFFNESS, "inertia": units.INERTIA}
#: the most bars of the sensitivity chart (fewer where the chart is too short for their names)
MAX_BARS = 12
#: ms to wait for the study's own windows (its second stage) before computing one here
FALLBACK_MS = 1500
#: below this width the sensitivity chart shares a tab row with the ranges below the chart
NARROW_PX = 1000
#: fills of the chart
FORBIDDEN_FILL = (179, 38, 30, 46)  # theme.FAIL, faint
ADMISSIBLE_FILL = (27, 115, 64, 34)  # theme.PASS, faint
TOLERANCE_FILL = (31, 95, 153, 60)  # theme.ACCENT, faint
TRIED = theme.ACCENT
STIFFNESS_COLOUR = theme.SERIES[0]
INERTIA_COLOUR = theme.SERIES[1]
GROUPS = ("Couplings", "Design options", "Other links", "Discs")
VERDICT_TIP = ("Judged on separation alone, by the window's intervals (their edges are exact): every elastic "
               "mode clear of every excitation by the margin over the operating range, tolerance bands "
               "included where given, every other value held. The study's verdict may also rest on the "
               "forced response.")
SENSITIVITY_CAPTION = ("% change of the frequency per 1 % change of the value: +½ the stiffness's "
                       "strain-energy share (they sum to ½), −½ the inertia's kinetic-energy share")
SENSITIVITY_TIP = (
    "Each bar: d ln f / d ln x, the per cent change of the mode's frequency for a 1 % change of the element's "
    "value, to first order. From Rayleigh's quotient (the frequency squared is the strain energy over the "
    "kinetic energy per unit frequency squared, stationary at a mode): a 1 % stiffer element raises f² by its "
    "share of the mode's strain energy, so d ln f / d ln k is half that share and the stiffness bars sum to "
    "½; a 1 % heavier disc lowers f² by its share of the kinetic energy, so d ln f / d ln J is minus half "
    "that share. Only the largest are drawn; the CSV export lists every one.")


# ================================================================== text (Qt-free)
def display_unit(quantity: str, system: str) -> str:
    """The unit of ``quantity`` ('stiffness' | 'inertia') in the display system, as typed ('kN*m/rad')."""
    return units.display_unit(KINDS[quantity], system)


def number_text(value: float, digits: int = 4, how: str = "nearest") -> str:
    """``value`` to ``digits`` significant digits, never in exponent form, trailing zeros
    dropped ('295.3', '3363000', '0.01235'); ``how``: 'nearest', 'down' or 'up'."""
    if value is None or not math.isfinite(value):
        return "—"
    if value == 0:
        return "0"
    e = math.floor(math.log10(abs(value)))
    decimals = digits - 1 - e
    if how == "nearest":
        r = round(value, decimals)
    else:
        step = 10.0 ** -decimals
        n = value / step
        n = math.floor(n + 1e-9) if how == "down" else math.ceil(n - 1e-9)
        r = round(n * step, max(decimals, 0))
    if decimals <= 0:
        return f"{r:.0f}"
    text = f"{r:.{decimals}f}"
    return text.rstrip("0").rstrip(".") if "." in text else text


def to_display(value_si: float, quantity: str, system: str) -> float:
    return units.convert(value_si, KINDS[quantity], display_unit(quantity, system))


def value_text(value_si: float, quantity: str, system: str, digits: int = 4, unit: bool = True) -> str:
    """'295.3 kN·m/rad': a value to read (pretty unit), in the display system."""
    text = number_text(to_display(value_si, quantity, system), digits)
    return f"{text} {R.pretty(display_unit(quantity, system))}" if unit else text


def quantity_text(value_si: float, quantity: str, system: str, digits: int | None = None,
                  how: str = "nearest") -> str:
    """'295.3 kN*m/rad': a value to write into the project, in the display system.

    ``digits`` None: the fewest significant digits (at least four) whose text reads back
    as ``value_si`` to 1e-9 relative, so that what is written is what was chosen."""
    unit = display_unit(quantity, system)
    v = to_display(value_si, quantity, system)
    if digits is not None:
        return f"{number_text(v, digits, how)} {unit}"
    for d in range(4, 16):
        text = f"{number_text(v, d)} {unit}"
        if math.isclose(units.parse(text, KINDS[quantity]), value_si, rel_tol=1e-9):
            return text
    return f"{v!r} {unit}"


def verdict_at(window, value: float) -> tuple[bool | None, list]:
    """(clears?, failing pairs) at ``value`` by the window's intervals: True inside an
    admissible interval (closed), False inside a blocked one (the :class:`core.design.Blocked`
    pairs whose open interval holds it), None outside the range searched."""
    lo, hi = window.range
    if not (lo * (1 - 1e-12) <= value <= hi * (1 + 1e-12)):
        return None, []
    if any(a <= value <= b for a, b in window.admissible):
        return True, []
    return False, [b for b in window.blocked if b.low < value < b.high]


def _interval_of(window, value: float):
    return next(((a, b) for a, b in window.admissible if a <= value <= b), None)


def rounded_value(window, value_si: float, quantity: str, system: str) -> float:
    """``value_si`` as it would be written (four significant digits in the display system,
    rounded inwards or with more digits where the nearest four would carry it across an edge
    of the window, e.g. the nearest admissible value, an edge itself): what the user tries is
    what "Use this value" writes, and it keeps its verdict."""
    ok, _ = verdict_at(window, value_si)
    home = _interval_of(window, value_si)
    kind = KINDS[quantity]
    for d in range(4, 12):
        for how in ("nearest", "down", "up"):
            v = units.parse(quantity_text(value_si, quantity, system, d, how), kind)
            ok2, _ = verdict_at(window, v)
            if ok2 == ok and (home is None or _interval_of(window, v) == home):
                return v
    return value_si


def pairs_text(pairs, margin: float, limit: int = 1) -> str:
    """'mode 1 within 10.0 % of Motor …, order 2; mode 2 …' for the failing pairs."""
    seen, parts = set(), []
    for b in pairs:
        if (b.mode, b.line) in seen:
            continue
        seen.add((b.mode, b.line))
        parts.append(f"mode {b.mode} within {fmt.percent(margin)} % of {b.line}")
    text = "; ".join(parts[:limit])
    if len(parts) > limit:
        text += f"; and {len(parts) - limit} more pair{'s' if len(parts) - limit > 1 else ''}"
    return text


def verdict_words(window, value: float, current: bool = False) -> tuple[bool | None, str]:
    """(colour, words) of the verdict at ``value``: 'PASS — every mode clears …' or
    'FAIL — mode 1 within 10.0 % of …'.  ``current``: the current value, judged by the
    window's own count (``current_clears``)."""
    ok, pairs = verdict_at(window, value)
    if current:
        ok = bool(window.current_clears)
    if ok is None:
        return None, "not judged: outside the range searched"
    if ok:
        return True, (f"PASS — every mode clears every excitation by {fmt.percent(window.margin)} %"
                      + (", tolerance bands included" if window.tolerances else ""))
    return False, "FAIL — " + (pairs_text(pairs, window.margin) or "does not clear every excitation")


@dataclass(frozen=True)
class Entry:
    """One element of the picker."""

    group: str
    element: str
    quantity: str  # "stiffness" | "inertia"


def picker_entries(train) -> list[Entry]:
    """Every element whose value can be chosen: the couplings first, then the project's
    design options (:func:`core.design.design_elements`), then the other links with a
    stiffness, then the discs with an inertia."""
    from core.design import design_elements
    chosen = design_elements(train)
    couplings = [(l.id, "stiffness") for l in train.links if l.kind == "coupling" and l.stiffness]
    out = [Entry(GROUPS[0], e, q) for e, q in couplings]
    out += [Entry(GROUPS[1], e, q) for e, q in chosen if (e, q) not in couplings]
    taken = {(x.element, x.quantity) for x in out}
    out += [Entry(GROUPS[2], l.id, "stiffness") for l in train.links
            if not l.is_rigid and not l.damping_only and (l.id, "stiffness") not in taken]
    out += [Entry(GROUPS[3], d.id, "inertia") for d in train.discs
            if d.inertia > 0 and (d.id, "inertia") not in taken]
    return out


def range_rows(window, train, system: str) -> list[R.Row]:
    """The admissible intervals (ascending; the one holding the current value or the nearest
    admissible value said so), then what blocks the rest of the range."""
    q = window.quantity
    rows = []
    for a, b in window.admissible:
        notes = []
        if a <= window.current <= b:
            notes.append("holds the current value")
        n = window.nearest_admissible
        if n is not None and a <= n <= b and not (a <= window.current <= b):
            shown = rounded_value(window, n, q, system)  # as "Try nearest admissible" writes it
            notes.append(f"nearest admissible value {value_text(shown, q, system)}")
        if a <= window.range[0] * (1 + 1e-12) or b >= window.range[1] * (1 - 1e-12):
            notes.append("reaches the end of the range searched")
        note = "; ".join(notes)
        rows.append(R.Row(["admissible", value_text(a, q, system, unit=False), value_text(b, q, system, unit=False),
                           note],
                          f"Admissible: {value_text(a, q, system)} to {value_text(b, q, system)}"
                          + (f" ({note})" if note else "") + ". Click to try the middle of this range.",
                          "pass", (a, b)))
    for blk in window.blocked:
        what = f"mode {blk.mode} within {fmt.percent(window.margin)} % of {blk.line}"
        rows.append(R.Row(["blocked", value_text(blk.low, q, system, unit=False),
                           value_text(blk.high, q, system, unit=False), what],
                          f"Blocked from {value_text(blk.low, q, system)} to {value_text(blk.high, q, system)}: "
                          f"{what}. Click to try the middle of this range.", "fail", (blk.low, blk.high)))
    return rows


def range_headers(quantity: str, system: str, one_line: bool = False) -> tuple:
    u = R.pretty(display_unit(quantity, system))
    if one_line:
        return ("Values", f"From, {u}", f"To, {u}", "Note")
    return ("Values", f"From\n{u}", f"To\n{u}", "Note")


def short_line(label: str) -> str:
    """A strip's short label: '2×' for 'Motor …, order 2 (major)', the fixed frequency for a
    fixed line ('100 Hz' for 'Twice line frequency (100 Hz)'), the formula of a line
    f = |a + b N| ('|6 f_supply − 6 f_out|' for 'Inverter: |6 f_supply − 6 f_out| (f = …)')."""
    if ", order " in label:
        return label.rsplit(", order ", 1)[1].replace(" (major)", "") + "×"
    if " (f = " in label:
        head = label.split(" (f = ", 1)[0]
        return head.split(": ", 1)[1] if ": " in head else head
    if label.endswith(" Hz)") and "(" in label:
        return label.rsplit("(", 1)[1][:-1]
    return label


def strip_label(labels) -> str:
    """The label of a merged strip: its lines' short labels, or the first and last and how
    many where there are more than two (the strip's tooltip lists them all)."""
    short = list(dict.fromkeys(short_line(l) for l in labels))
    if len(short) <= 2 and sum(len(t) for t in short) <= 30:
        return ", ".join(short)
    if len(short) > 2 and all(len(t) <= 6 for t in short):
        return f"{short[0]} … {short[-1]}"
    return f"{len(labels)} excitation lines" if len(labels) > 1 else short[0]


def merged_bands(forbidden) -> list[tuple[float, float, list[str]]]:
    """The forbidden frequency intervals (label, low Hz, high Hz) merged where they
    overlap: (low, high, labels), ascending.  One strip per union, so that shading
    does not darken where lines share a band."""
    out = []
    for label, lo, hi in sorted(forbidden, key=lambda t: (t[1], t[2])):
        if out and lo <= out[-1][1]:
            out[-1] = (out[-1][0], max(out[-1][1], hi), out[-1][2] + [label])
        else:
            out.append((lo, hi, [label]))
    return out


def sensitivity_items(sens, mode_number: int) -> list[tuple[str, str, float]]:
    """(quantity, element id, d ln f / d ln x) of the stiffnesses and inertias of one mode,
    largest magnitude first (:meth:`core.design.Sensitivities.ranked`, diameters left out:
    they are a shaft's stiffness and inertia moved together)."""
    return [t for t in sens.ranked(mode_number) if t[0] in ("stiffness", "inertia")]


# ================================================================== worker
class _Signals(QtCore.QObject):
    done = QtCore.Signal(object, object, object, str)  # train, (element, quantity), WindowResult or None, error


class _WindowJob(QtCore.QRunnable):
    """The window of one element the study does not hold, off the GUI thread."""

    def __init__(self, train, key, margin, signals: _Signals):
        super().__init__()
        self.train, self.key, self.margin, self.signals = train, key, margin, signals

    def run(self):
        from core.design import element_window
        try:
            w, error = element_window(self.train, self.key[0], self.key[1], screening_margin=self.margin), ""
            w.chart  # computed on first use: here, off the GUI thread
        except ModelError as exc:
            w, error = None, str(exc)
        except Exception as exc:  # never a traceback: say what failed
            w, error = None, f"{type(exc).__name__}: {exc}"
        try:
            self.signals.done.emit(self.train, self.key, w, error)
        except RuntimeError:
            pass  # the view went while the window was computed


# ================================================================== axes
def _tick_text(v: float) -> str:
    """'20', '500', '10⁵', '2·10⁵': powers of ten from 100 000 up (and below 0.001)."""
    if v >= 0.99e5 or v < 1e-3:
        e = round(math.log10(v))
        mant = v / 10 ** e
        sup = str(e).translate(str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹"))
        return f"10{sup}" if abs(mant - 1) < 1e-6 else f"{mant:g}·10{sup}"
    return number_text(v, 3)


class LogAxis(pg.AxisItem):
    """An axis of log10(value): decades as major ticks, 2 and 5 between them, labelled
    with the value itself ('20', '500', '10⁶')."""

    def tickValues(self, minVal, maxVal, size):
        if not (math.isfinite(minVal) and math.isfinite(maxVal)) or maxVal <= minVal:
            return []
        lo, hi = math.floor(minVal), math.ceil(maxVal)
        majors = [float(d) for d in range(lo, hi + 1) if minVal <= d <= maxVal]
        minors = [d + math.log10(m) for d in range(lo, hi + 1) for m in (2, 5)
                  if minVal <= d + math.log10(m) <= maxVal]
        if len(majors) + len(minors) < 3:  # less than a decade: every digit
            minors = [d + math.log10(m) for d in range(lo, hi + 1) for m in range(2, 10)
                      if minVal <= d + math.log10(m) <= maxVal]
        return [(1.0, majors), (0.3, minors)]

    def tickStrings(self, values, scale, spacing):
        return [_tick_text(10.0 ** v) for v in values]


# ================================================================== the view
class DesignView(DrawWhenShown, QtWidgets.QWidget):
    """The design-options tab (see the module docstring).

    ``designValueChosen(element id, quantity, value SI)``: the user asked to use the tried value.
    ``limited``: after ``show_study``, the sentence saying what part is missing while the rest
    shows (no operating data: the sensitivities only), else None.
    """

    designValueChosen = QtCore.Signal(str, str, float)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.study = None
        self.train = None
        self.unit_system = "SI"
        self.limited: str | None = None
        self.stale_message: str | None = None
        self.entries: list[Entry] = []
        self._entry_texts: list[str] = []  # the picker's texts of the entries, as filled
        self._key = None  # (element, quantity) shown
        self._window = None  # WindowResult shown (the study's or computed here)
        self._window_source = None  # "study" | "view"
        self._tried = None  # SI
        self._mode_index = -1
        self._mode_number = None
        self._own_train = None
        self._own = {}  # (element, quantity) -> WindowResult | error text, for _own_train
        self._running = set()
        self._queued_job = None  # (element, quantity) whose window starts on the worker after the paint
        self._job_after_paint = AfterPaint(self._start_queued_job, self)
        self._draw_pending = False
        self._bars_shown = 0
        self._bars = []
        self._mode_note = ""
        self._sens_drawn_for = None
        self._updating = False
        self._fallback = QtCore.QTimer(self)
        self._fallback.setSingleShot(True)
        self._fallback.setInterval(FALLBACK_MS)
        self._fallback.timeout.connect(self._compute_missing)

        # ---- the choice of element and the verdicts
        self.picker = ElidingComboBox(self)
        self.picker.setSizeAdjustPolicy(QtWidgets.QComboBox.AdjustToMinimumContentsLengthWithIcon)
        self.picker.setMinimumContentsLength(18)
        self.picker.setToolTip("The element whose value to choose: the couplings first, then the project's "
                               "design options, the other links (stiffness) and the discs (inertia)")
        self.picker.currentIndexChanged.connect(self._picked)
        self.nearest_button = QtWidgets.QPushButton("Try nearest admissible", self)
        self.nearest_button.setToolTip("Try the admissible value nearest the current one (by ratio)")
        self.nearest_button.clicked.connect(self.try_nearest)
        self.use_button = QtWidgets.QPushButton("Use this value", self)
        self.use_button.clicked.connect(self.use_tried_value)
        self.now_label = QtWidgets.QLabel(self)
        self.tried_label = QtWidgets.QLabel(self)
        for lab in (self.now_label, self.tried_label):
            lab.setWordWrap(True)
            lab.setTextFormat(QtCore.Qt.PlainText)
            lab.setToolTip(VERDICT_TIP)
            lab.setSizePolicy(QtWidgets.QSizePolicy.Ignored, QtWidgets.QSizePolicy.Preferred)
            lab.setStyleSheet(theme.verdict_style(None))

        # ---- the chart: frequencies against the value
        self.canvas = PlotCanvas(self)
        self.canvas.export_title = "Design options"
        axes = {"bottom": LogAxis("bottom"), "left": LogAxis("left")}
        self.plot = self.canvas.addPlot(row=0, col=0, axisItems=axes)
        theme.style_plot(self.plot, "Value", "Frequency, Hz (log scale)")
        self.plot.setMenuEnabled(False)
        self.plot.hideButtons()
        self.plot.setMouseEnabled(x=False, y=False)  # a click tries a value; nothing pans
        self.plot.getAxis("left").setWidth(56)
        self.plot.showGrid(x=True, y=True, alpha=0.18)
        self.legend = FlowLegend()
        self.canvas.addItem(self.legend, row=1, col=0)
        self.canvas.ci.layout.setRowStretchFactor(0, 10)
        self._key_side = False
        self.canvas.layout_hooks.append(self._arrange_key)
        self._drawn = []
        self._key_samples = []
        # every curve but the selected one is one path, the tolerance bands another, and the mode
        # labels come from a pool: a long train's 200 curves redraw in milliseconds, not as 200
        # plot items made and removed per edit
        self._curves_item = QtWidgets.QGraphicsPathItem()
        self._curves_item.setPen(theme.natural_frequency_pen(False))
        self._curves_item.setZValue(-5)
        self._bands_item = QtWidgets.QGraphicsPathItem()
        self._bands_item.setPen(QtGui.QPen(QtCore.Qt.NoPen))
        self._bands_item.setBrush(theme.brush(TOLERANCE_FILL))
        self._bands_item.setZValue(-20)
        for item in (self._curves_item, self._bands_item):
            item.setVisible(False)
            self.plot.addItem(item, ignoreBounds=True)
        self._label_pool = []  # TextItems kept between drawings
        self.mode_labels = []  # TextItems of the curves
        self.band_labels = []  # TextItems of the forbidden strips
        self.now_line = pg.InfiniteLine(0.0, angle=90, movable=False,
                                        pen=theme.pen(theme.INK, theme.LINE_WIDTH, QtCore.Qt.DashLine),
                                        label="now", labelOpts={"position": 0.93, "color": theme.INK,
                                                                "fill": theme.brush((255, 255, 255, 225))})
        self.now_line.setZValue(40)
        self.tried_line = pg.InfiniteLine(0.0, angle=90, movable=True, pen=theme.pen(TRIED, theme.BOLD_WIDTH),
                                          hoverPen=theme.pen(TRIED, theme.BOLD_WIDTH + 1.5),
                                          label="tried", labelOpts={"position": 0.93, "color": TRIED,
                                                                    "fill": theme.brush((255, 255, 255, 225))})
        self.tried_line.setZValue(45)
        self.tried_line.setToolTip("Tried value: drag it, or click anywhere on the chart")
        self.tried_line.sigPositionChanged.connect(self._line_dragged)
        for line in (self.now_line, self.tried_line):
            line.setVisible(False)
            self.plot.addItem(line, ignoreBounds=True)
        self.plot.scene().sigMouseClicked.connect(self._clicked)
        self.plot.vb.sigResized.connect(self._layout_labels)
        self.hover = QtWidgets.QLabel(self)
        self.hover.setStyleSheet(f"color: {theme.INK_MUTED};")
        self.hover.setSizePolicy(QtWidgets.QSizePolicy.Ignored, QtWidgets.QSizePolicy.Preferred)
        self._proxy = pg.SignalProxy(self.plot.scene().sigMouseMoved, rateLimit=30, slot=self._mouse_moved)
        self.message = QtWidgets.QLabel(self)
        self.message.setWordWrap(True)
        self.message.setAlignment(QtCore.Qt.AlignCenter)
        self.message.setStyleSheet(f"color: {theme.INK_MUTED}; font-size: {theme.TITLE_POINT_SIZE}pt;")
        self.message.hide()

        # ---- the ranges
        self.ranges_note = QtWidgets.QLabel(self)
        self.ranges_note.setWordWrap(True)
        self.ranges_note.setSizePolicy(QtWidgets.QSizePolicy.Ignored, QtWidgets.QSizePolicy.Preferred)
        self.range_model = RowsModel(range_headers("stiffness", "SI"), self, numeric_columns=(1, 2),
                                     status_column=0)
        self.range_table = make_table_view(self.range_model, self)
        self.range_table.setToolTip("The admissible values of the element (every other value held) and what "
                                    "blocks the rest of the range searched. Click a row to try its middle.")
        self.range_table.clicked.connect(self._range_clicked)

        # ---- the sensitivities of the selected mode
        self.sens_title = QtWidgets.QLabel(self)
        self.sens_title.setFont(theme.font(bold=True))
        self.sens_title.setSizePolicy(QtWidgets.QSizePolicy.Ignored, QtWidgets.QSizePolicy.Preferred)
        self.sens_canvas = PlotCanvas(self)
        self.sens_canvas.export_title = "What moves the mode"
        self.sens_plot = new_plot(self.sens_canvas, 0, "d ln f / d ln x", "")
        self.sens_plot.setMouseEnabled(x=False, y=False)
        self.sens_plot.invertY(True)
        self.sens_plot.showGrid(x=True, y=False, alpha=0.25)
        self.sens_plot.getAxis("bottom").enableAutoSIPrefix(False)
        self.sens_canvas.setMinimumHeight(105)
        self.bars = pg.BarGraphItem(x0=[0], y=[0], width=[0], height=0.66)
        self.sens_plot.addItem(self.bars)
        self.sens_plot.addItem(pg.InfiniteLine(0.0, angle=90, pen=theme.pen(theme.INK_MUTED, theme.THIN_WIDTH)))
        self._bar_tips = []
        self.bar_targets = pg.ScatterPlotItem(hoverable=True, tip=lambda x, y, data: self._bar_tip(data))
        self.sens_plot.addItem(self.bar_targets)
        self.bar_texts = []  # the value texts drawn, from _bar_text_pool
        self._bar_text_pool = []
        self._bar_ticks = None  # the names on the bar chart's axis, as last set
        self._bar_brushes = {True: theme.brush(STIFFNESS_COLOUR), False: theme.brush(INERTIA_COLOUR)}
        self._no_pen = pg.mkPen(None)
        self.sens_plot.vb.sigResized.connect(self._fit_bars)
        self.sens_caption = QtWidgets.QLabel(self)
        self.sens_caption.setWordWrap(True)
        self.sens_caption.setTextFormat(QtCore.Qt.RichText)
        self.sens_caption.setStyleSheet(f"color: {theme.INK_MUTED};")
        self.sens_caption.setSizePolicy(QtWidgets.QSizePolicy.Ignored, QtWidgets.QSizePolicy.Preferred)
        self.sens_caption.setText(self._caption())
        self.sens_caption.setToolTip(SENSITIVITY_TIP)
        self.sens_canvas.setToolTip(SENSITIVITY_TIP)

        # ---- layout
        self._build_layout()
        self.clear()

    def _caption(self) -> str:
        sq = "<span style='color:{c}'>&#9632;</span>"
        return (f"{sq.format(c=STIFFNESS_COLOUR)} stiffness &nbsp; {sq.format(c=INERTIA_COLOUR)} inertia &nbsp; "
                + SENSITIVITY_CAPTION)

    def _build_layout(self) -> None:
        top = QtWidgets.QHBoxLayout()
        top.setContentsMargins(0, 0, 0, 0)
        top.addWidget(QtWidgets.QLabel("Element"))
        top.addWidget(self.picker, 1)
        top.addWidget(self.nearest_button)
        top.addWidget(self.use_button)
        verdicts = QtWidgets.QHBoxLayout()
        verdicts.setContentsMargins(0, 0, 0, 0)
        verdicts.setSpacing(6)
        verdicts.addWidget(self.now_label, 1)
        verdicts.addWidget(self.tried_label, 1)

        # the chart (with its pointer read-out) and the message that stands in for it share one
        # place: switching between them moves nothing around them (a live edit shows the message
        # until the study's window comes; a layout change would resize and redraw the bar chart)
        chart_page = QtWidgets.QWidget(self)
        cl = QtWidgets.QVBoxLayout(chart_page)
        cl.setContentsMargins(0, 0, 0, 0)
        cl.setSpacing(2)
        cl.addWidget(self.canvas, 1)
        cl.addWidget(self.hover)
        self.chart_page = chart_page
        chart_box = QtWidgets.QStackedWidget(self)
        chart_box.addWidget(chart_page)
        chart_box.addWidget(self.message)
        self.chart_box = chart_box

        self.ranges_box = QtWidgets.QWidget(self)
        rl = QtWidgets.QVBoxLayout(self.ranges_box)
        rl.setContentsMargins(0, 2, 0, 0)
        rl.setSpacing(2)
        rl.addWidget(self.ranges_note)
        rl.addWidget(self.range_table, 1)
        self.sens_box = QtWidgets.QWidget(self)
        sl = QtWidgets.QVBoxLayout(self.sens_box)
        sl.setContentsMargins(0, 2, 0, 0)
        sl.setSpacing(2)
        sl.addWidget(self.sens_title)
        sl.addWidget(self.sens_canvas, 1)
        sl.addWidget(self.sens_caption)

        # narrow: the sensitivities and the ranges as two tabs below the chart; wide: the
        # ranges below the chart and the sensitivities beside both
        self.lower_tabs = QtWidgets.QTabWidget(self)
        self.lower_tabs.setDocumentMode(True)
        self.ranges_holder = QtWidgets.QWidget(self)
        QtWidgets.QVBoxLayout(self.ranges_holder).setContentsMargins(0, 0, 0, 0)
        self.lower = QtWidgets.QStackedWidget(self)
        self.lower.addWidget(self.lower_tabs)
        self.lower.addWidget(self.ranges_holder)
        self.left_split = QtWidgets.QSplitter(QtCore.Qt.Vertical, self)
        self.left_split.addWidget(chart_box)
        self.left_split.addWidget(self.lower)
        self.left_split.setStretchFactor(0, 3)
        self.left_split.setStretchFactor(1, 2)
        self.left_split.setChildrenCollapsible(False)
        self.side = QtWidgets.QWidget(self)
        QtWidgets.QVBoxLayout(self.side).setContentsMargins(0, 0, 0, 0)
        self.outer = QtWidgets.QSplitter(QtCore.Qt.Horizontal, self)
        self.outer.addWidget(self.left_split)
        self.outer.addWidget(self.side)
        self.outer.setStretchFactor(0, 3)
        self.outer.setStretchFactor(1, 2)
        self.outer.setChildrenCollapsible(False)
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(0, 2, 0, 0)
        lay.setSpacing(3)
        lay.addLayout(top)
        lay.addLayout(verdicts)
        lay.addWidget(self.outer, 1)
        self._narrow = None
        self._arrange(True)
        self.left_split.setSizes([620, 380])

    def resizeEvent(self, event) -> None:
        super().resizeEvent(event)
        self._arrange(self.width() < NARROW_PX)

    def _arrange(self, narrow: bool) -> None:
        if narrow == self._narrow:
            return
        self._narrow = narrow
        self.lower_tabs.clear()
        if narrow:
            self.lower_tabs.addTab(self.sens_box, "What moves the mode")
            self.lower_tabs.addTab(self.ranges_box, "Admissible values")
            self.lower.setCurrentWidget(self.lower_tabs)
            self.side.hide()
        else:
            self.ranges_holder.layout().addWidget(self.ranges_box)
            self.side.layout().addWidget(self.sens_box)
            self.lower.setCurrentWidget(self.ranges_holder)
            self.side.show()
            total = max(self.width(), NARROW_PX)
            self.outer.setSizes([int(0.64 * total), int(0.36 * total)])
            self.sens_box.show()
            self.ranges_box.show()
        self._set_sens_tab_text()

    def _arrange_key(self, w: float, h: float) -> None:
        self._key_side = arrange_key(self.canvas, self.legend, w, h, self._key_side, (80.0, 60.0), shape=1.8)

    # ------------------------------------------------------------ the result-view protocol (see panel)
    NO_DESIGN = "The design options are computed with the study; there are none for these results."
    NO_OPERATING = ("No operating data: give the reference disc, the operating speed range and an excitation "
                    "to see which values of an element clear every excitation; what moves each mode is shown.")

    def show_study(self, study) -> str | None:
        design = getattr(study, "design", None)
        if design is None:
            self.clear()
            self.limited = None
            if study.screening_error is not None:
                return f"No design options: {study.screening_error}"
            return self.NO_DESIGN
        new_model = self.train is not study.train
        self.study, self.train = study, study.train
        if self._own_train is not study.train:
            self._own_train, self._own, self._running = study.train, {}, set()
        op = study.train.operating
        has_op = op is not None and bool(op.excitations)
        self.limited = None if has_op else self.NO_OPERATING
        # without windows the chart's place holds one sentence: the sensitivities take the room
        self.chart_box.setMaximumHeight(16777215 if has_op else 90)
        for lab in (self.now_label, self.tried_label):
            lab.setVisible(has_op)
        self._fill_picker()
        if new_model or self._window is None or self._window_source != "study":
            self._show_element(keep_tried=True)
        self._select_mode_number()
        self._draw_sensitivities()
        return None

    def clear(self, message: str = "") -> None:
        self.study = self.train = None
        self._window = None
        self._window_source = None
        self._draw_pending = False
        self._clear_chart()
        self.picker.blockSignals(True)
        self.picker.clear()
        self.picker.blockSignals(False)
        self.entries = []
        self.range_model.set_rows([])
        self.ranges_note.setText("")
        for lab in (self.now_label, self.tried_label):
            self._set_verdict(lab, "", None)  # the style through its cache (a stale cache keeps a red fill off)
            lab.setMinimumHeight(0)
        self.use_button.setEnabled(False)
        self.nearest_button.setEnabled(False)
        self._clear_bars()
        self._sens_drawn_for = None
        self._fallback.stop()
        self.sens_title.setText("")
        self.hover.setText("")
        if message:
            self._say(message)

    def set_unit_system(self, system: str) -> None:
        if system == self.unit_system:
            return
        self.unit_system = system
        if self.study is not None:
            self._show_window()

    def reset_view_state(self) -> None:
        """A newly opened project: the first element again, no tried value, no mode kept."""
        self._key = None
        self.entries = []  # the picker is filled afresh, at its first element
        self._tried = None
        self._mode_index = -1
        self._mode_number = None

    def set_stale(self, message: str | None) -> None:
        """While the model on screen has an error the tried value cannot be used (the window
        belongs to the last valid model)."""
        self.stale_message = message
        self._update_use_button()

    def select_mode(self, index: int) -> None:
        """The mode selected in the modes view (index into the study's modes)."""
        self._mode_index = index
        if self.study is None:
            return
        before = self._mode_number
        self._select_mode_number()
        self._draw_sensitivities()
        if self._mode_number != before:  # its curve is drawn bold
            self._draw()

    # ------------------------------------------------------------ test and main-window API
    def elements(self) -> list[tuple[str, str]]:
        """(element id, quantity) in the picker's order."""
        return [(e.element, e.quantity) for e in self.entries]

    def select_element(self, element_id: str, quantity: str | None = None) -> None:
        for i in range(self.picker.count()):
            e = self.picker.itemData(i)
            if isinstance(e, Entry) and e.element == element_id and (quantity is None or e.quantity == quantity):
                self.picker.setCurrentIndex(i)
                return
        raise KeyError(element_id)

    def window(self):
        """The window shown (core.design.WindowResult), None while it is computed or absent."""
        return self._window

    def tried_value(self) -> float | None:
        return self._tried

    def try_value(self, value_si: float) -> None:
        """Try ``value_si`` (SI): rounded as it would be written, within the range searched."""
        w = self._window
        if w is None or not math.isfinite(value_si) or value_si <= 0:
            return
        lo, hi = w.range
        v = min(max(float(value_si), lo), hi)
        self._tried = rounded_value(w, v, w.quantity, self.unit_system)
        self._show_tried()

    def try_nearest(self) -> None:
        w = self._window
        if w is not None and w.nearest_admissible is not None:
            self.try_value(w.nearest_admissible)

    def use_tried_value(self) -> None:
        """Ask for one edit of the document: the element's value set to the tried value."""
        w = self._window
        if w is None or self._tried is None or not self.use_button.isEnabled():
            return
        self.designValueChosen.emit(w.element, w.quantity, float(self._tried))

    def stop(self) -> None:
        """No more windows computed here (the window is closing): one still queued is dropped."""
        self._queued_job = None

    def wait(self, msecs: int = 10000) -> bool:
        """Wait for a window computed here (tests, exports, closing); one still queued starts now."""
        self._start_queued_job()
        ok = self._pool.waitForDone(msecs) if hasattr(self, "_pool") else True
        QtWidgets.QApplication.processEvents()
        return ok

    #: set by the main window: (element id, quantity) -> None when the project stores that value
    #: as a number to overwrite, else the sentence why "Use this value" cannot write it
    value_writable = None

    # ------------------------------------------------------------ picker
    def _fill_picker(self) -> None:
        entries = picker_entries(self.train) if self.train is not None else []
        has_op = self.limited is None
        texts = [self._entry_text(e) for e in entries]
        if texts == self._entry_texts and entries == self.entries and self.picker.count():
            # a live edit of a value: the same elements under the same names (the picker is not
            # asked for its 400 items of a long train again)
            if self.picker.isEnabled() != has_op:
                self.picker.setEnabled(has_op)
            return
        keep = self._key
        self.entries, self._entry_texts = entries, texts
        self.picker.blockSignals(True)
        self.picker.clear()
        model = self.picker.model()
        group = None
        bold = theme.font(bold=True)
        for e in entries:
            if e.group != group:
                group = e.group
                self.picker.addItem(group, None)
                item = model.item(self.picker.count() - 1)
                item.setEnabled(False)
                item.setFont(bold)
            self.picker.addItem(self._entry_text(e), e)
            self.picker.setItemData(self.picker.count() - 1, self._entry_text(e), QtCore.Qt.ToolTipRole)
        index = -1
        for i in range(self.picker.count()):
            e = self.picker.itemData(i)
            if isinstance(e, Entry) and (index < 0 or (keep is not None and (e.element, e.quantity) == keep)):
                index = i
                if keep is None or (e.element, e.quantity) == keep:
                    break
        self.picker.setCurrentIndex(index)
        self.picker.blockSignals(False)
        self.picker.setEnabled(has_op)
        self.picker.setToolTip(self.NO_OPERATING if not has_op else
                               "The element whose value to choose: the couplings first, then the project's "
                               "design options, the other links (stiffness) and the discs (inertia)")

    def _entry_text(self, e: Entry) -> str:
        return f"{R.name_of(self.train, e.element)} — {e.quantity}"

    def _picked(self, _index: int) -> None:
        e = self.picker.currentData()
        if isinstance(e, Entry) and (e.element, e.quantity) != self._key:
            self._tried = None
            self._show_element(keep_tried=False)

    # ------------------------------------------------------------ which window
    def _show_element(self, keep_tried: bool) -> None:
        e = self.picker.currentData()
        if self.limited is not None or not isinstance(e, Entry):
            self._key = None if not isinstance(e, Entry) else (e.element, e.quantity)
            self._window = None
            self._window_source = None
            self._clear_chart()
            self._say(self.limited or "No element to choose.")
            self._show_verdicts()
            self.range_model.set_rows([])
            self.ranges_note.setText(self.limited or "")
            return
        key = (e.element, e.quantity)
        if key != self._key:
            keep_tried = False
        self._key = key
        w = self.study.design.window(*key) if self.study.design is not None else None
        source = "study"
        if w is None:
            got = self._own.get(key)
            if isinstance(got, str):
                self._window = None
                self._clear_chart()
                self._say(f"No window for {self._entry_text(e)}: {got}")
                self._show_verdicts()
                self.range_model.set_rows([])
                self.ranges_note.setText("")
                return
            w, source = got, "view"
        if w is None:
            self._window = None
            from core.design import design_elements
            if not self.study.design.windows and key in design_elements(self.train):
                # the study's second stage brings this window (app.gui.compute); a study that
                # never does (one given without its windows) gets it from here after a moment
                self._fallback.start()
            else:
                self._start_job(key)
            # the chart's page gives way to the message; its items are cleared when the window
            # comes and is drawn (clearing a long train's chart costs a live edit milliseconds)
            self._say(f"Computing the values of {self._entry_text(e)} that clear every excitation…")
            self._show_verdicts(hold=True)
            self.range_model.set_rows([])
            self.ranges_note.setText("")
            return
        old = self._tried
        self._window, self._window_source = w, source
        if not (keep_tried and old is not None and w.range[0] <= old <= w.range[1]):
            self._tried = w.current if w.current > 0 else w.nearest_admissible
        self._show_window()

    def _compute_missing(self) -> None:
        """The window still missing (the study did not bring it): compute it here."""
        if self.study is not None and self._window is None and self._key is not None and self.limited is None \
                and self._key not in self._own:
            self._start_job(self._key)

    def _start_job(self, key) -> None:
        """Compute the window of ``key`` on the worker, once the view has painted what it shows
        now: a worker running Python beside the redraw slows it through the interpreter lock
        (a long chain's window takes 0.2 s).  A newer study or element meanwhile replaces it."""
        if key in self._running or self.train is None:
            return
        queued = self._queued_job is not None
        self._queued_job = key
        if not queued:  # after the paint events this redraw posted, then a moment for the plots to settle
            self._job_after_paint.post()

    def _start_queued_job(self) -> None:
        key, self._queued_job = self._queued_job, None
        if key is None or key != self._key or self._window is not None or self.train is None \
                or key in self._own or key in self._running:
            return  # shown meanwhile, or another element chosen
        if not hasattr(self, "_pool"):
            self._pool = QtCore.QThreadPool(self)
            self._pool.setMaxThreadCount(1)
            self._signals = _Signals(self)
            self._signals.done.connect(self._job_done, QtCore.Qt.QueuedConnection)
        self._running.add(key)
        s = self.study.screening if self.study is not None else None
        self._pool.start(_WindowJob(self.train, key, None if s is None else s.margin, self._signals))

    def _job_done(self, train, key, w, error: str) -> None:
        if train is not self._own_train:
            return  # a window of an older model
        self._running.discard(key)
        self._own[key] = w if w is not None else (error or "the window could not be computed")
        if key == self._key and self._window is None and self.study is not None:
            self._show_element(keep_tried=True)

    # ------------------------------------------------------------ show a window
    def _say(self, text: str) -> None:
        if self.message.text() != text:
            self.message.setText(text)
        self.chart_box.setCurrentWidget(self.message)

    def _show_window(self) -> None:
        w = self._window
        if w is None:
            if self.study is not None:
                self._show_element(keep_tried=True)
            return
        self.chart_box.setCurrentWidget(self.chart_page)
        q = w.quantity
        name = R.name_of(self.train, w.element)
        self.canvas.export_title = f"{self.train.title}: design options, {name} {q}"
        unit = R.pretty(display_unit(q, self.unit_system))
        self.plot.setLabel("bottom", f"{name} {q}, {unit} (log scale)", color=theme.INK,
                           **{"font-size": f"{theme.BASE_POINT_SIZE}pt"})
        self.range_model.headers = list(range_headers(q, self.unit_system))
        self.range_model.headerDataChanged.emit(QtCore.Qt.Horizontal, 0, len(self.range_model.headers) - 1)
        self.range_model.set_rows(range_rows(w, self.train, self.unit_system))
        self._fit_range_columns()
        searched = (f"Searched {value_text(w.range[0], q, self.unit_system)} to "
                    f"{value_text(w.range[1], q, self.unit_system)}, every other value held, margin "
                    f"{fmt.percent(w.margin)} %" + (", tolerance bands included" if w.tolerances else "") + ". ")
        if not w.admissible:
            note = ("No value in the range clears every excitation: this element alone cannot remove the "
                    "coincidence; see what moves the mode.")
        elif w.current_clears:
            note = "The current value clears every excitation."
        elif w.nearest_admissible is not None:
            n = rounded_value(w, w.nearest_admissible, q, self.unit_system)  # as it would be written
            note = (f"Nearest admissible value: {value_text(n, q, self.unit_system)} "
                    f"({_change(n, w.current)} from the current value).")
        else:
            note = ""
        self.ranges_note.setText(searched + note)
        self.nearest_button.setEnabled(w.nearest_admissible is not None and not w.current_clears)
        self._draw()
        self._show_verdicts()

    def _show_verdicts(self, hold: bool = False) -> None:
        """The verdicts of the current and the tried value; none without a window.  ``hold``: the
        window is being computed (a live edit), the empty verdicts keep their height meanwhile, so
        that the chart below does not move up and back down on every edit."""
        w = self._window
        for lab in (self.now_label, self.tried_label):
            want = lab.height() if hold and w is None and lab.isVisible() else 0
            if hold and w is None:
                want = max(want, lab.minimumHeight())  # held already: the height before the first hold
            if lab.minimumHeight() != want:
                lab.setMinimumHeight(want)
        if w is None:
            for lab in (self.now_label, self.tried_label):
                self._set_verdict(lab, "", None)
            self.nearest_button.setEnabled(False)
            self._update_use_button()
            return
        q, s = w.quantity, self.unit_system
        ok, words = verdict_words(w, w.current, current=True)
        self._set_verdict(self.now_label, f"Now {value_text(w.current, q, s)}, separation: {words}", ok)
        self.now_label.setToolTip(self._pairs_tip(w, w.current))
        if self._tried is None or math.isclose(self._tried, w.current, rel_tol=1e-12):
            self._set_verdict(self.tried_label, "Tried: click or drag on the chart (or click a row of the "
                              "admissible values) to try a value", None)
            self.tried_label.setToolTip(VERDICT_TIP)
        else:
            ok, words = verdict_words(w, self._tried)
            self._set_verdict(self.tried_label, f"Tried {value_text(self._tried, q, s)}, separation: {words}", ok)
            self.tried_label.setToolTip(self._pairs_tip(w, self._tried))
        self._update_use_button()

    def _pairs_tip(self, w, value: float) -> str:
        _ok, pairs = verdict_at(w, value)
        text = pairs_text(pairs, w.margin, limit=len(pairs))
        return (text.replace("; ", "\n") + "\n\n" if text else "") + VERDICT_TIP

    @staticmethod
    def _set_verdict(label, text: str, ok) -> None:
        if label.text() != text:
            label.setText(text)
        style = theme.verdict_style(ok)
        if label.property("style_text") != style:
            label.setProperty("style_text", style)
            label.setStyleSheet(style)

    def _update_use_button(self) -> None:
        w = self._window
        why = None
        if w is None or self._tried is None:
            why = "Try a value first (click or drag on the chart)"
        elif self.stale_message:
            why = "Not while the model on screen has an error: fix it or undo first"
        elif math.isclose(self._tried, w.current, rel_tol=1e-9):
            why = "The tried value is the current one"
        elif self.value_writable is not None:
            why = self.value_writable(w.element, w.quantity)
        self.use_button.setEnabled(why is None)
        if why is None:
            q = w.quantity
            self.use_button.setToolTip(
                f"Set the {q} of {R.name_of(self.train, w.element)} to "
                f"{quantity_text(self._tried, q, self.unit_system)} (one step, Ctrl+Z undoes it)")
        else:
            self.use_button.setToolTip(why)

    def _show_tried(self) -> None:
        w = self._window
        if w is None or self._tried is None:
            self.tried_line.setVisible(False)
            self._show_verdicts()
            return
        self._updating = True
        try:
            self.tried_line.setValue(self._x(self._tried))
        finally:
            self._updating = False
        self.tried_line.setVisible(self.canvas.isVisible() or not self._draw_pending)
        self._label_lines()
        self._show_verdicts()

    # ------------------------------------------------------------ chart
    def _scale(self) -> float:
        """Display units per SI unit of the shown quantity (both conversions are linear)."""
        return to_display(1.0, self._window.quantity, self.unit_system)

    def _x(self, value_si: float) -> float:
        return math.log10(value_si * self._scale())

    def _value(self, x: float) -> float:
        return 10.0 ** x / self._scale()

    def _clear_chart(self) -> None:
        for item in self._drawn:
            self.plot.removeItem(item)
        self._drawn = []
        for lab in self.mode_labels:
            lab.setVisible(False)
        for item in (self._curves_item, self._bands_item):
            item.setVisible(False)
        self.mode_labels, self.band_labels = [], []
        self.legend.clear()
        self._key_samples = []
        self.now_line.setVisible(False)
        self.tried_line.setVisible(False)

    def _pooled_label(self, k: int):
        """The k-th mode label of the pool (made once, kept between drawings)."""
        while len(self._label_pool) <= k:
            label = pg.TextItem("", color=theme.qcolor(theme.INK))
            label.textItem.document().setDocumentMargin(1.0)
            label.setZValue(21)
            label.setVisible(False)
            self.plot.addItem(label, ignoreBounds=True)
            self._label_pool.append(label)
        return self._label_pool[k]

    def _add(self, item, bounds: bool = True):
        self.plot.addItem(item, ignoreBounds=not bounds)
        self._drawn.append(item)
        return item

    def _draw_now(self) -> None:
        self._draw_pending = False
        self._clear_chart()
        w = self._window
        if w is None or w.chart is None:
            return
        c = w.chart
        xs = np.log10(np.asarray(c.values, float) * self._scale())
        x0, x1 = float(xs[0]), float(xs[-1])
        f = np.asarray(c.frequency_hz, float)
        shown = f[np.isfinite(f) & (f > 0)]
        bands = merged_bands(w.forbidden_hz)
        lows = [lo for lo, _hi, _l in bands if lo > 0]
        cands = ([float(shown.min())] if shown.size else []) + lows
        f_lo = min(cands) if cands else 1.0
        # up to the screening limit: the modes above it are not screened
        f_hi = float(c.cap_hz) if c.cap_hz > 0 else (float(shown.max()) if shown.size else 1.0)
        y0, y1 = math.log10(f_lo / 1.35), math.log10(f_hi * 1.12)
        sel = self._mode_number
        # forbidden strips (merged where lines share a band)
        for lo, hi, labels in bands:
            a, b = math.log10(max(lo, f_lo / 2)), math.log10(hi)
            if b <= y0 or a >= y1:
                continue
            strip = pg.LinearRegionItem((a, b), orientation="horizontal", movable=False,
                                        brush=theme.brush(FORBIDDEN_FILL), pen=pg.mkPen(None))
            strip.setZValue(-30)
            for ln in strip.lines:
                ln.setPen(pg.mkPen(None))
            strip.setToolTip("Forbidden: within the margin of " + "; ".join(labels)
                             + f" ({fmt.hz(lo)}–{fmt.hz(hi)} Hz)")
            self._add(strip, bounds=False)
            label = pg.TextItem(_elide_words(strip_label(labels), 30), color=theme.qcolor(theme.FAIL), anchor=(1, 0.5))
            label.setFont(theme.font(theme.SMALL_POINT_SIZE))
            label.textItem.document().setDocumentMargin(1.0)
            label.setToolTip(strip.toolTip())
            label.setZValue(20)
            label._y = 0.5 * (max(a, y0) + min(b, y1))
            self._add(label, bounds=False)
            self.band_labels.append(label)
        # admissible spans and a bar along the value axis
        bar_y = y0 + 0.018 * (y1 - y0)
        for a, b in w.admissible:
            xa, xb = self._x(a), self._x(b)
            span = pg.LinearRegionItem((xa, xb), orientation="vertical", movable=False,
                                       brush=theme.brush(ADMISSIBLE_FILL), pen=pg.mkPen(None))
            for ln in span.lines:
                ln.setPen(pg.mkPen(None))
            span.setZValue(-40)
            span.setToolTip(f"Admissible: {value_text(a, w.quantity, self.unit_system)} to "
                            f"{value_text(b, w.quantity, self.unit_system)}")
            self._add(span, bounds=False)
            bar = pg.PlotDataItem([xa, xb], [bar_y, bar_y], pen=theme.pen(theme.PASS, 7.0))
            bar.setZValue(30)
            self._add(bar, bounds=False)
        # the modes: tolerance bands and nominal curves
        curves, band_path = QtGui.QPainterPath(), QtGui.QPainterPath()
        bold = theme.font(theme.SMALL_POINT_SIZE, bold=True)
        plain = theme.font(theme.SMALL_POINT_SIZE)
        for j, number in enumerate(np.asarray(c.mode, int).tolist()):
            fj = f[:, j]
            ok = np.isfinite(fj) & (fj > 0)
            if ok.sum() < 2:
                continue
            if c.band_low_hz is not None and c.band_high_hz is not None:
                lo_j, hi_j = np.asarray(c.band_low_hz[:, j], float), np.asarray(c.band_high_hz[:, j], float)
                okb = ok & np.isfinite(lo_j) & np.isfinite(hi_j) & (lo_j > 0) & (hi_j > 0)
                if okb.sum() >= 2:
                    xb = xs[okb]
                    poly = QtGui.QPolygonF([QtCore.QPointF(float(x), float(y)) for x, y in
                                            zip(np.r_[xb, xb[::-1]],
                                                np.r_[np.log10(lo_j[okb]), np.log10(hi_j[okb])[::-1]])])
                    band_path.addPolygon(poly)
                    band_path.closeSubpath()
            cx, cy = xs[ok], np.log10(fj[ok])
            if number == sel:
                curve = pg.PlotDataItem(cx, cy, pen=theme.natural_frequency_pen(True))
                curve.setZValue(-4)
                curve.setToolTip(f"Mode {number}")
                self._add(curve, bounds=False)
            else:
                curves.moveTo(float(cx[0]), float(cy[0]))
                for x, y in zip(cx[1:].tolist(), cy[1:].tolist()):
                    curves.lineTo(x, y)
            label = self._pooled_label(len(self.mode_labels))
            label.setText(f"mode {number}")
            label.setFont(bold if number == sel else plain)
            label._curve = (cx, cy)
            label.setVisible(True)
            self.mode_labels.append(label)
        self._curves_item.setPath(curves)
        self._curves_item.setVisible(not curves.isEmpty())
        self._bands_item.setPath(band_path)
        self._bands_item.setVisible(not band_path.isEmpty())
        self.now_line.setValue(self._x(w.current) if w.current > 0 else x0)
        self.now_line.setVisible(w.current > 0)
        self._updating = True
        try:
            self.tried_line.setBounds([x0, x1])
            if self._tried is not None:
                self.tried_line.setValue(self._x(self._tried))
        finally:
            self._updating = False
        self.tried_line.setVisible(self._tried is not None)
        self.plot.setXRange(x0, x1, padding=0)
        self.plot.setYRange(y0, y1, padding=0)
        self._fill_key(w)
        self._arrange_key(float(self.canvas.width()), float(self.canvas.height()))
        self._label_lines()
        self._layout_labels()

    def _fill_key(self, w) -> None:
        entries = [(pg.PlotDataItem(pen=theme.natural_frequency_pen()), "natural frequency")]
        if w.chart is not None and w.chart.band_low_hz is not None:
            entries.append((pg.BarGraphItem(x=[0], height=[0], width=1, brush=theme.brush(TOLERANCE_FILL),
                                            pen=pg.mkPen(None)), "tolerance band"))
        entries += [
            (pg.BarGraphItem(x=[0], height=[0], width=1, brush=theme.brush(FORBIDDEN_FILL), pen=pg.mkPen(None)),
             f"excitation ± {fmt.percent(w.margin)} %"),
            (pg.BarGraphItem(x=[0], height=[0], width=1, brush=theme.brush(ADMISSIBLE_FILL),
                             pen=theme.pen(theme.PASS)), "admissible"),
            (pg.PlotDataItem(pen=theme.pen(theme.INK, theme.LINE_WIDTH, QtCore.Qt.DashLine)), "now"),
            (pg.PlotDataItem(pen=theme.pen(TRIED, theme.BOLD_WIDTH)), "tried"),
        ]
        for item, text in entries:
            self._key_samples.append(item)
            self.legend.addItem(item, text)

    def _label_lines(self) -> None:
        """'now …' and 'tried …' at the top of their lines, each on the side away from the other
        so that the two never overlap."""
        w = self._window
        if w is None:
            return
        q, s = w.quantity, self.unit_system
        self.now_line.label.setFormat(f"now {value_text(w.current, q, s)}")
        if self._tried is not None:
            self.tried_line.label.setFormat(f"tried {value_text(self._tried, q, s)}")
        (x0, x1), _ = self.plot.vb.viewRange()
        now_x = self.now_line.value()
        tried_x = self.tried_line.value() if self._tried is not None else now_x
        if abs(tried_x - now_x) < 1e-12:
            now_right = now_x < 0.5 * (x0 + x1)
            tried_right = now_right
        else:
            tried_right = tried_x > now_x
            now_right = not tried_right
        same = self._tried is not None and abs(tried_x - now_x) < 1e-12
        self.tried_line.label.setVisible(self._tried is not None and not same)
        W = float(self.plot.vb.width())
        for line, right, pos in ((self.now_line, now_right, 0.95), (self.tried_line, tried_right, 0.86)):
            anchor = (0, 0.5) if right else (1, 0.5)
            line.label.anchors = [anchor, anchor]
            line.label.orthoPos = pos
            if W > 20:  # a label that would leave the plot goes to the line's other side
                left, _t, r, _b = self._line_label_box(line, W, float(self.plot.vb.height()))
                if r > W or left < 0:
                    anchor = (1 - anchor[0], anchor[1])
                    line.label.anchors = [anchor, anchor]
            line.label.updatePosition()

    def _line_label_box(self, line, W: float, H: float):
        """The box (px from the plot's top left) of a line's label, from its text size, anchor
        and position along the line (computed, not read back: the label moves lazily)."""
        (x0, x1), (y0, y1) = self.plot.vb.viewRange()
        r = line.label.textItem.boundingRect()
        w, h = r.width(), r.height()
        ax, ay = line.label.anchors[0]
        px = (line.value() - x0) / (x1 - x0) * W
        py = (1.0 - line.label.orthoPos) * H
        left, top = px - ax * w, py - ay * h
        return (left, top, left + w, top + h)

    def _layout_labels(self, *_a) -> None:
        """Mode labels along their curves and strip labels at the right edge, clear of each other,
        of the line labels and of the admissible bar (greedy, :func:`label_layout.place_labels`);
        one with no room is hidden (its tooltip, the key and the table say it)."""
        if self._window is None:
            return
        vb = self.plot.vb
        W, H = float(vb.width()), float(vb.height())
        if W < 20 or H < 20:
            return
        self._label_lines()
        (x0, x1), (y0, y1) = vb.viewRange()

        def px(x, y):
            return (x - x0) / (x1 - x0) * W, (y1 - y) / (y1 - y0) * H

        blocked = [self._line_label_box(line, W, H) for line in (self.now_line, self.tried_line)
                   if line.isVisible() and line.label.isVisible()]
        for line in (self.now_line, self.tried_line):  # the lines themselves
            if line.isVisible():
                lx, _ = px(line.value(), y0)
                blocked.append((lx - 2.0, 0.0, lx + 2.0, H))
        for a, b in self._window.admissible:  # the green bar along the value axis
            (xa, _), (xb, _) = px(self._x(a), y0), px(self._x(b), y0)
            blocked.append((xa, H - 10.0, xb, H))
        labels = []
        for lab in self.band_labels:
            wpx, hpx = _size(lab)
            _, yy = px(x1, lab._y)
            spots = [Spot(W - 4, yy, 1.0, 0.5), Spot(W - 4 - 0.25 * W, yy, 1.0, 0.5), Spot(4, yy, 0.0, 0.5)]
            labels.append((wpx, hpx, spots, lab))
        for lab in self.mode_labels:
            wpx, hpx = _size(lab)
            cx, cy = lab._curve
            spots = []
            for frac in (0.02, 0.12, 0.22, 0.34, 0.46, 0.58, 0.7, 0.82):
                xv = x0 + frac * (x1 - x0)
                if xv < cx[0] or xv > cx[-1]:
                    continue
                yv = float(np.interp(xv, cx, cy))
                if not y0 <= yv <= y1:
                    continue
                sx, sy = px(xv, yv)
                spots += [Spot(sx, sy - 1, 0.0, 1.0), Spot(sx, sy + 1, 0.0, 0.0)]
            labels.append((wpx, hpx, spots, lab))
        chosen = place_labels([(wl, hl, sp) for wl, hl, sp, _ in labels], W, H, blocked=blocked)
        for (wl, hl, _sp, lab), spot in zip(labels, chosen):
            if spot is None:
                lab.setVisible(False)
                continue
            left, top, _r, _b = box(spot, wl, hl, 0.0)
            lab.setAnchor((0, 0))
            lab.setPos(x0 + left / W * (x1 - x0), y1 - top / H * (y1 - y0))
            lab.setVisible(True)

    def label_rects(self) -> list[QtCore.QRectF]:
        """Scene rectangles of every visible label on the chart (tests)."""
        items = [l for l in self.mode_labels + self.band_labels if l.isVisible()]
        items += [line.label for line in (self.now_line, self.tried_line)
                  if line.isVisible() and line.label.isVisible()]
        return [_scene_rect(i) for i in items]

    # ------------------------------------------------------------ interaction
    def _clicked(self, ev) -> None:
        if self._window is None or ev.button() != QtCore.Qt.LeftButton:
            return
        pos = ev.scenePos()
        if not self.plot.vb.sceneBoundingRect().contains(pos):
            return
        self.try_value(self._value(self.plot.vb.mapSceneToView(pos).x()))

    def _line_dragged(self, _line) -> None:
        if self._updating or self._window is None:
            return
        self._tried = rounded_value(self._window, self._value(self.tried_line.value()), self._window.quantity,
                                    self.unit_system)
        self._label_lines()
        self._show_verdicts()

    def _mouse_moved(self, ev) -> None:
        pos = ev[0]
        w = self._window
        if w is None or w.chart is None or not self.plot.vb.sceneBoundingRect().contains(pos):
            return
        p = self.plot.vb.mapSceneToView(pos)
        v = self._value(p.x())
        c = w.chart
        xs = np.log10(np.asarray(c.values, float) * self._scale())
        parts = []
        for j, number in enumerate(np.asarray(c.mode, int).tolist()):
            y = np.asarray(c.frequency_hz[:, j], float)
            ok = np.isfinite(y) & (y > 0)
            if ok.sum() >= 2 and xs[ok][0] <= p.x() <= xs[ok][-1]:
                parts.append(f"mode {number} {fmt.hz(10 ** np.interp(p.x(), xs[ok], np.log10(y[ok])))} Hz")
        self.hover.setText(f"At {value_text(v, w.quantity, self.unit_system)}: " + ", ".join(parts)
                           + " (click to try this value)")

    def _range_clicked(self, index) -> None:
        r = index.row()
        if 0 <= r < len(self.range_model.rows):
            a, b = self.range_model.rows[r].key
            self.try_value(math.sqrt(a * b))

    def _fit_range_columns(self) -> None:
        t = self.range_table
        if not self.range_model.rows:
            return
        t.resizeColumnsToContents()
        h = t.horizontalHeader()
        for c in range(3):
            h.resizeSection(c, min(h.sectionSize(c) + 10, 150))
        h.setStretchLastSection(True)

    # ------------------------------------------------------------ sensitivities
    def _select_mode_number(self) -> None:
        """The solve number of the mode to explain: the one selected in the modes view, or the
        lowest elastic mode when the selection is a rigid-body mode or none."""
        st = self.study
        self._mode_number = None
        self._mode_note = ""
        if st is None or st.design is None:
            return
        sens = st.design.sensitivities
        numbers = np.asarray(sens.mode, int).tolist()
        if not numbers:
            return
        m = st.modes
        if 0 <= self._mode_index < len(m):
            n = int(m.number[self._mode_index])
            if n in numbers:
                self._mode_number = n
                return
            self._mode_note = " (the mode selected is a rigid-body mode)"
        self._mode_number = numbers[0]

    def _set_sens_tab_text(self) -> None:
        i = self.lower_tabs.indexOf(self.sens_box)
        if i >= 0:
            n = self._mode_number
            text = f"What moves mode {n}" if n is not None else "What moves the mode"
            if self.lower_tabs.tabText(i) != text:  # set again, the tab bar is laid out again
                self.lower_tabs.setTabText(i, text)

    def _clear_bars(self) -> None:
        self.bars.setOpts(x0=[0], y=[0], width=[0], height=0.66)
        self.bar_targets.setData([], [])
        for t in self.bar_texts:
            t.setVisible(False)
        self.bar_texts = []
        self._bar_tips = []
        if self._bar_ticks != [[]]:
            self._bar_ticks = [[]]
            self.sens_plot.getAxis("left").setTicks([[]])
        self._bars_shown = 0

    def bar_capacity(self) -> int:
        """How many bars the chart's height gives room for, a line of text each (3 to MAX_BARS)."""
        h = self.sens_plot.vb.height()
        line = QtGui.QFontMetricsF(theme.font(theme.SMALL_POINT_SIZE)).height() + 5
        return int(max(3, min(MAX_BARS, h // line if h > 0 else MAX_BARS)))

    def _fit_bars(self, *_a) -> None:
        if self.study is not None:
            self._draw_sensitivities()

    def sensitivity_bars(self) -> list[tuple[str, str, float]]:
        """(quantity, element id, value) of the bars drawn, top first (tests)."""
        return list(self._bars)

    def _draw_sensitivities(self) -> None:
        st = self.study
        n = self._mode_number
        drawn_for = (st, n, self.bar_capacity(), self.sens_canvas.width() // 20)
        old = self._sens_drawn_for
        if st is not None and old is not None and old[0] is st and old[1:] == drawn_for[1:]:
            return  # the same bars (a study shown and its mode selected call this twice)
        self._sens_drawn_for = drawn_for
        self._bars = []
        self._set_sens_tab_text()
        if st is None or st.design is None or n is None:
            self._clear_bars()
            self.sens_title.setText("No elastic mode to explain.")
            return
        sens = st.design.sensitivities
        items = sensitivity_items(sens, n)
        f = float(sens.frequency_hz[sens.row(n)])
        count = min(len(items), self.bar_capacity())
        shown = items[:count]
        self._bars = shown
        self._bars_shown = self.bar_capacity()
        more = f"; the largest {count} of {len(items)}" if count < len(items) else ""
        _set_text(self.sens_title, f"What moves mode {n} ({fmt.hz(f)} Hz){self._mode_note}{more}")
        self.sens_canvas.export_title = f"{self.train.title}: what moves mode {n} ({fmt.hz(f)} Hz)"
        if not shown:
            self._clear_bars()
            return
        # the bars, their tips and value texts are updated in place (a live edit redraws them)
        vals = np.array([v for _q, _e, v in shown], float)
        ys = np.arange(len(shown), dtype=float)
        brushes = [self._bar_brushes[q == "stiffness"] for q, _e, _v in shown]
        self.bars.setOpts(x0=np.minimum(vals, 0.0), y=ys, width=np.abs(vals), height=0.66, brushes=brushes,
                          pens=[self._no_pen] * len(shown))
        diam = dict(zip(sens.shaft_ids, sens.diameter[sens.row(n)])) if len(sens.shaft_ids) else {}
        self._bar_tips = [self._tip_text(q, e, v, n, diam.get(e) if q == "stiffness" else None)
                          for q, e, v in shown]
        self.bar_targets.setData(vals / 2.0, ys, size=18, brush=theme.brush((0, 0, 0, 0)), pen=None,
                                 data=list(range(len(shown))))
        # names on the left axis, elided to the room a third of the chart leaves
        fm = QtGui.QFontMetricsF(theme.font(theme.SMALL_POINT_SIZE))
        room = max(90.0, 0.34 * max(self.sens_canvas.width(), 300))
        names = [fm.elidedText(R.name_of(self.train, e), QtCore.Qt.ElideRight, room) for _q, e, _v in shown]
        axis = self.sens_plot.getAxis("left")
        width = int(min(room, max(fm.horizontalAdvance(t) for t in names)) + 14)
        if axis.width() != width:  # set again, the plot is laid out again
            axis.setWidth(width)
        ticks = [[(float(y), t) for y, t in zip(ys, names)]]
        if ticks != self._bar_ticks:  # set again, the axis lays out its text again
            self._bar_ticks = ticks
            axis.setTicks(ticks)
        span = max(float(np.max(np.abs(vals))), 1e-6)
        lo = min(0.0, float(vals.min()))
        hi = max(0.0, float(vals.max()))
        # room for the value written at each bar's end: p = t R / w with R = core + 2 p (px -> data)
        text_px = fm.horizontalAdvance("-0.000") + 28
        plot_px = max(float(self.sens_canvas.width()) - axis.width() - 40, 80.0)
        core = hi - lo
        pad = text_px * core / (plot_px - 2 * text_px) if plot_px > 3 * text_px else 0.42 * span
        self.sens_plot.setXRange(lo - (pad if lo < 0 else 0.04 * span), hi + (pad if hi > 0 else 0.04 * span),
                                 padding=0)
        # bars at a fixed pitch: as many rows as would fit, the rest left empty
        self.sens_plot.setYRange(-0.6, max(len(shown), self.bar_capacity()) - 0.4, padding=0)
        for t in self.bar_texts[len(shown):]:
            t.setVisible(False)
        self.bar_texts = []
        for k, (y, v) in enumerate(zip(ys, vals)):
            t = self._bar_text(k)
            text = f"{v:+.3f}" if abs(v) >= 5e-4 else f"{v:+.1e}"
            if t.textItem.toPlainText() != text:
                t.setText(text)
            t.setAnchor((0, 0.5) if v >= 0 else (1, 0.5))
            t.setPos(float(v), float(y))
            t.setVisible(True)
            self.bar_texts.append(t)

    def _bar_text(self, k: int):
        """The k-th value text of the bar chart (made once, kept between drawings)."""
        while len(self._bar_text_pool) <= k:
            t = pg.TextItem("", color=theme.qcolor(theme.INK))
            t.setFont(theme.font(theme.SMALL_POINT_SIZE))
            t.textItem.document().setDocumentMargin(2.0)
            t.setVisible(False)
            self.sens_plot.addItem(t)
            self._bar_text_pool.append(t)
        return self._bar_text_pool[k]

    def _tip_text(self, q: str, element: str, v: float, mode: int, diameter) -> str:
        name = R.name_of(self.train, element)
        if q == "stiffness":
            text = (f"{name}, stiffness: d ln f / d ln k = {v:+.4f}. A 1 % stiffer {name} raises mode {mode}'s "
                    f"frequency by about {abs(v):.3g} %; it holds {fmt.percent(2 * v)} % of the mode's strain "
                    "energy.")
            if diameter is not None:
                text += (f" Its outer diameters scaled together (bores held): d ln f / d ln D = {diameter:+.4f}.")
            return text
        return (f"{name}, inertia: d ln f / d ln J = {v:+.4f}. A 1 % heavier {name} lowers mode {mode}'s frequency "
                f"by about {abs(v):.3g} %; it holds {fmt.percent(-2 * v)} % of the mode's kinetic energy.")

    def _bar_tip(self, data) -> str:
        try:
            return self._bar_tips[int(data)]
        except (IndexError, TypeError, ValueError):
            return ""

    # ------------------------------------------------------------ exports
    def export_csv(self, path: str) -> None:
        """The ranges table as shown (units of the display system) with what was searched."""
        w = self._window
        if w is None:
            raise ValueError("there is no window to export (no operating data, or it is being computed)")
        title = (f"Design options: {self.train.title}; {R.name_of(self.train, w.element)} {w.quantity}; "
                 f"{self.ranges_note.text()}")
        write_csv(path, title, range_headers(w.quantity, self.unit_system, one_line=True), self.range_model.rows)

    def export_sensitivity_csv(self, path: str) -> None:
        """Every stiffness and inertia sensitivity of the mode shown, largest first."""
        st, n = self.study, self._mode_number
        if st is None or st.design is None or n is None:
            raise ValueError("there are no sensitivities to export")
        rows = [R.Row([R.name_of(self.train, e), e, q, f"{v:.6g}"]) for q, e, v in
                sensitivity_items(st.design.sensitivities, n)]
        write_csv(path, f"What moves mode {n}: {self.train.title}; d ln f / d ln x (first order, Rayleigh's quotient)",
                  ("Element", "Id", "Quantity", "d ln f / d ln x"), rows)


def _set_text(label, text: str) -> None:
    if label.text() != text:  # a label set again lays out its row again
        label.setText(text)


def _change(new: float, old: float) -> str:
    """'−22.3 %' / '+12.0 %' from ``old`` to ``new``."""
    if not old:
        return "—"
    d = new / old - 1.0
    return f"{'+' if d >= 0 else '−'}{fmt.percent(abs(d))} %"


def _elide_words(text: str, n: int) -> str:
    return text if len(text) <= n else text[: n - 1].rstrip(", ") + "…"


def _size(item) -> tuple[float, float]:
    """(width, height) in pixels of a TextItem's text box (it is drawn unscaled)."""
    r = item.textItem.boundingRect()
    return float(r.width()), float(r.height())


def _scene_rect(item) -> QtCore.QRectF:
    """Where a TextItem's text is on screen (its own bounding rect is in view coordinates)."""
    text = getattr(item, "textItem", item)
    return text.mapRectToScene(text.boundingRect())

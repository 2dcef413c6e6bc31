"""The interference (Campbell) diagram with its coincidence table and speed cursor.

Everything drawn comes from :mod:`core.screening`: the excitation lines, the
coincidences and their separations, and the cursor read-out
(:func:`core.screening.nearest_at_speed`).  Speeds are shown in rpm of the
reference shaft, frequencies in Hz.
"""
from __future__ import annotations

import math

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtGui, QtWidgets

from app import formatting as fmt
from app.gui import theme
from core.screening import ExcitationLine, highest_excitation_hz, nearest_at_speed, pair_separation

from . import rows as R
from . import speed_axis as SA
from .label_layout import (SOFT_PASS_LIMIT, STACK_GAP, Spot, box, place_labels, place_labels_staged,
                           stack_close_labels)
from .legend import FlowLegend, arrange_key
from .plotting import PlotCanvas, new_plot, plot_over_table
from .table import RowsModel, fit_columns, make_table_view

RPM = 2.0 * math.pi / 60.0  # rad/s per rpm
#: the frequency axis turns logarithmic when the lowest mode in the window would sit in
#: the bottom tenth of a linear axis (a few pixels above the speed axis on a small screen)
LOG_BELOW = 0.1
#: where a mode's label may sit along its line (fractions of the plot's width), left first
MODE_LABEL_X = (0.01, 0.07, 0.13, 0.19, 0.25, 0.31, 0.37, 0.43, 0.49, 0.55, 0.61, 0.67, 0.73, 0.79)


def margin_band_text(margin: float) -> str:
    """What the shaded band around a natural frequency is, in words that match
    :func:`margin_band_hz` (the separation is relative to the excitation frequency)."""
    return f"margin band: |f_n − f_exc| < {fmt.percent(margin)} % of f_exc"


def margin_band_hz(f_n: float, margin: float) -> tuple[float, float] | None:
    """Excitation frequencies (Hz) that come within ``margin`` of ``f_n``.

    A unit-slope line (1 Hz per unit speed) turns core's speed band of a pair
    into a frequency band, so the shading uses exactly core's definition of
    separation instead of a second copy of it.
    """
    unit = ExcitationLine("", 1.0, 1.0, None, None)
    band = pair_separation(f_n, unit, f_n, f_n, margin)[3]
    return None if band is None else (float(band[0]), float(band[1]))


#: pen width of an engine's minor orders beside its heavier major orders
MINOR_WIDTH = 1.1


def excitation_group(line) -> str:
    """The excitation a line belongs to, for its colour and key entry: an electric drive's
    lines ("Inverter: 6 × output frequency", "Inverter: |6 f_supply − 6 f_out|") share
    the drive's colour; every other source is its own group."""
    if line.formula is not None and ": " in line.source:
        return line.source.split(": ", 1)[0]
    return line.source


def line_curve(line, x_max_rpm: float, n: int = 161):
    """Points (rpm, Hz) of a line f = |a + b N| from standstill to ``x_max_rpm``, with
    its zero (the V's tip) among them so that the tip is drawn sharp."""
    xs = np.linspace(0.0, x_max_rpm, n)
    if line.slope != 0.0:
        tip = -line.offset_hz / line.slope / RPM
        if 0.0 < tip < x_max_rpm:
            xs = np.sort(np.append(xs, tip))
    return xs, np.asarray(line.frequency(xs * RPM), float)


def _line_end(slope_hz_per_rpm: float, x_max: float, y_max: float):
    """Where an order line leaves the plot window: (x, y, on the top edge?)."""
    y_at_right = slope_hz_per_rpm * x_max
    if y_at_right <= y_max:
        return x_max, y_at_right, False
    return y_max / slope_hz_per_rpm, y_max, True


#: the empty space around a label's text, px (a tight box: more labels find room)
LABEL_MARGIN = 1.5


class _LabelSizer:
    """The size (px) a pooled label's text box takes, without setting the text on a label:
    a long train's mode labels change their digits on every edit, and most of them find no
    room (they stay hidden), so their text is set only when one is shown.

    A plain (ASCII) text is measured from the font's advance, once a probe label of the
    same make has confirmed that this gives exactly its box for the font (else, and for any
    other text, the probe's own box is used)."""

    def __init__(self):
        self._probe = None
        self._fonts = {}  # font key -> (extra width, height) when the advance is exact, else None
        self._sizes = {}  # (text, font key) -> (w, h)

    def _probe_size(self, text: str, font) -> tuple[float, float]:
        if self._probe is None:
            self._probe = QtWidgets.QGraphicsTextItem()
            self._probe.document().setDocumentMargin(LABEL_MARGIN)
        probe = self._probe
        if probe.font() != font:
            probe.setFont(font)
        probe.setPlainText(text)
        br = probe.boundingRect()
        return float(br.width()), float(br.height())

    def size(self, text: str, font, font_key) -> tuple[float, float]:
        key = (text, font_key)
        got = self._sizes.get(key)
        if got is not None:
            return got
        if font_key not in self._fonts:
            fm = QtGui.QFontMetricsF(font)
            samples = [self._probe_size(t, font) + (fm.horizontalAdvance(t),)
                       for t in ("mode 1: 1.11 Hz", "mode 197: 2456.70 Hz", "mode 38: 48.09 Hz")]
            extra, height = samples[0][0] - samples[0][2], samples[0][1]
            exact = all(w - adv == extra and h == height for w, h, adv in samples)
            self._fonts[font_key] = (extra, height, fm) if exact else None
        fast = self._fonts[font_key]
        if fast is not None and text.isascii():
            extra, height, fm = fast
            got = (fm.horizontalAdvance(text) + extra, height)
        else:
            got = self._probe_size(text, font)
        if len(self._sizes) > 20000:  # texts of old models
            self._sizes.clear()
        self._sizes[key] = got
        return got


class CampbellView(QtWidgets.QWidget):
    """Diagram above; the coincidence table and the cursor read-out below it."""

    #: its plots draw when the tab shows; the tables it keeps current cost little (see panel)
    light_when_hidden = True

    modeSelected = QtCore.Signal(int)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.screening = None
        self.modes = None
        self._selected = -1
        self._ranges = None
        self._cursor_rpm: float | None = None
        self._labels = []
        self._log = False
        self._log_chosen_by_user = False
        self._window = None
        self._draw_pending = False  # new results arrived while the diagram was hidden
        self._acceptance = None  # the study's acceptance: barred and gear-hammer ranges
        self._limits = None

        self.canvas = PlotCanvas(self)
        self.canvas.export_title = "Interference diagram"
        self.plot = new_plot(self.canvas, 0, "Reference speed, rpm", "Frequency, Hz")
        self.plot.getAxis("left").setWidth(64)
        self.legend = FlowLegend()
        self.canvas.addItem(self.legend, row=1, col=0)
        self._key_side = False
        self.canvas.layout_hooks.append(self._arrange_key)
        self.canvas.ci.layout.setRowStretchFactor(0, 10)
        self.canvas.export_show = [self.legend]

        self.cursor = pg.InfiniteLine(0.0, angle=90, movable=True, pen=theme.cursor_pen(),
                                      hoverPen=theme.pen(theme.CURSOR, theme.BOLD_WIDTH),
                                      label="{value:.0f} rpm",
                                      labelOpts={"position": 0.02, "color": theme.CURSOR,
                                                 "fill": theme.brush((255, 255, 255, 230)),
                                                 "anchors": [(0, 1), (0, 1)]})
        self.cursor.setZValue(50)
        self._marks = SA.SpeedMarksLayer(self.plot)  # speed bands and ranges, kept between redraws
        self.cursor.setToolTip("Speed cursor: drag along the speed axis; the table on the right reads "
                               "out every excitation at this speed and its nearest natural frequency.")
        self.cursor.sigPositionChanged.connect(self._cursor_moved)
        self.plot.addItem(self.cursor, ignoreBounds=True)

        # persistent items, refilled on every redraw (see _draw)
        self._drawn, self._label_pool, self._n_labels = [], [], 0
        self._legend_key, self._legend_samples, self.line_items = None, [], []
        self._shown_modes = []
        self._line_pool = []
        self._axis_labels, self._axis_ticks = {}, None  # as last set (see _set_axis_label)
        self._drawing = False  # _draw is on its way: the labels are placed at its end
        self._sizer = _LabelSizer()
        self._band_item = QtWidgets.QGraphicsPathItem()
        self._band_item.setPen(QtGui.QPen(QtCore.Qt.NoPen))
        self._band_item.setBrush(theme.brush(theme.MARGIN_BAND))
        self._band_item.setZValue(-30)
        # the tolerance band of each natural frequency (stiffness and inertia tolerances):
        # the frequencies the mode can take, between the corner trains' (core.tolerance)
        self._tol_item = QtWidgets.QGraphicsPathItem()
        self._tol_item.setPen(QtGui.QPen(QtCore.Qt.NoPen))
        self._tol_item.setBrush(theme.brush(theme.TOLERANCE_BAND))
        self._tol_item.setZValue(-20)
        self._mode_item = QtWidgets.QGraphicsPathItem()
        self._mode_item.setPen(theme.natural_frequency_pen())
        self._mode_item.setZValue(-5)
        self._mode_item.setToolTip("Natural frequencies; the shaded band around each holds the excitation "
                                   "frequencies it lies within the required margin of")
        self.selected_line = pg.InfiniteLine(0.0, angle=0, pen=theme.natural_frequency_pen(True))
        self.selected_line.setZValue(-4)
        for item in (self._band_item, self._tol_item, self._mode_item, self.selected_line):
            item.setVisible(False)
            self.plot.addItem(item, ignoreBounds=True)
        self._ring_xy = None  # (x, y, size) of the rings drawn, for the label placement
        self._ring_pens = {True: theme.pen(theme.COINCIDENCE_FAIL, theme.BOLD_WIDTH),
                           False: theme.pen(theme.COINCIDENCE_PASS, theme.LINE_WIDTH),
                           "weak": theme.pen(theme.COINCIDENCE_WEAK, theme.LINE_WIDTH, QtCore.Qt.DashLine)}
        self.rings = pg.ScatterPlotItem(symbol="o", brush=theme.brush((0, 0, 0, 0)), hoverable=True,
                                        hoverSize=24, hoverBrush=theme.brush((179, 38, 30, 40)),
                                        tip=lambda x, y, data: self._ring_tip(data))
        self.rings.setZValue(40)
        self.rings.sigClicked.connect(self._ring_clicked)
        self.rings.setVisible(False)
        self.plot.addItem(self.rings)
        self.cursor.sigDragged.connect(lambda _line: self._show_lower(1))
        self.cursor.sigPositionChangeFinished.connect(self._layout_labels)

        self.log_box = QtWidgets.QCheckBox("Logarithmic frequency axis", self)
        self.log_box.setToolTip("Chosen automatically when the modes span a wide range of frequencies "
                                "(high gear-mesh or blade orders); tick or untick to override.")
        self.log_box.toggled.connect(self._log_toggled)
        self.fit_button = QtWidgets.QPushButton("Fit view", self)
        self.fit_button.setToolTip("Back to the full speed range and the frequencies the excitations reach "
                                   "in the operating range (drag to pan, mouse wheel to zoom out to "
                                   "every screened mode).")
        self.fit_button.clicked.connect(self.fit_view)
        self.key_box = QtWidgets.QCheckBox("Key", self)
        self.key_box.setChecked(True)
        self.key_box.setToolTip("Show the key under the diagram (always included in exported images); "
                                "untick it to give the diagram more room on a small screen.")
        self.key_box.toggled.connect(self._key_toggled)
        self.above_bar = QtWidgets.QLabel(self)  # the note on modes above the window, when the plot has no room
        self.above_bar.setStyleSheet(f"color: {theme.INK_MUTED};")
        self.above_bar.hide()
        self.hover = QtWidgets.QLabel(self)
        self.hover.setStyleSheet(f"color: {theme.INK_MUTED};")
        self.hover.setMinimumWidth(40)
        self.hover.setSizePolicy(QtWidgets.QSizePolicy.Ignored, QtWidgets.QSizePolicy.Preferred)
        self.hover.setToolTip("The pointer's speed and frequency; drag the red cursor to read out "
                              "every excitation at a speed.")
        self.message = QtWidgets.QLabel(self)
        self.message.setWordWrap(True)
        self.message.setAlignment(QtCore.Qt.AlignCenter)
        self.message.setStyleSheet(f"color: {theme.INK_MUTED}; font-size: {theme.TITLE_POINT_SIZE}pt;")
        self.message.hide()

        self.coincidence_model = RowsModel(R.COINCIDENCE_HEADERS_SHOWN, self, numeric_columns=(0, 1, 3, 4, 5, 7),
                                           status_column=6)
        self.coincidence_table = make_table_view(self.coincidence_model, self)
        self.coincidence_table.setToolTip("Excitations within twice the required margin of a natural "
                                          "frequency, worst first. Click a row to show its mode.")
        self.coincidence_table.clicked.connect(self._coincidence_clicked)
        self.coincidence_table.selectionModel().currentRowChanged.connect(
            lambda cur, _prev: self._coincidence_clicked(cur))
        self.coincidence_title = QtWidgets.QLabel("Coincidences")
        self.coincidence_title.setFont(theme.font(bold=True))

        self.cursor_model = RowsModel(R.CURSOR_HEADERS, self, numeric_columns=(1, 2, 3, 4, 5),
                                      status_column=5)
        self.cursor_table = make_table_view(self.cursor_model, self)
        self.cursor_table.setToolTip("At the cursor speed: each excitation frequency, the nearest natural "
                                     "frequency and their separation (relative to the excitation).")
        self.cursor_table.clicked.connect(self._cursor_row_clicked)
        self.cursor_title = QtWidgets.QLabel("At cursor speed")
        self.cursor_title.setFont(theme.font(bold=True))

        def boxed(title, table):
            w = QtWidgets.QWidget(self)
            l = QtWidgets.QVBoxLayout(w)
            l.setContentsMargins(0, 4, 0, 0)
            l.setSpacing(2)
            l.addWidget(title)
            l.addWidget(table, 1)
            return w

        # side by side when there is room, else as two tabs (see _arrange)
        self._boxes = (boxed(self.coincidence_title, self.coincidence_table),
                       boxed(self.cursor_title, self.cursor_table))
        self.lower_split = QtWidgets.QSplitter(QtCore.Qt.Horizontal)
        self.lower_split.setChildrenCollapsible(False)
        self.lower_tabs = QtWidgets.QTabWidget()
        self.lower_tabs.setDocumentMode(True)
        lower = QtWidgets.QStackedWidget(self)
        lower.addWidget(self.lower_split)
        lower.addWidget(self.lower_tabs)
        self.lower = lower
        self._narrow = None
        self._arrange(False)

        upper = QtWidgets.QWidget(self)
        ul = QtWidgets.QVBoxLayout(upper)
        ul.setContentsMargins(0, 0, 0, 0)
        ul.setSpacing(2)
        bar = QtWidgets.QHBoxLayout()
        bar.setContentsMargins(0, 0, 0, 0)
        bar.addWidget(self.log_box)
        bar.addWidget(self.fit_button)
        bar.addWidget(self.key_box)
        bar.addSpacing(8)
        bar.addWidget(self.above_bar)
        bar.addSpacing(8)
        bar.addWidget(self.hover, 1)  # the pointer read-out beside the controls: no row of its own
        ul.addLayout(bar)
        ul.addWidget(self.canvas, 1)
        ul.addWidget(self.message, 1)

        self.splitter = split = plot_over_table(self, upper, lower)

        self._proxy = pg.SignalProxy(self.plot.scene().sigMouseMoved, rateLimit=30, slot=self._mouse_moved)
        self.plot.vb.sigResized.connect(self._layout_labels)
        self.plot.vb.sigRangeChanged.connect(self._layout_labels)
        split.setSizes([700, 260])

    NARROW_PX = 1000

    def resizeEvent(self, event) -> None:
        super().resizeEvent(event)
        self._arrange(self.width() < self.NARROW_PX)

    def _arrange(self, narrow: bool) -> None:
        """Coincidences and cursor read-out side by side, or as tabs when narrow."""
        if narrow == self._narrow:
            return
        self._narrow = narrow
        coinc, cursor = self._boxes
        if narrow:
            self.lower_tabs.addTab(coinc, "Coincidences")
            self.lower_tabs.addTab(cursor, "At cursor speed")
            self.lower.setCurrentWidget(self.lower_tabs)
        else:
            self.lower_tabs.clear()
            self.lower_split.addWidget(coinc)
            self.lower_split.addWidget(cursor)
            coinc.show()  # a page taken out of a tab widget stays hidden otherwise
            cursor.show()
            self.lower_split.setStretchFactor(0, 3)
            self.lower_split.setStretchFactor(1, 2)
            self.lower.setCurrentWidget(self.lower_split)

    def _show_lower(self, which: int) -> None:
        if self._narrow:
            self.lower_tabs.setCurrentIndex(which)

    KEY_AXES_PX = (90.0, 70.0)  # px the axes, their labels and margins take around the plot (w, h)

    def _arrange_key(self, w: float, h: float) -> None:
        """The key below the plot, or beside it when that leaves the diagram the
        larger area of a 1.6:1 shape (a short wide canvas, e.g. on a 1366 x 768
        screen, loses a third of its height to a key below)."""
        self._key_side = arrange_key(self.canvas, self.legend, w, h, self._key_side, self.KEY_AXES_PX)

    def _key_toggled(self, on: bool) -> None:
        self.legend.set_shown(on)
        self._arrange_key(float(self.canvas.width()), float(self.canvas.height()))
        self.canvas.ci.layout.invalidate()

    def _log_toggled(self, _on: bool) -> None:
        self._log_chosen_by_user = True
        if self.screening is not None:
            self._draw()

    def fit_view(self) -> None:
        if self.screening is not None:
            self._ranges = self._window = None
            self._draw()

    # ------------------------------------------------------------ data
    def set_screening(self, screening, modes=None) -> None:
        self.screening = screening
        self.modes = modes if modes is not None else screening.modes
        self.message.hide()
        self.canvas.show()
        # the diagram is drawn when it shows (a live edit redraws only what is on screen);
        # the tables and the cursor read-out below are cheap and always current
        if self.isVisible():
            self._draw()
        else:
            self._draw_pending = True
            self._place_cursor()
        self.coincidence_model.set_rows(R.coincidence_rows(screening, self.modes))
        # the margin with tolerances, which the status follows, shows only where tolerances are given
        self.coincidence_table.setColumnHidden(R.BAND_MARGIN_COLUMN, not screening.tolerances)
        fit_columns(self.coincidence_table, max_width=240, elastic=2)
        n, nf = len(screening.coincidences), len(screening.failures)
        self.coincidence_title.setText(
            f"Coincidences within {fmt.percent(2 * screening.margin)} %: {n}"
            + (f", {nf} inside the {fmt.percent(screening.margin)} % margin" if nf else ""))
        self._cursor_moved()
        fit_columns(self.cursor_table, max_width=190, elastic=0)

    def showEvent(self, event) -> None:
        super().showEvent(event)
        self.ensure_drawn()

    def ensure_drawn(self) -> None:
        """Draw the diagram now if results came while it was hidden (exports, tests)."""
        if self._draw_pending and self.screening is not None:
            self._draw()

    def clear(self, message: str = "") -> None:
        self.screening = None
        self._draw_pending = False
        for item in self._drawn:
            self.plot.removeItem(item)
        self._drawn = []
        for item in self._label_pool:
            item.setVisible(False)
        self._labels = []
        self.above_bar.hide()
        self._marks.clear()
        for item in [self._band_item, self._tol_item, self._mode_item, self.selected_line] + self._line_pool:
            item.setVisible(False)
        self.line_items = []
        self.rings.setVisible(False)
        self.legend.clear()
        self._legend_key = None
        self._ranges = self._window = None
        self.coincidence_model.set_rows([])
        self.cursor_model.set_rows([])
        self.coincidence_title.setText("Coincidences")
        if message:
            self.message.setText(message)
            self.message.show()
            self.canvas.hide()

    # ------------------------------------------------------------ the result-view protocol (see panel)
    NO_SCREENING = ("give the reference disc, the operating speed range and at least one excitation "
                    "to draw the interference diagram")

    def show_study(self, study) -> str | None:
        """Show ``study`` (core.study.Study); the text of what is missing when there is nothing to draw."""
        if study.screening is None:
            self.clear("No operating data: " + self.NO_SCREENING + ".")
            return self.NO_SCREENING[0].upper() + self.NO_SCREENING[1:] + "."
        self._acceptance = study.acceptance
        self.set_screening(study.screening, study.modes)
        return None

    def set_unit_system(self, system: str) -> None:
        """Speeds in rpm and frequencies in Hz in both unit systems: nothing changes."""

    def reset_view_state(self) -> None:
        """A newly opened project: no cursor position, no chosen axis, no zoom, no mode kept."""
        self._cursor_rpm = None
        self._ranges = self._window = None
        self._log_chosen_by_user = False
        self._selected = -1
        self.selected_line.setVisible(False)

    def select_mode(self, index: int) -> None:
        """Emphasise the natural-frequency line of mode ``index`` (into modes)."""
        self._selected = index
        self._place_selected_line()

    def cursor_rpm(self) -> float:
        return float(self.cursor.value())

    def set_cursor_rpm(self, rpm: float) -> None:
        self.cursor.setValue(float(rpm))  # emits sigPositionChanged -> read-out

    def cursor_readout(self) -> list:
        return list(self.cursor_model.rows)

    # ------------------------------------------------------------ drawing
    def _y(self, f):
        """Frequency (Hz) to the plot's y coordinate (log10 on a logarithmic axis)."""
        if not self._log:
            return f
        if isinstance(f, float):  # the label placement asks one value at a time
            return math.log10(1e-12 if f < 1e-12 else f)  # max(f, 1e-12) without a call
        return np.log10(np.maximum(f, 1e-12))

    def _y_inv(self, y: float) -> float:
        return 10.0 ** y if self._log else y

    def window_top_hz(self) -> float:
        """Top of the frequency window (Hz): what the excitations reach in the
        operating range plus twice the margin (the listing threshold: a mode above
        it is clear of every excitation by more than twice the margin), raised to
        the modes of the listed coincidences, never above the screening limit."""
        s = self.screening
        top = highest_excitation_hz(s.lines, s.speed_max) * (1.0 + 2.0 * s.margin)
        for c in s.coincidences:
            top = max(top, c.frequency_hz * (1.0 + s.margin))
        if s.cap_hz > 0:
            top = min(top, s.cap_hz) if top > 0 else s.cap_hz
        if not top > 0:
            el = s.modes.frequency_hz[s.modes.elastic]
            top = 1.2 * float(np.max(el, initial=1.0))
        return float(top)

    def _modes_in_window(self, top: float) -> list[float]:
        m = self.modes
        f = np.asarray(m.frequency_hz, float)
        return f[np.asarray(m.elastic, bool) & (f > 0) & (f <= top)].tolist()

    def _frequency_window(self):
        """(lowest, highest) frequency of the plot window in Hz (see window_top_hz)."""
        s = self.screening
        y_max = self.window_top_hz()
        if not self._log:
            return 0.0, y_max
        lows = self._modes_in_window(y_max)
        lows += [l.fixed_hz for l in s.lines if l.fixed_hz and l.fixed_hz <= y_max]
        # every line shows where it runs in the operating range (a low order at its top speed)
        lows += [hi for hi in (l.frequency_range(s.speed_min, s.speed_max)[1] for l in s.lines
                               if l.fixed_hz is None) if 0 < hi <= y_max]
        low = min(0.5 * min(lows) if lows else y_max / 1000.0, y_max / 10.0)
        # live edits move the lowest mode a little: the axis keeps its bottom while that
        # mode stays between 2 and 4 times above it, so the diagram does not jump per edit
        prev = self._window
        if prev is not None and prev[2] == y_max and prev[1] > 0 and low / 2.0 <= prev[1] <= low:
            return prev[1], y_max
        return low, y_max

    def auto_log(self) -> bool:
        """Logarithmic frequency axis when the lowest mode in the window lies below
        LOG_BELOW of the window's top: on a linear axis it (and the low order lines
        that cross it) would be squeezed into a few pixels above the speed axis."""
        top = self.window_top_hz()
        fs = self._modes_in_window(top)
        return bool(fs) and min(fs) < LOG_BELOW * top

    def _add(self, item, ignore_bounds: bool = False):
        """Add an item that lives until the next redraw."""
        self.plot.addItem(item, ignoreBounds=ignore_bounds)
        self._drawn.append(item)
        return item

    def _draw(self) -> None:
        """Redraw the diagram.  Built for live editing of long trains: all margin
        bands are one path item and all natural-frequency lines another, labels
        come from a pool, and the legend is rebuilt only when its entries change.
        The labels are placed once, at the end (a new range set on the way would
        place them for it first)."""
        self._drawing = True
        try:
            self._draw_items()
        finally:
            self._drawing = False
        self._layout_labels()

    def _draw_items(self) -> None:
        s = self.screening
        p = self.plot
        self._draw_pending = False
        for item in self._drawn:
            p.removeItem(item)
        self._drawn = []
        self._labels = []  # (TextItem, kind, data) placed by _layout_labels
        self._n_labels = 0
        if not self._log_chosen_by_user:
            self.log_box.blockSignals(True)
            self.log_box.setChecked(self.auto_log())
            self.log_box.blockSignals(False)
        self._log = self.log_box.isChecked()
        if p.getAxis("left").logMode != self._log:
            # the old range would be read as powers of ten for a moment: keep numpy quiet about it
            with np.errstate(over="ignore", invalid="ignore"):
                p.setLogMode(x=False, y=self._log)
        op = s.train.operating
        top_speed = max(s.speed_max, op.trip_speed or 0.0)
        x_max = 1.2 * top_speed / RPM
        f_lo, f_hi = self._frequency_window()
        y0, y1 = float(self._y(f_lo)), float(self._y(f_hi))
        self._window = (x_max, f_lo, f_hi)
        ref_name = s.train.name_of(op.reference)
        self._set_axis_label("bottom", f"Reference speed, rpm ({ref_name})")
        self._set_axis_label("left", "Frequency, Hz" + (" (log scale)" if self._log else ""))
        ticks = self._log_ticks(f_lo, f_hi) if self._log else None
        if ticks != self._axis_ticks:  # set again, the axis lays its text out again
            self._axis_ticks = ticks
            p.getAxis("left").setTicks(ticks)
        self.canvas.export_title = (f"{s.train.title}: interference diagram, margin "
                                    f"{fmt.percent(s.margin)} %")
        legend = []  # (kind, style key, text)

        # the speed bands (start-up/run-down, operating range, overspeed to trip), barred speed
        # ranges and gear-hammer ranges, as on every speed axis (speed_axis.py)
        marks = SA.speed_marks(s.train, self._acceptance)
        self._marks.show(marks)
        for m, text in SA.key_entries(marks):
            legend.append(("mark", m.kind, text))

        # every screened natural frequency (up to the screening limit) with its margin band:
        # one path each; those above the window are reached by zooming out, and a note says so
        m = self.modes
        limit = s.cap_hz if s.cap_hz > 0 else f_hi
        freqs = np.asarray(m.frequency_hz, float).tolist()
        elastic = np.asarray(m.elastic, bool).tolist()  # a property computed on each access
        numbers = np.asarray(m.number).tolist()
        top = max(limit, f_hi)
        shown = [i for i, f in enumerate(freqs) if elastic[i] and 0 < f <= top]
        self._shown_modes = shown
        above = [i for i in shown if freqs[i] > f_hi]
        x_lo, x_hi = -0.1 * x_max, 3.0 * x_max
        bands, lines, strips = QtGui.QPainterPath(), QtGui.QPainterPath(), QtGui.QPainterPath()
        font = theme.font(theme.SMALL_POINT_SIZE)
        font_key = font.key()
        tol = s.bands if getattr(s, "bands", None) is not None and s.modes is m else None
        for i in shown:
            f = freqs[i]
            band = margin_band_hz(f, s.margin)
            if tol is not None and tol[i, 1] > tol[i, 0]:
                # the separation is measured from the band edge nearest the excitation, so the
                # margin band runs from the low edge's lower bound to the high edge's upper one
                f_a, f_b = float(tol[i, 0]), float(tol[i, 1])
                lo_b, hi_b = margin_band_hz(f_a, s.margin), margin_band_hz(f_b, s.margin)
                if lo_b is not None and hi_b is not None:
                    band = (lo_b[0], hi_b[1])
                t0, t1 = float(self._y(max(f_a, 1e-12))), float(self._y(min(f_b, 10 * f_hi)))
                strips.addRect(QtCore.QRectF(x_lo, t0, x_hi - x_lo, t1 - t0))
            if band is not None:
                b0, b1 = float(self._y(band[0])), float(self._y(min(band[1], 10 * f_hi)))
                bands.addRect(QtCore.QRectF(x_lo, b0, x_hi - x_lo, b1 - b0))
            y = float(self._y(f))
            lines.moveTo(x_lo, y)
            lines.lineTo(x_hi, y)
            if f <= f_hi:
                self._add_label(f"mode {int(numbers[i])}: {fmt.hz(f)} Hz", theme.INK, font, "mode", f, font_key,
                                lazy=True)
        if above:
            note = self.above_note(above)
            self._add_label(note, theme.INK_MUTED, font, "above", (note, self.above_note(above, short=True)),
                            font_key, lazy=True)
            self._labels[-1][0].setToolTip(self.above_tip(above))
        self._band_item.setPath(bands)
        self._tol_item.setPath(strips)
        self._tol_item.setVisible(tol is not None and bool(shown))
        self._mode_item.setPath(lines)
        self._band_item.setVisible(bool(shown))
        self._mode_item.setVisible(bool(shown))
        self._place_selected_line()
        legend.append(("nf", None, "natural frequency"))
        legend.append(("band", theme.MARGIN_BAND, margin_band_text(s.margin)))
        if tol is not None:
            legend.append(("band", theme.TOLERANCE_BAND,
                           "tolerance band of f_n"))

        # excitation lines: one colour per excitation, each line drawn as what it is (a fixed
        # frequency, an order through the origin, or a line f = |a + b N|) and labelled so
        # (the frequency, the order, the formula); an engine's major orders heavier
        groups = list(dict.fromkeys(excitation_group(l) for l in s.lines))
        has_major = {excitation_group(l) for l in s.lines if l.major}
        # on a log axis an order line is a curve: 40 points a factor 1.27 apart keep each chord
        # within 0.003 decades (under a pixel) of log10(slope * x), and cost a quarter of 160 to paint
        xs_line = np.geomspace(x_max * 1e-4, x_max, 40) if self._log else np.array([0.0, x_max])
        bold = theme.font(theme.SMALL_POINT_SIZE, bold=True)
        plain = theme.font(theme.SMALL_POINT_SIZE)
        in_legend = {}
        self.line_items = []
        for line in s.lines:
            group = excitation_group(line)
            k = groups.index(group)
            color = theme.series_color(k)
            kind = line.kind
            item = self._line_item(len(self.line_items))
            width = theme.BOLD_WIDTH if line.major else (MINOR_WIDTH if group in has_major else theme.LINE_WIDTH)
            font = plain if group in has_major and not line.major else bold
            if kind == "fixed":
                self._set_line(item, [0.0, x_max], [line.fixed_hz, line.fixed_hz], (color, width, "dashdot"))
                self._add_label(f"{line.fixed_hz:g} Hz", color, font, "fixed", line.fixed_hz)
            elif kind == "order":
                self._set_line(item, xs_line, line.slope * RPM * xs_line, (color, width, "solid"))
                self._add_label(f"{R.line_order_text(line)}×", color, font, "order", line.slope * RPM)
            else:  # f = |a + b N|: a V where it passes through zero, drawn point by point
                xs, fs = line_curve(line, x_max)
                self._set_line(item, xs, np.maximum(fs, f_lo * 1e-3) if self._log else fs, (color, width, "solid"))
                self._add_label(R.line_order_text(line), color, font, "line", line)
            tip = f"{line.label}: {R.line_words(line, s.train)}"
            if item.toolTip() != tip:
                item.setToolTip(tip)
            item.setVisible(True)
            self.line_items.append((line, item))
            if group not in in_legend:
                in_legend[group] = len(legend)
                legend.append(("fixed" if kind == "fixed" else "order", k, group))
        for group, i in in_legend.items():
            kinds = {l.kind for l in s.lines if excitation_group(l) == group}
            notes = ["major orders heavier"] if group in has_major else []
            if "line" in kinds:
                notes.append("orders and lines |a ± b·N|" if "order" in kinds else "lines |a ± b·N|")
            if notes:
                legend[i] = (legend[i][0], legend[i][1], f"{group} ({'; '.join(notes)})")

        # coincidences: a ring at the crossing (or at the worst speed when it does not cross)
        xs, ys, pens, sizes, data = [], [], [], [], []
        for n, c in enumerate(s.coincidences):
            at = c.crossing_speed if c.crossing_speed is not None and c.crossing_speed / RPM <= x_max \
                else c.worst_speed
            xs.append(at / RPM)
            ys.append(float(self._y(c.frequency_hz)))
            fail = not c.passed and not c.weak
            pens.append(self._ring_pens["weak" if (c.weak and not c.passed) else fail])
            sizes.append(20 if fail else 15)
            data.append(n)
        self.rings.setData(xs, ys, size=sizes, pen=pens, data=data)
        self._ring_xy = (np.asarray(xs, float), np.asarray(ys, float), np.asarray(sizes, float))
        self.rings.setVisible(bool(xs))
        if any(not c.passed and not c.weak for c in s.coincidences):
            legend.append(("ring", True, "coincidence inside the margin (fail)"))
        if any(not c.passed and c.weak for c in s.coincidences):
            legend.append(("ring", "weak", "inside the margin, weakly excited (not a failure)"))
        if any(c.passed for c in s.coincidences):
            legend.append(("ring", False, "near, but clear of the margin"))
        self._set_legend(legend)

        span = y1 - y0  # limits first: the previous ones (e.g. of a log axis) would clamp the new range
        limits = (-0.05 * x_max, 3 * x_max, y0 - 0.05 * span, y1 + 2 * span)
        if limits != self._limits:  # set again, the view box would re-run its range update
            self._limits = limits
            p.vb.setLimits(xMin=limits[0], xMax=limits[1], yMin=limits[2], yMax=limits[3])
        ranges = (x_max, y0, y1, self._log)
        if ranges != self._ranges:
            p.setXRange(0.0, x_max, padding=0)
            p.setYRange(y0, y1, padding=0)
            self._ranges = ranges
        self._place_cursor()
        for item in self._label_pool[self._n_labels:]:
            item.setVisible(False)
        for item in self._line_pool[len(self.line_items):]:
            item.setVisible(False)
        # the new ranges' transform now, not at the first paint: set there, it moves every
        # label and asks for a second layout and paint pass (8 ms at 200 discs)
        p.vb.updateMatrix()

    def above_note(self, above: list[int], short: bool = False) -> str:
        """Note for the screened modes above the window (indices into modes); ``short``:
        without the frequencies (where the plot is too crowded for the whole note)."""
        m, s = self.modes, self.screening
        nums = [int(m.number[i]) for i in above]
        fs = [float(m.frequency_hz[i]) for i in above]
        if short:
            return f"↑ mode {nums[0]}" if len(nums) == 1 else f"↑ modes {nums[0]}–{nums[-1]}"
        what = (f"mode {nums[0]} ({fmt.hz(fs[0])} Hz)" if len(nums) == 1 else
                f"modes {nums[0]}–{nums[-1]} ({fmt.hz(fs[0])}–{fmt.hz(fs[-1])} Hz)")
        return f"↑ {what}"

    def above_tip(self, above: list[int]) -> str:
        return (f"{self.above_note(above)[2:]}: above this window, more than {fmt.percent(2 * self.screening.margin)} % "
                "clear of every excitation in the operating range; zoom out (mouse wheel) to see.")

    def _place_cursor(self) -> None:
        """Speed cursor bounds (the drawn speed range) and position (kept, else the top speed)."""
        s = self.screening
        x_max = 1.2 * max(s.speed_max, s.train.operating.trip_speed or 0.0) / RPM
        self.cursor.setBounds((0.0, x_max))
        rpm = self._cursor_rpm if self._cursor_rpm is not None and 0 <= self._cursor_rpm <= x_max \
            else s.speed_max / RPM
        self.cursor.setValue(rpm)

    @staticmethod
    def _set_line(item, xs, ys, look) -> None:
        """An excitation line's points and pen (``look``: colour, width, 'solid' | 'dashdot'), set
        only where they changed: an edit of a stiffness moves the modes, not the excitations."""
        xs, ys = np.asarray(xs, float), np.asarray(ys, float)
        kept = getattr(item, "_drawn", None)
        if kept is not None and kept[2] == look and kept[0].shape == xs.shape and kept[1].shape == ys.shape \
                and np.array_equal(kept[0], xs) and np.array_equal(kept[1], ys):
            return
        item._drawn = (xs, ys, look)
        color, width, style = look
        pen = theme.pen(color, width, QtCore.Qt.DashDotLine) if style == "dashdot" else theme.pen(color, width)
        item.setData(xs, ys, pen=pen)

    def _set_axis_label(self, side: str, text: str) -> None:
        if self._axis_labels.get(side) != text:  # set again, the axis lays its label out again
            self._axis_labels[side] = text
            self.plot.setLabel(side, text)

    def _line_item(self, k: int) -> pg.PlotDataItem:
        """Excitation line number k from the pool (adding plot items is the slow part of a redraw)."""
        while len(self._line_pool) <= k:
            item = pg.PlotDataItem()
            self.plot.addItem(item)
            self._line_pool.append(item)
        return self._line_pool[k]

    def mode_line_frequencies(self) -> list[float]:
        """Frequencies (Hz) of the natural-frequency lines drawn, in mode order."""
        self.ensure_drawn()
        path = self._mode_item.path()
        ys = [path.elementAt(k).y for k in range(0, path.elementCount(), 2)]
        return [float(self._y_inv(y)) for y in ys] if self._mode_item.isVisible() else []

    def _place_selected_line(self) -> None:
        i = self._selected
        if self._draw_pending:
            return  # placed by the coming draw
        ok = self.screening is not None and i in getattr(self, "_shown_modes", [])
        self.selected_line.setVisible(ok)
        if ok:
            self.selected_line.setValue(float(self._y(float(self.modes.frequency_hz[i]))))

    def _set_legend(self, entries) -> None:
        key = tuple((kind, style, text) for kind, style, text in entries)
        if key == self._legend_key:
            return
        self._legend_key = key
        self.legend.clear()
        self._legend_samples = []
        for kind, style, text in entries:
            if kind == "band":
                sample = pg.BarGraphItem(x=[0], height=[0], width=1, brush=theme.brush(style),
                                         pen=theme.pen(theme.PASS) if style == theme.OPERATING_BAND
                                         else pg.mkPen(None))
            elif kind == "mark":
                sample = SA.legend_sample(style)
            elif kind == "nf":
                sample = pg.PlotDataItem(pen=theme.natural_frequency_pen())
            elif kind == "ring":
                sample = pg.ScatterPlotItem(symbol="o", size=14 if style is True else 11, brush=theme.brush((0, 0, 0, 0)),
                                            pen=self._ring_pens[style])
            else:
                sample = pg.PlotDataItem(pen=theme.pen(theme.series_color(style), theme.LINE_WIDTH,
                                                       QtCore.Qt.DashDotLine if kind == "fixed"
                                                       else QtCore.Qt.SolidLine))
            self._legend_samples.append(sample)
            self.legend.addItem(sample, text)
        self._arrange_key(float(self.canvas.width()), float(self.canvas.height()))

    @staticmethod
    def _log_ticks(f_lo: float, f_hi: float):
        """Ticks of a log frequency axis at 1, 2, 5 x 10^k Hz (labelled) and the
        other integers x 10^k (unlabelled), read as plain Hz, not powers of ten."""
        major, minor = [], []
        for k in range(int(np.floor(np.log10(max(f_lo, 1e-9)))), int(np.ceil(np.log10(f_hi))) + 1):
            for m in range(1, 10):
                f = m * 10.0 ** k
                if f_lo <= f <= f_hi:
                    (major if m in (1, 2, 5) else minor).append((float(np.log10(f)), f"{f:g}" if m in (1, 2, 5) else ""))
        return [major, minor]

    # ------------------------------------------------------------ labels
    def _add_label(self, text, color, font, kind, value, font_key=None, lazy: bool = False) -> None:
        """A label from the pool (TextItems are costly to create; a redraw reuses them).
        ``font_key``: ``font.key()`` where the caller has it (hundreds of labels per redraw).
        ``lazy``: the text is set when the label is shown (placed); meanwhile its box is
        measured (a long train's mode labels: most are hidden, see _LabelSizer)."""
        if self._n_labels == len(self._label_pool):
            item = pg.TextItem("", fill=theme.brush((255, 255, 255, 215)))
            item.textItem.document().setDocumentMargin(LABEL_MARGIN)  # a tight box: more labels find room
            item.setZValue(30)
            self.plot.addItem(item, ignoreBounds=True)
            self._label_pool.append(item)
        item = self._label_pool[self._n_labels]
        self._n_labels += 1
        if item.toolTip():
            item.setToolTip("")
        look = (text, color, font_key if font_key is not None else font.key(), font)
        if lazy and getattr(item, "_look", None) != look:
            item._want = look
            item._want_size = self._sizer.size(text, font, look[2])
        else:
            item._want = None
            self._apply_look(item, look)
        self._labels.append((item, kind, value))

    @staticmethod
    def _apply_look(item, look) -> None:
        """Text, colour and font of a pooled label; each set only when it changes (set again,
        a TextItem lays its text out anew)."""
        old = getattr(item, "_look", None)
        if old == look:
            return
        text, color, key, font = look
        item._look = look
        if old is None or old[1] != color:
            item.setColor(theme.qcolor(color))
        if old is None or old[2] != key:
            item.textItem.setFont(font)
        if old is None or old[0] != text:
            item.textItem.setPlainText(text)
        item.updateTextPos()

    def _want_text(self, item, text: str) -> None:
        """A label to show ``text`` (its look otherwise the same) when it is next shown."""
        applied = getattr(item, "_look", None)
        look = item._want if item._want is not None else applied
        new = (text,) + tuple(look[1:])
        if applied == new:
            item._want = None
        else:
            item._want, item._want_size = new, self._sizer.size(text, new[3], new[2])

    @staticmethod
    def _label_size(item) -> tuple[float, float]:
        """The box of a label's text (px): of the text it shows, or of the one it waits to show."""
        if getattr(item, "_want", None) is not None:
            return item._want_size
        br = item.textItem.boundingRect()
        return br.width(), br.height()

    def _cursor_label_box(self, w, h, vx0, sx):
        """Pixel box of the speed cursor's own label (bottom, right of the line)."""
        br = self.cursor.label.textItem.boundingRect() if self.cursor.label is not None else None
        tw, th = (br.width(), br.height()) if br is not None else (70.0, 18.0)
        x = (float(self.cursor.value()) - vx0) * sx
        return (x, h - th - 0.02 * h, x + tw + 4, h)

    def _layout_labels(self, *_args) -> None:
        """Place the mode, line and fixed-frequency labels where they do not
        overlap (recomputed when the plot is resized or zoomed).  Labels of mode
        lines too close for a label each at one place are stacked in frequency
        order (the highest on top, each next to its own line where there is room)."""
        if self._drawing:
            return  # a range set by _draw: it places the labels when done
        if self.screening is None or not self._labels:
            self.above_bar.hide()
            return
        vb = self.plot.vb
        w, h = float(vb.width()), float(vb.height())
        if w < 40 or h < 40:
            w, h = 700.0, 320.0  # not laid out yet: a typical size
        (vx0, vx1), (vy0, vy1) = vb.viewRange()
        sx, sy = w / max(vx1 - vx0, 1e-12), h / max(vy1 - vy0, 1e-12)

        def px(x, f):
            return (x - vx0) * sx, (vy1 - float(self._y(f))) * sy

        # a long train's hundreds of mode labels try fewer spots (most find none anyway)
        crowded = len(self._labels) > SOFT_PASS_LIMIT
        mode_xs = MODE_LABEL_X[::4] if crowded else MODE_LABEL_X
        mode_ays = (1.0, 0.0) if crowded else (1.0, 0.0, 0.5)
        requests, owners = [], []  # owners: label index, or [(label index, dy), ...] of a stack
        sizes = []
        for item, kind, value in self._labels:
            if kind == "above":
                self._want_text(item, value[0])  # the whole note first; shortened below if it finds no room
            sizes.append(self._label_size(item))
        mode_ys = {}
        y_of = self._y
        for n, (item, kind, value) in enumerate(self._labels):
            if kind == "mode":
                y = (vy1 - y_of(value)) * sy
                if -sizes[n][1] < y < h + sizes[n][1]:
                    mode_ys[n] = y
        stacks = stack_close_labels(mode_ys, sizes, gap=STACK_GAP) if not crowded else []
        in_stack = {i for st in stacks for i, _dy in st[1]}
        for top, members in stacks:
            bw = max(sizes[i][0] for i, _dy in members)
            bh = max(dy + sizes[i][1] for i, dy in members)
            spots = [(fx * w, top + shift, 0.0, 0.0) for shift in (0.0, -0.5 * bh, 0.5 * bh)
                     for fx in mode_xs]
            requests.append((bw, bh, [[], spots]))  # with the single mode labels (stage 1)
            owners.append(members)
        for n, (item, kind, value) in enumerate(self._labels):
            if n in in_stack:
                continue
            tw, th = sizes[n]
            owners.append(n)
            if kind == "above":  # the note on modes above the window: along the top edge
                spots = [Spot(2.0 + fx * (w - 4.0), y, fx, 0.0) for y in (2.0, 4.0 + th)
                         for fx in (0.0, 0.5, 0.25, 0.75, 1.0, 0.125, 0.375, 0.625, 0.875)]
                # after the mode labels (they come first in the list): a mode's own label matters more
                requests.append((tw, th, [[], spots]))
                continue
            if kind == "mode":  # just above its line, else just below, else on it; left first
                if n not in mode_ys:  # its line is outside the view (zoomed or panned)
                    requests.append((tw, th, []))
                    continue
                y = mode_ys[n]
                # plain tuples (x, y, ax, ay): a long train asks for thousands per redraw
                spots = [(fx * w, y, 0.0, ay) for ay in mode_ays for fx in mode_xs]
                requests.append((tw, th, [[], spots]))  # stage 1
                continue
            if kind == "fixed":
                y = px(0, value)[1]
                first = [Spot(0.99 * w, y, 1.0, 1.0), Spot(0.99 * w, y, 1.0, 0.0)]
                rest = []
                for fx in (0.87, 0.75, 0.63, 0.51, 0.39, 0.27):
                    rest += [Spot(fx * w, y, 1.0, 1.0), Spot(fx * w, y, 1.0, 0.0)]
                requests.append((tw, th, [first, [], rest]))
                continue
            if kind == "line":
                requests.append((tw, th, self._curve_spots(value, w, h, vx0, vx1, vy1, sx, sy)))
                continue
            # an order line: at its end (right or top edge), else beside the line further back
            slope = value  # Hz per rpm
            x_end = min(vx1, self._y_inv(vy1) / slope) if slope > 0 else vx1
            first, rest = [], []
            for t in (1.0, 0.95, 0.9, 0.85, 0.8, 0.75, 0.7, 0.65, 0.6, 0.55, 0.5, 0.45, 0.4, 0.35, 0.3):
                x = vx0 + t * (x_end - vx0)
                if x <= 0:
                    continue
                X, Y = px(x, slope * x)
                if t == 1.0:
                    at_right = X >= w - 2
                    first.append(Spot(min(X, w - 1), max(Y, 1), 1.0 if at_right else 0.5,
                                      0.5 if at_right else 0.0))
                    if at_right:  # just above or below where it leaves the plot
                        first += [Spot(w - 1, Y, 1.0, 1.0), Spot(w - 1, Y, 1.0, 0.0)]
                    continue
                # centred on the line, or beside it: above-left or below-right of the point
                rest += [Spot(X, Y, 0.5, 0.5), Spot(X - 2, Y - 2, 1.0, 1.0), Spot(X + 2, Y + 2, 0.0, 0.0)]
            requests.append((tw, th, [first, [], rest]))
        # stage 0: the lines' ends; 1: the modes, then the note; 2: the lines' fall-backs
        rings = []
        if self.rings.isVisible() and self._ring_xy is not None:
            # keep the coincidence rings clear of text where there is room
            xs, ys, ring_sizes = self._ring_xy
            X, Y, r = (xs - vx0) * sx, (vy1 - ys) * sy, 0.5 * ring_sizes + 1.0
            rings = list(zip((X - r).tolist(), (Y - r).tolist(), (X + r).tolist(), (Y + r).tolist()))
        chosen = place_labels_staged(requests, w, h, blocked=[self._cursor_label_box(w, h, vx0, sx)],
                                     soft=rings)

        def put(n, spot):
            # each call only where it changes something: hundreds of labels per redraw
            item = self._labels[n][0]
            if spot is None:
                if item.isVisible():
                    item.setVisible(False)
                return
            x, y, ax, ay = spot
            if item._want is not None:  # its text, set now that it shows
                self._apply_look(item, item._want)
                item._want = None
            if not item.isVisible():
                item.setVisible(True)
            a = item.anchor
            if a[0] != ax or a[1] != ay:
                item.setAnchor((ax, ay))
            item.setPos(vx0 + x / sx, vy1 - y / sy)

        for owner, spot in zip(owners, chosen):
            if isinstance(owner, int):
                put(owner, spot)
                continue
            for n, dy in owner:  # a stack: each label at its offset below the stack's top
                put(n, None if spot is None else (spot[0], spot[1] + dy, 0.0, 0.0))
        # the note on modes above the window, shortened to its mode numbers where the whole
        # note finds no room (the frequencies stay in its tooltip)
        for k, (owner, spot) in enumerate(zip(owners, chosen)):
            if spot is not None or not isinstance(owner, int) or self._labels[owner][1] != "above":
                continue
            item, _kind, value = self._labels[owner]
            self._want_text(item, value[1])
            tw, th = self._label_size(item)
            placed = [box(c, requests[j][0], requests[j][1]) for j, c in enumerate(chosen) if c is not None]
            again = place_labels([(tw, th, requests[k][2][-1])], w, h,
                                 blocked=placed + [self._cursor_label_box(w, h, vx0, sx)])
            put(owner, again[0])
        # no room at all in a crowded plot: the note goes beside the controls above it
        note = next(((item, value) for item, kind, value in self._labels if kind == "above"), None)
        outside = note is not None and not note[0].isVisible()
        if outside:
            self.above_bar.setText(note[1][0])
            self.above_bar.setToolTip(note[0].toolTip())
        if self.above_bar.isVisibleTo(self) != outside:
            self.above_bar.setVisible(outside)

    def _curve_spots(self, line, w, h, vx0, vx1, vy1, sx, sy):
        """Label spots of a line f = |a + b N| in stages: where it leaves the plot (its
        right or top edge), else beside the line further back along it."""
        x_lo = max(vx0, 0.0)
        if vx1 <= x_lo:
            return []
        xs, fs = line_curve(line, vx1)
        keep = xs >= x_lo
        xs, fs = xs[keep], fs[keep]
        ok = fs > 0
        X = (xs - vx0) * sx
        Y = np.full(xs.shape, np.inf)
        Y[ok] = (vy1 - self._y(fs[ok])) * sy
        inside = (X >= 0) & (X <= w) & (Y >= 0) & (Y <= h)
        idx = np.flatnonzero(inside)
        if not idx.size:
            return []
        last = int(idx[-1])
        first = []
        Xe, Ye = float(X[last]), float(Y[last])
        if Xe >= w - 2:  # leaves through the right edge: beside its end, or just above / below
            first += [Spot(w - 1, Ye, 1.0, 0.5), Spot(w - 1, Ye, 1.0, 1.0), Spot(w - 1, Ye, 1.0, 0.0)]
        else:  # through the top (or bottom) edge
            first.append(Spot(Xe, max(Ye, 1.0), 0.5, 0.0 if Ye < 0.5 * h else 1.0))
        rest = []
        for t in np.linspace(0.95, 0.1, 18):
            k = int(idx[int(round(t * (idx.size - 1)))])
            Xk, Yk = float(X[k]), float(Y[k])
            rest += [Spot(Xk, Yk, 0.5, 0.5), Spot(Xk - 2, Yk - 2, 1.0, 1.0), Spot(Xk + 2, Yk + 2, 0.0, 0.0),
                     Spot(Xk + 2, Yk - 2, 0.0, 1.0), Spot(Xk - 2, Yk + 2, 1.0, 0.0)]
        return [first, [], rest]

    def _ring_tip(self, n: int) -> str:
        c = self.screening.coincidences[n]
        return (f"Mode {c.mode} ({fmt.hz(c.frequency_hz)} Hz) × {c.line.label}\n"
                f"margin {fmt.percent(c.separation)} %"
                + ("" if c.separation_band is None else
                   f", {fmt.percent(c.separation_band)} % with tolerances (the status follows this)")
                + f" (required {fmt.percent(self.screening.margin)} %)\n"
                f"crossing {fmt.rpm(c.crossing_speed)} rpm — {c.status.upper()}\nclick to show this mode")

    # ------------------------------------------------------------ interaction
    def _mode_index_of_number(self, number) -> int | None:
        return None if number is None else R.mode_index(self.modes, int(number))

    def _emit(self, index) -> None:
        if index is not None and index >= 0:
            self.select_mode(index)
            self.modeSelected.emit(int(index))

    def _ring_clicked(self, _item, points, _ev=None) -> None:
        if not len(points):
            return
        n = int(points[0].data())
        self._show_lower(0)
        self.coincidence_table.selectRow(n)  # emits through the table's current-row signal
        self._emit(self._mode_index_of_number(self.screening.coincidences[n].mode))

    def _coincidence_clicked(self, index) -> None:
        r = index.row()
        if 0 <= r < len(self.coincidence_model.rows):
            self._emit(self.coincidence_model.rows[r].key)

    def _cursor_row_clicked(self, index) -> None:
        r = index.row()
        if 0 <= r < len(self.cursor_model.rows):
            self._emit(self._mode_index_of_number(self.cursor_model.rows[r].key))

    def _cursor_moved(self, *_args) -> None:
        s = self.screening
        if s is None:
            return
        rpm = float(self.cursor.value())
        self._cursor_rpm = rpm
        self.cursor_model.set_rows(R.cursor_rows(nearest_at_speed(s, rpm * RPM), s.margin, s.train))
        self.cursor_title.setText(f"At cursor speed {fmt.rpm(rpm * RPM)} rpm")

    def _mouse_moved(self, ev) -> None:
        pos = ev[0]
        if self.screening is None or not self.plot.sceneBoundingRect().contains(pos):
            return
        pt = self.plot.vb.mapSceneToView(pos)
        f = self._y_inv(pt.y())
        text = f"{pt.x():.0f} rpm, {fmt.hz(f)} Hz ({fmt.cpm(f)} cpm)"
        shown = self._shown_modes
        if shown:
            # the natural-frequency line within a few pixels of the pointer, if any
            fs = self.modes.frequency_hz[shown]
            px_per_unit = self.plot.vb.height() / max(np.ptp(self.plot.vb.viewRange()[1]), 1e-12)
            dist = np.abs(self._y(fs) - pt.y()) * px_per_unit
            k = int(np.argmin(dist))
            if dist[k] < 6:
                i = shown[k]
                text += f" — on mode {int(self.modes.number[i])}"
        self.hover.setText(text)

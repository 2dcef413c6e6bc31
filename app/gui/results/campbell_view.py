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
from PySide6 import QtCore, QtWidgets

from app import formatting as fmt
from app.gui import theme
from core.screening import ExcitationLine, nearest_at_speed, pair_separation

from . import rows as R
from .label_layout import Spot, place_labels
from .plotting import PlotCanvas, new_plot
from .table import RowsModel, fit_columns, make_table_view

RPM = 2.0 * math.pi / 60.0  # rad/s per rpm


def margin_band_hz(f_n: float, margin: float) -> tuple[float, float] | None:
    """Excitation frequencies (Hz) that come within ``margin`` of ``f_n``.

    A unit-slope line (1 Hz per unit speed) turns core's speed band of a pair
    into a frequency band, so the shading uses exactly core's definition of
    separation instead of a second copy of it.
    """
    unit = ExcitationLine("", 1.0, 1.0, None, None)
    band = pair_separation(f_n, unit, f_n, f_n, margin)[3]
    return None if band is None else (float(band[0]), float(band[1]))


def _line_end(slope_hz_per_rpm: float, x_max: float, y_max: float):
    """Where an order line leaves the plot window: (x, y, on the top edge?)."""
    y_at_right = slope_hz_per_rpm * x_max
    if y_at_right <= y_max:
        return x_max, y_at_right, False
    return y_max / slope_hz_per_rpm, y_max, True


class CampbellView(QtWidgets.QWidget):
    """Diagram above; the coincidence table and the cursor read-out below it."""

    modeSelected = QtCore.Signal(int)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.screening = None
        self.modes = None
        self._selected = -1
        self._mode_lines: dict[int, pg.InfiniteLine] = {}
        self._ranges = None
        self._cursor_rpm: float | None = None
        self._labels = []
        self._log = False
        self._log_chosen_by_user = False
        self._window = None

        self.canvas = PlotCanvas(self)
        self.canvas.export_title = "Interference diagram"
        self.plot = new_plot(self.canvas, 0, "Reference speed, rpm", "Frequency, Hz")
        self.plot.getAxis("left").setWidth(64)
        self.legend = pg.LegendItem(colCount=3, labelTextColor=theme.INK, labelTextSize=f"{theme.SMALL_POINT_SIZE}pt",
                                    horSpacing=18, verSpacing=-4)
        self.canvas.addItem(self.legend, row=1, col=0)
        self.canvas.ci.layout.setRowStretchFactor(0, 10)

        self.cursor = pg.InfiniteLine(0.0, angle=90, movable=True, pen=theme.cursor_pen(),
                                      hoverPen=theme.pen(theme.CURSOR, theme.BOLD_WIDTH),
                                      label="{value:.0f} rpm",
                                      labelOpts={"position": 0.02, "color": theme.CURSOR,
                                                 "fill": theme.brush((255, 255, 255, 230)),
                                                 "anchors": [(0, 1), (0, 1)]})
        self.cursor.setZValue(50)
        self.cursor.setToolTip("Speed cursor: drag along the speed axis; the table on the right reads "
                               "out every excitation at this speed and its nearest natural frequency.")
        self.cursor.sigPositionChanged.connect(self._cursor_moved)

        self.log_box = QtWidgets.QCheckBox("Logarithmic frequency axis", self)
        self.log_box.setToolTip("Chosen automatically when the modes span a wide range of frequencies "
                                "(high gear-mesh or blade orders); tick or untick to override.")
        self.log_box.toggled.connect(self._log_toggled)
        self.fit_button = QtWidgets.QPushButton("Fit view", self)
        self.fit_button.setToolTip("Back to the full speed range and every screened mode "
                                   "(drag to pan, mouse wheel to zoom).")
        self.fit_button.clicked.connect(self.fit_view)
        self.hover = QtWidgets.QLabel(self)
        self.hover.setStyleSheet(f"color: {theme.INK_MUTED};")
        self.message = QtWidgets.QLabel(self)
        self.message.setWordWrap(True)
        self.message.setAlignment(QtCore.Qt.AlignCenter)
        self.message.setStyleSheet(f"color: {theme.INK_MUTED}; font-size: {theme.TITLE_POINT_SIZE}pt;")
        self.message.hide()

        self.coincidence_model = RowsModel(R.COINCIDENCE_HEADERS, self, numeric_columns=(0, 1, 3, 4, 5),
                                           status_column=7)
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

        lower = QtWidgets.QSplitter(QtCore.Qt.Horizontal, self)
        lower.addWidget(boxed(self.coincidence_title, self.coincidence_table))
        lower.addWidget(boxed(self.cursor_title, self.cursor_table))
        lower.setStretchFactor(0, 3)
        lower.setStretchFactor(1, 2)
        lower.setChildrenCollapsible(False)

        upper = QtWidgets.QWidget(self)
        ul = QtWidgets.QVBoxLayout(upper)
        ul.setContentsMargins(0, 0, 0, 0)
        ul.setSpacing(2)
        bar = QtWidgets.QHBoxLayout()
        bar.setContentsMargins(0, 0, 0, 0)
        bar.addWidget(self.log_box)
        bar.addWidget(self.fit_button)
        bar.addStretch(1)
        ul.addLayout(bar)
        ul.addWidget(self.canvas, 1)
        ul.addWidget(self.message, 1)
        ul.addWidget(self.hover)

        split = QtWidgets.QSplitter(QtCore.Qt.Vertical, self)
        split.addWidget(upper)
        split.addWidget(lower)
        split.setStretchFactor(0, 3)
        split.setStretchFactor(1, 1)
        split.setChildrenCollapsible(False)
        self.splitter = split
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.addWidget(split)

        self._proxy = pg.SignalProxy(self.plot.scene().sigMouseMoved, rateLimit=30, slot=self._mouse_moved)
        self.plot.vb.sigResized.connect(self._layout_labels)
        self.plot.vb.sigRangeChanged.connect(self._layout_labels)
        split.setSizes([700, 260])

    def _log_toggled(self, _on: bool) -> None:
        self._log_chosen_by_user = True
        if self.screening is not None:
            self._draw()

    def fit_view(self) -> None:
        if self.screening is not None:
            self._ranges = None
            self._draw()

    # ------------------------------------------------------------ data
    def set_screening(self, screening, modes=None) -> None:
        self.screening = screening
        self.modes = modes if modes is not None else screening.modes
        self.message.hide()
        self.canvas.show()
        self._draw()
        self.coincidence_model.set_rows(R.coincidence_rows(screening, self.modes))
        fit_columns(self.coincidence_table)
        n, nf = len(screening.coincidences), len(screening.failures)
        self.coincidence_title.setText(
            f"Coincidences within {fmt.percent(2 * screening.margin)} %: {n}"
            + (f", {nf} inside the {fmt.percent(screening.margin)} % margin" if nf else ""))
        self._cursor_moved()
        fit_columns(self.cursor_table)

    def clear(self, message: str = "") -> None:
        self.screening = None
        self.plot.clear()
        self.legend.clear()
        self._mode_lines = {}
        self._ranges = None
        self.coincidence_model.set_rows([])
        self.cursor_model.set_rows([])
        self.coincidence_title.setText("Coincidences")
        if message:
            self.message.setText(message)
            self.message.show()
            self.canvas.hide()

    def select_mode(self, index: int) -> None:
        """Emphasise the natural-frequency line of mode ``index`` (into modes)."""
        old = self._mode_lines.get(self._selected)
        if old is not None:
            old.setPen(theme.natural_frequency_pen(False))
        self._selected = index
        new = self._mode_lines.get(index)
        if new is not None:
            new.setPen(theme.natural_frequency_pen(True))

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
        return np.log10(np.maximum(f, 1e-12))

    def _y_inv(self, y: float) -> float:
        return 10.0 ** y if self._log else y

    def _frequency_window(self):
        """(lowest, highest) frequency of the plot window in Hz: up to the screening cap."""
        s = self.screening
        el = s.modes.frequency_hz[s.modes.elastic]
        y_max = s.cap_hz if s.cap_hz > 0 else 1.2 * float(np.max(el, initial=1.0))
        if not self._log:
            return 0.0, y_max
        lows = [float(f) for f in el if 0 < f <= y_max]
        lows += [l.fixed_hz for l in s.lines if l.fixed_hz]
        low = 0.5 * min(lows) if lows else y_max / 1000.0
        return min(low, y_max / 10.0), y_max

    def auto_log(self) -> bool:
        """Logarithmic frequency axis when the screened modes span more than a
        factor of 50 below the cap (a high mesh order would flatten the rest)."""
        s = self.screening
        el = [float(f) for f in s.modes.frequency_hz[s.modes.elastic] if 0 < f <= s.cap_hz]
        return bool(el) and s.cap_hz / min(el) > 50.0

    def _draw(self) -> None:
        s = self.screening
        p = self.plot
        p.clear()
        self.legend.clear()
        self._mode_lines = {}
        self._labels = []  # (TextItem, kind, data) placed by _layout_labels
        if not self._log_chosen_by_user:
            self.log_box.blockSignals(True)
            self.log_box.setChecked(self.auto_log())
            self.log_box.blockSignals(False)
        self._log = self.log_box.isChecked()
        p.setLogMode(x=False, y=self._log)
        op = s.train.operating
        top_speed = max(s.speed_max, op.trip_speed or 0.0)
        x_max = 1.2 * top_speed / RPM
        f_lo, f_hi = self._frequency_window()
        y0, y1 = float(self._y(f_lo)), float(self._y(f_hi))
        self._window = (x_max, f_lo, f_hi)
        ref_name = next((d.name for d in s.train.discs if d.id == op.reference), op.reference)
        p.setLabel("bottom", f"Reference speed, rpm ({ref_name})")
        p.setLabel("left", "Frequency, Hz" + (" (log scale)" if self._log else ""))
        self.canvas.export_title = (f"{s.train.title}: interference diagram, margin "
                                    f"{fmt.percent(s.margin)} %")

        # operating range (band, or a broad line for a single speed) and trip speed
        lo, hi = s.speed_min / RPM, s.speed_max / RPM
        band_brush = theme.brush(theme.OPERATING_BAND)
        if hi - lo > 1e-9 * max(hi, 1.0):
            region = pg.LinearRegionItem((lo, hi), orientation="vertical", movable=False, brush=band_brush,
                                         pen=theme.pen(theme.PASS, theme.THIN_WIDTH))
            range_text = f"{op.range_name} ({fmt.rpm(s.speed_min)}–{fmt.rpm(s.speed_max)} rpm)"
        else:
            region = pg.InfiniteLine(lo, angle=90, pen=theme.pen(theme.OPERATING_BAND[:3] + (110,), 7.0))
            range_text = f"{op.range_name} ({fmt.rpm(s.speed_max)} rpm)"
        region.setZValue(-20)
        region.setToolTip(range_text)
        p.addItem(region)
        self.legend.addItem(pg.BarGraphItem(x=[0], height=[0], width=1, brush=band_brush,
                                            pen=theme.pen(theme.PASS)), range_text)
        if op.trip_speed:
            trip = pg.InfiniteLine(op.trip_speed / RPM, angle=90, pen=theme.trip_pen())
            trip.setToolTip(f"Trip speed {fmt.rpm(op.trip_speed)} rpm: drawn for reference, not screened.")
            trip.setZValue(-15)
            p.addItem(trip)
            self.legend.addItem(pg.PlotDataItem(pen=theme.trip_pen()),
                                f"trip speed {fmt.rpm(op.trip_speed)} rpm (not screened)")

        # natural frequencies under the cap, with their margin bands
        band_fill = theme.brush(theme.MARGIN_BAND)
        m = self.modes
        font = theme.font(theme.SMALL_POINT_SIZE)
        for i in range(len(m)):
            f = float(m.frequency_hz[i])
            if m.rigid_body[i] or f > f_hi:
                continue
            band = margin_band_hz(f, s.margin)
            if band is not None:
                r = pg.LinearRegionItem((float(self._y(band[0])), float(self._y(min(band[1], 10 * f_hi)))),
                                        orientation="horizontal", movable=False, brush=band_fill,
                                        pen=pg.mkPen(None))
                r.setZValue(-30)
                p.addItem(r)
            line = pg.InfiniteLine(float(self._y(f)), angle=0, pen=theme.natural_frequency_pen(i == self._selected))
            line.setToolTip(f"Mode {int(m.number[i])}: {fmt.hz(f)} Hz ({fmt.cpm(f)} cpm); shaded band: "
                            f"excitations within {fmt.percent(s.margin)} %")
            line.setZValue(-5)
            p.addItem(line)
            self._mode_lines[i] = line
            self._add_label(f"mode {int(m.number[i])}: {fmt.hz(f)} Hz", theme.INK, font, "mode", f)
        self.legend.addItem(pg.PlotDataItem(pen=theme.natural_frequency_pen()), "natural frequency")
        self.legend.addItem(pg.BarGraphItem(x=[0], height=[0], width=1, brush=band_fill, pen=pg.mkPen(None)),
                            f"± {fmt.percent(s.margin)} % margin band")

        # excitation lines: one colour per source, the order number beside the line
        sources = list(dict.fromkeys(l.source for l in s.lines))
        xs_line = np.geomspace(x_max * 1e-4, x_max, 160) if self._log else np.array([0.0, x_max])
        bold = theme.font(theme.SMALL_POINT_SIZE, bold=True)
        in_legend = set()
        for line in s.lines:
            color = theme.series_color(sources.index(line.source))
            if line.fixed_hz is not None:
                pen = theme.pen(color, theme.LINE_WIDTH, QtCore.Qt.DashDotLine)
                item = p.plot([0.0, x_max], [line.fixed_hz, line.fixed_hz], pen=pen)
                self._add_label(f"{line.fixed_hz:g} Hz", color, bold, "fixed", line.fixed_hz)
            else:
                pen = theme.pen(color, theme.LINE_WIDTH)
                item = p.plot(xs_line, line.slope * RPM * xs_line, pen=pen)
                self._add_label(f"{fmt.order(line.order)}×", color, bold, "order", line.slope * RPM)
            item.setToolTip(line.label)
            if line.source not in in_legend:
                in_legend.add(line.source)
                self.legend.addItem(pg.PlotDataItem(pen=pen), line.source)

        # coincidences: a ring at the crossing (or at the worst speed when it does not cross)
        xs, ys, pens, sizes, data = [], [], [], [], []
        for n, c in enumerate(s.coincidences):
            at = c.crossing_speed if c.crossing_speed is not None and c.crossing_speed / RPM <= x_max \
                else c.worst_speed
            xs.append(at / RPM)
            ys.append(float(self._y(c.frequency_hz)))
            fail = not c.passed
            pens.append(theme.pen(theme.COINCIDENCE_FAIL if fail else theme.COINCIDENCE_PASS,
                                  theme.BOLD_WIDTH if fail else theme.LINE_WIDTH))
            sizes.append(20 if fail else 15)
            data.append(n)
        self.rings = None
        if xs:
            rings = pg.ScatterPlotItem(xs, ys, symbol="o", size=sizes, pen=pens, brush=theme.brush((0, 0, 0, 0)),
                                       data=data, hoverable=True, hoverSize=24,
                                       hoverBrush=theme.brush((179, 38, 30, 40)),
                                       tip=lambda x, y, data: self._ring_tip(data))
            rings.setZValue(40)
            rings.sigClicked.connect(self._ring_clicked)
            p.addItem(rings)
            self.rings = rings
            if any(not c.passed for c in s.coincidences):
                self.legend.addItem(pg.ScatterPlotItem(symbol="o", size=14, brush=theme.brush((0, 0, 0, 0)),
                                                       pen=theme.pen(theme.COINCIDENCE_FAIL, theme.BOLD_WIDTH)),
                                    "coincidence inside the margin (fail)")
            if any(c.passed for c in s.coincidences):
                self.legend.addItem(pg.ScatterPlotItem(symbol="o", size=11, brush=theme.brush((0, 0, 0, 0)),
                                                       pen=theme.pen(theme.COINCIDENCE_PASS)),
                                    "near, but clear of the margin")

        p.addItem(self.cursor, ignoreBounds=True)
        span = y1 - y0  # limits first: the previous ones (e.g. of a log axis) would clamp the new range
        p.vb.setLimits(xMin=-0.05 * x_max, xMax=3 * x_max, yMin=y0 - 0.05 * span, yMax=y1 + 2 * span)
        ranges = (x_max, y0, y1, self._log)
        if ranges != self._ranges:
            p.setXRange(0.0, x_max, padding=0)
            p.setYRange(y0, y1, padding=0)
            self._ranges = ranges
        self.cursor.setBounds((0.0, x_max))
        rpm = self._cursor_rpm if self._cursor_rpm is not None and 0 <= self._cursor_rpm <= x_max \
            else s.speed_max / RPM
        self.cursor.setValue(rpm)
        self._layout_labels()

    # ------------------------------------------------------------ labels
    def _add_label(self, text, color, font, kind, value) -> None:
        fill = theme.brush((255, 255, 255, 215))
        item = pg.TextItem(text, color=theme.qcolor(color), fill=fill)
        item.setFont(font)
        item.setZValue(30)
        self.plot.addItem(item, ignoreBounds=True)
        self._labels.append((item, kind, value))

    def _layout_labels(self, *_args) -> None:
        """Place the mode, order and fixed-frequency labels where they do not
        overlap (recomputed when the plot is resized or zoomed)."""
        if self.screening is None or not self._labels:
            return
        vb = self.plot.vb
        w, h = float(vb.width()), float(vb.height())
        if w < 40 or h < 40:
            w, h = 700.0, 320.0  # not laid out yet: a typical size
        (vx0, vx1), (vy0, vy1) = vb.viewRange()
        sx, sy = w / max(vx1 - vx0, 1e-12), h / max(vy1 - vy0, 1e-12)

        def px(x, f):
            return (x - vx0) * sx, (vy1 - float(self._y(f))) * sy

        requests = []
        for item, kind, value in self._labels:
            br = item.textItem.boundingRect()
            tw, th = br.width(), br.height()
            spots = []
            if kind == "mode":  # just above its line, left first, then further right
                y = px(0, value)[1]
                for fx in (0.01, 0.2, 0.4, 0.6):
                    spots += [Spot(fx * w, y, 0.0, 1.0), Spot(fx * w, y, 0.0, 0.0)]
            elif kind == "fixed":
                y = px(0, value)[1]
                for fx in (0.99, 0.75, 0.5, 0.3):
                    spots += [Spot(fx * w, y, 1.0, 1.0), Spot(fx * w, y, 1.0, 0.0)]
            else:  # an order line: at its end, else centred on the line further back
                slope = value  # Hz per rpm
                x_end = min(vx1, self._y_inv(vy1) / slope) if slope > 0 else vx1
                for t in (1.0, 0.9, 0.8, 0.7, 0.6, 0.5, 0.4, 0.3):
                    x = vx0 + t * (x_end - vx0)
                    if x <= 0:
                        continue
                    X, Y = px(x, slope * x)
                    if t == 1.0:
                        spots.append(Spot(min(X, w - 1), max(Y, 1), 1.0 if X >= w - 2 else 0.5,
                                          0.5 if X >= w - 2 else 0.0))
                    spots.append(Spot(X, Y, 0.5, 0.5))
            requests.append((tw, th, spots))
        chosen = place_labels(requests, w, h)
        for (item, _kind, _value), spot in zip(self._labels, chosen):
            if spot is None:
                item.setVisible(False)
                continue
            item.setVisible(True)
            item.setAnchor((spot.ax, spot.ay))
            item.setPos(vx0 + spot.x / sx, vy1 - spot.y / sy)

    def _ring_tip(self, n: int) -> str:
        c = self.screening.coincidences[n]
        return (f"Mode {c.mode} ({fmt.hz(c.frequency_hz)} Hz) × {c.line.label}\n"
                f"margin {fmt.percent(c.separation)} % (required {fmt.percent(self.screening.margin)} %), "
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
        self.cursor_model.set_rows(R.cursor_rows(nearest_at_speed(s, rpm * RPM), s.margin))
        self.cursor_title.setText(f"At cursor speed {fmt.rpm(rpm * RPM)} rpm")

    def _mouse_moved(self, ev) -> None:
        pos = ev[0]
        if self.screening is None or not self.plot.sceneBoundingRect().contains(pos):
            return
        pt = self.plot.vb.mapSceneToView(pos)
        f = self._y_inv(pt.y())
        self.hover.setText(f"Pointer: {pt.x():.0f} rpm, {fmt.hz(f)} Hz ({fmt.cpm(f)} cpm) — "
                           "drag the red cursor to read out the excitations at a speed")
